"""A fixed setup session recorded on a fake clock, for comparing the recorder before and
after a change: ``python tests/record/log_scenario.py OUT_DIR`` writes the journal as it
stood mid-session (``journal.jsonl``), the log after a resume (``resumed.yaml``) and the
closed log (``closed.yaml``). Every stamp comes from the fake clock or the frames, so
two runs on the same code give the same bytes; ``test_log_scenario.py`` runs it.

The scenario is invented (ward B, bed 4, a pseudonymous subject W3-017).
"""

from __future__ import annotations

import sys
from dataclasses import dataclass
from pathlib import Path

from record_factories import SCALP, FakeClock, make_channels, make_frame, make_identity, make_plan

from bedside.checks.settings import LongTermSettings
from bedside.checks.types import Finding, Level, QualityFrame
from bedside.record.log import TapedMeasurements, journal_path
from bedside.record.session import SessionRecorder
from bedside.stream.types import StreamHealth


@dataclass(frozen=True)
class _Accepted:
    electrode: str
    reason: str


@dataclass(frozen=True)
class _Tap:
    electrode: str
    outcome: str
    seen_on: tuple[str, ...]
    reason: str


def _levels(t: float, late: tuple[str, ...]) -> dict[str, Level | None]:
    """Every scalp electrode good except ``late`` (bad), and the ECG channel good."""
    out: dict[str, Level | None] = {n: (Level.BAD if n in late else Level.GOOD) for n in SCALP}
    out["ECG"] = Level.GOOD
    return out


def _with_health(frame: QualityFrame, **kw: object) -> QualityFrame:
    health = StreamHealth(state="live", nominal_rate_hz=256.0, effective_rate_hz=256.0, **kw)  # type: ignore[arg-type]
    return QualityFrame(frame.time, frame.wall_time, frame.channels, frame.findings, health, 4.0,
                        {"power_line_hz": 50.0})


def run(out: Path) -> None:
    out.mkdir(parents=True, exist_ok=True)
    clock = FakeClock()
    path = out / "W3-017.yaml"
    long_term = LongTermSettings(trend_bin_s=10.0, alert_after_s=10.0, skin_check_s=600.0)
    rec = SessionRecorder.open(path, technologist="JMK", subject_id="W3-017", clock=clock,
                               autosave_s=2.0, long_term=long_term)
    rec.set_profile("adult", "ab" * 32)
    rec.set_plan(make_plan(), TapedMeasurements("in", 14.2, 13.8, 22.0))
    rec.set_stream(make_identity(), make_channels())
    rec.set_reference("Cz", "AFz")
    bridge = Finding("bridge", ("C3", "Cz"), Level.BAD, "C3 and Cz look bridged: wipe the gel between them")
    t0 = clock.now
    rec.on_frame(make_frame(t0, {n: None for n in (*SCALP, "ECG")}, state="connecting"))
    for k in range(1, 30):
        t = t0 + k
        clock.now = t
        late = ("O1", "O2") if k < 12 else ("O2",) if k < 20 else ()
        findings = (bridge,) if 5 <= k < 15 else ()
        frame = make_frame(t, _levels(t, late), findings=findings, gaps=k // 10, reconnects=k // 25)
        if k in (7, 8):
            frame = _with_health(frame, notes=("clock offset corrected",), clock_jumps=k - 6,
                                 untrusted_sources=("wardb-bed4-amp-0002",))
        rec.on_frame(frame)
        if k == 9:
            rec.set_impedance("O1", 42.0)
            rec.set_impedance("O2", 7.5, "amplifier")
            rec.add_note("O1 re-gelled; patient settled")
        if k == 14:
            rec.save_now()
            (out / "journal.jsonl").write_bytes(journal_path(path).read_bytes())
    rec.set_ready(10.0, [_Accepted("O2", "scalp lesion under the site")], "app")
    rec.record_tap_test([_Tap("O1", "confirmed", ("O1",), "seen on O1 only"),
                         _Tap("O2", "shared", ("O2", "P4"), "seen on O2 and P4")],
                        ["P4 moved with O2"], "app", 20.0)
    clock.advance(1.0)
    # Another stream (the same amplifier without its ECG) starts a new section.
    rec.set_stream(make_identity(len(SCALP)), make_channels()[:-1])
    rec.on_frame(make_frame(clock.now, {n: Level.CHECK for n in SCALP}))
    rec.close()
    # Resumed: the same file, one more frame, signed off.
    clock.advance(60.0)
    rec = SessionRecorder.open(path, technologist="ABC", subject_id="W3-017", clock=clock, long_term=long_term)
    rec.on_frame(make_frame(clock.now, {n: Level.GOOD for n in SCALP}))
    rec.save_now()
    (out / "resumed.yaml").write_text(rec.dump_text(), encoding="utf-8")
    rec.set_technologist("JMK")
    rec.sign_off("JMK", [_Accepted("O2", "scalp lesion under the site")])
    rec.close()
    (out / "closed.yaml").write_bytes(path.read_bytes())


if __name__ == "__main__":
    if len(sys.argv) != 2:
        sys.exit("usage: python tests/record/log_scenario.py OUT_DIR")
    run(Path(sys.argv[1]))
