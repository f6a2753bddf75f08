"""Electrode placement: systems and names, measurement checks, marking distances, head model.

Public API::

    validate.parse_measurements(nasion_inion, preauricular, circumference, unit="cm")
        -> HeadMeasurements
    validate.parse_inferior_circumference(value, measurements, unit="cm") -> float (cm)
    calculator.plan_placement(measurements, system="10-20", names="modern",
                              *, inferior_circumference_cm=None) -> PlacementPlan
    neighbours_for(names, system="10-10") -> tuple[tuple[str, str], ...]
    positions_for(names, system="10-10") -> dict[str, (x, y, z) mm]
    project_2d(xyz_mm) -> (x, y) in [-1, 1]
    systems.canonical_name(label) -> str | None
    bids.write_electrodes_tsv(path, positions_mm, impedances_kohm=None)
    bids.write_coordsystem_json(path)
"""

from __future__ import annotations

from bedside.placement import systems
from bedside.placement.calculator import plan_placement
from bedside.placement.layout import neighbours_for, positions_for, project_2d
from bedside.placement.types import HeadMeasurements, Mark, PlacementPlan
from bedside.placement.validate import parse_measurements

__all__ = [
    "HeadMeasurements",
    "Mark",
    "PlacementPlan",
    "neighbours_for",
    "parse_measurements",
    "plan_placement",
    "positions_for",
    "project_2d",
    "systems",
]
