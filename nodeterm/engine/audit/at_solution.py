"""The exact solution as FLINT fractions: zero tests, ratios and examples on large results.

When the exact solver keeps results as polynomials (:class:`~nodeterm.engine.solving.fastsolve.LargeExpr`),
substituting them into a claim with SymPy (``xreplace`` then ``cancel``) builds and cancels
expressions of hundreds of thousands of terms and takes minutes. Here a claim is evaluated in the
solver's own polynomial field instead: each node voltage and current is the fraction the solver
computed, the claim's arithmetic is FLINT's, and a claim holds exactly when the numerator of its
residual is the zero polynomial (the same exact test as ``cancel(...) == 0``).

For results too long for SymPy, the likely causes of a wrong result (sign, factor, swapped or
mixed-up parameters, upside down) are checked with the meaning and words of
:func:`~nodeterm.engine.audit.result_causes._result_cause`, swapping parameters by composing the
polynomials with permuted generators.
"""

from __future__ import annotations

import sympy

from nodeterm.engine.audit.claim_forms import _t
from nodeterm.engine.solving import fastsolve
from nodeterm.engine.symbols import s


class AtSolution:
    """A solution's quantities as fractions ``(num, den)`` of one :class:`~.fastsolve.PolyField`.

    Built only when the solution has large results (:meth:`of`); every method raises
    :class:`~.fastsolve.Unsupported` (or ZeroDivisionError) when an expression is outside the
    field, and the caller then falls back to SymPy.
    """

    def __init__(self, field, values: dict) -> None:
        self.field = field
        self.values = values
        self._fracs: dict = {}

    @classmethod
    def of(cls, values: dict, others=()) -> "AtSolution | None":
        """From quantity symbol -> result (and other results of the same solve, such as the [find]
        values); None when no result is large (SymPy is quick enough)."""
        large = [v for v in [*values.values(), *others] if getattr(v, "is_large", False)]
        if not large:
            return None
        field = large[0]._field
        if field.atoms or any(v._field is not field for v in large):
            return None
        return cls(field, values)

    def _env(self, expr) -> dict:
        """Fractions of the quantities in ``expr`` (unreduced: the solver's own, made once)."""
        env = {}
        for k in expr.free_symbols:
            if k not in self.values:
                continue
            if k not in self._fracs:
                v = self.values[k]
                self._fracs[k] = v._frac if getattr(v, "is_large", False) else self.field.ev(v)
            env[k] = self._fracs[k]
        return env

    def fraction(self, expr) -> tuple:
        """The fraction of a SymPy expression in the quantities, at the solution (reduced)."""
        if getattr(expr, "is_large", False) and expr._field is self.field:
            return expr.fraction
        return self.field.reduce(self.field.ev(expr, self._env(expr)))

    def value(self, frac: tuple):
        """A reduced fraction as a result value: SymPy when small, a LargeExpr when large."""
        return self.field.result(frac, reduced=True)

    def is_zero(self, expr) -> bool | None:
        """Whether ``expr`` is exactly zero at the solution; None when it is outside the field."""
        try:
            return self.field.ev(expr, self._env(expr))[0].is_zero()
        except (fastsolve.Unsupported, ZeroDivisionError):
            return None

    def difference(self, a: tuple, b: tuple) -> tuple:
        return self.field.reduce(self.field.sub(a, b))

    def ratio(self, a: tuple, b: tuple) -> tuple | None:
        if b[0].is_zero():
            return None
        return self.field.reduce(self.field.mul(a, self.field.inv(b)))

    # --- likely causes ----------------------------------------------------------------------
    def _params(self, *fracs) -> list:
        F = self.field
        deg = [0] * len(F.symbols)
        for num, den in fracs:
            deg = [max(a, b, c) for a, b, c in zip(deg, num.degrees(), den.degrees())]
        return sorted((F.symbols[i] for i, d in enumerate(deg) if d > 0 and F.symbols[i] != s), key=str)[:12]

    def _swapped(self, frac: tuple, mapping: dict) -> tuple:
        F = self.field
        gens = list(F.gens)
        for a, b in mapping.items():
            gens[F.index[a]] = F.gens[F.index[b]]
        return frac[0].compose(*gens), frac[1].compose(*gens)

    def _equal(self, a: tuple, b: tuple) -> bool:
        return (a[0] * b[1] - b[0] * a[1]).is_zero()

    def cause(self, claimed: tuple, solved: tuple, ratio: tuple | None, diff: tuple) -> str:
        """:func:`~nodeterm.engine.audit.result_causes._result_cause` on fractions (same wording)."""
        if ratio is not None and ratio[0].is_constant() and ratio[1].is_constant():
            r = sympy.Rational(int(ratio[0].leading_coefficient()), int(ratio[1].leading_coefficient()))
            if r == -1:
                return "sign error (the claim is the negative of the result): change its sign"
            if r in (2, sympy.Rational(1, 2), -2, -sympy.Rational(1, 2)):
                return (f"a factor of {_t(r)}" + (" and a sign error" if r < 0 else "")
                        + ": look for a term counted twice or halved, and write it once")
            return f"a constant factor of {_t(r)}: look for the number it comes from and remove it"
        params = self._params(claimed, solved)
        neg = (-solved[0], solved[1])
        for i, a in enumerate(params):
            for b in params[i + 1:]:
                swapped = self._swapped(claimed, {a: b, b: a})
                if self._equal(swapped, solved):
                    return f"{a} and {b} are swapped: swap them back"
                if self._equal(swapped, neg):
                    return f"{a} and {b} are swapped, and the sign is wrong: swap them back and change the sign"
        if not claimed[0].is_zero() and not solved[0].is_zero() and \
                (claimed[0] * solved[0] - claimed[1] * solved[1]).is_zero():
            return "upside down (the claim is 1 over the result): invert it"
        in_claim = set(self._params(claimed))
        for a in params:
            for b in params:
                if a != b and a in in_claim and self._equal(self._swapped(claimed, {a: b}), solved):
                    return f"{a} written where {b} belongs: write {b} there"
        if diff[0].is_constant() and diff[1].is_constant():
            d = sympy.Rational(int(diff[0].leading_coefficient() if not diff[0].is_zero() else 0),
                               int(diff[1].leading_coefficient()))
            return f"off by a constant {_t(d)} (e.g. a missing '1 +'): add the 1" if abs(d) == 1 else ""
        return ""

    # --- a numeric example --------------------------------------------------------------------
    def _at_point(self, frac: tuple, point: dict) -> sympy.Rational | None:
        F = self.field
        subs = {F.names[F.index[x]]: v for x, v in point.items()}
        num, den = frac[0].subs(subs), frac[1].subs(subs)
        d = int(den.leading_coefficient()) if not den.is_zero() else 0
        if d == 0:
            return None
        return sympy.Rational(int(num.leading_coefficient()) if not num.is_zero() else 0, d)

    def example(self, lhs: tuple, rhs: tuple, used: dict) -> dict | None:
        """Small prime values of every parameter that make the two sides differ (as ``_example``)."""
        F = self.field
        deg = [0] * len(F.symbols)
        for num, den in (lhs, rhs, *used.values()):
            deg = [max(a, b, c) for a, b, c in zip(deg, num.degrees(), den.degrees())]
        syms = sorted((F.symbols[i] for i, d in enumerate(deg) if d > 0), key=str)
        primes = [2, 3, 5, 7, 11, 13, 17, 19, 23, 29, 31, 37]
        for shift in range(4):
            vals = {x: primes[(i + shift) % len(primes)] for i, x in enumerate(syms)}
            a, b = self._at_point(lhs, vals), self._at_point(rhs, vals)
            if a is None or b is None or a == b:
                continue
            out = {"values": {str(x): str(v) for x, v in vals.items()}, "lhs": _t(a), "rhs": _t(b)}
            if used:
                sol = {}
                for u, frac in used.items():
                    v = self._at_point(frac, vals)
                    sol[str(u)] = _t(v) if v is not None else "zoo"
                out["solution"] = sol
            return out
        return None
