"""The text of the workbench's panes: pure functions of the engine's records (no Textual).

The workbench's widgets only put these strings on screen, and its solver process builds the long
ones (matrix, results, analyses) without importing any widget. Every function here reads records
(circuit, system, matrix, solution, verdicts, warnings) and returns text; none computes circuit
results.
"""

from __future__ import annotations

import textwrap
from functools import lru_cache


# The formatters below import SymPy; they are imported on first use, so the workbench can import
# this module (and draw its first screen from text computed in another process) before SymPy is in.
def equation_text(*args, **kwargs) -> str:
    from nodeterm.present.format import equation_text as text
    return text(*args, **kwargs)


def expr_text(*args, **kwargs) -> str:
    from nodeterm.present.format import expr_text as text
    return text(*args, **kwargs)


def value_text(*args, **kwargs) -> str:
    from nodeterm.present.format import value_text as text
    return text(*args, **kwargs)


def connection_lines(*args, **kwargs) -> list[str]:
    from nodeterm.present.connections import connection_lines as lines
    return lines(*args, **kwargs)

MARK = "▶"       # marks the selected item (a textual marker, legible without colour)
TIED = "*"       # marks items tied to the selection
CHANGED = "~"    # marks equations the last reload changed (the diff view, key d)
SOURCE_KINDS = ("voltage_source", "current_source", "vcvs", "vccs", "ccvs", "cccs")
TERMS_KINDS = ("kcl", "supernode_kcl")


# --- parts and nodes ----------------------------------------------------------------------------
def part_nodes(part) -> str:
    """Where a part connects, e.g. ``in -> inv`` or ``+gnd -inv out=out`` for an op-amp."""
    if part.kind == "opamp":
        return f"+{part.plus} -{part.minus} out={part.out}"
    text = " -> ".join(part.nodes[:2])
    if isinstance(part.control, tuple) and part.control:
        text += f" (senses {' - '.join(part.control)})"
    elif isinstance(part.control, str) and part.control:
        text += f" (senses I_{part.control})"
    return text


def part_value(part) -> str:
    """The value (or gain) written for a part, in one line."""
    if part.kind == "opamp":
        return "ideal" if getattr(part, "ideal", True) else f"gain {expr_text(part.gain)}"
    if part.value is not None:
        return expr_text(part.value)
    if part.gain is not None:
        return f"gain {expr_text(part.gain)}"
    return ""


def part_group(part) -> str:
    """Which results heading a part's current belongs under."""
    if part.kind == "opamp":
        return "opamp"
    if part.kind in SOURCE_KINDS:
        return "source"
    return "part"


def node_roles(circuit) -> dict[str, str]:
    """node -> role text ("reference, 0 V", "output of U1", or "")."""
    roles = {n: "" for n in circuit.nodes}
    roles[circuit.reference] = "reference, 0 V"
    for p in circuit.parts:
        if p.kind == "opamp":
            roles[p.out] = (roles[p.out] + "; " if roles[p.out] else "") + f"output of {p.id}"
    return roles


# --- the circuit pane ---------------------------------------------------------------------------
def warnings_line(warnings) -> str:
    """The one line under the status line: the first warning and how many more ("" when none)."""
    if not warnings:
        return ""
    first = getattr(warnings[0], "message", str(warnings[0]))
    more = f" (+{len(warnings) - 1} more, key 1)" if len(warnings) > 1 else " (key 1: circuit)"
    return f"! {first}{more}"


def warning_lines(warnings, width: int | None = None) -> list[str]:
    """``! message`` per warning; with ``width``, wrapped to it (continued under the text)."""
    if width is None:
        return [f"! {getattr(w, 'message', w)}" for w in warnings]
    from nodeterm.present.text import prose
    out: list[str] = []
    for w in warnings:
        out += prose(str(getattr(w, "message", w)), "  ", "! ", width)
    return out


def circuit_lines(circuit, values: dict, warnings=(), width: int = 78) -> list[str]:
    """The circuit overview: title, warnings, nodes with what meets there, parts, parameters, [find]."""
    c = circuit
    out = [c.title or "(untitled circuit)", f"file: {c.path or '-'}", ""]
    if warnings:
        out += warning_lines(warnings, width - 2) + [""]
    roles = node_roles(c)
    out.append(f"Reference node: {c.reference} (0 V)")
    out.append("Nodes: what meets at each (part.pin):")
    out += connection_lines(c, width)
    roles_text = [f"{n} ({r})" for n, r in roles.items() if r]
    if roles_text:
        out.append("  roles: " + "; ".join(roles_text))
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
        now = values.get(name)
        tail = f"   now = {expr_text(now)}" if now is not None else ""
        out.append(f"  {name.ljust(wp)}  {written}{tail}")
    if c.find:
        out.append("")
        out.append("Asked quantities [find]:")
        for name, item in c.find.items():
            out.append(f"  {name} = {item.text}")
    return out


# --- the steps pane -----------------------------------------------------------------------------
def step_head(index: int, total: int, step) -> str:
    return f"Step {index + 1} of {total}: {step.title}"


STEP_KEYS = "   (n next, b back)"


def step_heading(index: int, total: int, step) -> str:
    """The steps pane's head line: the step, then the keys that walk the procedure."""
    return step_head(index, total, step) + STEP_KEYS


def step_text(step) -> str:
    """What the step did, with the unknowns it leaves; said once."""
    extra = []
    if step.kind == "reference" and step.data.get("unknowns"):
        extra.append("Unknowns: " + ", ".join(step.data["unknowns"]))
    if step.kind == "known_substitution" and step.data.get("unknowns"):
        extra.append("Left to solve for: " + ", ".join(step.data["unknowns"]))
    if not step.equations:
        extra.append("(no equations at this step)")
    return "\n".join([step.text] + extra)


def pretty(expr, width: int) -> str | None:
    """The 2-D form of ``expr`` (names as written) when every line fits ``width`` columns, else None."""
    from nodeterm.present.format import pretty_text
    return pretty_text(expr, width)


@lru_cache(maxsize=4096)
def equation_body(eq, two_d: bool = False, width: int = 70) -> str:
    """An equation in the chosen form: one line, or 2-D when it fits (cached: selections redraw it)."""
    if two_d:
        import sympy
        text = pretty(sympy.Eq(eq.lhs, eq.rhs, evaluate=False), width)
        if text is not None:
            return text
    return equation_text(eq)


def equation_parts(eq) -> tuple[str, ...]:
    return tuple(t.part for t in eq.terms) or tuple(eq.parts)


def equation_prompt(eq, mark: str, selected_part: str | None, body: str) -> str:
    """One equation of the steps pane: its label, its body (one-line or 2-D), one line per KCL term."""
    lines = [f"{mark} [{eq.label}]"] + ["    " + ln for ln in body.splitlines()]
    if eq.terms and eq.kind in TERMS_KINDS:
        for t in eq.terms:
            tmark = TIED if t.part == selected_part else " "
            lines.append(f"   {tmark} {t.part}: {expr_text(t.expr, hand=True)}")
    elif eq.parts:
        lines.append("     parts: " + ", ".join(eq.parts))
    return "\n".join(lines)


def equation_prompts(step, selected_eq: int | None, selected_part: str | None, changed=frozenset(),
                     two_d: bool = False, width: int = 70) -> list[str]:
    """Every equation of ``step`` as the steps pane lists it: the selected one marked ▶, those that
    hold the selected part *, those the last reload changed ~."""
    out = []
    for i, eq in enumerate(step.equations):
        holds = selected_part is not None and selected_part in equation_parts(eq)
        mark = MARK if i == selected_eq else (TIED if holds else (CHANGED if eq.label in changed else " "))
        out.append(equation_prompt(eq, mark, selected_part, equation_body(eq, two_d, width)))
    return out


def part_prompts(parts, selected_part: str | None, tied) -> list[str]:
    """Every part as the steps pane lists it: the selected one marked ▶, the parts of the selected
    equation *."""
    return [part_prompt(p, MARK if p.id == selected_part else (TIED if p.id in tied else " ")) for p in parts]


def part_prompt(part, mark: str, width: int = 18) -> str:
    """A part in the steps pane's parts list: id and kind (the kind on its own line when the list is
    narrow), then where it connects."""
    where = part_nodes(part).replace(" out=", "\n    out=")
    head = f"{mark} {part.id} {part.kind}"
    if len(head) > width:
        head = f"{mark} {part.id}\n    {part.kind}"
    return f"{head}\n    {where}"


# --- the values pane ----------------------------------------------------------------------------
def value_rows(parameters, values: dict) -> dict[str, str]:
    """name -> one row of the parameter list: the file's value and the value substituted now."""
    width = max((len(n) for n in parameters), default=2)
    wfile = max((len(p.text) for p in parameters.values() if p.value is not None), default=1)
    rows = {}
    for name, prm in parameters.items():
        written = prm.text if prm.value is not None else "-"
        now = values.get(name)
        state = f"now {value_text(now)}" if now is not None else "now a symbol"
        rows[name] = f"{name.ljust(width)}  file: {written.ljust(wfile)}  {state}"
    return rows


def history_text(done: list[str], undone: list[str]) -> str:
    text = "Applied, in order: " + ("; ".join(f"{i}. {h}" for i, h in enumerate(done, 1)) or "nothing yet")
    if undone:
        text += f"   (Ctrl+R redoes: {undone[0]})"
    return text


# --- the matrix pane ----------------------------------------------------------------------------
MATRIX_INTRO = ("A x = b after the substitutions so far: one row per equation left,\n"
                "one column per unknown.")


def matrix_lines(m, width: int = 78) -> list[str]:
    """A x = b as aligned tables no wider than ``width``: the columns of A in blocks, b in the last one.

    Every block repeats the equation labels, so the b column is never off screen at 80 columns.
    """
    if not m.rows:
        return ["(no equations left to solve)"]
    labels = ["equation"] + list(m.rows)
    cols = [[c] + [expr_text(m.A[i, j]) for i in range(len(m.rows))] for j, c in enumerate(m.cols)]
    b = ["| b"] + ["| " + expr_text(m.b[i, 0]) for i in range(len(m.rows))]
    wl = max(len(x) for x in labels)
    blocks: list[list[list[str]]] = [[]]
    used = wl
    for col in cols + [b]:
        w = max(len(x) for x in col) + 2
        if blocks[-1] and used + w > width:
            blocks.append([])
            used = wl
        blocks[-1].append(col)
        used += w
    out: list[str] = []
    for k, block in enumerate(blocks):
        if len(blocks) > 1:
            out.append(f"(part {k + 1} of {len(blocks)})")
        widths = [wl] + [max(len(x) for x in col) for col in block]
        table = [labels] + block
        for r in range(len(labels)):
            out.append("  ".join(t[r].ljust(w) for t, w in zip(table, widths)).rstrip())
            if r == 0:
                out.append("  ".join("-" * w for w in widths))
        out.append("")
    return out[:-1]


def matrix_text(m, width: int = 78) -> str:
    return "\n".join([MATRIX_INTRO, ""] + matrix_lines(m, width))


# --- the results pane ---------------------------------------------------------------------------
RESULT_HEADINGS = {
    "part": "Part currents (from its first node to its second)",
    "opamp": "Op-amp output currents (out of the output pin)",
    "source": "Source currents (from its first node to its second, through the source)",
}
MAX_RESULT_LINES = 60
"""Lines of one result shown in the pane (wrapped to its width); a longer one is cut with a note
(Textual lays out every line, and a 16-stage symbolic chain has results of megabytes). The exports
keep every result whole."""


def wrap_value(text: str, width: int, indent: int = 6) -> str:
    """A long one-line result wrapped to ``width``, continuation lines indented; past
    :data:`MAX_RESULT_LINES` lines it is cut with a note (the exports keep it whole)."""
    if len(text) <= width:
        return text
    width = max(20, width)
    room = width * MAX_RESULT_LINES
    lines = textwrap.wrap(text[:room], width=width, subsequent_indent=" " * indent,
                          break_long_words=True, break_on_hyphens=False)
    if len(text) > room or len(lines) > MAX_RESULT_LINES:
        lines = lines[:MAX_RESULT_LINES - 1]
        lines.append(" " * indent + f"... cut: {len(text):,} characters in all (e exports it whole)")
    return "\n".join(lines)


def _value(expr, unit, two_d: bool, width: int, lead: int, pretty) -> str:
    tag = not isinstance(unit, str)  # a [find] quantity's unit follows a symbolic result too
    if two_d and pretty is not None and not getattr(expr, "is_large", False):  # never 2-D for a huge one
        text = pretty(expr, width)
        if text is not None and "\n" in text:
            lines = ["      " + ln for ln in text.splitlines()]
            one, full = expr_text(expr), value_text(expr, unit, tag=tag)
            if full.startswith(one) and full[len(one):].strip():  # the value with its unit, DC value
                lines.append("      " + full[len(one):].strip())
            return "\n" + "\n".join(lines)
    return value_text(expr, unit, tag=tag)


def _line(head: str, value: str, tail: str, width: int) -> str:
    """``head value tail`` wrapped to ``width`` (a 2-D value, already on lines of its own, is kept)."""
    if value.startswith("\n"):
        return head + value + tail
    return wrap_value(head + value + tail, width)


def result_lines(system, solution, two_d: bool = False, width: int = 78, pretty=None) -> list[str]:
    """The results pane: node voltages, currents grouped by kind, [find] quantities.

    ``pretty(expr, width)`` gives the 2-D form (or None when it does not fit); long one-line results
    wrap to ``width``.
    """
    c = system.circuit
    out = []
    if system.values:
        out.append("With " + ", ".join(f"{k} = {v}" for k, v in system.values.items()))
    else:
        out.append("Symbolic: no values substituted yet (k substitutes every value the file gives)")
    out += ["", "Node voltages"]
    for n, v in solution.node_voltages.items():
        tag = "  (reference)" if n == c.reference else ""
        head = f"  V_{n} = "
        out.append(_line(head, _value(v, "V", two_d, width, len(head), pretty), tag, width))
    for group in ("opamp", "source", "part"):
        parts = [p for p in c.parts if part_group(p) == group]
        if not parts:
            continue
        out += ["", RESULT_HEADINGS[group]]
        for p in parts:
            where = f"   [{p.kind} {part_nodes(p)}]" if group != "opamp" else f"   [into node {p.out}]"
            head = f"  I_{p.id} = "
            out.append(_line(head, _value(solution.currents[p.id], "A", two_d, width, len(head), pretty), where,
                             width))
    if solution.find:
        from nodeterm.present.dimensions import find_units
        from nodeterm.present.normal_form import normal_form_lines, normal_forms
        units, forms = find_units(c), normal_forms(solution, c)
        out += ["", "Asked quantities [find]"]
        for name, v in solution.find.items():
            head = f"  {name} = "
            out.append(_line(head, _value(v, units[name], two_d, width, len(head), pretty),
                             f"   ({c.find[name].text})", width))
            if name in forms:
                out += normal_form_lines(forms[name], units[name], "      ")
    if solution.is_reactive:
        out += ["", "Results depend on s (Laplace variable): they are transfer functions / impedances."]
    return out


def results_text(system, solution, two_d: bool = False, width: int = 78, pretty=None) -> str:
    return "\n".join(result_lines(system, solution, two_d, width, pretty))


# --- the claims pane ----------------------------------------------------------------------------
def claims_lines(verdicts) -> list[str]:
    from nodeterm.present.text import verdict_lines
    if not verdicts:
        return ["(no claims yet: type one above; a [hand] table in the file is checked too)"]
    from nodeterm.engine.audit.verdicts import summary
    return [summary(list(verdicts)), ""] + verdict_lines(list(verdicts))


# --- the status line ----------------------------------------------------------------------------
def status_line(pane: str, file: str | None, step: tuple[int, int] | None, values: int | None,
                two_d: bool, busy: tuple[str, int] | None, width: int = 80) -> str:
    """The top line: pane, file, step, values, form, and (only while busy) what runs and for how long.

    The file name is shortened in the middle so that the line fits ``width``.
    """
    head = [f"[{pane.capitalize()}]"] if pane else []
    tail = []
    if step:
        tail.append(f"step {step[0]}/{step[1]}")
    if values is not None:
        tail.append(f"{values} value{'s' if values != 1 else ''}" if values else "symbolic")
    if two_d:
        tail.append("2-D form")
    if busy:
        tail.append(f"BUSY {busy[0]} {busy[1]}s, c cancels")
    if file:
        room = width - len(" | ".join(head + tail)) - 3
        if len(file) > room:
            keep = max(3, room - 1)
            file = file[:keep // 2] + "~" + file[len(file) - (keep - keep // 2):]
        head.append(file)
    return " | ".join(head + tail)


def note_lines(text: str, width: int) -> str:
    """A message wrapped to a pane ``width`` wide."""
    width = max(20, width)
    return "\n".join(textwrap.fill(line, width, break_on_hyphens=False) if line else ""
                     for line in text.splitlines())


# --- the analysis pane --------------------------------------------------------------------------
def analysis_sections(sections: list[tuple[str, list[str]]], note: str) -> list[str]:
    """Titled sections of analysis text (each already formatted), then the linear-model note."""
    out: list[str] = []
    for title, lines in sections:
        if lines:
            out += [title, "-" * len(title)] + list(lines) + [""]
    if not out:
        out = ["No analysis applies: no [find] quantity depends on s, no op-amp has limits or a real model.", ""]
    out.append(f"note: {note}")
    return out
