"""A choice box: one row showing the chosen option, its list opened over the screen when asked for.

One widget until it is opened (Textual's Select is six, its list built with
the screen): the check screen has six choices, and its first frame is timed
(benchmarks/first_frame.py).  It works as a Select does: enter, space, up or
down (or a click) opens the list with the chosen option lit; typing jumps to
the first option whose name holds what was typed, soonest in the name; enter
or a click takes it; escape, or leaving the list, closes it unchanged.  The
list is as wide as its longest option (never wider than the screen), so an
agent's whole name is read before it is picked.
"""

from __future__ import annotations

from typing import ClassVar

from rich.cells import cell_len
from textual import events
from textual.binding import Binding, BindingType
from textual.content import Content
from textual.message import Message
from textual.reactive import reactive
from textual.widget import Widget
from textual.widgets import OptionList

#: (shown, value) of each option.
Choices = tuple[tuple[str, str], ...]
#: A pause this long (seconds) between two letters starts a new search.
SEARCH_RESET_S = 0.7
#: Columns the open list takes beyond its longest name: its border and padding (the stylesheet's).
LIST_FRAME = 4


class ChoiceList(OptionList):
    """The opened list: typing jumps to a match, enter takes the lit option, escape or leaving closes it."""

    BINDINGS: ClassVar[list[BindingType]] = [Binding("escape", "close", "close the list")]
    ALLOW_SELECT = False

    class Closed(Message):
        """The list is to close; `keep_focus`: give the focus back to the box (not when it was lost)."""

        def __init__(self, keep_focus: bool) -> None:
            super().__init__()
            self.keep_focus = keep_focus

    def __init__(self, choices: Choices) -> None:
        super().__init__(*(shown for shown, _ in choices))
        self.search = ""
        self.last_key = 0.0

    def check_consume_key(self, key: str, character: str | None = None) -> bool:
        return character is not None and character.isprintable()

    def on_key(self, event: events.Key) -> None:
        if event.character is None or not event.is_printable:
            return
        event.stop()
        event.prevent_default()
        if event.time - self.last_key > SEARCH_RESET_S:
            self.search = ""
        self.last_key = event.time
        self.search += event.character.lower()
        index = self.find(self.search)
        if index is not None:
            self.highlighted = index
            self.scroll_to_highlight()

    def find(self, query: str) -> int | None:
        """The option whose name holds `query` soonest (the first such option on a tie)."""
        best: tuple[int, int] | None = None
        for index in range(self.option_count):
            at = str(self.get_option_at_index(index).prompt).lower().find(query)
            if at != -1 and (best is None or at < best[0]):
                best = (at, index)
        return None if best is None else best[1]

    def action_close(self) -> None:
        self.post_message(self.Closed(keep_focus=True))

    def on_click(self, event: events.Click) -> None:
        event.stop()  # taken by the list (an option picked); the box under it must not open it again

    def on_blur(self) -> None:
        self.post_message(self.Closed(keep_focus=False))


class ChoiceBox(Widget, can_focus=True):
    """Holds one value of `choices` ("" for none, when a blank is allowed); says what it holds in one row."""

    BINDINGS: ClassVar[list[BindingType]] = [Binding("enter,down,space,up", "open", "open the list", show=False)]
    ALLOW_SELECT = False

    opened: reactive[bool] = reactive(False, layout=False)

    class Changed(Message):
        """The value was changed (by the user, or by the program)."""

        def __init__(self, box: ChoiceBox, value: str) -> None:
            super().__init__()
            self.choice_box = box
            self.value = value

        @property
        def control(self) -> ChoiceBox:
            return self.choice_box

    def __init__(
        self, choices: Choices, *, prompt: str, allow_blank: bool, id: str | None = None, classes: str = ""
    ) -> None:
        super().__init__(id=id, classes=classes)
        self.prompt = prompt
        self.allow_blank = allow_blank
        self.choices: Choices = choices
        self._value = "" if allow_blank or not choices else choices[0][1]
        self.list: ChoiceList | None = None

    @property
    def value(self) -> str:
        return self._value

    @value.setter
    def value(self, value: str) -> None:
        if (value == "" and not self.allow_blank) or (value and value not in {v for _, v in self.choices}):
            raise ValueError(f"not a choice of {self.id}: {value!r}")
        if value != self._value:
            self._value = value
            self.refresh()
            self.post_message(self.Changed(self, value))

    def is_blank(self) -> bool:
        return self._value == ""

    def clear(self) -> None:
        self.value = ""

    def set_choices(self, choices: Choices) -> None:
        """New options; the value is kept if it is still one of them, else blank (or the first, without a blank)."""
        self.choices = choices
        if self.list is not None:
            self.list.remove()
            self.list = None
        if self._value not in {v for _, v in choices}:
            self.value = "" if self.allow_blank or not choices else choices[0][1]
        self.refresh()

    def shown(self) -> str:
        return next((shown for shown, v in self.choices if v == self._value), "")

    def render(self) -> Content:
        width = self.content_size.width
        chosen = self.shown()
        arrow = " ▲ " if self.opened else " ▼ "
        text = Content(chosen or self.prompt).truncate(max(0, width - len(arrow)), ellipsis=True, pad=True)
        return Content.assemble(text if chosen else text.stylize("$foreground 50%"), (arrow, "$foreground 50%"))

    def watch_opened(self, opened: bool) -> None:
        if self.list is not None:
            self.list.display = opened

    async def action_open(self) -> None:
        if not self.choices:
            return
        if self.list is None:
            self.list = ChoiceList(self.choices)
            # As wide as the longest name with the list's border and padding, within the screen.
            longest = max(cell_len(shown) for shown, _ in self.choices)
            self.list.styles.width = min(longest + LIST_FRAME, self.screen.size.width)
            await self.mount(self.list)
        index = next((i for i, (_, v) in enumerate(self.choices) if v == self._value), 0)
        self.list.search = ""
        self.list.highlighted = index
        self.opened = True
        self.list.display = True
        self.list.focus(scroll_visible=False)
        self.list.scroll_to_highlight()

    async def on_click(self, event: events.Click) -> None:
        event.stop()
        if not self.opened:
            await self.action_open()

    def on_option_list_option_selected(self, event: OptionList.OptionSelected) -> None:
        event.stop()
        self.close(keep_focus=True)
        self.value = self.choices[event.option_index][1]

    def on_option_list_option_highlighted(self, event: OptionList.OptionHighlighted) -> None:
        event.stop()

    def on_choice_list_closed(self, event: ChoiceList.Closed) -> None:
        event.stop()
        self.close(event.keep_focus)

    def close(self, keep_focus: bool) -> None:
        if self.opened:
            self.opened = False
            if keep_focus:
                self.focus()
