"""Publishing on LSL: a real pylsl inlet on loopback receives exactly what was generated.

The independent reader is pylsl's own StreamInlet (liblsl); the metadata layout checked
is the XDF meta-data convention for EEG (desc/channels/channel/{label, unit, type},
desc/cap, desc/acquisition). Stream names are unique per test (uuid) so parallel runs
never see each other's streams; LSLAPICFG keeps discovery on this machine.
"""

from __future__ import annotations

import time
import uuid

import numpy as np
import pylsl
import pytest

from bedside.errors import InputError, ScenarioError  # noqa: E402
from bedside.sim.publish import Publisher, run_in_background  # noqa: E402

pytestmark = pytest.mark.lsl


def _name() -> str:
    return f"bedside-test-{uuid.uuid4().hex[:10]}"


def _inlet(name: str) -> object:
    infos = pylsl.resolve_byprop("name", name, 1, 5.0)
    assert infos, f"stream {name} not found"
    inlet = pylsl.StreamInlet(infos[0], max_buflen=60, recover=False)
    inlet.open_stream(5.0)
    return inlet


def _pull_all(inlet: object, pub: Publisher, timeout_s: float = 10.0) -> tuple[np.ndarray, np.ndarray]:
    chunks, stamps = [], []
    deadline = time.monotonic() + timeout_s
    n = 0
    while time.monotonic() < deadline:
        data, ts = inlet.pull_chunk(timeout=0.2)  # type: ignore[attr-defined]
        if data:
            chunks.append(np.asarray(data))
            stamps.extend(ts)
            n += len(ts)
        elif pub.wait(0) and n >= pub.samples_sent:
            break
    return np.concatenate(chunks), np.asarray(stamps)


def test_inlet_receives_exact_samples_timestamps_and_metadata() -> None:
    name = _name()
    pub = Publisher("ward_demo", name=name, duration_s=1.5)
    pub.start(wait_for_consumer_s=5.0)
    try:
        inlet = _inlet(name)
        info = inlet.info(5.0)  # type: ignore[attr-defined]
        x, ts = _pull_all(inlet, pub)
    finally:
        pub.stop()
    scn = pub.scenario
    # Exact sample count and values (float32 on the wire).
    assert x.shape == (750, scn.n_channels) and pub.samples_sent == 750
    assert np.array_equal(x, pub.generator.generate(0, 750).astype(np.float32))
    # Timestamps spaced at exactly the nominal rate, starting at the first timestamp.
    assert np.allclose(np.diff(ts), 1 / scn.rate_hz, atol=1e-6)
    assert abs(ts[0] - pub.first_timestamp) < 1e-6
    # Metadata as the XDF convention lays it out, and always a source_id.
    assert info.name() == name and info.type() == "EEG"
    assert info.channel_count() == scn.n_channels and info.nominal_srate() == 500
    assert info.get_channel_labels() == list(scn.channels)
    assert info.get_channel_units() == ["microvolts"] * scn.n_channels
    assert info.get_channel_types() == list(scn.channel_types)
    assert info.source_id() == pub.source_id and pub.source_id
    desc = info.desc()
    assert desc.child("cap").child_value("labelscheme") == "10-10"
    assert desc.child("acquisition").child_value("manufacturer") == scn.manufacturer
    assert desc.child("reference").child_value("label") == "REF"
    assert "invented" in desc.child("bedside").child_value("patient")


def test_units_follow_the_scenario() -> None:
    """mains_60hz sends millivolts: the inlet sees µV / 1000, and unit 'millivolts'."""
    name = _name()
    pub = Publisher("mains_60hz", name=name, duration_s=0.5)
    pub.start(wait_for_consumer_s=5.0)
    try:
        inlet = _inlet(name)
        units = inlet.info(5.0).get_channel_units()  # type: ignore[attr-defined]
        x, _ = _pull_all(inlet, pub)
    finally:
        pub.stop()
    assert set(units) == {"millivolts"}
    expect = (pub.generator.generate(0, 128) / 1000.0).astype(np.float32)
    assert np.array_equal(x, expect)


def test_speed_sends_faster_with_exact_count() -> None:
    """speed 8: 4 s of stream time in about half a second, still exactly 4 × 500 samples."""
    name = _name()
    pub = Publisher("ward_demo", name=name, duration_s=4.0, speed=8.0)
    t0 = time.monotonic()
    pub.start(wait_for_consumer_s=5.0)
    try:
        inlet = _inlet(name)
        x, ts = _pull_all(inlet, pub)
    finally:
        pub.stop()
    assert pub.wait(0) and time.monotonic() - t0 < 4.0
    assert x.shape[0] == 2000 and pub.samples_sent == 2000
    assert np.allclose(np.diff(ts), 1 / 500, atol=1e-6)  # no false gaps


def test_run_in_background_and_stop() -> None:
    name = _name()
    pub = run_in_background("clean", name=name)
    try:
        assert pub.running
        inlet = _inlet(name)
        data: list[list[float]] = []
        deadline = time.monotonic() + 3
        while not data and time.monotonic() < deadline:
            data, _ = inlet.pull_chunk(timeout=0.2)  # type: ignore[attr-defined]
        assert data
    finally:
        pub.stop()
    assert not pub.running
    assert not pylsl.resolve_byprop("name", name, 1, 0.5)  # the outlet is gone


def test_bad_arguments_are_refused_clearly() -> None:
    with pytest.raises(InputError, match="speed must be a number greater than zero"):
        Publisher("clean", speed=0)
    with pytest.raises(InputError, match="duration must be greater than zero"):
        Publisher("clean", duration_s=-1)
    with pytest.raises(ScenarioError, match="no scenario named 'ward'; the scenarios are"):
        Publisher("ward")
