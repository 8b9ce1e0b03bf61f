"""Property test: the engine's exact answer agrees with an independent numeric solve.

Hypothesis draws random valid circuits: a resistor network that reaches the
reference node from every node (a random spanning tree plus extra resistors),
voltage sources that never form a loop (grounded or floating), current sources,
and ideal op-amp stages with negative feedback (inverting or non-inverting),
possibly cascaded and possibly loading the network again through a resistor.
Each circuit is written as TOML text with numeric values (SI-prefixed strings,
plain integers, and sometimes named parameters substituted with
``substitute_known``), then solved exactly by the engine.

The reference is a plain modified nodal analysis (MNA) built here with NumPy,
with our own stamps (standard MNA, common practice, no source): one KCL row per
non-reference node (currents leaving = 0), one row and one current unknown per
voltage source (V_p - V_n = value, current p -> n through the source), and one
row per ideal op-amp (V_plus - V_minus = 0) with its output current as an
unknown that enters node ``out``.  Unlike the engine, it writes KCL at the op-amp
output node too; the two formulations have the same solution.

Kirchhoff's current law is also checked exactly at every node, op-amp outputs
and the reference included, with the engine's reported part currents.

When the drawn circuit happens to be exactly singular (for instance positive
feedback whose loop gain is exactly one) the engine must refuse with an
``InputError`` (``SolveError`` is a subclass) instead of returning numbers;
singularity is decided exactly with SymPy on the same stamps.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from fractions import Fraction

import numpy as np
import pytest
import sympy
from hypothesis import HealthCheck, event, example, given, settings
from hypothesis import strategies as st

from nodeterm.engine import InputError, build_system, parse_circuit
from nodeterm.engine.solving.solve import solve_system

# Resistor values (text in our expression syntax, exact value): E6-ish mantissas over four decades.
MANTISSAS = ("1", "1.5", "2.2", "3.3", "4.7", "6.8", "8.2")
RESISTORS = [(str(Fraction(m) * 100), Fraction(m) * 100) for m in MANTISSAS]
RESISTORS += [(f"{m}k", Fraction(m) * 1000) for m in MANTISSAS]
RESISTORS += [(f"{Fraction(m) * scale}k", Fraction(m) * scale * 1000) for m in MANTISSAS for scale in (10, 100)]
VOLTAGES = [("5", Fraction(5)), ("-12", Fraction(-12)), ("1.5", Fraction(3, 2)), ("250m", Fraction(1, 4)),
            ("-3.3", Fraction(-33, 10)), ("10", Fraction(10)), ("-750m", Fraction(-3, 4)), ("2", Fraction(2))]
CURRENTS = [("1m", Fraction(1, 1000)), ("-2m", Fraction(-2, 1000)), ("500u", Fraction(1, 2000)),
            ("2.5m", Fraction(1, 400)), ("-100u", Fraction(-1, 10000)), ("10m", Fraction(1, 100))]


@dataclass
class Part:
    """One drawn part: kind, id, terminals, value text and exact value."""

    kind: str
    id: str
    nodes: tuple[str, ...]
    text: str = ""
    value: Fraction = Fraction(0)


@dataclass
class Drawn:
    reference: str
    parts: list[Part] = field(default_factory=list)
    parameters: dict[str, str] = field(default_factory=dict)

    def nodes(self) -> list[str]:
        seen = {self.reference}
        for p in self.parts:
            seen.update(p.nodes)
        return sorted(seen - {self.reference})

    def toml(self) -> str:
        lines = ['title = "random property circuit"', f'reference = "{self.reference}"', ""]
        if self.parameters:
            lines.append("[parameters]")
            lines += [f'{k} = "{v}"' for k, v in self.parameters.items()]
            lines.append("")
        lines.append("[parts]")
        for p in self.parts:
            if p.kind == "opamp":
                plus, minus, out = p.nodes
                lines.append(f'{p.id} = {{ kind = "opamp", plus = "{plus}", minus = "{minus}", out = "{out}" }}')
            else:
                a, b = p.nodes
                value = p.text if p.text.lstrip("-").isdigit() and p.kind != "resistor" else f'"{p.text}"'
                lines.append(f'{p.id} = {{ kind = "{p.kind}", nodes = ["{a}", "{b}"], value = {value} }}')
        return "\n".join(lines) + "\n"


@st.composite
def circuits(draw) -> Drawn:
    ref = draw(st.sampled_from(["gnd", "0", "com"]))
    c = Drawn(reference=ref)
    counters = {"R": 0, "V": 0, "I": 0, "U": 0}

    def new_id(prefix: str) -> str:
        counters[prefix] += 1
        return f"{prefix}{counters[prefix]}"

    def resistor(a: str, b: str) -> None:
        text, value = draw(st.sampled_from(RESISTORS))
        c.parts.append(Part("resistor", new_id("R"), (a, b), text, value))

    k = draw(st.integers(1, 5))
    net = [f"n{i}" for i in range(1, k + 1)]
    # Spanning tree: every network node reaches the reference through resistors.
    for i, node in enumerate(net):
        resistor(node, draw(st.sampled_from([ref] + net[:i])))
    everyone = [ref] + net
    for _ in range(draw(st.integers(0, 4))):
        a, b = draw(st.lists(st.sampled_from(everyone), min_size=2, max_size=2, unique=True))
        resistor(a, b)

    use_params = draw(st.booleans())

    def source_value(table) -> tuple[str, Fraction]:
        text, value = draw(st.sampled_from(table))
        if use_params and draw(st.booleans()):
            name = f"P{len(c.parameters) + 1}"
            c.parameters[name] = text
            return name, value
        return text, value

    # Voltage sources: a forest over the nodes (no loop of sources, reference included).
    parent = {n: n for n in everyone}

    def root(n: str) -> str:
        while parent[n] != n:
            n = parent[n]
        return n

    for _ in range(draw(st.integers(0, 2))):
        a, b = draw(st.lists(st.sampled_from(everyone), min_size=2, max_size=2, unique=True))
        if root(a) == root(b):
            continue
        parent[root(a)] = root(b)
        text, value = source_value(VOLTAGES)
        c.parts.append(Part("voltage_source", new_id("V"), (a, b), text, value))
    for _ in range(draw(st.integers(0, 2))):
        a, b = draw(st.lists(st.sampled_from(everyone), min_size=2, max_size=2, unique=True))
        text, value = source_value(CURRENTS)
        c.parts.append(Part("current_source", new_id("I"), (a, b), text, value))

    # Op-amp stages with negative feedback (Rf from the output to the inverting input).
    inputs = list(net)
    for i in range(1, draw(st.sampled_from([1, 2, 3, 0, 2, 3])) + 1):
        m, o = f"m{i}", f"o{i}"
        x = draw(st.sampled_from(inputs))
        uid = new_id("U")
        if draw(st.booleans()):  # inverting: x -Rin- m -Rf- o, V+ on the reference or a network node
            plus = draw(st.sampled_from([ref, ref] + net))
            resistor(x, m)
            c.parts.append(Part("opamp", uid, (plus, m, o)))
        else:  # non-inverting: V+ = x, Rg from m to the reference or a network node
            resistor(m, draw(st.sampled_from([ref, ref] + net)))
            c.parts.append(Part("opamp", uid, (x, m, o)))
        resistor(m, o)
        if draw(st.booleans()):
            resistor(o, ref)
        if draw(st.booleans()):  # the stage loads the network again
            resistor(o, draw(st.sampled_from(net)))
        inputs.append(o)
    return c


# ----------------------------------------------------------------------------- independent reference
def mna(c: Drawn, exact: bool):
    """Our own MNA stamps; returns (A, b, node index, current-unknown index)."""
    nodes = c.nodes()
    idx = {n: i for i, n in enumerate(nodes)}
    branch = [p for p in c.parts if p.kind in ("voltage_source", "opamp")]
    bidx = {p.id: len(nodes) + j for j, p in enumerate(branch)}
    size = len(nodes) + len(branch)
    zero = Fraction(0) if exact else 0.0
    A = [[zero] * size for _ in range(size)]
    b = [zero] * size
    conv = (lambda v: v) if exact else float

    for p in c.parts:
        if p.kind == "resistor":
            g = conv(1 / p.value)
            a_, b_ = p.nodes
            for n1, sign1 in ((a_, 1), (b_, -1)):
                if n1 not in idx:
                    continue
                for n2, sign2 in ((a_, 1), (b_, -1)):
                    if n2 in idx:
                        A[idx[n1]][idx[n2]] += sign1 * sign2 * g
        elif p.kind == "current_source":  # value flows a -> b through the source: leaves a, enters b
            a_, b_ = p.nodes
            if a_ in idx:
                b[idx[a_]] -= conv(p.value)
            if b_ in idx:
                b[idx[b_]] += conv(p.value)
        elif p.kind == "voltage_source":  # I flows p -> n through the source: leaves p, enters n
            pn, nn = p.nodes
            j = bidx[p.id]
            if pn in idx:
                A[idx[pn]][j] += 1
                A[j][idx[pn]] += 1
            if nn in idx:
                A[idx[nn]][j] -= 1
                A[j][idx[nn]] -= 1
            b[j] = conv(p.value)
        elif p.kind == "opamp":  # I leaves the output pin into node out; V+ - V- = 0
            plus, minus, out = p.nodes
            j = bidx[p.id]
            A[idx[out]][j] -= 1
            if plus in idx:
                A[j][idx[plus]] += 1
            if minus in idx:
                A[j][idx[minus]] -= 1
    return A, b, idx, bidx


def reference_solution(c: Drawn):
    A, b, idx, bidx = mna(c, exact=False)
    x = np.linalg.solve(np.array(A, dtype=float), np.array(b, dtype=float))
    volts = {n: x[i] for n, i in idx.items()}
    volts[c.reference] = 0.0
    return volts, {pid: x[j] for pid, j in bidx.items()}


def exactly_singular(c: Drawn) -> bool:
    A, _, _, _ = mna(c, exact=True)
    M = sympy.Matrix([[sympy.Rational(v.numerator, v.denominator) for v in row] for row in A])
    return M.rank() < M.shape[0]


def source_groups(c: Drawn) -> dict[str, set[str]]:
    """Nodes joined by voltage sources, keyed by a representative (the reference when it is in the group)."""
    groups = {n: {n} for n in c.nodes() + [c.reference]}
    owner = {n: n for n in groups}
    for p in c.parts:
        if p.kind != "voltage_source":
            continue
        a, b = (owner[n] for n in p.nodes)
        if b == c.reference:
            a, b = b, a
        groups[a] |= groups.pop(b)
        for n in groups[a]:
            owner[n] = a
    return groups


def close(got: float, want: float, scale: float) -> bool:
    return abs(got - want) <= 1e-9 * max(1.0, scale)


# ----------------------------------------------------------------------------- the property
def _positive_feedback_at_unity() -> Drawn:
    """A non-inverting stage of gain 2 feeding its own input through a resistor equal to the input's.

    KCL at n1: V/R + (V - 2V)/R = 0 for every V, so the system is singular and the 1 mA source has
    nowhere consistent to go: the engine must refuse (common practice, no source).
    """
    k = Fraction(1000)
    return Drawn(
        reference="gnd",
        parts=[
            Part("resistor", "R1", ("n1", "gnd"), "1k", k),
            Part("current_source", "I1", ("gnd", "n1"), "1m", Fraction(1, 1000)),
            Part("resistor", "R2", ("m1", "gnd"), "1k", k),
            Part("opamp", "U1", ("n1", "m1", "o1")),
            Part("resistor", "R3", ("m1", "o1"), "1k", k),
            Part("resistor", "R4", ("o1", "n1"), "1k", k),
        ],
    )


@example(_positive_feedback_at_unity())
@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
@given(circuits())
def test_engine_agrees_with_numpy_mna(c: Drawn):
    text = c.toml()
    circuit = parse_circuit(text, filename="random.toml")
    event(f"op-amps: {sum(p.kind == 'opamp' for p in c.parts)}")
    event(f"unknown nodes: {len(c.nodes())}")
    if exactly_singular(c):
        event("singular")
        with pytest.raises(InputError):
            system = build_system(circuit)
            if c.parameters:
                system = system.substitute_known()
            solve_system(system)
        return
    system = build_system(circuit)
    assert len(system.equations) == len(system.unknowns), text
    opamps = [p for p in c.parts if p.kind == "opamp"]
    assert [e.kind for e in system.equations].count("opamp_equality") == len(opamps), text
    assert {p.nodes[2] for p in opamps} == {tuple(x)[0] for x in system.skipped}, text
    # Sources: nodes tied to the reference through sources are known; other groups of nodes joined
    # by sources are supernodes (one KCL each, one constraint per source); every other node that is
    # not an op-amp output gets its own KCL.
    groups = source_groups(c)
    known = groups.get(c.reference, set()) - {c.reference}
    floating = [g for r, g in groups.items() if r != c.reference and len(g) > 1]
    kinds = [e.kind for e in system.equations]
    assert kinds.count("known_voltage") == len(known), text
    assert kinds.count("supernode_kcl") == len(floating), text
    assert kinds.count("source_constraint") == sum(len(g) - 1 for g in floating), text
    in_groups = known | set().union(*floating)
    if floating:
        event("supernode")
    assert kinds.count("kcl") == len(set(c.nodes()) - in_groups) - len(opamps), text
    if c.parameters:
        system = system.substitute_known()
    sol = solve_system(system)

    volts, branch = reference_solution(c)
    scale = max([abs(v) for v in volts.values()] + [1.0])
    for node, want in volts.items():
        got = sol.node_voltages[node]
        assert got.is_number, f"V_{node} not numeric: {got}\n{text}"
        assert not got.has(sympy.Float), f"V_{node} is not exact: {got}\n{text}"
        assert close(float(got), want, scale), f"V_{node}: engine {got} = {float(got)}, NumPy {want}\n{text}"
    iscale = max([abs(v) for v in branch.values()] + [1e-3])
    for pid, want in branch.items():
        got = float(sol.currents[pid])
        assert abs(got - want) <= 1e-9 * iscale, f"I_{pid}: engine {got}, NumPy {want}\n{text}"

    # Exact KCL at every node (reference and op-amp outputs included) with the engine's currents;
    # resistor currents obey Ohm's law on the engine's node voltages.
    v = {n: sympy.sympify(sol.node_voltages[n]) for n in c.nodes() + [c.reference]}
    leaving = {n: sympy.Integer(0) for n in v}
    for p in c.parts:
        current = sympy.sympify(sol.currents[p.id])
        assert not current.has(sympy.Float), f"I_{p.id} is not exact: {current}\n{text}"
        if p.kind == "opamp":  # out of the output pin, back through the supplies to the reference
            leaving[p.nodes[2]] -= current
            leaving[c.reference] += current
            continue
        a, b = p.nodes
        leaving[a] += current
        leaving[b] -= current
        exact = sympy.Rational(p.value.numerator, p.value.denominator)
        if p.kind == "resistor":
            assert current == (v[a] - v[b]) / exact, f"I_{p.id}: {current} vs Ohm's law\n{text}"
        elif p.kind == "current_source":
            assert current == exact, f"I_{p.id}: {current}, source value {exact}\n{text}"
        elif p.kind == "voltage_source":
            assert v[a] - v[b] == exact, f"V across {p.id}: {v[a] - v[b]}, source value {exact}\n{text}"
    for node, total in leaving.items():
        assert total == 0, f"KCL at {node}: currents leaving sum to {total}\n{text}"

    # The labelled matrix form A x = b holds for the solution (columns named by their unknowns).
    m = system.matrix()
    assert m.A.shape == (len(m.rows), len(m.cols)) and m.A.shape[0] == m.A.shape[1], text
    value_of = {str(sympy.Symbol(f"V_{n}")): v[n] for n in v}
    value_of.update({f"I_{pid}": sympy.sympify(i) for pid, i in sol.currents.items()})
    if m.rows:  # everything may be known already (a lone source across a resistor)
        x = sympy.Matrix([value_of[col] for col in m.cols])
        assert sympy.simplify(m.A * x - m.b) == sympy.zeros(len(m.rows), 1), text


def test_generator_values_are_consistent():
    # The resistor table's text must name the exact value beside it (guards the reference itself).
    si = {"k": 1000}
    for text, value in RESISTORS:
        number = Fraction(text[:-1]) * si[text[-1]] if text[-1] in si else Fraction(text)
        assert number == value, (text, value)
    assert len({v for _, v in RESISTORS}) == len(RESISTORS)
