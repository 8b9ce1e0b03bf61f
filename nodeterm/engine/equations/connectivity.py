"""Connectivity warnings from the circuit alone: the marks a typo leaves in a file.

A misspelt node name makes a new node that only one pin touches; a parameter
nobody uses is often the one a part meant to use; a controlled source that
senses one node against itself does nothing. None of these is wrong enough to
refuse the file (a lone pin can be a test point), but each usually is a typo,
so :func:`connectivity_warnings` names it with the likely fix. ``build_system``
adds these to ``System.warnings``.

Written by hand: a few passes over the parts. The "did you mean" ranking uses
the standard library's :mod:`difflib`.

>>> from nodeterm.engine.circuit.loader import parse_circuit
>>> c = parse_circuit('''
... [parameters]
... Vtc = ""
... Rin = "10k"
... Rf = "1M"
... Spare = "1k"
... [parts]
... TC = { kind = "voltage_source", nodes = ["in", "gnd"], value = "Vtc" }
... R1 = { kind = "resistor", nodes = ["inn", "inv"], value = "Rin" }
... R2 = { kind = "resistor", nodes = ["inv", "out"], value = "Rf" }
... U1 = { kind = "opamp", plus = "gnd", minus = "inv", out = "out" }
... ''')
>>> for w in connectivity_warnings(c): print(w.code, w.part, w.message)
single-pin-node R1 nodes 'in' (only TC touches it) and 'inn' (only R1) look like one node spelt two ways: no current flows through R1; did you mean one name for both?
unused-parameter  parameter 'Spare' is used by no part, [find] or [hand]; use it in a part's value or remove it
"""

from __future__ import annotations

import difflib
import re

from nodeterm.engine.circuit.model import Circuit
from nodeterm.engine.errors import Warning

_NAME = re.compile(r"[A-Za-z_][A-Za-z0-9_]*")


def pin_count(circuit: Circuit) -> dict[str, list[tuple[str, str]]]:
    """Node -> the ``(part id, pin)`` pairs that touch it (op-amp pins by name, others ``a``/``b``)."""
    pins: dict[str, list[tuple[str, str]]] = {n: [] for n in circuit.nodes}
    for p in circuit.parts:
        names = ("plus", "minus", "out") if p.kind == "opamp" else ("a", "b")
        for node, pin in zip(p.terminals, names):
            pins.setdefault(node, []).append((p.id, pin))
    return pins


def nearest_name(name: str, choices, prefer=()) -> str | None:
    """The choice closest to ``name`` (a likely intended spelling), or None when none is close.

    Case is ignored in the comparison; among equally close choices, those in ``prefer`` win.

    >>> nearest_name("inn", ["inv", "in", "out"])
    'in'
    >>> nearest_name("OUT", ["out", "in"]), nearest_name("xyz", ["out", "in"]) is None
    ('out', True)
    """
    scored = []
    for c in choices:
        if c == name:
            continue
        score = difflib.SequenceMatcher(None, name.lower(), c.lower()).ratio()
        if score >= 0.6:
            scored.append((-score, c not in prefer, c))
    return min(scored)[2] if scored else None


def _what(circuit: Circuit, pid: str, pin: str) -> str:
    part = circuit.part(pid)
    if part.kind == "opamp" and pin == "out":
        return f"the output of {pid}: nothing else connects to it"
    if part.branch(circuit.reference) is not None:
        return f"{pid}: nothing else connects to it"
    return f"{pid}: no current flows through {pid}"


def _mentioned(circuit: Circuit) -> set[str]:
    """Nodes named as ``V_node`` by a [find] quantity or a [hand] claim: the spellings the user means."""
    names = {str(x) for item in circuit.find.values() for x in item.expr.free_symbols}
    names |= {n for item in circuit.hand.values() for n in _NAME.findall(item.text)}
    return {n[2:] for n in names if n.startswith("V_")}


def single_pin_warnings(circuit: Circuit) -> list[Warning]:
    """A node other than the reference that one pin only touches and no controlled source senses.

    Two such nodes with near names are one typo: they get one warning, which proposes
    the spelling that [find] or [hand] uses when one of them does.
    """
    pins = pin_count(circuit)
    sensed = {n for p in circuit.parts if p.kind != "opamp" for n in p.controls()}
    lonely = [n for n in circuit.nodes
              if n != circuit.reference and len(pins.get(n, ())) == 1 and n not in sensed]
    mentioned = _mentioned(circuit)
    out, done = [], set()
    for node in lonely:
        if node in done:
            continue
        pid, pin = pins[node][0]
        guess = nearest_name(node, [n for n in circuit.nodes if n != node], prefer=lonely)
        if guess in lonely and guess not in done:
            done.add(guess)
            other, _ = pins[guess][0]
            meant = [n for n in (node, guess) if n in mentioned]
            fix = (f"did you mean {meant[0]!r} for both?" if len(meant) == 1
                   else "did you mean one name for both?")
            idle = [q for q in (pid, other) if circuit.part(q).branch(circuit.reference) is None]
            if len(meant) == 1:
                wrong = guess if meant == [node] else node
            else:  # the likelier typo is on the part that now carries no current
                wrong = guess if idle == [other] else node
            why = f": no current flows through {' or '.join(idle)}" if idle else ""
            out.append(Warning("single-pin-node",
                               f"nodes {node!r} (only {pid} touches it) and {guess!r} (only {other}) look like "
                               f"one node spelt two ways{why}; {fix}", pins[wrong][0][0]))
            continue
        fix = f"did you mean {guess!r}?" if guess else f"connect {node!r} to another part or check the name"
        out.append(Warning("single-pin-node",
                           f"node {node!r} is touched by one pin only ({_what(circuit, pid, pin)}); {fix}", pid))
    return out


def sensing_one_node_warnings(circuit: Circuit) -> list[Warning]:
    """A voltage-controlled source whose two control nodes are one node: its output is always zero."""
    out = []
    for p in circuit.parts:
        if p.kind != "opamp" and len(p.controls()) == 2 and p.controls()[0] == p.controls()[1]:
            out.append(Warning("control-on-one-node",
                               f"{p.kind} {p.id} senses node {p.controls()[0]!r} against itself, so its "
                               f"output is always 0; fix one of the control nodes", p.id))
    return out


def _names(expr) -> set[str]:
    if expr is None:
        return set()
    if isinstance(expr, tuple):
        return set().union(*(_names(e) for e in expr))
    return {str(x) for x in getattr(expr, "free_symbols", ())}


def unused_parameter_warnings(circuit: Circuit) -> list[Warning]:
    """Parameters that no part, [find] quantity or [hand] claim uses, directly or through other parameters."""
    params = circuit.parameters
    roots: set[str] = set()
    for p in circuit.parts:
        roots |= _names(p.value) | _names(p.gain)
        for _, v in p.extra:
            roots |= _names(v)
    for item in circuit.find.values():
        roots |= _names(item.expr)
    for item in circuit.hand.values():
        roots |= set(_NAME.findall(item.text))
    used, stack = set(), [n for n in roots if n in params]
    while stack:
        n = stack.pop()
        if n in used:
            continue
        used.add(n)
        stack.extend(d for d in _names(params[n].value) if d in params)
    out = []
    for name in params:
        if name in used:
            continue
        users = sorted(m for m in params if name in _names(params[m].value))
        via = f" (only by {', '.join(users)}, itself unused)" if users else ""
        out.append(Warning("unused-parameter",
                           f"parameter {name!r} is used by no part, [find] or [hand]{via}; "
                           "use it in a part's value or remove it"))
    return out


def connectivity_warnings(circuit: Circuit) -> list[Warning]:
    """Every connectivity warning of ``circuit``: single-pin nodes, self-sensing sources, unused parameters."""
    return single_pin_warnings(circuit) + sensing_one_node_warnings(circuit) + unused_parameter_warnings(circuit)
