"""Formatting of expressions and numbers for people: one-line forms and engineering notation.

Expressions use SymPy's string printer (one-line, ``**`` for powers), so what
the user reads can be pasted back into a circuit file. Numbers get engineering
notation with SI prefixes (``4.7 k``, ``-5.1 m``).
"""

from __future__ import annotations

import math

import sympy

from nodeterm.engine.symbols import as_expr
_PREFIXES = [(12, "T"), (9, "G"), (6, "M"), (3, "k"), (0, ""), (-3, "m"), (-6, "µ"), (-9, "n"), (-12, "p"),
             (-15, "f")]


def eng(value: float, unit: str = "", digits: int = 4, ascii_only: bool = False) -> str:
    """Engineering notation with an SI prefix.

    >>> eng(0.0051, "A")
    '5.1 mA'
    >>> eng(-4700, "Ω")
    '-4.7 kΩ'
    >>> eng(0)
    '0'
    """
    if value == 0:
        return "0" + (f" {unit}" if unit else "")
    if not math.isfinite(value):
        return str(value)
    exp3 = int(math.floor(math.log10(abs(value)) / 3) * 3)
    exp3 = max(-15, min(12, exp3))
    prefix = dict(_PREFIXES)[exp3]
    if ascii_only and prefix == "µ":
        prefix = "u"
    mant = value / 10 ** exp3
    text = f"{mant:.{digits}g}"
    if "e" in text:  # rounding pushed it to the next prefix
        text = f"{float(text):g}"
    sep = " " if (prefix or unit) else ""
    return f"{text}{sep}{prefix}{unit}"


def expr_text(expr, ascii_only: bool = False, hand: bool = False) -> str:
    """One-line form of an expression in SymPy syntax (``**`` powers).

    Results print in SymPy's order (descending powers of s). ``hand=True`` keeps
    the order the terms were written in, for the terms of a KCL equation.

    >>> R, V1, V2, s = sympy.symbols("R V_1 V_2 s")
    >>> expr_text((V2 - V1)/(2*R), hand=True)
    '(V_2 - V_1)/(2*R)'
    >>> expr_text(1/(s**2 + 3*s + 2))
    '1/(s**2 + 3*s + 2)'
    """
    return sympy.sstr(expr, order="none" if hand else None)


def equation_text(e, ascii_only: bool = False) -> str:
    """``lhs = rhs``; a KCL written by the procedure shows its terms in the order written."""
    if e.terms and e.kind in ("kcl", "supernode_kcl"):
        text = ""
        for i, t in enumerate(e.terms):
            term = expr_text(t.expr, hand=True)
            if i and term.startswith("-"):
                text += " - " + term[1:]
            else:
                text += (" + " if i else "") + term
        return f"{text} = {expr_text(e.rhs)}"
    return f"{expr_text(e.lhs)} = {expr_text(e.rhs)}"


def is_numeric(expr) -> bool:
    if getattr(expr, "is_large", False):  # a large lazy result (engine.fastsolve.LargeExpr): never a number
        return False
    expr = as_expr(expr)
    return bool(expr.is_number) and not expr.has(sympy.zoo, sympy.nan)


def value_text(expr, unit: str = "", ascii_only: bool = False) -> str:
    """An exact result, with its engineering-notation value when it is a number.

    >>> value_text(sympy.Rational(-51, 10000), "A")
    '-51/10000 (≈ -5.1 mA)'
    """
    text = expr_text(expr)
    if is_numeric(expr) and as_expr(expr).is_real:
        approx = eng(float(expr), unit, ascii_only=ascii_only) if unit else f"{float(expr):.4g}"
        if as_expr(expr).is_Integer and abs(int(expr)) < 1000:
            return f"{text} {unit}".rstrip()
        return f"{text} ({'~' if ascii_only else '≈'} {approx})"
    return text
