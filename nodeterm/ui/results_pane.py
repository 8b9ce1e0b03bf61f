"""The results pane: node voltages, every part current, op-amp output and source currents, [find].

Exact (symbolic) by default; where a result is a number its engineering
value with an SI prefix follows (``present.format.value_text``).
"""

from __future__ import annotations

import textwrap

from textual.containers import ScrollableContainer
from textual.widgets import Static

from nodeterm.present.format import expr_text, value_text
from nodeterm.ui import render
from nodeterm.ui.describe import part_group, part_nodes

HEADINGS = {
    "part": "Part currents (from its first node to its second)",
    "opamp": "Op-amp output currents (out of the output pin)",
    "source": "Source currents (from its first node to its second, through the source)",
}


MAX_VALUE_CHARS = 2000
"""Characters of one result shown in the pane; a longer one is cut (Textual lays out every line of
the pane, and a 16-stage symbolic chain has results of megabytes). The exports keep it whole."""


def _value(expr, unit: str, two_d: bool, width: int) -> str:
    if two_d and not getattr(expr, "is_large", False):  # a large result never fits in 2-D
        text = render.expression(expr, True, width)
        if "\n" in text:
            lines = ["      " + ln for ln in text.splitlines()]
            one, full = expr_text(expr), value_text(expr, unit, tag=not isinstance(unit, str))
            if full.startswith(one) and full[len(one):].strip():  # the value with its unit, DC value
                lines.append("      " + full[len(one):].strip())
            return "\n" + "\n".join(lines)
    return _cut(value_text(expr, unit, tag=not isinstance(unit, str)))  # a [find] unit follows symbols


def _cut(text: str) -> str:
    if len(text) <= MAX_VALUE_CHARS:
        return text
    return (text[:MAX_VALUE_CHARS] + f" ... (cut: {len(text):,} characters in all; "
            "e exports the whole result)")


def result_lines(system, solution, two_d: bool = False, width: int = 70) -> list[str]:
    c = system.circuit
    out = []
    if system.values:
        out.append("With " + ", ".join(f"{k} = {v}" for k, v in system.values.items()))
    else:
        out.append("Symbolic: no values substituted yet (k substitutes every value the file gives)")
    out += ["", "Node voltages"]
    for n, v in solution.node_voltages.items():
        tag = "  (reference)" if n == c.reference else ""
        out.append(f"  V_{n} = {_value(v, 'V', two_d, width)}{tag}")
    for group in ("opamp", "source", "part"):
        parts = [p for p in c.parts if part_group(p) == group]
        if not parts:
            continue
        out += ["", HEADINGS[group]]
        for p in parts:
            where = f"   [{p.kind} {part_nodes(p)}]" if group != "opamp" else f"   [into node {p.out}]"
            out.append(f"  I_{p.id} = {_value(solution.currents[p.id], 'A', two_d, width)}{where}")
    if solution.find:
        from nodeterm.present.dimensions import find_units
        from nodeterm.present.normal_form import normal_form_lines, normal_forms
        units, forms = find_units(c), normal_forms(solution, c)
        out += ["", "Asked quantities [find]"]
        for name, v in solution.find.items():
            out.append(f"  {name} = {_value(v, units[name], two_d, width)}   ({c.find[name].text})")
            if name in forms:
                out += normal_form_lines(forms[name], units[name], "      ")
    if solution.is_reactive:
        out += ["", "Results depend on s (Laplace variable): they are transfer functions / impedances."]
    return out


def results_text(system, solution, two_d: bool = False, width: int = 70) -> str:
    """The pane's whole text; printing a large result takes a while, so workers call this."""
    return "\n".join(result_lines(system, solution, two_d, width))


def text_width(pane_width: int) -> int:
    """Columns the 2-D form may use in a pane ``pane_width`` wide."""
    return max(30, pane_width - 10)


class ResultsPane(ScrollableContainer):
    """Shows the solution, or a note (busy, cancelled, singular)."""

    DEFAULT_CSS = """
    ResultsPane > Static { width: auto; }
    """

    def compose(self):
        yield Static("(no circuit loaded)", id="results-text", markup=False)

    def show_solution(self, system, solution, two_d: bool = False) -> None:
        """Print and show ``solution`` here (the app prints in a worker and calls :meth:`show_text`)."""
        self.show_text(results_text(system, solution, two_d, self.text_width))

    @property
    def text_width(self) -> int:
        return text_width(self.size.width)

    def show_text(self, text: str) -> None:
        self.query_one("#results-text", Static).update(text)

    def show_note(self, text: str) -> None:
        """A message (cancelled, could not solve...), wrapped to the pane: the pane scrolls sideways
        for wide results, so a long note would otherwise run off the screen."""
        width = max(20, (self.size.width or 80) - 2)
        lines = [textwrap.fill(line, width, break_on_hyphens=False) if line else "" for line in text.splitlines()]
        self.query_one("#results-text", Static).update("\n".join(lines))
