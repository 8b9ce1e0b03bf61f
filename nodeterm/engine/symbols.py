"""The SymPy symbols of the node method, made in one place so every module agrees.

>>> V("out"), I("R1"), param("Rf"), s
(V_out, I_R1, Rf, s)
"""

from __future__ import annotations

import sympy

s = sympy.Symbol("s")


def V(node: str) -> sympy.Symbol:
    """The voltage of ``node`` with respect to the reference node."""
    return sympy.Symbol(f"V_{node}")


def I(part: str) -> sympy.Symbol:  # noqa: E743 - the trade's name for a current
    """The current of part ``part`` (direction defined by its kind)."""
    return sympy.Symbol(f"I_{part}")


def param(name: str) -> sympy.Symbol:
    """The symbol of circuit parameter ``name``."""
    return sympy.Symbol(name)


def as_expr(value) -> sympy.Expr:
    """A SymPy object from a value the program made (a SymPy object, a number, a lazy large result).

    Never parses text: a string is refused, and SymPy's converter runs in strict mode, so
    nothing falls back to reading ``str(value)``. Text from a file goes through
    :func:`nodeterm.engine.circuit.expr.parse_expression` only.

    >>> as_expr(3) + as_expr(sympy.Symbol("R"))
    R + 3
    >>> as_expr("1+1")
    Traceback (most recent call last):
    ...
    TypeError: as_expr takes program values, not text: '1+1'
    """
    if isinstance(value, str):
        raise TypeError(f"as_expr takes program values, not text: {value!r}")
    return sympy.sympify(value, strict=True)
