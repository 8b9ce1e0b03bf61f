"""Property test: random valid circuits with capacitors and controlled sources, against an independent solve.

Extends tests/solving/test_property_random.py (resistors, sources, ideal op-amps) to
capacitors and the four controlled sources. Hypothesis draws:

* a network of resistors and capacitors in which every node reaches the
  reference (a random spanning tree plus extra parts);
* independent voltage sources, VCVS and CCVS that never form a loop of
  voltage-defining parts (a forest over the nodes), and current sources;
* VCCS sensing any two nodes, CCCS and CCVS sensing the current of a resistor,
  capacitor or voltage source;
* ideal op-amp stages with negative feedback (inverting or non-inverting,
  feedback resistor with an optional capacitor across it), possibly loading
  the network again.

The engine solves symbolically in ``s``; the result is then evaluated exactly
at a random complex frequency ``s0`` and checked three ways:

1. every part obeys its own law at ``s0`` (Ohm's law, I = s*C*V, source values,
   controlled-source laws, V+ = V- for each op-amp);
2. Kirchhoff's current law holds exactly at every node, the reference and
   the op-amp outputs included: the op-amp output current reported by the
   engine enters node ``out`` and returns through the supplies to the reference;
3. the node voltages and branch currents equal a plain modified nodal analysis
   (MNA) solved with NumPy at ``s0``, with stamps written here (standard MNA,
   common practice, no source): KCL rows at every non-reference node, one
   current unknown and one row per voltage source, VCVS, CCVS and op-amp.

When the drawn circuit is singular for every s (e.g. a controlled-source loop
gain of exactly one) the engine must refuse with an ``InputError``; circuits
singular only at the drawn ``s0`` are discarded.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field
from fractions import Fraction

import numpy as np
import pytest
import sympy
from hypothesis import HealthCheck, assume, event, given, settings
from hypothesis import strategies as st

from nodeterm.engine import InputError, build_system, parse_circuit
from nodeterm.engine.symbols import s as S
from nodeterm.engine.solving.solve import solve_system

MANTISSAS = ("1", "1.5", "2.2", "3.3", "4.7", "6.8")
RESISTORS = [(f"{m}k", Fraction(m) * 1000) for m in MANTISSAS] + [(f"{Fraction(m) * 10}k", Fraction(m) * 10000)
                                                                   for m in MANTISSAS]
CAPACITORS = [(f"{m}n", Fraction(m) / 10**9) for m in MANTISSAS] + [(f"{m}u", Fraction(m) / 10**6) for m in ("1", "2.2")]
VOLTAGES = [("5", Fraction(5)), ("-12", Fraction(-12)), ("1.5", Fraction(3, 2)), ("250m", Fraction(1, 4))]
CURRENTS = [("1m", Fraction(1, 1000)), ("-2m", Fraction(-1, 500)), ("500u", Fraction(1, 2000))]
VOLTAGE_GAINS = [("2", Fraction(2)), ("-1/2", Fraction(-1, 2)), ("0.3", Fraction(3, 10)), ("-3", Fraction(-3))]
TRANSCONDUCTANCES = [("1m", Fraction(1, 1000)), ("-2.5m", Fraction(-1, 400)), ("100u", Fraction(1, 10000))]
CURRENT_GAINS = [("2", Fraction(2)), ("-0.5", Fraction(-1, 2)), ("10", Fraction(10))]
TRANSRESISTANCES = [("1k", Fraction(1000)), ("-470", Fraction(-470)), ("2.2k", Fraction(2200))]
# s0 = sigma + j*omega (rad/s): real, imaginary (a sine at omega) and complex frequencies.
FREQUENCIES = [(Fraction(1000), Fraction(0)), (Fraction(0), Fraction(2000)), (Fraction(1, 3), Fraction(0)),
               (Fraction(-150), Fraction(7000)), (Fraction(0), Fraction(314159, 100)), (Fraction(25000), Fraction(0))]
VOLTAGE_DEFINING = ("voltage_source", "vcvs", "ccvs")


@dataclass
class P:
    kind: str
    id: str
    nodes: tuple[str, ...]
    text: str = ""
    value: Fraction = Fraction(0)
    control: tuple[str, str] | str | None = None


@dataclass
class Drawn:
    reference: str
    parts: list[P] = field(default_factory=list)

    def nodes(self) -> list[str]:
        seen = {self.reference}
        for p in self.parts:
            seen.update(p.nodes)
        return sorted(seen - {self.reference})

    def toml(self) -> str:
        lines = ['title = "random circuit with capacitors and controlled sources"',
                 f'reference = "{self.reference}"', "", "[parts]"]
        for p in self.parts:
            if p.kind == "opamp":
                plus, minus, out = p.nodes
                lines.append(f'{p.id} = {{ kind = "opamp", plus = "{plus}", minus = "{minus}", out = "{out}" }}')
                continue
            a, b = p.nodes
            head = f'{p.id} = {{ kind = "{p.kind}", nodes = ["{a}", "{b}"]'
            if p.kind in ("vcvs", "vccs"):
                cp, cn = p.control
                lines.append(f'{head}, control = ["{cp}", "{cn}"], gain = "{p.text}" }}')
            elif p.kind in ("ccvs", "cccs"):
                lines.append(f'{head}, control = "{p.control}", gain = "{p.text}" }}')
            else:
                lines.append(f'{head}, value = "{p.text}" }}')
        return "\n".join(lines) + "\n"


@st.composite
def circuits(draw) -> Drawn:
    ref = draw(st.sampled_from(["gnd", "0"]))
    c = Drawn(ref)
    count: dict[str, int] = {}

    def new_id(prefix: str) -> str:
        count[prefix] = count.get(prefix, 0) + 1
        return f"{prefix}{count[prefix]}"

    def passive(a: str, b: str, allow_c: bool = True) -> P:
        if allow_c and draw(st.integers(0, 2)) == 0:
            text, value = draw(st.sampled_from(CAPACITORS))
            part = P("capacitor", new_id("C"), (a, b), text, value)
        else:
            text, value = draw(st.sampled_from(RESISTORS))
            part = P("resistor", new_id("R"), (a, b), text, value)
        c.parts.append(part)
        return part

    net = [f"n{i}" for i in range(1, draw(st.integers(1, 5)) + 1)]
    everyone = [ref] + net
    for i, node in enumerate(net):  # spanning tree: every node reaches the reference
        passive(node, draw(st.sampled_from([ref] + net[:i])))
    for _ in range(draw(st.integers(0, 3))):
        a, b = draw(st.lists(st.sampled_from(everyone), min_size=2, max_size=2, unique=True))
        passive(a, b)

    # Voltage-defining parts form a forest over the nodes (no loop of sources).
    parent = {n: n for n in everyone}

    def root(n: str) -> str:
        while parent[n] != n:
            n = parent[n]
        return n

    def sensed() -> str:  # a part whose current a CCCS/CCVS may sense
        return draw(st.sampled_from([p.id for p in c.parts if p.kind in ("resistor", "capacitor", "voltage_source")]))

    for _ in range(draw(st.integers(0, 3))):
        kind = draw(st.sampled_from(VOLTAGE_DEFINING))
        if draw(st.booleans()):  # a new node driven by the source, loaded to keep it in the network
            a, b = f"e{len(parent)}", draw(st.sampled_from(everyone))
            parent[a] = a
            everyone.append(a)
            passive(a, draw(st.sampled_from([n for n in everyone if n != a])))
        else:
            a, b = draw(st.lists(st.sampled_from(everyone), min_size=2, max_size=2, unique=True))
        if root(a) == root(b):
            continue
        parent[root(a)] = root(b)
        if kind == "voltage_source":
            text, value = draw(st.sampled_from(VOLTAGES))
            c.parts.append(P("voltage_source", new_id("V"), (a, b), text, value))
        elif kind == "vcvs":
            text, value = draw(st.sampled_from(VOLTAGE_GAINS))
            ctrl = tuple(draw(st.lists(st.sampled_from(everyone), min_size=2, max_size=2, unique=True)))
            c.parts.append(P("vcvs", new_id("E"), (a, b), text, value, ctrl))
        else:
            text, value = draw(st.sampled_from(TRANSRESISTANCES))
            c.parts.append(P("ccvs", new_id("H"), (a, b), text, value, sensed()))
    for _ in range(draw(st.integers(0, 3))):
        a, b = draw(st.lists(st.sampled_from(everyone), min_size=2, max_size=2, unique=True))
        kind = draw(st.sampled_from(["current_source", "vccs", "cccs"]))
        if kind == "current_source":
            text, value = draw(st.sampled_from(CURRENTS))
            c.parts.append(P("current_source", new_id("I"), (a, b), text, value))
        elif kind == "vccs":
            text, value = draw(st.sampled_from(TRANSCONDUCTANCES))
            ctrl = tuple(draw(st.lists(st.sampled_from(everyone), min_size=2, max_size=2, unique=True)))
            c.parts.append(P("vccs", new_id("G"), (a, b), text, value, ctrl))
        else:
            text, value = draw(st.sampled_from(CURRENT_GAINS))
            c.parts.append(P("cccs", new_id("F"), (a, b), text, value, sensed()))

    # Op-amp stages with negative feedback from the output to the inverting input.
    inputs = list(net)
    for i in range(1, draw(st.integers(0, 2)) + 1):
        m, o = f"m{i}", f"o{i}"
        x = draw(st.sampled_from(inputs))
        uid = new_id("U")
        if draw(st.booleans()):  # inverting
            passive(x, m)
            c.parts.append(P("opamp", uid, (draw(st.sampled_from([ref, ref] + net)), m, o)))
        else:  # non-inverting
            passive(m, draw(st.sampled_from([ref, ref] + net)), allow_c=False)
            c.parts.append(P("opamp", uid, (x, m, o)))
        passive(m, o, allow_c=False)
        if draw(st.booleans()):  # a capacitor across the feedback resistor
            text, value = draw(st.sampled_from(CAPACITORS))
            c.parts.append(P("capacitor", new_id("C"), (m, o), text, value))
        if draw(st.booleans()):
            passive(o, draw(st.sampled_from(net)))
        inputs.append(o)
    return c


# ----------------------------------------------------------------------------- independent MNA
def mna(c: Drawn, s0, number):
    """MNA at s = s0 with our own stamps; ``number`` converts a Fraction (exact or complex)."""
    nodes = c.nodes()
    idx = {n: i for i, n in enumerate(nodes)}
    branch = [p for p in c.parts if p.kind in VOLTAGE_DEFINING + ("opamp",)]
    bidx = {p.id: len(nodes) + j for j, p in enumerate(branch)}
    size = len(nodes) + len(branch)
    A = [[number(0)] * size for _ in range(size)]
    b = [number(0)] * size
    parts = {p.id: p for p in c.parts}

    def admittance(p: P):
        return 1 / number(p.value) if p.kind == "resistor" else s0 * number(p.value)

    def voltage_row(n1: str, n2: str, scale) -> dict[int, object]:
        row = {}
        if n1 in idx:
            row[idx[n1]] = row.get(idx[n1], 0) + scale
        if n2 in idx:
            row[idx[n2]] = row.get(idx[n2], 0) - scale
        return row

    def current_row(pid: str) -> dict[int, object]:
        """The current of part pid (a -> b through it) as a combination of the unknowns."""
        p = parts[pid]
        if p.kind in VOLTAGE_DEFINING:
            return {bidx[pid]: number(1)}
        return voltage_row(p.nodes[0], p.nodes[1], admittance(p))

    def add_current(a: str, b_: str, row: dict[int, object]) -> None:  # that current leaves a, enters b_
        for n, sign in ((a, 1), (b_, -1)):
            if n in idx:
                for k, v in row.items():
                    A[idx[n]][k] += sign * v

    for p in c.parts:
        if p.kind in ("resistor", "capacitor"):
            add_current(p.nodes[0], p.nodes[1], voltage_row(p.nodes[0], p.nodes[1], admittance(p)))
        elif p.kind == "current_source":
            a, b_ = p.nodes
            if a in idx:
                b[idx[a]] -= number(p.value)
            if b_ in idx:
                b[idx[b_]] += number(p.value)
        elif p.kind == "vccs":
            add_current(*p.nodes, voltage_row(*p.control, number(p.value)))
        elif p.kind == "cccs":
            add_current(*p.nodes, {k: number(p.value) * v for k, v in current_row(p.control).items()})
        elif p.kind in VOLTAGE_DEFINING:
            j = bidx[p.id]
            add_current(*p.nodes, {j: number(1)})
            for k, v in voltage_row(*p.nodes, number(1)).items():
                A[j][k] += v
            if p.kind == "voltage_source":
                b[j] = number(p.value)
            elif p.kind == "vcvs":
                for k, v in voltage_row(*p.control, number(p.value)).items():
                    A[j][k] -= v
            else:
                for k, v in current_row(p.control).items():
                    A[j][k] -= number(p.value) * v
        elif p.kind == "opamp":
            plus, minus, out = p.nodes
            j = bidx[p.id]
            A[idx[out]][j] -= 1  # the output current enters node out
            for k, v in voltage_row(plus, minus, number(1)).items():
                A[j][k] += v
    return A, b, idx, bidx


def exact_rank_deficient(c: Drawn, s0) -> bool:
    A, _, _, _ = mna(c, s0, lambda f: sympy.Rational(f.numerator, f.denominator) if isinstance(f, Fraction)
                     else sympy.Integer(f))
    M = sympy.Matrix(A)
    return M.rank(simplify=True) < M.shape[0]


def s_value(sigma: Fraction, omega: Fraction):
    return sympy.Rational(sigma.numerator, sigma.denominator) + sympy.I * sympy.Rational(omega.numerator,
                                                                                       omega.denominator)


# ----------------------------------------------------------------------------- the property
@settings(max_examples=60 * int(os.environ.get("NODETERM_FUZZ", "1")), deadline=None,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large, HealthCheck.filter_too_much])
@given(circuits(), st.sampled_from(FREQUENCIES))
def test_random_circuit_satisfies_every_law_and_matches_numpy_mna(c: Drawn, freq):
    text = c.toml()
    s0 = s_value(*freq)
    circuit = parse_circuit(text, filename="random.toml")
    for kind in sorted({p.kind for p in c.parts}):
        event(kind)  # --hypothesis-show-statistics shows how often each kind is drawn
    if exact_rank_deficient(c, s0):
        other = s_value(Fraction(7919, 13), Fraction(31, 7))
        if exact_rank_deficient(c, other):  # singular for (almost surely) every s: must be refused
            event("singular: refused")
            with pytest.raises(InputError):
                solve_system(build_system(circuit))
            return
        assume(False)  # singular only at this s0

    sol = solve_system(build_system(circuit))
    at = {S: s0}

    def value(expr):
        return sympy.expand(sympy.sympify(expr).xreplace(at))

    v = {n: value(sol.node_voltages[n]) for n in c.nodes() + [c.reference]}
    i = {p.id: value(sol.currents[p.id]) for p in c.parts}
    for name, x in list(v.items()) + list(i.items()):
        assert x.is_number and not x.has(sympy.Float) and x.is_finite, f"{name} = {x}\n{text}"

    def q(f: Fraction):
        return sympy.Rational(f.numerator, f.denominator)

    # 1. each part's own law, exactly at s0
    for p in c.parts:
        if p.kind == "opamp":
            plus, minus, _ = p.nodes
            assert v[plus] == v[minus], f"{p.id}: V+ != V-\n{text}"
            continue
        a, b = p.nodes
        across = v[a] - v[b]
        if p.kind == "resistor":
            law = i[p.id] * q(p.value) - across
        elif p.kind == "capacitor":
            law = i[p.id] - s0 * q(p.value) * across
        elif p.kind == "voltage_source":
            law = across - q(p.value)
        elif p.kind == "current_source":
            law = i[p.id] - q(p.value)
        elif p.kind == "vcvs":
            law = across - q(p.value) * (v[p.control[0]] - v[p.control[1]])
        elif p.kind == "vccs":
            law = i[p.id] - q(p.value) * (v[p.control[0]] - v[p.control[1]])
        elif p.kind == "ccvs":
            law = across - q(p.value) * i[p.control]
        else:  # cccs
            law = i[p.id] - q(p.value) * i[p.control]
        assert sympy.expand(law) == 0, f"{p.kind} {p.id} breaks its law by {law}\n{text}"

    # 2. KCL at every node, op-amp outputs and the reference included
    leaving = {n: sympy.Integer(0) for n in v}
    for p in c.parts:
        if p.kind == "opamp":  # out of the output pin into node out, back through the supplies
            leaving[p.nodes[2]] -= i[p.id]
            leaving[c.reference] += i[p.id]
        else:
            leaving[p.nodes[0]] += i[p.id]
            leaving[p.nodes[1]] -= i[p.id]
    for node, total in leaving.items():
        assert sympy.expand(total) == 0, f"KCL at {node}: {total}\n{text}"

    # 3. the independent NumPy MNA at s0
    A, b, idx, bidx = mna(c, complex(s0), lambda f: complex(float(f)))
    A, b = np.array(A, dtype=complex), np.array(b, dtype=complex)
    assume(np.linalg.cond(A) < 1e10)  # too ill-conditioned for a double-precision comparison
    x = np.linalg.solve(A, b)
    scale_v = max([abs(x[k]) for k in idx.values()] + [1.0])
    for n, k in idx.items():
        got = complex(v[n])
        assert abs(got - x[k]) <= 1e-7 * scale_v, f"V_{n}: engine {got}, NumPy {x[k]}\n{text}"
    scale_i = max([abs(x[k]) for k in bidx.values()] + [1e-3])
    for pid, k in bidx.items():
        got = complex(i[pid])
        assert abs(got - x[k]) <= 1e-7 * scale_i, f"I_{pid}: engine {got}, NumPy {x[k]}\n{text}"


def test_generator_tables_are_consistent():
    # The value tables name the exact value beside their text (guards the reference itself).
    si = {"k": 10**3, "n": Fraction(1, 10**9), "u": Fraction(1, 10**6), "m": Fraction(1, 1000)}
    for text, value in RESISTORS + CAPACITORS + CURRENTS + TRANSCONDUCTANCES:
        assert Fraction(text[:-1]) * si[text[-1]] == value, (text, value)
