"""The shared spectrum and the line-noise metric, against scipy.signal.welch.

Outside reference: SciPy's Welch PSD (scipy.signal.welch, Welch 1967) with the same
segment length and 50 % overlap on exactly the samples our segments cover; and the
power of a sine (A²/2) for the mains amplitude.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.signal import welch

from bedside.checks import line_noise
from bedside.checks.settings import load_quality
from bedside.checks.spectrum import Spectrum

from .helpers import feed, make_engine, spectral_copy

RATE = 256.0


def _signal(seconds: float, seed: int = 1) -> tuple[np.ndarray, np.ndarray]:
    rng = np.random.default_rng(seed)
    n = int(seconds * RATE)
    t = np.arange(n) / RATE
    x = rng.normal(0, 5.0, size=(n, 4))
    x[:, 0] += 20.0 * np.sin(2 * np.pi * 50.0 * t)  # mains on channel 0
    x[:, 1] += 30.0 * np.sin(2 * np.pi * 10.0 * t)  # alpha-like sine on channel 1
    x[:, 2] += 15.0 * np.sin(2 * np.pi * 60.0 * t + 0.3)
    return x, t


@pytest.mark.parametrize("seconds", [6.0, 9.25, 20.0])
def test_streaming_psd_equals_scipy_welch(seconds: float) -> None:
    """PSD of the window == scipy.signal.welch(hann, nperseg = 1 s, 50 % overlap, density)."""
    x, _ = _signal(seconds)
    eng = make_engine(["Fz", "Cz", "Pz", "Oz"])
    feed(eng, x, chunk=37)  # odd chunk size: blocks and segments must not care
    spec = eng.spectrum()
    assert spec is not None
    first, n = spec.span
    f_ref, p_ref = welch(x[first : first + n], fs=RATE, nperseg=int(RATE), noverlap=int(RATE) // 2, axis=0)
    np.testing.assert_allclose(spec.freqs_hz, f_ref)
    np.testing.assert_allclose(spec.psd_uv2_per_hz, p_ref, rtol=1e-9, atol=1e-12)


def test_line_noise_metrics_from_scipy_psd() -> None:
    """line_noise_db and mains_uv computed on SciPy's PSD give the same numbers as ours,
    and mains_uv recovers the sine's amplitude (power of a sine = A²/2)."""
    settings = load_quality()
    x, _ = _signal(8.0)
    f_ref, p_ref = welch(x, fs=RATE, nperseg=int(RATE), axis=0)
    spec_ref = Spectrum(f_ref, p_ref, 1, (0, len(x)))
    m = line_noise.family_metrics(spec_ref, 50.0, settings)
    assert m["mains_uv"][0] == pytest.approx(20.0, rel=0.05)
    # By hand from SciPy's PSD: bins 49–51, 99–101 (harmonic; 150 > Nyquist) vs 1–40 Hz.
    df = f_ref[1] - f_ref[0]
    sel = lambda lo, hi: (f_ref >= lo) & (f_ref <= hi)  # noqa: E731
    p_mains = p_ref[sel(49, 51) | sel(99, 101)].sum(axis=0) * df
    p_eeg = p_ref[sel(1, 40)].sum(axis=0) * df
    np.testing.assert_allclose(m["line_noise_db"], 10 * np.log10(p_mains / p_eeg), rtol=1e-6)
    # Channel 0 carries mains, channel 1 a 10-Hz sine: only channel 0 is over the EEG band.
    assert m["line_noise_db"][0] > 3.0
    assert m["line_noise_db"][1] < -20.0


def test_engine_flags_mains_channel_and_detects_50_hz() -> None:
    """Mains on most channels is detected as 50 Hz (peak over flanks ≥ 4 dB, after
    zapline-plus, Klug & Kloosterman 2022); a strong 50-Hz channel is bad, a 10-Hz one good."""
    rng = np.random.default_rng(3)
    n = int(8 * RATE)
    t = np.arange(n) / RATE
    names = ["Fp1", "Fp2", "F3", "F4", "C3", "C4", "P3", "P4"]
    x = rng.normal(0, 8.0, size=(n, len(names))) + 3.0 * np.sin(2 * np.pi * 50 * t)[:, None]
    x[:, 0] += 80.0 * np.sin(2 * np.pi * 50 * t)
    x[:, 1] += 40.0 * np.sin(2 * np.pi * 10 * t)
    eng = make_engine(names)
    frame = feed(eng, x)[-1]
    assert eng.mains_hz == 50.0
    levels = {c.name: c.checks["line_noise"] for c in frame.channels}
    assert levels["Fp1"] == "bad"
    assert levels["Fp2"] == "good"
    reason = next(c for c in frame.channels if c.name == "Fp1").reasons[0]
    assert "mains 8" in reason and "dB over its EEG band" in reason and "re-seat" in reason


def test_fast_rate_keeps_only_the_bins_the_checks_use() -> None:
    """At 1024 Hz the spectrum is taken of the spectrum's copy (decimated by 2 to 512 Hz,
    pass band to spectrum_max_hz) and kept to spectrum_max_hz; the kept bins equal
    scipy.signal.welch of that copy (computed with scipy.signal.lfilter, helpers), the
    Nyquist used for the harmonics is the copy's, and the 150-Hz harmonic is counted."""
    rate = 1024.0
    rng = np.random.default_rng(4)
    n = int(7 * rate)
    t = np.arange(n) / rate
    x = rng.normal(0, 5.0, size=(n, 3))
    x[:, 0] += 20.0 * np.sin(2 * np.pi * 150.0 * t)  # 3rd harmonic of 50 Hz
    eng = make_engine(["Fz", "Cz", "Pz"], rate_hz=rate)
    feed(eng, x)
    spec = eng.spectrum()
    assert spec is not None
    srate = eng.spectrum_rate_hz
    assert eng.spectral_copy.q == 2 and srate == rate / 2
    assert spec.freqs_hz[-1] <= load_quality().spectrum_max_hz < srate / 2
    assert spec.nyquist == srate / 2
    first, m = spec.span
    copy = spectral_copy(eng, x)
    _f, ref = welch(copy[first : first + m], fs=srate, nperseg=int(srate), axis=0)
    np.testing.assert_allclose(spec.psd_uv2_per_hz, ref[: len(spec.freqs_hz)], rtol=1e-9, atol=1e-12)
    m150 = line_noise.family_metrics(spec, 50.0, load_quality())
    assert m150["line_noise_db"][0] > m150["line_noise_db"][1] + 10  # the harmonic is counted
