"""Fraction-free (Bareiss) elimination and Cramer's rule on sparse polynomial matrices.

:func:`determinant` eliminates with a sparsity-preserving pivot order (Markowitz
cost, ties broken by the smaller polynomial) and *lazy row scaling*: a row
untouched by a step owes the factor ``p_k / p_(k-1)``, which telescopes and then
cancels in the row's next update, so untouched rows cost nothing. :func:`cramer`
gets each unknown as a ratio of two such determinants, which for ladder-like
circuit matrices avoids multiplying large minors together. Entries are any
exact polynomials with ``*``, ``-``, exact ``/``, ``is_zero()`` and ``is_one()``
(FLINT's ``fmpz_mpoly`` in :mod:`.fastsolve`).

Written by hand because FLINT has fast polynomial arithmetic but no linear
solver over a polynomial ring (see :mod:`.fastsolve`).
"""

from __future__ import annotations


class TooManyTerms(ArithmeticError):
    """The polynomials held at once passed the caller's term limit (``terms`` is how many)."""

    def __init__(self, terms: int) -> None:
        super().__init__(f"{terms} terms")
        self.terms = terms


def _parity(perm: list[int]) -> int:
    """+1 or -1: the sign of a permutation given as a list."""
    seen = [False] * len(perm)
    sign = 1
    for i in range(len(perm)):
        if seen[i]:
            continue
        j, length = i, 0
        while not seen[j]:
            seen[j] = True
            j = perm[j]
            length += 1
        if length % 2 == 0:
            sign = -sign
    return sign


def determinant(rows: list[dict], n: int, one, limit: int | None = None):
    """Determinant of a sparse square polynomial matrix by fraction-free elimination.

    Args:
        rows: one dict per row, column -> nonzero polynomial (columns ``0..n-1``).
        n: the size.
        one: the polynomial 1 (its context).
        limit: raise :class:`TooManyTerms` when the rows still to eliminate hold more terms in all.

    Pivots follow the Markowitz cost, so sparse circuit matrices keep their sparsity; ties go to
    the most recently updated row (elimination stays on one front: two fronts would multiply
    each other's minors into every pivot), then to the shorter polynomial. A row not touched by a step keeps its stored entries; the
    pending factor ``piv[k]/piv[L]`` cancels in the next update of that row, which divides by
    ``piv[L]`` instead of ``piv[k]`` (lazy row scaling: no extra work for untouched rows).

    >>> import flint
    >>> ctx = flint.fmpz_mpoly_ctx.get(("x", "y"), "lex")
    >>> x, y = ctx.gens()
    >>> determinant([{0: x, 1: y}, {0: y, 1: x}], 2, ctx.constant(1))
    x^2 - y^2
    """
    rows = [dict(r) for r in rows]
    held = sum(len(v) for r in rows for v in r.values()) if limit is not None else 0
    col_rows: dict[int, set[int]] = {c: set() for c in range(n)}
    for i, r in enumerate(rows):
        for c in r:
            col_rows[c].add(i)
    level = [0] * n
    piv = [one]
    live_rows = set(range(n))
    order_r: list[int] = []
    order_c: list[int] = []
    for k in range(n):
        best = None
        for i in live_rows:
            r = rows[i]
            rn = len(r) - 1
            for c, v in r.items():
                cost = (rn * (len(col_rows[c]) - 1), -level[i], len(v))
                if best is None or cost < best[0]:
                    best = (cost, i, c)
        if best is None:
            return one * 0
        _, r_i, c = best
        prow = rows[r_i]
        if level[r_i] < k:  # the pivot row needs its true entries
            num, den = piv[k], piv[level[r_i]]
            prow = {j: v * num / den for j, v in prow.items()}
        p = prow[c]
        live_rows.discard(r_i)
        for i in list(col_rows[c]):
            if i == r_i or i not in live_rows:
                continue
            row = rows[i]
            a_ic = row[c]
            div = piv[level[i]]
            new = {}
            for j in set(row) | set(prow):
                if j == c:
                    continue
                v = row.get(j)
                w = prow.get(j)
                if v is None:
                    val = -(a_ic * w)
                elif w is None:
                    val = p * v
                else:
                    val = p * v - a_ic * w
                if not div.is_one():
                    val = val / div
                if not val.is_zero():
                    new[j] = val
                    if limit is not None:
                        held += len(val)
                        if held > limit:
                            raise TooManyTerms(held)
            for j in row:
                if j not in new:
                    col_rows[j].discard(i)
            for j in new:
                col_rows[j].add(i)
            if limit is not None:  # the row's old entries are let go
                held -= sum(len(v) for v in row.values())
            rows[i] = new
            level[i] = k + 1
        for j in prow:
            col_rows[j].discard(r_i)
        piv.append(p)
        order_r.append(r_i)
        order_c.append(c)
    return piv[n] * (_parity(order_r) * _parity(order_c))


def cramer(rows: list[dict], n: int, one, limit: int | None = None) -> tuple[list, object] | None:
    """Solve a sparse square polynomial system by Cramer's rule.

    Args:
        rows: one dict per equation, column -> nonzero polynomial; column ``n`` is the right side.
        n: number of unknowns.
        one: the polynomial 1.
        limit: raise :class:`TooManyTerms` when an elimination, or the answer so far (numerators
            plus the denominator once per unknown), holds more terms.

    Returns:
        ``(X, D)`` with ``x_j = X[j]/D`` (not reduced), or None when the matrix is singular.

    Each numerator is its own sparse determinant. Back-substitution would multiply large
    minors together and divide them again; for ladder-like circuit matrices the separate
    eliminations are far cheaper, since each only ever multiplies a large minor by a small entry.
    """
    A = [{j: v for j, v in r.items() if j < n} for r in rows]
    D = determinant(A, n, one, limit)
    if D.is_zero():
        return None
    X = []
    kept = 0
    for c in range(n):
        Ac = []
        for r, full in zip(A, rows):
            rc = {j: v for j, v in r.items() if j != c}
            if n in full:
                rc[c] = full[n]
            Ac.append(rc)
        X.append(determinant(Ac, n, one, limit))
        kept += len(X[-1]) + len(D)
        if limit is not None and kept > limit:
            raise TooManyTerms(kept)
    return X, D
