"""``bedside ward``: several real LSL outlets watched at once, coming and going.

Real liblsl outlets on this machine (tests/lsl_api.cfg), no mocks. The verdicts are the
engine's (judged on real-like EEG shared between neighbouring channels,
tests/checks/helpers.eeg_like); what is checked here is that every bed is taken in and
summarised with integer counts, that a bed appearing later is taken in, that one that
vanishes is no longer shown live, and that the command's JSON has the documented keys.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import threading
import time
from pathlib import Path

import numpy as np

from bedside.ward import Ward

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT / "tests" / "stream"))
from outlets import Feeder, make_info, unique_name  # noqa: E402  (the stream tests' outlets)

SITES = ["Fp1", "Fp2", "F7", "F3", "Fz", "F4", "F8", "T7", "C3", "Cz", "C4", "T8",
         "P7", "P3", "Pz", "P4", "P8", "O1", "O2"]
RATE = 250.0


def _data(seed: int, flat: int | None = None) -> np.ndarray:
    sys.path.insert(0, str(ROOT / "tests"))
    from checks.helpers import eeg_like  # the shared EEG-like test data

    x = eeg_like(int(20 * RATE), len(SITES), RATE, seed=seed)
    if flat is not None:
        x[:, flat] = 0.0
    return x


class Pusher:
    """A Feeder pushed at real-time pace on its own thread until stopped."""

    def __init__(self, name: str, values: np.ndarray) -> None:
        self.feeder = Feeder(make_info(name, n_channels=len(SITES), rate_hz=RATE, labels=SITES), values)
        self._stop = threading.Event()
        self._thread = threading.Thread(target=self._run, daemon=True)
        self._thread.start()

    def _run(self) -> None:
        while not self._stop.is_set():
            self.feeder.push_due()
            time.sleep(0.02)

    def close(self) -> None:
        self._stop.set()
        self._thread.join(2.0)
        self.feeder.close()


def test_beds_come_and_go_and_each_is_summarised() -> None:
    prefix = unique_name("bedside-ward")
    clean = Pusher(f"{prefix}-bed1", _data(1))
    flat = Pusher(f"{prefix}-bed2", _data(2, flat=SITES.index("O2")))
    ward = Ward(match=lambda s: s.name.startswith(prefix))
    late = None
    try:
        t0 = time.monotonic()
        seen_late = False
        while time.monotonic() - t0 < 9.0:
            rows = {r.name: r for r in ward.poll()}
            if late is None and time.monotonic() - t0 > 1.5:
                late = Pusher(f"{prefix}-bed3", _data(3))
            seen_late = seen_late or f"{prefix}-bed3" in rows
            time.sleep(0.25)
        rows = {r.name: r for r in ward.poll()}
        assert seen_late and set(rows) == {f"{prefix}-bed1", f"{prefix}-bed2", f"{prefix}-bed3"}
        bed1, bed2 = rows[f"{prefix}-bed1"], rows[f"{prefix}-bed2"]
        for r in rows.values():
            assert r.state == "live" and r.n_scalp == 19
            assert all(isinstance(v, int) for v in (r.good, r.check, r.bad))
            assert r.good + r.check + r.bad == r.n_scalp
        assert "O2" in bed2.not_good and bed2.bad >= 1, bed2
        assert "O2" not in bed1.not_good
        # A bed whose outlet vanishes is no longer live (stale, then lost).
        clean.close()
        t1 = time.monotonic()
        while time.monotonic() - t1 < 6.0 and {r.name: r for r in ward.poll()}[bed1.name].state == "live":
            time.sleep(0.25)
        assert {r.name: r for r in ward.poll()}[bed1.name].state in ("stale", "lost")
    finally:
        ward.close()
        for p in (clean, flat, late):
            if p is not None:
                p.close()


def test_ward_command_prints_integer_counts_as_json() -> None:
    name = unique_name("bedside-wardcmd")
    bed = Pusher(name, _data(4, flat=SITES.index("Cz")))
    try:
        env = {**os.environ, "LSLAPICFG": str(ROOT / "tests" / "lsl_api.cfg")}
        out = subprocess.run([sys.executable, "-m", "bedside", "ward", "--seconds", "5", "--format", "json"],
                             capture_output=True, text=True, timeout=60, env=env, cwd=ROOT)
        assert out.returncode == 1, out.stderr  # a bed needs attention (Cz flat)
        doc = json.loads(out.stdout)
        mine = [s for s in doc["streams"] if s["name"] == name]
        assert len(mine) == 1, doc
        row = mine[0]
        assert set(row) >= {"name", "source_id", "hostname", "state", "n_scalp", "good", "check", "bad",
                            "not_good", "findings"}
        assert row["state"] == "live" and row["n_scalp"] == 19 and "Cz" in row["not_good"]
        assert all(type(row[k]) is int for k in ("n_scalp", "good", "check", "bad"))
    finally:
        bed.close()


def test_ward_refuses_a_look_longer_than_an_hour() -> None:
    out = subprocess.run([sys.executable, "-m", "bedside", "ward", "--seconds", "100000"],
                         capture_output=True, text=True, timeout=60, cwd=ROOT)
    assert out.returncode == 2 and "error:" in out.stderr and "up to 3600" in out.stderr
    assert "Traceback" not in out.stderr
