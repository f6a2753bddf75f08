"""The setup log records the department profile (name and file hash) and each
impedance's source; implausible impedances are refused with the reason; logs written
before these keys still load (issue 13, items 3 and 4)."""

from __future__ import annotations

from pathlib import Path

import pytest
from record_factories import FakeClock

from bedside.checks.profiles import load_profile
from bedside.errors import InputError
from bedside.record.html import render_report
from bedside.record.log import load_log
from bedside.record.session import SessionRecorder


def test_profile_and_impedance_sources_round_trip(tmp_path: Path, clock: FakeClock) -> None:
    path = tmp_path / "W3-017.yaml"
    adult, neo = load_profile("adult"), load_profile("neonatal")
    rec = SessionRecorder.open(path, technologist="JMK", subject_id="W3-017", clock=clock)
    rec.set_profile(adult.name, adult.sha256)
    rec.set_profile(adult.name, adult.sha256)  # the same again: nothing new
    rec.set_impedance("Cz", 12.0, "amplifier")
    clock.advance(60.0)
    rec.set_impedance("Cz", 4.0)  # typed after the amplifier's: this one counts
    rec.set_impedance("O1", 3.0, "amplifier")
    clock.advance(5.0)
    rec.set_profile(neo.name, neo.sha256)
    rec.close()
    loaded = load_log(path)
    assert loaded.profile is not None
    assert (loaded.profile.name, loaded.profile.sha256) == ("neonatal", neo.sha256)
    assert [e.detail for e in loaded.events if e.kind == "profile"] == ["adult → neonatal"]
    assert [(e.electrode, e.kohm, e.source) for e in loaded.impedances] == [
        ("Cz", 12.0, "amplifier"), ("Cz", 4.0, "typed"), ("O1", 3.0, "amplifier")]
    assert loaded.latest_impedances_kohm() == {"Cz": 4.0, "O1": 3.0}
    assert f"neonatal (sha256 {neo.sha256[:16]}…)" in render_report(loaded)


@pytest.mark.parametrize(("kohm", "words"), [(0.0, "zero or less"), (-1.0, "zero or less"),
                                             (5000.0, "over 1,000 kΩ"), (1000.01, "over 1,000 kΩ")])
def test_implausible_impedances_are_refused(tmp_path: Path, clock: FakeClock, kohm: float, words: str) -> None:
    rec = SessionRecorder.open(tmp_path / "W3-017.yaml", technologist="JMK", subject_id="W3-017", clock=clock)
    with pytest.raises(InputError, match=rf"impedance for Cz is .*{words}.*accepted: more than 0 and at most 1,000 kΩ"):
        rec.set_impedance("Cz", kohm)
    with pytest.raises(InputError, match="accepted: typed, amplifier"):
        rec.set_impedance("Cz", 4.0, "guessed")
    assert rec.snapshot().impedances == []  # nothing half-recorded
    rec.close()


def test_a_log_written_before_profiles_still_loads(tmp_path: Path, clock: FakeClock) -> None:
    path = tmp_path / "W3-017.yaml"
    rec = SessionRecorder.open(path, technologist="JMK", subject_id="W3-017", clock=clock)
    rec.set_profile("adult", load_profile("adult").sha256)
    rec.set_impedance("Cz", 4.0)
    rec.close()
    text = path.read_text(encoding="utf-8")
    lines = text.splitlines(keepends=True)
    old = "".join(ln for ln in lines if not ln.startswith(("profile:", "  name:", "  sha256:", "  at:")))
    old = old.replace(', "source": "typed"', "")
    assert "profile" not in old and "source" not in old
    (tmp_path / "old.yaml").write_text(old, encoding="utf-8")
    loaded = load_log(tmp_path / "old.yaml")
    assert loaded.profile is None
    assert [(e.electrode, e.kohm, e.source) for e in loaded.impedances] == [("Cz", 4.0, "typed")]


def test_a_resumed_log_gives_back_its_typed_impedances(tmp_path: Path) -> None:
    """The recorder hands the app what was typed before a restart (last per electrode,
    and when the newest was typed); the amplifier's values are left to the stream."""
    clock = FakeClock(1_796_000_000.0)
    path = tmp_path / "W3-017.yaml"
    with SessionRecorder.open(path, subject_id="W3-017", clock=clock) as rec:
        rec.set_impedance("Cz", 12.0)
        clock.advance(30.0)
        rec.set_impedance("Cz", 6.5)
        rec.set_impedance("O1", 9.0, source="amplifier")
    with SessionRecorder.open(path, subject_id="W3-017", clock=clock) as again:
        typed, at = again.typed_impedances()
    assert typed == {"Cz": 6.5}
    assert at == 1_796_000_030.0
