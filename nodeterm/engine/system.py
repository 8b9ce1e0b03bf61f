"""The node-voltage procedure, step by step, as an engineer writes it by hand.

:func:`build_system` follows the procedure and records every step:

1. reference node and one unknown voltage per other node;
2. voltage-defining parts (sources, controlled voltage sources, op-amp outputs):
   a node tied to the reference through independent sources gets a known
   voltage; a source between unknown nodes makes a supernode and adds its
   constraint equation;
3. KCL (currents leaving = 0) at every node or supernode that does not contain
   an op-amp output (an op-amp output current is unconstrained), each term tied
   to its part;
4. one input equality V_plus = V_minus per ideal op-amp (the gain equation for
   a finite-gain op-amp);
5. substitution of the known voltages and of the input equalities.

The result is an immutable :class:`System`. ``System.substitute`` records one
more step and returns a new System; ``System.solve`` (in :mod:`.solve`) is a
separate call.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import sympy

from .errors import CircuitError, InputError, Warning
from .expr import ExpressionError, parse_expression
from .model import Circuit
from .parts import Part
from .symbols import I, V, param

KCL_KINDS = ("kcl", "supernode_kcl")
OPAMP_KINDS = ("opamp_equality", "opamp_gain")


@dataclass(frozen=True)
class Term:
    """One part's current leaving a node (or supernode), as it appears in a KCL equation."""

    part: str
    expr: sympy.Expr


@dataclass(frozen=True)
class Equation:
    """One equation ``lhs = rhs`` of the procedure.

    Attributes:
        kind: "kcl", "supernode_kcl", "known_voltage", "source_constraint",
            "opamp_equality" or "opamp_gain".
        at: the node, the supernode ("a+b") or the part the equation belongs to.
        lhs, rhs: the two sides.
        terms: for KCL, each part's current leaving the node.
        parts: the parts the equation involves.
        label: a short human label, e.g. "KCL at inv".
    """

    kind: str
    at: str
    lhs: sympy.Expr
    rhs: sympy.Expr
    terms: tuple[Term, ...] = ()
    parts: tuple[str, ...] = ()
    label: str = ""

    @property
    def residual(self) -> sympy.Expr:
        return self.lhs - self.rhs

    def subs(self, mapping: dict) -> "Equation":
        """The same equation with ``mapping`` substituted (terms too)."""
        if not mapping:
            return self
        terms = tuple(Term(t.part, t.expr.xreplace(mapping)) for t in self.terms)
        return replace(self, lhs=self.lhs.xreplace(mapping), rhs=self.rhs.xreplace(mapping), terms=terms)


@dataclass(frozen=True)
class Step:
    """One recorded step of the procedure.

    Attributes:
        kind: "reference", "sources", "kcl", "opamps", "known_substitution",
            "parameter_substitution".
        title: a heading.
        text: what was done and why, in a few sentences.
        equations: the equations written or obtained at this step.
        data: step-specific facts (e.g. ``skipped`` nodes, ``supernodes``, ``values``).
    """

    kind: str
    title: str
    text: str
    equations: tuple[Equation, ...] = ()
    data: dict = field(default_factory=dict)


@dataclass(frozen=True)
class MatrixForm:
    """The reduced system as ``A x = b`` with labelled rows and columns."""

    A: sympy.Matrix
    b: sympy.Matrix
    rows: tuple[str, ...]
    cols: tuple[str, ...]


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


def _check_connected(circuit: Circuit) -> None:
    """Every node must reach the reference through parts (op-amp inputs draw no current)."""
    adj: dict[str, set[str]] = {n: set() for n in circuit.nodes}
    for p in circuit.parts:
        for a, b in p.links(circuit.reference):
            adj[a].add(b)
            adj[b].add(a)
    seen = {circuit.reference}
    stack = [circuit.reference]
    while stack:
        for v in adj[stack.pop()]:
            if v not in seen:
                seen.add(v)
                stack.append(v)
    lost = [n for n in circuit.nodes if n not in seen]
    if lost:
        inputs = {n for p in circuit.parts if p.kind == "opamp" for n in (p.plus, p.minus)}
        names = ", ".join(lost)
        extra = " (op-amp inputs draw no current, so they do not connect it)" if set(lost) & inputs else ""
        raise CircuitError(f"node{'s' if len(lost) > 1 else ''} {names} "
                           f"{'have' if len(lost) > 1 else 'has'} no path to the reference node "
                           f"{circuit.reference!r}{extra}: {'their voltages are' if len(lost) > 1 else 'its voltage is'} "
                           "not defined",
                           hint=f"connect {lost[0]!r} to the rest of the circuit (e.g. a resistor to "
                                f"{circuit.reference!r}) or remove the parts on it", file=circuit.path)


def _label(kind: str, at: str) -> str:
    return {
        "kcl": f"KCL at {at}",
        "supernode_kcl": f"KCL at supernode {at}",
        "known_voltage": f"known voltage at {at}",
        "source_constraint": f"constraint of {at}",
        "opamp_equality": f"input equality of {at}",
        "opamp_gain": f"gain equation of {at}",
    }[kind]


def build_system(circuit: Circuit) -> "System":
    """Write the node equations of ``circuit`` and record the procedure.

    >>> from nodeterm.engine.loader import parse_circuit
    >>> c = parse_circuit('''
    ... [parts]
    ... Vs = { kind = "vsource", nodes = ["in", "gnd"], value = "Vin" }
    ... R1 = { kind = "resistor", nodes = ["in", "inv"], value = "R1" }
    ... R2 = { kind = "resistor", nodes = ["inv", "out"], value = "R2" }
    ... U1 = { kind = "opamp", plus = "gnd", minus = "inv", out = "out" }
    ... [parameters]
    ... Vin = ""
    ... R1 = ""
    ... R2 = ""
    ... ''')
    >>> sys = build_system(c)
    >>> [e.label for e in sys.equations]
    ['known voltage at in', 'KCL at inv', 'input equality of U1']
    >>> sys.skipped
    (('out', 'U1'),)
    """
    ref = circuit.reference
    _check_connected(circuit)
    needed: set[str] = set()
    ctx = _Context(circuit, needed)
    # Which source currents must be unknowns (a current-controlled source senses them)?
    for p in circuit.parts:
        if isinstance(p.control, str):
            ctx.current_of(p.control)
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
    components: dict[str, list[str]] = {}
    for n in circuit.nodes:
        components.setdefault(forest.root(n), []).append(n)
    ref_root = forest.root(ref)

    # Step 1: reference and unknowns.
    unknown_nodes = [n for n in circuit.nodes if n != ref]
    unknowns = [V(n) for n in unknown_nodes] + [I(pid) for pid in sorted(needed)]
    steps = [Step("reference", "Reference node and unknowns",
                  f"Node {ref!r} is the reference (0 V). The unknowns are the voltages of the other "
                  f"{len(unknown_nodes)} node(s)"
                  + (f" and the currents of {', '.join(sorted(needed))} (sensed by current-controlled sources)"
                     if needed else "") + ".",
                  data={"reference": ref, "unknowns": tuple(str(u) for u in unknowns)})]

    # Step 2: voltage-defining parts.
    known: dict[str, sympy.Expr] = {ref: sympy.Integer(0)}
    known_chain: dict[str, tuple[str, ...]] = {ref: ()}
    source_eqs: list[Equation] = []
    opamp_eqs: list[Equation] = []
    order = {n: i for i, n in enumerate(circuit.nodes)}
    visited = {ref}
    queue = [ref]
    tree_parts_seen: set[str] = set()
    while queue:  # walk out from the reference: known voltages through independent sources
        u = queue.pop(0)
        for v, part in sorted(forest.edges[u], key=lambda e: order[e[0]]):
            if part.id in tree_parts_seen:
                continue
            tree_parts_seen.add(part.id)
            visited.add(v)
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
    steps.append(Step("sources", "Voltage sources: known voltages and supernodes",
                      " ".join(lines) or "No voltage source fixes a node voltage.",
                      tuple(source_eqs),
                      data={"known": {n: v for n, v in known.items() if n != ref},
                            "supernodes": tuple(supernodes), "set_by_sources": tuple(set_by_sources)}))

    # Step 3: KCL at the remaining nodes and supernodes.
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
    steps.append(Step("kcl", "KCL at the nodes", kcl_text.strip(), tuple(kcl_eqs),
                      data={"skipped": skipped, "set_by_sources": tuple(set_by_sources),
                            "inside_supernodes": tuple(internal)}))
    ideal = [p.id for p in circuit.parts if p.kind == "opamp" and p.ideal]
    steps.append(Step("opamps", "Op-amp equations",
                      ("Each ideal op-amp with negative feedback holds its inputs equal: V_plus = V_minus."
                       if ideal else "") +
                      (" A real op-amp gives V_out = A(s)*(V_plus - V_minus), A(s) its open-loop gain"
                       " (with rout: that source behind rout, and node out gets an ordinary KCL)."
                       if len(ideal) < len([p for p in circuit.parts if p.kind == "opamp"]) else "")
                      or "The circuit has no op-amp.",
                      tuple(opamp_eqs)))

    equations = tuple(source_eqs + kcl_eqs + opamp_eqs)
    # Step 5: substitute known voltages and the input equalities.
    subs = {V(n): v for n, v in known.items() if n != ref}
    remaining = [e.subs(subs) for e in source_eqs + kcl_eqs + opamp_eqs if e.kind != "known_voltage"]
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
    steps.append(Step("known_substitution", "Substitute known voltages and input equalities",
                      " ".join(text) or "Nothing to substitute.", tuple(reduced),
                      data={"known": dict(subs), "equalities": dict(eq_subs),
                            "unknowns": tuple(str(u) for u in red_unknowns)}))
    from .analysis.cautions import circuit_warnings  # hazardous sources, real-model keys without effect
    warnings = list(circuit.warnings) + _dc_path_warnings(circuit) + circuit_warnings(circuit)
    return System(circuit=circuit, equations=equations, unknowns=tuple(unknowns), skipped=skipped,
                  steps=tuple(steps), reduced_equations=tuple(reduced), reduced_unknowns=red_unknowns,
                  eliminated=eliminated, needed=tuple(sorted(needed)), values={},
                  warnings=tuple(warnings))


def _dc_path_warnings(circuit: Circuit) -> list[Warning]:
    """Nodes that reach the reference only through capacitors or current sources."""
    adj: dict[str, set[str]] = {n: set() for n in circuit.nodes}
    for p in circuit.parts:
        if p.kind in ("capacitor", "isource", "vccs", "cccs"):
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
    lost = [n for n in circuit.nodes if n not in seen]
    if not lost:
        return []
    return [Warning("no-dc-path", f"node{'s' if len(lost) > 1 else ''} {', '.join(lost)} reach"
                    f"{'' if len(lost) > 1 else 'es'} the reference only through capacitors or current "
                    "sources: no DC path, so the DC voltage there is set by nothing but leakage")]


@dataclass(frozen=True)
class System:
    """The recorded node-voltage procedure of one circuit (immutable).

    Attributes:
        circuit: the circuit.
        equations: the equations as generated (before any substitution).
        unknowns: node voltages (and sensed source currents).
        skipped: (node, op-amp id) of the op-amp outputs whose KCL was not written.
        steps: the recorded steps.
        reduced_equations: what is left to solve after the substitutions.
        reduced_unknowns: its unknowns.
        eliminated: unknowns found by substitution (symbol -> expression in the others).
        needed: ids of sources whose current is an unknown.
        values: parameter values substituted so far.
        warnings: legal but suspicious things.
    """

    circuit: Circuit
    equations: tuple[Equation, ...]
    unknowns: tuple[sympy.Symbol, ...]
    skipped: tuple[tuple[str, str], ...]
    steps: tuple[Step, ...]
    reduced_equations: tuple[Equation, ...]
    reduced_unknowns: tuple[sympy.Symbol, ...]
    eliminated: dict
    needed: tuple[str, ...]
    values: dict
    warnings: tuple[Warning, ...] = ()

    # --- substitution ---------------------------------------------------------
    def _value(self, name: str, raw: object) -> sympy.Expr:
        params = self.circuit.parameters
        if name not in params:
            raise InputError(f"unknown parameter {name!r}",
                             hint="parameters: " + (", ".join(params) or "(none)"), file=self.circuit.path)
        if isinstance(raw, sympy.Basic):
            value = sympy.sympify(raw)  # already a SymPy object, never text
        elif isinstance(raw, bool):
            raise InputError(f"value for {name} must be a number or an expression", file=self.circuit.path)
        elif isinstance(raw, int):
            value = sympy.Integer(raw)
        elif isinstance(raw, float):
            value = sympy.Rational(repr(raw))
        else:
            try:
                value = parse_expression(str(raw), lambda n: param(n) if n in params else None)
            except ExpressionError as err:
                raise InputError(f"value for {name}: {err.message} in {str(raw)!r}", hint=err.hint,
                                 column=err.column) from None
        if value.has(param(name)):
            raise InputError(f"value for {name} refers to {name} itself", hint="give a plain value")
        return value

    def substitute(self, values: dict) -> "System":
        """Substitute parameter values and record the step; returns a new System.

        Args:
            values: name -> value (text in the expression language, a number, or a SymPy expression).
        """
        parsed = {name: self._value(name, raw) for name, raw in values.items()}
        previous = {param(n): v for n, v in self.values.items()}
        parsed = {n: v.xreplace(previous) for n, v in parsed.items()}
        mapping = {param(n): v for n, v in parsed.items()}
        if not mapping:
            return self
        reduced = tuple(e.subs(mapping) for e in self.reduced_equations)
        eliminated = {k: v.xreplace(mapping) for k, v in self.eliminated.items()}
        values = {**{n: v.xreplace(mapping) for n, v in self.values.items()}, **parsed}
        step = Step("parameter_substitution", "Substitute " + ", ".join(parsed),
                    "Parameter values substituted: " + ", ".join(f"{n} = {v}" for n, v in parsed.items()) + ".",
                    reduced, data={"values": dict(parsed)})
        return replace(self, reduced_equations=reduced, eliminated=eliminated, values=values,
                       steps=self.steps + (step,))

    def substitute_known(self) -> "System":
        """Substitute every parameter that has a value in the circuit file.

        Values already substituted win over the file's: a file value written in
        terms of them (``Rf = "Gain*Rin"`` after ``Rin = 4.7k``) uses theirs.
        """
        raw = {n: p.value for n, p in self.circuit.parameters.items()
               if p.value is not None and n not in self.values}
        if not raw:
            return self
        mapping = {param(n): v for n, v in {**raw, **self.values}.items()}
        known = {}
        for name, value in raw.items():
            for _ in range(len(mapping) + 1):  # the loader rejects cycles, so this ends
                new = value.xreplace(mapping)
                if new == value:
                    break
                value = new
            known[name] = value
        return self.substitute(known)

    def without_substitutions(self) -> "System":
        """The system as generated, with no parameter values substituted."""
        return build_system(self.circuit)

    # --- matrix and solution ----------------------------------------------------
    def matrix(self) -> MatrixForm:
        """The reduced system as A x = b, rows labelled by equation, columns by unknown.

        Computed once per System (the System is immutable) and kept.
        """
        cached = self.__dict__.get("_matrix")
        if cached is not None:
            return cached
        residuals = [sympy.expand(e.residual) for e in self.reduced_equations]
        if self.reduced_unknowns:
            A, b = sympy.linear_eq_to_matrix(residuals, list(self.reduced_unknowns))
        else:
            A, b = sympy.zeros(len(residuals), 0), sympy.Matrix([-r for r in residuals])
        form = MatrixForm(A, b, tuple(e.label for e in self.reduced_equations),
                          tuple(str(u) for u in self.reduced_unknowns))
        object.__setattr__(self, "_matrix", form)  # a cache on a frozen dataclass, not state
        return form

    def solve(self):
        """Solve exactly; see :func:`nodeterm.engine.solve.solve_system`."""
        from .solve import solve_system
        return solve_system(self)
