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

The report (JSON and table) and the exit code are made in
:mod:`bedside.commands._check_report`, which documents the JSON.
"""

from __future__ import annotations

import argparse
import sys
import time
from collections.abc import Callable
from datetime import UTC, datetime, timedelta
from pathlib import Path
from typing import TYPE_CHECKING, Any

from bedside.cautions import DISCLAIMER
from bedside.checks.impedance import implausible, over_limit
from bedside.checks.profiles import load_profile
from bedside.checks.ready import Cues, ReadyGate, RunHistory, match_accepted, parse_accept
from bedside.checks.settings import DEFAULT_PATH
from bedside.commands._check_report import (
    EXIT_ATTENTION,
    EXIT_OK,
    ImpedanceReport,
    as_json,
    as_table,
    exit_code,
    judge_impedances,
)
from bedside.commands._common import (
    add_channel_options,
    add_profile_option,
    add_stream_selection,
    channel_options,
    positive_float,
    remember_choices,
)
from bedside.engine_setup import engine_options
from bedside.errors import BedsideError, InputError
from bedside.record.edf_clip import annotations_for_clip, write_edf_clip
from bedside.record.ids import validate_initials, validate_subject_id
from bedside.record.plain import json_text
from bedside.stream.discovery import resolve_one
from bedside.stream.lsl import prepare_lsl
from bedside.stream.tee import KeepRecent

NAME = "check"
ORDER = 35
FORMATS = ("table", "json")
#: The report's names (from commands._check_report) are the command's too, for the
#: tests and scripts that read them here.
__all__ = ["EXIT_ATTENTION", "EXIT_OK", "ImpedanceReport", "as_json", "as_table", "exit_code",
           "judge_impedances", "register", "run"]

if TYPE_CHECKING:
    from bedside.checks.ready import ReadyState
    from bedside.checks.settings import QualitySettings
    from bedside.checks.types import QualityFrame
    from bedside.record.log import SetupLog
    from bedside.stream.source import Source

FrameConsumer = Callable[["QualityFrame"], None]

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
    # Lazy, measured: the engine and the monitor bring SciPy's signal package, 1.7 s to
    # import (python -X importtime) — and every bedside command imports this module to
    # build its parser.
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


def _write_clip(
    args: argparse.Namespace, keep: KeepRecent, log: SetupLog | None, frame: QualityFrame | None
) -> None:
    """Write the kept samples as EDF+; findings become annotations (from the log when kept)."""
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
    # Lazy, measured: the reader and the channel set-up take 75 ms to import (python -X
    # importtime), paid by every command's start otherwise; importing the recorder
    # registers its exit handler (record/session.py), which no other command should carry.
    from bedside.record.session import optional_recorder
    from bedside.stream.channels import kind_counts
    from bedside.stream.reader import LslSource

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
    accepted = parse_accept(args.accept)
    if accepted and args.until_good is None:
        raise InputError("--accept goes with --until-good S (it accepts an electrode for the start gate)")
    if args.until_good is not None and args.until_good + settings.min_data_s > args.seconds:
        raise InputError(
            f"--until-good {args.until_good:g} cannot be reached within --seconds {args.seconds:g}: the "
            f"checks need {settings.min_data_s:g} s before the first verdict (min_data_s), so give "
            f"--seconds of at least {args.until_good + settings.min_data_s:g}"
        )
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
        print(json_text(report))
    else:
        print(as_table(report))
    if lost:
        print("the stream was lost during the check; verdicts after that are 'no data'", file=sys.stderr)
    return exit_code(report)
