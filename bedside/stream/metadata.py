"""What a stream's full LSL info says about its channels, reference and acquisition.

The XDF meta-data convention for EEG: ``desc/channels/channel/{label, unit, type,
location/{X,Y,Z}, scaling_factor, impedance}`` (locations in mm, impedance in kΩ),
``desc/reference/{label, subtracted, common_average}``, ``desc/acquisition/*``. Read
from the info an inlet returns (:class:`bedside.stream.reader.LslSource` asks for it);
nothing here is decided, only read: :func:`bedside.stream.channels.setup_channels`
decides.
"""

from __future__ import annotations

import math
from typing import Any

from bedside.stream.channels import ChannelMetadata, StreamMetadata


def read_channel_metadata(info: Any) -> tuple[list[str] | None, list[str], list[str]]:
    """``(labels or None, types, units)`` from ``desc/channels/channel/*`` of a full info.

    Walks the XML itself (pylsl's getters print to stdout when counts disagree).
    """
    channels = info.desc().child("channels")
    if channels.empty():
        return None, [], []
    labels: list[str] = []
    types: list[str] = []
    units: list[str] = []
    ch = channels.child("channel")
    while not ch.empty():
        labels.append(ch.child_value("label"))
        types.append(ch.child_value("type"))
        units.append(ch.child_value("unit"))
        ch = ch.next_sibling("channel")
    return (labels if labels else None), types, units


def _location(ch: Any) -> tuple[float, float, float] | None:
    loc = ch.child("location")
    if loc.empty():
        return None
    try:
        xyz = tuple(float(loc.child_value(k)) for k in ("X", "Y", "Z"))
    except ValueError:
        return None
    if not all(math.isfinite(v) for v in xyz) or xyz == (0.0, 0.0, 0.0):
        return None
    return (xyz[0], xyz[1], xyz[2])


def _children(node: Any) -> dict[str, str]:
    out: dict[str, str] = {}
    if node.empty():
        return out
    child = node.first_child()
    while not child.empty():
        out.setdefault(child.name(), child.child_value())
        child = child.next_sibling()
    return out


def read_stream_metadata(info: Any) -> StreamMetadata:
    """The channel, reference and acquisition description of a full info (XDF EEG
    meta-data convention: ``desc/channels/channel/{label, unit, type, location/{X,Y,Z}}``
    with locations in mm, ``desc/reference/{label, subtracted, common_average}``,
    ``desc/acquisition/*``). A per-channel ``scaling_factor`` is read as µV per count, a
    per-channel ``impedance`` as kΩ (the convention's unit)."""
    labels, types, units = read_channel_metadata(info)
    scales: list[str] = []
    locations: list[tuple[float, float, float] | None] = []
    impedances: list[str] = []
    channels = info.desc().child("channels")
    ch = channels.child("channel") if not channels.empty() else channels
    while not ch.empty():
        scales.append(ch.child_value("scaling_factor"))
        locations.append(_location(ch))
        impedances.append(ch.child_value("impedance"))
        ch = ch.next_sibling("channel")
    return StreamMetadata(
        ChannelMetadata(labels, types, units, scales, locations, impedances),
        _children(info.desc().child("reference")),
        _children(info.desc().child("acquisition")),
    )
