"""Flat or dead channels: too little signal, constant/repeating values, stuck at the rail.

ptp_uv below the amplifier's own noise (IFCN digital standard, Nuwer et al. 1998:
< 1.5 µV p-p) means no EEG reaches the input; below the "suppressed" level (ACNS
critical-care terminology 2021: < 10 µV) it is worth checking the lead (an
unplugged jack box can give a low record that looks real). PREP (Bigdely-Shamlo et
al. 2015) calls a channel flat when its SD is ≈ 0; that case falls under the first
rule. Also: the share of consecutive samples with no change (a constant or
repeating value), and the channel pinned at the amplifier's range.
"""

from __future__ import annotations

import numpy as np

from bedside.checks.base import BAD, CHECK, GOOD, Check, CheckResult, Context, Shared, levels_from
from bedside.checks.settings import QualitySettings
from bedside.checks.window_stats import WindowStats

NAME = "flat"


def evaluate(stats: WindowStats, ctx: Context, settings: QualitySettings) -> CheckResult:
    fs = settings.flat
    # Judged on the newest data (flat_s) so a lead that falls off shows within a second.
    ptp = stats.recent_ptp_uv
    zero = stats.recent_zero_diff_fraction
    level = levels_from(ptp, fs.ptp_check_uv, fs.ptp_bad_uv, below=True, rule="flat.ptp", margins=ctx.margins)
    constant = zero >= fs.zero_diff_bad_fraction
    level[constant] = BAD
    rail = np.zeros(ptp.shape, dtype=bool)
    if ctx.amplifier_range_uv is not None:
        rail = np.abs(stats.mean_uv) >= fs.rail_fraction * ctx.amplifier_range_uv
        level[rail] = BAD
    level[~ctx.scalp] = GOOD
    reasons: dict[int, str] = {}
    for i in np.flatnonzero(level):
        if rail[i]:
            reasons[int(i)] = (
                f"stuck at the amplifier's limit ({stats.mean_uv[i]:.0f} µV of ±{ctx.amplifier_range_uv:.0f})"
                " — re-seat the electrode; check the lead is plugged in"
            )
        elif level[i] == BAD and ptp[i] < fs.ptp_bad_uv:
            reasons[int(i)] = (
                f"flat: {ptp[i]:.2f} µV peak-to-peak — check the lead is plugged in and the electrode"
                " touches the skin"
            )
        elif constant[i]:
            reasons[int(i)] = (
                f"constant values: {zero[i]:.0%} of samples unchanged — check the lead and the amplifier input"
            )
        elif level[i] == CHECK:
            reasons[int(i)] = (
                f"very low signal: {ptp[i]:.1f} µV peak-to-peak — check the lead is connected"
            )
    metrics = {
        "ptp_uv": stats.ptp_uv,  # over the window
        "recent_ptp_uv": ptp,  # over the newest flat_s, what the verdict uses
        "rms_uv": stats.rms_uv,
        "zero_diff_fraction": zero,
    }
    return CheckResult(NAME, metrics, level, reasons)


ENTRY = Check(
    NAME, "stats", lambda i, ctx, s: evaluate(i.stats, ctx, s), headline="ptp_uv", settings="flat",
    shared=Shared("reference", "flat signal", "check the reference and ground leads are plugged in", "majority"),
    faults=("flat", "clipping"), sets_valid=True,
)
