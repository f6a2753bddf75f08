"""The ``bedside`` command: sub-commands live in ``bedside/commands/<name>.py``.

Each command module defines ``NAME`` (the sub-command), ``ORDER`` (its place in
``--help``), ``register(subparsers)`` which adds its parser and sets
``func=run``, and ``run(args) -> int``. Errors are reported here, once:
a :class:`~bedside.errors.BedsideError` prints ``error: ...`` to stderr and exits 2;
Ctrl-C exits 130. No traceback reaches the user.
"""

from __future__ import annotations

import argparse
import contextlib
import importlib
import logging
import os
import pkgutil
import signal
import sys
import threading
import types
from collections.abc import Sequence
from typing import TYPE_CHECKING, NoReturn

if TYPE_CHECKING:
    from _typeshed import SupportsWrite

from bedside import __version__
from bedside.cautions import DISCLAIMER
from bedside.errors import BedsideError

log = logging.getLogger("bedside")

EXIT_OK = 0
EXIT_ATTENTION = 1  # something needs the technologist's attention (check/bad, stream lost)
EXIT_ERROR = 2


def say(text: str, stream: SupportsWrite[str] | None = None) -> None:
    """Write ``text`` to ``stream`` (default stderr) whatever the stream can encode.

    A command-line argument may hold bytes that are not UTF-8 (Python hands them over
    as lone surrogates, PEP 383) and a message that echoes it must still print: what
    the stream cannot encode is written as a backslash escape, never raised."""
    out = sys.stderr if stream is None else stream
    encoding = getattr(out, "encoding", None) or "utf-8"
    try:
        out.write(text)
    except UnicodeEncodeError:
        out.write(text.encode(encoding, "backslashreplace").decode(encoding, "replace"))


def make_streams_safe() -> None:
    """stdout and stderr escape what they cannot encode instead of raising (PEP 383
    surrogates from argv, a narrow terminal encoding)."""
    for stream in (sys.stdout, sys.stderr):
        reconfigure = getattr(stream, "reconfigure", None)
        if reconfigure is not None:
            with contextlib.suppress(ValueError, OSError):  # closed or detached: leave it
                reconfigure(errors="backslashreplace")


class _Parser(argparse.ArgumentParser):
    """argparse that says what is accepted, prints under any text stream and never
    prints a traceback."""

    def print_usage(self, file: SupportsWrite[str] | None = None) -> None:
        say(self.format_usage(), file if file is not None else sys.stdout)

    def print_help(self, file: SupportsWrite[str] | None = None) -> None:
        say(self.format_help(), file if file is not None else sys.stdout)

    def exit(self, status: int = 0, message: str | None = None) -> NoReturn:
        if message:
            say(message, sys.stderr)
        raise SystemExit(status)

    def error(self, message: str) -> NoReturn:
        self.print_usage(sys.stderr)
        self.exit(EXIT_ERROR, f"error: {message}\n")



def _command_modules() -> list[types.ModuleType]:
    import bedside.commands as pkg

    mods: list[types.ModuleType] = []
    for info in pkgutil.iter_modules(pkg.__path__):
        if info.name.startswith("_"):
            continue
        mod = importlib.import_module(f"bedside.commands.{info.name}")
        if hasattr(mod, "register"):
            mods.append(mod)
    mods.sort(key=lambda m: (getattr(m, "ORDER", 100), getattr(m, "NAME", "")))
    return mods


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="bedside",
        description="EEG setup at the bedside: marking distances, live signal quality, setup log. "
        + DISCLAIMER,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    parser.add_argument("--version", action="version", version=f"bedside {__version__}")
    parser.add_argument("-v", "--verbose", action="store_true", help="log more detail to stderr")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for mod in _command_modules():
        mod.register(sub)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    make_streams_safe()
    try:
        return _run(argv)
    except BedsideError as exc:
        say(f"error: {exc}\n")
        return EXIT_ERROR
    except KeyboardInterrupt:
        return interrupted()
    except BrokenPipeError:
        return EXIT_OK


def interrupted() -> int:
    """Ctrl-C: say so once and exit 130 (128 + SIGINT, the shell convention). A second
    Ctrl-C while bedside closes down is ignored, so the exit stays clean."""
    with contextlib.suppress(ValueError):  # not the main thread: nothing to ignore
        signal.signal(signal.SIGINT, signal.SIG_IGN)
    say("interrupted\n")
    return 130


def _in_import(frame: types.FrameType | None) -> bool:
    while frame is not None:
        if frame.f_code.co_filename.startswith("<frozen importlib"):
            return True
        frame = frame.f_back
    return False


def _sigint_outside_imports(signum: int, frame: types.FrameType | None) -> None:
    """Ctrl-C as a KeyboardInterrupt, but not while a module is being imported (the
    reason above): then the signal is sent again 20 ms later, until the import is done."""
    if _in_import(frame):
        timer = threading.Timer(0.02, os.kill, (os.getpid(), signal.SIGINT))
        timer.daemon = True
        timer.start()
        return
    raise KeyboardInterrupt


def _run(argv: Sequence[str] | None) -> int:
    # Building the parser imports every command (numpy, scipy…). Ctrl-C during those
    # imports is held until they finish: a KeyboardInterrupt raised inside an
    # extension module's start-up makes CPython end the process by SIGINT at exit
    # even when bedside has handled it (seen here as exit -2 after "interrupted").
    held: list[int] = []
    previous = signal.signal(signal.SIGINT, lambda signum, _frame: held.append(signum))
    try:
        parser = build_parser()
    finally:
        # From here on, Ctrl-C is a KeyboardInterrupt except inside an import (commands
        # import parts of SciPy when they first need them): there it is put off a moment.
        signal.signal(signal.SIGINT, _sigint_outside_imports if previous is signal.default_int_handler
                      else previous)
    if held:
        raise KeyboardInterrupt
    args = parser.parse_args(list(argv) if argv is not None else None)
    logging.basicConfig(
        level=logging.DEBUG if args.verbose else logging.WARNING,
        format="%(levelname)s %(name)s: %(message)s",
    )
    func = getattr(args, "func", None)
    if func is None:
        # No sub-command: the app if it is there, else the help.
        if "watch" in sub_names(parser):
            args = parser.parse_args(["watch"])
            func = args.func
        else:
            parser.print_help()
            return EXIT_OK
    return int(func(args))


def sub_names(parser: argparse.ArgumentParser) -> list[str]:
    for action in parser._actions:
        if isinstance(action, argparse._SubParsersAction):
            return list(action.choices)
    return []


if __name__ == "__main__":
    raise SystemExit(main())
