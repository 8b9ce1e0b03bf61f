"""Plain-text report of a system and its solution (what ``nodeterm solve`` prints)."""

from __future__ import annotations

from nodeterm.present.format import equation_text, expr_text, value_text

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


WIDTH = 79
"""Prose lines of the report are wrapped to this width (equations never are: they stay one line each)."""


def prose(text: str, indent: str = "  ", first: str | None = None, width: int = WIDTH) -> list[str]:
    """``text`` wrapped to ``width`` columns (an 80-column terminal shows it without soft wraps)."""
    import textwrap
    keep = text.replace(" = ", "\u00a0=\u00a0")  # an equation in the prose stays on one line
    lines = textwrap.wrap(keep, width, initial_indent=indent if first is None else first,
                          subsequent_indent=indent, break_long_words=False, break_on_hyphens=False)
    return [line.replace("\u00a0", " ") for line in lines] or [indent]


def steps_lines(system) -> list[str]:
    out: list[str] = []
    for i, step in enumerate(system.steps, start=1):
        out.append(f"Step {i}. {step.title}")
        out += prose(step.text)
        for e in step.equations:
            out.append(f"    [{e.label}]  {equation_text(e)}")
            if e.terms and step.kind == "kcl":
                for t in e.terms:
                    out.append(f"        {t.part}: {expr_text(t.expr, hand=True)}")
        out.append("")
    return out


def solution_lines(system, solution, ascii_only: bool = False, transfer: dict | None = None) -> list[str]:
    """Node voltages, currents and [find] quantities with their units; a [find] quantity in s
    also in its normalized form (``transfer``: name -> TransferFunction, computed when None)."""
    from nodeterm.present.dimensions import find_units
    from nodeterm.present.normal_form import normal_form_lines, normal_forms
    c = system.circuit
    units = find_units(c)
    forms = normal_forms(solution, c, transfer) if solution.find else {}
    out = ["Node voltages"]
    for n, v in solution.node_voltages.items():
        tag = " (reference)" if n == c.reference else ""
        out.append(f"  V_{n} = {value_text(v, UNIT_V, ascii_only)}{tag}")
    out.append("")
    out += prose("Currents (resistor/capacitor/inductor/source: from its first node to its second; "
                 "op-amp: out of its output pin)", "  ", "")
    kinds = {p.id: p.kind for p in c.parts}
    for pid, v in solution.currents.items():
        out.append(f"  I_{pid} = {value_text(v, UNIT_A, ascii_only)}  [{kinds[pid]}]")
    if solution.find:
        out.append("")
        out.append("Asked quantities [find]")
        for name, v in solution.find.items():
            out.append(f"  {name} = {value_text(v, units[name], ascii_only, tag=True)}    ({c.find[name].text})")
            if name in forms:
                out += normal_form_lines(forms[name], units[name], "      ", ascii_only)
    return out


def warning_lines(warnings) -> list[str]:
    """Each warning or caution starting with ``warning:`` (wrapped, continued indented), then a blank line."""
    return [line for w in warnings for line in prose(w.message, "  ", "warning: ")] + ([""] if warnings else [])


def report(records, ascii_only: bool = False) -> str:
    """The whole plain-text report of a study's records: warnings, steps, equations, matrix, results."""
    system, solution = records.system, records.solution
    c = system.circuit
    out = []
    if c.title:
        out += [c.title, "=" * len(c.title), ""]
    out += warning_lines(records.warnings)
    from nodeterm.present.connections import connection_lines
    out.append("Connections at each node (part.pin)")
    out += connection_lines(c) + [""]
    out += steps_lines(system)
    out.append("Matrix form A x = b")
    out += ["  " + ln for ln in matrix_lines(records.matrix, ascii_only)]
    out.append("")
    out += solution_lines(system, solution, ascii_only)
    text = "\n".join(out) + "\n"
    if ascii_only:
        text = text.replace("≈", "~").replace("µ", "u").replace("Ω", "ohm")
    return text


# --- audit verdicts (nodeterm check, exports) -----------------------------------------
_STATUS_WORD = {"holds": "holds", "fails": "FAILS", "error": "ERROR"}


def verdict_lines(verdicts, path: str | None = None) -> list[str]:
    """One headline per verdict (``FILE:LINE:COL: name: message``) and indented details for failures."""
    out: list[str] = []
    for v in verdicts:
        loc = ""
        if path:
            loc = f"{path}:{v.line}:{v.column}: " if v.line and v.column else (f"{path}:{v.line}: " if v.line
                                                                                 else f"{path}: ")
        out.append(f"{loc}{v.name} [{_STATUS_WORD.get(v.status, v.status)}] {v.message}")
        d = v.details
        if v.status == "fails":
            out.append(f"    claim:     {d.get('claim', v.text)}")
            if "closest_equation" in d:
                out.append(f"    generated: [{d.get('closest')}]  {d['closest_equation']}")
            for extra in ("scale", "substituted"):
                if extra in d:
                    out.append(f"    note:      {d[extra]}")
            for diff in d.get("differences", [])[2:]:  # the first two are in the headline
                out.append(f"    also:      {diff}")
            if v.kind == "result":
                for key in ("ratio", "difference"):
                    if key in d and f"{key} {d[key]}" not in v.message and f"by {d[key]}" not in v.message:
                        out.append(f"    {key + ':':<10} {d[key]}")
            ex = d.get("example")
            if ex:
                vals = ", ".join(f"{k} = {val}" for k, val in ex.get("values", {}).items())
                sides = (f"claimed {ex['claimed']}, solved {ex['solved']}" if "claimed" in ex
                         else f"left side {ex.get('lhs')}, right side {ex.get('rhs')}")
                out.append(f"    example:   " + (f"with {vals}: " if vals else "") + sides)
    return out


def verdicts_text(verdicts, path: str | None = None, ascii_only: bool = False, warnings=()) -> str:
    """The audit section of a report, ending with the one-line summary (warnings first, when given)."""
    from nodeterm.engine.audit.verdicts import summary
    lines = warning_lines(warnings) + verdict_lines(verdicts, path) + [summary(verdicts)]
    return to_ascii("\n".join(lines) + "\n") if ascii_only else "\n".join(lines) + "\n"


_ASCII = {"≈": "~", "µ": "u", "μ": "u", "Ω": "ohm", "×": "x", "·": "*", "→": "->", "←": "<-", "—": "-",
          "–": "-", "−": "-", "°": " deg", "±": "+/-", "≤": "<=", "≥": ">=", "≠": "!=", "’": "'", "‘": "'",
          "“": '"', "”": '"', "…": "..."}


def to_ascii(text: str) -> str:
    """Strictly 7-bit text: common symbols spelled out, accents dropped, anything else as '?'.

    >>> to_ascii("≈ 4.7 kΩ, 10 µA, café")
    '~ 4.7 kohm, 10 uA, cafe'
    """
    import unicodedata
    for k, v in _ASCII.items():
        text = text.replace(k, v)
    text = unicodedata.normalize("NFKD", text)
    return "".join(ch for ch in text if not unicodedata.combining(ch)).encode("ascii", "replace").decode("ascii")
