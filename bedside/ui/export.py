"""The marking sheet for the app (F5, F6), the Measure table's short line names, and its
atomic write."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

from bedside.errors import RecordError
from bedside.placement.sheet import marking_sheet
from bedside.placement.types import PlacementPlan
from bedside.record.atomic import atomic_write_text

if TYPE_CHECKING:
    from bedside.record.log import TapedMeasurements

SHORT_LINE = {
    "midline": "midline",
    "coronal": "ear to ear",
    "circumference-left": "around, left",
    "circumference-right": "around, right",
    "derived": "between marks",
}


def short_line(line: str) -> str:
    return SHORT_LINE.get(line, line.replace("-", " "))


def plan_as_text(plan: PlacementPlan, taped: TapedMeasurements | None = None) -> str:
    """The marking sheet (F5 saves it, F6 copies it): :func:`bedside.placement.sheet.marking_sheet`,
    the one ``bedside measure`` prints, in the unit the head was taped in (cm without one)."""
    if taped is None:
        return marking_sheet(plan)
    return marking_sheet(plan, taped.unit, (taped.nasion_inion, taped.preauricular, taped.circumference))


def write_text_atomic(path: Path, text: str) -> Path:
    """Write ``text`` to ``path`` atomically, mode 0600, making its folder if need be
    (``bedside.record.atomic``, the one atomic writer); RecordError names what failed."""
    return atomic_write_text(path, text, error=RecordError, make_folder=True)
