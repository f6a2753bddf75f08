"""Stand-ins for the core, for UI tests only: fixed frames, a fixed plan, a memory log.

Nothing here is used by bedside itself. Positions are the 10-20 sites on a unit disc
(nose up) from the usual azimuthal drawing of the 10-20 system (Jasper 1958: the
midline and coronal rows at 20 % steps; common practice for head maps).
"""

from __future__ import annotations

import math
import threading
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from bedside.checks.types import ChannelQuality, Finding, Level, QualityFrame
from bedside.errors import BedsideError, InputError, MeasurementError, StreamNotFound
from bedside.placement.types import HeadMeasurements, Mark, PlacementPlan
from bedside.stream.tee import PassThrough
from bedside.stream.types import ChannelInfo, Chunk, StreamHealth, StreamIdentity
from bedside.ui.services import Services

# Polar positions: radius 0.4 per 20 % step from Cz (azimuthal equidistant), angle
# from the nose, clockwise to the right. Common practice for 10-20 head maps.
_POLAR = {
    "Fp1": (0.8, -18), "Fp2": (0.8, 18), "F7": (0.8, -54), "F8": (0.8, 54),
    "T7": (0.8, -90), "T8": (0.8, 90), "P7": (0.8, -126), "P8": (0.8, 126),
    "O1": (0.8, -162), "O2": (0.8, 162), "Fz": (0.4, 0), "Cz": (0.0, 0), "Pz": (0.4, 180),
    "C3": (0.4, -90), "C4": (0.4, 90), "F3": (0.5, -39), "F4": (0.5, 39),
    "P3": (0.5, -141), "P4": (0.5, 141),
}
NAMES_1020 = tuple(_POLAR)


def xy(name: str) -> tuple[float, float]:
    r, deg = _POLAR[name]
    a = math.radians(deg)
    return r * math.sin(a), r * math.cos(a)


def positions_for(names: Sequence[str]) -> dict[str, tuple[float, float, float]]:
    return {n: (*xy(n), 0.0) for n in names if n in _POLAR}


def project_2d(xyz: tuple[float, float, float]) -> tuple[float, float]:
    return float(xyz[0]), float(xyz[1])


def parse_measurements(ni: str, pa: str, circ: str, unit: str) -> HeadMeasurements:
    try:
        vals = [float(v) for v in (ni, pa, circ)]
    except ValueError:
        raise MeasurementError("stand-in: measurements must be numbers") from None
    if min(vals) <= 0:
        raise MeasurementError("stand-in: measurements must be greater than zero")
    return HeadMeasurements(*vals)


def plan_placement(m: HeadMeasurements, system: str, names: str) -> PlacementPlan:
    """The midline only, at the published 10-20 percentages (Jasper 1958: 10, 20, 20, 20, 20, 10)."""
    pct = (("Fpz", 10), ("Fz", 30), ("Cz", 50), ("Pz", 70), ("Oz", 90))
    marks = []
    prev = 0.0
    for name, p in pct:
        d = round(m.nasion_inion_cm * p / 100, 1)
        marks.append(Mark(name, "", "midline", "nasion", d, round(d - prev, 1), p, (0.0, 0.0, 0.0)))
        prev = d
    positions = {"Fpz": (0.0, 0.8, 0.0), "Fz": (0.0, 0.4, 0.0), "Cz": (0.0, 0.0, 0.0),
                 "Pz": (0.0, -0.4, 0.0), "Oz": (0.0, -0.8, 0.0)}
    return PlacementPlan(m, system, names, tuple(marks), (("Cz", "Fz"), ("Cz", "Pz")), positions)


def identity(name: str = "standin-bed", n: int = 20) -> StreamIdentity:
    return StreamIdentity(name, "EEG", f"{name}-sid", "ward-pc", n, 250.0)


def channels() -> tuple[ChannelInfo, ...]:
    chans = [ChannelInfo(n, n, "EEG", "microvolts", 1.0, True) for n in NAMES_1020]
    chans.append(ChannelInfo("ECG", "ECG", "ECG", "microvolts", 1.0, False))
    return tuple(chans)


def health(state: str = "live") -> StreamHealth:
    return StreamHealth(state, 250.0, 249.6 if state == "live" else 0.0, gaps=1, dropped_samples=3,  # type: ignore[arg-type]
                        seconds_since_data=0.0 if state == "live" else 4.0)


def frame(
    *,
    bad: Sequence[str] = ("T7",),
    check: Sequence[str] = ("O2",),
    bridge: tuple[str, str] | None = ("F3", "C3"),
    state: str = "live",
    wall_time: float = 1000.0,
) -> QualityFrame:
    """A fixed frame: named channels bad/check, the rest good; optional bridge finding."""
    out = []
    reasons: tuple[str, ...]
    for ch in channels():
        if ch.name in bad:
            level, reasons = Level.BAD, ("mains 24.0 µV at 50 Hz; 21 dB over its EEG band — re-seat or re-prepare the electrode",)
        elif ch.name in check:
            level, reasons = Level.CHECK, ("drift 38 µV/s — let the gel settle",)
        else:
            level, reasons = Level.GOOD, ()
        if state != "live":
            level, reasons = None, ("no data: stream lost",)  # type: ignore[assignment]
        metrics = {"mains_uv": 24.0 if ch.name in bad else 0.4, "line_noise_db": 21.0 if ch.name in bad else -12.5,
                   "rms_uv": 14.2, "drift_uv_per_s": 3.1}
        out.append(ChannelQuality(ch.name, level, metrics, reasons, ch.is_scalp))
    findings: tuple[Finding, ...] = ()
    if bridge is not None and state == "live":
        findings = (Finding("bridge", bridge, Level.BAD, "F3 and C3 look bridged — check for gel between them"),)
    return QualityFrame(wall_time, wall_time, tuple(out), findings, health(state), 4.0, mains_hz=50.0)


class FixedSource:
    """A Source that gives a 10 Hz sine plus 50 Hz on T7 (display data only)."""

    def __init__(self) -> None:
        self._identity = identity()
        self._channels = channels()
        self._t = 0
        self.closed = False

    @property
    def identity(self) -> StreamIdentity:
        return self._identity

    @property
    def channels(self) -> tuple[ChannelInfo, ...]:
        return self._channels

    def pull(self, timeout_s: float = 0.0) -> Chunk | None:
        n = 25
        t = (self._t + np.arange(n)) / 250.0
        self._t += n
        x = np.tile(20 * np.sin(2 * np.pi * 10 * t)[:, None], (1, len(self._channels)))
        x[:, NAMES_1020.index("T7")] += 40 * np.sin(2 * np.pi * 50 * t)
        return Chunk(x, t)

    def health(self) -> StreamHealth:
        return health()

    def close(self) -> None:
        self.closed = True


class ScriptedMonitor:
    """Pulls from the source and sends ``frames`` in turn at ``update_hz`` (then holds the last)."""

    def __init__(self, source: Any, frames: list[QualityFrame], on_frame: Callable[[QualityFrame], None],
                 update_hz: float) -> None:
        self.source, self.frames, self.on_frame, self.period = source, frames, on_frame, 1.0 / update_hz
        self._stop = threading.Event()
        self._thread = threading.Thread(target=self._run, daemon=True)
        self.stopped = False

    def start(self) -> None:
        self._thread.start()

    def stop(self) -> None:
        self._stop.set()
        self._thread.join(timeout=2)
        self.stopped = True

    def _run(self) -> None:
        i = 0
        while not self._stop.is_set():
            self.source.pull(0.0)
            self.on_frame(self.frames[min(i, len(self.frames) - 1)])
            i += 1
            self._stop.wait(self.period)


@dataclass
class MemoryStatus:
    path: Path
    last_saved: Any = None
    error: str | None = None
    unsaved_changes: bool = False
    notice: str | None = None
    closed: bool = False


@dataclass
class MemoryRecorder:
    """Keeps what the UI tells the log, in memory."""

    path: Path
    technologist: str = ""
    subject_id: str = ""
    notes: list[str] = field(default_factory=list)
    impedances: dict[str, float] = field(default_factory=dict)
    typed_at: float = 0.0  # when the impedances above were typed (a resumed log's)
    frames: int = 0
    saves: int = 0
    signed: str = ""
    closed: bool = False
    plan: Any = None
    taped: Any = None
    stream: Any = None
    exceptions: tuple[Any, ...] = ()
    ready: list[tuple[float, tuple[Any, ...], str]] = field(default_factory=list)
    tap_tests: list[tuple[tuple[Any, ...], tuple[Any, ...], str, float]] = field(default_factory=list)
    profiles: list[tuple[str, str]] = field(default_factory=list)

    def set_plan(self, plan: Any, taped: Any = None) -> None:
        self.plan = plan
        self.taped = taped

    def set_stream(self, identity: Any, channels: Any) -> None:
        self.stream = identity

    def on_frame(self, frame: Any) -> None:
        self.frames += 1

    def set_impedance(self, electrode: str, kohm: float, source: str = "typed") -> None:
        self.impedances[electrode] = kohm

    def typed_impedances(self) -> tuple[dict[str, float], float | None]:
        return dict(self.impedances), (self.typed_at if self.impedances else None)

    def set_profile(self, name: str, sha256: str) -> None:
        self.profiles.append((name, sha256))

    def add_note(self, text: str) -> None:
        self.notes.append(text)

    def set_technologist(self, initials: str) -> None:
        if not initials.isalpha():
            raise InputError(f"initials {initials!r} are not acceptable; accepted: letters")
        self.technologist = initials

    def set_subject(self, subject_id: str, rename_file: bool = False) -> None:
        self.subject_id = subject_id

    def sign_off(self, initials: str, exceptions: Any = ()) -> None:
        self.signed = initials
        self.exceptions = tuple(exceptions)

    def set_ready(self, held_s: float, accepted: Any = (), how: str = "") -> None:
        self.ready.append((held_s, tuple(accepted), how))

    def record_tap_test(self, results: Any, problems: Any = (), how: str = "", timeout_s: float = 0.0) -> None:
        self.tap_tests.append((tuple(results), tuple(problems), how, timeout_s))

    def save_now(self) -> None:
        self.saves += 1

    @property
    def status(self) -> MemoryStatus:
        return MemoryStatus(self.path, last_saved="12:00:00" if self.saves else None, closed=self.closed)

    def close(self) -> None:
        self.closed = True


class ScriptedLook:
    """A look for streams that hears ``script[i]`` at its i-th poll (then the last one
    for good); it has settled once the script is used up. ``polls`` counts the polls.

    hold_after: polls after this many wait until ``release()`` (at most 10 s), so a test
    can bound the poll at which the UI acted whatever the machine's load (the UI's
    answer to an earlier poll is then the only way forward)."""

    def __init__(self, script: Sequence[Sequence[StreamIdentity]], hold_after: int | None = None) -> None:
        self.script = [list(s) for s in script] or [[]]
        self.polls = 0
        self.closed = False
        self.hold_after = hold_after
        self._go = threading.Event()

    def release(self) -> None:
        self._go.set()

    def visible(self) -> list[StreamIdentity]:
        self.polls += 1
        if self.hold_after is not None and self.polls > self.hold_after:
            self._go.wait(10.0)
        return list(self.script[min(self.polls, len(self.script)) - 1])

    def settled(self, wait_s: float) -> bool:
        return self.polls >= len(self.script)

    def close(self) -> None:
        self.closed = True


def services(
    *,
    frames: list[QualityFrame] | None = None,
    streams: list[StreamIdentity] | None = None,
    recorder: MemoryRecorder | None = None,
    **overrides: Any,
) -> Services:
    """Stand-in services: fixed streams and frames, the midline plan, a memory log."""
    frame_list = frames or [frame()]
    found = streams if streams is not None else []

    def select(cands: Sequence[StreamIdentity], name: Any, sid: Any, host: Any) -> StreamIdentity:
        from bedside.stream.discovery import select_stream

        return select_stream(list(cands), name, sid, host)

    values: dict[str, Any] = dict(
        parse_measurements=parse_measurements,
        plan_placement=plan_placement,
        positions_for=positions_for,
        project_2d=project_2d,
        look_for_streams=lambda: ScriptedLook([found]),
        select_stream=select,
        open_source=lambda ident, choices: FixedSource(),
        load_quality=lambda: None,
        make_engine=lambda settings, source: (None, ""),
        make_monitor=lambda src, eng, on_frame, hz: ScriptedMonitor(src, frame_list, on_frame, hz),
        open_recorder=(lambda path, tech, subj, cfgs: recorder) if recorder is not None else None,
    )
    values.update(overrides)
    return Services(**values)


async def until(pilot: Any, cond: Callable[[], bool], tries: int = 100) -> bool:
    """In a Pilot test: let the app run 0.05 s at a time until ``cond()`` (at most
    ``tries`` times); whether it came true."""
    for _ in range(tries):
        await pilot.pause(0.05)
        if cond():
            return True
    return bool(cond())


def wait_until(cond: Callable[[], bool], timeout_s: float = 5.0) -> bool:
    end = time.monotonic() + timeout_s
    while time.monotonic() < end:
        if cond():
            return True
        time.sleep(0.02)
    return cond()


def screen_text(app: Any) -> str:
    """What the terminal shows now, as plain text (same render as the SVG screenshot)."""
    import io

    from rich.console import Console

    width, height = app.size
    console = Console(width=width, height=height, file=io.StringIO(), force_terminal=True,
                      color_system="truecolor", record=True, legacy_windows=False, safe_box=False)
    console.print(app.screen._compositor.render_update(full=True, screen_stack=app._background_screens))
    return console.export_text()


def confirm_open(app: Any) -> bool:
    """The channels screen is up with its rows (it is pushed before it is drawn)."""
    from textual.widgets import DataTable

    from bedside.ui.screens.channels import ChannelsScreen

    screen = app.screen
    if not isinstance(screen, ChannelsScreen) or not screen.is_mounted:
        return False
    tables = screen.query(DataTable)
    return bool(tables) and tables.first().row_count > 0


async def edit_channel(pilot: Any, row: int, *, name: str | None = None, kind: str | None = None) -> None:
    """As typed: choose the row, Tab to its name field, then its type field (Home,
    Ctrl-K clears a field), Enter sets both."""
    from textual.widgets import DataTable, Input

    screen = pilot.app.screen
    table = screen.query_one(DataTable)
    table.focus()
    table.move_cursor(row=row)
    await pilot.pause(0.05)
    await pilot.press("tab")
    assert screen.focused is screen.query_one("#channel-name", Input)
    if name is not None:
        await pilot.press("home", "ctrl+k", *name)
    if kind is not None:
        await pilot.press("tab")
        assert screen.focused is screen.query_one("#channel-type", Input)
        await pilot.press("home", "ctrl+k", *kind.lower())
    await pilot.press("enter")
    await pilot.pause(0.1)


# --- the live session's stand-ins (tests/ui/test_live_session.py, test_quick_picks.py) ---
class CountingMonitor:
    """Sends a frame every 20 ms; counts the monitors running at once (class-wide)."""

    lock = threading.Lock()
    running = 0
    most = 0
    made: list[CountingMonitor] = []

    def __init__(self, source: Any, engine: Any, on_frame: Callable[[QualityFrame], None], hz: float,
                 fail_after: int | None = None) -> None:
        self.source, self.on_frame, self.fail_after = source, on_frame, fail_after
        self.error: BedsideError | None = None
        self.sent = 0
        self._stop = threading.Event()
        self._thread = threading.Thread(target=self._run, daemon=True)
        self.started = self.stopped = False
        with CountingMonitor.lock:
            CountingMonitor.made.append(self)

    def wall_time(self) -> float:
        """This monitor's frames carry its number in the thousands (1000 + 1000·n + k)."""
        return 1000.0 + 1000.0 * CountingMonitor.made.index(self) + self.sent

    @classmethod
    def reset(cls) -> None:
        with cls.lock:
            cls.running, cls.most, cls.made = 0, 0, []

    def start(self) -> None:
        with CountingMonitor.lock:
            CountingMonitor.running += 1
            CountingMonitor.most = max(CountingMonitor.most, CountingMonitor.running)
        self.started = True
        self._thread.start()

    def stop(self) -> None:
        self._stop.set()
        self._thread.join(timeout=2)
        if self.started and not self.stopped:
            with CountingMonitor.lock:
                CountingMonitor.running -= 1
        self.stopped = True

    def _run(self) -> None:
        while not self._stop.is_set():
            self.source.pull(0.0)
            if self.fail_after is not None and self.sent >= self.fail_after:
                # As bedside.checks.monitor.Monitor does: the error is set, then a last frame.
                self.error = BedsideError("the stream's channel count changed")
                self.on_frame(frame(state="lost"))
                return
            self.sent += 1
            self.on_frame(frame(wall_time=self.wall_time()))
            self._stop.wait(0.02)


class Display(PassThrough):
    """The display copy stand-in: passes through, holds nothing (no Textual)."""

    def __init__(self, inner: Any, seconds: float) -> None:
        super().__init__(inner)
        self.buffer = None


class Opener:
    """open_source that takes ``delay_s`` (an LSL inlet being resolved) and names each
    source by the stream; ``refuse`` raises for the named streams."""

    def __init__(self, delay_s: float = 0.0) -> None:
        self.delay_s = delay_s
        self.opened: list[Any] = []
        self.refuse: set[str] = set()
        self.lock = threading.Lock()

    def __call__(self, ident: StreamIdentity, choices: Any) -> Any:
        time.sleep(self.delay_s)
        if ident.name in self.refuse:
            raise StreamNotFound(f"stream {ident.name!r} is gone")
        src = FixedSource()
        src._identity = ident  # noqa: SLF001 - a stand-in named after the stream opened
        with self.lock:
            self.opened.append(src)
        return src
