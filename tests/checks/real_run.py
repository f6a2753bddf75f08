"""Run the engine over a real recording (tests/real_eeg.py), with faults injected into it.

The channels are set up as bedside sets up a stream's channels (labels normalised by
bedside.stream.labels, neighbours from the recording's digitised positions or the 10-10
names); the samples are pushed in update-sized chunks and every frame is kept.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from real_eeg import Recording

from bedside.checks.engine import Engine
from bedside.checks.settings import QualitySettings, load_quality
from bedside.checks.types import QualityFrame
from bedside.placement.layout import geometry_neighbours
from bedside.stream.labels import load_labels, normalise_label
from bedside.stream.types import ChannelInfo


def channels_of(rec: Recording) -> list[ChannelInfo]:
    rules = load_labels()
    out = []
    for label, kind in zip(rec.labels, rec.types, strict=True):
        name, _ = normalise_label(label, rules)
        out.append(ChannelInfo(label, name, kind, "uV", 1.0, kind == "EEG"))
    return out


def make_engine(rec: Recording, rate_hz: float | None = None, settings: QualitySettings | None = None,
                amplifier_range_uv: float | None = None) -> Engine:
    chans = channels_of(rec)
    pos = {}
    if rec.positions_m:
        pos = {c.name: tuple(1000.0 * v for v in rec.positions_m[c.label])
               for c in chans if c.label in rec.positions_m}
    pairs, _note = geometry_neighbours([c.name for c in chans if c.is_scalp], pos)  # type: ignore[arg-type]
    return Engine(settings or load_quality(), chans, rate_hz or rec.rate_hz, neighbours=pairs,
                  amplifier_range_uv=amplifier_range_uv)


@dataclass
class Run:
    names: tuple[str, ...]
    scalp: tuple[bool, ...]
    times_s: list[float]  # data time at the end of each frame's samples
    frames: list[QualityFrame]

    def judged(self) -> list[tuple[float, QualityFrame]]:
        return [(t, f) for t, f in zip(self.times_s, self.frames, strict=True) if f.channels[0].level is not None]

    def check_level(self, name: str, check: str) -> list[tuple[float, str]]:
        i = self.names.index(name)
        return [(t, f.channels[i].checks.get(check, "good")) for t, f in self.judged()]

    def first_flag(self, name: str, check: str, after_s: float) -> float | None:
        """Seconds from after_s to the first frame with ``check`` not good on ``name``."""
        for t, lv in self.check_level(name, check):
            if t > after_s and lv != "good":
                return t - after_s
        return None

    def not_good(self, t_from: float = 0.0) -> list[tuple[float, list[str]]]:
        """Per judged frame from t_from: the scalp channels whose level is not good."""
        out = []
        for t, f in self.judged():
            if t >= t_from:
                out.append((t, [c.name for c in f.channels if c.is_scalp and c.level_key != "good"]))
        return out


def run(engine: Engine, data_uv: np.ndarray, chunk_s: float = 0.25) -> Run:
    step = max(1, int(round(chunk_s * engine.rate_hz)))
    times, frames = [], []
    for k in range(0, data_uv.shape[0] - step + 1, step):
        engine.push(data_uv[k : k + step])
        frames.append(engine.evaluate())
        times.append((k + step) / engine.rate_hz)
    return Run(engine.names, tuple(bool(s) for s in engine.scalp), times, frames)


def index_of(rec: Recording, names: Sequence[str]) -> list[int]:
    chans = channels_of(rec)
    by = {c.name: i for i, c in enumerate(chans)}
    return [by[n] for n in names]
