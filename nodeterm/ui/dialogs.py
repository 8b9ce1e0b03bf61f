"""Modal screens: help, yes/no questions, and asking for a file path."""

from __future__ import annotations

from textual import on
from textual.binding import Binding
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Button, Input, Label, Select, Static


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


class DiffScreen(ModalScreen[None]):
    """What the last reload of the file changed, in circuit terms (d or Esc closes)."""

    BINDINGS = [Binding("escape,q,d", "dismiss", "Close")]

    def __init__(self, text: str) -> None:
        super().__init__()
        self.text = text

    def compose(self):
        with VerticalScroll(id="help-box"):
            yield Static(self.text, id="diff-text", markup=False)

    def action_dismiss(self, result=None) -> None:  # noqa: D102
        self.dismiss(None)


class ValueScreen(ModalScreen[None]):
    """Type a value for a parameter. The name beside the box is the one the value goes to; Up/Down
    choose another parameter without leaving the box. Enter applies (a bad value is explained here
    and the dialog stays); Esc closes.

    ``apply(name, value)`` substitutes and returns an error message, or None when it worked.
    """

    BINDINGS = [Binding("escape", "cancel", "Cancel"),
                Binding("up", "move(-1)", "previous parameter", show=False, priority=True),
                Binding("down", "move(1)", "next parameter", show=False, priority=True)]
    AUTO_FOCUS = "#value-input"

    def __init__(self, names: list[str], rows: dict[str, str], name: str, apply) -> None:
        super().__init__()
        self.names, self.rows, self.apply = names, rows, apply
        self.index = names.index(name) if name in names else 0

    @property
    def name_shown(self) -> str:
        return self.names[self.index]

    def compose(self):
        with Vertical(classes="dialog"):
            yield Static("Type a value (4.7k, 100nF, Gain*Rin). Up/Down: another parameter. "
                         "Enter applies, Esc closes.", classes="dialog-question", markup=False)
            with Horizontal(id="value-row"):
                yield Label("", id="value-label", markup=False)
                field = Input(placeholder="value", id="value-input")
                field.cursor_blink = False
                yield field
            yield Static("", id="value-row-text", markup=False)
            yield Static("", id="value-error", markup=False)

    def on_mount(self) -> None:
        self._show_name()

    def _show_name(self) -> None:
        self.query_one("#value-label", Label).update(f"{self.name_shown} =")
        self.query_one("#value-row-text", Static).update(
            f"parameter {self.index + 1} of {len(self.names)}: {self.rows.get(self.name_shown, '')}")
        self.query_one("#value-error", Static).update("")

    def action_move(self, delta: int) -> None:
        self.index = (self.index + delta) % len(self.names)
        self._show_name()

    @on(Input.Submitted, "#value-input")
    def _submitted(self, event: Input.Submitted) -> None:
        value = event.value.strip()
        if not value:
            self.query_one("#value-error", Static).update(f"! type a value for {self.name_shown}, e.g. 10k")
            return
        problem = self.apply(self.name_shown, value)
        if problem:
            self.query_one("#value-error", Static).update(problem)
            return
        self.dismiss(None)

    def action_cancel(self) -> None:
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

    AUTO_FOCUS = "#no"  # Textual focuses it once the screen is up (no query before the children exist)

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

    AUTO_FOCUS = "#path-input"

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


class ExportScreen(ModalScreen[tuple[str, str] | None]):
    """Ask for a format and a file path; the extension follows the format until the path is edited."""

    BINDINGS = [Binding("escape", "cancel", "Cancel")]

    def __init__(self, formats: tuple[str, ...], extensions: dict[str, str], stem: str, folder: str) -> None:
        super().__init__()
        self.formats, self.extensions, self.stem, self.folder = formats, extensions, stem, folder

    def _default(self, fmt: str) -> str:
        import os
        return os.path.join(self.folder, f"{self.stem}-equations{self.extensions.get(fmt, '.txt')}")

    def compose(self):
        with Vertical(classes="dialog"):
            yield Label("Export the equation set (steps, matrix, results, claims)", classes="dialog-question")
            yield Select([(f, f) for f in self.formats], value=self.formats[0], allow_blank=False,
                         id="export-format")
            yield Input(value=self._default(self.formats[0]), id="path-input")
            yield Static("Shift+Tab: format (Enter opens the list). Enter on the path writes. Esc cancels.",
                         markup=False)
            yield Static("", id="path-error", markup=False)

    AUTO_FOCUS = "#path-input"

    @on(Select.Changed, "#export-format")
    def _format(self, event: Select.Changed) -> None:
        field = self.query_one("#path-input", Input)
        if field.value in {self._default(f) for f in self.formats}:
            field.value = self._default(str(event.value))

    @on(Input.Submitted, "#path-input")
    def _submitted(self, event: Input.Submitted) -> None:
        path = event.value.strip()
        if not path:
            self.query_one("#path-error", Static).update("! type a file path")
            return
        self.dismiss((path, str(self.query_one("#export-format", Select).value)))

    def action_cancel(self) -> None:
        self.dismiss(None)
