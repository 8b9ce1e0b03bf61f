"""Explanations, in circuit terms, of node equations that cannot be solved.

Checked in order: a node fed only by current sources (or a group of nodes that
reaches the reference only through current sources), an op-amp without a
feedback path, and otherwise the unknowns the equations leave undetermined.
"""

from __future__ import annotations

import sympy

from nodeterm.engine.errors import SolveError

CURRENT_KINDS = ("current_source", "vccs", "cccs")


def _components(circuit, skip_kinds, skip_part=None, block=()):
    adj = {n: set() for n in circuit.nodes}
    for p in circuit.parts:
        if p.kind in skip_kinds or p.id == skip_part:
            continue
        br = p.branch(circuit.reference)
        a, b = br if br is not None else (p.nodes[0], p.nodes[1])
        adj[a].add(b)
        adj[b].add(a)
    return adj


def _reach(adj, start, block=()):
    seen, stack = {start}, [start]
    while stack:
        u = stack.pop()
        if u in block and u != start:
            continue
        for v in adj[u]:
            if v not in seen:
                seen.add(v)
                stack.append(v)
    return seen


def explain_singular(system, m) -> SolveError:
    circuit = system.circuit
    ref = circuit.reference
    path = circuit.path
    # 1. nodes that reach the reference only through current sources
    adj = _components(circuit, CURRENT_KINDS)
    lost = [n for n in circuit.nodes if n not in _reach(adj, ref)]
    if lost:
        if len(lost) == 1:
            msg = (f"node {lost[0]!r} is fed only by current sources: KCL there has no voltage-dependent "
                   "term, so its voltage is not fixed (and the source currents must cancel exactly)")
        else:
            msg = (f"nodes {', '.join(lost)} reach the reference only through current sources: their "
                   "voltages are not fixed by the equations")
        feeding = [p for p in circuit.parts if p.kind in CURRENT_KINDS and set(p.nodes) & set(lost)]
        return SolveError(msg, hint=f"add a resistor from {lost[0]!r} to the reference, or check the sources",
                          file=path, line=feeding[0].line if feeding else None)
    # 2. op-amps whose both inputs are held by sources: V_plus = V_minus becomes a fixed claim
    known = system.steps[1].data.get("known", {}) if len(system.steps) > 1 else {}
    for p in circuit.parts:
        if p.kind == "opamp" and p.ideal and all(n == ref or n in known for n in (p.plus, p.minus)):
            return SolveError(
                f"both inputs of op-amp {p.id} ({p.plus!r} and {p.minus!r}) are held by sources, so nothing "
                "in the circuit can make V_plus = V_minus: its output is not determined",
                hint="feed the output back to an input through the network (negative feedback)",
                file=path, line=p.line)
    # 3. op-amps without a feedback path from output to an input
    for p in circuit.parts:
        if p.kind != "opamp":
            continue
        adj = _components(circuit, (), skip_part=p.id)
        reach = _reach(adj, p.out, block=(ref,))
        reach.discard(ref)
        if p.minus not in reach and p.plus not in reach:
            return SolveError(
                f"op-amp {p.id} has no feedback path from its output {p.out!r} to its inputs: "
                "an ideal op-amp cannot hold V_plus = V_minus without feedback, so the equations are singular",
                hint=(f"connect a feedback network from {p.out!r} to the inverting input {p.minus!r}"
                      if p.minus != ref else
                      f"its inverting input is the reference node {ref!r}; swap plus and minus or add "
                      f"feedback from {p.out!r} to an input node"),
                file=path, line=p.line)
    # 4. general: which unknowns are not determined
    A = m.A
    rank = A.rank(simplify=True) if A.shape[1] else 0
    free = []
    if A.shape[1]:
        try:
            for vec in A.nullspace(simplify=True):
                for i, v in enumerate(vec):
                    if v != 0 and m.cols[i] not in free:
                        free.append(m.cols[i])
        except Exception:  # noqa: BLE001 - a diagnosis must never crash the report
            free = []
    what = f"the {len(m.rows)} node equations in {len(m.cols)} unknowns are singular (rank {rank})"
    if free:
        what += ": they do not determine " + ", ".join(free)
    return SolveError(what, hint="check for a missing connection, a loop of op-amp outputs, "
                                 "or parts whose values make the circuit degenerate", file=path)
