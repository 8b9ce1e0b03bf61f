"""Which parts and pins meet at each node: the quickest check of a circuit file's wiring.

``inv: R1.2, R2.1, U1.minus`` says that node inv joins the second pin of R1, the first of R2
and the inverting input of U1; a node with a single pin, or a part that should be there and is
not, shows a typo at a glance. Pin names follow the circuit file (docs/circuit-file.md):
``1``/``2`` for the two entries of ``nodes`` of a resistor, capacitor or inductor, ``p``/``n`` for
a voltage source (independent or controlled), ``a``/``b`` for a current source, ``cp``/``cn`` for
the nodes a voltage-controlled source senses (no current flows there), and ``plus``, ``minus``,
``out`` for an op-amp.
"""

from __future__ import annotations

_PASSIVE = ("resistor", "capacitor", "inductor")
_VOLTAGE_PINS = ("voltage_source", "vcvs", "ccvs")
_CURRENT_PINS = ("current_source", "vccs", "cccs")


def pins(part) -> list[tuple[str, str]]:
    """(pin name, node) of every connection of a part, in the order of the file.

    >>> from nodeterm.engine.circuit.parts import KINDS
    >>> pins(KINDS["opamp"]("U1", ("gnd", "inv", "out")))
    [('plus', 'gnd'), ('minus', 'inv'), ('out', 'out')]
    """
    if part.kind == "opamp":
        return list(zip(("plus", "minus", "out"), part.nodes))
    if part.kind in _VOLTAGE_PINS:
        names = ("p", "n")
    elif part.kind in _CURRENT_PINS:
        names = ("a", "b")
    else:
        names = tuple(str(i) for i in range(1, len(part.nodes) + 1))
    out = list(zip(names, part.nodes))
    if isinstance(part.control, tuple):
        out += list(zip(("cp", "cn"), part.control))
    return out


def node_connections(circuit) -> dict[str, list[str]]:
    """node -> ``["R1.2", "R2.1", "U1.minus"]`` for every node (reference first, file order).

    A node that only a controlled source senses still appears; a node nothing touches has an
    empty list.
    """
    out: dict[str, list[str]] = {n: [] for n in circuit.nodes}
    for part in circuit.parts:
        for pin, node in pins(part):
            out.setdefault(node, []).append(f"{part.id}.{pin}")
    return out


def connection_lines(circuit, width: int = 80, indent: str = "  ") -> list[str]:
    """One line per node, ``inv: R1.2, R2.1, U1.minus``, wrapped to ``width`` columns.

    A node with a single pin is marked: nothing else connects there (a typo in a node name is
    the usual cause), unless it is only sensed or it is the reference.
    """
    conns = node_connections(circuit)
    wide = max((len(n) for n in conns), default=0)
    out = []
    for node, items in conns.items():
        head = f"{indent}{node.ljust(wide)}: "
        text = ", ".join(items) if items else "(nothing)"
        if len(items) == 1 and node != circuit.reference:
            text += "  <- only one pin"
        line, lines = head, []
        for word in text.split(" "):
            if len(line) + len(word) + 1 > width and line.strip() and line != head:
                lines.append(line.rstrip())
                line = " " * len(head)
            line += word + " "
        lines.append(line.rstrip())
        out += lines
    return out
