"""``bedside check``: run the quality checks on a live stream and print the final report.

Exit status: 0 when every channel and finding is good; 1 when any channel or finding
is ``check``/``bad`` (or has no data), or the stream was lost during the run; 2 on
error (bad option, config error, no stream, or several streams match — they are
listed so that one can be pinned).

JSON (``--format json``): one object ::

    {"stream": {"identity": {...}, "health": {...}},
     "channels": [{"name", "label", "type", "level", "reasons", "metrics"}, ...],
     "channel_setup": {"summary", "reference", "amplifier", "neighbours", "notes"},
     "findings": [{"kind", "electrodes", "level", "reason"}, ...],
     "mains_hz": 50, "window_s": 4.0, "seconds": 10.0, "stream_lost": false}

``name`` is bedside's normalised name (``FC5`` from ``Fc5.``), ``label`` the stream's own,
``type`` the BIDS channels.tsv type. ``level`` is ``good``, ``check``, ``bad``,
``no_data`` or ``not_judged`` (a channel that is not an electrode: trigger, sensor); metrics carry their unit in
their name; numbers that cannot be computed are null.
"""

from __future__ import annotations

import argparse
import json
import math
import sys
import time
from collections.abc import Callable
from datetime import UTC, datetime, timedelta
from pathlib import Path
from typing import TYPE_CHECKING, Any

from bedside.cautions import DISCLAIMER
from bedside.commands._common import (
    add_channel_options,
    add_stream_selection,
    channel_options,
    positive_float,
    remember_choices,
)
from bedside.engine_setup import engine_options
from bedside.errors import InputError
from bedside.metric_labels import short_header

NAME = "check"
ORDER = 35
FORMATS = ("table", "json")
EXIT_OK, EXIT_ATTENTION = 0, 1

if TYPE_CHECKING:
    from bedside.checks.settings import QualitySettings
    from bedside.checks.types import QualityFrame
    from bedside.errors import BedsideError
    from bedside.record.log import SetupLog
    from bedside.stream.source import Source
    from bedside.stream.tee import KeepRecent
    from bedside.stream.types import ChannelInfo, StreamIdentity

FrameConsumer = Callable[["QualityFrame"], None]

#: Metrics shown in the table, with their column heads (bedside.metric_labels).
TABLE_METRICS = tuple(
    (key, short_header(key)) for key in ("mains_uv", "rms_uv", "ptp_uv", "drift_uv_per_s")
)


#: A check is a look of seconds to minutes; an hour bounds the samples kept for a clip
#: and how long a script waits (common practice: longer watching is the app's job).
MAX_SECONDS = 3600.0


def register(sub: argparse._SubParsersAction) -> None:  # type: ignore[type-arg]
    p = sub.add_parser(
        NAME,
        help="check signal quality on a live stream and print the report",
        description="Read a live EEG stream for a few seconds, run every quality check "
        "(line noise, flat, drift, bridging, pops, clipping, muscle, amplitude, "
        "reference/ground) and print each channel's verdict with its reason. Exit 0 when "
        "all good, 1 when anything needs attention or the stream was lost, 2 on error. "
        + DISCLAIMER,
    )
    add_stream_selection(p)
    add_channel_options(p)
    p.add_argument(
        "--seconds", metavar="S", type=positive_float("--seconds"), default=8.0,
        help=f"seconds of data to judge (default 8; at least the checks' min_data_s, at most "
        f"{MAX_SECONDS:g}: for longer, watch in the app)",
    )
    p.add_argument("--format", choices=FORMATS, default="table", help="table (default) or json")
    p.add_argument("--config", metavar="PATH", help="a quality.yaml to use instead of the shipped one")
    log = p.add_argument_group("setup log (the same log the app keeps; an existing one is resumed)")
    log.add_argument("--log", metavar="PATH", help="record this check into the setup log at PATH (YAML)")
    log.add_argument("--subject", metavar="ID", default="", help="pseudonymous subject/study ID, e.g. W3-017")
    log.add_argument("--technologist", metavar="INITIALS", default="", help="e.g. JMK")
    clip = p.add_argument_group("EDF+ clip (the last seconds of raw data, findings as annotations)")
    clip.add_argument("--clip", metavar="PATH", help="write the last --clip-seconds of the stream as EDF+ to PATH")
    clip.add_argument(
        "--clip-seconds", metavar="S", type=positive_float("--clip-seconds"), default=None,
        help="length of the clip (default: the whole look, --seconds; at most --seconds)",
    )
    p.set_defaults(func=run)


def collect(
    source: Source, settings: QualitySettings, seconds: float, consumers: list[FrameConsumer],
    engine_kwargs: dict[str, Any] | None = None,
) -> tuple[QualityFrame | None, bool, BedsideError | None]:
    """Run engine + monitor on ``source`` for ``seconds``; returns (last frame, lost?, error)."""
    from bedside.checks.engine import Engine
    from bedside.checks.monitor import Monitor

    engine = Engine(settings, source.channels, source.identity.nominal_rate_hz, **(engine_kwargs or {}))

    def on_frame(frame: QualityFrame) -> None:
        for consume in consumers:
            consume(frame)

    mon = Monitor(source, engine, on_frame, settings.update_hz)
    deadline = time.monotonic() + seconds
    with mon:
        while time.monotonic() < deadline and mon.running:
            time.sleep(0.05)
    return mon.latest, mon.lost_seen, mon.error


def _num(v: object) -> object:
    return None if isinstance(v, float) and not math.isfinite(v) else v


def as_json(frame: QualityFrame, identity: StreamIdentity, seconds: float, lost: bool,
            channels: tuple[ChannelInfo, ...] = (), setup: dict[str, Any] | None = None) -> dict[str, Any]:
    chans = []
    for i, c in enumerate(frame.channels):
        info = channels[i] if i < len(channels) else None
        d: dict[str, Any] = {"name": c.name}
        if info is not None:
            d["label"] = info.label
            d["type"] = info.kind
        d.update({k: v for k, v in c.as_dict().items() if k != "name"})
        if c.level is None and frame.live and any(r.startswith("not judged") for r in c.reasons):
            d["level"] = "not_judged"  # a channel that is no electrode (engine's wording)
        d["metrics"] = {k: _num(v) for k, v in c.metrics.items()}
        chans.append(d)
    health = frame.stream_health
    return {
        "stream": {
            "identity": identity.as_dict(),
            "health": health.as_dict() if health is not None else None,
        },
        "channels": chans,
        "channel_setup": setup or {},
        "findings": [f.as_dict() for f in frame.findings],
        "mains_hz": frame.extras.get("mains_hz"),
        "window_s": frame.window_s,
        "seconds": seconds,
        "stream_lost": lost,
    }


def as_table(report: dict[str, Any]) -> str:
    from bedside.checks.types import NO_DATA_SYMBOL, Level

    symbol = {lv.key: lv.symbol for lv in Level}
    symbol["no_data"] = NO_DATA_SYMBOL
    head = ["channel", "type", "verdict", *(h for _k, h in TABLE_METRICS), "reason"]
    rows = []
    for c in report["channels"]:
        m = c["metrics"]
        level = c["level"]
        shown = f"{symbol[level]} {level}" if level in symbol else "- not judged"
        cells = [c["name"], c.get("type", ""), shown]
        for key, _h in TABLE_METRICS:
            v = m.get(key)
            cells.append("-" if v is None else f"{v:.1f}")
        cells.append(c["reasons"][0] if c["reasons"] else "")
        rows.append(cells)
    widths = [max(len(h), *(len(r[i]) for r in rows)) for i, h in enumerate(head[:-1])]
    lines = ["  ".join(h.ljust(w) for h, w in zip(head[:-1], widths, strict=True)) + "  " + head[-1]]
    for r in rows:
        lines.append(("  ".join(x.ljust(w) for x, w in zip(r[:-1], widths, strict=True)) + "  " + r[-1]).rstrip())
    findings = report["findings"]
    if findings:
        lines.append("")
        lines.append("findings:")
        for f in findings:
            lines.append(f"  {symbol[f['level']]} {f['level']:<5} {f['kind']:<9} {f['reason']}")
    ident = report["stream"]["identity"]
    health = report["stream"]["health"] or {}
    lines.append("")
    lines.append(
        f"stream '{ident['name']}' ({ident['source_id']}, {ident['hostname']}): "
        f"{health.get('state', '?')}, {health.get('effective_rate_hz', 0):.0f} Hz"
        + (", LOST during the check" if report["stream_lost"] else "")
        + f"; mains {report['mains_hz'] or 'not detected'}"
        + (" Hz" if report["mains_hz"] else "")
    )
    lines.append(DISCLAIMER)
    return "\n".join(lines)


def exit_code(report: dict[str, Any]) -> int:
    if report["stream_lost"]:
        return EXIT_ATTENTION
    levels = [c["level"] for c in report["channels"] if c["level"] != "not_judged"]
    levels += [f["level"] for f in report["findings"]]
    return EXIT_OK if all(lv == "good" for lv in levels) else EXIT_ATTENTION


def _write_clip(
    args: argparse.Namespace, keep: KeepRecent, log: SetupLog | None, frame: QualityFrame | None
) -> None:
    """Write the kept samples as EDF+; findings become annotations (from the log when kept)."""
    from bedside.record.edf_clip import annotations_for_clip, write_edf_clip

    samples, _ = keep.ring.latest(len(keep.ring))
    if samples.shape[0] == 0:
        raise InputError("no samples arrived, so there is no EDF+ clip to write")
    duration_s = samples.shape[0] / keep.rate_hz
    start = datetime.now(UTC).astimezone() - timedelta(seconds=duration_s)
    if log is not None:
        notes = annotations_for_clip(log, start, duration_s)
    else:  # no log: the verdicts at the end of the clip
        notes = []
        if frame is not None:
            notes += [(duration_s, None, f"{c.name} {c.level_key}: {'; '.join(c.reasons)}")
                      for c in frame.channels if c.level is not None and c.level.key != "good"]
            notes += [(duration_s, None, f"{f.kind} {'-'.join(f.electrodes)}: {f.reason}")
                      for f in frame.findings]
    result = write_edf_clip(
        args.clip, samples, keep.rate_hz, [c.name for c in keep.channels], notes,
        subject_id=args.subject, start=start, technologist=args.technologist,
    )
    print(f"wrote EDF+ clip {result.path} ({result.n_samples / keep.rate_hz:.1f} s)", file=sys.stderr)


def run(args: argparse.Namespace) -> int:
    from bedside.checks.settings import load_quality
    from bedside.stream.channels import kind_counts
    from bedside.stream.discovery import resolve_one
    from bedside.stream.lsl import prepare_lsl
    from bedside.stream.reader import LslSource
    from bedside.stream.tee import KeepRecent

    settings = load_quality(args.config)
    if args.seconds < settings.min_data_s:
        raise InputError(
            f"--seconds must be at least {settings.min_data_s:g} (the checks need that much data; "
            f"min_data_s in quality.yaml), got {args.seconds:g}"
        )
    if args.seconds > MAX_SECONDS:
        raise InputError(
            f"--seconds {args.seconds:g} is longer than a check looks; accepted: "
            f"{settings.min_data_s:g} to {MAX_SECONDS:g} s (for longer, watch in the app: bedside watch)"
        )
    if args.clip_seconds is None:
        args.clip_seconds = args.seconds
    from bedside.checks.settings import DEFAULT_PATH
    from bedside.record.ids import validate_initials, validate_subject_id
    from bedside.record.session import optional_recorder

    if args.log:  # a bad ID or initials: say so before looking for the stream
        validate_initials(args.technologist)
        validate_subject_id(args.subject)
    if args.clip:
        if args.clip_seconds > args.seconds:
            raise InputError(
                f"--clip-seconds ({args.clip_seconds:g}) cannot be longer than --seconds ({args.seconds:g})"
            )
        if Path(args.clip).is_dir():
            raise InputError(f"--clip {args.clip}: is a folder; give a file name such as clip.edf")
    prepare_lsl()
    identity = resolve_one(args.stream, args.source_id, args.host, wait_s=args.wait)
    options = channel_options(args, identity.source_id)
    consumers: list[FrameConsumer] = []  # frame consumers (e.g. a setup log) go here
    with optional_recorder(
        args.log, technologist=args.technologist, subject_id=args.subject,
        config_paths=[args.config or DEFAULT_PATH],
    ) as recorder, LslSource(identity, options=options) as lsl_source:
        remember_choices(args, identity.source_id, options)
        kwargs, geometry_note = engine_options(lsl_source)
        setup = {
            "summary": kind_counts(lsl_source.channels),
            "reference": {"label": lsl_source.reference.label or None, "source": lsl_source.reference.source},
            "amplifier": lsl_source.profile.as_dict(),
            "neighbours": geometry_note,
        }
        source: Source = lsl_source
        keep = KeepRecent(lsl_source, args.clip_seconds) if args.clip else None
        if keep is not None:
            source = keep
        if recorder is not None:
            recorder.set_stream(source.identity, source.channels)
            consumers.append(recorder.on_frame)
        frame, lost, error = collect(source, settings, args.seconds, consumers, kwargs)
        identity = source.identity
        setup["notes"] = [lsl_source.unit_note] if lsl_source.unit_note else []
        channels = source.channels
        if keep is not None and error is None:
            _write_clip(args, keep, recorder.snapshot() if recorder is not None else None, frame)
    if error is not None:
        raise error
    if frame is None:
        raise InputError("no frame was produced; the stream sent nothing")
    report = as_json(frame, identity, args.seconds, lost, channels, setup)
    if args.format == "json":
        print(json.dumps(report, indent=2, ensure_ascii=False))
    else:
        print(as_table(report))
    if lost:
        print("the stream was lost during the check; verdicts after that are 'no data'", file=sys.stderr)
    return exit_code(report)
