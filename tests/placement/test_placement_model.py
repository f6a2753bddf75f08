"""The head model: its arcs reproduce the tape measurements; symmetry; a sphere by hand."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from bedside.errors import MeasurementError
from bedside.placement import HeadMeasurements, plan_placement, systems
from bedside.placement.model import HeadModel, fit_head, quarter_perimeter

HEADS = [
    (36.0, 35.0, 56.0),  # our example adult head (Bushby 1992 means 55.2/57.2 cm)
    (37.8, 38.8, 61.0),  # a large adult (about Colin27's arcs)
    (23.0, 22.0, 34.5),  # about the WHO median at birth, 34.5 cm
    (14.0, 13.5, 22.0),  # very preterm (INTERGROWTH-21st, ~22 cm at 24 weeks)
    (40.0, 31.0, 58.0),  # long, narrow head
]


@pytest.mark.parametrize(("ni", "pa", "circ"), HEADS)
def test_model_arcs_reproduce_inputs(ni: float, pa: float, circ: float) -> None:
    """The fitted model's own arcs (integrated numerically) are within 0.1 cm of the
    three measurements (the requirement; in practice far closer)."""
    model = fit_head(ni, pa, circ)
    assert model.nasion_inion_mm() / 10 == pytest.approx(ni, abs=0.1)
    assert model.preauricular_mm() / 10 == pytest.approx(pa, abs=0.1)
    assert model.circumference_mm() / 10 == pytest.approx(circ, abs=0.1)


@given(
    circ=st.floats(18.0, 70.0),
    r1=st.floats(0.5, 0.8),
    r2=st.floats(0.5, 0.8),
)
def test_model_arcs_reproduce_any_plausible_head(circ: float, r1: float, r2: float) -> None:
    """Property: for any head in the accepted ranges the arcs come back within 0.1 cm."""
    ni, pa = r1 * circ, r2 * circ
    if max(ni, pa) / min(ni, pa) > 1.35:
        return
    model = fit_head(ni, pa, circ)
    assert model.nasion_inion_mm() / 10 == pytest.approx(ni, abs=0.1)
    assert model.preauricular_mm() / 10 == pytest.approx(pa, abs=0.1)
    assert model.circumference_mm() / 10 == pytest.approx(circ, abs=0.1)


def test_quarter_perimeter_known_values() -> None:
    """A circle's quarter is pi r / 2; a degenerate ellipse's quarter is its long half-axis
    (hand arithmetic); Ramanujan's second approximation for a 2:1 ellipse (error < 1e-9
    relative at this eccentricity) gives the quarter of a (2, 1) ellipse as 2.4221."""
    assert float(quarter_perimeter(10.0, 10.0)) == pytest.approx(math.pi * 5, rel=1e-12)
    assert float(quarter_perimeter(7.0, 0.0)) == pytest.approx(7.0, rel=1e-6)
    a, b = 2.0, 1.0
    h = ((a - b) / (a + b)) ** 2
    ramanujan = math.pi * (a + b) * (1 + 3 * h / (10 + math.sqrt(4 - 3 * h)))
    assert float(quarter_perimeter(a, b)) == pytest.approx(ramanujan / 4, rel=1e-8)


def test_sphere_by_hand() -> None:
    """On a sphere of radius r (hand geometry): nasion–inion = preauricular = pi r, the 10 %
    circumference = 2 pi r cos 18°; Fpz lies 18° above the nasion, Cz at the top, T7 at
    18° above the left preauricular point, O1 at 162° of azimuth on the 18° circle."""
    r = 90.0
    head = HeadMeasurements(
        math.pi * r / 10, math.pi * r / 10, 2 * math.pi * r * math.cos(0.1 * math.pi) / 10
    )
    plan = plan_placement(head)
    assert isinstance(plan.model, HeadModel)
    assert plan.model.axes_mm == pytest.approx((r, r, r), abs=0.01)
    el = math.radians(18)
    expected = {
        "Fpz": (0.0, r * math.cos(el), r * math.sin(el)),
        "Cz": (0.0, 0.0, r),
        "T7": (-r * math.cos(el), 0.0, r * math.sin(el)),
        "O1": (
            -r * math.cos(el) * math.sin(math.radians(162)),
            r * math.cos(el) * math.cos(math.radians(162)),
            r * math.sin(el),
        ),
    }
    for name, xyz in expected.items():
        assert plan.positions_mm[name] == pytest.approx(xyz, abs=0.1), name


@pytest.mark.parametrize("system", ["10-20", "10-10"])
def test_left_and_right_mirror(system: str) -> None:
    """Geometry: every left site (odd number) is the mirror (x -> -x) of its right
    partner (even number), and midline sites (z) lie on x = 0."""
    plan = plan_placement(HeadMeasurements(35.2, 34.1, 55.3), system=system)
    pos = plan.positions_mm
    for name, (x, y, z) in pos.items():
        partner = systems.mirror(name)
        if partner == name:
            assert x == pytest.approx(0.0, abs=0.05), name
            continue
        assert pos[partner] == pytest.approx((-x, y, z), abs=0.11), name
        assert (x < 0) == (systems.side(name) == "left"), name
    # and the marks mirror too: same distance for a left site and its right partner
    by = {(m.line.replace("left", "x").replace("right", "x"), m.name): m for m in plan.marks}
    for (line, name), mark in by.items():
        twin = by.get((line, systems.mirror(name)))
        if twin is None or mark.line == "reference":
            continue
        if mark.line == "coronal":  # measured from the left: mirrored percent
            assert twin.percent == pytest.approx(100 - mark.percent), name
        else:
            assert twin.distance_cm == mark.distance_cm, name


def test_sites_on_two_lines_have_one_position() -> None:
    """Geometry: Cz is 50 % of both arcs, T7 is on the coronal line and the circumference,
    Oz on the midline and both halves of the circumference: one point each."""
    plan = plan_placement(HeadMeasurements(36.0, 35.0, 56.0), system="10-10")
    for name in ("Cz", "T7", "Oz", "Fpz", "T9"):
        points = {m.xyz_mm for m in plan.marks if m.name == name}
        assert len(points) == 1, name
    model = plan.model
    assert isinstance(model, HeadModel)
    # T7 by the coronal rule and by the circumference rule, before any rounding
    assert np.allclose(model.on_coronal(0.1), model.on_contour(0.25, "left"), atol=0.5)
    assert np.allclose(model.on_midline(0.9), model.on_contour(0.5, "left"), atol=0.5)


def test_inconsistent_set_has_no_model() -> None:
    """A circumference far too large for the arcs fits no ellipsoid: a clear error."""
    with pytest.raises(MeasurementError, match="do not fit one head.*circumference must lie"):
        fit_head(20.0, 20.0, 70.0)
