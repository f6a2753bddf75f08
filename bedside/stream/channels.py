"""Build bedside's view of a stream's channels from its metadata.

Input: per-channel labels, types and units as the stream metadata gives them (any of
them may be missing, or list more or fewer channels than the stream carries). Output:
one :class:`ChannelInfo` per channel the stream carries, with unique names, plus
plain-language notes on everything that had to be assumed.
"""

from __future__ import annotations

from collections.abc import Sequence

from bedside.stream.labels import LabelRules, normalise_label
from bedside.stream.types import ChannelInfo
from bedside.stream.units import scale_to_uv


def _pad(values: Sequence[str | None] | None, n: int) -> list[str]:
    out = [("" if v is None else str(v)) for v in (values or [])][:n]
    return out + [""] * (n - len(out))


def build_channels(
    n_channels: int,
    labels: Sequence[str | None] | None,
    types: Sequence[str | None] | None,
    units: Sequence[str | None] | None,
    rules: LabelRules,
) -> tuple[tuple[ChannelInfo, ...], tuple[str, ...]]:
    """``(channels, notes)`` for a stream of ``n_channels`` channels.

    * More labels than channels: the extra ones are ignored (noted); fewer: the rest
      are named ``ch<N>`` (1-based stream position, noted).
    * Empty labels become ``ch<N>``; a name that repeats (also after aliasing, e.g.
      "T3" and "T7") gets ``#2``, ``#3``… in stream order (noted per channel).
    * Units as :func:`bedside.stream.units.scale_to_uv` (missing → µV, noted).
    """
    notes: list[str] = []
    given = len(labels) if labels else 0
    if labels and given != n_channels:
        notes.append(
            f"the metadata describes {given} channels but the stream carries {n_channels}; "
            + ("the extra descriptions are ignored" if given > n_channels else
               f"channels {given + 1}-{n_channels} are named by position")
        )
    elif not labels:
        notes.append(f"the stream metadata has no channel labels; channels named ch1-ch{n_channels}")
    lab, typ, uni = _pad(labels, n_channels), _pad(types, n_channels), _pad(units, n_channels)

    channels: list[ChannelInfo] = []
    seen: dict[str, int] = {}
    used: set[str] = set()
    missing_units = 0
    for i in range(n_channels):
        label = lab[i]
        ch_notes: list[str] = []
        if label.strip():
            name, kind = normalise_label(label, rules, typ[i] or None)
        else:
            name, kind = f"ch{i + 1}", (rules.type_kinds.get(typ[i].strip().upper(), "MISC")
                                        if typ[i].strip() and typ[i].strip().upper() != "EEG" else "EEG")
            if labels and i < given:
                ch_notes.append(f"empty label; named {name} by its position")
        count = max(2, seen.get(name.upper(), 1) + 1)
        renamed = name.upper() in used
        if renamed:
            new = f"{name}#{count}"
            while new.upper() in used:  # a label may itself look like "Cz#2"
                count += 1
                new = f"{name}#{count}"
            seen[name.upper()] = count
            ch_notes.append(f"label {label!r} repeats the name {name}; shown as {new}")
            name = new
        used.add(name.upper())
        factor, unit_note = scale_to_uv(uni[i] or None)
        if unit_note:
            if not uni[i].strip():
                missing_units += 1
            else:
                notes.append(f"channel {name}: {unit_note}")
            ch_notes.append(unit_note)
        channels.append(
            ChannelInfo(
                label=label,
                name=name,
                kind=kind,
                unit=uni[i],
                scale_to_uv=factor,
                is_scalp=kind == "EEG",
                note="; ".join(ch_notes),
            )
        )
        if ch_notes and (renamed or (labels and i < given and not label.strip())):
            notes.append(f"channel {i + 1}: {ch_notes[0]}")
    if missing_units:
        notes.append(
            f"{missing_units} of {n_channels} channels have no unit in the metadata; assumed µV"
        )
    return tuple(channels), tuple(notes)
