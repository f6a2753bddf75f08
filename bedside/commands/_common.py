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


def add_profile_option(parser: argparse.ArgumentParser | argparse._ArgumentGroup) -> None:
    """``--profile NAME``: the department profile (configs/profiles/<NAME>.yaml)."""
    from bedside.checks.profiles import DEFAULT_PROFILE, profile_names

    names = ", ".join(profile_names()) or "none shipped"
    parser.add_argument(
        "--profile", metavar="NAME", default=None,
        help=f"department profile: impedance limit, amplitude limits, montage, re-check interval "
        f"(configs/profiles/; {names}; default {DEFAULT_PROFILE})",
    )


def add_channel_options(parser: argparse.ArgumentParser) -> None:
    """How the channels are read: types and names, reference, scale, amplifier, layout."""
    g = parser.add_argument_group("channels (what bedside infers from the stream can be overridden)")
    g.add_argument("--channels", metavar="FILE",
                   help="YAML channel map: channels: {LABEL: {type: EOG, name: LOC}}; saved for this "
                        "source_id and used again next time")
    g.add_argument("--reference", metavar="LABEL",
                   help="what the channels are referred to: an electrode (A1, Cz) or 'average'")
    g.add_argument("--uv-per-count", metavar="UV", type=positive_float("--uv-per-count"),
                   help="µV per count, for an amplifier that streams raw integer counts")
    g.add_argument("--amplifier", metavar="NAME",
                   help="amplifier profile from configs/amplifiers.yaml (dc-active, dc-passive, ac-passive)")
    g.add_argument("--layout", metavar="FILE", help="electrode positions: a BIDS electrodes.tsv")


def channel_options(args: argparse.Namespace, source_id: str):  # type: ignore[no-untyped-def]
    """The ChannelOptions of ``add_channel_options``; a ``--channels`` map is saved for
    ``source_id``, and without one the map saved for it before is used (not strictly)."""
    from bedside.placement.layout import read_electrodes_tsv
    from bedside.stream.channel_map import load_channel_map, saved_choices
    from bedside.stream.channels import ChannelOptions

    choices, where, strict = {}, "the channel map", True
    if getattr(args, "channels", None):
        choices = load_channel_map(args.channels)
        where = f"--channels {args.channels}"
    else:
        saved = saved_choices(source_id)
        if saved:
            choices, where, strict = saved, "the channel choices saved for this source_id", False
    layout = read_electrodes_tsv(args.layout) if getattr(args, "layout", None) else {}
    opts = ChannelOptions(
        uv_per_count=getattr(args, "uv_per_count", None), reference=getattr(args, "reference", None),
        amplifier=getattr(args, "amplifier", None), choices=choices, layout_mm=layout,
        choices_from=where, choices_strict=strict,
    )
    if opts.amplifier is not None:
        from bedside.stream.amplifier import decide_profile

        decide_profile({}, opts.amplifier)  # an unknown name: say so before connecting
    return opts


def remember_choices(args: argparse.Namespace, source_id: str, opts) -> None:  # type: ignore[no-untyped-def]
    """After the stream accepted the --channels map, save it for this source_id."""
    from bedside.stream.channel_map import save_choices

    if getattr(args, "channels", None) and opts.choices:
        save_choices(source_id, opts.choices)
