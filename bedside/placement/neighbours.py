"""Which sites are next to each other (for the bridging check).

The rule is ours (geometry, not a published norm): two sites are neighbours when
they are close on the scalp and no third site lies between them. "Between" means a
third site sees the pair under an angle wider than ``_BETWEEN_ANGLE_DEG`` — a relaxed
Gabriel graph (the plain Gabriel rule, 90°, would drop the diagonals of a square
grid, which can bridge as easily as the sides). "Close" means a chord shorter than
``_MAX_CHORD_FRACTION`` of the head's circumference: a little more than the widest
step of the 10-20 system (20 % of an arc over the vertex, about 0.125 of the
circumference), so a sparse 10-20 montage keeps its natural neighbours while sites
on opposite sides of the head never pair.

Sparse montages (the neonatal set of ACNS Guideline 5: Fp1 Fp2 C3 Cz C4 T3 T4 O1 O2)
have gaps wider than that: there "close" grows with the set's own spacing, to
``_SPACING_FACTOR`` times the median distance from a site to its nearest one, so
Fp–C, C–O and T–O, between which no site lies, stay neighbours. Every site keeps at
least its nearest one (ours).
"""

from __future__ import annotations

import math
from collections.abc import Mapping

import numpy as np

_BETWEEN_ANGLE_DEG = 110.0
_MAX_CHORD_FRACTION = 0.14
_SPACING_FACTOR = 2.0


def neighbour_pairs(
    positions_mm: Mapping[str, tuple[float, float, float]], circumference_mm: float
) -> tuple[tuple[str, str], ...]:
    """Adjacent pairs among ``positions_mm`` (each pair sorted, the list sorted).

    positions_mm: site name -> (x, y, z) in mm on one head; circumference_mm: that
    head's 10-20 circumference (sets the largest distance that still counts as near).
    """
    names = list(positions_mm)
    n = len(names)
    if n < 2:
        return ()
    p = np.asarray([positions_mm[k] for k in names], dtype=float)
    diff = p[:, None, :] - p[None, :, :]
    d2 = np.einsum("ijk,ijk->ij", diff, diff)
    others = np.where(np.eye(n, dtype=bool) | (d2 <= 0.0), np.inf, d2)
    nearest = others.min(axis=1)
    spacing2 = float(np.median(nearest[np.isfinite(nearest)])) if np.isfinite(nearest).any() else 0.0
    limit2 = max((_MAX_CHORD_FRACTION * circumference_mm) ** 2, _SPACING_FACTOR**2 * spacing2)
    close = d2 <= limit2
    i_idx, j_idx = np.nonzero(np.triu(close & (d2 > 0.0), k=1))
    if len(i_idx) == 0:
        return ()
    # k lies between i and j when the angle i-k-j exceeds the limit:
    # cos(angle) = (d_ik² + d_jk² - d_ij²) / (2 d_ik d_jk) < cos(limit).
    dik, djk = d2[i_idx], d2[j_idx]  # (pairs, n)
    dij = d2[i_idx, j_idx][:, None]
    with np.errstate(divide="ignore", invalid="ignore"):
        cos_k = (dik + djk - dij) / (2.0 * np.sqrt(dik * djk))
    cos_limit = math.cos(math.radians(_BETWEEN_ANGLE_DEG))
    blocked = np.any(np.isfinite(cos_k) & (cos_k < cos_limit), axis=1)
    keep = {(int(i), int(j)) for i, j in zip(i_idx[~blocked], j_idx[~blocked], strict=True)}
    for i in range(n):  # every site keeps at least its nearest one
        if np.isfinite(nearest[i]) and not any(i in pair for pair in keep):
            j = int(np.argmin(others[i]))
            keep.add((min(i, j), max(i, j)))
    pairs = [tuple(sorted((names[i], names[j]))) for i, j in keep]
    return tuple(sorted(set(pairs)))  # type: ignore[arg-type]
