"""``bedside taptest``: the guided tap test — is every lead where its label says?

The technologist touches each electrode when it is named; a touch makes a brief, large
deflection on the channel that electrode feeds (bedside/checks/taptest.py has the rule).
The walk announces each electrode on stderr ("[2/19] touch Fp2 now"), waits up to
``--timeout`` seconds of the stream for its touch, says where it showed, and moves on at
once. ``--order`` chooses the electrodes and their order (default: every scalp channel
in stream order). Times are the stream's own, so a replay faster than real time walks
faster; a scripted scenario (``bedside simulate tap_walk --wait-for-reader 60``) taps in
the default order from its first sample, and the walk meets it.

Exit status: 0 when every electrode walked was confirmed on its own channel; 1 when any
was swapped, shown elsewhere, shared, on every channel, or not found (or the stream
stopped first); 2 on bad input (an unknown electrode in ``--order``, no stream …).

JSON (``--format json``) on stdout, the prompts on stderr::

    {"stream": {...identity}, "order": ["Fp1", ...], "timeout_s": 10.0, "passed": false,
     "results": [{"electrode", "outcome", "seen_on", "at_s", "peak_uv", "ratio", "reason"}, ...],
     "problems": [{"kind", "electrodes", "words"}, ...],
     "rule": {"alone_median", "alone_second", "min_uv", "band_hz"}, "stopped": null}

``outcome`` is ``confirmed``, ``elsewhere``, ``shared``, ``everywhere`` or ``not_found``;
``at_s`` the touch's time in stream seconds from the start of the walk; ``peak_uv`` its
size (how far it rose above the channel's own background, band-passed) and ``ratio``
that size over the median of the other scalp channels'. ``stopped`` says why the walk
ended early (the stream was lost), else null.
"""

from __future__ import annotations

import argparse
import sys
import time
from typing import TYPE_CHECKING, Any

from bedside.cautions import DISCLAIMER, TAP_CAUTION
from bedside.commands._common import (
    add_channel_options,
    add_stream_selection,
    channel_options,
    positive_float,
    remember_choices,
)
from bedside.errors import InputError
from bedside.record.plain import json_text

if TYPE_CHECKING:
    from bedside.checks.taptest import TapProblem, TapWalk, WalkStep
    from bedside.stream.source import Source

NAME = "taptest"
ORDER = 37
FORMATS = ("table", "json")
EXIT_OK, EXIT_ATTENTION = 0, 1

#: Shown beside each outcome in the table and the prompts.
OUTCOME_SYMBOL = {"confirmed": "●", "elsewhere": "✖", "shared": "▲", "everywhere": "▲", "not_found": "?"}


def register(sub: argparse._SubParsersAction) -> None:  # type: ignore[type-arg]
    p = sub.add_parser(
        NAME,
        help="guided tap test: touch each electrode when named; checks every lead is in its own input",
        description="Walk the electrodes one by one: touch each lightly when it is named, and bedside "
        "says whether the touch showed on that channel alone, and names swapped or miswired pairs. "
        "Exit 0 when every electrode was confirmed, 1 when something was swapped or not found, 2 on "
        "error. " + TAP_CAUTION + " " + DISCLAIMER,
    )
    add_stream_selection(p)
    add_channel_options(p)
    p.add_argument("--order", metavar="E1,E2,…",
                   help="the electrodes to walk, in this order, comma-separated (default: every scalp "
                        "channel in stream order)")
    p.add_argument("--timeout", metavar="S", type=positive_float("--timeout"), default=None,
                   help="seconds to wait for each electrode's touch before it is 'not found' "
                        "(default 10, timeout_s in configs/taptest.yaml; 0.5 to 600)")
    p.add_argument("--format", choices=FORMATS, default="table", help="table (default) or json")
    p.add_argument("--bell", action="store_true", help="ring the terminal bell (on stderr) at each prompt")
    p.add_argument("--config", metavar="PATH", help="a taptest.yaml to use instead of the shipped one")
    log = p.add_argument_group("setup log (the same log the app keeps; an existing one is resumed)")
    log.add_argument("--log", metavar="PATH", help="record the tap test into the setup log at PATH (YAML)")
    log.add_argument("--subject", metavar="ID", default="", help="pseudonymous subject/study ID, e.g. W3-017")
    log.add_argument("--technologist", metavar="INITIALS", default="", help="e.g. JMK")
    p.set_defaults(func=run)


def parse_order(text: str | None) -> list[str] | None:
    if text is None:
        return None
    names = [t.strip() for t in text.split(",")]
    if not any(names) or any(not n for n in names):
        raise InputError(f"--order {text!r}: give electrode names separated by commas, e.g. Fp1,Fp2,C3")
    return names


def _say(text: str) -> None:
    sys.stderr.write(text + "\n")
    sys.stderr.flush()


def announce(step: WalkStep, bell: bool = False) -> None:
    from bedside.checks.taptest import Prompt

    if isinstance(step, Prompt):
        _say(f"[{step.index + 1}/{step.total}] touch {step.electrode} now"
             f" (waiting up to {step.until_s - step.at_s:g} s)" + ("\a" if bell else ""))
    else:
        r = step.result
        _say(f"      {OUTCOME_SYMBOL[r.outcome]} {r.electrode}: {r.outcome.replace('_', ' ')} — {r.reason}")


def walk_source(source: Source, walk: TapWalk, bell: bool = False, poll_s: float = 0.05) -> str | None:
    """Feed ``source`` to ``walk`` until it is done; the prompts and results go to stderr.
    Returns why it stopped early (the stream lost, or silent for a whole timeout), else None."""
    announce(walk.start(), bell)
    last_data = time.monotonic()
    while not walk.done:
        chunk = source.pull(poll_s)
        if chunk is not None and chunk.samples_uv.shape[0]:
            last_data = time.monotonic()
            for step in walk.feed(chunk.samples_uv):
                announce(step, bell)
            continue
        state = source.health().state
        silent = time.monotonic() - last_data
        if state == "lost" or silent > max(5.0, walk.timeout_s):
            why = "the stream was lost" if state == "lost" else f"no samples for {silent:.0f} s"
            for r in walk.stop(why):
                _say(f"      {OUTCOME_SYMBOL[r.outcome]} {r.electrode}: {r.reason}")
            return why
    return None


def as_json(identity: Any, walk: TapWalk, problems: tuple[TapProblem, ...], stopped: str | None) -> dict[str, Any]:
    s = walk.settings
    return {
        "stream": identity.as_dict(),
        "order": list(walk.order),
        "timeout_s": walk.timeout_s,
        "passed": not problems and all(r.outcome == "confirmed" for r in walk.results),
        "results": [r.as_dict() for r in walk.results],
        "problems": [p.as_dict() for p in problems],
        "rule": {"alone_median": s.alone_median, "alone_second": s.alone_second, "min_uv": s.min_uv,
                 "band_hz": [s.low_hz, s.high_hz]},
        "stopped": stopped,
    }


def as_table(report: dict[str, Any]) -> str:
    head = ("electrode", "result", "shows on", "at", "size", "× others")
    rows = []
    for r in report["results"]:
        rows.append((
            r["electrode"], f"{OUTCOME_SYMBOL[r['outcome']]} {r['outcome'].replace('_', ' ')}",
            ", ".join(r["seen_on"]) if r["seen_on"] else ("every channel" if r["outcome"] == "everywhere" else "-"),
            "-" if r["at_s"] is None else f"{r['at_s']:.1f} s",
            "-" if r["peak_uv"] is None else f"{r['peak_uv']:.0f} µV",
            "-" if r["ratio"] is None else f"{r['ratio']:.0f}",
        ))
    widths = [max(len(h), *(len(row[i]) for row in rows)) for i, h in enumerate(head)]
    lines = ["  ".join(h.ljust(w) for h, w in zip(head, widths, strict=True)).rstrip()]
    lines += ["  ".join(c.ljust(w) for c, w in zip(row, widths, strict=True)).rstrip() for row in rows]
    lines.append("")
    confirmed = sum(r["outcome"] == "confirmed" for r in report["results"])
    total = len(report["results"])
    if report["passed"]:
        lines.append(f"PASSED: all {total} electrodes confirmed, each touch on its own channel alone")
    else:
        lines.append(f"NOT PASSED: {confirmed} of {total} electrodes confirmed")
        for p in report["problems"]:
            lines.append(f"  - {p['words']}")
    if report["stopped"]:
        lines.append(f"the walk stopped early: {report['stopped']}")
    rule = report["rule"]
    lines.append(f"rule (ours): a touch counts for one channel when its size there is at least "
                 f"{rule['alone_median']:g}× the median of the other scalp channels' and "
                 f"{rule['alone_second']:g}× the next largest ({rule['band_hz'][0]:g}-{rule['band_hz'][1]:g} Hz, "
                 f"starting at {rule['min_uv']:g} µV)")
    ident = report["stream"]
    lines.append(f"stream '{ident['name']}' ({ident['source_id']}, {ident['hostname']}); "
                 f"up to {report['timeout_s']:g} s per electrode")
    lines.append(DISCLAIMER)
    return "\n".join(lines)


def run(args: argparse.Namespace) -> int:
    from bedside.checks.taptest import TapWalk, load_tap_settings, summarise
    from bedside.record.ids import validate_initials, validate_subject_id
    from bedside.record.session import optional_recorder
    from bedside.stream.discovery import resolve_one
    from bedside.stream.lsl import prepare_lsl
    from bedside.stream.reader import LslSource

    settings = load_tap_settings(args.config)
    timeout = args.timeout if args.timeout is not None else settings.timeout_s
    if not 0.5 <= timeout <= 600:
        raise InputError(f"--timeout must be 0.5 to 600 seconds per electrode, got {timeout:g}")
    order = parse_order(args.order)
    if args.log:  # a bad ID or initials: say so before looking for the stream
        validate_initials(args.technologist)
        validate_subject_id(args.subject)
    prepare_lsl()
    identity = resolve_one(args.stream, args.source_id, args.host, wait_s=args.wait)
    options = channel_options(args, identity.source_id)
    from bedside.checks.taptest import DEFAULT_PATH

    with optional_recorder(args.log, technologist=args.technologist, subject_id=args.subject,
                           config_paths=[args.config or DEFAULT_PATH]) as recorder, \
            LslSource(identity, options=options) as source:
        remember_choices(args, identity.source_id, options)
        names = [c.name for c in source.channels]
        scalp = [c.is_scalp for c in source.channels]
        if not any(scalp):
            raise InputError("this stream has no scalp electrode to walk (see bedside streams, --channels)")
        walk = TapWalk(names, order if order is not None else [n for n, ok in zip(names, scalp, strict=True) if ok],
                       source.identity.nominal_rate_hz, scalp, timeout, settings)
        _say(f"tap test on '{identity.name}': {len(walk.order)} electrodes, up to {timeout:g} s each. "
             + TAP_CAUTION)
        stopped = walk_source(source, walk, bell=args.bell)
        problems = summarise(walk.results)
        if recorder is not None:
            recorder.set_stream(source.identity, source.channels)
            recorder.record_tap_test(walk.results, problems, how="bedside taptest", timeout_s=timeout)
        ident = source.identity
    report = as_json(ident, walk, problems, stopped)
    if args.format == "json":
        print(json_text(report))
    else:
        print(as_table(report))
    return EXIT_OK if report["passed"] else EXIT_ATTENTION
