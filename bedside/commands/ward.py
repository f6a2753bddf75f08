"""``bedside ward``: every visible EEG stream judged at once, one line per bed.

Without ``--seconds``: the app opens on the ward's list (beds come and go live; Enter
opens a bed in Watch, ``w`` comes back; no setup log unless ``--log``). With it,
headless: watch for ``--seconds`` (beds that appear meanwhile are taken in), then print
each bed's state and counts (``--format json``: ``{"streams": [{name, source_id,
hostname, state, n_scalp, good, check, bad, not_good, findings, note, worst}]}``, the counts
integers). Exit 0 when every bed is live with all its scalp electrodes good, 1 when a
bed needs attention, was lost or refused, or no bed is visible; 2 on bad input.
"""

from __future__ import annotations

import argparse
import sys
import time

from bedside.commands._common import positive_float
from bedside.commands.watch import add_app_options
from bedside.record.plain import json_text

NAME = "ward"
ORDER = 36
FORMATS = ("table", "json")
#: A ward look this long at most (for longer, leave the app running).
MAX_SECONDS = 3600.0


def register(sub: argparse._SubParsersAction) -> None:  # type: ignore[type-arg]
    p = sub.add_parser(
        NAME,
        help="judge every visible EEG stream at once (a ward of beds), one line each",
        description="Watch every EEG stream this computer can see, each with its own checks: "
        "the app opens on the ward's list (one line per bed: state, scalp electrodes "
        "good/check/bad, the worst finding; Enter opens a bed in Watch, w comes back), or with "
        "--seconds S it looks that long and prints the same lines. Streams that appear while "
        "looking are taken in. bedside supports the technologist; it does not diagnose.",
    )
    p.add_argument("--seconds", metavar="S", type=positive_float("--seconds"), default=None,
                   help=f"headless: watch this long (at most {MAX_SECONDS:g} s) and print the beds; "
                   "without it the app opens on the ward's list")
    p.add_argument("--format", choices=FORMATS, default="table", help="with --seconds: table (default) or json")
    add_app_options(p)
    p.set_defaults(func=run)


def table(rows: list[dict[str, object]]) -> str:
    head = ["bed (stream)", "host", "source_id", "state", "scalp", "good", "check", "bad", "worst"]
    cells = []
    for r in rows:
        cells.append([str(r["name"]), str(r["hostname"]), str(r["source_id"]), str(r["state"]),
                      str(r["n_scalp"]), str(r["good"]), str(r["check"]), str(r["bad"]), str(r["worst"])])
    widths = [max(len(h), *(len(c[i]) for c in cells)) for i, h in enumerate(head)]
    lines = ["  ".join(h.ljust(w) for h, w in zip(head, widths, strict=True)).rstrip()]
    lines += ["  ".join(c.ljust(w) for c, w in zip(row, widths, strict=True)).rstrip() for row in cells]
    return "\n".join(lines)


def run(args: argparse.Namespace) -> int:
    from bedside.errors import InputError
    from bedside.stream.lsl import prepare_lsl
    from bedside.ward import Ward

    if args.seconds is None:
        if args.format != "table":
            raise InputError("--format json needs --seconds (a headless look); without it the app opens")
        from dataclasses import replace

        from bedside.commands.watch import app_config, run_app

        if not args.log:
            args.no_log = True  # a ward is many patients: no one setup log unless asked for
        return int(run_app(replace(app_config(args), ward=True, discover=False, confirm_channels=False)))
    if args.seconds > MAX_SECONDS:
        raise InputError(f"--seconds {args.seconds:g} is longer than a ward look takes; accepted: up to "
                         f"{MAX_SECONDS:g} s (for longer, leave the app running)")
    prepare_lsl()
    ward = Ward()
    try:
        deadline = time.monotonic() + args.seconds
        while time.monotonic() < deadline:
            ward.poll()
            time.sleep(min(0.25, max(0.0, deadline - time.monotonic())))
        rows = [s.as_dict() for s in ward.poll()]
    finally:
        ward.close()
    if args.format == "json":
        print(json_text({"streams": rows}))
    elif rows:
        print(table(rows))
    if not rows:
        print(f"no EEG streams visible (looked for {args.seconds:g} s)", file=sys.stderr)
        return 1
    fine = all(r["state"] == "live" and r["n_scalp"] and r["good"] == r["n_scalp"] for r in rows)
    return 0 if fine else 1
