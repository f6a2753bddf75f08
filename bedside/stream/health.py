"""Stream health from timestamps and arrival times — no LSL here, so it is testable alone.

:class:`HealthTracker` is fed each pulled chunk's timestamps (LSL clock, seconds, already
time-corrected) with the moment they arrived, and is asked for a
:class:`~bedside.stream.types.StreamHealth` at any time:

* **gaps / dropped samples** — a step between consecutive timestamps longer than
  ``gap_tolerance_periods`` sample periods (and than ``gap_min_s``) is one gap of
  ``round(step × rate) − 1`` dropped samples;
* **clock jumps** — timestamps that go back by more than ``clock_jump_s``, or a forward
  step that lands more than ``clock_jump_s`` in the future of this computer's clock
  (data cannot come from the future), are clock jumps: reported, not counted as lost
  data, and the rate measurement starts again;
* **effective rate** — samples over the span of the newest ``rate_window_s`` of unbroken
  data (it starts again after a gap or a clock jump, which are reported on their own);
  a disagreement with the nominal rate beyond ``rate_tolerance`` is noted once (and
  again when it clears);
* **bursts** — one pull bringing more than ``burst_s`` of data;
* **state** — "connecting" before the first sample; "live"; "stale" after
  ``stale_after_s`` without data; "lost" when, in addition, the outlet is no longer
  visible on the network (or, when its visibility cannot be known, after
  ``lost_after_s`` without data). Data after "lost" counts as a reconnect.
"""

from __future__ import annotations

import logging
import math
import threading
from collections import deque

import numpy as np

from bedside.stream.settings import StreamSettings
from bedside.stream.types import StreamHealth, StreamState

log = logging.getLogger("bedside")


class HealthTracker:
    """Running health of one stream. Times: ``now_wall`` is a monotonic clock (s),
    ``now_lsl`` the local LSL clock (s). Thread-safe."""

    def __init__(
        self,
        nominal_rate_hz: float,
        settings: StreamSettings,
        *,
        started_wall: float,
        label: str = "stream",
    ) -> None:
        self.nominal_rate_hz = float(nominal_rate_hz)
        self.settings = settings
        self.label = label
        self._lock = threading.Lock()
        self._started_wall = started_wall
        self._last_ts: float | None = None
        self._last_data_wall: float | None = None
        self._chunks: deque[tuple[float, float, int]] = deque()  # (first_ts, last_ts, n)
        self._gaps = 0
        self._dropped = 0
        self._clock_jumps = 0
        self._bursts = 0
        self._reconnects = 0
        self._clock_offset_s = 0.0
        self._visible: bool | None = None
        self._reported: StreamState = "connecting"
        self._lost_in_silence = False  # "lost" was reported since the last data
        self._rate_off = False
        self._notes: deque[str] = deque(maxlen=settings.max_notes)
        self._untrusted: tuple[str, ...] = ()
        self.total_samples = 0

    # -- inputs ---------------------------------------------------------------------------

    def note(self, text: str, *, level: int = logging.WARNING) -> None:
        """Add a plain-language note (also logged)."""
        with self._lock:
            self._note(text, level)

    def _note(self, text: str, level: int = logging.WARNING) -> None:
        self._notes.append(text)
        log.log(level, "%s: %s", self.label, text)

    def set_visible(self, visible: bool | None) -> None:
        """Whether the outlet is visible on the network now (None: not known)."""
        with self._lock:
            self._visible = visible

    def set_clock_offset(self, offset_s: float) -> None:
        with self._lock:
            self._clock_offset_s = float(offset_s)

    def set_untrusted(self, source_ids: tuple[str, ...]) -> None:
        with self._lock:
            self._untrusted = tuple(source_ids)

    def observe(self, timestamps: np.ndarray, now_lsl: float, now_wall: float) -> None:
        """Account for one chunk's timestamps (n,), which arrived at ``now_wall``."""
        ts = np.asarray(timestamps, dtype=np.float64)
        n = int(ts.shape[0])
        if n == 0:
            return
        s = self.settings
        with self._lock:
            before = self._state_at(now_wall)
            if before in ("stale", "lost") and self._last_data_wall is not None:
                silent = now_wall - self._last_data_wall
                if before == "lost" or self._lost_in_silence:
                    self._reconnects += 1
                    self._note(f"reconnected: data again after {silent:.1f} s without")
                else:
                    self._note(f"data again after {silent:.1f} s without", logging.INFO)
            elif before == "connecting":
                log.info("%s: first data", self.label)
            self._last_data_wall = now_wall
            self._reported = "live"
            self._lost_in_silence = False
            self.total_samples += n

            prev = self._last_ts
            steps = np.diff(ts, prepend=prev) if prev is not None else np.diff(ts)
            offset = 0 if prev is not None else 1  # index in ts of the sample after each step
            period = 1.0 / self.nominal_rate_hz if self.nominal_rate_hz > 0 else math.inf
            gap_s = max(s.gap_tolerance_periods * period, s.gap_min_s)
            reset_rate = False
            big = np.flatnonzero((steps > gap_s) | (steps < -s.clock_jump_s))
            for i in big:
                step = float(steps[i])
                after = float(ts[i + offset])
                if step < 0:
                    self._clock_jumps += 1
                    reset_rate = True
                    self._note(f"clock jump: timestamps went back {-step:.2f} s")
                elif after > now_lsl + s.clock_jump_s:
                    self._clock_jumps += 1
                    reset_rate = True
                    self._note(f"clock jump: timestamps leapt {step:.2f} s ahead of this computer's clock")
                else:
                    lost = max(1, int(round(step * self.nominal_rate_hz)) - 1)
                    self._gaps += 1
                    self._dropped += lost
                    reset_rate = True  # the rate is measured over unbroken data
                    self._note(f"gap of {step:.2f} s in the data (~{lost} samples missing)")
            if reset_rate:
                self._chunks.clear()
            self._last_ts = float(ts[-1])

            span = float(ts[-1] - ts[0]) if n > 1 else 0.0
            if span > s.burst_s and before != "connecting":
                self._bursts += 1
                self._note(f"burst: {span:.1f} s of data arrived at once", logging.INFO)
            self._chunks.append((float(ts[0]), float(ts[-1]), n))
            while self._chunks and self._chunks[0][1] < ts[-1] - s.rate_window_s:
                self._chunks.popleft()
            self._check_rate()

    def _effective_rate(self) -> tuple[float, float]:
        """(rate_hz, span_s) over the chunks kept."""
        if not self._chunks:
            return 0.0, 0.0
        total = sum(c[2] for c in self._chunks)
        span = self._chunks[-1][1] - self._chunks[0][0]
        if span <= 0 or total < 2:
            return 0.0, span
        return (total - 1) / span, span

    def _check_rate(self) -> None:
        rate, span = self._effective_rate()
        s = self.settings
        if self.nominal_rate_hz <= 0 or span < 0.8 * s.rate_window_s:
            return
        off = abs(rate / self.nominal_rate_hz - 1.0) > s.rate_tolerance
        if off and not self._rate_off:
            self._note(
                f"rate: the timestamps give {rate:.1f} Hz but the stream declares "
                f"{self.nominal_rate_hz:g} Hz"
            )
        elif not off and self._rate_off:
            self._note(f"rate: back to {rate:.1f} Hz, as declared", logging.INFO)
        self._rate_off = off

    # -- output ---------------------------------------------------------------------------

    def _state_at(self, now_wall: float) -> StreamState:
        since_ref = self._last_data_wall if self._last_data_wall is not None else self._started_wall
        silent = now_wall - since_ref
        if self._last_data_wall is None and silent < self.settings.stale_after_s:
            return "connecting"
        if silent >= self.settings.stale_after_s:
            if self._visible is False:
                return "lost"
            if self._visible is None and silent >= self.settings.lost_after_s:
                return "lost"
            return "stale"
        return "live"

    def snapshot(self, now_wall: float) -> StreamHealth:
        """The health now (also notes a change to stale/lost)."""
        with self._lock:
            state = self._state_at(now_wall)
            if state != self._reported:
                if state == "stale" and self._lost_in_silence:
                    self._note("the outlet is visible again; waiting for its data", logging.INFO)
                elif state == "stale":
                    self._note(f"no data for {self.settings.stale_after_s:g} s (stale)")
                elif state == "lost":
                    self._lost_in_silence = True
                    self._note("lost: the outlet is no longer visible on the network; "
                               "waiting for it to come back")
                self._reported = state
            rate, _ = self._effective_rate()
            since_ref = self._last_data_wall if self._last_data_wall is not None else self._started_wall
            return StreamHealth(
                state=state,
                nominal_rate_hz=self.nominal_rate_hz,
                effective_rate_hz=rate,
                gaps=self._gaps,
                dropped_samples=self._dropped,
                seconds_since_data=max(0.0, now_wall - since_ref),
                clock_offset_s=self._clock_offset_s,
                reconnects=self._reconnects,
                notes=tuple(self._notes),
                clock_jumps=self._clock_jumps,
                bursts=self._bursts,
                untrusted_sources=self._untrusted,
            )
