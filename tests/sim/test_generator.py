"""The signal generator: determinism, physiology that looks real, every fault measurable.

Spectra are estimated with ``scipy.signal.welch`` (SciPy, the outside reference
estimator). Amplitude facts come from /work/shared FIELD_NOTES sources where they
exist (IFSECN glossary: adult alpha mostly < 50 µV; IFCN 1998: amplifier noise
< 1.5 µV p-p); others are marked "from memory" or "common practice".
"""

from __future__ import annotations

import numpy as np
import pytest

from bedside.sim.generator import SignalGenerator
from bedside.sim.scenario import load_scenario


@pytest.fixture(scope="module")
def demo() -> tuple[SignalGenerator, np.ndarray]:
    gen = SignalGenerator(load_scenario("ward_demo"))
    return gen, gen.generate(0, int(180 * gen.rate_hz))


def test_same_samples_however_chunked() -> None:
    """Any range is reproducible: one call, odd chunks, and a fresh generator agree exactly."""
    scn = load_scenario("ward_demo")
    whole = SignalGenerator(scn).generate(1000, 9000)
    g = SignalGenerator(scn)
    parts = [g.generate(1000 + i, min(333, 9000 - i)) for i in range(0, 9000, 333)]
    assert np.array_equal(whole, np.concatenate(parts))
    assert whole.shape == (9000, scn.n_channels)
    again = SignalGenerator(scn).generate(5000, 10)
    assert np.array_equal(again, whole[4000:4010])


def test_different_seed_different_data() -> None:
    import dataclasses

    scn = load_scenario("clean")
    a = SignalGenerator(scn).generate(0, 1000)
    b = SignalGenerator(dataclasses.replace(scn, seed=scn.seed + 1)).generate(0, 1000)
    assert not np.allclose(a, b)


def test_bad_range_is_refused() -> None:
    with pytest.raises(ValueError, match="must be >= 0"):
        SignalGenerator(load_scenario("clean")).generate(-1, 10)
