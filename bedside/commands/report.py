"""``bedside report LOG``: read a setup log and print it, or export it (HTML, BIDS).

``--format text`` (default when nothing is exported) prints a readable summary,
``--format yaml`` the canonical log; ``--html OUT`` writes the printable report;
``--bids-dir DIR`` writes the BIDS sidecars. A corrupt or missing log, or an output
that cannot be written: ``error: ...`` naming the file, exit 2.
"""

from __future__ import annotations

import argparse
import sys
import textwrap
from pathlib import Path

from bedside.cautions import DISCLAIMER
from bedside.commands._common import check_format
from bedside.errors import InputError, RecordError
from bedside.record.atomic import atomic_write_text
from bedside.record.bids import write_bids
from bedside.record.html import LEVEL_STYLE, map_electrodes, render_report
from bedside.record.log import SetupLog, dump_yaml, load_log

NAME = "report"
ORDER = 60
FORMATS = ("text", "yaml")

_EXAMPLES = """\
examples:
  bedside report logs/W3-017.yaml
  bedside report logs/W3-017.yaml --html W3-017-setup.html
  bedside report logs/W3-017.yaml --bids-dir /data/bids --task clinical --line-freq 50
"""


def register(sub: argparse._SubParsersAction) -> None:  # type: ignore[type-arg]
    p = sub.add_parser(
        NAME,
        help="show a setup log, or export it as a printable HTML report or BIDS sidecars",
        description=(
            "Read a setup log written by `bedside watch` or `bedside check --log` and show "
            "it (text or YAML), or write a printable HTML report with a head map, or the "
            "BIDS channels.tsv, electrodes.tsv, coordsystem.json and _eeg.json for the "
            "recording. " + DISCLAIMER
        ),
        epilog=_EXAMPLES,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("log", metavar="LOG", help="the setup log (a .yaml file)")
    p.add_argument("--html", metavar="OUT", help="write the printable HTML report to OUT")
    p.add_argument("--bids-dir", metavar="DIR", help="write BIDS sidecars under DIR/sub-<ID>/eeg/")
    p.add_argument(
        "--format",
        default=None,
        help="what to print: text (default when nothing is exported) or yaml",
    )
    bids = p.add_argument_group("BIDS export (with --bids-dir)")
    bids.add_argument("--task", default="clinical", metavar="LABEL", help="task label (default clinical)")
    bids.add_argument("--session", metavar="LABEL", help="session label (ses-LABEL), if the dataset uses them")
    bids.add_argument("--reference", metavar="TEXT", help="EEGReference when the log has none, e.g. Cz")
    bids.add_argument("--ground", metavar="TEXT", help="EEGGround when the log has none, e.g. AFz")
    bids.add_argument(
        "--line-freq", metavar="HZ", help="PowerLineFrequency, 50 or 60, when the log has none"
    )
    bids.add_argument("--overwrite", action="store_true", help="replace BIDS files that exist already")
    p.set_defaults(func=run)


def _line_freq(text: str | None) -> float | None:
    if text is None:
        return None
    try:
        value = float(text)
    except ValueError:
        raise InputError(f"--line-freq must be 50 or 60, got {text!r}") from None
    if value not in (50.0, 60.0):
        raise InputError(f"--line-freq must be 50 or 60, got {text!r}")
    return value


def text_summary(log: SetupLog) -> str:
    """The log in a few readable lines (for the terminal)."""
    lines = [
        f"setup log: subject {log.subject_id or '(no ID)'}, technologist {log.technologist or '—'}",
        f"  started {log.started_at:%Y-%m-%d %H:%M:%S %z}" if log.started_at else "  started —",
        f"  ended   {log.ended_at:%Y-%m-%d %H:%M:%S %z}" if log.ended_at else "  ended   — (still open, or the session did not close)",
    ]
    if log.stream is not None:
        s = log.stream.identity
        lines.append(
            f"  stream  {s.name} ({s.type}) from {s.hostname}, {s.n_channels} channels at {s.nominal_rate_hz:g} Hz"
        )
    for sec in log.earlier_streams:
        other = sec.stream.identity
        bad = sorted(n for n, f in sec.final.items() if f.level != "good")
        lines.append(
            f"  earlier stream {other.name} (source_id {other.source_id}) until {sec.ended_at:%H:%M:%S}: "
            f"{len(sec.final)} judged, {len(bad)} not good{' (' + ', '.join(bad) + ')' if bad else ''}"
            " — kept apart; everything below is the current stream's"
        )
    if log.profile is not None:
        lines.append(f"  profile {log.profile.name} (sha256 {log.profile.sha256[:12]}…)")
    if log.plan is not None:
        m = log.plan.measurements
        lines.append(
            f"  head    {log.plan.system}: nasion-inion {m.nasion_inion_cm:g} cm, preauricular "
            f"{m.preauricular_cm:g} cm, circumference {m.circumference_cm:g} cm"
        )
    names = map_electrodes(log)
    ttg = log.time_to_good_s()
    imp = log.latest_impedances_kohm()
    counts = {k: 0 for k in LEVEL_STYLE}
    rows = []
    for name in names:
        final = log.final.get(name)
        key = final.level if final is not None else "no_data"
        counts[key] += 1
        _, word, symbol = LEVEL_STYLE[key]
        t = ttg.get(name)
        rows.append(
            f"  {name:<8} {symbol} {word:<8} "
            f"{(f'{t:.1f} s' if t is not None else '—'):>9}  "
            f"{(f'{imp[name]:g} kΩ' if name in imp else ''):>9}  "
            + ("; ".join(final.reasons) if final is not None else "")
        )
    all_good = log.time_to_all_good_s()
    lines.append(
        "  all scalp electrodes good "
        + (f"{all_good:.1f} s after the first verdict" if all_good is not None else "never at the same time")
    )
    lines.append("  final   " + ", ".join(f"{LEVEL_STYLE[k][2]} {counts[k]} {LEVEL_STYLE[k][1]}" for k in counts))
    if rows:
        lines.append(f"  {'channel':<8} {'level':<10} {'to good':>9}  {'impedance':>9}  reasons")
        lines += rows
    if log.findings:
        lines.append("findings:")
        for f in log.findings:
            lines.append(f"  {f.at:%H:%M:%S} {f.change:<8} {f.kind} {'-'.join(f.electrodes)} ({f.level}) {f.reason}")
    trouble = [e for e in log.events if e.kind in ("stream_state", "stream_gap", "save_failed", "corrupt_log_kept_aside")]
    if trouble:
        lines.append("events:")
        for e in trouble:
            lines.append(f"  {e.at:%H:%M:%S} {e.kind.replace('_', ' ')}: {e.detail}")
    if log.notes:
        lines.append("notes:")
        for n in log.notes:
            body = textwrap.indent(n.text, " " * 13).lstrip()
            lines.append(f"  {n.at:%H:%M:%S}  {body}")
    for tap in log.tap_tests:
        confirmed = sum(c.outcome == "confirmed" for c in tap.results)
        lines.append(f"tap test at {tap.at:%H:%M:%S} ({tap.how or 'bedside'}): {confirmed} of {len(tap.results)} "
                     "electrodes confirmed" + ("" if tap.problems else ", each touch on its own channel"))
        lines += [f"  - {p}" for p in tap.problems]
    lines.append(
        f"signed off by {log.sign_off.initials} at {log.sign_off.at:%H:%M:%S}" if log.sign_off else "not signed off"
    )
    return "\n".join(lines) + "\n"


def run(args: argparse.Namespace) -> int:
    fmt = check_format(args.format, FORMATS) if args.format is not None else None
    line_freq = _line_freq(args.line_freq)
    path = Path(args.log)
    log = load_log(path)
    if args.html:
        out = Path(args.html)
        if out.is_dir():
            raise RecordError(f"--html {out} is a folder; give a file name, e.g. {out / 'report.html'}")
        try:
            atomic_write_text(out, render_report(log))
        except RecordError as exc:
            raise RecordError(f"HTML report not written: {exc}") from exc
        print(f"wrote {out}", file=sys.stderr)
    if args.bids_dir:
        result = write_bids(
            log,
            Path(args.bids_dir),
            task=args.task,
            session=args.session,
            reference=args.reference,
            ground=args.ground,
            power_line_hz=line_freq,
            overwrite=args.overwrite,
        )
        for written in result.files:
            print(f"wrote {written}", file=sys.stderr)
        for warning in result.warnings:
            print(f"note: {warning}", file=sys.stderr)
    if fmt is None and not (args.html or args.bids_dir):
        fmt = "text"
    if fmt == "yaml":
        sys.stdout.write(dump_yaml(log))
    elif fmt == "text":
        sys.stdout.write(text_summary(log))
    return 0
