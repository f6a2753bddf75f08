"""The ``bedside`` command: sub-commands live in ``bedside/commands/<name>.py``.

Each command module defines ``NAME`` (the sub-command), ``ORDER`` (its place in
``--help``), ``register(subparsers)`` which adds its parser and sets
``func=run``, and ``run(args) -> int``. Errors are reported here, once:
a :class:`~bedside.errors.BedsideError` prints ``error: ...`` to stderr and exits 2;
Ctrl-C exits 130. No traceback reaches the user.
"""

from __future__ import annotations

import argparse
import importlib
import logging
import pkgutil
import sys
import types
from collections.abc import Sequence
from typing import NoReturn

from bedside import __version__
from bedside.cautions import DISCLAIMER
from bedside.errors import BedsideError

log = logging.getLogger("bedside")

EXIT_OK = 0
EXIT_ATTENTION = 1  # something needs the technologist's attention (check/bad, stream lost)
EXIT_ERROR = 2


class _Parser(argparse.ArgumentParser):
    """argparse that says what is accepted and never prints a traceback."""

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
    parser = build_parser()
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
    try:
        return int(func(args))
    except BedsideError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return EXIT_ERROR
    except KeyboardInterrupt:
        print("interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:
        return EXIT_OK


def sub_names(parser: argparse.ArgumentParser) -> list[str]:
    for action in parser._actions:
        if isinstance(action, argparse._SubParsersAction):
            return list(action.choices)
    return []


if __name__ == "__main__":
    raise SystemExit(main())
