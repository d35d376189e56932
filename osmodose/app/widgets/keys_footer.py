"""The footer of keys, on screen from the first frame and rebuilt only when the keys shown change.

Textual's Footer shows nothing in its first frame: it waits for the screen's
bindings to settle, then composes its keys after a refresh, a second round of
widgets and a layout after the screen is up (and again on every change of
focus, though the keys shown stay the same).  Here the keys are composed with
the screen, and a change of bindings that leaves the same keys in the same
order only dims or undims them in place (the app's screens dim f1-f4 until the
formulary is read).
"""

from __future__ import annotations

from textual.app import ComposeResult
from textual.screen import Screen
from textual.widgets import Footer
from textual.widgets._footer import FooterKey

#: A shown key as the footer draws it: (key, description, action).
Shown = tuple[str, str, str]


class KeysFooter(Footer):
    """A Footer whose keys are there in the first frame."""

    def compose(self) -> ComposeResult:
        # The screen's and the app's bindings are known when the screen is composed; a focused
        # widget's own keys are never shown in these footers (all show=False).
        self.set_reactive(Footer._bindings_ready, True)
        yield from super().compose()

    def _wanted(self, screen: Screen[object]) -> list[tuple[Shown, bool]]:
        """The keys the footer would show, one per action as Footer.compose makes them, and whether enabled."""
        seen: dict[str, tuple[Shown, bool]] = {}
        for _, binding, enabled, _ in screen.active_bindings.values():
            if binding.show and binding.action not in seen:
                seen[binding.action] = ((binding.key, binding.description, binding.action), enabled)
        return list(seen.values())

    def bindings_changed(self, screen: Screen[object]) -> None:
        if not (self.is_attached and screen is self.screen):
            return
        keys = list(self.query_children(FooterKey))
        wanted = self._wanted(screen)
        if [shown for shown, _ in wanted] == [(k.key, k.description, k.action) for k in keys]:
            for key, (_, enabled) in zip(keys, wanted, strict=True):
                if key._disabled == enabled:
                    key._disabled = not enabled
                    key.set_class(not enabled, "-disabled")
            return
        super().bindings_changed(screen)
