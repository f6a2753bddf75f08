"""What every check receives and returns.

A check is a pure function ``evaluate(stats, spectrum, ctx, settings) -> CheckResult``
over arrays shaped per channel (n_channels,), vectorised across channels. Levels are
integers 0 (good), 1 (check), 2 (bad); the engine turns them into
:class:`~bedside.checks.types.Level` and applies the hold.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from bedside.checks.types import Finding

GOOD, CHECK, BAD = 0, 1, 2


@dataclass(frozen=True)
class Context:
    """What the checks know about the channels.

    names: channel names in stream order; scalp: bool (n_channels,), takes part in
    scalp checks; valid: scalp channels fit for comparisons across channels (finite,
    not flat) — filled in by the engine after the flat and finite checks;
    neighbours: index pairs (i, j), i < j; rate_hz: the analysis copy's rate (the
    rate of the time-domain statistics); amplifier_range_uv: ±range when known;
    mains_hz: the mains frequency in use (None while not yet detected); coupling:
    the amplifier's ("ac", "dc"; None: unknown).
    """

    names: tuple[str, ...]
    scalp: np.ndarray
    valid: np.ndarray
    neighbours: np.ndarray
    rate_hz: float
    window_s: float
    amplifier_range_uv: float | None = None
    mains_hz: float | None = None
    coupling: str | None = None


@dataclass(frozen=True)
class CheckResult:
    """One check's verdict for every channel.

    metrics: name (unit in the name) → array (n_channels,); level: int8 array
    (n_channels,) of 0/1/2; reasons: channel index → plain words with the number and
    the usual remedy (only for non-good channels); findings: anything that concerns
    several channels (a bridge names its pair).
    """

    name: str
    metrics: dict[str, np.ndarray]
    level: np.ndarray
    reasons: dict[int, str] = field(default_factory=dict)
    findings: tuple[Finding, ...] = ()


def levels_from(value: np.ndarray, check_at: float, bad_at: float, *, below: bool = False) -> np.ndarray:
    """0/1/2 per channel: value at/over ``check_at`` → 1, at/over ``bad_at`` → 2.

    With ``below=True`` the test is reversed (value at/under the limit). NaN → 0.
    """
    with np.errstate(invalid="ignore"):
        if below:
            check, bad = value <= check_at, value <= bad_at
        else:
            check, bad = value >= check_at, value >= bad_at
    out = np.zeros(value.shape, dtype=np.int8)
    out[check] = CHECK
    out[bad] = BAD
    return out


def robust_z(value: np.ndarray, mask: np.ndarray) -> np.ndarray:
    """Robust z-score across the channels in ``mask``: (x − median) / (1.4826 · MAD).

    Bigdely-Shamlo et al. 2015 (PREP) use this form for the deviation and
    HF-noise criteria. Channels outside ``mask`` get 0. A MAD of 0 gives 0.
    """
    z = np.zeros(value.shape, dtype=float)
    if mask.sum() < 3:
        return z
    sel = value[mask]
    med = float(np.median(sel))
    mad = 1.4826 * float(np.median(np.abs(sel - med)))
    if mad <= 0 or not np.isfinite(mad):
        return z
    z[mask] = (sel - med) / mad
    return z


def fmt_names(names: Sequence[str], limit: int = 6) -> str:
    """'Fp1, Fp2, F3 and 5 more' — short lists for reasons."""
    names = list(names)
    if len(names) <= limit:
        return ", ".join(names)
    return ", ".join(names[:limit]) + f" and {len(names) - limit} more"
