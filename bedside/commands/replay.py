"""``bedside replay``: publish a recorded EDF/EDF+ or XDF file on LSL.

Labels and units come from the file. ``--speed`` plays faster than real time;
``--loop`` starts again at the end (until Ctrl-C). XDF needs the optional ``xdf``
extra (pyxdf); a missing reader, a damaged file or an unknown suffix is a clear
error (exit 2).
"""

from __future__ import annotations

import argparse
import textwrap

from bedside.commands._common import MIN_SPEED, positive_float

NAME = "replay"
ORDER = 61


def register(sub: argparse._SubParsersAction) -> None:  # type: ignore[type-arg]
    p = sub.add_parser(
        NAME,
        help="publish a recorded EDF/EDF+ or XDF file on LSL",
        description=textwrap.fill(
            "Play a recording (EDF/EDF+ .edf/.bdf, or XDF .xdf/.xdfz) as an LSL "
        "stream, with the file's channel labels and units, in real time or faster.", width=78),
        epilog="examples:\n  bedside replay night.edf\n  bedside replay session.xdf --speed 4 --loop",
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("file", metavar="FILE", help="the recording (.edf, .bdf, .xdf, .xdfz)")
    p.add_argument("--name", metavar="NAME", help="the stream's name (default: bedside-replay-<file>)")
    p.add_argument("--source-id", metavar="ID", help="the stream's source_id (default: from name and host)")
    p.add_argument("--speed", metavar="X", type=positive_float("--speed", minimum=MIN_SPEED), default=1.0,
                   help=f"play X times faster than real time (default 1; at least {MIN_SPEED:g})")
    p.add_argument("--loop", action="store_true", help="start again at the end, until Ctrl-C")
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    from bedside.commands.simulate import wait_and_stop
    from bedside.sim.replay import load_recording, replay_publisher
    from bedside.stream.lsl import prepare_lsl

    rec = load_recording(args.file)
    prepare_lsl()
    pub = replay_publisher(rec, name=args.name, speed=args.speed, loop=args.loop,
                           source_id=args.source_id)
    pub.start()
    until = "looping until Ctrl-C" if args.loop else f"{rec.duration_s / args.speed:.1f} s"
    print(
        f"replaying {rec.path.name} ({rec.format}: {len(rec.channels)} channels at "
        f"{rec.rate_hz:g} Hz, {rec.duration_s:.1f} s) as '{pub.name}' (source_id "
        f"{pub.source_id}), {args.speed:g}x real time, {until}.",
        flush=True,
    )
    if rec.skipped:
        print(f"  not replayed (other sampling rates): {', '.join(rec.skipped)}", flush=True)
    return wait_and_stop(pub)
