"""Short descriptions of circuit items for the panes (text only, no Textual).

Reads the engine's immutable circuit model; computes nothing about the circuit.
"""

from __future__ import annotations

from nodeterm.present.format import expr_text

SOURCE_KINDS = ("voltage_source", "current_source", "vcvs", "vccs", "ccvs", "cccs")


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
    """node -> role text ("reference", "op-amp output of U1", or "")."""
    roles = {n: "" for n in circuit.nodes}
    roles[circuit.reference] = "reference, 0 V"
    for p in circuit.parts:
        if p.kind == "opamp":
            roles[p.out] = (roles[p.out] + "; " if roles[p.out] else "") + f"output of {p.id}"
    return roles
