"""Run the quality engine over a simulated scenario faster than real time.

Used by the latency and memory benchmarks and by the tests:
``run_scenario(name, seconds)`` feeds the simulator's samples, (n_samples,
n_channels) µV, to the engine in update-sized chunks and records every frame's
levels on the engine's sample clock.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from bedside.checks.engine import Engine
from bedside.checks.settings import QualitySettings, load_quality
from bedside.checks.types import QualityFrame
from bedside.stream.types import ChannelInfo


@dataclass(frozen=True)
class Timeline:
    """Per update: times_s (U,), levels {channel: list of level keys}, findings per update."""

    times_s: np.ndarray
    levels: dict[str, list[str]]
    findings: list[tuple[tuple[str, tuple[str, ...], str], ...]]


def scenario_channels(scenario: object) -> list[ChannelInfo]:
    labels = scenario.channels  # type: ignore[attr-defined]
    kinds = scenario.channel_types  # type: ignore[attr-defined]
    return [ChannelInfo(lab, lab, k, "uV", 1.0, k == "EEG") for lab, k in zip(labels, kinds, strict=True)]


def run_scenario(
    name: str,
    seconds: float,
    settings: QualitySettings | None = None,
    on_frame: Callable[[float, QualityFrame], None] | None = None,
    start_s: float = 0.0,
) -> Timeline:
    from bedside.sim.generator import SignalGenerator
    from bedside.sim.scenario import load_scenario

    scenario = load_scenario(name)
    settings = settings or load_quality()
    rate = float(scenario.rate_hz)
    engine = Engine(settings, scenario_channels(scenario), rate)
    gen = SignalGenerator(scenario)
    step = int(round(rate / settings.update_hz))
    start = int(round(start_s * rate))
    n_total = int(round(seconds * rate))
    times, findings = [], []
    levels: dict[str, list[str]] = {n: [] for n in engine.names}
    pos = 0
    while pos < n_total:
        n = min(step, n_total - pos)
        x = gen.generate(start + pos, n)
        engine.push(x, (start + pos + np.arange(n)) / rate)
        pos += n
        frame = engine.evaluate()
        t = start_s + pos / rate
        times.append(t)
        for ch in frame.channels:
            levels[ch.name].append(ch.level_key)
        findings.append(tuple((f.kind, f.electrodes, f.level.key) for f in frame.findings))
        if on_frame is not None:
            on_frame(t, frame)
    return Timeline(np.asarray(times), levels, findings)
