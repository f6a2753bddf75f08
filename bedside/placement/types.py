"""Data types of the placement package (frozen; units in the names)."""

from __future__ import annotations

from dataclasses import dataclass, field


@dataclass(frozen=True)
class HeadMeasurements:
    """The three tape measurements, in centimetres.

    nasion_inion_cm: nasion to inion over the vertex.
    preauricular_cm: left to right preauricular point over the vertex.
    circumference_cm: the 10 % level, through Fpz, T3/T7, Oz, T4/T8.
    """

    nasion_inion_cm: float
    preauricular_cm: float
    circumference_cm: float


@dataclass(frozen=True)
class Mark:
    """One site as the technologist marks it along one measuring line.

    name: the site's name in the naming asked for (e.g. "T7"); other_name: its
    name in the other naming where the two differ ("T3"), else "".
    line: the measuring line ("midline", "coronal", "circumference-left", …, or
    "derived" for sites found as a crossing/midpoint); start: the landmark or mark
    the distance is measured from; distance_cm: along the line from start (to 0.1 cm);
    step_cm: from the previous mark on that line; percent: of the line's length;
    xyz_mm: position on the fitted head model (x right, y front, z up; origin at the
    centre of the preauricular line — the RAS convention used by BIDS 'CapTrak'-like
    frames). how: for derived sites, plain words on how to find them.
    arc_cm: for derived sites, the model's estimate of the length of the arc the site
    subdivides (e.g. Fz to F7 along F7–Fz–F8).
    rule: for F3/F4/P3/P4, the published rule used for the position; rule_gap_cm: how
    far the other published rule's point lies from it on this head (cm).
    """

    name: str
    other_name: str
    line: str
    start: str
    distance_cm: float
    step_cm: float
    percent: float
    xyz_mm: tuple[float, float, float]
    how: str = ""
    arc_cm: float | None = None
    rule: str = ""
    rule_gap_cm: float | None = None

    @property
    def measured(self) -> bool:
        """False for the reference sites (A1/A2/M1/M2): placed by landmark, not on a
        measured line, so they have no distance, step or percent to show."""
        return self.line != "reference"

    def distance_cells(self) -> tuple[str, str, str]:
        """(distance cm, step cm, percent) as shown on every sheet; "not measured" for
        the reference sites, never a 0.0 that reads as a distance."""
        if not self.measured:
            return ("not measured", "", "")
        return (f"{self.distance_cm:.1f}", f"{self.step_cm:.1f}", f"{self.percent:g}")


@dataclass(frozen=True)
class PlacementPlan:
    """Every mark, the adjacency of sites, and the head model that placed them.

    marks: in the order a technologist walks the head (a site on two lines may
    appear once per line). neighbours: adjacent site pairs (names as in marks,
    each pair sorted, no duplicates). positions_mm: one position per site name.
    inferior_circumference_cm: the taped inferior circumference (10-10's inferior
    row), or None when it was not measured (the row then uses the model's estimate).
    """

    measurements: HeadMeasurements
    system: str
    names: str
    marks: tuple[Mark, ...]
    neighbours: tuple[tuple[str, str], ...]
    positions_mm: dict[str, tuple[float, float, float]] = field(default_factory=dict)
    model: object | None = None
    inferior_circumference_cm: float | None = None
