"""The marking sheet's rounding and rows, by hand arithmetic.

Percentages: Jasper 1958 (as in test_placement_percentages.py); 1 in = 2.54 cm exactly
(the international inch, 1959). The head 36 / 35 / 56 cm is our example head.
"""

from __future__ import annotations

import pytest

from bedside.placement import HeadMeasurements, plan_placement
from bedside.placement.sheet import as_taped, in_unit, marking_sheet

HEAD = HeadMeasurements(nasion_inion_cm=36.0, preauricular_cm=35.0, circumference_cm=56.0)


@pytest.mark.parametrize(
    ("cm", "unit", "shown"),
    [
        (10.8, "cm", "10.8"),
        (10.8, "mm", "108"),
        (3.6, "in", "1.4"),  # 3.6 / 2.54 = 1.417 in
        (14.0, "in", "5.5"),  # 14.0 / 2.54 = 5.512 in
    ],
)
def test_a_distance_in_the_taped_unit(cm: float, unit: str, shown: str) -> None:
    assert in_unit(cm, unit) == shown


def test_sheet_rows_in_walking_order_with_hand_figures() -> None:
    """Fz 30 % of 36 cm = 10.8 cm from Nz; in inches 10.8 / 2.54 = 4.25 -> 4.3 (half up
    is not at stake: 4.2519…)."""
    plan = plan_placement(HEAD)
    sheet = marking_sheet(plan, "in", as_taped(plan.measurements, "in"))
    lines = sheet.splitlines()
    fz = next(ln.split() for ln in lines if ln.split()[:1] == ["Fz"])
    assert fz == ["Fz", "Nz", "10.8", "7.2", "30", "4.3"]
    titles = [ln.split(" — ")[0] for ln in lines if ln[:1].isdigit() and ". " in ln[:4]]
    assert titles == ["1. midline", "2. coronal line", "3. circumference, left",
                      "4. circumference, right", "5. between marks", "6. references"]
    # 36 cm = 14.1732 in, 35 cm = 13.7795 in, 56 cm = 22.0472 in (rounded to 6 places, printed with g)
    assert "(taped 14.1732 / 13.7795 / 22.0472 in, the same order)" in sheet
    a1 = next(ln for ln in lines if ln.split()[:1] == ["A1"])
    assert "not measured" in a1 and "0.0" not in a1


def test_an_unknown_unit_is_refused() -> None:
    with pytest.raises(ValueError, match="unit must be one of cm, mm, in"):
        marking_sheet(plan_placement(HEAD), "ft")
