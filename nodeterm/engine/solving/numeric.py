"""Numbers for circuits whose values are all known: sparse LU for huge circuits, batches for sweeps.

The exact path writes SymPy equations node by node; for 10,000 nodes that alone takes
far too long. Here the circuit is compiled once into a *stamp list*: every matrix entry is
``sign * coefficient`` at ``(row, column)``, where the coefficient is one of a few distinct
SymPy expressions (a resistor's ``1/R`` is shared by every resistor of the same value). Each
distinct coefficient is evaluated once, the entries become NumPy arrays, and SciPy's sparse LU
(``splu``) solves the system. The unknowns are the usual modified-node ones: every node
voltage but the reference, plus the current of every part that fixes a voltage (sources,
op-amp outputs), so the current of every part comes out of the same solve.

Parts enter through their own ``kcl_terms``/``branch``/``constraint`` (the engine's part
interface), so every kind works; two-terminal admittance parts (resistors, capacitors,
inductors) and independent sources take a shortcut that builds no SymPy expression per part.

:func:`NumericModel.solve_batch` evaluates many parameter sets (Monte Carlo) or many
frequencies (sweeps) at once with NumPy's batched dense solver; it is meant for circuits of
up to a few hundred unknowns.

Why hand-written: SciPy has the sparse solver but nothing that turns circuit parts into
matrix entries.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, field

import numpy as np
import sympy

from nodeterm.engine.symbols import as_expr
from nodeterm.engine.errors import InputError
from nodeterm.engine.circuit.parts import CurrentSource, VoltageSource, _Passive
from nodeterm.engine.symbols import I, V, param, s



@dataclass
class NumericSolution:
    """Node voltages, part currents and [find] quantities as numbers (complex when s is not 0)."""

    node_voltages: dict
    currents: dict
    find: dict
    s_value: complex = 0
    values: dict = field(default_factory=dict)


class _Ctx:
    """The part-facing context of :mod:`.parts`, with MNA unknowns for branch currents."""

    def __init__(self, reference: str, parts: dict, branch_ids: set) -> None:
        self.reference = reference
        self.parts = parts
        self.branch_ids = branch_ids

    def V(self, node: str) -> sympy.Expr:
        return sympy.Integer(0) if node == self.reference else V(node)

    def current_of(self, part_id: str) -> sympy.Expr:
        if part_id in self.branch_ids:
            return I(part_id)
        return self.parts[part_id].through(self)


class NumericModel:
    """A circuit compiled to stamps ``A[row, col] += sign*coef`` and ``b[row] += sign*coef``.

    Args:
        circuit: the circuit.
        values: parameter name -> value (number or SymPy expression); defaults to the file's values.

    >>> from nodeterm.engine.circuit.loader import parse_circuit
    >>> c = parse_circuit('''
    ... [parts]
    ... V1 = { kind = "voltage_source", nodes = ["a", "gnd"], value = "10" }
    ... R1 = { kind = "resistor", nodes = ["a", "b"], value = "1k" }
    ... R2 = { kind = "resistor", nodes = ["b", "gnd"], value = "4k" }
    ... ''')
    >>> sol = NumericModel(c).solve()
    >>> round(sol.node_voltages["b"].real, 9), round(sol.currents["R1"].real, 9)
    (8.0, 0.002)
    """

    def __init__(self, circuit, values: dict | None = None) -> None:
        self.circuit = circuit
        ref = circuit.reference
        self.reference = ref
        known = circuit.known_values()
        if values:
            known.update({k: as_expr(v) for k, v in values.items()})
        self.values = known
        self.subs = {param(k): v for k, v in known.items()}
        nodes = [n for n in circuit.nodes if n != ref]
        self.nodes = nodes
        self.node_index = {n: i for i, n in enumerate(nodes)}
        branches = [p for p in circuit.parts if p.branch(ref) is not None]
        self.branch_index = {p.id: len(nodes) + k for k, p in enumerate(branches)}
        self.size = len(nodes) + len(branches)
        ctx = _Ctx(ref, {p.id: p for p in circuit.parts}, set(self.branch_index))
        self._ctx = ctx
        coefs: dict = {}  # distinct coefficient expression -> index
        rows: list[int] = []
        cols: list[int] = []  # -1 for the right-hand side
        signs: list[float] = []
        cidx: list[int] = []

        def stamp(row: int, col: int, sign: float, coef) -> None:
            k = coefs.get(coef)
            if k is None:
                k = coefs[coef] = len(coefs)
            rows.append(row)
            cols.append(col)
            signs.append(sign)
            cidx.append(k)

        nidx = self.node_index
        row_of_constraint = {}
        admittances: dict = {}
        passive: list[tuple[str, int, int, int]] = []  # (id, node a, node b, coefficient) for currents
        for p in circuit.parts:
            br = p.branch(ref)
            if br is not None:
                j = self.branch_index[p.id]
                a, b = br
                if a != ref:
                    stamp(nidx[a], j, 1.0, sympy.Integer(1))
                if b != ref:
                    stamp(nidx[b], j, -1.0, sympy.Integer(1))
                row_of_constraint[p.id] = j
                if type(p) is VoltageSource:  # V_p - V_n = value
                    pa, pb = p.nodes
                    if pa != ref:
                        stamp(j, nidx[pa], 1.0, sympy.Integer(1))
                    if pb != ref:
                        stamp(j, nidx[pb], -1.0, sympy.Integer(1))
                    stamp(j, -1, 1.0, p.value)
                else:
                    c = p.constraint(ctx)
                    self._linear_stamps(j, c.lhs - c.rhs, 1.0, stamp)
            if isinstance(p, _Passive) and type(p).kcl_terms is _Passive.kcl_terms:
                key = (type(p), p.value)  # one SymPy admittance per distinct value, not per part
                y = admittances.get(key)
                if y is None:
                    y = admittances[key] = p.admittance()
                a, b = p.nodes[0], p.nodes[1]
                k = coefs.get(y)
                if k is None:
                    k = coefs[y] = len(coefs)
                passive.append((p.id, nidx.get(a, -1), nidx.get(b, -1), k))  # stamped below, at once
            elif type(p) is CurrentSource:
                a, b = p.nodes
                if a != ref:
                    stamp(nidx[a], -1, -1.0, p.value)
                if b != ref:
                    stamp(nidx[b], -1, 1.0, p.value)
            else:
                for node, cur in p.kcl_terms(ctx):
                    if node != ref:
                        self._linear_stamps(nidx[node], cur, 1.0, stamp)
        self.coefficients = list(coefs)
        self._passive_ids = [q[0] for q in passive]
        self._passive = np.array([q[1:] for q in passive], dtype=np.int64).reshape(-1, 3)
        # Two-terminal admittances: y at (a, a) and (b, b), -y at (a, b) and (b, a), built as arrays
        # (a 20,000-resistor mesh would otherwise make 80,000 Python calls).
        pa, pb, pk = self._passive.T
        stamps = [(pa, pa, 1.0, pa >= 0), (pa, pb, -1.0, (pa >= 0) & (pb >= 0)),
                  (pb, pb, 1.0, pb >= 0), (pb, pa, -1.0, (pa >= 0) & (pb >= 0))]
        self.rows = np.concatenate([np.array(rows, dtype=np.int64)] + [r[m] for r, _, _, m in stamps])
        self.cols = np.concatenate([np.array(cols, dtype=np.int64)] + [c[m] for _, c, _, m in stamps])
        self.signs = np.concatenate([np.array(signs, dtype=float)]
                                    + [np.full(int(m.sum()), sg) for _, _, sg, m in stamps])
        self.cidx = np.concatenate([np.array(cidx, dtype=np.int64)] + [pk[m] for *_, m in stamps])

    @functools.cached_property
    def unknown_symbols(self) -> dict:
        """The SymPy symbol of each unknown -> its column (made only for parts without a shortcut)."""
        out = {V(n): i for n, i in self.node_index.items()}
        out.update({I(pid): i for pid, i in self.branch_index.items()})
        return out

    def _linear_stamps(self, row: int, expr: sympy.Expr, sign: float, stamp) -> None:
        """Stamps of a current (or constraint residual) linear in the unknowns: sum c_j x_j + c0."""
        expr = sympy.expand(expr)
        rest = expr
        for sym in expr.free_symbols & set(self.unknown_symbols):
            c = sympy.expand(expr).coeff(sym)
            stamp(row, self.unknown_symbols[sym], sign, c)
            rest = rest - c * sym
        rest = sympy.expand(rest)
        if rest != 0:
            stamp(row, -1, -sign, rest)  # the constant moves to the right-hand side

    # --- evaluation -----------------------------------------------------------------------
    def _number(self, expr, s_value: complex) -> complex:
        e = expr.xreplace(self.subs)
        if e.free_symbols - {s}:
            missing = sorted(str(x) for x in e.free_symbols - {s})
            raise InputError(f"no value for {', '.join(missing)}: numbers need every parameter",
                             hint=f"give {missing[0]} a value in [parameters] or with --set {missing[0]}=...",
                             file=self.circuit.path)
        try:
            return complex(e.xreplace({s: s_value}) if e.has(s) else e)
        except (TypeError, ZeroDivisionError):
            raise InputError(f"{expr} has no finite value at s = {s_value}",
                             hint="an inductor is a short at DC: give a frequency (--frequency)",
                             file=self.circuit.path) from None

    def coefficient_values(self, s_value: complex = 0) -> np.ndarray:
        vals = np.array([self._number(c, s_value) for c in self.coefficients], dtype=complex)
        if not np.all(np.isfinite(vals)):
            raise InputError(f"a part has no finite value at s = {s_value}",
                             hint="an inductor is a short and a capacitor an open at DC; give a frequency",
                             file=self.circuit.path)
        return vals

    def matrix(self, s_value: complex = 0, with_coefficients: bool = False):
        """The sparse matrix A (CSC) and the right-hand side b at one value of s."""
        from scipy.sparse import coo_matrix
        vals = self.coefficient_values(s_value)
        if not np.any(vals.imag):
            vals = vals.real
        data = self.signs * vals[self.cidx]
        in_a = self.cols >= 0
        n = self.size
        A = coo_matrix((data[in_a], (self.rows[in_a], self.cols[in_a])), shape=(n, n)).tocsc()
        b = np.zeros(n, dtype=data.dtype)
        np.add.at(b, self.rows[~in_a], data[~in_a])
        return (A, b, vals) if with_coefficients else (A, b)

    def solve(self, s_value: complex = 0) -> NumericSolution:
        """Solve once (sparse LU) and derive every current and [find] quantity."""
        from scipy.sparse.linalg import splu
        A, b, coef = self.matrix(s_value, with_coefficients=True)
        if self.size == 0:
            x = np.zeros(0)
        else:
            try:
                x = splu(A).solve(b)
            except RuntimeError:  # "Factor is exactly singular"
                raise InputError("the node equations are singular: some voltage or current is not "
                                 "determined by the circuit", hint="solve it exactly (without --numeric) "
                                 "for an explanation in circuit terms", file=self.circuit.path) from None
        return self._solution(x, s_value, coef)

    def _solution(self, x: np.ndarray, s_value: complex, coef=None) -> NumericSolution:
        ref = self.reference
        volts = {ref: 0.0}
        volts.update(zip(self.nodes, x[:len(self.nodes)].tolist()))
        generic = len(self._passive_ids) + len(self.branch_index) < len(self.circuit.parts)
        unknowns = self.unknown_symbols if generic or self.circuit.find else {}
        if coef is None:
            coef = self.coefficient_values(s_value)
        xv = np.append(x[:len(self.nodes)], 0.0)  # index -1: the reference
        pa, pb, pk = self._passive.T
        passive = dict(zip(self._passive_ids, ((xv[pa] - xv[pb]) * coef[pk]).tolist()))
        xl = x.tolist()
        branch = {pid: xl[j] for pid, j in self.branch_index.items()}
        currents = {}

        def lookup(sym):
            i = unknowns.get(sym)
            return None if i is None else xl[i]

        for p in self.circuit.parts:
            pid = p.id
            value = passive.get(pid)
            if value is None:
                value = branch.get(pid)
            if value is None:
                value = self._evaluate(p.current(self._ctx, None), lookup, s_value)
            currents[pid] = value
        find = {}
        if self.circuit.find:
            def find_lookup(sym):
                if sym.name.startswith("I_") and sym.name[2:] in currents:
                    return currents[sym.name[2:]]
                return lookup(sym)
            find = {name: self._evaluate(item.expr, find_lookup, s_value)
                    for name, item in self.circuit.find.items()}
        return NumericSolution(volts, currents, find, s_value, dict(self.values))

    def _evaluate(self, expr, lookup, s_value: complex):
        """A current or [find] expression at the solution; ``lookup(symbol)`` gives an unknown's value."""
        e = expr.xreplace(self.subs).xreplace({s: s_value})
        found = {}
        for k in e.free_symbols:
            v = lookup(k)
            if v is not None:
                found[k] = as_expr(complex(v))
        e = e.xreplace(found)
        try:
            return complex(e)
        except (TypeError, ZeroDivisionError):
            return complex("nan")

    # --- batches ----------------------------------------------------------------------------
    def solve_batch(self, values: dict | None = None, s_values=0, chunk: int = 8192) -> np.ndarray:
        """Solve many cases at once: parameter arrays (Monte Carlo) and/or an array of s (sweeps).

        Args:
            values: parameter name -> array of N samples (scalars broadcast).
            s_values: a number or an array of N values of s.
            chunk: cases per batched dense solve (bounds memory at chunk*size**2 numbers).

        Returns:
            Array of shape (N, size): the unknowns (node voltages in ``self.nodes`` order, then
            branch currents), complex when s is not 0.
        """
        values = values or {}
        arrays = [np.asarray(v) for v in values.values()] + [np.asarray(s_values)]
        N = max([a.size for a in arrays] + [1])
        names = list(values)
        syms = [param(n) for n in names] + [s]
        fixed = {k: v for k, v in self.subs.items() if str(k) not in values}
        funcs = []
        for c in self.coefficients:
            e = c.xreplace(fixed)
            missing = e.free_symbols - set(syms)
            if missing:
                raise InputError(f"no value for {', '.join(sorted(map(str, missing)))}",
                                 hint="give every parameter a value", file=self.circuit.path)
            funcs.append(sympy.lambdify(syms, e, modules="numpy"))
        args = [np.broadcast_to(np.asarray(values[n], dtype=float), (N,)) for n in names]
        args.append(np.broadcast_to(np.asarray(s_values), (N,)))
        coef = np.empty((len(funcs), N), dtype=complex)
        for k, f in enumerate(funcs):
            coef[k] = np.broadcast_to(f(*args), (N,))
        real = not np.any(coef.imag)
        if real:
            coef = coef.real
        from scipy.sparse import csr_matrix
        n = self.size
        ia = np.flatnonzero(self.cols >= 0)
        ib = np.flatnonzero(self.cols < 0)
        flat = self.rows[ia] * n + self.cols[ia]
        scatter_a = csr_matrix((np.ones(ia.size), (flat, np.arange(ia.size))), shape=(n * n, ia.size))
        scatter_b = csr_matrix((np.ones(ib.size), (self.rows[ib], np.arange(ib.size))), shape=(n, ib.size))
        out = np.empty((N, n), dtype=coef.dtype)
        for start in range(0, N, chunk):
            stop = min(N, start + chunk)
            data = self.signs[:, None] * coef[self.cidx, start:stop]  # (entries, cases)
            A = (scatter_a @ data[ia]).T.reshape(-1, n, n)
            b = (scatter_b @ data[ib]).T
            try:
                out[start:stop] = np.linalg.solve(A, b[..., None])[..., 0]
            except np.linalg.LinAlgError:
                raise InputError("the node equations are singular for some sample",
                                 hint="check the tolerances: a value may reach 0", file=self.circuit.path) from None
        return out

    def node_column(self, node: str) -> int:
        """Column of ``node``'s voltage in the arrays of :meth:`solve_batch`."""
        return self.node_index[node]


def number_text(value) -> str:
    """A number as a decimal string (``repr`` of a float: round-trips exactly; complex as a+bj).

    >>> number_text(0.1), number_text(complex(1, -2)), number_text(complex(3, 0))
    ('0.1', '(1-2j)', '3.0')
    """
    value = complex(value)
    if value.imag == 0:
        return repr(float(value.real))
    return str(value)


def parse_values(circuit, sets: dict) -> dict:
    """Parse ``--set`` values (text in the expression language) for the numeric path.

    Raises:
        InputError: for an unknown name or a bad value.
    """
    from nodeterm.engine.circuit.expr import ExpressionError, parse_expression
    params = circuit.parameters
    out = {}
    for name, raw in sets.items():
        if name not in params:
            raise InputError(f"unknown parameter {name!r}", hint="parameters: " + (", ".join(params) or "(none)"),
                             file="--set")
        try:
            out[name] = parse_expression(str(raw), lambda n: param(n) if n in params else None)
        except ExpressionError as err:
            raise InputError(f"value for {name}: {err.message} in {str(raw)!r}", hint=err.hint,
                             file="--set") from None
    return out
