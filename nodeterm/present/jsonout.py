"""The JSON contract of ``nodeterm solve --json`` (documented in docs/json-contract.md).

Expressions are SymPy-syntax strings (``**`` powers). A pure formatter of a study's
:class:`~nodeterm.engine.study.Records`: it computes nothing and decides nothing about which
analyses run (the command picks the records). No Textual.
"""

from __future__ import annotations

import json
import re
import uuid

import sympy

from nodeterm.engine.analysis.cautions import LINEAR_NOTE
from nodeterm.engine.symbols import as_expr
from nodeterm.present.analysis import limits_dict, transfer_dict
from nodeterm.present.format import expr_text


def _eq(e) -> dict:
    return {"kind": e.kind, "at": e.at, "lhs": expr_text(e.lhs), "rhs": expr_text(e.rhs), "label": e.label,
            "parts": list(e.parts)}


def solution_dict(records, numeric: bool = False) -> dict:
    """The records of a study as plain data (the ``solve --json`` contract).

    Formats only what ``records`` holds: ``transfer`` and ``limits`` appear when the caller asked for
    them; a record left out for its time budget is named in ``omitted``.
    """
    system, solution = records.system, records.solution
    c = system.circuit
    m = records.matrix if records.matrix is not None else system.matrix()
    fmt = (lambda e: _num(e)) if numeric else expr_text
    out = {
        "title": c.title,
        "reference": c.reference,
        "unknowns": [str(u) for u in system.unknowns],
        "skipped": [n for n, _ in system.skipped],
        "equations": [_eq(e) for e in system.equations],
        "reduced_equations": [_eq(e) for e in system.reduced_equations],
        "matrix": {"rows": list(m.rows), "cols": list(m.cols),
                   "A": [[expr_text(m.A[i, j]) for j in range(m.A.shape[1])] for i in range(m.A.shape[0])],
                   "b": [expr_text(m.b[i, 0]) for i in range(m.b.shape[0])]},
        "values": {n: expr_text(v) for n, v in system.values.items()},
        "warnings": [w.as_dict() for w in records.warnings],
    }
    if solution is not None:
        out["node_voltages"] = {n: fmt(v) for n, v in solution.node_voltages.items()}
        out["currents"] = {n: fmt(v) for n, v in solution.currents.items()}
        out["find"] = {n: fmt(v) for n, v in solution.find.items()}
    if records.transfer is not None:
        from nodeterm.present.dimensions import find_units
        units = find_units(c)
        out["transfer"] = {n: transfer_dict(tf, units.get(n)) for n, tf in records.transfer.items()}
    if records.limits is not None:
        out["limits"] = limits_dict(list(records.limits))
    if solution is not None and not numeric:
        from nodeterm.present.dimensions import results_dict
        out.update(results_dict(c, solution))
    if solution is not None:
        out["note"] = LINEAR_NOTE
    if records.omitted:
        out["omitted"] = [{"record": o.record, "reason": o.reason} for o in records.omitted]
    return out


def _num(e) -> str:
    e = as_expr(e)
    if e.is_number:
        return repr(float(e)) if e.is_real else str(complex(e))
    return expr_text(e)


def to_json(records, numeric: bool = False) -> str:
    return json.dumps(solution_dict(records, numeric), indent=2, ensure_ascii=False)


RAW_STRING_CHARS = 100_000
"""Strings longer than this that need no escaping are written as they are (see :func:`write_json`)."""


def write_json(records, stream, numeric: bool = False) -> None:
    """:func:`to_json` written to ``stream``, with a final newline (the same text).

    A big symbolic circuit's JSON is over 100 MB, nearly all of it a few dozen long expressions.
    The encoder copies each string while looking for characters to escape; an expression is plain
    ASCII, so each long string that has no quote, backslash or control character is replaced by a
    marker, the rest is encoded, and the long strings are written between the pieces as they are.
    """
    data = solution_dict(records, numeric)
    tag = f"@large-{uuid.uuid4().hex}-"
    long: list[str] = []

    def swap(value):
        if isinstance(value, dict):
            return {k: swap(v) for k, v in value.items()}
        if isinstance(value, list):
            return [swap(v) for v in value]
        if (isinstance(value, str) and len(value) > RAW_STRING_CHARS and value.isascii()
                and value.isprintable() and '"' not in value and "\\" not in value):
            long.append(value)
            return f"{tag}{len(long) - 1}"
        return value

    text = json.dumps(swap(data), indent=2, ensure_ascii=False)
    pieces = re.split(f'"{re.escape(tag)}(\\d+)"', text)
    for i, piece in enumerate(pieces):
        if i % 2:
            stream.write('"')
            stream.write(long[int(piece)])
            stream.write('"')
        else:
            stream.write(piece)
    stream.write("\n")


# --- steps and audit verdicts (nodeterm check --json, nodeterm export --to json) -----------------
def _plain(value):
    """Step data as JSON-ready values (expressions as SymPy-syntax strings)."""
    if isinstance(value, dict):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_plain(v) for v in value]
    if isinstance(value, (str, int, float, bool)) or value is None:
        return value
    return expr_text(value)


def steps_list(system) -> list[dict]:
    """Every recorded step: kind, title, text, equations (with per-part terms for KCL), data."""
    out = []
    for i, step in enumerate(system.steps, start=1):
        eqs = []
        for e in step.equations:
            d = _eq(e)
            if e.terms:
                d["terms"] = [{"part": t.part, "expr": expr_text(t.expr)} for t in e.terms]
            eqs.append(d)
        out.append({"number": i, "kind": step.kind, "title": step.title, "text": step.text, "equations": eqs,
                    "data": _plain(step.data)})
    return out


def verdict_dict(v) -> dict:
    """One audit verdict as plain data."""
    return {"name": v.name, "status": v.status, "kind": v.kind, "message": v.message, "text": v.text,
            "matches": list(v.matches), "step": v.step, "line": v.line, "column": v.column,
            "details": _plain(v.details)}


def check_dict(records) -> dict:
    """What ``nodeterm check --json`` prints."""
    from nodeterm.engine.audit.verdicts import exit_status, summary
    verdicts = list(records.verdicts or ())
    return {"file": records.circuit.path, "title": records.circuit.title, "summary": summary(verdicts),
            "exit_status": exit_status(verdicts), "verdicts": [verdict_dict(v) for v in verdicts],
            "warnings": [w.as_dict() for w in records.warnings]}


def export_dict(records, note: str = "") -> dict:
    """The ``solve --json`` contract plus ``steps``, ``verdicts`` and the bench ``note``."""
    out = solution_dict(records)
    out["steps"] = steps_list(records.system)
    out["verdicts"] = [verdict_dict(v) for v in records.verdicts or []]
    if note:
        out["note"] = note
    return out
