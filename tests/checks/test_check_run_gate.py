"""``bedside check`` reports the whole run and gates the start, end to end on real LSL.

The streams are the simulator's invented "clean" cap, sent by bedside's own publisher,
with faults put in for real: NaN/±Inf samples (IEEE 754 special values) written into
O2's samples on the way out, or the scenario's own scripted flat O2 (its ground truth:
``Scenario.affected_channels``). These tests check the command's plumbing — the run's
history, the gate and the exit codes of issue 13 — not whether a check is right (the
checks are judged against outside sources in their own tests).
"""

from __future__ import annotations

import json
import uuid
from pathlib import Path

import numpy as np
import pytest

from bedside.cli import main
from bedside.commands.check import exit_code
from bedside.sim.generator import SignalGenerator
from bedside.sim.publish import Publisher, StreamPublisher, scenario_spec
from bedside.sim.scenario import DEMO_DIR, load_scenario

pytestmark = pytest.mark.lsl
BELL = "\a"


def _name() -> str:
    return f"gate-{uuid.uuid4().hex[:10]}"


def _flat_o2(tmp_path: Path) -> Path:
    text = (DEMO_DIR / "clean.yaml").read_text(encoding="utf-8")
    path = tmp_path / "flat_o2.yaml"
    path.write_text(text.replace("faults: []", "faults:\n  - {electrode: O2, kind: flat}\n"), encoding="utf-8")
    assert load_scenario(path).affected_channels(1.0) == frozenset({"O2"})
    return path


def test_an_early_nan_burst_is_kept_though_the_end_is_clean(capsys: pytest.CaptureFixture[str]) -> None:
    scenario = load_scenario("clean")
    o2 = list(scenario.channels).index("O2")
    rate = scenario.rate_hz
    name = _name()
    gen = SignalGenerator(scenario)

    def read(start: int, n: int) -> np.ndarray:
        x = gen.generate(start, n).astype(np.float64)
        k = start + np.arange(n)
        x[(k >= 3.5 * rate) & (k < 4.0 * rate), o2] = np.nan  # stream seconds 3.5–4.5
        x[(k >= 4.0 * rate) & (k < 4.5 * rate), o2] = np.inf
        return x

    publisher = StreamPublisher(scenario_spec(scenario, name=name), read).start(wait_for_consumer_s=10)
    try:
        code = main(["check", "--stream", name, "--wait", "1", "--seconds", "13", "--format", "json"])
    finally:
        publisher.stop()
    report = json.loads(capsys.readouterr().out)
    ch = {c["name"]: c for c in report["channels"]}
    o2c = ch["O2"]
    assert o2c["level"] == "good", o2c  # the final window no longer holds the burst …
    assert o2c["worst_level"] == "bad" and "NaN/Inf" in o2c["worst_reason"]  # … the run does
    assert 0.5 <= o2c["not_good_s"] <= 10.0
    levels = [e["level"] for e in o2c["events"]]
    assert levels[0] == "good" and "bad" in levels and levels[-1] == "good"
    bad_at = next(e["t_s"] for e in o2c["events"] if e["level"] == "bad")
    assert 3.0 <= bad_at <= 6.0  # it began 3.5 s into the stream
    assert report["judged_on"] == "run" and code == 1
    # --final-only judges the same end state alone: all good there.
    assert exit_code({**report, "judged_on": "final"}) == 0
    cz = ch["Cz"]
    assert cz["worst_level"] == "good" and cz["not_good_s"] == 0.0
    assert cz["events"][0]["t_s"] == report["first_verdict_s"]  # the warm-up is no event
    assert report["first_verdict_s"] >= 2.0  # min_data_s in quality.yaml


def test_the_table_says_the_run_in_words(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    name = _name()
    with Publisher(str(_flat_o2(tmp_path)), name=name, duration_s=30.0).start(wait_for_consumer_s=10):
        code = main(["check", "--stream", name, "--wait", "1", "--seconds", "5", "--final-only"])
    out = capsys.readouterr().out
    assert code == 1  # O2 is flat at the end too
    o2_line = next(line for line in out.splitlines() if line.startswith("O2 "))
    assert "✖ bad" in o2_line and "s not good" in o2_line
    assert "good throughout" in next(line for line in out.splitlines() if line.startswith("Cz "))
    assert "changes during the run" in out and "  O2: bad at" in out
    assert "ready" not in out.casefold().split("changes during the run")[0]


def test_a_clean_cap_is_ready_and_the_look_ends_there(capsys: pytest.CaptureFixture[str]) -> None:
    name = _name()
    with Publisher("clean", name=name, duration_s=40.0).start(wait_for_consumer_s=10):
        code = main(["check", "--stream", name, "--wait", "1", "--seconds", "20", "--until-good", "3",
                     "--bell", "--format", "json"])
    captured = capsys.readouterr()
    report = json.loads(captured.out)
    assert code == 0
    ready = report["ready"]
    assert ready is not None and ready["held_s"] == 3.0 and ready["accepted"] == []
    assert ready["at_s"] >= report["first_verdict_s"] + 3.0 - 0.3  # one update's slack
    assert report["looked_s"] < 12.0  # it stopped at ready, not after --seconds
    assert captured.err.count(BELL) == 1  # ready, and no fault


def test_a_steady_fault_is_never_ready_unless_accepted(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    name = _name()
    with Publisher(str(_flat_o2(tmp_path)), name=name, duration_s=60.0).start(wait_for_consumer_s=10):
        code = main(["check", "--stream", name, "--wait", "1", "--seconds", "7", "--until-good", "2",
                     "--bell", "--format", "json"])
        captured = capsys.readouterr()
        report = json.loads(captured.out)
        assert code == 1 and report["ready"] is None
        assert report["ready_waiting"] == ["O2"]
        assert report["looked_s"] >= 6.5
        assert captured.err.count(BELL) == 1  # the flat O2 appeared; ready never came
        code = main(["check", "--stream", name, "--wait", "1", "--seconds", "10", "--until-good", "2",
                     "--accept", "o2=scalp lesion, electrode left as is", "--format", "json"])
        report = json.loads(capsys.readouterr().out)
    assert code == 0
    assert report["ready"]["accepted"] == [{"electrode": "O2", "reason": "scalp lesion, electrode left as is"}]
    assert {c["name"]: c["level"] for c in report["channels"]}["O2"] == "bad"  # accepted, not hidden


def test_the_log_keeps_the_ready_time(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    from bedside.record.log import load_log

    name = _name()
    log_path = tmp_path / "setup.yaml"
    with Publisher(str(_flat_o2(tmp_path)), name=name, duration_s=40.0).start(wait_for_consumer_s=10):
        code = main(["check", "--stream", name, "--wait", "1", "--seconds", "10", "--until-good", "2",
                     "--accept", "O2=cannot abrade", "--log", str(log_path), "--subject", "W3-017",
                     "--technologist", "JMK"])
    capsys.readouterr()
    assert code == 0
    log = load_log(log_path)
    assert log.ready is not None and log.ready.held_s == 2.0 and log.ready.how == "bedside check"
    assert [(a.electrode, a.reason) for a in log.ready.accepted] == [("O2", "cannot abrade")]
    assert any(e.kind == "ready" and "O2 (cannot abrade)" in e.detail for e in log.events)


def test_an_unknown_accepted_electrode_is_refused(capsys: pytest.CaptureFixture[str]) -> None:
    name = _name()
    with Publisher("clean", name=name, duration_s=20.0).start():
        code = main(["check", "--stream", name, "--wait", "1", "--seconds", "6", "--until-good", "2",
                     "--accept", "Q9=loose"])
    err = capsys.readouterr().err
    assert code == 2
    assert "error: --accept Q9: the stream has no scalp electrode of that name" in err
    assert "Fp1" in err and "ECG" not in err.split("scalp electrodes:")[1]


@pytest.mark.parametrize("argv, message", [
    (["--until-good", "2", "--accept", "O2"], "give ELECTRODE=REASON"),
    (["--until-good", "2", "--accept", "O2= "], "give ELECTRODE=REASON"),
    (["--accept", "O2=scar"], "--accept goes with --until-good"),
    (["--until-good", "7"], "cannot be reached within --seconds 8"),
])
def test_bad_gate_options_are_refused_before_looking(argv: list[str], message: str,
                                                     capsys: pytest.CaptureFixture[str]) -> None:
    code = main(["check", "--stream", _name(), "--wait", "0.5", "--seconds", "8", *argv])
    assert code == 2
    assert message in capsys.readouterr().err
