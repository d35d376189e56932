"""Every key of every screen, declared once: the screens bind these lists and the help screen lists them.

Kept apart from the screens so the help screen can list the verification and
course keys without importing those screens (they are imported when first
opened).  Each key says what it does in the footer's own words; the help
screen groups them by the screen they work on, so a key bound on two screens
(ctrl+s) is never listed twice without saying where.
"""

from __future__ import annotations

from textual.binding import Binding, BindingType

#: Keys that work on every screen (the app's own).
EVERYWHERE: list[BindingType] = [
    Binding("f1", "help", "help", tooltip="these keys, and each figure with its formula"),
    Binding("f2", "formulary", "formulary", tooltip="the formulary in force: agents and limits"),
    Binding("f3", "verify", "verify", tooltip="the verification screen (an order as written), and back"),
    Binding("f4", "course", "course", tooltip="the course screen (an episode file), and back"),
    Binding("ctrl+t", "toggle_theme", "dark", tooltip="dark or light theme"),
    Binding("ctrl+q", "quit", "quit"),
]
CHECK: list[BindingType] = [
    Binding(
        "ctrl+s", "save", "save", tooltip="save the handover summary: the report of osmodose check, with patient label"
    ),
    Binding("ctrl+y", "copy", "copy", tooltip="copy the report `osmodose check` prints to the clipboard"),
    Binding("ctrl+n", "new_case", "new", tooltip="empty the form"),
    Binding("ctrl+l", "labs_file", "labs", tooltip="read labs from an HL7 FHIR file into the empty boxes"),
    # At 80 columns the check screen's footer leaves out the theme key; it works, and help (f1) lists it.
    Binding("ctrl+t", "app.toggle_theme", "dark", show=False, tooltip="as everywhere; left out of this footer"),
]
# Screen keys come first in the footer, then the app's: at 80 columns the verification and course
# screens leave two of the app's keys out of their footer (show=False), still working and in help (f1).
VERIFY: list[BindingType] = [
    Binding("ctrl+s", "save", "save", tooltip="append this record to the verification log"),
    Binding("ctrl+y", "copy_sha", "copy sha256", tooltip="copy the saved record's SHA-256, to note in the chart"),
    Binding("ctrl+p", "print", "print", tooltip="save the record as printable text"),
    Binding("escape", "back", "back", tooltip="back to the check screen (what is typed here stays)"),
    Binding("f3", "back", "back to the check", show=False),
    Binding("f4", "app.course", "course", show=False),
]
COURSE: list[BindingType] = [
    Binding("l", "add('lab')", "lab"),
    Binding("d", "add('dose')", "dose"),
    Binding("r", "add('reading')", "reading"),
    Binding("u", "add('output')", "urine"),
    Binding("p", "plan", "plan"),
    Binding("o", "open", "open"),
    Binding("escape", "app.pop_screen", "back"),
    Binding("f4", "app.pop_screen", "back to the check", show=False),
    Binding("f2", "app.formulary", "formulary", show=False),
    Binding("f3", "app.verify", "verify", show=False),
    Binding("1", "tab('tab-timeline')", "timeline tab", show=False),
    Binding("2", "tab('tab-plot')", "plot tab", show=False),
    Binding("3", "tab('tab-findings')", "findings tab", show=False),
]
#: The help and formulary screens.
BACK: list[BindingType] = [Binding("escape", "app.pop_screen", "back")]
#: A small form over the course screen (an entry, or the plan).
FORM: list[BindingType] = [Binding("ctrl+s", "submit", "save"), Binding("escape", "cancel", "cancel")]
#: The box asking where to save (enter saves).
SAVE: list[BindingType] = [Binding("escape", "cancel", "cancel")]
#: Asked before a file is replaced: only y replaces it.
CONFIRM: list[BindingType] = [
    Binding("y", "answer(True)", "replace"),
    Binding("n", "answer(False)", "keep"),
    Binding("escape", "answer(False)", "keep"),
]

#: (where, keys) in the order the help screen lists them.
BY_SCREEN: tuple[tuple[str, list[BindingType]], ...] = (
    ("on every screen", EVERYWHERE),
    ("check screen", CHECK),
    ("verification screen (f3)", VERIFY),
    ("course screen (f4)", COURSE),
    ("help and formulary screens", BACK),
    ("a form over the course screen", FORM),
    ("the box asking where to save", SAVE),
    ("asked before replacing a file", CONFIRM),
)

#: Keys a widget answers to, not bound by a screen: (where, key, what it does).
FORM_KEYS: tuple[tuple[str, str, str], ...] = (
    ("in a form", "tab / shift+tab", "next / previous box, in the order of the paper form: patient, labs, order"),
    ("in a form", "enter", "in a typed box: the next box; on a choice: open its list (type a name's start, enter)"),
    ("in a form", "escape", "close an open choice list"),
    ("in a form", "space", "tick or untick an accept box (verification screen)"),
    ("in a table or a scroll", "arrows, page up / down", "scroll; left and right scroll a wide table sideways"),
)
