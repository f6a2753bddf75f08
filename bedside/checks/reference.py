"""Reference or ground: when most scalp channels share one fault, say so once.

A fault of the reference appears in every channel with the same sign and phase
(x_i = s_i − r); mains from a poor ground appears in all channels, scaled by each
electrode's impedance mismatch (Huhta & Webster 1973, IEEE TBME 20:91–101). Telling
these apart from single-electrode faults by a majority rule is our own method:
when at least ``majority_fraction`` of the finite scalp channels share a fault of
one kind, one finding names the reference/ground, and the channels are shown at
most as "check" (never green while the fault is there, never a wall of red).
"""

from __future__ import annotations

import numpy as np

from bedside.checks.base import BAD, CHECK, CheckResult, Context, fmt_names
from bedside.checks.settings import QualitySettings
from bedside.checks.types import Finding, Level

#: check name → (finding kind, what is shared, the usual remedy)
SHARED = {
    "line_noise": (
        "ground",
        "mains noise",
        "check the ground (and reference) electrode first; move mains cables and chargers away",
    ),
    "drift": ("reference", "drift", "check the reference electrode first (contact, gel)"),
    "flat": ("reference", "flat signal", "check the reference and ground leads are plugged in"),
    "pops": ("reference", "pops", "check the reference electrode first (contact, gel)"),
    "amplitude": ("reference", "high amplitude", "check the reference electrode first (contact, gel)"),
}


def evaluate(
    results: dict[str, CheckResult], ctx: Context, finite: np.ndarray, settings: QualitySettings
) -> tuple[dict[str, CheckResult], tuple[Finding, ...]]:
    """Return the results with shared faults demoted, and the reference/ground findings."""
    rs = settings.reference
    pool = ctx.scalp & finite
    n_pool = int(pool.sum())
    if n_pool < rs.min_channels:
        return results, ()
    out = dict(results)
    findings = []
    for name, (kind, what, remedy) in SHARED.items():
        res = results.get(name)
        if res is None:
            continue
        hit = pool & (res.level > 0)
        n_hit = int(hit.sum())
        if n_hit < rs.majority_fraction * n_pool:
            continue
        worst = Level.BAD if (res.level[hit] >= BAD).any() else Level.CHECK
        names = [ctx.names[i] for i in np.flatnonzero(hit)]
        findings.append(
            Finding(
                kind,
                tuple(names),
                worst,
                f"{what} in {n_hit} of {n_pool} scalp channels ({fmt_names(names)}) — {remedy}",
            )
        )
        level = res.level.copy()
        level[hit] = np.minimum(level[hit], CHECK)
        reasons = dict(res.reasons)
        for i in np.flatnonzero(hit):
            reasons[int(i)] = f"{what} shared by most channels — {remedy}"
        out[name] = CheckResult(res.name, res.metrics, level, reasons, res.findings)
    return out, tuple(findings)
