"""One marking sheet: what F5 saves in the app is the text ``bedside measure`` prints.

The worked head is the calculator tests' example (36 / 35 / 56 cm, ours; the same head
in mm), with Jasper 1958's 10-20 percentages applied by hand: Fz 30 % of nasion–inion
36 cm = 10.8 cm from Nz, step 7.2 cm; T7 (T3) 10 % of the preauricular 35 cm = 3.5 cm
from LPA and 25 % of the circumference 56 cm = 14.0 cm from Fpz; Cz 50 % = 18.0 cm.
"""

from __future__ import annotations

import contextlib
import io
from pathlib import Path

import pytest
from textual.widgets import DataTable

from bedside.cli import main
from bedside.ui.app import make_app
from bedside.ui.config import AppConfig

pytestmark = pytest.mark.asyncio


def _cli_sheet(*argv: str) -> str:
    out = io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(io.StringIO()):
        assert main(["measure", *argv]) == 0
    return out.getvalue()


async def _f5_sheet(tmp_path: Path, unit: str, typed: tuple[str, str, str], names: str) -> str:
    app = make_app(AppConfig(discover=False, start_view="measure", unit=unit, names=names,
                             export_dir=tmp_path))
    async with app.run_test(size=(100, 40)) as pilot:
        for key, value in zip(("ni", "pa", "circ"), typed, strict=True):
            app.screen.query_one(f"#{key}").value = value  # type: ignore[attr-defined]
        table = app.screen.query_one("#marks-table", DataTable)
        for _ in range(80):
            await pilot.pause(0.05)
            if table.row_count > 0 and app.screen.plan is not None:  # type: ignore[attr-defined]
                break
        await pilot.press("escape", "f5")
        for _ in range(80):
            await pilot.pause(0.05)
            if any(tmp_path.glob("marks-*.txt")):
                break
    return next(tmp_path.glob("marks-*.txt")).read_text(encoding="utf-8")


def _row(sheet: str, site: str, start: str) -> list[str]:
    return next(ln.split() for ln in sheet.splitlines()
                if ln.split()[:1] == [site] and start in ln.split())


@pytest.mark.parametrize(
    ("unit", "typed", "names", "t7", "extra"),
    [
        ("cm", ("36", "35", "56"), "modern", ["T7", "(T3)"], {}),
        # The same head taped in mm: each distance also in whole mm (Fz 108 mm, T3 140 mm).
        ("mm", ("360", "350", "560"), "classic", ["T3", "(T7)"], {"Fz": "108", "T3": "140"}),
    ],
)
async def test_f5_saves_the_sheet_bedside_measure_prints(
    tmp_path: Path, unit: str, typed: tuple[str, str, str], names: str,
    t7: list[str], extra: dict[str, str],
) -> None:
    cli = _cli_sheet("--nasion-inion", typed[0], "--preauricular", typed[1],
                     "--circumference", typed[2], "--unit", unit, "--names", names)
    app = await _f5_sheet(tmp_path, unit, typed, names)
    assert app == cli  # one function writes both: same rows, order and rounding
    for sheet in (cli, app):
        fz = _row(sheet, "Fz", "Nz")
        assert fz[:5] == ["Fz", "Nz", "10.8", "7.2", "30"]
        assert _row(sheet, "Cz", "Nz")[:5] == ["Cz", "Nz", "18.0", "7.2", "50"]
        assert _row(sheet, t7[0], "LPA")[:6] == [*t7, "LPA", "3.5", "3.5", "10"]
        assert _row(sheet, t7[0], "Fpz")[:6] == [*t7, "Fpz", "14.0", "5.6", "25"]
        if extra:
            assert fz[5] == extra["Fz"] and _row(sheet, t7[0], "Fpz")[6] == extra["T3"]
            assert f"(taped {' / '.join(typed)} {unit}, the same order)" in sheet
        assert "does not diagnose" in sheet
