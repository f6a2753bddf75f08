"""Checking the three tape measurements before anything is computed from them.

Accepted sizes (centimetres; the bounds are ours, set to hold every head from a very
preterm neonate to a large adult with a margin):

* circumference 18–70 cm — the INTERGROWTH-21st median at 24 weeks' gestation is
  about 22 cm; WHO medians at birth are 33.9 cm (girls) and 34.5 cm (boys); adult
  means are 55.2 cm (women) and 57.2 cm (men) (Bushby et al. 1992, Arch Dis Child
  67:1286); the upper bound leaves room for macrocephaly.
* nasion–inion and preauricular arcs 11–50 cm — about 33–38 cm in adults (from
  memory; no published norm found) and scaling with the circumference in children.
* consistency (ours, from the head model's geometry and adult proportions, e.g.
  36/35/56 cm): each arc between 45 % and 85 % of the circumference, the two arcs
  within a factor 1.35 of each other, and an ellipsoid with all three arcs must exist.

* the optional inferior circumference (10-10: the tape round the head through the
  nasion, both preauricular points and the inion) 18–70 cm like the circumference, and
  between 90 % and 115 % of it (ours: the two tapes run only 10 % of the arcs apart
  on one skull; on MNE-Python's Colin27 template the ratio is about 1.01, on a sphere
  1/cos 18° = 1.05; a value outside that is the wrong line or the wrong unit, e.g. an
  arc of 36 cm is 64 % of a 56-cm circumference).

Likely unit mix-ups are named: a value ten times too large looks like millimetres
(360 for 36 cm), one 2.54 times too small like inches (22 for 56 cm).
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass

from bedside.errors import MeasurementError
from bedside.placement.model import fit_head
from bedside.placement.types import HeadMeasurements

#: Centimetres per unit accepted by --unit.
UNITS: dict[str, float] = {"cm": 1.0, "mm": 0.1, "in": 2.54}
UNIT_WORDS: dict[str, str] = {"cm": "centimetres", "mm": "millimetres", "in": "inches"}


@dataclass(frozen=True)
class _Range:
    label: str
    low_cm: float
    high_cm: float


CIRCUMFERENCE = _Range("circumference", 18.0, 70.0)
NASION_INION = _Range("nasion–inion arc", 11.0, 50.0)
PREAURICULAR = _Range("preauricular arc", 11.0, 50.0)
INFERIOR_CIRCUMFERENCE = _Range("inferior circumference", 18.0, 70.0)
ARC_TO_CIRCUMFERENCE = (0.45, 0.85)
INFERIOR_TO_CIRCUMFERENCE = (0.90, 1.15)
ARC_RATIO_MAX = 1.35


def _number(value: object, rng: _Range, unit: str) -> float:
    """A finite float from a str/int/float, or a MeasurementError naming what is accepted."""
    example = f"a number of {UNIT_WORDS[unit]}, e.g. 36 or 36.5"
    if isinstance(value, bool) or value is None:
        raise MeasurementError(f"{rng.label} must be {example}; got {value!r}")
    if isinstance(value, numbers.Real):  # int, float, numpy scalars
        number = float(value)
    elif isinstance(value, str):
        text = value.strip()
        # A decimal comma (36,5) is how many technologists write; accept exactly that.
        if text.count(",") == 1 and "." not in text:
            text = text.replace(",", ".")
        try:
            number = float(text)
        except ValueError:
            raise MeasurementError(
                f"{rng.label} must be {example} (the unit goes in --unit); got {value!r}"
            ) from None
    else:
        raise MeasurementError(f"{rng.label} must be {example}; got {type(value).__name__}")
    if not math.isfinite(number):
        raise MeasurementError(f"{rng.label} must be a finite number; got {value!r}")
    if number <= 0:
        raise MeasurementError(f"{rng.label} must be greater than zero; got {value!r}")
    return number


def _fmt(x: float) -> str:
    return f"{x:g}" if abs(x) < 1e6 else f"{x:.3g}"


def _in_range(value: float, unit: str, rng: _Range, together: str = "all three") -> float:
    """Convert to cm and check the size; name a likely unit mix-up."""
    cm = value * UNITS[unit]
    if rng.low_cm <= cm <= rng.high_cm:
        return cm
    lo = rng.low_cm / UNITS[unit]
    hi = rng.high_cm / UNITS[unit]
    msg = (
        f"{rng.label} of {_fmt(value)} {unit} is outside what heads measure "
        f"({_fmt(round(lo, 1))}–{_fmt(round(hi, 1))} {unit}, from a very preterm neonate to a "
        f"large adult)"
    )
    for other, factor in UNITS.items():
        if other == unit:
            continue
        as_cm = value * factor
        if rng.low_cm <= as_cm <= rng.high_cm:
            same = f" = {as_cm:.1f} cm" if other != "cm" else ""
            msg += (
                f"; it looks like {UNIT_WORDS[other]} ({_fmt(value)} {other}{same}): "
                f"give {together} in one unit — {as_cm / UNITS[unit]:.3g} {unit} here, or "
                f"{together} in {UNIT_WORDS[other]} with --unit {other}"
            )
            break
    raise MeasurementError(msg)


def parse_measurements(
    nasion_inion: object, preauricular: object, circumference: object, unit: str = "cm"
) -> HeadMeasurements:
    """Check three tape measurements and return them in cm.

    nasion_inion: nasion to inion over the vertex; preauricular: left to right
    preauricular point over the vertex; circumference: through Fpz, T3/T7, Oz, T4/T8.
    Values may be numbers or strings ("36", "36.5", "36,5"); unit is "cm", "mm" or "in".
    Raises MeasurementError saying what was wrong and what is accepted.
    """
    if unit not in UNITS:
        raise MeasurementError(
            f"unit {unit!r} is not known; accepted: {', '.join(UNITS)} (centimetres by default)"
        )
    raw = [
        (_number(nasion_inion, NASION_INION, unit), NASION_INION),
        (_number(preauricular, PREAURICULAR, unit), PREAURICULAR),
        (_number(circumference, CIRCUMFERENCE, unit), CIRCUMFERENCE),
    ]
    ni, pa, circ = (_in_range(v, unit, r) for v, r in raw)
    _check_consistent(ni, pa, circ, unit)
    # The model must fit too (only a corner of the accepted ranges could fail here).
    fit_head(ni, pa, circ)
    return HeadMeasurements(nasion_inion_cm=ni, preauricular_cm=pa, circumference_cm=circ)


def _consistent(ni: float, pa: float, circ: float) -> str:
    """What is wrong with the set in plain words, or an empty string when it can be one head."""
    lo, hi = ARC_TO_CIRCUMFERENCE
    for label, arc in (("nasion–inion arc", ni), ("preauricular arc", pa)):
        ratio = arc / circ
        if not lo <= ratio <= hi:
            return (
                f"the {label} ({arc:.1f} cm) is {ratio:.0%} of the circumference "
                f"({circ:.1f} cm); on a head it is {lo:.0%}–{hi:.0%} "
                f"({lo * circ:.1f}–{hi * circ:.1f} cm for that circumference)"
            )
    if max(ni, pa) / min(ni, pa) > ARC_RATIO_MAX:
        return (
            f"the nasion–inion arc ({ni:.1f} cm) and the preauricular arc ({pa:.1f} cm) "
            f"differ by more than a factor {ARC_RATIO_MAX:g}; on a head they are close"
        )
    return ""


def _check_consistent(ni: float, pa: float, circ: float, unit: str) -> None:
    problem = _consistent(ni, pa, circ)
    if not problem:
        return
    msg = f"these measurements do not fit one head: {problem}"
    # Would one value make sense in another unit? (e.g. the circumference in inches)
    labels = ("nasion–inion arc", "preauricular arc", "circumference")
    values = [ni, pa, circ]
    hint = ""
    for i, label in enumerate(labels):
        for other, factor in UNITS.items():
            if other == unit:
                continue
            trial = list(values)
            trial[i] = values[i] / UNITS[unit] * factor
            if not _consistent(*trial) and _plausible(i, trial[i]):
                hint = (
                    f"; was the {label} measured in {UNIT_WORDS[other]}? "
                    f"({values[i] / UNITS[unit]:g} {other} = {trial[i]:.1f} cm) — "
                    f"give all three in one unit"
                )
                break
        if hint:
            break
    raise MeasurementError(msg + (hint or "; re-measure, and check all three are in the same unit"))


def _plausible(index: int, cm: float) -> bool:
    rng = (NASION_INION, PREAURICULAR, CIRCUMFERENCE)[index]
    return rng.low_cm <= cm <= rng.high_cm


def parse_inferior_circumference(
    value: object, measurements: HeadMeasurements, unit: str = "cm"
) -> float:
    """Check an optional taped inferior circumference and return it in cm.

    value: the tape round the head through the nasion, both preauricular points and the
    inion (10-10's inferior row F9 … P10 lies on it), in ``unit``; measurements: the
    checked three (the circumference it is compared with). Raises MeasurementError
    saying what was wrong and what is accepted.
    """
    if unit not in UNITS:
        raise MeasurementError(
            f"unit {unit!r} is not known; accepted: {', '.join(UNITS)} (centimetres by default)"
        )
    number = _number(value, INFERIOR_CIRCUMFERENCE, unit)
    cm = _in_range(number, unit, INFERIOR_CIRCUMFERENCE, together="all four")
    circ = measurements.circumference_cm
    lo, hi = INFERIOR_TO_CIRCUMFERENCE
    ratio = cm / circ
    if not lo <= ratio <= hi:
        raise MeasurementError(
            f"the inferior circumference ({cm:.1f} cm) is {ratio:.0%} of the circumference "
            f"({circ:.1f} cm); the tape through the nasion, the preauricular points and the "
            f"inion is {lo:.0%}–{hi:.0%} of it on a head ({lo * circ:.1f}–{hi * circ:.1f} cm "
            f"here); re-measure, and check both are in the same unit"
        )
    return cm
