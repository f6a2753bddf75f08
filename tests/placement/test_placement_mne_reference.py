"""Positions against MNE-Python's template montages (a test-only outside reference).

* ``spherical_1005``: an idealised spherical head with sites placed by the 10-5 rules
  (Oostenveld & Praamstra 2001). On a sphere our model is exact, so every 10-20/10-10
  site must agree to a fraction of a millimetre.
* ``colin27_1005``: a real MRI head (the Colin27 scalp) with the 10-5 rules applied to
  its surface. We measure that head's own three arcs along its own sites, feed them to
  the calculator and compare. An ellipsoid cannot follow a real scalp exactly, so the
  tolerance is wide and stated with its reasons in the test.
"""

from __future__ import annotations

import math
import re

import mne
import numpy as np
import pytest

from bedside.placement import HeadMeasurements, plan_placement

MIDLINE = [
    "Nz",
    "Fpz",
    "AFpz",
    "AFz",
    "AFFz",
    "Fz",
    "FFCz",
    "FCz",
    "FCCz",
    "Cz",
    "CCPz",
    "CPz",
    "CPPz",
    "Pz",
    "PPOz",
    "POz",
    "POOz",
    "Oz",
    "OIz",
    "Iz",
]
CORONAL = [
    "T9",
    "T9h",
    "T7",
    "T7h",
    "C5",
    "C5h",
    "C3",
    "C3h",
    "C1",
    "C1h",
    "Cz",
    "C2h",
    "C2",
    "C4h",
    "C4",
    "C6h",
    "C6",
    "T8h",
    "T8",
    "T10h",
    "T10",
]
LEFT = "Fpz Fp1h Fp1 AFp7 AF7 AFF7 F7 FFT7 FT7 FTT7 T7 TTP7 TP7 TPP7 P7 PPO7 PO7 POO7 O1 O1h Oz"
LEFT_CHAIN = LEFT.split()


def _mirror(name: str) -> str:
    m = re.fullmatch(r"([A-Za-z]+?)(\d+)(h?)", name)
    if m is None:
        return name
    head, num, half = m.group(1), int(m.group(2)), m.group(3)
    return f"{head}{num + 1 if num % 2 else num - 1}{half}"


def _template(name: str) -> dict[str, np.ndarray]:
    pos = mne.channels.make_standard_montage(name).get_positions()
    out = {k: np.asarray(v, dtype=float) * 1000.0 for k, v in pos["ch_pos"].items()}
    out.setdefault("Nz", np.asarray(pos["nasion"], dtype=float) * 1000.0)
    return out


def _chain_mm(p: dict[str, np.ndarray], names: list[str]) -> float:
    pts = np.array([p[n] for n in names])
    return float(np.linalg.norm(np.diff(pts, axis=0), axis=1).sum())


def _arcs_cm(p: dict[str, np.ndarray]) -> HeadMeasurements:
    """The template's own arcs, as chord sums along its 5 % sites (each chord is within
    about 0.2 % of its arc at that spacing)."""
    circumference = _chain_mm(p, LEFT_CHAIN) + _chain_mm(p, [_mirror(n) for n in LEFT_CHAIN])
    return HeadMeasurements(
        nasion_inion_cm=_chain_mm(p, MIDLINE) / 10.0,
        preauricular_cm=_chain_mm(p, CORONAL) / 10.0,
        circumference_cm=circumference / 10.0,
    )


def _head_frame(p: dict[str, np.ndarray]) -> dict[str, np.ndarray]:
    """Into our frame: origin midway T9–T10 (the preauricular level), +x to T10, +y
    towards the nasion, +z up."""
    origin = 0.5 * (p["T9"] + p["T10"])
    x = p["T10"] - p["T9"]
    x /= np.linalg.norm(x)
    y = p["Nz"] - origin
    y -= x * (y @ x)
    y /= np.linalg.norm(y)
    rot = np.stack([x, y, np.cross(x, y)])
    return {k: rot @ (v - origin) for k, v in p.items()}


def _rigid_residuals(ours: np.ndarray, theirs: np.ndarray) -> np.ndarray:
    """Per-site distances after the best rotation + translation (Kabsch), no scaling."""
    ca, cb = ours.mean(axis=0), theirs.mean(axis=0)
    u, _, vt = np.linalg.svd((ours - ca).T @ (theirs - cb))
    d = np.diag([1.0, 1.0, np.sign(np.linalg.det(vt.T @ u.T))])
    rot = vt.T @ d @ u.T
    moved = (rot @ (ours - ca).T).T + cb
    return np.linalg.norm(moved - theirs, axis=1)


def test_spherical_template_reproduced_exactly() -> None:
    """MNE spherical_1005 (10-5 rules on a sphere): every shared site within 0.5 mm.

    The sphere's arcs are known in closed form (hand arithmetic): nasion–inion and
    preauricular = pi r, the 10 % circumference = 2 pi r cos 18°. 0.5 mm allows for the
    template's own rounding and our numerical integration (both far smaller)."""
    p = _template("spherical_1005")
    r = float(np.linalg.norm(p["Cz"]))
    head = HeadMeasurements(
        math.pi * r / 10, math.pi * r / 10, 2 * math.pi * r * math.cos(math.radians(18)) / 10
    )
    assert _arcs_cm(p).nasion_inion_cm == pytest.approx(head.nasion_inion_cm, rel=5e-3)
    plan = plan_placement(head, system="10-10")
    shared = [k for k in plan.positions_mm if k in p and k not in ("A1", "A2", "M1", "M2")]
    assert len(shared) >= 70
    errors = {k: float(np.linalg.norm(np.array(plan.positions_mm[k]) - p[k])) for k in shared}
    worst = max(errors, key=errors.__getitem__)
    assert errors[worst] < 0.5, f"{worst} is {errors[worst]:.2f} mm off"


def test_spherical_two_rules_disagree_as_published_angles() -> None:
    """On the spherical template F3 lies 29.8° from Fp1 and 35.5° from C3 (computed
    on MNE's spherical 10-20 template): not midway on Fp1–C3, though exactly
    midway on F7–Fz. Our F3 (row rule) must show the same angles (±0.2°)."""
    p = _template("spherical_1005")
    r = float(np.linalg.norm(p["Cz"]))
    head = HeadMeasurements(
        math.pi * r / 10, math.pi * r / 10, 2 * math.pi * r * math.cos(math.radians(18)) / 10
    )
    pos = {k: np.array(v) for k, v in plan_placement(head).positions_mm.items()}

    def angle(a: str, b: str) -> float:
        u, v = pos[a], pos[b]
        return math.degrees(math.acos(float(u @ v / (np.linalg.norm(u) * np.linalg.norm(v)))))

    assert angle("F3", "Fp1") == pytest.approx(29.8, abs=0.2)
    assert angle("F3", "C3") == pytest.approx(35.5, abs=0.2)
    assert angle("F3", "F7") == pytest.approx(angle("F3", "Fz"), abs=0.2)


# Tolerances for the real head. Measured with this model (Colin27's arcs 37.8 / 38.8 /
# 61.0 cm): after rigid alignment, 10-20 median 9.5 mm, worst 17.9 mm (T7); 10-10
# median 9.3 mm, worst 20.7 mm (T10); in the fiducial frame without fitting, median
# 19.4 mm; neighbour chords median 2.4 %, worst 13.4 %. Why so wide: the ellipsoid
# puts the nasion, the preauricular points and the inion on one plane, while on
# Colin27 the inion's level lies about 4 cm above the nasion's and the vertex 2–3 cm
# in front of the ears; and a real scalp is flatter on the sides than an ellipsoid,
# which moves T9/T7/FT7 outwards by 1.5–2 cm. For marking this does not matter (tape
# distances follow the rules exactly); positions feed the head map and the neighbour
# graph, where 1–2 cm is well under the 10-20 spacing (about 6 cm). Limits: the
# measured figures plus about 20–30 % headroom.
RIGID_MEDIAN_MM = 12.0
RIGID_WORST_MM = 25.0
DIRECT_MEDIAN_MM = 25.0
PAIR_MEDIAN_REL = 0.05
PAIR_WORST_REL = 0.17


def _colin() -> tuple[dict[str, np.ndarray], HeadMeasurements]:
    p = _head_frame(_template("colin27_1005"))
    return p, _arcs_cm(p)


def test_colin27_arcs_are_adult_sized() -> None:
    """Sanity of the reference itself: Colin27 is a large adult head (about
    61 cm round at the 10 % level, measured on MNE's colin27 template)."""
    _, arcs = _colin()
    assert arcs.circumference_cm == pytest.approx(61.0, abs=1.0)
    assert 35.0 < arcs.nasion_inion_cm < 41.0 and 35.0 < arcs.preauricular_cm < 41.0


@pytest.mark.parametrize("system", ["10-20", "10-10"])
def test_colin27_positions_after_rigid_alignment(system: str) -> None:
    """MNE colin27_1005: per-site distance after the best rigid alignment (see the
    tolerance note above)."""
    p, arcs = _colin()
    plan = plan_placement(arcs, system=system)
    shared = [k for k in plan.positions_mm if k in p and k not in ("A1", "A2", "M1", "M2")]
    ours = np.array([plan.positions_mm[k] for k in shared])
    theirs = np.array([p[k] for k in shared])
    res = _rigid_residuals(ours, theirs)
    assert float(np.median(res)) < RIGID_MEDIAN_MM
    assert float(res.max()) < RIGID_WORST_MM, shared[int(np.argmax(res))]
    # The fiducial frame alone (no fitting): still within a few centimetres.
    direct = np.linalg.norm(ours - theirs, axis=1)
    assert float(np.median(direct)) < DIRECT_MEDIAN_MM


def test_colin27_neighbour_distances() -> None:
    """MNE colin27_1005: for every neighbour pair of the 10-10 plan, the chord between
    the two sites on our model vs on the template (frame-free; what the bridging check
    and electrode spacing care about). Pairs with Nz are left out: the template has no
    Nz site, only its MRI nasion fiducial, which the 10-5 rules did not place."""
    p, arcs = _colin()
    plan = plan_placement(arcs, system="10-10")
    rel = []
    for a, b in plan.neighbours:
        if a in p and b in p and not {a, b} & {"A1", "A2", "M1", "M2", "Nz"}:
            ours = np.linalg.norm(np.subtract(plan.positions_mm[a], plan.positions_mm[b]))
            theirs = np.linalg.norm(p[a] - p[b])
            rel.append(abs(ours - theirs) / theirs)
    assert len(rel) > 150
    assert float(np.median(rel)) < PAIR_MEDIAN_REL
    assert float(np.max(rel)) < PAIR_WORST_REL
