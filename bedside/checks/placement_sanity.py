"""Placement sanity (advisory): physiology that tells a mix-up of electrodes.

Blinks are strongest at the frontal poles and alpha at the back of the head
(common practice of EEG reading; alpha 8–13 Hz, IFCN glossary). When a posterior
channel shows the frontal pattern (large low-frequency blink power) while a
frontal channel shows the posterior one (alpha), by at least min_evidence_ratio
both ways, the pair is flagged as likely swapped or mislabelled. The rule is ours.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from bedside.checks.base import Check, CheckResult
from bedside.checks.settings import QualitySettings
from bedside.checks.spectrum import Spectrum
from bedside.checks.types import Finding, Level

NAME = "placement"
BLINK_BAND_HZ = (1.0, 3.0)  # where blink energy lies with 1-s segments; ours


def region(name: str) -> str:
    """'frontal' (Fp*, AF*), 'posterior' (O*, PO*, P* but not Fp*), or ''."""
    n = name.strip()
    low = n.lower()
    if low.startswith(("fp", "af")):
        return "frontal"
    if low.startswith(("o", "po", "p")) and not low.startswith("fp"):
        return "posterior"
    return ""


@lru_cache(maxsize=64)
def regions_of(names: tuple[str, ...]) -> tuple[str, ...]:
    return tuple(region(n) for n in names)


def evaluate(spec: Spectrum, names: tuple[str, ...], valid: np.ndarray, settings: QualitySettings) -> tuple[Finding, ...]:
    ps = settings.placement
    regions = regions_of(names)
    front = [i for i, r in enumerate(regions) if r == "frontal" and valid[i]]
    back = [i for i, r in enumerate(regions) if r == "posterior" and valid[i]]
    if not front or not back:
        return ()
    both = spec.band_powers((BLINK_BAND_HZ, ps.alpha_band_hz))
    blink, alpha = both[:, 0], both[:, 1]
    k = ps.min_evidence_ratio
    candidates = []
    for f in front:
        for b in back:
            if blink[b] >= k * blink[f] and alpha[f] >= k * alpha[b] and blink[b] > 0 and alpha[f] > 0:
                score = float(np.log(blink[b] / blink[f]) + np.log(alpha[f] / alpha[b]))
                candidates.append((score, f, b))
    findings = []
    used: set[int] = set()
    for _score, f, b in sorted(candidates, reverse=True):
        if f in used or b in used:
            continue
        used |= {f, b}
        findings.append(
            Finding(
                "placement",
                (names[f], names[b]),
                Level.CHECK,
                f"{names[f]} and {names[b]} look swapped (blink-like activity at {names[b]}, alpha at"
                f" {names[f]}) — check the labels and which lead goes to which electrode",
            )
        )
    return tuple(findings)


#: Advisory, on the spectrum alone: findings only (no per-channel verdict).
ENTRY = Check(
    NAME, "spectrum",
    lambda i, ctx, s: CheckResult(NAME, {}, np.zeros(len(ctx.names), dtype=np.int8), {},
                                  evaluate(i.spectrum, ctx.names, ctx.valid, s)),
    headline=None, settings="placement", findings_only=True,
)
