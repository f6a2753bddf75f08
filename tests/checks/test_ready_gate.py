"""The start gate, the whole-run history and the sound cue (bedside.checks.ready).

The gate is judged on the simulator's scripted faults: its ground truth is the scenario's
own fault list (``Scenario.affected_channels``), not our verdicts. What "ready" means —
every scalp electrode good for a number of consecutive seconds before the recording
starts — is common practice; the number is the technologist's choice (``--until-good``).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from bedside.bench.simrun import run_scenario
from bedside.checks.ready import (
    Accepted,
    Cues,
    ReadyGate,
    RunHistory,
    match_accepted,
    not_good_electrodes,
    parse_accept,
)
from bedside.checks.types import ChannelQuality, Finding, Level, QualityFrame
from bedside.errors import InputError
from bedside.sim.scenario import DEMO_DIR, load_scenario

from .helpers import TEN_TWENTY, eeg_like, feed, make_engine


def _scenario(tmp_path: Path, faults: str) -> Path:
    """The shipped clean cap with the given fault list (invented people, as in clean.yaml)."""
    text = (DEMO_DIR / "clean.yaml").read_text(encoding="utf-8")
    assert "faults: []" in text
    path = tmp_path / "gate.yaml"
    path.write_text(text.replace("faults: []", "faults:\n" + faults), encoding="utf-8")
    return path


def _run_gate(name: str | Path, hold_s: float, seconds: float,
              accepted: tuple[Accepted, ...] = ()) -> tuple[ReadyGate, list[tuple[float, tuple[str, ...]]]]:
    gate = ReadyGate(hold_s, accepted)
    waits: list[tuple[float, tuple[str, ...]]] = []

    def on(t: float, frame: QualityFrame) -> None:
        waits.append((t, gate.update(frame, t).waiting))

    run_scenario(str(name), seconds, on_frame=on)
    return gate, waits


def test_a_clean_cap_becomes_ready_after_the_hold() -> None:
    gate, waits = _run_gate("clean", 5.0, 20.0)
    assert gate.state is not None and gate.state.ready
    assert gate.ready_at_s is not None
    # The count starts at the first verdict (the warm-up is not counted as good), so the
    # gate is reached the hold after it, never sooner.
    first = next(t for t, w in waits if gate.state and w == ())
    assert gate.ready_at_s == pytest.approx(first + 5.0, abs=0.26)
    assert gate.ready_at_s >= 5.0 + 2.0  # min_data_s (quality.yaml) + the hold
    assert gate.state.as_dict() == {"at_s": gate.ready_at_s, "held_s": 5.0, "accepted": []}


def test_a_steady_fault_is_never_ready_and_is_named(tmp_path: Path) -> None:
    path = _scenario(tmp_path, "  - {electrode: O2, kind: flat}\n")
    assert load_scenario(path).affected_channels(5.0) == frozenset({"O2"})  # ground truth
    gate, waits = _run_gate(path, 3.0, 20.0)
    assert gate.ready_at_s is None and gate.state is not None and not gate.state.ready
    assert gate.state.as_dict() is None
    assert gate.state.waiting == ("O2",)
    assert "O2" in gate.state.text()


def test_accepting_the_faulty_electrode_with_a_reason_lets_it_be_ready(tmp_path: Path) -> None:
    path = _scenario(tmp_path, "  - {electrode: O2, kind: flat}\n")
    accepted = (Accepted("O2", "scalp lesion, left as is"),)
    gate, _ = _run_gate(path, 3.0, 15.0, accepted)
    assert gate.ready_at_s is not None
    assert gate.state is not None
    assert gate.state.as_dict()["accepted"] == [{"electrode": "O2", "reason": "scalp lesion, left as is"}]  # type: ignore[index]


def test_a_fault_that_clears_starts_the_count_again(tmp_path: Path) -> None:
    # O2 flat from 6 s to 10 s: before it, every electrode has been good for ~3.5 s, not
    # the 5 s asked; after it, the count starts again from zero.
    path = _scenario(tmp_path, "  - {electrode: O2, kind: flat, start_s: 6, end_s: 10}\n")
    truth = load_scenario(path)
    assert "O2" in truth.affected_channels(8.0) and "O2" not in truth.affected_channels(11.0)
    gate, waits = _run_gate(path, 5.0, 30.0)
    assert gate.ready_at_s is not None
    flagged = [t for t, w in waits if "O2" in w and t > 4.0]
    assert flagged, "the flat O2 was never flagged"
    back = max(flagged)  # the last update O2 was not good
    assert back >= 10.0
    assert gate.ready_at_s == pytest.approx(back + 5.0, abs=0.51)


def test_no_data_is_not_good_for_the_gate_and_restarts_the_count() -> None:
    names = ("Fz", "Cz")
    good = QualityFrame(0.0, 0.0, tuple(ChannelQuality(n, Level.GOOD, {}) for n in names), ())
    none = QualityFrame(0.0, 0.0, tuple(ChannelQuality(n, None, {}, ("no data: stream stale",)) for n in names), ())
    gate = ReadyGate(2.0)
    assert not gate.update(none, 0.0).judged
    assert gate.update(good, 1.0).remaining_s == pytest.approx(2.0)
    assert gate.update(good, 2.5).remaining_s == pytest.approx(0.5)
    gate.update(none, 2.8)  # an outage: the count starts again
    assert gate.update(good, 3.0).remaining_s == pytest.approx(2.0)
    assert gate.update(good, 5.0).ready and gate.ready_at_s == 5.0


def test_a_finding_naming_an_electrode_keeps_it_waiting() -> None:
    chans = tuple(ChannelQuality(n, Level.GOOD, {}) for n in ("O1", "Oz", "Pz"))
    bridge = Finding("bridge", ("O1", "Oz"), Level.BAD, "O1 and Oz look bridged")
    frame = QualityFrame(0.0, 0.0, chans, (bridge,))
    state = ReadyGate(1.0).update(frame, 0.0)
    assert state.waiting == ("O1", "Oz")
    assert not_good_electrodes(frame) == ("O1", "Oz")


def test_the_whole_run_keeps_an_early_nan_burst() -> None:
    """NaN/Inf early in the look, clean at the end: the final verdict is good, the run is not."""
    rate = 256.0
    engine = make_engine(rate_hz=rate)
    x = eeg_like(int(12 * rate), len(TEN_TWENTY), rate, seed=3)
    o2 = TEN_TWENTY.index("O2")
    x[int(3 * rate):int(3.5 * rate), o2] = np.nan
    x[int(3.5 * rate):int(3.6 * rate), o2] = np.inf
    history = RunHistory()
    frames = feed(engine, x)
    for k, frame in enumerate(frames):
        history.update(frame, (k + 1) / engine.settings.update_hz)
    runs = {c.name: c for c in history.channels(12.0)}
    assert frames[-1].channels[o2].level is Level.GOOD  # the final window is clean
    o2run = runs["O2"]
    assert o2run.level == "good" and o2run.worst_level == "bad"
    assert "NaN/Inf" in o2run.worst_reason
    assert 0.5 < o2run.not_good_s < 9.0
    levels = [e.level for e in o2run.events]
    assert levels[0] == "good" and "bad" in levels and levels[-1] == "good"
    # The warm-up is not an event and not "not good".
    assert history.first_verdict_s is not None and o2run.events[0].t_s == history.first_verdict_s
    assert runs["Cz"].worst_level == "good" and runs["Cz"].not_good_s == 0.0
    assert [e.level for e in runs["Cz"].events] == ["good"]


def test_not_good_seconds_add_the_time_between_updates() -> None:
    def frame(level: Level | None) -> QualityFrame:
        return QualityFrame(0.0, 0.0, (ChannelQuality("Cz", level, {}, ("why",) if level else ("collecting data",)),), ())

    h = RunHistory()
    for t, lv in ((0.0, None), (1.0, Level.GOOD), (2.0, Level.CHECK), (3.5, Level.BAD), (4.0, Level.GOOD), (5.0, Level.BAD)):
        h.update(frame(lv), t)
    (cz,) = h.channels(6.0)
    assert cz.not_good_s == pytest.approx(1.5 + 0.5 + 1.0)  # 2–3.5 check, 3.5–4 bad, 5–6 bad
    assert cz.worst_level == "bad" and cz.level == "bad"
    assert [(e.t_s, e.level) for e in cz.events] == [(1.0, "good"), (2.0, "check"), (3.5, "bad"), (4.0, "good"), (5.0, "bad")]


def test_never_judged_is_no_data_not_a_fault() -> None:
    h = RunHistory()
    h.update(QualityFrame(0.0, 0.0, (ChannelQuality("Cz", None, {}, ("collecting data: 1.0 of 2 s",)),), ()), 1.0)
    (cz,) = h.channels(2.0)
    assert (cz.level, cz.worst_level, cz.not_good_s, cz.events) == ("no_data", "no_data", 0.0, ())


def test_cues_ring_on_ready_and_on_new_faults_only() -> None:
    def frame(levels: dict[str, Level]) -> QualityFrame:
        return QualityFrame(0.0, 0.0, tuple(ChannelQuality(n, lv, {}) for n, lv in levels.items()), ())

    cues, gate = Cues(), ReadyGate(2.0)
    g, c, b = Level.GOOD, Level.CHECK, Level.BAD
    script = [  # (levels, expected cue reasons)
        ({"Fz": g, "Cz": g}, ()),
        ({"Fz": g, "Cz": c}, ("new fault on Cz",)),
        ({"Fz": g, "Cz": b}, ()),  # worse, not new
        ({"Fz": g, "Cz": g}, ()),
        ({"Fz": g, "Cz": g}, ()),
        ({"Fz": g, "Cz": g}, ("ready",)),
        ({"Fz": g, "Cz": g}, ()),
        ({"Fz": b, "Cz": g}, ("new fault on Fz",)),
    ]
    for t, (levels, want) in enumerate(script):
        f = frame(levels)
        assert cues.update(f, gate.update(f, float(t))) == want, (t, levels)


def test_parse_and_match_accepted() -> None:
    assert parse_accept(["O2=old scar,  cannot abrade"]) == {"O2": "old scar, cannot abrade"}
    assert match_accepted({"o2": "scar"}, ["Fz", "O2"]) == (Accepted("O2", "scar"),)
    for bad in (["O2"], ["=why"], ["O2= "]):
        with pytest.raises(InputError, match="ELECTRODE=REASON"):
            parse_accept(bad)
    with pytest.raises(InputError, match="given twice"):
        parse_accept(["O2=a", "O2=b"])
    with pytest.raises(InputError, match="no scalp electrode of that name.*Fz, O2"):
        match_accepted({"Q9": "why"}, ["Fz", "O2"])
