"""The App: the formulary it runs on, the global keys and the screens.

Started by `launch`, the app paints the check screen first and reads the
formulary (and the episode) in a thread after that first frame: pint, pydantic
and the engine load while the form is already typed into.  A file that cannot
be used ends the app (`load_error`, exit status 2) before any figure is shown.
The help, formulary, verification and course screens, and their modules, are
imported when first opened.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import TYPE_CHECKING, ClassVar

from rich.console import RenderableType
from textual.app import App
from textual.binding import BindingType
from textual.screen import Screen
from textual.worker import Worker, WorkerState

from osmodose.app import keys
from osmodose.app.loading import Loaded, is_demo
from osmodose.app.screens.main import MainScreen
from osmodose.errors import OsmodoseError

if TYPE_CHECKING:
    from osmodose.app.course_view import CourseState
    from osmodose.formulary.model import Formulary

DARK, LIGHT = "textual-dark", "textual-light"
#: The exit status of an app whose formulary or episode could not be used (as `osmodose check`'s).
BAD_FILE = 2


class OsmodoseApp(App[None]):
    """Opens on the check (or on the course, given an episode); help, formulary and course are screens over it."""

    CSS_PATH = "osmodose.tcss"
    TITLE = "osmodose"
    # Every action is a key in the footer; a palette would be a second, hidden way in.
    ENABLE_COMMAND_PALETTE = False
    BINDINGS: ClassVar[list[BindingType]] = keys.EVERYWHERE

    def __init__(
        self,
        formulary: Formulary | None = None,
        theme: str = DARK,
        course: CourseState | None = None,
        *,
        load: Callable[[], Loaded] | None = None,
        loading: str = "reading the formulary",
        demo: bool | None = None,
    ) -> None:
        """Either a `formulary` (read already), or `load`, run in a thread after the first frame."""
        super().__init__()
        if (formulary is None) == (load is None):
            raise ValueError("give a formulary or a loader, not both")
        self.formulary = formulary
        self.theme = theme
        self.course = course  # the episode last opened: the course screen reopens on it
        self.load = load
        self.loading_text = loading
        self.demo = demo if demo is not None else (formulary is not None and is_demo(formulary))
        self.load_error: OsmodoseError | None = None
        self._load_started = False

    def get_default_screen(self) -> MainScreen:
        return MainScreen(self.formulary, self.demo, self.loading_text)

    def on_mount(self) -> None:
        if self.load is not None:
            self.call_after_refresh(self._start_loading)  # in case no frame is written (see _display)
        elif self.course is not None:  # started with --episode: open on it
            self.action_course()

    def _display(self, screen: Screen[object], renderable: RenderableType | None) -> None:
        """Once the first frame is written, start the loader (earlier, it would share the GIL with the frame).

        Sooner than `call_after_refresh`, which waits for Textual's second layout
        pass after the first frame, a frame's time (17 ms) later: the loader has
        that time to itself.
        """
        super()._display(screen, renderable)
        if renderable is not None and self.load is not None and not self._load_started:
            self._start_loading()

    def _start_loading(self) -> None:
        assert self.load is not None
        if not self._load_started:
            self._load_started = True
            self.run_worker(self._load_in_thread, name="load", thread=True, exit_on_error=True)

    def _load_in_thread(self) -> Loaded | OsmodoseError:
        assert self.load is not None
        try:
            return self.load()
        except OsmodoseError as error:
            return error

    def on_worker_state_changed(self, event: Worker.StateChanged) -> None:
        if event.worker.name != "load" or event.state is not WorkerState.SUCCESS:
            return
        loaded = event.worker.result
        if isinstance(loaded, OsmodoseError):
            self.load_error = loaded
            self.exit(return_code=BAD_FILE)
            return
        assert isinstance(loaded, Loaded)
        self.formulary, self.demo, self.course = loaded.formulary, loaded.demo, loaded.course
        main = self.screen_stack[0]
        assert isinstance(main, MainScreen)
        main.engine_ready(loaded.formulary, loaded.demo)
        self.refresh_bindings()
        if self.course is not None:
            self.action_course()

    def check_action(self, action: str, parameters: tuple[object, ...]) -> bool | None:
        """The other screens need the formulary: shown dimmed in the footer until it is read."""
        if action in ("help", "formulary", "verify", "course") and self.formulary is None:
            return None
        return True

    def action_help(self) -> None:
        from osmodose.app.screens.help import HelpScreen  # noqa: PLC0415 (imported when first opened)

        if isinstance(self.screen, HelpScreen):
            self.pop_screen()
        else:
            assert self.formulary is not None
            self.push_screen(HelpScreen(self.formulary, self.demo))

    def action_formulary(self) -> None:
        from osmodose.app.screens.formulary import FormularyScreen  # noqa: PLC0415 (imported when first opened)

        if isinstance(self.screen, FormularyScreen):
            self.pop_screen()
        else:
            assert self.formulary is not None
            self.push_screen(FormularyScreen(self.formulary, self.demo))

    def action_verify(self) -> None:
        """The verification screen over the check; kept (installed) so its order survives a trip back."""
        from osmodose.app.screens.verify import VerifyScreen  # noqa: PLC0415 (imported when first opened)

        if isinstance(self.screen, VerifyScreen):
            self.pop_screen()
            return
        if not self.is_screen_installed("verify"):
            main = self.screen_stack[0]
            assert isinstance(main, MainScreen) and self.formulary is not None
            self.install_screen(VerifyScreen(self.formulary, main.values, self.demo), "verify")
        self.push_screen("verify")

    def action_course(self) -> None:
        from osmodose.app.screens.course import CourseScreen  # noqa: PLC0415 (imported when first opened)

        if isinstance(self.screen, CourseScreen):
            self.pop_screen()
        else:
            assert self.formulary is not None
            self.push_screen(CourseScreen(self.formulary, self.course, self._remember, self.demo))

    def _remember(self, course: CourseState) -> None:
        self.course = course

    def action_toggle_theme(self) -> None:
        self.theme = LIGHT if self.current_theme.dark else DARK
