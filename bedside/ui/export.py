"""A copy/print-friendly plain-text sheet of the marks, and its atomic write."""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path
from typing import TYPE_CHECKING

from bedside.cautions import DISCLAIMER
from bedside.errors import RecordError
from bedside.placement.types import Mark, PlacementPlan
from bedside.record.atomic import atomic_write_text

if TYPE_CHECKING:
    from bedside.record.log import TapedMeasurements

LINE_TITLE = {
    "midline": "Midline (from the nasion over the vertex)",
    "coronal": "Coronal line (from the left preauricular point)",
    "circumference-left": "Circumference, left side (from Fpz)",
    "circumference-right": "Circumference, right side (from Fpz)",
    "derived": "Sites found between marks",
}


SHORT_LINE = {
    "midline": "midline",
    "coronal": "ear to ear",
    "circumference-left": "around, left",
    "circumference-right": "around, right",
    "derived": "between marks",
}


def short_line(line: str) -> str:
    return SHORT_LINE.get(line, line.replace("-", " "))


def line_title(line: str) -> str:
    return LINE_TITLE.get(line, line.replace("-", " ").capitalize())


def grouped(marks: tuple[Mark, ...]) -> Iterator[tuple[str, list[Mark]]]:
    """Marks grouped by line, lines in the order they are first walked, marks in order."""
    order: dict[str, list[Mark]] = {}
    for m in marks:
        order.setdefault(m.line, []).append(m)
    yield from order.items()


def plan_as_text(plan: PlacementPlan, taped: TapedMeasurements | None = None) -> str:
    """The marking sheet as plain text (fixed-width columns; prints on one page per line).

    taped: the measurements as taped, named on the sheet when not in cm."""
    m = plan.measurements
    out = [
        f"bedside marking sheet — system {plan.system}, {plan.names} names",
        f"nasion–inion {m.nasion_inion_cm:.1f} cm · preauricular {m.preauricular_cm:.1f} cm · "
        f"circumference {m.circumference_cm:.1f} cm",
    ]
    if taped is not None and taped.unit != "cm":
        out.append(f"(taped {taped.text()}, the same order)")
    out.append("")
    for line, marks in grouped(plan.marks):
        out.append(line_title(line))
        out.append(f"  {'site':<6} {'also':<5} {'from':<8} {'cm':>6} {'step':>6} {'%':>5}  how")
        for mk in marks:
            if not mk.measured:
                out.append(f"  {mk.name:<6} {mk.other_name:<5} {mk.start:<8} not measured  {mk.how}".rstrip())
                continue
            out.append(
                f"  {mk.name:<6} {mk.other_name:<5} {mk.start:<8} {mk.distance_cm:>6.1f} "
                f"{mk.step_cm:>6.1f} {mk.percent:>5.0f}  {mk.how}".rstrip()
            )
        out.append("")
    out.append(DISCLAIMER)
    return "\n".join(out) + "\n"


def write_text_atomic(path: Path, text: str) -> Path:
    """Write ``text`` to ``path`` atomically, mode 0600, making its folder if need be
    (``bedside.record.atomic``, the one atomic writer); RecordError names what failed."""
    return atomic_write_text(path, text, error=RecordError, make_folder=True)
