"""The claims pane: type a claim of your own derivation and read the audit's verdict.

A claim is an equation (``(V_inv - V_in)/Rin + (V_inv - V_out)/Rf = 0``) or a result under a
``[find]`` name (``gain = -Rf/Rin``). The file's ``[hand]`` claims are listed too. The pane only
asks (:class:`ClaimsPane.Check`); the app has the claim checked and hands back the verdicts' text.
The box keeps the keys after Enter, so claims can be typed one after another; Esc leaves it.
"""

from __future__ import annotations

from textual import on
from textual.containers import Vertical
from textual.message import Message
from textual.widgets import Input

from nodeterm.ui.safety import guarded
from nodeterm.ui.views import PagedVerticalScroll, TextView

HELP = ("Type a claim, Enter checks it (the box stays ready for the next; Esc leaves it):\n"
        "  an equation, e.g.  (V_inv - V_in)/Rin + (V_inv - V_out)/Rf = 0\n"
        "  or a result  NAME = value  for a [find] name, e.g.  gain = -Rf/Rin")


class ClaimsPane(Vertical):
    """Claims and their verdicts (holds / FAILS / ERROR, spelled out, never colour alone)."""

    class Check(Message):
        """The user asks to check ``text``."""

        def __init__(self, text: str) -> None:
            self.text = text
            super().__init__()

    def compose(self):
        yield TextView(HELP, id="claims-help")
        field = Input(placeholder="a claim, Enter checks it", id="claim-input")
        field.cursor_blink = False  # a blinking cursor writes to the terminal twice a second
        yield field
        yield TextView("", id="claim-error")
        with PagedVerticalScroll(id="claims-scroll"):
            yield TextView("(no claims yet)", id="claims-text")

    @property
    def pending(self) -> str:
        return self.query_one("#claim-input", Input).value.strip()

    @on(Input.Submitted, "#claim-input")
    @guarded
    def _submitted(self, event: Input.Submitted) -> None:
        if not event.value.strip():
            self.show_error("! type a claim first, e.g. V_inv = 0")
            return
        self.post_message(self.Check(event.value.strip()))

    def focus_input(self) -> None:
        self.query_one("#claim-input", Input).focus()

    def show_error(self, text: str) -> None:
        self.query_one("#claim-error", TextView).set(text)

    def accepted(self) -> None:
        """The claim is being checked: clear the box and keep it ready for the next claim."""
        self.query_one("#claim-input", Input).value = ""
        self.show_error("")

    def show_verdicts(self, text: str) -> None:
        self.query_one("#claims-text", TextView).set(text or "(no claims yet)")
