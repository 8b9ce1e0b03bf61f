"""Cautions: sources and node voltages beyond the extra-low-voltage limits, and model keys without effect.

Extra-low voltage is commonly taken as at most 50 V AC rms or 120 V ripple-free DC
(IEC 61140, from memory). A linear circuit file does not say whether a source is AC
or DC, so a magnitude above 120 V is always flagged, and one above 50 V is flagged as
hazardous if it is AC (its value read as rms). The tool cannot judge safety: the
message defers to local electrical codes and licensed practice.
"""

from __future__ import annotations

import sympy

from nodeterm.engine.symbols import as_expr
from nodeterm.engine.errors import Warning
from nodeterm.engine.symbols import param
from nodeterm.engine.values import numeric_values

ELV_AC_RMS = 50
"""Extra-low-voltage limit for AC, volts rms (IEC 61140, from memory)."""
ELV_DC = 120
"""Extra-low-voltage limit for ripple-free DC, volts (IEC 61140, from memory)."""

LINEAR_NOTE = "Results assume linear models (no slew-rate, saturation or noise) and must be confirmed on the bench."
"""The one-line note every export and analysis report carries."""

_DEFER = "the circuit can be hazardous; local electrical codes and licensed practice apply"


def voltage_caution(volts: float, what: str, part: str = "") -> Warning | None:
    """A caution for a voltage magnitude above the extra-low-voltage limits, else None.

    >>> voltage_caution(24, "source V1") is None
    True
    >>> voltage_caution(230, "source VM", "VM").code
    'hazardous-voltage'
    >>> "if it is AC" in voltage_caution(60, "source V2").message
    True
    """
    v = abs(float(volts))
    if v > ELV_DC:
        return Warning("hazardous-voltage",
                       f"caution: {what} is {v:g} V, above the extra-low-voltage limits ({ELV_AC_RMS} V AC rms, "
                       f"{ELV_DC} V ripple-free DC; IEC 61140, from memory): {_DEFER}", part)
    if v > ELV_AC_RMS:
        return Warning("hazardous-voltage",
                       f"caution: {what} is {v:g} V, above the {ELV_AC_RMS} V AC rms extra-low-voltage limit "
                       f"if it is AC (IEC 61140, from memory): {_DEFER}", part)
    return None


def _number(expr, subs: dict) -> float | None:
    if expr is None or getattr(expr, "is_large", False):  # a large lazy result is never a number
        return None
    expr = as_expr(expr).xreplace(subs)
    if expr.is_number and expr.is_extended_real:
        return float(expr)
    return None


def source_cautions(circuit, values: dict | None = None) -> list[Warning]:
    """Cautions for independent voltage sources whose value is known and beyond the limits.

    Args:
        circuit: the circuit.
        values: parameter name -> value overriding the file (e.g. from ``--set``).
    """
    subs = {param(n): v for n, v in numeric_values(circuit, values).items()}
    out = []
    for p in circuit.parts:
        if p.kind != "voltage_source":
            continue
        v = _number(p.value, subs)
        if v is not None:
            w = voltage_caution(v, f"source {p.id}", p.id)
            if w:
                out.append(w)
    for p in circuit.parts:  # supplies wide enough to be hazardous
        rails = p.get("rails") if p.kind == "opamp" else None
        if rails:
            low, high = (_number(r, subs) for r in rails)
            if low is not None and high is not None:
                w = voltage_caution(max(abs(low), abs(high)), f"a supply rail of op-amp {p.id}", p.id)
                if w:
                    out.append(w)
    return out


def node_cautions(node_voltages: dict) -> list[Warning]:
    """Cautions for solved node voltages that are numbers beyond the limits."""
    out = []
    for node, v in node_voltages.items():
        x = _number(v, {})
        if x is not None:
            w = voltage_caution(x, f"the voltage of node {node}")
            if w:
                out.append(w)
    return out


def model_warnings(circuit) -> list[Warning]:
    """Real-model keys that have no effect (rin/rout on an op-amp without gain or gbw)."""
    out = []
    for p in circuit.parts:
        if p.kind == "opamp" and p.ideal:
            unused = [k for k in ("rin", "rout") if p.get(k) is not None]
            if unused:
                out.append(Warning("real-model-unused",
                                   f"op-amp {p.id}: {' and '.join(unused)} only act in the real model; "
                                   "give gain and/or gbw to use them", p.id))
    return out


def merge(*groups) -> list[Warning]:
    """Warnings from several lists, each (code, part, message) once, in order."""
    seen, out = set(), []
    for group in groups:
        for w in group:
            key = (w.code, w.part, w.message)
            if key not in seen:
                seen.add(key)
                out.append(w)
    return out
