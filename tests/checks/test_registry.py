"""The checks' registry holds, so that adding a check is one module, its config and its test.

These check the project's own structure against its own files (configs/quality.yaml,
bedside.metric_labels, the simulator's fault kinds), the recipe of DEVELOPERS.md "how
to add a check"; no outside source is needed for that. The engine is run on EEG-like
data (tests/checks/helpers.eeg_like) with faults so that every check has something
to say.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
import yaml

import bedside.checks.engine as engine_module
from bedside.bench.engine import KIND_CHECKS
from bedside.checks import correlation
from bedside.checks.base import CHECK, SHARED_KINDS, Check, CheckResult, Context, Inputs
from bedside.checks.registry import CHECKS, SHARED, VALIDITY, headlines
from bedside.checks.settings import DEFAULT_PATH, QualitySettings, load_quality
from bedside.metric_labels import METRIC_LABELS
from bedside.sim.scenario import FAULT_KINDS

from .helpers import TEN_TWENTY, eeg_like, feed, make_engine

RATE = 256.0


@pytest.fixture(scope="module")
def judged() -> tuple[object, dict[str, CheckResult]]:
    """An engine after 8 s of EEG-like data with a bridge, mains on one lead and pops."""
    n = int(8 * RATE)
    x = eeg_like(n, len(TEN_TWENTY), RATE, seed=5)
    t = np.arange(n) / RATE
    x[:, 9] = x[:, 8] + np.random.default_rng(1).normal(0, 0.3, n)  # C3–Cz bridged
    x[:, 7] += 40.0 * np.sin(2 * np.pi * 50.0 * t)  # mains on T7
    x[:: int(RATE), 14] += 300.0  # pops on Pz
    engine = make_engine()
    frames = feed(engine, x)
    return frames[-1], dict(engine.check_results())


def test_names_are_unique_and_one_check_decides_validity() -> None:
    names = [c.name for c in CHECKS]
    assert len(set(names)) == len(names)
    assert "finite" not in names  # the engine's own last step
    assert [c for c in CHECKS if c.sets_valid] == [VALIDITY]
    assert not VALIDITY.findings_only and VALIDITY.reads != "spectrum"


def test_every_check_has_a_settings_section_and_its_config_block() -> None:
    raw = yaml.safe_load(DEFAULT_PATH.read_text(encoding="utf-8"))["quality"]
    fields = {f.name for f in dataclasses.fields(QualitySettings)}
    for c in CHECKS:
        assert c.settings in fields, f"{c.name}: no section {c.settings!r} in QualitySettings"
        assert dataclasses.is_dataclass(getattr(load_quality(), c.settings))
        assert isinstance(raw.get(c.settings), dict) and raw[c.settings], (
            f"{c.name}: configs/quality.yaml has no '{c.settings}:' block"
        )


def test_every_check_emits_its_headline_and_labels_its_metrics(judged) -> None:  # type: ignore[no-untyped-def]
    frame, results = judged
    for c in CHECKS:
        if c.findings_only:
            continue
        res = results[c.name]
        assert res.name == c.name
        assert res.metrics, f"{c.name} emits no metric"
        for key in res.metrics:
            assert key in METRIC_LABELS, f"{c.name}'s metric {key!r} has no row in METRIC_LABELS"
        if c.headline is not None:
            assert c.headline in res.metrics, f"{c.name} does not emit its headline {c.headline!r}"
            assert c.headline in frame.channels[0].metrics
    assert headlines() == tuple((c.name, c.headline) for c in CHECKS if c.headline and not c.findings_only)


def test_the_frame_carries_every_check_in_registry_order(judged) -> None:  # type: ignore[no-untyped-def]
    frame, _results = judged
    expected = [VALIDITY.name] + [c.name for c in CHECKS if c is not VALIDITY and not c.findings_only]
    assert list(frame.channels[0].checks) == [*expected, "finite"]
    # The faults were seen by the checks the registry says show them (KIND_CHECKS).
    by = {ch.name: ch for ch in frame.channels}
    assert any(by["C3"].checks[k] != "good" for k in KIND_CHECKS["bridge"])
    assert any(by["T7"].checks[k] != "good" for k in KIND_CHECKS["line_noise"])
    assert any(by["Pz"].checks[k] != "good" for k in KIND_CHECKS["pop"])


def test_fault_kinds_shared_faults_and_order_are_consistent() -> None:
    quality_kinds = set(FAULT_KINDS) - {"reference", "tap", "swap"}  # REF: a finding; tap/swap: the tap test
    assert set(KIND_CHECKS) == quality_kinds
    for c in CHECKS:
        assert set(c.faults) <= set(FAULT_KINDS)
    assert set(SHARED) <= {c.name for c in CHECKS if not c.findings_only}
    for shared in SHARED.values():
        assert shared.kind in SHARED_KINDS and shared.remedy
    names = [c.name for c in CHECKS]
    for first in correlation.SPEAKS_FIRST:  # the correlation check reads their verdicts
        assert names.index(first) < names.index(correlation.NAME)


def _toy_checks(calls: dict[str, int]) -> tuple[Check, ...]:
    def on_stats(i: Inputs, ctx: Context, s: QualitySettings) -> CheckResult:
        calls["stats"] += 1
        level = np.where(i.stats.rms_uv > 100.0, CHECK, 0).astype(np.int8)
        reasons = {int(k): "toy: over 100 µV RMS" for k in np.flatnonzero(level)}
        return CheckResult("toy_stats", {"toy_rms_uv": i.stats.rms_uv}, level, reasons)

    def on_spectrum(i: Inputs, ctx: Context, s: QualitySettings) -> CheckResult:
        calls["spectrum"] += 1
        n = len(ctx.names)
        return CheckResult("toy_spectrum", {"toy_power": i.spectrum.band_power(1.0, 30.0)}, np.zeros(n, np.int8))

    return (
        Check("toy_stats", "stats", on_stats, headline="toy_rms_uv", settings="artifacts"),
        Check("toy_spectrum", "spectrum", on_spectrum, headline=None, settings="artifacts"),
    )


def test_a_check_added_to_the_tuple_is_run_and_a_spectrum_only_one_is_reused(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    """The engine runs whatever the tuple holds; a check that reads the spectrum only is
    evaluated again only when a spectral segment completes (here every other update)."""
    calls = {"stats": 0, "spectrum": 0}
    monkeypatch.setattr(engine_module, "CHECKS", (*CHECKS, *_toy_checks(calls)))
    x = eeg_like(int(8 * RATE), len(TEN_TWENTY), RATE, seed=2)
    x[:, 3] *= 12.0  # one lead over 100 µV RMS
    engine = make_engine()
    frames = [f for f in feed(engine, x) if f.channels[0].level is not None]
    last = frames[-1]
    f3 = next(c for c in last.channels if c.name == "F3")
    assert f3.checks["toy_stats"] == "check" and "toy: over 100 µV RMS" in f3.reasons
    assert "toy_rms_uv" in f3.metrics and "toy_power" in f3.metrics
    assert calls["stats"] == len(frames)
    assert 0 < calls["spectrum"] < len(frames)
    assert calls["spectrum"] == pytest.approx(len(frames) / 2, abs=1)
