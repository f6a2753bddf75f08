"""A head measured with classic names (T3–T6) exports the stream's modern T7/T8/P7/P8.

T3/T4/T5/T6 and T7/T8/P7/P8 are the same sites (Jasper 1958 named them T3…T6; ACNS
Guideline 2, Acharya et al. 2016, renamed them): a classic plan must place the stream's
T7, and T7's typed impedance must reach BIDS electrodes.tsv (BIDS 1.11 EEG: the
`impedance` column, kΩ).
"""

from __future__ import annotations

import csv
from pathlib import Path

from record_factories import FakeClock, make_frame, make_identity

from bedside.checks.types import Level
from bedside.placement.calculator import plan_placement
from bedside.placement.types import HeadMeasurements
from bedside.record.bids import write_bids
from bedside.record.html import render_report
from bedside.record.session import SessionRecorder
from bedside.stream.types import ChannelInfo

MODERN = ("Fp1", "Fp2", "T7", "T8", "P7", "P8", "Cz", "O1", "O2")


def test_a_classic_plan_places_and_exports_the_streams_modern_names(tmp_path: Path, clock: FakeClock) -> None:
    plan = plan_placement(HeadMeasurements(36.0, 35.0, 56.0), "10-20", "classic")
    assert "T3" in plan.positions_mm and "T7" not in plan.positions_mm
    chans = tuple(ChannelInfo(n, n, "EEG", "microvolts", 1.0, True) for n in MODERN)
    with SessionRecorder.open(tmp_path / "log.yaml", subject_id="W3-017", clock=clock) as rec:
        rec.set_plan(plan)
        rec.set_stream(make_identity(len(MODERN)), chans)
        rec.on_frame(make_frame(clock.now, dict.fromkeys(MODERN, Level.GOOD)))
        rec.set_impedance("T7", 6.0)
        snap = rec.snapshot()
    html = render_report(snap)
    assert "not on the map" not in html
    write_bids(snap, tmp_path / "bids", power_line_hz=50)
    (tsv,) = (tmp_path / "bids").rglob("*_electrodes.tsv")
    with tsv.open(newline="", encoding="utf-8") as fh:
        rows = {r["name"]: r for r in csv.DictReader(fh, delimiter="\t")}
    assert {"T7", "T8", "P7", "P8"} <= set(rows)
    assert float(rows["T7"]["impedance"]) == 6.0
    assert "T3" not in rows  # one row per site, under the stream's name


def test_the_report_says_plainly_whether_all_were_good_together(tmp_path: Path, clock: FakeClock) -> None:
    """A department reader's sentence, not a fragment ("… good never at the same time")."""
    chans = tuple(ChannelInfo(n, n, "EEG", "microvolts", 1.0, True) for n in ("Cz", "O1"))
    with SessionRecorder.open(tmp_path / "r.yaml", subject_id="W3-017", clock=clock) as rec:
        rec.set_stream(make_identity(2), chans)
        rec.on_frame(make_frame(clock.now, {"Cz": Level.GOOD, "O1": Level.BAD}))
        snap = rec.snapshot()
    html = render_report(snap)
    assert "All scalp electrodes good at once" in html
    assert "Never reached: at no moment were all scalp electrodes good together." in html
