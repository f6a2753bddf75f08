"""Line noise: the mains amplitude on each lead, against the other leads and the EEG band.

Three rules, each judged per lead (the worst wins):

* absolute: mains_uv, the amplitude of the sine at the mains frequency above the
  spectrum's local background, √(2·(P(f0 ± bw) − background)), the background
  being the flanks' power per bin. Broadband EEG or muscle near 50/60 Hz is not
  mains. Thresholds in µV (ours, see configs/quality.yaml) — a lead with large EEG
  can no longer hide large mains;
* imbalance: mains_uv against the median lead's. Mains couples into every lead in
  proportion to its electrode's impedance mismatch (Huhta & Webster 1973), so one
  lead far above the median points to that electrode's contact;
* ratio (ours; a dB ratio as commonly used): line_noise_db = 10·log10(P_mains /
  P_eeg) over the fundamental and its harmonics below Nyquist, counted only when
  the mains itself is at least ``ratio_min_uv`` (a lead with no EEG and a trace of
  mains is a lead with no EEG: the flat and correlation checks speak for it).

mains_peak_db = fundamental over its flanks. Mains detection: the stronger of
50/60 Hz over its flanks in the spectrum summed over the channels (power-weighted,
so one lead carrying mains is enough), when it stands ≥ detect_prominence_db out
(approach of zapline-plus, Klug & Kloosterman 2022).
"""

from __future__ import annotations

import numpy as np

from bedside.checks.base import GOOD, Check, CheckResult, Context, Shared, levels_from
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
    return families(spec, (f0,), settings)[0]


def families(spec: Spectrum, f0s: tuple[float, ...], settings: QualitySettings) -> list[dict[str, np.ndarray]]:
    """family_metrics for each mains frequency in f0s, their bands summed in one pass
    over the spectrum (one product with one band table)."""
    ln = settings.line_noise
    nyq = spec.nyquist
    n_ch = spec.psd_uv2_per_hz.shape[1]
    layout: list[tuple[int, int] | None] = []  # per f0: (first column, harmonics) or None
    table: list[tuple[float, float]] = []
    for f0 in f0s:
        bands = mains_bands(f0, ln.bandwidth_hz, ln.harmonics, nyq)
        if not bands:
            layout.append(None)
            continue
        layout.append((len(table), len(bands)))
        table.extend((*bands, settings.eeg_band_hz, *flank_bands(f0, ln.bandwidth_hz)))
    if table:
        bands_t = tuple(table)
        p_all = spec.band_powers(bands_t)  # (C, all families' bands)
        i0, i1 = band_index(len(spec.freqs_hz), spec.df_hz, bands_t)
        bins_all = i1 - i0
    out = []
    for place in layout:
        if place is None:
            nan = np.full(n_ch, np.nan)
            out.append({"line_noise_db": nan, "mains_uv": nan, "mains_peak_db": nan.copy()})
            continue
        first, nh = place
        p = p_all[:, first : first + nh + 3]  # harmonics, the EEG band, two flanks
        bins = bins_all[first : first + nh + 3]
        n_fund = max(int(bins[0]), 1)
        n_flank = max(int(bins[nh + 1 :].sum()), 1)
        p_mains = p[:, :nh].sum(axis=1)
        p_fund = p[:, 0]
        p_eeg = p[:, nh]
        p_flank = p[:, nh + 1 :].sum(axis=1)
        p_line = np.maximum(p_fund - p_flank * (n_fund / n_flank), 0.0)
        out.append({
            "line_noise_db": 10 * np.log10((p_mains + _TINY) / (p_eeg + _TINY)),
            "mains_uv": np.sqrt(2.0 * p_line),
            "mains_peak_db": 10 * np.log10((p_fund / n_fund + _TINY) / (p_flank / n_flank + _TINY)),
        })
    return out


def detect_mains(spec: Spectrum, settings: QualitySettings, mask: np.ndarray) -> float | None:
    """50 or 60 when its peak stands out of the spectrum summed over the channels in
    ``mask`` (power-weighted: one loose electrode is enough to tell); else None."""
    if not mask.any():
        return None
    summed = Spectrum(spec.freqs_hz, (spec.psd_uv2_per_hz @ mask.astype(float))[:, None],
                      spec.n_segments, spec.span, spec.nyquist)
    best, best_db = None, settings.line_noise.detect_prominence_db
    for f0, m in zip(MAINS_CANDIDATES_HZ, families(summed, MAINS_CANDIDATES_HZ, settings), strict=True):
        db = float(m["mains_peak_db"][0])
        if np.isfinite(db) and db >= best_db:
            best, best_db = f0, db
    return best


def _metrics(spec: Spectrum, ctx: Context, settings: QualitySettings) -> tuple[dict[str, np.ndarray], np.ndarray]:
    """The family metrics at the mains in use (or, not known yet, the worse family per
    channel), mains_uv zeroed where no line stands out of its flanks; and f0 per channel."""
    ln = settings.line_noise
    if ctx.mains_hz is not None:
        m = family_metrics(spec, ctx.mains_hz, settings)
        f0s = np.full(len(ctx.names), ctx.mains_hz)
    else:
        m50, m60 = families(spec, (50.0, 60.0), settings)
        a50, a60 = m50["mains_uv"], m60["mains_uv"]
        use60 = (a60 > a50) | (np.isnan(a50) & ~np.isnan(a60))  # NaN counts as the lower
        m = {k: np.where(use60, m60[k], m50[k]) for k in m50}
        f0s = np.where(use60, 60.0, 50.0)
    # A line must stand out of its flanks to be mains (broadband EEG or muscle near
    # 50/60 Hz, estimated from a few segments, is not).
    m["mains_uv"] = np.where(m["mains_peak_db"] >= ln.line_min_peak_db, m["mains_uv"], 0.0)
    return m, f0s


def evaluate(recent: Spectrum, ctx: Context, settings: QualitySettings,
             window: Spectrum | None = None) -> CheckResult:
    """recent: the newest segments (absolute amplitude and ratio react within ~2 s);
    window: the whole window's spectrum for the comparison with the median lead (a
    steadier estimate for a subtler finding; default: recent)."""
    ln = settings.line_noise
    m, f0s = _metrics(recent, ctx, settings)
    amp, db = m["mains_uv"], m["line_noise_db"]
    steady = _metrics(window, ctx, settings)[0]["mains_uv"] if window is not None else amp
    valid = ctx.valid & np.isfinite(steady)
    median = float(np.median(steady[valid])) if valid.any() else float("nan")
    with np.errstate(invalid="ignore", divide="ignore"):
        vs_median = steady / max(median, ln.median_floor_uv)
    big_enough = levels_from(steady, ln.imbalance_min_uv, np.inf, rule="line_noise.imbalance_uv", margins=ctx.margins)
    far = levels_from(vs_median, ln.imbalance_ratio, np.inf, rule="line_noise.imbalance", margins=ctx.margins)
    imbalance = np.minimum(big_enough, far).astype(np.int8)
    absolute = levels_from(amp, ln.check_uv, ln.bad_uv, rule="line_noise.absolute", margins=ctx.margins)
    ratio = levels_from(db, ln.check_db, ln.bad_db, rule="line_noise.ratio", margins=ctx.margins, db=True)
    ratio[amp < ln.ratio_min_uv] = GOOD
    level = np.maximum(np.maximum(absolute, imbalance), ratio).astype(np.int8)
    level[~ctx.valid] = GOOD  # flat or broken channels: no mains to speak of
    reasons = {}
    for i in np.flatnonzero(level):
        parts = [f"mains {max(amp[i], steady[i]):.1f} µV at {f0s[i]:.0f} Hz"]
        if imbalance[i]:
            parts.append(
                f"{vs_median[i]:.0f}× the median lead's {median:.1f} µV over {window_word(window)}:"
                " this electrode's contact differs"
            )
        if ratio[i]:
            parts.append(f"{db[i]:.0f} dB over its EEG band")
        reasons[int(i)] = (
            "; ".join(parts) + " — re-seat or re-prepare the electrode; keep mains cables away from the leads"
        )
    metrics = dict(m)
    metrics["mains_vs_median"] = vs_median
    return CheckResult(NAME, metrics, level, reasons)


def window_word(spec: Spectrum | None) -> str:
    """'the last 4 s' for a reason (the span the spectrum covers)."""
    if spec is None or spec.nyquist <= 0:
        return "the window"
    return f"the last {spec.span[1] / (2.0 * spec.nyquist):.0f} s"


ENTRY = Check(
    NAME, "spectrum", lambda i, ctx, s: evaluate(i.recent, ctx, s, i.spectrum), headline="mains_uv",
    settings="line_noise",
    shared=Shared(
        "ground", "mains noise",
        "check the ground (and reference) electrode first; move mains cables and chargers away", "mains_phasors",
    ),
    faults=("line_noise",),
)
