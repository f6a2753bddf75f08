"""One head projection: the app's head map and the HTML report's map place every site
with ``bedside.placement.layout.project_2d``.

The head is the calculator tests' example (36 / 35 / 56 cm, ours). Hand checks of the
projection itself (azimuthal equidistant from the vertex, Snyder 1987, "Map
projections — a working manual", USGS PP 1395, ch. 25): Cz, at the vertex, is the
centre of both maps; the midline sites (Fpz, Fz, Pz, Oz) lie on the vertical through
it; a left site and its right mirror lie at mirrored places.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest
from textual.widgets import Input

from bedside.placement import HeadMeasurements, plan_placement
from bedside.placement.layout import EQUATOR_ON_MAP, project_2d
from bedside.record.html import head_map_svg
from bedside.record.log import PlanRecord, SetupLog
from bedside.ui.app import make_app
from bedside.ui.config import AppConfig
from bedside.ui.widgets.head_map import HeadMap

HEAD = HeadMeasurements(36.0, 35.0, 56.0)
#: The report's head outline radius (px): 90° from the vertex (record/html.head_map_svg).
OUTLINE_PX = 150.0
_MARKER = re.compile(r'data-name="([^"]+)"[^>]*><title>[^<]*</title><circle cx="([-\d.]+)" cy="([-\d.]+)"')


def _report_points(plan_names: str) -> dict[str, tuple[float, float]]:
    """Each electrode's marker centre on the report's map, back in map units
    (x right, y up; 1 at the map's rim)."""
    plan = plan_placement(HEAD, "10-20", plan_names)
    log_ = SetupLog(subject_id="W3-017", plan=PlanRecord(plan.measurements, plan.system, plan.names,
                                                         plan.marks, plan.positions_mm))
    scale = OUTLINE_PX / EQUATOR_ON_MAP
    return {m.group(1): (float(m.group(2)) / scale, -float(m.group(3)) / scale)
            for m in _MARKER.finditer(head_map_svg(log_))}


def test_the_report_places_sites_with_the_one_projection() -> None:
    plan = plan_placement(HEAD)
    got = _report_points("modern")
    assert set(got) == set(plan.positions_mm)
    tol = 0.05 / (OUTLINE_PX / EQUATOR_ON_MAP) + 1e-9  # the SVG prints 0.1 px
    for name, xyz in plan.positions_mm.items():
        assert got[name] == pytest.approx(project_2d(xyz), abs=tol), name
    assert got["Cz"] == pytest.approx((0.0, 0.0), abs=tol)
    assert all(abs(got[n][0]) <= tol for n in ("Fpz", "Fz", "Pz", "Oz"))
    assert got["Fp1"] == pytest.approx((-got["Fp2"][0], got["Fp2"][1]), abs=2 * tol)


@pytest.mark.asyncio
async def test_app_and_report_draw_each_site_at_the_same_place(tmp_path: Path) -> None:
    app = make_app(AppConfig(discover=False, start_view="measure", export_dir=tmp_path))
    async with app.run_test(size=(100, 40)) as pilot:
        for key, value in (("ni", "36"), ("pa", "35"), ("circ", "56")):
            app.screen.query_one(f"#{key}", Input).value = value
        head_map = app.screen.query_one("#marks-map", HeadMap)
        for _ in range(80):
            await pilot.pause(0.05)
            if head_map.points:
                break
        in_app = dict(head_map.points)
    report = _report_points("modern")
    assert in_app and set(in_app) == set(report)
    tol = 0.05 / (OUTLINE_PX / EQUATOR_ON_MAP) + 1e-9
    for name, point in in_app.items():
        assert report[name] == pytest.approx(point, abs=tol), name
