"""Options and helpers shared by several sub-commands."""

from __future__ import annotations

import argparse
import math

from bedside.errors import InputError


def add_stream_selection(parser: argparse.ArgumentParser) -> None:
    """The one way every stream-reading command selects its stream."""
    group = parser.add_argument_group("stream selection (when several streams are visible, pin one)")
    group.add_argument("--stream", metavar="NAME", help="the stream's name")
    group.add_argument("--source-id", metavar="ID", help="the stream's source_id (most specific)")
    group.add_argument("--host", metavar="HOST", help="the hostname of the computer sending it")
    group.add_argument(
        "--wait",
        metavar="S",
        type=positive_float("--wait"),
        default=3.0,
        help="seconds to look for streams (default 3)",
    )


#: The slowest playback ``--speed`` accepted: slower than a hundredth of real time a
#: demo stream looks dead (a sample every few seconds) and a short ``--duration``
#: would run for hours.
MIN_SPEED = 0.01


def positive_float(  # type: ignore[no-untyped-def]
    option: str, *, allow_zero: bool = False, minimum: float | None = None
):
    """An argparse ``type`` that accepts a finite positive number (at least ``minimum``,
    when given) and says so otherwise."""

    def parse(text: str) -> float:
        try:
            value = float(text)
        except ValueError:
            raise argparse.ArgumentTypeError(
                f"{option} must be a number, got {text!r}"
            ) from None
        if not math.isfinite(value) or value < 0 or (value == 0 and not allow_zero):
            bound = "zero or more" if allow_zero else "greater than zero"
            raise argparse.ArgumentTypeError(f"{option} must be {bound}, got {text!r}")
        if minimum is not None and value < minimum:
            raise argparse.ArgumentTypeError(f"{option} must be at least {minimum:g}, got {text!r}")
        return value

    return parse


def check_format(value: str, accepted: tuple[str, ...]) -> str:
    if value not in accepted:
        raise InputError(f"--format {value!r} is not known; accepted: {', '.join(accepted)}")
    return value
