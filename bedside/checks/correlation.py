"""A lead unlike every other: scalp EEG is shared by neighbouring electrodes, noise is not.

PREP's correlation criterion (Bigdely-Shamlo et al. 2015, Front Neuroinform 9:16):
a channel is bad when the 98th percentile of its absolute correlation with the other
channels is below 0.4. Volume conduction makes scalp EEG spatially smooth, so every
electrode that touches the scalp correlates strongly with some others; a lead that
carries only amplifier noise, a broken wire or an input with nothing on it does not.
PREP judges 1-s windows (bad in more than 1 % of them); we judge the engine's window
of the analysis copy, within its 0.25-s blocks (what is slower is left out), and the check is skipped with fewer than ``min_channels``
valid scalp leads (nothing to compare with).

Metric: corr_98 (the 98th percentile of |r| with the other valid scalp leads).
"""

from __future__ import annotations

import numpy as np

from bedside.checks.base import BAD, GOOD, CheckResult, Context, levels_from
from bedside.checks.settings import QualitySettings
from bedside.checks.window_stats import WindowStats

NAME = "correlation"


def evaluate(stats: WindowStats, ctx: Context, settings: QualitySettings) -> CheckResult:
    cs = settings.correlation
    n = len(ctx.names)
    corr = np.full(n, np.nan)
    level = np.zeros(n, dtype=np.int8)
    # The scatter within the blocks (about each block's own mean): the window without
    # what is slower than the blocks (drift and eye movements, shared by every lead on
    # one reference, would make even a dead input look alike).
    within = stats.within_uv2
    var = np.diag(within)
    idx = np.flatnonzero(ctx.valid & (var > 0))
    if len(idx) < cs.min_channels:
        return CheckResult(NAME, {"corr_98": corr}, level)
    sub = within if len(idx) == n else within[np.ix_(idx, idx)]
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
    level = levels_from(corr, cs.check_below, cs.bad_below, below=True)
    level[np.isnan(corr)] = GOOD
    median = float(np.median(corr[idx]))
    reasons = {
        int(i): (
            f"unlike every other lead: correlation at most {corr[i]:.2f} with the others"
            f" (median lead {median:.2f}) — it carries {'no' if level[i] == BAD else 'little'} EEG;"
            " check that the lead is plugged in and the electrode touches the skin"
        )
        for i in np.flatnonzero(level)
    }
    return CheckResult(NAME, {"corr_98": corr}, level, reasons)
