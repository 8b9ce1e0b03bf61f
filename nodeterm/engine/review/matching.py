"""Which node of the old circuit is which node of the new one, and which part is which.

A node is known by its connection signature: the set of part pins that touch it
(``R1`` pin 1, ``U1`` plus, ``G1`` control +...). Nodes with the same name are the
same node; among the rest, an old and a new node with the same signature are one
node renamed. When no signature matches exactly, an old and a new node that share
most of their pins (at least half of all the pins either has, each the other's
best match) are one node renamed whose connections changed too; the rest
vanished or appeared.

A part keeps its id. An old-only and a new-only part of the same kind, on the
same (mapped) nodes and with the same values, are one part renamed.
"""

from __future__ import annotations

from dataclasses import dataclass

from nodeterm.engine.circuit.model import Circuit
from nodeterm.engine.circuit.parts import OpAmp, Part

OPAMP_PINS = ("plus", "minus", "out")


def pin_names(part: Part) -> tuple[str, ...]:
    """The names of the part's terminals, in the order of ``part.nodes``.

    >>> pin_names(OpAmp("U1", ("p", "m", "o")))
    ('plus', 'minus', 'out')
    """
    if isinstance(part, OpAmp):
        return OPAMP_PINS
    return tuple(str(i + 1) for i in range(len(part.nodes)))


def pins(part: Part) -> list[tuple[str, str]]:
    """(node, pin) for every pin of the part that touches a node: terminals and sensing (control) nodes."""
    out = list(zip(part.nodes, pin_names(part)))
    if isinstance(part.control, tuple) and not isinstance(part, OpAmp):
        out += list(zip(part.control, ("control+", "control-")))
    return out


def signatures(circuit: Circuit) -> dict[str, frozenset[tuple[str, str]]]:
    """node -> the set of (part id, pin) touching it."""
    sig: dict[str, set[tuple[str, str]]] = {n: set() for n in circuit.nodes}
    for p in circuit.parts:
        for node, pin in pins(p):
            sig.setdefault(node, set()).add((p.id, pin))
    return {n: frozenset(v) for n, v in sig.items()}


@dataclass(frozen=True)
class NodeMatch:
    """How the nodes of two circuits correspond.

    Attributes:
        mapping: old node -> new node, for every old node that is still there.
        renamed: (old, new, same_connections) for each node whose name changed.
        vanished: old nodes with no new counterpart.
        appeared: new nodes with no old counterpart.
    """

    mapping: dict
    renamed: tuple[tuple[str, str, bool], ...]
    vanished: tuple[str, ...]
    appeared: tuple[str, ...]


def match_nodes(old: Circuit, new: Circuit) -> NodeMatch:
    """Match the nodes of ``old`` to those of ``new`` (see the module docstring)."""
    old_sig, new_sig = signatures(old), signatures(new)
    mapping: dict[str, str] = {old.reference: new.reference}
    used = {new.reference}
    for n in old.nodes:
        if n not in mapping and n in new_sig and n not in used:
            mapping[n] = n
            used.add(n)
    old_left = [n for n in old.nodes if n not in mapping]
    new_left = [n for n in new.nodes if n not in used]
    renamed: list[tuple[str, str, bool]] = []
    if old.reference != new.reference:
        renamed.append((old.reference, new.reference, old_sig[old.reference] == new_sig[new.reference]))
    # Exact signatures, where one old node and one new node share it.
    for o in list(old_left):
        same = [n for n in new_left if new_sig[n] == old_sig[o]]
        twins = [x for x in old_left if old_sig[x] == old_sig[o]]
        if len(same) == 1 and len(twins) == 1 and old_sig[o]:
            mapping[o] = same[0]
            renamed.append((o, same[0], True))
            old_left.remove(o)
            new_left.remove(same[0])

    def overlap(a: frozenset, b: frozenset) -> float:
        union = a | b
        return len(a & b) / len(union) if union else 0.0

    # Mutual best overlaps of at least one half.
    changed = True
    while changed and old_left and new_left:
        changed = False
        for o in list(old_left):
            best_new = max(new_left, key=lambda n: overlap(old_sig[o], new_sig[n]))
            score = overlap(old_sig[o], new_sig[best_new])
            if score < 0.5:
                continue
            best_old = max(old_left, key=lambda x: overlap(old_sig[x], new_sig[best_new]))
            if best_old != o:
                continue
            mapping[o] = best_new
            renamed.append((o, best_new, False))
            old_left.remove(o)
            new_left.remove(best_new)
            changed = True
            break
    return NodeMatch(mapping=mapping, renamed=tuple(renamed), vanished=tuple(old_left),
                     appeared=tuple(new_left))


def _shape(part: Part, nodes: dict) -> tuple:
    """Everything about a part except its id, with its nodes mapped by ``nodes``."""
    control = part.control
    if isinstance(control, tuple):
        control = tuple(nodes.get(n, n) for n in control)
    return (part.kind, tuple(nodes.get(n, n) for n in part.nodes), part.value, part.gain, control, part.extra)


def match_parts(old: Circuit, new: Circuit, nodes: dict) -> dict[str, str]:
    """old part id -> new part id, for parts kept (same id) or renamed (same shape, one candidate each)."""
    new_ids = set(new.part_ids)
    mapping = {pid: pid for pid in old.part_ids if pid in new_ids}
    old_left = [p for p in old.parts if p.id not in mapping]
    new_left = [p for p in new.parts if p.id not in set(mapping.values())]
    for p in old_left:
        shape = _shape(p, nodes)
        same = [q for q in new_left if _shape(q, {}) == shape]
        twins = [x for x in old_left if _shape(x, nodes) == shape]
        if len(same) == 1 and len(twins) == 1:
            mapping[p.id] = same[0].id
            new_left.remove(same[0])
    return mapping
