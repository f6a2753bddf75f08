"""Marking distances against the published percentages, on example heads of ours.

Sources of the percentages: Jasper 1958 (the 10-20 system: 10 % / 20 % steps of the
nasion–inion arc, the preauricular arc and the circumference); the 10-10 system per
the modified combinatorial nomenclature (Chatrian 1985; AEEGS Guideline 13, 1994;
ACNS Guideline 2, 2016 — percentages from memory: every 20 % step halved). The heads
(36/35/56 cm and others) are ours, not examples from those papers; the expected
numbers are hand arithmetic written out in each test, not output of the code under
test. Distances against a real head: test_placement_mne_reference.py (Colin27).
"""

from __future__ import annotations

import pytest

from bedside.placement import HeadMeasurements, plan_placement
from bedside.placement.types import Mark

#: Our example adult head (cm), near the adult mean circumference (Bushby et al. 1992).
HEAD = HeadMeasurements(nasion_inion_cm=36.0, preauricular_cm=35.0, circumference_cm=56.0)


def _line(plan_marks: tuple[Mark, ...], line: str) -> dict[str, Mark]:
    return {m.name: m for m in plan_marks if m.line == line}


def test_midline_percentages_on_our_example_head() -> None:
    """Percentages from Jasper 1958: Fpz 10 %, Fz 30 %, Cz 50 %, Pz 70 %, Oz 90 % of
    Nz–Iz. Hand arithmetic for our example head's Nz–Iz of 36 cm: 3.6, 10.8, 18.0, 25.2, 32.4 cm from the nasion."""
    mid = _line(plan_placement(HEAD).marks, "midline")
    expected = {"Fpz": 3.6, "Fz": 10.8, "Cz": 18.0, "Pz": 25.2, "Oz": 32.4}
    assert {k: v.distance_cm for k, v in mid.items()} == expected
    assert all(m.start == "Nz" for m in mid.values())
    assert [mid[k].percent for k in expected] == [10, 30, 50, 70, 90]
    # steps: 3.6 then four times 20 % of 36 = 7.2
    assert [mid[k].step_cm for k in expected] == [3.6, 7.2, 7.2, 7.2, 7.2]


def test_circumference_percentages_on_our_example_head() -> None:
    """Percentages from Jasper 1958: from Fpz, Fp1 5 %, F7 15 %, T7 25 %, P7 35 %, O1 45 %,
    Oz 50 % of the circumference. Hand arithmetic for our example head's 56 cm: 2.8, 8.4, 14.0, 19.6, 25.2, 28.0 cm."""
    plan = plan_placement(HEAD)
    left = _line(plan.marks, "circumference-left")
    right = _line(plan.marks, "circumference-right")
    assert {k: v.distance_cm for k, v in left.items()} == {
        "Fp1": 2.8, "F7": 8.4, "T7": 14.0, "P7": 19.6, "O1": 25.2, "Oz": 28.0,
    }  # fmt: skip
    assert {k: v.distance_cm for k, v in right.items()} == {
        "Fp2": 2.8, "F8": 8.4, "T8": 14.0, "P8": 19.6, "O2": 25.2, "Oz": 28.0,
    }  # fmt: skip
    assert all(m.start == "Fpz" for m in [*left.values(), *right.values()])


def test_coronal_percentages_on_our_example_head() -> None:
    """Percentages from Jasper 1958: T7 10 %, C3 30 %, Cz 50 %, C4 70 %, T8 90 % of LPA–RPA
    from the left. Hand arithmetic for our example head's 35 cm: 3.5, 10.5, 17.5, 24.5, 31.5 cm."""
    cor = _line(plan_placement(HEAD).marks, "coronal")
    assert {k: v.distance_cm for k, v in cor.items()} == {
        "T7": 3.5, "C3": 10.5, "Cz": 17.5, "C4": 24.5, "T8": 31.5,
    }  # fmt: skip
    assert cor["T7"].start == "LPA"


def test_classic_names_on_the_same_marks() -> None:
    """T3 = T7, T4 = T8, T5 = P7, T6 = P8 (modern nomenclature, ACNS 2016); both shown."""
    plan = plan_placement(HEAD, names="classic")
    left = _line(plan.marks, "circumference-left")
    assert left["T3"].distance_cm == 14.0 and left["T3"].other_name == "T7"
    assert left["T5"].distance_cm == 19.6 and left["T5"].other_name == "P7"
    right = _line(plan.marks, "circumference-right")
    assert right["T4"].other_name == "T8" and right["T6"].other_name == "P8"
    assert "T7" not in plan.positions_mm and "T3" in plan.positions_mm
    modern = plan_placement(HEAD, names="modern")
    assert plan.positions_mm["T3"] == modern.positions_mm["T7"]
    assert _line(modern.marks, "coronal")["T7"].other_name == "T3"
    assert _line(modern.marks, "coronal")["C3"].other_name == ""


def test_10_10_midline_and_coronal_halved_steps() -> None:
    """10-10 (nomenclature guideline, from memory): Nz 0, Fpz 10, AFz 20, Fz 30, FCz 40,
    Cz 50, CPz 60, Pz 70, POz 80, Oz 90, Iz 100 % of Nz–Iz. Hand arithmetic for a 34 cm
    arc: 0, 3.4, 6.8, 10.2, 13.6, 17.0, 20.4, 23.8, 27.2, 30.6, 34.0 cm."""
    head = HeadMeasurements(nasion_inion_cm=34.0, preauricular_cm=33.0, circumference_cm=54.0)
    plan = plan_placement(head, system="10-10")
    mid = _line(plan.marks, "midline")
    assert [(k, v.distance_cm) for k, v in mid.items()] == [
        ("Nz", 0.0), ("Fpz", 3.4), ("AFz", 6.8), ("Fz", 10.2), ("FCz", 13.6), ("Cz", 17.0),
        ("CPz", 20.4), ("Pz", 23.8), ("POz", 27.2), ("Oz", 30.6), ("Iz", 34.0),
    ]  # fmt: skip
    cor = _line(plan.marks, "coronal")
    # T9 0, T7 10, C5 20, C3 30, C1 40, Cz 50 … T10 100 % of 33 cm
    assert [(k, v.distance_cm) for k, v in cor.items()] == [
        ("T9", 0.0), ("T7", 3.3), ("C5", 6.6), ("C3", 9.9), ("C1", 13.2), ("Cz", 16.5),
        ("C2", 19.8), ("C4", 23.1), ("C6", 26.4), ("T8", 29.7), ("T10", 33.0),
    ]  # fmt: skip


def test_10_10_circumference_in_five_percent_steps() -> None:
    """10-10 (nomenclature guideline, from memory): Fp1 5, AF7 10, F7 15, FT7 20, T7 25,
    TP7 30, P7 35, PO7 40, O1 45, Oz 50 % of the circumference from Fpz.
    Hand arithmetic for 54 cm: 2.7, 5.4, 8.1, 10.8, 13.5, 16.2, 18.9, 21.6, 24.3, 27.0."""
    head = HeadMeasurements(nasion_inion_cm=34.0, preauricular_cm=33.0, circumference_cm=54.0)
    left = _line(plan_placement(head, system="10-10").marks, "circumference-left")
    assert [(k, v.distance_cm) for k, v in left.items()] == [
        ("Fp1", 2.7), ("AF7", 5.4), ("F7", 8.1), ("FT7", 10.8), ("T7", 13.5), ("TP7", 16.2),
        ("P7", 18.9), ("PO7", 21.6), ("O1", 24.3), ("Oz", 27.0),
    ]  # fmt: skip
    assert all(v.step_cm == 2.7 for v in left.values())


@pytest.mark.parametrize("system", ["10-20", "10-10"])
@pytest.mark.parametrize(
    "head",
    [
        HEAD,
        HeadMeasurements(33.3, 31.7, 52.1),
        HeadMeasurements(23.0, 22.0, 34.5),  # near the WHO median at birth (34.5 cm)
    ],
)
def test_steps_add_up_to_each_line(system: str, head: HeadMeasurements) -> None:
    """Geometry (hand reasoning): along each measured line the steps add up to each
    mark's distance, and every distance is its published percent of the tape."""
    plan = plan_placement(head, system=system)
    lengths = {
        "midline": head.nasion_inion_cm,
        "coronal": head.preauricular_cm,
        "circumference-left": head.circumference_cm,
        "circumference-right": head.circumference_cm,
    }
    for line, length in lengths.items():
        marks = [m for m in plan.marks if m.line == line]
        running = 0.0
        for m in marks:
            running += m.step_cm
            assert running == pytest.approx(m.distance_cm, abs=1e-9), (line, m.name)
            # each distance is its percent of the line, to the 0.1 cm printed
            assert m.distance_cm == pytest.approx(m.percent / 100 * length, abs=0.0501)
        # all the steps together reach the last mark's share of the tape
        assert running == pytest.approx(marks[-1].percent / 100 * length, abs=0.0501)
    # the halves of the circumference meet at Oz, half the tape each
    for side in ("left", "right"):
        assert [m for m in plan.marks if m.line == f"circumference-{side}"][-1].percent == 50


def test_site_lists_complete() -> None:
    """Jasper 1958: the 19 scalp sites, with Fpz and Oz marked as measuring landmarks on
    the way (Jasper's 21 electrodes are the 19 plus the ear references A1/A2); the
    mastoids M1/M2 are separate sites, not A1/A2 (ACNS Guideline 2, 2016)."""
    plan = plan_placement(HEAD)
    expected = {
        "Fp1", "Fpz", "Fp2", "F7", "F3", "Fz", "F4", "F8", "T7", "C3", "Cz", "C4", "T8",
        "P7", "P3", "Pz", "P4", "P8", "O1", "Oz", "O2", "A1", "A2", "M1", "M2",
    }  # fmt: skip
    assert set(plan.positions_mm) == expected
    assert plan.positions_mm["A1"] != plan.positions_mm["M1"]
    ten = plan_placement(HEAD, system="10-10")
    assert {"AF3", "FC5", "CP6", "PO4", "F9", "TP10", "P10", "Iz", "Nz"} <= set(ten.positions_mm)
    assert len(ten.positions_mm) == 73 + 4


def test_derived_sites_say_how_and_both_rules() -> None:
    """Jasper 1958: F3 lies midway Fz–F7 on the F7–Fz–F8 arc and midway Fp1–C3;
    the plan says which rule placed it and how far the other one lands (the size of
    that gap is checked against MNE's spherical template in
    test_placement_mne_reference.py; here only that it is reported and not zero)."""
    plan = plan_placement(HEAD)
    f3 = next(m for m in plan.marks if m.name == "F3")
    assert f3.line == "derived" and f3.start == "Fz" and f3.percent == 50
    assert f3.arc_cm is not None and f3.distance_cm == pytest.approx(f3.arc_cm / 2, abs=0.06)
    assert "F7–Fz–F8" in f3.rule and "Fp1" in f3.how and "C3" in f3.how
    assert f3.rule_gap_cm is not None and f3.rule_gap_cm > 0.0
    p4 = next(m for m in plan.marks if m.name == "P4")
    assert "P8" in p4.how and "C4" in p4.how and "O2" in p4.how
    f1 = next(m for m in plan_placement(HEAD, system="10-10").marks if m.name == "F1")
    assert f1.percent == 25 and "quarter" in f1.how and f1.rule == ""


def test_walking_order_grouped_by_line() -> None:
    """Common practice: midline first, then the coronal line, the circumference (left,
    right), then the sites between marks, references last — each line in one block."""
    lines = [m.line for m in plan_placement(HEAD, system="10-10").marks]
    blocks = [ln for i, ln in enumerate(lines) if i == 0 or lines[i - 1] != ln]
    assert blocks == [
        "midline", "coronal", "circumference-left", "circumference-right",
        "inferior-left", "inferior-right", "derived", "reference",
    ]  # fmt: skip
