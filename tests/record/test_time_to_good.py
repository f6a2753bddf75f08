"""Time to good, the one definition (bedside.record.time_to_good.TimeToGood): from the
electrode's first verdict to its first good; the setup log (its timeline) and the app
(every frame) get the same figures. Expected values worked out by hand."""

from __future__ import annotations

from record_factories import make_frame

from bedside.checks.types import Level
from bedside.record.log import LevelChange, SetupLog, stamp
from bedside.record.time_to_good import TimeToGood
from bedside.ui.progress import GoodTracker

T0 = 1_796_000_000.0


def test_by_hand() -> None:
    """O1: first verdict at +1.0 s (no data before it does not count), good at +13.5 s →
    12.5 s, and a later relapse does not undo it; O2 good at its first verdict → 0;
    Cz never good → None."""
    clock = TimeToGood()
    feed = [("O1", "no_data", 0.0), ("O1", "bad", 1.0), ("O2", "good", 1.0), ("Cz", "check", 1.0),
            ("O1", "check", 6.0), ("O1", "good", 13.5), ("O1", "bad", 20.0), ("O1", "good", 30.0)]
    got = [clock.update(name, level, T0 + t) for name, level, t in feed]
    assert got == [None, None, 0.0, None, None, 12.5, None, None]
    assert clock.seconds == {"O1": 12.5, "O2": 0.0, "Cz": None}
    assert clock.reached() == {"O1": 12.5, "O2": 0.0}


def test_times_are_taken_to_the_millisecond_as_the_log_stores_them() -> None:
    """0.0004 s after a whole millisecond rounds down, 0.0006 s up (stamp() rounds so)."""
    clock = TimeToGood()
    clock.update("Fz", "bad", T0 + 0.0004)
    assert clock.update("Fz", "good", T0 + 2.0006) == 2.001


def test_the_log_and_the_app_agree_on_the_same_frames() -> None:
    """The app feeds every frame, the log only its level changes: the same figures."""
    levels = [
        {"Fp1": None, "T7": None, "O1": None},
        {"Fp1": Level.BAD, "T7": None, "O1": Level.GOOD},
        {"Fp1": Level.CHECK, "T7": Level.BAD, "O1": Level.GOOD},
        {"Fp1": Level.GOOD, "T7": Level.BAD, "O1": Level.BAD},
        {"Fp1": Level.GOOD, "T7": Level.GOOD, "O1": Level.GOOD},
    ]
    times = [T0, T0 + 1.25, T0 + 4.0, T0 + 9.5, T0 + 17.125]
    tracker = GoodTracker()
    timeline: list[LevelChange] = []
    last: dict[str, str] = {}
    for t, frame_levels in zip(times, levels, strict=True):
        frame = make_frame(t, frame_levels)
        progress = tracker.update(frame)
        for ch in frame.channels:
            if last.get(ch.name) != ch.level_key:
                timeline.append(LevelChange(stamp(t), ch.name, last.get(ch.name, "none"), ch.level_key))  # type: ignore[arg-type]
                last[ch.name] = ch.level_key
    assert progress.time_to_good_s == {"Fp1": 8.25, "T7": 13.125, "O1": 0.0}
    assert SetupLog(timeline=timeline).time_to_good_s() == progress.time_to_good_s


def test_picking_the_same_stream_again_keeps_the_times_in_the_app_and_the_log(tmp_path) -> None:
    """Re-picking the stream being watched (same identity, same channels) continues the
    setup: the log keeps its section, the app (FrameVigil) its times; another stream
    starts both again."""
    from dataclasses import replace

    from record_factories import FakeClock, make_channels, make_identity

    from bedside.record.session import SessionRecorder
    from bedside.ui.vigil import FrameVigil

    clock = FakeClock(T0)
    ident, chans = make_identity(), make_channels()
    vigil = FrameVigil(ready_hold_s=10.0, stale_after_s=5.0, alert_after_s=600.0, skin_check_s=28800.0)
    with SessionRecorder.open(tmp_path / "log.yaml", subject_id="W3-017", clock=clock) as rec:
        frames = [make_frame(T0 + 1.0, {"O1": Level.BAD}), make_frame(T0 + 7.5, {"O1": Level.GOOD})]
        rec.set_stream(ident, chans)
        vigil.watch(ident, chans)
        for f in frames:
            rec.on_frame(f)
            vigil.take(f)
        vigil.forget({})  # the technologist picks the same stream again
        rec.set_stream(ident, chans)
        vigil.watch(ident, chans)
        again = make_frame(T0 + 20.0, {"O1": Level.GOOD})
        rec.on_frame(again)
        vigil.take(again)
        assert vigil.progress is not None and vigil.progress.time_to_good_s == {"O1": 6.5}
        assert rec.snapshot().time_to_good_s() == {"O1": 6.5}
        other = replace(ident, source_id="wardb-bed5-amp-0002", name="WardB-Bed5-EEG")
        vigil.forget({})
        rec.set_stream(other, chans)
        vigil.watch(other, chans)
        first = make_frame(T0 + 30.0, {"O1": Level.GOOD})
        rec.on_frame(first)
        vigil.take(first)
        assert vigil.progress is not None and vigil.progress.time_to_good_s == {"O1": 0.0}
        assert rec.snapshot().time_to_good_s() == {"O1": 0.0}
