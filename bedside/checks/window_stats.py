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


@dataclass(frozen=True)
class WindowStats:
    """The window's time-domain statistics, per channel unless stated.

    n_samples: samples in the window; block_means_uv: (n_blocks, C), oldest first;
    block_times_s: (n_blocks,) centre time of each block on the engine's sample
    clock; within_uv2: (C, C) sum of the blocks' scatter about their own means;
    block_dev_uv: (n_blocks, C) block means minus the window mean; block: samples
    per block (cov_uv2 and pair_cov combine these); mean_uv, var_uv2, ptp_uv,
    max_abs_uv: (C,); zero_diff_fraction: share of consecutive samples with no
    change; clip_fraction: share of samples in runs at the block extreme (or at
    the rail when the amplifier range is known); step_max_uv: (n_blocks, C)
    largest single-sample step per block; step_rms_uv: (n_blocks, C) RMS of the
    steps per block; step_rest_rms_uv: the same without the largest step; nonfinite: (C,) NaN/±Inf samples in the window; recent_ptp_uv,
    recent_zero_diff_fraction: the same over the newest blocks only (fast reaction).
    """

    n_samples: int
    block_means_uv: np.ndarray
    block_times_s: np.ndarray
    within_uv2: np.ndarray
    block_dev_uv: np.ndarray
    block: int
    mean_uv: np.ndarray
    var_uv2: np.ndarray
    ptp_uv: np.ndarray
    max_abs_uv: np.ndarray
    zero_diff_fraction: np.ndarray
    clip_fraction: np.ndarray
    step_max_uv: np.ndarray
    step_rms_uv: np.ndarray
    step_rest_rms_uv: np.ndarray
    nonfinite: np.ndarray
    recent_ptp_uv: np.ndarray
    recent_zero_diff_fraction: np.ndarray

    @cached_property
    def cov_uv2(self) -> np.ndarray:
        """(C, C) covariance over the window (ddof=1), combined from the blocks on demand."""
        return np.asarray(
            (self.within_uv2 + self.block * (self.block_dev_uv.T @ self.block_dev_uv))
            / max(self.n_samples - 1, 1)
        )

    def pair_cov(self, i: np.ndarray, j: np.ndarray) -> np.ndarray:
        """Covariance (µV²) of the channel pairs (i[k], j[k]) only: O(pairs), not O(C²)."""
        d = self.block_dev_uv
        between = np.einsum("kp,kp->p", d[:, i], d[:, j])
        return np.asarray((self.within_uv2[i, j] + self.block * between) / max(self.n_samples - 1, 1))

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
        rail_uv: float | None = None,
    ) -> None:
        c = n_channels
        self.block, self.n_blocks, self.rate_hz = block, n_blocks, rate_hz
        self.refresh_blocks = max(1, refresh_blocks)
        self.rail_uv = rail_uv
        self.means = np.zeros((n_blocks, c))
        self.m2 = np.zeros((n_blocks, c, c))
        self.maxs = np.zeros((n_blocks, c))
        self.mins = np.zeros((n_blocks, c))
        self.step_max = np.zeros((n_blocks, c))
        self.step_ss = np.zeros((n_blocks, c))
        self.zero_diffs = np.zeros((n_blocks, c))
        self.clipped = np.zeros((n_blocks, c))
        self.nonfinite = np.zeros((n_blocks, c))
        self.starts = np.zeros(n_blocks, dtype=np.int64)
        self.m2_sum = np.zeros((c, c))
        self.count = 0  # blocks seen since start
        self._last = np.zeros(c)  # last sample of the previous block (for steps)
        self._have_last = False
        self._since_refresh = 0
        # Work arrays, allocated once (fresh large arrays cost page faults every block).
        self._xc = np.zeros((block, c))
        self._steps = np.zeros((block, c))

    @property
    def filled(self) -> int:
        return min(self.count, self.n_blocks)

    def add_block(self, x: np.ndarray, start_sample: int) -> np.ndarray:
        """Summarise one block (block, C) µV; returns the block with NaN/Inf replaced by 0."""
        with np.errstate(over="ignore", invalid="ignore"):
            total = x.sum(axis=0)
        if np.isfinite(total).all() and np.abs(total).max(initial=0.0) < ABSURD_UV * x.shape[0]:
            nonfinite = np.zeros(x.shape[1])
        else:  # NaN/±Inf or values at the numeric limits somewhere: count and zero them
            with np.errstate(invalid="ignore"):
                finite = np.isfinite(x) & (np.abs(x) < ABSURD_UV)
            nonfinite = (~finite).sum(axis=0).astype(float)
            x = np.where(finite, x, 0.0)
            total = x.sum(axis=0)
        slot = self.count % self.n_blocks
        if self.count >= self.n_blocks:
            self.m2_sum -= self.m2[slot]
        mean = total / x.shape[0]
        xc = np.subtract(x, mean, out=self._xc)
        m2 = np.matmul(xc.T, xc, out=self.m2[slot])
        self.m2_sum += m2
        mx, mn = x.max(axis=0), x.min(axis=0)
        # Steps between consecutive samples; the very first sample of a stream has none.
        k0 = 0 if self._have_last else 1
        steps = self._steps
        steps[0] = x[0] - self._last if self._have_last else 0.0
        np.subtract(x[1:], x[:-1], out=steps[1:])
        st = steps[k0:]
        # Signed steps: max |step| = max(max, −min), no |·| pass; a repeated value is a zero step.
        step_max = np.maximum(steps.max(axis=0), -steps.min(axis=0))
        if np.count_nonzero(st) < st.size:  # some channel repeats a value: count where
            still = st == 0.0
            n_still = still.sum(axis=0)
            xs = x[k0:]
            at_edge = (xs == mx) | (xs == mn)
            clipped = (still & at_edge).sum(axis=0)
        else:
            n_still = np.zeros(x.shape[1], dtype=np.int64)
            clipped = np.zeros(x.shape[1], dtype=np.int64)
        if self.rail_uv is not None:
            clipped = np.maximum(clipped, (np.abs(x) >= self.rail_uv).sum(axis=0))
        self.means[slot] = mean
        self.maxs[slot], self.mins[slot] = mx, mn
        self.step_max[slot] = step_max
        self.step_ss[slot] = np.einsum("ij,ij->j", steps, steps)
        self.zero_diffs[slot] = n_still
        self.clipped[slot] = clipped
        self.nonfinite[slot] = nonfinite
        self.starts[slot] = start_sample
        self._last = x[-1].copy()
        self._have_last = True
        self.count += 1
        self._since_refresh += 1
        if self._since_refresh >= self.refresh_blocks:
            self.refresh()
        return x

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

    def stats(self, recent_blocks: int = 4) -> WindowStats:
        """Combine the ring into the window's statistics (recent_*: the newest blocks only)."""
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
            within_uv2=self.m2_sum.copy(),
            block_dev_uv=d,
            block=b,
            mean_uv=mean,
            var_uv2=var,
            ptp_uv=maxs - mins,
            max_abs_uv=np.maximum(np.abs(maxs), np.abs(mins)),
            zero_diff_fraction=self.zero_diffs[order].sum(axis=0) / n,
            clip_fraction=self.clipped[order].sum(axis=0) / n,
            step_max_uv=self.step_max[order],
            step_rms_uv=np.sqrt(self.step_ss[order] / b),
            step_rest_rms_uv=np.sqrt(
                np.maximum(self.step_ss[order] - self.step_max[order] ** 2, 0.0) / max(b - 1, 1)
            ),
            nonfinite=self.nonfinite[order].sum(axis=0),
            recent_ptp_uv=self.maxs[recent].max(axis=0) - self.mins[recent].min(axis=0),
            recent_zero_diff_fraction=self.zero_diffs[recent].sum(axis=0) / (len(recent) * b),
        )
