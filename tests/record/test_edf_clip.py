"""The EDF+ clip, re-read by pyEDFlib (an independent C reader, test-only).

Sources: EDF+ specification (Kemp & Olivan 2003): ASCII header, labels ≤ 16 characters,
whole data records; physical = (digital − dmin)·(pmax − pmin)/(dmax − dmin) + pmin, so
one digital step is (pmax − pmin)/(dmax − dmin) µV. pyEDFlib's reader applies the same
formula on its own.
"""

from __future__ import annotations

from datetime import datetime
from pathlib import Path

import numpy as np
import pyedflib
import pytest

from bedside.errors import InputError
from bedside.record.edf_clip import DIGITAL_RANGE, write_edf_clip


def _signals(rate_hz: float, seconds: float, n_channels: int, seed: int = 7) -> np.ndarray:
    rng = np.random.default_rng(seed)
    t = np.arange(int(round(rate_hz * seconds))) / rate_hz
    cols = [40 * np.sin(2 * np.pi * (3 + k) * t) + rng.normal(0, 5, t.size) for k in range(n_channels)]
    return np.column_stack(cols)


def _read(path: Path) -> tuple[list[str], list[str], np.ndarray, list[float], tuple, float]:
    with pyedflib.EdfReader(str(path)) as r:
        labels = r.getSignalLabels()
        dims = [r.getPhysicalDimension(i) for i in range(r.signals_in_file)]
        data = np.column_stack([r.readSignal(i) for i in range(r.signals_in_file)])
        rates = [r.getSampleFrequency(i) for i in range(r.signals_in_file)]
        annots = r.readAnnotations()
        duration = r.datarecord_duration
    return labels, dims, data, rates, annots, duration


def test_clip_matches_within_one_quantisation_step(tmp_path: Path) -> None:
    x = _signals(256.0, 10.0, 4)
    labels = ["Fp1", "Cz", "O2", "ECG"]
    path = tmp_path / "clip.edf"
    res = write_edf_clip(
        path, x, 256.0, labels, [(2.5, None, "bridge C3-Cz"), (7.0, 1.5, "Fp1 pop")],
        subject_id="W3-017", start=datetime(2026, 12, 1, 19, 30, 5),
    )  # fmt: skip
    got_labels, dims, got, rates, annots, record_s = _read(path)
    assert got_labels == labels and dims == ["uV"] * 4 and rates == [256.0] * 4
    assert record_s == 1.0 and res.dropped_samples == 0 and got.shape == x.shape
    for i, limit in enumerate(res.physical_range_uv):
        step = 2 * limit / (DIGITAL_RANGE[1] - DIGITAL_RANGE[0])
        assert np.max(np.abs(got[:, i] - x[:, i])) <= step, labels[i]
        assert limit >= np.max(np.abs(x[:, i])) and limit - np.max(np.abs(x[:, i])) < 1.0
    onsets, durations, texts = annots
    assert list(texts) == ["bridge C3-Cz", "Fp1 pop"]
    assert np.allclose(onsets, [2.5, 7.0]) and durations[1] == pytest.approx(1.5)
    with pyedflib.EdfReader(str(path)) as r:
        assert r.getStartdatetime() == datetime(2026, 12, 1, 19, 30, 5)
        assert "W3-017" in r.getPatientCode()


def test_partial_record_keeps_the_newest_samples_and_shifts_annotations(tmp_path: Path) -> None:
    """250 Hz, 4.5 s: 1 s records → 4 records kept, the oldest 125 samples dropped."""
    x = _signals(250.0, 4.5, 2)
    path = tmp_path / "clip.edf"
    res = write_edf_clip(path, x, 250.0, ["C3", "C4"], [(1.0, None, "C3 flat"), (0.2, None, "early")])
    _, _, got, _, (onsets, _, texts), _ = _read(path)
    assert res.dropped_samples == 125 and got.shape == (1000, 2)
    step = 2 * res.physical_range_uv[0] / 65535
    assert np.max(np.abs(got[:, 0] - x[125:, 0])) <= step
    by_text = dict(zip(texts, onsets, strict=True))
    assert by_text["C3 flat"] == pytest.approx(0.5)
    assert by_text["early (at -0.30 s, before the clip)"] == 0.0


def test_missing_samples_are_written_as_zero_and_annotated(tmp_path: Path) -> None:
    x = _signals(256.0, 2.0, 2)
    x[10:20, 1] = np.nan
    x[30, 1] = np.inf
    path = tmp_path / "nan.edf"
    res = write_edf_clip(path, x, 256.0, ["Cz", "Pz"])
    _, _, got, _, (_, _, texts), _ = _read(path)
    step = 2 * res.physical_range_uv[1] / 65535
    missing = ~np.isfinite(x[:, 1])
    assert np.all(np.abs(got[missing, 1]) <= step)
    assert np.max(np.abs(got[~missing, 1] - x[~missing, 1])) <= step
    assert "Pz: 11 missing samples (NaN/Inf) written as 0" in list(texts)
    assert res.notes == ("Pz: 11 missing samples (NaN/Inf) written as 0",)


def test_non_integer_rates_use_shorter_records(tmp_path: Path) -> None:
    """A 128.5 Hz stream: 2 s records hold 257 samples."""
    x = _signals(128.5, 4.0, 1)
    res = write_edf_clip(tmp_path / "r.edf", x, 128.5, ["Oz"])
    *_, record_s = _read(tmp_path / "r.edf")
    assert res.record_duration_s == 2.0 and record_s == 2.0


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"labels": ["Fp1", "an-overly-long-label"]}, "at most 16"),
        ({"labels": ["Fp1", "Fp1"]}, "repeat"),
        ({"labels": ["Fp1", "µV-ch"]}, "ASCII"),
        ({"labels": ["Fp1"]}, "1 labels for 2 channels"),
        ({"rate_hz": 0}, "rate 0"),
        ({"rate_hz": 1000 / 3}, "no whole number of samples"),
        ({"samples_uv": np.zeros((100, 2))}, "less than one EDF data record"),
        ({"samples_uv": np.zeros(512)}, "shape"),
        ({"samples_uv": np.full((512, 2), 2e7)}, "at most"),
        ({"subject_id": "../x1"}, "path separator"),
    ],
)
def test_bad_input_is_a_clear_error(tmp_path: Path, kwargs: dict, match: str) -> None:
    args: dict = {"samples_uv": np.zeros((512, 2)), "rate_hz": 256.0, "labels": ["Fp1", "Fp2"]}
    args.update(kwargs)
    subject = args.pop("subject_id", "")
    with pytest.raises(InputError, match=match):
        write_edf_clip(tmp_path / "x.edf", args["samples_uv"], args["rate_hz"], args["labels"], subject_id=subject)
    assert not (tmp_path / "x.edf").exists()


def test_the_logs_findings_become_clip_annotations(tmp_path: Path) -> None:
    """Worked by hand: a clip from t0+10 s lasting 10 s holds Fp1's change at +13 s and
    the bridge at +15 s; Cz was bad before the clip (noted at 0 s); O1's change at +25 s
    is after the clip."""
    from bedside.record.edf_clip import annotations_for_clip
    from bedside.record.log import FindingChange, LevelChange, SetupLog, stamp

    t0 = 1_796_000_000.0
    log = SetupLog(
        timeline=[
            LevelChange(stamp(t0), "Cz", "none", "bad", ("flat",)),
            LevelChange(stamp(t0), "Fp1", "none", "check"),
            LevelChange(stamp(t0 + 13), "Fp1", "check", "good"),
            LevelChange(stamp(t0 + 25), "O1", "none", "bad"),
        ],
        findings=[FindingChange(stamp(t0 + 15), "appeared", "bridge", ("C3", "Cz"), "bad", "ED 2")],
    )
    notes = annotations_for_clip(log, stamp(t0 + 10), 10.0)
    assert notes == [
        (0.0, None, "Cz: bad at clip start (flat)"),
        (0.0, None, "Fp1: check at clip start"),
        (3.0, None, "Fp1: check -> good"),
        (5.0, None, "bridge C3-Cz appeared (bad): ED 2"),
    ]
    x = _signals(256.0, 10.0, 2)
    write_edf_clip(tmp_path / "c.edf", x, 256.0, ["Cz", "Fp1"], notes)
    *_, (onsets, _, texts), _ = _read(tmp_path / "c.edf")
    assert list(texts) == [n[2] for n in notes] and np.allclose(onsets, [n[0] for n in notes])
