"""The printable setup report: one self-contained HTML page (no scripts, no external files).

An inline SVG head map draws every electrode the log knows, labelled, coloured *and*
shaped by its final level (circle good, triangle check, square with a cross bad, dashed
ring with "?" no data), so it still reads on a black-and-white printout. Tables give
the summary, the final state per channel with time to good and impedance, the final\nmeasured values in plain words with units (bedside.metric_labels), findings,
the measurements and marks, the timeline, stream/session events and notes.

Positions come from the log's placement plan (this patient's measurements). Without a
plan, an average adult head (bedside.placement with 35/35/55 cm) places the electrodes
and the map says so. Electrodes with no position, and channels off the scalp (ECG, EOG
…), are drawn in a row under the head.
"""

from __future__ import annotations

import logging
import math
from collections.abc import Iterable
from datetime import datetime
from html import escape

from bedside.cautions import CAUTIONS, DISCLAIMER
from bedside.checks.types import (
    NO_DATA_KEY,
    NO_DATA_PRINT_COLOUR,
    NO_DATA_SYMBOL,
    NO_DATA_WORD,
    Level,
)
from bedside.errors import BedsideError
from bedside.metric_labels import METRIC_LABELS, metric_label, report_metrics
from bedside.placement.layout import EQUATOR_ON_MAP, project_2d
from bedside.record.log import SetupLog, TapedMeasurements
from bedside.record.trends import TrendBin

log = logging.getLogger("bedside")

#: Print colour, word and symbol per level key, all from bedside.checks.types (the one
#: vocabulary and palette); the shape is drawn by _marker().
LEVEL_STYLE: dict[str, tuple[str, str, str]] = {
    **{lv.key: (lv.print_colour, lv.word, lv.symbol) for lv in Level},
    NO_DATA_KEY: (NO_DATA_PRINT_COLOUR, NO_DATA_WORD, NO_DATA_SYMBOL),
}
#: Average adult head for the map when the log has no measurements (cm). Common practice.
_AVERAGE_HEAD_CM = (35.0, 35.0, 55.0)

_CSS = (
    """
body { font-family: system-ui, sans-serif; margin: 1.5em; color: #111; }
h1 { font-size: 1.4em; margin-bottom: 0.2em; } h2 { font-size: 1.1em; margin-top: 1.4em; }
table { border-collapse: collapse; margin: 0.4em 0; font-size: 0.9em; }
th, td { border: 1px solid #999; padding: 2px 6px; text-align: left; vertical-align: top; }
th { background: #eee; }
td.num { text-align: right; font-variant-numeric: tabular-nums; }
"""
    + "".join(f".lv-{k} {{ color: {c}; }} " for k, (c, _w, _s) in LEVEL_STYLE.items())
    + """
.small { font-size: 0.85em; color: #444; }
svg { max-width: 520px; width: 100%; height: auto; }
pre.cautions { white-space: pre-wrap; font-size: 0.8em; }
@media print { body { margin: 0.5cm; } h2 { page-break-after: avoid; } table { page-break-inside: auto; } }
"""
)


def _t(when: datetime | None) -> str:
    return when.strftime("%Y-%m-%d %H:%M:%S %z") if when is not None else "—"


def _clock(when: datetime) -> str:
    return when.strftime("%H:%M:%S")


def _level_cell(key: str) -> str:
    colour, word, symbol = LEVEL_STYLE.get(key, LEVEL_STYLE["no_data"])
    return f'<span class="lv-{escape(key)}">{symbol} {escape(word)}</span>'


def _table(headers: Iterable[str], rows: Iterable[Iterable[str]], *, cls: str = "") -> str:
    """rows hold ready HTML cells (escape before)."""
    head = "".join(f"<th>{escape(h)}</th>" for h in headers)
    body = "".join("<tr>" + "".join(cells) + "</tr>" for cells in rows)
    cls_attr = f' class="{cls}"' if cls else ""
    return f"<table{cls_attr}><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"


def _td(text: object, *, num: bool = False) -> str:
    return f'<td class="num">{escape(str(text))}</td>' if num else f"<td>{escape(str(text))}</td>"


# -- the head map ---------------------------------------------------------------------


def _positions(log_: SetupLog, names: list[str]) -> tuple[dict[str, tuple[float, float, float]], str]:
    """Positions (mm, x right, y front, z up) for the names, and where they came from."""
    if log_.plan is not None and log_.plan.positions_mm:
        return log_.plan_positions_mm(), "positions from this patient's head measurements"
    try:
        from bedside.placement import systems
        from bedside.placement.calculator import plan_placement
        from bedside.placement.types import HeadMeasurements

        plan = plan_placement(HeadMeasurements(*_AVERAGE_HEAD_CM), "10-10", "modern")
    except (ImportError, BedsideError) as exc:  # placement unavailable: list them instead
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


def _final_key(log_: SetupLog, name: str) -> str:
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
        key = _final_key(log_, name)
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


def _span(seconds: float) -> str:
    """'42 s', '1 min 5 s' (whole seconds; under a second as 0.4 s)."""
    if seconds < 1:
        return f"{seconds:.1f} s"
    whole = round(seconds)
    minutes, rest = divmod(whole, 60)
    return f"{minutes} min {rest} s" if minutes else f"{rest} s"


def all_good_sentence(log_: SetupLog) -> str:
    """When every scalp electrode was good at once, as a sentence."""
    seconds = log_.time_to_all_good_s()
    if seconds is None:
        return "Never reached: at no moment were all scalp electrodes good together."
    if seconds == 0:
        return "Reached at once: every scalp electrode was good from the first verdict."
    return f"Reached {_span(seconds)} after the first verdict."


def ready_sentence(log_: SetupLog) -> str:
    """The start gate: when it was first reached and what was accepted, as a sentence."""
    r = log_.ready
    if r is None:
        return "not recorded (the start gate was not reached while the log was kept)"
    words = f"at {_t(r.at)}: every scalp electrode good for {r.held_s:g} s"
    if r.accepted:
        words += " except " + "; ".join(f"{a.electrode} (accepted: {a.reason})" for a in r.accepted)
    return words


def tap_sentence(log_: SetupLog) -> str:
    """The newest tap test (which lead is in which input) as a sentence."""
    if not log_.tap_tests:
        return "not done (no tap test was recorded)"
    t = log_.tap_tests[-1]
    confirmed = sum(c.outcome == "confirmed" for c in t.results)
    words = f"at {_t(t.at)} ({t.how or 'bedside'}): {confirmed} of {len(t.results)} electrodes confirmed"
    if t.passed:
        return words + ", each touch on its own channel"
    return words + ("; " + "; ".join(t.problems) if t.problems else "")


def _measured_values(log_: SetupLog, names: list[str]) -> list[str]:
    """The final values per electrode, in plain words with units (bedside.metric_labels),
    grouped by what they are about; technical values stay in the setup log file only."""
    finals = [log_.final[n] for n in names if n in log_.final]
    present: set[str] = set()
    for one in finals:
        present.update(one.metrics)
    keys = report_metrics(present)
    if not keys:
        return []
    groups: list[tuple[str, int]] = []
    for key in keys:
        group = METRIC_LABELS[key].group
        if groups and groups[-1][0] == group:
            groups[-1] = (group, groups[-1][1] + 1)
        else:
            groups.append((group, 1))
    group_row = '<tr><th rowspan="2">Electrode</th>' + "".join(
        f'<th colspan="{n}">{escape(g)}</th>' for g, n in groups
    ) + "</tr>"
    head_row = "<tr>" + "".join(f"<th>{escape(METRIC_LABELS[k].heading())}</th>" for k in keys) + "</tr>"
    body = []
    for name in names:
        final = log_.final.get(name)
        if final is None:
            continue
        cells = []
        for key in keys:
            value = final.metrics.get(key)
            cells.append(_td(METRIC_LABELS[key].format(value if isinstance(value, float | int) else None), num=True))
        body.append("<tr>" + _td(name) + "".join(cells) + "</tr>")
    left_out = sorted({metric_label(k).label for k in present} - {METRIC_LABELS[k].label for k in keys})
    note = (
        f'<p class="small">The setup log file keeps {len(left_out)} further technical value'
        f"{'s' if len(left_out) != 1 else ''} per electrode ({escape(', '.join(left_out).lower())}).</p>"
        if left_out
        else ""
    )
    return [
        "<h2>Measured values at the end</h2>",
        f"<table><thead>{group_row}{head_row}</thead><tbody>{''.join(body)}</tbody></table>",
        note,
    ]


def _as_taped(taped: TapedMeasurements | None) -> str:
    """The measurements as taped, e.g. " (taped 14.2 / 13.8 / 22 in)", when not in cm."""
    return f" (taped {escape(taped.text())})" if taped is not None and taped.unit != "cm" else ""


def _spark(points: list[tuple[float, float | None]], t_max: float, v_max: float, *, label: str) -> str:
    """A small line plot (SVG, 160×28 px): values over the recording's time, 0 at the
    bottom and v_max at the top; gaps where a value is missing."""
    w, h, pad = 160.0, 28.0, 2.0
    runs: list[list[str]] = [[]]
    for t, v in points:
        if v is None:
            runs.append([])
            continue
        x = pad + (w - 2 * pad) * (t / t_max if t_max > 0 else 0.0)
        y = h - pad - (h - 2 * pad) * (min(v, v_max) / v_max if v_max > 0 else 0.0)
        runs[-1].append(f"{x:.1f},{y:.1f}")
    lines = "".join(f'<polyline fill="none" stroke="#1f4e79" stroke-width="1.5" points="{" ".join(r)}"/>'
                    for r in runs if len(r) > 1)
    dots = "".join(f'<circle cx="{r[0].split(",")[0]}" cy="{r[0].split(",")[1]}" r="1.5" fill="#1f4e79"/>'
                   for r in runs if len(r) == 1)
    return (f'<svg width="{w:.0f}" height="{h:.0f}" viewBox="0 0 {w:.0f} {h:.0f}" role="img" '
            f'aria-label="{escape(label)}"><rect x="0.5" y="0.5" width="{w - 1:.0f}" height="{h - 1:.0f}" '
            f'fill="none" stroke="#bbb"/>{lines}{dots}</svg>')


def trends_section(log_: SetupLog) -> list[str]:
    """Per electrode: the share of each 10-min bin it was good, its mean mains and
    |drift|, as small plots over the recording (only with two bins or more)."""
    by: dict[str, list[TrendBin]] = {}
    for b in log_.trends:
        by.setdefault(b.electrode, []).append(b)
    if not by or max(len(v) for v in by.values()) < 2:
        return []
    t_max = max(b.start_s for b in log_.trends) or 1.0
    mains_max = max([b.mains_uv for b in log_.trends if b.mains_uv is not None] or [1.0]) or 1.0
    drift_max = max([b.drift_uv_per_s for b in log_.trends if b.drift_uv_per_s is not None] or [1.0]) or 1.0
    bin_min = (log_.trends[1].start_s - log_.trends[0].start_s) / 60.0 if len(log_.trends) > 1 else 10.0
    rows = []
    for name, bins in by.items():
        good: list[tuple[float, float | None]] = [(b.start_s, b.good_fraction) for b in bins]
        worst = min(b.good_fraction for b in bins)
        rows.append([
            _td(name),
            f"<td>{_spark(good, t_max, 1.0, label=f'{name}: share of time good')}</td>",
            _td(f"{worst:.0%}", num=True),
            f"<td>{_spark([(b.start_s, b.mains_uv) for b in bins], t_max, mains_max, label=f'{name}: mains')}</td>",
            f"<td>{_spark([(b.start_s, b.drift_uv_per_s) for b in bins], t_max, drift_max, label=f'{name}: drift')}</td>",
        ])
    hours = t_max / 3600.0
    return [
        "<h2>Trends over the recording</h2>",
        f"<p>Per electrode, over {hours:.1f} h in bins of about {max(bin_min, 0.0):.0f} min: the share of each bin "
        f"it was good (top of the plot: all of it), its mean mains amplitude (top: {mains_max:.1f} µV, the "
        f"highest of any electrode) and its mean drift (top: {drift_max:.0f} µV/s).</p>",
        _table(("Electrode", "Time good", "Lowest", "Mains", "Drift"), rows),
    ]


def render_report(log_: SetupLog) -> str:
    """The whole report as one HTML document (UTF-8 text)."""
    subject = log_.subject_id or "(no ID)"
    ttg = log_.time_to_good_s()
    imp = log_.latest_impedances_kohm()
    duration = ""
    if log_.started_at and log_.ended_at:
        seconds = int((log_.ended_at - log_.started_at).total_seconds())
        duration = f"{seconds // 60} min {seconds % 60} s"
    stream = log_.stream
    summary_rows = [
        ("Subject / study ID", subject),
        ("Technologist", log_.technologist or "—"),
        ("Started", _t(log_.started_at)),
        ("Ended", _t(log_.ended_at) + (f" ({duration})" if duration else "")),
        ("Time zone", log_.time_zone or "—"),
        ("All scalp electrodes good at once", all_good_sentence(log_)),
        (
            "Stream",
            f"{stream.identity.name} ({stream.identity.type}), source_id {stream.identity.source_id}, "
            f"host {stream.identity.hostname}, {stream.identity.n_channels} channels at "
            f"{stream.identity.nominal_rate_hz:g} Hz"
            if stream
            else "—",
        ),
        *(
            (
                "Earlier stream",
                f"{sec.stream.identity.name}, source_id {sec.stream.identity.source_id}, until "
                f"{_t(sec.ended_at)} — its verdicts are kept in the log, apart from this report's",
            )
            for sec in log_.earlier_streams
        ),
        ("Reference / ground", f"{log_.reference or '—'} / {log_.ground or '—'}"),
        ("Mains", f"{log_.power_line_hz:g} Hz" if log_.power_line_hz else "—"),
        ("Ready to record", ready_sentence(log_)),
        ("Tap test", tap_sentence(log_)),
        (
            "Signed off",
            (f"{log_.sign_off.initials} at {_t(log_.sign_off.at)}" + "".join(
                f"; {a.electrode} not good, accepted: {a.reason}" for a in log_.sign_off.exceptions))
            if log_.sign_off else "not signed off",
        ),
        ("Department profile", (f"{log_.profile.name} (sha256 {log_.profile.sha256[:16]}…)"
                                if log_.profile is not None else "not recorded")),
        ("Software", f"bedside {log_.software_version}"),
        (
            "Config",
            (f"sha256 {log_.config_hash[:16]}… ({', '.join(log_.config_files)})" if log_.config_hash else "—"),
        ),
    ]
    counts = {k: 0 for k in LEVEL_STYLE}
    names = map_electrodes(log_)
    for name in names:
        counts[_final_key(log_, name)] = counts.get(_final_key(log_, name), 0) + 1
    count_text = ", ".join(f"{LEVEL_STYLE[k][2]} {counts[k]} {LEVEL_STYLE[k][1]}" for k in LEVEL_STYLE)

    out: list[str] = [
        "<!DOCTYPE html>",
        '<html lang="en"><head><meta charset="utf-8">',
        f"<title>EEG setup report — {escape(subject)}</title>",
        f"<style>{_CSS}</style></head><body>",
        f"<h1>EEG setup report — {escape(subject)}</h1>",
        f'<p class="small">{escape(DISCLAIMER)}</p>',
        "<h2>Summary</h2>",
        _table(("", ""), ([f"<th>{escape(k)}</th>", _td(v)] for k, v in summary_rows)),
        f"<h2>Head map</h2><p>{escape(count_text)}</p>",
        head_map_svg(log_),
        "<h2>Final state per channel</h2>",
    ]
    final_rows = []
    for name in names:
        final = log_.final.get(name)
        key = final.level if final else "no_data"
        t_good = ttg.get(name)
        final_rows.append(
            [
                _td(name),
                f"<td>{_level_cell(key)}</td>",
                _td(f"{t_good:.1f}" if t_good is not None else "—", num=True),
                _td(f"{imp[name]:g}" if name in imp else "—", num=True),
                _td("; ".join(final.reasons) if final else ""),
                _td(_clock(final.at) if final else "—"),
            ]
        )
    out.append(
        _table(
            ("Electrode", "Level", "Time to good (s)", "Impedance (kΩ)", "Reasons", "As of"),
            final_rows,
        )
    )
    out.extend(_measured_values(log_, names))
    if log_.findings:
        out.append("<h2>Findings</h2>")
        out.append(
            _table(
                ("Time", "Change", "Kind", "Electrodes", "Level", "Reason"),
                (
                    [
                        _td(_clock(f.at)),
                        _td(f.change),
                        _td(f.kind.replace("_", " ")),
                        _td(", ".join(f.electrodes)),
                        f"<td>{_level_cell(f.level)}</td>",
                        _td(f.reason),
                    ]
                    for f in log_.findings
                ),
            )
        )
    if log_.plan is not None:
        m = log_.plan.measurements
        out.append("<h2>Measurements and marks</h2>")
        out.append(
            f"<p>{escape(log_.plan.system)} ({escape(log_.plan.names)} names): nasion–inion "
            f"{m.nasion_inion_cm:g} cm, preauricular {m.preauricular_cm:g} cm, circumference "
            f"{m.circumference_cm:g} cm{_as_taped(log_.plan.taped)}.</p>"
        )
        out.append(
            _table(
                ("Line", "Site", "Measured from", "Distance (cm)", "Step (cm)", "% of line"),
                (
                    [
                        _td(mk.line),
                        _td(mk.name + (f" ({mk.other_name})" if mk.other_name else "")),
                        _td(mk.start),
                        *(_td(cell, num=mk.measured) for cell in mk.distance_cells()),
                    ]
                    for mk in log_.plan.marks
                ),
            )
        )
    out.extend(trends_section(log_))
    out.append("<h2>Timeline</h2>")
    if log_.timeline:
        start = log_.started_at or log_.timeline[0].at
        out.append(
            _table(
                ("Time", "+s", "Electrode", "From", "To", "Reason"),
                (
                    [
                        _td(_clock(c.at)),
                        _td(f"{(c.at - start).total_seconds():.1f}", num=True),
                        _td(c.electrode),
                        f"<td>{_level_cell(c.from_level) if c.from_level != 'none' else '—'}</td>",
                        f"<td>{_level_cell(c.to_level)}</td>",
                        _td("; ".join(c.reasons)),
                    ]
                    for c in log_.timeline
                ),
            )
        )
    else:
        out.append("<p>No verdicts were recorded.</p>")
    if log_.events:
        out.append("<h2>Session and stream events</h2>")
        out.append(
            _table(
                ("Time", "Event", "Detail"),
                ([_td(_t(e.at)), _td(e.kind.replace("_", " ")), _td(e.detail)] for e in log_.events),
            )
        )
    out.append("<h2>Notes</h2>")
    if log_.notes:
        out.append(
            _table(
                ("Time", "Note"),
                ([_td(_t(n.at)), f'<td style="white-space:pre-wrap">{escape(n.text)}</td>'] for n in log_.notes),
            )
        )
    else:
        out.append("<p>No notes.</p>")
    if log_.impedances:
        out.append("<h2>Impedances entered</h2>")
        out.append(
            _table(
                ("Time", "Electrode", "kΩ"),
                ([_td(_clock(e.at)), _td(e.electrode), _td(f"{e.kohm:g}", num=True)] for e in log_.impedances),
            )
        )
    out.append(f'<pre class="cautions">{escape(CAUTIONS)}</pre>')
    out.append("</body></html>")
    return "\n".join(out) + "\n"
