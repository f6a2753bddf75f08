"""The analysis copy (bedside/checks/analysis.py) against SciPy.

Outside references: scipy.signal.lfilter for the outputs (the incremental copy must
equal the filter applied to the whole stream, however the samples arrive) and
scipy.signal.freqz for the response; the band edge is the IFCN amplifier-noise band,
0.5–100 Hz (Nuwer et al. 1998).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.signal import freqz, lfilter

from bedside.checks.analysis import AnalysisCopy

RATES = (250.0, 500.0, 600.615, 1000.0, 2048.0, 5000.0, 16384.0)


@pytest.mark.parametrize("rate", RATES)
def test_incremental_outputs_equal_lfilter_on_the_whole_stream(rate: float) -> None:
    rng = np.random.default_rng(int(rate))
    n = int(3 * rate)
    x = rng.normal(size=(n, 3)) * 10.0 + np.array([0.0, 5000.0, -20000.0])  # DC offsets
    a = AnalysisCopy(3, rate, 250.0, 100.0)
    sizes = rng.integers(1, int(rate / 4) + 2, size=10_000)
    out, pos = [], 0
    for k in sizes:  # chunks of every size, never aligned with q or the taps
        out.append(a.add(x[pos : pos + int(k)]))
        pos += int(k)
        if pos >= n:
            break
    y = np.concatenate(out, axis=0)
    assert a.taps is not None
    ref = lfilter(a.taps, [1.0], x, axis=0)[len(a.taps) - 1 :: a.q]
    assert y.shape[0] == ref.shape[0]
    np.testing.assert_allclose(y, ref, rtol=1e-9, atol=1e-9 * 20000.0)
    assert 250.0 <= a.rate_hz < 500.0  # integer decimation to [target, 2·target)


@pytest.mark.parametrize("rate", RATES)
def test_response_passes_the_eeg_band_and_stops_what_would_alias(rate: float) -> None:
    a = AnalysisCopy(1, rate, 250.0, 100.0)
    assert a.taps is not None
    freqs = np.array([1.0, 10.0, 50.0, 60.0, 90.0])
    _w, h = freqz(a.taps, worN=freqs, fs=rate)
    np.testing.assert_allclose(20 * np.log10(np.abs(h)), 0.0, atol=0.1)  # flat within 0.1 dB
    # Everything that would fold into 0–100 Hz at the output rate is at least 50 dB down
    # (Hamming window: about 53 dB, Oppenheim & Schafer table 7.2); without decimation
    # nothing folds, and the low-pass only ends the band by Nyquist.
    stop = min(a.rate_hz - 100.0, rate / 2, 150.0)
    probe = np.linspace(stop, rate / 2, 2000)
    _w, hs = freqz(a.taps, worN=probe, fs=rate)
    assert 20 * np.log10(np.abs(hs).max()) < (-50.0 if a.q > 1 else -30.0)


def test_a_band_limited_stream_passes_unchanged() -> None:
    """160 Hz (EEGMMIDB's rate): its Nyquist frequency is below the analysis band's edge."""
    a = AnalysisCopy(2, 160.0, 250.0, 100.0)
    x = np.arange(20.0).reshape(10, 2)
    assert a.passthrough and a.q == 1 and a.rate_hz == 160.0
    np.testing.assert_array_equal(a.add(x), x)


def test_white_noise_has_the_same_in_band_amplitude_at_every_rate() -> None:
    """An input with only amplifier noise: white noise of one density (µV/√Hz) carries
    80 times the bandwidth at 16 kHz as at 200 Hz, but the same noise in 0–100 Hz."""
    density = 0.025  # µV/√Hz: 0.25 µV RMS over 100 Hz, inside the IFCN 1.5 µV p-p limit
    rms = []
    for rate in RATES:
        rng = np.random.default_rng(7)
        x = rng.normal(scale=density * np.sqrt(rate / 2), size=(int(8 * rate), 1))
        a = AnalysisCopy(1, rate, 250.0, 100.0)
        rms.append(float(a.add(x).std()))
    in_band = density * np.sqrt(100.0)
    # The transition band (100 to at most 150 Hz) adds a little: within 15 % of the
    # 0–100 Hz figure, and within 10 % of each other.
    np.testing.assert_allclose(rms, in_band, rtol=0.15)
    assert max(rms) / min(rms) < 1.10
