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

from dataclasses import dataclass, field

import sympy

from nodeterm.engine.symbols import as_expr
from sympy.core.exprtools import _keep_coeff
from sympy.polys.matrices import DomainMatrix
from sympy.polys.matrices.exceptions import DMNonInvertibleMatrixError
from sympy.polys.polyutils import _sort_gens

from nodeterm.engine.solving import fastsolve
from nodeterm.engine.errors import SolveError
from nodeterm.engine.symbols import I, V, param, s


@dataclass(frozen=True)
class Solution:
    """The exact answer.

    Attributes:
        node_voltages: node -> voltage (reference included).
        currents: part id -> current (op-amp: leaving the output pin into node out).
        find: name -> value of each [find] quantity.
        is_reactive: True when any result depends on s.
        values: parameter values that were substituted.
    """

    node_voltages: dict
    currents: dict
    find: dict
    is_reactive: bool = False
    values: dict = field(default_factory=dict)


FACTOR_LIMIT = 40  # total terms up to which coefficients are factored for readability


def canonical(expr: sympy.Expr) -> sympy.Expr:
    """One fraction; numerator and denominator collected in s when reactive.

    Small results get their coefficients factored, as an engineer writes them
    (``C2*(R1 + R2)*s``); large ones stay expanded so that building them stays cheap.

    >>> R, C, R1, R2, C1, C2 = sympy.symbols("R C R1 R2 C1 C2")
    >>> canonical(1/(1 + 1/(s*R*C)))
    C*R*s/(C*R*s + 1)
    >>> canonical(1/(s**2*C1*C2*R1*R2 + s*C2*R1 + s*C2*R2 + 1))
    1/(C1*C2*R1*R2*s**2 + C2*s*(R1 + R2) + 1)
    >>> canonical(sympy.Rational(1, 250) + 2*R/125)
    (4*R + 1)/250
    """
    expr = as_expr(expr)
    if expr.is_Number:
        return expr
    expr = sympy.cancel(sympy.together(expr))
    num, den = sympy.fraction(expr)
    return tidy_fraction(num, den)


def tidy_fraction(num: sympy.Expr, den: sympy.Expr) -> sympy.Expr:
    """The printed form of a fraction already in lowest terms (the last half of :func:`canonical`).

    >>> R = sympy.Symbol("R")
    >>> tidy_fraction(R*s + R, 2*s)
    (R*s + R)/(2*s)
    """
    num, den = sympy.expand(num), sympy.expand(den)
    small = len(sympy.Add.make_args(num)) + len(sympy.Add.make_args(den)) <= FACTOR_LIMIT
    if num.has(s) or den.has(s):
        func = factor_poly if small else (lambda x: x)
        num, den = collect_s(num, func), collect_s(den, func)
    elif small:
        num, den = factor_poly(num), factor_poly(den)
    return num / den if den != 1 else num


def collect_s(expr: sympy.Expr, func) -> sympy.Expr:
    """``sympy.collect(expr, s, func=func)`` for an expanded polynomial in s, built from its Poly terms.

    >>> R, C = sympy.symbols("R C")
    >>> collect_s(R*C*s**2 + R*s + C*s + 1, sympy.factor)
    C*R*s**2 + s*(C + R) + 1
    """
    poly = sympy.Poly(expr, s)
    return sympy.Add(*[func(c) * s**k for (k,), c in poly.terms()])


def factor_poly(expr: sympy.Expr) -> sympy.Expr:
    """``sympy.factor(expr)``, the same expression, with FLINT doing the factoring when it can.

    SymPy factors multivariate polynomials in Python; FLINT (python-flint, a dependency) does it
    in C, several times faster on the coefficients of a typical op-amp result. The factors are put
    together as ``sympy.factor`` does (SymPy's generator order, ``_keep_coeff`` for the content),
    so the printed form does not change; anything but a polynomial with integer coefficients is
    left to ``sympy.factor``.

    >>> R1, R2 = sympy.symbols("R1 R2")
    >>> factor_poly(-6*R1 - 6*R2)
    -6*(R1 + R2)
    """
    if fastsolve.flint is None or expr.is_Number:
        return sympy.factor(expr)
    gens = list(_sort_gens(list(expr.free_symbols)))
    try:
        poly = sympy.Poly(expr, *gens)
    except sympy.PolynomialError:
        return sympy.factor(expr)
    if poly.domain != sympy.ZZ or not gens:
        return sympy.factor(expr)
    ctx = fastsolve.flint.fmpz_mpoly_ctx.get(tuple(f"x{i}" for i in range(len(gens))), "lex")
    try:
        content, factors = ctx.from_dict({m: int(c) for m, c in poly.terms()}).factor()
    except Exception:  # noqa: BLE001 - python-flint 0.9 overflows sorting factors with huge coefficients
        return sympy.factor(expr)
    product = []
    for f, mult in factors:
        terms = [sympy.Mul(sympy.Integer(int(c)), *[g**k for g, k in zip(gens, mono) if k])
                 for mono, c in f.to_dict().items()]
        product.append(sympy.Add(*terms) ** mult)
    return _keep_coeff(sympy.Integer(int(content)), sympy.Mul(*product))


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


def peel_order(nodes, ref: str, branches: dict) -> list[tuple[str, str, str, str]]:
    """The order in which KCL gives each source-branch current, peeling the source forest from its leaves.

    ``branches`` maps a part id to its (a, b) nodes and is emptied of the parts it orders; each entry
    of the result is (part id, the node whose KCL gives its current, a, b).

    >>> br = {"V1": ("a", "gnd"), "V2": ("b", "a")}
    >>> peel_order(["gnd", "a", "b"], "gnd", br)
    [('V2', 'b', 'b', 'a'), ('V1', 'a', 'a', 'gnd')]
    """
    order = []
    progress = True
    while branches and progress:
        progress = False
        for node in nodes:
            if node == ref:
                continue
            incident = [pid for pid, (a, b) in branches.items() if node in (a, b)]
            if len(incident) != 1:
                continue
            pid = incident[0]
            a, b = branches.pop(pid)
            order.append((pid, node, a, b))
            progress = True
    return order


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

    from nodeterm.engine.equations.system import _Context  # the same context the equations were written with
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


def diagnose_singular(system, m) -> SolveError:
    """Explain in circuit terms why the node equations have no unique solution."""
    from nodeterm.engine.solving.diagnose import explain_singular
    return explain_singular(system, m)
