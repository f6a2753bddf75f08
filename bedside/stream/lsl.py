"""The one place in ``bedside/stream`` that imports pylsl.

* :func:`prepare_lsl` configures liblsl before its first use: liblsl writes its own
  log to file descriptor 2, which is where Textual draws, so bedside silences it
  unless the user configured LSL themselves (``LSLAPICFG``, ``./lsl_api.cfg``,
  ``~/lsl_api/lsl_api.cfg`` or ``/etc/lsl_api/lsl_api.cfg``).
* :func:`pylsl` returns the module, loading it on first use and translating the
  RuntimeError that pylsl raises when liblsl is missing into :class:`LSLUnavailable`.
* :func:`translate` turns pylsl's ``LostError`` and ``pylsl.util.TimeoutError`` (which
  shadows the built-in name) into bedside's errors.
"""

from __future__ import annotations

import logging
import os
import threading
from pathlib import Path
from types import ModuleType
from typing import Any

from bedside.errors import LSLUnavailable, StreamError, StreamLost, StreamNotFound

log = logging.getLogger("bedside")

#: liblsl's verbosity when bedside configures it: -3 is "fatal only" (loguru levels:
#: -3 fatal, -2 error, -1 warning, 0 info). liblsl uses the same level for the terminal
#: and the log file, so a file cannot get more than the screen would.
QUIET_LEVEL = -3

_lock = threading.Lock()
_prepared = False
_module: ModuleType | None = None

HOW_TO_GET_LIBLSL = (
    "bedside reads streams through liblsl, and it could not be loaded. "
    "Install the pylsl wheel that bundles it (x86_64 Linux with glibc >= 2.35, Windows, "
    "macOS), or install liblsl yourself (e.g. `conda install -c conda-forge liblsl`, or a "
    "release from https://github.com/sccn/liblsl/releases) and point PYLSL_LIB at the "
    "library file (liblsl.so / lsl.dll / liblsl.dylib)."
)


def user_lsl_config() -> Path | None:
    """The LSL configuration file the user set up, if any (liblsl's own search order)."""
    env = os.environ.get("LSLAPICFG", "").strip()
    if env:
        return Path(env)
    for candidate in (
        Path("lsl_api.cfg"),
        Path.home() / "lsl_api" / "lsl_api.cfg",
        Path("/etc/lsl_api/lsl_api.cfg"),
    ):
        if candidate.is_file():
            return candidate
    return None


def quiet_config(log_to: Path | None = None, level: int = QUIET_LEVEL) -> str:
    """The INI text bedside gives liblsl when the user has not configured it."""
    text = f"[log]\nlevel = {int(level)}\n"
    if log_to is not None:
        text += f"file = {Path(log_to)}\n"
    return text


def prepare_lsl(log_to: Path | None = None, *, level: int = QUIET_LEVEL) -> None:
    """Configure liblsl once, before its first use (later calls do nothing).

    If the user has an LSL configuration (LSLAPICFG or a standard lsl_api.cfg) it is
    respected as it is. Otherwise liblsl's log is kept off the terminal (level -3, fatal
    only) and, with ``log_to``, also written to that file. A LSLAPICFG that names a
    missing file would make liblsl complain on fd 2 and fall back to its loud defaults,
    so then bedside logs a warning and uses its quiet configuration instead.
    """
    global _prepared
    with _lock:
        if _prepared:
            return
        mod = _load()
        user = user_lsl_config()
        if user is not None and user.is_file():
            log.debug("LSL: using the user's configuration %s", user)
        else:
            if user is not None:
                log.warning(
                    "LSLAPICFG names %s, which does not exist; using bedside's quiet LSL "
                    "settings instead",
                    user,
                )
            try:
                mod.set_config_content(quiet_config(log_to, level))
            except (NotImplementedError, AttributeError):  # liblsl < 1.17.7
                log.warning("this liblsl cannot be configured from bedside; its log may "
                            "appear on the terminal (set LSLAPICFG to a file with [log] level = -3)")
            else:
                if log_to is not None:
                    _load_config_off_screen(mod)
        _prepared = True


def _load_config_off_screen(mod: ModuleType) -> None:
    """Make liblsl read its configuration now, with fd 2 pointed at /dev/null.

    With a log file, liblsl's logger announces "Logging to <file>" on fd 2 whatever the
    level (measured with liblsl 1.18); creating a StreamInfo is the first call that
    loads the configuration. Done before any screen exists, so nothing else is lost.
    """
    try:
        saved = os.dup(2)
    except OSError:  # no fd 2 at all: nothing to protect
        mod.StreamInfo("bedside-config", "none", 1, 0.0, "float32", "bedside-config")
        return
    devnull = os.open(os.devnull, os.O_WRONLY)
    try:
        os.dup2(devnull, 2)
        mod.StreamInfo("bedside-config", "none", 1, 0.0, "float32", "bedside-config")
    finally:
        os.dup2(saved, 2)
        os.close(saved)
        os.close(devnull)


def _load() -> ModuleType:
    global _module
    if _module is None:
        try:
            # Lazy on purpose: importing pylsl loads liblsl (a missing one raises here and
            # becomes LSLUnavailable, a clear message), and only after prepare_lsl.
            import pylsl as mod
        except RuntimeError as exc:  # pylsl raises RuntimeError when liblsl is missing
            raise LSLUnavailable(HOW_TO_GET_LIBLSL) from exc
        except ImportError as exc:
            raise LSLUnavailable("the pylsl package is not installed; " + HOW_TO_GET_LIBLSL) from exc
        _module = mod
    return _module


def pylsl() -> Any:
    """The pylsl module, with liblsl configured (:func:`prepare_lsl` runs first if needed)."""
    if not _prepared:
        prepare_lsl()
    return _load()


def local_clock() -> float:
    """This computer's LSL clock, in seconds."""
    return float(pylsl().local_clock())


def translate(exc: BaseException, what: str) -> StreamError:
    """Turn a pylsl error raised while doing ``what`` into a bedside error (raise it ``from exc``)."""
    mod = pylsl()
    if isinstance(exc, mod.util.LostError):
        return StreamLost(f"{what}: the stream went away (the sending program or amplifier stopped)")
    if isinstance(exc, mod.util.TimeoutError):
        return StreamNotFound(f"{what}: the stream did not answer in time")
    return StreamError(f"{what}: LSL reported a problem ({exc})")
