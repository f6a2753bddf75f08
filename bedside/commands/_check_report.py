"""The report of ``bedside check``: the JSON document, the table, and the exit code.

Pure functions of the last frame and the look (:class:`bedside.commands.check.Look`):
no stream, no threads, so they are tested on frames built by hand.

JSON (``--format json``): one object ::

    {"stream": {"identity": {...}, "health": {...}},
     "channels": [{"name", "label", "type", "level", "reasons", "metrics",
                   "worst_level", "worst_reason", "not_good_s",
                   "events": [{"t_s", "level", "reason"}, ...]}, ...],
     "channel_setup": {"summary", "reference", "amplifier", "neighbours", "notes"},
     "findings": [{"kind", "electrodes", "level", "reason"}, ...],
     "run_findings": [{"kind", "electrodes", "level", "reason", "first_s", "last_s"}, ...],
     "mains_hz": 50, "window_s": 4.0, "seconds": 10.0, "looked_s": 10.0,
     "first_verdict_s": 2.3, "judged_on": "run", "stream_lost": false}

plus, with ``--until-good``, ``"ready": {"at_s", "held_s", "accepted": [{"electrode",
"reason"}]}`` (null when it was not reached) and ``"ready_waiting"``, the electrodes not
good at the end when it was not reached. ``level``, ``reasons``, ``metrics`` and
``findings`` are the end state; ``worst_level`` and ``worst_reason`` the worst level of
the run and its reason; ``not_good_s`` the seconds spent ``check`` or ``bad``; ``events``
the level changes (the first is the first verdict after the warm-up); ``run_findings``
every finding seen during the run; times (``t_s``, ``at_s`` …) are seconds from the
start of the look.

With a department profile (``--profile NAME``, default adult; configs/profiles/), the
report also has ``"profile": {"name", "title", "sha256", "impedance_limit_kohm",
"balance_ratio", "balance_min_kohm", "recheck_h", "montage", "montage_missing"}`` and
``"impedance": {"limit_kohm", "rule", "judged", "over_limit", "unbalanced",
"implausible"}``, and each channel ``"impedance": {"kohm", "source", "level", "reason"}``
(null when no value): the amplifier's (the stream's ``desc/channels/channel/impedance``,
kΩ) or one typed into the resumed ``--log`` (a typed value wins). An impedance over the
limit, unbalanced or implausible gives exit 1; with ``--until-good`` an electrode over
the limit keeps the gate shut unless accepted (``--accept``).

``name`` is bedside's normalised name (``FC5`` from ``Fc5.``), ``label`` the stream's own,
``type`` the BIDS channels.tsv type. ``level`` is ``good``, ``check``, ``bad``,
``no_data`` or ``not_judged`` (a channel that is not an electrode: trigger, sensor); metrics carry their unit in
their name; numbers that cannot be computed are null.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from bedside.cautions import DISCLAIMER
from bedside.checks.impedance import judge, merge
from bedside.checks.ready import NOT_JUDGED_KEY
from bedside.checks.types import LEVEL_SYMBOLS, LEVEL_WORDS
from bedside.metric_labels import short_header
from bedside.record.plain import plain

if TYPE_CHECKING:
    from bedside.checks.types import QualityFrame
    from bedside.commands.check import Look
    from bedside.stream.types import ChannelInfo, StreamIdentity

EXIT_OK, EXIT_ATTENTION = 0, 1

#: Metrics shown in the table, with their column heads (bedside.metric_labels).
TABLE_METRICS = tuple(
    (key, short_header(key)) for key in ("mains_uv", "rms_uv", "ptp_uv", "drift_uv_per_s")
)


class ImpedanceReport:
    """The impedances judged for a check: the amplifier's (stream metadata) and those
    typed into a resumed log, against the profile's limits."""

    def __init__(self, profile: dict[str, Any], limits: Any, verdicts: dict[str, Any],
                 missing: tuple[str, ...] = ()) -> None:
        self.profile = dict(profile, montage_missing=list(missing))
        self.limits = limits
        self.verdicts = verdicts

    def summary(self) -> dict[str, Any]:
        by = {lv: [n for n, v in self.verdicts.items() if v.level == lv] for lv in ("bad", "check", "implausible")}
        lim = self.limits
        return {
            "limit_kohm": lim.limit_kohm,
            "rule": (f"over {lim.limit_kohm:g} kΩ: bad (holds the start gate unless accepted); over "
                     f"{lim.balance_ratio:g}× the others' median and {lim.balance_min_kohm:g} kΩ above it: "
                     "check (unbalanced; ours)"),
            "judged": len(self.verdicts),
            "over_limit": by["bad"], "unbalanced": by["check"], "implausible": by["implausible"],
        }


def as_json(frame: QualityFrame, identity: StreamIdentity, seconds: float, lost: bool,
            channels: tuple[ChannelInfo, ...] = (), setup: dict[str, Any] | None = None,
            look: Look | None = None, final_only: bool = False,
            impedance: ImpedanceReport | None = None) -> dict[str, Any]:
    runs = {r.name: r for r in look.history.channels(look.last_t)} if look is not None else {}
    verdicts = impedance.verdicts if impedance is not None else {}
    chans = []
    for i, c in enumerate(frame.channels):
        info = channels[i] if i < len(channels) else None
        d: dict[str, Any] = {"name": c.name}
        if info is not None:
            d["label"] = info.label
            d["type"] = info.kind
        d.update({k: v for k, v in c.as_dict().items() if k != "name"})
        if c.level is None and frame.live and any(r.startswith("not judged") for r in c.reasons):
            d["level"] = NOT_JUDGED_KEY  # a channel that is no electrode (engine's wording)
        d["metrics"] = plain(c.metrics, finite=True)  # NaN/Inf (not computable): null
        run = runs.get(c.name)
        if run is not None:
            d["worst_level"] = d["level"] if d["level"] == NOT_JUDGED_KEY else run.worst_level
            d["worst_reason"] = run.worst_reason
            d["not_good_s"] = run.not_good_s
            d["events"] = [e.as_dict() for e in run.events]
        if impedance is not None:
            v = verdicts.get(c.name)
            d["impedance"] = v.as_dict() if v is not None else None
        chans.append(d)
    health = frame.stream_health
    report: dict[str, Any] = {
        "stream": {
            "identity": identity.as_dict(),
            "health": health.as_dict() if health is not None else None,
        },
        "channels": chans,
        "channel_setup": setup or {},
        "findings": [f.as_dict() for f in frame.findings],
        "run_findings": [f.as_dict() for f in look.history.findings()] if look is not None else [],
        "mains_hz": frame.mains_hz,
        "window_s": frame.window_s,
        "seconds": seconds,
        "looked_s": round(look.last_t, 3) if look is not None else seconds,
        "first_verdict_s": (None if look is None or look.history.first_verdict_s is None
                            else round(look.history.first_verdict_s, 3)),
        "judged_on": "final" if final_only or look is None else "run",
        "stream_lost": lost,
    }
    if impedance is not None:
        report["profile"] = impedance.profile
        report["impedance"] = impedance.summary()
    if look is not None and look.gate is not None:
        state = look.gate.state
        report["ready"] = state.as_dict() if state is not None else None
        # Who kept the gate shut at the end (not good then, and not accepted).
        report["ready_waiting"] = list(state.waiting) if state is not None and not state.ready else []
    return report


def as_table(report: dict[str, Any]) -> str:
    symbol = LEVEL_SYMBOLS
    word = LEVEL_WORDS
    head = ["channel", "type", "verdict", "during the run", *(h for _k, h in TABLE_METRICS), "reason"]
    rows = []
    for c in report["channels"]:
        m = c["metrics"]
        level = c["level"]
        shown = f"{symbol[level]} {word[level]}" if level in symbol else "- not judged"
        cells = [c["name"], c.get("type", ""), shown, _run_words(c)]
        for key, _h in TABLE_METRICS:
            v = m.get(key)
            cells.append("-" if v is None else f"{v:.1f}")
        reason = c["reasons"][0] if c["reasons"] else ""
        if not reason and c.get("worst_reason"):
            reason = f"earlier: {c['worst_reason']}"
        cells.append(reason)
        rows.append(cells)
    widths = [max(len(h), *(len(r[i]) for r in rows)) for i, h in enumerate(head[:-1])]
    lines = ["  ".join(h.ljust(w) for h, w in zip(head[:-1], widths, strict=True)) + "  " + head[-1]]
    for r in rows:
        lines.append(("  ".join(x.ljust(w) for x, w in zip(r[:-1], widths, strict=True)) + "  " + r[-1]).rstrip())
    findings = report["findings"]
    if findings:
        lines.append("")
        lines.append("findings:")
        for f in findings:
            lines.append(f"  {symbol[f['level']]} {word[f['level']]:<5} {f['kind']:<9} {f['reason']}")
    now = {(f["kind"], tuple(f["electrodes"])) for f in findings}
    earlier = [f for f in report.get("run_findings", []) if (f["kind"], tuple(f["electrodes"])) not in now]
    if earlier:
        lines.append("")
        lines.append("findings earlier in the run (gone at the end):")
        for f in earlier:
            lines.append(f"  {symbol[f['level']]} {word[f['level']]:<5} {f['kind']:<9} {f['reason']} "
                         f"(seen {f['first_s']:.1f}–{f['last_s']:.1f} s)")
    changes = [c for c in report["channels"] if c.get("worst_level") in ("check", "bad")]
    if changes:
        lines.append("")
        lines.append("changes during the run (seconds from the start of the look):")
        for c in changes:
            said = ", ".join(
                f"{word.get(e['level'], e['level'])} at {e['t_s']:.1f} s" + (f" ({e['reason']})" if e["reason"] else "")
                for e in c["events"]
            )
            lines.append(f"  {c['name']}: {said}")
    words = _impedance_words(report)
    if words:
        lines.append("")
        lines.extend(words)
    if "ready" in report:
        lines.append("")
        lines.append(_ready_words(report))
    ident = report["stream"]["identity"]
    health = report["stream"]["health"] or {}
    lines.append("")
    lines.append(
        f"stream '{ident['name']}' ({ident['source_id']}, {ident['hostname']}): "
        f"{health.get('state', '?')}, {health.get('effective_rate_hz', 0):.0f} Hz"
        + (", LOST during the check" if report["stream_lost"] else "")
        + f"; mains {report['mains_hz'] or 'not detected'}"
        + (" Hz" if report["mains_hz"] else "")
    )
    lines.append(DISCLAIMER)
    return "\n".join(lines)


def _run_words(c: dict[str, Any]) -> str:
    """The run in words: "● good throughout", "✖ bad, 3.2 s not good"."""
    symbol, word = LEVEL_SYMBOLS, LEVEL_WORDS
    worst = c.get("worst_level")
    if worst is None or worst == NOT_JUDGED_KEY:
        return "-"
    if worst == "no_data":
        return f"{symbol['no_data']} never judged"
    if worst == "good":
        return f"{symbol['good']} {word['good']} throughout"
    return f"{symbol[worst]} {word[worst]}, {c['not_good_s']:.1f} s not good"


def _impedance_words(report: dict[str, Any]) -> list[str]:
    """The impedances and the profile in words (nothing when neither has news)."""
    prof = report.get("profile") or {}
    imp = report.get("impedance") or {}
    out = []
    if imp.get("judged"):
        values = {c["name"]: c["impedance"] for c in report["channels"] if c.get("impedance")}

        def named(names: list[str]) -> str:
            return ", ".join(f"{n} {values[n]['kohm']:g} kΩ" if n in values else n for n in names)

        said = [f"impedances ({imp['judged']} judged, profile {prof.get('name', '?')}, limit "
                f"{imp['limit_kohm']:g} kΩ)"]
        if imp["over_limit"]:
            said.append(f"over the limit: {named(imp['over_limit'])}")
        if imp["unbalanced"]:
            said.append(f"unbalanced: {named(imp['unbalanced'])}")
        if imp["implausible"]:
            said.append(f"implausible, not judged: {named(imp['implausible'])}")
        if len(said) == 1:
            said.append("all within the limit and balanced")
        out.append("; ".join(said))
    if prof.get("montage_missing"):
        out.append(f"profile {prof['name']} expects electrodes the stream does not carry: "
                   + ", ".join(prof["montage_missing"]))
    return out


def _ready_words(report: dict[str, Any]) -> str:
    ready = report["ready"]
    if ready is None:
        waiting = report.get("ready_waiting") or []
        return (f"NOT READY: the scalp electrodes were not all good together within {report['seconds']:g} s"
                + (f"; not good at the end: {', '.join(waiting)}" if waiting else ""))
    words = f"READY at {ready['at_s']:.1f} s: every scalp electrode good for {ready['held_s']:g} s"
    if ready["accepted"]:
        words += "; accepted as they are: " + "; ".join(
            f"{a['electrode']} ({a['reason']})" for a in ready["accepted"])
    return words


def judge_impedances(profile: Any, channels: tuple[ChannelInfo, ...], recorder: Any = None) -> ImpedanceReport:
    """The stream's published impedances and those typed into a resumed log (typed win),
    judged against the profile; only the stream's scalp electrodes are judged (the
    balance rule compares like with like)."""
    names = {c.name for c in channels if c.is_scalp}
    published = {c.name: c.impedance_kohm for c in channels if c.impedance_kohm is not None and c.is_scalp}
    typed: dict[str, float] = {}
    if recorder is not None:
        snap = recorder.snapshot()
        typed = {e.electrode: e.kohm for e in snap.impedances if e.source == "typed" and e.electrode in names}
    verdicts = judge(merge(typed, published), profile.impedance)
    missing = profile.missing_from([c.name for c in channels if c.is_scalp])
    return ImpedanceReport(profile.as_dict(), profile.impedance, verdicts, missing)


def exit_code(report: dict[str, Any]) -> int:
    """0 all good, 1 attention (see the module docstring)."""
    if "ready" in report:
        return EXIT_OK if report["ready"] is not None else EXIT_ATTENTION
    if report["stream_lost"]:
        return EXIT_ATTENTION
    imp = report.get("impedance") or {}
    if imp.get("over_limit") or imp.get("unbalanced") or imp.get("implausible"):
        return EXIT_ATTENTION
    judged = [c for c in report["channels"] if c["level"] != NOT_JUDGED_KEY]
    levels = [c["level"] for c in judged] + [f["level"] for f in report["findings"]]
    if report.get("judged_on") == "run":
        levels += [c["worst_level"] for c in judged if c.get("worst_level") in ("check", "bad")]
        levels += [f["level"] for f in report.get("run_findings", [])]
    return EXIT_OK if all(lv == "good" for lv in levels) else EXIT_ATTENTION
