"""Time-domain statistics of the sliding window, kept incrementally block by block.

Sample arrays are (n_samples, n_channels) in µV. New samples are summarised once,
per block of ``block`` samples, into small per-block statistics (mean, scatter
matrix about the block mean, extremes, sample-to-sample steps …) kept in a ring of
``n_blocks`` slots. The window's statistics are combined from the ring:

* covariance by the pairwise (parallel) combination of Chan, Golub & LeVeque
  (1979): scatter = Σ_b M2_b + n_b Σ_b (m_b − m)(m_b − m)ᵀ, with M2_b the scatter of
  block b about its own mean — numerically safe (no large sums of squares are
  subtracted), and Σ_b M2_b is kept as a running sum that is re-summed exactly
  from the ring every ``refresh_blocks`` blocks;
* extremes, counts and steps from the per-block values.

Only the samples that arrived since the last update are touched.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

from bedside.checks.gram import add_gram, symmetrize


@dataclass(frozen=True)
class WindowStats:
    """The window's time-domain statistics, per channel unless stated.

    Everything here is measured on the analysis copy (checks/analysis.py: band
    limited to 100 Hz, at the analysis rate), except nonfinite and clip_fraction,
    which RawStats counts on the stream's own samples.

    n_samples: samples in the window; block_means_uv: (n_blocks, C), oldest first;
    block_times_s: (n_blocks,) centre time of each block on the engine's sample
    clock; within_lower_uv2: (C, C) sum of the blocks' scatter about their own means,
    its lower triangle only (checks/gram.py; cov_uv2 is the whole matrix);
    block_dev_uv: (n_blocks, C) block means minus the window mean; block: samples
    per block (cov_uv2 combines these); mean_uv, var_uv2, ptp_uv,
    max_abs_uv: (C,); zero_diff_fraction: share of consecutive samples with no
    change; clip_fraction: share of samples held in flat-topped runs at an
    extreme or at the rail; step_max_uv: (n_blocks, C) largest change over
    ``lag`` samples (about 10 ms) per block; step_med_uv: (n_blocks, C) the block's
    median change over the lag; nonfinite: (C,) NaN/±Inf samples in the window;
    recent_ptp_uv,
    recent_zero_diff_fraction: the same over the newest blocks only (fast reaction).
    """

    n_samples: int
    block_means_uv: np.ndarray
    block_times_s: np.ndarray
    within_lower_uv2: np.ndarray
    block_dev_uv: np.ndarray
    block: int
    mean_uv: np.ndarray
    var_uv2: np.ndarray
    ptp_uv: np.ndarray
    max_abs_uv: np.ndarray
    zero_diff_fraction: np.ndarray
    clip_fraction: np.ndarray
    step_max_uv: np.ndarray
    step_med_uv: np.ndarray
    nonfinite: np.ndarray
    recent_ptp_uv: np.ndarray
    recent_zero_diff_fraction: np.ndarray
    #: (K, C) the block means through a first-order high-pass (BlockStats' highpass_hz;
    #: None when it has none): the wander as an AC-coupled amplifier would pass it.
    block_means_hp_uv: np.ndarray | None = None

    @cached_property
    def cov_uv2(self) -> np.ndarray:
        """(C, C) covariance over the window (ddof=1), combined from the blocks on demand."""
        cov = self.block_dev_uv.T @ self.block_dev_uv
        cov *= self.block
        cov += self.within_lower_uv2
        cov /= max(self.n_samples - 1, 1)
        return symmetrize(cov)  # the lower triangle is right; copy it over the upper

    @property
    def rms_uv(self) -> np.ndarray:
        """Standard deviation over the window (AC RMS), µV."""
        return np.sqrt(np.maximum(self.var_uv2, 0.0))


#: Values beyond this (µV; a kilovolt) are no EEG: counted with NaN/Inf as unusable samples
#: so that they cannot overflow the window's sums (numeric limits of float32/float64).
ABSURD_UV = 1e9


class BlockStats:
    """Ring of per-block statistics over the last ``n_blocks`` blocks of ``block`` samples."""

    def __init__(
        self,
        n_channels: int,
        block: int,
        n_blocks: int,
        refresh_blocks: int,
        rate_hz: float,
        lag: int = 1,
        highpass_hz: float | None = None,
    ) -> None:
        c = n_channels
        self.block, self.n_blocks, self.rate_hz = block, n_blocks, rate_hz
        # The block means through a first-order (RC) high-pass at highpass_hz, sampled
        # once per block: y[n] = a·(y[n−1] + m[n] − m[n−1]), a = RC / (RC + Δt); it starts
        # settled on the first block (y = 0), as an AC amplifier that has been on a while.
        self.highpass_hz = highpass_hz
        if highpass_hz:
            rc = 1.0 / (2.0 * np.pi * highpass_hz)
            self.hp_a: float | None = rc / (rc + block / rate_hz)
        else:
            self.hp_a = None
        self.hp_means = np.zeros((n_blocks, c))
        self._hp_prev = np.zeros(c)  # (y[n−1], m[n−1]) of the high-pass
        self._mean_prev = np.zeros(c)
        self.lag = max(1, min(int(lag), block))
        self.refresh_blocks = max(1, refresh_blocks)
        self.means = np.zeros((n_blocks, c))
        self.m2 = np.zeros((n_blocks, c, c))  # lower triangles only: see checks/gram.py
        self.maxs = np.zeros((n_blocks, c))
        self.mins = np.zeros((n_blocks, c))
        self.step_max = np.zeros((n_blocks, c))
        self.step_med = np.zeros((n_blocks, c))
        self.zero_diffs = np.zeros((n_blocks, c))
        self.starts = np.zeros(n_blocks, dtype=np.int64)
        self.m2_sum = np.zeros((c, c))
        self.count = 0  # blocks seen since start
        self._last = np.zeros(c)  # last sample of the previous block (for steps)
        self._have_last = False
        self._hist = np.zeros((0, c))  # the previous block's last ``lag`` samples (for jumps)
        self._since_refresh = 0
        # Work arrays, allocated once (fresh large arrays cost page faults every block).
        self._xc = np.zeros((block, c))
        self._steps = np.zeros((block, c))
        self._jumps = np.zeros((block, c))

    @property
    def filled(self) -> int:
        return min(self.count, self.n_blocks)

    def add_block(self, x: np.ndarray, start_sample: int) -> None:
        """Summarise one block (block, C) µV of finite samples (RawStats cleaned them)."""
        total = x.sum(axis=0)
        slot = self.count % self.n_blocks
        if self.count >= self.n_blocks:
            self.m2_sum -= self.m2[slot]
        mean = total / x.shape[0]
        xc = np.subtract(x, mean, out=self._xc)
        m2 = self.m2[slot]
        add_gram(m2, xc, accumulate=False)  # its lower triangle (checks/gram.py)
        self.m2_sum += m2
        mx, mn = x.max(axis=0), x.min(axis=0)
        # Steps between consecutive samples; the very first sample of a stream has none.
        k0 = 0 if self._have_last else 1
        steps = self._steps
        steps[0] = x[0] - self._last if self._have_last else 0.0
        np.subtract(x[1:], x[:-1], out=steps[1:])
        st = steps[k0:]
        # Jumps over ``lag`` samples (about 10 ms): a pop's edge, band-limited by the
        # analysis filter, spreads over a few samples; its change over the lag does not.
        lag = self.lag
        nb = x.shape[0]
        if len(self._hist) == lag and nb > lag and nb == self._jumps.shape[0]:
            # The usual block: the first ``lag`` jumps start in the previous block's tail.
            jumps = self._jumps
            np.subtract(x[:lag], self._hist, out=jumps[:lag])
            np.subtract(x[lag:], x[:-lag], out=jumps[lag:])
            np.abs(jumps, out=jumps)
        else:
            ext = np.concatenate((self._hist, x), axis=0) if len(self._hist) else x
            jumps = np.abs(ext[lag:] - ext[:-lag]) if ext.shape[0] > lag else np.zeros((1, x.shape[1]))
        step_max = jumps.max(axis=0)
        half = jumps.shape[0] // 2
        step_med = np.partition(jumps, half, axis=0)[half]  # the block's median jump
        self._hist = x[x.shape[0] - lag :].copy()
        if np.count_nonzero(st) < st.size:  # a repeated value is a zero step  # some channel repeats a value: count where
            n_still = (st == 0.0).sum(axis=0)
        else:
            n_still = np.zeros(x.shape[1], dtype=np.int64)
        self.means[slot] = mean
        if self.hp_a is not None:
            y = self.hp_a * (self._hp_prev + mean - self._mean_prev) if self.count else np.zeros_like(mean)
            self.hp_means[slot] = y
            self._hp_prev, self._mean_prev = y, mean
        self.maxs[slot], self.mins[slot] = mx, mn
        self.step_max[slot] = step_max
        self.step_med[slot] = step_med
        self.zero_diffs[slot] = n_still
        self.starts[slot] = start_sample
        self._last = x[-1].copy()
        self._have_last = True
        self.count += 1
        self._since_refresh += 1
        if self._since_refresh >= self.refresh_blocks:
            self.refresh()

    def refresh(self) -> None:
        """Re-sum the running scatter exactly from the ring (undoes rounding drift)."""
        k = self.filled
        order = self._order()[:k].tolist()
        total = self.m2_sum
        if not order:
            total[:] = 0.0
        else:  # oldest → newest, in place: no (blocks, C, C) copy of the ring
            np.copyto(total, self.m2[order[0]])
            for slot in order[1:]:
                total += self.m2[slot]
        self._since_refresh = 0

    def _order(self) -> np.ndarray:
        """Ring slots oldest → newest."""
        k = self.filled
        if self.count <= self.n_blocks:
            return np.arange(k)
        first = self.count % self.n_blocks
        return (np.arange(self.n_blocks) + first) % self.n_blocks

    def stats(self, recent_blocks: int = 4, raw: RawStats | None = None) -> WindowStats:
        """Combine the ring into the window's statistics (recent_*: the newest blocks only;
        NaN/Inf and clipping counts from ``raw``, the stream-rate pass, when given)."""
        order = self._order()
        recent = order[-max(1, min(recent_blocks, len(order))):]
        k = len(order)
        b = self.block
        n = k * b
        means = self.means[order]
        mean = means.mean(axis=0)
        d = means - mean
        var = (np.diag(self.m2_sum) + b * np.einsum("kc,kc->c", d, d)) / max(n - 1, 1)
        times = (self.starts[order] + b / 2.0) / self.rate_hz
        maxs, mins = self.maxs[order].max(axis=0), self.mins[order].min(axis=0)
        return WindowStats(
            n_samples=n,
            block_means_uv=means,
            block_times_s=times,
            within_lower_uv2=self.m2_sum.copy(),
            block_dev_uv=d,
            block=b,
            mean_uv=mean,
            var_uv2=var,
            ptp_uv=maxs - mins,
            max_abs_uv=np.maximum(np.abs(maxs), np.abs(mins)),
            zero_diff_fraction=self.zero_diffs[order].sum(axis=0) / n,
            clip_fraction=raw.clip_fraction() if raw is not None else np.zeros(len(mean)),
            step_max_uv=self.step_max[order],
            step_med_uv=self.step_med[order],
            nonfinite=raw.nonfinite() if raw is not None else np.zeros(len(mean)),
            recent_ptp_uv=self.maxs[recent].max(axis=0) - self.mins[recent].min(axis=0),
            recent_zero_diff_fraction=self.zero_diffs[recent].sum(axis=0) / (len(recent) * b),
            block_means_hp_uv=self.hp_means[order] if self.hp_a is not None else None,
        )


class RawStats:
    """What must be counted at the stream's own rate, before the analysis filter, per
    block of ``block`` samples over the last ``n_blocks`` blocks (the same window):

    * unusable samples (NaN, ±Inf, beyond ABSURD_UV), replaced by 0 for everything after;
    * clipped samples: at or beyond the rail (``rail_uv``, from the amplifier's range or
      the stream's numeric limits) and samples in a flat-topped run — at least
      ``run_min`` consecutive identical samples at the extreme value of the newest data.
      A window's maximum that merely occurs twice (1-µV steps in quantised data) is no
      flat top; an amplifier at its limit holds the value for tens of milliseconds or
      longer.
    """

    def __init__(self, n_channels: int, block: int, n_blocks: int, run_min: int,
                 rail_uv: float | None = None) -> None:
        c = n_channels
        self.block, self.n_blocks = block, n_blocks
        self.run_min = max(2, int(run_min))
        self.rail_uv = rail_uv
        self.nonfinite_ring = np.zeros((n_blocks, c))
        self.clipped_ring = np.zeros((n_blocks, c))
        self.sizes = np.zeros(n_blocks)
        self.count = 0
        # The last run_min − 1 samples of the previous block: runs across a block edge.
        self._tail = np.zeros((0, c))

    def add_block(self, x: np.ndarray) -> np.ndarray:
        """Count one block (n, C) µV; returns it with unusable samples replaced by 0."""
        with np.errstate(over="ignore", invalid="ignore"):
            total = x.sum(axis=0)
        if np.isfinite(total).all() and np.abs(total).max(initial=0.0) < ABSURD_UV * x.shape[0]:
            nonfinite = np.zeros(x.shape[1])
        else:  # NaN/±Inf or values at the numeric limits somewhere: count and zero them
            with np.errstate(invalid="ignore"):
                finite = np.isfinite(x) & (np.abs(x) < ABSURD_UV)
            nonfinite = (~finite).sum(axis=0).astype(float)
            x = np.where(finite, x, 0.0)
        clipped = self._held(x)
        if self.rail_uv is not None:
            clipped = np.maximum(clipped, (np.abs(x) >= self.rail_uv).sum(axis=0))
        slot = self.count % self.n_blocks
        self.nonfinite_ring[slot] = nonfinite
        self.clipped_ring[slot] = clipped
        self.sizes[slot] = x.shape[0]
        self.count += 1
        keep = self.run_min - 1
        if x.shape[0] >= keep:
            self._tail = x[x.shape[0] - keep :].copy()
        else:
            self._tail = np.concatenate((self._tail, x), axis=0)[-keep:]
        return x

    def _held(self, x: np.ndarray) -> np.ndarray:
        """(C,) samples of x in flat-topped runs (≥ run_min identical samples at the
        extreme of the tail and x together); runs that began in the tail count only
        their samples inside x."""
        c = x.shape[1]
        # Float data has no two consecutive samples alike: found without joining the tail.
        if not (x[1:] == x[:-1]).any() and not (len(self._tail) and (x[0] == self._tail[-1]).any()):
            return np.zeros(c)
        ext = np.concatenate((self._tail, x), axis=0) if len(self._tail) else x
        off = ext.shape[0] - x.shape[0]
        same = ext[1:] == ext[:-1]
        mx, mn = ext.max(axis=0), ext.min(axis=0)
        at_edge = (ext[1:] == mx) | (ext[1:] == mn)
        held = same & at_edge  # held[k] True: sample k+1 repeats sample k at an extreme
        if not held.any():
            return np.zeros(c)
        # Runs of True per channel (channel-major so runs never cross channels).
        h = np.zeros((c, held.shape[0] + 2), dtype=np.int8)
        h[:, 1:-1] = held.T
        d = np.diff(h, axis=1)
        ch_s, start = np.nonzero(d == 1)
        _ch_e, end = np.nonzero(d == -1)
        # A run of r repeats is r + 1 identical samples: samples start … end (in ext).
        long = (end - start + 1) >= self.run_min
        out = np.zeros(c)
        if long.any():
            first = np.maximum(start[long], off)  # samples before x were counted already
            n_in = np.maximum(end[long] + 1 - first, 0)
            np.add.at(out, ch_s[long], n_in)
        return out

    def _filled(self) -> int:
        return min(self.count, self.n_blocks)

    def nonfinite(self) -> np.ndarray:
        k = self._filled()
        return np.asarray(self.nonfinite_ring[:k].sum(axis=0)) if k else np.zeros(self.nonfinite_ring.shape[1])

    def clip_fraction(self) -> np.ndarray:
        k = self._filled()
        if not k:
            return np.zeros(self.clipped_ring.shape[1])
        return np.asarray(self.clipped_ring[:k].sum(axis=0) / max(self.sizes[:k].sum(), 1.0))
