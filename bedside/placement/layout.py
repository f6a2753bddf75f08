"""Positions, neighbours and the 2-D head map on an average adult head.

For callers that have channel labels but no tape measurements (the bridging check,
the UI head map). The average adult head is the model fitted to nasion–inion 36 cm,
preauricular 35 cm, circumference 56 cm: the circumference near the mean of adult men
and women (57.2 and 55.2 cm, Bushby et al. 1992); the arcs are typical adult values
(from memory; no published norm found).
"""

from __future__ import annotations

import csv
import json
import math
from collections.abc import Iterable, Mapping, Sequence
from functools import lru_cache
from pathlib import Path

import numpy as np

from bedside.errors import InputError
from bedside.placement import systems
from bedside.placement.calculator import plan_placement
from bedside.placement.model import HeadModel
from bedside.placement.neighbours import neighbour_pairs
from bedside.placement.types import HeadMeasurements, PlacementPlan

AVERAGE_ADULT = HeadMeasurements(nasion_inion_cm=36.0, preauricular_cm=35.0, circumference_cm=56.0)

#: Angle from the vertex that maps to the rim of the 2-D map: 120° holds the
#: references just below the nasion–preauricular–inion level (which sits at 90°).
MAP_RIM_DEG = 120.0
#: Where the nasion–preauricular–inion level (90° from the vertex) falls on the map:
#: the radius a drawing gives its head outline.
EQUATOR_ON_MAP = 90.0 / MAP_RIM_DEG


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


#: 10-10 names that the head model has no row for, placed midway between the two sites
#: they halve (the 10-10 rule: each step of the coarser grid halved; Chatrian 1985,
#: ACNS Guideline 2, from memory). AF9/AF10, PO9/PO10, O9/O10, I1/I2 are not placed:
#: callers report them unplaced.
MIDWAY_SITES: dict[str, tuple[str, str]] = {
    "AF1": ("AF3", "AFz"), "AF2": ("AFz", "AF4"), "AF5": ("AF7", "AF3"), "AF6": ("AF4", "AF8"),
    "PO1": ("PO3", "POz"), "PO2": ("POz", "PO4"), "PO5": ("PO7", "PO3"), "PO6": ("PO4", "PO8"),
}
_MIDWAY_BY_UPPER = {k.upper(): k for k in MIDWAY_SITES}


def _midway(a: tuple[float, float, float], b: tuple[float, float, float]) -> tuple[float, float, float]:
    """The point halfway along the great circle from a to b, at their mean distance
    from the centre."""
    ra, rb = math.dist(a, (0, 0, 0)), math.dist(b, (0, 0, 0))
    m = [(x / ra + y / rb) / 2.0 for x, y in zip(a, b, strict=True)]
    rm = math.dist(m, (0, 0, 0)) or 1.0
    r = (ra + rb) / 2.0
    return (m[0] / rm * r, m[1] / rm * r, m[2] / rm * r)


def positions_for(
    names: Iterable[str], system: str = "10-10"
) -> dict[str, tuple[float, float, float]]:
    """Positions (mm; x right, y front, z up) of the labels that are known sites.

    Keys are the labels as given (so a caller can look up its own channel names);
    labels that are not 10-20/10-10 sites or references are left out. Classic and
    modern names and any letter case are accepted ("t3" -> the position of T7).
    """
    names = list(names)
    pos = _average_plan(system).positions_mm
    out = {label: pos[modern] for label, modern in _resolve(names, system)}
    if system == "10-10":
        for label in names:
            site = _MIDWAY_BY_UPPER.get(label.strip().upper()) if isinstance(label, str) else None
            if site is not None and label not in out:
                a, b = MIDWAY_SITES[site]
                out[label] = _midway(pos[a], pos[b])
    return out


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

    The one head projection: the app's head map (Measure and Watch) and the HTML
    report's map both place every named site with it.

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


#: A sphere fitted to a cap's positions is trusted for the head map when its radius is
#: a head's (adult about 90 mm; our bounds, generous for neonates and large heads).
_FIT_RADIUS_MM = (40.0, 200.0)


def fit_sphere(points_mm: Sequence[Sequence[float]]) -> tuple[tuple[float, float, float], float] | None:
    """Centre and radius (mm) of the sphere nearest the points (linear least squares:
    |p|² = 2 c·p + (r² − |c|²)), or None with fewer than 4 points, points on one plane,
    or a radius no head has (see ``_FIT_RADIUS_MM``)."""

    p = np.asarray(points_mm, dtype=float).reshape(-1, 3)
    p = p[np.all(np.isfinite(p), axis=1)]
    if len(p) < 4:
        return None
    a = np.column_stack([2.0 * p, np.ones(len(p))])
    b = np.sum(p * p, axis=1)
    sol, _, rank, _ = np.linalg.lstsq(a, b, rcond=None)
    if rank < 4:
        return None
    centre = sol[:3]
    r2 = float(sol[3] + centre @ centre)
    if not r2 > 0.0:
        return None
    radius = math.sqrt(r2)
    if not _FIT_RADIUS_MM[0] <= radius <= _FIT_RADIUS_MM[1]:
        return None
    return (float(centre[0]), float(centre[1]), float(centre[2])), radius


def project_geometry(positions_mm: Mapping[str, Sequence[float]]) -> dict[str, tuple[float, float]]:
    """A cap's own positions (a stream's locations or a layout file; mm, x right, y
    front, z up) on the 2-D head map, as :func:`project_2d` maps the named sites:
    azimuthal equidistant from the vertex of the sphere fitted to the positions (the
    frame's origin is wherever the digitiser put it: between the ears in a head frame).
    With too few points for a fit, the frame's own origin is the centre. Positions
    that are not three finite numbers are left out."""
    clean = {
        name: (float(p[0]), float(p[1]), float(p[2]))
        for name, p in positions_mm.items()
        if len(p) == 3 and all(math.isfinite(float(v)) for v in p)
    }
    fit = fit_sphere(list(clean.values()))
    centre, radius = fit if fit is not None else ((0.0, 0.0, 0.0), 1.0)
    axes = (radius, radius, radius)
    return {
        name: project_2d(tuple(v - c for v, c in zip(p, centre, strict=True)), axes)
        for name, p in clean.items()
    }


def read_electrodes_tsv(path: str) -> dict[str, tuple[float, float, float]]:
    """Positions (mm) from a BIDS ``electrodes.tsv`` (columns name, x, y, z; BIDS-EEG).

    Units come from the ``*_coordsystem.json`` beside it (``EEGCoordinateUnits``: m, cm
    or mm); without one, from the size of the head (a median distance from the
    centre below 1 is metres, below 30 centimetres, else millimetres). Rows whose
    x/y/z are "n/a" are left out. Problems are InputErrors naming the file."""

    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError, ValueError) as exc:
        raise InputError(f"--layout {path}: cannot read it ({exc}); a BIDS electrodes.tsv is needed") from exc
    rows = list(csv.reader(text.splitlines(), delimiter="\t"))
    if not rows or [h.strip().lower() for h in rows[0][:4]] != ["name", "x", "y", "z"]:
        raise InputError(f"--layout {path}: the first columns must be name, x, y, z (BIDS electrodes.tsv)")
    raw: dict[str, tuple[float, float, float]] = {}
    for n, row in enumerate(rows[1:], start=2):
        if not row or not row[0].strip():
            continue
        if len(row) < 4:
            raise InputError(f"--layout {path}, line {n}: needs name, x, y and z")
        if any(v.strip().lower() == "n/a" for v in row[1:4]):
            continue
        try:
            xyz = tuple(float(v) for v in row[1:4])
        except ValueError:
            raise InputError(f"--layout {path}, line {n}: x, y, z must be numbers or n/a") from None
        if not all(math.isfinite(v) for v in xyz):
            raise InputError(f"--layout {path}, line {n}: x, y, z must be finite numbers")
        raw[row[0].strip()] = (xyz[0], xyz[1], xyz[2])
    if not raw:
        raise InputError(f"--layout {path}: no electrode with a position")
    factor = None
    for cs in sorted(p.parent.glob("*coordsystem.json")):
        try:
            unit = json.loads(cs.read_text(encoding="utf-8")).get("EEGCoordinateUnits")
        except (OSError, ValueError, AttributeError):
            continue
        factor = {"m": 1000.0, "cm": 10.0, "mm": 1.0}.get(str(unit))
        if factor is not None:
            break
    if factor is None:
        factor = _guess_mm_factor(list(raw.values()))
    return {k: (v[0] * factor, v[1] * factor, v[2] * factor) for k, v in raw.items()}


def _guess_mm_factor(points: Sequence[tuple[float, float, float]]) -> float:
    """mm per unit from the size of a head (radius about 0.09 m)."""

    p = np.asarray(points, dtype=float)
    r = float(np.median(np.linalg.norm(p - p.mean(axis=0), axis=1))) if len(p) > 1 else 0.0
    return 1000.0 if r < 1.0 else (10.0 if r < 30.0 else 1.0)


def geometry_neighbours(
    names: Sequence[str],
    positions_mm: Mapping[str, tuple[float, float, float]],
    site_of: Mapping[str, str] | None = None,
) -> tuple[tuple[tuple[str, str], ...] | None, str]:
    """Bridging neighbours for the scalp channels ``names`` and a note on where they came from.

    positions_mm: positions from the stream or a layout file (mm), for some or all
    names. With at least three placed channels the pairs come from that geometry (its
    own head size); otherwise from the 10-10 names on the average adult head; with
    neither, ``(None, note)``: the caller compares all pairs, and the note says so.
    site_of: a name → the 10-10 site whose position it takes (local names such as
    the neonatal Fp3 → AF3, configs/labels.yaml)."""
    placed = {n: positions_mm[n] for n in names if n in positions_mm}
    if len(placed) >= 3:

        p = np.asarray(list(placed.values()), dtype=float)
        radius = float(np.median(np.linalg.norm(p - p.mean(axis=0), axis=1)))
        pairs = neighbour_pairs(placed, 2.0 * math.pi * radius)
        unplaced = [n for n in names if n not in placed]
        note = f"bridging neighbours from the electrode positions ({len(pairs)} pairs)"
        if unplaced:
            note += f"; no position for {', '.join(unplaced[:8])}{' …' if len(unplaced) > 8 else ''}"
        return pairs, note
    lookup = {n: (site_of or {}).get(n, n) for n in names}
    by_site = positions_for(set(lookup.values()))
    known = {n: by_site[s] for n, s in lookup.items() if s in by_site}
    if len(known) >= 2:
        pairs = neighbour_pairs(known, AVERAGE_ADULT.circumference_cm * 10.0)
        unplaced = [n for n in names if n not in known]
        note = f"bridging neighbours from the 10-10 names on an average adult head ({len(pairs)} pairs)"
        if unplaced:
            note += f"; unplaced (not 10-10 sites): {', '.join(unplaced[:8])}{' …' if len(unplaced) > 8 else ''}"
        return pairs, note
    return None, ("no electrode positions and no 10-20/10-10 names: bridging compares all pairs "
                  "(give positions with --layout FILE)")
