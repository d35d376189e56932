"""The course of therapy: one episode file's timeline, findings and plot, and forms to add to it.

Everything shown comes from one `CourseState` (the file as last read); after
every save the file is read again and the whole screen is redrawn from it.
Without an open episode the screen asks for a file; a file that cannot be
used is reported there, in the command line's words, and nothing else opens.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from functools import partial
from typing import ClassVar

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import BindingType
from textual.containers import Vertical, VerticalScroll
from textual.markup import escape
from textual.screen import Screen
from textual.widgets import DataTable, Input, Label, Static, TabbedContent, TabPane

from osmodose.app import keys
from osmodose.app.course_view import (
    ENTRY_FIELDS,
    ENTRY_TITLES,
    PLAN_FIELDS,
    CourseState,
    EntryKind,
    FormOutcome,
    add_entry,
    finding_rows,
    head_text,
    notes_lines,
    open_course,
    plan_next,
    row_marks,
    status_text,
)
from osmodose.app.form_view import agent_choices
from osmodose.app.plot_view import pressure_panel, sodium_panel
from osmodose.app.screens.entry import EntryScreen
from osmodose.app.widgets.course_plot import CoursePlot, PlotLegend
from osmodose.app.widgets.formulary_bar import FormularyBar, formulary_line
from osmodose.app.widgets.keys_footer import KeysFooter
from osmodose.app.widgets.status_banner import StatusBanner
from osmodose.caution import CAUTION
from osmodose.errors import OsmodoseError
from osmodose.formulary.model import Formulary
from osmodose.safe_text import escape_controls

TIMELINE_COLUMNS = ("time", "id", "entry", "details")
_STYLE = {"ok": "bold $text-success", "warn": "bold $text-warning", "refuse": "bold $text-error"}
#: Rows of the timeline a finding is about (rich styles: table cells do not take the theme's variables).
_ROW_STYLE = {"warn": "bold dark_orange", "refuse": "bold red"}
STATES = ("ok", "warn", "refuse")


class CourseScreen(Screen[None]):
    """Shows `self.state`; `remember` hands every newly read state back to the app."""

    BINDINGS: ClassVar[list[BindingType]] = keys.COURSE

    def __init__(
        self,
        formulary: Formulary,
        state: CourseState | None,
        remember: Callable[[CourseState], None],
        demo: bool = False,
    ) -> None:
        super().__init__(id="course-screen")
        self.formulary = formulary
        self.demo = demo
        self.state = state
        self.remember = remember

    def compose(self) -> ComposeResult:
        yield FormularyBar(self.formulary, self.demo)
        with Vertical(id="course-open"):
            yield Label("episode file to open (JSON), then enter:")
            yield Input(placeholder="bed3.json", id="course-path")
            yield Static("", id="course-open-message", markup=False)
        yield Static("", id="course-head", markup=False)
        yield StatusBanner("course-status")
        with TabbedContent(id="course-tabs"):
            with TabPane("timeline", id="tab-timeline"):
                yield DataTable(id="course-timeline", cursor_type="row", zebra_stripes=True)
            with TabPane("plot", id="tab-plot"), VerticalScroll(id="course-plots"):
                yield PlotLegend("sodium-legend")
                yield CoursePlot("sodium-plot", x_label=False)
                yield PlotLegend("pressure-legend")
                yield CoursePlot("pressure-plot")
            with TabPane("findings", id="tab-findings"), VerticalScroll(id="course-findings-box"):
                yield Static("", id="course-findings")
                yield Static("", id="course-notes", markup=False)
        yield Static(CAUTION, id="caution", markup=False)
        yield KeysFooter()

    def on_mount(self) -> None:
        self.redraw()

    def redraw(self) -> None:
        """Replace everything shown with what `self.state` holds (or only the open box)."""
        state = self.state
        self.query_one("#course-open").display = state is None
        for part in ("#course-head", "#course-status", "#course-tabs"):
            self.query_one(part).display = state is not None
        if state is None:
            self.query_one("#course-path", Input).focus()
            return
        self.query_one("#course-head", Static).update(head_text(state))
        self.query_one(StatusBanner).show(status_text(state), state.review.status)
        self._fill_table(state)
        for plot_id, legend_id, make in (
            ("#sodium-plot", "#sodium-legend", sodium_panel),
            ("#pressure-plot", "#pressure-legend", pressure_panel),
        ):
            panel = make(state.series)
            self.query_one(plot_id, CoursePlot).show(state.series, panel)
            self.query_one(legend_id, PlotLegend).show(panel)
        rows = finding_rows(state)
        self.query_one("#course-findings", Static).update(
            "\n".join(f"[{_STYLE[severity]}]{escape(escape_controls(line))}[/]" for severity, line in rows)
        )
        notes = [*notes_lines(state), f"formulary: {formulary_line(self.formulary)} (F2 shows it)"]
        self.query_one("#course-notes", Static).update(escape_controls("\n".join(notes), keep_lines=True))

    def _fill_table(self, state: CourseState) -> None:
        """One row per entry, the details wrapped in the width left (nothing hidden off to the right)."""
        table = self.query_one("#course-timeline", DataTable)
        table.clear(columns=True)
        widths = [len(row[0]) for row in state.rows] or [len(TIMELINE_COLUMNS[0])]
        time_width, entry_width = max(widths), len("reading")
        id_width = max([len(row[3]) for row in state.rows] + [2])
        # cell padding 1 each side, and the vertical scrollbar
        details = max(30, self.size.width - time_width - id_width - entry_width - 4 * 2 - 2)
        for label, width in zip(TIMELINE_COLUMNS, (time_width, id_width, entry_width, details), strict=True):
            table.add_column(label, width=width)
        for (when, kind, raw, entry_id), (severity, mark) in zip(state.rows, row_marks(state), strict=True):
            text = escape_controls(raw)
            if mark:  # word and colour: the finding's symbol, word and code under the values it is about
                cells: tuple[str | Text, ...] = (
                    Text(when, style=_ROW_STYLE[severity]),
                    Text(entry_id, style=_ROW_STYLE[severity]),
                    Text(kind, style=_ROW_STYLE[severity]),
                    Text.assemble(text, "\n", (mark, _ROW_STYLE[severity])),
                )
            else:
                cells = (when, entry_id, kind, text)
            table.add_row(*cells, height=None)
        table.move_cursor(row=len(state.rows) - 1)
        if self.app.focused is None or isinstance(self.app.focused, Input):
            table.focus()

    def on_resize(self) -> None:
        if self.state is not None:
            self._fill_table(self.state)

    def on_input_submitted(self, event: Input.Submitted) -> None:
        event.stop()
        message = self.query_one("#course-open-message", Static)
        try:
            state = open_course(event.value.strip(), self.formulary)
        except OsmodoseError as error:
            message.update(f"✖ {error}")
            message.add_class("-bad")
            return
        message.update("")
        message.remove_class("-bad")
        self.loaded(state)

    def loaded(self, state: CourseState | None) -> None:
        if state is None:
            return
        self.state = state
        self.remember(state)
        self.redraw()
        self.refresh_bindings()

    def check_action(self, action: str, parameters: tuple[object, ...]) -> bool | None:
        """Adding and planning need an open episode: hidden from the footer until one is."""
        return not (action in ("add", "plan", "open", "tab") and self.state is None)

    def action_open(self) -> None:
        """Ask for another file; the one shown stays open (and in the app) until another loads."""
        assert self.state is not None
        self.query_one("#course-path", Input).value = str(self.state.path)
        self.state = None
        self.redraw()
        self.refresh_bindings()

    def action_tab(self, pane_id: str) -> None:
        """Show a tab and give the keys to what is in it (the table, or a scroll)."""
        self.query_one("#course-tabs", TabbedContent).active = pane_id
        self.query_one(f"#{pane_id}").query("DataTable, VerticalScroll").first().focus()

    def _agents(self) -> tuple[tuple[str, str], ...]:
        return agent_choices(self.formulary.agents)

    def action_add(self, kind: EntryKind) -> None:
        if self.state is None:
            return
        submit = partial(self._add, kind)
        self.app.push_screen(EntryScreen(ENTRY_TITLES[kind], ENTRY_FIELDS[kind], submit, self._agents()), self.loaded)

    def _add(self, kind: EntryKind, values: Mapping[str, str]) -> FormOutcome:
        assert self.state is not None
        outcome = add_entry(self.state, kind, self.formulary, values)
        for text in outcome.notes:
            self.notify(escape_controls(text), severity="warning")
        return outcome

    def action_plan(self) -> None:
        if self.state is None:
            return
        state = self.state
        submit = partial(plan_next, state, self.formulary)
        title = "plan the next dose (nothing is saved)"
        self.app.push_screen(EntryScreen(title, PLAN_FIELDS, submit, self._agents(), verb="plan"))
