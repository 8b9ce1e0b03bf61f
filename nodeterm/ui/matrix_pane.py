"""The matrix pane: A x = b with labelled rows and columns (text from :mod:`nodeterm.present.panes`)."""

from __future__ import annotations

from nodeterm.ui.views import PagedScroll, TextView


class MatrixPane(PagedScroll):
    """Shows the labelled matrix, or why it is not there yet."""

    DEFAULT_CSS = """
    MatrixPane > TextView { width: auto; }
    """

    def compose(self):
        yield TextView("(no circuit loaded)", id="matrix-text")

    def show_text(self, text: str) -> None:
        self.query_one("#matrix-text", TextView).set(text)

    @property
    def text_width(self) -> int:
        return max(40, (self.size.width or 80) - 2)
