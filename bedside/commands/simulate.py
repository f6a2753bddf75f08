"""``bedside simulate``: publish a demo scenario (an invented ward) on LSL.

SCENARIO is a name in ``demo_streams/`` (``--list`` shows them) or a path to a
scenario file. The stream carries full channel metadata and a stable source_id; it
runs until Ctrl-C (or for ``--duration`` seconds), then closes cleanly. A bad name
or file is a clear error (exit 2) that lists the scenarios.
"""

from __future__ import annotations

import argparse
import sys
import textwrap

from bedside.commands._common import MIN_SPEED, positive_float
from bedside.errors import BedsideError

NAME = "simulate"
ORDER = 60


def register(sub: argparse._SubParsersAction) -> None:  # type: ignore[type-arg]
    p = sub.add_parser(
        NAME,
        help="publish a simulated EEG stream with scripted electrode faults (no amplifier needed)",
        description=textwrap.fill(
            "Publish a demo scenario on LSL: realistic synthetic EEG (background, "
        "alpha, blinks, ECG, muscle) with faults scripted on a timeline (loose electrode, "
        "flat channel, drift, gel bridge, pops, clipping, muscle, bad reference or ground). "
        "The ward and patients in the scenarios are invented.", width=78),
        epilog="examples:\n  bedside simulate                 # the ward demo\n"
        "  bedside simulate --list\n  bedside simulate clean --name bed2 --speed 2\n"
        "  bedside simulate my_scenario.yaml --duration 60\n"
        "  bedside simulate tap_walk --wait-for-reader 60   # taps scripted from when the reader connects",
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("scenario", nargs="?", default=None, metavar="SCENARIO",
                   help="scenario name in demo_streams/ or a .yaml path (default: ward_demo)")
    p.add_argument("--name", metavar="NAME", help="the stream's name (default: the scenario's)")
    p.add_argument("--source-id", metavar="ID", help="the stream's source_id (default: from name and host)")
    p.add_argument("--speed", metavar="X", type=positive_float("--speed", minimum=MIN_SPEED), default=1.0,
                   help=f"play X times faster than real time (default 1; at least {MIN_SPEED:g})")
    p.add_argument("--duration", metavar="S", type=positive_float("--duration"), default=None,
                   help="stop after S seconds of stream time (default: until Ctrl-C)")
    p.add_argument("--wait-for-reader", metavar="S", type=positive_float("--wait-for-reader"), default=None,
                   help="hold the first sample until a reader connects (at most S seconds), so a scripted "
                        "scenario (the tap test's taps) starts with the reader")
    p.add_argument("--list", action="store_true", help="list the scenarios and their faults, then exit")
    p.set_defaults(func=run)


def describe_faults(scenario: object) -> list[str]:
    """One line per scripted fault: when, where, what."""
    from bedside.sim.scenario import Scenario

    assert isinstance(scenario, Scenario)
    lines = []
    for f in scenario.faults:
        end = f"{f.end_s:g}" if f.end_s is not None else f"{scenario.duration_s:g}"
        when = f"{f.start_s:g}-{end} s"
        lines.append(f"{when:>11}  {'+'.join(f.electrodes):<8} {f.kind}")
    return lines


def _list() -> int:
    from bedside.sim.scenario import DEFAULT_SCENARIO, list_scenarios, load_scenario

    for name in list_scenarios():
        try:
            s = load_scenario(name)
        except BedsideError as exc:
            print(f"{name}: unusable ({exc})")
            continue
        mark = " (default)" if name == DEFAULT_SCENARIO else ""
        print(
            f"{name}{mark}: {s.ward}, {s.bed} — {len(s.channels)} channels at {s.rate_hz:g} Hz, "
            f"{s.mains_hz:g} Hz mains, {s.duration_s:g} s{' looping' if s.loop else ''}"
        )
        for line in describe_faults(s) or ["     no faults"]:
            print("    " + line)
    return 0


def run(args: argparse.Namespace) -> int:
    if args.list:
        return _list()
    from bedside.sim.publish import Publisher
    from bedside.sim.scenario import DEFAULT_SCENARIO, load_scenario
    from bedside.stream.lsl import prepare_lsl

    scenario = load_scenario(args.scenario or DEFAULT_SCENARIO)
    prepare_lsl()
    pub = Publisher(scenario, name=args.name, speed=args.speed, source_id=args.source_id,
                    duration_s=args.duration)
    pub.start(wait_for_consumer_s=args.wait_for_reader or 0.0)
    until = f"for {args.duration:g} s" if args.duration else "until Ctrl-C"
    print(
        f"publishing '{pub.name}' (source_id {pub.source_id}): scenario {scenario.name}, "
        f"{scenario.n_channels} channels at {scenario.rate_hz:g} Hz in {scenario.units}, "
        f"{args.speed:g}x real time, {until}"
        + (f", from when a reader connects (at most {args.wait_for_reader:g} s)" if args.wait_for_reader else "")
        + ". Invented demo data.",
        flush=True,
    )
    for line in describe_faults(scenario):
        print("  " + line, flush=True)
    return wait_and_stop(pub)


def wait_and_stop(pub: object) -> int:
    """Wait until the publisher finishes or Ctrl-C; close the outlet; report what was sent."""
    from bedside.sim.publish import StreamPublisher

    assert isinstance(pub, StreamPublisher)
    interrupted = False
    try:
        while not pub.wait(0.25):
            if pub.error is not None:
                break
    except KeyboardInterrupt:
        interrupted = True
    finally:
        pub.stop()
    if pub.error is not None:
        from bedside.errors import ScenarioError

        raise ScenarioError(f"publishing stopped: {pub.error}")
    seconds = pub.samples_sent / pub.spec.rate_hz
    how = "stopped (Ctrl-C)" if interrupted else "done"
    print(f"{how}: sent {pub.samples_sent} samples ({seconds:.1f} s of data); stream closed.",
          file=sys.stderr if interrupted else sys.stdout, flush=True)
    return 0
