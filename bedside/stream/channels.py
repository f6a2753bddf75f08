"""Build bedside's view of a stream's channels from its metadata.

Input: per-channel labels, types and units as the stream metadata gives them (any of
them may be missing, or list more or fewer channels than the stream carries), and
what the technologist said (a channel map, a reference, a scale). Output: one
:class:`ChannelInfo` per channel the stream carries, with unique names, a BIDS type
each, plus plain-language notes on everything that had to be assumed.

Why one module of about 430 lines: :func:`setup_channels` is the one place where a
stream's channels are decided (types and names, the technologist's choices, the
reference, positions, the amplifier profile), and its steps are small pure functions
read here top to bottom in the order it calls them; split, each piece would be called
from this one function only and the order of the decisions would no longer be on one page.
"""

from __future__ import annotations

import math
from collections import Counter
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace

from bedside.errors import InputError, StreamFormatError
from bedside.stream.amplifier import AmplifierProfile, decide_profile
from bedside.stream.labels import KINDS, LabelRules, clean_text, read_label
from bedside.stream.types import ChannelInfo
from bedside.stream.units import is_counts, scale_to_uv, unit_kind

#: Channel types whose values are voltages (need µV; a counts stream needs a scale).
VOLTAGE_KINDS = frozenset({"EEG", "EOG", "HEOG", "VEOG", "ECG", "EMG", "REF"})

#: Reference suffixes that mean "the average of the electrodes" (see labels.yaml).
_AVERAGE_WORDS = frozenset({"AVG", "AV", "AR", "CAR", "AVERAGE"})


@dataclass(frozen=True)
class ChannelChoice:
    """What the technologist said about one channel (a ``--channels`` file entry, or
    the confirm screen): its type and/or the name to show (None: keep bedside's)."""

    type: str | None = None
    name: str | None = None

    def __post_init__(self) -> None:
        if self.type is not None and self.type not in KINDS:
            raise InputError(f"channel type {self.type!r} is not known; accepted: {', '.join(KINDS)}")


@dataclass(frozen=True)
class ChannelMetadata:
    """Per-channel metadata as the stream sent it (lists in stream order, may be short).

    uv_per_count: µV per count where the outlet gives a scale for a channel (empty
    string: none); locations_mm: (x, y, z) per channel where the outlet gives one;
    impedances_kohm: the ``impedance`` text per channel (kΩ; empty: none)."""

    labels: Sequence[str | None] | None = None
    types: Sequence[str | None] | None = None
    units: Sequence[str | None] | None = None
    uv_per_count: Sequence[str | None] | None = None
    locations_mm: Sequence[tuple[float, float, float] | None] | None = None
    #: ``impedance`` per channel as text, kΩ (empty: none given).
    impedances_kohm: Sequence[str | None] | None = None


def _pad(values: Sequence[str | None] | None, n: int) -> list[str]:
    out = [("" if v is None else str(v)) for v in (values or [])][:n]
    return out + [""] * (n - len(out))


def _number(text: str) -> float | None:
    """A finite number from metadata text, else None (plausibility is judged elsewhere)."""
    try:
        value = float(text.strip().lower().removesuffix("kohm").removesuffix("kω").strip())
    except ValueError:
        return None
    return value if math.isfinite(value) else None


def _count_scale(text: str) -> float | None:
    try:
        value = float(text)
    except ValueError:
        return None
    return value if math.isfinite(value) and value > 0 else None


def build_channels(
    n_channels: int,
    labels: Sequence[str | None] | None,
    types: Sequence[str | None] | None,
    units: Sequence[str | None] | None,
    rules: LabelRules,
    *,
    integer: bool = False,
    uv_per_count: float | None = None,
    count_scales: Sequence[str | None] | None = None,
) -> tuple[tuple[ChannelInfo, ...], tuple[str, ...]]:
    """``(channels, notes)`` for a stream of ``n_channels`` channels.

    * More labels than channels: the extra ones are ignored (noted); fewer: the rest
      are named ``ch<N>`` (1-based stream position, noted).
    * Empty labels become ``ch<N>``; a name that repeats (also after aliasing, e.g.
      "T3" and "T7") gets ``#2``, ``#3``… in stream order (noted per channel).
    * Types as :func:`bedside.stream.labels.read_label` (metadata type, unit, label,
      EDF+ type word; else scalp EEG, noted).
    * Units as :func:`bedside.stream.units.scale_to_uv` (missing → µV, noted). A
      voltage channel in counts — unit "counts", or no unit on an ``integer`` stream —
      takes its scale from ``count_scales`` (the metadata, µV per count) or
      ``uv_per_count`` (``--uv-per-count``); with neither, StreamFormatError.
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
    scl = _pad(count_scales, n_channels)

    channels: list[ChannelInfo] = []
    seen: dict[str, int] = {}
    used: set[str] = set()
    missing_units = 0
    unscaled: list[str] = []
    for i in range(n_channels):
        label = lab[i]
        ch_notes: list[str] = []
        ukind = unit_kind(uni[i] or None)
        if clean_text(label)[0]:
            r = read_label(label, rules, typ[i] or None, ukind)
            name, kind, evidence, reference = r.name, r.kind, r.evidence, r.reference
            if r.note:
                ch_notes.append(r.note)
        else:
            r = read_label("", rules, typ[i] or None, ukind)
            name, kind, evidence, reference = f"ch{i + 1}", r.kind, r.evidence, ""
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
            ch_notes.append(f"label {clean_text(label)[0]!r} repeats the name {name}; shown as {new}")
            name = new
        used.add(name.upper())
        if ukind is not None:
            factor, unit_note = 1.0, ""
        elif is_counts(uni[i]) or (integer and not uni[i].strip()):
            scale = _count_scale(scl[i]) or uv_per_count
            factor, unit_note = (scale or 1.0), ""
            if scale is None and kind in VOLTAGE_KINDS:
                unscaled.append(name)
            elif scale is not None:
                ch_notes.append(f"counts scaled by {scale:g} µV per count")
        else:
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
                evidence=evidence,
                reference=reference,
            )
        )
        if ch_notes and (renamed or (labels and i < given and not label.strip())):
            notes.append(f"channel {i + 1}: {ch_notes[0]}")
    if unscaled:
        shown = ", ".join(unscaled[:5]) + (f" and {len(unscaled) - 5} more" if len(unscaled) > 5 else "")
        raise StreamFormatError(
            f"the stream sends raw converter counts ({'integer samples with no unit' if integer else 'unit counts'}) "
            f"for {len(unscaled)} channel(s) ({shown}) and gives no scale, so bedside cannot tell "
            "µV; give the amplifier's resolution with --uv-per-count (e.g. --uv-per-count 0.1)"
        )
    if missing_units:
        notes.append(
            f"{missing_units} of {n_channels} channels have no unit in the metadata; assumed µV"
        )
    return tuple(channels), tuple(notes)


def kind_counts(channels: Sequence[ChannelInfo]) -> str:
    """"19 scalp, 2 EOG, 1 ECG, 1 EMG, 2 not judged": what bedside inferred, in words."""
    counts = Counter(c.kind for c in channels)
    parts = [f"{counts.pop('EEG', 0)} scalp"]
    for kind in ("EOG", "HEOG", "VEOG", "ECG", "EMG"):
        if counts.get(kind):
            parts.append(f"{counts.pop(kind)} {kind}")
    if counts.get("REF"):
        parts.append(f"{counts.pop('REF')} reference")
    rest = sum(counts.values())
    if rest:
        parts.append(f"{rest} not judged")
    return ", ".join(parts)


def apply_choices(
    channels: Sequence[ChannelInfo], choices: Mapping[str, ChannelChoice], where: str = "the channel map",
    *, strict: bool = True,
) -> tuple[ChannelInfo, ...]:
    """The channels with the technologist's types and names applied (keys: the labels
    as the stream sent them). A key the stream lacks (when ``strict``; else it is
    skipped), or a name given twice, is an InputError naming it and listing the
    stream's labels."""
    by_label = {c.label: i for i, c in enumerate(channels)}
    by_label_ci = {clean_text(c.label)[0].casefold(): i for i, c in enumerate(channels)}
    out = list(channels)
    for key, choice in choices.items():
        i = by_label.get(key, by_label_ci.get(clean_text(key)[0].casefold()))
        if i is None and not strict:
            continue
        if i is None:
            known = ", ".join(clean_text(c.label)[0] or c.name for c in channels[:12])
            more = f" … ({len(channels)} in all)" if len(channels) > 12 else ""
            raise InputError(f"{where} names channel {key!r}, which the stream does not have; "
                             f"its channels are: {known}{more}")
        ch = out[i]
        kind = choice.type or ch.kind
        name = clean_text(choice.name)[0] if choice.name else ch.name
        if not name:
            raise InputError(f"{where}: the name for channel {key!r} is empty")
        said = "type and name" if choice.type and choice.name else ("type" if choice.type else "name")
        out[i] = replace(ch, kind=kind, name=name, is_scalp=kind == "EEG", evidence="technologist",
                         note="; ".join(n for n in (ch.note, f"{said} set by the technologist") if n))
    names = Counter(c.name.upper() for c in out)
    twice = [c.name for c in out if names[c.name.upper()] > 1]
    if twice:
        raise InputError(f"{where} gives the name {twice[0]!r} to more than one channel; names must be unique")
    return tuple(out)


@dataclass(frozen=True)
class Reference:
    """What the channels are referred to.

    label: the reference electrode ("A1", "Cz"), "average" for an average reference,
    "" when unknown; source: where that came from ("--reference", "metadata",
    "label suffix"); subtracted: the metadata's ``subtracted`` (True: the reference was
    removed before streaming) or None when not said."""

    label: str = ""
    source: str = ""
    subtracted: bool | None = None
    notes: tuple[str, ...] = field(default_factory=tuple)

    @property
    def engine_value(self) -> str | None:
        """What the engine's ``reference=`` takes: "average", an electrode, or None."""
        return self.label or None


def _truthy(text: str) -> bool | None:
    t = text.strip().casefold()
    if t in ("true", "yes", "1"):
        return True
    if t in ("false", "no", "0"):
        return False
    return None


def decide_reference(
    channels: Sequence[ChannelInfo],
    option: str | None = None,
    meta_label: str = "",
    meta_subtracted: str = "",
    meta_common_average: str = "",
) -> Reference:
    """The reference, from ``--reference`` first, then the metadata
    (``desc/reference/{label, subtracted, common_average}``, XDF EEG meta-data
    convention), then the scalp labels' suffixes ("T3-A1": A1), else unknown."""
    subtracted = _truthy(meta_subtracted)
    if option is not None:
        text = clean_text(option)[0]
        if not text:
            raise InputError("--reference is empty; give an electrode label (e.g. A1, Cz) or 'average'")
        label = "average" if text.upper() in _AVERAGE_WORDS else text
        return Reference(label, "--reference", subtracted)
    if _truthy(meta_common_average):
        return Reference("average", "metadata", subtracted)
    if meta_label.strip():
        text = clean_text(meta_label)[0]
        return Reference("average" if text.upper() in _AVERAGE_WORDS else text, "metadata", subtracted)
    suffixes = Counter(c.reference.upper() for c in channels if c.is_scalp and c.reference)
    scalp = sum(1 for c in channels if c.is_scalp)
    if suffixes:
        word, n = suffixes.most_common(1)[0]
        if n * 2 > scalp and word != "REF":
            label = "average" if word in _AVERAGE_WORDS else word
            return Reference(label, "label suffix", subtracted)
    return Reference("", "", subtracted)


def mark_reference(
    channels: Sequence[ChannelInfo], reference: Reference, rules: LabelRules
) -> tuple[ChannelInfo, ...]:
    """The channel that is the reference electrode itself (a referential stream carries
    it as zeros) becomes kind REF: shown as the reference, never as a flat lead."""
    if not reference.label or reference.label == "average":
        return tuple(channels)
    target = read_label(reference.label, rules).name.casefold()
    out = []
    for ch in channels:
        if ch.is_scalp and ch.name.casefold() == target and ch.evidence != "technologist":
            ch = replace(ch, kind="REF", is_scalp=False, evidence="reference",
                         note="; ".join(n for n in (ch.note, f"the reference electrode ({reference.source})") if n))
        out.append(ch)
    return tuple(out)


def require_scalp(channels: Sequence[ChannelInfo], what: str = "the stream") -> None:
    """StreamFormatError when no channel is scalp EEG (nothing to judge), naming what
    the channels were taken to be and how to say otherwise."""
    if any(c.is_scalp for c in channels):
        return
    shown = ", ".join(f"{c.name} ({c.kind})" for c in channels[:8])
    more = f" and {len(channels) - 8} more" if len(channels) > 8 else ""
    raise StreamFormatError(
        f"no scalp EEG channel: {what} carries {shown}{more}; bedside judges scalp electrodes "
        "only. If some of these are scalp EEG, say so with --channels FILE (label: {type: EEG})"
    )


@dataclass(frozen=True)
class ChannelOptions:
    """What the technologist said about the channels (command options or the app).

    uv_per_count: ``--uv-per-count``; reference: ``--reference``; amplifier:
    ``--amplifier`` (a profile in configs/amplifiers.yaml); choices: ``--channels``
    (stream label → type/name); layout_mm: ``--layout`` (name → (x, y, z) mm)."""

    uv_per_count: float | None = None
    reference: str | None = None
    amplifier: str | None = None
    choices: Mapping[str, ChannelChoice] = field(default_factory=dict)
    layout_mm: Mapping[str, tuple[float, float, float]] = field(default_factory=dict)
    choices_from: str = "the channel map"
    choices_strict: bool = True


@dataclass(frozen=True)
class StreamMetadata:
    """The stream's description (XDF EEG meta-data convention), every field optional.

    reference: ``desc/reference/{label, subtracted, common_average}``; acquisition:
    ``desc/acquisition/*`` as text (manufacturer, model, and bedside's coupling,
    highpass_hz, input_range_uv)."""

    channels: ChannelMetadata = field(default_factory=ChannelMetadata)
    reference: Mapping[str, str] = field(default_factory=dict)
    acquisition: Mapping[str, str] = field(default_factory=dict)


@dataclass(frozen=True)
class ChannelSetup:
    """Everything bedside decided about a stream's channels, before reading samples."""

    channels: tuple[ChannelInfo, ...]
    notes: tuple[str, ...]
    reference: Reference
    profile: AmplifierProfile


def setup_channels(
    n_channels: int,
    meta: StreamMetadata,
    rules: LabelRules,
    options: ChannelOptions | None = None,
    *,
    integer: bool = False,
    what: str = "the stream",
) -> ChannelSetup:
    """Types, names, scale, reference, positions and amplifier profile of a stream.

    Order: the metadata and labels (:func:`build_channels`), then the technologist's
    choices, then the reference (its own channel becomes REF), then positions (the
    stream's own ``location`` first, then ``--layout``), then the amplifier profile.
    StreamFormatError when no channel is scalp EEG or counts have no scale."""
    opts = options or ChannelOptions()
    cm = meta.channels
    channels, notes = build_channels(
        n_channels, cm.labels, cm.types, cm.units, rules,
        integer=integer, uv_per_count=opts.uv_per_count, count_scales=cm.uv_per_count,
    )
    notes_ = list(notes)
    if opts.choices:
        channels = apply_choices(channels, opts.choices, opts.choices_from, strict=opts.choices_strict)
    ref_meta = meta.reference
    reference = decide_reference(
        channels, opts.reference, ref_meta.get("label", ""), ref_meta.get("subtracted", ""),
        ref_meta.get("common_average", ""),
    )
    channels = mark_reference(channels, reference, rules)
    locs = list(cm.locations_mm or [])[:n_channels]
    layout = {k.casefold(): v for k, v in opts.layout_mm.items()}
    placed = []
    for i, ch in enumerate(channels):
        pos = locs[i] if i < len(locs) else None
        if pos is None and layout:
            pos = layout.get(ch.name.casefold()) or layout.get(clean_text(ch.label)[0].casefold())
        placed.append(replace(ch, position_mm=pos) if pos is not None else ch)
    channels = tuple(placed)
    imps = _pad(cm.impedances_kohm, n_channels)
    if any(imps):
        channels = tuple(replace(ch, impedance_kohm=_number(text)) if _number(text) is not None else ch
                         for ch, text in zip(channels, imps, strict=True))
    if layout:
        missing = [c.name for c in channels if c.is_scalp and c.position_mm is None]
        if missing:
            notes_.append(f"the layout has no position for {len(missing)} scalp channel(s): "
                          + ", ".join(missing[:8]) + (" …" if len(missing) > 8 else ""))
    require_scalp(channels, what)
    profile = decide_profile(meta.acquisition, opts.amplifier)
    notes_.extend(profile.notes)
    notes_.extend(reference.notes)
    notes_.append(f"channels: {kind_counts(channels)}")
    return ChannelSetup(channels, tuple(notes_), reference, profile)
