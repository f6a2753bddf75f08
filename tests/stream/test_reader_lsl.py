"""LslSource on real loopback outlets: units, labels, intact samples, odd data (issues 3, 8).

Outside references: SI prefixes (BIPM SI Brochure, 9th ed., table 7) for the unit
factors; the XDF EEG meta-data convention for where labels/units/types live
(desc/channels/channel/{label,unit,type}); IEEE 754 binary32/binary64 limits for the
extreme values (numpy.finfo / numpy.iinfo report them).
"""

from __future__ import annotations

import dataclasses
import time

import numpy as np
import pylsl
import pytest
from conftest import wait_for_identity
from outlets import Feeder, drain, make_info, unique_name

from bedside.errors import StreamFormatError
from bedside.stream.channels import ChannelOptions
from bedside.stream.discovery import resolve_one
from bedside.stream.reader import LslSource
from bedside.stream.settings import StreamSettings

pytestmark = pytest.mark.lsl
FAST = StreamSettings(rate_window_s=1.0, open_timeout_s=2.0)


def open_source(feeder: Feeder, settings: StreamSettings = FAST) -> LslSource:
    ident = wait_for_identity(feeder.info.name(), feeder.info.source_id())
    src = LslSource(ident, settings)
    assert feeder.wait_for_consumer(3.0)
    return src


def test_units_labels_and_samples_arrive_intact(feeders) -> None:  # type: ignore[no-untyped-def]
    """Each channel's values × its SI factor (BIPM table 7) must come out exactly."""
    rng = np.random.default_rng(3)
    values = rng.normal(0, 1, size=(500, 5)).astype(np.float32)
    values[:, 0] *= 50  # µV
    values[:, 1] *= 0.05  # mV
    values[:, 2] *= 5e-5  # V
    values[:, 3] *= 5e4  # nV
    f = feeders(
        n_channels=5, rate_hz=500,
        labels=["EEG Fp1-REF", "T3", "Cz", "O2", "ECG"],
        units=["microvolts", "mV", "V", "nV", ""],
        types=["EEG", "EEG", "EEG", "EEG", "ECG"],
    )
    f.values = values
    if True:
        with open_source(f) as src:
            assert [c.name for c in src.channels] == ["Fp1", "T7", "Cz", "O2", "ECG"]
            assert [c.is_scalp for c in src.channels] == [True, True, True, True, False]
            pushed_from = f.t
            x, ts = drain(src, 1.2, f)
            n = x.shape[0]
            assert n >= 400
            scale = np.array([1.0, 1e3, 1e6, 1e-3, 1.0])
            expected = values[np.arange(n) % 500].astype(np.float64) * scale
            np.testing.assert_allclose(x, expected, rtol=1e-12)
            # Time-corrected onto this computer's LSL clock: same machine, offset ~0.
            sent = pushed_from + np.arange(n) / 500.0
            assert np.max(np.abs(ts - sent)) < 1e-3
            h = src.health()
            assert h.state == "live" and h.gaps == 0
            assert any("no unit" in note for note in h.notes)  # the ECG channel
            assert src.channels[4].kind == "ECG"


def test_nan_inf_zero_and_numeric_limits_pass_through(feeders) -> None:  # type: ignore[no-untyped-def]
    """IEEE 754 values (numpy.finfo): the reader must neither crash nor change them."""
    big = np.finfo(np.float32).max
    tiny = np.finfo(np.float32).smallest_subnormal
    row = np.array([np.nan, np.inf, -np.inf, 0.0, big, -big, tiny], dtype=np.float32)
    values = np.tile(row, (50, 1))
    f = feeders(n_channels=7, rate_hz=250, units="V")
    f.values = values
    with open_source(f) as src:
        x, _ = drain(src, 0.6, f)
        assert x.shape[0] > 0
        with np.errstate(over="ignore"):
            expected = row.astype(np.float64) * 1e6
        np.testing.assert_array_equal(x[0], expected)  # NaN == NaN for assert_array_equal
        assert src.health().state == "live"


def test_float64_overflow_to_inf_is_quiet(feeders) -> None:  # type: ignore[no-untyped-def]
    """binary64 max × 1e6 overflows to +inf: shown as inf, never a crash or a warning."""
    row = np.array([np.finfo(np.float64).max, 1.0])
    f = feeders(n_channels=2, rate_hz=250, units="V", fmt="double64")
    f.values = np.tile(row, (10, 1))
    with open_source(f) as src:
        x, _ = drain(src, 0.5, f)
        assert np.isposinf(x[0, 0]) and x[0, 1] == 1e6


def test_int16_limits_and_all_zero_channel(feeders) -> None:  # type: ignore[no-untyped-def]
    """int16 range -32768..32767 (numpy.iinfo) arrives exactly; an all-zero channel stays zero."""
    info = np.iinfo(np.int16)
    row = np.array([info.min, info.max, 0], dtype=np.int16)
    f = feeders(n_channels=3, rate_hz=250, fmt="int16", units="uV")
    f.values = np.tile(row, (25, 1))
    with open_source(f) as src:
        x, _ = drain(src, 0.5, f)
        assert x.shape[0] > 0
        np.testing.assert_array_equal(x[:, 0], -32768.0)
        np.testing.assert_array_equal(x[:, 1], 32767.0)
        assert not np.any(x[:, 2])


def test_one_channel_stream_is_read_with_a_note(feeders) -> None:  # type: ignore[no-untyped-def]
    f = feeders(n_channels=1, labels=["Cz"])
    with open_source(f) as src:
        x, _ = drain(src, 0.4, f)
        assert x.shape[1] == 1 and x.shape[0] > 0
        assert any("one channel only" in n for n in src.health().notes)


def test_channel_count_differing_from_metadata_and_duplicate_labels(feeders) -> None:  # type: ignore[no-untyped-def]
    f = feeders(n_channels=4, labels=["Cz", "Cz", ""], units="uV")
    with open_source(f) as src:
        assert [c.name for c in src.channels] == ["Cz", "Cz#2", "ch3", "ch4"]
        notes = src.health().notes
        assert any("describes 3 channels but the stream carries 4" in n for n in notes)
        assert any("repeats the name Cz" in n for n in notes)
        x, _ = drain(src, 0.3, f)
        assert x.shape[1] == 4


def test_counts_without_a_scale_are_refused(feeders) -> None:  # type: ignore[no-untyped-def]
    """Issue 11.6: an int16 stream with no unit is raw converter counts; no scale, no µV."""
    f = feeders(n_channels=2, fmt="int16", units=None, labels=["Cz", "Pz"])
    ident = wait_for_identity(f.info.name())
    with pytest.raises(StreamFormatError, match=r"integer samples with no unit\) for 2 channel.*--uv-per-count"):
        LslSource(ident, FAST)


def test_counts_are_scaled_by_uv_per_count(feeders) -> None:  # type: ignore[no-untyped-def]
    """Issue 11.6: --uv-per-count turns counts into µV (here 0.5 µV per count)."""
    f = feeders(n_channels=2, fmt="int16", units="counts", labels=["Cz", "Pz"])
    f.values = np.full((10, 2), 12.0)
    ident = wait_for_identity(f.info.name())
    with LslSource(ident, FAST, options=ChannelOptions(uv_per_count=0.5)) as src:
        x, _ = drain(src, 0.3, f)
        np.testing.assert_array_equal(x, 6.0)
        # An int16 stream cannot go past ±32767 counts (numpy.iinfo): its rail, in µV,
        # is what the engine judges clipping against when no amplifier range is known.
        assert src.numeric_range_uv == np.iinfo(np.int16).max * 0.5
        from bedside.engine_setup import engine_options

        kwargs, _note = engine_options(src)
        assert kwargs["amplifier_range_uv"] == np.iinfo(np.int16).max * 0.5


def test_values_in_volts_labelled_microvolts_are_named(feeders) -> None:  # type: ignore[no-untyped-def]
    """Issue 11.6: a 10 Hz sine of 50 µV amplitude sent as volts (5e-5) but labelled µV."""
    f = feeders(n_channels=3, units="microvolts", labels=["Cz", "Pz", "Oz"])
    k = np.arange(250)[:, None]
    f.values = np.sin(2 * np.pi * 10.0 * k / 250.0) * 50e-6 * np.ones((1, 3))
    with open_source(f, dataclasses.replace(FAST, unit_check_s=0.5)) as src:
        drain(src, 1.0, f)
        assert "values look like volts" in src.unit_note
        assert any("values look like volts" in n for n in src.health().notes)


def test_too_many_channels_are_refused(feeders) -> None:  # type: ignore[no-untyped-def]
    """Issue 11 bad input: 2,000 channels (more than max_channels in configs/stream.yaml)."""
    f = feeders(n_channels=2000, labels=[f"E{i}" for i in range(2000)])
    ident = wait_for_identity(f.info.name())
    with pytest.raises(StreamFormatError, match="2000 channels; bedside reads at most 1024"):
        LslSource(ident, FAST)


def test_reference_and_acquisition_metadata_are_read(feeders) -> None:  # type: ignore[no-untyped-def]
    """XDF EEG meta-data convention: desc/reference/{label, subtracted}; desc/acquisition;
    the reference electrode streamed as zeros is the reference (kind REF)."""
    info = make_info(unique_name(), n_channels=3, labels=["C3", "Cz", "C4"])
    ref = info.desc().append_child("reference")
    ref.append_child_value("label", "Cz")
    ref.append_child_value("subtracted", "true")
    acq = info.desc().append_child("acquisition")
    acq.append_child_value("coupling", "DC")
    acq.append_child_value("input_range_uv", "400000")
    f = Feeder(info)
    try:
        ident = wait_for_identity(info.name())
        with LslSource(ident, FAST) as src:
            assert [c.kind for c in src.channels] == ["EEG", "REF", "EEG"]
            assert src.reference.label == "Cz" and src.reference.subtracted is True
            assert src.profile.coupling == "dc" and src.profile.input_range_uv == 400000.0
    finally:
        f.close()


@pytest.mark.parametrize("rate", [1.0, 100_000.0, 0.0])
def test_absurd_and_irregular_rates_are_refused(feeders, rate: float) -> None:  # type: ignore[no-untyped-def]
    """Decision: rates outside 128 Hz..20 kHz (configs/stream.yaml) are refused, saying so."""
    f = feeders(n_channels=2, rate_hz=rate)
    ident = wait_for_identity(f.info.name())
    with pytest.raises(StreamFormatError, match=r"accepted: 128 to 20000 Hz"):
        LslSource(ident, FAST)


def test_low_but_usable_rate_is_read_with_a_note(feeders) -> None:  # type: ignore[no-untyped-def]
    f = feeders(n_channels=2, rate_hz=128)
    with open_source(f) as src:
        assert any("below the 200 Hz" in n for n in src.health().notes)


def test_text_stream_is_refused(feeders) -> None:  # type: ignore[no-untyped-def]
    name = unique_name()
    info = pylsl.StreamInfo(name, "EEG", 1, 250, "string", f"sid-{name}")
    outlet = pylsl.StreamOutlet(info)
    try:
        ident = wait_for_identity(name)
        with pytest.raises(StreamFormatError, match="carries text"):
            LslSource(ident, FAST)
    finally:
        del outlet


def test_wrong_type_named_stream_says_its_type(feeders) -> None:  # type: ignore[no-untyped-def]
    f = feeders(stream_type="Markers", n_channels=1)
    wait_for_identity(f.info.name())
    with pytest.raises(StreamFormatError, match="of type 'Markers', not EEG"):
        resolve_one(name=f.info.name(), wait_s=0.5)


def test_pull_returns_none_when_nothing_arrives(feeders) -> None:  # type: ignore[no-untyped-def]
    f = feeders(n_channels=2)
    with open_source(f) as src:
        t0 = time.monotonic()
        assert src.pull(timeout_s=0.2) is None
        assert time.monotonic() - t0 < 1.0
        src.close()
        src.close()  # idempotent


def test_settings_limit_the_pull_size(feeders) -> None:  # type: ignore[no-untyped-def]
    f = feeders(n_channels=2, rate_hz=1000)
    with open_source(f, dataclasses.replace(FAST, max_pull_samples=64)) as src:
        f.push(500)
        time.sleep(0.2)
        chunk = src.pull(0.5)
        assert chunk is not None and chunk.samples_uv.shape == (64, 2)


def test_close_from_another_thread_during_a_pull(feeders) -> None:  # type: ignore[no-untyped-def]
    """The UI may stop while the reading thread waits in pull(): no crash, a clear error after."""
    import threading

    from bedside.errors import StreamError

    f = feeders(n_channels=2)
    src = open_source(f)
    outcome: list[object] = []

    def reader() -> None:
        try:
            while True:
                src.pull(timeout_s=0.3)
        except StreamError as exc:
            outcome.append(exc)

    th = threading.Thread(target=reader)
    th.start()
    time.sleep(0.2)
    src.close()
    th.join(timeout=3.0)
    assert not th.is_alive()
    assert outcome and "was closed" in str(outcome[0])
    assert src.health().state in ("connecting", "live", "stale", "lost")
