"""The matrix pane: the reduced equations as A x = b with labelled rows and columns."""

from __future__ import annotations

from textual.containers import ScrollableContainer
from textual.widgets import Static

from nodeterm.present.text import matrix_lines

INTRO = ("A x = b after the substitutions so far: one row per equation left to\n"
         "solve, one column per unknown (arrow keys scroll when it is wide).")


def matrix_text(matrix) -> str:
    """The pane's whole text (workers call this: a big matrix takes a while to print)."""
    return "\n".join([INTRO, ""] + matrix_lines(matrix))


class MatrixPane(ScrollableContainer):
    """Shows the labelled matrix, or why it is not there yet."""

    DEFAULT_CSS = """
    MatrixPane > Static { width: auto; }
    """

    def compose(self):
        yield Static("(no circuit loaded)", id="matrix-text", markup=False)

    def show_matrix(self, matrix) -> None:
        self.show_text(matrix_text(matrix))

    def show_text(self, text: str) -> None:
        self.query_one("#matrix-text", Static).update(text)

    def show_note(self, text: str) -> None:
        self.query_one("#matrix-text", Static).update(text)
