"""Combining the checks into one verdict per channel, and keeping verdicts steady.

combine: the channel's level is the worst of its checks' levels; its reasons are
those of the non-good checks, worst first. LevelHold (hysteresis in time): a worse
level shows only after ``confirm_updates`` consecutive updates, and once shown it
stays for at least ``hold_s`` after its cause is gone, so a verdict does not
flicker between updates. A level that comes back within ``relapse_window_s`` of
clearing is one steady fault sitting near its limit (a mains level wavering around
its threshold): from then on, while the channel is still not good, it is held
``relapse_hold_s``, so the fault keeps one verdict instead of flipping between bad and
check; once the channel reads good the usual ``hold_s`` applies, so a fix still shows
at once. Times are on the engine's sample clock (s), so
accelerated simulations behave as live ones.
"""

from __future__ import annotations

import numpy as np

from bedside.checks.base import BAD, CHECK, SHARED_KINDS, CheckResult
from bedside.checks.types import Finding


def combine(results: list[CheckResult], n: int) -> tuple[np.ndarray, list[list[str]], dict[str, np.ndarray]]:
    """(level (n,), reasons per channel, per-check levels) from the checks' results."""
    level = np.zeros(n, dtype=np.int8)
    per_check: dict[str, np.ndarray] = {}
    for res in results:
        np.maximum(level, res.level, out=level)
        per_check[res.name] = res.level
    reasons: list[list[str]] = [[] for _ in range(n)]
    for severity in (BAD, CHECK):
        for res in results:
            for i, text in res.reasons.items():
                if res.level[i] == severity:
                    reasons[i].append(text)
    return level, reasons, per_check


class LevelHold:
    """Per-channel hold and confirmation of levels (see module docstring)."""

    def __init__(self, n: int, hold_s: float, confirm_updates: int,
                 relapse_window_s: float = 0.0, relapse_hold_s: float = 0.0) -> None:
        self.hold_s, self.confirm = hold_s, confirm_updates
        self.relapse_window_s, self.relapse_hold_s = relapse_window_s, max(relapse_hold_s, hold_s)
        self.streak = np.zeros((3, n), dtype=np.int64)  # consecutive updates at ≥ level
        self.last_seen = np.full((3, n), -np.inf)  # last time a confirmed level ≥ L was seen
        self.shown = np.zeros(n, dtype=np.int8)  # the level shown at the last update
        self.cleared_at = np.full((3, n), -np.inf)  # when the shown level last fell below L
        self.relapsing = np.zeros((3, n), dtype=bool)  # L came back soon after clearing
        self.reasons: list[list[str]] = [[] for _ in range(n)]
        self._with_reasons: set[int] = set()

    def reset(self) -> None:
        self.streak[:] = 0
        self.last_seen[:] = -np.inf
        self.shown[:] = 0
        self.cleared_at[:] = -np.inf
        self.relapsing[:] = False
        for i in self._with_reasons:
            self.reasons[i] = []
        self._with_reasons = set()

    def apply(self, raw: np.ndarray, reasons: list[list[str]], now_s: float) -> tuple[np.ndarray, list[list[str]]]:
        shown = np.zeros_like(raw)
        for lv in (CHECK, BAD):
            at = raw >= lv
            self.streak[lv] = np.where(at, self.streak[lv] + 1, 0)
            confirmed = at & (self.streak[lv] >= self.confirm)
            self.last_seen[lv][confirmed] = now_s
            # The long hold only while the fault is still there (not good): a fix shows
            # as good within hold_s as before.
            hold = np.where(self.relapsing[lv] & (raw >= CHECK), self.relapse_hold_s, self.hold_s)
            held = (now_s - self.last_seen[lv]) < hold
            on = confirmed | held
            was = self.shown >= lv
            back = on & ~was & ((now_s - self.cleared_at[lv]) < self.relapse_window_s)
            self.relapsing[lv] |= back
            gone = was & ~on
            self.cleared_at[lv][gone] = now_s
            self.relapsing[lv][gone] = False
            shown[on] = lv
        self.shown = shown.astype(np.int8, copy=True)
        empty: list[str] = []
        out_reasons: list[list[str]] = [empty] * len(shown)  # shared, never mutated
        raw_list = raw.tolist()
        shown_list = shown.tolist()
        for i in self._with_reasons - set(np.flatnonzero(shown).tolist()):
            self.reasons[i] = []  # back to good: forget what it was
        self._with_reasons = set()
        for i in np.flatnonzero(shown).tolist():
            lv = shown_list[i]
            if raw_list[i] >= lv and reasons[i]:
                self.reasons[i] = reasons[i]
                out_reasons[i] = reasons[i]
            else:
                # Held: the cause just cleared; keep saying what it was.
                out_reasons[i] = ([*self.reasons[i], "(clearing — held briefly to avoid flicker)"]
                                  if self.reasons[i] else reasons[i])
            if self.reasons[i]:
                self._with_reasons.add(i)
        return shown, out_reasons


#: Kinds of the whole-head findings (bedside.checks.reference): most channels share one
#: fault through the reference or ground, so the set of channels moves with every update.
#: (Not read from the registry: ready.py and the log import this module light.)
WHOLE_HEAD_KINDS = frozenset(SHARED_KINDS)


def finding_key(f: Finding) -> tuple[str, tuple[str, ...]]:
    """What makes a finding the same finding from one update to the next: a bridge is its
    kind and its pair; a whole-head finding is its kind and what is shared ("mains noise"),
    whichever channels (14 of 19, then 15) show it at the moment."""
    if f.kind in WHOLE_HEAD_KINDS:
        return (f.kind, (f.reason.split(" in ", 1)[0],))
    return (f.kind, tuple(f.electrodes))


class FindingHold:
    """Keeps a finding for ``hold_s`` after it was last seen (keyed by :func:`finding_key`;
    the newest version of a finding replaces the older one)."""

    def __init__(self, hold_s: float) -> None:
        self.hold_s = hold_s
        self._seen: dict[tuple[str, tuple[str, ...]], tuple[float, Finding]] = {}

    def reset(self) -> None:
        self._seen.clear()

    def apply(self, findings: tuple[Finding, ...], now_s: float) -> tuple[Finding, ...]:
        for f in findings:
            self._seen[finding_key(f)] = (now_s, f)
        self._seen = {k: v for k, v in self._seen.items() if now_s - v[0] < self.hold_s or now_s == v[0]}
        return tuple(v[1] for v in self._seen.values())
