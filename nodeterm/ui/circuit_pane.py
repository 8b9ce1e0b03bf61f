"""The circuit pane: title, warnings, what meets at each node, parts, parameters, [find].

The text is :func:`nodeterm.present.panes.circuit_lines`; this widget only shows it.
"""

from __future__ import annotations

from nodeterm.ui.views import PagedScroll, TextView


class CircuitPane(PagedScroll):
    """Read-only overview of the loaded circuit."""

    DEFAULT_CSS = """
    CircuitPane > TextView { width: auto; }
    """

    def compose(self):
        yield TextView("(no circuit loaded)", id="circuit-text")

    def show_text(self, text: str) -> None:
        self.query_one("#circuit-text", TextView).set(text)
