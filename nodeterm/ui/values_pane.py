"""The values pane: pick a parameter, type a value, apply; bad input gets an inline message.

The pane only asks: it posts :class:`ValuesPane.Apply` and the app calls the
engine, then tells the pane the outcome with :meth:`show_error` or
:meth:`applied`.
"""

from __future__ import annotations

from textual import on
from textual.containers import Horizontal, Vertical
from textual.content import Content
from textual.message import Message
from textual.widgets import Input, Label, OptionList, Static
from textual.widgets.option_list import Option

from nodeterm.present.format import value_text
from nodeterm.ui.render import MARK
from nodeterm.ui.safety import guarded

HELP = ("Pick a parameter (up/down), Enter or Tab to the value box, type a value such as 4.7k, 100nF or "
        "Gain*Rin, Enter applies.  k: all known values   u: undo last   Esc: leave the box")


class ValuesPane(Vertical):
    """Substitution of parameter values."""

    class Apply(Message):
        """The user asks to substitute ``value`` for ``name``."""

        def __init__(self, name: str, value: str) -> None:
            self.name, self.value = name, value
            super().__init__()

    def __init__(self, **kwargs) -> None:
        super().__init__(**kwargs)
        self.system = None
        self.history: list[str] = []

    def compose(self):
        yield Static(HELP, id="values-help", markup=False)
        params = OptionList(id="param-list")
        params.border_title = "Parameters (file value, value now)"
        yield params
        with Horizontal(id="value-row"):
            yield Label("value:", id="value-label")
            yield Input(placeholder="type a value, Enter applies", id="value-input")
        yield Static("", id="value-error", markup=False)
        yield Static("", id="value-history", markup=False)

    @property
    def selected(self) -> str | None:
        lst = self.query_one("#param-list", OptionList)
        if lst.highlighted is None or lst.option_count == 0:
            return None
        return lst.get_option_at_index(lst.highlighted).id

    @property
    def pending(self) -> str:
        """Text typed but not applied."""
        return self.query_one("#value-input", Input).value.strip()

    def show(self, system, history: list[str]) -> None:
        keep = self.selected
        self.system = system
        lst = self.query_one("#param-list", OptionList)
        lst.clear_options()
        params = system.circuit.parameters
        width = max((len(n) for n in params), default=2)
        wfile = max((len(p.text) for p in params.values() if p.value is not None), default=1)
        self.rows = {}
        for name, prm in params.items():
            written = prm.text if prm.value is not None else "-"
            now = system.values.get(name)
            state = f"now {value_text(now)}" if now is not None else "now a symbol"
            self.rows[name] = f"{name.ljust(width)}  file: {written.ljust(wfile)}  {state}"
            lst.add_option(Option(Content("  " + self.rows[name]), id=name))
        if not params:
            lst.add_option(Option("(this circuit has no parameters)", id="", disabled=True))
        names = list(params)
        lst.highlighted = names.index(keep) if keep in names else (0 if names else None)
        self._label()
        self._marks()
        self.history = history
        self.query_one("#value-history", Static).update(
            "Applied, in order: " + ("; ".join(f"{i}. {h}" for i, h in enumerate(history, 1)) or "nothing yet"))

    def _label(self) -> None:
        name = self.selected
        self.query_one("#value-label", Label).update(f"{name} =" if name else "value:")

    def _marks(self) -> None:
        """Mark the picked parameter with a textual marker (legible without colour)."""
        lst = self.query_one("#param-list", OptionList)
        picked = self.selected
        for i, name in enumerate(getattr(self, "rows", {})):
            mark = f"{MARK} " if name == picked else "  "
            lst.replace_option_prompt_at_index(i, Content(mark + self.rows[name]))

    @on(OptionList.OptionHighlighted, "#param-list")
    @guarded
    def _picked(self, event: OptionList.OptionHighlighted) -> None:
        self._label()
        self._marks()
        self.show_error("")

    @on(OptionList.OptionSelected, "#param-list")
    @guarded
    def _chosen(self, event: OptionList.OptionSelected) -> None:
        self.query_one("#value-input", Input).focus()

    @on(Input.Submitted, "#value-input")
    @guarded
    def _submitted(self, event: Input.Submitted) -> None:
        name = self.selected
        if not name:
            self.show_error("! pick a parameter first (up/down in the list above)")
            return
        if not event.value.strip():
            self.show_error(f"! type a value for {name}, e.g. 10k")
            return
        self.post_message(self.Apply(name, event.value.strip()))

    def focus_value(self) -> None:
        self.query_one("#value-input", Input).focus()

    def show_error(self, text: str) -> None:
        self.query_one("#value-error", Static).update(text)

    def applied(self) -> None:
        """The value was substituted: clear the box and give the keys back to the list."""
        self.query_one("#value-input", Input).value = ""
        self.show_error("")
        self.query_one("#param-list", OptionList).focus()
