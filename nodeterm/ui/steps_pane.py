"""The procedure pane: walk the recorded steps; equations tied to their parts.

Left, the parts; right, the equations of the current step with each KCL term on its own line
under its part's id. Highlighting an equation marks its parts (``*``); highlighting a part marks
its terms and the equations that hold it. The highlighted item itself carries ``▶``, so nothing
depends on colour. The text is built by :mod:`nodeterm.present.panes`; a list is only redrawn
where its text changed.
"""

from __future__ import annotations

from textual import on
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.content import Content
from textual.message import Message
from textual.widgets import OptionList
from textual.widgets.option_list import Option

from nodeterm.present import panes
from nodeterm.ui.safety import guarded
from nodeterm.ui.views import TextView


class StepsPane(Vertical):
    """The recorded procedure, one step at a time."""

    BINDINGS = [
        Binding("tab,shift+tab", "swap_lists", "parts/equations", show=False),
        Binding("left", "focus_list('parts-list')", "parts", show=False),
        Binding("right", "focus_list('equation-list')", "equations", show=False),
    ]

    class StepChanged(Message):
        """The step shown changed (the app updates its status line)."""

        def __init__(self, index: int, total: int) -> None:
            self.index, self.total = index, total
            super().__init__()

    def __init__(self, **kwargs) -> None:
        super().__init__(**kwargs)
        self.system = None
        self.index = 0
        self.two_d = False
        self.selected_eq: int | None = None
        self.selected_part: str | None = None
        self.changed_labels: frozenset = frozenset()  # equations the last reload changed, marked CHANGED
        self._eq_prompts: list[str] = []
        self._part_prompts: list[str] = []
        self._first_ids: list[str] | None = None  # the parts the first screen listed (before any system)

    def compose(self):
        yield TextView("", id="step-head")
        yield TextView("", id="step-text")
        with Horizontal(id="step-body"):
            parts = OptionList(id="parts-list")
            parts.border_title = "Parts"
            yield parts
            eqs = OptionList(id="equation-list")
            eqs.border_title = "Equations (up/down)"
            yield eqs

    # --- public API (the app calls these) -----------------------------------------------------
    def show(self, system, last: bool = False) -> None:
        """Show ``system``: its last step when ``last`` (a substitution was just made), else the same
        step number, clamped to the steps it has."""
        same_circuit = self.system is not None and system.circuit is self.system.circuit
        # the first screen listed the same parts already: keep the list (nothing to redraw)
        shown = self.system is None and self._first_ids == [p.id for p in system.circuit.parts]
        self.system = system
        self._first_ids = None
        if not same_circuit and not shown:
            self._part_prompts = []
            parts = self.query_one("#parts-list", OptionList)
            parts.clear_options()
            parts.add_options([Option(Content(""), id=p.id) for p in system.circuit.parts])
            if self.selected_part not in system.circuit.part_ids:
                self.selected_part = None
        self.index = len(system.steps) - 1 if last else max(0, min(self.index, len(system.steps) - 1))
        self._show_step()

    def show_first(self, head: str, text: str, equations: list[str], parts: list[tuple[str, str]]) -> None:
        """Show the first step from text printed elsewhere (the workbench's first screen, drawn before
        the engine is imported here): ``equations`` and ``parts`` ((id, prompt) pairs) as
        :func:`~nodeterm.present.panes.equation_prompts` and ``part_prompts`` print them for step 1."""
        self.index = 0
        self._first_ids = [pid for pid, _ in parts]
        self.query_one("#step-head", TextView).set(head)
        self.query_one("#step-text", TextView).set(text)
        lst = self.query_one("#parts-list", OptionList)
        lst.clear_options()
        lst.add_options([Option(Content(prompt), id=pid) for pid, prompt in parts])
        self._part_prompts = [prompt for _, prompt in parts]
        eqs = self.query_one("#equation-list", OptionList)
        eqs.clear_options()
        eqs.add_options([Option(Content(p)) for p in equations])
        self._eq_prompts = list(equations)
        self.selected_eq = 0 if equations else None
        if equations:
            eqs.highlighted = 0

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
        self._show_step()
        return True

    def set_two_d(self, on_: bool) -> None:
        if on_ != self.two_d:
            self.two_d = on_
            self._fill_equations()

    @guarded
    def action_swap_lists(self) -> None:
        parts = self.query_one("#parts-list", OptionList)
        self.action_focus_list("equation-list" if parts.has_focus else "parts-list")

    @guarded
    def action_focus_list(self, name: str) -> None:
        self.query_one(f"#{name}", OptionList).focus()

    # --- rendering ------------------------------------------------------------------------------
    def _show_step(self) -> None:
        step = self.step
        if step is None:
            return
        total = len(self.steps)
        self.query_one("#step-head", TextView).set(panes.step_heading(self.index, total, step))
        self.query_one("#step-text", TextView).set(panes.step_text(step))
        self.selected_eq = 0 if step.equations else None
        self._fill_equations()
        self.post_message(self.StepChanged(self.index, total))

    def mark_changed(self, labels) -> None:
        """Mark the equations the last reload changed (labels of the new circuit's equations)."""
        self.changed_labels = frozenset(labels)
        self._fill_equations()

    def _fill_equations(self) -> None:
        if self.system is None:  # the first screen, drawn before the engine: nothing to select yet
            return
        step = self.step
        width = max(20, self.query_one("#equation-list").size.width - 8)
        prompts = panes.equation_prompts(step, self.selected_eq, self.selected_part, self.changed_labels,
                                         self.two_d, width) if step is not None else []
        eqs = self.query_one("#equation-list", OptionList)
        if prompts != self._eq_prompts:
            if len(prompts) == len(self._eq_prompts):
                for i, (new, old) in enumerate(zip(prompts, self._eq_prompts)):
                    if new != old:
                        eqs.replace_option_prompt_at_index(i, Content(new))
            else:
                eqs.clear_options()
                eqs.add_options([Option(Content(p)) for p in prompts])
            self._eq_prompts = prompts
        if prompts and eqs.highlighted != (self.selected_eq or 0):
            eqs.highlighted = self.selected_eq or 0
        self._refresh_parts()

    def _refresh_parts(self) -> None:
        if self.system is None:
            return
        prompts = panes.part_prompts(self.system.circuit.parts, self.selected_part, self.tied_parts())
        lst = self.query_one("#parts-list", OptionList)
        for i, text in enumerate(prompts):
            if i >= len(self._part_prompts) or self._part_prompts[i] != text:
                lst.replace_option_prompt_at_index(i, Content(text))
        self._part_prompts = prompts

    # --- selection ------------------------------------------------------------------------------
    @on(OptionList.OptionHighlighted, "#equation-list")
    @guarded
    def _equation_highlighted(self, event: OptionList.OptionHighlighted) -> None:
        if event.option_index != self.selected_eq:
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
        if self.query_one("#parts-list").has_focus:
            self.select_part(event.option.id)

    def select_equation(self, i: int | None) -> None:
        """Highlight equation ``i`` of the current step and mark its parts."""
        self.selected_eq = i
        self._fill_equations()

    def select_part(self, pid: str | None) -> None:
        """Highlight a part and mark its terms in the equations."""
        if pid != self.selected_part:
            self.selected_part = pid
            self._fill_equations()

    def tied_parts(self) -> tuple[str, ...]:
        """Parts of the highlighted equation (what the parts list marks)."""
        if self.step is None or self.selected_eq is None or self.selected_eq >= len(self.step.equations):
            return ()
        return panes.equation_parts(self.step.equations[self.selected_eq])
