"""The same physical signal at 250 Hz … 16 kHz gets the same verdicts.

One signal, described in continuous time and sampled at each rate: MNE-Python's sample EEG
(Gramfort et al. 2014; 600 Hz, 0.1–172 Hz) resampled with scipy.signal.resample_poly as
the background, amplifier noise of one density inside the IFCN limit (0.025 µV/√Hz: 0.25
µV RMS over 0.5–100 Hz, under 1.5 µV p-p; Nuwer et al. 1998) at every rate, and one fault
of each kind on its own lead. The engine's time-domain checks see the analysis copy, the
same at every rate; the spectrum checks see their own bands. Faults:
lead off (amplifier noise only), mains (40 µV, 60 Hz), drift (200 µV/s), pops (200 µV,
3-ms rise, 0.3-s decay, every 2.5 s), muscle (EMG-like noise 30–150 Hz, 40 µV RMS; surface EMG spans
roughly 20–150 Hz and beyond, common practice), flat tops (the top 15 % cut by a limit).
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np
import pytest
import real_eeg
from scipy.signal import butter, resample_poly, sosfiltfilt

from .real_run import make_engine, run

RATES = (250.0, 500.0, 1000.0, 2048.0, 5000.0, 16384.0)
SECONDS = 14.0
ONSET_S = 6.0
FAULTS = {  # lead index → (fault, the check that must speak)
    0: ("lead_off", "flat"),
    4: ("mains", "line_noise"),
    8: ("drift", "drift"),
    12: ("pop", "pops"),
    16: ("muscle", "muscle"),
    19: ("flat_top", "clipping"),
}
N_LEADS = 22


def _resample(x: np.ndarray, rate_in: float, rate_out: float) -> np.ndarray:
    ratio = Fraction(rate_out / rate_in).limit_denominator(2000)
    return np.asarray(resample_poly(x, ratio.numerator, ratio.denominator, axis=0))


def _emg(seconds: float) -> np.ndarray:
    """One EMG-like burst signal at 16384 Hz (resampled to each rate): 30–150 Hz noise."""
    fs = 16384.0
    rng = np.random.default_rng(11)
    sos = butter(4, [30.0, 150.0], btype="bandpass", fs=fs, output="sos")
    e = sosfiltfilt(sos, rng.normal(size=int(seconds * fs)))
    return e / e.std() * 40.0


def _signal(rate: float) -> tuple[real_eeg.Recording, np.ndarray]:
    rec = real_eeg.mne_sample().pick("EEG")
    keep = [i for i in range(rec.data_uv.shape[1]) if rec.labels[i] != "EEG 053"][:N_LEADS]
    src = rec.data_uv[: int(SECONDS * rec.rate_hz) + 2, keep]
    x = _resample(src, rec.rate_hz, rate)[: int(SECONDS * rate)]
    n = x.shape[0]
    t = np.arange(n) / rate
    on = t >= ONSET_S
    tau = np.where(on, t - ONSET_S, 0.0)
    rng = np.random.default_rng(int(rate))
    x = x + rng.normal(scale=0.025 * np.sqrt(rate / 2), size=x.shape)  # amplifier noise
    x[on, 0] = rng.normal(scale=0.025 * np.sqrt(rate / 2), size=int(on.sum()))
    x[:, 4] += np.where(on, 40.0 * np.sin(2 * np.pi * 60.0 * t), 0.0)
    x[:, 8] += 200.0 * tau
    for start in np.arange(ONSET_S, SECONDS, 2.5):  # a loose electrode pops again and again
        d = np.where(t >= start, t - start, 0.0)
        rise = np.clip(d / 0.003, 0.0, 1.0)
        x[:, 12] += np.where(t >= start, 200.0 * rise * np.exp(-np.maximum(d - 0.003, 0.0) / 0.3), 0.0)
    emg = _resample(_emg(SECONDS + 0.1), 16384.0, rate)[:n] if rate != 16384.0 else _emg(SECONDS + 0.1)[:n]
    x[:, 16] += np.where(on, emg, 0.0)
    hi = np.percentile(x[on, 19], 85)
    x[on, 19] = np.minimum(x[on, 19], hi)
    sub = real_eeg.Recording(rec.name, x, tuple(rec.labels[i] for i in keep), ("EEG",) * len(keep),
                             rate, None, rec.positions_m)
    return sub, x


def _verdicts(rate: float) -> dict[tuple[str, str], str]:
    """(lead, check) → the level shown most often over the last 4 s (not good only)."""
    sub, x = _signal(rate)
    r = run(make_engine(sub), x)
    tail = [f for t, f in r.judged() if t > SECONDS - 4.0]
    out: dict[tuple[str, str], str] = {}
    for i, name in enumerate(r.names):
        for check in tail[0].channels[i].checks:
            levels = [f.channels[i].checks[check] for f in tail]
            top = max(set(levels), key=levels.count)
            if top != "good":
                out[(name, check)] = top
    return out


@pytest.fixture(scope="module")
def by_rate() -> dict[float, dict[tuple[str, str], str]]:
    return {rate: _verdicts(rate) for rate in RATES}


def test_every_fault_is_found_at_every_rate(by_rate) -> None:  # type: ignore[no-untyped-def]
    names = _signal(250.0)[0].labels
    for rate, verdicts in by_rate.items():
        for lead, (fault, check) in FAULTS.items():
            assert (names[lead], check) in verdicts, (rate, fault, sorted(verdicts))


def test_the_verdicts_agree_across_rates(by_rate) -> None:  # type: ignore[no-untyped-def]
    reference = by_rate[RATES[0]]
    for rate, verdicts in by_rate.items():
        assert verdicts == reference, (rate, sorted(set(verdicts.items()) ^ set(reference.items())))
