"""``bedside taptest`` end to end on real LSL: the simulator's scripted taps (its
``tap`` and ``swap`` fault kinds) are the ground truth. Each scenario taps its scalp
electrodes in stream order from its first sample (demo_streams/tap_walk.yaml), held
until the command's inlet connects (``Publisher.start(wait_for_consumer_s=…)``), at
4× real time: the walk runs on the stream's own clock, so it is the same walk, faster.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import uuid
from pathlib import Path

import pytest

from bedside.record.log import load_log
from bedside.sim.publish import Publisher

pytestmark = [pytest.mark.lsl]

ROOT = Path(__file__).resolve().parents[2]
ENV = {**os.environ, "LSLAPICFG": str(ROOT / "tests" / "lsl_api.cfg")}
SCALP = ["Fp1", "Fp2", "F3", "F4", "C3", "C4", "P3", "P4", "O1", "O2"]


def _taptest(scenario: str, *args: str, speed: float = 4.0, duration_s: float = 40.0
             ) -> subprocess.CompletedProcess[str]:
    name = f"tap-{uuid.uuid4().hex[:8]}"
    pub = Publisher(scenario, name=name, source_id=f"sid-{name}", duration_s=duration_s, speed=speed)
    with pub.start(wait_for_consumer_s=20.0):
        return subprocess.run([sys.executable, "-m", "bedside", "taptest", "--stream", name, *args],
                              capture_output=True, text=True, timeout=90, env=ENV, cwd=ROOT)


def test_every_electrode_confirmed_in_the_announced_order(tmp_path: Path) -> None:
    log = tmp_path / "W3-017.yaml"
    done = _taptest("tap_walk", "--format", "json", "--log", str(log), "--subject", "W3-017",
                    "--technologist", "JMK")
    assert done.returncode == 0, done.stderr
    report = json.loads(done.stdout)
    assert report["passed"] is True and report["problems"] == [] and report["stopped"] is None
    assert [(r["electrode"], r["outcome"], r["seen_on"]) for r in report["results"]] == [
        (e, "confirmed", [e]) for e in SCALP]
    # Each touch where the scenario put it: electrode k peaks at 3 + 2.5·k + 0.08 s
    # (tap_walk.yaml; the pulse peaks 2·width_s after it is made); the causal band-pass
    # delays the peak by some ms.
    for k, r in enumerate(report["results"]):
        assert r["at_s"] == pytest.approx(3.08 + 2.5 * k, abs=0.05)
    # Prompts on stderr, in order, with the cautions first.
    prompts = [ln.split("] ", 1)[1] for ln in done.stderr.splitlines() if ln.startswith("[")]
    assert prompts == [f"touch {e} now (waiting up to 10 s)" for e in SCALP]
    assert "Touch each electrode lightly" in done.stderr
    (test,) = load_log(log).tap_tests
    assert test.passed and test.how == "bedside taptest" and [c.electrode for c in test.results] == SCALP


def test_a_swapped_pair_is_named_and_exits_1() -> None:
    done = _taptest("tap_swap")
    assert done.returncode == 1, done.stderr
    assert "C3 and C4 look swapped: touching C3 shows on C4 and touching C4 shows on C3" in done.stdout
    assert "NOT PASSED: 8 of 10 electrodes confirmed" in done.stdout
    rows = {ln.split()[0]: ln for ln in done.stdout.splitlines() if ln.split() and ln.split()[0] in SCALP}
    assert "elsewhere" in rows["C3"] and " C4 " in rows["C3"]
    assert "confirmed" in rows["P3"]


def test_a_subset_and_a_short_timeout() -> None:
    """--order Fp1,O2 with a 2-s timeout: Fp1 is touched at 3.08 s (after its timeout),
    so it is not found; O2 is then asked from 2 s to 4 s and the touch in that time is
    Fp1's, on another channel: the walk reports what it saw, and exits 1."""
    done = _taptest("tap_walk", "--order", "Fp1,O2", "--timeout", "2", "--format", "json")
    assert done.returncode == 1, done.stderr
    results = json.loads(done.stdout)["results"]
    assert [(r["electrode"], r["outcome"]) for r in results] == [("Fp1", "not_found"), ("O2", "elsewhere")]
    assert results[1]["seen_on"] == ["Fp1"]
    assert "no clear transient within 2 s of asking for Fp1" in results[0]["reason"]


def test_a_stream_that_stops_ends_the_walk_and_says_why() -> None:
    """The outlet closes at 5 s of stream time, after Fp1's touch: the walk stops (the
    stream lost, or silent for 5 s), every electrode left is not found with that reason,
    and the exit code is 1 — nothing is reported as confirmed that was not."""
    done = _taptest("tap_walk", "--format", "json", "--timeout", "4", duration_s=5.0)
    assert done.returncode == 1, done.stderr
    report = json.loads(done.stdout)
    assert report["stopped"] == "the stream was lost" or report["stopped"].startswith("no samples for")
    outcomes = [r["outcome"] for r in report["results"]]
    assert outcomes == ["confirmed"] + ["not_found"] * 9
    assert report["stopped"] in report["results"][1]["reason"]


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (("--order", "Fp1,Xx9"), "'Xx9' is not a channel of this stream; its scalp electrodes: Fp1, Fp2"),
        (("--order", "ECG"), "ECG is not a scalp electrode"),
        (("--order", "Fp1,,Fp2"), "give electrode names separated by commas"),
        (("--timeout", "0.1"), "--timeout must be 0.5 to 600 seconds"),
    ],
)
def test_bad_input_exits_2_with_the_reason(args: tuple[str, ...], message: str) -> None:
    done = _taptest("tap_walk", *args)
    assert done.returncode == 2, done.stderr
    assert message in done.stderr and "Traceback" not in done.stderr
