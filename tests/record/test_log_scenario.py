"""The fixed session of log_scenario.py: recorded twice it gives the same bytes (every
stamp comes from the fake clock or the frames), and its closed log reads back into the
very same text (load → dump is the identity on a file bedside wrote)."""

from __future__ import annotations

from pathlib import Path

import log_scenario

from bedside.record.log import dump_yaml, load_log


def test_the_scenario_is_repeatable_and_round_trips(tmp_path: Path) -> None:
    log_scenario.run(tmp_path / "a")
    log_scenario.run(tmp_path / "b")
    for name in ("journal.jsonl", "resumed.yaml", "closed.yaml"):
        assert (tmp_path / "a" / name).read_bytes() == (tmp_path / "b" / name).read_bytes(), name
    closed = tmp_path / "a" / "closed.yaml"
    log = load_log(closed)
    assert dump_yaml(log) == closed.read_text(encoding="utf-8")
    # What the scenario did, by hand: two stream sections, O2 good last at +20 s, signed off.
    assert len(log.earlier_streams) == 1 and log.sign_off is not None and log.sign_off.initials == "JMK"
    first = log.earlier_streams[0]
    assert [c.to_level for c in first.timeline if c.electrode == "O2"] == ["no_data", "bad", "good"]
    assert [e.kind for e in log.events].count("resumed") == 1
