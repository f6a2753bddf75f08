"""The printable setup report: one self-contained HTML page (no scripts, no external files).

The head map (an inline SVG, ``record/html_map.py``) draws every electrode the log
knows, coloured *and* shaped by its final level. Tables give
the summary, the final state per channel with time to good and impedance, the final
measured values in plain words with units (bedside.metric_labels), findings,
the measurements and marks, the timeline, stream/session events and notes.

"""

from __future__ import annotations

import logging
from collections.abc import Iterable
from datetime import datetime
from html import escape

from bedside.cautions import CAUTIONS, DISCLAIMER
from bedside.metric_labels import METRIC_LABELS, metric_label, report_metrics
from bedside.record.html_map import LEVEL_STYLE, final_key, head_map_svg, map_electrodes
from bedside.record.log import SetupLog, TapedMeasurements
from bedside.record.trends import TrendBin

log = logging.getLogger("bedside")

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
        counts[final_key(log_, name)] = counts.get(final_key(log_, name), 0) + 1
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
