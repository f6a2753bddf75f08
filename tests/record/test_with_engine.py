"""The log fed by the real checks engine (bedside.checks.engine), not hand-made frames:
what the engine says ends up in the log, the BIDS channels.tsv and the report.

Inputs built so the verdicts are unambiguous (common practice): a lead at exactly
0 µV is flat; an 80 µV 50 Hz sine on a 15 µV background is mains interference; the
rest is Gaussian noise plus a shared 10 µV 10 Hz rhythm.
"""

from __future__ import annotations

import csv
import time
from pathlib import Path

import numpy as np
from record_factories import make_identity

from bedside.checks.engine import Engine
from bedside.checks.settings import load_quality
from bedside.metric_labels import METRIC_LABELS
from bedside.record.bids import write_bids
from bedside.record.html import render_report
from bedside.record.log import load_log
from bedside.record.session import SessionRecorder
from bedside.stream.types import ChannelInfo, StreamHealth

NAMES = ("Fp1", "Fp2", "F3", "F4", "C3", "C4", "P3", "P4", "O1", "O2")


def test_engine_frames_reach_the_log_bids_and_report(tmp_path: Path) -> None:
    chans = tuple(ChannelInfo(n, n, "EEG", "microvolts", 1.0, True) for n in NAMES)
    rate = 256.0
    engine = Engine(load_quality(), chans, rate, None)
    rng = np.random.default_rng(3)
    t = np.arange(int(rate * 20)) / rate
    # Shared 10-Hz rhythm over independent noise: scalp EEG is shared between leads (a lead
    # sharing nothing is told it carries no EEG: PREP's correlation criterion).
    x = rng.normal(0, 15, (t.size, len(NAMES))) + 30 * np.sin(2 * np.pi * 10 * t)[:, None]
    x[:, NAMES.index("C3")] = 0.0
    x[:, NAMES.index("P4")] += 80 * np.sin(2 * np.pi * 50 * t)
    health = StreamHealth("live", rate, rate)
    path = tmp_path / "W3-021.yaml"
    with SessionRecorder.open(path, technologist="JMK", subject_id="W3-021") as rec:
        rec.set_stream(make_identity(len(NAMES)), chans)
        step = int(rate / 4)
        for i in range(0, t.size, step):
            engine.push(x[i : i + step], t[i : i + step])
            rec.on_frame(engine.evaluate(health))
        final_frame = engine.evaluate(health)
    log = load_log(path)
    engine_levels = {c.name: c.level_key for c in final_frame.channels}
    assert {n: log.final[n].level for n in NAMES} == engine_levels
    assert log.final["C3"].level == "bad" and log.final["P4"].level != "good"
    assert log.final["O1"].level == "good"
    assert any(k.endswith("_uv") or k.endswith("_db") for k in log.final["C3"].metrics)
    # Every electrode had a first verdict; the good ones have a time to good.
    ttg = log.time_to_good_s()
    assert ttg["O1"] is not None and ttg["C3"] is None
    res = write_bids(log, tmp_path / "bids", power_line_hz=50, reference="Cz")
    tsv = next(p for p in res.files if p.name.endswith("_channels.tsv"))
    with tsv.open(newline="", encoding="utf-8") as fh:
        rows = {r["name"]: r for r in csv.DictReader(fh, delimiter="\t")}
    assert rows["C3"]["status"] == "bad" and "flat" in rows["C3"]["status_description"]
    assert rows["O1"]["status"] == "good"
    html = render_report(log)
    assert all(f'data-name="{n}"' in html for n in NAMES)
    # Every metric the real engine gives has plain words in the one label table, and no
    # machine name (they carry underscores) reaches the printed page.
    keys = {k for c in final_frame.channels for k in c.metrics}
    assert keys and keys <= METRIC_LABELS.keys(), sorted(keys - METRIC_LABELS.keys())
    assert not [k for k in keys if "_" in k and k in html]
    assert time.time() - log.ended_at.timestamp() < 60  # type: ignore[union-attr]
