"""Does each op-amp have negative feedback? Decided from the circuit, loop by loop.

The ideal op-amp rule V_plus = V_minus holds only when the output feeds back to
the inputs with the sign that reduces the error: negative feedback. With only
positive feedback (a comparator with hysteresis, inputs swapped by mistake) a real
op-amp saturates or latches, and the ideal equations give a balance point that does
not happen.

Method: the loop is broken at the op-amp's output (Bode's return ratio; Franco,
Design with Operational Amplifiers and Analog Integrated Circuits, ch. 1 and 8,
feedback factor beta and loop gain T = a*beta, from memory; Gray, Hurst, Lewis and
Meyer, Analysis and Design of Analog Integrated Circuits, ch. 8, return ratio, from
memory). The independent sources are set to zero, a 1 V test source drives the
output node against the reference, the other op-amps keep their equations (or, when
that leaves the circuit undetermined because they sit inside this loop, become
voltage amplifiers of gain 10**6), and the feedback factor is

    beta(s) = V_minus(s) - V_plus(s)   per volt at the output.

The error the op-amp amplifies is V_plus - V_minus, so the loop gain is
T(s) = A(s)*beta(s): feedback is negative where beta > 0. beta is evaluated at real
s = sigma >= 0, where every capacitor (s*C) and inductor (1/(s*L)) is a positive
conductance, so beta is real. With the single-pole op-amp A(s) = wt/s the loop's
characteristic function is s + wt*beta(s) (up to the network's own, positive,
denominator); if beta(sigma) < 0 for some sigma >= 0 it is negative there for a
large wt and positive for large s, so it has a real root in the right half-plane:
the loop runs away at that rate (the intermediate-value theorem; our own argument
on top of the sources above). beta(0) is the DC loop; the largest sigma stands for
high frequencies. The check does not find complex right-half-plane poles (an
oscillator whose loop is positive only at a complex frequency).

beta depends on values, not only on the connections. Values come from the file
(``values`` overrides them); a parameter without a value takes five values spread
evenly over nine decades (1e-3 to 1e6, stratified: each parameter takes each level
once, in an order shuffled with a fixed seed): the verdict is given when the draws
agree, and "depends-on-values" when they do not.

Written by hand on NumPy: no library breaks op-amp loops; the matrix is the one
:class:`nodeterm.engine.solving.numeric.NumericModel` builds for the circuit. NumPy is imported
by the functions that use it, so writing a procedure without this check needs no NumPy.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import sympy

from nodeterm.engine.symbols import as_expr
from nodeterm.engine.errors import Warning
from nodeterm.engine.symbols import param, s

FINITE_GAIN = 1e6
"""Gain given to the other op-amps when the loop under test runs through them."""
ZERO = 1e-9
"""|beta| at or below this (volts per volt) counts as no feedback."""
SAMPLES = 5
"""Draws of the parameters that have no value (each takes 1e-3, ..., 1e6 once, in a shuffled order)."""


@dataclass(frozen=True)
class Feedback:
    """The feedback verdict for one op-amp.

    Attributes:
        opamp: the op-amp's id.
        kind: ``"negative"`` (V+ = V- applies), ``"positive"`` (the loop reinforces the
            error somewhere on s >= 0), ``"none"`` (the output does not reach the inputs),
            ``"depends-on-values"`` or ``"not-checked"`` (the model could not be built).
        beta_dc: the feedback factor at DC (per volt at the output), or None.
        beta_hf: the feedback factor at the highest frequency examined, or None.
        sigma: where beta is most negative (rad/s, real s), for ``"positive"``; else None.
        message: one sentence for the user.
    """

    opamp: str
    kind: str
    beta_dc: float | None = None
    beta_hf: float | None = None
    sigma: float | None = None
    message: str = ""

    @property
    def virtual_short(self) -> bool:
        """True when V_plus = V_minus applies to this op-amp."""
        return self.kind == "negative"


def _numeric_values(circuit, values: dict | None, rng) -> list[dict]:
    """Parameter sets with every parameter a float: file values (overridden by ``values``), draws for the rest."""
    import numpy as np
    resolved = dict(circuit.known_values())
    if values:
        resolved.update({k: as_expr(v) for k, v in values.items()})
    names = list(circuit.parameters)
    # only the values in the matrix matter: independent sources are set to zero
    used = set()
    for p in circuit.parts:
        exprs = [p.gain] + [v for _, v in p.extra]
        if p.kind not in ("voltage_source", "current_source"):
            exprs.append(p.value)
        for e in exprs:
            for x in (e if isinstance(e, tuple) else (e,)):
                used |= {str(y) for y in getattr(x, "free_symbols", ())}
    free = set()
    for n in names:
        v = resolved.get(n)
        if v is None:
            free.add(n)
        else:
            free |= {str(x) for x in v.free_symbols if str(x) in circuit.parameters}
    closure, stack = set(), [n for n in used if n in circuit.parameters]
    while stack:  # parameters the matrix depends on, through other parameters
        n = stack.pop()
        if n not in closure:
            closure.add(n)
            v = circuit.parameters[n].value
            stack += [str(x) for x in getattr(v, "free_symbols", ()) if str(x) in circuit.parameters]
    free = sorted(free & closure)
    sets = []
    levels = np.linspace(-3, 6, SAMPLES)  # stratified: each parameter takes every level once
    order = {n: rng.permutation(SAMPLES) for n in free}
    for k in range(SAMPLES if free else 1):
        draw = {n: sympy.Float(10 ** levels[order[n][k]]) for n in free}
        subs = {param(n): v for n, v in draw.items()}
        out = {}
        for n in names:
            v = resolved.get(n)
            v = draw[n] if v is None and n in draw else v
            for _ in range(len(names) + 1):
                nv = v.xreplace(subs) if v is not None else None
                if nv == v:
                    break
                v = nv
            out[n] = v
        sets.append(out)
    return sets


def _sigmas(circuit, numbers: dict) -> list[float]:
    """Real frequencies to examine: DC and a log grid around the circuit's own time scales."""
    import numpy as np
    subs = {param(n): v for n, v in numbers.items() if v is not None}
    r, c, ell = [], [], []
    for p in circuit.parts:
        if p.kind in ("resistor", "capacitor", "inductor") and p.value is not None:
            v = p.value.xreplace(subs)
            if v.is_number and v.is_extended_real and v > 0:
                {"resistor": r, "capacitor": c, "inductor": ell}[p.kind].append(float(v))
    if not c and not ell:
        return [0.0]
    r = r or [1.0]
    rates = [1 / (x * y) for x in r for y in c] + [x / y for x in r for y in ell]
    rates += [1 / math.sqrt(x * y) for x in ell for y in c]
    lo, hi = math.log10(min(rates)) - 3, math.log10(max(rates)) + 3
    count = min(100, int(4 * (hi - lo)) + 1)
    grid = list(np.logspace(lo, hi, count))
    return ([] if ell else [0.0]) + grid


def _matrices(model, sigmas: list[float], subs: dict) -> np.ndarray:
    """The model's matrix at every real s in ``sigmas``, stacked (K, n, n); ``subs`` gives every parameter a number."""
    import numpy as np
    n, K = model.size, len(sigmas)
    sig = np.asarray(sigmas, dtype=float)
    coef = np.zeros((len(model.coefficients), K))
    in_matrix = set(model.cidx[model.cols >= 0].tolist())  # the right-hand side (sources) is not needed
    for k, c in enumerate(model.coefficients):
        if k not in in_matrix:
            continue
        e = as_expr(c).xreplace(subs)
        if e.free_symbols - {s}:
            raise ValueError("a coefficient has no value")
        if e.has(s):
            coef[k] = _rational_in_s(e, sig)
        else:
            coef[k] = float(e)
    in_a = model.cols >= 0
    data = model.signs[in_a, None] * coef[model.cidx[in_a]]  # (entries, K)
    M = np.zeros((K, n, n))
    for k in range(K):
        np.add.at(M[k], (model.rows[in_a], model.cols[in_a]), data[:, k])
    return M


def _rational_in_s(e: sympy.Expr, sig: np.ndarray) -> np.ndarray:
    """A coefficient that is a rational function of s (s*C, 1/(s*L)...), evaluated at every sigma."""
    import numpy as np
    num, den = sympy.fraction(sympy.together(e))
    try:
        pn = [float(c) for c in sympy.Poly(num, s).all_coeffs()]
        pd = [float(c) for c in sympy.Poly(den, s).all_coeffs()]
    except (sympy.PolynomialError, TypeError):
        f = sympy.lambdify([s], e, modules="numpy")
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.broadcast_to(np.asarray(f(sig), dtype=float), sig.shape)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.polyval(pn, sig) / np.polyval(pd, sig)


def _betas(model, opamps, sigmas: list[float], subs: dict) -> dict[str, list[tuple[float, float | None]]]:
    """beta(sigma) of each op-amp over ``sigmas`` (None where the loop could not be solved).

    Fast path: replacing op-amp U's equation (row j) by V_out = 1 is a rank-one change of the
    circuit's matrix M, so by the Sherman-Morrison formula the driven solution is z/z[out] with
    z = M^-1 e_j, and beta = (z[minus] - z[plus])/z[out]: one solve of M serves every op-amp.
    Where M is singular, or z[out] = 0 (the loop runs through another ideal op-amp), each
    op-amp's driven matrix is solved on its own (the other op-amps at finite gain if need be).
    """
    import numpy as np
    Ms = _matrices(model, sigmas, subs)
    K, n = Ms.shape[0], Ms.shape[1]
    nidx, bidx = model.node_index, model.branch_index
    cols = [bidx[p.id] for p in opamps]
    E = np.zeros((n, len(cols)))
    E[cols, range(len(cols))] = 1.0
    Z = _solve_batch(Ms, E)  # (K, n, m), NaN where M is singular
    out: dict[str, list] = {p.id: [None] * K for p in opamps}
    for i, p in enumerate(opamps):
        zo = Z[:, nidx[p.out], i]
        zm = Z[:, nidx[p.minus], i] if p.minus in nidx else np.zeros(K)
        zp = Z[:, nidx[p.plus], i] if p.plus in nidx else np.zeros(K)
        scale = np.nanmax(np.abs(Z[:, :, i]), axis=1, initial=0.0)
        ok = np.isfinite(zo) & (np.abs(zo) > 1e-9 * scale)
        for k in np.flatnonzero(ok):
            out[p.id][k] = float((zm[k] - zp[k]) / zo[k])
    finite_ok = np.all(np.isfinite(Ms), axis=(1, 2))
    for p in opamps:
        todo = [k for k in range(K) if out[p.id][k] is None and finite_ok[k]]
        if not todo:
            continue
        others = [q for q in opamps if q.id != p.id]
        rhs = np.zeros(n)
        rhs[bidx[p.id]] = 1.0
        for finite in ((False, True) if others else (False,)):
            Mu = _driven(_finite(Ms[todo], others, nidx, bidx) if finite else Ms[todo], p, nidx, bidx)
            for row, k in enumerate(todo):
                if out[p.id][k] is not None:
                    continue
                x = _solve_scaled(Mu[row], rhs)
                if x is not None:
                    vm = x[nidx[p.minus]] if p.minus in nidx else 0.0
                    vp = x[nidx[p.plus]] if p.plus in nidx else 0.0
                    out[p.id][k] = float(vm - vp)
    return {pid: list(zip(sigmas, betas)) for pid, betas in out.items()}


def _solve_batch(Ms: np.ndarray, E: np.ndarray) -> np.ndarray:
    """Solve Ms[k] Z[k] = E for every k after row and column scaling; NaN where Ms[k] is (nearly) singular."""
    import numpy as np
    K, n = Ms.shape[0], Ms.shape[1]
    Z = np.full((K, n, E.shape[1]), np.nan)
    with np.errstate(divide="ignore", invalid="ignore"):
        r = np.abs(Ms).max(axis=2)
        S = Ms / r[:, :, None]
        c = np.abs(S).max(axis=1)
        S = S / c[:, None, :]
    good = np.all(np.isfinite(S), axis=(1, 2)) & np.all(r > 0, axis=1) & np.all(c > 0, axis=1)
    idx = np.flatnonzero(good)
    if idx.size == 0:
        return Z
    B = E[None, :, :] / r[idx, :, None]
    try:
        Y = np.linalg.solve(S[idx], B)
        solved = list(zip(idx, Y))
    except np.linalg.LinAlgError:  # one singular matrix spoils the batch: solve them one by one
        solved = []
        for k, b in zip(idx, B):
            try:
                solved.append((k, np.linalg.solve(S[k], b)))
            except np.linalg.LinAlgError:
                pass
    for k, y in solved:
        if np.all(np.isfinite(y)) and np.abs(y).max() < 1e10:  # larger means a singular matrix in rounding
            Z[k] = y / c[k][:, None]
    return Z


def _solve_scaled(M: np.ndarray, b: np.ndarray) -> np.ndarray | None:
    """Solve M x = b after scaling rows and columns to unit size; None when M is (nearly) singular.

    Conductances (1e-6 S) and gains (1e6) sit in one matrix; scaling first lets the
    condition number tell a singular loop from a badly scaled one.
    """
    import numpy as np
    r = np.max(np.abs(M), axis=1)
    if np.any(r == 0):
        return None
    Ms = M / r[:, None]
    c = np.max(np.abs(Ms), axis=0)
    if np.any(c == 0):
        return None
    Ms = Ms / c[None, :]
    if not np.isfinite(Ms).all() or np.linalg.cond(Ms) > 1e12:
        return None
    try:
        y = np.linalg.solve(Ms, b / r)
    except np.linalg.LinAlgError:
        return None
    x = y / c
    return x if np.all(np.isfinite(x)) else None


def _driven(M, p, nidx, bidx):
    """M with the op-amp's own equation replaced by 'V_out = 1' (the test source)."""
    Mu = M.copy()
    j = bidx[p.id]
    Mu[..., j, :] = 0.0
    Mu[..., j, nidx[p.out]] = 1.0
    return Mu


def _finite(M, others, nidx, bidx):
    """M with the other op-amps' equations replaced by V_out = G*(V_plus - V_minus)."""
    Mf = M.copy()
    for q in others:
        j = bidx[q.id]
        Mf[..., j, :] = 0.0
        Mf[..., j, nidx[q.out]] = 1.0
        if q.plus in nidx:
            Mf[..., j, nidx[q.plus]] -= FINITE_GAIN
        if q.minus in nidx:
            Mf[..., j, nidx[q.minus]] += FINITE_GAIN
    return Mf


def _verdict(circuit, p, samples: list[list[tuple[float, float | None]]]) -> Feedback:
    kinds, firsts = [], None
    for curve in samples:
        good = [(sg, b) for sg, b in curve if b is not None]
        if not good:
            kinds.append(("not-checked", None, None, None))
            continue
        worst = min(good, key=lambda t: t[1])
        if all(abs(b) <= ZERO for _, b in good):
            kinds.append(("none", good[0][1], good[-1][1], None))
        elif worst[1] < -ZERO:
            kinds.append(("positive", good[0][1], good[-1][1], worst[0]))
        else:
            kinds.append(("negative", good[0][1], good[-1][1], None))
        firsts = firsts or kinds[-1]
    names = {k[0] for k in kinds}
    if len(names) > 1:
        return Feedback(p.id, "depends-on-values",
                        message=f"op-amp {p.id}: whether its feedback is negative depends on the values; "
                                "give the values to decide")
    kind, dc, hf, sigma = kinds[0]
    plain = ("V+ = V- does not apply to it; a real op-amp saturates or latches, so this result does not "
             "happen")
    if kind == "none":
        msg = f"op-amp {p.id} has no feedback (its output does not reach its inputs): {plain}"
    elif kind == "positive":
        where = "at DC" if sigma == 0 else f"at s = {sigma:.3g} rad/s (real)"
        into = "the + input" if _reaches(circuit, p, p.plus) else "its inputs"
        msg = (f"op-amp {p.id} has no negative feedback (its output returns to {into} and reinforces the "
               f"error {where}): {plain}; check which input is + and which is -")
    elif kind == "negative":
        msg = f"op-amp {p.id} has negative feedback: V+ = V- applies"
    else:
        msg = f"op-amp {p.id}: its feedback could not be checked"
    return Feedback(p.id, kind, dc, hf, sigma, msg)


def _reaches(circuit, p, node: str) -> bool:
    """Some part joins the op-amp's output and ``node`` through a chain that avoids the reference."""
    if node == circuit.reference:
        return False
    adj: dict[str, set[str]] = {}
    for q in circuit.parts:
        if q.id == p.id:
            continue
        ts = list(q.terminals[:2]) if q.kind != "opamp" else [q.out]
        for a in ts:
            for b in ts:
                if a != b:
                    adj.setdefault(a, set()).add(b)
    seen, stack = {p.out}, [p.out]
    while stack:
        u = stack.pop()
        for v in adj.get(u, ()):
            if v not in seen and v != circuit.reference:
                seen.add(v)
                stack.append(v)
    return node in seen


def opamp_feedback(circuit, values: dict | None = None) -> dict[str, Feedback]:
    """The feedback verdict of every op-amp, by id (empty when the circuit has none).

    Args:
        circuit: the circuit.
        values: parameter name -> value (number or SymPy expression) overriding the file's.

    >>> from nodeterm.engine.circuit.loader import parse_circuit
    >>> amp = '''
    ... [parts]
    ... V1 = { kind = "voltage_source", nodes = ["in", "gnd"], value = "1" }
    ... R1 = { kind = "resistor", nodes = ["in", "a"], value = "10k" }
    ... R2 = { kind = "resistor", nodes = ["a", "out"], value = "100k" }
    ... U1 = { kind = "opamp", plus = "gnd", minus = "a", out = "out" }
    ... '''
    >>> opamp_feedback(parse_circuit(amp))["U1"].kind
    'negative'
    >>> swapped = amp.replace('plus = "gnd", minus = "a"', 'plus = "a", minus = "gnd"')
    >>> opamp_feedback(parse_circuit(swapped))["U1"].kind
    'positive'
    """
    import numpy as np
    opamps = [p for p in circuit.parts if p.kind == "opamp"]
    if not opamps:
        return {}
    from nodeterm.engine.solving.numeric import NumericModel  # numbers only when there is an op-amp
    rng = np.random.default_rng(12)
    branchy = [p for p in opamps if p.branch(circuit.reference) is not None]
    curves: dict[str, list[list]] = {p.id: [] for p in branchy}
    try:
        model = NumericModel(circuit)  # stamps once; each draw only substitutes numbers
        for numbers in _numeric_values(circuit, values, rng):
            subs = {param(k): v for k, v in numbers.items() if v is not None}
            for pid, curve in _betas(model, branchy, _sigmas(circuit, numbers), subs).items():
                curves[pid].append(curve)
    except Exception:  # noqa: BLE001 - a check must never stop the procedure; it says "not checked"
        return {p.id: Feedback(p.id, "not-checked", message=f"op-amp {p.id}: its feedback could not be checked")
                for p in opamps}
    out = {p.id: _verdict(circuit, p, curves[p.id]) for p in branchy}
    for p in opamps:
        out.setdefault(p.id, Feedback(p.id, "not-checked",
                                      message=f"op-amp {p.id}: feedback is not checked with rout "
                                              "(its output is not a driven node)"))
    return {p.id: out[p.id] for p in opamps}


def feedback_warnings(results: dict[str, Feedback]) -> list[Warning]:
    """A ``no-negative-feedback`` warning for every op-amp whose loop is positive or absent."""
    return [Warning("no-negative-feedback", f.message, f.opamp)
            for f in results.values() if f.kind in ("positive", "none")]
