"""Measure: three tape measurements in, every mark out (table by line, and a diagram).

Validation and planning run in a worker thread; results come back as messages.
"""

from __future__ import annotations

import re
from typing import TYPE_CHECKING, cast

from rich.text import Text
from textual import events, work
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.message import Message
from textual.screen import Screen
from textual.widgets import DataTable, Footer, Header, Input, Label, Select, Static

from bedside.errors import BedsideError
from bedside.placement.sheet import as_taped, grouped, in_unit
from bedside.placement.types import Mark, PlacementPlan
from bedside.record.log import TapedMeasurements
from bedside.ui.export import plan_as_text, short_line
from bedside.ui.widgets.head_map import HeadMap

if TYPE_CHECKING:
    from bedside.ui.app import BedsideApp

def in_app_terms(text: str) -> str:
    """A placement message worded for the command line, in this form's terms."""
    text = re.sub(r"with --unit (\w+)", r"with the unit set to \1", text)
    return text.replace("(the unit goes in --unit)", "(choose the unit above)").replace(
        "--unit", "the unit box")


UNITS = (("cm", "cm"), ("mm", "mm"), ("inches", "in"))
SYSTEMS = (("10-20", "10-20"), ("10-10", "10-10"))
NAMINGS = (("modern (T7/T8/P7/P8)", "modern"), ("classic (T3/T4/T5/T6)", "classic"))
FIELDS = (
    ("ni", "nasion–inion", "over the vertex"),
    ("pa", "ear to ear", "preauricular, over the vertex"),
    ("circ", "around", "circumference through Fpz, T7, Oz, T8"),
)


#: Below this many columns the form and the marks table take their narrow widths, so the
#: distance columns stay on screen at 80 columns.
NARROW_BELOW = 100
TAPED_WIDTH = 4  # the taped unit's column: "1800" mm at most, "19.7" in
#: (label, key, width wide, width narrow); the taped-unit column follows "cm" when the
#: measurements were taped in mm or inches (narrow, it takes the place of "step", so
#: no column is cut at the right edge of an 80-column terminal).
COLUMNS = (
    ("line", "line", 14, 10), ("site", "site", 5, 4), ("also", "also", 4, 3),
    ("from", "from", 7, 5), ("cm", "cm", 5, 4), ("step", "step", 5, 4), ("%", "pct", 4, 3),
    ("how to find it", "how", 40, 40),
)


def taped_from(plan: PlacementPlan, unit: str) -> TapedMeasurements:
    """The plan's measurements back in the unit they were typed in."""
    ni, pa, circ = as_taped(plan.measurements, unit)
    return TapedMeasurements(unit=unit, nasion_inion=ni, preauricular=pa, circumference=circ)


#: What separates pasted measurements: tabs (a spreadsheet row), line breaks (a column),
#: semicolons, spaces, or a comma followed by a space. A comma between digits is a
#: decimal comma (36,5) and stays.
_PASTE_SPLIT = re.compile(r"[\t\r\n;]+|,\s+|\s+")
_PASTE_NUMBER = re.compile(r"[0-9]+(?:[.,][0-9]+)?|[.,][0-9]+")


def split_pasted(text: str) -> list[str]:
    """The parts of a pasted text, in order (empty parts dropped)."""
    return [part for part in _PASTE_SPLIT.split(text.strip()) if part]


class MeasuresPasted(Message):
    """Several values were pasted into one measurement field."""

    def __init__(self, field: str, parts: list[str]) -> None:
        super().__init__()
        self.field = field
        self.parts = parts


class MeasureField(Input):
    """A measurement box: a paste of several values ("36⇥35⇥56" from a spreadsheet row)
    fills the form's boxes in order instead of landing in this one."""

    def _on_paste(self, event: events.Paste) -> None:
        # Textual calls this, then Input's own handler (one value: an ordinary paste)
        # unless the default is prevented.
        parts = split_pasted(event.text)
        if len(parts) > 1:
            event.prevent_default()
            event.stop()
            self.post_message(MeasuresPasted(self.id or "", parts))


class PlanReady(Message):
    """The measurements were accepted and the marks computed."""

    def __init__(self, plan: PlacementPlan, points: dict[str, tuple[float, float]], generation: int) -> None:
        super().__init__()
        self.plan = plan
        self.points = points
        self.generation = generation


class MeasureInvalid(Message):
    """The measurements were not accepted; ``text`` says what and what is accepted."""

    def __init__(self, text: str, generation: int) -> None:
        super().__init__()
        self.text = text
        self.generation = generation


class MeasureScreen(Screen[None]):
    BINDINGS = [
        Binding("f5", "export", "Save sheet"),
        Binding("f6", "copy_sheet", "Copy"),
        Binding("f7", "toggle_map", "Map"),
        Binding("escape", "leave_form", "Leave form", show=False),
    ]

    def __init__(self) -> None:
        super().__init__(name="measure")
        self.plan: PlacementPlan | None = None
        self.taped: TapedMeasurements | None = None
        self._layout: tuple[bool, str] | None = None  # (narrow, unit) the columns were built for
        self._columns: list[str] = []  # the column keys shown, in order
        # Every edit starts a new generation; a worker's answer for an older one is dropped,
        # so marks computed from what was typed before never reappear (one owner: the UI thread).
        self._generation = 0

    @property
    def bedside(self) -> BedsideApp:
        return cast("BedsideApp", self.app)

    def compose(self) -> ComposeResult:
        cfg = self.bedside.config
        yield Header(show_clock=False)
        with Horizontal(id="measure-body"):
            with Vertical(id="measure-form"):
                yield Static("Head measurements", classes="pane-title")
                with Horizontal(classes="form-row"):
                    yield Label("unit", classes="form-label")
                    yield Select(UNITS, value=cfg.unit, allow_blank=False, compact=True, id="unit")
                with Horizontal(classes="form-row"):
                    yield Label("system", classes="form-label")
                    yield Select(SYSTEMS, value=cfg.system, allow_blank=False, compact=True, id="system")
                with Horizontal(classes="form-row"):
                    yield Label("names", classes="form-label")
                    yield Select(NAMINGS, value=cfg.names, allow_blank=False, compact=True, id="names")
                for key, label, hint in FIELDS:
                    with Horizontal(classes="form-row"):
                        yield Label(label, classes="form-label")
                        yield MeasureField(placeholder=hint, compact=True, id=key)
                yield Static(
                    Text("Skin preparation, neonates, collodion, infection control: "
                         "see the cautions (F1). Follow local policy.", style="grey62 italic"),
                    id="measure-caution",
                )
            with Vertical(id="measure-results"):
                yield HeadMap(marks_mode=True, id="marks-map")
                yield DataTable(id="marks-table", cursor_type="row", zebra_stripes=True)
        # Full width and as tall as it needs, so a long message is never cut.
        yield Static(Text("enter the three measurements", style="grey62"), id="measure-message")
        yield Footer(compact=True)  # compact: every key, the views' too, fits 80 columns

    def on_mount(self) -> None:
        self._build_table()
        self.query_one("#ni", Input).focus()

    def _build_table(self) -> None:
        """(Re)build the columns for this width and the taped unit, and refill the rows."""
        unit = self.taped.unit if self.taped is not None and self.plan is not None else "cm"
        # The taped unit's column needs room too: narrow a little sooner with it.
        extra = TAPED_WIDTH + 2 if unit != "cm" else 0
        narrow = 0 < self.app.size.width < NARROW_BELOW + extra
        self.set_class(narrow, "-narrow")
        if self._layout == (narrow, unit):
            return
        self._layout = (narrow, unit)
        table = self.query_one("#marks-table", DataTable)
        table.clear(columns=True)
        self._columns = [key for _, key, _, _ in COLUMNS
                         if not (narrow and unit != "cm" and key == "step")]
        if unit != "cm":
            self._columns.insert(self._columns.index("cm") + 1, "taped")
        for label, key, wide, slim in COLUMNS:
            if key in self._columns:
                table.add_column(label, key=key, width=slim if narrow else wide)
            if key == "cm" and unit != "cm":
                table.add_column(unit, key="taped", width=TAPED_WIDTH)
        self._fill_rows()

    def _fill_rows(self) -> None:
        table = self.query_one("#marks-table", DataTable)
        table.clear()
        if self.plan is None:
            return
        unit = self.taped.unit if self.taped is not None else "cm"
        for line, marks in grouped(self.plan.marks):
            for i, mk in enumerate(marks):
                cells = self._cells(mk, short_line(line) if i == 0 else "", unit)
                table.add_row(*(cells[key] for key in self._columns))

    @staticmethod
    def _cells(mk: Mark, line: str, unit: str) -> dict[str, str | Text]:
        # A reference site: "—" here and "not measured" in its how-to text.
        dist: tuple[str | Text, ...] = (
            mk.distance_cells() if mk.measured else (Text("—", style="grey62"), "", ""))
        return {
            "line": Text(line, style="bold") if line else "", "site": Text(mk.name, style="bold"),
            "also": mk.other_name, "from": mk.start, "cm": dist[0],
            "taped": in_unit(mk.distance_cm, unit) if mk.measured and unit != "cm" else "",
            "step": dist[1], "pct": dist[2], "how": mk.how,
        }

    def values(self) -> tuple[str, str, str, str, str, str]:
        get = lambda i: self.query_one(f"#{i}", Input).value.strip()  # noqa: E731
        sel = lambda i: str(self.query_one(f"#{i}", Select).value)  # noqa: E731
        return get("ni"), get("pa"), get("circ"), sel("unit"), sel("system"), sel("names")

    def on_input_changed(self, event: Input.Changed) -> None:
        self._revalidate()

    def on_select_changed(self, event: Select.Changed) -> None:
        self._revalidate()

    def on_input_submitted(self, event: Input.Submitted) -> None:
        order = [k for k, _, _ in FIELDS]
        if event.input.id in order:
            nxt = order.index(event.input.id) + 1
            if nxt < len(order):
                self.query_one(f"#{order[nxt]}", Input).focus()
            else:
                self.query_one("#marks-table", DataTable).focus()

    def on_measures_pasted(self, message: MeasuresPasted) -> None:
        """Fill the boxes from a paste of several numbers: three go to nasion–inion, ear to
        ear and around (the form's order), fewer from the box pasted into onwards."""
        order = [k for k, _, _ in FIELDS]
        labels = ", ".join(label for _, label, _ in FIELDS)
        parts = message.parts
        start = 0 if len(parts) == len(order) else order.index(message.field) if message.field in order else 0
        accepted = (f"accepted: up to three numbers separated by tabs, spaces or line breaks, "
                    f"filled in the form's order ({labels})")
        if not all(_PASTE_NUMBER.fullmatch(p) for p in parts):
            self._message(f"✖ pasted text not taken ({' '.join(parts)[:60]!r}); {accepted}; "
                          "the unit is chosen above", "bold red")
            return
        if start + len(parts) > len(order):
            self._message(f"✖ pasted {len(parts)} numbers, but only {len(order) - start} box(es) "
                          f"follow from here; {accepted}", "bold red")
            return
        filled = order[start:start + len(parts)]
        for key, value in zip(filled, parts, strict=True):
            self.query_one(f"#{key}", Input).value = value
        self.query_one(f"#{filled[-1]}", Input).focus()

    def _revalidate(self) -> None:
        self._generation += 1
        ni, pa, circ, unit, system, names = self.values()
        if not (ni and pa and circ):
            self._clear_marks()
            missing = [label for (k, label, _), v in zip(FIELDS, (ni, pa, circ), strict=True) if not v]
            self._message(f"still needed: {', '.join(missing)}", "grey62")
            return
        self._plan(ni, pa, circ, unit, system, names, self._generation)

    def _clear_marks(self) -> None:
        """The marks leave the screen as soon as what is typed no longer gives them;
        F5/F6 then refuse (no sheet from measurements that are not the ones typed)."""
        self.plan = None
        self.taped = None
        self._build_table()  # back to the cm columns (no-op when already so)
        self.query_one("#marks-table", DataTable).clear()
        self.query_one("#marks-map", HeadMap).set_points({})

    @work(thread=True, exclusive=True, group="plan", exit_on_error=False)
    def _plan(self, ni: str, pa: str, circ: str, unit: str, system: str, names: str,
              generation: int) -> None:
        services = self.bedside.services
        try:
            m = services.parse_measurements(ni, pa, circ, unit)
            plan = services.plan_placement(m, system, names)
            positions = plan.positions_mm or {mk.name: mk.xyz_mm for mk in plan.marks}
            points = {n: services.project_2d(xyz) for n, xyz in positions.items()}
        except BedsideError as exc:
            self.post_message(MeasureInvalid(str(exc), generation))
            return
        self.post_message(PlanReady(plan, points, generation))

    def _message(self, text: str, style: str) -> None:
        self.query_one("#measure-message", Static).update(Text(text, style=style))

    def on_measure_invalid(self, message: MeasureInvalid) -> None:
        if self.is_mounted and message.generation == self._generation:
            self._clear_marks()
            self._message(f"✖ {in_app_terms(message.text)}", "bold red")

    def on_plan_ready(self, message: PlanReady) -> None:
        if not self.is_mounted or message.generation != self._generation:
            return
        plan = message.plan
        self.plan = plan
        taped = taped_from(plan, self.values()[3])
        self.taped = taped
        n_sites = len({mk.name for mk in plan.marks})
        m = plan.measurements
        measured = f"{m.nasion_inion_cm:.1f} / {m.preauricular_cm:.1f} / {m.circumference_cm:.1f} cm"
        if taped.unit != "cm":
            measured = f"taped {taped.text()} = {measured}"
        self._message(
            f"● {n_sites} sites, {len(plan.marks)} marks ({plan.system}, {plan.names} names); "
            f"{measured}",
            "bold green",
        )
        self.query_one("#marks-map", HeadMap).set_points(message.points)
        if self._layout is not None and self._layout[1] == taped.unit:
            self._fill_rows()
        else:
            self._build_table()
        self.bedside.plan_changed(plan, taped)

    def action_export(self) -> None:
        if self.plan is None:
            self.notify(self._no_sheet_reason(), severity="warning")
            return
        self.bedside.export_plan(self.plan)

    def _no_sheet_reason(self) -> str:
        if all(self.values()[:3]):
            return "no sheet: the measurements as typed are not accepted (see the message)"
        return "no sheet: enter the three measurements first"

    def action_copy_sheet(self) -> None:
        if self.plan is None:
            self.notify(self._no_sheet_reason(), severity="warning")
            return
        self.app.copy_to_clipboard(plan_as_text(self.plan, self.taped))
        self.notify("marking sheet copied (if the terminal allows clipboard access)")

    def on_resize(self) -> None:
        # On a short terminal the diagram and the table take turns (F7 switches).
        self.set_class(self.size.height < 32, "-short")
        if self.is_mounted:
            self._build_table()

    def action_toggle_map(self) -> None:
        self.toggle_class("-map-first")

    def action_leave_form(self) -> None:
        self.query_one("#marks-table", DataTable).focus()
