"""Equations and values as the workbench shows them.

One-line form by default (the presenters' SymPy string form); the 2-D form is
SymPy's pretty printer with names as written (``present.format.pretty_text``),
used only when every line fits the width given, otherwise the one-line form is kept. Printing is cached: the panes redraw the
same equations each time a selection moves.
"""

from __future__ import annotations

from functools import lru_cache

import sympy

from nodeterm.present.format import equation_text, expr_text, pretty_text

MARK = "▶"       # marks the selected item (a textual marker, legible without colour)
TIED = "*"       # marks items tied to the selection


def one_line(lhs, rhs) -> str:
    return f"{expr_text(lhs)} = {expr_text(rhs)}"


def pretty(lhs, rhs, width: int) -> str | None:
    """The 2-D form of ``lhs = rhs`` if it fits in ``width`` columns, else None (names as written)."""
    try:
        eq = sympy.Eq(lhs, rhs, evaluate=False)
    except Exception:  # noqa: BLE001 - the printer is optional decoration; fall back to one line
        return None
    return pretty_text(eq, width)


@lru_cache(maxsize=4096)
def equation(eq, two_d: bool = False, width: int = 70) -> str:
    """An equation in the chosen form."""
    if two_d:
        text = pretty(eq.lhs, eq.rhs, width)
        if text is not None:
            return text
    return equation_text(eq)


@lru_cache(maxsize=4096)
def term(expr) -> str:
    """One KCL term in the order it was written."""
    return expr_text(expr, hand=True)


def expression(expr, two_d: bool = False, width: int = 70) -> str:
    if two_d:
        text = pretty_text(expr, width)
        if text is not None:
            return text
    return expr_text(expr)
