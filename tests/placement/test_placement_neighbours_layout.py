"""Neighbours, average-head positions, the 2-D map, and the names of the systems."""

from __future__ import annotations

import math

import pytest
from hypothesis import given
from hypothesis import strategies as st

from bedside.placement import neighbours_for, positions_for, project_2d, systems

MONTAGE_10_20 = [
    "Fp1", "Fp2", "F7", "F3", "Fz", "F4", "F8", "T3", "C3", "Cz", "C4", "T4",
    "T5", "P3", "Pz", "P4", "T6", "O1", "O2",
]  # fmt: skip


def _neighbours_of(name: str, pairs: tuple[tuple[str, str], ...]) -> set[str]:
    return {b if a == name else a for a, b in pairs if name in (a, b)}


def test_10_20_neighbours_as_on_the_chart() -> None:
    """Common practice (the 10-20 chart, Jasper 1958 layout): in a 19-channel montage
    F3 touches Fp1, F7, Fz and C3; C3 touches T3, Cz, F3, P3; never across the head."""
    pairs = neighbours_for(MONTAGE_10_20)
    assert {"Fp1", "F7", "Fz", "C3"} <= _neighbours_of("F3", pairs)
    assert {"T3", "Cz", "F3", "P3"} <= _neighbours_of("C3", pairs)
    assert {"Fp1", "F8"} <= _neighbours_of("Fp2", pairs)
    for a, b in pairs:
        assert not ({a, b} <= {"Fp1", "O1", "O2"} and a[0] != b[0]) or {a, b} == {"O1", "O2"}
    assert ("O2", "Fp1") not in pairs and ("Fp1", "O2") not in pairs
    assert ("T3", "T4") not in pairs and ("C3", "C4") not in pairs


def test_neighbours_depend_on_what_is_present() -> None:
    """Geometry: with FC3 present, F3 and C3 are no longer direct neighbours; Cz
    between Fz and Pz keeps those two apart; pairs are sorted and unique."""
    assert ("C3", "F3") in neighbours_for(["F3", "C3"])
    assert ("C3", "F3") not in neighbours_for(["F3", "FC3", "C3"])
    line = neighbours_for(["Fz", "Cz", "Pz"])
    assert line == (("Cz", "Fz"), ("Cz", "Pz"))
    dense = neighbours_for(list(systems.sites("10-10")))
    assert len(dense) == len(set(dense)) and all(a < b for a, b in dense)


def test_neighbours_keep_given_labels_and_drop_unknown() -> None:
    pairs = neighbours_for(["t3", "EEG C3", "ECG", "Status"])
    assert pairs == (("EEG C3", "t3"),)
    # two labels for one site: both kept, never paired with each other (same place)
    assert set(neighbours_for(["T3", "T7", "C3"])) == {("C3", "T3"), ("C3", "T7")}
    assert neighbours_for([]) == () and neighbours_for(["X1", "Y2"]) == ()


def test_neighbours_symmetric_left_right() -> None:
    """Geometry: the neighbour graph of a symmetric montage is symmetric."""
    pairs = set(neighbours_for(MONTAGE_10_20, system="10-20"))
    modern = {tuple(sorted(systems.canonical_name(n) or n for n in p)) for p in pairs}
    mirrored = {tuple(sorted(systems.mirror(n) for n in p)) for p in modern}
    assert modern == mirrored


def test_positions_for_average_head() -> None:
    """Average adult head (36/35/56 cm; Bushby 1992 means 55.2/57.2 cm): Cz on top,
    nasion side in front (+y), left sites at x < 0, classic names accepted."""
    pos = positions_for(["Cz", "t3", "T7", "Fpz", "Oz", "A1", "M2", "Nope"])
    assert set(pos) == {"Cz", "t3", "T7", "Fpz", "Oz", "A1", "M2"}
    assert pos["t3"] == pos["T7"] and pos["T7"][0] < 0
    assert pos["Cz"][2] > max(p[2] for k, p in pos.items() if k != "Cz")
    assert pos["Fpz"][1] > 0 > pos["Oz"][1]
    assert pos["A1"][2] < 0 and pos["M2"][0] > 0
    # Fpz and T7 are a quarter of the 56-cm circumference apart. On a round 10 % level
    # they are r·√2 = 126.0 mm apart (hand arithmetic, r = 560 mm / 2π). The 36/35-cm arcs
    # make this head under 3 % out of round, which changes a quarter's chord only at
    # second order ((3 %)² of 126 mm ≈ 0.1 mm), as does the 1 mm between the heights of
    # Fpz and T7; positions are kept to 0.1 mm. Hence ±0.5 mm.
    assert math.dist(pos["Fpz"], pos["T7"]) == pytest.approx(560 / (2 * math.pi) * 2**0.5, abs=0.5)
    assert positions_for(["AF3"], system="10-20") == {}


def test_project_2d_nose_up_left_left() -> None:
    """Azimuthal equidistant from the vertex: Cz at the centre, the nose side up (+y),
    left to the left (-x); Fpz and Oz equally far (10 % from each end of the midline)."""
    pos = positions_for(["Cz", "Fpz", "Oz", "T7", "T8", "Nz", "A1"])
    cz = project_2d(pos["Cz"])
    assert cz == pytest.approx((0.0, 0.0), abs=1e-6)
    fx, fy = project_2d(pos["Fpz"])
    ox, oy = project_2d(pos["Oz"])
    assert fx == pytest.approx(0.0, abs=1e-6) and fy > 0.5 and oy == pytest.approx(-fy, abs=1e-3)
    assert project_2d(pos["T7"])[0] < -0.5 < 0.5 < project_2d(pos["T8"])[0]
    assert math.hypot(*project_2d(pos["Nz"])) == pytest.approx(0.75, abs=1e-3)
    assert math.hypot(*project_2d(pos["A1"])) <= 1.0


@given(st.tuples(*[st.floats(allow_nan=True, allow_infinity=True)] * 3))
def test_project_2d_always_in_the_unit_square(xyz: tuple[float, float, float]) -> None:
    x, y = project_2d(xyz)
    assert -1.0 <= x <= 1.0 and -1.0 <= y <= 1.0


@pytest.mark.parametrize(
    ("label", "modern"),
    [
        ("T3", "T7"), ("t4", "T8"), ("T5", "P7"), ("t6", "P8"),  # ACNS 2016 renaming
        ("FP1", "Fp1"), ("cz", "Cz"), (" EEG Pz ", "Pz"), ("fcz", "FCz"),
        ("A1", "A1"), ("M1", "M1"), ("Nz", "Nz"),
        ("ECG", None), ("", None), ("T11", None), ("EEG", None),
    ],
)  # fmt: skip
def test_canonical_name(label: str, modern: str | None) -> None:
    """Modern nomenclature (ACNS Guideline 2, 2016): T3=T7, T4=T8, T5=P7, T6=P8;
    A1/A2 (earlobes) are not M1/M2 (mastoids)."""
    assert systems.canonical_name(label) == modern


def test_site_counts() -> None:
    """Jasper 1958: 19 scalp sites in 10-20, plus Fpz and Oz marked as measuring
    landmarks (the list carries both: 21 names); Jasper's 21 electrodes are the 19 plus
    the ear references A1/A2. The 10-10 list here (from memory) has 73 sites; every
    10-20 site is a 10-10 site."""
    assert len(systems.SCALP_10_20) == 19 and not {"Fpz", "Oz"} & set(systems.SCALP_10_20)
    assert len(systems.SCALP_10_20) + len(("A1", "A2")) == 21
    assert set(systems.sites("10-20", references=False)) == {*systems.SCALP_10_20, "Fpz", "Oz"}
    assert len(systems.sites("10-10", references=False)) == 73
    assert set(systems.SITES_10_20) <= set(systems.SITES_10_10)
    assert systems.canonical_name("A1") != systems.canonical_name("M1")
    with pytest.raises(ValueError, match="10-20, 10-10"):
        systems.sites("10-5")
