"""The setup log keeps when the start gate was reached, what was accepted, and the
sign-off's exceptions (issue 13); logs written before these keys load unchanged."""

from __future__ import annotations

from pathlib import Path

import pytest
import yaml
from record_factories import FakeClock

from bedside.checks.ready import Accepted
from bedside.errors import InputError
from bedside.record.html import ready_sentence
from bedside.record.log import AcceptedElectrode, load_log
from bedside.record.session import SessionRecorder


def test_ready_and_sign_off_exceptions_round_trip(tmp_path: Path, clock: FakeClock) -> None:
    path = tmp_path / "W3-017.yaml"
    rec = SessionRecorder.open(path, technologist="JMK", subject_id="W3-017", clock=clock)
    clock.advance(30.0)
    rec.set_ready(10.0, [Accepted("O2", "scalp lesion, left as is")], how="app")
    clock.advance(5.0)
    rec.set_ready(10.0, [], how="app")  # reached again later: an event, the first is kept
    rec.sign_off("JMK", [Accepted("T8", "patient moving; re-check after sedation")])
    rec.close()
    loaded = load_log(path)
    assert loaded.ready is not None and loaded.ready.held_s == 10.0 and loaded.ready.how == "app"
    assert loaded.ready.accepted == (AcceptedElectrode("O2", "scalp lesion, left as is"),)
    assert [e.detail for e in loaded.events if e.kind == "ready"] == [
        "every scalp electrode good for 10 s; accepted: O2 (scalp lesion, left as is)",
        "every scalp electrode good for 10 s",
    ]
    assert loaded.sign_off is not None
    assert loaded.sign_off.exceptions == (AcceptedElectrode("T8", "patient moving; re-check after sedation"),)
    data = yaml.safe_load(path.read_text(encoding="utf-8"))
    assert data["ready"]["accepted"] == [{"electrode": "O2", "reason": "scalp lesion, left as is"}]
    assert "O2 (accepted: scalp lesion, left as is)" in ready_sentence(loaded)


def test_a_blank_reason_is_refused(tmp_path: Path, clock: FakeClock) -> None:
    rec = SessionRecorder.open(tmp_path / "W3-017.yaml", technologist="JMK", subject_id="W3-017", clock=clock)
    with pytest.raises(InputError, match="give a reason"):
        rec.sign_off("JMK", [Accepted("T8", "   ")])
    assert rec.snapshot().sign_off is None  # nothing half-recorded
    rec.close()


def test_a_log_written_before_ready_was_kept_still_loads(tmp_path: Path, clock: FakeClock) -> None:
    path = tmp_path / "W3-017.yaml"
    rec = SessionRecorder.open(path, technologist="JMK", subject_id="W3-017", clock=clock)
    rec.sign_off("JMK")
    rec.close()
    lines = path.read_text(encoding="utf-8").splitlines(keepends=True)
    old = "".join(ln for ln in lines if not ln.startswith(("ready:", "  exceptions:")))
    assert len(old.splitlines()) == len(lines) - 2  # both keys were there and are now gone
    (tmp_path / "old.yaml").write_text(old, encoding="utf-8")
    loaded = load_log(tmp_path / "old.yaml")
    assert loaded.ready is None
    assert loaded.sign_off is not None and loaded.sign_off.initials == "JMK" and loaded.sign_off.exceptions == ()
    assert ready_sentence(loaded).startswith("not recorded")
