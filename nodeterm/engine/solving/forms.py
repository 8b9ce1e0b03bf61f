"""The canonical printed form of exact results: one fraction, collected in s, small coefficients factored.

Shared by both exact solvers (:mod:`.solve` on SymPy, :mod:`.fastsolve` on FLINT).
"""

from __future__ import annotations

import sympy
from sympy.core.exprtools import _keep_coeff
from sympy.polys.polyutils import _sort_gens

from nodeterm.engine.symbols import as_expr, s

try:  # python-flint is a dependency; the SymPy path stands in where it is missing
    import flint
except ImportError:  # pragma: no cover
    flint = None


FACTOR_LIMIT = 40  # total terms up to which coefficients are factored for readability


def canonical(expr: sympy.Expr) -> sympy.Expr:
    """One fraction; numerator and denominator collected in s when reactive.

    Small results get their coefficients factored, as an engineer writes them
    (``C2*(R1 + R2)*s``); large ones stay expanded so that building them stays cheap.

    >>> R, C, R1, R2, C1, C2 = sympy.symbols("R C R1 R2 C1 C2")
    >>> canonical(1/(1 + 1/(s*R*C)))
    C*R*s/(C*R*s + 1)
    >>> canonical(1/(s**2*C1*C2*R1*R2 + s*C2*R1 + s*C2*R2 + 1))
    1/(C1*C2*R1*R2*s**2 + C2*s*(R1 + R2) + 1)
    >>> canonical(sympy.Rational(1, 250) + 2*R/125)
    (4*R + 1)/250
    """
    expr = as_expr(expr)
    if expr.is_Number:
        return expr
    expr = sympy.cancel(sympy.together(expr))
    num, den = sympy.fraction(expr)
    return tidy_fraction(num, den)


def tidy_fraction(num: sympy.Expr, den: sympy.Expr) -> sympy.Expr:
    """The printed form of a fraction already in lowest terms (the last half of :func:`canonical`).

    >>> R = sympy.Symbol("R")
    >>> tidy_fraction(R*s + R, 2*s)
    (R*s + R)/(2*s)
    """
    num, den = sympy.expand(num), sympy.expand(den)
    small = len(sympy.Add.make_args(num)) + len(sympy.Add.make_args(den)) <= FACTOR_LIMIT
    if num.has(s) or den.has(s):
        func = factor_poly if small else (lambda x: x)
        num, den = collect_s(num, func), collect_s(den, func)
    elif small:
        num, den = factor_poly(num), factor_poly(den)
    return num / den if den != 1 else num


def collect_s(expr: sympy.Expr, func) -> sympy.Expr:
    """``sympy.collect(expr, s, func=func)`` for an expanded polynomial in s, built from its Poly terms.

    >>> R, C = sympy.symbols("R C")
    >>> collect_s(R*C*s**2 + R*s + C*s + 1, sympy.factor)
    C*R*s**2 + s*(C + R) + 1
    """
    poly = sympy.Poly(expr, s)
    return sympy.Add(*[func(c) * s**k for (k,), c in poly.terms()])


def factor_poly(expr: sympy.Expr) -> sympy.Expr:
    """``sympy.factor(expr)``, the same expression, with FLINT doing the factoring when it can.

    SymPy factors multivariate polynomials in Python; FLINT (python-flint, a dependency) does it
    in C, several times faster on the coefficients of a typical op-amp result. The factors are put
    together as ``sympy.factor`` does (SymPy's generator order, ``_keep_coeff`` for the content),
    so the printed form does not change; anything but a polynomial with integer coefficients is
    left to ``sympy.factor``.

    >>> R1, R2 = sympy.symbols("R1 R2")
    >>> factor_poly(-6*R1 - 6*R2)
    -6*(R1 + R2)
    """
    if flint is None or expr.is_Number:
        return sympy.factor(expr)
    gens = list(_sort_gens(list(expr.free_symbols)))
    try:
        poly = sympy.Poly(expr, *gens)
    except sympy.PolynomialError:
        return sympy.factor(expr)
    if poly.domain != sympy.ZZ or not gens:
        return sympy.factor(expr)
    ctx = flint.fmpz_mpoly_ctx.get(tuple(f"x{i}" for i in range(len(gens))), "lex")
    try:
        content, factors = ctx.from_dict({m: int(c) for m, c in poly.terms()}).factor()
    except Exception:  # noqa: BLE001 - python-flint 0.9 overflows sorting factors with huge coefficients
        return sympy.factor(expr)
    product = []
    for f, mult in factors:
        terms = [sympy.Mul(sympy.Integer(int(c)), *[g**k for g, k in zip(gens, mono) if k])
                 for mono, c in f.to_dict().items()]
        product.append(sympy.Add(*terms) ** mult)
    return _keep_coeff(sympy.Integer(int(content)), sympy.Mul(*product))


