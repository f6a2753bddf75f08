"""The analysis copy: the stream band-limited and decimated to one analysis rate.

Time-domain checks (flat, drift, pops, amplitude) and the covariance behind
bridging and the reference see this copy, so their verdicts and their cost do not
depend on the amplifier's sampling rate: a dead input at 16 kHz carries 80 times
the white-noise bandwidth of one at 200 Hz, but the same noise in the analysis
band. The band is 0 to ``band_hz`` (100 Hz: the band in which the IFCN digital
standard, Nuwer et al. 1998, limits amplifier noise to 1.5 µV peak-to-peak).

Low-pass: a linear-phase FIR (``scipy.signal.firwin``, Hamming window, about
53 dB stop-band attenuation; length 3.8·fs/transition, a little over the Hamming rule of thumb 3.3·fs/Δf
in Oppenheim & Schafer, Discrete-Time Signal Processing, table 7.2). The pass
band ends at ``band_hz``; the stop band starts where an alias would fold back
into the pass band (the output rate minus ``band_hz``), at the input's own
Nyquist frequency or at 1.5·``band_hz``, whichever is lowest (so the band is
nearly the same at every rate). Decimation by the integer
q = ⌊rate / target_rate⌋, so the analysis rate lies in [target, 2·target).
Only the outputs that are kept are computed, from the new samples and a short
tail of the previous ones (one batched matrix product per update).

A stream whose Nyquist frequency is at or below ``band_hz`` is already band
limited by its amplifier: it is passed through unchanged (q = 1).

The engine runs two of these in cascade. First the *spectrum's copy*: pass band to
``spectrum_max_hz`` (190 Hz: the third harmonic of 60 Hz), decimated to at least
``analysis.spectrum_rate_hz`` (500 Hz), passed through where no decimation is needed;
the spectrum (mains and harmonics, the muscle band) is taken from it, so a 2-kHz
stream costs a 512-point FFT per channel and segment, not a 2048-point one. Then the
analysis copy, from the spectrum's copy (the same pass band to 100 Hz as from the
stream itself: the first stage is flat there).

Sample arrays are (n_samples, n_channels) in µV.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.lib.stride_tricks import as_strided
from scipy.signal import firwin

#: Outputs computed per banded-matrix product (8: the quickest measured at 256 ch ×
#: 2048 Hz, 2.5 times the speed of one sliding-window einsum; bench/README.md).
CHUNK = 8


def design(rate_hz: float, target_rate_hz: float, band_hz: float,
           filter_undecimated: bool = True) -> tuple[int, np.ndarray | None]:
    """(q, taps) of the analysis filter for this input rate; taps None = pass through.
    filter_undecimated False (the spectrum's copy: the spectrum selects its own bands,
    aliasing is all it must be spared): a stream that need not be decimated (q = 1)
    passes through, and the transition band may be as wide as aliasing allows."""
    if rate_hz / 2.0 <= band_hz:
        return 1, None
    q = max(1, int(rate_hz // target_rate_hz))
    if q == 1 and not filter_undecimated:
        return 1, None
    out_rate = rate_hz / q
    # At most half an octave of transition, so the band is about the same at every rate
    # (the spectrum's copy: what lies above the band is never read).
    stop_hz = min(out_rate - band_hz, rate_hz / 2.0, 1.5 * band_hz if filter_undecimated else math.inf)
    transition = stop_hz - band_hz
    if transition <= 0:  # the target leaves no room above the band: keep the input rate
        if not filter_undecimated:
            return 1, None
        q, stop_hz = 1, rate_hz / 2.0
        transition = stop_hz - band_hz
    # 3.3·fs/Δf is the Hamming window's transition width; 3.8 leaves the stop band
    # edge itself at least 53 dB down. Odd length: a whole-sample delay.
    numtaps = int(math.ceil(3.8 * rate_hz / transition)) | 1
    taps = firwin(numtaps, (band_hz + stop_hz) / 2.0, fs=rate_hz, window="hamming")
    return q, np.asarray(taps, dtype=np.float64)


class AnalysisCopy:
    """Incremental FIR low-pass and decimation of (n, C) µV blocks (see module docstring).

    ``add(x)`` takes new samples and returns the analysis samples that became
    complete (m, C); over a whole stream the k-th output is
    ``scipy.signal.lfilter(taps, 1, x)[k·q + len(taps) − 1]``, the filter's fully
    overlapped outputs, every q-th (``tests/checks/test_analysis.py``). ``delay_s``
    is the filter's group delay.
    """

    def __init__(self, n_channels: int, rate_hz: float, target_rate_hz: float, band_hz: float,
                 filter_undecimated: bool = True) -> None:
        self.n_channels = n_channels
        self.input_rate_hz = float(rate_hz)
        self.q, self.taps = design(rate_hz, target_rate_hz, band_hz, filter_undecimated)
        self.rate_hz = self.input_rate_hz / self.q
        self.band_hz = band_hz
        n_taps = 1 if self.taps is None else len(self.taps)
        self.delay_s = (n_taps - 1) / 2.0 / self.input_rate_hz
        self._buf = np.zeros((0, n_channels))
        # The banded matrix of one group of CHUNK outputs: row k holds the reversed taps
        # from column k·q (output k of the group is that row times the group's inputs).
        self._span = (CHUNK - 1) * self.q + n_taps
        self._band = np.zeros((CHUNK, self._span))
        if self.taps is not None:
            for k in range(CHUNK):
                self._band[k, k * self.q : k * self.q + n_taps] = self.taps[::-1]

    @property
    def passthrough(self) -> bool:
        return self.taps is None

    def reset(self) -> None:
        self._buf = np.zeros((0, self.n_channels))

    def add(self, x: np.ndarray) -> np.ndarray:
        """New samples (n, C) µV, finite → the completed analysis samples (m, C) µV."""
        if self.taps is None:
            return x
        taps, q = self.taps, self.q
        buf = np.concatenate((self._buf, x), axis=0) if len(self._buf) else x
        n_taps = len(taps)
        m = (buf.shape[0] - n_taps) // q + 1 if buf.shape[0] >= n_taps else 0
        if m <= 0:
            self._buf = buf.copy() if buf is x else buf
            return np.zeros((0, self.n_channels))
        buf = np.ascontiguousarray(buf)
        y = np.empty((m, self.n_channels))
        # Outputs in groups of CHUNK: each group is one product of the same banded matrix
        # (the reversed taps on every row, shifted by q) with its span of input rows, all
        # groups in one batched matmul over a strided view (no copy of the input).
        w, span = self._band, self._span
        nb = m // CHUNK
        if nb:
            step, row = buf.strides
            view = as_strided(buf, shape=(nb, span, self.n_channels),
                              strides=(CHUNK * q * step, step, row), writeable=False)
            y[: nb * CHUNK] = np.matmul(w, view).reshape(nb * CHUNK, self.n_channels)
        r = m - nb * CHUNK
        if r:
            start = nb * CHUNK * q
            y[nb * CHUNK :] = w[:r, : (r - 1) * q + n_taps] @ buf[start : start + (r - 1) * q + n_taps]
        self._buf = buf[m * q :].copy()
        return y
