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
sign error on the term from Rb; write it as (V_inv - V_out)/R2 (current leaving inv through Rb)
>>> audit_claim(sys, "gain", "-R1/R2").details["cause"]
'R1 and R2 are swapped: swap them back'
"""

from __future__ import annotations

from dataclasses import dataclass, field

import sympy

from nodeterm.engine.symbols import as_expr
from nodeterm.engine.audit.at_solution import AtSolution
from nodeterm.engine.audit.claim_forms import _ONE, _linear, _r, _t, _zero
from nodeterm.engine.audit.closest_equation import HELPER_KINDS, PRIMARY_KINDS, _closest
from nodeterm.engine.circuit.expr import ExpressionError, parse_expression
from nodeterm.engine.circuit.loader import quantity_resolver
from nodeterm.engine.audit.circuit_facts import CircuitFacts
from nodeterm.engine.audit.explain import Budget, KclExplainer, OutOfBudget
from nodeterm.engine.budget import OutOfBudget as TimerOut, budget as time_budget
from nodeterm.engine.audit.result_causes import (_NUMERIC_POINTS, _decide_zero, _example, _is_zero,
                                                 _result_cause)
from nodeterm.engine.equations.procedure import _Context
from nodeterm.engine.solving.fastsolve import Unsupported
from nodeterm.engine.solving.solve import solve_linear
from nodeterm.engine.symbols import I, V, param
from nodeterm.engine.solving.solve import solve_system

HOLDS, FAILS, ERROR = "holds", "fails", "error"
SOURCE_CAUSE_TERMS = 2000
"""Claimed and solved results up to this many terms (together) get every likely cause SymPy reads;
longer ones get the causes read on their polynomials (:meth:`.AtSolution.cause`)."""
EXPLAIN_BUDGET = 3.0
"""Seconds a failing claim's explanation may take (its verdict comes first, whatever the budget)."""


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

    def __init__(self, system, solution=None, explain_budget: float | None = EXPLAIN_BUDGET) -> None:
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
        # Large results (kept as polynomials by the solver) are checked in the solver's field.
        self.at = AtSolution.of(self.sol, self.solution.find.values())
        self._facts = self._explainer = self._known = None
        self.budget_seconds = explain_budget
        self.budget = Budget(explain_budget)
        self.kcl_step = next((i for i, st in enumerate(system.steps, start=1) if st.kind == "kcl"), None)

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
        self.budget = Budget(self.budget_seconds)  # each claim gets its own time to be explained
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
        fast = self.at.is_zero(r) if self.at is not None else None
        if fast is not None:
            holds, method = fast, "symbolic"
        else:
            holds, method = _decide_zero(r, self.sol)
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
            return Verdict(name, HOLDS, "equation", "true by the definition of the part currents "
                           "(nothing left once each I_<part> is written in node voltages)", details=details, **loc)
        if lin is None or not self.xs:
            foreign = sorted(map(str, (r.free_symbols & self.quantities) - set(self.xs)))
            why = (f"it involves {', '.join(foreign)}, which the node equations do not contain" if foreign
                   else "not a linear equation in the node voltages")
            return Verdict(name, HOLDS, "equation", f"satisfied by the exact solution ({why}, so it is "
                           "not matched to a generated equation)", details=details, **loc)
        expr, note = lin
        lam = self._combination(expr)
        if lam is None:
            return Verdict(name, HOLDS, "equation", "satisfied by the exact solution",
                           details=details, **loc)
        if note:
            details["scale"] = note
        used = [(e, k) for e, k in zip(self.equations, lam) if k != 0]
        primary = [(e, k) for e, k in used if e.kind in PRIMARY_KINDS]
        helpers = [(e, k) for e, k in used if e.kind in HELPER_KINDS]
        details["combination"] = {e.label: _t(k) for e, k in used}
        help_text = ", ".join(f"{_eq_text(e)} ({e.label})" for e, _ in helpers)
        if not used:
            msg = "true for the substituted parameter values (no node voltage in it)"
            return Verdict(name, HOLDS, "equation", msg, details=details, **loc)
        if len(primary) == 1:
            e, k = primary[0]
            msg = f"matches {e.label}" + _scale_words(k)
            if helpers:
                msg += " after substituting " + help_text
        elif primary:
            msg = "a combination of " + ", ".join(f"{e.label} (x {_t(k)})" for e, k in primary)
            if helpers:
                msg += ", with " + help_text
        else:
            e, k = helpers[0]
            msg = f"it is {e.label}" + _scale_words(k) if len(helpers) == 1 else "it follows from " + help_text
        msg += self._feedback_note([e for e, _ in helpers], details)
        main = primary or helpers
        labels = tuple(e.label for e, _ in main)
        step = self.step_of.get(labels[0])
        if step:
            details["step_title"] = self.system.steps[step - 1].title
            msg += f" (step {step})"
        return Verdict(name, HOLDS, "equation", msg, matches=labels, step=step, details=details, **loc)

    def _feedback_note(self, helpers, details: dict) -> str:
        """When the claim leans on V+ = V- of an op-amp without negative feedback: say the rule does not apply."""
        for e in helpers:
            if e.kind != "opamp_equality":
                continue
            kind = self.facts.feedback(e.at)
            if kind in ("positive", "none"):
                what = "only positive feedback" if kind == "positive" else "no feedback"
                note = (f"but {e.at} has {what}, so V+ = V- does not apply: a real op-amp's output runs to a "
                        "rail (it works as a comparator); this holds for the linear model only")
                details["note"] = note
                return "; " + note
        return ""

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
        """A failing equation: the verdict is settled; explain it within the claim's time budget."""
        out = {"msg": "not satisfied by the exact solution", "matches": (), "step": None}
        self._within_budget(lambda: self._explain_equation(name, lhs, rhs, r, details, out), details, out)
        return Verdict(name, FAILS, "equation", out["msg"], matches=out["matches"], step=out["step"],
                       details=details, **loc)

    def _within_budget(self, explain, details: dict, out: dict) -> None:
        """Run ``explain`` within the claim's budget: checked between steps (:class:`.explain.Budget`) and,
        in the main thread, enforced by the engine's timer (:mod:`nodeterm.engine.budget`), so one long
        SymPy call cannot hold the verdict back either."""
        token = None
        try:
            with time_budget(self.budget.remaining()) as token:
                explain()
        except OutOfBudget:
            self._stopped(details, out)
        except TimerOut as exc:
            if exc.token is not token:
                raise  # an outer budget ran out: not ours to report
            self._stopped(details, out)

    def _stopped(self, details: dict, out: dict) -> None:
        note = (f"the explanation stopped short after {self.budget.seconds:g} s (its time budget); the verdict "
                "stands")
        details["explanation"] = note
        out["msg"] += "; " + note

    def _explain_equation(self, name, lhs, rhs, r, details: dict, out: dict) -> None:
        budget = self.budget
        zero = self._zero_division(lhs, rhs, details)
        if zero:
            out["msg"] = zero
            return
        known = self._known_hint(name, details)
        if known:
            out.update(known)
            return
        budget.check()
        lin = self._linear_claim(r)
        expr = lin[0] if lin is not None else r
        if lin is not None and lin[1]:
            details["scale"] = lin[1]
        polarity = self._polarity(r)
        if polarity:
            out.update(polarity)
            self._add_example(lhs, rhs, details)
            return
        found = self.explainer.explain(expr, budget)
        budget.check()
        value = self._implied_value(r)
        node_cause = self._node_value_cause(*value[:3]) if value is not None else ""
        if node_cause:
            value = value[:3] + (node_cause,)
        # a claim about one node's value (V_m = 0) is explained by what sets that node; otherwise a slip
        # in a KCL wins, unless it takes two slips and the value has a simple cause (R3, R4 swapped)
        if found is not None and not node_cause and (len(found[1]) == 1 or value is None or not value[3]):
            base, findings, mode = found
            self._found_details(base, findings, mode, details)
            step = self.step_of.get(base.equation) if base.equation else self.kcl_step
            out.update(msg=f"{base.label}: " + "; also ".join(f.sentence() for f in findings),
                       matches=(base.equation,) if base.equation else (), step=step)
            self._add_example(lhs, rhs, details)
            return
        best = None
        if lin is not None:
            best = _closest(lin[0], self.equations, self.elim, self.xs, budget)
        budget.check()
        if value is not None:
            x, implied, actual, cause = value
            details.update({"quantity": str(x), "claimed": _r(implied), "solved": _r(actual)})
            if cause:
                details["cause"] = cause
            if cause or best is None or best[4] >= 2 or best[0].kind not in ("kcl", "supernode_kcl"):
                msg = f"it gives {x} = {_r(implied)}, the solution has {x} = {_r(actual)}"
                msg += f"; likely cause: {cause}" if cause else ""
                if best is not None:
                    self._closest_details(best, details)
                out.update(msg=msg, matches=(best[0].label,) if best else (),
                           step=self.step_of.get(best[0].label) if best else None)
                self._add_example(lhs, rhs, details)
                return
        if best is None:
            out["msg"] = ("not satisfied by the exact solution, and no generated equation is close to it "
                          "(compare it with the steps of `nodeterm solve`)")
            self._add_example(lhs, rhs, details)
            return
        e, diffs, step, used = self._closest_details(best, details)
        where = f" (step {step})" if step else ""
        if used:
            where = f" (step {step}, with {', '.join(used)})" if step else f" (with {', '.join(used)})"
        msg = f"closest to {e.label}{where}: {diffs[0]}"
        if len(diffs) > 1:
            msg += f"; also {diffs[1]}" + (f" (+{len(diffs) - 2} more)" if len(diffs) > 2 else "")
        out.update(msg=msg, matches=(e.label,), step=step)
        self._add_example(lhs, rhs, details)

    def _add_example(self, lhs, rhs, details: dict) -> None:
        self.budget.check()
        example = self._example(lhs, rhs)
        if example:
            details["example"] = example

    def _example(self, lhs, rhs) -> dict | None:
        if self.at is not None:
            try:
                used = sorted((lhs.free_symbols | rhs.free_symbols) & set(self.sol), key=str)
                return self.at.example(self.at.fraction(lhs), self.at.fraction(rhs),
                                       {u: self.at.fraction(u) for u in used})
            except (Unsupported, ZeroDivisionError):
                pass
        return _example(lhs, rhs, self.sol)

    def _found_details(self, base, findings, mode, details: dict) -> None:
        details["node"] = base.node
        details["parts"] = sorted({p for f in findings for p in f.parts})
        details["causes"] = [f.cause for f in findings]
        details["fix"] = [f.fix for f in findings]
        details["differences"] = [f.sentence() for f in findings]
        if base.equation:
            e = next(e for e in self.equations if e.label == base.equation)
            details["closest"] = e.label
            details["closest_equation"] = f"{_t(e.lhs)} = {_t(e.rhs)}"
        else:
            details["closest"] = base.label + " (not written by the procedure)"
        used = [f"{_t(x)} = {_t(v)}" for x, v in mode.items()
                if any(t.has(x) for _, t in base.terms)]
        if used:
            details["substituted"] = "compared after substituting " + ", ".join(used)

    # --- circuit facts behind a failing claim ---------------------------------------------
    @property
    def facts(self):
        if self._facts is None:
            self._facts = CircuitFacts(self.system, self.solution)
        return self._facts

    @property
    def explainer(self):
        if self._explainer is None:
            self._explainer = KclExplainer(self.system, self.facts, self.pvals)
        return self._explainer

    def _zero_division(self, lhs, rhs, details: dict) -> str | None:
        """When a side divides by a node voltage that is 0 at the solution: why, with an example."""
        zeros = []
        for side in (lhs, rhs):
            _, den = sympy.fraction(sympy.together(side))
            for x in sorted(den.free_symbols & set(self.sol), key=str):
                if _zero(as_expr(self.sol[x])) and x not in zeros:
                    zeros.append(x)
        if not zeros:
            return None
        x = zeros[0]
        node = str(x)[2:] if str(x).startswith("V_") else None
        why = f"{x} = 0 at the solution"
        if node is not None:
            reason = self._why_zero(node)
            if reason:
                why += f" ({reason})"
        details["divides_by"] = str(x)
        details["cause"] = f"divides by {x}, which is 0"
        used = sorted((lhs.free_symbols | rhs.free_symbols) & set(self.sol), key=str)
        syms = sorted(set().union(*(as_expr(self.sol[u]).free_symbols for u in used),
                                  (lhs.free_symbols | rhs.free_symbols) - set(self.sol)) - {x}, key=str)
        primes = [2, 3, 5, 7, 11, 13, 17, 19, 23, 29, 31, 37]
        point = {y: sympy.Integer(primes[i % len(primes)]) for i, y in enumerate(syms)}
        at = {str(u): _t(sympy.cancel(as_expr(self.sol[u]).xreplace(point))) for u in used}
        values = {str(k): _t(v) for k, v in point.items()}
        vals = ", ".join(f"{k} = {v}" for k, v in values.items())
        sol_text = ", ".join(f"{k} = {v}" for k, v in at.items())
        details["example"] = {"values": values, "solution": at,
                              "lhs": "division by zero" if lhs.has(x) else _t(lhs.xreplace(self.sol).xreplace(point)),
                              "rhs": "division by zero" if rhs.has(x) else _t(rhs.xreplace(self.sol).xreplace(point))}
        vals = (f"with {vals}: " if vals else "") + sol_text
        return (f"it divides by {x}, but {why}, so the claim cannot hold as written"
                + f" (e.g. {vals}, so it divides by 0)"
                + f"; multiply both sides by {x}, or write the relation without dividing by it")

    def _why_zero(self, node: str) -> str:
        f = self.facts
        for op, sign in f.inputs_at(node):
            p = f.parts[op]
            other = p.plus if sign == "-" else p.minus
            val = f.voltage(other)
            if other == self.circuit.reference or (val is not None and _zero(val)):
                return (f"{op} holds its {sign} input at node {node} equal to its "
                        f"{'+' if sign == '-' else '-'} input at {other}, which is at 0 V: a virtual ground")
        d = f.driver(node)
        if d is not None:
            return f"node {node} is fixed by {d.part}"
        return ""

    def _node_value_cause(self, x, implied, actual) -> str:
        """For a claim V_n = value where n is an op-amp input: which node the other input is at."""
        name = str(x)
        if not name.startswith("V_"):
            return ""
        node = name[2:]
        f = self.facts
        for op, sign in f.inputs_at(node):
            p = f.parts[op]
            other = p.plus if sign == "-" else p.minus
            val = f.voltage(other)
            words = (f"{op} holds V_{node} equal to its {'+' if sign == '-' else '-'} input, at node {other}"
                     + (f" where V_{other} = {_r(val)}" if val is not None else ""))
            if _zero(implied) and not _zero(actual):
                return f"V_{node} taken as 0 (a virtual ground), but {words}; use V_{node} = V_{other}"
            return ""
        return ""

    def _cause(self, claimed, solved, ratio, diff) -> str:
        """The likely cause of a wrong value: one source's contribution first, then the algebraic slips."""
        if ratio is None or not ratio.is_number:
            src = self._source_cause(claimed, solved, diff)
            if src:
                return src
        return _result_cause(claimed, solved, ratio, diff, self.budget.check)

    def _source_cause(self, claimed, solved, diff) -> str:
        """By superposition: the whole difference lies in one independent source's contribution."""
        sources = [p for p in self.circuit.parts if (getattr(p, "independent", False) or p.kind == "current_source")
                   and p.value is not None and solved.has(p.value.xreplace(self.pvals))]
        if len(sources) < 2:
            return ""  # with one source, its contribution is the whole result: nothing to single out
        for p in sources:
            v = p.value.xreplace(self.pvals) if p.value is not None else None
            if not isinstance(v, sympy.Symbol) or not diff.has(v):
                continue
            self.budget.check()
            if not _zero(diff.xreplace({v: sympy.Integer(0)})):
                continue
            want = sympy.factor(sympy.cancel(solved - solved.xreplace({v: sympy.Integer(0)})))
            got = sympy.cancel(claimed - claimed.xreplace({v: sympy.Integer(0)}))
            if _zero(got):
                return (f"the contribution of {p.id} ({v}) is missing: add {_r(want)} "
                        f"(superposition: the result with only {p.id} on)")
            if _zero(got + want):
                return f"the contribution of {p.id} ({v}) has the wrong sign: change it to {_r(want)}"
        return ""

    def _polarity(self, r) -> dict | None:
        """A source constraint written with the source reversed (V_b - V_a = value for V_a - V_b = value)."""
        ref = self.circuit.reference
        rr = r.xreplace(self.pvals)
        for e in self.equations:
            if e.kind not in ("source_constraint", "known_voltage") or len(e.parts) != 1:
                continue
            p = self.facts.parts[e.parts[0]]
            if p.branch(ref) is None or p.kind == "opamp":
                continue
            a, b = p.nodes[0], p.nodes[1]
            va = sympy.Integer(0) if a == ref else V(a)
            vb = sympy.Integer(0) if b == ref else V(b)
            if not getattr(p, "independent", False):
                continue
            emf = p.value.xreplace(self.pvals)
            reversed_ = vb - va - emf
            ratio = sympy.cancel(rr / reversed_)
            if ratio == 0 or ratio.free_symbols & set(self.quantities):
                continue
            return {"msg": (f"sign error: {p.id}'s polarity is reversed; {p.id} makes V_{a} - V_{b} = {_t(emf)} "
                            f"(its first node, {a}, is the + terminal); write {_t(va - vb)} = {_t(emf)}"),
                    "matches": (e.label,), "step": self.step_of.get(e.label)}
        return None

    def _has_numbers(self, text: str) -> bool:
        """The claim carries numbers of its own (component values), not just small factors."""
        try:
            expr = parse_expression(text.replace("=", "-(") + (")" if "=" in text else ""), self.resolve)
        except (ExpressionError, _BadClaim):
            return False
        for a in sympy.preorder_traversal(expr):
            if isinstance(a, sympy.Float):
                return True
            if isinstance(a, sympy.Rational) and (abs(a.p) > 20 or a.q > 20):
                return True
        return False

    def _known_hint(self, name: str, details: dict) -> dict | None:
        """A claim with numbers in a circuit whose values were not substituted: check it with them."""
        c = self.circuit
        unsubstituted = [n for n, p in c.parameters.items() if p.value is not None and n not in self.system.values]
        text = details.get("claim", "")
        if not unsubstituted or not self._has_numbers(text):
            return None
        self.budget.check()
        if self._known is None:
            self._known = Auditor(self.system.substitute_known(), explain_budget=self.budget_seconds)
        left = self.budget.remaining()
        self._known.budget_seconds = max(left, 0.1) if left is not None else None
        v = self._known.check(name, text)
        details["with_known"] = {"status": v.status, "message": v.message}
        hint = ("the claim has numbers, but the parameters are still symbols: check it with the file's values "
                "(`nodeterm check FILE --known`, or --set NAME=VALUE for some)")
        details["cause"] = "numbers in the claim, values not substituted"
        details["fix"] = [hint]
        if v.status == HOLDS:
            return {"msg": f"{hint}; with them it holds ({v.message})", "matches": v.matches, "step": v.step}
        for key in ("node", "parts", "causes", "differences", "closest", "closest_equation", "example"):
            if key in v.details:
                details[key] = v.details[key]
        return {"msg": f"{hint}; with them it still fails: {v.message}", "matches": v.matches, "step": v.step}

    def _implied_value(self, r):
        """For a claim about one quantity (e.g. V_p = ...): (symbol, claimed value, solved value, cause)."""
        qs = sorted(r.free_symbols & set(self.sol), key=str)
        if len(qs) > 1:  # known voltages (V_in = Vin) are not what the claim is about
            known = {V(n) for n in self.facts.known}  # fixed by sources, not by an op-amp's equality
            fixed = {x: v for x, v in self.elim.items() if x in qs and x in known}
            if len(qs) - len(fixed) == 1:
                r = r.xreplace(fixed)
                qs = sorted(r.free_symbols & set(self.sol), key=str)
        if len(qs) != 1:
            return None
        x = qs[0]
        form = _linear(r, [x])
        if not form or x not in form:
            return None
        implied = sympy.cancel(-form.get(_ONE, 0) / form[x])
        actual = self.sol[x]
        if self.at is not None and getattr(actual, "is_large", False):
            try:
                ci, ca = self.at.fraction(implied), self.at.fraction(actual)
            except (Unsupported, ZeroDivisionError):
                return None
            return x, implied, actual, self._cause_at(ci, ca, self.at.ratio(ci, ca), self.at.difference(ci, ca))
        ratio = sympy.cancel(implied / actual) if actual != 0 else None
        return x, implied, actual, self._cause(implied, actual, ratio, sympy.cancel(implied - actual))

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
        solved = self.solution.find[name]
        if self.at is not None and getattr(solved, "is_large", False):
            try:
                return self._result_at(name, text, expr, solved, loc)
            except (Unsupported, ZeroDivisionError):
                pass
        claimed = self._prepare(expr).xreplace(self.sol)
        holds, method = _decide_zero(claimed - solved)
        details = {"claim": text, "claimed": _r(claimed), "solved": _r(solved),
                   "method": "symbolic" if method == "symbolic" else
                   f"numeric check at {_NUMERIC_POINTS} random points (symbolic simplification inconclusive)"}
        if holds:
            how = "" if method == "symbolic" else f" (numeric check at {_NUMERIC_POINTS} random points; " \
                "symbolic simplification was inconclusive)"
            return Verdict(name, HOLDS, "result", f"equals the solved {name} = {_r(solved)}{how}",
                           details=details, **loc)
        out = {"msg": f"claimed {_r(claimed)}, solved {_r(solved)}"}
        self._within_budget(lambda: self._explain_result(name, expr, claimed, solved, details, out), details, out)
        return Verdict(name, FAILS, "result", out["msg"], details=details, **loc)

    def _explain_result(self, name, expr, claimed, solved, details: dict, out: dict) -> None:
        known = self._known_hint(name, details)
        if known:
            out["msg"] = known["msg"]
            return
        self.budget.check()
        ratio = sympy.cancel(claimed / solved) if solved != 0 else None
        diff = sympy.cancel(claimed - solved)
        if ratio is not None and (ratio.is_number or sympy.count_ops(ratio) <= sympy.count_ops(diff)):
            details["ratio"] = _r(ratio)
        self.budget.check()
        details["difference"] = _r(sympy.factor(diff))
        self.budget.check()
        cause = self._cause(claimed, solved, ratio, diff)
        if cause:
            details["cause"] = cause
        msg = out["msg"]
        if cause:
            msg += f"; likely cause: {cause}"
        elif "ratio" in details and ratio.is_number:
            msg += f"; ratio {details['ratio']}"
        else:
            msg += f"; they differ by {details['difference']}"
        out["msg"] = msg
        self.budget.check()
        example = _example(self._prepare(expr), solved, self.sol)
        if example:
            example = {**example, "claimed": example.pop("lhs"), "solved": example.pop("rhs")}
            details["example"] = example


    def _result_at(self, name: str, text: str, expr, solved, loc: dict) -> Verdict:
        """:meth:`_result` for a large solved result, in the solver's polynomial field."""
        at = self.at
        cf, sf = at.fraction(self._prepare(expr)), at.fraction(solved)
        claimed = at.value(cf)
        details = {"claim": text, "claimed": _r(claimed), "solved": _r(solved), "method": "symbolic"}
        diff = at.difference(cf, sf)
        if diff[0].is_zero():
            return Verdict(name, HOLDS, "result", f"equals the solved {name} = {_r(solved)}",
                           details=details, **loc)
        out = {"msg": f"claimed {_r(claimed)}, solved {_r(solved)}"}
        self._within_budget(lambda: self._explain_result_at(name, expr, solved, cf, sf, diff, details, out),
                           details, out)
        return Verdict(name, FAILS, "result", out["msg"], details=details, **loc)

    def _cause_at(self, cf, sf, ratio, diff) -> str:
        """:meth:`_cause` for fractions of the solver's field: SymPy reads results small enough for it."""
        at = self.at
        if sum(len(p) for p in (*cf, *sf)) <= SOURCE_CAUSE_TERMS:
            return self._cause(as_expr(at.value(cf)), as_expr(at.value(sf)),
                               as_expr(at.value(ratio)) if ratio is not None else None, as_expr(at.value(diff)))
        return at.cause(cf, sf, ratio, diff)

    def _explain_result_at(self, name, expr, solved, cf, sf, diff, details: dict, out: dict) -> None:
        known = self._known_hint(name, details)
        if known:
            out["msg"] = known["msg"]
            return
        at = self.at
        self.budget.check()
        ratio = at.ratio(cf, sf)
        ratio_is_number = ratio is not None and ratio[0].is_constant() and ratio[1].is_constant()
        if ratio is not None and (ratio_is_number or len(ratio[0]) + len(ratio[1]) <= len(diff[0]) + len(diff[1])):
            details["ratio"] = _r(at.value(ratio))
        details["difference"] = _r(at.value(diff))
        self.budget.check()
        cause = self._cause_at(cf, sf, ratio, diff)
        if cause:
            details["cause"] = cause
        msg = out["msg"]
        if cause:
            msg += f"; likely cause: {cause}"
        elif "ratio" in details and ratio_is_number:
            msg += f"; ratio {details['ratio']}"
        else:
            msg += f"; they differ by {details['difference']}"
        out["msg"] = msg
        self.budget.check()
        prepared = self._prepare(expr)
        used = sorted(prepared.free_symbols & set(self.sol), key=str)
        example = at.example(cf, sf, {u: at.fraction(u) for u in used})
        if example:
            example = {**example, "claimed": example.pop("lhs"), "solved": example.pop("rhs")}
            details["example"] = example


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
                column: int | None = None, explain_budget: float | None = EXPLAIN_BUDGET) -> Verdict:
    """Check one claim (e.g. typed in the UI). ``name`` equal to a ``[find]`` name means a claimed result.

    Raises:
        SolveError: when the circuit itself cannot be solved.
    """
    return Auditor(system, solution, explain_budget).check(name, text, line, column)


def audit_claims(system, claims: dict[str, str] | None = None, *, solution=None,
                 explain_budget: float | None = EXPLAIN_BUDGET) -> list[Verdict]:
    """One verdict per claim, in order.

    Args:
        system: the recorded system (with any parameter substitutions).
        claims: name -> text; None means the circuit's ``[hand]`` table (with file lines and columns).
        solution: the system's solution if already computed.
        explain_budget: seconds each failing claim's explanation may take (None or 0: no limit). The
            verdict itself never waits for it; an explanation cut short says so.

    Raises:
        SolveError: when the circuit itself cannot be solved.
    """
    auditor = Auditor(system, solution, explain_budget)
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
