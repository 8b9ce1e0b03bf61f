"""The values pane: the parameters with their file value and the value substituted now.

There is no text box here, so nothing typed in this pane is taken for a value: Enter (or ``v``)
opens the value dialog for the highlighted parameter, where Up/Down still choose the parameter
and the name beside the box is the one the value goes to.
"""

from __future__ import annotations

from textual import on
from textual.containers import Vertical
from textual.content import Content
from textual.message import Message
from textual.widgets import OptionList
from textual.widgets.option_list import Option

from nodeterm.present import panes
from nodeterm.ui.safety import guarded
from nodeterm.ui.views import TextView

HELP = ("Up/Down pick a parameter; Enter or v types a value for it (4.7k, 100nF, Gain*Rin).\n"
        "k substitutes every file value, u undoes, Ctrl+R redoes.")


class ValuesPane(Vertical):
    """Parameters and the substitutions applied so far."""

    class Pick(Message):
        """The user asks to type a value for ``name``."""

        def __init__(self, name: str | None) -> None:
            self.name = name
            super().__init__()

    def __init__(self, **kwargs) -> None:
        super().__init__(**kwargs)
        self.names: list[str] = []
        self.rows: dict[str, str] = {}
        self._prompts: list[str] = []

    def compose(self):
        yield TextView(HELP, id="values-help")
        params = OptionList(id="param-list")
        params.border_title = "Parameters (file value, value now)"
        yield params
        yield TextView("", id="value-history")

    @property
    def selected(self) -> str | None:
        lst = self.query_one("#param-list", OptionList)
        if lst.highlighted is None or not self.names:
            return None
        return self.names[lst.highlighted]

    def show(self, parameters, values: dict, history: str) -> None:
        """Show the parameters with ``values`` substituted now; keeps the highlighted parameter."""
        keep = self.selected
        names = list(parameters)
        self.rows = panes.value_rows(parameters, values)
        lst = self.query_one("#param-list", OptionList)
        if names != self.names:
            self.names = names
            self._prompts = []
            lst.clear_options()
            if names:
                lst.add_options([Option(Content(""), id=n) for n in names])
            else:
                lst.add_option(Option("(this circuit has no parameters)", disabled=True))
            lst.highlighted = names.index(keep) if keep in names else (0 if names else None)
        self._marks()
        self.query_one("#value-history", TextView).set(history)

    def select(self, name: str) -> None:
        if name in self.names:
            self.query_one("#param-list", OptionList).highlighted = self.names.index(name)

    def _marks(self) -> None:
        """Mark the picked parameter with a textual marker (legible without colour)."""
        lst = self.query_one("#param-list", OptionList)
        picked = self.selected
        prompts = [(f"{panes.MARK} " if n == picked else "  ") + self.rows[n] for n in self.names]
        for i, text in enumerate(prompts):
            if i >= len(self._prompts) or self._prompts[i] != text:
                lst.replace_option_prompt_at_index(i, Content(text))
        self._prompts = prompts

    @on(OptionList.OptionHighlighted, "#param-list")
    @guarded
    def _picked(self, event: OptionList.OptionHighlighted) -> None:
        self._marks()

    @on(OptionList.OptionSelected, "#param-list")
    @guarded
    def _chosen(self, event: OptionList.OptionSelected) -> None:
        self.post_message(self.Pick(self.selected))
