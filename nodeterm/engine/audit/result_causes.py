"""Likely causes of a wrong claim: sign, factor, swapped parameters; and the numeric checks.

When a claimed result differs from the solved one, :func:`_result_cause` names
the likely slip (a sign error, a factor of 2, two parameters swapped, one
written where another belongs, a result upside down...). :func:`_is_zero`
decides whether a difference is zero: ``cancel`` for rational functions, then
``simplify``, then :func:`_numeric_zero` at a few reproducible random points
when the expression has roots or functions. :func:`_example` finds small
values that make the two sides of a failing claim differ.

Written here because no library names the slip behind a wrong formula; SymPy
does the algebra.

>>> from nodeterm.engine.symbols import param
>>> R1, R2 = param("R1"), param("R2")
>>> _result_cause(-R1/R2, R1/R2, sympy.Integer(-1), -2*R1/R2)
'sign error (the claim is the negative of the result): change its sign'
>>> _result_cause(R2/R1 + 1, R1/R2 + 1, None, R2/R1 - R1/R2)
'R1 and R2 are swapped: swap them back'
>>> _is_zero(sympy.sqrt(R1**2) - R1)
(True, 'numeric')
"""

from __future__ import annotations

import random

import sympy

from nodeterm.engine.symbols import as_expr
from nodeterm.engine.audit.claim_forms import _r, _t, _zero

_NUMERIC_POINTS = 6
_NUMERIC_TOL = 1e-9


def _is_zero(expr) -> tuple[bool, str]:
    """Whether ``expr`` is zero, and how that was decided ("symbolic" or "numeric")."""
    d = sympy.cancel(sympy.together(expr))
    if d == 0:
        return True, "symbolic"
    if not _irrational(d):
        return False, "symbolic"
    try:
        if sympy.simplify(d) == 0:
            return True, "symbolic"
    except Exception:  # noqa: BLE001 - simplify can fail on odd input; fall back to numbers
        pass
    return _numeric_zero(d), "numeric"


def _irrational(expr) -> bool:
    """True when ``cancel`` alone may not decide whether ``expr`` is zero (roots, functions)."""
    for a in sympy.preorder_traversal(expr):
        if isinstance(a, sympy.Pow) and not a.exp.is_Integer:
            return True
        if isinstance(a, sympy.Function):
            return True
    return False


def _numeric_zero(expr) -> bool:
    """Zero at several random positive points (relative to the size of the terms)?"""
    syms = sorted(expr.free_symbols, key=str)
    rng = random.Random(1729)  # reproducible: a verdict must not change between runs
    f = sympy.lambdify(syms, expr, modules="mpmath")
    import mpmath
    mpmath.mp.dps = 30
    for _ in range(_NUMERIC_POINTS):
        point = [mpmath.mpf(rng.uniform(0.5, 5.0)) for _ in syms]
        try:
            value = complex(f(*point))
        except (ZeroDivisionError, ValueError, TypeError):
            continue
        if abs(value) > _NUMERIC_TOL:
            return False
    return True


def _same(a, b) -> bool:
    """a == b exactly; a quick look at one exact point first rules most pairs out."""
    d = as_expr(a) - as_expr(b)
    return not _nonzero_at_point(d) and _zero(d)


def _result_cause(claimed, solved, ratio, diff, check=None) -> str:
    """A likely cause of a wrong result, when one is detectable (``check()`` may stop the search)."""
    check = check or (lambda: None)
    if ratio is not None:
        if ratio == -1:
            return "sign error (the claim is the negative of the result): change its sign"
        if ratio in (2, sympy.Rational(1, 2), -2, -sympy.Rational(1, 2)):
            return (f"a factor of {_t(ratio)}" + (" and a sign error" if ratio < 0 else "")
                    + ": look for a term counted twice or halved, and write it once")
        if ratio.is_number:
            return f"a constant factor of {_t(ratio)}: look for the number it comes from and remove it"
    params = sorted((claimed.free_symbols | solved.free_symbols) - {sympy.Symbol("s")}, key=str)
    params = params[:12]  # a few dozen pairs at most
    for i, a in enumerate(params):
        check()
        for b in params[i + 1:]:
            swapped = claimed.xreplace({a: b, b: a})
            if _same(swapped, solved):
                return f"{a} and {b} are swapped: swap them back"
            if _same(swapped, -solved):
                return f"{a} and {b} are swapped, and the sign is wrong: swap them back and change the sign"
    for a in params:
        if a in claimed.free_symbols:
            for shifted, words in ((a + 1, f"1 + {a}"), (a - 1, f"{a} - 1")):
                if _same(claimed.xreplace({a: shifted}), solved):
                    return f"{a} written where {words} belongs: write {words}"
    if claimed != 0 and solved != 0 and _same(claimed * solved, 1):
        return "upside down (the claim is 1 over the result): invert it"
    for a in params:
        check()
        for b in params:
            if a != b and a in claimed.free_symbols and _same(claimed.xreplace({a: b}), solved):
                return f"{a} written where {b} belongs: write {b} there"
    check()
    if diff.is_number:
        return f"off by a constant {_t(diff)} (e.g. a missing '1 +'): add the 1" if abs(diff) == 1 else ""
    s = sympy.Symbol("s")
    if claimed.has(s) or solved.has(s):
        return _s_coefficient_cause(claimed, solved)
    num, _ = sympy.fraction(sympy.factor(diff))
    for f in sympy.Mul.make_args(num):
        if isinstance(f, sympy.Add) and len(f.args) == 2 and f.free_symbols <= set(params) and _matching(f):
            a, b = f.args
            return (f"the two agree only when {_r(a)} = {_r(-b)} (a matched-ratio formula used for unmatched parts?): "
                    "use the general result, or choose the parts so that they match")
    return ""


def _matching(f) -> bool:
    """Is ``a + b = 0`` a matching condition parts can meet: two products of parameters of opposite sign?

    Not when either side is a bare number (``K - 1``: a gain condition, not matched parts) or both have
    the same sign (``R1 + R2 = 0`` needs a negative part).

    >>> R1, R2, R3, R4 = sympy.symbols("R1 R2 R3 R4")
    >>> _matching(R1*R4 - R2*R3), _matching(R1*R4 + R2*R3), _matching(R1 - 1)
    (True, False, False)
    """
    a, b = f.args
    ca, ma = a.as_coeff_Mul()
    cb, mb = b.as_coeff_Mul()
    if ma == 1 or mb == 1 or not ma.free_symbols or not mb.free_symbols:
        return False
    if ca * cb > 0:
        return False  # both terms positive (or both negative) for positive parts: never equal
    for term in (ma, mb):  # each side a product of positive parameters
        if any(not (isinstance(x, sympy.Symbol) or (isinstance(x, sympy.Pow) and isinstance(x.base, sympy.Symbol)))
               for x in sympy.Mul.make_args(term)):
            return False
    return True


def _s_coefficient_cause(claimed, solved) -> str:
    """Which coefficient of a transfer function differs (e.g. the s^1 damping term of the denominator)."""
    s = sympy.Symbol("s")
    try:
        cn, cd = sympy.fraction(sympy.cancel(claimed))
        sn, sd = sympy.fraction(sympy.cancel(solved))
        pc, ps = sympy.Poly(cd, s), sympy.Poly(sd, s)
        qc, qs = sympy.Poly(cn, s), sympy.Poly(sn, s)
    except sympy.PolynomialError:
        return ""
    # scale both so their denominators have the same constant (or lowest) coefficient
    low_c = pc.all_coeffs()[-1] if pc.all_coeffs()[-1] != 0 else pc.LC()
    low_s = ps.all_coeffs()[-1] if ps.all_coeffs()[-1] != 0 else ps.LC()
    kc, ks = 1 / low_c, 1 / low_s
    if pc.degree() != ps.degree():
        return (f"the claimed denominator is of order {pc.degree()} in s, the solved one of order {ps.degree()}: "
                f"{'a stage or a capacitor is left out' if pc.degree() < ps.degree() else 'an extra pole'}; write the "
                "full transfer function of every stage")
    out = []
    for what, a, b in (("denominator", pc, ps), ("numerator", qc, qs)):
        deg = max(a.degree(), b.degree())
        for d in range(deg, -1, -1):
            x = sympy.cancel(a.coeff_monomial(s**d) * kc)
            y = sympy.cancel(b.coeff_monomial(s**d) * ks)
            if _zero(x - y):
                continue
            name = {0: "constant term", 1: "s^1 coefficient"}.get(d, f"s^{d} coefficient")
            role = " (the damping term)" if what == "denominator" and d == 1 and deg == 2 else ""
            extra = sorted(map(str, y.free_symbols - x.free_symbols))
            dep = f"; the solved one depends on {', '.join(extra)}, the claimed one does not" if extra else ""
            out.append(f"the {what}'s {name}{role} differs: claimed {_r(x)}, solved {_r(y)}{dep}")
    return "; ".join(out[:2]) + ("; write the solved coefficient" if out else "")



def _swap_hint(m) -> str:
    num, den = sympy.fraction(sympy.cancel(m))
    if isinstance(num, sympy.Symbol) and isinstance(den, sympy.Symbol):
        return f" ({den} written where {num} belongs?)"
    return ""



def _example(lhs, rhs, sol) -> dict | None:
    """Values making the two sides differ (at the solution)."""
    L, Rr = lhs.xreplace(sol), rhs.xreplace(sol)
    used = sorted((lhs.free_symbols | rhs.free_symbols) & set(sol), key=str)
    syms = set(L.free_symbols | Rr.free_symbols)
    for u in used:
        syms |= as_expr(sol[u]).free_symbols
    syms = sorted(syms, key=str)
    primes = [2, 3, 5, 7, 11, 13, 17, 19, 23, 29, 31, 37]
    for shift in range(4):
        vals = {x: sympy.Integer(primes[(i + shift) % len(primes)]) for i, x in enumerate(syms)}
        try:
            a = sympy.cancel(L.xreplace(vals))
            b = sympy.cancel(Rr.xreplace(vals))
        except (ZeroDivisionError, ValueError):
            continue
        if a.has(sympy.zoo, sympy.nan) or b.has(sympy.zoo, sympy.nan) or a == b:
            continue
        out = {"values": {str(x): _t(v) for x, v in vals.items()}, "lhs": _t(a), "rhs": _t(b)}
        if used:
            out["solution"] = {str(u): _t(sympy.cancel(sol[u].xreplace(vals))) for u in used}
        return out
    return None


def _nonzero_at_point(expr) -> bool:
    """True when ``expr`` is certainly not identically zero: it is a nonzero rational at a random exact point."""
    syms = sorted(expr.free_symbols, key=str)
    rng = random.Random(4099)  # reproducible
    for _ in range(2):
        point = {x: sympy.Rational(rng.randint(3, 97), rng.randint(2, 29)) for x in syms}
        try:
            value = expr.xreplace(point)
            if not value.is_Rational:
                value = sympy.cancel(value)
        except (ZeroDivisionError, ValueError, TypeError):
            continue
        if value.is_Rational:
            return value != 0
    return False


def _decide_zero(expr, sol=None) -> tuple[bool, str]:
    """:func:`_is_zero` of ``expr`` at the solution, settling a nonzero expression at once (one exact point)."""
    e = as_expr(expr).xreplace(sol) if sol else as_expr(expr)
    if _nonzero_at_point(e):
        return False, "symbolic"
    return _is_zero(e)
