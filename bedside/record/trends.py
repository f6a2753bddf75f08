"""Long recordings: per-electrode trends, re-check alerts and skin-check reminders.

Pure and clock-free: each keeper is fed the engine's frames with their time (seconds)
and answers what to record or show. The setup log keeps the trend bins and the alerts
(bedside.record.session), the app shows the alerts and reminders, the printable report
draws the trends.

* :class:`TrendKeeper` — per scalp electrode and bin (10 min by default): the share of
  the judged time it was good, its mean mains amplitude (µV) and mean |drift| (µV/s).
* :class:`AlertKeeper` — an electrode that was good and has not been good for
  ``after_s`` on end (it degraded and stayed so) raises one alert, until it is good again.
* :class:`SkinReminder` — every ``interval_s`` of recording: check the skin at the
  electrode sites (pressure and skin injury are known harms of long-term monitoring;
  follow local policy).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from bedside.checks.types import QualityFrame

#: Shown and logged with every reminder: the caution, deferring to local policy.
SKIN_CAUTION = (
    "check the skin under and around each electrode for redness, pressure marks or breakdown "
    "(long-term monitoring can injure skin, neonates' most of all); re-site or re-apply as your "
    "local policy and licensed practice say"
)


@dataclass(frozen=True)
class TrendBin:
    """One electrode over one bin: from ``start_s`` (seconds since the keeper's first
    frame, and the time at ``at``), ``judged_s`` of verdicts, ``good_fraction`` of them
    good, the mean ``mains_uv`` and mean absolute ``drift_uv_per_s`` (None: no value)."""

    electrode: str
    start_s: float
    judged_s: float
    good_fraction: float
    mains_uv: float | None
    drift_uv_per_s: float | None


def _num(value: Any) -> float | None:
    try:
        v = float(value)
    except (TypeError, ValueError):
        return None
    return v if math.isfinite(v) else None


class TrendKeeper:
    """Per-electrode bins of ``bin_s`` seconds; :meth:`feed` returns the bins that closed."""

    def __init__(self, bin_s: float = 600.0) -> None:
        if not bin_s > 0:
            raise ValueError(f"trend bin must be longer than 0 s, got {bin_s}")
        self.bin_s = float(bin_s)
        self._t0: float | None = None
        self._bin = 0
        self._last_t: float | None = None
        self._acc: dict[str, list[float]] = {}  # name → [judged_s, good_s, mains_sum, mains_n, drift_sum, drift_n]

    def feed(self, frame: QualityFrame, t_s: float) -> list[TrendBin]:
        if self._t0 is None:
            self._t0 = t_s
        out: list[TrendBin] = []
        k = int((t_s - self._t0) // self.bin_s)
        if k > self._bin:
            out = self.close()
            self._bin = k
        dt = 0.0 if self._last_t is None else max(0.0, min(t_s - self._last_t, 5.0))
        self._last_t = t_s
        for ch in frame.channels:
            if not ch.is_scalp or ch.level is None:
                continue
            acc = self._acc.setdefault(ch.name, [0.0, 0.0, 0.0, 0, 0.0, 0])
            acc[0] += dt
            if ch.level_key == "good":
                acc[1] += dt
            mains, drift = _num(ch.metrics.get("mains_uv")), _num(ch.metrics.get("drift_uv_per_s"))
            if mains is not None:
                acc[2] += mains
                acc[3] += 1
            if drift is not None:
                acc[4] += abs(drift)
                acc[5] += 1
        return out

    def close(self) -> list[TrendBin]:
        """The bins of the current period (at the end of a recording, or as it rolls over)."""
        start = self._bin * self.bin_s
        out = [
            TrendBin(name, start, round(a[0], 3), round(a[1] / a[0], 4) if a[0] > 0 else 0.0,
                     round(a[2] / a[3], 3) if a[3] else None, round(a[4] / a[5], 3) if a[5] else None)
            for name, a in self._acc.items() if a[0] > 0
        ]
        self._acc = {}
        return out


@dataclass(frozen=True)
class Alert:
    electrode: str
    not_good_s: float
    level: str
    reason: str

    def text(self) -> str:
        minutes = self.not_good_s / 60.0
        return (f"re-check {self.electrode}: not good for {minutes:.0f} min ({self.level}"
                + (f": {self.reason}" if self.reason else "") + ")")


class AlertKeeper:
    """An electrode that was good once and then not good for ``after_s`` on end raises
    one alert (:meth:`feed` returns it), and again only after it has been good."""

    def __init__(self, after_s: float) -> None:
        if not after_s > 0:
            raise ValueError(f"alert delay must be longer than 0 s, got {after_s}")
        self.after_s = float(after_s)
        self._was_good: set[str] = set()
        self._since: dict[str, float] = {}
        self._raised: set[str] = set()

    def feed(self, frame: QualityFrame, t_s: float) -> list[Alert]:
        out: list[Alert] = []
        for ch in frame.channels:
            if not ch.is_scalp or ch.level is None:
                continue  # no verdict (warm-up, an outage) neither starts nor ends a degradation
            name = ch.name
            if ch.level_key == "good":
                self._was_good.add(name)
                self._since.pop(name, None)
                self._raised.discard(name)
                continue
            if name not in self._was_good:
                continue  # never good yet: still being set up, not degraded
            since = self._since.setdefault(name, t_s)
            if name not in self._raised and t_s - since >= self.after_s:
                self._raised.add(name)
                reason = ch.reasons[0].split(" — ")[0] if ch.reasons else ""
                out.append(Alert(name, t_s - since, ch.level_key, reason))
        return out


class SkinReminder:
    """Every ``interval_s`` of recording (from the first frame): one reminder."""

    def __init__(self, interval_s: float) -> None:
        if not interval_s > 0:
            raise ValueError(f"skin-check interval must be longer than 0 s, got {interval_s}")
        self.interval_s = float(interval_s)
        self._t0: float | None = None
        self._count = 0

    def feed(self, t_s: float) -> str | None:
        if self._t0 is None:
            self._t0 = t_s
        due = int((t_s - self._t0) // self.interval_s)
        if due > self._count:
            self._count = due
            hours = due * self.interval_s / 3600.0
            return f"{hours:g} h of recording: {SKIN_CAUTION}"
        return None
