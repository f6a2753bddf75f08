"""The marking sheet for the app (F5, F6), the Measure table's short line names, and an
atomic file write."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path
from typing import TYPE_CHECKING

from bedside.errors import RecordError
from bedside.placement.sheet import marking_sheet
from bedside.placement.types import PlacementPlan

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
    """Write ``text`` to ``path`` atomically (temp file, fsync, rename), mode 0600."""
    path = Path(path)
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".tmp")
        try:
            with os.fdopen(fd, "w", encoding="utf-8") as fh:
                fh.write(text)
                fh.flush()
                os.fsync(fh.fileno())
            os.chmod(tmp, 0o600)
            os.replace(tmp, path)
        finally:
            if os.path.exists(tmp):
                os.unlink(tmp)
    except OSError as exc:
        raise RecordError(f"could not write {path}: {exc.strerror or exc}") from exc
    return path
