"""One line on Watch: the electrodes' impedances judged against the department's
profile (:mod:`bedside.checks.impedance`; the app judges, this only shows). The
selected electrode first, beside its live verdict in the line above; then who is over
the limit, who is unbalanced, how many are within it and how many have no value.
Shape and words as well as colour."""

from __future__ import annotations

import time
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

from rich.text import Text
from textual.widgets import Static

from bedside.checks.impedance import Verdict

#: Level → (symbol, style) for impedances (the table's shapes: good ●, check ▲, fix ✖).
LOOK = {"good": ("●", "green"), "check": ("▲", "yellow"), "bad": ("✖", "bold red"),
        "implausible": ("?", "magenta")}


@dataclass(frozen=True)
class ImpedanceView:
    """What the line shows. verdicts: by electrode; electrodes: the stream's scalp
    electrodes (to count those with no value); limit_kohm and profile: the rule in force;
    recheck_due: when the next re-check is due (epoch seconds; None: no interval)."""

    verdicts: Mapping[str, Verdict]
    electrodes: Sequence[str]
    limit_kohm: float
    profile: str
    recheck_due: float | None = None


def impedance_text(view: ImpedanceView | None, selected: str | None = None, now: float | None = None) -> Text:
    out = Text(no_wrap=True, overflow="ellipsis")
    if view is None:
        out.append("impedance: profile loading…", style="grey62")
        return out
    v = view.verdicts
    out.append("kΩ ", style="bold")
    if selected is not None and selected in view.electrodes:
        mine = v.get(selected)
        if mine is None:
            out.append(f"{selected} not measured", style="grey62")
        else:
            sym, style = LOOK.get(mine.level, ("?", "grey62"))
            out.append(f"{selected} {mine.kohm:g} {sym}", style=style)
            out.append(f" ({mine.source})", style="grey62")
        out.append(" · ")
    out.append(f"limit {view.limit_kohm:g} ({view.profile})", style="grey62")
    over = [n for n, x in v.items() if x.level == "bad"]
    odd = [n for n, x in v.items() if x.level == "check"]
    wrong = [n for n, x in v.items() if x.level == "implausible"]
    for names, label, level in ((over, "over", "bad"), (odd, "unbalanced", "check"), (wrong, "implausible", "implausible")):
        if names:
            sym, style = LOOK[level]
            out.append(" · ")
            out.append(f"{sym} {label}: " + " ".join(f"{n} {v[n].kohm:g}" for n in names[:6])
                       + (f" +{len(names) - 6}" if len(names) > 6 else ""), style=style)
    good = sum(1 for n in view.electrodes if n in v and v[n].level == "good")
    missing = sum(1 for n in view.electrodes if n not in v)
    if good:
        out.append(f" · ● {good} within", style="green")
    if missing:
        out.append(f" · {missing} not measured", style="grey62")
    if view.recheck_due is not None:
        t = time.time() if now is None else now
        when = time.strftime("%H:%M", time.localtime(view.recheck_due))
        if t >= view.recheck_due:
            out.append(f" · ◷ re-check due since {when}", style="bold yellow")
        else:
            out.append(f" · re-check by {when}", style="grey62")
    return out


class ImpedanceLine(Static):
    """Fixed height (app.tcss); repainted only when its words change."""

    _shown: str | None = None

    def show(self, view: ImpedanceView | None, selected: str | None = None) -> None:
        text = impedance_text(view, selected)
        if text.plain == self._shown:
            return
        first = self._shown is None
        self._shown = text.plain
        self.update(text, layout=first)  # one line, fixed height: no new layout after the first
