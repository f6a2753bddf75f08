"""Artifacts around the main checks: pops, clipping, muscle, excessive amplitude.

* pops: a change over about 10 ms (pop_lag_s, on the analysis copy) far larger
  than the channel's typical change (the median over the window's blocks of each
  block's median change, and its own block's median) and at least pop_step_min_uv —
  an abrupt deflection isolated to one electrode (one published detector: Kobler et
  al. 2019; thresholds ours). Medians, so the pop's own samples do not raise the bar,
  and muscle (many large changes in a block) does not count as pops;
* clipping: share of samples in runs at the extreme value (or at the rail);
* muscle: high-frequency amplitude over the EEG band's, √(P_hf / P_eeg), after
  PREP's noisiness ratio (Bigdely-Shamlo et al. 2015, robust z > 5; PREP splits at
  50 Hz with its own filters, our band edges are ours), computed from the shared
  spectrum at the stream's rate — and only where the high-frequency amplitude
  itself (muscle_uv, RMS in the band without the mains lines, scaled to a 50-Hz wide
  band) reaches muscle_min_uv, so amplifier noise or a quiet lead with little EEG
  never reads as muscle; advisory (at most "check");
* amplitude: RMS over the window, and an outlier rule of our own after PREP's
  deviation criterion (PREP: robust z > 5 of 0.7413·IQR; here the robust z of the
  RMS), at most "check".
"""

from __future__ import annotations

import numpy as np

from bedside.checks.base import (
    BAD,
    CHECK,
    GOOD,
    Check,
    CheckResult,
    Context,
    Shared,
    levels_from,
    robust_z,
)
from bedside.checks.line_noise import MAINS_CANDIDATES_HZ, band_power
from bedside.checks.settings import QualitySettings
from bedside.checks.spectrum import Spectrum
from bedside.checks.window_stats import WindowStats


def _median_rows(a: np.ndarray) -> np.ndarray:
    """np.median(a, axis=0) for a (K, C) without NaN, by one sort (faster on short columns)."""
    k = a.shape[0]
    if k == 0:
        return np.full(a.shape[1], np.nan)
    s = np.sort(a, axis=0)
    return s[k // 2] if k % 2 else (s[k // 2 - 1] + s[k // 2]) / 2.0


def pops(stats: WindowStats, ctx: Context, settings: QualitySettings) -> CheckResult:
    a = settings.artifacts
    typical = _median_rows(stats.step_med_uv)
    # Isolated: far above the window's typical change and its own block's (muscle makes
    # many large changes; a pop is one).
    limit = np.maximum(
        a.pop_step_min_uv, a.pop_step_ratio * np.maximum(typical, stats.step_med_uv)
    )
    hits = stats.step_max_uv > limit
    count = hits.sum(axis=0).astype(float)
    biggest = stats.step_max_uv.max(axis=0)
    level = levels_from(count, a.pop_check_count, a.pop_bad_count)
    level[~ctx.scalp] = GOOD
    window_s = stats.n_samples / ctx.rate_hz
    reasons = {
        int(i): (
            f"{int(count[i])} electrode pop{'s' if count[i] > 1 else ''} in {window_s:.0f} s"
            f" (jump {biggest[i]:.0f} µV) — press the electrode gently, add gel or re-seat it"
        )
        for i in np.flatnonzero(level)
    }
    return CheckResult("pops", {"pops": count, "step_max_uv": biggest}, level, reasons)


def clipping(stats: WindowStats, ctx: Context, settings: QualitySettings) -> CheckResult:
    a = settings.artifacts
    frac = stats.clip_fraction
    level = levels_from(frac, a.clip_check_fraction, a.clip_bad_fraction)
    level[~ctx.valid] = GOOD  # a flat channel is all "extreme"; the flat check speaks for it
    reasons = {
        int(i): (
            f"clipping: {frac[i]:.1%} of samples held at the extreme value"
            " — re-seat or re-prepare the electrode; check the amplifier's input range"
        )
        for i in np.flatnonzero(level)
    }
    return CheckResult("clipping", {"clip_fraction": frac}, level, reasons)


def muscle(spec: Spectrum, ctx: Context, settings: QualitySettings) -> CheckResult:
    a = settings.artifacts
    n = len(ctx.names)
    nyq = spec.nyquist
    lo, hi = a.muscle_band_hz[0], min(a.muscle_band_hz[1], 0.9 * nyq)
    if hi <= lo:
        nan = np.full(n, np.nan)
        return CheckResult("muscle", {"muscle_ratio": nan, "muscle_uv": nan.copy(), "muscle_z": nan.copy()},
                           np.zeros(n, dtype=np.int8))
    # The band without the mains lines (both candidates, fundamental and harmonics).
    bw = settings.line_noise.bandwidth_hz + 1.0
    edges = sorted(
        h * f0 for f0 in MAINS_CANDIDATES_HZ for h in range(1, 6) if lo - bw < h * f0 < hi + bw
    )
    bands, start = [], lo
    for f in edges:
        if f - bw > start:
            bands.append((start, f - bw))
        start = max(start, f + bw)
    if hi > start:
        bands.append((start, hi))
    p_hf = band_power(spec, bands)
    p_eeg = band_power(spec, [settings.eeg_band_hz])
    ratio = np.sqrt(p_hf / np.maximum(p_eeg, 1e-12))
    width = sum(b - a_ for a_, b in bands)
    hf_uv = np.sqrt(p_hf * (50.0 / max(width, 1e-9)))
    z = robust_z(ratio, ctx.valid)
    flag = ((z > a.muscle_z) & (ratio >= a.muscle_z_min_ratio)) | (ratio >= a.muscle_ratio_check)
    flag &= hf_uv >= a.muscle_min_uv
    level = np.where(flag & ctx.valid, CHECK, GOOD).astype(np.int8)
    reasons = {
        int(i): (
            f"muscle activity: {hf_uv[i]:.0f} µV above {lo:.0f} Hz, {ratio[i]:.1f}× the EEG band's"
            " — ask the patient to relax jaw and forehead; check the electrode is not on a muscle"
        )
        for i in np.flatnonzero(level)
    }
    return CheckResult("muscle", {"muscle_ratio": ratio, "muscle_uv": hf_uv, "muscle_z": z}, level, reasons)


def amplitude(stats: WindowStats, ctx: Context, settings: QualitySettings) -> CheckResult:
    a = settings.artifacts
    rms = stats.rms_uv
    level = levels_from(rms, a.rms_check_uv, a.rms_bad_uv, rule="amplitude.rms", margins=ctx.margins)
    z = robust_z(rms, ctx.valid)
    deviant = (z > a.deviation_z) & (rms >= a.deviation_min_rms_uv)
    level[deviant & (level == GOOD)] = CHECK
    level[~ctx.scalp] = GOOD
    reasons = {}
    for i in np.flatnonzero(level):
        what = "very high" if level[i] == BAD else "high"
        reasons[int(i)] = (
            f"{what} amplitude: {rms[i]:.0f} µV RMS — poor contact? re-seat or re-prepare the electrode"
        )
    return CheckResult("amplitude", {"rms_uv": rms, "amplitude_z": z}, level, reasons)


_REFERENCE_FIRST = "check the reference electrode first (contact, gel)"
POPS = Check(
    "pops", "stats", lambda i, ctx, s: pops(i.stats, ctx, s), headline="pops", settings="artifacts",
    shared=Shared("reference", "pops", _REFERENCE_FIRST, "covariance"), faults=("pop",),
)
CLIPPING = Check(
    "clipping", "stats", lambda i, ctx, s: clipping(i.stats, ctx, s), headline="clip_fraction",
    settings="artifacts", faults=("clipping",),
)
MUSCLE = Check(
    "muscle", "spectrum", lambda i, ctx, s: muscle(i.spectrum, ctx, s), headline="muscle_ratio",
    settings="artifacts", faults=("muscle",),
)
AMPLITUDE = Check(
    "amplitude", "stats", lambda i, ctx, s: amplitude(i.stats, ctx, s), headline="rms_uv", settings="artifacts",
    shared=Shared("reference", "high amplitude", _REFERENCE_FIRST, "covariance"), faults=("drift",),
)
