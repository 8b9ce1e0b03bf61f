"""The same [find] quantity under the ideal op-amp model and under the real one, side by side.

The real model lives in :class:`nodeterm.engine.circuit.parts.OpAmp` (``gain``, ``gbw``, ``rin``,
``rout``); here the circuit is solved twice -- as written, and with every op-amp made
ideal by :func:`ideal_variant` -- and the results are compared: the relative error at DC
and at one frequency, and the -3 dB bandwidth of each.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import TYPE_CHECKING

import sympy

from nodeterm.engine.symbols import as_expr
from nodeterm.engine.equations.system import System, build_system
from nodeterm.engine.symbols import s
from nodeterm.engine.values import numeric_values
from nodeterm.engine.solving.solve import solve_system

if TYPE_CHECKING:
    from nodeterm.engine.analysis.transfer import Bandwidth

REAL_KEYS = ("gbw", "rin", "rout")
DEFAULT_FREQUENCY = 1000.0
"""Hz; where the error is reported when no frequency is chosen (a common audio reference, no source)."""


def has_real_model(circuit) -> bool:
    """True when some op-amp carries gain or gbw."""
    return any(p.kind == "opamp" and not p.ideal for p in circuit.parts)


def ideal_variant(circuit):
    """A copy of ``circuit`` with every op-amp ideal (gain, gbw, rin, rout dropped; rails kept).

    >>> from nodeterm.engine.circuit.loader import parse_circuit
    >>> c = parse_circuit('''
    ... [parts]
    ... V1 = { kind = "voltage_source", nodes = ["in", "gnd"], value = 1 }
    ... R1 = { kind = "resistor", nodes = ["out", "gnd"], value = "1k" }
    ... U1 = { kind = "opamp", plus = "in", minus = "out", out = "out", gain = "100k", gbw = "1M" }
    ... ''')
    >>> ideal_variant(c).part("U1").ideal, c.part("U1").ideal
    (True, False)
    """
    parts = []
    for p in circuit.parts:
        if p.kind == "opamp" and not p.ideal:
            p = replace(p, gain=None, extra=tuple((k, v) for k, v in p.extra if k not in REAL_KEYS))
        parts.append(p)
    return replace(circuit, parts=tuple(parts))


@dataclass(frozen=True)
class ModelRow:
    """One [find] quantity under both models.

    Attributes:
        name: the [find] name.
        ideal, real: the two results (exact).
        dc_ideal, dc_real: their values at s = 0.
        dc_error: (real - ideal)/ideal at DC (exact), or None when the ideal value is 0 or infinite.
        error_at: |H_real/H_ideal - 1| at ``frequency`` (numbers only), or None.
        bandwidth_ideal, bandwidth_real: -3 dB points, or None (flat, or still symbolic).
    """

    name: str
    ideal: sympy.Expr
    real: sympy.Expr
    dc_ideal: sympy.Expr
    dc_real: sympy.Expr
    dc_error: sympy.Expr | None
    error_at: float | None
    bandwidth_ideal: Bandwidth | None
    bandwidth_real: Bandwidth | None


@dataclass(frozen=True)
class ModelComparison:
    """Both systems (for their equations) and one row per [find] quantity."""

    real_system: System
    ideal_system: System
    rows: tuple[ModelRow, ...]
    frequency: float


def _dc(expr: sympy.Expr) -> sympy.Expr:
    if not expr.has(s):
        return expr
    from nodeterm.engine.analysis.transfer import transfer_function  # NumPy only when a response is asked for
    tf = transfer_function(expr)
    return tf.dc_gain


def _value_at(expr: sympy.Expr, f_hz: float) -> complex | None:
    v = as_expr(expr).xreplace({s: sympy.I * 2 * sympy.pi * sympy.Float(f_hz)})
    return complex(v) if v.is_number else None


def _bandwidth(expr: sympy.Expr) -> Bandwidth | None:
    if not expr.has(s) or expr.free_symbols - {s}:
        return None
    from nodeterm.engine.analysis.transfer import bandwidth_3db, transfer_function
    return bandwidth_3db(transfer_function(expr))


def prepared(circuit, values: dict | None = None) -> System:
    """``build_system`` with the file's values, overridden by ``values``, substituted in one step."""
    system = build_system(circuit)
    known = numeric_values(circuit, values)
    return system.substitute(known) if known else system


def compare_models(circuit, values: dict | None = None, frequency: float | None = None) -> ModelComparison:
    """Solve ``circuit`` as written and with ideal op-amps; compare every [find] quantity.

    Args:
        circuit: a circuit with at least one real op-amp (else both columns agree).
        values: parameter values overriding the file.
        frequency: Hz at which to report the error (``DEFAULT_FREQUENCY`` when None).
    """
    f = DEFAULT_FREQUENCY if frequency is None else float(frequency)
    real_sys = prepared(circuit, values)
    ideal_sys = prepared(ideal_variant(circuit), values)
    real_sol, ideal_sol = solve_system(real_sys), solve_system(ideal_sys)
    rows = []
    for name in circuit.find:
        hi, hr = as_expr(ideal_sol.find[name]), as_expr(real_sol.find[name])
        di, dr = _dc(hi), _dc(hr)
        err = None
        if di.is_finite is not False and di != 0 and dr.is_finite is not False:
            err = sympy.simplify(sympy.cancel(dr / di - 1))
        vi, vr = _value_at(hi, f), _value_at(hr, f)
        err_f = abs(vr / vi - 1) if vi not in (None, 0) and vr is not None else None
        rows.append(ModelRow(name, hi, hr, di, dr, err, err_f, _bandwidth(hi), _bandwidth(hr)))
    return ModelComparison(real_sys, ideal_sys, tuple(rows), f)
