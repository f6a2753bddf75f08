"""Positions, neighbours and the 2-D head map on an average adult head.

For callers that have channel labels but no tape measurements (the bridging check,
the UI head map). The average adult head is the model fitted to nasion–inion 36 cm,
preauricular 35 cm, circumference 56 cm: the circumference near the mean of adult men
and women (57.2 and 55.2 cm, Bushby et al. 1992); the arcs are typical adult values
(from memory; no published norm found).
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from functools import lru_cache

from bedside.placement import systems
from bedside.placement.calculator import plan_placement
from bedside.placement.model import HeadModel
from bedside.placement.neighbours import neighbour_pairs
from bedside.placement.types import HeadMeasurements, PlacementPlan

AVERAGE_ADULT = HeadMeasurements(nasion_inion_cm=36.0, preauricular_cm=35.0, circumference_cm=56.0)

#: Angle from the vertex that maps to the rim of the 2-D map: 120° holds the
#: references just below the nasion–preauricular–inion level (which sits at 90°).
MAP_RIM_DEG = 120.0


@lru_cache(maxsize=2)
def _average_plan(system: str) -> PlacementPlan:
    return plan_placement(AVERAGE_ADULT, system=system, names="modern")


def _resolve(names: Iterable[str], system: str) -> list[tuple[str, str]]:
    """(label as given, modern name) for the labels that are sites of ``system``.

    Two labels for one site ("T3" and "T7") both stay: each gets the same position."""
    if system not in systems.SYSTEMS:
        raise ValueError(f"system must be one of {', '.join(systems.SYSTEMS)}, got {system!r}")
    allowed = set(systems.sites(system))
    out: list[tuple[str, str]] = []
    seen: set[str] = set()
    for label in names:
        modern = systems.canonical_name(label)
        if modern is None or modern not in allowed or label in seen:
            continue
        seen.add(label)
        out.append((label, modern))
    return out


def positions_for(
    names: Iterable[str], system: str = "10-10"
) -> dict[str, tuple[float, float, float]]:
    """Positions (mm; x right, y front, z up) of the labels that are known sites.

    Keys are the labels as given (so a caller can look up its own channel names);
    labels that are not 10-20/10-10 sites or references are left out. Classic and
    modern names and any letter case are accepted ("t3" -> the position of T7).
    """
    pos = _average_plan(system).positions_mm
    return {label: pos[modern] for label, modern in _resolve(names, system)}


def neighbours_for(names: Sequence[str], system: str = "10-10") -> tuple[tuple[str, str], ...]:
    """Adjacent pairs among ``names`` on an average adult head (labels as given).

    Adjacency depends on which sites are present: in a 19-channel 10-20 montage F3's
    neighbours include F7 and C3, in a 10-10 montage F5 and FC3 come between. Labels
    that are not sites of ``system`` are left out (see :mod:`.neighbours` for the rule).
    """
    pos = positions_for(names, system)
    return neighbour_pairs(pos, AVERAGE_ADULT.circumference_cm * 10.0)


def project_2d(
    xyz_mm: Sequence[float], axes_mm: Sequence[float] | None = None
) -> tuple[float, float]:
    """Map a position to the 2-D head map: azimuthal equidistant from the vertex.

    Returns (x, y) in [-1, 1]: +y towards the nose (up on the map), +x to the right;
    the radius grows with the angle from the vertex, reaching 1 at ``MAP_RIM_DEG``
    (the nasion–preauricular–inion level lies at 0.75). Positions are first scaled by
    the head's half-axes (``axes_mm``; default the average adult head) so that the
    ellipsoid becomes a sphere and equal angles mean equal proportions of the arcs.
    """
    if len(xyz_mm) != 3:
        raise ValueError(f"xyz_mm must have 3 numbers, got {len(xyz_mm)}")
    if axes_mm is None:
        model = _average_plan("10-20").model
        assert isinstance(model, HeadModel)
        axes_mm = model.axes_mm
    u = [float(v) / float(ax) for v, ax in zip(xyz_mm, axes_mm, strict=True)]
    horizontal = math.hypot(u[0], u[1])
    if not all(math.isfinite(v) for v in u) or (horizontal == 0.0 and u[2] == 0.0):
        return (0.0, 0.0)
    polar = math.degrees(math.atan2(horizontal, u[2]))  # 0 at the vertex
    r = min(polar / MAP_RIM_DEG, 1.0)
    if horizontal == 0.0:
        return (0.0, 0.0)
    return (r * u[0] / horizontal, r * u[1] / horizontal)
