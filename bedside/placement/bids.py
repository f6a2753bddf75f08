"""BIDS-EEG electrode files: ``electrodes.tsv`` and ``coordsystem.json``.

BIDS specification 1.11 (EEG): electrodes.tsv needs ``name``, ``x``, ``y``, ``z``;
``type``, ``material`` and ``impedance`` (kOhm) are recommended; missing values are
``n/a``. With electrodes.tsv a coordsystem.json is required, holding
``EEGCoordinateSystem`` (here ``Other``, with ``EEGCoordinateSystemDescription``) and
``EEGCoordinateUnits`` (here ``mm``).

Both files are written atomically (``bedside.record.atomic``: temporary file in the
same folder, fsync, rename, owner-only), so a crash leaves the old file or the new one,
never half of one. The record package
uses these writers too.
"""

from __future__ import annotations

import json
import math
import os
from collections.abc import Mapping
from pathlib import Path

from bedside.errors import RecordError
from bedside.record.atomic import atomic_write_text

#: The frame the head model uses, in words for coordsystem.json.
COORDINATE_DESCRIPTION = (
    "Positions estimated by bedside from three tape measurements (nasion-inion arc, "
    "preauricular arc, 10-20 circumference) on an ellipsoid head model, not digitised. "
    "Origin midway between the left and right preauricular points; +x towards the right "
    "preauricular point, +y towards the nasion, +z up (RAS); millimetres."
)


def _atomic_write_text(path: Path, text: str) -> None:
    atomic_write_text(path, text, error=RecordError)


def _cell(value: object) -> str:
    if value is None:
        return "n/a"
    if isinstance(value, float):
        return "n/a" if not math.isfinite(value) else f"{value:.1f}"
    text = str(value)
    if any(ch in text for ch in "\t\r\n"):
        raise RecordError(f"a value for electrodes.tsv holds a tab or line break: {text!r}")
    return text or "n/a"


def write_electrodes_tsv(
    path: str | os.PathLike[str],
    positions_mm: Mapping[str, tuple[float, float, float]],
    impedances_kohm: Mapping[str, float | None] | None = None,
    electrode_type: str | Mapping[str, str] = "n/a",
) -> Path:
    """Write a BIDS electrodes.tsv: name, x, y, z (mm), type [, impedance (kOhm)].

    positions_mm: electrode name -> (x, y, z) in mm, in the order to write.
    impedances_kohm: optional name -> impedance in kOhm (missing or None -> n/a).
    electrode_type: one BIDS electrode type for all ("cup", "ring", …) or a mapping per
    name; "n/a" when not known. Returns the path written. Raises RecordError.
    """
    path = Path(path)
    header = ["name", "x", "y", "z", "type"]
    if impedances_kohm is not None:
        header.append("impedance")
    lines = ["\t".join(header)]
    for name, xyz in positions_mm.items():
        if len(xyz) != 3:
            raise RecordError(f"position of {name!r} must have 3 numbers, got {len(xyz)}")
        kind = electrode_type if isinstance(electrode_type, str) else electrode_type.get(name)
        row = [_cell(name), *(_cell(float(v)) for v in xyz), _cell(kind)]
        if impedances_kohm is not None:
            imp = impedances_kohm.get(name)
            row.append(_cell(None if imp is None else float(imp)))
        lines.append("\t".join(row))
    _atomic_write_text(path, "\n".join(lines) + "\n")
    return path


def write_coordsystem_json(
    path: str | os.PathLike[str],
    landmarks_mm: Mapping[str, tuple[float, float, float]] | None = None,
) -> Path:
    """Write a BIDS coordsystem.json for positions from the head model (mm, "Other").

    landmarks_mm: optional NAS/LPA/RPA positions (mm, same frame) written as
    AnatomicalLandmarkCoordinates. Returns the path written. Raises RecordError.
    """
    path = Path(path)
    doc: dict[str, object] = {
        "EEGCoordinateSystem": "Other",
        "EEGCoordinateUnits": "mm",
        "EEGCoordinateSystemDescription": COORDINATE_DESCRIPTION,
    }
    if landmarks_mm:
        doc["AnatomicalLandmarkCoordinates"] = {
            k: [round(float(v), 1) for v in xyz] for k, xyz in landmarks_mm.items()
        }
        doc["AnatomicalLandmarkCoordinateSystem"] = "Other"
        doc["AnatomicalLandmarkCoordinateUnits"] = "mm"
        # BIDS requires a description when the landmark system is "Other"
        # (bidsschematools rule EEGCoordsystemLandmarkDescriptionReq): the same frame.
        doc["AnatomicalLandmarkCoordinateSystemDescription"] = COORDINATE_DESCRIPTION
    _atomic_write_text(path, json.dumps(doc, indent=2, ensure_ascii=False) + "\n")
    return path
