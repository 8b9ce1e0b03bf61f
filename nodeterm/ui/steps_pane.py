"""The procedure pane: walk the recorded steps; equations tied to their parts.

Left, the parts; right, the equations of the current step with each KCL term
on its own line under its part's id. Highlighting an equation marks its parts
(``*``); highlighting a part marks its terms and the equations that hold it.
The highlighted item itself carries ``▶``, so nothing depends on colour.
"""

from __future__ import annotations

from textual import on
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.content import Content
from textual.message import Message
from textual.reactive import reactive
from textual.widgets import OptionList, Static
from textual.widgets.option_list import Option

from nodeterm.ui import render
from nodeterm.ui.safety import guarded
from nodeterm.ui.describe import part_nodes

TERMS_KINDS = ("kcl", "supernode_kcl")


class StepsPane(Vertical):
    """The recorded procedure, one step at a time."""

    BINDINGS = [
        Binding("tab,shift+tab", "swap_lists", "parts/equations", show=False),
        Binding("left", "focus_list('parts-list')", "parts", show=False),
        Binding("right", "focus_list('equation-list')", "equations", show=False),
    ]

    index: reactive[int] = reactive(0, always_update=True)

    class StepChanged(Message):
        """The step shown changed (the app updates its status line)."""

        def __init__(self, index: int, total: int) -> None:
            self.index, self.total = index, total
            super().__init__()

    def __init__(self, **kwargs) -> None:
        super().__init__(**kwargs)
        self.system = None
        self.two_d = False
        self.selected_eq: int | None = None
        self.selected_part: str | None = None

    def compose(self):
        yield Static("", id="step-head", markup=False)
        yield Static("", id="step-text", markup=False)
        with Horizontal(id="step-body"):
            parts = OptionList(id="parts-list")
            parts.border_title = "Parts"
            yield parts
            eqs = OptionList(id="equation-list")
            eqs.border_title = "Equations (up/down)"
            yield eqs

    # --- public API (the app's actions call these) --------------------------
    def show(self, system, keep_step: bool = True) -> None:
        """Show ``system``; keep the current step when it still exists, else go to the last step."""
        old = self.system
        self.system = system
        parts = self.query_one("#parts-list", OptionList)
        parts.clear_options()
        parts.add_options([Option(self._part_prompt(p.id), id=p.id) for p in system.circuit.parts])
        if self.selected_part not in system.circuit.part_ids:
            self.selected_part = None
        if old is not None and len(system.steps) > len(old.steps):
            self.index = len(system.steps) - 1  # a substitution was just applied: show it
        elif keep_step:
            self.index = min(self.index, len(system.steps) - 1)
        else:
            self.index = 0

    @property
    def steps(self):
        return self.system.steps if self.system else ()

    @property
    def step(self):
        return self.steps[self.index] if self.steps else None

    def go(self, delta: int) -> bool:
        """Move ``delta`` steps; False at either end."""
        target = self.index + delta
        if not self.steps or not 0 <= target < len(self.steps):
            return False
        self.index = target
        return True

    def set_two_d(self, on_: bool) -> None:
        self.two_d = on_
        self._fill_equations()

    @guarded
    def action_swap_lists(self) -> None:
        parts = self.query_one("#parts-list", OptionList)
        self.action_focus_list("equation-list" if parts.has_focus else "parts-list")

    @guarded
    def action_focus_list(self, name: str) -> None:
        self.query_one(f"#{name}", OptionList).focus()

    # --- rendering ----------------------------------------------------------
    @guarded
    def watch_index(self, index: int) -> None:
        if not self.is_mounted or self.system is None:
            return
        step = self.step
        total = len(self.steps)
        self.query_one("#step-head", Static).update(
            f"Step {index + 1} of {total}: {step.title}    (n next, b back)")
        self.query_one("#step-text", Static).update(self._step_text(step))
        self.selected_eq = 0 if step.equations else None
        self._fill_equations()
        self.post_message(self.StepChanged(index, total))

    def _step_text(self, step) -> str:
        text = step.text
        extra = []
        if step.kind == "reference" and step.data.get("unknowns"):
            extra.append("Unknowns: " + ", ".join(step.data["unknowns"]))
        if step.kind == "kcl" and step.data.get("skipped"):  # first, so a short screen never cuts it
            text = "Skipped (op-amp outputs): " + ", ".join(
                f"{node} (output of {pid})" for node, pid in step.data["skipped"]) + "\n" + text
        if step.kind == "known_substitution" and step.data.get("unknowns"):
            extra.append("Left to solve for: " + ", ".join(step.data["unknowns"]))
        if not step.equations:
            extra.append("(no equations at this step)")
        return "\n".join([text] + extra)

    def _fill_equations(self) -> None:
        eqs = self.query_one("#equation-list", OptionList)
        step = self.step
        eqs.clear_options()
        if step is None:
            return
        eqs.add_options([Option(self._eq_prompt(i)) for i in range(len(step.equations))])
        if step.equations:
            eqs.highlighted = self.selected_eq or 0
        self._refresh_parts()

    def _eq_prompt(self, i: int) -> str:
        eq = self.step.equations[i]
        holds = self.selected_part is not None and self.selected_part in self._eq_parts(eq)
        mark = render.MARK if i == self.selected_eq else (render.TIED if holds else " ")
        width = max(20, self.query_one("#equation-list").size.width - 8)
        body = render.equation(eq, self.two_d, width)
        lines = [f"{mark} [{eq.label}]"] + ["    " + ln for ln in body.splitlines()]
        if eq.terms and eq.kind in TERMS_KINDS:
            for t in eq.terms:
                tmark = render.TIED if t.part == self.selected_part else " "
                lines.append(f"   {tmark} {t.part}: {render.term(t.expr)}")
        elif eq.parts:
            lines.append("     parts: " + ", ".join(eq.parts))
        return Content("\n".join(lines))

    @staticmethod
    def _eq_parts(eq) -> tuple[str, ...]:
        return tuple(t.part for t in eq.terms) or eq.parts

    def _part_prompt(self, pid: str) -> str:
        eq = None
        if self.step is not None and self.selected_eq is not None and self.selected_eq < len(self.step.equations):
            eq = self.step.equations[self.selected_eq]
        tied = eq is not None and pid in self._eq_parts(eq)
        mark = render.MARK if pid == self.selected_part else (render.TIED if tied else " ")
        part = self.system.circuit.part(pid)
        where = part_nodes(part).replace(" out=", "\n    out=")
        return Content(f"{mark} {pid} {part.kind}\n    {where}")

    def _refresh_parts(self) -> None:
        parts = self.query_one("#parts-list", OptionList)
        for i, p in enumerate(self.system.circuit.parts):
            parts.replace_option_prompt_at_index(i, self._part_prompt(p.id))

    def _refresh_equations(self) -> None:
        eqs = self.query_one("#equation-list", OptionList)
        if self.step is None:
            return
        for i in range(len(self.step.equations)):
            eqs.replace_option_prompt_at_index(i, self._eq_prompt(i))

    # --- selection ----------------------------------------------------------
    @on(OptionList.OptionHighlighted, "#equation-list")
    @guarded
    def _equation_highlighted(self, event: OptionList.OptionHighlighted) -> None:
        if event.option_index == self.selected_eq:
            return
        self.select_equation(event.option_index)

    @guarded
    def on_descendant_focus(self, event) -> None:
        parts = self.query_one("#parts-list", OptionList)
        if event.widget is parts:
            if parts.highlighted is None and parts.option_count:
                parts.highlighted = 0
            elif parts.highlighted is not None:
                self.select_part(parts.get_option_at_index(parts.highlighted).id)

    @on(OptionList.OptionHighlighted, "#parts-list")
    @guarded
    def _part_highlighted(self, event: OptionList.OptionHighlighted) -> None:
        if not self.query_one("#parts-list").has_focus:
            return
        self.select_part(event.option.id)

    def select_equation(self, i: int | None) -> None:
        """Highlight equation ``i`` of the current step and mark its parts."""
        self.selected_eq = i
        self._refresh_equations()
        self._refresh_parts()

    def select_part(self, pid: str | None) -> None:
        """Highlight a part and mark its terms in the equations."""
        self.selected_part = pid
        self._refresh_parts()
        self._refresh_equations()

    def tied_parts(self) -> tuple[str, ...]:
        """Parts of the highlighted equation (what the parts list marks)."""
        if self.step is None or self.selected_eq is None or self.selected_eq >= len(self.step.equations):
            return ()
        return self._eq_parts(self.step.equations[self.selected_eq])
