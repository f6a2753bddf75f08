"""Bridging: two electrodes shorted by gel or sweat carry the same signal.

Electrical distance (Tenke & Kayser 2001, Clin Neurophysiol 112:545–550):
ED_ij = var_t(V_i − V_j) = C_ii + C_jj − 2·C_ij, computed for all neighbour pairs
at once from the window's covariance matrix C (µV²). Together with the
correlation r_ij = C_ij / √(C_ii·C_jj): both must indicate (ED ≤ ed_max_uv2 and
r ≥ corr_min) and both channels must carry signal, so two flat leads are not
called a bridge. The cutoff follows MNE-Python's compute_bridged_electrodes
(lm_cutoff = 16 µV²); that function also band-passes to 0.5–30 Hz and votes over
2-s epochs, which we replace by the live window.
"""

from __future__ import annotations

import numpy as np

from bedside.checks.base import BAD, CheckResult, Context
from bedside.checks.settings import QualitySettings
from bedside.checks.types import Finding, Level
from bedside.checks.window_stats import WindowStats

NAME = "bridging"


def pair_metrics(cov_uv2: np.ndarray, pairs: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(ED µV², correlation) for index pairs (P, 2) from a covariance matrix (C, C)."""
    if len(pairs) == 0:
        return np.zeros(0), np.zeros(0)
    i, j = pairs[:, 0], pairs[:, 1]
    cii, cjj, cij = cov_uv2[i, i], cov_uv2[j, j], cov_uv2[i, j]
    ed = np.maximum(cii + cjj - 2.0 * cij, 0.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        r = cij / np.sqrt(cii * cjj)
    return ed, np.nan_to_num(r, nan=0.0)


def window_pair_metrics(stats: WindowStats, pairs: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(ED µV², correlation) for index pairs (P, 2) straight from the window's blocks."""
    if len(pairs) == 0:
        return np.zeros(0), np.zeros(0)
    i, j = pairs[:, 0], pairs[:, 1]
    var = stats.var_uv2
    cii, cjj, cij = var[i], var[j], stats.pair_cov(i, j)
    ed = np.maximum(cii + cjj - 2.0 * cij, 0.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        r = cij / np.sqrt(cii * cjj)
    return ed, np.nan_to_num(r, nan=0.0)


def bridged_pairs(stats: WindowStats, ctx: Context, settings: QualitySettings) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """(pairs (P, 2), ED (P,), r (P,), bridged (P,) bool) over the neighbour pairs."""
    bs = settings.bridging
    pairs = ctx.neighbours
    ed, r = window_pair_metrics(stats, pairs)
    if len(pairs) == 0:
        return pairs, ed, r, np.zeros(0, dtype=bool)
    ok = ctx.valid & (stats.rms_uv >= bs.min_rms_uv)
    both = ok[pairs[:, 0]] & ok[pairs[:, 1]]
    bridged = both & (ed <= bs.ed_max_uv2) & (r >= bs.corr_min)
    return pairs, ed, r, bridged


def evaluate(stats: WindowStats, ctx: Context, settings: QualitySettings) -> CheckResult:
    n = len(ctx.names)
    pairs, ed, r, bridged = bridged_pairs(stats, ctx, settings)
    min_ed = np.full(n, np.nan)
    max_r = np.full(n, np.nan)
    if len(pairs):
        for col in (0, 1):
            idx = pairs[:, col]
            np.fmin.at(min_ed, idx, ed)
            np.fmax.at(max_r, idx, r)
    level = np.zeros(n, dtype=np.int8)
    reasons: dict[int, str] = {}
    findings = []
    partners: dict[int, list[str]] = {}
    for k in np.flatnonzero(bridged):
        a, b = int(pairs[k, 0]), int(pairs[k, 1])
        na, nb = ctx.names[a], ctx.names[b]
        level[a] = level[b] = BAD
        partners.setdefault(a, []).append(nb)
        partners.setdefault(b, []).append(na)
        findings.append(
            Finding(
                "bridge",
                (na, nb),
                Level.BAD,
                f"{na}–{nb} look bridged (electrical distance {ed[k]:.1f} µV², correlation {r[k]:.3f})"
                " — clean away the gel between them and dry the scalp, then re-apply",
            )
        )
    for i, others in partners.items():
        reasons[i] = (
            f"bridged with {', '.join(others)} (electrical distance {min_ed[i]:.1f} µV²)"
            " — clean away the gel between them and dry the scalp"
        )
    metrics = {"bridge_ed_uv2": min_ed, "bridge_corr": max_r}
    return CheckResult(NAME, metrics, level, reasons, tuple(findings))
