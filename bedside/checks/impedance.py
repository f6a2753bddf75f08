"""Electrode impedances judged: against the department's limit and for balance (pure).

Two sources give a value per electrode, in kΩ:

* **typed** — what the technologist reads off the amplifier's meter and types in the
  app's Log view (kept in the setup log, :class:`bedside.record.log.ImpedanceEntry`);
* **amplifier** — what the stream publishes: per-channel ``impedance`` in the LSL
  stream's metadata, ``desc/channels/channel/impedance``, in kΩ (the XDF EEG meta-data
  convention; read by :func:`bedside.stream.metadata.read_stream_metadata` into
  ``ChannelInfo.impedance_kohm``). It is the value at the time the stream was opened.

A typed value wins over the amplifier's for the same electrode: the technologist
measured it at the bedside, after (or instead of) what the amplifier sent at start.

The rules (:func:`judge`):

* **limit** — above the department's limit (the profile's ``impedance.limit_kohm``;
  ≤ 5 kΩ in most clinical settings) an electrode is ``bad``: re-prepare it. A value at
  the limit is good. The start gate counts it as not ready unless accepted with a reason.
* **balance** — ours, after Huhta & Webster (1973: mains enters each lead in proportion
  to the mismatch of its electrode's impedance) and the "balanced impedances" the ACNS
  and IFCN guidance ask for: an electrode more than ``balance_ratio`` times the median
  of the *other* electrodes, and at least ``balance_min_kohm`` above it, is ``check``
  (it is within the limit but unlike the rest). Needs ``balance_min_electrodes``
  values; advisory, it does not hold the start gate.
* **plausible** — a value of 0 kΩ or less, or above :data:`PLAUSIBLE_MAX_KOHM`, is no
  contact on skin (a typing slip, an open lead or a short): a typed one is refused with
  the reason (:func:`check_entry`); a published one is shown as "implausible" and not
  judged.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field

from bedside.errors import InputError

#: Above this a reading is no electrode on skin but an open lead or a typing slip (kΩ).
#: Common practice: amplifiers' meters show an open input as their top of scale, and
#: even dry or high-impedance systems stay well below 1 MΩ (from memory).
PLAUSIBLE_MAX_KOHM = 1000.0

Source = str  # "typed" or "amplifier"


@dataclass(frozen=True)
class ImpedanceLimits:
    """The department's limit and the balance rule (a profile's ``impedance:``), kΩ.

    limit_kohm: above it an electrode is bad; balance_ratio / balance_min_kohm: an
    electrode this many times the median of the others, and this far above it, is
    unlike the rest; balance_min_electrodes: values needed before balance is judged."""

    limit_kohm: float = field(default=5.0, metadata={"min": 0.1, "max": PLAUSIBLE_MAX_KOHM})
    balance_ratio: float = field(default=3.0, metadata={"min": 1.0, "max": 100.0})
    balance_min_kohm: float = field(default=2.0, metadata={"min": 0.0, "max": PLAUSIBLE_MAX_KOHM})
    balance_min_electrodes: int = field(default=4, metadata={"min": 3, "max": 1000})


@dataclass(frozen=True)
class Reading:
    """One impedance: electrode, kΩ, where it came from ("typed", "amplifier")."""

    electrode: str
    kohm: float
    source: Source = "typed"


@dataclass(frozen=True)
class Verdict:
    """One electrode's impedance judged. level: good / check / bad, or "implausible"
    (a published value that cannot be a contact; not judged). reason: the number and
    the remedy, "" when good."""

    electrode: str
    kohm: float
    source: Source
    level: str
    reason: str = ""

    @property
    def over_limit(self) -> bool:
        return self.level == "bad"

    def as_dict(self) -> dict[str, object]:
        return {"kohm": self.kohm, "source": self.source, "level": self.level, "reason": self.reason}


def implausible(kohm: float) -> str:
    """Why a value cannot be an electrode's impedance ("" when it can)."""
    if isinstance(kohm, bool) or not isinstance(kohm, int | float) or not math.isfinite(kohm):
        return f"{kohm!r} is not a number of kΩ"
    if kohm <= 0:
        return f"{kohm:g} kΩ is zero or less: no electrode on skin reads that (a short, or a slip?)"
    if kohm > PLAUSIBLE_MAX_KOHM:
        return (f"{kohm:g} kΩ is over {PLAUSIBLE_MAX_KOHM:,.0f} kΩ: an open lead or a typing slip "
                "(kΩ, not Ω?), not a contact")
    return ""


def accepted_words() -> str:
    return f"accepted: more than 0 and at most {PLAUSIBLE_MAX_KOHM:,.0f} kΩ"


def check_entry(electrode: str, kohm: float, electrodes: Iterable[str] | None = None) -> tuple[str, float]:
    """A typed impedance, checked: (the electrode under the stream's name, the value).

    electrodes: the names the stream has (None or empty: not known yet, any name).
    InputError with the reason for an implausible value or an electrode not in the list."""
    name = electrode.strip()
    if not name:
        raise InputError("type the electrode's name first (e.g. Fp1)")
    known = list(electrodes or ())
    if known:
        match = {n.casefold(): n for n in known}.get(name.casefold())
        if match is None:
            shown = ", ".join(sorted(known)[:30]) + (" …" if len(known) > 30 else "")
            raise InputError(f"{name!r} is not an electrode of this stream; accepted: {shown}")
        name = match
    why = implausible(kohm)
    if why:
        raise InputError(f"impedance for {name}: {why}; {accepted_words()}")
    return name, float(kohm)


def merge(typed: Mapping[str, float], published: Mapping[str, float | None]) -> dict[str, Reading]:
    """The value judged per electrode: the typed one where there is one, else the
    amplifier's. Order: the amplifier's electrodes first (stream order), then the rest."""
    out: dict[str, Reading] = {}
    for name, kohm in published.items():
        if kohm is not None:
            out[name] = Reading(name, float(kohm), "amplifier")
    for name, kohm in typed.items():
        out[name] = Reading(name, float(kohm), "typed")
    return out


def judge(readings: Mapping[str, Reading] | Sequence[Reading], limits: ImpedanceLimits) -> dict[str, Verdict]:
    """Every reading judged (see the module docstring for the rules), keyed by electrode."""
    items = list(readings.values()) if isinstance(readings, Mapping) else list(readings)
    plausible = [r for r in items if not implausible(r.kohm)]
    out: dict[str, Verdict] = {}
    values = [r.kohm for r in plausible]
    for r in items:
        why = implausible(r.kohm)
        if why:
            out[r.electrode] = Verdict(r.electrode, r.kohm, r.source, "implausible",
                                       f"{why}; not judged — measure it again")
            continue
        if r.kohm > limits.limit_kohm:
            out[r.electrode] = Verdict(
                r.electrode, r.kohm, r.source, "bad",
                f"impedance {r.kohm:g} kΩ is over the {limits.limit_kohm:g} kΩ limit: re-prepare the "
                "skin and re-seat the electrode (gently; local policy)")
            continue
        others = list(values)
        others.remove(r.kohm)
        if len(values) >= limits.balance_min_electrodes and others:
            median = _median(others)
            if r.kohm > limits.balance_ratio * median and r.kohm - median >= limits.balance_min_kohm:
                out[r.electrode] = Verdict(
                    r.electrode, r.kohm, r.source, "check",
                    f"impedance {r.kohm:g} kΩ is unbalanced: over {limits.balance_ratio:g}× the others' "
                    f"median ({median:.1f} kΩ); mains and noise enter unequally — improve the contact")
                continue
        out[r.electrode] = Verdict(r.electrode, r.kohm, r.source, "good")
    return out


def over_limit(verdicts: Mapping[str, Verdict]) -> dict[str, str]:
    """Electrode → reason for those above the limit (what the start gate holds for)."""
    return {n: v.reason for n, v in verdicts.items() if v.over_limit}


def _median(values: Sequence[float]) -> float:
    s = sorted(values)
    mid = len(s) // 2
    return s[mid] if len(s) % 2 else (s[mid - 1] + s[mid]) / 2.0
