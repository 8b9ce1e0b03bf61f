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
