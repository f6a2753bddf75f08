"""``bedside streams``: list the EEG streams visible on the network.

Exit status 0 whether or not streams are found (finding none is an answer, not an
error; stderr then says "no EEG streams visible"). JSON (``--format json``) is a list
of objects with name, type, source_id, hostname, n_channels, nominal_rate_hz.
"""

from __future__ import annotations

import argparse
import sys

from bedside.commands._common import positive_float
from bedside.record.plain import json_text

NAME = "streams"
ORDER = 20
FORMATS = ("table", "json")


def register(sub: argparse._SubParsersAction) -> None:  # type: ignore[type-arg]
    p = sub.add_parser(
        NAME,
        help="list the EEG streams visible on the network",
        description="List the LSL streams of type EEG that this computer can see, with what "
        "tells them apart (source_id, host). Pin one in other commands with --stream, "
        "--source-id or --host.",
    )
    p.add_argument("--format", choices=FORMATS, default="table", help="table (default) or json")
    p.add_argument(
        "--wait",
        metavar="S",
        type=positive_float("--wait"),
        default=2.0,
        help="seconds to look for streams (default 2; never less than 1, as shorter looks miss streams)",
    )
    p.add_argument("--all", action="store_true", help="list streams of every type, not only EEG")
    p.set_defaults(func=run)


def _table(rows: list[dict[str, object]]) -> str:
    head = ["name", "type", "source_id", "host", "channels", "rate (Hz)"]
    keys = ["name", "type", "source_id", "hostname", "n_channels", "nominal_rate_hz"]
    cells = [[f"{r[k]:g}" if isinstance(r[k], float) else str(r[k]) for k in keys] for r in rows]
    widths = [max(len(h), *(len(c[i]) for c in cells)) for i, h in enumerate(head)]
    lines = ["  ".join(h.ljust(w) for h, w in zip(head, widths, strict=True)).rstrip()]
    lines += ["  ".join(c.ljust(w) for c, w in zip(row, widths, strict=True)).rstrip() for row in cells]
    return "\n".join(lines)


def run(args: argparse.Namespace) -> int:
    from bedside.stream.discovery import visible_streams
    from bedside.stream.lsl import prepare_lsl

    prepare_lsl()
    everything = visible_streams(wait_s=args.wait)
    found = [s for s in everything if args.all or s.type.strip().casefold() == "eeg"]
    rows = [s.as_dict() for s in found]
    if args.format == "json":
        print(json_text(rows))
    elif rows:
        print(_table(rows))
    if not rows:
        what = "streams" if args.all else "EEG streams"
        others = len(everything) - len(found)
        hint = f"; {others} stream(s) of other types are visible (--all lists them)" if others else ""
        print(f"no {what} visible (looked for {max(args.wait, 1.0):g} s){hint}", file=sys.stderr)
    elif len(set(found)) < len(found):  # equal outlets: the same identity listed twice
        twins = sorted({s.name for s in found if found.count(s) > 1})
        print(f"note: outlets that cannot be told apart (same name, type, source_id and host; two "
              f"copies of one program?): {', '.join(twins)}. bedside refuses to read them until one "
              "is closed or given its own source_id", file=sys.stderr)
    elif len({r["name"] for r in rows}) < len(rows):
        print("note: several streams share a name; pin one with --source-id", file=sys.stderr)
    return 0
