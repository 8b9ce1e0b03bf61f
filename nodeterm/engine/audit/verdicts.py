"""Audit of a hand derivation: does each claim of the engineer agree with the node equations?

A claim is either

* a **claimed equation** ``"lhs = rhs"`` (any scaling or arrangement, possibly with
  constraints already substituted), or
* a **claimed result**: an expression under a ``[find]`` name.

:func:`audit_claims` gives one :class:`Verdict` per claim.

An equation **holds** when it is satisfied by the exact solution. It is then a
linear combination of the generated equations (the generated set determines
the solution, so any linear equation true at the solution is one); the
coefficients are found exactly by solving ``A^T lambda = c`` with the same
fraction-free solver as the circuit, and the verdict names the equation it
matches, its scale, and the constraints (known voltages, op-amp input
equalities) used on the way.

An equation that **fails** is compared with every generated equation and
explained part by part against the closest one (:mod:`.closest_equation`, on the
linear forms of :mod:`.claim_forms`), with a numeric example.

A claimed result is compared symbolically (``cancel`` decides for rational
functions); when the expression has roots or other non-rational atoms and
simplification does not settle it, at several random points (and the verdict
says so). A wrong result is shown beside the solved one with their ratio or
difference and a likely cause (sign, factor, swapped or mixed-up parameters;
:mod:`.result_causes`).

Written here because no library compares a hand derivation with a system of
equations and explains the difference in terms of circuit parts.

>>> from nodeterm.engine.circuit.loader import parse_circuit
>>> from nodeterm.engine.equations.system import build_system
>>> c = parse_circuit('''
... [parameters]
... Vin = ""
... R1 = ""
... R2 = ""
... [parts]
... Vs = { kind = "voltage_source", nodes = ["in", "gnd"], value = "Vin" }
... Ra = { kind = "resistor", nodes = ["in", "inv"], value = "R1" }
... Rb = { kind = "resistor", nodes = ["inv", "out"], value = "R2" }
... U1 = { kind = "opamp", plus = "gnd", minus = "inv", out = "out" }
... [find]
... gain = "V_out/V_in"
... ''')
>>> sys = build_system(c)
>>> audit_claim(sys, "k", "R2*(V_inv - V_in) + R1*(V_inv - V_out) = 0").status
'holds'
>>> v = audit_claim(sys, "k", "(V_inv - V_in)/R1 - (V_inv - V_out)/R2 = 0")
>>> v.status, v.matches
('fails', ('KCL at inv',))
>>> print(v.details["differences"][0])
sign error on the term from Rb: it is (V_inv - V_out)/R2 (current leaving inv through Rb)
>>> audit_claim(sys, "gain", "-R1/R2").details["cause"]
'R1 and R2 are swapped'
"""

from __future__ import annotations

from dataclasses import dataclass, field

import sympy

from nodeterm.engine.symbols import as_expr
from nodeterm.engine.audit.claim_forms import _ONE, _linear, _r, _t, _zero
from nodeterm.engine.audit.closest_equation import HELPER_KINDS, PRIMARY_KINDS, _closest
from nodeterm.engine.circuit.expr import ExpressionError, parse_expression
from nodeterm.engine.circuit.loader import quantity_resolver
from nodeterm.engine.audit.result_causes import _NUMERIC_POINTS, _example, _is_zero, _result_cause
from nodeterm.engine.equations.procedure import _Context
from nodeterm.engine.solving.solve import solve_linear
from nodeterm.engine.symbols import I, V, param
from nodeterm.engine.solving.solve import solve_system

HOLDS, FAILS, ERROR = "holds", "fails", "error"


@dataclass(frozen=True)
class Verdict:
    """The audit's answer for one claim.

    Attributes:
        name: the claim's key (``[hand]`` key or the name typed in the UI).
        status: "holds", "fails" or "error" (cannot be checked: bad claim).
        kind: "equation" or "result".
        message: one short, specific sentence.
        matches: labels of the generated equations it matches (holds) or is closest to (fails).
        step: 1-based number of the step those equations belong to, or None.
        details: plain data (strings, lists, dicts) for reports: ``claim``, ``combination``,
            ``differences``, ``example``, ``claimed``, ``solved``, ``ratio``, ``difference``,
            ``cause``, ``method``, ``scale``, ``step_title``...
        line, column: where the claim is in the file (1-based), when it came from a file.
        text: the claim as written.
    """

    name: str
    status: str
    kind: str
    message: str
    matches: tuple[str, ...] = ()
    step: int | None = None
    details: dict = field(default_factory=dict)
    line: int | None = None
    column: int | None = None
    text: str = ""

    @property
    def ok(self) -> bool:
        return self.status == HOLDS


class _BadClaim(Exception):
    def __init__(self, message: str, column: int | None = None) -> None:
        super().__init__(message)
        self.message = message
        self.column = column


class Auditor:
    """Checks claims against one system and its exact solution (built once, reused per claim).

    Args:
        system: the recorded node-voltage procedure (parameter substitutions included).
        solution: its solution; solved here when not given (may raise SolveError).
    """

    def __init__(self, system, solution=None) -> None:
        self.system = system
        c = self.circuit = system.circuit
        self.solution = solution if solution is not None else solve_system(system)
        self.pvals = {param(n): v for n, v in system.values.items()}
        self._names: list[str] = []
        base = quantity_resolver(c.parameters, c.nodes, c.part_ids)

        def resolve(name: str):
            value = base(name)
            if value is None:
                self._names.append(name)
            return value

        self.resolve = resolve
        ref = c.reference
        self.quantities = {V(n) for n in c.nodes} | {I(p) for p in c.part_ids}
        self.sol = {V(n): v for n, v in self.solution.node_voltages.items()}
        self.sol.update({I(p): v for p, v in self.solution.currents.items()})
        ctx = _Context(c, set(system.needed))
        self.currents = {I(p.id): p.current(ctx, None) for p in c.parts if p.branch(ref) is None}
        self.xs = list(system.unknowns)
        self.equations = [e.subs(self.pvals) for e in system.equations]
        self.elim = {k: as_expr(v).xreplace(self.pvals) for k, v in system.eliminated.items()}
        self.reduced_xs = list(system.reduced_unknowns)
        self.step_of: dict[str, int] = {}
        for i, step in enumerate(system.steps, start=1):
            if step.kind in ("sources", "kcl", "opamps"):
                for e in step.equations:
                    self.step_of.setdefault(e.label, i)
        self._forms = None

    # --- parsing ------------------------------------------------------------
    def _parse(self, text: str, offset: int, base_column: int | None) -> sympy.Expr:
        self._names = []
        try:
            return parse_expression(text, self.resolve)
        except ExpressionError as err:
            col = None
            if err.column:
                col = (base_column + offset + err.column - 1) if base_column else offset + err.column
            raise _BadClaim(self._explain(err), col) from None

    def _explain(self, err: ExpressionError) -> str:
        c = self.circuit
        if err.message.startswith("unknown name") and self._names:
            n = self._names[-1]
            if n.startswith("V_"):
                return f"V_{n[2:]} names node {n[2:]!r}, which is not in the circuit (nodes: {', '.join(c.nodes)})"
            if n.startswith("I_"):
                return f"I_{n[2:]} names part {n[2:]!r}, which is not in the circuit (parts: {', '.join(c.part_ids)})"
            known = ", ".join(c.parameters) or "none"
            return (f"unknown name {n!r}: not a parameter (parameters: {known}), V_<node>, I_<part> or s")
        return err.message + (f" ({err.hint})" if err.hint else "")

    def _prepare(self, expr: sympy.Expr) -> sympy.Expr:
        """Part currents in node voltages, reference at 0 V, substituted parameter values."""
        expr = expr.xreplace(self.currents).xreplace({V(self.circuit.reference): sympy.Integer(0)})
        return expr.xreplace(self.pvals)

    # --- public -------------------------------------------------------------
    def check(self, name: str, text: str, line: int | None = None, column: int | None = None) -> Verdict:
        """One verdict for the claim ``name`` written as ``text``."""
        is_result = name in self.circuit.find
        kind = "result" if is_result else "equation"
        loc = dict(line=line, column=column, text=text)
        try:
            if is_result:
                return self._result(name, text, column, loc)
            return self._equation(name, text, column, loc)
        except _BadClaim as bad:
            where = f" at column {bad.column}" if bad.column else ""
            return Verdict(name, ERROR, kind, f"claim {name!r}{where}: {bad.message}",
                           details={"claim": text}, line=line, column=bad.column or column, text=text)

    # --- claimed equations ----------------------------------------------------
    def _equation(self, name: str, text: str, column: int | None, loc: dict) -> Verdict:
        count = text.count("=")
        if count == 0:
            finds = ", ".join(self.circuit.find) or "none"
            raise _BadClaim(f"no '=' in {text!r}: a claimed equation is written 'lhs = rhs' "
                            f"(or use a [find] name as the key to claim a result; [find]: {finds})")
        if count > 1 or "==" in text:
            raise _BadClaim(f"more than one '=' in {text!r}: write one equation per key",
                            text.index("=", text.index("=") + 1) + (column or 1))
        left, right = text.split("=")
        lhs = self._parse(left, 0, column)
        rhs = self._parse(right, len(left) + 1, column)
        if _zero(lhs - rhs):
            raise _BadClaim(f"{text!r} is an identity (both sides are the same), so it checks nothing; "
                            "write the equation you derived")
        lhs_p, rhs_p = self._prepare(lhs), self._prepare(rhs)
        r = lhs_p - rhs_p
        holds, method = _is_zero(r.xreplace(self.sol))
        details: dict = {"claim": text}
        if method == "numeric":
            details["method"] = f"numeric check at {_NUMERIC_POINTS} random points (symbolic simplification inconclusive)"
        if holds:
            return self._holds(name, r, details, loc)
        return self._fails(name, lhs_p, rhs_p, r, details, loc)

    def _linear_claim(self, r: sympy.Expr) -> tuple[sympy.Expr, str] | None:
        """The claim residual as a linear form in the unknowns (multiplied through if needed)."""
        foreign = (r.free_symbols & self.quantities) - set(self.xs)
        if foreign:
            return None
        form = _linear(r, self.xs)
        if form is not None:
            return r, ""
        num, den = sympy.fraction(sympy.together(r))
        if den.free_symbols & set(self.xs) and _linear(num, self.xs) is not None:
            return num, f"multiplied through by {_t(den)}"
        return None

    def _generated_forms(self):
        if self._forms is None:
            self._forms = [_linear(e.residual, self.xs) for e in self.equations]
        return self._forms

    def _holds(self, name: str, r, details: dict, loc: dict) -> Verdict:
        lin = self._linear_claim(r)
        if _zero(r):
            return Verdict(name, HOLDS, "equation", "holds: true by the definition of the part currents "
                           "(nothing left once each I_<part> is written in node voltages)", details=details, **loc)
        if lin is None or not self.xs:
            foreign = sorted(map(str, (r.free_symbols & self.quantities) - set(self.xs)))
            why = (f"it involves {', '.join(foreign)}, which the node equations do not contain" if foreign
                   else "not a linear equation in the node voltages")
            return Verdict(name, HOLDS, "equation", f"holds: satisfied by the exact solution ({why}, so it is "
                           "not matched to a generated equation)", details=details, **loc)
        expr, note = lin
        lam = self._combination(expr)
        if lam is None:
            return Verdict(name, HOLDS, "equation", "holds: satisfied by the exact solution",
                           details=details, **loc)
        if note:
            details["scale"] = note
        used = [(e, k) for e, k in zip(self.equations, lam) if k != 0]
        primary = [(e, k) for e, k in used if e.kind in PRIMARY_KINDS]
        helpers = [(e, k) for e, k in used if e.kind in HELPER_KINDS]
        details["combination"] = {e.label: _t(k) for e, k in used}
        help_text = ", ".join(f"{_eq_text(e)} ({e.label})" for e, _ in helpers)
        if not used:
            msg = "holds: true for the substituted parameter values (no node voltage in it)"
            return Verdict(name, HOLDS, "equation", msg, details=details, **loc)
        if len(primary) == 1:
            e, k = primary[0]
            msg = f"holds: matches {e.label}" + _scale_words(k)
            if helpers:
                msg += " after substituting " + help_text
        elif primary:
            msg = "holds: a combination of " + ", ".join(f"{e.label} (x {_t(k)})" for e, k in primary)
            if helpers:
                msg += ", with " + help_text
        else:
            e, k = helpers[0]
            msg = f"holds: it is {e.label}" + _scale_words(k) if len(helpers) == 1 else "holds: it follows from " + help_text
        main = primary or helpers
        labels = tuple(e.label for e, _ in main)
        step = self.step_of.get(labels[0])
        if step:
            details["step_title"] = self.system.steps[step - 1].title
            msg += f" (step {step})"
        return Verdict(name, HOLDS, "equation", msg, matches=labels, step=step, details=details, **loc)

    def _combination(self, expr):
        forms = self._generated_forms()
        if any(f is None for f in forms) or len(forms) != len(self.xs):
            return None
        A = sympy.Matrix([[f.get(x, 0) for x in self.xs] for f in forms])
        claim = _linear(expr, self.xs)
        c = sympy.Matrix([claim.get(x, 0) for x in self.xs])
        lam = solve_linear(A.T, c)
        if lam is None:
            return None
        const = sum((k * f.get(_ONE, 0) for k, f in zip(lam, forms)), sympy.Integer(0))
        if not _zero(const - claim.get(_ONE, 0)):
            return None
        return [sympy.cancel(k) for k in lam]

    def _fails(self, name: str, lhs, rhs, r, details: dict, loc: dict) -> Verdict:
        example = _example(lhs, rhs, self.sol)
        if example:
            details["example"] = example
        lin = self._linear_claim(r)
        best = None
        if lin is not None:
            expr, note = lin
            if note:
                details["scale"] = note
            best = _closest(expr, self.equations, self.elim, self.xs)
        ex = ""
        if example:
            vals = ", ".join(f"{k} = {v}" for k, v in example["values"].items())
            sol = ", ".join(f"{k} = {v}" for k, v in example.get("solution", {}).items())
            ex = "; e.g. " + (f"with {vals}" if vals else "") + (f" (so {sol})" if sol else "") + \
                f": left side {example['lhs']}, right side {example['rhs']}"
        value = self._implied_value(r)
        if value is not None:
            x, implied, actual, cause = value
            details.update({"quantity": str(x), "claimed": _r(implied), "solved": _r(actual)})
            if cause:
                details["cause"] = cause
            if cause or best is None or best[4] >= 2:
                msg = f"fails: it gives {x} = {_r(implied)}, the solution has {x} = {_r(actual)}"
                msg += f"; likely cause: {cause}" if cause else ""
                if best is not None:
                    self._closest_details(best, details)
                return Verdict(name, FAILS, "equation", msg + ex, matches=(best[0].label,) if best else (),
                               step=self.step_of.get(best[0].label) if best else None, details=details, **loc)
        if best is None:
            return Verdict(name, FAILS, "equation", "fails: not satisfied by the solution and not close to any "
                           "generated equation" + ex, details=details, **loc)
        e, diffs, step, used = self._closest_details(best, details)
        where = f" (step {step})" if step else ""
        if used:
            where = f" (step {step}, with {', '.join(used)})" if step else f" (with {', '.join(used)})"
        msg = f"fails: closest to {e.label}{where}: {diffs[0]}" + (f" (+{len(diffs) - 1} more)" if len(diffs) > 1 else "")
        return Verdict(name, FAILS, "equation", msg + ex, matches=(e.label,), step=step, details=details, **loc)

    def _implied_value(self, r):
        """For a claim about one quantity (e.g. V_p = ...): (symbol, claimed value, solved value, cause)."""
        qs = sorted(r.free_symbols & set(self.sol), key=str)
        if len(qs) != 1:
            return None
        x = qs[0]
        form = _linear(r, [x])
        if not form or x not in form:
            return None
        implied = sympy.cancel(-form.get(_ONE, 0) / form[x])
        actual = self.sol[x]
        ratio = sympy.cancel(implied / actual) if actual != 0 else None
        return x, implied, actual, _result_cause(implied, actual, ratio, sympy.cancel(implied - actual))

    def _closest_details(self, best, details: dict):
        e, k, diffs, mode, _ = best
        details["closest"] = e.label
        details["closest_equation"] = f"{_t(e.lhs)} = {_t(e.rhs)}"
        details["differences"] = diffs
        if k != 1:
            details["scale"] = (details.get("scale", "") + "; " if details.get("scale") else "") + \
                f"compared with {e.label} multiplied by {_t(k)}"
        used = [f"{_t(x)} = {_t(v)}" for x, v in mode.items() if x in e.residual.free_symbols]
        if used:
            details["substituted"] = "compared after substituting " + ", ".join(used)
        step = self.step_of.get(e.label)
        if step:
            details["step_title"] = self.system.steps[step - 1].title
        return e, diffs, step, used

    # --- claimed results --------------------------------------------------------
    def _result(self, name: str, text: str, column: int | None, loc: dict) -> Verdict:
        offset = 0
        if "=" in text:
            left, right = text.split("=", 1)
            if left.strip() != name or "=" in right:
                raise _BadClaim(f"key {name!r} is a [find] name, so it holds a claimed result: write only the "
                                f"expression (e.g. {name} = \"-Rf/Rin\"), not an equation")
            offset, text_expr = len(left) + 1, right
        else:
            text_expr = text
        expr = self._parse(text_expr, offset, column)
        claimed = self._prepare(expr).xreplace(self.sol)
        solved = self.solution.find[name]
        holds, method = _is_zero(claimed - solved)
        details = {"claim": text, "claimed": _r(claimed), "solved": _r(solved),
                   "method": "symbolic" if method == "symbolic" else
                   f"numeric check at {_NUMERIC_POINTS} random points (symbolic simplification inconclusive)"}
        if holds:
            how = "" if method == "symbolic" else f" (numeric check at {_NUMERIC_POINTS} random points; " \
                "symbolic simplification was inconclusive)"
            return Verdict(name, HOLDS, "result", f"holds: equals the solved {name} = {_r(solved)}{how}",
                           details=details, **loc)
        ratio = sympy.cancel(claimed / solved) if solved != 0 else None
        diff = sympy.cancel(claimed - solved)
        if ratio is not None and (ratio.is_number or sympy.count_ops(ratio) <= sympy.count_ops(diff)):
            details["ratio"] = _r(ratio)
        details["difference"] = _r(sympy.factor(diff))
        cause = _result_cause(claimed, solved, ratio, diff)
        if cause:
            details["cause"] = cause
        example = _example(self._prepare(expr), solved, self.sol)
        if example:
            example = {**example, "claimed": example.pop("lhs"), "solved": example.pop("rhs")}
            details["example"] = example
        msg = f"fails: claimed {_r(claimed)}, solved {_r(solved)}"
        if cause:
            msg += f"; likely cause: {cause}"
        elif ratio is not None and ratio.is_number:
            msg += f"; ratio {_r(ratio)}"
        else:
            msg += f"; difference {details['difference']}"
        return Verdict(name, FAILS, "result", msg, details=details, **loc)


# --- helpers -----------------------------------------------------------------------
def _eq_text(e) -> str:
    """An equation as the engineer would write it; an input equality as V_minus = V_plus."""
    if e.kind == "opamp_equality":
        return f"{_t(e.rhs)} = {_t(e.lhs)}"
    return f"{_t(e.lhs)} = {_t(e.rhs)}"


def _scale_words(k) -> str:
    if k == 1:
        return ""
    if k == -1:
        return ""  # the same equation with its sides swapped or negated
    return f" (multiplied by {_t(k)})"


# --- module entry points ---------------------------------------------------------------
def audit_claim(system, name: str, text: str, *, solution=None, line: int | None = None,
                column: int | None = None) -> Verdict:
    """Check one claim (e.g. typed in the UI). ``name`` equal to a ``[find]`` name means a claimed result.

    Raises:
        SolveError: when the circuit itself cannot be solved.
    """
    return Auditor(system, solution).check(name, text, line, column)


def audit_claims(system, claims: dict[str, str] | None = None, *, solution=None) -> list[Verdict]:
    """One verdict per claim, in order.

    Args:
        system: the recorded system (with any parameter substitutions).
        claims: name -> text; None means the circuit's ``[hand]`` table (with file lines and columns).
        solution: the system's solution if already computed.

    Raises:
        SolveError: when the circuit itself cannot be solved.
    """
    auditor = Auditor(system, solution)
    if claims is None:
        return [auditor.check(h.name, h.text, h.line, h.column) for h in system.circuit.hand.values()]
    return [auditor.check(n, t) for n, t in claims.items()]


def summary(verdicts: list[Verdict]) -> str:
    """'3 claims: 2 hold, 1 fails' style one-liner."""
    n = len(verdicts)
    counts = {st: sum(1 for v in verdicts if v.status == st) for st in (HOLDS, FAILS, ERROR)}
    parts = [f"{counts[HOLDS]} hold{'s' if counts[HOLDS] == 1 else ''}",
             f"{counts[FAILS]} fail{'s' if counts[FAILS] == 1 else ''}"]
    if counts[ERROR]:
        parts.append(f"{counts[ERROR]} cannot be checked")
    return f"{n} claim{'s' if n != 1 else ''}: " + ", ".join(parts)


def exit_status(verdicts: list[Verdict]) -> int:
    """0 every claim holds, 1 any fails, 2 any claim is bad input (cannot be parsed or checked)."""
    if any(v.status == ERROR for v in verdicts):
        return 2
    if any(v.status == FAILS for v in verdicts):
        return 1
    return 0


__all__ = ["Auditor", "Verdict", "audit_claim", "audit_claims", "exit_status", "summary",
           "HOLDS", "FAILS", "ERROR"]
