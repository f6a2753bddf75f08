"""The printable report's head map: an inline SVG of every electrode the log knows.

Each electrode is labelled, coloured *and* shaped by its final level (circle good,
triangle check, square with a cross bad, dashed ring with "?" no data), so it still
reads on a black-and-white printout. Sites are placed with the app's own projection
(:func:`bedside.placement.layout.project_2d`); positions come from the log's placement
plan (this patient's measurements) or, without one, from the app's average adult head
(``placement.layout.AVERAGE_ADULT``), and the map says which. Electrodes with no
position, and channels off the scalp (ECG, EOG …), are drawn in a row under the head.
"""

from __future__ import annotations

import logging
import math
from html import escape

from bedside.checks.types import (
    NO_DATA_KEY,
    NO_DATA_PRINT_COLOUR,
    NO_DATA_SYMBOL,
    NO_DATA_WORD,
    Level,
)
from bedside.errors import BedsideError
from bedside.placement import systems
from bedside.placement.calculator import plan_placement
from bedside.placement.layout import AVERAGE_ADULT, EQUATOR_ON_MAP, project_2d
from bedside.record.log import SetupLog

log = logging.getLogger("bedside")

#: Print colour, word and symbol per level key, all from bedside.checks.types (the one
#: vocabulary and palette); the shape is drawn by _marker().
LEVEL_STYLE: dict[str, tuple[str, str, str]] = {
    **{lv.key: (lv.print_colour, lv.word, lv.symbol) for lv in Level},
    NO_DATA_KEY: (NO_DATA_PRINT_COLOUR, NO_DATA_WORD, NO_DATA_SYMBOL),
}



def _positions(log_: SetupLog, names: list[str]) -> tuple[dict[str, tuple[float, float, float]], str]:
    """Positions (mm, x right, y front, z up) for the names, and where they came from."""
    if log_.plan is not None and log_.plan.positions_mm:
        return log_.plan_positions_mm(), "positions from this patient's head measurements"
    try:  # the app's average adult head (placement.layout.AVERAGE_ADULT)
        plan = plan_placement(AVERAGE_ADULT, "10-10", "modern")
    except BedsideError as exc:  # no head model: list them instead
        log.debug("no head model for the report map: %s", exc)
        return {}, "no positions known: electrodes are listed under the head"
    found: dict[str, tuple[float, float, float]] = {}
    for name in names:
        modern = systems.canonical_name(name)
        if modern is not None and modern in plan.positions_mm:
            found[name] = plan.positions_mm[modern]
    return found, "no head measurements in this log: positions from an average adult head"


def _project(xyz: tuple[float, float, float], radius_px: float) -> tuple[float, float]:
    """A site's place on the page: :func:`bedside.placement.layout.project_2d`, the
    projection the app's head map uses (azimuthal equidistant from the vertex, front up,
    left on the left), scaled so that 90° from the vertex falls on the head outline of
    ``radius_px``; the page's y grows downwards."""
    x, y = project_2d(xyz)
    scale = radius_px / EQUATOR_ON_MAP
    return x * scale, -y * scale


def _marker(key: str, cx: float, cy: float, size: float) -> str:
    colour = LEVEL_STYLE.get(key, LEVEL_STYLE["no_data"])[0]
    s = size
    if key == "good":
        return f'<circle cx="{cx:.1f}" cy="{cy:.1f}" r="{s:.1f}" fill="{colour}" stroke="#000" stroke-width="1"/>'
    if key == "check":
        pts = f"{cx:.1f},{cy - s * 1.15:.1f} {cx + s * 1.1:.1f},{cy + s * 0.8:.1f} {cx - s * 1.1:.1f},{cy + s * 0.8:.1f}"
        return f'<polygon points="{pts}" fill="{colour}" stroke="#000" stroke-width="1"/>'
    if key == "bad":
        d = s * 0.9
        return (
            f'<rect x="{cx - d:.1f}" y="{cy - d:.1f}" width="{2 * d:.1f}" height="{2 * d:.1f}" '
            f'fill="{colour}" stroke="#000" stroke-width="1"/>'
            f'<path d="M{cx - d * 0.6:.1f},{cy - d * 0.6:.1f} L{cx + d * 0.6:.1f},{cy + d * 0.6:.1f} '
            f'M{cx + d * 0.6:.1f},{cy - d * 0.6:.1f} L{cx - d * 0.6:.1f},{cy + d * 0.6:.1f}" '
            'stroke="#fff" stroke-width="2"/>'
        )
    return (
        f'<circle cx="{cx:.1f}" cy="{cy:.1f}" r="{s:.1f}" fill="#fff" stroke="{colour}" '
        'stroke-width="1.5" stroke-dasharray="3,2"/>'
        f'<text x="{cx:.1f}" y="{cy + s * 0.45:.1f}" font-size="{s * 1.3:.1f}" text-anchor="middle" '
        'fill="#333">?</text>'
    )


def map_electrodes(log_: SetupLog) -> list[str]:
    """The electrodes the head map draws: every channel, verdict and impedance in the log
    (the plan's sites when the log has none of those)."""
    names: list[str] = []
    seen: set[str] = set()
    sources: list[str] = []
    if log_.stream is not None:
        sources += [c.name for c in log_.stream.channels]
    sources += [c.electrode for c in log_.timeline]
    sources += list(log_.final)
    sources += [e.electrode for e in log_.impedances]
    if not sources and log_.plan is not None:
        sources = list(log_.plan.positions_mm) or [m.name for m in log_.plan.marks]
    for name in sources:
        if name not in seen:
            seen.add(name)
            names.append(name)
    return names


def final_key(log_: SetupLog, name: str) -> str:
    final = log_.final.get(name)
    return final.level if final is not None else "no_data"


def head_map_svg(log_: SetupLog) -> str:
    """The SVG head map (a string). Each electrode is a ``<g class="electrode">`` with
    ``data-name`` and ``data-level`` attributes, a marker and a text label."""
    names = map_electrodes(log_)
    scalp_kinds = {c.name: c.is_scalp for c in log_.stream.channels} if log_.stream else {}
    positions, origin = _positions(log_, names)
    radius = 150.0
    size = 7.0
    placed: list[tuple[str, float, float]] = []
    unplaced: list[str] = []
    for name in names:
        if scalp_kinds.get(name, True) and name in positions:
            x, y = _project(positions[name], radius)
            placed.append((name, x, y))
        else:
            unplaced.append(name)
    extent = max([radius + 30.0] + [math.hypot(x, y) + 25.0 for _, x, y in placed])
    per_row = max(1, int((2 * extent) // 46))
    rows = math.ceil(len(unplaced) / per_row) if unplaced else 0
    top = -extent - 20.0
    height = 2 * extent + 40.0 + (rows * 34.0 + 24.0 if rows else 0.0) + 40.0
    parts = [
        f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="{-extent:.0f} {top:.0f} {2 * extent:.0f} {height:.0f}" '
        'role="img" aria-label="head map: final level of every electrode" font-family="sans-serif">',
        "<title>Head map (seen from above, nose up, left on the left)</title>",
        # Head outline at 90° from the vertex (the nasion-inion level), nose and ears.
        f'<circle cx="0" cy="0" r="{radius:.0f}" fill="none" stroke="#444" stroke-width="2"/>',
        f'<path d="M-14,{-radius + 1:.0f} L0,{-radius - 16:.0f} L14,{-radius + 1:.0f}" fill="none" stroke="#444" stroke-width="2"/>',
        f'<ellipse cx="{-radius - 7:.0f}" cy="0" rx="7" ry="20" fill="none" stroke="#444" stroke-width="2"/>',
        f'<ellipse cx="{radius + 7:.0f}" cy="0" rx="7" ry="20" fill="none" stroke="#444" stroke-width="2"/>',
        f'<text x="{-radius - 7:.0f}" y="-26" font-size="10" text-anchor="middle">L</text>',
        f'<text x="{radius + 7:.0f}" y="-26" font-size="10" text-anchor="middle">R</text>',
    ]

    def electrode(name: str, x: float, y: float, note: str) -> str:
        key = final_key(log_, name)
        final = log_.final.get(name)
        reasons = "; ".join(final.reasons) if final is not None and final.reasons else ""
        tip = f"{name}: {LEVEL_STYLE.get(key, LEVEL_STYLE['no_data'])[1]}" + (f" — {reasons}" if reasons else "") + note
        return (
            f'<g class="electrode" data-name="{escape(name)}" data-level="{escape(key)}">'
            f"<title>{escape(tip)}</title>{_marker(key, x, y, size)}"
            f'<text x="{x:.1f}" y="{y + size + 11:.1f}" font-size="10" text-anchor="middle">{escape(name)}</text></g>'
        )

    for name, x, y in placed:
        parts.append(electrode(name, x, y, ""))
    y0 = extent + 30.0
    if unplaced:
        parts.append(
            f'<text x="{-extent + 6:.0f}" y="{y0:.0f}" font-size="10" fill="#333">'
            "off the scalp or position unknown:</text>"
        )
        for i, name in enumerate(unplaced):
            row, col = divmod(i, per_row)
            x = -extent + 23.0 + col * 46.0
            y = y0 + 20.0 + row * 34.0
            parts.append(electrode(name, x, y, " (not on the map)"))
        y0 += rows * 34.0 + 24.0
    # Legend: colour and shape together, never colour alone.
    lx = -extent + 12.0
    for i, key in enumerate(("good", "check", "bad", "no_data")):
        x = lx + i * 80.0
        parts.append(_marker(key, x, y0 + 18.0, 6.0))
        parts.append(
            f'<text x="{x + 11:.0f}" y="{y0 + 22:.0f}" font-size="11">{escape(LEVEL_STYLE[key][1])}</text>'
        )
    parts.append(f'<text x="{-extent + 6:.0f}" y="{y0 + 40:.0f}" font-size="9" fill="#555">{escape(origin)}</text>')
    parts.append("</svg>")
    return "".join(parts)


# -- the page -------------------------------------------------------------------------
