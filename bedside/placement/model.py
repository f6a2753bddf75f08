"""The head model: an ellipsoid fitted so that its three arcs equal the tape measurements.

Frame (mm): origin midway between the preauricular points, +x towards the right
preauricular point, +y towards the nasion, +z up. The ellipsoid
``x²/a² + y²/b² + z²/c² = 1`` has its "equator" (z = 0) through the nasion, both
preauricular points and the inion, as the 10-20 system's lowest level; only the upper
half carries sites (references sit just below it).

Three numbers fix the three half-axes:

* nasion–inion over the vertex = half the perimeter of the sagittal ellipse (b, c);
* preauricular over the vertex = half the perimeter of the coronal ellipse (a, c);
* the circumference through Fpz, T7, Oz, T8 = the length of the "10 % level": on every
  meridian from the equator up to the vertex, the point 20 % of the way up (Fpz and
  T7 are exactly there: 10 % of the whole nasion–inion or preauricular arc).

Arc lengths are integrated numerically (Gauss–Legendre on the meridians, fine chord
sums on the other curves), so the fitted model reproduces its inputs to well under
0.1 cm. The fit is two nested one-dimensional root searches (c outside, a and b
inside), a few milliseconds in all.

Tape paths between marks that lie on no primary line (the rows F7–Fz–F8 and so on)
are modelled as the section of the ellipsoid by the plane through the three marks
the tape is held at; a tape between two points is the section through them and the
centre (on a sphere these are exactly great circles, the paths a taut tape takes).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from numpy.typing import NDArray

from bedside.errors import MeasurementError

FloatArray = NDArray[np.float64]

# Gauss–Legendre nodes on [0, pi/2] for quarter-ellipse perimeters (48 nodes: far
# below 1e-9 relative error for the axis ratios heads have).
_GL_X, _GL_W = np.polynomial.legendre.leggauss(48)
_GL_T = (_GL_X + 1.0) * (math.pi / 4.0)
_GL_W = _GL_W * (math.pi / 4.0)
_SIN2 = np.sin(_GL_T) ** 2
_COS2 = np.cos(_GL_T) ** 2

#: Fraction of the quarter meridian (equator -> vertex) where the circumference runs:
#: 10 % of the nasion–inion arc is 20 % of its front quarter.
CIRCUMFERENCE_LEVEL = 0.2

_N_THETA = 257  # samples up each meridian
_N_PHI = 361  # samples round each half contour (front to back)
_N_PLANE = 721  # samples along a plane section


def quarter_perimeter(p: float | FloatArray, c: float | FloatArray) -> FloatArray:
    """Length of a quarter ellipse with half-axes p and c (same unit as the inputs)."""
    p = np.asarray(p, dtype=float)[..., None]
    c = np.asarray(c, dtype=float)[..., None]
    return np.asarray(np.sqrt(p * p * _SIN2 + c * c * _COS2) @ _GL_W)


def _axis_for_quarter(quarter: float, c: float) -> float:
    """The half-axis p with quarter_perimeter(p, c) == quarter (needs quarter > c)."""
    from scipy.optimize import brentq  # lazy: see fit_head

    return float(
        brentq(lambda p: float(quarter_perimeter(p, c)) - quarter, 0.0, quarter, xtol=1e-9)
    )


def _meridian_points(
    a: float, b: float, c: float, phi: FloatArray, level: float, n_theta: int = _N_THETA
) -> FloatArray:
    """Points at ``level`` (fraction of the way up from the equator) of each meridian.

    phi: azimuth in radians from the front (+y), positive towards the left (-x).
    Returns (len(phi), 3) in the model's unit.
    """
    dx, dy = -np.sin(phi), np.cos(phi)
    r = 1.0 / np.sqrt(dx * dx / (a * a) + dy * dy / (b * b))  # horizontal half-axis
    if level <= 0.0:
        return np.stack([r * dx, r * dy, np.zeros_like(r)], axis=1)
    theta = np.linspace(0.0, math.pi / 2.0, n_theta)
    speed = np.sqrt((r[:, None] * np.sin(theta)) ** 2 + (c * np.cos(theta)) ** 2)
    seg = 0.5 * (speed[:, 1:] + speed[:, :-1]) * (theta[1] - theta[0])
    cum = np.concatenate([np.zeros((len(phi), 1)), np.cumsum(seg, axis=1)], axis=1)
    target = level * cum[:, -1]
    idx = np.clip((cum < target[:, None]).sum(axis=1), 1, n_theta - 1)
    rows = np.arange(len(phi))
    c0, c1 = cum[rows, idx - 1], cum[rows, idx]
    frac = (target - c0) / np.where(c1 > c0, c1 - c0, 1.0)
    th = theta[idx - 1] + frac * (theta[1] - theta[0])
    return np.stack([r * np.cos(th) * dx, r * np.cos(th) * dy, c * np.sin(th)], axis=1)


def _half_contour(a: float, b: float, c: float, level: float) -> tuple[FloatArray, FloatArray]:
    """The left half of a level contour, front to back: points (N, 3), cumulative length."""
    phi = np.linspace(0.0, math.pi, _N_PHI)
    pts = _meridian_points(a, b, c, phi, level)
    steps = np.linalg.norm(np.diff(pts, axis=0), axis=1)
    return pts, np.concatenate([[0.0], np.cumsum(steps)])


def contour_length(a: float, b: float, c: float, level: float = CIRCUMFERENCE_LEVEL) -> float:
    """The whole length of the contour at ``level`` round the head.

    The ellipsoid is symmetric left–right and front–back, so four times one quarter
    (121 chords; the chord sum is within 1e-5 of the arc at this spacing).
    """
    phi = np.linspace(0.0, math.pi / 2.0, 121)
    pts = _meridian_points(a, b, c, phi, level, n_theta=129)
    return 4.0 * float(np.linalg.norm(np.diff(pts, axis=0), axis=1).sum())


@dataclass(frozen=True)
class HeadModel:
    """An ellipsoid head: half-axes in mm (a: left–right, b: front–back, c: up)."""

    a_mm: float
    b_mm: float
    c_mm: float

    @property
    def axes_mm(self) -> tuple[float, float, float]:
        return (self.a_mm, self.b_mm, self.c_mm)

    # --- the three measured arcs, from the model -------------------------------
    def nasion_inion_mm(self) -> float:
        return 2.0 * float(quarter_perimeter(self.b_mm, self.c_mm))

    def preauricular_mm(self) -> float:
        return 2.0 * float(quarter_perimeter(self.a_mm, self.c_mm))

    def circumference_mm(self, level: float = CIRCUMFERENCE_LEVEL) -> float:
        return contour_length(self.a_mm, self.b_mm, self.c_mm, level)

    # --- points --------------------------------------------------------------
    def on_midline(self, fraction: float) -> FloatArray:
        """The point ``fraction`` (0 nasion .. 1 inion) along the nasion–inion arc."""
        return _along_central_ellipse(self.b_mm, self.c_mm, fraction, axis="y")

    def on_coronal(self, fraction: float) -> FloatArray:
        """The point ``fraction`` (0 left .. 1 right preauricular) along the coronal arc."""
        return _along_central_ellipse(self.a_mm, self.c_mm, fraction, axis="x")

    def on_contour(
        self, fraction: float, side: str, level: float = CIRCUMFERENCE_LEVEL
    ) -> FloatArray:
        """The point ``fraction`` of the whole contour from the front, going round ``side``.

        fraction is of the *whole* circumference (0 .. 0.5 reaches the back).
        """
        pts, cum = _half_contour_cached(self.a_mm, self.b_mm, self.c_mm, level)
        s = min(max(fraction, 0.0), 0.5) * 2.0 * cum[-1]
        p = np.array([np.interp(s, cum, pts[:, k]) for k in range(3)])
        p = self.to_surface(p)
        if side == "right":
            p[0] = -p[0]
        return p

    def to_surface(self, p: FloatArray) -> FloatArray:
        """Scale a point along its ray from the centre onto the ellipsoid."""
        p = np.asarray(p, dtype=float)
        k = math.sqrt((p[0] / self.a_mm) ** 2 + (p[1] / self.b_mm) ** 2 + (p[2] / self.c_mm) ** 2)
        return p / k

    def at(self, azimuth_deg: float, elevation_deg: float) -> FloatArray:
        """The surface point in a direction (azimuth from the front towards the left,
        elevation above the equator), in the ellipsoid's own parameter angles."""
        az, el = math.radians(azimuth_deg), math.radians(elevation_deg)
        return np.array(
            [
                -self.a_mm * math.cos(el) * math.sin(az),
                self.b_mm * math.cos(el) * math.cos(az),
                self.c_mm * math.sin(el),
            ]
        )

    def plane_arc(self, p0: FloatArray, p1: FloatArray, p2: FloatArray | None = None) -> Arc:
        """The tape path from p0 through p1 (to p2, if given) as a plane section.

        With p2: the plane through the three points, from p0 via p1 to p2.
        Without: the plane through p0, p1 and the centre, the shorter way from p0 to p1.
        """
        return _plane_arc(
            self.axes_mm,
            np.asarray(p0, float),
            np.asarray(p1, float),
            None if p2 is None else np.asarray(p2, float),
        )


@dataclass(frozen=True)
class Arc:
    """A sampled curve on the head: points (N, 3) in mm and the cumulative length."""

    points_mm: FloatArray
    cum_mm: FloatArray
    #: index of the middle point the curve was held at (for three-point arcs), else -1.
    via_index: int = -1

    @property
    def length_mm(self) -> float:
        return float(self.cum_mm[-1])

    @property
    def first_leg_mm(self) -> float:
        """Length from the start to the point it was held at (whole length if none)."""
        return float(self.cum_mm[self.via_index]) if self.via_index >= 0 else self.length_mm

    def point_at_mm(self, s_mm: float) -> FloatArray:
        return np.array([np.interp(s_mm, self.cum_mm, self.points_mm[:, k]) for k in range(3)])


def _along_central_ellipse(p: float, c: float, fraction: float, axis: str) -> FloatArray:
    """A point along the half ellipse (p, c) from its +p (axis y) or -p (axis x) end."""
    theta = np.linspace(0.0, math.pi, 2 * _N_THETA - 1)
    speed = np.sqrt((p * np.sin(theta)) ** 2 + (c * np.cos(theta)) ** 2)
    cum = np.concatenate([[0.0], np.cumsum(0.5 * (speed[1:] + speed[:-1]) * (theta[1] - theta[0]))])
    th = float(np.interp(min(max(fraction, 0.0), 1.0) * cum[-1], cum, theta))
    h, z = p * math.cos(th), c * math.sin(th)
    if axis == "y":  # nasion (+y) to inion (-y)
        return np.array([0.0, h, z])
    return np.array([-h, 0.0, z])  # left (-x) to right (+x)


@lru_cache(maxsize=64)
def _half_contour_cached(
    a: float, b: float, c: float, level: float
) -> tuple[FloatArray, FloatArray]:
    return _half_contour(a, b, c, level)


def _plane_arc(
    axes: tuple[float, float, float], p0: FloatArray, p1: FloatArray, p2: FloatArray | None
) -> Arc:
    d = np.asarray(axes, dtype=float)
    u0, u1 = p0 / d, p1 / d
    u2 = None if p2 is None else p2 / d
    # The plane in the unit-sphere space (points u = p / d): the section is a circle.
    normal_u = np.cross(u1 - u0, u2 - u0) if u2 is not None else np.cross(u0, u1)
    norm = float(np.linalg.norm(normal_u))
    if norm < 1e-12:
        raise MeasurementError("two marks fall on the same place on this head model")
    m = normal_u / norm
    h = float(m @ u0)
    e1 = u0 - h * m
    e1 /= np.linalg.norm(e1)
    e2 = np.cross(m, e1)

    def angle(u: FloatArray) -> float:
        return float(math.atan2(u @ e2, u @ e1)) % (2.0 * math.pi)

    rho = math.sqrt(max(1.0 - h * h, 0.0))
    t1 = angle(u1)
    if u2 is None:
        if t1 > math.pi:  # go the shorter way
            e2, t1 = -e2, 2.0 * math.pi - t1
        t_end, via = t1, -1
    else:
        t2 = angle(u2)
        if t1 > t2:  # the arc from u0 to u2 that holds u1 goes the other way round
            e2 = -e2
            t1, t2 = (2.0 * math.pi - t1) % (2.0 * math.pi), (2.0 * math.pi - t2) % (2.0 * math.pi)
        t_end = t2
        via = int(round(t1 / t_end * (_N_PLANE - 1)))
    t = np.linspace(0.0, t_end, _N_PLANE)
    if u2 is not None:  # make sure the held point is a sample
        t[via] = t1
    u = h * m + rho * (np.cos(t)[:, None] * e1 + np.sin(t)[:, None] * e2)
    pts = u * d
    cum = np.concatenate([[0.0], np.cumsum(np.linalg.norm(np.diff(pts, axis=0), axis=1))])
    return Arc(points_mm=pts, cum_mm=cum, via_index=via)


def fit_head(nasion_inion_cm: float, preauricular_cm: float, circumference_cm: float) -> HeadModel:
    """Fit the ellipsoid whose three arcs equal the three measurements (cm in, mm out).

    Raises MeasurementError when no ellipsoid has these three arcs (the set is
    inconsistent: e.g. a circumference too large for arcs that short).
    """
    ni, pa, circ = 10.0 * nasion_inion_cm, 10.0 * preauricular_cm, 10.0 * circumference_cm
    return _fit_mm(round(ni, 6), round(pa, 6), round(circ, 6))


@lru_cache(maxsize=256)
def _fit_mm(ni: float, pa: float, circ: float) -> HeadModel:
    c_max = 0.5 * min(ni, pa)

    def axes(c: float) -> tuple[float, float]:
        return _axis_for_quarter(pa / 2.0, c), _axis_for_quarter(ni / 2.0, c)

    def gap(c: float) -> float:
        a, b = axes(c)
        return contour_length(a, b, c) - circ

    lo, hi = 1e-3 * c_max, (1.0 - 1e-6) * c_max
    g_lo, g_hi = gap(lo), gap(hi)
    if g_lo < 0.0 or g_hi > 0.0:
        too = "large" if g_lo < 0.0 else "small"
        lo_cm, hi_cm = (circ - g_lo) / 10.0, (circ - g_hi) / 10.0
        raise MeasurementError(
            f"these measurements do not fit one head: with a nasion–inion arc of "
            f"{ni / 10:.1f} cm and a preauricular arc of {pa / 10:.1f} cm the circumference "
            f"must lie between {hi_cm:.1f} and {lo_cm:.1f} cm, got {circ / 10:.1f} cm "
            f"(too {too}); re-measure, and check all three are in the same unit"
        )
    # Lazy, measured: scipy.optimize costs about 0.7 s to import (python -X importtime;
    # half of a cold `bedside --help`), and every command imports placement to build
    # its parser or draw a map; only fitting a head needs it.
    from scipy.optimize import brentq

    c = float(brentq(gap, lo, hi, xtol=1e-6))
    a, b = axes(c)
    return HeadModel(a_mm=a, b_mm=b, c_mm=c)
