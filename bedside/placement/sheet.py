"""The marking sheet: one plain-text page of every mark, line by line in walking order.

:func:`marking_sheet` is the only writer of the sheet: ``bedside measure`` prints it
(the default ``table`` format) and the app's Measure view saves it (F5) and copies it
(F6), so both show the same rows, in the same order, with the same rounding:
distances, steps and percentages as :meth:`Mark.distance_cells` gives them (0.1 cm,
percent with ``g``), the taped unit's column by :func:`in_unit`. The app's on-screen
table takes its cells from the same two functions.
"""

from __future__ import annotations

import textwrap
from collections.abc import Iterator

from bedside.cautions import DISCLAIMER
from bedside.placement.calculator import line_title
from bedside.placement.types import HeadMeasurements, Mark, PlacementPlan
from bedside.placement.validate import UNITS

#: The width the "how to find it" text of the sites between marks wraps at.
HOW_WIDTH = 92


def grouped(marks: tuple[Mark, ...]) -> Iterator[tuple[str, list[Mark]]]:
    """Marks grouped by line, lines in the order they are first walked, marks in order."""
    order: dict[str, list[Mark]] = {}
    for m in marks:
        order.setdefault(m.line, []).append(m)
    yield from order.items()


def in_unit(distance_cm: float, unit: str) -> str:
    """A mark's distance (to 0.1 cm) in the taped unit: whole mm, or inches to 0.1 in
    (finer would claim more than the 0.1 cm it is converted from); cm as given."""
    if unit == "cm":
        return f"{distance_cm:.1f}"
    if unit == "mm":
        return f"{distance_cm * 10:.0f}"
    return f"{distance_cm / UNITS[unit]:.1f}"


def as_taped(measurements: HeadMeasurements, unit: str) -> tuple[float, float, float]:
    """The three measurements back in the unit they were taped in (the cm were computed
    from them, so this gives the typed numbers, rounding noise aside)."""
    factor = UNITS[unit]
    m = measurements
    ni, pa, circ = (round(v / factor, 6) for v in (m.nasion_inion_cm, m.preauricular_cm, m.circumference_cm))
    return ni, pa, circ


def _line_length(line: str, marks: list[Mark], plan: PlacementPlan) -> str:
    """What the line's distances are measured along, for its title ("" when nothing)."""
    m = plan.measurements
    lengths = {
        "midline": f"from the nasion (Nz) over the vertex to the inion, {m.nasion_inion_cm:.1f} cm",
        "coronal": f"from the left preauricular point (LPA) over Cz, {m.preauricular_cm:.1f} cm",
        "circumference-left": f"from Fpz round the left side to Oz, {m.circumference_cm / 2:.1f} cm",
        "circumference-right": f"from Fpz round the right side to Oz, {m.circumference_cm / 2:.1f} cm",
    }
    if line in lengths:
        return lengths[line]
    if line.startswith("inferior") and marks[0].arc_cm is not None:
        if plan.inferior_circumference_cm is not None:
            return f"from Nz through T9/T10 level to Iz (your tape: {marks[0].arc_cm:.1f} cm round)"
        return (f"from Nz through T9/T10 level to Iz (model estimate: {marks[0].arc_cm:.1f} cm "
                "round; tape it and give --inferior-circumference)")
    return ""


def marking_sheet(
    plan: PlacementPlan, unit: str = "cm", taped: tuple[float, float, float] | None = None
) -> str:
    """The marking sheet of ``plan`` as plain text (fixed-width columns).

    unit: the unit the head was taped in ("cm", "mm", "in"); when not cm each distance
    also appears in it. taped: the three measurements as taped (nasion–inion,
    preauricular, circumference, in ``unit``), named under the head line when not cm.
    """
    if unit not in UNITS:
        raise ValueError(f"unit must be one of {', '.join(UNITS)}, got {unit!r}")
    m = plan.measurements
    naming = ("modern names, classic in brackets" if plan.names == "modern"
              else "classic names, modern in brackets")
    lines = [
        f"{plan.system} marks ({naming})",
        f"head: nasion–inion {m.nasion_inion_cm:.1f} cm, preauricular {m.preauricular_cm:.1f} cm, "
        f"circumference {m.circumference_cm:.1f} cm"
        + (f", inferior circumference {plan.inferior_circumference_cm:.1f} cm"
           if plan.inferior_circumference_cm is not None else ""),
    ]
    extra_unit = unit != "cm"
    if extra_unit and taped is not None:
        lines.append(f"(taped {taped[0]:g} / {taped[1]:g} / {taped[2]:g} {unit}, the same order)")
    for n, (line, marks) in enumerate(grouped(plan.marks), start=1):
        lines.append("")
        length = _line_length(line, marks, plan)
        lines.append(f"{n}. {line_title(line)}" + (f" — {length}" if length else ""))
        if line == "reference":  # placed by landmark: no distance to show
            lines.extend(f"   {k.name:<9} {k.how}" for k in marks)
            continue
        head = f"   {'site':<9} {'from':<5} {'at cm':>6} {'step':>6} {'%':>5}"
        lines.append(head + (f" {'at ' + unit:>7}" if extra_unit else ""))
        for k in marks:
            site = k.name + (f" ({k.other_name})" if k.other_name else "")
            at_cm, step, pct = k.distance_cells()
            row = f"   {site:<9} {k.start:<5} {at_cm:>6} {step:>6} {pct:>5}"
            lines.append(row + (f" {in_unit(k.distance_cm, unit):>7}" if extra_unit else ""))
            if line == "derived" and k.how:
                text = k.how.replace(" cm", "\u00a0cm")  # keep "10.3 cm" together on one line
                wrapped = textwrap.wrap(text, width=HOW_WIDTH, initial_indent=" " * 13,
                                        subsequent_indent=" " * 13)
                lines.extend(w.replace("\u00a0", " ") for w in wrapped)
    lines.append("")
    lines.append(
        "Distances on the measured lines are the published percentages of your tape "
        "measurements; positions and the lengths of unmeasured arcs are model estimates."
    )
    lines.append(DISCLAIMER)
    return "\n".join(lines) + "\n"
