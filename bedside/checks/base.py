"""What every check receives and returns, and the one protocol every check declares.

A check is a pure function over arrays shaped per channel (n_channels,), vectorised
across channels, declared as a :class:`Check` (its name, what it reads, its headline
metric, the remedy when its fault is shared through the reference, its settings
section); ``bedside.checks.registry.CHECKS`` lists them and the engine runs that list.
Levels are integers 0 (good), 1 (check), 2 (bad); the engine turns them into
:class:`~bedside.checks.types.Level` and applies the hold.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Literal, NamedTuple

import numpy as np

from bedside.checks.types import Finding

if TYPE_CHECKING:
    from bedside.checks.bridging import BridgeDetector
    from bedside.checks.correlation import History
    from bedside.checks.settings import QualitySettings
    from bedside.checks.spectrum import Spectrum
    from bedside.checks.window_stats import WindowStats

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
    the amplifier's ("ac", "dc"; None: unknown); margins: the engine's hysteresis
    memory (levels_from's ``rule``/``margins``; None: no hysteresis).
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
    margins: Margins | None = None


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


@dataclass(frozen=True)
class Inputs:
    """What the engine hands every check at one evaluation (read, never change in place).

    stats: the window's statistics (analysis copy; flat, drift, pops, clipping,
    amplitude); spectrum: the window's one shared spectrum, recent: its newest
    ``line_noise.recent_s``; bridge: the bridging detector (its in-band epochs and
    covariance per hop); correlation: the correlation check's history over those hops;
    results: the verdicts of the checks the engine has run before this one (in
    ``CHECKS`` order, the check that decides validity first)."""

    stats: WindowStats
    spectrum: Spectrum
    recent: Spectrum
    bridge: BridgeDetector
    correlation: History
    results: Mapping[str, CheckResult]


#: The finding kinds of a fault most channels share through the reference or ground.
SHARED_KINDS = ("reference", "ground")


class Shared(NamedTuple):
    """How a check's fault, on most scalp channels at once, is put on the reference or
    ground (bedside.checks.reference): the finding's kind ("reference", "ground"), what
    is shared ("drift"), the usual remedy, and the evidence that shows one shared
    waveform — "block_means" (the window's block means), "covariance" (the window's
    covariance), "mains_phasors" (the complex spectrum at the mains per segment) or
    "majority" (no waveform to compare: the majority alone decides)."""

    kind: Literal["reference", "ground"]
    what: str
    remedy: str
    evidence: Literal["block_means", "covariance", "mains_phasors", "majority"]


#: What a check reads: the window's statistics, the spectrum only (the engine reuses
#: its result until a spectral segment completes or the valid channels or mains
#: change), or the bridging state (the detector's epochs; its own memo).
Reads = Literal["stats", "spectrum", "bridging"]


@dataclass(frozen=True)
class Check:
    """One check, as the engine, the reference, the benchmark and the app see it.

    name: its key in ``ChannelQuality.checks``; reads: see :data:`Reads`; evaluate:
    ``(inputs, ctx, settings) -> CheckResult`` (pure; never change an input array in
    place); headline: the metric the app's Watch table shows for it (None: no column);
    settings: its section of ``QualitySettings`` and of ``configs/quality.yaml``;
    shared: how its fault is put on the reference/ground when most channels share it
    (None: never); faults: the simulator's fault kinds it shows (``bedside bench``'s
    latency and the simulator tests); sets_valid: it decides which channels are fit for
    the others (flat) — run first, on every channel (valid: finite), and a channel it
    calls bad is not valid for the rest; findings_only: it judges the setup, not the
    channels — only its findings are kept, after the reference's."""

    name: str
    reads: Reads
    evaluate: Callable[[Inputs, Context, QualitySettings], CheckResult]
    headline: str | None
    settings: str
    shared: Shared | None = None
    faults: tuple[str, ...] = ()
    sets_valid: bool = False
    findings_only: bool = False


class Margins:
    """Hysteresis with a margin: the levels each named rule gave at the last evaluation,
    so that a level, once reached, is left only when the value is clear of its threshold
    by ``fraction`` of it (``db`` for a rule in dB) — a steady fault whose estimate
    wavers around a threshold keeps one verdict. The engine owns one, hands it to the
    checks in the Context, and commits what they kept after each evaluation (a rule not
    evaluated this time keeps its last levels)."""

    def __init__(self, fraction: float, db: float) -> None:
        self.fraction, self.db = float(fraction), float(db)
        self._previous: dict[str, np.ndarray] = {}
        self._new: dict[str, np.ndarray] = {}

    def previous(self, rule: str, shape: tuple[int, ...]) -> np.ndarray | None:
        got = self._previous.get(rule)
        return got if got is not None and got.shape == shape else None

    def keep(self, rule: str, levels: np.ndarray) -> None:
        self._new[rule] = levels

    def commit(self) -> None:
        self._previous.update(self._new)
        self._new = {}

    def reset(self) -> None:
        self._previous.clear()
        self._new.clear()


def _levels(value: np.ndarray, check_at: float, bad_at: float, below: bool) -> np.ndarray:
    with np.errstate(invalid="ignore"):
        if below:
            check, bad = value <= check_at, value <= bad_at
        else:
            check, bad = value >= check_at, value >= bad_at
    out = np.zeros(value.shape, dtype=np.int8)
    out[check] = CHECK
    out[bad] = BAD
    return out


def levels_from(value: np.ndarray, check_at: float, bad_at: float, *, below: bool = False,
                rule: str | None = None, margins: Margins | None = None, db: bool = False) -> np.ndarray:
    """0/1/2 per channel: value at/over ``check_at`` → 1, at/over ``bad_at`` → 2.

    With ``below=True`` the test is reversed (value at/under the limit). NaN → 0.
    With a ``rule`` name and ``margins``: a channel whose level for this rule was higher
    at the last evaluation keeps it (at most) while the value has not cleared the
    threshold by the margin — ``margins.fraction`` of the threshold, or ``margins.db``
    for a value in dB (``db=True``).
    """
    out = _levels(value, check_at, bad_at, below)
    if rule is None or margins is None:
        return out
    prev = margins.previous(rule, out.shape)
    if prev is not None and (prev > out).any():
        def eased(t: float) -> float:
            m = margins.db if db else margins.fraction * abs(t)
            return t + m if below else t - m

        held = _levels(value, eased(check_at), eased(bad_at), below)
        out = np.where(prev > out, np.minimum(prev, np.maximum(held, out)), out).astype(np.int8)
    margins.keep(rule, out)
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
