"""The steps of the node-voltage procedure, one function per step.

:func:`nodeterm.engine.equations.system.build_system` runs them in order and records
what each returns:

0. :func:`voltage_tree` and :func:`trees`: the voltage-defining parts (sources,
   controlled voltage sources, op-amp outputs) join nodes into trees (the
   union-find :class:`_Forest`); the tree holding the reference gives known
   voltages, any other tree of two or more nodes is a supernode;
1. :func:`reference_step`: the reference node and the unknowns;
2. :func:`sources_step`: known voltages, supernodes, source constraints (and
   the op-amp equations, recorded at step 4);
3. :func:`kcl_step`: KCL at every node or supernode without an op-amp output;
4. :func:`opamp_step`: one input equality (or gain equation) per op-amp;
5. :func:`substitution_step`: the known voltages and input equalities substituted.

Parts write their currents and constraints against a :class:`_Context`, which
gives node voltages (the reference at 0 V) and the currents sensed by
current-controlled sources. :func:`_check_connected` refuses a node with no path
to the reference; :func:`_dc_path_warnings` warns about a node without a DC path.

Written by hand because the procedure is the product: no library writes node
equations the way an engineer does and records why.
"""

from __future__ import annotations

import sympy

from nodeterm.engine.equations.equation import OPAMP_KINDS, Equation, Step, Term, _label
from nodeterm.engine.errors import CircuitError, Warning, did_you_mean
from nodeterm.engine.circuit.model import Circuit
from nodeterm.engine.circuit.parts import Part
from nodeterm.engine.symbols import I, V


class _Context:
    """Gives parts node voltages and the currents of the parts they are controlled by."""

    def __init__(self, circuit: Circuit, needed: set[str]) -> None:
        self.reference = circuit.reference
        self.circuit = circuit
        self.parts = {p.id: p for p in circuit.parts}
        self.needed = needed
        self._busy: list[str] = []

    def V(self, node: str) -> sympy.Expr:
        return sympy.Integer(0) if node == self.reference else V(node)

    def current_of(self, part_id: str) -> sympy.Expr:
        part = self.parts[part_id]
        if part.branch(self.reference) is not None:
            self.needed.add(part_id)
            return I(part_id)
        if part_id in self._busy:
            chain = " -> ".join(self._busy[self._busy.index(part_id):] + [part_id])
            raise CircuitError(f"controlled sources control each other in a loop: {chain}",
                               hint="break the loop of current controls", file=self.circuit.path,
                               line=part.line)
        self._busy.append(part_id)
        try:
            return part.through(self)
        finally:
            self._busy.pop()


class _Forest:
    """Union-find over nodes joined by voltage-defining parts, remembering the tree edges."""

    def __init__(self, nodes) -> None:
        self.parent = {n: n for n in nodes}
        self.edges: dict[str, list[tuple[str, Part]]] = {n: [] for n in nodes}

    def root(self, n: str) -> str:
        while self.parent[n] != n:
            self.parent[n] = self.parent[self.parent[n]]
            n = self.parent[n]
        return n

    def path(self, a: str, b: str) -> list[Part]:
        """Parts on the tree path from a to b."""
        prev: dict[str, tuple[str, Part] | None] = {a: None}
        queue = [a]
        while queue:
            u = queue.pop(0)
            if u == b:
                break
            for v, part in self.edges[u]:
                if v not in prev:
                    prev[v] = (u, part)
                    queue.append(v)
        parts = []
        node = b
        while prev.get(node):
            u, part = prev[node]
            parts.append(part)
            node = u
        return parts

    def join(self, a: str, b: str, part: Part) -> list[Part] | None:
        """Join a and b through part; return the loop of parts if they were already joined."""
        ra, rb = self.root(a), self.root(b)
        if ra == rb:
            return self.path(a, b) + [part]
        self.parent[ra] = rb
        self.edges[a].append((b, part))
        self.edges[b].append((a, part))
        return None


def _unreached(circuit: Circuit, skip: tuple[str, ...] = ()) -> list[str]:
    """The nodes (in circuit order) with no path to the reference through parts whose kind is not in ``skip``."""
    adj: dict[str, set[str]] = {n: set() for n in circuit.nodes}
    for p in circuit.parts:
        if p.kind in skip:
            continue
        for a, b in p.links(circuit.reference):
            adj[a].add(b)
            adj[b].add(a)
    seen, stack = {circuit.reference}, [circuit.reference]
    while stack:
        for v in adj[stack.pop()]:
            if v not in seen:
                seen.add(v)
                stack.append(v)
    return [n for n in circuit.nodes if n not in seen]


def _check_connected(circuit: Circuit) -> None:
    """Every node must reach the reference through parts (op-amp inputs draw no current)."""
    lost = _unreached(circuit)
    if lost:
        inputs = {n for p in circuit.parts if p.kind == "opamp" for n in (p.plus, p.minus)}
        names = ", ".join(lost)
        extra = " (op-amp inputs draw no current, so they do not connect it)" if set(lost) & inputs else ""
        raise CircuitError(f"node{'s' if len(lost) > 1 else ''} {names} "
                           f"{'have' if len(lost) > 1 else 'has'} no path to the reference node "
                           f"{circuit.reference!r}{extra}: {'their voltages are' if len(lost) > 1 else 'its voltage is'} "
                           "not defined",
                           hint=did_you_mean(lost[0], [n for n in circuit.nodes if n not in lost])
                           + f"connect {lost[0]!r} to the rest of the circuit (e.g. a resistor to "
                             f"{circuit.reference!r}) or remove the parts on it", file=circuit.path,
                           **_where_node(circuit, lost[0]))


def _where_node(circuit: Circuit, node: str) -> dict:
    """Line and column of the first pin that names ``node`` (for error messages), as keyword arguments."""
    part = next((p for p in circuit.parts if node in p.terminals), None)
    if part is None or part.line is None:
        return {}
    lines = circuit.source_text.splitlines()
    text = lines[part.line - 1] if 0 < part.line <= len(lines) else ""
    at = text.find(f'"{node}"')
    return {"line": part.line, "column": at + 2 if at >= 0 else None}


def _dc_path_warnings(circuit: Circuit) -> list[Warning]:
    """Nodes that reach the reference only through capacitors or current sources."""
    lost = _unreached(circuit, skip=("capacitor", "current_source", "vccs", "cccs"))
    if not lost:
        return []
    return [Warning("no-dc-path", f"node{'s' if len(lost) > 1 else ''} {', '.join(lost)} reach"
                    f"{'' if len(lost) > 1 else 'es'} the reference only through capacitors or current "
                    "sources: no DC path, so the DC voltage there is set by nothing but leakage")]



def voltage_tree(circuit: Circuit, needed: set[str]) -> tuple[list, _Forest]:
    """The voltage-defining parts ``(part, (a, b))`` and the forest they join the nodes into.

    A part whose current is sensed (its id in ``needed``) keeps its current as an
    unknown and joins nothing.

    Raises:
        CircuitError: an op-amp drives the reference directly, or voltage-defining parts form a loop.
    """
    ref = circuit.reference
    branches = [(p, p.branch(ref)) for p in circuit.parts if p.branch(ref) is not None]
    for p, (a, b) in branches:
        if a == b:
            raise CircuitError(f"op-amp {p.id} drives the reference node directly",
                               hint="its output must be a node of its own", file=circuit.path, line=p.line)
    forest = _Forest(circuit.nodes)
    for p, (a, b) in branches:
        if p.id in needed:
            continue
        loop = forest.join(a, b, p)
        if loop:
            ids = ", ".join(q.id for q in loop)
            outs = [q.id for q in loop if q.kind == "opamp"]
            what = ("op-amp outputs and voltage sources form a loop" if outs
                    else "voltage sources form a loop")
            raise CircuitError(f"{what}: {ids}; their voltages fix one another and their currents cannot be found",
                               hint="remove one of them or put a resistor in the loop",
                               file=circuit.path, line=loop[-1].line)
    return branches, forest


def trees(circuit: Circuit, forest: _Forest) -> tuple[dict[str, list[str]], str]:
    """The nodes of each tree of ``forest`` (by root), and the root of the reference's tree."""
    ref = circuit.reference
    components: dict[str, list[str]] = {}
    for n in circuit.nodes:
        components.setdefault(forest.root(n), []).append(n)
    ref_root = forest.root(ref)
    return components, ref_root


def reference_step(circuit: Circuit, needed: set[str]) -> tuple[list[str], list[sympy.Symbol], Step]:
    """Step 1: the nodes other than the reference, the unknowns (their voltages, sensed currents), the step."""
    ref = circuit.reference
    unknown_nodes = [n for n in circuit.nodes if n != ref]
    unknowns = [V(n) for n in unknown_nodes] + [I(pid) for pid in sorted(needed)]
    step = Step("reference", "Reference node and unknowns",
                f"Node {ref!r} is the reference (0 V). The unknowns are the voltages of the other "
                f"{len(unknown_nodes)} node(s)"
                + (f" and the currents of {', '.join(sorted(needed))} (sensed by current-controlled sources)"
                   if needed else "") + ".",
                data={"reference": ref, "unknowns": tuple(str(u) for u in unknowns)})
    return unknown_nodes, unknowns, step


def sources_step(circuit: Circuit, ctx: _Context, branches: list, forest: _Forest,
                 components: dict[str, list[str]], ref_root: str, needed: set[str], unknown_nodes: list[str]):
    """Step 2: known voltages (walking out from the reference through independent sources) and supernodes.

    Returns:
        (known voltages by node, source equations, op-amp equations, nodes set by source
        constraints, skipped (op-amp output node, op-amp id) pairs, the step).
    """
    ref = circuit.reference
    known: dict[str, sympy.Expr] = {ref: sympy.Integer(0)}
    known_chain: dict[str, tuple[str, ...]] = {ref: ()}
    source_eqs: list[Equation] = []
    opamp_eqs: list[Equation] = []
    order = {n: i for i, n in enumerate(circuit.nodes)}
    queue = [ref]
    tree_parts_seen: set[str] = set()
    while queue:  # walk out from the reference: known voltages through independent sources
        u = queue.pop(0)
        for v, part in sorted(forest.edges[u], key=lambda e: order[e[0]]):
            if part.id in tree_parts_seen:
                continue
            tree_parts_seen.add(part.id)
            queue.append(v)
            if getattr(part, "independent", False) and u in known:
                sign = 1 if part.nodes[0] == v else -1
                known[v] = known[u] + sign * part.value
                known_chain[v] = known_chain[u] + (part.id,)
                source_eqs.append(Equation("known_voltage", v, V(v), known[v], parts=known_chain[v],
                                           label=_label("known_voltage", v)))
    for p, _ in branches:
        if p.id in tree_parts_seen and getattr(p, "independent", False) and \
                any(p.id in chain for chain in known_chain.values()):
            continue
        c = p.constraint(ctx)
        eq = Equation(c.kind, p.id, c.lhs, c.rhs, parts=c.parts, label=_label(c.kind, p.id))
        (opamp_eqs if c.kind in OPAMP_KINDS else source_eqs).append(eq)
    supernodes = [tuple(sorted(nodes, key=order.get)) for root, nodes in components.items()
                  if root != ref_root and len(nodes) > 1]
    outputs = {p.out for p, _ in branches if p.kind == "opamp" and p.id not in needed}
    set_by_sources = [n for n in components[ref_root] if n != ref and n not in known and n not in outputs]
    skipped = tuple((p.out, p.id) for p, _ in branches if p.kind == "opamp" and p.id not in needed)
    lines = []
    for n in unknown_nodes:
        if n in known:
            lines.append(f"V_{n} is known: {', '.join(known_chain[n])} tie{'s' if len(known_chain[n]) == 1 else ''} "
                         f"it to the reference.")
    for sn in supernodes:
        lines.append(f"Nodes {', '.join(sn)} are joined by voltage sources: one supernode, one KCL for all "
                     "of them plus the source constraints.")
    step = Step("sources", "Voltage sources: known voltages and supernodes",
                " ".join(lines) or "No voltage source fixes a node voltage.",
                tuple(source_eqs),
                data={"known": {n: v for n, v in known.items() if n != ref},
                      "supernodes": tuple(supernodes), "set_by_sources": tuple(set_by_sources)})
    return known, source_eqs, opamp_eqs, set_by_sources, skipped, step


def kcl_step(circuit: Circuit, ctx: _Context, components: dict[str, list[str]], ref_root: str,
             needed: set[str], skipped: tuple, set_by_sources: list[str]) -> tuple[list[Equation], Step]:
    """Step 3: KCL (currents leaving = 0) at the remaining nodes and supernodes, each term tied to its part."""
    ref = circuit.reference
    order = {n: i for i, n in enumerate(circuit.nodes)}
    per_node: dict[str, list[tuple[str, sympy.Expr]]] = {n: [] for n in circuit.nodes}
    for p in circuit.parts:
        if p.branch(ref) is not None:
            if p.id in needed:
                a, b = p.branch(ref)
                per_node[a].append((p.id, I(p.id)))
                per_node[b].append((p.id, -I(p.id)))
        for node, cur in p.kcl_terms(ctx):  # a branch part may add currents too (op-amp rin)
            per_node[node].append((p.id, cur))
    kcl_eqs: list[Equation] = []
    internal: list[str] = []
    for root, nodes in sorted(components.items(), key=lambda kv: min(order[n] for n in kv[1])):
        if root == ref_root:
            continue
        nodes = sorted(nodes, key=order.get)
        sums: dict[str, sympy.Expr] = {}
        for n in nodes:
            for pid, cur in per_node[n]:
                sums[pid] = sums.get(pid, 0) + cur
        terms = tuple(Term(pid, cur) for pid, cur in sums.items() if sympy.expand(cur) != 0)
        if len(nodes) > 1:
            internal.extend(pid for pid, cur in sums.items() if sympy.expand(cur) == 0
                            and circuit.part(pid).branch(ref) is None)
        at = "+".join(nodes)
        kind = "kcl" if len(nodes) == 1 else "supernode_kcl"
        if not terms:
            raise CircuitError(f"no current can flow at {'node' if kind == 'kcl' else 'supernode'} {at}: "
                               "it touches only op-amp inputs and voltage sources, so its voltage is not fixed",
                               hint="connect it to the circuit through a resistor", file=circuit.path)
        lhs = sympy.Add(*[t.expr for t in terms], evaluate=False) if len(terms) > 1 else terms[0].expr
        kcl_eqs.append(Equation(kind, at, lhs, sympy.Integer(0), terms,
                                tuple(t.part for t in terms), _label(kind, at)))
    n_kcl = len(kcl_eqs)
    kcl_text = f"Currents leaving = 0, at {n_kcl} node{'s' if n_kcl != 1 else ''} or supernode{'s' if n_kcl != 1 else ''}. "
    if skipped:
        kcl_text += ("No KCL at " + ", ".join(f"{n} (output of {pid})" for n, pid in skipped)
                     + ": an op-amp output supplies any current, so that KCL would only add an unknown. ")
    if internal:
        kcl_text += (", ".join(internal) + (" is" if len(internal) == 1 else " are")
                     + " inside a supernode, so " + ("its" if len(internal) == 1 else "their")
                     + " current cancels from its KCL. ")
    if set_by_sources:
        kcl_text += ("No KCL at " + ", ".join(set_by_sources) + ": fixed by source constraints.")
    step = Step("kcl", "KCL at the nodes", kcl_text.strip(), tuple(kcl_eqs),
                data={"skipped": skipped, "set_by_sources": tuple(set_by_sources),
                      "inside_supernodes": tuple(internal)})
    return kcl_eqs, step


def opamp_step(circuit: Circuit, opamp_eqs: list[Equation], feedback: dict | None = None) -> Step:
    """Step 4: the op-amp equations (written with the sources at step 2), with why.

    ``feedback`` (op-amp id -> :class:`.feedback.Feedback`) adds a note for each op-amp
    without negative feedback: V+ = V- does not apply to it.
    """
    ideal = [p.id for p in circuit.parts if p.kind == "opamp" and p.ideal]
    text = (("Each ideal op-amp with negative feedback holds its inputs equal: V_plus = V_minus."
             if ideal else "") +
            (" A real op-amp gives V_out = A(s)*(V_plus - V_minus), A(s) its open-loop gain"
             " (with rout: that source behind rout, and node out gets an ordinary KCL)."
             if len(ideal) < len([p for p in circuit.parts if p.kind == "opamp"]) else "")
            or "The circuit has no op-amp.")
    feedback = feedback or {}
    notes = [f.message for f in feedback.values() if f.kind in ("positive", "none")]
    if notes:
        text += " NOTE: " + " NOTE: ".join(n[0].upper() + n[1:] + "." for n in notes)
    return Step("opamps", "Op-amp equations", text.strip(), tuple(opamp_eqs),
                data={"feedback": {pid: f.kind for pid, f in feedback.items()}})


def substitution_step(circuit: Circuit, known: dict[str, sympy.Expr], written: list[Equation],
                      unknowns: list[sympy.Symbol]):
    """Step 5: substitute the known voltages and the input equalities into the equations ``written``.

    Returns:
        (reduced equations, eliminated unknowns -> expressions, reduced unknowns, the step).
    """
    ref = circuit.reference
    subs = {V(n): v for n, v in known.items() if n != ref}
    remaining = [e.subs(subs) for e in written if e.kind != "known_voltage"]
    eliminated: dict[sympy.Symbol, sympy.Expr] = dict(subs)
    reduced: list[Equation] = []
    pending = list(remaining)
    unknown_set = set(unknowns) - set(subs)
    eq_subs: dict[sympy.Symbol, sympy.Expr] = {}
    for e in pending:
        if e.kind != "opamp_equality":
            continue
        e = e.subs(eq_subs)
        target = None
        if e.rhs in unknown_set:  # V_minus = V_plus, the hand convention
            target, value = e.rhs, e.lhs
        elif e.lhs in unknown_set:
            target, value = e.lhs, e.rhs
        if target is None or value.has(target):
            continue
        eq_subs = {k: v.xreplace({target: value}) for k, v in eq_subs.items()}
        eq_subs[target] = value
        unknown_set.discard(target)
    for e in pending:
        e = e.subs(eq_subs)
        if e.kind == "opamp_equality" and sympy.expand(e.residual) == 0:
            continue
        reduced.append(e)
    eliminated.update(eq_subs)
    red_unknowns = tuple(u for u in unknowns if u in unknown_set)
    text = []
    if subs:
        text.append("Known node voltages substituted: " + ", ".join(f"{k} = {v}" for k, v in subs.items()) + ".")
    if eq_subs:
        text.append("Input equalities used to eliminate " + ", ".join(f"{k} = {v}" for k, v in eq_subs.items())
                    + ".")
    step = Step("known_substitution", "Substitute known voltages and input equalities",
                " ".join(text) or "Nothing to substitute.", tuple(reduced),
                data={"known": dict(subs), "equalities": dict(eq_subs),
                      "unknowns": tuple(str(u) for u in red_unknowns)})
    return reduced, eliminated, red_unknowns, step
