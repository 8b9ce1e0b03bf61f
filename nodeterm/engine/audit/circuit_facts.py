"""Facts of the circuit an explanation is built from: who touches which node, what drives it.

:class:`CircuitFacts` answers the questions an engineer asks when a KCL equation
does not check: which parts touch node ``n`` (and at which of their terminals),
the current leaving ``n`` through each of them, whether ``n`` is driven (an
op-amp output or a voltage source fixes its voltage, so its KCL needs that
source's current), which supernode it belongs to and through which sources,
which op-amp inputs sit on it, and whether an op-amp has negative feedback.

Written here because these are facts of our own circuit model; the only algebra
is SymPy's.

>>> from nodeterm.engine.circuit.loader import parse_circuit
>>> from nodeterm.engine.equations.system import build_system
>>> c = parse_circuit('''
... [parts]
... Vs = { kind = "voltage_source", nodes = ["in", "gnd"], value = "Vin" }
... R1 = { kind = "resistor", nodes = ["in", "inv"], value = "R1" }
... R2 = { kind = "resistor", nodes = ["inv", "out"], value = "R2" }
... U1 = { kind = "opamp", plus = "gnd", minus = "inv", out = "out" }
... [parameters]
... Vin = ""
... R1 = ""
... R2 = ""
... ''')
>>> f = CircuitFacts(build_system(c))
>>> f.touching("inv")
('R1', 'R2')
>>> f.driver("out").part, f.driver("in").part
('U1', 'Vs')
>>> f.inputs_at("inv")
(('U1', '-'),)
>>> f.joins("R2")
'inv and out'
"""

from __future__ import annotations

from dataclasses import dataclass

import sympy

from nodeterm.engine.equations.procedure import _Context
from nodeterm.engine.symbols import I, V


@dataclass(frozen=True)
class Driver:
    """What fixes a node's voltage: ``part`` and how ("opamp output", "voltage source", "controlled source").

    ``current``: the current leaving the node through the driving part (in I_<part>).
    """

    part: str
    how: str
    current: sympy.Expr


class CircuitFacts:
    """Connectivity facts of one system's circuit (built once per audit)."""

    def __init__(self, system, solution=None) -> None:
        c = self.circuit = system.circuit
        self.reference = c.reference
        self.parts = {p.id: p for p in c.parts}
        ctx = _Context(c, set(system.needed))
        ref = c.reference
        self._leaving: dict[str, dict[str, sympy.Expr]] = {n: {} for n in c.nodes}
        self._drivers: dict[str, list[Driver]] = {n: [] for n in c.nodes}
        for p in c.parts:
            br = p.branch(ref)
            if br is not None:
                a, b = br
                how = ("opamp output" if p.kind == "opamp" else
                       "voltage source" if getattr(p, "independent", False) else "controlled source")
                # I_<id> flows a -> b inside the part: it leaves b into the circuit, enters a from it.
                if b != ref:
                    self._drivers[b].append(Driver(p.id, how, -I(p.id)))
                if a != ref:
                    self._drivers[a].append(Driver(p.id, how, I(p.id)))
            try:
                terms = p.kcl_terms(ctx)
            except NotImplementedError:
                terms = []
            for node, cur in terms:
                if node in self._leaving:
                    prev = self._leaving[node].get(p.id, sympy.Integer(0))
                    self._leaving[node][p.id] = prev + cur
        # supernodes and known voltages, as the procedure recorded them
        sources = next((s for s in system.steps if s.kind == "sources"), None)
        data = sources.data if sources else {}
        self.supernodes: tuple[tuple[str, ...], ...] = tuple(data.get("supernodes", ()))
        self.known = {n: v for n, v in data.get("known", {}).items()}
        self.eliminated = dict(system.eliminated)
        self.skipped = dict(system.skipped)
        self.solved = dict(solution.node_voltages) if solution is not None else {}
        self.values = dict(system.values)
        self._feedback: dict | None = None

    # --- parts and nodes ------------------------------------------------------
    def touching(self, node: str) -> tuple[str, ...]:
        """Parts with a terminal on ``node`` that carry a current in its KCL (branch parts excluded)."""
        return tuple(pid for pid, cur in self._leaving.get(node, {}).items() if sympy.expand(cur) != 0)

    def leaving(self, part: str, node: str) -> sympy.Expr | None:
        """The current leaving ``node`` through ``part`` (in node voltages), None when it does not touch it."""
        return self._leaving.get(node, {}).get(part)

    def ends(self, part: str) -> tuple[str, ...]:
        p = self.parts[part]
        if p.kind == "opamp":
            return (p.out,)
        return tuple(p.nodes[:2])

    def joins(self, part: str) -> str:
        """'a and b' for a two-terminal part."""
        ends = self.ends(part)
        return " and ".join(ends) if len(ends) > 1 else ends[0]

    def driver(self, node: str) -> Driver | None:
        ds = self._drivers.get(node) or []
        return ds[0] if ds else None

    def drivers(self, node: str) -> tuple[Driver, ...]:
        return tuple(self._drivers.get(node) or ())

    def supernode_of(self, node: str) -> tuple[str, ...] | None:
        for sn in self.supernodes:
            if node in sn:
                return sn
        return None

    def inside(self, part: str, nodes) -> bool:
        """Both ends of a two-terminal part in ``nodes``."""
        ends = self.ends(part)
        return len(ends) == 2 and all(e in nodes for e in ends)

    # --- op-amps --------------------------------------------------------------
    def opamps(self):
        return [p for p in self.circuit.parts if p.kind == "opamp"]

    def inputs_at(self, node: str) -> tuple[tuple[str, str], ...]:
        """(op-amp id, '+' or '-') for each op-amp input on ``node``."""
        out = []
        for p in self.opamps():
            if p.plus == node:
                out.append((p.id, "+"))
            if p.minus == node:
                out.append((p.id, "-"))
        return tuple(out)

    def voltage(self, node: str):
        """V_node: its solved value when short, else after the known voltages and input equalities (None
        when it is still an unknown)."""
        if node == self.reference:
            return sympy.Integer(0)
        raw = self.solved.get(node)
        if raw is not None and not getattr(raw, "is_large", False) and sympy.count_ops(raw) <= 200:
            value = sympy.factor(raw)
            if sympy.count_ops(value) <= 40:  # short enough to read in a message
                return value
        return self.eliminated.get(V(node))

    def feedback(self, opamp: str) -> str | None:
        """'negative', 'positive', 'none', 'depends-on-values', 'not-checked', or None when the feedback
        check (:mod:`nodeterm.engine.equations.feedback`) is not available."""
        if self._feedback is None:
            try:
                from nodeterm.engine.equations.feedback import opamp_feedback
            except ImportError:
                self._feedback = {}
            else:
                try:
                    self._feedback = {k: f.kind for k, f in opamp_feedback(self.circuit, self.values).items()}
                except Exception:  # noqa: BLE001 - a missing fact must not break a verdict
                    self._feedback = {}
        return self._feedback.get(opamp)
