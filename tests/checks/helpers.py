"""Synthetic EEG-like test signals (seeded), (n_samples, n_channels) in µV."""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from scipy.signal import butter, sosfilt

from bedside.checks.engine import Engine
from bedside.checks.settings import QualitySettings, load_quality
from bedside.stream.types import ChannelInfo

TEN_TWENTY = ("Fp1", "Fp2", "F7", "F3", "Fz", "F4", "F8", "T7", "C3", "Cz", "C4", "T8",
              "P7", "P3", "Pz", "P4", "P8", "O1", "O2")


def channels(names: Sequence[str], non_scalp: Sequence[str] = ()) -> list[ChannelInfo]:
    out = [ChannelInfo(n, n, "EEG", "uV", 1.0, True) for n in names]
    out += [ChannelInfo(n, n, "ECG", "uV", 1.0, False) for n in non_scalp]
    return out


def eeg_like(n: int, c: int, rate_hz: float, seed: int = 0, rms_uv: float = 15.0) -> np.ndarray:
    """Band-limited (1–30 Hz, 2nd-order Butterworth) noise, ~rms_uv per channel, shared
    between channels next to each other in stream order as scalp EEG is shared between
    neighbouring electrodes (each channel is the sum of five neighbouring sources on a
    ring: correlation 4/5 with the next channel, 3/5 with the one after; real EEG's
    strongest correlation with another lead is about 0.95, tests/data recordings).
    Independent channels would look like leads carrying no EEG (PREP's correlation
    criterion, Bigdely-Shamlo 2015)."""
    rng = np.random.default_rng(seed)
    sos = butter(2, [1.0, 30.0], btype="bandpass", fs=rate_hz, output="sos")
    s = sosfilt(sos, rng.normal(size=(n + int(rate_hz), c)), axis=0)[int(rate_hz):]
    x = sum(np.roll(s, k, axis=1) for k in (-2, -1, 0, 1, 2)) if c >= 5 else s
    return x / x.std(axis=0) * rms_uv + rng.normal(0, 0.5, size=(n, c))


def feed(engine: Engine, x: np.ndarray, chunk: int | None = None, t0_s: float = 0.0) -> list:
    """Push x in update-sized chunks, evaluating after each; returns the frames."""
    rate = engine.rate_hz
    chunk = chunk or int(round(rate / engine.settings.update_hz))
    frames = []
    for k in range(0, x.shape[0], chunk):
        part = x[k : k + chunk]
        engine.push(part, t0_s + (k + np.arange(part.shape[0])) / rate)
        frames.append(engine.evaluate())
    return frames


def make_engine(names: Sequence[str] = TEN_TWENTY, rate_hz: float = 256.0,
                settings: QualitySettings | None = None, **kw: object) -> Engine:
    return Engine(settings or load_quality(), channels(names, kw.pop("non_scalp", ())),  # type: ignore[arg-type]
                  rate_hz, **kw)  # type: ignore[arg-type]


def by_name(frame: object, name: str):  # type: ignore[no-untyped-def]
    return next(c for c in frame.channels if c.name == name)  # type: ignore[attr-defined]


def _fir_copy(stage: object, x: np.ndarray) -> np.ndarray:
    from scipy.signal import lfilter

    taps, q = stage.taps, stage.q  # type: ignore[attr-defined]
    if taps is None:
        return np.asarray(x, dtype=float)
    y = lfilter(taps, [1.0], np.asarray(x, dtype=float), axis=0)
    return np.asarray(y[len(taps) - 1 :: q])


def spectral_copy(engine: Engine, x: np.ndarray) -> np.ndarray:
    """The engine's spectrum's copy of the raw samples x (n, C), computed with SciPy as
    the outside reference: ``scipy.signal.lfilter`` with the engine's FIR taps, the fully
    overlapped outputs only, every q-th (the samples the engine's spectrum is taken of)."""
    return _fir_copy(engine.spectral_copy, x)


def analysis_copy(engine: Engine, x: np.ndarray) -> np.ndarray:
    """The engine's analysis copy of the raw samples x (n, C), computed with SciPy as the
    outside reference: the spectrum's copy (above), then ``scipy.signal.lfilter`` with the
    analysis FIR's taps, the fully overlapped outputs only, every q-th (index k = the
    engine's k-th analysis sample)."""
    return _fir_copy(engine.analysis, spectral_copy(engine, x))
