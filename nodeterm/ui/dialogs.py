"""Modal screens: help, yes/no questions, and asking for a file path."""

from __future__ import annotations

from textual import on
from textual.binding import Binding
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Button, Input, Label, Static


class HelpScreen(ModalScreen[None]):
    """Every key of the workbench, and what the panes show."""

    BINDINGS = [Binding("escape,q,question_mark,f1", "dismiss", "Close help")]

    def __init__(self, text: str) -> None:
        super().__init__()
        self.text = text

    def compose(self):
        with VerticalScroll(id="help-box"):
            yield Static(self.text, id="help-text", markup=False)

    def action_dismiss(self, result=None) -> None:  # noqa: D102
        self.dismiss(None)


class ConfirmScreen(ModalScreen[bool]):
    """A yes/no question: y or Enter on Yes says yes; n or Esc says no."""

    BINDINGS = [Binding("y", "answer(True)", "Yes"), Binding("n,escape", "answer(False)", "No")]

    def __init__(self, question: str, yes: str = "Yes", no: str = "No") -> None:
        super().__init__()
        self.question, self.yes, self.no = question, yes, no

    def compose(self):
        with Vertical(classes="dialog"):
            yield Static(self.question, classes="dialog-question", markup=False)
            with Horizontal(classes="dialog-buttons"):
                yield Button(f"{self.yes} (y)", id="yes")
                yield Button(f"{self.no} (n)", id="no")

    def on_mount(self) -> None:
        self.query_one("#no", Button).focus()

    def action_answer(self, value: bool) -> None:
        self.dismiss(value)

    @on(Button.Pressed)
    def _pressed(self, event: Button.Pressed) -> None:
        self.dismiss(event.button.id == "yes")


class PathScreen(ModalScreen[str | None]):
    """Ask for a file path; Enter accepts, Esc cancels. ``check`` may return an error to show inline."""

    BINDINGS = [Binding("escape", "cancel", "Cancel")]

    def __init__(self, title: str, value: str = "", check=None, note: str = "") -> None:
        super().__init__()
        self.title_text, self.value, self.check, self.note = title, value, check, note

    def compose(self):
        with Vertical(classes="dialog"):
            yield Label(self.title_text, classes="dialog-question")
            yield Input(value=self.value, id="path-input")
            yield Static(self.note or "Enter: accept   Esc: cancel", id="path-note", markup=False)
            yield Static("", id="path-error", markup=False)

    def on_mount(self) -> None:
        self.query_one("#path-input", Input).focus()

    @on(Input.Submitted, "#path-input")
    def _submitted(self, event: Input.Submitted) -> None:
        path = event.value.strip()
        problem = "type a file path" if not path else (self.check(path) if self.check else None)
        if problem:
            self.query_one("#path-error", Static).update(f"! {problem}")
            return
        self.dismiss(path)

    def action_cancel(self) -> None:
        self.dismiss(None)
