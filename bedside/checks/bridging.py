"""Bridging: two electrodes shorted by gel or sweat carry the same signal.

Electrical distance (Tenke & Kayser 2001, Clin Neurophysiol 112:545–550):
ED_ij = var_t(V_i − V_j) = C_ii + C_jj − 2·C_ij (µV²), from a covariance matrix C.

:class:`BridgeDetector` adapts, incrementally, MNE-Python's
``mne.preprocessing.compute_bridged_electrodes`` (mne/preprocessing/_csd.py, MNE 1.x;
after Tenke & Kayser 2001, Greischar et al. 2004 and EEGLAB's eBridge):

1. band-pass 0.5–30 Hz. MNE: a zero-phase FIR over the whole recording. Here: a causal
   IIR whose state is kept between calls, so only new samples are filtered — a
   first-order high-pass and an elliptic low-pass, with half amplitude where MNE's
   default FIR has it (0.25 and 33.75 Hz; :func:`design_band`). The high-pass is first
   order (ours) so that its memory is short: after a lead changes, the old signal's
   tail has left the ED within about 2 s (a steeper high-pass kept it for 5–6 s).
2. 2-s epochs. MNE: consecutive; here one every ``hop_s`` (1 s), each epoch's ED for
   every pair from that epoch's covariance (np.var, ddof 0, as MNE).
3. A Gaussian kernel density (``scipy.stats.gaussian_kde``, default bandwidth) of the
   EDs under ``lm_cutoff_uv2`` of every pair of channels carrying signal, over the
   newest ``density_epochs`` epochs, and its local minimum found exactly as MNE finds
   it (``scipy.optimize.minimize_scalar`` on the density, infinite outside
   (0, lm_cutoff)). 16 µV² is a ceiling for that search, not a cutoff: the cutoff is
   the local minimum of this recording's distribution. With fewer values under the
   ceiling than ``epoch_threshold`` per epoch there is no bridge at all.
4. A pair is bridged when its ED is under the local minimum in more than
   ``epoch_threshold`` of the newest ``n_epochs`` epochs. MNE takes the density and
   the vote over the whole recording; here the density over 12 s (MNE's minimum
   search is unstable on a handful of values) and the vote over the newest 3 epochs
   (4 s of data: the latency target of 5 s).

Bridges are reported for the neighbour pairs. Guards of our own: both channels must be
valid (finite, not flat: the engine's flat check) and carry at least ``min_rms_uv`` in
band, so two dead leads are no bridge.

"""

from __future__ import annotations

import math
from collections import deque

import numpy as np
from scipy.optimize import minimize_scalar
from scipy.signal import butter, ellip, ellipord
from scipy.stats import gaussian_kde

from bedside.checks.base import BAD, Check, CheckResult, Context
from bedside.checks.blockfilter import BlockIIR
from bedside.checks.gram import add_gram, symmetrize
from bedside.checks.settings import BridgingSettings
from bedside.checks.types import Finding, Level

NAME = "bridging"
#: The check as the engine runs it (registry.CHECKS): the detector is the engine's (its epochs, its memo).
ENTRY = Check(NAME, "bridging", lambda i, ctx, s: i.bridge.evaluate(ctx), headline="bridge_corr",
              settings="bridging", faults=("bridge",))

#: Up to this many ED values the density is summed over the values themselves (as
#: MNE-Python's gaussian_kde); beyond, over a histogram of HISTOGRAM_BINS bins.
EXACT_KDE_MAX = 8192
#: The density sums the Gaussians within this many bandwidths of the point only
#: (exp(−½·9.5²) ≈ 2e-20 of a kernel's peak is what one further off adds).
KERNEL_REACH = 9.5
HISTOGRAM_BINS = 4096


def design_band(rate_hz: float, l_freq_hz: float, h_freq_hz: float) -> np.ndarray:
    """Second-order sections of the 0.5–30 Hz analysis band at ``rate_hz``.

    MNE-Python's default band-pass (mne.filter.create_filter, 'auto' transition
    bandwidths: l_trans = min(max(0.25·l, 2), l), h_trans = min(max(0.25·h, 2), nyq − h))
    has half amplitude at l − l_trans/2 and h + h_trans/2 (0.25 and 33.75 Hz for
    0.5–30 Hz). Here: a first-order Butterworth high-pass with half amplitude at that
    low point (gain 0.42 at 0.2 Hz, 0.76 at 0.5 Hz, 0.92 at 1 Hz; MNE's FIR: 0.32, 1.00,
    1.00 — first order for its short memory, see the module docstring), and an
    elliptic low-pass flat (0.1 dB) to h + h_trans/4 with 60 dB from h + h_trans
    (MNE's FIR stop band). Edges in Hz, so the response is the same at any rate.
    """
    nyq = rate_hz / 2.0
    l_trans = min(max(0.25 * l_freq_hz, 2.0), l_freq_hz)
    half_lo = l_freq_hz - l_trans / 2.0
    order_hp = 1  # a short memory: a lead that changes is judged on its new signal within ~1 s
    f_hp = half_lo * 3.0 ** (1.0 / (2 * order_hp))  # |H| = 1/√(1+(fc/f)^2n) = 1/2 at half_lo
    sections = [butter(order_hp, f_hp, "highpass", fs=rate_hz, output="sos")]
    h = min(h_freq_hz, 0.9 * nyq)
    h_trans = min(max(0.25 * h, 2.0), nyq - h)
    stop = min(h + h_trans, 0.99 * nyq)
    edge = h + 0.25 * (stop - h)
    if stop > h * 1.01:
        order, wn = ellipord(edge, stop, 0.1, 60.0, fs=rate_hz)
        sections.append(ellip(order, 0.1, 60.0, wn, "lowpass", fs=rate_hz, output="sos"))
    else:  # the rate leaves no room for a stop band: a plain Butterworth to h
        sections.append(butter(4, h, "lowpass", fs=rate_hz, output="sos"))
    return np.vstack(sections)


def local_minimum(ed_uv2: np.ndarray, n_epochs: int, cutoff_uv2: float, epoch_threshold: float) -> float | None:
    """The ED cutoff of this distribution, found as MNE-Python's compute_bridged_electrodes
    finds it (None: too few values under the ceiling, so no bridge; n_epochs 0 skips
    that guard, for a caller that applies it over other epochs).

    ed_uv2: every ED value of the epochs (any shape); the kernel density is taken over
    those under ``cutoff_uv2`` and minimised with minimize_scalar (Brent, its default
    bracket), the density infinite outside (0, cutoff) — MNE's own steps."""
    flat = ed_uv2[np.isfinite(ed_uv2)].ravel()
    below = flat[flat < cutoff_uv2]
    if below.size == 0 or (n_epochs and below.size / n_epochs < epoch_threshold):
        return None
    if below.size < 2:
        # One value is no distribution (MNE-Python's gaussian_kde raises): no cutoff.
        return None
    if float(np.ptp(below)) <= 1e-9 * max(1.0, float(np.abs(below).max())):
        # One value repeated (perfect shorts alone under the ceiling): the density is a
        # single spike and MNE's gaussian_kde cannot be formed (it raises); everything
        # under the ceiling is that spike, so the ceiling separates it; ours.
        return float(cutoff_uv2)
    # scipy's gaussian_kde as MNE-Python builds it (Scott's bandwidth); evaluated here as
    # the plain sum of its Gaussians, which is the same density without scipy's
    # per-call overhead (the search calls it some 70 times).
    if below.size <= EXACT_KDE_MAX:
        bw = math.sqrt(float(gaussian_kde(below).covariance[0, 0]))
        centres = np.sort(below)
        weights = np.ones(below.size)
    else:
        bw = float(np.std(below, ddof=1)) * below.size ** (-1.0 / 5.0)  # the same Scott bandwidth
        # Many values (a dense cap): the same density summed over a fine histogram
        # (bins of cutoff/4096 µV², far narrower than the bandwidth), so the cost stays
        # bounded; ours.
        counts, edges = np.histogram(below, bins=HISTOGRAM_BINS, range=(0.0, cutoff_uv2))
        keep = counts > 0
        centres = ((edges[:-1] + edges[1:]) / 2.0)[keep]
        weights = counts[keep].astype(np.float64)
    norm = 1.0 / (below.size * math.sqrt(2.0 * math.pi) * bw)
    reach = KERNEL_REACH * bw

    def density(v: float) -> float:
        if not 0.0 < v < cutoff_uv2:
            return math.inf
        # Only the Gaussians within KERNEL_REACH bandwidths of v (centres are sorted):
        # each one further off adds under 1e-19 of its peak. None that near: all of them.
        lo, hi = np.searchsorted(centres, (v - reach, v + reach))
        c, w = (centres[lo:hi], weights[lo:hi]) if hi > lo else (centres, weights)
        return float(norm * (w @ np.exp(-0.5 * ((v - c) / bw) ** 2)))

    with np.errstate(invalid="ignore"):
        return float(minimize_scalar(density).x)


#: Hops (1 s each) pooled for the correlation check's in-band covariance (bedside.checks.
#: correlation): 4 s, the engine's window.
CORR_HOPS = 4


class BridgeDetector:
    """Incremental bridging after MNE-Python's procedure (see module docstring).

    n_channels, rate_hz: of the samples given to :meth:`add` (any rate the band fits);
    pairs: neighbour index pairs (P, 2) to report; settings: ``bridging:`` of
    configs/quality.yaml. Memory: the hop sums (C × C each) and, for the newest
    ``density_epochs`` epochs, the EDs of the pairs under the density's ceiling; work:
    the filter and one C × C product per sample block, the EDs of all C(C−1)/2 pairs
    when an epoch completes, the density when a decision is asked for.
    """

    def __init__(self, n_channels: int, rate_hz: float, pairs: np.ndarray, settings: BridgingSettings,
                 keep_covs: int = 1) -> None:
        self.n_channels = c = int(n_channels)
        self.keep_covs = max(1, int(keep_covs))
        self.rate_hz = float(rate_hz)
        self.settings = s = settings
        p = np.asarray(pairs, dtype=np.int64).reshape(-1, 2)
        self.pairs = np.sort(p, axis=1)
        self._sos = design_band(self.rate_hz, s.l_freq_hz, s.h_freq_hz)
        self._iir = BlockIIR(self._sos, c)
        self._hop = max(1, round(s.hop_s * self.rate_hz))
        self._hops_per_epoch = max(1, round(s.epoch_s / s.hop_s))
        self._iu = np.triu_indices(c, 1)
        # Position of each neighbour pair in the upper-triangle order of all pairs.
        i, j = self.pairs[:, 0], self.pairs[:, 1]
        self._pair_k = (i * c - i * (i + 1) // 2 + (j - i - 1)).astype(np.int64)
        self.reset()

    def reset(self) -> None:
        """Forget everything (the filter state too): after a gap or a reconnect."""
        c = self.n_channels
        self._iir.reset()
        self._acc = np.zeros((c, c))
        self._acc_sum = np.zeros(c)
        self._acc_n = 0
        self._hops: deque[tuple[np.ndarray, np.ndarray, int]] = deque(maxlen=self._hops_per_epoch)
        n = self.settings.n_epochs
        # Per epoch, of all C(C−1)/2 pairs only those under the density's ceiling (their
        # upper-triangle positions and ED µV²): the density reads nothing else, and a dense
        # cap's 30,000 pairs need not be scanned again at every decision.
        self._below: deque[tuple[np.ndarray, np.ndarray]] = deque(maxlen=max(n, self.settings.density_epochs))
        self._ed_pairs: deque[np.ndarray] = deque(maxlen=n)  # (P,) neighbour-pair ED µV² per epoch
        self._var: deque[np.ndarray] = deque(maxlen=n)      # (C,) in-band variance per epoch
        self._cov_pairs: deque[np.ndarray] = deque(maxlen=n)  # (P,) neighbour-pair covariance per epoch
        self._within: deque[np.ndarray] = deque(maxlen=CORR_HOPS)
        #: (hop number, (C, C) in-band covariance about each hop's mean over the newest
        #: CORR_HOPS hops) for the newest ``keep_covs`` hops: the correlation check's input.
        self.recent_covs: deque[tuple[int, np.ndarray]] = deque(maxlen=self.keep_covs)
        self._within_n: deque[int] = deque(maxlen=CORR_HOPS)
        self.epochs_done = 0
        self.hops_done = 0
        self._memo: tuple[tuple[int, bytes], CheckResult] | None = None

    # ------------------------------------------------------------------ input
    def add(self, x: np.ndarray) -> None:
        """Take new samples (n, C) µV (finite: the engine zero-fills what is not)."""
        x = np.asarray(x, dtype=np.float64)
        if x.shape[0] == 0:
            return
        if self._iir.state is None:  # start in the steady state of the first sample (no DC step)
            self._iir.start_at(x[0])
        y = self._iir.filter(x)  # sosfilt's result, as two matrix products (checks/blockfilter.py)
        pos = 0
        while pos < y.shape[0]:
            take = min(self._hop - self._acc_n, y.shape[0] - pos)
            seg = y[pos : pos + take]
            add_gram(self._acc, seg, accumulate=True)  # its lower triangle (checks/gram.py)
            self._acc_sum += seg.sum(axis=0)
            self._acc_n += take
            pos += take
            if self._acc_n == self._hop:
                symmetrize(self._acc)
                self._hops.append((self._acc, self._acc_sum, self._acc_n))
                # The hop about its own mean, for the correlation check's covariance
                # (the newest CORR_HOPS hops): what is slower than a hop is left out.
                within = np.outer(self._acc_sum, self._acc_sum)
                within /= -self._acc_n
                within += self._acc
                self._within.append(within)
                self._within_n.append(self._acc_n)
                pooled = self._within[0].copy()
                for w in list(self._within)[1:]:
                    pooled += w
                pooled /= max(sum(self._within_n), 1)
                self.hops_done += 1
                self.recent_covs.append((self.hops_done, pooled))
                c = self.n_channels
                self._acc, self._acc_sum, self._acc_n = np.zeros((c, c)), np.zeros(c), 0
                if len(self._hops) == self._hops_per_epoch:
                    self._close_epoch()

    def _close_epoch(self) -> None:
        n = sum(h[2] for h in self._hops)
        s2 = sum(h[0] for h in self._hops)
        s1 = sum(h[1] for h in self._hops)
        mean = s1 / n
        cov = s2 / n - np.outer(mean, mean)  # np.var's ddof=0, as MNE uses
        var = np.diag(cov).copy()
        i, j = self._iu
        ed = np.maximum(var[i] + var[j] - 2.0 * cov[i, j], 0.0)
        k = np.flatnonzero(ed < self.settings.lm_cutoff_uv2)  # NaN compares False: left out
        self._below.append((k, ed[k]))
        self._ed_pairs.append(ed[self._pair_k])
        self._var.append(var)
        self._cov_pairs.append(cov[self.pairs[:, 0], self.pairs[:, 1]])
        self.epochs_done += 1

    # ----------------------------------------------------------------- output
    @property
    def n_epochs(self) -> int:
        """Epochs in the vote (the newest, at most settings.n_epochs)."""
        return len(self._var)

    def pair_ed(self) -> np.ndarray:
        """(n_epochs, P) ED µV² of the neighbour pairs in the voting epochs."""
        if not self._var:
            return np.zeros((0, len(self.pairs)))
        return np.vstack(self._ed_pairs)

    def decide(self, valid: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray, float | None, np.ndarray]:
        """(ED (n_epochs, P), correlation (P,), bridged (P,), local minimum, carrying (C,)).

        valid: channels fit for comparisons (C,) bool."""
        s = self.settings
        npairs = len(self.pairs)
        n_ep = self.n_epochs
        if n_ep == 0:
            z = np.zeros(npairs)
            return np.zeros((0, npairs)), z, z.astype(bool), None, np.zeros(self.n_channels, bool)
        var = np.vstack(self._var)
        carrying = np.asarray(valid, dtype=bool) & (np.sqrt(np.median(var, axis=0)) >= s.min_rms_uv)
        i, j = self._iu
        use = carrying[i] & carrying[j]
        # Each epoch's values under the ceiling, of the pairs of carrying channels.
        kept = [ed_k[use[k]] for k, ed_k in self._below]
        # MNE-Python's "enough values under the ceiling" guard, counted over the voting
        # epochs: a new bridge need not first fill the density's 12 epochs.
        if sum(len(v) for v in kept[-n_ep:]) / n_ep < s.epoch_threshold:
            lm = None
        else:
            lm = local_minimum(np.concatenate(kept), 0, s.lm_cutoff_uv2, s.epoch_threshold)
        ed = np.vstack(self._ed_pairs)
        mean_var = var.mean(axis=0)
        with np.errstate(invalid="ignore", divide="ignore"):
            r = np.vstack(self._cov_pairs).mean(axis=0) / np.sqrt(
                mean_var[self.pairs[:, 0]] * mean_var[self.pairs[:, 1]]
            )
        r = np.nan_to_num(r, nan=0.0)
        both = carrying[self.pairs[:, 0]] & carrying[self.pairs[:, 1]] if npairs else np.zeros(0, bool)
        if lm is None:
            bridged = np.zeros(npairs, dtype=bool)
        else:
            bridged = both & ((ed < lm).sum(axis=0) / n_ep > s.epoch_threshold)
        # Ours, beside MNE-Python's rule: a pair closer than any natural neighbour pair of
        # the real recordings, and nearly identical, is bridged whatever the distribution.
        short = both & ((ed < s.short_ed_uv2).sum(axis=0) / n_ep > s.epoch_threshold) & (r >= s.short_corr_min)
        return ed, r, bridged | short, lm, carrying

    def evaluate(self, ctx: Context) -> CheckResult:
        """Levels, reasons and findings for the newest epochs (recomputed only when an
        epoch has completed or the valid channels changed)."""
        key = (self.epochs_done, np.asarray(ctx.valid, dtype=bool).tobytes())
        if self._memo is not None and self._memo[0] == key:
            return self._memo[1]
        res = self._evaluate(ctx)
        self._memo = (key, res)
        return res

    def _evaluate(self, ctx: Context) -> CheckResult:
        n = len(ctx.names)
        ed, r, bridged, lm, _carrying = self.decide(ctx.valid)
        pairs = self.pairs
        n_ep = ed.shape[0]
        med = np.median(ed, axis=0) if n_ep else np.full(len(pairs), np.nan)
        min_ed = np.full(n, np.nan)
        max_r = np.full(n, np.nan)
        if len(pairs) and n_ep:
            for col in (0, 1):
                idx = pairs[:, col]
                np.fmin.at(min_ed, idx, med)
                np.fmax.at(max_r, idx, r)
        level = np.zeros(n, dtype=np.int8)
        reasons: dict[int, str] = {}
        findings = []
        partners: dict[int, list[str]] = {}
        for k in np.flatnonzero(bridged):
            a, b = int(pairs[k, 0]), int(pairs[k, 1])
            na, nb = ctx.names[a], ctx.names[b]
            level[a] = level[b] = BAD
            partners.setdefault(a, []).append(nb)
            partners.setdefault(b, []).append(na)
            votes = int((ed[:, k] < (lm or 0.0)).sum())
            if lm is not None and votes / max(n_ep, 1) > self.settings.epoch_threshold:
                why = f"under this recording's cutoff {lm:.2f} µV² in {votes} of {n_ep} epochs"
            else:  # our close-pair rule
                close = int((ed[:, k] < self.settings.short_ed_uv2).sum())
                why = (f"under {self.settings.short_ed_uv2:g} µV², closer than natural neighbours,"
                       f" in {close} of {n_ep} epochs")
            findings.append(
                Finding(
                    "bridge",
                    (na, nb),
                    Level.BAD,
                    f"{na}–{nb} look bridged (electrical distance {med[k]:.2f} µV², {why};"
                    f" correlation {r[k]:.3f}) — clean away the gel between them and dry the scalp, then re-apply",
                )
            )
        for i, others in partners.items():
            reasons[i] = (
                f"bridged with {', '.join(others)} (electrical distance {min_ed[i]:.2f} µV²)"
                " — clean away the gel between them and dry the scalp"
            )
        metrics = {"bridge_ed_uv2": min_ed, "bridge_corr": max_r}
        return CheckResult(NAME, metrics, level, reasons, tuple(findings))
