"""Normalized sensitivity S = (dF/dx)*(x/F) of each quantity to each parameter, ranked.

The quantities are scalars read from the [find] results solved with every parameter
symbolic (:func:`scalar_quantities`): a quantity without s as it is; a transfer function
through its DC gain and the w0 and Q of each second-order section (or the corner of a
first-order one). Each parameter is an independent part value at its nominal (resolved)
value from the file. Definition: Franco, Design with Operational Amplifiers, ch. 3
(filter sensitivities, from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import sympy

from nodeterm.engine.symbols import as_expr
from nodeterm.engine.equations.system import build_system
from nodeterm.engine.symbols import param, s
from nodeterm.engine.values import nominal
from nodeterm.engine.analysis.transfer import _simplify_positive, transfer_function
from nodeterm.engine.solving.solve import solve_system


def normalized_sensitivity(f: sympy.Expr, x: sympy.Symbol) -> sympy.Expr:
    """S = (dF/dx)*(x/F), simplified with parameters taken positive.

    >>> R1, R2 = sympy.symbols("R1 R2")
    >>> normalized_sensitivity(R2/(R1 + R2), R1)
    -R1/(R1 + R2)
    >>> normalized_sensitivity(1/sympy.sqrt(R1*R2), R2)
    -1/2
    """
    return _simplify_positive(sympy.diff(f, x) * x / f)


def scalar_quantities(circuit, solution=None) -> dict[str, sympy.Expr]:
    """Scalar quantities of every [find] result, in terms of the parameters.

    Names: ``F`` for a quantity without s; ``F.dc``, ``F.w0``, ``F.Q`` (``F.w0_2``... for
    further sections) and ``F.corner`` for a transfer function.
    """
    if solution is None:
        solution = solve_system(build_system(circuit))
    out: dict[str, sympy.Expr] = {}
    for name in circuit.find:
        value = as_expr(solution.find[name])
        if not value.has(s):
            out[name] = value
            continue
        tf = transfer_function(value, name)
        # a symbolic DC gain such as (Rf + Rg)/Rg has is_finite None: only a pole at the origin (zoo),
        # 0/0 (nan) or a zero gain is left out
        if tf.dc_gain.is_finite is not False and tf.dc_gain is not sympy.nan and tf.dc_gain != 0:
            out[f"{name}.dc"] = tf.dc_gain
        counts = {1: 0, 2: 0}
        for sec in tf.sections:
            if sec.where != "pole" or sec.factor is None or sec.w0 is None or sec.order not in (1, 2):
                continue
            counts[sec.order] += 1
            tag = "" if counts[sec.order] == 1 else f"_{counts[sec.order]}"
            if sec.order == 1:
                out[f"{name}.corner{tag}"] = sec.w0
            else:
                out[f"{name}.w0{tag}"] = sec.w0
                if sec.q is not None and sec.q.is_finite is not False:
                    out[f"{name}.Q{tag}"] = sec.q
    return out


@dataclass(frozen=True)
class Sensitivity:
    """S of one quantity to one parameter: exact, and its number at the nominal values (or None)."""

    quantity: str
    parameter: str
    exact: sympy.Expr
    value: float | None


def nominal_values(circuit, values: dict | None = None) -> dict[sympy.Symbol, sympy.Expr]:
    """Parameter symbol -> resolved value (file values, then ``values``), numbers only."""
    return nominal(circuit, values)


def sensitivities(quantities: dict[str, sympy.Expr], nominal: dict) -> list[Sensitivity]:
    """Every non-zero S, grouped by quantity, ranked by |S| at the nominal values."""
    out: list[Sensitivity] = []
    for qname, f in quantities.items():
        rows = []
        for x in sorted(f.free_symbols - {s}, key=str):
            exact = normalized_sensitivity(f, x)
            if exact == 0:
                continue
            v = exact.xreplace(nominal)
            number = float(v) if v.is_number and v.is_extended_real else None
            rows.append(Sensitivity(qname, str(x), exact, number))
        rows.sort(key=lambda r: (r.value is None, -abs(r.value) if r.value is not None else 0, r.parameter))
        out += rows
    return out


def sign_of(sens: list[Sensitivity], quantity: str) -> dict[str, int]:
    """Parameter -> +1/-1 from the numeric S of ``quantity`` (0 when unknown or negligible)."""
    out = {}
    for r in sens:
        if r.quantity == quantity:
            out[r.parameter] = 0 if r.value is None or math.isclose(r.value, 0, abs_tol=1e-15) else \
                (1 if r.value > 0 else -1)
    return out
