"""``bedside check``: run the quality checks on a live stream and report the whole run.

Exit status: 0 when every channel and finding was good throughout the run (from its
first verdict on); 1 when any channel or finding went ``check``/``bad`` at any time, a
channel has no verdict at the end, or the stream was lost during the run; 2 on error
(bad option, config error, no stream, several streams match — they are listed so that
one can be pinned — or two outlets that cannot be told apart). ``--final-only`` judges
the end state alone. With ``--until-good S`` the look ends as soon as every scalp
electrode has been good for S consecutive seconds (or is accepted with ``--accept
ELECTRODE=REASON``): exit 0 when that is reached, 1 when ``--seconds`` pass first.

No data is not a fault: the first seconds (the warm-up, ``min_data_s`` in quality.yaml)
and any time the stream is stale or lost give ``no_data``, which is not counted in
``not_good_s`` and is never a ``worst_level`` (a channel never judged has
``worst_level`` ``no_data``); for the gate it is not good either, so the count starts
with the first verdicts and starts again after an outage.

JSON (``--format json``): one object ::

    {"stream": {"identity": {...}, "health": {...}},
     "channels": [{"name", "label", "type", "level", "reasons", "metrics",
                   "worst_level", "worst_reason", "not_good_s",
                   "events": [{"t_s", "level", "reason"}, ...]}, ...],
     "channel_setup": {"summary", "reference", "amplifier", "neighbours", "notes"},
     "findings": [{"kind", "electrodes", "level", "reason"}, ...],
     "run_findings": [{"kind", "electrodes", "level", "reason", "first_s", "last_s"}, ...],
     "mains_hz": 50, "window_s": 4.0, "seconds": 10.0, "looked_s": 10.0,
     "first_verdict_s": 2.3, "judged_on": "run", "stream_lost": false}

plus, with ``--until-good``, ``"ready": {"at_s", "held_s", "accepted": [{"electrode",
"reason"}]}`` (null when it was not reached) and ``"ready_waiting"``, the electrodes not
good at the end when it was not reached. ``level``, ``reasons``, ``metrics`` and
``findings`` are the end state; ``worst_level`` and ``worst_reason`` the worst level of
the run and its reason; ``not_good_s`` the seconds spent ``check`` or ``bad``; ``events``
the level changes (the first is the first verdict after the warm-up); ``run_findings``
every finding seen during the run; times (``t_s``, ``at_s`` …) are seconds from the
start of the look.

With a department profile (``--profile NAME``, default adult; configs/profiles/), the
report also has ``"profile": {"name", "title", "sha256", "impedance_limit_kohm",
"balance_ratio", "balance_min_kohm", "recheck_h", "montage", "montage_missing"}`` and
``"impedance": {"limit_kohm", "rule", "judged", "over_limit", "unbalanced",
"implausible"}``, and each channel ``"impedance": {"kohm", "source", "level", "reason"}``
(null when no value): the amplifier's (the stream's ``desc/channels/channel/impedance``,
kΩ) or one typed into the resumed ``--log`` (a typed value wins). An impedance over the
limit, unbalanced or implausible gives exit 1; with ``--until-good`` an electrode over
the limit keeps the gate shut unless accepted (``--accept``).

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
from bedside.checks.ready import NOT_JUDGED_KEY
from bedside.commands._common import (
    add_channel_options,
    add_profile_option,
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
    from bedside.checks.ready import ReadyGate, ReadyState
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
    p.add_argument(
        "--final-only", action="store_true",
        help="judge the end state alone (exit 0 when it is all good, even if something went "
        "wrong earlier in the look); by default anything that went check/bad during the run "
        "gives exit 1. The first seconds without a verdict (warm-up) never count as a fault",
    )
    gate = p.add_argument_group("start gate (may the recording start?)")
    gate.add_argument(
        "--until-good", metavar="S", type=positive_float("--until-good"), default=None,
        help="stop as soon as every scalp electrode has been good for S consecutive seconds "
        "(or is accepted): exit 0 and a 'ready' time; exit 1 if --seconds pass first. "
        "Seconds with no data (warm-up, an outage) start the count again",
    )
    gate.add_argument(
        "--accept", metavar="ELECTRODE=REASON", action="append", default=[],
        help="with --until-good: accept a scalp electrode as it is, with the reason "
        "(e.g. 'O2=scalp lesion, electrode left as is'); repeat for each one",
    )
    p.add_argument("--bell", action="store_true",
                   help="ring the terminal bell (on stderr) when ready is reached and when a new fault appears")
    p.add_argument("--config", metavar="PATH", help="a quality.yaml to use instead of the shipped one")
    add_profile_option(p)
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
    engine_kwargs: dict[str, Any] | None = None, done: Callable[[], bool] | None = None,
) -> tuple[QualityFrame | None, bool, BedsideError | None]:
    """Run engine + monitor on ``source`` for ``seconds`` (or until ``done()``); returns
    (last frame, lost?, error)."""
    from bedside.checks.engine import Engine
    from bedside.checks.monitor import Monitor

    engine = Engine(settings, source.channels, source.identity.nominal_rate_hz, **(engine_kwargs or {}))

    def on_frame(frame: QualityFrame) -> None:
        for consume in consumers:
            consume(frame)

    mon = Monitor(source, engine, on_frame, settings.update_hz)
    deadline = time.monotonic() + seconds
    with mon:
        while time.monotonic() < deadline and mon.running and not (done is not None and done()):
            time.sleep(0.05)
    return mon.latest, mon.lost_seen, mon.error


class Look:
    """What a look keeps besides the last frame: the whole run, the start gate, the
    bell. Its ``on_frame`` is a frame consumer (it runs on the monitor's thread); times
    are seconds of the look (wall clock from ``start``)."""

    def __init__(self, gate: ReadyGate | None = None, bell: bool = False,
                 ring: Callable[[], None] | None = None) -> None:
        from bedside.checks.ready import Cues, RunHistory

        self.history = RunHistory()
        self.gate = gate
        self.cues = Cues() if bell else None
        self.ring = ring or _ring
        self.t0 = time.time()
        self.last_t = 0.0
        self.on_ready: Callable[[ReadyState], None] | None = None

    def start(self) -> None:
        self.t0 = time.time()

    def on_frame(self, frame: QualityFrame) -> None:
        t = max(0.0, (frame.wall_time or time.time()) - self.t0)
        self.last_t = t
        self.history.update(frame, t)
        state = None
        if self.gate is not None:
            was = self.gate.ready_at_s
            state = self.gate.update(frame, t)
            if was is None and state.ready and self.on_ready is not None:
                self.on_ready(state)
        if self.cues is not None and self.cues.update(frame, state):
            self.ring()

    @property
    def ready(self) -> bool:
        return self.gate is not None and self.gate.ready_at_s is not None


def _ring() -> None:
    """The terminal bell, on stderr (stdout may carry the JSON report)."""
    sys.stderr.write("\a")
    sys.stderr.flush()


class ImpedanceReport:
    """The impedances judged for a check: the amplifier's (stream metadata) and those
    typed into a resumed log, against the profile's limits."""

    def __init__(self, profile: dict[str, Any], limits: Any, verdicts: dict[str, Any],
                 missing: tuple[str, ...] = ()) -> None:
        self.profile = dict(profile, montage_missing=list(missing))
        self.limits = limits
        self.verdicts = verdicts

    def summary(self) -> dict[str, Any]:
        by = {lv: [n for n, v in self.verdicts.items() if v.level == lv] for lv in ("bad", "check", "implausible")}
        lim = self.limits
        return {
            "limit_kohm": lim.limit_kohm,
            "rule": (f"over {lim.limit_kohm:g} kΩ: bad (holds the start gate unless accepted); over "
                     f"{lim.balance_ratio:g}× the others' median and {lim.balance_min_kohm:g} kΩ above it: "
                     "check (unbalanced; ours)"),
            "judged": len(self.verdicts),
            "over_limit": by["bad"], "unbalanced": by["check"], "implausible": by["implausible"],
        }


def _num(v: object) -> object:
    return None if isinstance(v, float) and not math.isfinite(v) else v


def as_json(frame: QualityFrame, identity: StreamIdentity, seconds: float, lost: bool,
            channels: tuple[ChannelInfo, ...] = (), setup: dict[str, Any] | None = None,
            look: Look | None = None, final_only: bool = False,
            impedance: ImpedanceReport | None = None) -> dict[str, Any]:
    runs = {r.name: r for r in look.history.channels(look.last_t)} if look is not None else {}
    verdicts = impedance.verdicts if impedance is not None else {}
    chans = []
    for i, c in enumerate(frame.channels):
        info = channels[i] if i < len(channels) else None
        d: dict[str, Any] = {"name": c.name}
        if info is not None:
            d["label"] = info.label
            d["type"] = info.kind
        d.update({k: v for k, v in c.as_dict().items() if k != "name"})
        if c.level is None and frame.live and any(r.startswith("not judged") for r in c.reasons):
            d["level"] = NOT_JUDGED_KEY  # a channel that is no electrode (engine's wording)
        d["metrics"] = {k: _num(v) for k, v in c.metrics.items()}
        run = runs.get(c.name)
        if run is not None:
            d["worst_level"] = d["level"] if d["level"] == NOT_JUDGED_KEY else run.worst_level
            d["worst_reason"] = run.worst_reason
            d["not_good_s"] = run.not_good_s
            d["events"] = [e.as_dict() for e in run.events]
        if impedance is not None:
            v = verdicts.get(c.name)
            d["impedance"] = v.as_dict() if v is not None else None
        chans.append(d)
    health = frame.stream_health
    report: dict[str, Any] = {
        "stream": {
            "identity": identity.as_dict(),
            "health": health.as_dict() if health is not None else None,
        },
        "channels": chans,
        "channel_setup": setup or {},
        "findings": [f.as_dict() for f in frame.findings],
        "run_findings": [f.as_dict() for f in look.history.findings()] if look is not None else [],
        "mains_hz": frame.mains_hz,
        "window_s": frame.window_s,
        "seconds": seconds,
        "looked_s": round(look.last_t, 3) if look is not None else seconds,
        "first_verdict_s": (None if look is None or look.history.first_verdict_s is None
                            else round(look.history.first_verdict_s, 3)),
        "judged_on": "final" if final_only or look is None else "run",
        "stream_lost": lost,
    }
    if impedance is not None:
        report["profile"] = impedance.profile
        report["impedance"] = impedance.summary()
    if look is not None and look.gate is not None:
        state = look.gate.state
        report["ready"] = state.as_dict() if state is not None else None
        # Who kept the gate shut at the end (not good then, and not accepted).
        report["ready_waiting"] = list(state.waiting) if state is not None and not state.ready else []
    return report


def as_table(report: dict[str, Any]) -> str:
    from bedside.checks.types import LEVEL_SYMBOLS, LEVEL_WORDS

    symbol = LEVEL_SYMBOLS
    word = LEVEL_WORDS
    head = ["channel", "type", "verdict", "during the run", *(h for _k, h in TABLE_METRICS), "reason"]
    rows = []
    for c in report["channels"]:
        m = c["metrics"]
        level = c["level"]
        shown = f"{symbol[level]} {word[level]}" if level in symbol else "- not judged"
        cells = [c["name"], c.get("type", ""), shown, _run_words(c)]
        for key, _h in TABLE_METRICS:
            v = m.get(key)
            cells.append("-" if v is None else f"{v:.1f}")
        reason = c["reasons"][0] if c["reasons"] else ""
        if not reason and c.get("worst_reason"):
            reason = f"earlier: {c['worst_reason']}"
        cells.append(reason)
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
            lines.append(f"  {symbol[f['level']]} {word[f['level']]:<5} {f['kind']:<9} {f['reason']}")
    now = {(f["kind"], tuple(f["electrodes"])) for f in findings}
    earlier = [f for f in report.get("run_findings", []) if (f["kind"], tuple(f["electrodes"])) not in now]
    if earlier:
        lines.append("")
        lines.append("findings earlier in the run (gone at the end):")
        for f in earlier:
            lines.append(f"  {symbol[f['level']]} {word[f['level']]:<5} {f['kind']:<9} {f['reason']} "
                         f"(seen {f['first_s']:.1f}–{f['last_s']:.1f} s)")
    changes = [c for c in report["channels"] if c.get("worst_level") in ("check", "bad")]
    if changes:
        lines.append("")
        lines.append("changes during the run (seconds from the start of the look):")
        for c in changes:
            said = ", ".join(
                f"{word.get(e['level'], e['level'])} at {e['t_s']:.1f} s" + (f" ({e['reason']})" if e["reason"] else "")
                for e in c["events"]
            )
            lines.append(f"  {c['name']}: {said}")
    words = _impedance_words(report)
    if words:
        lines.append("")
        lines.extend(words)
    if "ready" in report:
        lines.append("")
        lines.append(_ready_words(report))
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


def _run_words(c: dict[str, Any]) -> str:
    """The run in words: "● good throughout", "✖ bad, 3.2 s not good"."""
    from bedside.checks.types import LEVEL_SYMBOLS as symbol
    from bedside.checks.types import LEVEL_WORDS as word

    worst = c.get("worst_level")
    if worst is None or worst == NOT_JUDGED_KEY:
        return "-"
    if worst == "no_data":
        return f"{symbol['no_data']} never judged"
    if worst == "good":
        return f"{symbol['good']} {word['good']} throughout"
    return f"{symbol[worst]} {word[worst]}, {c['not_good_s']:.1f} s not good"


def _impedance_words(report: dict[str, Any]) -> list[str]:
    """The impedances and the profile in words (nothing when neither has news)."""
    prof = report.get("profile") or {}
    imp = report.get("impedance") or {}
    out = []
    if imp.get("judged"):
        values = {c["name"]: c["impedance"] for c in report["channels"] if c.get("impedance")}

        def named(names: list[str]) -> str:
            return ", ".join(f"{n} {values[n]['kohm']:g} kΩ" if n in values else n for n in names)

        said = [f"impedances ({imp['judged']} judged, profile {prof.get('name', '?')}, limit "
                f"{imp['limit_kohm']:g} kΩ)"]
        if imp["over_limit"]:
            said.append(f"over the limit: {named(imp['over_limit'])}")
        if imp["unbalanced"]:
            said.append(f"unbalanced: {named(imp['unbalanced'])}")
        if imp["implausible"]:
            said.append(f"implausible, not judged: {named(imp['implausible'])}")
        if len(said) == 1:
            said.append("all within the limit and balanced")
        out.append("; ".join(said))
    if prof.get("montage_missing"):
        out.append(f"profile {prof['name']} expects electrodes the stream does not carry: "
                   + ", ".join(prof["montage_missing"]))
    return out


def _ready_words(report: dict[str, Any]) -> str:
    ready = report["ready"]
    if ready is None:
        waiting = report.get("ready_waiting") or []
        return (f"NOT READY: the scalp electrodes were not all good together within {report['seconds']:g} s"
                + (f"; not good at the end: {', '.join(waiting)}" if waiting else ""))
    words = f"READY at {ready['at_s']:.1f} s: every scalp electrode good for {ready['held_s']:g} s"
    if ready["accepted"]:
        words += "; accepted as they are: " + "; ".join(
            f"{a['electrode']} ({a['reason']})" for a in ready["accepted"])
    return words


def judge_impedances(profile: Any, channels: tuple[ChannelInfo, ...], recorder: Any = None) -> ImpedanceReport:
    """The stream's published impedances and those typed into a resumed log (typed win),
    judged against the profile; only the stream's scalp electrodes are judged (the
    balance rule compares like with like)."""
    from bedside.checks.impedance import judge, merge

    names = {c.name for c in channels if c.is_scalp}
    published = {c.name: c.impedance_kohm for c in channels if c.impedance_kohm is not None and c.is_scalp}
    typed: dict[str, float] = {}
    if recorder is not None:
        snap = recorder.snapshot()
        typed = {e.electrode: e.kohm for e in snap.impedances if e.source == "typed" and e.electrode in names}
    verdicts = judge(merge(typed, published), profile.impedance)
    missing = profile.missing_from([c.name for c in channels if c.is_scalp])
    return ImpedanceReport(profile.as_dict(), profile.impedance, verdicts, missing)


def exit_code(report: dict[str, Any]) -> int:
    """0 all good, 1 attention (see the module docstring)."""
    if "ready" in report:
        return EXIT_OK if report["ready"] is not None else EXIT_ATTENTION
    if report["stream_lost"]:
        return EXIT_ATTENTION
    imp = report.get("impedance") or {}
    if imp.get("over_limit") or imp.get("unbalanced") or imp.get("implausible"):
        return EXIT_ATTENTION
    judged = [c for c in report["channels"] if c["level"] != NOT_JUDGED_KEY]
    levels = [c["level"] for c in judged] + [f["level"] for f in report["findings"]]
    if report.get("judged_on") == "run":
        levels += [c["worst_level"] for c in judged if c.get("worst_level") in ("check", "bad")]
        levels += [f["level"] for f in report.get("run_findings", [])]
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
    from bedside.checks.profiles import load_profile
    from bedside.stream.channels import kind_counts
    from bedside.stream.discovery import resolve_one
    from bedside.stream.lsl import prepare_lsl
    from bedside.stream.reader import LslSource
    from bedside.stream.tee import KeepRecent

    profile = load_profile(args.profile, args.config)  # unknown name: the accepted ones, exit 2
    settings = profile.quality
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
    from bedside.checks.impedance import implausible, over_limit
    from bedside.checks.ready import ReadyGate, match_accepted, parse_accept

    accepted = parse_accept(args.accept)
    if accepted and args.until_good is None:
        raise InputError("--accept goes with --until-good S (it accepts an electrode for the start gate)")
    if args.until_good is not None and args.until_good + settings.min_data_s > args.seconds:
        raise InputError(
            f"--until-good {args.until_good:g} cannot be reached within --seconds {args.seconds:g}: the "
            f"checks need {settings.min_data_s:g} s before the first verdict (min_data_s), so give "
            f"--seconds of at least {args.until_good + settings.min_data_s:g}"
        )
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
        config_paths=[args.config or DEFAULT_PATH], long_term=settings.long_term,  # the profile has its own record (name, hash)
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
        impedance = judge_impedances(profile, source.channels, recorder)
        gate = None
        if args.until_good is not None:
            scalp = [c.name for c in source.channels if c.is_scalp]
            gate = ReadyGate(args.until_good, match_accepted(accepted, scalp), scalp,
                             blocked=over_limit(impedance.verdicts))
        look = Look(gate, bell=args.bell)
        if recorder is not None:
            recorder.set_profile(profile.name, profile.sha256)
            recorder.set_stream(source.identity, source.channels)
            for ch in source.channels:  # what the amplifier published, kept beside the typed
                if ch.impedance_kohm is not None and not implausible(ch.impedance_kohm):
                    recorder.set_impedance(ch.name, ch.impedance_kohm, "amplifier")
            consumers.append(recorder.on_frame)
            if gate is not None:
                rec = recorder
                look.on_ready = lambda state: rec.set_ready(state.hold_s, state.accepted, how="bedside check")
        consumers.append(look.on_frame)
        look.start()
        frame, lost, error = collect(source, settings, args.seconds, consumers, kwargs,
                                     done=lambda: look.ready)
        identity = source.identity
        setup["notes"] = [lsl_source.unit_note] if lsl_source.unit_note else []
        channels = source.channels
        if keep is not None and error is None:
            _write_clip(args, keep, recorder.snapshot() if recorder is not None else None, frame)
    if error is not None:
        raise error
    if frame is None:
        raise InputError("no frame was produced; the stream sent nothing")
    report = as_json(frame, identity, args.seconds, lost, channels, setup, look, args.final_only, impedance)
    if args.format == "json":
        print(json.dumps(report, indent=2, ensure_ascii=False))
    else:
        print(as_table(report))
    if lost:
        print("the stream was lost during the check; verdicts after that are 'no data'", file=sys.stderr)
    return exit_code(report)
