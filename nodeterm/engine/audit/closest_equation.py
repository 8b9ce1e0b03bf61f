"""The generated equation closest to a failing claimed equation, and the differences in words.

A claimed equation that fails is compared with every generated equation, both
as written and after the known voltages and input equalities are substituted
(:attr:`System.eliminated`). Each comparison scales the generated equation by a
factor read off a shared coefficient, then attributes the claim, coordinate by
coordinate (coefficient of each unknown and the constant), to the per-part
terms of the KCL equation (:func:`.claim_forms._attribute`): a coefficient only
one part contributes tells that part's multiplier (1 right, 0 missing, -1 sign
error, anything else a wrong coefficient); what no part explains is an extra
term. :func:`_closest` keeps the comparison with the fewest differences and
:func:`_describe` puts them in words.

Written here because no library explains the difference between two equations
in terms of circuit parts.
"""

from __future__ import annotations

import sympy

from nodeterm.engine.audit.claim_forms import _ONE, _add_forms, _attribute, _linear, _t, _zero
from nodeterm.engine.audit.result_causes import _swap_hint

# Roles of the generated equations: a claim matches a primary equation, possibly
# after the helpers (known voltages, op-amp input equalities) are substituted.
PRIMARY_KINDS = ("kcl", "supernode_kcl", "source_constraint", "opamp_gain")
HELPER_KINDS = ("known_voltage", "opamp_equality")


def _closest(r, equations, elim, unknowns, budget=None):
    """The generated equation closest to a failing claim ``r`` (a residual linear in ``unknowns``).

    Returns:
        (equation as generated, scale k, differences in words, substitution used, score), or None.
    """
    candidates = []
    # Compare as written, then with the constraints the claim does not mention substituted
    # (V_in = Vin, but V_m kept when the claim uses V_m), then fully reduced.
    present = r.free_symbols
    modes, seen = [], []
    for subs in ({}, {x: v for x, v in elim.items() if x not in present}, dict(elim)):
        if subs in seen:
            continue
        seen.append(subs)
        rr = sympy.expand(r.xreplace(subs)) if present & set(subs) else r
        xs = [x for x in unknowns if x not in subs]
        eqs = [e.subs(subs) for e in equations] if subs else equations
        modes.append((subs, rr, xs, eqs))
    for mode_rank, (mode, rr, xs, eqs) in enumerate(modes):
        R = _linear(rr, xs)
        if R is None or not R:
            continue
        for idx, (orig, e) in enumerate(zip(equations, eqs)):
            if budget is not None:
                budget.check()
            if mode and e.kind in HELPER_KINDS:
                continue
            terms = [(t.part, t.expr) for t in e.terms] if e.terms else []
            if terms and not _zero(sum(t for _, t in terms) - e.residual):
                terms.append(("", e.residual - sum(t for _, t in terms)))
            if not terms:
                terms = [("", e.residual)]
            forms = [_linear(t, xs) for _, t in terms]
            if any(f is None for f in forms):
                continue
            total = _add_forms(forms)
            if not total:
                continue
            ks = []
            for x, v in R.items():
                if x in total:
                    k = sympy.cancel(v / total[x])
                    for kk in (k, -k):  # a sign error on one of two terms reads either way
                        if kk not in ks:
                            ks.append(kk)
            for k in ks:
                mu, left = _attribute(R, forms, k)
                score = sum(1 for m in mu if m != 1) + len(left)
                if score == 0:
                    continue  # cannot happen for a failing claim; guard anyway
                rank = (score, mode_rank, _k_rank(k), 0 if e.kind in PRIMARY_KINDS else 1, idx)
                candidates.append((rank, orig, e, k, terms, mu, left, mode, xs))
    if not candidates:
        return None
    candidates.sort(key=lambda c: c[0])
    rank, orig, e, k, terms, mu, left, mode, xs = candidates[0]
    return orig, k, _describe(e, terms, mu, left, k), mode, rank[0]

def _describe(e, terms, mu, left, k) -> list[str]:
    node = e.at
    out = []
    for (part, t), m in zip(terms, mu):
        if m == 1:
            continue
        what = f"the term from {part}" if part else f"{e.label}"
        shown = f"{_t(t)} (current leaving {node} through {part})" if part and e.kind in ("kcl", "supernode_kcl") \
            else _t(t)
        if m == 0:
            out.append(f"missing {what}: {shown}" if part else f"missing {_t(t)}")
        elif m == -1:
            out.append(f"sign error on {what}: it is {shown}")
        elif m.is_number:
            out.append(f"wrong coefficient on {what}: written as {_t(m)} x ({_t(t)}); it is {shown}")
        else:
            out.append(f"{what} is off by a factor {_t(m)}: written as {_t(sympy.cancel(m * t))}; it is {shown}"
                       + _swap_hint(m))
    if left:
        extra = sum((v / k * (sympy.Integer(1) if x == _ONE else x) for x, v in left.items()), sympy.Integer(0))
        at = f"at {node}" if e.kind in ("kcl", "supernode_kcl") else f"in {e.label}"
        out.append(f"extra term {_t(sympy.cancel(extra) if extra.is_number else sympy.factor_terms(extra))} "
                   f"that no part {at} gives")
    return out or [f"differs from {e.label}"]


def _k_rank(k) -> int:
    if k == 1:
        return 0
    if k.is_number:
        return 1 if k > 0 else 4
    plain = abs(k.as_coeff_Mul()[0]) == 1  # multiplied through by parameters, no stray number
    return (2 if plain else 3) if not k.could_extract_minus_sign() else (4 if plain else 5)
