"""The App: the formulary it was started with, the global keys and the screens."""

from __future__ import annotations

from typing import ClassVar

from textual.app import App
from textual.binding import Binding, BindingType

from osmodose.app.course_view import CourseState
from osmodose.app.screens.course import CourseScreen
from osmodose.app.screens.formulary import FormularyScreen
from osmodose.app.screens.help import HelpScreen
from osmodose.app.screens.main import MainScreen
from osmodose.app.screens.verify import VerifyScreen
from osmodose.formulary.model import Formulary

DARK, LIGHT = "textual-dark", "textual-light"


class OsmodoseApp(App[None]):
    """Opens on the check (or on the course, given an episode); help, formulary and course are screens over it."""

    CSS_PATH = "osmodose.tcss"
    TITLE = "osmodose"
    # Every action is a key in the footer; a palette would be a second, hidden way in.
    ENABLE_COMMAND_PALETTE = False
    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("f1", "help", "help"),
        Binding("f2", "formulary", "formulary"),
        Binding("f3", "verify", "verify"),
        Binding("f4", "course", "course"),
        Binding("ctrl+t", "toggle_theme", "dark"),
        Binding("ctrl+q", "quit", "quit"),
    ]

    def __init__(self, formulary: Formulary, theme: str = DARK, course: CourseState | None = None) -> None:
        super().__init__()
        self.formulary = formulary
        self.theme = theme
        self.course = course  # the episode last opened: the course screen reopens on it

    def get_default_screen(self) -> MainScreen:
        return MainScreen(self.formulary)

    def on_mount(self) -> None:
        if self.course is not None:  # started with --episode: open on it
            self.action_course()

    def action_help(self) -> None:
        if isinstance(self.screen, HelpScreen):
            self.pop_screen()
        else:
            self.push_screen(
                HelpScreen(
                    self.formulary, [self.BINDINGS, MainScreen.BINDINGS, VerifyScreen.BINDINGS, CourseScreen.BINDINGS]
                )
            )

    def action_formulary(self) -> None:
        if isinstance(self.screen, FormularyScreen):
            self.pop_screen()
        else:
            self.push_screen(FormularyScreen(self.formulary))

    def action_verify(self) -> None:
        """The verification screen over the check; kept (installed) so its order survives a trip back."""
        if isinstance(self.screen, VerifyScreen):
            self.pop_screen()
            return
        if not self.is_screen_installed("verify"):
            main = self.screen_stack[0]
            assert isinstance(main, MainScreen)
            self.install_screen(VerifyScreen(self.formulary, main.values), "verify")
        self.push_screen("verify")

    def action_course(self) -> None:
        if isinstance(self.screen, CourseScreen):
            self.pop_screen()
        else:
            self.push_screen(CourseScreen(self.formulary, self.course, self._remember))

    def _remember(self, course: CourseState) -> None:
        self.course = course

    def action_toggle_theme(self) -> None:
        self.theme = LIGHT if self.current_theme.dark else DARK
