"""The one spectrum per update that all checks share.

Welch's method (Welch 1967) as ``scipy.signal.welch`` computes it with its defaults
(periodic Hann window, constant detrend per segment, one-sided density, mean over
segments), made incremental: a segment of ``segment`` samples is transformed once,
when it completes (every ``hop`` = segment/2 samples), and its periodogram is kept
in a ring; the window's PSD is the mean of the periodograms in the ring, kept as a
running sum with a periodic exact re-sum.

Arrays: samples (n_samples, n_channels) µV; PSD (n_freqs, n_channels) µV²/Hz.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from scipy import fft as sp_fft
from scipy.signal import get_window


@dataclass(frozen=True)
class Spectrum:
    """PSD of the window. freqs_hz (F,); psd_uv2_per_hz (F, C); n_segments averaged;
    span: (first_sample, n_samples) of the stream the segments cover; nyquist_hz:
    half the rate (the bins may stop below it: only what the checks use is kept)."""

    freqs_hz: np.ndarray
    psd_uv2_per_hz: np.ndarray
    n_segments: int
    span: tuple[int, int]
    nyquist_hz: float = 0.0

    @property
    def nyquist(self) -> float:
        return self.nyquist_hz if self.nyquist_hz > 0 else float(self.freqs_hz[-1])

    @property
    def df_hz(self) -> float:
        return float(self.freqs_hz[1] - self.freqs_hz[0])

    def band_powers(self, bands: tuple[tuple[float, float], ...]) -> np.ndarray:
        """Power in µV² of each band (bins whose centre lies in [low, high]): (C, n_bands).

        One matrix product with the bands' 0/1 bin table (cached per grid and bands),
        so all bands of a check cost one pass over the spectrum."""
        table = band_table(len(self.freqs_hz), self.df_hz, bands)
        return np.asarray(self.psd_uv2_per_hz.T @ table) * self.df_hz

    def band_power(self, lo_hz: float, hi_hz: float) -> np.ndarray:
        """Power in µV² over the bins whose centre lies in [lo_hz, hi_hz], per channel (C,)."""
        return self.band_powers(((lo_hz, hi_hz),))[:, 0]


@lru_cache(maxsize=512)
def band_index(n_freqs: int, df_hz: float, bands: tuple[tuple[float, float], ...]) -> tuple[np.ndarray, np.ndarray]:
    """(first, end) bin indices of each band on the grid 0, df, 2·df … (cached: the grid
    and the bands stay the same for a whole session)."""
    f = np.arange(n_freqs) * df_hz
    lo = np.array([b[0] for b in bands], dtype=float)
    hi = np.array([b[1] for b in bands], dtype=float)
    i0 = np.searchsorted(f, lo - 1e-9, side="left")
    i1 = np.maximum(np.searchsorted(f, hi + 1e-9, side="right"), i0)
    return i0, i1


@lru_cache(maxsize=512)
def band_table(n_freqs: int, df_hz: float, bands: tuple[tuple[float, float], ...]) -> np.ndarray:
    """(n_freqs, n_bands) 0/1: bin k belongs to band b (read-only; cached like band_index)."""
    i0, i1 = band_index(n_freqs, df_hz, bands)
    table = np.zeros((n_freqs, len(bands)))
    for b, (lo, hi) in enumerate(zip(i0.tolist(), i1.tolist(), strict=True)):
        table[lo:hi, b] = 1.0
    table.flags.writeable = False
    return table


def periodogram_scale(window: np.ndarray, rate_hz: float) -> float:
    """Density scaling of scipy.signal.welch: 1 / (fs · Σw²)."""
    return 1.0 / (rate_hz * float(np.sum(window**2)))


#: Mains candidates whose complex spectrum is kept per segment (50 and 60 Hz).
PHASOR_HZ = (50.0, 60.0)

#: Channels transformed together, so the FFT's output and the work on it stay in cache
#: (128 × 257 complex bins, 0.5 MB, at the 512-point segment of a 2-kHz stream; measured
#: at 256 channels: 0.74 ms per segment against 1.0 ms in groups of 32).
_GROUP = 128


class SpectralAccumulator:
    """Streaming Welch PSD over the last ``n_segments`` segments (see module docstring)."""

    def __init__(self, n_channels: int, rate_hz: float, segment: int, n_segments: int,
                 refresh_segments: int, max_hz: float | None = None) -> None:
        self.segment, self.hop = segment, segment // 2
        self.rate_hz = rate_hz
        self.n_segments = n_segments
        self.refresh_segments = max(1, refresh_segments)
        self.window = get_window("hann", segment)
        self.scale = periodogram_scale(self.window, rate_hz)
        full = np.fft.rfftfreq(segment, 1.0 / rate_hz)
        keep = len(full) if max_hz is None else int(np.searchsorted(full, max_hz, side="right"))
        self._keep = max(2, min(keep, len(full)))
        self._has_nyquist_bin = self._keep == len(full) and segment % 2 == 0
        self.freqs_hz = full[: self._keep]
        f = self._keep
        # Channel-major segment buffer: two halves that take turns. All work
        # arrays are allocated once (fresh large arrays cost page faults every time).
        self._seg = np.zeros((n_channels, self.segment))
        self._tmp = np.zeros((n_channels, f))
        # Hann applied as a three-bin convolution of the plain segment's spectrum
        # (see _complete); needs the two halves to tile the segment (even length).
        self._freq_window = segment % 2 == 0 and segment >= 4
        if self._freq_window:
            self._side = np.zeros((n_channels, f), dtype=np.complex128)
        else:
            self._work = np.zeros((n_channels, self.segment))
            self._spec_c = np.zeros((n_channels, segment // 2 + 1), dtype=np.complex128)
        self._fill = 0
        self._half = 1  # which half of _seg is being filled (the other holds the previous hop)
        self._have_prev = False
        self._ring = np.zeros((n_segments, n_channels, f))
        # Complex (windowed) spectrum at the two mains candidates per segment: the phase
        # tells one shared mains waveform (a reference or ground fault) from many.
        self.phasor_hz = tuple(float(v) for v in PHASOR_HZ)
        df = rate_hz / segment
        self._phasor_bins = np.array([min(int(round(v / df)), f - 1) for v in self.phasor_hz])
        self._phasors = np.zeros((n_segments, n_channels, len(self.phasor_hz)), dtype=np.complex128)
        self._ring_start = np.zeros(n_segments, dtype=np.int64)
        self._sum = np.zeros((n_channels, f))
        self._recent = np.zeros((n_channels, f))
        self.count = 0
        self._since_refresh = 0
        self._sample = 0  # samples seen
        self._cached: dict[tuple[str, int, int], Spectrum] = {}

    def add(self, x: np.ndarray) -> bool:
        """Take new samples (n, C) µV (finite); returns True when a segment completed."""
        done = False
        pos = 0
        n = x.shape[0]
        hop = self.hop
        while pos < n:
            take = min(hop - self._fill, n - pos)
            base = self._half * hop + self._fill  # the halves take turns: no shifting
            self._seg[:, base : base + take] = x[pos : pos + take].T
            self._fill += take
            self._sample += take
            pos += take
            if self._fill == hop:
                if self._have_prev:
                    self._complete()
                    done = True
                self._half ^= 1
                self._have_prev = True
                self._fill = 0
        return done

    def _complete(self) -> None:
        slot = self.count % self.n_segments
        if self.count >= self.n_segments:
            self._sum -= self._ring[slot]
        p = self._ring[slot]
        if self._freq_window:
            self._periodogram_freq(p, slot)
        else:
            self._periodogram_time(p, slot)
        self._ring_start[slot] = self._sample - self.segment
        self._sum += p
        self.count += 1
        self._since_refresh += 1
        self._cached.clear()
        if self._since_refresh >= self.refresh_segments:
            self.refresh()

    def _periodogram_freq(self, p: np.ndarray, slot: int) -> None:
        """Periodogram of the buffered segment into p (C, F), windowing in frequency.

        The periodic Hann window w[n] = ½ − ½·cos(2πn/N) has a DFT with three
        non-zero bins, so the windowed spectrum is Xw[k] = ½·X[k] − ¼·(X[k−1] + X[k+1])
        of the plain segment's X; removing the segment mean (constant detrend) sets
        X[0] = 0 and leaves every other bin as it is. One FFT straight over the
        buffer, no detrended and windowed copy. The halves take turns, so the buffer
        may hold the segment rotated by N/2: that multiplies X[k] by (−1)^k, which
        flips the sign of the side bins and leaves the power unchanged.
        """
        # In groups of channels, so the FFT's output and the work on it stay in cache.
        n = self._seg.shape[0]
        for c0 in range(0, n, _GROUP):
            c1 = min(n, c0 + _GROUP)
            side = self._side[: c1 - c0]
            self._window_group(p[c0:c1], self._seg[c0:c1], side, self._tmp[: c1 - c0])
            self._phasors[slot, c0:c1] = side[:, self._phasor_bins]

    def _window_group(self, p: np.ndarray, seg: np.ndarray, side: np.ndarray, tmp: np.ndarray) -> None:
        kk = self._keep
        y = sp_fft.rfft(seg, axis=1)  # (c, N/2 + 1)
        y[:, 0] = 0.0  # constant detrend
        # side = X[k − 1] + X[k + 1]
        m = min(kk, y.shape[1] - 1)  # bins 1 … m−1 have both neighbours in y
        np.add(y[:, : m - 1], y[:, 2 : m + 1], out=side[:, 1:m])
        side[:, 0] = 2.0 * y[:, 1].real  # X[−1] + X[1] = conj(X[1]) + X[1] for real input
        if kk > m:  # the Nyquist bin is kept: X[N/2 + 1] = conj(X[N/2 − 1])
            side[:, m] = 2.0 * y[:, m - 1].real
        rotated = self._half == 0  # the newer half is the first: [new | old]
        side *= 0.5 if rotated else -0.5
        side += y[:, :kk]
        np.square(side.real, out=p)
        np.square(side.imag, out=tmp)
        p += tmp
        p *= 0.25 * 2.0 * self.scale
        p[:, 0] /= 2.0
        if self._has_nyquist_bin:
            p[:, -1] /= 2.0

    def _periodogram_time(self, p: np.ndarray, slot: int) -> None:
        """Periodogram of the buffered segment into p (C, F): detrend, window, FFT."""
        hop, seg, work, w = self.hop, self._seg, self._work, self.window
        old, new = (1, 0) if self._half == 0 else (0, 1)  # the just-filled half is the newer
        mean = seg.mean(axis=1, keepdims=True)  # constant detrend (order does not matter)
        np.subtract(seg[:, old * hop : old * hop + hop], mean, out=work[:, :hop])
        np.subtract(seg[:, new * hop : new * hop + hop], mean, out=work[:, hop:])
        work *= w
        spec = np.fft.rfft(work, axis=1, out=self._spec_c)[:, : self._keep]
        self._phasors[slot] = spec[:, self._phasor_bins]
        np.square(spec.real, out=p)
        np.square(spec.imag, out=self._tmp)
        p += self._tmp
        p *= 2.0 * self.scale
        p[:, 0] /= 2.0
        if self._has_nyquist_bin:
            p[:, -1] /= 2.0

    def refresh(self) -> None:
        """Re-sum the running PSD exactly from the ring."""
        k = min(self.count, self.n_segments)
        self._sum = self._ring[:k].sum(axis=0)
        self._since_refresh = 0

    def recent(self, k: int) -> Spectrum | None:
        """Mean of the newest ``k`` periodograms (for checks that must react fast)."""
        have = min(self.count, self.n_segments)
        if have == 0:
            return None
        k = max(1, min(k, have))
        if k >= have:
            return self.spectrum()
        key = ("recent", k, self.count)
        if key not in self._cached:
            slots = [(self.count - 1 - j) % self.n_segments for j in range(k)]
            psd = self._recent
            np.copyto(psd, self._ring[slots[0]])
            for sl in slots[1:]:
                psd += self._ring[sl]
            psd /= k
            self._cached[key] = self._make(psd, self._ring_start[slots], k)
        return self._cached[key]

    def phasors(self, f0_hz: float, k: int | None = None) -> np.ndarray | None:
        """(K, C) complex spectrum at the bin of f0_hz (50 or 60) for the newest K
        segments of the window (all of them by default), newest first; None when f0 is
        not one of the candidates or no segment is complete. Within one segment the
        channels share one phase reference, so the ratio of two channels' values is
        their relative amplitude and phase at f0."""
        if f0_hz not in self.phasor_hz:
            return None
        have = min(self.count, self.n_segments)
        if have == 0:
            return None
        k = have if k is None else max(1, min(k, have))
        slots = [(self.count - 1 - j) % self.n_segments for j in range(k)]
        return np.asarray(self._phasors[slots, :, self.phasor_hz.index(f0_hz)])

    def spectrum(self) -> Spectrum | None:
        """Mean over every periodogram in the window (Welch's estimate)."""
        k = min(self.count, self.n_segments)
        if k == 0:
            return None
        key = ("all", k, self.count)
        if key not in self._cached:
            self._cached[key] = self._make(np.maximum(self._sum / k, 0.0), self._ring_start[:k], k)
        return self._cached[key]

    def _make(self, psd_cf: np.ndarray, starts: np.ndarray, k: int) -> Spectrum:
        first = int(starts.min())
        span = (first, int(starts.max()) + self.segment - first)
        return Spectrum(self.freqs_hz, psd_cf.T, k, span, self.rate_hz / 2.0)
