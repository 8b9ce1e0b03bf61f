"""Exact solution of a recorded :class:`~.system.System`, and every derived quantity.

The reduced system is solved fraction-free over a polynomial ring with SymPy's
``DomainMatrix`` (rows cleared of denominators, then ``solve_den``), which is
far faster than ``sympy.solve`` on symbolic node equations. Results are brought
to one canonical form: a single fraction, numerator and denominator collected
in ``s`` when the circuit is reactive.

When the equations are singular the cause is explained in circuit terms
(:func:`diagnose_singular`).
"""

from __future__ import annotations

import sympy

from nodeterm.engine.symbols import as_expr
from sympy.polys.matrices import DomainMatrix
from sympy.polys.matrices.exceptions import DMNonInvertibleMatrixError

from nodeterm.engine.equations.procedure import _Context
from nodeterm.engine.solving import fastsolve
from nodeterm.engine.solving.forms import canonical
from nodeterm.engine.solving.solution import Solution, diagnose_singular, peel_order
from nodeterm.engine.symbols import I, V, param, s


def _dummies_for_constants(M: sympy.Matrix) -> tuple[sympy.Matrix, dict]:
    """Replace pi and roots by dummy symbols so the matrix lives in a polynomial ring."""
    atoms = {a for a in M.atoms(sympy.Pow) if a.exp.is_Rational and not a.exp.is_Integer and a.base.is_number}
    atoms |= set(M.atoms(sympy.NumberSymbol))
    back = {}
    fwd = {}
    for a in atoms:
        d = sympy.Dummy("k")
        fwd[a] = d
        back[d] = a
    return (M.xreplace(fwd) if fwd else M), back


def solve_linear(A: sympy.Matrix, b: sympy.Matrix) -> list[sympy.Expr] | None:
    """Solve A x = b exactly; None when A is singular.

    >>> x, y = sympy.symbols("x y")
    >>> solve_linear(sympy.Matrix([[x, 1], [1, -1]]), sympy.Matrix([1, 0]))
    [1/(x + 1), 1/(x + 1)]
    """
    n = A.shape[1]
    if A.shape[0] != n:
        return None
    if n == 0:
        return []
    if fastsolve.flint is not None:
        try:
            return fastsolve.solve_linear_fast(A, b)
        except fastsolve.Unsupported:
            pass
    return solve_linear_sympy(A, b)


def solve_linear_sympy(A: sympy.Matrix, b: sympy.Matrix) -> list[sympy.Expr] | None:
    """The pure-SymPy path of :func:`solve_linear` (``DomainMatrix.solve_den``); same answers."""
    n = A.shape[1]
    if A.shape[0] != n:
        return None
    if n == 0:
        return []
    M, back = _dummies_for_constants(A.row_join(b))
    dM = DomainMatrix.from_Matrix(M)
    if dM.domain.is_Field and not dM.domain.is_Exact:  # floats would make exactness meaningless
        dM = DomainMatrix.from_Matrix(M.applyfunc(sympy.nsimplify))
    if dM.domain.is_Field and dM.domain.is_Exact and not dM.domain.is_QQ:
        _, dM = dM.clear_denoms_rowwise(convert=True)
    elif dM.domain.is_QQ:
        pass
    dA, db = dM[:, :n], dM[:, n:]
    try:
        xnum, den = dA.solve_den(db)
    except DMNonInvertibleMatrixError:
        return None
    K = dA.domain
    den_expr = K.to_sympy(den)
    out = []
    for i in range(n):
        value = K.to_sympy(xnum[i, 0].element) / den_expr
        if back:
            value = value.xreplace(back)
        out.append(canonical(value))
    return out


def solve_system(system) -> Solution:
    """Solve a :class:`~.system.System` and derive every current and [find] quantity.

    Uses the FLINT polynomial path (:mod:`.fastsolve`) when it applies, else the SymPy path below.
    """
    if fastsolve.flint is not None:
        try:
            return fastsolve.solve_system_fast(system)
        except fastsolve.Unsupported:
            pass
    return solve_system_sympy(system)


def solve_system_sympy(system) -> Solution:
    """The pure-SymPy path of :func:`solve_system` (same answers, much slower on big circuits)."""
    circuit = system.circuit
    m = system.matrix()
    if len(m.rows) != len(m.cols):
        raise diagnose_singular(system, m)
    x = solve_linear(m.A, m.b)
    if x is None:
        raise diagnose_singular(system, m)
    values = dict(zip(system.reduced_unknowns, x))
    for sym, expr in system.eliminated.items():
        values[sym] = canonical(expr.xreplace(values))
    pvals = {param(n): v for n, v in system.values.items()}
    ref = circuit.reference
    voltages = {ref: sympy.Integer(0)}
    for n in circuit.nodes:
        if n != ref:
            voltages[n] = values[V(n)]

    ctx = _Context(circuit, set(system.needed))
    full = {**{V(n): v for n, v in voltages.items() if n != ref}, **values}

    def ev(expr: sympy.Expr) -> sympy.Expr:
        return canonical(expr.xreplace(full).xreplace(pvals))

    currents: dict[str, sympy.Expr] = {}
    leaving: dict[str, sympy.Expr] = {n: sympy.Integer(0) for n in circuit.nodes}
    unresolved: dict[str, tuple[str, str]] = {}
    for p in circuit.parts:
        br = p.branch(ref)
        if br is None:
            currents[p.id] = ev(p.current(ctx, None))
            for node, cur in p.kcl_terms(ctx):
                leaving[node] += cur
        else:
            for node, cur in p.kcl_terms(ctx):  # e.g. the rin current of a real op-amp
                leaving[node] += cur
            if p.id in system.needed:
                currents[p.id] = values[I(p.id)]
                leaving[br[0]] += I(p.id)
                leaving[br[1]] -= I(p.id)
            else:
                unresolved[p.id] = br
    leaving = {n: expr.xreplace(full).xreplace(pvals) for n, expr in leaving.items()}
    for pid, node, a, b in peel_order(circuit.nodes, ref, unresolved):
        # branch current x flows a -> b inside the part: it leaves node a and enters node b
        x = canonical(-leaving[node] if node == a else leaving[node])
        currents[pid] = x
        leaving[a] += x
        leaving[b] -= x
    for pid in unresolved:  # cannot happen for a forest; keep the report honest if it does
        currents[pid] = sympy.nan
    currents = {p.id: currents[p.id] for p in circuit.parts}
    cmap = {I(pid): v for pid, v in currents.items()}
    find = {}
    for name, item in circuit.find.items():
        find[name] = canonical(item.expr.xreplace(full).xreplace(cmap).xreplace(pvals))
    everything = list(voltages.values()) + list(currents.values()) + list(find.values())
    reactive = any(as_expr(v).has(s) for v in everything)
    return Solution(voltages, currents, find, reactive, dict(system.values))
