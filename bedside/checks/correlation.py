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

from collections.abc import Mapping, Sequence

import numpy as np

from bedside.checks.base import BAD, GOOD, Check, CheckResult, Context, Inputs, levels_from
from bedside.checks.bridging import CORR_HOPS, BridgeDetector
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


class History:
    """corr_98 per bridging hop (1 s) for the newest ``correlation.windows`` hops, with
    today's valid channels (each computed once per hop and valid set), kept per engine.

    A lead another check flags (:data:`SPEAKS_FIRST`, flat at bad) is left out (NaN)
    while it is flagged and for the hops its fault still sits in the pooled covariance
    (``bridging.CORR_HOPS``). A hop in which a lead's own in-band power jumps (a pop, a
    movement: ``correlation.artifact_ratio`` times its median over these hops) says
    nothing about whether it carries EEG: that lead's value there is left out too."""

    def __init__(self, bridge: BridgeDetector, settings: QualitySettings) -> None:
        self.bridge, self.settings = bridge, settings
        self._cache: dict[tuple[int, bytes], np.ndarray] = {}
        self._taint_hop = np.full(bridge.n_channels, -(10**9), dtype=np.int64)  # last hop flagged
        self._memo: tuple[tuple[int, bytes, bytes], list[np.ndarray]] | None = None

    def reset(self) -> None:
        self._cache.clear()
        self._memo = None
        self._taint_hop[:] = -(10**9)

    def flag(self, results: Mapping[str, CheckResult]) -> None:
        """Note the leads the checks that speak first flag at this hop."""
        taint = results["flat"].level >= BAD
        for name in SPEAKS_FIRST:
            taint |= results[name].level > GOOD
        self._taint_hop[taint] = self.bridge.hops_done

    def values(self, valid: np.ndarray) -> list[np.ndarray]:
        mask = valid.tobytes()
        # The same hops, channels and flagged leads as last time: the same answer (a hop
        # completes every fourth update).
        memo = (self.bridge.hops_done, mask, self._taint_hop.tobytes())
        if self._memo is not None and self._memo[0] == memo:
            return self._memo[1]
        out, cache = [], {}
        covs = list(self.bridge.recent_covs)
        for hop, cov in covs:
            key = (hop, mask)
            got = self._cache.get(key)
            if got is None:
                got = corr_98(cov, valid, self.settings)
            cache[key] = got
            out.append(got)
        self._cache = cache
        clean_from = self._taint_hop + CORR_HOPS  # first hop whose pool is clear of it
        out = [np.where(hop >= clean_from, v, np.nan) for (hop, _cov), v in zip(covs, out, strict=True)]
        if len(covs) >= 3:
            power = np.vstack([np.diag(cov) for _hop, cov in covs])
            jump = power > self.settings.correlation.artifact_ratio * np.median(power, axis=0)
            if jump.any():
                out = [np.where(j, np.nan, v) for j, v in zip(jump, out, strict=True)]
        self._memo = (memo, out)
        return out


def _run(inputs: Inputs, ctx: Context, settings: QualitySettings) -> CheckResult:
    inputs.correlation.flag(inputs.results)
    return evaluate(inputs.correlation.values(ctx.valid), ctx, settings)


#: Runs after the checks of SPEAKS_FIRST (registry.CHECKS keeps it after them).
ENTRY = Check(NAME, "bridging", _run, headline=None, settings="correlation")
