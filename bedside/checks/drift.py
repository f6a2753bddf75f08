"""Drift and offset: slow wander as a slope (µV/s) and the DC offset against the range.

Slope: least-squares line through the block means over the window (the block
means carry what changes slower than a block); slow_uv: the spread (SD) of the
block means, i.e. the wander slower than ~1/(2·block) Hz. Thresholds are ours: no published
per-channel value exists that we know of. Offset: |mean| as a share of the
amplifier range, only when the range is known.

By coupling: an AC-coupled amplifier's hardware high-pass (0.16 Hz is common) has
already taken the electrode's DC offset and its slow settling out of the signal; a
DC-coupled one (active electrodes sit at tens of mV of offset, which is normal) passes
them. A DC-coupled stream's slope and wander are therefore judged on the block means
through a first-order high-pass at ``dc_highpass_hz`` — as an AC-coupled amplifier
would show them — with the same thresholds; its offset is judged against the range,
as any amplifier's is. Unknown coupling: the block means as they are.
"""

from __future__ import annotations

import numpy as np

from bedside.checks.base import GOOD, Check, CheckResult, Context, Shared, levels_from
from bedside.checks.settings import QualitySettings
from bedside.checks.window_stats import WindowStats

NAME = "drift"


def slope_uv_per_s(times_s: np.ndarray, means_uv: np.ndarray) -> np.ndarray:
    """Least-squares slope of means_uv (K, C) against times_s (K,), µV/s per channel."""
    if len(times_s) < 2:
        return np.zeros(means_uv.shape[1])
    t = times_s - times_s.mean()
    denom = float(t @ t)
    if denom <= 0:
        return np.zeros(means_uv.shape[1])
    return np.asarray(t @ (means_uv - means_uv.mean(axis=0)) / denom)


def evaluate(stats: WindowStats, ctx: Context, settings: QualitySettings) -> CheckResult:
    ds = settings.drift
    dc = ctx.coupling == "dc" and stats.block_means_hp_uv is not None
    means = stats.block_means_hp_uv if dc and stats.block_means_hp_uv is not None else stats.block_means_uv
    slope = slope_uv_per_s(stats.block_times_s, means)
    slow = means.std(axis=0)
    level = np.maximum(
        levels_from(np.abs(slope), ds.slope_check_uv_per_s, ds.slope_bad_uv_per_s,
                    rule="drift.slope", margins=ctx.margins),
        levels_from(slow, ds.slow_check_uv, ds.slow_bad_uv, rule="drift.slow", margins=ctx.margins),
    )
    metrics = {"drift_uv_per_s": slope, "slow_uv": slow, "offset_uv": stats.mean_uv}
    offset_level = np.zeros_like(level)
    if ctx.amplifier_range_uv is not None:
        frac = np.abs(stats.mean_uv) / ctx.amplifier_range_uv
        metrics["offset_fraction"] = frac
        offset_level = levels_from(frac, ds.offset_check_fraction, ds.offset_bad_fraction)
    level = np.maximum(level, offset_level)
    level[~ctx.scalp] = GOOD
    reasons: dict[int, str] = {}
    for i in np.flatnonzero(level):
        parts = []
        if abs(slope[i]) >= ds.slope_check_uv_per_s:
            parts.append(f"drift {slope[i]:+.0f} µV/s")
        if slow[i] >= ds.slow_check_uv:
            parts.append(f"slow wander {slow[i]:.0f} µV")
        if offset_level[i]:
            parts.append(
                f"DC offset {stats.mean_uv[i]:.0f} µV ({metrics['offset_fraction'][i]:.0%} of range)"
            )
        if dc and (abs(slope[i]) >= ds.slope_check_uv_per_s or slow[i] >= ds.slow_check_uv):
            parts[0] += f" (beyond a DC amplifier's slow settling, above {ds.dc_highpass_hz:g} Hz)"
        reasons[int(i)] = (
            "; ".join(parts) + " — let the electrode settle; re-prepare the skin or refresh the gel if it persists"
        )
    return CheckResult(NAME, metrics, level, reasons)


ENTRY = Check(
    NAME, "stats", lambda i, ctx, s: evaluate(i.stats, ctx, s), headline="drift_uv_per_s", settings="drift",
    shared=Shared("reference", "drift", "check the reference electrode first (contact, gel)", "block_means"),
    faults=("drift",),
)
