"""The readable form of results: FLINT's factoring put together exactly as ``sympy.factor`` does.

Reference: SymPy's ``factor`` (a general-purpose reference library). The printed form of every
result depends on it, so the comparison is structural (``srepr``), not only mathematical.
"""

from __future__ import annotations

import random

import sympy

from nodeterm.engine.solving.forms import FACTOR_LIMIT, factor_poly, tidy_fraction
from nodeterm.engine.symbols import s

SYMS = sympy.symbols("R1 R2 R3 Rf Rg C1 C2 A")


def random_polynomial(rng: random.Random) -> sympy.Expr:
    e = rng.choice([1, -1, 2, -6, 15])
    for _ in range(rng.randint(1, 3)):
        terms = [rng.choice([-7, -3, -2, -1, 1, 2, 3, 4, 10**15])
                 * sympy.Mul(*[x ** rng.choice([1, 1, 2]) for x in rng.sample(SYMS, rng.randint(0, 3))])
                 for _ in range(rng.randint(1, 3))]
        e *= sympy.Add(*terms) ** rng.choice([1, 1, 2])
    return sympy.expand(e)


def test_factor_poly_is_structurally_sympy_factor():
    rng = random.Random(2026)
    checked = 0
    for _ in range(300):
        e = random_polynomial(rng)
        if e == 0:
            continue
        expected = sympy.factor(e)
        assert sympy.srepr(factor_poly(e)) == sympy.srepr(expected), (e, expected)
        checked += 1
    assert checked > 250


def test_factor_poly_leaves_what_is_not_an_integer_polynomial_to_sympy():
    R = SYMS[0]
    for e in (sympy.Rational(1, 3) * R + 1, sympy.sqrt(2) * R + 2, R / (R + 1), sympy.Integer(-6)):
        assert sympy.srepr(factor_poly(e)) == sympy.srepr(sympy.factor(e))


def test_tidy_fraction_is_sympy_collect_with_factor():
    # the reference is SymPy's own recipe for the form: collect in s, factor each coefficient
    rng = random.Random(7)
    checked = 0
    for _ in range(60):
        num = sympy.expand(random_polynomial(rng) * s + random_polynomial(rng))
        den = sympy.expand(random_polynomial(rng) * s**2 + random_polynomial(rng) * s + 1)
        if len(sympy.Add.make_args(num)) + len(sympy.Add.make_args(den)) > FACTOR_LIMIT:
            continue
        expected = sympy.collect(num, s, func=sympy.factor) / sympy.collect(den, s, func=sympy.factor)
        assert sympy.srepr(tidy_fraction(num, den)) == sympy.srepr(expected), (num, den)
        checked += 1
    assert checked > 40
