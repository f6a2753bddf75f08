"""The loop that keeps verdicts live: pull from a Source, push to the Engine, emit frames.

A background thread (``start``/``stop``, or use it as a context manager). It pulls
new samples (never pylsl directly: any :class:`~bedside.stream.source.Source`),
pushes them to the engine, and calls ``on_frame`` at ``update_hz`` with a finished
:class:`~bedside.checks.types.QualityFrame`. When the source's health changes
(live → stale/lost and back) a frame is emitted at once; while not live the frame's
levels are None ("no data"), never the last colours. When data resumes after an
outage the engine's window is reset, so old samples are not shown as live. The UI
and the headless ``bedside check`` both use this class.
"""

from __future__ import annotations

import logging
import threading
import time
from collections.abc import Callable

from bedside.checks.engine import Engine
from bedside.checks.types import QualityFrame
from bedside.errors import BedsideError
from bedside.stream.source import Source

log = logging.getLogger("bedside")


class Monitor:
    """Feeds ``engine`` from ``source`` on a thread; ``on_frame`` receives every frame.

    on_frame runs on the monitor's thread: hand the frame over (post a message),
    don't do slow work in it. ``latest`` is the newest frame; ``error`` the
    BedsideError that stopped the loop (the stream became unusable, or an internal
    error, said in words), if any; its last frame is then 'no data' naming it.
    """

    def __init__(
        self,
        source: Source,
        engine: Engine,
        on_frame: Callable[[QualityFrame], None],
        update_hz: float = 4.0,
        pull_timeout_s: float = 0.05,
    ) -> None:
        if not update_hz > 0:
            raise ValueError(f"update_hz must be greater than zero, got {update_hz}")
        self.source, self.engine, self.on_frame = source, engine, on_frame
        self.update_hz = float(update_hz)
        self.pull_timeout_s = min(float(pull_timeout_s), 0.5 / self.update_hz)
        self.latest: QualityFrame | None = None
        self.error: BedsideError | None = None
        self.frames = 0
        self.lost_seen = False
        self._stop = threading.Event()
        self._thread: threading.Thread | None = None

    # ------------------------------------------------------------------ control
    def start(self) -> Monitor:
        if self._thread is not None and self._thread.is_alive():
            return self
        self._stop.clear()
        self._thread = threading.Thread(target=self._run, name="bedside-monitor", daemon=True)
        self._thread.start()
        return self

    def stop(self, timeout_s: float = 2.0) -> None:
        self._stop.set()
        if self._thread is not None:
            self._thread.join(timeout_s)
            if self._thread.is_alive():
                log.warning("the monitor thread did not stop within %.1f s", timeout_s)
        self._thread = None

    @property
    def running(self) -> bool:
        return self._thread is not None and self._thread.is_alive()

    def __enter__(self) -> Monitor:
        return self.start()

    def __exit__(self, *exc: object) -> None:
        self.stop()

    # --------------------------------------------------------------------- loop
    def _emit(self, frame: QualityFrame) -> None:
        self.latest = frame
        self.frames += 1
        try:
            self.on_frame(frame)
        except BedsideError as exc:
            log.error("frame consumer failed: %s", exc)
        except Exception:  # a consumer bug must not stop the monitoring; it is logged in full
            log.exception("frame consumer raised; monitoring goes on")

    def _run(self) -> None:
        period = 1.0 / self.update_hz
        next_emit = time.monotonic() + period
        last_state: str | None = None
        try:
            while not self._stop.is_set():
                chunk = self.source.pull(self.pull_timeout_s)
                if chunk is not None and len(chunk.timestamps):
                    self.engine.push(chunk.samples_uv, chunk.timestamps)
                health = self.source.health()
                changed = health.state != last_state
                if changed:
                    if health.state in ("stale", "lost"):
                        self.lost_seen = self.lost_seen or health.state == "lost"
                        log.warning("stream %s: verdicts show 'no data'", health.state)
                    if health.state == "live" and last_state in ("stale", "lost"):
                        log.info("stream live again: starting a fresh window")
                        self.engine.reset()
                    last_state = health.state
                now = time.monotonic()
                if changed or now >= next_emit:
                    self._emit(self.engine.evaluate(health))
                    next_emit = max(next_emit + period, now + 0.25 * period) if not changed else now + period
        except BedsideError as exc:
            self.error = exc
            log.error("monitoring stopped: %s", exc)
            frame = self.engine.no_data(f"no data: {exc}", None)
            self._emit(frame)
        except Exception as exc:  # a bug in the checks or the source: said, not a silent stall
            log.exception("monitoring stopped on an internal error")
            self.error = BedsideError(
                f"the checks stopped on an internal error ({type(exc).__name__}: {exc}); "
                "pick the stream again to restart them — the setup log is kept"
            )
            try:
                frame = self.engine.no_data(f"no data: {self.error}", None)
            except Exception:  # the engine itself is broken: there is no frame to give
                log.exception("no 'no data' frame could be made")
                return
            self._emit(frame)
