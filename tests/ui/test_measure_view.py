"""The Measure view with the real placement package, driven from the keyboard (Pilot).

Expected distances are the published 10-20 percentages applied by hand (Jasper 1958:
midline Fpz 10 %, Fz 30 %, Cz 50 %, Pz 70 %, Oz 90 % of nasion–inion; coronal T7/T3
10 %, C3 30 % of the preauricular arc, from the left preauricular point).
"""

from __future__ import annotations

from pathlib import Path

import pytest
from standins import screen_text
from textual import events
from textual.widgets import DataTable, Input

from bedside.ui.app import make_app
from bedside.ui.config import AppConfig
from bedside.ui.widgets.head_map import HeadMap

pytestmark = pytest.mark.asyncio


async def _type(pilot, text: str) -> None:  # type: ignore[no-untyped-def]
    for ch in text:
        await pilot.press(ch)


def _rows(table: DataTable) -> list[list[str]]:  # type: ignore[type-arg]
    return [[str(c) for c in table.get_row_at(i)] for i in range(table.row_count)]


async def _enter(pilot, ni: str, pa: str, circ: str) -> None:  # type: ignore[no-untyped-def]
    await _type(pilot, ni)
    await pilot.press("tab")
    await _type(pilot, pa)
    await pilot.press("tab")
    await _type(pilot, circ)


async def _settle(pilot, app, cond, tries: int = 60) -> bool:  # type: ignore[no-untyped-def]
    for _ in range(tries):
        await pilot.pause(0.05)
        if cond():
            return True
    return bool(cond())


@pytest.mark.parametrize("size", [(100, 40), (80, 24)])
async def test_measurements_give_marks_at_published_percentages(size: tuple[int, int], tmp_path: Path) -> None:
    """36 / 35 / 56 cm: Cz 18.0 cm from the nasion (50 % of 36), C3 10.5 cm from the left
    preauricular point (30 % of 35) — Jasper 1958, computed by hand."""
    app = make_app(AppConfig(discover=False, start_view="measure", export_dir=tmp_path))
    async with app.run_test(size=size) as pilot:
        await _enter(pilot, "36", "35", "56")
        table = app.screen.query_one("#marks-table", DataTable)
        assert await _settle(pilot, app, lambda: table.row_count > 0)
        rows = _rows(table)
        by_line: dict[str, dict[str, float]] = {}
        line = ""
        for r in rows:
            line = r[0] or line
            if r[4] != "—":  # the reference sites are not on a measured line
                by_line.setdefault(line, {})[r[1]] = float(r[4])
        assert by_line["midline"]["Fpz"] == pytest.approx(3.6)
        assert by_line["midline"]["Cz"] == pytest.approx(18.0)
        assert by_line["midline"]["Oz"] == pytest.approx(32.4)
        assert by_line["ear to ear"]["T7"] == pytest.approx(3.5)
        assert by_line["ear to ear"]["C3"] == pytest.approx(10.5)
        # The walking order: the midline is walked first, nasion to inion.
        assert rows[0][0] == "midline"
        mid = [r[1] for r in rows[: len(by_line["midline"])]]
        assert mid == ["Fpz", "Fz", "Cz", "Pz", "Oz"]
        # The diagram has every site of the plan.
        assert {"Cz", "T7", "O1"} <= set(app.screen.query_one("#marks-map", HeadMap).points)
        assert "Cz" in screen_text(app)
        # F7: the diagram first (on a short terminal it takes the table's place).
        await pilot.press("f7")
        assert await _settle(pilot, app, lambda: "•Cz" in screen_text(app) or "Cz•" in screen_text(app))


async def test_classic_names_and_other_name_column() -> None:
    """Classic naming shows T3 with T7 beside it (the 1958 and modern names of one site)."""
    app = make_app(AppConfig(discover=False, start_view="measure", names="classic"))
    async with app.run_test(size=(100, 40)) as pilot:
        await _enter(pilot, "36", "35", "56")
        table = app.screen.query_one("#marks-table", DataTable)
        assert await _settle(pilot, app, lambda: table.row_count > 0)
        pairs = {(r[1], r[2]) for r in _rows(table)}
        assert ("T3", "T7") in pairs


async def test_bad_measurement_is_named_inline() -> None:
    """A non-number gets a message naming the measurement; no marks appear."""
    app = make_app(AppConfig(discover=False, start_view="measure"))
    async with app.run_test(size=(100, 40)) as pilot:
        await _enter(pilot, "36", "abc", "56")
        await _settle(pilot, app, lambda: "✖" in screen_text(app))
        text = screen_text(app)
        assert "✖" in text
        assert "preauricular" in text.lower() or "ear" in text.lower()
        assert app.screen.query_one("#marks-table", DataTable).row_count == 0
        # Mixed-up units: 360 looks like millimetres.
        ni = app.screen.query_one("#ni", Input)
        ni.value = "360"
        app.screen.query_one("#pa", Input).value = "35"
        await _settle(pilot, app, lambda: "mm" in screen_text(app))
        assert "mm" in screen_text(app)


async def test_export_writes_a_printable_sheet(tmp_path: Path) -> None:
    """F5 saves the sheet (atomic write) with the same distances as on screen."""
    app = make_app(AppConfig(discover=False, start_view="measure", export_dir=tmp_path))
    async with app.run_test(size=(100, 40)) as pilot:
        await _enter(pilot, "36", "35", "56")
        table = app.screen.query_one("#marks-table", DataTable)
        assert await _settle(pilot, app, lambda: table.row_count > 0)
        await pilot.press("escape", "f5")
        assert await _settle(pilot, app, lambda: any(tmp_path.glob("marks-*.txt")))
    sheet = next(tmp_path.glob("marks-*.txt")).read_text(encoding="utf-8")
    cz = [ln for ln in sheet.splitlines() if ln.split()[:1] == ["Cz"]]
    assert cz and "18.0" in cz[0]
    assert "does not diagnose" in sheet


async def test_invalid_input_clears_the_marks_and_refuses_f5(tmp_path: Path) -> None:
    """After 36/35/56 cm, nasion–inion changed to 0: the old marks leave the screen and F5
    saves nothing, so a sheet never shows measurements that are no longer typed.
    (A 0-cm head is outside any published head size — INTERGROWTH-21st, WHO.)"""
    app = make_app(AppConfig(discover=False, start_view="measure", export_dir=tmp_path))
    async with app.run_test(size=(100, 40)) as pilot:
        await _enter(pilot, "36", "35", "56")
        screen = app.screen
        table = screen.query_one("#marks-table", DataTable)
        assert await _settle(pilot, app, lambda: table.row_count > 0)
        screen.query_one("#ni", Input).value = "0"
        assert await _settle(pilot, app, lambda: "✖" in screen_text(app))
        assert table.row_count == 0
        assert screen.query_one("#marks-map", HeadMap).points == {}
        await pilot.press("escape", "f5")
        await pilot.pause(0.3)
        assert not list(tmp_path.glob("marks-*.txt"))
        # An emptied field clears them too.
        screen.query_one("#ni", Input).value = "36"
        assert await _settle(pilot, app, lambda: table.row_count > 0)
        screen.query_one("#circ", Input).value = ""
        assert await _settle(pilot, app, lambda: table.row_count == 0)
        await pilot.press("escape", "f5")
        await pilot.pause(0.3)
        assert not list(tmp_path.glob("marks-*.txt"))


async def test_reference_sites_read_not_measured_not_zero(tmp_path: Path) -> None:
    """A1/A2/M1/M2 are placed by landmark (earlobe, mastoid), not on a measured line
    (Jasper 1958; ACNS Guideline 2): the table, the sheet and the HTML say "not measured",
    never "0.0 cm, 0 %"."""
    from bedside.record.html import render_report
    from bedside.record.log import PlanRecord, SetupLog
    from bedside.ui.export import plan_as_text

    app = make_app(AppConfig(discover=False, start_view="measure", export_dir=tmp_path))
    async with app.run_test(size=(100, 40)) as pilot:
        await _enter(pilot, "36", "35", "56")
        table = app.screen.query_one("#marks-table", DataTable)
        assert await _settle(pilot, app, lambda: table.row_count > 0)
        refs = [r for r in _rows(table) if r[1] in ("A1", "A2", "M1", "M2")]
        assert len(refs) == 4
        for r in refs:
            assert r[4:7] == ["—", "", ""], r
            assert "not measured" in r[7]
        plan = app.screen.plan
    assert plan is not None
    sheet = [ln for ln in plan_as_text(plan).splitlines() if ln.split()[:1] == ["A1"]]
    assert sheet and "not measured" in sheet[0] and "0.0" not in sheet[0]
    log_ = SetupLog(subject_id="W3-017", plan=PlanRecord(plan.measurements, plan.system, plan.names, plan.marks))
    html = render_report(log_)
    start = html.index("<td>reference</td><td>A1</td>")
    row = html[start: html.index("</tr>", start)]
    assert "not measured" in row and "0.0" not in row


def _table_lines(text: str) -> tuple[str, dict[str, str]]:
    """The marks table's header line, and each site's first row, as on the terminal."""
    lines = text.splitlines()
    header = next(ln for ln in lines if " site " in ln and " from " in ln)
    rows: dict[str, str] = {}
    for ln in lines:
        cells = ln.split("▕", 1)[-1].split()
        for word in cells[:2]:
            rows.setdefault(word, ln)
    return header, rows


async def test_80x24_shows_the_distance_column(tmp_path: Path) -> None:
    """At 80×24 the cm column is on screen with the form beside it: Cz 18.0 cm from the
    nasion (50 % of 36 cm, Jasper 1958), and no column is cut part-way at the right edge."""
    app = make_app(AppConfig(discover=False, start_view="measure", export_dir=tmp_path))
    async with app.run_test(size=(80, 24)) as pilot:
        await _enter(pilot, "36", "35", "56")
        table = app.screen.query_one("#marks-table", DataTable)
        assert await _settle(pilot, app, lambda: table.row_count > 0)
        await pilot.pause(0.1)
        header, rows = _table_lines(screen_text(app))
        assert " cm " in header and " % " in header
        assert "18.0" in rows["Cz"].split()
        # The percent column shows whole numbers (50, not a cut "5").
        assert "50" in rows["Cz"].split()


async def test_80x24_long_message_is_shown_whole(tmp_path: Path) -> None:
    """A long refusal (360 typed in cm looks like millimetres) is on screen word for word."""
    from bedside.errors import BedsideError
    from bedside.placement.validate import parse_measurements
    from bedside.ui.screens.measure import in_app_terms

    with pytest.raises(BedsideError) as caught:
        parse_measurements("360", "35", "56", "cm")
    expected = " ".join(f"✖ {in_app_terms(str(caught.value))}".split())
    assert len(expected) > 160  # long enough to need several lines at 80 columns
    app = make_app(AppConfig(discover=False, start_view="measure", export_dir=tmp_path))
    async with app.run_test(size=(80, 24)) as pilot:
        await _enter(pilot, "360", "35", "56")
        assert await _settle(pilot, app, lambda: "✖" in screen_text(app))
        lines = screen_text(app).splitlines()
        start = next(i for i, ln in enumerate(lines) if "✖" in ln)
        shown = " ".join(" ".join(lines[start:]).split())
        assert expected in shown


@pytest.mark.parametrize(
    ("unit", "typed", "header", "cz", "taped"),
    [
        # 360 mm = 36.0 cm; Cz at 50 %: 180 mm = 18.0 cm (Jasper 1958; 1 mm = 0.1 cm).
        ("mm", ("360", "350", "560"), "mm", ("18.0", "180"), (360, 350, 560)),
        # 14.2 in = 36.068 cm; Cz at 50 %: 7.1 in, 18.0 cm (1 in = 2.54 cm, NIST SP 811).
        ("in", ("14.2", "13.8", "22"), "in", ("18.0", "7.1"), (14.2, 13.8, 22)),
    ],
)
@pytest.mark.parametrize("size", [(80, 24), (100, 40)])
async def test_taped_unit_is_shown_beside_cm_and_logged_as_taped(
    unit: str, typed: tuple[str, str, str], header: str, cz: tuple[str, str],
    taped: tuple[float, float, float], size: tuple[int, int], tmp_path: Path,
) -> None:
    import standins as si

    from bedside.record.log import TapedMeasurements
    from bedside.ui.services import default_services

    real = default_services()  # the real placement package; the log kept in memory
    rec = si.MemoryRecorder(tmp_path / "W3-017.yaml")
    app = make_app(AppConfig(discover=False, start_view="measure", unit=unit, export_dir=tmp_path,
                             log_path=tmp_path / "W3-017.yaml", subject_id="W3-017"),
                   services=si.services(recorder=rec, parse_measurements=real.parse_measurements,
                                        plan_placement=real.plan_placement,
                                        project_2d=real.project_2d))
    async with app.run_test(size=size) as pilot:
        await _enter(pilot, *typed)
        table = app.screen.query_one("#marks-table", DataTable)
        assert await _settle(pilot, app, lambda: table.row_count > 0)
        assert await _settle(pilot, app, lambda: rec.plan is not None)
        text = screen_text(app)
        head, rows = _table_lines(text)
        assert f" cm    {header} " in head  # the taped unit's column beside the cm
        cells = rows["Cz"].split()
        assert cells[cells.index(cz[0]) + 1] == cz[1]
        # The extra column pushes no other off the edge: the percent is whole (Cz 50 %).
        assert " % " in head and "50" in cells
        assert f"taped {' / '.join(typed)} {unit}" in " ".join(text.split())
        # F5: the printed sheet names the taped values too.
        await pilot.press("escape", "f5")
        assert await _settle(pilot, app, lambda: any(tmp_path.glob("marks-*.txt")))
    assert rec.taped == TapedMeasurements(unit, *taped)
    sheet = next(tmp_path.glob("marks-*.txt")).read_text(encoding="utf-8")
    assert f"(taped {' / '.join(typed)} {unit}, the same order)" in sheet


def _boxes(app) -> tuple[str, str, str]:  # type: ignore[no-untyped-def]
    return tuple(app.screen.query_one(f"#{k}", Input).value for k in ("ni", "pa", "circ"))  # type: ignore[return-value]


async def test_pasting_a_row_of_three_measurements_fills_the_form_in_order(tmp_path: Path) -> None:
    """A spreadsheet row "36⇥35⇥56" (or a column, one per line) pasted into any box fills
    nasion–inion, ear to ear and around in the form's order; the marks follow (Cz at 50 % of
    36 cm = 18.0 cm, Jasper 1958). The paste arrives as the terminal sends it: one Paste
    event to the focused box (Textual's bracketed paste)."""
    app = make_app(AppConfig(discover=False, start_view="measure", export_dir=tmp_path))
    async with app.run_test(size=(100, 40)) as pilot:
        app.post_message(events.Paste("36\t35\t56"))
        table = app.screen.query_one("#marks-table", DataTable)
        assert await _settle(pilot, app, lambda: table.row_count > 0)
        assert _boxes(app) == ("36", "35", "56")
        cz = next(r for r in _rows(table) if r[1] == "Cz")
        assert float(cz[4]) == pytest.approx(18.0)

        for key in ("ni", "pa", "circ"):
            app.screen.query_one(f"#{key}", Input).value = ""
        app.screen.query_one("#circ", Input).focus()  # pasted into the last box: still in order
        await pilot.pause(0.05)
        app.post_message(events.Paste("36,5\r\n35\r\n56\r\n"))  # a column, decimal comma
        assert await _settle(pilot, app, lambda: _boxes(app) == ("36,5", "35", "56"))

        app.screen.query_one("#pa", Input).focus()  # two numbers from ear to ear onwards
        await pilot.pause(0.05)
        app.post_message(events.Paste("34 55"))
        assert await _settle(pilot, app, lambda: _boxes(app) == ("36,5", "34", "55"))


async def test_a_paste_that_does_not_fit_is_refused_and_changes_nothing(tmp_path: Path) -> None:
    app = make_app(AppConfig(discover=False, start_view="measure", export_dir=tmp_path))
    async with app.run_test(size=(100, 40)) as pilot:
        await _enter(pilot, "36", "35", "56")
        assert await _settle(pilot, app, lambda: app.screen.plan is not None)
        app.post_message(events.Paste("36\t35\t56\t58"))
        assert await _settle(pilot, app, lambda: "pasted 4 numbers" in screen_text(app)), screen_text(app)
        assert _boxes(app) == ("36", "35", "56")
        app.post_message(events.Paste("36 cm\t35 cm\t56 cm"))
        assert await _settle(pilot, app, lambda: "pasted text not taken" in screen_text(app))
        assert _boxes(app) == ("36", "35", "56")
        # One value is an ordinary paste into the box with the focus.
        app.screen.query_one("#circ", Input).value = ""
        app.post_message(events.Paste("57"))
        assert await _settle(pilot, app, lambda: _boxes(app) == ("36", "35", "57"))
