"""The in-process simulated source keeps the Source protocol (bedside.stream.source)."""

from __future__ import annotations

import time

import numpy as np
import pytest

from bedside.errors import InputError
from bedside.sim.source import SimulatedSource
from bedside.stream.source import Source


def test_serves_the_generators_samples_in_order_at_speed() -> None:
    src = SimulatedSource("ward_demo", speed=10.0)
    assert isinstance(src, Source)
    assert src.health().state == "connecting"
    got = []
    t_end = time.monotonic() + 0.5
    while time.monotonic() < t_end:
        chunk = src.pull(0.05)
        if chunk is not None:
            got.append(chunk)
    x = np.concatenate([c.samples_uv for c in got])
    ts = np.concatenate([c.timestamps for c in got])
    assert 1500 <= x.shape[0] <= 3000  # ~0.5 s × 500 Hz × 10
    assert np.array_equal(x, src.generator.generate(0, x.shape[0]))
    assert np.allclose(np.diff(ts), 1 / 500)
    assert src.health().state == "live"
    names = [c.name for c in src.channels]
    assert names[:3] == ["Fp1", "Fp2", "F7"]
    kinds = {c.name: c.is_scalp for c in src.channels}
    assert kinds["Cz"] and not kinds["ECG"] and not kinds["EOG"]
    src.close()
    assert src.pull(0.01) is None and src.health().state == "lost"


def test_bad_speed() -> None:
    with pytest.raises(InputError, match="speed must be greater than zero"):
        SimulatedSource("clean", speed=0)
