"""The printable report: it parses (Python's html.parser), its SVG has every electrode,
each drawn with a shape as well as a colour, and free text is escaped."""

from __future__ import annotations

from html.parser import HTMLParser
from pathlib import Path

from record_factories import SCALP, FakeClock, make_channels, make_frame, make_identity, make_plan

from bedside.checks.types import Finding, Level
from bedside.record.html import render_report
from bedside.record.log import SetupLog
from bedside.record.session import SessionRecorder

#: Elements HTML5 allows without an end tag (WHATWG HTML, "void elements").
VOID = {"meta", "br", "img", "input", "link", "hr", "col", "area", "base", "embed", "source", "track", "wbr"}
SHAPES = {"circle", "polygon", "rect", "path", "ellipse", "text"}


class _Collect(HTMLParser):
    """Checks nesting and collects the SVG electrode groups."""

    def __init__(self) -> None:
        super().__init__()
        self.stack: list[str] = []
        self.errors: list[str] = []
        self.electrodes: dict[str, str] = {}
        self.shapes: dict[str, set[str]] = {}
        self.labels: dict[str, str] = {}
        self._current: str | None = None
        self._in_label = False
        self.scripts = 0
        self.svg_count = 0

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        a = dict(attrs)
        if tag == "script":
            self.scripts += 1
        if tag == "svg":
            self.svg_count += 1
        if tag == "g" and a.get("class") == "electrode":
            self._current = a["data-name"]
            self.electrodes[self._current or ""] = a.get("data-level") or ""
            self.shapes[self._current or ""] = set()
        elif self._current is not None and tag in SHAPES:
            self.shapes[self._current].add(tag)
            self._in_label = tag == "text"
        if tag not in VOID:
            self.stack.append(tag)

    def handle_startendtag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        self.handle_starttag(tag, attrs)
        if tag not in VOID:
            self.handle_endtag(tag)

    def handle_endtag(self, tag: str) -> None:
        if not self.stack or self.stack[-1] != tag:
            self.errors.append(f"unexpected </{tag}> with open {self.stack[-3:]}")
            return
        self.stack.pop()
        if tag == "g":
            self._current = None
        if tag == "text":
            self._in_label = False

    def handle_data(self, data: str) -> None:
        if self._current is not None and self._in_label and data.strip() not in ("", "?"):
            self.labels[self._current] = data.strip()


def _parse(text: str) -> _Collect:
    p = _Collect()
    p.feed(text)
    p.close()
    assert not p.errors, p.errors[:3]
    assert p.stack == [], f"unclosed: {p.stack}"
    return p


def _session(tmp_path: Path, clock: FakeClock, *, plan: bool) -> SetupLog:
    tmp_path.mkdir(exist_ok=True)
    rec = SessionRecorder.open(tmp_path / "r.yaml", subject_id="W3-017", technologist="JMK", clock=clock)
    if plan:
        rec.set_plan(make_plan())
    rec.set_stream(make_identity(), make_channels())
    levels: dict[str, Level | None] = {n: Level.GOOD for n in SCALP}
    levels.update({"Fp1": Level.BAD, "O2": Level.CHECK, "P4": None, "ECG": Level.GOOD})
    bridge = Finding("bridge", ("C3", "Cz"), Level.BAD, "C3-Cz electrical distance 2 µV²")
    rec.on_frame(make_frame(clock.now, levels, findings=[bridge]))
    rec.add_note("<script>alert('x')</script> & Fp1 re-prepped")
    rec.set_impedance("Fp1", 22)
    rec.sign_off("JMK")
    rec.close()
    return rec.snapshot()


def test_report_parses_and_the_map_has_every_electrode(tmp_path: Path, clock: FakeClock) -> None:
    for plan in (True, False):  # with this head's positions, and with the average head
        text = render_report(_session(tmp_path / str(plan), clock, plan=plan))
        p = _parse(text)
        assert p.svg_count == 1
        expected = [c.name for c in make_channels()]
        assert sorted(p.electrodes) == sorted(expected)
        assert p.labels == {n: n for n in expected}, "every electrode labelled with its name"
        assert p.electrodes["Fp1"] == "bad" and p.electrodes["O2"] == "check"
        assert p.electrodes["P4"] == "no_data" and p.electrodes["Cz"] == "good"
        # Shape by level, so the level reads without colour (black-and-white print).
        assert "rect" in p.shapes["Fp1"] and "polygon" in p.shapes["O2"]
        assert "circle" in p.shapes["Cz"] and "rect" not in p.shapes["Cz"]
        assert p.scripts == 0, "no scripts: a note's text must not become markup"
        assert "&lt;script&gt;" in text
        for words in ("W3-017", "JMK", "Time to good", "bridge", "22", "does not diagnose"):
            assert words in text, words


def test_report_of_an_empty_log_still_renders(tmp_path: Path) -> None:
    p = _parse(render_report(SetupLog()))
    assert p.svg_count == 1 and p.electrodes == {}
