"""Parts, parameters, nodes and equations of two circuits, compared in circuit terms.

Old names are carried over to new ones first (:mod:`.matching`): a renamed node
or part changes nothing else, so only what really differs is reported. A KCL is
compared term by term, one term per part; a changed term says how (sign, the
part's coefficient, which node voltages it involves).
"""

from __future__ import annotations

import sympy

from nodeterm.engine.symbols import as_expr
from nodeterm.engine.circuit.model import Circuit
from nodeterm.engine.circuit.parts import OpAmp, Part
from nodeterm.engine.equations.equation import KCL_KINDS, Equation, Term, _label
from nodeterm.engine.review.matching import NodeMatch, pin_names, pins
from nodeterm.engine.review.records import (ADDED, APPEARED, CHANGED, REMOVED, RENAMED, VANISHED, EquationChange,
                                            FieldChange, NodeChange, ParameterChange, PartChange, TermChange)
from nodeterm.engine.symbols import I, V

SIMPLIFY_LIMIT = 400
"""Expressions with more operations than this are compared structurally only (no expand)."""


def text(value) -> str:
    """The text of a field value: SymPy's one-line printer, node names as they are, "" for None."""
    if value is None:
        return ""
    if isinstance(value, (tuple, list)):
        return ", ".join(text(v) for v in value)
    if isinstance(value, str):
        return value
    return sympy.sstr(value)


def same_expr(a, b) -> bool:
    """Equal as expressions (structurally, or their difference expands to 0 when small)."""
    if a is None or b is None:
        return a is b
    if a == b:
        return True
    try:
        a, b = as_expr(a), as_expr(b)
    except (sympy.SympifyError, TypeError):
        return False
    if sympy.count_ops(a) + sympy.count_ops(b) > SIMPLIFY_LIMIT:
        return False
    return sympy.expand(a - b) == 0


def _same_value(a, b) -> bool:
    if isinstance(a, tuple) or isinstance(b, tuple):
        return (isinstance(a, tuple) and isinstance(b, tuple) and len(a) == len(b)
                and all(same_expr(x, y) for x, y in zip(a, b)))
    return same_expr(a, b)


# --- parts -------------------------------------------------------------------------------------

def _where(part: Part) -> str:
    if isinstance(part, OpAmp):
        return f"plus {part.plus}, minus {part.minus}, out {part.out}"
    return ", ".join(part.nodes)


def part_changes(old: Circuit, new: Circuit, nodes: dict, parts: dict) -> list[PartChange]:
    """Parts added, removed, changed or renamed (``nodes``, ``parts``: old -> new names)."""
    out: list[PartChange] = []
    old_by_new = {parts[p.id]: p for p in old.parts if p.id in parts}
    for q in new.parts:
        p = old_by_new.get(q.id)
        if p is None:
            out.append(PartChange(q.id, ADDED, q.kind, where=_where(q)))
            continue
        fields, note = _part_fields(p, q, nodes, parts)
        if p.id != q.id:
            out.append(PartChange(q.id, RENAMED, q.kind, tuple(fields), old_part=p.id, note=note))
        elif fields:
            out.append(PartChange(q.id, CHANGED, q.kind, tuple(fields), note=note))
    kept = set(parts)
    for p in old.parts:
        if p.id not in kept:
            out.append(PartChange(p.id, REMOVED, p.kind, where=_where(p)))
    return out


def _part_fields(p: Part, q: Part, nodes: dict, parts: dict) -> tuple[list[FieldChange], str]:
    fields: list[FieldChange] = []
    note = ""
    if p.kind != q.kind:
        fields.append(FieldChange("kind", p.kind, q.kind))
    mapped = tuple(nodes.get(n, "?" + n) for n in p.nodes)
    if isinstance(p, OpAmp) and isinstance(q, OpAmp):
        for pin, a, b, raw in zip(pin_names(q), mapped, q.nodes, p.nodes):
            if a != b:
                fields.append(FieldChange(pin, raw, b))
        if mapped[0] == q.nodes[1] and mapped[1] == q.nodes[0]:
            if q.ideal:
                note = ("inputs swapped: an ideal op-amp still gives V_plus = V_minus, so the ideal equations "
                        "and results stay the same; check that the feedback reaches the minus input")
            else:
                note = ("inputs swapped: the open-loop gain now acts with the other sign; a linear answer "
                        "still exists, but with the feedback on the plus input the circuit latches; check "
                        "that the feedback reaches the minus input")
    elif mapped != q.nodes:
        if len(mapped) == 2 and mapped == q.nodes[::-1]:
            note = "ends reversed: the part's current and value now act the other way"
        fields.append(FieldChange("nodes", text(p.nodes), text(q.nodes)))
    for key in ("value", "gain"):
        a, b = getattr(p, key), getattr(q, key)
        if not _same_value(a, b):
            fields.append(FieldChange(key, text(a), text(b)))
    a, b = p.control, q.control
    if isinstance(a, tuple):
        a_mapped = tuple(nodes.get(n, "?" + n) for n in a)
    else:
        a_mapped = parts.get(a, "?" + a) if isinstance(a, str) else a
    if a_mapped != b:
        fields.append(FieldChange("control", text(a), text(b)))
    old_extra, new_extra = dict(p.extra), dict(q.extra)
    for key in list(dict.fromkeys(list(new_extra) + list(old_extra))):
        if not _same_value(old_extra.get(key), new_extra.get(key)):
            fields.append(FieldChange(key, text(old_extra.get(key)), text(new_extra.get(key))))
    return fields, note


# --- parameters --------------------------------------------------------------------------------

def parameter_changes(old: Circuit, new: Circuit) -> list[ParameterChange]:
    """Parameters added, removed, or whose value, tolerance or distribution changed."""
    out: list[ParameterChange] = []
    for name, q in new.parameters.items():
        p = old.parameters.get(name)
        if p is None:
            out.append(ParameterChange(name, ADDED, (FieldChange("value", "", q.text),)))
            continue
        fields = []
        if not same_expr(p.value, q.value):
            fields.append(FieldChange("value", p.text, q.text))
        if not same_expr(p.tolerance, q.tolerance):
            fields.append(FieldChange("tolerance", text(p.tolerance), text(q.tolerance)))
        if p.distribution != q.distribution and (p.tolerance is not None or q.tolerance is not None):
            fields.append(FieldChange("distribution", p.distribution, q.distribution))
        if fields:
            out.append(ParameterChange(name, CHANGED, tuple(fields)))
    for name, p in old.parameters.items():
        if name not in new.parameters:
            out.append(ParameterChange(name, REMOVED, (FieldChange("value", p.text, ""),)))
    return out


# --- nodes -------------------------------------------------------------------------------------

def _pin_labels(circuit: Circuit, node: str) -> tuple[str, ...]:
    labels = []
    for p in circuit.parts:
        for n, pin in pins(p):
            if n == node:
                labels.append(p.id if pin.isdigit() else f"{p.id}.{pin}")
    return tuple(dict.fromkeys(labels))


def node_changes(old: Circuit, new: Circuit, match: NodeMatch) -> list[NodeChange]:
    """Nodes renamed, appeared or vanished."""
    out = [NodeChange(n, RENAMED, old_node=o, same_connections=same, pins=_pin_labels(new, n))
           for o, n, same in match.renamed]
    out += [NodeChange(n, APPEARED, pins=_pin_labels(new, n)) for n in match.appeared]
    out += [NodeChange(n, VANISHED, pins=_pin_labels(old, n)) for n in match.vanished]
    return out


# --- equations ---------------------------------------------------------------------------------

def _key(e: Equation) -> tuple:
    if e.kind in KCL_KINDS:
        return ("kcl", frozenset(e.at.split("+")))
    if e.kind == "known_voltage":
        return ("known", e.at)
    return ("part", e.at)


def translate(e: Equation, nodes: dict, parts: dict) -> Equation:
    """An old equation in the new circuit's names (renamed nodes and parts)."""
    mapping = {V(o): V(n) for o, n in nodes.items() if o != n}
    mapping.update({I(o): I(n) for o, n in parts.items() if o != n})
    e = e.subs(mapping)
    if e.kind in KCL_KINDS:
        at = "+".join(nodes.get(n, n) for n in e.at.split("+"))
    elif e.kind == "known_voltage":
        at = nodes.get(e.at, e.at)
    else:
        at = parts.get(e.at, e.at)
    terms = tuple(Term(parts.get(t.part, t.part), t.expr) for t in e.terms)
    return Equation(e.kind, at, e.lhs, e.rhs, terms, tuple(parts.get(p, p) for p in e.parts),
                    _label(e.kind, at))


def _voltages(expr) -> dict:
    """Coefficient of each node voltage or current unknown in a (linear) term."""
    expr = as_expr(expr)
    out = {}
    for sym in sorted(expr.free_symbols, key=str):
        if sym.name.startswith(("V_", "I_")):
            c = sympy.diff(expr, sym)
            if c != 0:
                out[sym] = c
    return out


def explain_term(old, new, node: str = "") -> str:
    """How a part's term changed, in one phrase.

    >>> a, b, c, R, R2 = sympy.symbols("V_a V_b V_c R R2")
    >>> explain_term((a - b)/R, (b - a)/R)
    'sign flipped'
    >>> explain_term((a - b)/R, (a - b)/R2, "a")
    'coefficient of V_a 1/R -> 1/R2'
    >>> explain_term((a - b)/R, (a - c)/R)
    'V_c in place of V_b'
    """
    if same_expr(as_expr(old) + as_expr(new), 0):
        return "sign flipped"
    co_old, co_new = _voltages(old), _voltages(new)
    gone = [str(v) for v in co_old if v not in co_new]
    came = [str(v) for v in co_new if v not in co_old]
    if gone and came:
        return f"{', '.join(came)} in place of {', '.join(gone)}"
    if came:
        return f"now also {', '.join(came)}"
    if gone:
        return f"no longer {', '.join(gone)}"
    if co_old:
        own = V(node) if node and V(node) in co_old else next(iter(co_old))
        a, b = co_old[own], co_new[own]
        if same_expr(a, b):
            rest_old = as_expr(old).xreplace({v: 0 for v in co_old})
            rest_new = as_expr(new).xreplace({v: 0 for v in co_new})
            return f"constant part {sympy.sstr(rest_old)} -> {sympy.sstr(rest_new)}"
        return f"coefficient of {own} {sympy.sstr(a)} -> {sympy.sstr(b)}"
    return f"{sympy.sstr(old)} -> {sympy.sstr(new)}"


def _term_changes(old: Equation, new: Equation) -> list[TermChange]:
    node = new.at if new.kind == "kcl" else ""
    old_terms = {t.part: t.expr for t in old.terms}
    new_terms = {t.part: t.expr for t in new.terms}
    out = []
    for part, expr in new_terms.items():
        if part not in old_terms:
            out.append(TermChange(part, ADDED, None, expr))
        elif not same_expr(old_terms[part], expr):
            out.append(TermChange(part, CHANGED, old_terms[part], expr,
                                  explain_term(old_terms[part], expr, node)))
    for part, expr in old_terms.items():
        if part not in new_terms:
            out.append(TermChange(part, REMOVED, expr, None))
    return out


def equation_changes(old_eqs, new_eqs, nodes: dict, parts: dict,
                     swapped_opamps: set[str]) -> list[EquationChange]:
    """Equations added, removed or changed, in the new circuit's order then the removed ones.

    Args:
        old_eqs, new_eqs: the generated equations (``System.equations``) of each side.
        nodes, parts: old -> new names.
        swapped_opamps: new ids of op-amps whose inputs were swapped.
    """
    old_by_key = {}
    for e in old_eqs:
        t = translate(e, nodes, parts)
        old_by_key[_key(t)] = (e, t)
    out: list[EquationChange] = []
    seen = set()
    for e in new_eqs:
        k = _key(e)
        seen.add(k)
        if k not in old_by_key:
            out.append(EquationChange(e.at, e.kind, ADDED, e.label, None, e))
            continue
        raw, t = old_by_key[k]
        old_at = raw.at if raw.at != e.at else ""
        if e.kind in KCL_KINDS and t.kind in KCL_KINDS:
            terms = _term_changes(t, e)
            if terms:
                out.append(EquationChange(e.at, e.kind, CHANGED, e.label, raw, e, tuple(terms), old_at))
            continue
        how = ""
        if t.kind != e.kind:
            how = f"was {_label(t.kind, t.at)}, now {e.label}"
        elif same_expr(t.residual, e.residual):
            continue
        elif same_expr(t.residual, -e.residual):
            if e.kind == "opamp_equality" and e.at in swapped_opamps:
                how = ("inputs swapped: the same equality with its sides exchanged, so the ideal results "
                       "do not change; the feedback now reaches the other input")
            else:
                continue  # the same equation written the other way round
        out.append(EquationChange(e.at, e.kind, CHANGED, e.label, raw, e, (), old_at, how))
    for raw, t in old_by_key.values():
        if _key(t) not in seen:
            out.append(EquationChange(t.at, raw.kind, REMOVED, raw.label, raw, None, (),
                                      raw.at if raw.at != t.at else ""))
    return out
