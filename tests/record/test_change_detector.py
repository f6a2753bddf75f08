"""The change detector (bedside.record.changes.ChangeDetector) alone: previous state +
frame → the log's new entries, with no recorder, thread, clock or file. Every expected
entry below is worked out by hand from the frames given."""

from __future__ import annotations

from datetime import datetime

from record_factories import make_frame, make_plan

from bedside.checks.settings import LongTermSettings
from bedside.checks.types import ChannelQuality, Finding, Level, QualityFrame
from bedside.record.changes import ChangeDetector, clean_metrics, mains_hz, plan_detail, plan_record
from bedside.record.log import FindingChange, LevelChange, SetupLog, TapedMeasurements, stamp
from bedside.stream.types import StreamHealth

T0 = 1_796_000_000.0


def _at(k: float) -> datetime:
    return stamp(T0 + k)


def _detector() -> ChangeDetector:
    return ChangeDetector(LongTermSettings())


def test_level_changes_only_when_the_level_moves() -> None:
    det = _detector()
    first = det.frame(make_frame(T0, {"Fp1": Level.BAD, "Cz": None}), _at(0))
    assert [(c.electrode, c.from_level, c.to_level) for c in first.timeline] == [
        ("Fp1", "none", "bad"), ("Cz", "none", "no_data")]
    assert list(first.final) == ["Fp1"]  # no verdict, no final state
    again = det.frame(make_frame(T0 + 1, {"Fp1": Level.BAD, "Cz": None}), _at(1))
    assert again.timeline == [] and list(again.final) == ["Fp1"]
    better = det.frame(make_frame(T0 + 2, {"Fp1": Level.GOOD, "Cz": Level.GOOD}), _at(2))
    assert [(c.electrode, c.from_level, c.to_level) for c in better.timeline] == [
        ("Fp1", "bad", "good"), ("Cz", "no_data", "good")]
    assert det.last_level == {"Fp1": "good", "Cz": "good"}


def test_a_finding_appears_changes_and_clears_once_each() -> None:
    det = _detector()
    bad = Finding("bridge", ("C3", "Cz"), Level.BAD, "C3 and Cz bridged")
    check = Finding("bridge", ("C3", "Cz"), Level.CHECK, "C3 and Cz may be bridged")
    levels = {"C3": Level.CHECK, "Cz": Level.CHECK}
    kinds = []
    for k, found in enumerate([(bad,), (bad,), (check,), ()]):
        out = det.frame(make_frame(T0 + k, levels, findings=found), _at(k))
        kinds.append([(f.change, f.level) for f in out.findings])
    assert kinds == [[("appeared", "bad")], [], [("changed", "check")], [("cleared", "check")]]


def test_no_verdict_is_not_a_finding_that_cleared() -> None:
    """A frame with no channel judged (the checks restarting) leaves open findings open."""
    det = _detector()
    bridge = Finding("bridge", ("C3", "Cz"), Level.BAD, "C3 and Cz bridged")
    det.frame(make_frame(T0, {"C3": Level.BAD, "Cz": Level.BAD}, findings=(bridge,)), _at(0))
    quiet = det.frame(make_frame(T0 + 1, {"C3": None, "Cz": None}), _at(1))
    assert quiet.findings == [] and len(det.findings) == 1


def test_stream_health_is_said_once_per_new_thing() -> None:
    det = _detector()
    kinds = []
    for k, (state, gaps, reconnects) in enumerate([("connecting", 0, 0), ("live", 0, 0), ("live", 2, 0),
                                                   ("live", 2, 1), ("live", 2, 1)]):
        out = det.frame(make_frame(T0 + k, {"Cz": Level.GOOD}, state=state, gaps=gaps, reconnects=reconnects),
                        _at(k))
        kinds.append([(e.kind, e.detail) for e in out.events])
    assert kinds == [
        [("stream_state", "start → connecting")],
        [("stream_state", "connecting → live")],
        [("stream_gap", "2 new gap(s); 2 so far, 0 samples dropped so far")],
        [("stream_reconnect", "reconnect #1")],
        [],
    ]
    health = StreamHealth("live", 256.0, 256.0, gaps=2, reconnects=1, notes=("offset corrected",),
                          clock_jumps=1, untrusted_sources=("amp-2",))
    frame = QualityFrame(T0 + 9, T0 + 9, (ChannelQuality("Cz", Level.GOOD, {}),), (), health)
    assert [e.kind for e in det.frame(frame, _at(9)).events] == [
        "stream_note", "stream_untrusted", "stream_clock_jump"]
    assert det.frame(frame, _at(10)).events == []  # the same note, source and jump again: nothing new


def test_a_new_section_forgets_levels_and_health_but_not_notes() -> None:
    det = _detector()
    det.frame(make_frame(T0, {"Cz": Level.GOOD}, gaps=3), _at(0))
    det.new_section()
    out = det.frame(make_frame(T0 + 1, {"Cz": Level.GOOD}, gaps=3), _at(1))
    assert [(c.from_level, c.to_level) for c in out.timeline] == [("none", "good")]
    assert [e.kind for e in out.events] == ["stream_state", "stream_gap"]


def test_resume_continues_from_the_logs_last_levels_and_open_findings() -> None:
    log = SetupLog(
        timeline=[LevelChange(_at(0), "Cz", "none", "bad"), LevelChange(_at(5), "Cz", "bad", "good")],
        findings=[FindingChange(_at(1), "appeared", "bridge", ("C3", "Cz"), "bad", "bridged"),
                  FindingChange(_at(2), "appeared", "bridge", ("O1", "O2"), "check", "maybe bridged"),
                  FindingChange(_at(3), "cleared", "bridge", ("O1", "O2"), "check", "maybe bridged")],
    )
    det = _detector()
    det.resume(log)
    assert det.last_level == {"Cz": "good"}
    assert list(det.findings) == [("bridge", ("C3", "Cz"))]
    out = det.frame(make_frame(T0 + 9, {"Cz": Level.GOOD}), _at(9))
    assert out.timeline == [] and [(f.change, f.electrodes) for f in out.findings] == [("cleared", ("C3", "Cz"))]


def test_mains_and_metrics_are_plain_numbers() -> None:
    """50/60 Hz only (IEC 60038 nominal mains frequencies); NaN/Inf are not computable → None."""
    assert [mains_hz(v) for v in (50, 60.0, 55.0, True, None, "x")] == [50.0, 60.0, None, None, None, None]
    assert clean_metrics({"rms_uv": 21.123456789, "line_noise_db": float("nan"), "x": "text"}) == {
        "rms_uv": 21.1235, "line_noise_db": None}
    det = _detector()
    frame = QualityFrame(T0, T0, (ChannelQuality("Cz", Level.GOOD, {}),), (), None, 4.0, {"mains_hz": 60.0})
    assert det.frame(frame, _at(0)).power_line_hz == 60.0


def test_the_plan_is_recorded_as_typed() -> None:
    plan = make_plan()
    record = plan_record(plan, TapedMeasurements("in", 14.2, 13.8, 22.0))
    assert record.positions_mm["Cz"] == (0.0, 0.0, 90.0) and record.marks == plan.marks
    assert plan_detail(record) == ("10-20: nasion-inion 36 cm, preauricular 35 cm, circumference 56 cm "
                                   "(taped 14.2 / 13.8 / 22 in)")
