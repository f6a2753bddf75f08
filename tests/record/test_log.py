"""The setup log model and its YAML form: round trip, strict loading, derived values."""

from __future__ import annotations

import dataclasses
from pathlib import Path

import pytest
import yaml
from hypothesis import given
from hypothesis import strategies as st
from record_factories import FakeClock, make_channels, make_frame, make_identity, make_plan

from bedside.checks.types import Finding, Level
from bedside.errors import RecordError
from bedside.record.log import (
    ChannelFinal,
    DumpCache,
    LevelChange,
    Note,
    SetupLog,
    dump_yaml,
    load_log,
    parse_yaml,
    shallow_copy,
    stamp,
)
from bedside.record.session import SessionRecorder


def _full_session(path: Path, clock: FakeClock) -> SetupLog:
    """A session touching every part of the log; returns the in-memory log at close."""
    rec = SessionRecorder.open(path, technologist="jmk", subject_id="W3-017", clock=clock)
    rec.set_plan(make_plan())
    rec.set_stream(make_identity(), make_channels())
    rec.set_reference("Cz", "AFz")
    t = clock.now
    rec.on_frame(make_frame(t, {"Fp1": None, "Cz": None}, state="connecting"))
    rec.on_frame(make_frame(t + 1, {"Fp1": Level.BAD, "Cz": Level.CHECK}))
    bridge = Finding("bridge", ("C3", "Cz"), Level.BAD, "C3-Cz electrical distance 2 µV²")
    rec.on_frame(make_frame(t + 2, {"Fp1": Level.CHECK, "Cz": Level.GOOD}, findings=[bridge]))
    rec.on_frame(make_frame(t + 9.5, {"Fp1": Level.GOOD, "Cz": Level.GOOD}, gaps=1))
    clock.advance(10)
    rec.set_impedance("Fp1", 4.5)
    rec.set_impedance("Cz", 12)
    rec.add_note("Fp1 re-prepped after a high reading; skin checked, intact.")
    rec.sign_off("JMK")
    rec.close()
    return rec.snapshot()


def test_round_trip_save_load_is_equal(tmp_path: Path, clock: FakeClock) -> None:
    """save → load gives the same log, and dumping it again gives the same text."""
    path = tmp_path / "W3-017.yaml"
    in_memory = _full_session(path, clock)
    loaded = load_log(path)
    assert loaded == in_memory
    assert dump_yaml(loaded) == path.read_text(encoding="utf-8")
    # The parts are really there (not an empty log equal to an empty log).
    assert loaded.technologist == "JMK" and loaded.subject_id == "W3-017"
    assert loaded.plan is not None and loaded.plan.measurements.circumference_cm == 56.0
    assert loaded.stream is not None and [c.name for c in loaded.stream.channels][-1] == "ECG"
    assert [(c.electrode, c.from_level, c.to_level) for c in loaded.timeline] == [
        ("Fp1", "none", "no_data"),
        ("Cz", "none", "no_data"),
        ("Fp1", "no_data", "bad"),
        ("Cz", "no_data", "check"),
        ("Fp1", "bad", "check"),
        ("Cz", "check", "good"),
        ("Fp1", "check", "good"),
    ]
    assert [(f.change, f.electrodes) for f in loaded.findings] == [
        ("appeared", ("C3", "Cz")),
        ("cleared", ("C3", "Cz")),
    ]
    assert loaded.latest_impedances_kohm() == {"Fp1": 4.5, "Cz": 12.0}
    assert loaded.sign_off is not None and loaded.sign_off.initials == "JMK"
    assert loaded.ended_at is not None and loaded.started_at is not None
    assert loaded.ended_at.utcoffset() is not None  # times carry their zone
    assert loaded.final["Fp1"].level == "good" and loaded.final["Fp1"].metrics["rms_uv"] == 21.5
    assert any(e.kind == "stream_gap" for e in loaded.events)
    assert (loaded.reference, loaded.ground) == ("Cz", "AFz")


def test_time_to_good_by_hand() -> None:
    """Worked by hand: first live verdict at 10:00:01.000, first good at 10:00:13.500 → 12.5 s;
    an electrode never good → None; no-data time before the first verdict does not count."""
    t0 = 1_796_000_000.0
    log = SetupLog(
        timeline=[
            LevelChange(stamp(t0), "O1", "none", "no_data"),
            LevelChange(stamp(t0 + 1), "O1", "no_data", "bad"),
            LevelChange(stamp(t0 + 1), "O2", "none", "check"),
            LevelChange(stamp(t0 + 6), "O1", "bad", "check"),
            LevelChange(stamp(t0 + 13.5), "O1", "check", "good"),
            LevelChange(stamp(t0 + 20), "O1", "good", "bad"),
            LevelChange(stamp(t0 + 30), "O1", "bad", "good"),
        ]
    )
    assert log.time_to_good_s() == {"O1": 12.5, "O2": None}
    assert log.time_to_all_good_s() is None  # O2 never good
    log.timeline.append(LevelChange(stamp(t0 + 41), "O2", "check", "good"))
    assert log.time_to_all_good_s() == 40.0  # first live verdict at +1 s, both good at +41 s


def _write(tmp_path: Path, text: str) -> Path:
    path = tmp_path / "log.yaml"
    path.write_text(text, encoding="utf-8")
    return path


def _valid_text(tmp_path: Path, clock: FakeClock) -> str:
    _full_session(tmp_path / "ok.yaml", clock)
    return (tmp_path / "ok.yaml").read_text(encoding="utf-8")


@pytest.mark.parametrize(
    ("text", "match"),
    [
        ("", "empty"),
        ("format: [unclosed\n", "not valid YAML at line 2"),
        ("- a\n- b\n", "not a setup log"),
        ("format: something-else\nformat_version: 1\n", "not a bedside setup log"),
        ("format: bedside-setup-log\nformat_version: 99\n", "version 99 is not supported"),
        # yaml.safe_load semantics: no Python objects, ever.
        ("!!python/object/apply:os.system ['true']\n", "not valid YAML"),
    ],
)
def test_load_rejects_what_is_not_a_log(tmp_path: Path, text: str, match: str) -> None:
    with pytest.raises(RecordError, match=match):
        load_log(_write(tmp_path, text))


def test_load_names_the_bad_key(tmp_path: Path, clock: FakeClock) -> None:
    text = _valid_text(tmp_path, clock)
    data = yaml.safe_load(text)

    bad = dict(data, timeline=[dict(data["timeline"][0], to_level="purple")] + data["timeline"][1:])
    with pytest.raises(RecordError, match=r"'timeline\[0\]\.to_level' is 'purple'; accepted: good, check, bad, no_data"):
        SetupLog.from_dict(bad, source="x.yaml")

    bad = dict(data, notess=[])
    with pytest.raises(RecordError, match=r"'notess' is not a known key; did you mean 'notes'"):
        SetupLog.from_dict(bad)

    bad = dict(data, started_at="2026-12-01 19:00")
    with pytest.raises(RecordError, match=r"'started_at' .* has no UTC offset"):
        SetupLog.from_dict(bad)

    bad = dict(data, impedances=[{"at": data["impedances"][0]["at"], "electrode": "Fp1", "kohm": "low"}])
    with pytest.raises(RecordError, match=r"'impedances\[0\]\.kohm' must be a number"):
        SetupLog.from_dict(bad)

    plan = dict(data["plan"], measurements={"nasion_inion_cm": 36.0})
    with pytest.raises(RecordError, match=r"'plan\.measurements\.preauricular_cm' is missing"):
        SetupLog.from_dict(dict(data, plan=plan))


def test_load_refuses_a_subject_id_with_path_traversal(tmp_path: Path, clock: FakeClock) -> None:
    """The ID may become a file name in exports, so a hand-edited file is not trusted."""
    data = yaml.safe_load(_valid_text(tmp_path, clock))
    data["subject_id"] = "../../etc"
    with pytest.raises(RecordError, match="path separator"):
        parse_yaml(yaml.safe_dump(data))


def test_load_missing_and_undecodable_files(tmp_path: Path) -> None:
    with pytest.raises(RecordError, match="no such log file"):
        load_log(tmp_path / "absent.yaml")
    with pytest.raises(RecordError, match="folder"):
        load_log(tmp_path)
    (tmp_path / "bin.yaml").write_bytes(b"\xff\xfe\x00garbage")
    with pytest.raises(RecordError, match="not UTF-8"):
        load_log(tmp_path / "bin.yaml")


def test_numpy_metrics_and_non_finite_values_are_stored_as_plain_numbers(
    tmp_path: Path, clock: FakeClock
) -> None:
    import numpy as np

    from bedside.checks.types import ChannelQuality, QualityFrame

    rec = SessionRecorder.open(tmp_path / "np.yaml", subject_id="W3-018", clock=clock)
    ch = ChannelQuality("Cz", Level.GOOD, {"rms_uv": np.float64(12.25), "drift_uv_per_s": float("nan")})
    rec.on_frame(QualityFrame(clock.now, clock.now, (ch,), ()))
    rec.close()
    text = (tmp_path / "np.yaml").read_text(encoding="utf-8")
    assert "numpy" not in text and "!!" not in text
    final = load_log(tmp_path / "np.yaml").final["Cz"]
    assert final.metrics == {"rms_uv": 12.25, "drift_uv_per_s": None}


def test_log_dataclass_fields_all_reach_the_yaml(tmp_path: Path, clock: FakeClock) -> None:
    """Every field of SetupLog is written (a new field cannot be forgotten by to_dict)."""
    data = yaml.safe_load(_valid_text(tmp_path, clock))
    assert {f.name for f in dataclasses.fields(SetupLog)} <= set(data)
    assert data["format"] == "bedside-setup-log" and data["time_to_good_s"]["Cz"] == 1.0


_TEXT = st.text(
    alphabet=st.characters(blacklist_categories=("Cs",)), min_size=1, max_size=30
)


@given(texts=st.lists(_TEXT, min_size=1, max_size=5))
def test_any_text_survives_the_round_trip(texts: list[str]) -> None:
    """Property (hypothesis): notes, reasons and names with any characters — quotes,
    YAML specials, U+2028, NEL, emoji, control characters — load back identical."""
    t0 = 1_796_000_000.0
    log = SetupLog(
        subject_id="W3-017",
        timeline=[LevelChange(stamp(t0 + i), name, "none", "bad", (name, "#: - [x]")) for i, name in enumerate(texts)],
        notes=[Note(stamp(t0), text) for text in texts],
        final={name: ChannelFinal(stamp(t0), "bad", {name: 1.5}, (name,)) for name in texts},
    )
    assert parse_yaml(dump_yaml(log)) == log


def test_cached_dump_equals_a_fresh_dump(tmp_path: Path, clock: FakeClock) -> None:
    """The recorder's incremental rendering gives the same text as rendering anew."""
    cache = DumpCache()
    log = SetupLog(subject_id="W3-017")
    for i in range(30):
        log.timeline.append(LevelChange(stamp(clock.now + i), f"E{i % 4}", "none", "good"))
        log.notes.append(Note(stamp(clock.now + i), f"note {i}"))
        assert dump_yaml(shallow_copy(log), cache) == dump_yaml(log)
    log.timeline = log.timeline[:5]  # not append-only any more: rendered afresh
    assert dump_yaml(log, cache) == dump_yaml(log)


def test_an_absurdly_large_file_is_refused_before_reading(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    from bedside.record import log as log_module

    monkeypatch.setattr(log_module, "LOG_FILE", dataclasses.replace(log_module.LOG_FILE, max_bytes=1000))
    big = tmp_path / "big.yaml"
    big.write_bytes(b"#" * 2000)
    with pytest.raises(RecordError, match="far larger than any setup log"):
        load_log(big)
