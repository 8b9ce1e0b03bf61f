"""Transfer functions read from FLINT polynomials against SymPy (the reference).

``transfer_function`` reads a rational function in s from its polynomials (coefficients per power of
s split off by FLINT, no ``cancel``/``together`` on the whole expression); ``transfer_function_sympy``
is the pure-SymPy reading (``cancel``, ``Poly.all_coeffs``, ``simplify``). They must agree on every
record: coefficients, order, gains, poles, zeros and sections. Random rational functions come from a
seeded generator; large results are forced by lowering the size limits so the lazy ``LargeExpr``
forms are checked too (their values read back by SymPy, their text and LaTeX against SymPy's
printers of the same expression).
"""

from __future__ import annotations

import random

import pytest
import sympy

from nodeterm.engine import build_system, parse_circuit
from nodeterm.engine.solving.solve import solve_system
from nodeterm.engine.study import Study
from nodeterm.engine.values import ValueChoice
from nodeterm.engine.analysis import transfer as tr
from nodeterm.engine.solving import forms as solve_mod
from nodeterm.engine.symbols import s

SYMS = sympy.symbols("R1 R2 C1 C2 A")


def random_poly(rng: random.Random, degree: int, syms, numeric: bool) -> sympy.Expr:
    terms = []
    for k in range(degree + 1):
        if numeric:
            c = sympy.Rational(rng.randint(-9, 9), rng.randint(1, 5))
        else:
            c = sum(rng.randint(-3, 3) * sympy.Mul(*rng.sample(syms, rng.randint(0, 2))) for _ in range(2))
        terms.append(c * s**k)
    return sympy.Add(*terms)


def random_rational(seed: int, numeric: bool) -> sympy.Expr:
    rng = random.Random(seed)
    while True:
        num = random_poly(rng, rng.randint(0, 3), list(SYMS), numeric)
        den = random_poly(rng, rng.randint(1, 3), list(SYMS), numeric)
        if sympy.expand(den) != 0 and sympy.expand(num) != 0 and sympy.cancel(num / den).has(s):
            # written unsimplified, as a circuit result might come before the canonical form
            return sympy.cancel(num / den) if seed % 2 else num / den


def same(a, b) -> bool:
    a, b = sympy.sympify(a), sympy.sympify(b)
    if a.has(sympy.zoo, sympy.nan, sympy.oo) or b.has(sympy.zoo, sympy.nan, sympy.oo):
        return a == b
    return sympy.simplify(a - b) == 0


def same_roots(a, b) -> bool:
    if a is None or b is None:
        return a is None and b is None
    if len(a) != len(b):
        return False
    if all(isinstance(r, complex) for r in a):
        key = lambda z: (round(z.real, 6), round(z.imag, 6))  # noqa: E731
        return all(abs(x - y) <= 1e-9 * max(1, abs(y)) for x, y in zip(sorted(a, key=key), sorted(b, key=key)))
    rest = list(b)
    for r in a:  # exact roots, in any order
        hit = next((i for i, x in enumerate(rest) if same(r, x)), None)
        if hit is None:
            return False
        rest.pop(hit)
    return True


def assert_agree(fast, ref):
    assert fast.order == ref.order
    assert len(fast.num_coeffs) == len(ref.num_coeffs)
    for a, b in zip(fast.num_coeffs + fast.den_coeffs, ref.num_coeffs + ref.den_coeffs):
        assert sympy.expand(sympy.sympify(a) - b) == 0, (a, b)
    assert sympy.expand(sympy.sympify(fast.num) - ref.num) == 0
    assert sympy.expand(sympy.sympify(fast.den) - ref.den) == 0
    assert same(fast.dc_gain, ref.dc_gain), (fast.dc_gain, ref.dc_gain)
    assert same(fast.hf_gain, ref.hf_gain), (fast.hf_gain, ref.hf_gain)
    assert fast.symbols == ref.symbols
    assert same_roots(fast.poles, ref.poles)
    assert same_roots(fast.zeros, ref.zeros)
    assert [(x.where, x.order, x.multiplicity) for x in fast.sections] == \
        [(x.where, x.order, x.multiplicity) for x in ref.sections]
    for x, y in zip(fast.sections, ref.sections):
        for a, b in ((x.w0, y.w0), (x.q, y.q)):
            assert (a is None) == (b is None)
            if a is not None and (a.is_Float or b.is_Float):
                assert float(a) == pytest.approx(float(b), rel=1e-9)
            elif a is not None:
                assert same(a, b), (a, b)


@pytest.mark.parametrize("seed", range(40))
def test_polynomial_path_agrees_with_sympy_on_random_symbolic_rational_functions(seed):
    expr = random_rational(seed, numeric=False)
    assert tr.polynomials(expr) is not None  # the polynomial path is the one taken
    assert_agree(tr.transfer_function(expr), tr.transfer_function_sympy(expr))


@pytest.mark.parametrize("seed", range(40))
def test_polynomial_path_agrees_with_sympy_on_random_numeric_rational_functions(seed):
    expr = random_rational(1000 + seed, numeric=True)
    fast, ref = tr.transfer_function(expr), tr.transfer_function_sympy(expr)
    assert_agree(fast, ref)
    assert fast.is_numeric and ref.is_numeric


def test_expressions_outside_the_polynomial_path_go_to_sympy():
    R = sympy.Symbol("R")
    for expr in (1 / (sympy.sqrt(2) * s * R + 1), 1 / (sympy.Float(0.5) * s + 1), 1 / (s * R + sympy.pi)):
        assert tr.polynomials(expr) is None
        assert_agree(tr.transfer_function(expr), tr.transfer_function_sympy(expr))


def ladder(n: int) -> str:
    lines = ["[parameters]", 'Vin = ""'] + [f'R{k} = ""\nC{k} = ""' for k in range(1, n + 1)]
    lines += ["[parts]", 'VS = { kind = "voltage_source", nodes = ["n0", "gnd"], value = "Vin" }']
    for k in range(1, n + 1):
        lines.append(f'RS{k} = {{ kind = "resistor", nodes = ["n{k - 1}", "n{k}"], value = "R{k}" }}')
        lines.append(f'CS{k} = {{ kind = "capacitor", nodes = ["n{k}", "gnd"], value = "C{k}" }}')
    lines += ["[find]", f'H = "V_n{n}/Vin"', f'Z = "Vin/I_VS"']
    return "\n".join(lines) + "\n"


@pytest.mark.parametrize("n", [2, 3, 4])
def test_large_results_give_the_same_transfer_function_as_sympy(monkeypatch, n):
    # Every result forced large (kept as FLINT polynomials), and no exact detail: the records are
    # read from the polynomials only, and must still equal SymPy's reading of the same expression.
    monkeypatch.setattr(solve_mod, "FACTOR_LIMIT", 0)
    monkeypatch.setattr(tr, "MAX_TERMS_FOR_DETAIL", 0)
    c = parse_circuit(ladder(n))
    sol = solve_system(build_system(c))
    tfs = tr.transfer_functions(sol, c)
    assert set(tfs) == {"H", "Z"}
    for name, tf in tfs.items():
        assert getattr(sol.find[name], "is_large", False)
        ref = tr.transfer_function_sympy(sympy.sympify(sol.find[name]), name)
        assert tf.order == ref.order == n
        for a, b in zip(tf.num_coeffs + tf.den_coeffs, ref.num_coeffs + ref.den_coeffs):
            assert sympy.expand(sympy.sympify(a) - b) == 0
        # printed straight from the polynomials, as SymPy prints the collected expressions
        assert str(tf.den) == sympy.sstr(ref.den)
        assert str(tf.num) == sympy.sstr(ref.num)
        assert latex_terms(sympy.latex(tf.den)) == latex_terms(sympy.latex(ref.den))
        assert same(tf.dc_gain, ref.dc_gain) and same(tf.hf_gain, ref.hf_gain)
        assert tf.symbols == ref.symbols
        assert tf.poles is None and tf.sections == ()


def latex_terms(text: str):
    """A LaTeX sum as a sorted tuple of its terms, parenthesized sums normalized the same way
    (SymPy and FLINT may order the terms of a sum differently; everything else must match)."""
    terms, depth, start, i = [], 0, 0, 0
    sign = "+"
    if text.startswith("- "):
        sign, text = "-", text[2:]
    while i < len(text):
        if text.startswith(r"\left(", i):
            depth += 1
            i += 6
            continue
        if text.startswith(r"\right)", i):
            depth -= 1
            i += 7
            continue
        if depth == 0 and text[i:i + 3] in (" + ", " - "):
            terms.append((sign, text[start:i]))
            sign, start = text[i + 1], i + 3
            i += 3
            continue
        i += 1
    terms.append((sign, text[start:]))
    out = []
    for sg, term in terms:
        if r"\left(" in term:
            a, b = term.index(r"\left("), term.rindex(r"\right)")
            term = (term[:a], latex_terms(term[a + 6:b]), term[b + 7:])
        out.append((sg, term))
    return tuple(sorted(out, key=repr))


def latex_fraction(text: str):
    if text.startswith(r"\frac{"):
        depth = 0
        for i, ch in enumerate(text[5:], start=5):
            depth += ch == "{"
            depth -= ch == "}"
            if depth == 0:
                return latex_terms(text[6:i]), latex_terms(text[i + 2:-1])
    return latex_terms(text), None


@pytest.mark.parametrize("n", [2, 3])
def test_large_result_latex_is_sympys_latex_of_the_same_expression(monkeypatch, n):
    monkeypatch.setattr(solve_mod, "FACTOR_LIMIT", 0)
    c = parse_circuit(ladder(n))
    sol = solve_system(build_system(c))
    for value in list(sol.node_voltages.values())[1:] + list(sol.find.values()):
        assert getattr(value, "is_large", False)
        num, den = value.fraction
        F = value._field
        reference = F.collected_expr(num) / F.collected_expr(den)
        assert latex_fraction(sympy.latex(value)) == latex_fraction(sympy.latex(reference))


def test_numeric_ladder_poles_from_polynomials_match_sympy_roots():
    # A 3-section RC ladder with values: the poles are the roots of D(s), found by FLINT here and
    # by SymPy's nroots in the reference (real and negative for a passive RC ladder: common
    # practice, no source).
    text = ladder(3).replace('Vin = ""', 'Vin = "1"')
    for k in (1, 2, 3):
        text = text.replace(f'R{k} = ""', f'R{k} = "{k}k"').replace(f'C{k} = ""', f'C{k} = "{k}u"')
    c = parse_circuit(text)
    tf = Study(c, ValueChoice.from_options(known=True)).transfer["H"]
    den = sympy.Poly(sum(sympy.sympify(x) * s**k for k, x in enumerate(reversed(tf.den_coeffs))), s)
    ref = sorted(complex(r).real for r in sympy.Poly(den, s).nroots(n=30))
    assert sorted(r.real for r in tf.poles) == pytest.approx(ref, rel=1e-12)
    assert all(r.real < 0 and r.imag == 0 for r in tf.poles)


@pytest.mark.parametrize("seed", range(20))
def test_sections_keep_the_half_plane_of_each_root(seed):
    # Each section against numpy.roots of the same polynomial (the reference): a real root r gives a
    # first-order section with w0 = |r|, marked right_half_plane when r > 0; a complex pair gives
    # w0 = |p| and Q = |p|/(-2*Re p), negative in the right half-plane (s**2/w0**2 + s/(Q*w0) + 1
    # has roots with real part -w0/(2*Q): standard second-order form, e.g. Franco, Design with
    # Operational Amplifiers, ch. 3, from memory).
    import numpy as np
    rng = random.Random(seed)
    while True:
        coeffs = [1] + [rng.randint(-9, 9) for _ in range(3)]
        poly = sum(c * tr.s ** (3 - i) for i, c in enumerate(coeffs))
        if len(sympy.factor_list(poly, tr.s)[1]) == 1 and coeffs[-1] != 0:  # irreducible cubic
            break
    tf = tr.transfer_function(1 / poly)
    roots = np.roots(coeffs)
    real = sorted(r.real for r in roots if abs(r.imag) < 1e-9)
    pairs = [r for r in roots if r.imag > 1e-9]
    firsts = sorted((float(x.w0), x.right_half_plane) for x in tf.sections if x.order == 1)
    want = sorted((abs(r), bool(r > 0)) for r in real)
    assert [b for _, b in firsts] == [b for _, b in want]
    assert [a for a, _ in firsts] == pytest.approx([a for a, _ in want])
    seconds = [x for x in tf.sections if x.order == 2]
    assert len(seconds) == len(pairs)
    for sec, p in zip(seconds, pairs):
        assert float(sec.w0) == pytest.approx(abs(p))
        assert float(sec.q) == pytest.approx(abs(p) / (-2 * p.real))
        assert sec.right_half_plane == (p.real > 0)


def test_first_order_all_pass_zero_is_in_the_right_half_plane():
    # First-order all-pass (phase shifter): H = (1 - s*R*C)/(1 + s*R*C), zero at s = +1/(R*C)
    # (Franco, Design with Operational Amplifiers, ch. 3, all-pass filters, from memory).
    tf = tr.transfer_function((1 - s_rc()) / (1 + s_rc()))
    zero = [x for x in tf.sections if x.where == "zero"]
    pole = [x for x in tf.sections if x.where == "pole"]
    assert [x.right_half_plane for x in zero] == [True] and [x.right_half_plane for x in pole] == [False]
    assert zero[0].w0 == pole[0].w0 == sympy.Rational(1, 1000)


def s_rc():
    return tr.s * 1000  # R*C = 1000 s (invented values)


def test_symbolic_all_pass_zero_is_marked_and_its_corner_is_positive():
    # The same all-pass with R and C as symbols: the zero's corner is 1/(R*C) (positive), marked
    # in the right half-plane (component values are positive).
    R, C = sympy.symbols("R C")
    tf = tr.transfer_function((1 - tr.s * R * C) / (1 + tr.s * R * C))
    zero = [x for x in tf.sections if x.where == "zero"]
    assert [(x.w0, x.right_half_plane) for x in zero] == [(1 / (C * R), True)]
