"""Marking distances for every site, in the order a technologist walks the head.

The distances on the three measured lines are the published proportions applied to
the tape measurements (Jasper 1958 for 10-20; each step halved for 10-10, the modified
combinatorial nomenclature — Chatrian 1985, AEEGS 1994, ACNS 2016): they do not
depend on the head model. The model (:mod:`bedside.placement.model`) gives 3-D
positions and the lengths of the arcs that are not measured (the rows through F3,
P3 …, and the inferior circumference of 10-10 when it was not taped).

Walking order: midline (from the nasion), coronal line (from the left preauricular
point), the circumference left then right (from Fpz), then — 10-10 only — the
inferior circumference, then the sites found between marks (F3, P3, … and the 10-10
rows), then the references.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from bedside.errors import InputError
from bedside.placement import systems
from bedside.placement.model import FloatArray, HeadModel, fit_head
from bedside.placement.neighbours import neighbour_pairs
from bedside.placement.types import HeadMeasurements, Mark, PlacementPlan
from bedside.placement.validate import parse_inferior_circumference, parse_measurements

#: Percent of each measured line where each site lies (modern names).
#: Jasper 1958 (10-20) and the 10-10 nomenclature (from memory: each 20 % step halved).
MIDLINE_10_20 = (("Fpz", 10), ("Fz", 30), ("Cz", 50), ("Pz", 70), ("Oz", 90))
MIDLINE_10_10 = (
    ("Nz", 0), ("Fpz", 10), ("AFz", 20), ("Fz", 30), ("FCz", 40), ("Cz", 50),
    ("CPz", 60), ("Pz", 70), ("POz", 80), ("Oz", 90), ("Iz", 100),
)  # fmt: skip
CORONAL_10_20 = (("T7", 10), ("C3", 30), ("Cz", 50), ("C4", 70), ("T8", 90))
CORONAL_10_10 = (
    ("T9", 0), ("T7", 10), ("C5", 20), ("C3", 30), ("C1", 40), ("Cz", 50),
    ("C2", 60), ("C4", 70), ("C6", 80), ("T8", 90), ("T10", 100),
)  # fmt: skip
#: Percent of the whole circumference, from Fpz round the left side.
CIRCUMFERENCE_10_20 = (("Fp1", 5), ("F7", 15), ("T7", 25), ("P7", 35), ("O1", 45), ("Oz", 50))
CIRCUMFERENCE_10_10 = (
    ("Fp1", 5), ("AF7", 10), ("F7", 15), ("FT7", 20), ("T7", 25), ("TP7", 30),
    ("P7", 35), ("PO7", 40), ("O1", 45), ("Oz", 50),
)  # fmt: skip
#: 10-10 inferior row: percent of the circumference through Nz, T9 (the preauricular
#: point), Iz — the same proportions one level down (from memory).
INFERIOR_10_10 = (("F9", 15), ("FT9", 20), ("T9", 25), ("TP9", 30), ("P9", 35))

#: Rows found between marks: (midline site, left circumference site, [(site, fraction
#: of the way from the midline site)]). 10-20: F3 and P3 midway (Jasper 1958).
ROWS_10_20 = (("Fz", "F7", (("F3", 0.5),)), ("Pz", "P7", (("P3", 0.5),)))
ROWS_10_10 = (
    ("AFz", "AF7", (("AF3", 0.5),)),
    ("Fz", "F7", (("F1", 0.25), ("F3", 0.5), ("F5", 0.75))),
    ("FCz", "FT7", (("FC1", 0.25), ("FC3", 0.5), ("FC5", 0.75))),
    ("CPz", "TP7", (("CP1", 0.25), ("CP3", 0.5), ("CP5", 0.75))),
    ("Pz", "P7", (("P1", 0.25), ("P3", 0.5), ("P5", 0.75))),
    ("POz", "PO7", (("PO3", 0.5),)),
)
#: The second published rule for F3 and P3 (Jasper 1958): midway between Fp1 and C3,
#: and between C3 and O1, on the Fp1–C3–O1 line.
SECOND_RULE = {"F3": ("Fp1", "C3"), "P3": ("C3", "O1")}

#: References: not measured; approximate places on the model (common practice:
#: earlobe just below and behind the preauricular point, mastoid further back).
#: (azimuth deg from the front towards the left, elevation deg, words).
REFERENCE_PLACES = {
    "A1": (95.0, -10.0, "left earlobe"),
    "M1": (112.0, -10.0, "left mastoid (the bone behind the ear)"),
}

_FRACTION_WORDS = {0.25: "a quarter of the way", 0.5: "midway", 0.75: "three quarters of the way"}
_LINE_TITLES = {
    "midline": "midline",
    "coronal": "coronal line",
    "circumference-left": "circumference, left",
    "circumference-right": "circumference, right",
    "inferior-left": "inferior circumference, left",
    "inferior-right": "inferior circumference, right",
    "derived": "between marks",
    "reference": "references",
}


def _tenth(cm: float) -> float:
    """Round to 0.1 cm, halves up (as one reads a tape), not to the nearest even."""
    return math.floor(cm * 10.0 + 0.5 + 1e-9) / 10.0


def _r1(value: object) -> float:
    """Round to 0.1 (mm) without a negative zero."""
    return round(float(value), 1) + 0.0  # type: ignore[arg-type]


def line_title(line: str) -> str:
    """Plain words for a line name used in Mark.line."""
    return _LINE_TITLES.get(line, line)


@dataclass
class _Builder:
    model: HeadModel
    names: str
    marks: list[Mark]
    positions: dict[str, FloatArray]

    def label(self, modern: str) -> str:
        return systems.display_name(modern, self.names)

    def add(
        self,
        modern: str,
        line: str,
        start: str,
        distance_cm: float,
        prev_cm: float,
        percent: float,
        xyz: FloatArray,
        **extra: object,
    ) -> float:
        d = _tenth(distance_cm)
        self.positions.setdefault(modern, xyz)
        pos = self.positions[modern]
        self.marks.append(
            Mark(
                name=self.label(modern),
                other_name=systems.other_name(modern, self.names),
                line=line,
                start=self.label(start),
                distance_cm=d,
                step_cm=round(d - prev_cm, 1),
                percent=round(float(percent), 1),
                xyz_mm=(_r1(pos[0]), _r1(pos[1]), _r1(pos[2])),
                **extra,  # type: ignore[arg-type]
            )
        )
        return d


def plan_placement(
    measurements: HeadMeasurements,
    system: str = "10-20",
    names: str = "modern",
    *,
    inferior_circumference_cm: float | None = None,
) -> PlacementPlan:
    """Every mark for ``system`` ("10-20" or "10-10") in the naming ``names``.

    measurements: checked tape measurements (see ``validate.parse_measurements``).
    inferior_circumference_cm: optional fourth tape, round the head through the nasion,
    both preauricular points and the inion (see ``validate.parse_inferior_circumference``).
    10-10 only: the inferior row's distances (F9 … P10) are then its percentages of this
    tape, as on the other measured lines; without it they are percentages of the model's
    estimate, which on a real head can be 2–3 cm long (MNE-Python's Colin27 template:
    63.3 cm on the model against about 60.6 cm on the head). The positions stay on the
    model (three arcs fix its three half-axes; a fourth would no longer let it
    reproduce all three tapes exactly). Ignored by 10-20, which has no inferior row.
    Returns a PlacementPlan: marks in walking order, positions_mm (x right, y front,
    z up; mm) per site, neighbour pairs, and the fitted HeadModel.
    Raises InputError for an unknown system or naming, MeasurementError when the
    measurements fit no head.
    """
    if system not in systems.SYSTEMS:
        raise InputError(f"system {system!r} is not known; accepted: {', '.join(systems.SYSTEMS)}")
    if names not in systems.NAMINGS:
        raise InputError(f"names {names!r} is not known; accepted: {', '.join(systems.NAMINGS)}")
    if not isinstance(measurements, HeadMeasurements):
        raise InputError(
            f"measurements must be HeadMeasurements (see parse_measurements), "
            f"got {type(measurements).__name__}"
        )
    # Built by hand rather than by parse_measurements? Check them the same way.
    m = parse_measurements(
        measurements.nasion_inion_cm, measurements.preauricular_cm, measurements.circumference_cm
    )
    inferior = (
        None
        if inferior_circumference_cm is None
        else parse_inferior_circumference(inferior_circumference_cm, m)
    )
    model = fit_head(m.nasion_inion_cm, m.preauricular_cm, m.circumference_cm)
    ten = system == "10-10"
    b = _Builder(model=model, names=names, marks=[], positions={})

    prev = 0.0
    for site, pct in MIDLINE_10_10 if ten else MIDLINE_10_20:
        prev = b.add(
            site,
            "midline",
            "Nz",
            pct / 100 * m.nasion_inion_cm,
            prev,
            pct,
            model.on_midline(pct / 100),
        )
    prev = 0.0
    for site, pct in CORONAL_10_10 if ten else CORONAL_10_20:
        prev = b.add(
            site,
            "coronal",
            "LPA",
            pct / 100 * m.preauricular_cm,
            prev,
            pct,
            model.on_coronal(pct / 100),
        )
    for side in ("left", "right"):
        prev = 0.0
        for site, pct in CIRCUMFERENCE_10_10 if ten else CIRCUMFERENCE_10_20:
            s = site if side == "left" else systems.mirror(site)
            prev = b.add(
                s,
                f"circumference-{side}",
                "Fpz",
                pct / 100 * m.circumference_cm,
                prev,
                pct,
                model.on_contour(pct / 100, side),
            )
    if ten:
        model_cm = model.circumference_mm(level=0.0) / 10.0
        lower_cm = model_cm if inferior is None else inferior
        where = (
            f"the model puts it at {model_cm:.1f} cm; tape it for exact distances"
            if inferior is None
            else f"your tape: {inferior:.1f} cm"
        )
        for side in ("left", "right"):
            prev = 0.0
            for site, pct in INFERIOR_10_10:
                s = site if side == "left" else systems.mirror(site)
                how = (
                    f"on a tape round the head through Nz, the preauricular points and Iz "
                    f"({where}): {pct} % of it from Nz"
                )
                prev = b.add(
                    s,
                    f"inferior-{side}",
                    "Nz",
                    pct / 100 * lower_cm,
                    prev,
                    pct,
                    model.on_contour(pct / 100, side, level=0.0),
                    how=how,
                    arc_cm=round(lower_cm, 1),
                )
    _add_rows(b, ROWS_10_10 if ten else ROWS_10_20)
    for modern in systems.REFERENCES:
        left = modern if modern in REFERENCE_PLACES else systems.mirror(modern)
        az, el, words = REFERENCE_PLACES[left]
        xyz = model.at(az, el)
        if left != modern:
            xyz[0] = -xyz[0]
            words = words.replace("left", "right")
        b.add(
            modern,
            "reference",
            "LPA" if left == modern else "RPA",
            0.0,
            0.0,
            0.0,
            xyz,
            how=f"{words}; not measured, position approximate",
        )
    positions = {
        systems.display_name(k, names): (
            _r1(v[0]),
            _r1(v[1]),
            _r1(v[2]),
        )
        for k, v in b.positions.items()
    }
    return PlacementPlan(
        measurements=m,
        system=system,
        names=names,
        marks=tuple(b.marks),
        neighbours=neighbour_pairs(positions, m.circumference_cm * 10.0),
        positions_mm=positions,
        model=model,
        inferior_circumference_cm=inferior,
    )


def _add_rows(
    b: _Builder, rows: tuple[tuple[str, str, tuple[tuple[str, float], ...]], ...]
) -> None:
    model = b.model
    second = _second_rule_points(b)
    for mid, left_end, subdivisions in rows:
        right_end = systems.mirror(left_end)
        p_left, p_mid, p_right = (b.positions[k] for k in (left_end, mid, right_end))
        arc = model.plane_arc(p_left, p_mid, p_right)
        leg_mm = arc.first_leg_mm  # left end -> midline site
        for side, end in (("left", left_end), ("right", right_end)):
            prev = 0.0
            for site, frac in subdivisions:
                s = site if side == "left" else systems.mirror(site)
                xyz = arc.point_at_mm(leg_mm * (1.0 - frac))
                if side == "right":
                    xyz = np.array([-xyz[0], xyz[1], xyz[2]])
                words = _FRACTION_WORDS.get(frac, f"{frac:.0%} of the way")
                how = (
                    f"{words} from {b.label(mid)} to {b.label(end)} along the "
                    f"{b.label(left_end)}–{b.label(mid)}–{b.label(right_end)} arc "
                    f"({b.label(mid)}–{b.label(end)} ≈ {leg_mm / 10:.1f} cm)"
                )
                extra: dict[str, object] = {"how": how, "arc_cm": round(leg_mm / 10.0, 1)}
                left_name = s if side == "left" else site
                if left_name in second:
                    other, other_leg_mm = second[left_name]
                    if side == "right":
                        other = np.array([-other[0], other[1], other[2]])
                    gap_cm = float(np.linalg.norm(other - xyz)) / 10.0
                    p1, p2 = (
                        b.label(k if side == "left" else systems.mirror(k))
                        for k in SECOND_RULE[left_name]
                    )
                    extra["rule"] = (
                        f"midway {b.label(mid)}–{b.label(end)} on the "
                        f"{b.label(left_end)}–{b.label(mid)}–{b.label(right_end)} arc"
                    )
                    extra["rule_gap_cm"] = round(gap_cm, 1)
                    extra["how"] = how + (
                        f"; check: midway between {p1} and {p2} (tape {p1} to {p2} ≈ "
                        f"{other_leg_mm / 10:.1f} cm) lands {gap_cm:.1f} cm from it on this head — "
                        f"mark both and take the crossing"
                    )
                prev = b.add(
                    s, "derived", mid, leg_mm * frac / 10.0, prev, frac * 100.0, xyz, **extra
                )


def _second_rule_points(b: _Builder) -> dict[str, tuple[FloatArray, float]]:
    """F3 and P3 by the other published rule (left side): midway between Fp1 and C3,
    and between C3 and O1, along the tape between the two (the section through them
    and the centre: a great circle on a sphere). Returns point and tape length (mm)."""
    out: dict[str, tuple[FloatArray, float]] = {}
    p = b.positions
    for site, (k1, k2) in SECOND_RULE.items():
        if k1 in p and k2 in p:
            arc = b.model.plane_arc(p[k1], p[k2])
            out[site] = (arc.point_at_mm(0.5 * arc.length_mm), arc.length_mm)
    return out
