"""What the app loads behind its first frame: the formulary (checked), the episode if one is named, and the engine.

Plain code with no textual: `load_files` runs in the app's loader thread, and
raises the same OsmodoseError `osmodose check` (or `course show`) would for a
file that cannot be used.  Its imports are inside it on purpose: they are the
slow part of starting (pint, pydantic, numpy), paid while the form is already
on screen.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from osmodose.app.course_view import CourseState
    from osmodose.formulary.model import Formulary


@dataclass(frozen=True)
class Loaded:
    """A usable formulary (and episode), and whether it is the bundled demo."""

    formulary: Formulary
    course: CourseState | None = None
    demo: bool = False


def is_demo(formulary: Formulary) -> bool:
    """Whether `formulary` is the bundled demo file (an invented unit): every screen says so."""
    from osmodose.formulary import demo_formulary_path  # noqa: PLC0415 (see the module's docstring)

    return Path(formulary.path).resolve() == demo_formulary_path().resolve()


def load_files(formulary_path: str | None, episode_path: str | None = None) -> Loaded:
    """Read and check the formulary (the demo when None) and the episode; import the engine."""
    from osmodose.formulary import demo_formulary_path, load_formulary  # noqa: PLC0415

    formulary = load_formulary(formulary_path or demo_formulary_path())
    course = None
    if episode_path is not None:
        from osmodose.app.course_view import open_course  # noqa: PLC0415

        course = open_course(episode_path, formulary)
    import osmodose.app.view  # noqa: F401, PLC0415 (the engine, so the first key after loading does not pay for it)

    return Loaded(formulary, course, is_demo(formulary))


def loading_words(formulary_path: str | None) -> str:
    """What the screen says it is loading."""
    return f"reading the formulary {formulary_path}" if formulary_path else "reading the demo formulary"
