"""Line noise: mains power (fundamental and harmonics) against the EEG band.

Metric (ours; a dB ratio as commonly used): line_noise_db =
10·log10(P_mains / P_eeg), P_mains the power within ±bandwidth of the mains
frequency and its harmonics below Nyquist, P_eeg the power in the EEG band;
mains_uv = amplitude of a sine carrying the power at the fundamental,
√(2·P(f0 ± bw)); mains_peak_db = fundamental over its flanks. Mains detection:
the stronger of 50/60 Hz over its flanks in the spectrum summed over the channels,
when it stands ≥ detect_prominence_db out (approach of zapline-plus, Klug & Kloosterman 2022).
"""

from __future__ import annotations

import numpy as np

from bedside.checks.base import GOOD, CheckResult, Context, levels_from
from bedside.checks.settings import QualitySettings
from bedside.checks.spectrum import Spectrum, band_index

NAME = "line_noise"
MAINS_CANDIDATES_HZ = (50.0, 60.0)
_TINY = 1e-12


def mains_bands(f0: float, bw: float, harmonics: int, nyquist: float) -> list[tuple[float, float]]:
    """[f0±bw, 2f0±bw, …] for the harmonics whose band lies below Nyquist."""
    return [(h * f0 - bw, h * f0 + bw) for h in range(1, harmonics + 1) if h * f0 + bw < nyquist]


def flank_bands(f0: float, bw: float) -> list[tuple[float, float]]:
    """Flanks either side of the fundamental's band (2 Hz wide, 1 Hz clear of it)."""
    return [(f0 - bw - 3.0, f0 - bw - 1.0), (f0 + bw + 1.0, f0 + bw + 3.0)]


def band_power(spec: Spectrum, bands: list[tuple[float, float]]) -> np.ndarray:
    """Summed power over ``bands`` (assumed not to overlap), µV², per channel (C,)."""
    if not bands:
        return np.zeros(spec.psd_uv2_per_hz.shape[1])
    return np.asarray(spec.band_powers(tuple(bands)).sum(axis=1))


def family_metrics(spec: Spectrum, f0: float, settings: QualitySettings) -> dict[str, np.ndarray]:
    """line_noise_db, mains_uv, mains_peak_db for mains frequency f0 (per channel)."""
    ln = settings.line_noise
    nyq = spec.nyquist
    bands = mains_bands(f0, ln.bandwidth_hz, ln.harmonics, nyq)
    n_ch = spec.psd_uv2_per_hz.shape[1]
    if not bands:
        nan = np.full(n_ch, np.nan)
        return {"line_noise_db": nan, "mains_uv": nan, "mains_peak_db": nan.copy()}
    flanks = flank_bands(f0, ln.bandwidth_hz)
    table: tuple[tuple[float, float], ...] = (*bands, settings.eeg_band_hz, *flanks)
    p = spec.band_powers(table)  # (C, harmonics + 1 + 2)
    nh = len(bands)
    i0, i1 = band_index(len(spec.freqs_hz), spec.df_hz, table)
    bins = i1 - i0
    n_fund = max(int(bins[0]), 1)
    n_flank = max(int(bins[nh + 1 :].sum()), 1)
    p_mains = p[:, :nh].sum(axis=1)
    p_fund = p[:, 0]
    p_eeg = p[:, nh]
    p_flank = p[:, nh + 1 :].sum(axis=1)
    return {
        "line_noise_db": 10 * np.log10((p_mains + _TINY) / (p_eeg + _TINY)),
        "mains_uv": np.sqrt(2.0 * p_fund),
        "mains_peak_db": 10 * np.log10((p_fund / n_fund + _TINY) / (p_flank / n_flank + _TINY)),
    }


def detect_mains(spec: Spectrum, settings: QualitySettings, mask: np.ndarray) -> float | None:
    """50 or 60 when its peak stands out of the spectrum summed over the channels in
    ``mask`` (power-weighted: one loose electrode is enough to tell); else None."""
    if not mask.any():
        return None
    summed = Spectrum(spec.freqs_hz, (spec.psd_uv2_per_hz @ mask.astype(float))[:, None],
                      spec.n_segments, spec.span, spec.nyquist)
    best, best_db = None, settings.line_noise.detect_prominence_db
    for f0 in MAINS_CANDIDATES_HZ:
        db = float(family_metrics(summed, f0, settings)["mains_peak_db"][0])
        if np.isfinite(db) and db >= best_db:
            best, best_db = f0, db
    return best


def evaluate(spec: Spectrum, ctx: Context, settings: QualitySettings) -> CheckResult:
    ln = settings.line_noise
    if ctx.mains_hz is not None:
        m = family_metrics(spec, ctx.mains_hz, settings)
        f0s = np.full(len(ctx.names), ctx.mains_hz)
    else:
        # Mains not known yet: judge each channel by the worse of the two families.
        m50 = family_metrics(spec, 50.0, settings)
        m60 = family_metrics(spec, 60.0, settings)
        d50, d60 = m50["line_noise_db"], m60["line_noise_db"]
        use60 = (d60 > d50) | (np.isnan(d50) & ~np.isnan(d60))  # NaN counts as the lower
        m = {k: np.where(use60, m60[k], m50[k]) for k in m50}
        f0s = np.where(use60, 60.0, 50.0)
    db = m["line_noise_db"]
    level = levels_from(db, ln.check_db, ln.bad_db)
    level[~ctx.valid] = GOOD  # flat or broken channels: no ratio to speak of
    reasons = {
        int(i): (
            f"mains {db[i]:.0f} dB over EEG band ({m['mains_uv'][i]:.1f} µV at {f0s[i]:.0f} Hz)"
            " — re-seat or re-prepare the electrode; keep mains cables away from the leads"
        )
        for i in np.flatnonzero(level)
    }
    return CheckResult(NAME, m, level, reasons)
