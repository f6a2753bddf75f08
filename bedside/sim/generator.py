"""Synthetic EEG for a :class:`~bedside.sim.scenario.Scenario`, deterministic by sample index.

``SignalGenerator(scenario).generate(start_sample, n_samples)`` returns an array of
shape (n_samples, n_channels) in µV. Every sample depends only on the scenario (its
seed) and the sample's index, never on how the range was cut into chunks, so any time
range can be made again exactly (tests, looping, seeking).

The physical picture (each channel = its electrode minus a common reference)::

    electrode_i(t) = background_i(t) + physiology_i(t) + electrode faults_i(t)
    reference(t)   = its own small background + reference faults(t)
    channel_i(t)   = electrode_i(t) - reference(t)        (scalp channels)
                   + ground mains_i(t) + amplifier noise_i(t), then channel faults
                     (flat, clipping) on the amplifier side.

So a reference fault is common to every scalp channel with the same sign and phase,
and a bridge (two electrodes shorted by gel) makes the two channels almost equal.
ECG/EOG/EMG channels are treated as bipolar (their own pair, no common reference).

Random parts are made in overlapping segments of 2·B samples, each from its own
seeded generator and cross-faded with power-complementary windows (sin² + cos² = 1),
so the noise is stationary and the same wherever a chunk starts. Events (heart beats,
blinks, muscle bursts, pops) sit on a jittered grid whose jitter comes from a hash of
the event's number.

Why one module of about 570 lines: nearly all of it is :class:`SignalGenerator`, whose
parts (background, physiology, electrode and reference faults, mains) share one
seeded segment cache, one time base and the per-channel geometry; taken apart, each
piece would need that state passed in and would be called from ``_compute`` only.
"""

from __future__ import annotations

import logging
import math
import re
from collections import OrderedDict

import numpy as np

from bedside.sim.scenario import GROUND, REFERENCE, Fault, Scenario

log = logging.getLogger("bedside")

# Hash tags: one per random stream, so streams never share numbers.
_TAG_BEAT, _TAG_BLINK, _TAG_BLINK_AMP, _TAG_MUSCLE, _TAG_MUSCLE_LEN = 1, 2, 3, 4, 5
_TAG_MUSCLE_SIDE, _TAG_MUSCLE_AMP, _TAG_POP_SIGN, _TAG_POP_JITTER = 6, 7, 8, 9
_MASK64 = (1 << 64) - 1

# Anterior-posterior position of a label's row, +1 at the forehead, -1 at the inion
# (from the 10-20/10-10 rows: Fp, AF, F, FC, C/T, CP, P, PO, O, I).
_ROW_AP = {
    "NZ": 1.0, "FP": 0.95, "AF": 0.8, "F": 0.6, "FT": 0.4, "FC": 0.4, "C": 0.0, "T": 0.0,
    "CP": -0.4, "TP": -0.4, "P": -0.6, "PO": -0.8, "O": -0.95, "I": -1.0, "IZ": -1.0,
    "A": -0.3, "M": -0.3,
}
# Classic names: T3/T4 sit on the central row, T5/T6 on the parietal one (T5 = P7).
_OLD_T = {"T3": ("T", 7), "T4": ("T", 8), "T5": ("P", 7), "T6": ("P", 8)}
_LABEL_PARTS = re.compile(r"^([A-Za-z]+?)(\d+|[zZ])$")


def label_position(label: str) -> tuple[float, float]:
    """(anterior-posterior, left-right) in [-1, 1] for a 10-20/10-10 label, roughly.

    ap: +1 forehead … -1 inion. lr: -1 far left … +1 far right, 0 on the midline.
    Unknown labels sit at the vertex (0, 0). Approximate, for topographies only.
    """
    # Tolerate the usual decorations: "EEG Fp1-REF", "FP1-A1", "Fp1 ".
    bare = label.strip()
    if bare.upper().startswith("EEG "):
        bare = bare[4:].strip()
    label = bare.split("-")[0].strip()
    up = label.upper()
    if up in _OLD_T:
        row, number = _OLD_T[up]
    else:
        m = _LABEL_PARTS.match(label)
        if not m:
            return 0.0, 0.0
        row = m.group(1).upper()
        number = 0 if m.group(2) in ("z", "Z") else int(m.group(2))
    ap = _ROW_AP.get(row, 0.0)
    if number == 0:
        return ap, 0.0
    # Odd numbers on the left, even on the right; 1/2 near the midline, 9/10 lowest.
    lateral = min(1.0, ((number + 1) // 2) / 5.0)
    if row in ("A", "M"):
        lateral = 1.0
    return ap, (-lateral if number % 2 else lateral)


def _u01(seed: int, tag: int, k: np.ndarray) -> np.ndarray:
    """Uniform [0, 1) numbers from a hash of (seed, tag, k) — splitmix64, vectorised."""
    base = np.uint64((seed * 0x9E3779B1 + tag * 0x85EBCA77 + 0x165667B1) & _MASK64)
    z = np.atleast_1d(np.asarray(k, dtype=np.int64)).astype(np.uint64) + base
    z = z + np.uint64(0x9E3779B97F4A7C15)
    z = (z ^ (z >> np.uint64(30))) * np.uint64(0xBF58476D1CE4E5B9)
    z = (z ^ (z >> np.uint64(27))) * np.uint64(0x94D049BB133111EB)
    z = z ^ (z >> np.uint64(31))
    return (z >> np.uint64(11)).astype(np.float64) / float(1 << 53)


class _Slow:
    """A smooth, bounded, deterministic random function of time (sum of slow sines)."""

    def __init__(self, rng: np.random.Generator, f_lo_hz: float, f_hi_hz: float, n: int = 4):
        self.freqs = rng.uniform(f_lo_hz, f_hi_hz, n)
        self.phases = rng.uniform(0, 2 * np.pi, n)
        self.norm = 1.0 / math.sqrt(n / 2.0)  # unit RMS

    def __call__(self, t_s: np.ndarray) -> np.ndarray:
        arg = 2 * np.pi * np.outer(t_s, self.freqs) + self.phases
        return np.sin(arg).sum(axis=1) * self.norm


def _blink_shape(tau_s: np.ndarray) -> np.ndarray:
    """A blink: fast rise, slower fall, peak 1 at 0.12 s (shape from memory)."""
    x = np.clip(tau_s, 0.0, None) / 0.12
    return x * x * np.exp(2.0 * (1.0 - x))


def _qrst_shape(tau_s: np.ndarray) -> np.ndarray:
    """One heart beat, R peak = 1 at tau 0 (Q, R, S and T as Gaussians; from memory)."""

    def g(x: np.ndarray, sigma: float) -> np.ndarray:
        return np.exp(-0.5 * (x / sigma) ** 2)

    return (
        -0.12 * g(tau_s + 0.03, 0.008)
        + g(tau_s, 0.010)
        - 0.25 * g(tau_s - 0.03, 0.010)
        + 0.30 * g(tau_s - 0.25, 0.040)
    )


class SignalGenerator:
    """Makes a scenario's samples: ``generate(start_sample, n_samples)`` → (n, C) in µV.

    Deterministic: the same scenario gives the same value for a sample index, however
    the range is chunked. Thread-unsafe (it caches noise segments): use one per thread.
    """

    #: Noise segments kept in memory (each 2·B samples × fields).
    CACHE_SEGMENTS = 6

    def __init__(self, scenario: Scenario) -> None:
        self.scenario = scenario
        bg = scenario.background
        self.rate_hz = float(scenario.rate_hz)
        self.n_channels = scenario.n_channels
        c = self.n_channels
        # Half-segment of about 4 s (a power of two for the FFT).
        self.block = 1 << max(8, math.ceil(math.log2(4.0 * self.rate_hz)))
        types = scenario.channel_types
        self._scalp = np.array([t == "EEG" for t in types])
        self._ecg = np.array([t == "ECG" for t in types])
        self._eog = np.array([t == "EOG" for t in types])
        self._index = {label: i for i, label in enumerate(scenario.channels)}

        rng = np.random.default_rng([scenario.seed, 0xC0FFEE])
        pos = np.array([label_position(lbl) for lbl in scenario.channels]).reshape(c, 2)
        ap, lr = pos[:, 0], pos[:, 1]
        scale = rng.uniform(0.85, 1.15, c)  # electrodes differ a little
        scalp = self._scalp.astype(float)

        # Background: every channel, non-scalp ones a little quieter.
        self._pink_uv = bg.pink_uv * scale * np.where(self._scalp, 1.0, 0.3)
        # Volume conduction: part of each scalp electrode's background comes from
        # sources it shares with its neighbours (a grid of latent 1/f sources, each
        # seen with a Gaussian fall-off over the scalp), the rest is its own.
        grid = np.array([(a, b) for a in (-0.9, -0.45, 0.0, 0.45, 0.9) for b in (-0.8, -0.4, 0.0, 0.4, 0.8)])
        self._n_latent = len(grid)
        d2 = ((pos[:, None, :] - grid[None, :, :]) ** 2).sum(axis=2)
        w = np.exp(-d2 / (2 * 0.5**2))
        w /= np.sqrt((w**2).sum(axis=1, keepdims=True))
        shared = bg.shared_fraction * scalp
        self._mix = (w * np.sqrt(shared)[:, None]).T  # (K, C)
        self._local_w = np.sqrt(1.0 - shared)
        # Posterior alpha, strongest at O1/O2/Oz/Pz, a tenth of that at the front
        # (posterior dominant rhythm; topography from memory / common practice).
        self._alpha_w = bg.alpha_uv * scalp * (0.1 + 0.9 * ((1.0 - ap) / 2.0) ** 2) * scale
        self._alpha_phase = rng.uniform(-0.3, 0.3, c)
        # Blinks: strongest at Fp1/Fp2, falling off backwards; the EOG channel
        # (above/below the eye) sees more (from memory / common practice).
        self._blink_w = bg.blink_uv * (
            scalp * np.exp(-(0.95 - ap) / 0.35) * (1.0 - 0.3 * np.abs(lr))
            + self._eog.astype(float) * 2.0
        )
        # ECG pickup: small on the scalp, more laterally; the ECG channel itself ~1 mV.
        self._ecg_w = bg.ecg_uv * scalp * (0.5 + 0.5 * np.abs(lr)) + bg.ecg_channel_uv * self._ecg
        # Muscle: temporal/lateral electrodes (frontalis/temporalis), per side.
        lateral = np.clip((np.abs(lr) - 0.4) / 0.4, 0.0, 1.0) * scalp
        lateral = np.maximum(lateral, scalp * 0.15 * (ap > 0.5))  # a little frontally
        self._muscle_left = bg.muscle_uv * lateral * (lr <= 0)
        self._muscle_right = bg.muscle_uv * lateral * (lr >= 0)
        self._mains_w = bg.mains_uv * scalp * rng.uniform(0.5, 1.0, c)
        # Impedance mismatch per electrode: how much of a poor ground's common-mode
        # mains becomes differential (Huhta & Webster 1973).
        self._mismatch = rng.uniform(0.4, 1.0, c) * scalp
        self._mains_phase = float(rng.uniform(0, 2 * np.pi))
        self._alpha_wax = _Slow(rng, 0.05, 0.3)
        self._alpha_wobble = _Slow(rng, 0.05, 0.2)
        # One slow wander per fault (drift, reference, clipping), seeded by its place.
        self._fault_slow = [
            _Slow(np.random.default_rng([scenario.seed, 0xD21F7, i]), 0.02, 0.3)
            for i in range(len(scenario.faults))
        ]
        # Each tap fault's tap peaks (scenario seconds), made once.
        self._tap_peaks = {
            i: np.asarray(f.tap_peaks_s(scenario.duration_s), dtype=float)
            for i, f in enumerate(scenario.faults) if f.kind == "tap"
        }
        self._filters = self._make_filters()
        self._cache: OrderedDict[int, np.ndarray] = OrderedDict()
        self._chunk = max(1, int(round(0.25 * self.rate_hz)))
        self._blocks: OrderedDict[int, np.ndarray] = OrderedDict()

    # ----- public helpers ---------------------------------------------------------------

    def eyes_closed(self, t_s: np.ndarray) -> np.ndarray:
        """How closed the eyes are at times t_s (s): 0 open … 1 closed, 0.5 s transitions.

        The scenario alternates eyes_open_s and eyes_closed_s, starting with eyes open.
        """
        bg = self.scenario.background
        t = np.asarray(t_s, dtype=float)
        if bg.eyes_closed_s <= 0:
            return np.zeros_like(t)
        period = bg.eyes_open_s + bg.eyes_closed_s
        p = np.mod(t, period)
        ramp = 0.5
        up = np.clip((p - bg.eyes_open_s) / ramp, 0.0, 1.0)  # closing
        down = np.clip((p - (period - ramp)) / ramp, 0.0, 1.0)  # opening again
        g = np.where(p >= period - ramp, 1.0 - down, up)
        return 0.5 - 0.5 * np.cos(np.pi * g)

    def blink_times(self, t0_s: float, t1_s: float) -> np.ndarray:
        """Blink onsets (s) in [t0_s, t1_s); blinks happen only with the eyes open."""
        bg = self.scenario.background
        if bg.blinks_per_min <= 0 or bg.blink_uv <= 0:
            return np.zeros(0)
        period = 60.0 / bg.blinks_per_min
        k = np.arange(max(0, math.floor(t0_s / period) - 1), math.floor(t1_s / period) + 2)
        times = (k + 0.8 * _u01(self.scenario.seed, _TAG_BLINK, k)) * period
        keep = (times >= t0_s) & (times < t1_s) & (self.eyes_closed(times) < 0.5)
        return times[keep]

    def generate(self, start_sample: int, n_samples: int) -> np.ndarray:
        """Samples ``start_sample`` … ``start_sample + n_samples - 1``: (n_samples, n_channels), µV.

        Small requests (a publisher's chunks) are served from aligned blocks of about
        0.25 s made once, so the per-call cost stays low; every sample is the same
        whichever way it was made.
        """
        if start_sample < 0 or n_samples < 0:
            raise ValueError(
                f"start_sample and n_samples must be >= 0, got {start_sample}, {n_samples}"
            )
        if n_samples == 0:
            return np.zeros((0, self.n_channels))
        size = self._chunk
        if n_samples >= 2 * size:
            return self._compute(start_sample, n_samples)
        first, last = start_sample // size, (start_sample + n_samples - 1) // size
        parts = [self._block(b) for b in range(first, last + 1)]
        joined = parts[0] if len(parts) == 1 else np.concatenate(parts)
        lo = start_sample - first * size
        return joined[lo : lo + n_samples].copy()

    def _block(self, b: int) -> np.ndarray:
        cached = self._blocks.get(b)
        if cached is None:
            cached = self._compute(b * self._chunk, self._chunk)
            self._blocks[b] = cached
            if len(self._blocks) > 4:
                self._blocks.popitem(last=False)
        return cached

    def _compute(self, start_sample: int, n_samples: int) -> np.ndarray:
        c = self.n_channels
        idx = np.arange(start_sample, start_sample + n_samples, dtype=np.int64)
        t = idx / self.rate_hz
        fields = self._fields(start_sample, n_samples)
        k = self._n_latent
        pink = fields[:, :c]
        ref_pink = fields[:, c]
        latent = fields[:, c + 1 : c + 1 + k]
        muscle_noise = fields[:, c + 1 + k : 2 * c + 1 + k]
        white = fields[:, 2 * c + 1 + k :]
        bg = self.scenario.background

        # Electrodes: background (own part + the part shared with neighbours) and
        # normal physiology.
        # einsum, not a BLAS product: BLAS picks kernels by the matrix size, so a sample's
        # value would depend on how the request was chunked in its last bits.
        e = (pink * self._local_w + np.einsum("nk,kc->nc", latent, self._mix)) * self._pink_uv
        closed = self.eyes_closed(t)
        alpha_env = (0.1 + 0.9 * closed) * (0.75 + 0.25 * np.tanh(self._alpha_wax(t)))
        alpha_arg = 2 * np.pi * bg.alpha_hz * t + 0.6 * self._alpha_wobble(t)
        e += alpha_env[:, None] * self._alpha_w * np.sin(alpha_arg[:, None] + self._alpha_phase)
        e += np.outer(self._blinks(t), self._blink_w)
        e += np.outer(self._heart(t), self._ecg_w)
        left, right = self.muscle_envelopes(t)
        e += muscle_noise * (np.outer(left, self._muscle_left) + np.outer(right, self._muscle_right))
        e += np.outer(np.sin(2 * np.pi * self.scenario.mains_hz * t + self._mains_phase), self._mains_w)
        ref = ref_pink * bg.reference_pink_uv

        # Faults, on the scenario's (looping) timeline.
        tf = self._fold(t)
        ground = np.zeros(n_samples)
        channel_faults: list[tuple[int, Fault, np.ndarray]] = []
        bridges: list[tuple[int, Fault, np.ndarray]] = []
        swaps: list[tuple[int, Fault, np.ndarray]] = []
        for i, fault in enumerate(self.scenario.faults):
            end = fault.end_s if fault.end_s is not None else self.scenario.duration_s
            mask = (tf >= fault.start_s) & (tf < end)
            if not mask.any():
                continue
            if fault.kind in ("flat", "clipping"):
                channel_faults.append((i, fault, mask))
                continue
            if fault.kind == "bridge":
                bridges.append((i, fault, mask))
                continue
            if fault.kind == "swap":
                swaps.append((i, fault, mask))
                continue
            add = self._fault_signal(i, fault, t, tf, mask, muscle_noise)
            target = fault.electrodes[0]
            if target == REFERENCE:
                ref += add
            elif target == GROUND:
                ground += add
            else:
                e[:, self._index[target]] += add
        for _, fault, mask in bridges:
            a, b = (self._index[n] for n in fault.electrodes)
            shared = 0.5 * (e[mask, a] + e[mask, b])
            res = fault.param("residual_uv")
            e[mask, a] = shared + res * pink[mask, a]
            e[mask, b] = shared + res * pink[mask, b]

        # Channels: scalp electrodes against the common reference; the ground's mains.
        x = e
        x[:, self._scalp] -= ref[:, None]
        x += np.outer(ground, self._mismatch)
        # Swapped leads: each electrode's signal (its taps, its impedance's mains) goes
        # into the other's input; the inputs' own noise and faults stay with the input.
        for _, fault, mask in swaps:
            a, b = (self._index[n] for n in fault.electrodes)
            x[mask, a], x[mask, b] = x[mask, b], x[mask, a].copy()
        x += white * bg.amplifier_noise_uv
        for i, fault, mask in channel_faults:
            col = self._index[fault.electrodes[0]]
            if fault.kind == "flat":
                x[mask, col] = fault.param("noise_uv") * white[mask, col]
            else:  # clipping: an offset drives the channel onto the rail, and it sticks
                rail = fault.param("rail_uv")
                push = fault.param("offset_uv") * (1.0 + 0.25 * self._fault_slow[i](t[mask]))
                x[mask, col] = np.clip(x[mask, col] + push, -rail, rail)
        return x

    # ----- the parts --------------------------------------------------------------------

    def _fold(self, t: np.ndarray) -> np.ndarray:
        d = self.scenario.duration_s
        if self.scenario.loop:
            return np.mod(t, d)
        return t

    def _fault_signal(
        self, i: int, fault: Fault, t: np.ndarray, tf: np.ndarray, mask: np.ndarray,
        muscle_noise: np.ndarray,
    ) -> np.ndarray:
        """The additive signal of one electrode/reference/ground fault (µV, zero off-mask)."""
        out = np.zeros_like(t)
        tau = tf[mask] - fault.start_s
        kind = fault.kind
        if kind == "line_noise":
            out[mask] = fault.param("amplitude_uv") * self._mains(t[mask], int(fault.param("harmonics")))
        elif kind == "drift":
            out[mask] = (
                fault.param("amplitude_uv") * self._fault_slow[i](t[mask])
                + fault.param("slope_uv_per_s") * tau
                + fault.param("offset_uv")
            )
        elif kind == "pop":
            out[mask] = self._pops(i, fault, tau)
        elif kind == "muscle":
            col = self._index[fault.electrodes[0]]
            out[mask] = fault.param("amplitude_uv") * muscle_noise[mask, col]
        elif kind == "tap":
            out[mask] = self._taps(i, fault, tf[mask])
        elif kind == "reference":
            out[mask] = fault.param("amplitude_uv") * self._mains(t[mask], 3) + fault.param(
                "drift_uv"
            ) * self._fault_slow[i](t[mask])
        return out

    def _mains(self, t: np.ndarray, harmonics: int) -> np.ndarray:
        """Mains at unit amplitude with smaller harmonics (odd ones stronger; from memory)."""
        f0 = self.scenario.mains_hz
        nyquist = self.rate_hz / 2
        s = np.sin(2 * np.pi * f0 * t + self._mains_phase)
        for h in range(2, harmonics + 1):
            if h * f0 >= nyquist * 0.98:
                break
            amp = (0.3 if h % 2 else 0.1) / (h - 1)
            s = s + amp * np.sin(2 * np.pi * h * f0 * t + h * self._mains_phase)
        return s

    def _taps(self, i: int, fault: Fault, tf: np.ndarray) -> np.ndarray:
        """Gaussian pulses of full width at half maximum width_s at the fault's tap peaks."""
        out = np.zeros_like(tf)
        peaks = self._tap_peaks.get(i)
        if tf.size == 0 or peaks is None or peaks.size == 0:
            return out
        width = fault.param("width_s")
        sigma = width / (2.0 * math.sqrt(2.0 * math.log(2.0)))
        lo, hi = np.searchsorted(peaks, [float(tf.min()) - 3 * width, float(tf.max()) + 3 * width])
        amp = fault.param("amplitude_uv")
        for peak in peaks[lo:hi]:
            out += amp * np.exp(-0.5 * ((tf - peak) / sigma) ** 2)
        return out

    def _pops(self, i: int, fault: Fault, tau: np.ndarray) -> np.ndarray:
        """Steps that decay exponentially, one every interval_s from the fault's start."""
        interval, decay = fault.param("interval_s"), fault.param("tau_s")
        amp = fault.param("amplitude_uv")
        out = np.zeros_like(tau)
        if tau.size == 0:
            return out
        first = max(0, math.floor((tau.min() - 12 * decay) / interval) - 1)
        last = math.floor(tau.max() / interval) + 1
        seed = self.scenario.seed + 7 * i  # each pop fault its own sequence
        for k in range(first, last + 1):
            kk = np.array([k])
            onset = (k + 0.25 + 0.2 * float(_u01(seed, _TAG_POP_JITTER, kk)[0])) * interval
            sign = 1.0 if float(_u01(seed, _TAG_POP_SIGN, kk)[0]) < 0.5 else -1.0
            after = tau >= onset
            out[after] += sign * amp * np.exp(-(tau[after] - onset) / decay)
        return out

    def _events(self, t: np.ndarray, period: float, tag: int, jitter: float, pre: float, post: float
                ) -> tuple[np.ndarray, np.ndarray]:
        """Event numbers and times on a jittered grid that touch [t0 - post, t1 + pre]."""
        t0, t1 = float(t[0]), float(t[-1])
        k = np.arange(max(0, math.floor((t0 - post) / period) - 1), math.floor((t1 + pre) / period) + 2)
        times = (k + jitter * _u01(self.scenario.seed, tag, k)) * period
        return k, times

    def _heart(self, t: np.ndarray) -> np.ndarray:
        bg = self.scenario.background
        out = np.zeros_like(t)
        if bg.ecg_uv <= 0 and bg.ecg_channel_uv <= 0:
            return out
        period = 60.0 / bg.heart_rate_bpm
        _, beats = self._events(t, period, _TAG_BEAT, 0.12, 0.1, 0.45)
        for tb in beats:
            sl = self._slice(t, tb - 0.1, tb + 0.45)
            if sl.start < sl.stop:
                out[sl] += _qrst_shape(t[sl] - tb)
        return out

    def _blinks(self, t: np.ndarray) -> np.ndarray:
        out = np.zeros_like(t)
        bg = self.scenario.background
        if bg.blinks_per_min <= 0 or bg.blink_uv <= 0:
            return out
        period = 60.0 / bg.blinks_per_min
        k, times = self._events(t, period, _TAG_BLINK, 0.8, 0.0, 0.8)
        amps = 0.7 + 0.6 * _u01(self.scenario.seed, _TAG_BLINK_AMP, k)
        open_ = self.eyes_closed(times) < 0.5
        for tb, a, ok in zip(times, amps, open_, strict=True):
            if not ok:
                continue
            sl = self._slice(t, tb, tb + 0.8)
            if sl.start < sl.stop:
                out[sl] += a * _blink_shape(t[sl] - tb)
        return out

    def muscle_envelopes(self, t: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Envelopes (0…~1.4) of normal muscle bursts on the left and right, over t."""
        left = np.zeros_like(t)
        right = np.zeros_like(t)
        bg = self.scenario.background
        if bg.muscle_bursts_per_min <= 0 or bg.muscle_uv <= 0:
            return left, right
        period = 60.0 / bg.muscle_bursts_per_min
        k, times = self._events(t, period, _TAG_MUSCLE, 0.7, 0.0, 2.0)
        seed = self.scenario.seed
        lengths = 0.4 + 1.2 * _u01(seed, _TAG_MUSCLE_LEN, k)
        sides = _u01(seed, _TAG_MUSCLE_SIDE, k)
        amps = 0.6 + 0.8 * _u01(seed, _TAG_MUSCLE_AMP, k)
        for tb, length, side, amp in zip(times, lengths, sides, amps, strict=True):
            sl = self._slice(t, tb, tb + length)
            if sl.start >= sl.stop:
                continue
            env = amp * np.sin(np.pi * (t[sl] - tb) / length) ** 2
            if side < 0.8:
                (left if side < 0.4 else right)[sl] += env
            else:
                left[sl] += env
                right[sl] += env
        return left, right

    def _slice(self, t: np.ndarray, a: float, b: float) -> slice:
        """Indices of t (evenly spaced at rate_hz) within [a, b)."""
        t0 = float(t[0])
        i0 = max(0, math.ceil((a - t0) * self.rate_hz - 1e-9))
        i1 = min(t.size, math.ceil((b - t0) * self.rate_hz - 1e-9))
        return slice(i0, max(i0, i1))

    # ----- noise fields in cross-faded segments -----------------------------------------

    def _make_filters(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Spectral shapes (rfft bins of a 2·B segment) for pink and muscle noise, and the window."""
        n = 2 * self.block
        f = np.fft.rfftfreq(n, 1.0 / self.rate_hz)
        beta = self.scenario.background.pink_exponent
        # 1/f^beta power below the EEG's natural roll-off; flat under 0.5 Hz, none at DC.
        pink = np.maximum(f, 0.5) ** (-beta / 2.0)
        pink[0] = 0.0
        # Muscle: broadband above 20 Hz, up to 150 Hz or near Nyquist (smooth edges).
        hi = min(150.0, 0.45 * self.rate_hz)
        muscle = 1.0 / (1.0 + (20.0 / np.maximum(f, 1e-9)) ** 8) / (1.0 + (f / hi) ** 8)
        filters = []
        for h in (pink, muscle):
            two_sided = (h[0] ** 2 + 2 * np.sum(h[1:-1] ** 2) + h[-1] ** 2) / n
            filters.append(h / math.sqrt(two_sided))  # unit variance after irfft
        window = np.sin(np.pi * (np.arange(n) + 0.5) / n)
        return (filters[0].astype(np.float32), filters[1].astype(np.float32),
                window.astype(np.float32))

    def _segment(self, s: int) -> np.ndarray:
        """Noise segment s (samples (s-1)·B … (s+1)·B), windowed: (2B, 3C+1+K) fields."""
        cached = self._cache.get(s)
        if cached is not None:
            self._cache.move_to_end(s)
            return cached
        c = self.n_channels
        n = 2 * self.block
        rng = np.random.default_rng([self.scenario.seed, 0x5E6, s])
        # float32 halves the cost of the noise; the samples go out as float32 anyway.
        p = c + 1 + self._n_latent  # pink fields: per channel, reference, latent sources
        white = rng.standard_normal((n, p + 2 * c), dtype=np.float32)
        pink_h, muscle_h, window = self._filters
        out = np.empty_like(white)
        out[:, :p] = np.fft.irfft(np.fft.rfft(white[:, :p], axis=0) * pink_h[:, None], n, axis=0)
        out[:, p : p + c] = np.fft.irfft(
            np.fft.rfft(white[:, p : p + c], axis=0) * muscle_h[:, None], n, axis=0
        )
        out[:, p + c :] = white[:, p + c :]
        out *= window[:, None]
        self._cache[s] = out
        if len(self._cache) > self.CACHE_SEGMENTS:
            self._cache.popitem(last=False)
        return out

    def _fields(self, start: int, n: int) -> np.ndarray:
        """Cross-faded noise fields for samples start … start+n-1: (n, 3C+1+K), unit variance."""
        b = self.block
        out = np.empty((n, 3 * self.n_channels + 1 + self._n_latent), dtype=np.float32)
        pos = start
        end = start + n
        while pos < end:
            j = pos // b
            lo = pos - j * b
            hi = min(b, end - j * b)
            # Block j is the second half of segment j and the first half of segment j+1.
            out[pos - start : pos - start + hi - lo] = (
                self._segment(j)[b + lo : b + hi] + self._segment(j + 1)[lo:hi]
            )
            pos += hi - lo
        return out
