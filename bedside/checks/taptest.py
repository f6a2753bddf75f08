"""The guided tap test: each electrode touched in turn must show on its own channel.

A light tap on an electrode (or its lead) moves it against the skin and makes a large,
brief deflection — a few hundred µV for tens of ms (common practice) — on the channel
that electrode feeds. Walking the electrodes one by one ("touch Fp1 now") and seeing
where each touch shows proves that every lead is in the input its label says; a pair
whose touches show on each other's channels is swapped. This is the deterministic
mapping check; the blink/alpha placement check (``placement_sanity``) stays advisory.

Pure and clock-free: samples are (n_samples, n_channels) µV, time is the stream's own
(sample count / rate), so the same samples give the same results however they are
chunked and however fast they are replayed.

* :class:`TapDetector` finds transients: a causal band-pass (``low_hz``–``high_hz``,
  second-order Butterworth sections with their state kept); a transient starts where a
  scalp channel's |signal| passes both ``min_uv`` and ``min_z`` robust SDs of its own
  recent signal; its window runs ``pre_s`` before to ``post_s`` after; each channel's
  *size* is how far its peak |signal| in that window rises above ``bg_sd`` of its own
  robust SDs (the usual peak of its background; 0 when not above it), so strong
  alpha on every channel is not taken for a touch on all of them.
* :func:`judge_transient` says where it showed. Our rule (no published one exists):
  on one channel **alone** when that channel's size is at least ``alone_median`` times
  the median size of the other scalp channels (taken as at least 1 µV) and
  ``alone_second`` times the next largest; on **every** channel when the median size
  is at least ``everywhere_share`` of the largest (the reference or ground electrode
  was touched, or the head moved); otherwise **shared** by the channels within
  ``alone_second`` of the largest (a bridge, or the touch reached both).
* :class:`TapWalk` asks for one electrode after another: it takes the first transient
  after its prompt; on one channel alone it decides (``confirmed`` when that channel is
  the electrode's, ``elsewhere`` when not); the same shared or everywhere picture twice
  decides too; otherwise, ``timeout_s`` after the prompt, ``not_found`` (or the
  shared/everywhere picture last seen). The next prompt follows the decision at once
  (``settle_s`` after the touch, so a double tap counts once). A technologist taps when told; a scripted scenario taps on
  a schedule in the same order, and the walk meets it as long as the taps come in
  order, one per electrode, each within the timeout of the one before.
* :func:`summarise` names the problems: two electrodes whose touches show on each
  other's channels are **swapped**; a longer cycle is **rotated**; a touch that shows on
  another channel alone is **elsewhere** (that lead is in the other input, or the
  other label is wrong).

Why one module of about 550 lines, over the usual 400: these four parts are one
procedure, read top to bottom, on one set of thresholds (``TapSettings``, the one file
``configs/taptest.yaml``) — the detector's *size* is what ``judge_transient``'s ratios
are about, and the walk's decisions are made of both — so a split would scatter each
threshold's meaning over several modules; much of the length is the rules in words.
"""

from __future__ import annotations

from collections import deque
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Literal

import numpy as np
from scipy import signal

from bedside.config import CONFIG_DIR, load_config
from bedside.errors import InputError

DEFAULT_PATH = CONFIG_DIR / "taptest.yaml"

#: A median of |x| is 0.6745 SD for Gaussian data (the normal quantile at 0.75).
MAD_TO_SD = 0.6745
#: The robust SD is learnt per block of this many seconds.
BLOCK_S = 0.25

#: The others' median size is taken as at least this in the ratio (quiet channels: 0 µV).
RATIO_FLOOR_UV = 1.0

Outcome = Literal["confirmed", "elsewhere", "shared", "everywhere", "not_found"]
OUTCOMES: tuple[str, ...] = ("confirmed", "elsewhere", "shared", "everywhere", "not_found")
Spread = Literal["alone", "shared", "everywhere"]


@dataclass(frozen=True)
class TapSettings:
    """configs/taptest.yaml (each value's source is named there)."""

    low_hz: float = field(default=2.0, metadata={"min": 0.1, "max": 20})
    high_hz: float = field(default=30.0, metadata={"min": 5, "max": 200})
    min_uv: float = field(default=100.0, metadata={"min": 1, "max": 100000})
    min_z: float = field(default=5.0, metadata={"min": 1, "max": 1000})
    scale_s: float = field(default=4.0, metadata={"min": 0.5, "max": 60})
    pre_s: float = field(default=0.1, metadata={"min": 0, "max": 2})
    post_s: float = field(default=0.3, metadata={"min": 0.02, "max": 2})
    settle_s: float = field(default=1.0, metadata={"min": 0.1, "max": 10})
    warmup_s: float = field(default=1.0, metadata={"min": 0, "max": 30})
    alone_median: float = field(default=5.0, metadata={"min": 1, "max": 1000})
    alone_second: float = field(default=2.0, metadata={"min": 1, "max": 100})
    everywhere_share: float = field(default=0.5, metadata={"min": 0.05, "max": 1})
    bg_sd: float = field(default=3.0, metadata={"min": 0, "max": 20})
    timeout_s: float = field(default=10.0, metadata={"min": 0.5, "max": 600})

    def __post_init__(self) -> None:
        if self.high_hz <= self.low_hz:
            raise ValueError(f"high_hz ({self.high_hz}) must be above low_hz ({self.low_hz})")


def load_tap_settings(path: Path | str | None = None) -> TapSettings:
    """The ``taptest:`` section of ``path`` (default: the shipped configs/taptest.yaml)."""
    return load_config(path if path is not None else DEFAULT_PATH, TapSettings, section="taptest")


@dataclass(frozen=True)
class Transient:
    """One transient: ``at_s`` the peak's time (stream seconds from the first sample);
    per channel, ``sizes_uv`` how far its peak |band-passed signal| in the window rose
    above its own background (``bg_sd`` robust SDs; 0 when not above it) and
    ``peaks_uv`` that peak (µV)."""

    at_s: float
    sizes_uv: tuple[float, ...]
    peaks_uv: tuple[float, ...] = ()


@dataclass(frozen=True)
class Spot:
    """Where a transient showed: ``spread`` alone/shared/everywhere, ``channels`` the
    channel indices it showed on (strongest first), ``peak_uv`` the strongest size and
    ``ratio`` the strongest size over the median size of the other scalp channels (that
    median taken as at least :data:`RATIO_FLOOR_UV`)."""

    spread: Spread
    channels: tuple[int, ...]
    peak_uv: float
    ratio: float


def _design(rate_hz: float, settings: TapSettings) -> np.ndarray:
    nyquist = rate_hz / 2.0
    high = min(settings.high_hz, 0.45 * rate_hz)
    low = min(settings.low_hz, 0.5 * high)
    return np.asarray(signal.butter(2, [low / nyquist, high / nyquist], btype="bandpass", output="sos"))


class TapDetector:
    """Transients in a stream fed in chunks: ``feed(samples)`` → the transients whose
    window closed within those samples. ``scalp``: which channels may start one (all
    by default); every channel's peak is measured."""

    def __init__(self, n_channels: int, rate_hz: float, scalp: Sequence[bool] | None = None,
                 settings: TapSettings | None = None) -> None:
        if n_channels < 1:
            raise InputError("the tap test needs at least one channel")
        if not (rate_hz > 0 and np.isfinite(rate_hz)):
            raise InputError(f"the tap test needs the stream's sampling rate, got {rate_hz!r}")
        self.settings = s = settings or TapSettings()
        self.n_channels = int(n_channels)
        self.rate_hz = float(rate_hz)
        mask = np.ones(n_channels, dtype=bool) if scalp is None else np.asarray(scalp, dtype=bool)
        if mask.shape != (n_channels,) or not mask.any():
            raise InputError("the tap test needs at least one scalp channel")
        self.scalp = mask
        self._sos = _design(self.rate_hz, s)
        self._zi = np.zeros((self._sos.shape[0], 2, n_channels))
        self._pre = int(round(s.pre_s * rate_hz))
        self._post = max(1, int(round(s.post_s * rate_hz)))
        self._settle = max(1, int(round(s.settle_s * rate_hz)))
        self._warmup = int(round(s.warmup_s * rate_hz))
        self._block_n = max(1, int(round(BLOCK_S * rate_hz)))
        self._blocks: deque[np.ndarray] = deque(maxlen=max(1, int(round(s.scale_s / BLOCK_S))))
        # The robust SD after each block, by the block's end sample: a sample is judged
        # by the SD of the blocks before it, so chunking never changes a result.
        self._sd_after: deque[tuple[int, np.ndarray]] = deque(
            maxlen=int(np.ceil((s.pre_s + s.post_s) / BLOCK_S)) + 4)
        self._partial: list[np.ndarray] = []
        self._partial_n = 0
        self._hist = np.zeros((0, n_channels))  # |band-passed|, samples base … n-1
        self._base = 0
        self._n = 0
        self._scan_from = 0
        self._pending: int | None = None
        #: Samples that were not finite (NaN/Inf), per channel: they count as 0 µV.
        self.nonfinite = np.zeros(n_channels, dtype=np.int64)

    @property
    def samples_seen(self) -> int:
        return self._n

    @property
    def now_s(self) -> float:
        """Stream seconds fed so far."""
        return self._n / self.rate_hz

    def sd_uv(self, at_sample: int | None = None) -> np.ndarray:
        """Each channel's robust SD of its band-passed signal in the blocks that ended by
        ``at_sample`` (default: all so far); inf before the first block."""
        for end, sd in reversed(self._sd_after):
            if at_sample is None or end <= at_sample:
                return sd
        return np.full(self.n_channels, np.inf)

    def feed(self, samples_uv: np.ndarray) -> list[Transient]:
        x = np.asarray(samples_uv, dtype=np.float64)
        if x.ndim != 2 or x.shape[1] != self.n_channels:
            raise InputError(f"samples must be (n, {self.n_channels}) µV, got shape {x.shape}")
        found: list[Transient] = []
        pos = 0
        while pos < x.shape[0]:  # block by block, so any chunking gives the same result
            take = min(x.shape[0] - pos, self._block_n - self._n % self._block_n)
            found += self._feed_piece(x[pos:pos + take])
            pos += take
        return found

    def _feed_piece(self, x: np.ndarray) -> list[Transient]:
        bad = ~np.isfinite(x)
        if bad.any():
            self.nonfinite += bad.sum(axis=0)
            x = np.where(bad, 0.0, x)
        y, self._zi = signal.sosfilt(self._sos, x, axis=0, zi=self._zi)
        a = np.abs(y)
        self._learn(a)
        self._hist = np.concatenate([self._hist, a]) if self._hist.size else a
        self._n += a.shape[0]
        found = self._scan()
        keep = self._pre + self._post + 2 * self._block_n
        first = self._n - keep if self._pending is None else min(self._pending - self._pre, self._n - keep)
        if first > self._base:
            self._hist = self._hist[first - self._base:]
            self._base = first
        return found

    def _learn(self, a: np.ndarray) -> None:
        pos = 0
        first = self._n
        while pos < a.shape[0]:
            take = min(self._block_n - self._partial_n, a.shape[0] - pos)
            self._partial.append(a[pos:pos + take])
            self._partial_n += take
            pos += take
            if self._partial_n == self._block_n:
                self._blocks.append(np.median(np.concatenate(self._partial), axis=0))
                self._partial, self._partial_n = [], 0
                sd = np.median(np.stack(self._blocks), axis=0) / MAD_TO_SD
                self._sd_after.append((first + pos, sd))

    def _first_over(self, start: int) -> int | None:
        """The first sample from ``start`` where a scalp channel passes its threshold,
        block by block (each block's samples against the SD learnt before it)."""
        s = self.settings
        pos = start
        while pos < self._n:
            stop = min(self._n, (pos // self._block_n + 1) * self._block_n)
            thr = np.maximum(s.min_uv, s.min_z * self.sd_uv(pos))[self.scalp]
            seg = self._hist[pos - self._base:stop - self._base, self.scalp]
            over = (seg > thr).any(axis=1)
            if over.any():
                return pos + int(np.argmax(over))
            pos = stop
        return None

    def _scan(self) -> list[Transient]:
        s = self.settings
        out: list[Transient] = []
        while True:
            if self._pending is None:
                start = max(self._scan_from, self._warmup, self._base)
                if start >= self._n:
                    self._scan_from = max(self._scan_from, self._n)
                    return out
                hit = self._first_over(start)
                if hit is None:
                    self._scan_from = self._n
                    return out
                self._pending = hit
            end = self._pending + self._post
            if end > self._n:
                return out
            lo = max(self._base, self._pending - self._pre)
            win = self._hist[lo - self._base:end - self._base]
            peaks = win.max(axis=0)
            # The transient's size on each channel: how far its peak rises above that
            # channel's own background (bg_sd robust SDs, a window's usual peak).
            sd = self.sd_uv(self._pending)
            sizes = np.maximum(0.0, peaks - s.bg_sd * np.where(np.isfinite(sd), sd, 0.0))
            scalp_idx = np.flatnonzero(self.scalp)
            best = scalp_idx[int(np.argmax(sizes[self.scalp]))]
            peak_at = lo + int(np.argmax(win[:, best]))
            out.append(Transient(peak_at / self.rate_hz, tuple(float(v) for v in sizes),
                                 tuple(float(v) for v in peaks)))
            self._scan_from = end
            self._pending = None


def judge_transient(peaks_uv: Sequence[float], scalp: Sequence[bool] | np.ndarray | None = None,
                    settings: TapSettings | None = None) -> Spot:
    """Where one transient showed, by the rule in the module docstring (ours)."""
    s = settings or TapSettings()
    peaks = np.asarray(peaks_uv, dtype=float)
    mask = np.ones(peaks.shape, dtype=bool) if scalp is None else np.asarray(scalp, dtype=bool)
    idx = np.flatnonzero(mask)
    if idx.size == 0:
        raise InputError("no scalp channel to judge a transient on")
    p = peaks[idx]
    order = np.argsort(-p, kind="stable")
    best = float(p[order[0]])
    others = p[order[1:]]
    if others.size == 0:
        return Spot("alone", (int(idx[order[0]]),), best, float("inf"))
    median = float(np.median(others))
    ratio = best / max(median, RATIO_FLOOR_UV)
    if p.size >= 3 and float(np.median(p)) >= s.everywhere_share * best:
        return Spot("everywhere", tuple(int(idx[k]) for k in order), best, ratio)
    if ratio >= s.alone_median and best >= s.alone_second * float(others[0]):
        return Spot("alone", (int(idx[order[0]]),), best, ratio)
    near = [int(idx[k]) for k in order if p[k] * s.alone_second > best]
    return Spot("shared", tuple(near), best, ratio)


@dataclass(frozen=True)
class TapResult:
    """One electrode's result. ``seen_on``: the channel(s) its touch showed on
    (strongest first; empty when none); ``at_s``: when (stream seconds); ``peak_uv`` and
    ``ratio`` (strongest over the median of the other scalp channels) of that transient."""

    electrode: str
    outcome: Outcome
    seen_on: tuple[str, ...] = ()
    at_s: float | None = None
    peak_uv: float | None = None
    ratio: float | None = None
    reason: str = ""

    def as_dict(self) -> dict[str, object]:
        return {
            "electrode": self.electrode, "outcome": self.outcome, "seen_on": list(self.seen_on),
            "at_s": None if self.at_s is None else round(self.at_s, 3),
            "peak_uv": None if self.peak_uv is None else round(self.peak_uv, 1),
            "ratio": None if self.ratio is None or not np.isfinite(self.ratio) else round(self.ratio, 1),
            "reason": self.reason,
        }


@dataclass(frozen=True)
class Prompt:
    """The walk asks for ``electrode`` from ``at_s`` (stream seconds), until ``until_s``."""

    electrode: str
    at_s: float
    until_s: float
    index: int
    total: int


@dataclass(frozen=True)
class Decided:
    result: TapResult


WalkStep = Prompt | Decided


def _words(electrode: str, outcome: Outcome, seen: Sequence[str], ratio: float | None, timeout_s: float) -> str:
    times = "" if ratio is None or not np.isfinite(ratio) else f", {ratio:.0f}× the other channels' median"
    if outcome == "confirmed":
        return f"touching {electrode} shows on {electrode} alone{times}"
    if outcome == "elsewhere":
        return f"touching {electrode} shows on {seen[0]}, not on {electrode}{times}"
    if outcome == "shared":
        return (f"touching {electrode} shows on {' and '.join(seen)} alike: a bridge between them, "
                "or the touch reached both")
    if outcome == "everywhere":
        return (f"touching {electrode} shows on every channel alike: the reference or ground lead, "
                "or the head moved")
    return f"no clear transient within {timeout_s:g} s of asking for {electrode}"


class TapWalk:
    """Walk ``order`` (electrode names, each one of ``names``) over a stream with
    channels ``names``: ``start()`` gives the first prompt; ``feed(samples)`` the steps
    (prompts and decisions) those samples bring. ``done`` once every electrode has a
    result (``results``, in walk order)."""

    def __init__(self, names: Sequence[str], order: Sequence[str], rate_hz: float,
                 scalp: Sequence[bool] | None = None, timeout_s: float | None = None,
                 settings: TapSettings | None = None) -> None:
        self.settings = s = settings or TapSettings()
        self.names = tuple(names)
        mask = [True] * len(self.names) if scalp is None else list(scalp)
        self.order = check_order(order, self.names, mask)
        self.timeout_s = float(timeout_s if timeout_s is not None else s.timeout_s)
        if not (self.timeout_s > 0 and np.isfinite(self.timeout_s)):
            raise InputError(f"the timeout must be a number of seconds above zero, got {timeout_s!r}")
        self.detector = TapDetector(len(self.names), rate_hz, mask, s)
        self.scalp = self.detector.scalp
        self.results: list[TapResult] = []
        self._index = 0
        self._prompt_at = 0.0
        self._seen: list[Spot] = []
        self._started = False

    @property
    def done(self) -> bool:
        return self._index >= len(self.order)

    @property
    def current(self) -> str | None:
        return None if self.done else self.order[self._index]

    def start(self, at_s: float = 0.0) -> Prompt:
        """The first prompt, at ``at_s`` stream seconds from the first sample fed: samples
        before it (a few seconds already held) only let the filter and the SD settle."""
        self._started = True
        return self._prompt(float(at_s))

    def _prompt(self, at_s: float) -> Prompt:
        self._prompt_at = at_s
        self._seen = []
        return Prompt(self.order[self._index], at_s, at_s + self.timeout_s, self._index, len(self.order))

    def feed(self, samples_uv: np.ndarray) -> list[WalkStep]:
        if not self._started:
            raise RuntimeError("call start() before feed()")
        steps: list[WalkStep] = []
        if self.done:
            self.detector.feed(samples_uv)
            return steps
        for tr in self.detector.feed(samples_uv):
            steps += self._timeouts(tr.at_s)
            if self.done:
                break
            if tr.at_s < self._prompt_at:
                continue  # the tail of the one before (the settle time covers most)
            spot = judge_transient(tr.sizes_uv, self.scalp, self.settings)
            result = self._take(tr, spot)
            if result is not None:
                steps += self._decide(result, tr.at_s + self.settings.settle_s)
        steps += self._timeouts(self.detector.now_s)
        return steps

    def stop(self, reason: str) -> list[TapResult]:
        """End the walk early (the stream stopped): the rest are not found, with ``reason``."""
        left = []
        while not self.done:
            r = self._timeout_result()
            r = TapResult(r.electrode, r.outcome, r.seen_on, r.at_s, r.peak_uv, r.ratio,
                          f"{r.reason} ({reason})" if r.outcome == "not_found" else r.reason)
            self.results.append(r)
            left.append(r)
            self._index += 1
            if not self.done:
                self._prompt(self.detector.now_s)
        return left

    def _timeouts(self, now_s: float) -> list[WalkStep]:
        steps: list[WalkStep] = []
        while not self.done and now_s >= self._prompt_at + self.timeout_s:
            steps += self._decide(self._timeout_result(), self._prompt_at + self.timeout_s)
        return steps

    def _timeout_result(self) -> TapResult:
        electrode = self.order[self._index]
        if self._seen:
            spot = self._seen[-1]
            return self._result(electrode, spot, None)
        return TapResult(electrode, "not_found",
                         reason=_words(electrode, "not_found", (), None, self.timeout_s))

    def _take(self, tr: Transient, spot: Spot) -> TapResult | None:
        electrode = self.order[self._index]
        if spot.spread == "alone":
            return self._result(electrode, spot, tr.at_s)
        same = [x for x in self._seen if x.spread == spot.spread and set(x.channels) == set(spot.channels)]
        self._seen.append(spot)
        return self._result(electrode, spot, tr.at_s) if same else None

    def _result(self, electrode: str, spot: Spot, at_s: float | None) -> TapResult:
        seen = tuple(self.names[i] for i in spot.channels)
        outcome: Outcome
        if spot.spread == "alone":
            outcome = "confirmed" if seen[0] == electrode else "elsewhere"
        else:
            outcome = spot.spread
        shown = seen if spot.spread != "everywhere" else ()
        return TapResult(electrode, outcome, shown, at_s, spot.peak_uv, spot.ratio,
                         _words(electrode, outcome, seen, spot.ratio, self.timeout_s))

    def _decide(self, result: TapResult, next_at_s: float) -> list[WalkStep]:
        self.results.append(result)
        self._index += 1
        steps: list[WalkStep] = [Decided(result)]
        if not self.done:
            steps.append(self._prompt(next_at_s))
        return steps


def check_order(order: Sequence[str], names: Sequence[str], scalp: Sequence[bool]) -> tuple[str, ...]:
    """The electrodes to walk, checked: each a scalp channel of the stream, once."""
    known = {n: ok for n, ok in zip(names, scalp, strict=True)}
    folded = {n.casefold(): n for n in names}
    out: list[str] = []
    for raw in order:
        name = raw.strip()
        actual = name if name in known else folded.get(name.casefold())
        if actual is None:
            accepted = ", ".join(n for n, ok in known.items() if ok)
            raise InputError(f"{name!r} is not a channel of this stream; its scalp electrodes: {accepted}")
        if not known[actual]:
            raise InputError(f"{actual} is not a scalp electrode (the tap test walks scalp electrodes only)")
        if actual in out:
            raise InputError(f"{actual} is named twice in the order; name each electrode once")
        out.append(actual)
    if not out:
        raise InputError("no electrode to walk; name at least one")
    return tuple(out)


@dataclass(frozen=True)
class TapProblem:
    """A problem the walk found: ``kind`` swapped, rotated, elsewhere, shared,
    everywhere or not_found; ``electrodes`` it concerns; ``words`` for the technologist."""

    kind: str
    electrodes: tuple[str, ...]
    words: str

    def as_dict(self) -> dict[str, object]:
        return {"kind": self.kind, "electrodes": list(self.electrodes), "words": self.words}


def summarise(results: Sequence[TapResult]) -> tuple[TapProblem, ...]:
    """The problems in a walk's results (none: every electrode confirmed)."""
    moved = {r.electrode: r.seen_on[0] for r in results if r.outcome == "elsewhere"}
    problems: list[TapProblem] = []
    placed: set[str] = set()
    for start in moved:
        if start in placed:
            continue
        chain = [start]
        while chain[-1] in moved and moved[chain[-1]] not in chain:
            chain.append(moved[chain[-1]])
        if chain[-1] in moved and moved[chain[-1]] == start and len(chain) >= 2:
            placed.update(chain)
            if len(chain) == 2:
                a, b = chain
                problems.append(TapProblem("swapped", (a, b), (
                    f"{a} and {b} look swapped: touching {a} shows on {b} and touching {b} shows on {a} "
                    f"— swap their leads in the headbox (or their labels)")))
            else:
                cycle = " → ".join([*chain, start])
                problems.append(TapProblem("rotated", tuple(chain), (
                    f"{', '.join(chain)} look rotated ({cycle}: each touch shows on the next one's channel)")))
    for r in results:
        if r.electrode in placed:
            continue
        if r.outcome == "elsewhere":
            other = r.seen_on[0]
            tested = any(x.electrode == other for x in results)
            note = "" if tested else f"; {other} was not walked"
            problems.append(TapProblem("elsewhere", (r.electrode, other), (
                f"touching {r.electrode} shows on {other}: {r.electrode}'s lead is in {other}'s input, "
                f"or a label is wrong{note}")))
        elif r.outcome in ("shared", "everywhere", "not_found"):
            problems.append(TapProblem(r.outcome, (r.electrode, *r.seen_on), r.reason))
    return tuple(problems)
