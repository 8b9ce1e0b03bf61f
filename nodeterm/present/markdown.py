"""Markdown report of a system, its solution and the audit: a document ready for a design review.

Headings per step, equations in code spans (SymPy syntax, so they can be pasted
back into a circuit file), the matrix as a table, results as tables, verdicts.
Pure function of the engine's record; no Textual.
"""

from __future__ import annotations

from nodeterm.present.format import equation_text, expr_text, value_text


def _cell(text: str) -> str:
    """A table cell: pipes escaped, no line breaks."""
    return str(text).replace("\\", "\\\\").replace("|", "\\|").replace("\n", " ")


def _code(text: str) -> str:
    text = str(text)
    fence = "``" if "`" in text else "`"
    pad = " " if text.startswith("`") or text.endswith("`") else ""
    return f"{fence}{pad}{text}{pad}{fence}"


def table(head: list[str], rows: list[list[str]]) -> list[str]:
    """A well-formed Markdown table (same number of cells in every row)."""
    out = ["| " + " | ".join(_cell(h) for h in head) + " |", "|" + "|".join("---" for _ in head) + "|"]
    for r in rows:
        cells = list(r) + [""] * (len(head) - len(r))
        out.append("| " + " | ".join(_cell(c) for c in cells[:len(head)]) + " |")
    return out


def render_markdown(records, note: str = "") -> str:
    """The whole report of a study's records as Markdown."""
    system, solution, verdicts = records.system, records.solution, records.verdicts
    c = system.circuit
    out = [f"# {c.title or 'Circuit'}", ""]
    if c.path:
        out += [f"Circuit file: {_code(c.path)}", ""]
    if note:
        out += [f"> **Note:** {note}", ""]
    for w in records.warnings:
        out.append(f"- **warning** ({w.code}): {w.message}")
    if records.warnings:
        out.append("")
    for i, step in enumerate(system.steps, start=1):
        out += [f"## Step {i}. {step.title}", "", step.text, ""]
        for e in step.equations:
            out.append(f"- **{e.label}**: {_code(equation_text(e))}")
            if e.terms and step.kind == "kcl":
                for t in e.terms:
                    out.append(f"  - {t.part}: {_code(expr_text(t.expr, hand=True))}")
        if step.equations:
            out.append("")
    m = records.matrix
    out += ["## Matrix form A x = b", ""]
    if m.rows:
        rows = [[m.rows[i]] + [_code(expr_text(m.A[i, j])) for j in range(m.A.shape[1])]
                + [_code(expr_text(m.b[i, 0]))] for i in range(len(m.rows))]
        out += table(["equation"] + [_code(col) for col in m.cols] + ["b"], rows)
    else:
        out.append("No equations left to solve.")
    out.append("")
    if solution is not None:
        out += ["## Results", "", "### Node voltages", ""]
        out += table(["node", "voltage"], [[_code(f"V_{n}") + (" (reference)" if n == c.reference else ""),
                                            _code(value_text(v, "V"))] for n, v in solution.node_voltages.items()])
        out += ["", "### Currents", "",
                "Resistor, capacitor, inductor, source: from its first node to its second; op-amp: out of its "
                "output pin.", ""]
        kinds = {p.id: p.kind for p in c.parts}
        out += table(["part", "kind", "current"], [[_code(f"I_{pid}"), kinds[pid], _code(value_text(v, "A"))]
                                                   for pid, v in solution.currents.items()])
        out.append("")
        if solution.find:
            from nodeterm.present.dimensions import find_units
            units = find_units(c)
            out += ["### Asked quantities", ""]
            out += table(["name", "defined as", "value"],
                         [[name, _code(c.find[name].text), _code(value_text(v, units[name], tag=True))]
                          for name, v in solution.find.items()])
            out.append("")
            from nodeterm.present.normal_form import normal_form_lines, normal_forms
            forms = normal_forms(solution, c)
            if forms:
                out += ["### Transfer functions in normalized form", "", "```text"]
                for name, nf in forms.items():
                    out += normal_form_lines(nf, units[name], "")
                out += ["```", ""]
    if verdicts:
        from nodeterm.engine.audit.verdicts import summary
        out += ["## Audit of the hand derivation", "", summary(verdicts) + ".", ""]
        out += table(["claim", "as written", "verdict", "explanation"],
                     [[v.name, _code(v.text), v.status, v.message] for v in verdicts])
        out.append("")
        for v in verdicts:
            diffs = v.details.get("differences", [])
            if v.status == "fails" and (len(diffs) > 1 or "closest_equation" in v.details):
                out += [f"**{v.name}**: closest generated equation {v.details.get('closest', '')}: "
                        f"{_code(v.details.get('closest_equation', ''))}", ""]
                out += [f"- {d}" for d in diffs] + [""]
    return "\n".join(out).rstrip() + "\n"
