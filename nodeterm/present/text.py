"""Plain-text report of a system and its solution (what ``nodeterm solve`` prints)."""

from __future__ import annotations

from .format import equation_text, expr_text, value_text

UNIT_V, UNIT_A = "V", "A"


def matrix_lines(m, ascii_only: bool = False) -> list[str]:
    """The matrix A x = b as an aligned table with row and column labels."""
    if not m.rows:
        return ["(no equations left to solve)"]
    head = ["equation"] + list(m.cols) + ["| b"]
    rows = [[m.rows[i]] + [expr_text(m.A[i, j]) for j in range(m.A.shape[1])] + ["| " + expr_text(m.b[i, 0])]
            for i in range(len(m.rows))]
    widths = [max(len(r[k]) for r in [head] + rows) for k in range(len(head))]
    line = lambda r: "  ".join(cell.ljust(w) for cell, w in zip(r, widths)).rstrip()  # noqa: E731
    return [line(head), line(["-" * w for w in widths])] + [line(r) for r in rows]


def steps_lines(system) -> list[str]:
    out: list[str] = []
    for i, step in enumerate(system.steps, start=1):
        out.append(f"Step {i}. {step.title}")
        out.append(f"  {step.text}")
        for e in step.equations:
            out.append(f"    [{e.label}]  {equation_text(e)}")
            if e.terms and step.kind == "kcl":
                for t in e.terms:
                    out.append(f"        {t.part}: {expr_text(t.expr, hand=True)}")
        out.append("")
    return out


def solution_lines(system, solution, ascii_only: bool = False) -> list[str]:
    c = system.circuit
    out = ["Node voltages"]
    for n, v in solution.node_voltages.items():
        tag = " (reference)" if n == c.reference else ""
        out.append(f"  V_{n} = {value_text(v, UNIT_V, ascii_only)}{tag}")
    out.append("")
    out.append("Currents (resistor/capacitor/inductor/source: from its first node to its second; "
               "op-amp: out of its output pin)")
    kinds = {p.id: p.kind for p in c.parts}
    for pid, v in solution.currents.items():
        out.append(f"  I_{pid} = {value_text(v, UNIT_A, ascii_only)}  [{kinds[pid]}]")
    if solution.find:
        out.append("")
        out.append("Asked quantities [find]")
        for name, v in solution.find.items():
            out.append(f"  {name} = {value_text(v, '', ascii_only)}    ({c.find[name].text})")
    return out


def report(system, solution, ascii_only: bool = False) -> str:
    """The whole plain-text report: steps, equations, matrix, results."""
    c = system.circuit
    out = []
    if c.title:
        out += [c.title, "=" * len(c.title), ""]
    for w in system.warnings:
        out.append(f"warning: {w.message}")
    if system.warnings:
        out.append("")
    out += steps_lines(system)
    out.append("Matrix form A x = b")
    out += ["  " + ln for ln in matrix_lines(system.matrix(), ascii_only)]
    out.append("")
    out += solution_lines(system, solution, ascii_only)
    text = "\n".join(out) + "\n"
    if ascii_only:
        text = text.replace("≈", "~").replace("µ", "u").replace("Ω", "ohm")
    return text
