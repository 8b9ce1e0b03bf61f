"""The report of ``nodeterm diff``: text (80 columns), Markdown and JSON of a :class:`CircuitDiff`.

Pure functions of the engine's record (:mod:`nodeterm.engine.review`); the JSON
fields are a contract documented in docs/json-contract.md. :func:`diff_pane_text`
is the same text laid out for a pane of the workbench.
"""

from __future__ import annotations

import json
import textwrap

from nodeterm.engine.review.records import (ADDED, APPEARED, CHANGED, CLEARED, FLIPPED, REMOVED, RENAMED,
                                            VANISHED, CircuitDiff)
from nodeterm.present.format import equation_text, expr_text, is_numeric, value_text
from nodeterm.present.markdown import _code

WIDTH = 80
SECTIONS = ("parts", "parameters", "nodes", "equations", "results", "claims", "warnings")
_MARK = {ADDED: "+", REMOVED: "-", CHANGED: "~", RENAMED: "~", APPEARED: "+", VANISHED: "-", CLEARED: "-",
         FLIPPED: "!"}


LONG = 400
"""Expressions longer than this many characters are shortened in the text and Markdown reports
(``--json`` keeps them whole)."""


def shorten(text: str, limit: int = LONG) -> str:
    """``text``, or its start and end around a count of what was left out.

    >>> shorten("x" * 10, 8)
    'xxxxx ... x [10 characters; --json has it whole]'
    """
    if len(text) <= limit:
        return text
    head, tail = limit * 2 // 3, limit // 6
    return f"{text[:head]} ... {text[-tail:]} [{len(text)} characters; --json has it whole]"


def _expr(x) -> str:
    return "" if x is None else shorten(expr_text(x))


def percent(rel) -> str:
    """A relative change as a signed percentage ("+12.5 %", "-53 %"), "" when not a number.

    >>> import sympy
    >>> percent(sympy.Rational(-53, 100)), percent(sympy.Rational(1, 8))
    ('-53 %', '+12.5 %')
    """
    if rel is None or not is_numeric(rel):
        return ""
    try:
        x = float(rel) * 100
    except TypeError:
        return ""
    return f"{x:+.3g} %"


def _value(x) -> str:
    return "(none)" if x is None else shorten(value_text(x))


def summary(diff: CircuitDiff) -> str:
    """One line: how many things changed in each section, or that nothing did."""
    counts = [(len(getattr(diff, name)), name) for name in SECTIONS]
    said = [f"{n} {name[:-1] if n == 1 else name}" for n, name in counts if n]
    if not said:
        return "No change in circuit terms."
    return "Changed: " + ", ".join(said) + "."


# --- one entry per change, as (headline, detail lines) shared by text and Markdown ----------------

def _part_entry(c, code) -> tuple[str, list[str]]:
    if c.change == ADDED:
        return f"{c.part} ({c.kind}) added on {c.where}", []
    if c.change == REMOVED:
        return f"{c.part} ({c.kind}) removed from {c.where}", []
    head = f"{c.part} ({c.kind}) " + (f"renamed from {c.old_part}" if c.change == RENAMED else "changed")
    details = [f"{f.field}: {code(f.old or '(none)')} -> {code(f.new or '(none)')}" for f in c.fields]
    if c.note:
        details.append(c.note)
    return head, details


def _parameter_entry(c, code) -> tuple[str, list[str]]:
    if c.change == ADDED:
        return f"{c.name} added = {code(c.fields[0].new or '(no value)')}", []
    if c.change == REMOVED:
        return f"{c.name} removed (was {code(c.fields[0].old or 'no value')})", []
    return f"{c.name} changed", [f"{f.field}: {code(f.old or '(none)')} -> {code(f.new or '(none)')}"
                                 for f in c.fields]


def _node_entry(c, code) -> tuple[str, list[str]]:
    pins = ", ".join(c.pins) or "no part"
    if c.change == RENAMED:
        how = "same connections" if c.same_connections else "connections changed too"
        return f"{c.old_node} renamed to {c.node} ({how}: {pins})", []
    return f"{c.node} {c.change} ({pins})", []


def _equation_entry(c, code) -> tuple[str, list[str]]:
    label = c.label + (f" (was at {c.old_at})" if c.old_at else "")
    if c.change == ADDED:
        return f"{label}: new", [code(shorten(equation_text(c.new)))]
    if c.change == REMOVED:
        return f"{label}: gone", [code(shorten(equation_text(c.old)))]
    details = []
    for t in c.terms:
        if t.change == ADDED:
            details.append(f"+ {t.part}: {code(shorten(expr_text(t.new, hand=True)))} (term added)")
        elif t.change == REMOVED:
            details.append(f"- {t.part}: {code(shorten(expr_text(t.old, hand=True)))} (term removed)")
        else:
            details.append(f"~ {t.part}: {code(shorten(expr_text(t.old, hand=True)))} -> "
                           f"{code(shorten(expr_text(t.new, hand=True)))} ({t.how})")
    if not c.terms:
        details.append(f"was {code(shorten(equation_text(c.old)))}")
        details.append(f"now {code(shorten(equation_text(c.new)))}")
    if c.how:
        details.append(c.how)
    return label, details


def _result_entry(c, code) -> tuple[str, list[str]]:
    if c.change == ADDED:
        head, details = f"{c.name} added: {code(_expr(c.new))}", []
        if c.new_value is not None:
            details.append(f"with the file's values: {code(_value(c.new_value))}")
    elif c.change == REMOVED:
        head, details = f"{c.name} removed (was {code(_expr(c.old))})", []
    else:
        head = f"{c.name} changed"
        details = []
        if c.old is None or c.new is None or expr_text(c.old) != expr_text(c.new):
            details += [f"was {code(_expr(c.old) or '(none)')}", f"now {code(_expr(c.new) or '(none)')}"]
        else:
            details.append(f"symbolic form unchanged: {code(_expr(c.new))}")
        if c.old_value is not None or c.new_value is not None:
            old_v = c.old_value if c.old_value is not None else c.old
            new_v = c.new_value if c.new_value is not None else c.new
            pct = percent(c.relative)
            if c.ratio is not None and is_numeric(c.ratio) and min(len(_value(old_v)), len(_value(new_v))) > 120:
                line = f"with the file's values: the old result times {code(value_text(c.ratio))}"
            else:
                line = f"with the file's values: {code(_value(old_v))} -> {code(_value(new_v))}"
            details.append(line + (f" ({pct})" if pct else ""))
        elif percent(c.relative):
            details.append(f"relative change {percent(c.relative)}")
        if c.ratio is not None and not is_numeric(c.ratio) and \
                len(expr_text(c.ratio)) < min(len(expr_text(c.old)), len(expr_text(c.new))):
            details.append(f"new/old = {code(_expr(c.ratio))}")
        if c.sign_flip:
            details.append("sign flipped")
        for m in c.moves:
            pct = percent(m.relative)
            details.append(f"{m.what}: {code(_value(m.old))} -> {code(_value(m.new))}" + (f" ({pct})" if pct else ""))
    if c.note:
        details.append(c.note)
    return head, details


def _claim_entry(c, code) -> tuple[str, list[str]]:
    if c.change == FLIPPED:
        return f"{c.name}: {c.old_status} -> {c.new_status}", [c.message] if c.message else []
    if c.change == ADDED:
        return f"{c.name} added: {c.new_status}", [c.message] if c.message else []
    return f"{c.name} removed (was {c.old_status})", []


def _warning_entry(c, code) -> tuple[str, list[str]]:
    return f"{c.change} [{c.code}] {c.message}", []


_ENTRIES = {"parts": _part_entry, "parameters": _parameter_entry, "nodes": _node_entry,
            "equations": _equation_entry, "results": _result_entry, "claims": _claim_entry,
            "warnings": _warning_entry}
_TITLES = {"parts": "Parts", "parameters": "Parameters", "nodes": "Nodes", "equations": "Equations",
           "results": "Results ([find])", "claims": "Claims ([hand])", "warnings": "Warnings and cautions"}


# --- text ----------------------------------------------------------------------------------------

def _wrap(text: str, indent: str, width: int) -> list[str]:
    return textwrap.wrap(text, width=width, initial_indent=indent, subsequent_indent=indent + "    ",
                         break_long_words=True, break_on_hyphens=False) or [indent]


def diff_text(diff: CircuitDiff, width: int = WIDTH, ascii_only: bool = False) -> str:
    """The diff as plain text, no line longer than ``width``."""
    plain = lambda s: s  # noqa: E731
    out = _wrap(f"Changes from {diff.old_label} to {diff.new_label}", "", width) + [""]
    for name in SECTIONS:
        changes = getattr(diff, name)
        if not changes:
            continue
        out.append(_TITLES[name])
        for c in changes:
            head, details = _ENTRIES[name](c, plain)
            out += _wrap(f"{_MARK[c.change]} {head}", "  ", width)
            for d in details:
                out += _wrap(d, "      ", width)
        out.append("")
    for note in diff.notes:
        out += _wrap(f"note: {note}", "", width)
    if diff.notes:
        out.append("")
    out += _wrap(summary(diff), "", width)
    text = "\n".join(out) + "\n"
    if ascii_only:
        text = text.replace("≈", "~").replace("µ", "u").encode("ascii", "replace").decode("ascii")
    return text


def diff_pane_text(diff: CircuitDiff | None, width: int = WIDTH) -> str:
    """The text of the workbench's diff view: the same report laid out for a pane ``width`` columns wide."""
    if diff is None:
        return "No earlier state to compare with: edit and save the file, and the diff appears here."
    return diff_text(diff, width=max(20, width))


# --- Markdown ------------------------------------------------------------------------------------

def diff_markdown(diff: CircuitDiff) -> str:
    """The diff as a Markdown document for a design review."""
    out = [f"## Changes from {_code(diff.old_label)} to {_code(diff.new_label)}", "", summary(diff), ""]
    for name in SECTIONS:
        changes = getattr(diff, name)
        if not changes:
            continue
        out += [f"### {_TITLES[name]}", ""]
        for c in changes:
            head, details = _ENTRIES[name](c, _code)
            out.append(f"- {head}")
            out += [f"  - {d}" for d in details]
        out.append("")
    if diff.notes:
        out += [f"> **Note:** {n}" for n in diff.notes] + [""]
    return "\n".join(out)


# --- JSON ----------------------------------------------------------------------------------------

def _fields(fields) -> list[dict]:
    return [{"field": f.field, "old": f.old, "new": f.new} for f in fields]


def _eq(e) -> dict | None:
    if e is None:
        return None
    return {"kind": e.kind, "at": e.at, "lhs": expr_text(e.lhs), "rhs": expr_text(e.rhs), "label": e.label,
            "text": equation_text(e)}


def _opt(x) -> str | None:
    return None if x is None else expr_text(x)


def _term(x) -> str | None:
    return None if x is None else expr_text(x, hand=True)


def _num(x) -> float | None:
    if x is None or not is_numeric(x):
        return None
    try:
        return float(x)
    except TypeError:
        return None


def diff_dict(diff: CircuitDiff) -> dict:
    """The diff as plain data (the ``nodeterm diff --json`` contract)."""
    def equation(c) -> dict:
        owner = "part" if c.kind in ("source_constraint", "opamp_equality", "opamp_gain") else "node"
        return {"at": c.at, owner: c.at, "kind": c.kind, "change": c.change, "label": c.label,
                "old_at": c.old_at, "old": _eq(c.old), "new": _eq(c.new), "how": c.how,
                "terms": [{"part": t.part, "change": t.change, "old": _term(t.old), "new": _term(t.new),
                           "how": t.how} for t in c.terms]}

    def result(c) -> dict:
        return {"result": c.name, "change": c.change, "old": _opt(c.old), "new": _opt(c.new),
                "old_value": _opt(c.old_value), "new_value": _opt(c.new_value),
                "relative": _opt(c.relative), "relative_float": _num(c.relative), "ratio": _opt(c.ratio),
                "sign_flip": c.sign_flip, "note": c.note,
                "moves": [{"what": m.what, "old": _opt(m.old), "new": _opt(m.new), "relative": _opt(m.relative),
                           "relative_float": _num(m.relative)} for m in c.moves]}

    return {
        "old": diff.old_label,
        "new": diff.new_label,
        "parts": [{"part": c.part, "change": c.change, "kind": c.kind, "old_part": c.old_part,
                   "where": c.where, "fields": _fields(c.fields), "note": c.note} for c in diff.parts],
        "parameters": [{"parameter": c.name, "change": c.change, "fields": _fields(c.fields)}
                       for c in diff.parameters],
        "nodes": [{"node": c.node, "change": c.change, "old_node": c.old_node,
                   "same_connections": c.same_connections, "pins": list(c.pins)} for c in diff.nodes],
        "equations": [equation(c) for c in diff.equations],
        "results": [result(c) for c in diff.results],
        "claims": [{"claim": c.name, "change": c.change, "old_status": c.old_status, "new_status": c.new_status,
                    "message": c.message} for c in diff.claims],
        "warnings": [{"change": c.change, "code": c.code, "message": c.message, "part": c.part}
                     for c in diff.warnings],
        "notes": list(diff.notes),
        "results_changed": diff.results_changed,
        "summary": summary(diff),
    }


def diff_json(diff: CircuitDiff) -> str:
    return json.dumps(diff_dict(diff), indent=2, ensure_ascii=False)
