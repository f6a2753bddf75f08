"""The printable report reads for someone in a department: plain labels with units, never
the checks' machine names, and one sentence on when every scalp electrode was good.

Read back with Python's own html.parser (the standard library), an outside reader."""

from __future__ import annotations

import dataclasses
from html.parser import HTMLParser
from pathlib import Path

from record_factories import SCALP, FakeClock, make_channels, make_frame, make_identity

from bedside.checks.types import Level
from bedside.metric_labels import METRIC_LABELS
from bedside.record.html import render_report
from bedside.record.session import SessionRecorder

#: Every metric the checks and the engine give today (grep bedside/checks for metrics).
ALL_METRICS = {
    "ptp_uv": 48.0, "recent_ptp_uv": 40.0, "rms_uv": 21.5, "zero_diff_fraction": 0.001,
    "line_noise_db": -12.0, "mains_uv": 3.2, "mains_peak_db": 14.0, "mains_vs_median": 1.1,
    "drift_uv_per_s": 2.5, "slow_uv": 6.0, "offset_uv": 1200.0, "offset_fraction": 0.004,
    "bridge_ed_uv2": 40.0, "bridge_corr": 0.81, "pops": 0.0, "step_max_uv": 35.0,
    "clip_fraction": 0.0, "muscle_ratio": 0.4, "muscle_uv": 2.0, "muscle_z": 0.3,
    "amplitude_z": -0.5, "corr_98": 0.9, "corr_98_lowest": 0.88, "nonfinite_samples": 0.0,
}


class _Read(HTMLParser):
    """The page's text and table heads, as a reader (or a screen reader) gets them."""

    def __init__(self) -> None:
        super().__init__()
        self.text: list[str] = []
        self.heads: list[str] = []
        self.rows: list[list[str]] = []
        self._cell: list[str] | None = None
        self._tag = ""

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        if tag == "tr":
            self.rows.append([])
        if tag in ("th", "td"):
            self._cell, self._tag = [], tag
        self.text.extend(v for _k, v in attrs if v)

    def handle_endtag(self, tag: str) -> None:
        if tag in ("th", "td") and self._cell is not None:
            cell = "".join(self._cell).strip()
            self.rows[-1].append(cell)
            if tag == "th":
                self.heads.append(cell)
            self._cell = None

    def handle_data(self, data: str) -> None:
        self.text.append(data)
        if self._cell is not None:
            self._cell.append(data)


def _read(text: str) -> _Read:
    r = _Read()
    r.feed(text)
    r.close()
    return r


def _frame(at: float, levels: dict[str, Level | None]):  # type: ignore[no-untyped-def]
    frame = make_frame(at, levels)
    chans = tuple(dataclasses.replace(c, metrics=dict(ALL_METRICS)) for c in frame.channels)
    return dataclasses.replace(frame, channels=chans)


def _report(tmp_path: Path, steps: list[tuple[float, dict[str, Level | None]]]) -> str:
    clock = FakeClock()
    rec = SessionRecorder.open(tmp_path / "w.yaml", subject_id="W3-017", clock=clock)
    rec.set_stream(make_identity(), make_channels())
    start = clock.now
    for offset, levels in steps:
        clock.now = start + offset
        rec.on_frame(_frame(clock.now, levels))
    rec.close()
    return render_report(rec.snapshot())


def _levels(**changed: Level | None) -> dict[str, Level | None]:
    levels: dict[str, Level | None] = {n: Level.GOOD for n in SCALP}
    levels["ECG"] = Level.GOOD
    levels.update(changed)
    return levels


def _summary(page: _Read, head: str) -> str:
    return next(row[1] for row in page.rows if len(row) == 2 and row[0] == head)


def test_no_machine_name_and_every_shown_metric_labelled_with_its_unit(tmp_path: Path) -> None:
    text = _report(tmp_path, [(0.0, _levels(Fp1=Level.BAD)), (3.0, _levels())])
    page = _read(text)
    words = " ".join(page.text)
    # Machine names have underscores; none reaches the reader, in text or attributes.
    for key in ALL_METRICS:
        if "_" in key:
            assert key not in text, key
    for key, label in METRIC_LABELS.items():
        if label.report:
            assert label.heading() in page.heads, key
        else:
            assert label.heading() not in page.heads, f"{key} is left to the log file"
    # Units on the heads (the unit words are SI or common practice): µV, dB, µV/s, %.
    assert "Mains interference (µV)" in page.heads and "Mains against the EEG band (dB)" in page.heads
    assert "Drift (µV/s)" in page.heads and "Clipped samples (%)" in page.heads
    # Grouped, and what was left out is said, not dropped in silence.
    for group in ("Signal size", "Mains", "Drift and offset", "Bridging", "Artifacts"):
        assert group in page.heads, group
    assert "further technical values" in words
    # Values under their heads: 0.004 of the range is 0.4 (%); r 0.81; 21.5 (µV).
    cz = next(row for row in page.rows if len(row) > 6 and row[0] == "Cz")
    assert "0.4" in cz and "0.81" in cz and "21.5" in cz


def test_all_good_sentence_when_reached(tmp_path: Path) -> None:
    # Fp1 bad at the first verdict, every electrode good 65 s later: 65 s = 1 min 5 s.
    text = _report(tmp_path, [(0.0, _levels(Fp1=Level.BAD)), (65.0, _levels())])
    sentence = _summary(_read(text), "All scalp electrodes good at once")
    assert sentence == "Reached 1 min 5 s after the first verdict."


def test_all_good_sentence_when_reached_within_a_minute(tmp_path: Path) -> None:
    text = _report(tmp_path, [(0.0, _levels(O2=Level.CHECK)), (12.0, _levels())])
    assert _summary(_read(text), "All scalp electrodes good at once") == "Reached 12 s after the first verdict."


def test_all_good_sentence_when_never_reached(tmp_path: Path) -> None:
    text = _report(tmp_path, [(0.0, _levels(Fp1=Level.BAD)), (5.0, _levels(Fp1=Level.BAD, O2=Level.CHECK))])
    sentence = _summary(_read(text), "All scalp electrodes good at once")
    assert sentence == "Never reached: at no moment were all scalp electrodes good together."
    assert "never at the same time" not in text


def test_all_good_sentence_from_the_first_verdict(tmp_path: Path) -> None:
    text = _report(tmp_path, [(0.0, _levels())])
    assert _summary(_read(text), "All scalp electrodes good at once").startswith("Reached at once")


def test_report_and_bids_say_the_level_words_of_the_app(tmp_path: Path) -> None:
    """One vocabulary (bedside.checks.types.LEVEL_WORDS): the report's level cells and
    the BIDS status descriptions use the same words as the app and ``check``'s table
    (tests/ui/test_display_words.py); the BIDS ``status`` column keeps BIDS's own values."""
    import re

    from bedside.checks.types import LEVEL_SYMBOLS, LEVEL_WORDS
    from bedside.record.bids import channels_rows

    clock = FakeClock()
    rec = SessionRecorder.open(tmp_path / "v.yaml", subject_id="W3-017", clock=clock)
    rec.set_stream(make_identity(), make_channels())
    rec.on_frame(_frame(clock.now, _levels(Fp1=Level.BAD, O2=Level.CHECK)))
    rec.close()
    text = render_report(rec.snapshot())
    symbols = "".join(LEVEL_SYMBOLS.values()).replace("?", r"\?")
    said = {m.group(2) for m in re.finditer(f"([{symbols}]) ([a-z]+)", " ".join(_read(text).text))}
    allowed = {w.split()[0] for w in LEVEL_WORDS.values()}
    assert {"good", "check", "bad"} <= said and said <= allowed, said - allowed
    # channels.tsv rows: (name, type, units, reference, status, status_description).
    rows = {r[0]: r for r in channels_rows(rec.snapshot())}
    assert rows["Fp1"][4] == "bad" and f"verdict {Level.BAD.word} at" in rows["Fp1"][5]
    assert f"verdict {Level.CHECK.word} at" in rows["O2"][5]
    assert f"verdict {Level.GOOD.word} at" in rows["Cz"][5]
