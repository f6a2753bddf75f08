"""What keeps a session's changes from being lost: the autosave thread, the rescue copy
written when the last save fails, and the exit registry that closes (saves) every open
session when the interpreter ends without ``close()``.

:class:`Autosaver` owns one daemon thread, ``bedside-log-autosave``. Every ``interval_s``
(or at once after :meth:`Autosaver.wake`) it asks ``needs_save()`` and, when true, calls
``save()``; a failing save is the recorder's to report (it keeps the log in memory and
says so in its status), and any other error is logged and the loop goes on, so a bug
never silently ends autosaving.
"""

from __future__ import annotations

import atexit
import logging
import os
import tempfile
import threading
import time
import weakref
from collections.abc import Callable
from pathlib import Path
from typing import Protocol

from bedside.errors import LogSaveError, RecordError
from bedside.record.atomic import atomic_write_text

log = logging.getLogger("bedside")

#: The longest autosave interval allowed: a crash may lose at most this much.
AUTOSAVE_MAX_S = 2.0
AUTOSAVE_MIN_S = 0.05


class Autosaver:
    """The autosave thread of one session (see the module docstring)."""

    def __init__(self, interval_s: float, needs_save: Callable[[], bool], save: Callable[[], object]) -> None:
        self.interval_s = interval_s
        self._needs_save = needs_save
        self._save = save
        self._stop = threading.Event()
        self._wake = threading.Event()
        self._thread: threading.Thread | None = None

    def start(self) -> None:
        self._thread = threading.Thread(target=self._loop, name="bedside-log-autosave", daemon=True)
        self._thread.start()

    def wake(self) -> None:
        """Save soon (at the thread's next turn), not at the end of the interval."""
        self._wake.set()

    def stop(self, join_s: float = 10.0) -> None:
        """End the thread (waits for a save under way, at most ``join_s``). Idempotent;
        harmless from the thread itself."""
        self._stop.set()
        self._wake.set()
        if self._thread is not None and self._thread is not threading.current_thread():
            self._thread.join(timeout=join_s)

    def _loop(self) -> None:
        while not self._stop.is_set():
            self._wake.wait(self.interval_s)
            self._wake.clear()
            if self._stop.is_set():
                break
            try:
                if self._needs_save():
                    self._save()
            except Exception:  # a bug must not silently end autosaving: log it, go on
                log.exception("setup log autosave failed unexpectedly; retrying")


def write_rescue_copy(stem: str, text: str, when_s: float) -> Path | None:
    """The log's text under ``$XDG_STATE_HOME/bedside/unsaved/`` (else the temp folder)
    when its own file cannot be written; the path written, or None when neither can be."""
    state = os.environ.get("XDG_STATE_HOME") or str(Path.home() / ".local" / "state")
    name = f"{stem}-{time.strftime('%Y%m%dT%H%M%S', time.localtime(when_s))}.yaml"
    for folder in (Path(state) / "bedside" / "unsaved", Path(tempfile.gettempdir()) / "bedside-unsaved"):
        try:
            folder.mkdir(parents=True, exist_ok=True, mode=0o700)
            target = atomic_write_text(folder / name, text)
        except (OSError, RecordError):
            continue
        log.warning("setup log: rescue copy written to %s", target)
        return target
    return None


class Closable(Protocol):
    def close(self) -> None: ...


_OPEN: weakref.WeakSet[Closable] = weakref.WeakSet()  # type: ignore[type-var]


def close_at_exit(session: Closable) -> None:
    """Close ``session`` when the interpreter ends, if nothing closed it before."""
    _OPEN.add(session)


def closed(session: Closable) -> None:
    """``session`` closed itself: nothing to do for it at exit."""
    _OPEN.discard(session)


@atexit.register
def _close_open_sessions() -> None:
    # An interpreter ending without close() (an unhandled error in a script) still
    # writes the last changes. SIGKILL skips this; the autosave covers that case.
    for session in list(_OPEN):
        try:
            session.close()
        except LogSaveError as exc:
            log.error("%s", exc)
