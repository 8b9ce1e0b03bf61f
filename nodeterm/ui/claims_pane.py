"""The claims pane: type a claim of your own derivation and read the audit's verdict.

A claim is an equation (``(V_inv - V_in)/Rin + (V_inv - V_out)/Rf = 0``) or a
result under a ``[find]`` name (``gain = -Rf/Rin``). The file's ``[hand]``
claims are listed too. The pane only asks (:class:`ClaimsPane.Check`); the app
runs the engine's audit and hands back the verdict lines.
"""

from __future__ import annotations

from textual import on
from textual.containers import Vertical, VerticalScroll
from textual.message import Message
from textual.widgets import Input, Static

from nodeterm.ui.safety import guarded

HELP = ("Type a claim, Enter checks it against the node equations:\n"
        "  an equation, e.g.  (V_inv - V_in)/Rin + (V_inv - V_out)/Rf = 0\n"
        "  or a result  NAME = value  for a [find] name, e.g.  gain = -Rf/Rin   (Esc leaves the box)")


class ClaimsPane(Vertical):
    """Claims and their verdicts (holds / FAILS / ERROR, spelled out, never colour alone)."""

    class Check(Message):
        """The user asks to check ``text``."""

        def __init__(self, text: str) -> None:
            self.text = text
            super().__init__()

    def compose(self):
        yield Static(HELP, id="claims-help", markup=False)
        yield Input(placeholder="a claim, Enter checks it", id="claim-input")
        yield Static("", id="claim-error", markup=False)
        with VerticalScroll(id="claims-scroll"):
            yield Static("(no claims yet)", id="claims-text", markup=False)

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
        self.query_one("#claim-error", Static).update(text)

    def accepted(self) -> None:
        """The claim is being checked: clear the box and give the keys back (6 returns to the box)."""
        self.query_one("#claim-input", Input).value = ""
        self.show_error("")
        self.query_one("#claims-scroll").focus()

    def show_verdicts(self, lines: list[str]) -> None:
        self.query_one("#claims-text", Static).update("\n".join(lines) if lines else "(no claims yet)")
