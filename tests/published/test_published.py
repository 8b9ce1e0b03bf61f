"""Solved circuits checked against published formulas and independent solves.

Each case is one circuit file in this folder.  The test loads it with the
engine, solves it with every parameter symbolic, and compares with the formula
from the source named beside the check (``sympy.simplify(got - expected) == 0``).
Each case is then solved again after ``System.substitute`` with values written
in our expression syntax (SI prefixes), and compared exactly with the formula
evaluated in rationals: the engine promises exact arithmetic, so no tolerance.

Sources (book chapters cited from memory, as marked at each check):
  * Sedra & Smith, Microelectronic Circuits, ch. 2 (ideal op-amp circuits,
    finite open-loop gain) and ch. 7 (common-emitter stage, hybrid-pi model).
  * Alexander & Sadiku, Fundamentals of Electric Circuits, ch. 2 (voltage
    division), ch. 3 (nodal analysis, supernode), ch. 5 (op-amps).
  * Horowitz & Hill, The Art of Electronics, ch. 4 (op-amp circuits,
    current-to-voltage converter).
  * Franco, Design with Operational Amplifiers and Analog Integrated Circuits,
    ch. 1-3 (op-amp basics, integrator, Sallen-Key filters).

The procedure checks (skipped op-amp output nodes, one input equality per
ideal op-amp, one supernode KCL per floating source, one known-voltage equation
per grounded source, as many equations as unknowns) follow the node method as
the issue defines it.  The KCL check at every node with the solved part
currents is Kirchhoff's current law itself (common practice, no source).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
import sympy
from sympy import Rational

from nodeterm.engine import build_system, load_circuit
from nodeterm.engine.symbols import param, s
from nodeterm.engine.solving.solve import solve_system

HERE = Path(__file__).parent
CASES = sorted(p.name for p in HERE.glob("*.toml"))

TWO_TERMINAL = {"resistor", "capacitor", "inductor", "voltage_source", "current_source", "vcvs", "vccs", "ccvs", "cccs"}


# ----------------------------------------------------------------------------- helpers
def P(*names: str):
    """Parameter symbols, as the engine makes them."""
    syms = tuple(param(n) for n in names)
    return syms[0] if len(syms) == 1 else syms


def solve_case(name: str, values: dict[str, str] | None = None):
    """Load, build and solve one case; ``values`` are substituted first."""
    circuit = load_circuit(str(HERE / name))
    system = build_system(circuit)
    if values:
        system = system.substitute(values)
    return circuit, system, solve_system(system)


def assert_same(got, expected, what: str) -> None:
    """Symbolic equality: the difference must simplify to exactly zero."""
    got = sympy.sympify(got)
    diff = sympy.simplify(got - expected)
    assert diff == 0, f"{what}: got {got}, expected {expected}, difference {diff}"


def rationals(values: dict[str, tuple[str, Rational]]):
    """Split {name: (text, exact value)} into the engine's input and our subs map."""
    text = {k: v[0] for k, v in values.items()}
    exact = {param(k): v[1] for k, v in values.items()}
    return text, exact


def check_with_values(name: str, values, pick, expected, what: str) -> None:
    """Solve ``name`` after substituting ``values`` and compare exactly with ``expected``."""
    text, exact = rationals(values)
    _, _, sol = solve_case(name, text)
    got = sympy.sympify(pick(sol))
    want = sympy.sympify(expected).subs(exact)
    assert not got.has(sympy.Float), f"{what}: floats in an exact result: {got}"
    assert sympy.simplify(got - want) == 0, f"{what} with values: got {got}, expected {want}"


def kinds(system) -> list[str]:
    return [eq.kind for eq in system.equations]


def par(a, b):
    """Two resistances in parallel."""
    return a * b / (a + b)


# ----------------------------------------------------------------------------- inverting
def test_inverting_amplifier_gain():
    # Sedra & Smith, Microelectronic Circuits, ch. 2, the inverting configuration: G = -R2/R1 (from memory).
    # Alexander & Sadiku, Fundamentals of Electric Circuits, ch. 5, inverting amplifier: vo = -(Rf/Ri) vi (from memory).
    Vin, Rin, Rf = P("Vin", "Rin", "Rf")
    _, _, sol = solve_case("inverting_amplifier.toml")
    assert_same(sol.node_voltages["out"], -Rf / Rin * Vin, "V_out")
    assert_same(sol.find["gain"], -Rf / Rin, "gain")
    assert_same(sol.node_voltages["inv"], 0, "virtual ground at V-")
    check_with_values(
        "inverting_amplifier.toml",
        {"Vin": ("250m", Rational(1, 4)), "Rin": ("4.7k", Rational(4700)), "Rf": ("47k", Rational(47000))},
        lambda sol: sol.node_voltages["out"],
        -Rf / Rin * Vin,
        "V_out",
    )


def test_inverting_amplifier_procedure():
    # The node method as the issue defines it: no KCL at an ideal op-amp output, V+ = V- instead.
    circuit = load_circuit(str(HERE / "inverting_amplifier.toml"))
    system = build_system(circuit)
    assert ("out", "U1") in tuple(tuple(x) for x in system.skipped)
    assert not [eq for eq in system.equations if eq.kind == "kcl" and eq.at == "out"]
    assert kinds(system).count("opamp_equality") == 1
    assert kinds(system).count("known_voltage") == 1
    known = [eq for eq in system.equations if eq.kind == "known_voltage"][0]
    assert known.at in ("in", "Vsig")
    assert [eq.at for eq in system.equations if eq.kind == "kcl"] == ["inv"]
    assert len(system.equations) == len(system.unknowns)


def test_opamp_output_current_with_load():
    # Common practice, no source: the output pin feeds the load and the feedback resistor,
    # I_out = Vout/RL + (Vout - V-)/Rf.
    Vin, Rin, Rf, RL = P("Vin", "Rin", "Rf", "RL")
    _, _, sol = solve_case("inverting_amplifier_loaded.toml")
    vout = -Rf / Rin * Vin
    expected = vout / RL + (vout - 0) / Rf
    assert_same(sol.currents["U1"], expected, "I_U1")
    assert_same(sol.find["Iout"], expected, "find Iout")
    # Same law written with the engine's own node voltages.
    v = sol.node_voltages
    assert_same(sol.currents["U1"], v["out"] / RL + (v["out"] - v["inv"]) / Rf, "I_U1 from node voltages")
    check_with_values(
        "inverting_amplifier_loaded.toml",
        {
            "Vin": ("-1.5", Rational(-3, 2)),
            "Rin": ("10k", Rational(10000)),
            "Rf": ("33k", Rational(33000)),
            "RL": ("2k", Rational(2000)),
        },
        lambda sol: sol.currents["U1"],
        expected,
        "I_U1",
    )


# ----------------------------------------------------------------------------- non-inverting
def test_noninverting_amplifier_gain():
    # Sedra & Smith, Microelectronic Circuits, ch. 2, the noninverting configuration: G = 1 + R2/R1 (from memory).
    # Alexander & Sadiku, Fundamentals of Electric Circuits, ch. 5, noninverting amplifier: vo = (1 + Rf/R1) vi (from memory).
    Vin, Rg, Rf = P("Vin", "Rg", "Rf")
    _, system, sol = solve_case("noninverting_amplifier.toml")
    assert_same(sol.find["gain"], 1 + Rf / Rg, "gain")
    assert_same(sol.node_voltages["out"], (1 + Rf / Rg) * Vin, "V_out")
    assert_same(sol.node_voltages["fb"], Vin, "V- follows V+")
    assert ("out", "U1") in tuple(tuple(x) for x in system.skipped)
    check_with_values(
        "noninverting_amplifier.toml",
        {"Vin": ("12m", Rational(12, 1000)), "Rg": ("1k", Rational(1000)), "Rf": ("99k", Rational(99000))},
        lambda sol: sol.node_voltages["out"],
        (1 + Rf / Rg) * Vin,
        "V_out",
    )


def test_voltage_follower():
    # Sedra & Smith, Microelectronic Circuits, ch. 2, the unity-gain buffer (voltage follower) (from memory);
    # no input current, so the source resistance drops nothing and the load does not matter.
    Vin, Rs, RL = P("Vin", "Rs", "RL")
    _, system, sol = solve_case("voltage_follower.toml")
    assert_same(sol.node_voltages["out"], Vin, "V_out")
    assert_same(sol.node_voltages["p"], Vin, "V+ (no input current)")
    assert_same(sol.currents["Rsrc"], 0, "current in the source resistance")
    # Common practice, no source: the output pin supplies the whole load current.
    assert_same(sol.currents["U1"], Vin / RL, "I_U1")
    assert ("out", "U1") in tuple(tuple(x) for x in system.skipped)
    check_with_values(
        "voltage_follower.toml",
        {"Vin": ("3.3", Rational(33, 10)), "Rs": ("1M", Rational(10**6)), "RL": ("470", Rational(470))},
        lambda sol: sol.node_voltages["out"],
        Vin,
        "V_out",
    )


def test_finite_gain_noninverting():
    # Sedra & Smith, Microelectronic Circuits, ch. 2, noninverting configuration with finite open-loop gain:
    # G = A / (1 + A*R1/(R1+R2)) with R1 to ground and R2 feedback (from memory).
    Vin, Rg, Rf, A = P("Vin", "Rg", "Rf", "Aol")
    _, system, sol = solve_case("finite_gain_noninverting.toml")
    expected = A / (1 + A * Rg / (Rg + Rf))
    assert_same(sol.find["gain"], expected, "gain")
    assert kinds(system).count("opamp_gain") == 1
    assert kinds(system).count("opamp_equality") == 0
    assert len(system.equations) == len(system.unknowns)
    # As A grows the gain tends to the ideal 1 + Rf/Rg (same chapter).
    assert_same(sympy.limit(sol.find["gain"], A, sympy.oo), 1 + Rf / Rg, "limit A -> oo")
    check_with_values(
        "finite_gain_noninverting.toml",
        {
            "Vin": ("1", Rational(1)),
            "Rg": ("1k", Rational(1000)),
            "Rf": ("9k", Rational(9000)),
            "Aol": ("100k", Rational(100000)),
        },
        lambda sol: sol.find["gain"],
        expected,
        "gain",
    )


# ----------------------------------------------------------------------------- difference, summing, transimpedance
def test_difference_amplifier_general():
    # Alexander & Sadiku, Fundamentals of Electric Circuits, ch. 5, difference amplifier (from memory):
    # vo = R2(1 + R1/R2) / (R1(1 + R3/R4)) v2 - (R2/R1) v1.
    V1, V2, R1, R2, R3, R4 = P("V1", "V2", "R1", "R2", "R3", "R4")
    _, _, sol = solve_case("difference_amplifier.toml")
    expected = R2 * (1 + R1 / R2) / (R1 * (1 + R3 / R4)) * V2 - R2 / R1 * V1
    assert_same(sol.node_voltages["out"], expected, "V_out")
    # Superposition form (Sedra & Smith, ch. 2, difference amplifiers, from memory).
    assert_same(sol.node_voltages["out"], V2 * R4 / (R3 + R4) * (1 + R2 / R1) - V1 * R2 / R1, "V_out (superposition)")
    # With matched ratios the general formula reduces to R2/R1 (V2 - V1).
    matched = sol.node_voltages["out"].subs({R3: R1, R4: R2})
    assert_same(matched, R2 / R1 * (V2 - V1), "V_out with R3=R1, R4=R2")
    check_with_values(
        "difference_amplifier.toml",
        {
            "V1": ("2", Rational(2)),
            "V2": ("2.1", Rational(21, 10)),
            "R1": ("10k", Rational(10000)),
            "R2": ("100k", Rational(100000)),
            "R3": ("10.1k", Rational(10100)),
            "R4": ("99k", Rational(99000)),
        },
        lambda sol: sol.node_voltages["out"],
        expected,
        "V_out",
    )


def test_difference_amplifier_matched():
    # Sedra & Smith, Microelectronic Circuits, ch. 2, difference amplifiers: with R3/R4 = R1/R2,
    # vO = (R2/R1)(vI2 - vI1) (from memory).
    V1, V2, R1, R2 = P("V1", "V2", "R1", "R2")
    _, system, sol = solve_case("difference_amplifier_matched.toml")
    assert_same(sol.node_voltages["out"], R2 / R1 * (V2 - V1), "V_out")
    # Common-mode input gives zero output (same section).
    assert_same(sol.node_voltages["out"].subs(V2, V1), 0, "common-mode output")
    assert kinds(system).count("known_voltage") == 2
    check_with_values(
        "difference_amplifier_matched.toml",
        {"V1": ("1.25", Rational(5, 4)), "V2": ("1.3", Rational(13, 10)), "R1": ("1k", 1000), "R2": ("20k", 20000)},
        lambda sol: sol.node_voltages["out"],
        R2 / R1 * (V2 - V1),
        "V_out",
    )


def test_summing_amplifier():
    # Alexander & Sadiku, Fundamentals of Electric Circuits, ch. 5, summing amplifier:
    # vo = -(Rf/R1 v1 + Rf/R2 v2) (from memory).
    V1, V2, R1, R2, Rf = P("V1", "V2", "R1", "R2", "Rf")
    _, _, sol = solve_case("summing_amplifier.toml")
    expected = -Rf * (V1 / R1 + V2 / R2)
    assert_same(sol.node_voltages["out"], expected, "V_out")
    check_with_values(
        "summing_amplifier.toml",
        {
            "V1": ("0.5", Rational(1, 2)),
            "V2": ("-200m", Rational(-1, 5)),
            "R1": ("10k", 10000),
            "R2": ("20k", 20000),
            "Rf": ("15k", 15000),
        },
        lambda sol: sol.node_voltages["out"],
        expected,
        "V_out",
    )


def test_transimpedance_amplifier():
    # Horowitz & Hill, The Art of Electronics, ch. 4, current-to-voltage converter: Vout = -Iin*Rf (from memory).
    Iin, Rf = P("Iin", "Rf")
    _, system, sol = solve_case("transimpedance_amplifier.toml")
    assert_same(sol.node_voltages["out"], -Rf * Iin, "V_out")
    # All of Iin flows through Rf into the output pin, so the op-amp sinks it (common practice, no source).
    assert_same(sol.currents["U1"], -Iin, "I_U1")
    assert kinds(system).count("known_voltage") == 0
    check_with_values(
        "transimpedance_amplifier.toml",
        {"Iin": ("2.5u", Rational(25, 10**7)), "Rf": ("1M", 10**6)},
        lambda sol: sol.node_voltages["out"],
        -Rf * Iin,
        "V_out",
    )


# ----------------------------------------------------------------------------- reactive
def test_inverting_integrator():
    # Sedra & Smith, Microelectronic Circuits, ch. 2, the inverting integrator: Vo/Vi = -1/(sCR) (from memory).
    # Franco, Design with Operational Amplifiers and Analog Integrated Circuits, ch. 1 (from memory), same result.
    Vin, R, C = P("Vin", "R", "C")
    _, _, sol = solve_case("inverting_integrator.toml")
    assert_same(sol.find["H"], -1 / (s * R * C), "H(s)")
    assert_same(sol.node_voltages["out"], -Vin / (s * R * C), "V_out")
    assert sol.is_reactive
    check_with_values(
        "inverting_integrator.toml",
        {"R": ("100k", 100000), "C": ("10n", Rational(1, 10**8))},
        lambda sol: sol.find["H"],
        -1 / (s * R * C),
        "H(s)",
    )


def test_sallen_key_unity_gain_lowpass():
    # Franco, Design with Operational Amplifiers and Analog Integrated Circuits, ch. 3, unity-gain Sallen-Key
    # low-pass (from memory): H = 1 / (1 + s C2 (R1 + R2) + s^2 R1 R2 C1 C2), C1 the feedback capacitor,
    # so w0 = 1/sqrt(R1 R2 C1 C2) and Q = sqrt(R1 R2 C1 C2) / (C2 (R1 + R2)).
    R1, R2, C1, C2 = P("R1", "R2", "C1", "C2")
    _, _, sol = solve_case("sallen_key_lowpass.toml")
    H = sol.find["H"]
    expected = 1 / (1 + s * C2 * (R1 + R2) + s**2 * R1 * R2 * C1 * C2)
    assert_same(H, expected, "H(s)")
    num, den = sympy.fraction(sympy.together(H))
    den = sympy.Poly(sympy.expand(den), s)
    assert den.degree() == 2
    a2, a1, a0 = den.all_coeffs()
    w0_squared = sympy.simplify(a0 / a2)
    assert_same(w0_squared, 1 / (R1 * R2 * C1 * C2), "w0^2 from the denominator")
    assert_same(a1 / a0, C2 * (R1 + R2), "s^1 coefficient 1/(w0 Q)")
    assert sympy.simplify(sympy.Poly(sympy.expand(num), s).degree()) == 0, "low-pass: no zeros"
    check_with_values(
        "sallen_key_lowpass.toml",
        {
            "R1": ("10k", 10000),
            "R2": ("22k", 22000),
            "C1": ("4.7n", Rational(47, 10**10)),
            "C2": ("1n", Rational(1, 10**9)),
        },
        lambda sol: sol.find["H"],
        expected,
        "H(s)",
    )


# ----------------------------------------------------------------------------- passive and controlled sources
def test_loaded_divider():
    # Alexander & Sadiku, Fundamentals of Electric Circuits, ch. 2, voltage division with parallel resistors
    # (from memory); Horowitz & Hill, The Art of Electronics, ch. 1, voltage dividers (from memory):
    # Vmid/Vin = (R2||RL) / (R1 + R2||RL).
    Vin, R1, R2, RL = P("Vin", "R1", "R2", "RL")
    _, system, sol = solve_case("loaded_divider.toml")
    expected = par(R2, RL) / (R1 + par(R2, RL))
    assert_same(sol.find["ratio"], expected, "V_mid/V_in")
    assert_same(sol.currents["Rtop"], Vin / (R1 + par(R2, RL)), "I_Rtop")
    assert tuple(system.skipped) == ()
    assert kinds(system).count("kcl") == 1
    check_with_values(
        "loaded_divider.toml",
        {"Vin": ("5", 5), "R1": ("10k", 10000), "R2": ("10k", 10000), "RL": ("10k", 10000)},
        lambda sol: sol.node_voltages["mid"],
        Vin * expected,
        "V_mid",
    )


def test_common_emitter_with_cccs():
    # Sedra & Smith, Microelectronic Circuits, ch. 7, common-emitter amplifier with an emitter resistance,
    # hybrid-pi model (from memory): vo/vsig = -beta (RC||RL) / (Rsig + r_pi + (beta+1) RE).
    # Method: nodal analysis with a current-controlled current source.  Independent hand check:
    # ib flows b->e; node e carries (beta+1) ib into RE, so V_e = (beta+1) ib RE, V_b = V_e + ib r_pi,
    # vs = ib Rs + V_b; node c: beta ib leaves through the CCCS, so V_c = -beta ib (RC||RL).
    vs, Rs, rpi, beta, RE, RC, RL = P("vs", "Rs", "rpi", "beta", "RE", "RC", "RL")
    _, _, sol = solve_case("common_emitter_cccs.toml")
    ib = vs / (Rs + rpi + (beta + 1) * RE)
    assert_same(sol.currents["Rbe"], ib, "base current I_Rbe")
    assert_same(sol.currents["Fc"], beta * ib, "collector current I_Fc")
    assert_same(sol.node_voltages["e"], (beta + 1) * ib * RE, "V_e")
    expected = -beta * par(RC, RL) / (Rs + rpi + (beta + 1) * RE)
    assert_same(sol.find["gain"], expected, "vo/vs")
    # Without RE it is the plain common-emitter gain -beta (RC||RL)/(Rsig + r_pi) (same chapter, from memory).
    assert_same(sol.find["gain"].subs(RE, 0), -beta * par(RC, RL) / (Rs + rpi), "gain with RE = 0")
    check_with_values(
        "common_emitter_cccs.toml",
        {
            "vs": ("10m", Rational(1, 100)),
            "Rs": ("1k", 1000),
            "rpi": ("2.5k", 2500),
            "beta": ("100", 100),
            "RE": ("100", 100),
            "RC": ("4.7k", 4700),
            "RL": ("10k", 10000),
        },
        lambda sol: sol.find["gain"],
        expected,
        "gain",
    )


def test_finite_gain_inverting_vcvs():
    # Sedra & Smith, Microelectronic Circuits, ch. 2, effect of finite open-loop gain on the inverting
    # configuration (from memory): G = -(R2/R1) / (1 + (1 + R2/R1)/A).  The op-amp is a VCVS here.
    Vin, R1, R2, A = P("Vin", "R1", "R2", "Aol")
    _, _, sol = solve_case("finite_gain_inverting_vcvs.toml")
    expected = -(R2 / R1) / (1 + (1 + R2 / R1) / A)
    assert_same(sol.find["gain"], expected, "gain")
    # V- is -Vout/A, not zero (same section).
    assert_same(sol.node_voltages["inv"], -sol.node_voltages["out"] / A, "V- = -Vout/A")
    assert_same(sympy.limit(sol.find["gain"], A, sympy.oo), -R2 / R1, "limit A -> oo")
    check_with_values(
        "finite_gain_inverting_vcvs.toml",
        {"R1": ("1k", 1000), "R2": ("100k", 100000), "Aol": ("1k", 1000)},
        lambda sol: sol.find["gain"],
        expected,
        "gain",
    )


# ----------------------------------------------------------------------------- supernode
SUPERNODE_NAMES = ("Va", "Vx", "Is", "R1", "R2", "R3", "R4", "R5")


def supernode_reference_numpy(values: dict[str, float]) -> dict[str, float]:
    """Independent nodal solve of supernode_floating_source.toml, written by hand with NumPy.

    Alexander & Sadiku, Fundamentals of Electric Circuits, ch. 3, nodal analysis with voltage sources
    (supernode) (from memory).  Unknowns V_b, V_c, V_d (V_a = Va is known):
      V_b - V_c = Vx                                             (the floating source)
      (V_b - Va)/R1 + V_b/R2 + V_c/R3 + (V_c - V_d)/R4 = 0       (KCL of the supernode b+c)
      (V_d - V_c)/R4 + V_d/R5 - Is = 0                           (KCL at d; Is flows into d)
    """
    Va, Vx, Is, R1, R2, R3, R4, R5 = (values[n] for n in SUPERNODE_NAMES)
    A = np.array(
        [
            [1.0, -1.0, 0.0],
            [1 / R1 + 1 / R2, 1 / R3 + 1 / R4, -1 / R4],
            [0.0, -1 / R4, 1 / R4 + 1 / R5],
        ]
    )
    b = np.array([Vx, Va / R1, Is])
    vb, vc, vd = np.linalg.solve(A, b)
    return {"a": Va, "b": vb, "c": vc, "d": vd}


def test_supernode_procedure():
    # A source between two unknown nodes gives one KCL for the supernode plus the source's constraint;
    # a grounded source gives a known voltage (the node method as the issue defines it).
    system = build_system(load_circuit(str(HERE / "supernode_floating_source.toml")))
    k = kinds(system)
    assert k.count("supernode_kcl") == 1
    assert k.count("source_constraint") == 1
    assert k.count("known_voltage") == 1
    assert k.count("kcl") == 1
    sn = [eq for eq in system.equations if eq.kind == "supernode_kcl"][0]
    assert set(sn.at.split("+")) == {"b", "c"}
    assert [eq.at for eq in system.equations if eq.kind == "kcl"] == ["d"]
    assert len(system.equations) == len(system.unknowns)
    assert tuple(system.skipped) == ()


def test_supernode_against_numpy():
    names = SUPERNODE_NAMES
    _, _, sol = solve_case("supernode_floating_source.toml")
    rng = np.random.default_rng(20240611)
    for _ in range(5):
        # Exact rationals for the engine, the same numbers as floats for NumPy.
        exact = {n: Rational(int(rng.integers(-20, 21)), int(rng.integers(1, 5))) for n in ("Va", "Vx", "Is")}
        exact.update({n: Rational(int(rng.integers(1, 100)) * 100) for n in ("R1", "R2", "R3", "R4", "R5")})
        ref = supernode_reference_numpy({n: float(v) for n, v in exact.items()})
        subs = {param(n): v for n, v in exact.items()}
        for node, want in ref.items():
            got = float(sol.node_voltages[node].subs(subs))
            assert got == pytest.approx(want, rel=1e-9, abs=1e-12), f"V_{node}"
        # The engine's own substitution path, exact values written as text.
        _, _, sol_v = solve_case("supernode_floating_source.toml", {n: str(v) for n, v in exact.items()})
        for node, want in ref.items():
            assert float(sol_v.node_voltages[node]) == pytest.approx(want, rel=1e-9, abs=1e-12), f"V_{node}"
    # Symbolic: SymPy's own solve of the same hand-written equations.
    Va, Vx, Is, R1, R2, R3, R4, R5 = P(*names)
    vb, vc, vd = sympy.symbols("vb vc vd")
    hand = sympy.solve(
        [
            sympy.Eq(vb - vc, Vx),
            sympy.Eq((vb - Va) / R1 + vb / R2 + vc / R3 + (vc - vd) / R4, 0),
            sympy.Eq((vd - vc) / R4 + vd / R5 - Is, 0),
        ],
        [vb, vc, vd],
        dict=True,
    )[0]
    for node, sym in (("b", vb), ("c", vc), ("d", vd)):
        assert_same(sol.node_voltages[node], hand[sym], f"V_{node}")
    # The engine's labelled matrix is satisfied by the hand solution.
    m = build_system(load_circuit(str(HERE / "supernode_floating_source.toml"))).matrix()
    assert set(m.cols) == {"V_b", "V_c", "V_d"}
    x = sympy.Matrix([hand[{"V_b": vb, "V_c": vc, "V_d": vd}[col]] for col in m.cols])
    assert sympy.simplify(m.A * x - m.b) == sympy.zeros(3, 1)
    # The floating source's current from KCL at node c: Vfl carries I from b to c, i.e. into c
    # (common practice, no source).
    v = sol.node_voltages
    assert_same(sol.currents["Vfl"], v["c"] / R3 + (v["c"] - v["d"]) / R4, "I_Vfl")


# ----------------------------------------------------------------------------- every case
@pytest.mark.parametrize("name", CASES)
def test_equation_count_matches_unknowns(name):
    system = build_system(load_circuit(str(HERE / name)))
    assert len(system.equations) == len(system.unknowns), [eq.label for eq in system.equations]
    circuit = load_circuit(str(HERE / name))
    ideal = [p for p in circuit.parts if p.kind == "opamp" and p.gain is None]
    assert kinds(system).count("opamp_equality") == len(ideal)
    skipped_nodes = {tuple(x)[0] for x in system.skipped}
    for p in ideal:
        assert (p.out, p.id) in tuple(tuple(x) for x in system.skipped)
    for eq in system.equations:
        if eq.kind == "kcl":
            assert eq.at not in skipped_nodes
    grounded = [
        p for p in circuit.parts if p.kind == "voltage_source" and circuit.reference in p.nodes
    ]
    assert kinds(system).count("known_voltage") == len(grounded)


@pytest.mark.parametrize("name", CASES)
def test_kcl_terms_sum_to_equation(name):
    # Each KCL term is one part's current leaving the node; together they are the equation's left side.
    system = build_system(load_circuit(str(HERE / name)))
    for eq in system.equations:
        if eq.kind in ("kcl", "supernode_kcl"):
            assert eq.terms, eq.label
            assert sympy.simplify(sum(t.expr for t in eq.terms) - (eq.lhs - eq.rhs)) == 0, eq.label
            assert {t.part for t in eq.terms} <= set(eq.parts), eq.label


@pytest.mark.parametrize("name", CASES)
def test_kcl_holds_at_every_node(name):
    # Kirchhoff's current law at every node, op-amp outputs included, with the solved part currents
    # (common practice, no source).  Two-terminal parts carry their current from nodes[0] to nodes[1];
    # an op-amp's current leaves its output pin into node `out` and returns through the supplies to the
    # reference node; inputs and control pins draw nothing.
    circuit, _, sol = solve_case(name)
    leaving = {n: sympy.Integer(0) for n in circuit.nodes}
    for p in circuit.parts:
        current = sol.currents[p.id]
        if p.kind in TWO_TERMINAL:
            a, b = p.nodes
            leaving[a] += current
            leaving[b] -= current
        elif p.kind == "opamp":  # out of the output pin, back through the supplies to the reference
            leaving[p.out] -= current
            leaving[circuit.reference] += current
        else:  # pragma: no cover - a new kind needs its terminals described here
            pytest.fail(f"unknown kind {p.kind}")
    for node, total in leaving.items():
        assert sympy.simplify(total) == 0, f"{name}: KCL at {node}: {total}"
    # Resistor currents agree with Ohm's law on the solved node voltages.
    v = sol.node_voltages
    for p in circuit.parts:
        if p.kind == "resistor":
            a, b = p.nodes
            assert_same(sol.currents[p.id], (v[a] - v[b]) / p.value, f"I_{p.id}")
        if p.kind == "capacitor":
            a, b = p.nodes
            assert_same(sol.currents[p.id], (v[a] - v[b]) * s * p.value, f"I_{p.id}")
    assert sol.node_voltages[circuit.reference] == 0
