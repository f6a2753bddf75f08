"""An open EDF test file shipped by a registry package, fed to the engine.

Outside reference: pyEDFlib's shipped ``pyedflib/data/test_generator.edf`` (package
pyedflib; a generator file with known sine, square, ramp, pulse and noise signals
at 200 Hz). Its 50-Hz sine channel must be caught by the line-noise check; its other
sines (1, 8, 8.18, 8.5, 15, 17 Hz) must not. (A replay over LSL belongs to the
simulator's tests.)
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pyedflib
import pytest

from .helpers import by_name, feed, make_engine

EDF = Path(pyedflib.__file__).parent / "data" / "test_generator.edf"


@pytest.fixture(scope="module")
def edf_frame():  # type: ignore[no-untyped-def]
    with pyedflib.EdfReader(str(EDF)) as reader:
        labels = [lab.strip() for lab in reader.getSignalLabels()]
        rates = {reader.getSampleFrequency(i) for i in range(len(labels))}
        assert rates == {200.0}
        n = int(20 * 200)
        x = np.column_stack([reader.readSignal(i, 0, n) for i in range(len(labels))])  # µV
        assert [reader.getPhysicalDimension(i) for i in range(len(labels))] == ["uV"] * len(labels)
    eng = make_engine(names=labels, rate_hz=200.0)
    return labels, feed(eng, x)[-1], eng


def test_mains_sine_channel_is_caught(edf_frame) -> None:  # type: ignore[no-untyped-def]
    labels, frame, eng = edf_frame
    ch = by_name(frame, "sine 50 Hz")
    assert ch.checks["line_noise"] in ("bad", "check")
    assert ch.level is not None and ch.level.key == "bad"
    assert any("mains" in r and "50 Hz" in r for r in ch.reasons)


@pytest.mark.parametrize("label", ["sine 1 Hz", "sine 8 Hz", "sine 8.1777 Hz", "sine 8.5 Hz", "sine 15 Hz", "sine 17 Hz"])
def test_other_sines_are_not_line_noise(edf_frame, label: str) -> None:  # type: ignore[no-untyped-def]
    _labels, frame, _eng = edf_frame
    ch = by_name(frame, label)
    assert ch.checks["line_noise"] == "good"
    assert ch.metrics["line_noise_db"] < -20
