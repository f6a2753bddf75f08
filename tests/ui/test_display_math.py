"""The display-only helpers of the Watch view, checked against outside references.

- The spectrum shown for the selected channel against ``scipy.signal.periodogram``
  (Hann window, 'spectrum' scaling: amplitude = sqrt(2 · power) for one-sided bins).
- Average-reference and bipolar derivations against MNE-Python's
  ``set_eeg_reference(ref_channels="average")`` and ``set_bipolar_reference``.
- The time-to-good bookkeeping against values worked by hand (the display copy is the
  stream package's ring buffer, tested in tests/stream/test_ring.py).
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.signal
import standins as si

from bedside.checks.types import ChannelQuality, Level, QualityFrame
from bedside.ui.plots import amplitude_spectrum_db, derive, spectrum_lines, trace_lines
from bedside.ui.progress import GoodTracker
from bedside.ui.screens.log import parse_kohm
from bedside.ui.widgets.channel_table import metric_header


def test_spectrum_matches_scipy_periodogram() -> None:
    rng = np.random.default_rng(5)
    rate = 250.0
    t = np.arange(1000) / rate
    x = 30 + 10 * np.sin(2 * np.pi * 12 * t) + 4 * np.sin(2 * np.pi * 50 * t) + rng.normal(0, 1, t.size)
    f, db = amplitude_spectrum_db(x, rate)
    fs, pxx = scipy.signal.periodogram(x, rate, window="hann", scaling="spectrum", detrend="constant")
    np.testing.assert_allclose(f, fs)
    amp = 10 ** (db / 20)
    ref = np.sqrt(2 * pxx)
    inner = slice(1, -1)  # scipy does not double DC and Nyquist
    np.testing.assert_allclose(amp[inner], np.maximum(ref[inner], 1e-3), rtol=1e-9, atol=1e-9)
    # A 10 µV sine on a bin reads as 10 µV (20 dB re 1 µV).
    assert db[np.argmin(abs(f - 12))] == pytest.approx(20.0, abs=0.05)


def _mne_raw(data_uv: np.ndarray, names: list[str], rate: float):  # type: ignore[no-untyped-def]
    import mne
    info = mne.create_info(names, rate, ch_types="eeg")
    return mne.io.RawArray(data_uv.T * 1e-6, info, verbose="error")


def test_average_reference_matches_mne() -> None:
    rng = np.random.default_rng(1)
    names = ["Fp1", "Cz", "O1", "T7"]
    x = rng.normal(0, 20, (500, 4))
    raw = _mne_raw(x, names, 250.0)
    ref, _ = __import__("mne").set_eeg_reference(raw, ref_channels="average", projection=False, verbose="error")
    expected = ref.get_data()[2] * 1e6
    got = derive(x, 2, "average", np.ones(4, bool), None)
    np.testing.assert_allclose(got, expected, atol=1e-9)
    # A non-scalp channel (e.g. ECG) is left out of the average.
    mask = np.array([True, True, True, False])
    np.testing.assert_allclose(derive(x, 0, "average", mask, None), x[:, 0] - x[:, :3].mean(axis=1))


def test_bipolar_matches_mne() -> None:
    import mne
    rng = np.random.default_rng(2)
    names = ["T7", "P7", "Cz"]
    x = rng.normal(0, 20, (300, 3))
    raw = _mne_raw(x, names, 250.0)
    bip = mne.set_bipolar_reference(raw, "T7", "P7", ch_name="T7-P7", verbose="error")
    expected = bip.get_data(picks=["T7-P7"])[0] * 1e6
    np.testing.assert_allclose(derive(x, 0, "bipolar", np.ones(3, bool), 1), expected, atol=1e-9)
    # No partner: shown as recorded.
    np.testing.assert_allclose(derive(x, 0, "bipolar", np.ones(3, bool), None), x[:, 0])


def test_trace_lines_put_the_peak_on_top() -> None:
    """By hand: a ramp 0..9 across 10 columns and 5 rows rises from bottom left to top right."""
    rows, half = trace_lines(np.arange(10.0), 10, 5)
    assert len(rows) == 5 and all(len(r) == 10 for r in rows)
    assert rows[0][9] != " " and rows[4][0] != " "
    assert rows[0][0] == " " and rows[4][9] == " "
    assert half == pytest.approx(4.5)


def test_spectrum_marks_land_on_their_columns() -> None:
    f = np.linspace(0, 125, 501)
    db = np.where(abs(f - 50) < 0.3, 30.0, 0.0)
    pic = spectrum_lines(f, db, 50, 4, 100.0, (50.0, 100.0))
    assert pic.mark_columns == {50.0: 25, 100.0: 49}
    assert pic.rows[0][25] == "█"  # the 50 Hz peak is full height, by hand: column 50/100·50


def _frame(t: float, levels: dict[str, Level | None], state: str = "live") -> QualityFrame:
    chans = tuple(ChannelQuality(n, lv, {}, (), True) for n, lv in levels.items())
    return QualityFrame(t, t, chans, (), si.health(state), 4.0)


def test_time_to_good_by_hand() -> None:
    tr = GoodTracker()
    tr.update(_frame(100.0, {"Fp1": Level.BAD, "Cz": Level.GOOD}))
    tr.update(_frame(130.0, {"Fp1": Level.CHECK, "Cz": Level.BAD}))
    p = tr.update(_frame(142.5, {"Fp1": Level.GOOD, "Cz": Level.GOOD}))
    assert p.time_to_good_s == {"Cz": 0.0, "Fp1": 42.5}
    assert p.not_good == ()
    lost = tr.update(_frame(150.0, {"Fp1": None, "Cz": None}, state="lost"))
    assert not lost.live and lost.not_good == ("Fp1", "Cz")  # nothing counts as good without data


@pytest.mark.parametrize("text,value", [("4.5", 4.5), ("4,5", 4.5), ("12 kΩ", 12.0), ("0", 0.0), ("7k", 7.0)])
def test_impedance_accepted(text: str, value: float) -> None:
    assert parse_kohm(text) == pytest.approx(value)


@pytest.mark.parametrize("text,match", [("abc", "number of kΩ"), ("nan", "number of kΩ"),
                                        ("inf", "number of kΩ"), ("", "number of kΩ")])
def test_impedance_refused(text: str, match: str) -> None:
    with pytest.raises(ValueError, match=match):
        parse_kohm(text)


def test_metric_headers_carry_units() -> None:
    assert metric_header("line_noise_db") == "line noise dB"
    assert metric_header("drift_uv_per_s") == "drift µV/s"
    assert metric_header("pops") == "pops"


def test_bipolar_partner_is_the_longitudinal_chain_partner() -> None:
    """The trace's bipolar view reads an electrode against its partner in the standard
    longitudinal chains (ACNS Guideline 3, Acharya et al. 2016: Fp1-F7-T7-P7-O1 …), not
    its nearest neighbour (tests/test_montage.py checks the chains themselves)."""
    from bedside.ui.app import BedsideApp
    from bedside.ui.services import Services

    class _Conn:
        channels = si.channels()

    fake = type("A", (), {"connection": _Conn(), "services": Services()})()
    assert BedsideApp.bipolar_partner(fake, "T7") == "P7"  # type: ignore[arg-type]
    assert BedsideApp.bipolar_partner(fake, "F8") == "T8"  # type: ignore[arg-type]
    assert BedsideApp.bipolar_partner(fake, "O2") == "P4"  # type: ignore[arg-type]
    assert BedsideApp.bipolar_partner(fake, "ECG") is None  # type: ignore[arg-type]


def test_time_to_good_is_the_logs_definition_and_latest_moves() -> None:
    """Issue 17.12, against the setup log's own definition (SetupLog.time_to_good_s):
    from the electrode's first verdict (not the first frame) to its first good; "latest
    to good" follows the electrode fixed most recently."""
    from bedside.record.log import LevelChange, SetupLog, stamp

    tr = GoodTracker()
    tr.update(_frame(100.0, {"Fp1": None, "T7": None}))  # warming up: no verdict yet
    tr.update(_frame(101.0, {"Fp1": Level.BAD, "T7": None}))
    tr.update(_frame(103.0, {"Fp1": Level.GOOD, "T7": Level.BAD}))
    p = tr.update(_frame(110.0, {"Fp1": Level.GOOD, "T7": Level.GOOD}))
    assert p.time_to_good_s == {"Fp1": 2.0, "T7": 7.0}
    assert p.latest_good == ("T7", 7.0)
    log_ = SetupLog(timeline=[
        LevelChange(stamp(100.0), "Fp1", "none", "no_data"), LevelChange(stamp(100.0), "T7", "none", "no_data"),
        LevelChange(stamp(101.0), "Fp1", "no_data", "bad"), LevelChange(stamp(103.0), "Fp1", "bad", "good"),
        LevelChange(stamp(103.0), "T7", "no_data", "bad"), LevelChange(stamp(110.0), "T7", "bad", "good"),
    ])
    assert log_.time_to_good_s() == p.time_to_good_s
