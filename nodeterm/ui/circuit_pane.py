"""The circuit pane: parts with their nodes and values, nodes, reference, op-amp outputs, parameters."""

from __future__ import annotations

from textual.containers import VerticalScroll
from textual.widgets import Static

from nodeterm.present.format import expr_text
from nodeterm.ui.describe import node_roles, part_nodes, part_value


def circuit_lines(system) -> list[str]:
    """The circuit overview as lines of text."""
    c = system.circuit
    out = [c.title or "(untitled circuit)", f"file: {c.path or '-'}", ""]
    for w in system.warnings:
        out.append(f"! warning: {w.message}")
    if system.warnings:
        out.append("")
    roles = node_roles(c)
    out.append(f"Reference node: {c.reference} (0 V)")
    out.append("Nodes:")
    for n in c.nodes:
        out.append(f"  {n}" + (f"  ({roles[n]})" if roles[n] else ""))
    out.append("")
    out.append("Parts (id, kind, nodes, value):")
    wid = max((len(p.id) for p in c.parts), default=2)
    wk = max((len(p.kind) for p in c.parts), default=4)
    wn = max((len(part_nodes(p)) for p in c.parts), default=4)
    for p in c.parts:
        out.append(f"  {p.id.ljust(wid)}  {p.kind.ljust(wk)}  {part_nodes(p).ljust(wn)}  {part_value(p)}".rstrip())
    out.append("")
    out.append("Parameters (value in the file; value substituted now):")
    if not c.parameters:
        out.append("  (none)")
    wp = max((len(n) for n in c.parameters), default=2)
    for name, prm in c.parameters.items():
        written = prm.text if prm.value is not None else "no value (stays a symbol)"
        now = system.values.get(name)
        tail = f"   now = {expr_text(now)}" if now is not None else ""
        out.append(f"  {name.ljust(wp)}  {written}{tail}")
    if c.find:
        out.append("")
        out.append("Asked quantities [find]:")
        for name, item in c.find.items():
            out.append(f"  {name} = {item.text}")
    return out


class CircuitPane(VerticalScroll):
    """Read-only overview of the loaded circuit."""

    DEFAULT_CSS = """
    CircuitPane > Static { width: auto; }
    """

    def compose(self):
        yield Static("(no circuit loaded)", id="circuit-text", markup=False)

    def show(self, system) -> None:
        self.query_one("#circuit-text", Static).update("\n".join(circuit_lines(system)))
