"""Small widgets the panes share: text that redraws only when it changes, and page-wise scrolling.

Over SSH every redraw costs bytes: a pane that is told the same text again must not draw it again.
"""

from __future__ import annotations

from textual.binding import Binding
from textual.containers import ScrollableContainer, VerticalScroll
from textual.widgets import Static


class TextView(Static):
    """A Static that draws only when its text changes (``markup`` off: engine text has brackets)."""

    def __init__(self, text: str = "", **kwargs) -> None:
        kwargs.setdefault("markup", False)
        super().__init__(text, **kwargs)
        self.text = text

    def set(self, text: str) -> bool:
        """Show ``text``; False (and no redraw) when it is already shown."""
        if text == self.text:
            return False
        self.text = text
        self.update(text)
        return True


PAGE_KEYS = [
    Binding("left", "page_left", "page left", show=False),
    Binding("right", "page_right", "page right", show=False),
    Binding("up", "scroll_up", "scroll up", show=False),
    Binding("down", "scroll_down", "scroll down", show=False),
]


class PagedScroll(ScrollableContainer):
    """Scrolls up/down by lines and left/right by a page (a wide result is read a screen at a time)."""

    BINDINGS = PAGE_KEYS


class PagedVerticalScroll(VerticalScroll):
    BINDINGS = PAGE_KEYS
