"""Montages for display: the scalp channels as recorded, in average reference, or in
the trade's standard bipolar chains.

The chains are those of the ACNS proposal for standard montages (Acharya JN, Hani AJ,
Thirumala PD, Tsuchida TN 2016, American Clinical Neurophysiology Society Guideline 3;
``[src: acharya-2016-acns-guideline-3]`` in configs/bibliography.yaml):

- longitudinal bipolar (the "double banana"), 18 derivations: the left temporal chain
  Fp1-F7-T7-P7-O1, the left parasagittal chain Fp1-F3-C3-P3-O1, the midline Fz-Cz-Pz,
  then the right parasagittal and right temporal chains;
- transverse bipolar, 18 derivations: rows from the front back, each left to right,
  F7-Fp1-Fp2-F8, F7-F3-Fz-F4-F8, T7-C3-Cz-C4-T8, P7-P3-Pz-P4-P8, P7-O1-O2-P8.

The guideline's general rules (its section 2) are checked in tests/test_montage.py:
anterior derivations above posterior ones, left above right, electrode pairs in
unbroken straight chains. The block order of the longitudinal chains and the
transverse rows are from memory of the guideline's tables (to be confirmed against
its LB-18 and TB-18 lists).

Everything here is display only: a derivation feeds no check. Arrays are
(n_samples, n_channels) in µV, as everywhere in bedside.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal

import numpy as np

from bedside.placement.systems import canonical_name

Montage = Literal["recorded", "average", "longitudinal", "transverse"]
MONTAGES: tuple[Montage, ...] = ("recorded", "average", "longitudinal", "transverse")
MONTAGE_LABEL: dict[Montage, str] = {
    "recorded": "as recorded",
    "average": "average reference",
    "longitudinal": "longitudinal bipolar",
    "transverse": "transverse bipolar",
}

#: Longitudinal bipolar chains, front to back, in display order (left above right).
LONGITUDINAL_CHAINS: tuple[tuple[str, ...], ...] = (
    ("Fp1", "F7", "T7", "P7", "O1"),
    ("Fp1", "F3", "C3", "P3", "O1"),
    ("Fz", "Cz", "Pz"),
    ("Fp2", "F4", "C4", "P4", "O2"),
    ("Fp2", "F8", "T8", "P8", "O2"),
)
#: Transverse bipolar chains, left to right, in display order (front above back).
TRANSVERSE_CHAINS: tuple[tuple[str, ...], ...] = (
    ("F7", "Fp1", "Fp2", "F8"),
    ("F7", "F3", "Fz", "F4", "F8"),
    ("T7", "C3", "Cz", "C4", "T8"),
    ("P7", "P3", "Pz", "P4", "P8"),
    ("P7", "O1", "O2", "P8"),
)
CHAINS: dict[Montage, tuple[tuple[str, ...], ...]] = {
    "longitudinal": LONGITUDINAL_CHAINS,
    "transverse": TRANSVERSE_CHAINS,
}

#: ``Derivation.minus`` for the average of the scalp channels.
AVERAGE = -1


@dataclass(frozen=True)
class Derivation:
    """One row of a montage: ``plus`` minus ``minus`` (channel indices).

    minus: a channel index, :data:`AVERAGE` (the mean of the scalp channels) or None
    (as recorded). electrodes: the channel names it reads (one or two), for verdicts.
    """

    label: str
    plus: int
    minus: int | None
    electrodes: tuple[str, ...]


@dataclass(frozen=True)
class MontagePlan:
    """The derivations a stream can show in one montage, and the standard ones it cannot
    (``missing``: "F7-T7 (no F7)"), so nothing is left out in silence."""

    montage: Montage
    derivations: tuple[Derivation, ...]
    missing: tuple[str, ...]


def chain_pairs(chains: Sequence[Sequence[str]]) -> tuple[tuple[str, str], ...]:
    """The electrode pairs of the chains, in order: (Fp1, F7), (F7, T7), …"""
    return tuple((c[i], c[i + 1]) for c in chains for i in range(len(c) - 1))


def _by_site(names: Sequence[str]) -> dict[str, int]:
    """Modern 10-20 site name → channel index (first channel of each site)."""
    found: dict[str, int] = {}
    for i, name in enumerate(names):
        site = canonical_name(name)
        if site is not None and site not in found:
            found[site] = i
    return found


def plan_montage(names: Sequence[str], is_scalp: Sequence[bool], montage: Montage) -> MontagePlan:
    """The derivations of ``montage`` for channels ``names`` (scalp flags beside them).

    recorded and average: every scalp channel in stream order. longitudinal and
    transverse: the standard pairs whose two electrodes the stream has (found by their
    10-20 name, classic names too), in the guideline's order.
    """
    if montage not in MONTAGES:
        raise ValueError(f"unknown montage {montage!r}; accepted: {', '.join(MONTAGES)}")
    if len(names) != len(is_scalp):
        raise ValueError(f"{len(names)} names but {len(is_scalp)} scalp flags")
    if montage in ("recorded", "average"):
        minus = None if montage == "recorded" else AVERAGE
        rows = tuple(Derivation(n, i, minus, (n,)) for i, n in enumerate(names) if is_scalp[i])
        return MontagePlan(montage, rows, ())
    sites = _by_site([n if is_scalp[i] else "" for i, n in enumerate(names)])
    rows_: list[Derivation] = []
    missing: list[str] = []
    for a, b in chain_pairs(CHAINS[montage]):
        label = f"{a}-{b}"
        absent = [s for s in (a, b) if s not in sites]
        if absent:
            missing.append(f"{label} (no {', '.join(absent)})")
            continue
        rows_.append(Derivation(label, sites[a], sites[b], (names[sites[a]], names[sites[b]])))
    return MontagePlan(montage, tuple(rows_), tuple(missing))


def derive(window_uv: np.ndarray, plan: MontagePlan, is_scalp: Sequence[bool]) -> np.ndarray:
    """The montage's rows from ``window_uv`` (n_samples, n_channels) µV → (n_samples,
    n_derivations) µV. The average reference is the mean of the scalp channels."""
    x = np.asarray(window_uv, dtype=np.float64)
    if x.ndim != 2:
        raise ValueError(f"window_uv must be (n_samples, n_channels), got shape {x.shape}")
    out = np.empty((x.shape[0], len(plan.derivations)), dtype=np.float64)
    mask = np.asarray(is_scalp, dtype=bool)
    average = x[:, mask].mean(axis=1) if mask.any() and any(
        d.minus == AVERAGE for d in plan.derivations) else None
    for j, d in enumerate(plan.derivations):
        if d.minus is None:
            out[:, j] = x[:, d.plus]
        elif d.minus == AVERAGE:
            out[:, j] = x[:, d.plus] - (average if average is not None else 0.0)
        else:
            out[:, j] = x[:, d.plus] - x[:, d.minus]
    return out


def chain_partner(name: str, names: Sequence[str]) -> str | None:
    """The electrode ``name`` is read against in the longitudinal chains: the next one
    back in the first chain that holds it (Fp1 → F7), or, at a chain's end, the one
    before it (O1 → P7); None when the stream has no chain partner for it."""
    site = canonical_name(name)
    if site is None:
        return None
    sites = _by_site(names)
    for chain in LONGITUDINAL_CHAINS:
        if site not in chain:
            continue
        i = chain.index(site)
        for j in (i + 1, i - 1):
            if 0 <= j < len(chain) and chain[j] in sites:
                return names[sites[chain[j]]]
    return None
