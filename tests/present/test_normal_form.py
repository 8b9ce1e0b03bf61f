"""Normalized transfer-function forms: K * (1 + s/wz)/(1 + s/wp) and w0/Q factors.

Every form is checked against the raw ratio with SymPy (equal as rational functions, with the
parameters positive as component values are); the readings against published formulas.
"""

from __future__ import annotations

import random
from pathlib import Path

import pytest
import sympy

from nodeterm.engine import load_circuit
from nodeterm.engine.analysis.transfer import transfer_function
from nodeterm.present.analysis import transfer_dict, transfer_lines
from nodeterm.present.normal_form import normal_form, normal_forms
from nodeterm.present.text import report

ROOT = Path(__file__).resolve().parents[2]
s = sympy.Symbol("s")

def _records(circuit, known: bool = False, sets: dict | None = None):
    """The records the CLI formats (a Study with the values chosen)."""
    from nodeterm.engine.study import Study
    from nodeterm.engine.values import ValueChoice
    return Study(circuit, ValueChoice.from_options(sets, known=known)).records(
        ("system", "matrix", "solution", "warnings"))


def _positive(expr):
    return expr.xreplace({x: sympy.Symbol(x.name, positive=True) for x in expr.free_symbols if x != s})


def assert_equal_rational(a, b):
    """a == b as rational functions in s (parameters taken positive)."""
    diff = sympy.cancel(sympy.together(_positive(sympy.expand_power_base(a, force=True))
                                       - _positive(b)))
    if diff != 0:
        diff = sympy.simplify(diff)
    assert diff == 0, f"{a} != {b}"


def test_rc_lowpass():
    # first-order low-pass H = 1/(1 + s*R*C), corner wc = 1/(R*C) (common practice, no source)
    R, C = sympy.symbols("R C")
    nf = normal_form(transfer_function(1 / (1 + s * R * C)))
    assert nf.template() == "K/(1 + s/wp)"
    assert nf.gain == 1 and nf.origin == 0
    assert sympy.simplify(nf.poles[0].w - 1 / (R * C)) == 0


def test_lead_lag():
    # lead-lag (1 + s*R1*C1)/(1 + s*R2*C2): zero at 1/(R1*C1), pole at 1/(R2*C2) (common practice, no source)
    R1, R2, C1, C2 = sympy.symbols("R1 R2 C1 C2")
    raw = 3 * (1 + s * R1 * C1) / (1 + s * R2 * C2)
    nf = normal_form(transfer_function(raw))
    assert nf.template() == "K*(1 + s/wz)/(1 + s/wp)"
    assert nf.gain == 3
    assert sympy.simplify(nf.zeros[0].w - 1 / (R1 * C1)) == 0
    assert sympy.simplify(nf.poles[0].w - 1 / (R2 * C2)) == 0
    assert_equal_rational(nf.expr(), raw)


def test_inverting_integrator():
    # inverting integrator H = -1/(s*R*C) (Franco, ch. 1, from memory): a pole at the origin, K = -1/(R*C)
    R, C = sympy.symbols("R C")
    nf = normal_form(transfer_function(-1 / (s * R * C)))
    assert nf.template() == "K/s" and nf.origin == -1
    assert sympy.simplify(nf.gain + 1 / (R * C)) == 0


def test_right_half_plane_zero():
    # first-order all-pass (1 - s/a)/(1 + s/a) (common practice, no source): the zero is in the right half-plane
    nf = normal_form(transfer_function((1000 - s) / (1000 + s)))
    assert nf.template() == "K*(1 - s/wz)/(1 + s/wp)"
    assert nf.zeros[0].w == 1000 and nf.zeros[0].sign == -1
    assert_equal_rational(nf.expr(), (1000 - s) / (1000 + s))


def test_sallen_key_w0_and_q():
    # Franco, Design with Operational Amplifiers, ch. 3, unity-gain Sallen-Key low-pass (from memory):
    # w0 = 1/sqrt(R1 R2 C1 C2), Q = sqrt(R1 R2 C1 C2)/(C2 (R1 + R2))
    c = load_circuit(str(ROOT / "tests" / "published" / "sallen_key_lowpass.toml"))
    solution = _records(c).solution
    nf = normal_forms(solution, c)["H"]
    R1, R2, C1, C2 = (sympy.Symbol(n, positive=True) for n in ("R1", "R2", "C1", "C2"))
    pole = nf.poles[0]
    assert nf.template() == "K/(s**2/w0**2 + s/(Q*w0) + 1)" and nf.gain == 1
    assert sympy.simplify(_positive(pole.w) - 1 / sympy.sqrt(R1 * R2 * C1 * C2)) == 0
    assert sympy.simplify(_positive(pole.q) - sympy.sqrt(R1 * R2 * C1 * C2) / (C2 * (R1 + R2))) == 0
    assert_equal_rational(nf.expr(), solution.find["H"])


def test_butterworth_demo_in_the_report():
    # Cf = 2*Cg with R1 = R2 gives Q = 1/sqrt(2), the Butterworth value (common practice, no source);
    # w0 = 1/(R*sqrt(Cf*Cg)) = 1/(10k*sqrt(20n*10n)) = 7071 rad/s, f0 = 1125 Hz
    c = load_circuit(str(ROOT / "circuits" / "vibration_lowpass.toml"))
    text = report(_records(c, known=True))
    assert "      H(s) = K/(s**2/w0**2 + s/(Q*w0) + 1)\n" in text
    assert "w0 = 5000*sqrt(2) (≈ 7.071 krad/s, f ≈ 1.125 kHz), pole pair" in text
    assert "Q  = sqrt(2)/2 (≈ 0.7071)" in text
    assert max(len(ln) for ln in text.split("Asked quantities")[1].splitlines()) <= 80


def _random_factor(rng, where_sign=1):
    kind = rng.choice(["first", "first", "quad", "origin", "rhp"])
    a = sympy.Rational(rng.randint(1, 50), rng.randint(1, 9))
    if kind == "first":
        return s + a
    if kind == "rhp":
        return s - a
    if kind == "origin":
        return s
    b = sympy.Rational(rng.randint(1, 9), rng.randint(1, 5))
    return s**2 + b * s + a * (b**2)  # discriminant b^2(1 - 4a) < 0 for a >= 1: complex pair


@pytest.mark.parametrize("seed", range(30))
def test_normal_form_equals_the_raw_ratio(seed):
    # the normalized form must be the same rational function as N/D (checked by SymPy's cancel)
    rng = random.Random(seed)
    num = sympy.Rational(rng.randint(-20, 20) or 1, rng.randint(1, 7))
    for _ in range(rng.randint(0, 2)):
        num *= _random_factor(rng)
    den = sympy.Integer(1)
    for _ in range(rng.randint(1, 3)):
        den *= _random_factor(rng)
    raw = sympy.cancel(num / den)
    if not raw.has(s):
        return
    tf = transfer_function(raw)
    nf = normal_form(tf)
    assert nf is not None
    assert_equal_rational(nf.expr(), tf.expr)


@pytest.mark.parametrize("raw", [
    "(R1*C1*s + 1)*(R2*C2*s + 1)/(R3*C3*s*(L1*C1*s**2 + R1*C1*s + 1))",
    "-R2/(R1*(C2*R2*s + 1))",
    "Cf*Rf*s/((Cf*Rf*s + 1)*(Co*Ro*s + 1))",
    "(L*C*s**2 + 1)/(L*C*s**2 + R*C*s + 1)",
])
def test_symbolic_normal_forms_equal_the_raw_ratio(raw):
    from nodeterm.engine.circuit.expr import parse_expression
    expr = parse_expression(raw, resolve=lambda name: sympy.Symbol(name))
    tf = transfer_function(expr)
    nf = normal_form(tf)
    assert nf is not None
    assert_equal_rational(nf.expr(), tf.expr)


def test_numeric_split_of_an_irreducible_cubic():
    # a third-order Butterworth denominator s^3 + 2s^2 + 2s + 1 = (s + 1)(s^2 + s + 1) is reducible;
    # s^3 + 2s^2 + 3s + 1 is not: its factors come from numeric roots (NumPy as the reference)
    import numpy as np
    raw = 10 / (s**3 + 2 * s**2 + 3 * s + 1)
    tf = transfer_function(raw)
    nf = normal_form(tf)
    assert nf is not None
    f = sympy.lambdify(s, nf.expr())
    for x in (0.1j, 1j, 3j, 0.5 + 2j):
        assert abs(f(x) - 10 / np.polyval([1, 2, 3, 1], x)) < 1e-9 * abs(10 / np.polyval([1, 2, 3, 1], x))


def test_response_text_and_json_carry_the_normalized_form():
    R, C = sympy.symbols("R C")
    tf = transfer_function(-R / (s * R * C + 1), "Zt")
    lines = transfer_lines(tf)
    assert "  normalized form:" in lines
    assert "    Zt(s) = K/(1 + s/wp)" in lines
    d = transfer_dict(tf)["normalized"]
    assert d["form"] == "Zt(s) = K/(1 + s/wp)" and d["K"] == "-R"
    assert d["factors"][0]["name"] == "wp" and sympy.simplify(
        sympy.sympify(d["factors"][0]["w"]) - 1 / (R * C)) == 0


@pytest.mark.parametrize("path", ["tests/published/sallen_key_lowpass.toml", "circuits/soil_moisture_probe.toml",
                                  "circuits/vibration_lowpass.toml", "tests/analysis/mfb_bandpass.toml"])
def test_same_corners_as_the_engine_sections(path):
    # the engine's TransferFunction reads w0 and Q of the same factors its own way (roots, simplify)
    c = load_circuit(str(ROOT / path))
    solution = _records(c).solution
    for name, nf in normal_forms(solution, c).items():
        tf = transfer_function(solution.find[name], name)
        for where in ("pole", "zero"):
            ours = [(_positive(f.w), f.order) for f in nf.factors if f.where == where and f.w is not None]
            theirs = [(_positive(x.w0), x.order) for x in tf.sections if x.where == where and x.order in (1, 2)]
            assert len(ours) == len(theirs)
            for w, order in ours:
                assert any(o == order and sympy.simplify(w - v) == 0 for v, o in theirs), (w, theirs)
        for f in nf.factors:
            if f.order == 2:
                assert any(x.q is not None and sympy.simplify(_positive(f.q) - _positive(x.q)) == 0
                           for x in tf.sections), f.q
