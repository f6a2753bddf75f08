"""The setup log keeps each guided tap test (issue 13 item 5); logs written before the
key load unchanged, and a log with only a tap test is not discarded as empty."""

from __future__ import annotations

from pathlib import Path

import pytest
import yaml
from record_factories import FakeClock

from bedside.checks.taptest import TapResult, summarise
from bedside.errors import InputError
from bedside.record.log import TapCheck, load_log
from bedside.record.session import SessionRecorder

RESULTS = (
    TapResult("Fp1", "confirmed", ("Fp1",), 3.1, 210.0, 150.0, "touching Fp1 shows on Fp1 alone"),
    TapResult("C3", "elsewhere", ("C4",), 13.1, 200.0, 140.0, "touching C3 shows on C4, not on C3"),
    TapResult("C4", "elsewhere", ("C3",), 15.6, 205.0, 160.0, "touching C4 shows on C3, not on C4"),
    TapResult("O1", "not_found", (), None, None, None, "no clear transient within 10 s of asking for O1"),
)


def test_a_tap_test_round_trips_with_the_swap_named(tmp_path: Path, clock: FakeClock) -> None:
    path = tmp_path / "W3-017.yaml"
    rec = SessionRecorder.open(path, technologist="JMK", subject_id="W3-017", clock=clock)
    clock.advance(20.0)
    rec.record_tap_test(RESULTS, summarise(RESULTS), how="bedside taptest", timeout_s=10.0)
    rec.close()
    loaded = load_log(path)
    (test,) = loaded.tap_tests
    assert test.how == "bedside taptest" and test.timeout_s == 10.0 and not test.passed
    assert test.results[1] == TapCheck("C3", "elsewhere", ("C4",), "touching C3 shows on C4, not on C3")
    assert test.problems[0].startswith("C3 and C4 look swapped")
    assert [e.detail for e in loaded.events if e.kind == "tap_test"][0].startswith(
        "tap test: 1 of 4 electrodes confirmed; C3 and C4 look swapped")
    data = yaml.safe_load(path.read_text(encoding="utf-8"))
    assert data["tap_tests"][0]["results"][3] == {"electrode": "O1", "outcome": "not_found", "seen_on": [],
                                                  "reason": "no clear transient within 10 s of asking for O1"}


def test_the_report_and_the_html_say_it(tmp_path: Path, clock: FakeClock) -> None:
    from bedside.commands.report import text_summary
    from bedside.record.html import tap_sentence

    path = tmp_path / "W3-017.yaml"
    rec = SessionRecorder.open(path, technologist="JMK", subject_id="W3-017", clock=clock)
    assert tap_sentence(rec.snapshot()).startswith("not done")
    rec.record_tap_test(RESULTS, summarise(RESULTS), how="app", timeout_s=10.0)
    rec.close()
    loaded = load_log(path)
    assert "1 of 4 electrodes confirmed; C3 and C4 look swapped" in tap_sentence(loaded)
    text = text_summary(loaded)
    assert "(app): 1 of 4 electrodes confirmed" in text and "  - C3 and C4 look swapped" in text


def test_a_log_written_before_tap_tests_still_loads(tmp_path: Path, clock: FakeClock) -> None:
    path = tmp_path / "W3-017.yaml"
    rec = SessionRecorder.open(path, technologist="JMK", subject_id="W3-017", clock=clock)
    rec.sign_off("JMK")
    rec.close()
    lines = path.read_text(encoding="utf-8").splitlines(keepends=True)
    old = "".join(ln for ln in lines if not ln.startswith("tap_tests:"))
    assert len(old.splitlines()) == len(lines) - 1  # the key was there and is now gone
    (tmp_path / "old.yaml").write_text(old, encoding="utf-8")
    assert load_log(tmp_path / "old.yaml").tap_tests == []


def test_only_a_tap_test_is_something_recorded(tmp_path: Path, clock: FakeClock) -> None:
    path = tmp_path / "setup.yaml"
    rec = SessionRecorder.open(path, clock=clock)
    rec.record_tap_test(RESULTS[:1], (), how="app", timeout_s=8.0)
    rec.close(discard_if_empty=True)
    assert path.exists() and load_log(path).tap_tests[0].passed


def test_bad_results_are_refused_and_nothing_is_half_recorded(tmp_path: Path, clock: FakeClock) -> None:
    rec = SessionRecorder.open(tmp_path / "W3-017.yaml", technologist="JMK", subject_id="W3-017", clock=clock)
    with pytest.raises(InputError, match="nothing to record"):
        rec.record_tap_test((), ())
    with pytest.raises(InputError, match="outcome 'maybe' is not known"):
        rec.record_tap_test([TapResult("Fp1", "maybe", (), None)], ())  # type: ignore[arg-type]
    assert rec.snapshot().tap_tests == []
    rec.close()
