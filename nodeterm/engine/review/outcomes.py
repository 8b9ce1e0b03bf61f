"""``[find]`` results, ``[hand]`` verdicts and warnings of two revisions, compared.

A result is compared as solved (symbolic unless values were chosen) and with
every value the file gives. Where both are numbers the relative change and a
sign flip are given; where they are functions of s, the DC and high-frequency
gains and the first- and second-order sections of H(s) (corner, w0, Q; read as
in :mod:`nodeterm.engine.analysis.transfer`) that moved.
"""

from __future__ import annotations

import random
import re

import sympy

from nodeterm.engine.review.records import (ADDED, APPEARED, CHANGED, CLEARED, FLIPPED, REMOVED, ClaimChange,
                                            Move, ResultChange, WarningChange)
from nodeterm.engine.review.structure import same_expr
from nodeterm.engine.symbols import as_expr, s

COMPARE_LIMIT = 3000
"""Results with more operations than this are compared by their canonical text only."""


def _points(exprs, count: int = 2):
    """``count`` points (symbol -> rational) at which every expression of ``exprs`` is finite."""
    symbols = sorted(set().union(*(e.free_symbols for e in exprs)), key=str)
    rng = random.Random(1234)
    found = []
    for _ in range(8 * count):
        point = {x: sympy.Rational(rng.randint(2, 997), rng.randint(2, 997)) for x in symbols}
        values = [e.xreplace(point) for e in exprs]
        if all(v.is_finite and v.is_number for v in values):
            found.append((point, values))
            if len(found) == count:
                break
    return found


def same_result(a, b) -> bool:
    """Two results are the same rational function (canonical text for very large ones).

    Differing values at a rational point settle "different" cheaply; "same" is then proved exactly.
    """
    if a is None or b is None:
        return a is b
    if getattr(a, "is_large", False) or getattr(b, "is_large", False):
        return str(a) == str(b)
    a, b = as_expr(a), as_expr(b)
    if a == b:
        return True
    if sympy.count_ops(a) + sympy.count_ops(b) > COMPARE_LIMIT:
        return str(a) == str(b)
    for _, (x, y) in _points([a, b], 1):
        if x != y:
            return False
    return sympy.cancel(sympy.together(a - b)) == 0


def _number(x) -> bool:
    if x is None or getattr(x, "is_large", False):
        return False
    x = as_expr(x)
    return bool(x.is_number) and x.is_finite is not False and not x.has(sympy.zoo, sympy.nan, sympy.oo)


def relative(old, new):
    """(new - old)/old when both are numbers and old is not 0, else None.

    >>> relative(sympy.Integer(-100), sympy.Integer(-47))
    -53/100
    """
    if not (_number(old) and _number(new)):
        return None
    old, new = as_expr(old), as_expr(new)
    if old == 0:
        return None
    if old.is_Rational and new.is_Rational:
        return (new - old) / old
    return sympy.simplify((new - old) / old)


def _sign(x):
    if not _number(x):
        return 0
    x = as_expr(x)
    if x.is_extended_real is not True or x == 0:
        return 0
    return 1 if x > 0 else -1


def _ratio(old, new):
    """new/old when it is free of s and of node unknowns (small results only), else None."""
    if old is None or new is None or getattr(old, "is_large", False) or getattr(new, "is_large", False):
        return None
    old, new = as_expr(old), as_expr(new)
    if old == 0 or sympy.count_ops(old) + sympy.count_ops(new) > COMPARE_LIMIT:
        return None
    probes = _points([old, new], 2)
    if len(probes) == 2 and sympy.count_ops(old) + sympy.count_ops(new) > 60:
        (_, (o1, n1)), (_, (o2, n2)) = probes
        if o1 == 0 or o2 == 0 or n1 / o1 != n2 / o2:
            return None  # not a constant factor: the expression would be as long as the results
    r = sympy.cancel(sympy.together(new / old))
    if r.has(s) or any(str(x).startswith(("V_", "I_")) for x in r.free_symbols):
        return None
    return r


def _sections(tf) -> dict:
    """(where, order) -> sections, sorted by w0 when numeric."""
    out: dict = {}
    for sec in tf.sections:
        out.setdefault((sec.where, sec.order), []).append(sec)
    for secs in out.values():
        if all(_number(x.w0) for x in secs):
            secs.sort(key=lambda x: float(sympy.Abs(as_expr(x.w0))))
    return out


_SECTION_NAMES = {0: "at the origin", 1: "corner", 2: "pair"}


class Reading:
    """The parts of H(s) the diff compares, read cheaply from a symbolic result (no exact roots).

    Numeric results use :class:`nodeterm.engine.analysis.transfer.TransferFunction` instead, which
    also gives poles, zeros and sections; both have these attributes.
    """

    def __init__(self, expr) -> None:
        num, den = sympy.fraction(as_expr(expr))
        nc = sympy.Poly(num, s).all_coeffs()
        dc = sympy.Poly(den, s).all_coeffs()
        if dc[0].is_number and dc[0] < 0:
            nc, dc = [-c for c in nc], [-c for c in dc]
        self.num_coeffs, self.den_coeffs = tuple(nc), tuple(dc)
        self.poles = self.zeros = None
        self.sections = ()
        if dc[-1] == 0:
            self.dc_gain = sympy.oo if nc[-1] != 0 else sympy.nan
        else:
            self.dc_gain = sympy.cancel(nc[-1] / dc[-1])
        if len(nc) > len(dc):
            self.hf_gain = sympy.oo
        elif len(nc) < len(dc):
            self.hf_gain = sympy.Integer(0)
        else:
            self.hf_gain = sympy.cancel(nc[0] / dc[0])


def reading(expr):
    """A :class:`Reading` of a result in s, or None (not in s, too large to read, not a ratio of polynomials)."""
    if expr is None or getattr(expr, "is_large", False):
        return None
    expr = as_expr(expr)
    if not expr.has(s) or sympy.count_ops(expr) > COMPARE_LIMIT:
        return None
    try:
        return Reading(expr)
    except sympy.PolynomialError:
        return None


def _second_order(tf):
    """(w0, Q) of a denominator of order 2, read from its coefficients (whether or not it factors)."""
    if tf is None or len(tf.den_coeffs) != 3:
        return None
    a2, a1, a0 = (as_expr(c) for c in tf.den_coeffs)
    if a2 == 0 or a1 == 0:
        return None
    return sympy.sqrt(a0 / a2), sympy.sqrt(a0 * a2) / a1


def _roots_text_ok(roots) -> bool:
    return roots is not None and all(_number(r) for r in roots)


def moves(old_tf, new_tf) -> list[Move]:
    """Gains, w0 and Q, corners and poles/zeros of two transfer functions that differ (either may be None).

    A second-order denominator gives w0 = sqrt(a0/a2) and Q = sqrt(a0*a2)/a1 directly, so a pole pair
    that splits into two real poles (Q below 1/2) still shows its Q moving; higher orders are read
    section by section.
    """
    out: list[Move] = []
    if old_tf is None and new_tf is None:
        return out
    for what, attr in (("dc gain", "dc_gain"), ("hf gain", "hf_gain")):
        a = getattr(old_tf, attr, None)
        b = getattr(new_tf, attr, None)
        if not same_expr(a, b):
            out.append(Move(what, a, b, relative(a, b)))
    pair_old, pair_new = _second_order(old_tf), _second_order(new_tf)
    if pair_old is not None or pair_new is not None:
        for i, what in ((0, "w0 (rad/s)"), (1, "Q")):
            a = pair_old[i] if pair_old else None
            b = pair_new[i] if pair_new else None
            if not same_expr(a, b):
                out.append(Move(what, a, b, relative(a, b)))
    else:
        out += _section_moves(old_tf, new_tf)
    for what, attr in (("poles", "poles"), ("zeros", "zeros")):
        a, b = getattr(old_tf, attr, None), getattr(new_tf, attr, None)
        if _roots_text_ok(a) and _roots_text_ok(b) and not _same_roots(a, b):
            out.append(Move(what, tuple(a), tuple(b)))
    return out


def _section_moves(old_tf, new_tf) -> list[Move]:
    out: list[Move] = []
    old_secs = _sections(old_tf) if old_tf is not None else {}
    new_secs = _sections(new_tf) if new_tf is not None else {}
    for key in list(dict.fromkeys(list(old_secs) + list(new_secs))):
        where, order = key
        a_list, b_list = old_secs.get(key, []), new_secs.get(key, [])
        for i in range(max(len(a_list), len(b_list))):
            a = a_list[i] if i < len(a_list) else None
            b = b_list[i] if i < len(b_list) else None
            name = f"{where} {_SECTION_NAMES.get(order, 'section')}"
            if order == 0:
                ma, mb = getattr(a, "multiplicity", 0), getattr(b, "multiplicity", 0)
                if ma != mb:
                    out.append(Move(f"{where}s at the origin", sympy.Integer(ma), sympy.Integer(mb)))
                continue
            w_what = f"w0 of {name} (rad/s)" if order == 2 else f"{name} (rad/s)"
            a_w, b_w = getattr(a, "w0", None), getattr(b, "w0", None)
            if not same_expr(a_w, b_w):
                out.append(Move(w_what, a_w, b_w, relative(a_w, b_w)))
            if order == 2:
                a_q, b_q = getattr(a, "q", None), getattr(b, "q", None)
                if not same_expr(a_q, b_q):
                    out.append(Move(f"Q of {name}", a_q, b_q, relative(a_q, b_q)))
    return out


def _same_roots(a, b) -> bool:
    if len(a) != len(b):
        return False
    try:
        ka = sorted(complex(x) for x in a)
        kb = sorted(complex(x) for x in b)
    except TypeError:
        return all(same_expr(x, y) for x, y in zip(a, b))
    return all(abs(x - y) <= 1e-12 * max(1.0, abs(x)) for x, y in zip(ka, kb))


class Side:
    """What one revision gives for the outcomes: results (symbolic and valued), H(s), verdicts, warnings.

    Any of them may be None with ``error`` saying why (the revision does not solve).
    """

    def __init__(self, find=None, valued=None, transfer=None, verdicts=None, warnings=(), error: str = ""):
        self.find = find
        self.valued = valued
        self.transfer = transfer or {}
        self.verdicts = verdicts
        self.warnings = tuple(warnings)
        self.error = error


def result_changes(old: Side, new: Side, old_names, new_names) -> list[ResultChange]:
    """``[find]`` results added, removed or changed (in the new file's order, then the removed ones).

    Args:
        old, new: the two sides.
        old_names, new_names: the ``[find]`` names of each file, in order.
    """
    out: list[ResultChange] = []
    names = list(dict.fromkeys(list(new_names) + list(old_names)))
    for name in names:
        in_old, in_new = name in old_names, name in new_names
        a = old.find.get(name) if old.find is not None else None
        b = new.find.get(name) if new.find is not None else None
        av = old.valued.get(name) if old.valued is not None else None
        bv = new.valued.get(name) if new.valued is not None else None
        av_shown = None if av is None or same_result(a, av) else av
        bv_shown = None if bv is None or same_result(b, bv) else bv
        if not in_old:
            out.append(ResultChange(name, ADDED, None, b, None, bv_shown, note=new.error))
            continue
        if not in_new:
            out.append(ResultChange(name, REMOVED, a, None, av_shown, None, note=old.error))
            continue
        if old.error or new.error:
            if old.error and new.error:
                continue
            out.append(ResultChange(name, CHANGED, a, b, av_shown, bv_shown,
                                    note=("old: " + old.error) if old.error else ("new: " + new.error)))
            continue
        if same_result(a, b) and same_result(av, bv):
            continue
        x, y = (av, bv) if av is not None and bv is not None else (a, b)
        ratio = _ratio(x, y)
        rel = relative(x, y)
        if rel is None and ratio is not None and _number(ratio):
            rel = ratio - 1  # e.g. Vtc/10000 -> Vtc/4700: the same symbol, scaled
        flip = False
        if ratio is not None and _number(ratio) and _sign(ratio) < 0:
            flip = True
        tf_old, tf_new = old.transfer.get(name), new.transfer.get(name)
        mv = tuple(moves(tf_old, tf_new)) if (tf_old is not None or tf_new is not None) else ()
        if not flip and tf_old is not None and tf_new is not None:
            for attr in ("dc_gain", "hf_gain"):
                sa, sb = _sign(getattr(tf_old, attr)), _sign(getattr(tf_new, attr))
                if sa and sb:
                    flip = sa != sb
                    break
        out.append(ResultChange(name, CHANGED, a, b, av_shown, bv_shown, rel, ratio, flip, mv))
    return out


def claim_changes(old: Side, new: Side) -> list[ClaimChange]:
    """``[hand]`` claims whose verdict flipped, or that were added or removed."""
    if old.verdicts is None or new.verdicts is None:
        return []
    before = {v.name: v for v in old.verdicts}
    after = {v.name: v for v in new.verdicts}
    out: list[ClaimChange] = []
    for name, v in after.items():
        w = before.get(name)
        if w is None:
            out.append(ClaimChange(name, ADDED, "", v.status, v.message))
        elif w.status != v.status:
            out.append(ClaimChange(name, FLIPPED, w.status, v.status, v.message))
    for name, w in before.items():
        if name not in after:
            out.append(ClaimChange(name, REMOVED, w.status, "", w.message))
    return out


_NAMED = re.compile(r"\b(nodes?|parts?|op-amps?|sources?) ([A-Za-z_]\w*(?:(?:, | and )[A-Za-z_]\w*)*)")


def _renamer(nodes: dict, parts: dict):
    """Old warning text in the new names: only names that follow "node", "part", "op-amp" or "source"
    (so a node called ``in`` does not rename the word "in")."""
    pairs = {o: n for o, n in {**nodes, **parts}.items() if o != n}
    if not pairs:
        return lambda text: text

    def names(m):
        listed = re.sub(r"[A-Za-z_]\w*", lambda w: w.group(0) if w.group(0) == "and"
                        else pairs.get(w.group(0), w.group(0)), m.group(2))
        return f"{m.group(1)} {listed}"

    return lambda text: _NAMED.sub(names, text)


def warning_changes(old: Side, new: Side, nodes: dict, parts: dict) -> list[WarningChange]:
    """Warnings and cautions that appeared or cleared (old messages read with the new names)."""
    rename = _renamer(nodes, parts)
    before = {(w.code, parts.get(w.part, w.part), rename(w.message)): w for w in old.warnings}
    after = {(w.code, w.part, w.message): w for w in new.warnings}
    out = [WarningChange(APPEARED, w.code, w.message, w.part) for k, w in after.items() if k not in before]
    out += [WarningChange(CLEARED, w.code, w.message, w.part) for k, w in before.items() if k not in after]
    return out
