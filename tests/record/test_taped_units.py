"""The setup log keeps the measurements as taped, in their unit, beside the cm.

Conversions: 1 in = 2.54 cm and 1 mm = 0.1 cm exactly (the international inch of 1959,
NIST SP 811 appendix B).
"""

from __future__ import annotations

from pathlib import Path

import yaml
from record_factories import FakeClock, make_plan

from bedside.record.log import TapedMeasurements, load_log
from bedside.record.session import SessionRecorder


def test_taped_inches_are_kept_as_taped(tmp_path: Path, clock: FakeClock) -> None:
    path = tmp_path / "W3-017.yaml"
    rec = SessionRecorder.open(path, technologist="jmk", subject_id="W3-017", clock=clock)
    taped = TapedMeasurements(unit="in", nasion_inion=14.2, preauricular=13.8, circumference=22)
    rec.set_plan(make_plan(), taped)
    rec.close()
    loaded = load_log(path)
    assert loaded.plan is not None and loaded.plan.taped == taped
    # The file itself holds the taped numbers, not only their cm (14.2 in = 36.068 cm).
    data = yaml.safe_load(path.read_text(encoding="utf-8"))
    assert data["plan"]["taped"] == {"unit": "in", "nasion_inion": 14.2, "preauricular": 13.8,
                                     "circumference": 22}
    plan_events = [e.detail for e in loaded.events if e.kind == "plan"]
    assert plan_events and "taped 14.2 / 13.8 / 22 in" in plan_events[0]


def test_a_log_written_before_taped_was_kept_still_loads(tmp_path: Path, clock: FakeClock) -> None:
    """Older logs have no 'taped' key under 'plan': they load, with taped None."""
    path = tmp_path / "W3-017.yaml"
    rec = SessionRecorder.open(path, technologist="jmk", subject_id="W3-017", clock=clock)
    rec.set_plan(make_plan())
    rec.close()
    lines = path.read_text(encoding="utf-8").splitlines(keepends=True)
    old = "".join(ln for ln in lines if not ln.startswith("  taped:"))
    assert old != "".join(lines)  # the key was there and is now gone
    (tmp_path / "old.yaml").write_text(old, encoding="utf-8")
    loaded = load_log(tmp_path / "old.yaml")
    assert loaded.plan is not None and loaded.plan.taped is None
    assert loaded.plan.measurements == make_plan().measurements
    plan_events = [e.detail for e in loaded.events if e.kind == "plan"]
    assert plan_events and "taped" not in plan_events[0]


def test_report_shows_the_taped_unit_beside_the_cm(tmp_path: Path, clock: FakeClock) -> None:
    from bedside.record.html import render_report

    path = tmp_path / "W3-017.yaml"
    rec = SessionRecorder.open(path, technologist="jmk", subject_id="W3-017", clock=clock)
    rec.set_plan(make_plan(), TapedMeasurements("mm", 360, 350, 560))
    rec.close()
    html = render_report(load_log(path))
    assert "(taped 360 / 350 / 560 mm)" in html
