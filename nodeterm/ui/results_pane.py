"""The results pane: node voltages, every part current, op-amp output and source currents, [find].

The text is printed in the solver process (:func:`nodeterm.present.panes.results_text`, long
results wrapped to the pane); this widget shows it and scrolls a page left or right at a time.
"""

from __future__ import annotations

from nodeterm.present.panes import note_lines
from nodeterm.ui.views import PagedScroll, TextView


def text_width(pane_width: int) -> int:
    """Columns a result may use in a pane ``pane_width`` wide (the scrollbar takes one or two)."""
    return max(30, pane_width - 2)


class ResultsPane(PagedScroll):
    """Shows the solution's text, or a note (busy, cancelled, singular)."""

    DEFAULT_CSS = """
    ResultsPane > TextView { width: auto; }
    """

    def compose(self):
        yield TextView("(no circuit loaded)", id="results-text")

    @property
    def text_width(self) -> int:
        return text_width(self.size.width or 80)

    def show_text(self, text: str) -> None:
        self.query_one("#results-text", TextView).set(text)

    def show_note(self, text: str) -> None:
        self.show_text(note_lines(text, self.text_width))
