"""Reports of a numeric (double-precision) solution: the ``solve --numeric`` text and JSON.

The JSON keeps the ``solve --json`` contract (docs/json-contract.md) with every result a decimal
string (``repr`` of the float, or ``(a+bj)`` when complex). For circuits small enough to solve
exactly the equations and matrix are listed as usual; above that size they are left empty
(listing 10,000 equations helps nobody) and ``numeric.omitted`` says so.
"""

from __future__ import annotations

import json

from nodeterm.engine.solving.numeric import number_text
from nodeterm.present.format import eng


def numeric_dict(circuit, solution, records=None) -> dict:
    """The numeric solve result as plain data (the ``solve --json`` fields plus ``numeric``).

    ``records`` (system, matrix, warnings of the study) give the equations and matrix; None for a
    circuit too large to list them."""
    system = records
    if records is not None:
        from nodeterm.present.jsonout import solution_dict
        out = solution_dict(records)
    else:
        out = {
            "title": circuit.title, "reference": circuit.reference,
            "unknowns": [f"V_{n}" for n in circuit.nodes if n != circuit.reference],
            "skipped": [], "equations": [], "reduced_equations": [],
            "matrix": {"rows": [], "cols": [], "A": [], "b": []},
            "values": {n: str(v) for n, v in solution.values.items()},
            "warnings": [w.as_dict() for w in circuit.warnings],
        }
    out["node_voltages"] = {n: number_text(v) for n, v in solution.node_voltages.items()}
    out["currents"] = {n: number_text(v) for n, v in solution.currents.items()}
    out["find"] = {n: number_text(v) for n, v in solution.find.items()}
    out["numeric"] = {"s": number_text(solution.s_value),
                      "omitted": [] if system is not None else ["equations", "reduced_equations", "matrix"]}
    return out


def numeric_json(circuit, solution, records=None) -> str:
    return json.dumps(numeric_dict(circuit, solution, records), indent=2, ensure_ascii=False)


def _value(v, unit: str, ascii_only: bool) -> str:
    if type(v) is float:  # the usual case at DC
        return f"{eng(v, unit, digits=6, ascii_only=ascii_only)}  ({v!r})"
    v = complex(v)
    if v.imag == 0:
        return f"{eng(v.real, unit, digits=6, ascii_only=ascii_only)}  ({number_text(v)})"
    return f"{number_text(v)} {unit}"


def numeric_report(circuit, solution, ascii_only: bool = False) -> str:
    """Plain-text listing of the numeric results."""
    out = []
    if circuit.title:
        out += [circuit.title, "=" * len(circuit.title), ""]
    where = "DC (s = 0)" if solution.s_value == 0 else f"s = {number_text(solution.s_value)}"
    out.append(f"Double-precision solution at {where}; exact results: solve without --numeric")
    out.append("")
    out.append("Node voltages")
    for n, v in solution.node_voltages.items():
        out.append(f"  V_{n} = {_value(v, 'V', ascii_only)}")
    out.append("")
    out.append("Currents")
    for pid, v in solution.currents.items():
        out.append(f"  I_{pid} = {_value(v, 'A', ascii_only)}")
    if solution.find:
        out.append("")
        out.append("Asked quantities [find]")
        for name, v in solution.find.items():
            out.append(f"  {name} = {_value(v, '', ascii_only)}")
    text = "\n".join(out) + "\n"
    if ascii_only:
        text = text.replace("µ", "u")
    return text
