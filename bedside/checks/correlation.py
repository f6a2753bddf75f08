"""A lead unlike every other: scalp EEG is shared by neighbouring electrodes, noise is not.

PREP's correlation criterion (Bigdely-Shamlo et al. 2015, Front Neuroinform 9:16):
a channel is bad when the 98th percentile of its absolute correlation with the other
channels is below 0.4. Volume conduction makes scalp EEG spatially smooth, so every
electrode that touches the scalp correlates strongly with some others; a lead that
carries only amplifier noise, a broken wire or an input with nothing on it does not.
PREP judges 1-s windows (bad in more than 1 % of them) of the EEG band; we judge the
newest 2-s epoch of the bridging detector's 0.5–30 Hz band (bridging.BridgeDetector:
one band-pass for both; mains, muscle and drift, which a lead does not share with its
neighbours, are outside it), and the check is skipped with fewer than ``min_channels``
valid scalp leads (nothing to compare with).

Metrics: corr_98 (the 98th percentile of |r| with the other valid scalp leads, in the
newest window) and corr_98_lowest (its lowest over the newest ``windows`` windows, what
the level is judged on).
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from bedside.checks.base import BAD, GOOD, CheckResult, Context, levels_from
from bedside.checks.settings import QualitySettings

NAME = "correlation"

#: Checks whose verdict on a lead speaks first (also flat at "bad"): while they flag it,
#: and until their fault has left the pooled covariance, the lead is not judged here.
SPEAKS_FIRST = ("line_noise", "pops", "clipping", "drift", "amplitude", "muscle")


def corr_98(cov_uv2: np.ndarray | None, valid: np.ndarray, settings: QualitySettings) -> np.ndarray:
    """(C,) the percentile of each valid lead's |r| with the other valid leads, from a
    (C, C) covariance; NaN where not judged (not valid, no variance, too few leads)."""
    cs = settings.correlation
    n = len(valid)
    corr = np.full(n, np.nan)
    if cov_uv2 is None:
        return corr
    var = np.diag(cov_uv2)
    idx = np.flatnonzero(valid & (var > 0))
    if len(idx) < cs.min_channels:
        return corr
    sub = cov_uv2 if len(idx) == n else cov_uv2[np.ix_(idx, idx)]
    inv = 1.0 / np.sqrt(np.diag(sub))
    r = np.abs(sub * np.outer(inv, inv))
    k = len(idx)
    np.fill_diagonal(r, -1.0)  # below every |r|: each row's own 1.0 sorts first, out of the way
    # The percentile of the k − 1 others as numpy.percentile's default (linear between
    # order statistics); a row sort is quicker than a two-point partition here.
    pos = cs.percentile / 100.0 * (k - 2)
    lo = int(np.floor(pos))
    hi = min(lo + 1, k - 2)
    part = np.sort(r, axis=1)
    frac = pos - lo
    corr[idx] = part[:, lo + 1] * (1.0 - frac) + part[:, hi + 1] * frac
    return corr


def evaluate(history: Sequence[np.ndarray], ctx: Context, settings: QualitySettings) -> CheckResult:
    """history: corr_98 of the newest windows, oldest first (one per 1-s hop, at most
    ``correlation.windows``); judged by the lowest — PREP calls a channel bad when it is
    below the threshold in more than 1 % of its windows; live, in any of the newest."""
    cs = settings.correlation
    n = len(ctx.names)
    if not history:
        nan = np.full(n, np.nan)
        return CheckResult(NAME, {"corr_98": nan, "corr_98_lowest": nan.copy()}, np.zeros(n, dtype=np.int8))
    current = history[-1]
    with np.errstate(invalid="ignore"):
        lowest = np.fmin.reduce(np.vstack(history), axis=0)
    level = levels_from(lowest, cs.check_below, cs.bad_below, below=True, rule="correlation", margins=ctx.margins)
    level[np.isnan(lowest) | ~ctx.valid] = GOOD
    judged = ~np.isnan(current)
    median = float(np.median(current[judged])) if judged.any() else float("nan")
    reasons = {
        int(i): (
            f"unlike every other lead: correlation down to {lowest[i]:.2f} with the others in the last"
            f" {len(history)} s (median lead {median:.2f}) — it carries {'no' if level[i] == BAD else 'little'}"
            " EEG; check that the lead is plugged in and the electrode touches the skin"
        )
        for i in np.flatnonzero(level)
    }
    return CheckResult(NAME, {"corr_98": current, "corr_98_lowest": lowest}, level, reasons)
