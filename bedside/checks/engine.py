"""The quality engine: new samples in, one QualityFrame per update out.

Sample arrays are (n_samples, n_channels) in µV. ``push`` takes only the samples
that arrived since the last call and summarises them incrementally, so an update
costs about what the new samples require, not a recompute of the window:

* at the stream's own rate, per block: unusable samples and clipping
  (window_stats.RawStats);
* on the spectrum's copy (analysis.AnalysisCopy: band-limited to 190 Hz and
  decimated to 500–1000 Hz where the stream is faster): the spectrum
  (spectrum.SpectralAccumulator: mains and its harmonics, the muscle band);
* on the analysis copy (from the spectrum's copy: band-limited to 100 Hz and
  decimated to one analysis rate), per block: the time-domain statistics and the
  covariance (window_stats.BlockStats) behind flat, drift, pops, amplitude and
  the reference, and the bridging detector's own 0.5–30 Hz epochs (which the
  correlation check reads too) — so these verdicts and their cost do not depend
  on the amplifier's rate.

``evaluate`` combines the window's statistics and its one shared spectrum, runs
every check of ``registry.CHECKS`` vectorised across channels (reusing what reads the
spectrum only until a segment completes), decides reference/ground findings, applies
the hold and returns the frame (its channels built by ``frames.ChannelBuilder``).
"""

from __future__ import annotations

import logging
import math
import time
from collections.abc import Iterable, Mapping, Sequence
from types import MappingProxyType

import numpy as np

from bedside.checks import analysis, bridging, correlation, line_noise, reference
from bedside.checks.analysis import AnalysisCopy
from bedside.checks.base import BAD, GOOD, CheckResult, Context, Inputs, Margins
from bedside.checks.blocks import BlockCutter, Geometry
from bedside.checks.frames import ChannelBuilder
from bedside.checks.levels import FindingHold, LevelHold, combine
from bedside.checks.registry import CHECKS, VALIDITY
from bedside.checks.settings import QualitySettings
from bedside.checks.spectrum import SpectralAccumulator, Spectrum
from bedside.checks.types import ChannelQuality, Finding, QualityFrame
from bedside.checks.window_stats import BlockStats, RawStats, WindowStats
from bedside.errors import InputError, StreamFormatError
from bedside.stream.types import ChannelInfo, StreamHealth

log = logging.getLogger("bedside")

def default_neighbours(names: Sequence[str]) -> list[tuple[str, str]]:
    """The placement's neighbour graph for these names; all pairs when it gives none."""
    pairs: list[tuple[str, str]] = []
    try:
        from bedside.placement import neighbours_for

        pairs = [(str(a), str(b)) for a, b in neighbours_for(list(names))]
    except Exception as exc:  # noqa: BLE001 - unknown names, placement not there: fall back, say so
        log.info("neighbour graph unavailable (%s); bridging compares all pairs", exc)
    if not pairs:
        pairs = [(a, b) for i, a in enumerate(names) for b in names[i + 1 :]]
    return pairs


class Engine:
    """Live quality checks over a sliding window (see module docstring).

    channels: in stream order; non-scalp channels (is_scalp False) are evaluated
    lightly (finite and flat only) and take no part in cross-channel decisions.
    neighbours: name pairs for bridging (default: the placement's graph, or all
    pairs); amplifier_range_uv: ±range of the amplifier when known (rail, offset);
    reference: what the channels are referred to ("average": no reference/ground blame);
    coupling: the amplifier's, "ac" or "dc" (None: unknown) — a DC-coupled stream's
    drift is judged as an AC-coupled amplifier would pass it (drift.py).
    """

    def __init__(
        self,
        settings: QualitySettings,
        channels: Sequence[ChannelInfo],
        rate_hz: float,
        neighbours: Iterable[tuple[str, str]] | None = None,
        amplifier_range_uv: float | None = None,
        reference: str | None = None,
        coupling: str | None = None,
    ) -> None:
        if not channels:
            raise StreamFormatError("the stream has no channels; bedside needs at least one EEG channel")
        if not (isinstance(rate_hz, int | float) and math.isfinite(rate_hz)) or not (
            settings.min_rate_hz <= rate_hz <= settings.max_rate_hz
        ):
            raise StreamFormatError(
                f"sampling rate {rate_hz} Hz cannot be checked; accepted: "
                f"{settings.min_rate_hz:g} to {settings.max_rate_hz:g} Hz (configs/quality.yaml)"
            )
        if coupling not in (None, "ac", "dc"):
            raise InputError(f"amplifier coupling {coupling!r} is not known; accepted: ac, dc")
        if amplifier_range_uv is not None and not (
            math.isfinite(amplifier_range_uv) and amplifier_range_uv > 0
        ):
            raise InputError(f"amplifier range must be a positive number of µV, got {amplifier_range_uv}")
        self.settings = settings
        self.channels = tuple(channels)
        self.names = tuple(ch.name for ch in channels)
        self.rate_hz = float(rate_hz)
        self.amplifier_range_uv = amplifier_range_uv
        # What the channels are referred to ("average", an electrode, None: unknown);
        # reference.evaluate blames no reference/ground on an average reference.
        self.reference = reference
        self.coupling = coupling
        self.scalp = np.array([ch.is_scalp for ch in channels], dtype=bool)
        self._scalp_list = [bool(v) for v in self.scalp]
        self.geometry = g = Geometry.of(settings, self.rate_hz)
        self.n_channels = c = len(channels)
        # The spectrum's copy (to spectrum_max_hz, at least analysis.spectrum_rate_hz) and,
        # from it, the analysis copy (to analysis.band_hz, at least analysis.rate_hz).
        self._spectral_copy = analysis.AnalysisCopy(
            c, self.rate_hz, settings.analysis.spectrum_rate_hz, settings.spectrum_max_hz,
            filter_undecimated=False,
        )
        self.spectrum_rate_hz = self._spectral_copy.rate_hz
        self.spectrum_geometry = gs = Geometry.of(settings, self.spectrum_rate_hz)
        self._analysis = analysis.AnalysisCopy(c, self.spectrum_rate_hz, settings.analysis.rate_hz,
                                               settings.analysis.band_hz)
        self.analysis_rate_hz = self._analysis.rate_hz
        self.analysis_geometry = ga = Geometry.of(settings, self.analysis_rate_hz)
        self._lag = max(1, round(settings.artifacts.pop_lag_s * self.analysis_rate_hz))
        self._blocks = self._new_blocks()
        self._raw = self._new_raw()
        self._a_samples = 0
        self._a_cutter = BlockCutter(ga.block, c, self._add_analysis_block)
        self._spec = SpectralAccumulator(
            c, self.spectrum_rate_hz, gs.segment, gs.n_segments,
            max(1, round(settings.refresh_s / (settings.segment_s / 2))), settings.spectrum_max_hz,
        )
        self._cutter = BlockCutter(g.block, c, self._add_block)
        self._samples = 0
        self._last_time = float("nan")
        self.neighbours = self._neighbour_index(neighbours)
        # Bridging judges the analysis copy (250–500 Hz): the same band, less work.
        self._bridge = bridging.BridgeDetector(c, self.analysis_rate_hz, self.neighbours, settings.bridging,
                                               keep_covs=settings.correlation.windows)
        self._correlation = correlation.History(self._bridge, settings)
        self._hold = LevelHold(c, settings.hold.hold_s, settings.hold.confirm_updates,
                               settings.hold.relapse_window_s, settings.hold.relapse_hold_s)
        self._fhold = FindingHold(settings.hold.hold_s)
        self._mains_hz: float | None = (
            None if settings.line_noise.mains == "auto" else float(settings.line_noise.mains)
        )
        self._builder = ChannelBuilder(self.names, self._scalp_list)
        self._margins = Margins(settings.hold.margin_fraction, settings.hold.margin_db)
        self._spec_gen = 0  # bumped by reset(): segment counts restart
        self._detect_key: tuple[int, int, bytes] | None = None
        # Results of the checks that read the spectrum only, and the inputs they had.
        self._spectral_key: tuple[object, ...] | None = None
        self._spectral: dict[str, CheckResult] = {}
        self._cache_key = -1
        self._cache: _Computed | None = None

    # ------------------------------------------------------------------ input
    def _neighbour_index(self, neighbours: Iterable[tuple[str, str]] | None) -> np.ndarray:
        scalp_names = [n for n, s in zip(self.names, self.scalp, strict=True) if s]
        pairs = list(neighbours) if neighbours is not None else default_neighbours(scalp_names)
        index: dict[str, int] = {}
        for i, n in enumerate(self.names):
            if self.scalp[i]:
                index.setdefault(n, i)
                index.setdefault(n.lower(), i)
        out: set[tuple[int, int]] = set()
        for a, b in pairs:
            ia, ib = index.get(a, index.get(str(a).lower())), index.get(b, index.get(str(b).lower()))
            if ia is None or ib is None or ia == ib:
                continue
            out.add((min(ia, ib), max(ia, ib)))
        return np.array(sorted(out), dtype=np.int64).reshape(-1, 2)

    def push(self, samples_uv: np.ndarray, timestamps: np.ndarray | None = None) -> None:
        """Take the new samples (n, n_channels) µV and their timestamps (n,) s."""
        x = np.asarray(samples_uv, dtype=np.float64)
        if x.ndim == 1 and self.n_channels == 1:
            x = x[:, None]
        if x.ndim != 2 or x.shape[1] != self.n_channels:
            raise StreamFormatError(
                f"samples have shape {x.shape}; expected (n_samples, {self.n_channels}) "
                "— the stream's channel count changed from its metadata"
            )
        n = x.shape[0]
        if timestamps is not None:
            ts = np.asarray(timestamps, dtype=np.float64).reshape(-1)
            if ts.shape[0] != n:
                raise StreamFormatError(f"{n} samples but {ts.shape[0]} timestamps")
            if n:
                self._last_time = float(ts[-1])
        self._cutter.feed(x)

    def _new_blocks(self) -> BlockStats:
        ga = self.analysis_geometry
        hp = self.settings.drift.dc_highpass_hz if self.coupling == "dc" else None
        return BlockStats(self.n_channels, ga.block, ga.n_blocks, ga.refresh_blocks, self.analysis_rate_hz,
                          self._lag, highpass_hz=hp)

    def _new_raw(self) -> RawStats:
        s, g = self.settings, self.geometry
        rail = s.flat.rail_fraction * self.amplifier_range_uv if self.amplifier_range_uv else None
        run_min = max(s.artifacts.clip_run_min_samples, math.ceil(s.artifacts.clip_run_s * self.rate_hz))
        return RawStats(self.n_channels, g.block, g.n_blocks, run_min, rail)

    def _add_block(self, x: np.ndarray) -> None:
        clean = self._raw.add_block(x)
        s = self._spectral_copy.add(clean)
        self._spec.add(s)
        self._samples += x.shape[0]
        y = self._analysis.add(s)
        self._bridge.add(y)
        self._a_cutter.feed(y)  # the filter's outputs come in any count

    def _add_analysis_block(self, y: np.ndarray) -> None:
        self._blocks.add_block(y, self._a_samples)
        self._a_samples += y.shape[0]

    def reset(self) -> None:
        """Forget the window (after a gap or a reconnect: old data must not look live)."""
        gs, c = self.spectrum_geometry, self.n_channels
        self._blocks = self._new_blocks()
        self._raw = self._new_raw()
        self._spectral_copy.reset()
        self._analysis.reset()
        self._a_cutter.reset()
        self._spec = SpectralAccumulator(
            c, self.spectrum_rate_hz, gs.segment, gs.n_segments, self._spec.refresh_segments,
            self.settings.spectrum_max_hz,
        )
        self._cutter.reset()
        self._bridge.reset()
        self._correlation.reset()
        self._margins.reset()
        self._hold.reset()
        self._fhold.reset()
        self._spec_gen += 1
        self._detect_key = None
        self._spectral_key = None
        self._spectral = {}
        self._cache_key = -1
        self._cache = None

    # ------------------------------------------------------------- state access
    @property
    def data_time_s(self) -> float:
        """Seconds of data taken in (the engine's sample clock)."""
        return self._samples / self.rate_hz

    @property
    def analysis(self) -> AnalysisCopy:
        """The analysis copy's filter (rate, decimation factor, taps); its input is the
        spectrum's copy."""
        return self._analysis

    @property
    def spectral_copy(self) -> AnalysisCopy:
        """The spectrum's copy's filter (from the stream; passed through when the stream
        needs no decimation)."""
        return self._spectral_copy

    @property
    def analysis_samples(self) -> int:
        """Analysis-copy samples taken into complete blocks so far (the window ends there)."""
        return self._a_samples

    @property
    def mains_hz(self) -> float | None:
        return self._mains_hz

    def window_stats(self) -> WindowStats | None:
        return self._blocks.stats() if self._blocks.count else None

    def spectrum(self) -> Spectrum | None:
        return self._spec.spectrum()

    # ------------------------------------------------------------------ output
    def no_data(self, why: str, health: StreamHealth | None) -> QualityFrame:
        chans = tuple(
            ChannelQuality(n, None, {}, (why,), bool(s)) for n, s in zip(self.names, self.scalp, strict=True)
        )
        return QualityFrame(self._last_time, time.time(), chans, (), health, self.settings.window_s,
                            mains_hz=self._mains_hz, data_s=self.data_time_s)

    def evaluate(self, health: StreamHealth | None = None) -> QualityFrame:
        """The verdicts for the current window (level None when there is no live data)."""
        if health is not None and health.state != "live":
            return self.no_data(f"no data: stream {health.state}", health)
        have_s = self._blocks.filled * self.analysis_geometry.block / self.analysis_rate_hz
        spec = self._spec.spectrum()
        if have_s < self.settings.min_data_s or spec is None:
            return self.no_data(
                f"collecting data: {have_s:.1f} of {self.settings.min_data_s:g} s", health
            )
        key = self._blocks.count
        if self._cache_key != key or self._cache is None:
            recent_blocks = max(1, round(self.settings.flat.flat_s / self.settings.block_s))
            recent = self._spec.recent(self._recent_segments()) or spec
            self._cache = self._compute(self._blocks.stats(recent_blocks, self._raw), spec, recent)
            self._margins.commit()
            self._cache_key = key
        raw, reasons, per_check, metrics, findings, _results = self._cache
        now = self.data_time_s
        shown, shown_reasons = self._hold.apply(raw, reasons, now)
        findings = self._fhold.apply(findings, now)
        chans = self._builder.channels(shown, shown_reasons, per_check, metrics)
        return QualityFrame(self._last_time, time.time(), chans, findings, health, self.settings.window_s,
                            mains_hz=self._mains_hz, data_s=now, neighbour_pairs=int(len(self.neighbours)))

    def check_results(self) -> Mapping[str, CheckResult]:
        """Each check's own result at the last evaluation with verdicts, before the
        reference/ground decision and the hold (for tests and tools: which check said
        what); empty before the first."""
        return MappingProxyType(self._cache[5] if self._cache is not None else {})

    def _recent_segments(self) -> int:
        """Spectral segments in the newest line_noise.recent_s (the fast-reacting spectrum)."""
        hop_s = self.settings.segment_s / 2
        return max(1, round((self.settings.line_noise.recent_s - self.settings.segment_s) / hop_s) + 1)

    def _context(self, scalp: np.ndarray, valid: np.ndarray) -> Context:
        s = self.settings
        return Context(self.names, scalp, valid, self.neighbours, self.analysis_rate_hz, s.window_s,
                       self.amplifier_range_uv, self._mains_hz, self.coupling, self._margins)

    def _compute(self, stats: WindowStats, spec: Spectrum, recent: Spectrum) -> _Computed:
        """Every check of registry.CHECKS in its order (the one that decides validity
        first), the reference/ground decision, the channels whose samples are not numbers."""
        s, n = self.settings, self.n_channels
        finite = stats.nonfinite == 0
        results: dict[str, CheckResult] = {}
        inputs = Inputs(stats, spec, recent, self._bridge, self._correlation, results)
        # Flat first, evaluated on every channel (non-scalp ones too: the light check).
        results[VALIDITY.name] = first = VALIDITY.evaluate(inputs, self._context(np.ones(n, dtype=bool), finite), s)
        valid = self.scalp & finite & (first.level < BAD)
        # The spectra change only when a segment completes (every other update at the
        # default sizes): what depends on them alone is reused until then, for the
        # same channels (valid) and mains — the same inputs give the same results.
        spec_key = (self._spec_gen, self._spec.count, valid.tobytes())
        if s.line_noise.mains == "auto" and self._mains_hz is None and self._detect_key != spec_key:
            self._detect_key = spec_key
            found = line_noise.detect_mains(spec, s, valid)
            if found is not None:
                self._mains_hz = found
                log.info("mains frequency detected: %g Hz", found)
        ctx = self._context(self.scalp, valid)
        if self._spectral_key != (*spec_key, self._mains_hz):
            self._spectral_key, self._spectral = (*spec_key, self._mains_hz), {}
        advisory: list[Finding] = []
        for check in CHECKS:
            if check is VALIDITY:
                continue
            if check.reads == "spectrum":
                res = self._spectral.get(check.name)
                if res is None:
                    res = self._spectral[check.name] = check.evaluate(inputs, ctx, s)
            else:
                res = check.evaluate(inputs, ctx, s)
            if check.findings_only:
                advisory.extend(res.findings)
            else:
                results[check.name] = res
        phasors = None
        if self._mains_hz is not None:
            phasors = self._spec.phasors(self._mains_hz, self._recent_segments())
        judged, shared = reference.evaluate(results, ctx, finite, s, stats, phasors,
                                            average=(self.reference or "").casefold() == "average")
        judged = _not_numbers(judged, stats, finite, s.window_s)
        level, reasons, per_check = combine(list(judged.values()), n)
        metrics: dict[str, np.ndarray] = {}
        for res in judged.values():
            for k, v in res.metrics.items():
                metrics.setdefault(k, np.asarray(v, dtype=float))
        findings = [f for res in judged.values() for f in res.findings]
        findings.extend(shared)
        findings.extend(advisory)
        return level, reasons, per_check, metrics, tuple(findings), results


#: What one evaluation computes: raw levels, reasons per channel, per-check levels,
#: metrics, findings, and each check's own result.
_Computed = tuple[np.ndarray, list[list[str]], dict[str, np.ndarray], dict[str, np.ndarray],
                  tuple[Finding, ...], dict[str, CheckResult]]


def _not_numbers(results: dict[str, CheckResult], stats: WindowStats, finite: np.ndarray,
                 window_s: float) -> dict[str, CheckResult]:
    """Samples that are not numbers: flag the channel clearly (the "finite" check, last),
    drop its other verdicts (they were computed on zero-filled data)."""
    bad_nf = ~finite
    nf_level = np.where(bad_nf, BAD, GOOD).astype(np.int8)
    nf_reasons = {
        int(i): (
            f"{int(stats.nonfinite[i])} samples are not numbers (NaN/Inf) or beyond any EEG"
            f" value in the last {window_s:g} s — check the amplifier channel and its cable"
        )
        for i in np.flatnonzero(bad_nf)
    }
    out = dict(results)
    if bad_nf.any():
        for name, res in results.items():
            lv = res.level.copy()
            lv[bad_nf] = GOOD
            rs = {i: t for i, t in res.reasons.items() if not bad_nf[i]}
            out[name] = CheckResult(res.name, res.metrics, lv, rs, res.findings)
    out["finite"] = CheckResult("finite", {"nonfinite_samples": stats.nonfinite.astype(float)}, nf_level, nf_reasons)
    return out
