"""Transfer functions, sensitivities and the real op-amp model against published results.

Sources (chapters cited from memory):
  * Franco, Design with Operational Amplifiers and Analog Integrated Circuits, ch. 3
    (Sallen-Key and multiple-feedback sections, w0/Q, sensitivities).
  * Sedra & Smith, Microelectronic Circuits, ch. 2 (finite open-loop gain, the integrator
    with a finite-gain op-amp, closed-loop bandwidth = f_t/(1 + R2/R1) of the
    non-inverting amplifier).
Where the engine is checked against an independent derivation, SymPy's ``solve`` on
equations written here by hand is the reference.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
import sympy

from nodeterm.engine import build_system, load_circuit, parse_circuit
from nodeterm.engine.analysis.realopamp import compare_models, ideal_variant
from nodeterm.engine.analysis.sensitivity import normalized_sensitivity, scalar_quantities, sensitivities
from nodeterm.engine.analysis.transfer import bandwidth_3db, gain_at, transfer_function, transfer_functions
from nodeterm.engine.symbols import param, s
from nodeterm.engine.solving.solve import solve_system

HERE = Path(__file__).parent
PUBLISHED = HERE.parent / "published"


def solve(path, values=None):
    c = load_circuit(str(path))
    system = build_system(c)
    if values:
        system = system.substitute(values)
    return c, solve_system(system)


def same(a, b) -> bool:
    return sympy.simplify(sympy.sympify(a) - sympy.sympify(b)) == 0


def positive(expr):
    """Compare square roots of products with all symbols positive (component values)."""
    return expr.xreplace({x: sympy.Symbol(x.name, positive=True) for x in expr.free_symbols})


# --- Sallen-Key low-pass (unity gain) ----------------------------------------------------------
def test_sallen_key_w0_and_q_match_the_published_formulas():
    # Franco ch. 3 (from memory), unity-gain Sallen-Key low-pass with C1 the feedback capacitor
    # (junction to output) and C2 the capacitor to ground:
    #   w0 = 1/sqrt(R1*R2*C1*C2),  Q = sqrt(R1*R2*C1*C2)/(C2*(R1 + R2)).
    # Convention check: D(s) = R1R2C1C2 s^2 + C2(R1 + R2) s + 1, and Q = sqrt(a0*a2)/a1.
    c, sol = solve(PUBLISHED / "sallen_key_lowpass.toml")
    tf = transfer_functions(sol, c)["H"]
    R1, R2, C1, C2 = (param(n) for n in ("R1", "R2", "C1", "C2"))
    (sec,) = [x for x in tf.sections if x.where == "pole"]
    assert sec.order == 2
    assert same(positive(sec.w0), positive(1 / sympy.sqrt(R1 * R2 * C1 * C2)))
    assert same(positive(sec.q), positive(sympy.sqrt(R1 * R2 * C1 * C2) / (C2 * (R1 + R2))))
    assert tf.dc_gain == 1 and tf.hf_gain == 0
    assert same(tf.den_coeffs[0], R1 * R2 * C1 * C2)


def test_sallen_key_butterworth_demo_has_q_0707_and_minus_3db_at_f0():
    # Butterworth second order: Q = 1/sqrt(2) and |H(j w0)| = -3.01 dB (Franco ch. 3, from memory).
    c, sol = solve(HERE.parent.parent / "circuits" / "vibration_lowpass.toml")
    c = load_circuit(str(HERE.parent.parent / "circuits" / "vibration_lowpass.toml"))
    sol = solve_system(build_system(c).substitute_known())
    tf = transfer_functions(sol, c)["H"]
    (sec,) = tf.sections
    assert sympy.simplify(sec.q - 1 / sympy.sqrt(2)) == 0
    f0 = float(sec.f0)
    assert f0 == pytest.approx(1 / (2 * np.pi * 10e3 * np.sqrt(20e-9 * 10e-9)), rel=1e-12)
    assert 20 * np.log10(abs(gain_at(tf, f0))) == pytest.approx(-10 * np.log10(2), abs=1e-9)
    assert bandwidth_3db(tf).high == pytest.approx(f0, rel=1e-9)


def test_sallen_key_w0_sensitivity_is_minus_half_to_each_component():
    # Franco ch. 3 (from memory): S(w0; R1) = S(w0; R2) = S(w0; C1) = S(w0; C2) = -1/2.
    c = load_circuit(str(PUBLISHED / "sallen_key_lowpass.toml"))
    q = scalar_quantities(c)
    rows = [r for r in sensitivities(q, {}) if r.quantity == "H.w0"]
    assert {r.parameter: r.exact for r in rows} == {n: sympy.Rational(-1, 2) for n in ("R1", "R2", "C1", "C2")}
    # Q: S(Q; C1) = +1/2, S(Q; C2) = -1/2 (same source).
    qrows = {r.parameter: r.exact for r in sensitivities(q, {}) if r.quantity == "H.Q"}
    assert qrows["C1"] == sympy.Rational(1, 2) and qrows["C2"] == sympy.Rational(-1, 2)


def test_normalized_sensitivity_of_a_divider():
    # S(R2/(R1+R2); R1) = -R1/(R1+R2) by direct differentiation (common practice, no source).
    R1, R2 = sympy.symbols("R1 R2", positive=True)
    assert same(normalized_sensitivity(R2 / (R1 + R2), R1), -R1 / (R1 + R2))


# --- multiple-feedback band-pass ----------------------------------------------------------------
def test_mfb_bandpass_w0_q_and_centre_gain():
    # Franco ch. 3 (from memory), MFB band-pass with equal capacitors C:
    #   H(s) = -(s/(R1*C)) / (s^2 + s*2/(R2*C) + (R1 + R3)/(R1*R2*R3*C^2)),
    #   w0 = sqrt((R1 + R3)/(R1*R2*R3))/C,  Q = sqrt(R2*(R1 + R3)/(R1*R3))/2,  H0 = -R2/(2*R1).
    c, sol = solve(HERE / "mfb_bandpass.toml")
    R1, R2, R3, C = (param(n) for n in ("R1", "R2", "R3", "C"))
    H = sol.find["H"]
    expected = -(s / (R1 * C)) / (s**2 + s * 2 / (R2 * C) + (R1 + R3) / (R1 * R2 * R3 * C**2))
    assert same(H, expected)
    tf = transfer_function(H, "H")
    (sec,) = [x for x in tf.sections if x.where == "pole"]
    assert same(positive(sec.w0), positive(sympy.sqrt((R1 + R3) / (R1 * R2 * R3)) / C))
    assert same(positive(sec.q), positive(sympy.sqrt(R2 * (R1 + R3) / (R1 * R3)) / 2))
    assert [x.order for x in tf.sections if x.where == "zero"] == [0]  # a zero at the origin
    # numbers: centre gain and the -3 dB band, whose width is f0/Q (same source)
    vals = {"R1": "15.9k", "R2": "318k", "R3": "1.6k", "C": "10n"}
    _, sol_n = solve(HERE / "mfb_bandpass.toml", vals)
    tfn = transfer_function(sol_n.find["H"], "H")
    (secn,) = [x for x in tfn.sections if x.where == "pole"]
    f0 = float(secn.f0)
    assert abs(gain_at(tfn, f0)) == pytest.approx(318e3 / (2 * 15.9e3), rel=1e-9)
    bw = bandwidth_3db(tfn)
    assert bw.high - bw.low == pytest.approx(f0 / float(secn.q), rel=1e-6)
    assert bw.low * bw.high == pytest.approx(f0**2, rel=1e-6)


# --- real op-amp model --------------------------------------------------------------------------
def test_integrator_with_finite_gain_is_a_lossy_integrator():
    # Sedra & Smith ch. 2 (from memory): with open-loop gain A the integrator's DC gain is -A
    # and its pole moves from 0 to -1/((1 + A)*R*C): H(s) = -A/(1 + s*(1 + A)*R*C).
    c, sol = solve(HERE / "integrator_finite_gain.toml")
    R, C, A = (param(n) for n in ("R", "C", "A"))
    assert same(sol.find["H"], -A / (1 + s * (1 + A) * R * C))
    tf = transfer_function(sol.find["H"])
    assert same(tf.dc_gain, -A)
    assert same(tf.poles[0], -1 / ((1 + A) * R * C))


def test_noninverting_closed_loop_bandwidth_is_gbw_over_noise_gain():
    # Sedra & Smith ch. 2 (from memory): f_3dB = f_t/(1 + R2/R1) for A0 >> 1 + R2/R1.
    c = load_circuit(str(HERE / "noninverting_gbw.toml"))
    cmp = compare_models(c)
    (row,) = cmp.rows
    assert row.ideal == 10
    assert row.bandwidth_ideal is None  # flat
    assert row.bandwidth_real.high == pytest.approx(1e6 / 10, rel=1e-4)
    # DC error of finite gain: G/(1 + G/A0) - G, relative -(G/A0)/(1 + G/A0) (same source)
    assert row.dc_error == sympy.Rational(-10, 10**6 + 10)
    # at 1 kHz, 100 times below the band, |error| is about (f/f_3dB)^2/2 = 5e-5 plus the DC error
    assert row.error_at == pytest.approx(abs(1 / complex(1 + 1e-5, 1e3 / 1e5) - 1), rel=1e-3)


def test_real_model_equations_give_out_an_ordinary_kcl_and_the_ideal_variant_is_ideal():
    c = load_circuit(str(HERE / "noninverting_gbw.toml"))
    real = build_system(c)
    kinds = [e.kind for e in real.equations]
    assert "opamp_gain" in kinds and real.skipped == (("out", "U1"),)
    ideal = build_system(ideal_variant(c))
    assert [e.kind for e in ideal.equations if e.at == "U1"] == ["opamp_equality"]
    assert ideal_variant(c).part("U1").get("rails") == c.part("U1").get("rails")
    f = load_circuit(str(HERE / "follower_rin_rout.toml"))
    sysf = build_system(f)
    assert sysf.skipped == ()  # rout: node out is an ordinary unknown with its own KCL
    assert any(e.kind == "kcl" and e.at == "out" for e in sysf.equations)


def test_follower_with_rin_and_rout_matches_a_hand_derivation():
    # Independent reference: the node equations written here by hand, solved by SymPy.
    c, sol = solve(HERE / "follower_rin_rout.toml")
    Vin, Rs, RL, A, Ri, Ro = (param(n) for n in ("Vin", "Rs", "RL", "A", "Ri", "Ro"))
    vp, vo = sympy.symbols("vp vo")
    eqs = [
        sympy.Eq((vp - Vin) / Rs + (vp - vo) / Ri, 0),  # KCL at p: source resistor and rin
        sympy.Eq(vo / RL + (vo - vp) / Ri + (vo - A * (vp - vo)) / Ro, 0),  # KCL at out
    ]
    ref = sympy.solve(eqs, [vp, vo], dict=True)[0]
    assert same(sol.find["H"], ref[vo] / Vin)
    # output pin current = current into the load and back through rin
    assert same(sol.find["Iout"], (A * (ref[vp] - ref[vo]) - ref[vo]) / Ro)


def test_gbw_alone_is_an_integrating_open_loop_gain():
    c = parse_circuit('''
[parameters]
GBW = ""
[parts]
V1 = { kind = "voltage_source", nodes = ["in", "gnd"], value = 1 }
U1 = { kind = "opamp", plus = "in", minus = "out", out = "out", gbw = "GBW" }
R1 = { kind = "resistor", nodes = ["out", "gnd"], value = "1k" }
[find]
H = "V_out/V_in"
''')
    sol = solve_system(build_system(c))
    wt = 2 * sympy.pi * param("GBW")
    # follower with A(s) = wt/s: H = wt/(s + wt), a single pole at the gain-bandwidth frequency
    assert same(sol.find["H"], wt / (s + wt))


def test_poles_of_a_sixteen_pole_cascade_are_exact_and_real():
    # A cascade of 16 buffered RC sections with distinct time constants has 16 real poles at
    # -1/(R*C) each and no complex pair (cascaded first-order sections: common practice, no
    # source). The reference is the product SymPy expands here; before the roots came from
    # FLINT's certified isolation, NumPy's companion-matrix roots put some of these poles off by
    # 1e-5 and read pairs of them as second-order sections with Q = 0.5.
    from nodeterm.engine.analysis.transfer import numeric_roots
    expected = sorted(-sympy.Rational(10**5, k) for k in range(1, 17))
    den = sympy.expand(sympy.prod([1 + s / -p for p in expected]))
    tf = transfer_function(1 / den, "H")
    assert sorted(r.real for r in tf.poles) == pytest.approx([float(p) for p in expected], rel=1e-13)
    assert all(r.imag == 0 for r in tf.poles)
    corners = [sec for sec in tf.sections if sec.where == "pole"]
    assert [sec.order for sec in corners] == [1] * 16
    # a complex pair: s**2 + s + 100 has roots -1/2 +- j*sqrt(399)/2 (quadratic formula)
    pair = numeric_roots([1, 1, 100])
    assert sorted(pair, key=lambda z: z.imag) == pytest.approx(
        [complex(-0.5, -np.sqrt(399) / 2), complex(-0.5, np.sqrt(399) / 2)], rel=1e-15)
    # float coefficients go to numpy.roots (the reference itself)
    floats = numeric_roots([1.0, 3.5, 2.5])
    assert sorted(r.real for r in floats) == pytest.approx(sorted(np.roots([1.0, 3.5, 2.5]).real))
