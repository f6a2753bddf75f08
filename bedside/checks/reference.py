"""Reference or ground: when most scalp channels share one fault, say so once.

A fault of the reference appears in every channel with the same sign and phase
(x_i = s_i − r); mains from a poor ground reaches the channels through the
reference's and each electrode's impedance mismatch (Huhta & Webster 1973, IEEE TBME
20:91–101), the reference's share with one sign in all. So the blame rests on the
shared component, not on how many channels are flagged: a fault of one kind on at
least ``majority_fraction`` of the scalp channels is put on the reference/ground
only when, in at least that many of them, the common signal (the mean over the
scalp channels) explains at least ``shared_min`` of the fault's variance, with one
sign. Independent faults — drifts of random sign on 15 of 19 electrodes, mains
picked up lead by lead with scattered phases — stay each electrode's own.

Which checks take part, with their finding's kind, remedy and evidence, is each
check's own ``shared`` declaration (``registry.SHARED``, in ``registry.CHECKS`` order).
What is compared, per kind of evidence:

* "block_means" (drift): the block means (what is slower than a 0.25-s block),
  analysis copy;
* "covariance" (pops and high amplitude): the window's covariance, analysis copy;
* "mains_phasors" (mains): the complex spectrum at the mains frequency per spectral
  segment (SpectralAccumulator.phasors), so phase and sign are known;
* "majority" (flat): most channels flat at once have no waveform to compare; their
  one shared cause is the reference or ground lead (or the amplifier), so the
  majority alone decides.

The share is r² between a channel and the common signal (for mains: cos² of the
phase difference to the common phasor); "one sign" is a positive covariance (for
mains: a phase within ±90° of the common one). The method of
telling shared from single-electrode faults is our own. When blamed, one finding
names the reference/ground, and the channels are shown at most as "check" (never
green while the fault is there, never a wall of red).
"""

from __future__ import annotations

from collections.abc import Callable, Mapping

import numpy as np

from bedside.checks.base import BAD, CHECK, CheckResult, Context, fmt_names
from bedside.checks.registry import SHARED
from bedside.checks.settings import QualitySettings
from bedside.checks.types import Finding, Level
from bedside.checks.window_stats import WindowStats

#: The common signal's variance, as a share of the channels' mean variance, under which
#: it is taken to be none (rounding of data whose channels sum to zero is about 1e-30).
COMMON_FLOOR = 1e-12


def share_of_common(cov: np.ndarray, pool: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(share, same_sign) per channel from a (C, C) covariance (real or Hermitian):
    share_i = (Re cov(x_i, m))² / (var(x_i)·var(m)) with m the mean of the ``pool``
    channels — the part of x_i that m explains with a real coefficient (one waveform:
    for mains phasors, cos² of the phase difference, since any two sinusoids of one
    frequency are alike up to a complex factor); same_sign_i: Re cov(x_i, m) > 0.
    Channels with no variance get 0."""
    idx = np.flatnonzero(pool)
    c = cov.shape[0]
    if len(idx) == 0:
        return np.zeros(c), np.zeros(c, dtype=bool)
    with_m = cov[:, idx].mean(axis=1)  # cov(x_i, m)
    var_m = float(np.real(cov[np.ix_(idx, idx)].mean()))
    var_i = np.real(np.diag(cov))
    # A common signal with (to rounding) no power explains nothing: average-referenced
    # channels sum to zero, and the ratio of two rounding errors would decide the share.
    if not var_m > COMMON_FLOOR * float(np.mean(var_i[idx])):
        return np.zeros(c), np.zeros(c, dtype=bool)
    with np.errstate(invalid="ignore", divide="ignore"):
        share = np.real(with_m) ** 2 / (var_i * var_m)
    share = np.nan_to_num(np.clip(share, 0.0, 1.0), nan=0.0)
    return share, np.real(with_m) > 0


def _phasor_cov(z: np.ndarray) -> np.ndarray:
    """Hermitian (C, C) cross-spectrum Σ_k conj(z_ki)·z_kj of phasors z (K, C)."""
    return np.asarray(z.conj().T @ z)


def evaluate(
    results: dict[str, CheckResult], ctx: Context, finite: np.ndarray, settings: QualitySettings,
    stats: WindowStats | None = None, mains_phasors: np.ndarray | None = None,
    average: bool = False,
) -> tuple[dict[str, CheckResult], tuple[Finding, ...]]:
    """Return the results with shared faults demoted, and the reference/ground findings.

    stats: the window (drift, pops, amplitude); mains_phasors: (K, C) complex at the
    mains frequency (line noise). A kind whose evidence is missing is not blamed.
    average: the channels are average-referenced — there is no reference electrode to
    blame, and what the channels share is each lead's 1/N part in all the others."""
    rs = settings.reference
    pool = ctx.scalp & finite
    n_pool = int(pool.sum())
    if average or n_pool < rs.min_channels:
        return results, ()
    # The evidence, computed only for a kind that a majority shows (most updates: none).
    covs: Mapping[str, Callable[[], np.ndarray | None]] = {
        "block_means": lambda: None if stats is None else stats.block_dev_uv.T @ stats.block_dev_uv,
        "covariance": lambda: None if stats is None else stats.cov_uv2,
        "mains_phasors": lambda: None if mains_phasors is None else _phasor_cov(mains_phasors),
    }
    out = dict(results)
    findings = []
    need = rs.majority_fraction * n_pool
    for name, (kind, what, remedy, evidence) in SHARED.items():
        res = results.get(name)
        if res is None:
            continue
        hit = pool & (res.level > 0)
        if int(hit.sum()) < need:
            continue
        if evidence == "majority":
            shared = hit
        else:
            make = covs.get(evidence)
            cov = make() if make is not None else None
            if cov is None:
                continue
            share, same_sign = share_of_common(cov, pool)
            shared = hit & (share >= rs.shared_min) & same_sign
            if int(shared.sum()) < need:
                continue  # many electrodes, each with a fault of its own
        n_hit = int(shared.sum())
        worst = Level.BAD if (res.level[shared] >= BAD).any() else Level.CHECK
        names = [ctx.names[i] for i in np.flatnonzero(shared)]
        how = "at once" if evidence == "majority" else "one shared waveform"
        findings.append(
            Finding(
                kind,
                tuple(names),
                worst,
                f"{what} in {n_hit} of {n_pool} scalp channels ({fmt_names(names)}), {how} — {remedy}",
            )
        )
        level = res.level.copy()
        level[shared] = np.minimum(level[shared], CHECK)
        reasons = dict(res.reasons)
        for i in np.flatnonzero(shared):
            reasons[int(i)] = f"{what} shared by most channels — {remedy}"
        out[name] = CheckResult(res.name, res.metrics, level, reasons, res.findings)
    return out, tuple(findings)
