"""Measurement checks: what is accepted, what is refused, and that the message helps.

Ranges come from the sources in bedside/placement/validate.py: INTERGROWTH-21st (about
22 cm at 24 weeks' gestation), WHO (33.9 / 34.5 cm at birth), Bushby et al. 1992
(adult means 55.2 / 57.2 cm).
"""

from __future__ import annotations

import math

import pytest
from hypothesis import given
from hypothesis import strategies as st

from bedside.errors import InputError, MeasurementError
from bedside.placement import parse_measurements, plan_placement
from bedside.placement.validate import parse_inferior_circumference


def test_accepts_numbers_and_strings_in_cm() -> None:
    m = parse_measurements("36", 35, "56.0")
    assert (m.nasion_inion_cm, m.preauricular_cm, m.circumference_cm) == (36.0, 35.0, 56.0)
    # a decimal comma, as written in much of Europe (common practice)
    assert parse_measurements("36,5", " 35 ", 56).nasion_inion_cm == 36.5


@pytest.mark.parametrize(
    ("values", "unit", "cm"),
    [
        (("360", "350", "560"), "mm", (36.0, 35.0, 56.0)),
        # inches by hand: 14.17 in × 2.54 = 35.99 cm; 22.05 in × 2.54 = 56.0 cm
        (("14.17", "13.78", "22.05"), "in", (35.99, 35.0, 56.01)),
    ],
)
def test_other_units_when_named(
    values: tuple[str, str, str], unit: str, cm: tuple[float, ...]
) -> None:
    m = parse_measurements(*values, unit=unit)
    got = (m.nasion_inion_cm, m.preauricular_cm, m.circumference_cm)
    assert got == pytest.approx(cm, abs=0.01)


@pytest.mark.parametrize(
    ("args", "match"),
    [
        (("abc", 35, 56), r"nasion–inion arc must be a number of centimetres.*got 'abc'"),
        (("36cm", 35, 56), r"unit goes in --unit"),
        ((36, "", 56), r"preauricular arc must be a number"),
        ((36, 35, None), r"circumference must be a number"),
        ((36, 35, True), r"circumference must be a number"),
        ((0, 35, 56), r"greater than zero"),
        ((-36, 35, 56), r"greater than zero"),
        ((36, 35, math.nan), r"finite"),
        ((36, 35, "inf"), r"finite"),
        ((36, 35, 150), r"circumference of 150 cm is outside what heads measure \(18–70 cm"),
        ((5, 35, 56), r"nasion–inion arc of 5 cm is outside"),
    ],
)
def test_refused_with_what_is_accepted(args: tuple[object, object, object], match: str) -> None:
    with pytest.raises(MeasurementError, match=match):
        parse_measurements(*args)


def test_millimetres_given_as_centimetres_are_named() -> None:
    """360 for 36 cm: the message names millimetres and the cm value."""
    with pytest.raises(MeasurementError, match=r"looks like millimetres \(360 mm = 36.0 cm\)"):
        parse_measurements(360, 35, 56)
    with pytest.raises(MeasurementError, match=r"looks like millimetres.*--unit mm"):
        parse_measurements(360, 350, 560)


def test_centimetres_given_as_millimetres_are_named() -> None:
    with pytest.raises(
        MeasurementError,
        match=r"looks like centimetres \(36 cm\): give all three in one unit — 360 mm here",
    ):
        parse_measurements(36, 35, 56, unit="mm")
    with pytest.raises(MeasurementError, match=r"looks like centimetres.*--unit cm"):
        parse_measurements(36, 35, 56, unit="in")


def test_inches_among_centimetres_are_named() -> None:
    """A circumference of 22 with arcs of 36/35 cm fits no head; 22 in = 55.9 cm does."""
    with pytest.raises(
        MeasurementError,
        match=r"do not fit one head.*circumference measured in inches\? \(22 in = 55.9 cm\)",
    ):
        parse_measurements(36, 35, 22)


@pytest.mark.parametrize(
    ("args", "match"),
    [
        ((45, 44, 50), r"nasion–inion arc \(45.0 cm\) is 90% of the circumference"),
        ((24, 24, 56), r"is 43% of the circumference"),
        ((40, 28, 56), r"differ by more than a factor 1.35"),
    ],
)
def test_inconsistent_sets(args: tuple[float, float, float], match: str) -> None:
    with pytest.raises(MeasurementError, match=match):
        parse_measurements(*args)


def test_unknown_unit() -> None:
    with pytest.raises(MeasurementError, match=r"unit 'ft' is not known; accepted: cm, mm, in"):
        parse_measurements(36, 35, 56, unit="ft")


def test_neonate_and_large_adult_accepted() -> None:
    """WHO birth median 34.5 cm (boys), INTERGROWTH-21st ~22 cm at 24 weeks, a large
    adult beyond the Bushby 1992 male mean of 57.2 cm: all give a plan."""
    for ni, pa, circ in [(23, 22, 34.5), (14, 13.5, 22), (40, 39, 64)]:
        plan = plan_placement(parse_measurements(ni, pa, circ))
        assert len(plan.marks) > 20


_values = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True),
    st.integers(min_value=-(10**6), max_value=10**6),
    st.text(max_size=12),
    st.sampled_from(["36", "35,5", " 56 ", "3.6e1", "-0", "nan", "", "1e309", "0x10"]),
    st.none(),
    st.booleans(),
)


@given(ni=_values, pa=_values, circ=_values, unit=st.sampled_from(["cm", "mm", "in", "m", ""]))
def test_any_input_gives_a_plan_or_a_clear_error(
    ni: object, pa: object, circ: object, unit: str
) -> None:
    """Property: never anything but a plan or a MeasurementError with a message."""
    try:
        m = parse_measurements(ni, pa, circ, unit=unit)
    except MeasurementError as exc:
        assert str(exc) and "Traceback" not in str(exc)
        return
    plan = plan_placement(m, system="10-10")
    assert all(math.isfinite(v) for k in plan.marks for v in k.xyz_mm)


@given(
    circ=st.floats(18.0, 70.0),
    ni=st.floats(11.0, 50.0),
    pa=st.floats(11.0, 50.0),
    system=st.sampled_from(["10-20", "10-10"]),
)
def test_every_in_range_triple_plans_or_is_refused(
    circ: float, ni: float, pa: float, system: str
) -> None:
    """Property over the whole accepted box: accepted values always give finite marks."""
    try:
        m = parse_measurements(ni, pa, circ)
    except MeasurementError as exc:
        assert "do not fit one head" in str(exc)
        return
    plan = plan_placement(m, system=system)
    assert all(math.isfinite(k.distance_cm) and k.distance_cm >= 0 for k in plan.marks)


def test_plan_checks_hand_built_measurements() -> None:
    """plan_placement applies the same checks to a HeadMeasurements built by hand."""
    from bedside.placement import HeadMeasurements

    with pytest.raises(MeasurementError, match="greater than zero"):
        plan_placement(HeadMeasurements(-36.0, 35.0, 56.0))
    with pytest.raises(MeasurementError, match="looks like millimetres"):
        plan_placement(HeadMeasurements(360.0, 350.0, 560.0))
    with pytest.raises(InputError, match="must be HeadMeasurements"):
        plan_placement((36, 35, 56))  # type: ignore[arg-type]
    with pytest.raises(InputError, match="accepted: 10-20, 10-10"):
        plan_placement(HeadMeasurements(36.0, 35.0, 56.0), system="10-5")
    with pytest.raises(InputError, match="accepted: modern, classic"):
        plan_placement(HeadMeasurements(36.0, 35.0, 56.0), names="new")


def test_numpy_numbers_accepted() -> None:
    import numpy as np

    m = parse_measurements(np.float32(36.0), np.int64(35), np.float64(56.0))
    assert m.preauricular_cm == 35.0


# --- the optional fourth tape: the inferior circumference (10-10) -------------------
ADULT = parse_measurements(36, 35, 56)


def test_inferior_circumference_accepted_in_any_unit() -> None:
    """Checked like the circumference (18–70 cm; INTERGROWTH-21st to large adults) and
    converted the same way (hand arithmetic: 570 mm = 57 cm; 22.44 in × 2.54 = 57.0 cm)."""
    assert parse_inferior_circumference("57", ADULT) == 57.0
    assert parse_inferior_circumference("57,5", ADULT) == 57.5
    assert parse_inferior_circumference("570", ADULT, unit="mm") == pytest.approx(57.0)
    assert parse_inferior_circumference(22.44, ADULT, unit="in") == pytest.approx(57.0, abs=0.01)


@pytest.mark.parametrize(
    ("value", "unit", "match"),
    [
        (None, "cm", "inferior circumference must be a number"),
        (True, "cm", "inferior circumference must be a number"),
        ("-57", "cm", "greater than zero"),
        ("inf", "cm", "finite"),
        ("570", "cm", r"looks like millimetres \(570 mm = 57.0 cm\): give all four in one unit"),
        ("57", "mm", "looks like centimetres"),
        ("80", "cm", "outside what heads measure"),
        # on one head the two circumferences are close (validate.py: 90–115 %)
        ("48", "cm", r"is 86% of the circumference \(56.0 cm\).*50.4–64.4 cm here"),
        ("65", "cm", "is 116% of the circumference"),
        ("57", "ft", "unit 'ft' is not known"),
    ],
)
def test_inferior_circumference_refused_with_what_is_accepted(
    value: object, unit: str, match: str
) -> None:
    with pytest.raises(MeasurementError, match=match):
        parse_inferior_circumference(value, ADULT, unit=unit)


def test_plan_checks_the_inferior_circumference_too() -> None:
    """plan_placement checks a value given by hand the same way (never a silent plan)."""
    with pytest.raises(MeasurementError, match="inferior circumference"):
        plan_placement(ADULT, system="10-10", inferior_circumference_cm=36.0)
    plan = plan_placement(ADULT, system="10-10", inferior_circumference_cm=57.0)
    assert plan.inferior_circumference_cm == 57.0


@given(value=_values, unit=st.sampled_from(["cm", "mm", "in", "m", ""]))
def test_any_inferior_value_is_accepted_or_clearly_refused(value: object, unit: str) -> None:
    """Property: any value gives a number in 18–70 cm or a MeasurementError naming the
    inferior circumference — never another exception."""
    try:
        cm = parse_inferior_circumference(value, ADULT, unit=unit)
    except MeasurementError as exc:
        assert "inferior circumference" in str(exc) or "unit" in str(exc)
    else:
        assert 18.0 <= cm <= 70.0 and 0.9 <= cm / 56.0 <= 1.15
