"""Limits an op-amp must respect: output swing (``rails``) and output current (``max_current``).

With every value known, each op-amp's output voltage and output current (the current of
the skipped output KCL, ``Solution.currents[id]``) are checked against its limits. In a
circuit with s the check is made at DC (s = 0) and, treating source values as AC
amplitudes, at the peak of |V_out(jw)| and |I_out(jw)| over the frequency range.

With one parameter left symbolic (a load), :func:`compliance_range` solves the limit
inequalities exactly with SymPy's ``solveset`` and returns the set of load values,
taken as positive (a resistance), over which every op-amp stays inside its limits.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np
import sympy

from nodeterm.engine.symbols import as_expr
from nodeterm.engine.errors import InputError, Warning
from nodeterm.engine.symbols import param, s
from nodeterm.engine.analysis.realopamp import prepared
from nodeterm.engine.analysis.transfer import frequency_response, transfer_function
from nodeterm.engine.solving.solve import solve_system


@dataclass(frozen=True)
class OpAmpLimits:
    """One op-amp's operating point against its limits.

    Attributes:
        part: op-amp id.
        v_out, i_out: output voltage and output current (exact; current leaves the output pin).
        rails: (low, high) or None.
        max_current: or None.
        v_peak, i_peak: peak magnitudes over frequency (reactive circuits only), else None.
        problems: one sentence per limit exceeded.
        checked: False when a value is still symbolic, so nothing could be checked.
    """

    part: str
    v_out: sympy.Expr
    i_out: sympy.Expr
    rails: tuple | None
    max_current: sympy.Expr | None
    v_peak: float | None
    i_peak: float | None
    problems: tuple[str, ...]
    checked: bool

    @property
    def ok(self) -> bool:
        return self.checked and not self.problems


def _num(e) -> float | None:
    e = as_expr(e)
    if e.is_number and e.is_extended_real:
        return float(e)
    return None


def _at_dc(e: sympy.Expr) -> sympy.Expr:
    e = as_expr(e)
    return transfer_function(e).dc_gain if e.has(s) else e


def _peak(e: sympy.Expr) -> float | None:
    e = as_expr(e)
    if not e.has(s) or e.free_symbols - {s}:
        return None
    r = frequency_response(transfer_function(e), points=800)
    finite = np.abs(r.h)[np.isfinite(r.h)]
    return float(finite.max()) if finite.size else None


def limited_opamps(circuit) -> list:
    return [p for p in circuit.parts if p.kind == "opamp" and (p.get("rails") or p.get("max_current") is not None)]


def check_limits(system, solution) -> list[OpAmpLimits]:
    """Check every op-amp that has ``rails`` or ``max_current`` (values substituted in ``system``)."""
    pvals = {param(n): v for n, v in system.values.items()}
    out = []
    for p in limited_opamps(system.circuit):
        v, i = solution.node_voltages[p.out], solution.currents[p.id]
        rails = tuple(as_expr(r).xreplace(pvals) for r in p.get("rails")) if p.get("rails") else None
        imax = p.get("max_current")
        imax = as_expr(imax).xreplace(pvals) if imax is not None else None
        v_dc, i_dc = _at_dc(v), _at_dc(i)
        v_pk, i_pk = _peak(v), _peak(i)
        problems: list[str] = []
        checked = True
        if rails:
            low, high, vd = _num(rails[0]), _num(rails[1]), _num(v_dc)
            if None in (low, high) or (vd is None and v_dc.is_finite is not False):
                checked = False
            elif v_dc.is_finite is False:
                problems.append(f"{p.id} output is unbounded at DC (a pole at s = 0): it runs into a rail")
            else:
                if not low <= vd <= high:
                    problems.append(f"{p.id} output {vd:.4g} V is outside its rails [{low:g}, {high:g}] V")
                elif v_pk is not None and v_pk > min(high, -low if low < 0 else high):
                    problems.append(f"{p.id} output peak {v_pk:.4g} V over frequency exceeds its swing "
                                    f"[{low:g}, {high:g}] V (source values read as amplitudes)")
        if imax is not None:
            im, idc = _num(imax), _num(i_dc)
            if im is None or (idc is None and i_dc.is_finite is not False):
                checked = False
            elif i_dc.is_finite is False:
                problems.append(f"{p.id} output current is unbounded at DC")
            else:
                if abs(idc) > im:
                    problems.append(f"{p.id} output current {idc:.4g} A exceeds max_current {im:g} A")
                elif i_pk is not None and i_pk > im:
                    problems.append(f"{p.id} output current peak {i_pk:.4g} A over frequency exceeds "
                                    f"max_current {im:g} A")
        out.append(OpAmpLimits(p.id, v, i, rails, imax, v_pk, i_pk, tuple(problems), checked))
    return out


def limit_warnings(checks: list[OpAmpLimits]) -> list[Warning]:
    """One warning per limit exceeded (code ``opamp-limit``)."""
    return [Warning("opamp-limit", msg, c.part) for c in checks for msg in c.problems]


@dataclass(frozen=True)
class Compliance:
    """The load values over which every op-amp stays inside its limits.

    Attributes:
        load: the load parameter's name.
        allowed: a SymPy set of load values (EmptySet when none).
        per_opamp: op-amp id -> its own allowed set.
        find: each [find] quantity as a function of the load (at DC).
    """

    load: str
    allowed: sympy.Set
    per_opamp: dict
    find: dict


def compliance_range(circuit, values: dict | None = None, load: str | None = None) -> Compliance:
    """Solve the limit inequalities for the one parameter left symbolic (the load).

    Args:
        circuit: the circuit.
        values: parameter values overriding the file (the load's own value is dropped).
        load: the load parameter; by default the only parameter left without a value.

    Raises:
        InputError: when the load is not a parameter, or not exactly one parameter is left symbolic.
    """
    values = dict(values or {})
    if load is not None and load not in circuit.parameters:
        raise InputError(f"--load {load!r} is not a parameter of the circuit",
                         hint="parameters: " + ", ".join(circuit.parameters), file=circuit.path)
    from nodeterm.engine.values import numeric_values
    raw = {n: p.value for n, p in circuit.parameters.items() if p.value is not None and n != load}
    circuit_wo_load = replace(circuit, parameters={n: (replace(p, value=None) if n == load else p)
                                                   for n, p in circuit.parameters.items()})
    known = numeric_values(circuit_wo_load, {n: v for n, v in values.items() if n != load}) if raw or values else {}
    from nodeterm.engine.equations.system import build_system
    system = build_system(circuit).substitute(known) if known else build_system(circuit)
    sol = solve_system(system)
    opamps = limited_opamps(circuit)
    leftover = set()
    for p in opamps:
        for e in (sol.node_voltages[p.out], sol.currents[p.id]):
            leftover |= {str(x) for x in _at_dc(e).free_symbols}
    if load is None:
        if len(leftover) != 1:
            raise InputError("the load range needs exactly one parameter left without a value; "
                             f"found {', '.join(sorted(leftover)) or 'none'}",
                             hint="give the others with --set NAME=VALUE, or name the load with --load NAME",
                             file=circuit.path)
        load = leftover.pop()
    elif leftover - {load}:
        raise InputError("parameters without a value besides the load: " + ", ".join(sorted(leftover - {load})),
                         hint="give them with --set NAME=VALUE", file=circuit.path)
    x = sympy.Symbol(load, positive=True)
    pvals = {param(n): v for n, v in system.values.items()}
    domain = sympy.Interval.open(0, sympy.oo)
    per: dict[str, sympy.Set] = {}
    for p in opamps:
        allowed = domain
        v = _at_dc(sol.node_voltages[p.out]).xreplace({param(load): x})
        i = _at_dc(sol.currents[p.id]).xreplace({param(load): x})
        if p.get("rails"):
            low, high = (as_expr(r).xreplace(pvals) for r in p.get("rails"))
            allowed &= sympy.solveset(v >= low, x, domain)
            allowed &= sympy.solveset(v <= high, x, domain)
        if p.get("max_current") is not None:
            im = as_expr(p.get("max_current")).xreplace(pvals)
            allowed &= sympy.solveset(i <= im, x, domain)
            allowed &= sympy.solveset(i >= -im, x, domain)
        per[p.id] = allowed
    total = domain
    for a in per.values():
        total &= a
    find = {n: _at_dc(f) for n, f in sol.find.items()}
    return Compliance(load, total, per, find)
