"""Why a claimed KCL equation fails, in circuit terms first: a search over the slips engineers make.

A wrong KCL equation is almost always a right one with one or two slips: a
part's term dropped, its sign flipped, the wrong node voltage or the wrong value
in it, a term from a part that does not touch the node, KCL written at a node
an op-amp output or a voltage source drives (so the source's current is
missing, or has the wrong sign), one side of a supernode written alone, a part
inside a supernode kept, ``V_minus`` taken as 0 where the op-amp's + input is
not at ground, a dependent source's factor (``beta`` for ``1 + beta``).

:func:`explain_kcl` builds, from :class:`.circuit_facts.CircuitFacts`, every
KCL the engineer could have meant (the generated ones, and the naive sum at
driven nodes and at one side of a supernode, with the source current as a term
of its own), applies every single slip and every pair of slips, and keeps the
hypotheses proportional to the claim. The search runs on numbers (the linear
forms at two random points of the parameters, NumPy, vectorised over all pairs);
the winning hypothesis is then confirmed exactly with SymPy, so an explanation is
never printed on a numerical coincidence. The claim is compared as written,
then with the constraints it does not mention substituted, then fully reduced.

Each slip becomes a :class:`Finding`: the node, the parts, what is wrong and
what to do about it. The search checks its :class:`Budget` between hypotheses
and gives up (raising :class:`OutOfBudget`) when the time is spent.

Written here because no library explains a wrong node equation in terms of a
circuit's parts; NumPy does the vector work, SymPy the exact check.
"""

from __future__ import annotations

import random
import time
from dataclasses import dataclass, field

import numpy as np
import sympy

from nodeterm.engine.audit.claim_forms import _t
from nodeterm.engine.symbols import I, V, as_expr

_TOL = 1e-9


class OutOfBudget(Exception):
    """The explanation's time budget is spent."""


class Budget:
    """A deadline checked between pieces of work (``seconds`` None or <= 0: no limit)."""

    def __init__(self, seconds: float | None) -> None:
        self.seconds = seconds
        self.start = time.monotonic()
        self.deadline = self.start + seconds if seconds and seconds > 0 else None

    def expired(self) -> bool:
        return self.deadline is not None and time.monotonic() > self.deadline

    def remaining(self) -> float | None:
        return None if self.deadline is None else self.deadline - time.monotonic()

    def check(self) -> None:
        if self.expired():
            raise OutOfBudget()


@dataclass(frozen=True)
class Finding:
    """One slip in a claimed equation, in circuit terms.

    Attributes:
        cause: a short code ("missing-term", "sign", "wrong-node-voltage", "wrong-value",
            "extra-part", "driven-node", "source-current-sign", "supernode-side",
            "inside-supernode", "virtual-ground", "dependent-factor", "factor").
        node: the node (or supernode "a+b") the equation is about.
        parts: the parts concerned.
        text: what is wrong.
        fix: what to do, as an instruction.
    """

    cause: str
    node: str
    parts: tuple[str, ...]
    text: str
    fix: str

    def sentence(self) -> str:
        return f"{self.text}; {self.fix}"


@dataclass
class _Mutation:
    rank: int                      # preference among equally short explanations (lower first)
    delta: dict                    # exact change to the hypothesis, a linear form (claim = base + deltas)
    finding: Finding
    term: str = ""                 # the term it acts on ("" none), so two slips on one term are not paired
    vecs: list = field(default_factory=list)


@dataclass
class _Base:
    label: str                     # "KCL at inv"
    node: str
    kind: str                      # "kcl", "supernode_kcl", "driven", "supernode_side"
    terms: list                    # [(part, current leaving the node)]
    equation: str | None           # the generated equation's label, when there is one
    free: list = field(default_factory=list)  # mutations that do not count as slips (none yet)


class _Point:
    """A random exact point of the parameters (and s), reproducible."""

    def __init__(self, symbols, seed: int) -> None:
        rng = random.Random(seed)
        self.values = {x: sympy.Rational(rng.randint(11, 97), rng.randint(7, 31)) for x in symbols}


def _vector(expr, point: _Point, index: dict) -> np.ndarray | None:
    """The linear form of ``expr`` at ``point`` as a float vector over ``index`` (None: not linear)."""
    e = sympy.expand(as_expr(expr).xreplace(point.values))
    out = np.zeros(len(index))
    for term, coeff in e.as_coefficients_dict().items():
        key = 1 if term == 1 else term
        if key not in index:
            return None
        try:
            out[index[key]] += float(coeff)
        except TypeError:
            return None
    return out


def _gain_of(part):
    return getattr(part, "gain", None)


class KclExplainer:
    """Structural explanations of failing KCL claims for one system (built once per audit)."""

    def __init__(self, system, facts, pvals: dict, budget_factory=None) -> None:
        self.system = system
        self.facts = facts
        self.pvals = pvals
        c = system.circuit
        ref = c.reference
        self.ref = ref
        self.xs = list(system.unknowns)
        branch_currents = [I(p.id) for p in c.parts if p.branch(ref) is not None and I(p.id) not in self.xs]
        self.coords = self.xs + branch_currents
        self.index = {x: i for i, x in enumerate(self.coords)}
        self.index[1] = len(self.coords)
        self.elim = {k: as_expr(v).xreplace(pvals) for k, v in system.eliminated.items()}
        self.params = sorted({sympy.Symbol(n) for n in c.parameters} - set(pvals), key=str)
        syms = set(self.params) | {sympy.Symbol("s")}
        self.points = [_Point(sorted(syms, key=str), seed) for seed in (20231, 77317)]
        self._forms: dict = {}
        self._nums: dict = {}
        self.bases = self._bases()

    # --- hypotheses -------------------------------------------------------------
    def _bases(self) -> list[_Base]:
        f, c = self.facts, self.system.circuit
        out: list[_Base] = []
        written = set()
        for e in self.system.equations:
            if e.kind in ("kcl", "supernode_kcl"):
                terms = [(t.part, t.expr.xreplace(self.pvals)) for t in e.terms]
                out.append(_Base(e.label, e.at, e.kind, terms, e.label))
                written.add(e.at)
        for n in c.nodes:
            if n == self.ref or n in written:
                continue
            drivers = f.drivers(n)
            terms = [(pid, f.leaving(pid, n).xreplace(self.pvals)) for pid in f.touching(n)]
            if not drivers or not terms:
                continue
            sn = f.supernode_of(n)
            kind = "supernode_side" if sn and any(d.how != "opamp output" for d in drivers) else "driven"
            terms += [(d.part, d.current) for d in drivers]
            out.append(_Base(f"KCL at {n}", n, kind, terms, None))
        return out

    # --- linear forms: {coordinate: coefficient}, 1 for the constant -------------------
    def _form(self, expr) -> dict | None:
        key = expr
        if key in self._forms:
            return self._forms[key]
        xs = [x for x in self.coords if expr.has(x)]
        form = {}
        for x in xs:
            cf = sympy.diff(expr, x)
            if any(cf.has(y) for y in xs):
                self._forms[key] = None
                return None
            if cf != 0:
                form[x] = cf
        const = expr.xreplace({x: sympy.Integer(0) for x in xs}) if xs else expr
        if const != 0:
            form[1] = const
        self._forms[key] = form
        return form

    def _num(self, form: dict, i: int) -> np.ndarray:
        out = np.zeros(len(self.index))
        for x, cf in form.items():
            k = (cf, i)
            v = self._nums.get(k)
            if v is None:
                v = self._nums[k] = float(as_expr(cf).xreplace(self.points[i].values))
            out[self.index[x]] += v
        return out

    def _mutations(self, base: _Base) -> list[_Mutation]:
        f = self.facts
        node = base.node
        nodes = base.node.split("+")
        muts: list[_Mutation] = []
        node_syms = {V(n): n for n in self.system.circuit.nodes if n != self.ref}
        driver_ids = {d.part for n in nodes for d in f.drivers(n)}

        def scaled(form, k):
            return {x: k * cf for x, cf in form.items()}

        for part, t in base.terms:
            F = self._form(t)
            if F is None:
                continue
            is_driver = part in driver_ids and base.kind in ("driven", "supernode_side")
            if is_driver:
                d = next(d for n in nodes for d in f.drivers(n) if d.part == part)
                muts.append(_Mutation(0, scaled(F, -1), self._driver_finding(base, d), part))
                muts.append(_Mutation(1, scaled(F, -2), Finding(
                    "source-current-sign", node, (part,),
                    f"{part}'s current has the wrong sign: {self._driver_words(d)}, so it enters the KCL at "
                    f"{node} as {_t(t)} (current leaving {node})", f"write {_t(t)}"), part))
                continue
            joins = f.joins(part) if part in f.parts else node
            leave = f"{_t(t)} (current leaving {node} through {part})"
            muts.append(_Mutation(0, scaled(F, -1), Finding(
                "missing-term", node, (part,), f"missing the term from {part} ({part} joins {joins})",
                f"add {leave}"), part))
            muts.append(_Mutation(1, scaled(F, -2), Finding(
                "sign", node, (part,), f"sign error on the term from {part}", f"write it as {leave}"), part))
            for factor, words in ((2, "twice"), (sympy.Rational(1, 2), "half")):
                muts.append(_Mutation(6, scaled(F, factor - 1), Finding(
                    "factor", node, (part,), f"wrong coefficient on the term from {part}: written {words} over",
                    f"write it as {leave}"), part))
            for sym, y in node_syms.items():
                if sym not in F:
                    continue
                for z in self.system.circuit.nodes:
                    if z == y:
                        continue
                    delta = {sym: -F[sym]}
                    if z != self.ref:
                        delta[V(z)] = F[sym]
                    used = f"0 V ({z})" if z == self.ref else f"V_{z}"
                    muts.append(_Mutation(3, delta, Finding(
                        "wrong-node-voltage", node, (part,),
                        f"the term from {part} uses {used} where V_{y} belongs: {part} joins {joins}",
                        f"write {leave}"), part))
            p = f.parts.get(part)
            free = set().union(*(as_expr(cf).free_symbols for cf in F.values())) if F else set()
            for v in sorted(free & set(self.params), key=str):
                for w in self.params:
                    if w == v:
                        continue
                    delta = {x: cf.xreplace({v: w}) - cf for x, cf in F.items()}
                    muts.append(_Mutation(4, delta, Finding(
                        "wrong-value", node, (part,), f"the term from {part} has {w} written where {v} belongs",
                        f"write {leave}"), part))
            g = _gain_of(p) if p is not None and p.kind in ("cccs", "vccs") else None
            if g is not None and g != 0:
                g = as_expr(g).xreplace(self.pvals)
                for wrong_g, words in ((g + 1, f"1 + {_t(g)}"), (g - 1, f"{_t(g)} - 1")):
                    muts.append(_Mutation(2, scaled(F, wrong_g / g - 1), Finding(
                        "dependent-factor", node, (part,),
                        f"{part}'s current is written with ({words}) where its gain is {_t(g)}: "
                        f"{part} carries {_t(g)} times its controlling current or voltage",
                        f"write {leave}"), part))
        # parts that do not touch the node (or lie inside the supernode)
        touching = {p for p, _ in base.terms}
        for pid in f.parts:
            if pid in touching or f.parts[pid].branch(self.ref) is not None:
                continue
            inside = base.kind == "supernode_kcl" and f.inside(pid, nodes)
            for end in f.ends(pid):
                cur = f.leaving(pid, end)
                if cur is None or cur == 0:
                    continue
                F = self._form(cur.xreplace(self.pvals))
                if F is None:
                    continue
                if inside:
                    finding = Finding("inside-supernode", node, (pid,),
                                      f"{pid} lies inside the supernode {node} (it joins {f.joins(pid)}): its "
                                      "current leaves one side and enters the other, so it cancels",
                                      f"drop the term from {pid}")
                else:
                    finding = Finding("extra-part", node, (pid,),
                                      f"extra term from {pid}, which does not touch {node} ({pid} joins "
                                      f"{f.joins(pid)})", f"drop the term from {pid}")
                muts.append(_Mutation(2, F, finding, "+" + pid))
                muts.append(_Mutation(2, scaled(F, -1), finding, "+" + pid))
        # V_minus (or V_plus) taken as 0 where the op-amp's inputs are not at ground
        total = {}
        for _, t in base.terms:
            F = self._form(t) or {}
            for x, cf in F.items():
                total[x] = total.get(x, 0) + cf
        for op in f.opamps():
            for q, sign in ((op.minus, "-"), (op.plus, "+")):
                if q == self.ref or V(q) not in total or sympy.cancel(total[V(q)]) == 0:
                    continue
                other = op.plus if sign == "-" else op.minus
                val = f.voltage(other)
                if val is not None and sympy.cancel(val) == 0:
                    continue  # the other input really is at 0 V: V_q = 0 is right
                where = (f"{op.id}'s {'+' if sign == '-' else '-'} input is at node {other}"
                         + (f", V_{other} = {_t(val)}" if val is not None else ""))
                muts.append(_Mutation(2, {V(q): -total[V(q)]}, Finding(
                    "virtual-ground", node, (op.id,),
                    f"V_{q} is taken as 0 (a virtual ground), but {where}",
                    f"use V_{q} = V_{other}" + (f" = {_t(val)}" if val is not None else "")
                    + f" ({op.id} holds its inputs equal)"), "vg" + q))
        return muts

    def _driver_words(self, d) -> str:
        p = self.facts.parts[d.part]
        if p.kind == "opamp":
            return f"I_{d.part} flows out of {d.part}'s output pin into node {p.out}"
        return f"I_{d.part} flows from {p.nodes[0]} to {p.nodes[1]} through {d.part}"

    def _driver_finding(self, base: _Base, d) -> Finding:
        f, n = self.facts, base.node
        p = f.parts[d.part]
        if base.kind == "supernode_side":
            sn = f.supernode_of(n)
            return Finding("supernode-side", n, (d.part,),
                           f"node {n} is joined to {', '.join(x for x in sn if x != n)} by {d.part} (a supernode "
                           f"{'+'.join(sn)}): KCL at {n} alone needs {d.part}'s current I_{d.part}",
                           f"write one KCL for the supernode {'+'.join(sn)} (currents leaving all its nodes "
                           f"through the other parts), or add {_t(d.current)} for {d.part}")
        if p.kind == "opamp":
            return Finding("driven-node", n, (d.part,),
                           f"node {n} is driven by {d.part}'s output, which supplies whatever current is needed: "
                           f"KCL at {n} needs {d.part}'s output current ({_t(d.current)} leaving {n})",
                           f"drop this equation (no KCL at an op-amp output; use {d.part}'s V+ = V-), "
                           f"or add {_t(d.current)} and solve for I_{d.part}")
        return Finding("driven-node", n, (d.part,),
                       f"node {n} is fixed by the voltage source {d.part}: KCL at {n} needs {d.part}'s current "
                       f"({_t(d.current)} leaving {n})",
                       f"drop this equation (V_{n} is known from {d.part}), or add {_t(d.current)} "
                       f"and solve for I_{d.part}")

    # --- search -------------------------------------------------------------------
    def _modes(self, r):
        present = r.free_symbols
        modes, seen = [], []
        for subs in ({}, {x: v for x, v in self.elim.items() if x not in present}, dict(self.elim)):
            if subs in seen:
                continue
            seen.append(subs)
            modes.append(subs)
        return modes

    def _image(self, subs: dict, i: int) -> np.ndarray:
        img = np.eye(len(self.index))
        for x, v in subs.items():
            if x in self.index:
                F = self._form(v)
                if F is not None:
                    img[self.index[x]] = self._num(F, i)
        return img

    def explain(self, r: sympy.Expr, budget: Budget):
        """(base, findings, mode) for the shortest slip list that turns a KCL into the claim, or None."""
        r = r.xreplace(self.pvals)
        claim = [_vector(r, pt, self.index) for pt in self.points]
        if any(c is None or not c.any() for c in claim):
            return None
        modes = self._modes(r)
        images = [[self._image(m, i) for i in range(len(self.points))] for m in modes]
        best = None
        for base in self.bases:
            budget.check()
            muts = self._mutations(base)
            total = {}
            for _, t in base.terms:
                F = self._form(t) or {}
                for x, cf in F.items():
                    total[x] = total.get(x, 0) + cf
            bvec = [self._num(total, i) for i in range(len(self.points))]
            keep = []
            for m in muts:
                m.vecs = [self._num(m.delta, i) for i in range(len(self.points))]
                if any(v.any() for v in m.vecs):
                    keep.append(m)
            budget.check()
            keep = _dedupe(keep)
            for mode_rank, (mode, imgs) in enumerate(zip(modes, images)):
                found = self._match(base, keep, bvec, claim, imgs, best, mode_rank)
                if found is not None:
                    cand = (found[0], mode_rank, found[1], base, found[2], mode)
                    if best is None or cand[:3] < best[:3]:
                        best = cand
                budget.check()
        if best is None:
            return None
        n, mode_rank, _, base, chosen, mode = best
        if not self._confirm(r, base, chosen, mode):
            return None
        return base, [m.finding for m in chosen], mode

    def _match(self, base, muts, bvec, claim, imgs, best, mode_rank):
        """Smallest (number of slips, rank, mutations) whose hypothesis is proportional to the claim."""
        cs = [c @ img for c, img in zip(claim, imgs)]
        bs = [b @ img for b, img in zip(bvec, imgs)]
        if any(not c.any() for c in cs):
            return None
        if all(_parallel(b[None, :], c)[0] for b, c in zip(bs, cs)):
            return None  # the claim is this base itself: nothing to explain here (it would hold)
        if not muts:
            return None
        D = [np.array([m.vecs[i] @ img for m in muts]) for i, img in enumerate(imgs)]
        ok = np.ones(len(muts), dtype=bool)
        for b, d, c in zip(bs, D, cs):
            ok &= _parallel(b[None, :] + d, c)
        hits = [muts[i] for i in np.nonzero(ok)[0]]
        if hits:
            m = min(hits, key=lambda m: (m.rank, _scale_rank(bs[0] + m.vecs[0] @ imgs[0], cs[0])))
            return (1, m.rank, [m])
        if best is not None and best[0] <= 1:
            return None
        n = len(muts)
        if n > 400:
            return None
        ok2 = np.ones((n, n), dtype=bool)
        for b, d, c in zip(bs, D, cs):
            H = b[None, None, :] + d[:, None, :] + d[None, :, :]
            ok2 &= _parallel(H.reshape(n * n, -1), c).reshape(n, n)
        ok2 &= np.triu(np.ones((n, n), dtype=bool), 1)
        pairs = [(muts[i], muts[j]) for i, j in zip(*np.nonzero(ok2))
                 if muts[i].term != muts[j].term or not muts[i].term]
        if not pairs:
            return None
        a, b = min(pairs, key=lambda p: (p[0].rank + p[1].rank,
                                         _scale_rank(bs[0] + (p[0].vecs[0] + p[1].vecs[0]) @ imgs[0], cs[0])))
        return (2, a.rank + b.rank, [a, b])

    def _confirm(self, r, base, chosen, mode) -> bool:
        """Exact check: the claim is a multiple of the hypothesis (both in the same substitution)."""
        hyp = sum((t for _, t in base.terms), sympy.Integer(0)) + sum(
            (cf * (sympy.Integer(1) if x == 1 else x) for m in chosen for x, cf in m.delta.items()), sympy.Integer(0))
        hyp = sympy.expand(hyp.xreplace(mode))
        rr = sympy.expand(r.xreplace(mode))
        coords = [x for x in self.coords if hyp.has(x) or rr.has(x)]
        try:
            A, b = sympy.linear_eq_to_matrix([hyp, rr], coords)
        except Exception:  # noqa: BLE001 - not linear: no structural explanation
            return False
        rows = [list(A.row(0)) + [b[0]], list(A.row(1)) + [b[1]]]
        ratio = None
        for u, w in zip(*rows):
            u, w = sympy.cancel(u), sympy.cancel(w)
            if u == 0 and w == 0:
                continue
            if u == 0 or w == 0:
                return False
            q = sympy.cancel(w / u)
            if q.free_symbols & set(self.coords):
                return False
            if ratio is None:
                ratio = q
            elif sympy.cancel(q - ratio) != 0:
                return False
        return ratio is not None


def _parallel(H: np.ndarray, c: np.ndarray) -> np.ndarray:
    """For each row h of H: is h a nonzero multiple of c?"""
    cc = float(c @ c)
    k = (H @ c) / cc
    res = H - k[:, None] * c[None, :]
    scale = np.maximum(np.abs(H).max(axis=1), 1e-300)
    return (np.abs(res).max(axis=1) <= _TOL * scale) & (np.abs(k) * np.abs(c).max() > _TOL * scale)


def _scale_rank(h: np.ndarray, c: np.ndarray) -> int:
    """0 when the claim is the hypothesis itself, 1 a positive multiple, 2 a negative one."""
    k = float(h @ c) / float(c @ c)  # h = k*c
    if abs(k - 1) < 1e-9:
        return 0
    return 1 if k > 0 else 2


def _dedupe(muts: list[_Mutation]) -> list[_Mutation]:
    """One mutation per distinct change (the lowest rank wins)."""
    out: dict = {}
    for m in sorted(muts, key=lambda m: m.rank):
        key = tuple(np.round(np.concatenate(m.vecs), 9))
        if key not in out:
            out[key] = m
    return list(out.values())


__all__ = ["Budget", "Finding", "KclExplainer", "OutOfBudget"]
