"""Replay of files on LSL, checked against independent readers.

The EDF file is ``pyedflib/data/test_generator.edf``, shipped in the pyEDFlib package
(a standard generator recording: square wave, ramp, pulse, noise and sines at 1, 8,
8.1777, 8.5, 15, 17 and 50 Hz, 200 Hz sampling, 600 s). pyEDFlib (a C reader,
independent of edfio which bedside uses) is the reference for the samples, labels and
units; a real pylsl inlet on loopback receives the replayed stream.
"""

from __future__ import annotations

import logging
import time
import uuid
from pathlib import Path

import numpy as np
import pyedflib
import pylsl
import pytest

from bedside.errors import ScenarioError  # noqa: E402
from bedside.sim.replay import load_recording, replay_publisher  # noqa: E402

TEST_EDF = Path(pyedflib.__file__).parent / "data" / "test_generator.edf"


def _name() -> str:
    return f"bedside-test-replay-{uuid.uuid4().hex[:10]}"


def _receive(name: str, n_wanted: int, timeout_s: float = 15.0) -> tuple[np.ndarray, np.ndarray, object]:
    infos = pylsl.resolve_byprop("name", name, 1, 5.0)
    assert infos
    inlet = pylsl.StreamInlet(infos[0], max_buflen=120, recover=False)
    info = inlet.info(5.0)
    inlet.open_stream(5.0)
    chunks, stamps, n = [], [], 0
    deadline = time.monotonic() + timeout_s
    while n < n_wanted and time.monotonic() < deadline:
        data, ts = inlet.pull_chunk(timeout=0.2, max_samples=n_wanted - n)
        if data:
            chunks.append(np.asarray(data))
            stamps.extend(ts)
            n += len(ts)
    return np.concatenate(chunks), np.asarray(stamps), info


@pytest.mark.lsl
def test_edf_replay_arrives_intact_compared_with_pyedflib() -> None:
    """40 s of test_generator.edf at 20x real time (about 2 s): every sample of every
    signal equals pyEDFlib's physical values (as float32, LSL's wire format); labels and
    units are the file's; timestamps are spaced at the file's 200 Hz."""
    with pyedflib.EdfReader(str(TEST_EDF)) as ref:
        labels = ref.getSignalLabels()
        rates = ref.getSampleFrequencies()
        units = [ref.getPhysicalDimension(i) for i in range(ref.signals_in_file)]
        n = 40 * 200
        expected = np.column_stack([ref.readSignal(i)[:n] for i in range(ref.signals_in_file)])
    assert set(rates) == {200.0} and set(units) == {"uV"}
    name = _name()
    pub = replay_publisher(TEST_EDF, name=name, speed=20.0)
    pub.start(wait_for_consumer_s=5.0)
    try:
        x, ts, info = _receive(name, n)
    finally:
        pub.stop()
    assert x.shape == expected.shape
    assert np.array_equal(x, expected.astype(np.float32))
    assert info.get_channel_labels() == labels  # type: ignore[attr-defined]
    assert info.get_channel_units() == ["microvolts"] * len(labels)  # type: ignore[attr-defined]
    assert info.nominal_srate() == 200 and info.source_id()  # type: ignore[attr-defined]
    assert np.allclose(np.diff(ts), 1 / 200, atol=1e-6)


def test_recording_matches_pyedflib_whole_file() -> None:
    """All 600 s of all 11 signals, read by bedside (edfio) and by pyEDFlib, agree."""
    rec = load_recording(TEST_EDF)
    with pyedflib.EdfReader(str(TEST_EDF)) as ref:
        expected = np.column_stack([ref.readSignal(i) for i in range(ref.signals_in_file)])
        assert [c.label for c in rec.channels] == ref.getSignalLabels()
    assert rec.rate_hz == 200 and rec.duration_s == 600
    np.testing.assert_allclose(rec.data, expected, rtol=0, atol=1e-9)


@pytest.mark.lsl
def test_loop_wraps_around_to_the_start(tmp_path: Path) -> None:
    """--loop: after the last sample comes the first again, with no gap in timestamps."""
    import edfio
    x = np.arange(200, dtype=float) % 100  # 2 s at 100 Hz, values exactly representable
    edf = edfio.Edf([edfio.EdfSignal(x, 100, label="Cz", physical_dimension="uV", physical_range=(-500, 500))])
    path = tmp_path / "short.edf"
    edf.write(path)
    rec = load_recording(path)
    name = _name()
    pub = replay_publisher(rec, name=name, speed=10.0, loop=True)
    pub.start(wait_for_consumer_s=5.0)
    try:
        got, ts, _ = _receive(name, 500)
    finally:
        pub.stop()
    want = np.tile(rec.data[:, 0], 3)[:500].astype(np.float32)
    assert np.array_equal(got[:, 0], want)
    assert np.allclose(np.diff(ts), 1 / 100, atol=1e-6)


def test_mixed_rates_play_the_largest_group_and_warn(tmp_path: Path, caplog: pytest.LogCaptureFixture) -> None:
    import edfio
    sig = [
        edfio.EdfSignal(np.zeros(256), 256, label="EEG Fp1", physical_dimension="uV", physical_range=(-500, 500)),
        edfio.EdfSignal(np.zeros(256), 256, label="EEG Fp2", physical_dimension="uV", physical_range=(-500, 500)),
        edfio.EdfSignal(np.zeros(10), 10, label="Resp belt", physical_dimension="mV", physical_range=(-5, 5)),
    ]
    path = tmp_path / "mixed.edf"
    edfio.Edf(sig).write(path)
    with caplog.at_level(logging.WARNING, logger="bedside"):
        rec = load_recording(path)
    assert [c.label for c in rec.channels] == ["EEG Fp1", "EEG Fp2"]
    assert [c.type for c in rec.channels] == ["EEG", "EEG"]  # EDF+ "type label" form
    assert rec.skipped == ("Resp belt (10 Hz)",)
    assert "Resp belt (10 Hz)" in caplog.text


@pytest.mark.parametrize(
    ("name", "content", "message"),
    [
        ("junk.edf", b"not an edf file", "not a readable EDF/EDF\\+ file"),
        ("notes.txt", b"x", "cannot replay a '.txt' file; accepted: .bdf, .edf, .xdf, .xdfz"),
        ("junk.xdf", b"not xdf", "not a readable XDF file"),
    ],
)
def test_bad_files_give_clear_errors(tmp_path: Path, name: str, content: bytes, message: str) -> None:
    p = tmp_path / name
    p.write_bytes(content)
    with pytest.raises(ScenarioError, match=message):
        load_recording(p)
    with pytest.raises(ScenarioError, match="file not found"):
        load_recording(tmp_path / "missing.edf")


def _write_xdf(path: Path, data: np.ndarray, rate_hz: float, labels: list[str]) -> None:
    """A minimal XDF 1.0 file, byte by byte after the XDF specification (chunks of
    [length-size byte][length][2-byte tag][content]; tags 1 FileHeader, 2 StreamHeader,
    3 Samples, 6 StreamFooter; little-endian)."""
    import struct

    def chunk(tag: int, content: bytes) -> bytes:
        body = struct.pack("<H", tag) + content
        return struct.pack("<B", 4) + struct.pack("<I", len(body)) + body

    chans = "".join(
        f"<channel><label>{lbl}</label><unit>microvolts</unit><type>EEG</type></channel>" for lbl in labels
    )
    header = (
        "<?xml version=\"1.0\"?><info><name>xdf-test</name><type>EEG</type>"
        f"<channel_count>{len(labels)}</channel_count><nominal_srate>{rate_hz:g}</nominal_srate>"
        "<channel_format>float32</channel_format><source_id>xdf-test-src</source_id>"
        f"<desc><channels>{chans}</channels></desc></info>"
    )
    sid = struct.pack("<I", 1)
    ts = 100.0 + np.arange(data.shape[0]) / rate_hz
    samples = b"".join(
        struct.pack("<B", 8) + struct.pack("<d", t) + row.astype("<f4").tobytes()
        for t, row in zip(ts, data, strict=True)
    )
    footer = (
        f"<?xml version=\"1.0\"?><info><first_timestamp>{ts[0]}</first_timestamp>"
        f"<last_timestamp>{ts[-1]}</last_timestamp><sample_count>{data.shape[0]}</sample_count></info>"
    )
    blob = b"XDF:" + chunk(1, b"<?xml version=\"1.0\"?><info><version>1.0</version></info>")
    blob += chunk(2, sid + header.encode())
    blob += chunk(3, sid + struct.pack("<B", 4) + struct.pack("<I", data.shape[0]) + samples)
    blob += chunk(6, sid + footer.encode())
    path.write_bytes(blob)


def test_xdf_recording_read_through_pyxdf(tmp_path: Path) -> None:
    """An XDF file written after the XDF specification is read (by pyxdf) with its
    labels, units, rate and samples intact."""
    import pyxdf  # noqa: F401 - the reader under test needs it (test extra)
    rng = np.random.default_rng(5)
    data = rng.normal(0, 20, (300, 3)).astype(np.float32)
    path = tmp_path / "rec.xdf"
    _write_xdf(path, data, 250.0, ["Fz", "Cz", "Pz"])
    rec = load_recording(path)
    assert rec.format == "XDF" and rec.rate_hz == 250.0
    assert [c.label for c in rec.channels] == ["Fz", "Cz", "Pz"]
    assert {c.unit for c in rec.channels} == {"microvolts"}
    assert np.array_equal(rec.data.astype(np.float32), data)


def test_xdf_without_pyxdf_says_how_to_get_it(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    import sys

    path = tmp_path / "rec.xdf"
    _write_xdf(path, np.zeros((10, 1), dtype=np.float32), 100.0, ["Cz"])
    monkeypatch.setitem(sys.modules, "pyxdf", None)  # as if the optional extra were absent
    with pytest.raises(ScenarioError, match=r"replaying XDF needs pyxdf.*pip install 'bedside\[xdf\]'"):
        load_recording(path)


def test_bdf_is_read_too(tmp_path: Path) -> None:
    """A 24-bit BDF written by edfio reads back with pyEDFlib's values (pyEDFlib reads BDF)."""
    import edfio
    x = np.sin(2 * np.pi * 10 * np.arange(512) / 256) * 80
    path = tmp_path / "short.bdf"
    edfio.Bdf([edfio.BdfSignal(x, 256, label="Oz", physical_dimension="uV", physical_range=(-200, 200))]).write(path)
    rec = load_recording(path)
    with pyedflib.EdfReader(str(path)) as ref:
        expected = ref.readSignal(0)
    assert rec.format == "BDF" and rec.channels[0].label == "Oz"
    np.testing.assert_allclose(rec.data[:, 0], expected, rtol=0, atol=1e-9)


def test_edf_physical_range_is_the_replays_input_range() -> None:
    """EEGMMIDB S001R02 (tests/data): pyEDFlib reads its physical range as ±8092 µV on
    every signal; the replay takes that as the input range (so clipping is judged against
    the file's limits, not against a repeated maximum)."""
    edf = Path(__file__).parents[1] / "data" / "S001R02.edf"
    with pyedflib.EdfReader(str(edf)) as ref:
        ranges = {(ref.getPhysicalMinimum(i), ref.getPhysicalMaximum(i)) for i in range(ref.signals_in_file)}
    assert ranges == {(-8092.0, 8092.0)}
    assert load_recording(edf).input_range_uv == 8092.0
    # pyEDFlib's generator file: the smallest ± range over its µV signals.
    assert load_recording(TEST_EDF).input_range_uv == pytest.approx(
        min(min(abs(a), abs(b)) for a, b in _generator_ranges())
    )


def _generator_ranges() -> list[tuple[float, float]]:
    with pyedflib.EdfReader(str(TEST_EDF)) as ref:
        return [(ref.getPhysicalMinimum(i), ref.getPhysicalMaximum(i)) for i in range(ref.signals_in_file)]


@pytest.mark.lsl
def test_replayed_stream_carries_the_input_range_and_the_source_reads_it() -> None:
    """The outlet's desc/acquisition/input_range_uv (bedside's own key beside the XDF
    meta-data convention's acquisition fields), read back by a plain pylsl inlet."""
    edf = Path(__file__).parents[1] / "data" / "S001R02.edf"
    name = _name()
    pub = replay_publisher(edf, name=name, speed=5.0)
    pub.start(wait_for_consumer_s=5.0)
    try:
        _x, _ts, info = _receive(name, 160)
    finally:
        pub.stop()
    acq = info.desc().child("acquisition")  # type: ignore[attr-defined]
    assert float(acq.child_value("input_range_uv")) == 8092.0
