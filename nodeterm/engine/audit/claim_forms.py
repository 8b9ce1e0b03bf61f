"""Linear forms of equations: the coordinates the audit compares a claim with.

A linear form is a dict ``{unknown: coefficient, "1": constant}`` of an
expression linear in the unknowns (:func:`_linear`). The audit writes a claimed
equation and each part's term of a generated equation as forms, then
attributes the claim to the part terms coordinate by coordinate
(:func:`_attribute`): the multiplier of each part term (1 right, 0 missing,
-1 sign error, anything else a wrong coefficient) and what no part explains
(:func:`_leftover`).

Also the two ways the audit prints an expression (:func:`_t` as written,
:func:`_r` as the reports print results) and its exact zero test (:func:`_zero`).

Written here because no library attributes a linear equation to the terms of
another; SymPy's ``linear_eq_to_matrix`` reads off the coefficients.

>>> from nodeterm.engine.symbols import V, param
>>> x, y, R = V("x"), V("y"), param("R")
>>> form = _linear((x - y)/R + 2, [x, y])
>>> form[x], form[y], form["1"]
(1/R, -1/R, 2)
>>> _linear(x*y, [x, y]) is None
True
>>> _attribute({x: -1/R}, [{x: 1/R}], 1)
([-1], {})
"""

from __future__ import annotations

import sympy

from nodeterm.engine.symbols import as_expr
from sympy.solvers.solveset import NonlinearError

_ONE = "1"  # key of the constant coordinate in a linear form


def _t(expr) -> str:
    return sympy.sstr(expr, order="none")


def _r(expr) -> str:
    """A result in SymPy's usual order (descending powers of s), as the reports print results."""
    return sympy.sstr(expr)


def _zero(expr) -> bool:
    return sympy.cancel(sympy.together(expr)) == 0


def _linear(expr, xs) -> dict | None:
    """{unknown: coefficient, "1": constant} of an expression linear in ``xs``; None if not linear."""
    expr = as_expr(expr)
    if not xs:
        return {_ONE: sympy.cancel(expr)} if not _zero(expr) else {}
    try:
        A, b = sympy.linear_eq_to_matrix([expr], list(xs))
    except (NonlinearError, ValueError):
        return None
    out = {}
    for i, x in enumerate(xs):
        v = sympy.cancel(A[0, i])
        if v != 0:
            if v.free_symbols & set(xs):
                return None
            out[x] = v
    c = sympy.cancel(-b[0])
    if c != 0:
        out[_ONE] = c
    return out


def _add_forms(forms) -> dict:
    total: dict = {}
    for f in forms:
        for x, v in f.items():
            total[x] = total.get(x, 0) + v
    return {x: sympy.cancel(v) for x, v in total.items() if not _zero(v)}


def _attribute(R: dict, forms: list[dict], k) -> tuple[list, dict]:
    """Multipliers of each part term (scaled by k) that best explain the claim R, and what is left."""
    n = len(forms)
    supports = [set(f) for f in forms]
    mu: list = [None] * n
    for j in range(n):
        others = set().union(*(supports[i] for i in range(n) if i != j)) if n > 1 else set()
        private = sorted(supports[j] - others, key=str)
        if private:
            x = private[0]
            mu[j] = sympy.cancel(R.get(x, 0) / (k * forms[j][x]))
    undetermined = [j for j in range(n) if mu[j] is None]
    mu = [sympy.Integer(1) if m is None else m for m in mu]
    left = _leftover(R, forms, mu, k)
    if left:
        fits = []
        for j in range(n):
            if set(left) != supports[j]:
                continue
            ratios = {sympy.cancel(left[x] / (k * forms[j][x])) for x in left}
            if len(ratios) == 1:
                ratio = ratios.pop()
                fits.append((0 if ratio.is_number else 1, 0 if j in undetermined else 1, j, ratio))
        if fits:
            fits.sort(key=lambda f: f[:3])
            _, _, j, ratio = fits[0]
            mu[j] = sympy.cancel(mu[j] + ratio)
            left = _leftover(R, forms, mu, k)
    return mu, left


def _leftover(R, forms, mu, k) -> dict:
    coords = set(R).union(*[set(f) for f in forms])
    left = {}
    for x in coords:
        v = sympy.cancel(R.get(x, 0) - sum((m * k * f.get(x, 0) for m, f in zip(mu, forms)), sympy.Integer(0)))
        if v != 0:
            left[x] = v
    return left
