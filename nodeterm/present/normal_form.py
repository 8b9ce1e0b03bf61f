"""Transfer functions in the normalized forms engineers write, beside the raw ratio N(s)/D(s).

    H(s) = K * s^k * prod(1 + s/wz) * prod(s**2/w0z**2 + s/(Qz*w0z) + 1)
                   / (prod(1 + s/wp) * prod(s**2/w0**2 + s/(Q*w0) + 1))

K is the gain of the flat part (the DC gain when there is no pole or zero at the origin), each
first-order factor ``a1*s + a0`` becomes ``a0*(1 + s/wc)`` with ``wc = a0/a1`` (``1 - s/wc`` for a
right-half-plane root), each second-order ``a2*s**2 + a1*s + a0`` becomes
``a0*(s**2/w0**2 + s/(Q*w0) + 1)`` with ``w0 = sqrt(a0/a2)`` and ``Q = sqrt(a0*a2)/a1``
(Franco, Design with Operational Amplifiers, ch. 3 -- from memory). Because every normalized
factor is 1 at s = 0, K is the ratio of the lowest non-zero coefficients of N and D.

Read from H(s) itself: ``factor_list`` in s, then ``cancel`` and square roots taken with the
parameters positive. The engine's ``TransferFunction`` gives the same w0 and Q in its
``sections`` (the tests compare them), but it also finds exact roots and simplifies, which takes
seconds on a small symbolic filter; the reports print this form on every solve, so it reads the
factors itself in milliseconds.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import sympy

from nodeterm.engine.symbols import as_expr, s
from nodeterm.present.format import expr_text, number_text, value_text

MAX_OPS = 600
"""Results with more operations than this get no transfer-function reading in the reports."""


@dataclass(frozen=True)
class NormalFactor:
    """One normalized factor of N (``where="zero"``) or D (``where="pole"``).

    Attributes:
        where: "pole" or "zero".
        order: 1, 2, or the degree of a factor that could not be split (then ``poly`` is set).
        w: corner frequency (order 1) or natural frequency w0 (order 2), rad/s, > 0 when known.
        q: quality factor (order 2; ``oo`` when there is no s term, negative for a right-half-plane pair).
        sign: +1 for ``1 + s/w``, -1 for ``1 - s/w`` (a right-half-plane real root).
        multiplicity: how many times the factor appears.
        name: the symbol used in the template ("wp", "wz2", "w0", "Q"...).
        poly: the factor divided by its value at s = 0, for a factor of higher order.
    """

    where: str
    order: int
    w: sympy.Expr | None
    q: sympy.Expr | None = None
    sign: int = 1
    multiplicity: int = 1
    name: str = ""
    poly: sympy.Expr | None = None

    @property
    def q_name(self) -> str:
        return self.name.replace("w0", "Q", 1) if self.name.startswith("w0") else "Q" + self.name[1:]

    def template(self) -> str:
        """The factor written with its symbols."""
        if self.poly is not None:
            text = f"({expr_text(self.poly)})"
        elif self.order == 1:
            text = f"(1 {'+' if self.sign > 0 else '-'} s/{self.name})"
        elif self.q == sympy.oo:
            text = f"(s**2/{self.name}**2 + 1)"
        else:
            text = f"(s**2/{self.name}**2 + s/({self.q_name}*{self.name}) + 1)"
        return text + (f"**{self.multiplicity}" if self.multiplicity > 1 else "")

    def expr(self) -> sympy.Expr:
        """The factor with its values (each factor is 1 at s = 0)."""
        if self.poly is not None:
            f = self.poly
        elif self.order == 1:
            f = 1 + self.sign * s / self.w
        elif self.q == sympy.oo:
            f = s ** 2 / self.w ** 2 + 1
        else:
            f = s ** 2 / self.w ** 2 + s / (self.q * self.w) + 1
        return f ** self.multiplicity


@dataclass(frozen=True)
class NormalForm:
    """H(s) = K * s**origin * prod(zero factors) / prod(pole factors)."""

    name: str
    gain: sympy.Expr
    origin: int
    factors: tuple[NormalFactor, ...]

    @property
    def zeros(self) -> tuple[NormalFactor, ...]:
        return tuple(f for f in self.factors if f.where == "zero")

    @property
    def poles(self) -> tuple[NormalFactor, ...]:
        return tuple(f for f in self.factors if f.where == "pole")

    def template(self) -> str:
        """``K*s*(1 + s/wz)/((1 + s/wp1)*(1 + s/wp2))``: the form with its symbols."""
        top = ["K"]
        if self.origin > 0:
            top.append("s" if self.origin == 1 else f"s**{self.origin}")
        top += [f.template() for f in self.zeros]
        bottom = []
        if self.origin < 0:
            bottom.append("s" if self.origin == -1 else f"s**{-self.origin}")
        bottom += [f.template() for f in self.poles]
        text = "*".join(top)
        if bottom:
            text += "/" + (bottom[0] if len(bottom) == 1 else "(" + "*".join(bottom) + ")")
        return text

    def expr(self) -> sympy.Expr:
        """H(s) rebuilt from K and the factors (equal to the raw ratio as a rational function)."""
        out = self.gain * s ** self.origin
        for f in self.factors:
            out = out * f.expr() if f.where == "zero" else out / f.expr()
        return out


def _lowest(coeffs) -> tuple[int, sympy.Expr]:
    """(power of s, coefficient) of the lowest non-zero term; coefficients highest power first."""
    for k, c in enumerate(reversed(coeffs)):
        if c != 0:
            return k, c
    return 0, sympy.Integer(0)


def _positive_symbols(x: sympy.Expr) -> tuple[sympy.Expr, dict]:
    fwd = {y: sympy.Symbol(y.name, positive=True) for y in x.free_symbols if y != s}
    return x.xreplace(fwd), {v: k for k, v in fwd.items()}


def _is_negative(x: sympy.Expr) -> bool:
    """Negative as a number, or for every positive value of its symbols (component values)."""
    x = as_expr(x)
    if x.is_number:
        return bool(x.is_real and x < 0)
    return bool(_positive_symbols(x)[0].is_negative)


def _sqrt_positive(x: sympy.Expr) -> sympy.Expr:
    """sqrt(x) with the symbols taken positive, so that sqrt(1/(C1*C2)) reads 1/(sqrt(C1)*sqrt(C2))."""
    pos, back = _positive_symbols(as_expr(x))
    return sympy.sqrt(pos).xreplace(back)


def _numeric_factors(coeffs, where: str, mult: int) -> list[NormalFactor]:
    """Factors of a polynomial with number coefficients from its roots (floats): real roots give
    1 +- s/w, complex pairs w0 = |p| and Q = |p|/(-2*Re p) (negative in the right half-plane)."""
    from nodeterm.engine.analysis.transfer import numeric_roots
    out = []
    for r in numeric_roots(coeffs):
        z = complex(r)
        mag = abs(z)
        if abs(z.imag) <= 1e-9 * max(mag, 1e-300):
            out.append(NormalFactor(where, 1, sympy.Float(mag), None, -1 if z.real > 0 else 1, mult))
        elif z.imag > 0:
            q = sympy.oo if z.real == 0 else sympy.Float(mag / (-2 * z.real))
            out.append(NormalFactor(where, 2, sympy.Float(mag), q, 1, mult))
    return out


def _factor_list(poly_expr: sympy.Expr) -> list[tuple[sympy.Expr, int]]:
    """Irreducible factors with multiplicity (the content left out), by FLINT when the coefficients
    are integers: SymPy's multivariate factoring takes about half a second on a symbolic
    state-variable filter's denominator, FLINT's a millisecond."""
    from nodeterm.engine.solving import fastsolve
    gens = sorted(poly_expr.free_symbols, key=lambda x: x.name)
    if fastsolve.flint is not None and gens:
        try:
            poly = sympy.Poly(poly_expr, *gens)
        except sympy.PolynomialError:
            poly = None
        if poly is not None and poly.domain == sympy.ZZ:
            ctx = fastsolve.flint.fmpz_mpoly_ctx.get(tuple(f"x{i}" for i in range(len(gens))), "lex")
            try:
                _, factors = ctx.from_dict({m: int(c) for m, c in poly.terms()}).factor()
            except Exception:  # noqa: BLE001 - python-flint can overflow on huge coefficients; SymPy then
                factors = None
            if factors is not None:
                return [(sympy.Add(*[sympy.Mul(sympy.Integer(int(c)), *[g**k for g, k in zip(gens, mono) if k])
                                     for mono, c in f.to_dict().items()]), int(mult)) for f, mult in factors]
    return [(f, int(m)) for f, m in sympy.factor_list(poly_expr, s)[1]]


def _factors(poly_expr: sympy.Expr, where: str) -> list[NormalFactor] | None:
    """The normalized factors of N or D (roots at the origin left out: K and s**k carry them)."""
    out: list[NormalFactor] = []
    if not poly_expr.has(s):
        return out
    for factor, mult in _factor_list(poly_expr):
        poly = sympy.Poly(factor, s)
        if _is_negative(poly.LC()):  # a factor's sign goes to K (the lowest coefficients), not to Q
            factor, poly = -factor, -poly
        c = poly.all_coeffs()
        numeric = all(x.is_number for x in c)
        if poly.degree() <= 0:
            continue
        if poly.degree() == 1:
            a1, a0 = c
            if a0 == 0:
                continue
            ratio = sympy.cancel(a0 / a1)
            sign = -1 if _is_negative(ratio) else 1
            out.append(NormalFactor(where, 1, sympy.cancel(sign * ratio), None, sign, mult))
        elif poly.degree() == 2 and not (numeric and c[1] ** 2 - 4 * c[0] * c[2] >= 0):
            a2, a1, a0 = c
            w0 = _sqrt_positive(sympy.cancel(a0 / a2))
            # Q = sqrt(a0*a2)/a1, negative for a pair in the right half-plane (a1 < 0)
            q = sympy.oo if a1 == 0 else _sqrt_positive(sympy.factor(a0 * a2)) / sympy.factor(a1)
            out.append(NormalFactor(where, 2, w0, q, 1, mult))
        elif numeric:
            out += _numeric_factors(c, where, mult)
        else:  # symbolic and of higher order: kept whole, divided by its value at s = 0
            f0 = factor.subs(s, 0)
            if f0 == 0:
                return None
            poly_n = sympy.collect(sympy.expand(sympy.cancel(factor / f0)), s)
            out.append(NormalFactor(where, poly.degree(), None, None, 1, mult, poly=poly_n))
    return out


def normal_form_of(expr, name: str = "H") -> NormalForm | None:
    """The normalized form of a result in s, read from its own factors; None when it has no s or is large.

    Factoring the numerator and denominator in s takes milliseconds on a result a person reads;
    the square roots of w0 and Q split with the parameters taken positive (component values).

    >>> R, C = sympy.symbols("R C")
    >>> nf = normal_form_of(-R/(s*R*C + 1))
    >>> nf.template(), nf.gain, nf.poles[0].w
    ('K/(1 + s/wp)', -R, 1/(C*R))
    """
    if getattr(expr, "is_large", False):
        return None
    e = sympy.cancel(sympy.together(as_expr(expr)))
    if not e.has(s):
        return None
    num, den = (sympy.expand(x) for x in sympy.fraction(e))
    pn, pd = sympy.Poly(num, s), sympy.Poly(den, s)
    if pd.LC().is_number and pd.LC() < 0:
        num, den, pn, pd = -num, -den, -pn, -pd
    kn, n_low = _lowest(pn.all_coeffs())
    kd, d_low = _lowest(pd.all_coeffs())
    if n_low == 0 or d_low == 0:
        return None
    zeros, poles = _factors(num, "zero"), _factors(den, "pole")
    if zeros is None or poles is None:
        return None
    return NormalForm(name, sympy.cancel(n_low / d_low), kn - kd, tuple(_named(zeros + poles)))


def normal_form(tf) -> NormalForm | None:
    """The normalized form of an engine ``TransferFunction`` (read from its H(s)), or None.

    >>> from nodeterm.engine.analysis.transfer import transfer_function
    >>> normal_form(transfer_function(1/(s + 1))).template()
    'K/(1 + s/wp)'
    """
    return normal_form_of(tf.expr, tf.name)


def _named(factors: list[NormalFactor]) -> list[NormalFactor]:
    """Symbols: wp / wz for first-order, w0 (Q) for second-order poles, w0z (Qz) for second-order zeros;
    numbered when there are several of a kind, lowest frequency first where the order is known."""
    base = {("pole", 1): "wp", ("zero", 1): "wz", ("pole", 2): "w0", ("zero", 2): "w0z"}
    groups: dict[tuple[str, int], list[int]] = {}
    for i, f in enumerate(factors):
        if f.poly is None:
            groups.setdefault((f.where, f.order), []).append(i)
    out = list(factors)
    for key, idx in groups.items():
        def freq(i):
            w = factors[i].w
            return float(w) if w is not None and w.is_number else math.inf
        idx = sorted(idx, key=freq) if all(factors[i].w.is_number for i in idx) else idx
        for n, i in enumerate(idx, start=1):
            name = base[key] + (str(n) if len(idx) > 1 else "")
            f = factors[i]
            out[i] = NormalFactor(f.where, f.order, f.w, f.q, f.sign, f.multiplicity, name, f.poly)
    order = {i: k for k, i in enumerate(sorted(range(len(out)), key=lambda i: (out[i].where != "zero",
                                                                               out[i].poly is not None,
                                                                               out[i].name)))}
    return [out[i] for i in sorted(range(len(out)), key=order.get)]


# --- text ------------------------------------------------------------------------------------------------
def _hz(w) -> str:
    return number_text(float(w) / (2 * math.pi), "Hz")


def _value(x, unit, ascii_only: bool) -> str:
    """A symbol's value: exact, then the number; a float (a numeric split) as the number alone."""
    e = as_expr(x)
    if e.is_number and e.is_real and e.has(sympy.Float):
        return number_text(float(e), unit, ascii_only)
    if not e.is_number and getattr(unit, "symbol", unit):
        return f"{expr_text(e)}  [{getattr(unit, 'symbol', unit)}]"
    return value_text(e, unit, ascii_only)


def _w_text(w, ascii_only: bool) -> str:
    """``5000*sqrt(2) (≈ 7.071 krad/s, f ≈ 1.125 kHz)``; a symbolic w in rad/s."""
    e = as_expr(w)
    text = _value(e, "rad/s", ascii_only)
    if e.is_number and e.is_real:
        approx = "~" if ascii_only else "≈"
        if text.endswith(")"):
            text = text[:-1] + f", f {approx} {_hz(e)})"
        else:
            text += f" (f {approx} {_hz(e)})"
    return text


def normal_form_lines(nf: NormalForm, unit=None, indent: str = "    ", ascii_only: bool = False) -> list[str]:
    """``H(s) = K/(1 + s/wp)`` and the value of each symbol, one a line.

    ``unit`` is the unit of H (a ``dimensions.Unit`` or text); K carries it when there is no
    pole or zero at the origin.
    """
    from nodeterm.present.dimensions import HERTZ, unit_of
    k_unit = ""
    if unit is not None:
        dim = getattr(unit, "dim", None)
        if dim is not None and nf.origin:
            k_unit = unit_of(dim / HERTZ ** nf.origin)
        elif nf.origin == 0:
            k_unit = unit
    out = [f"{indent}{nf.name}(s) = {nf.template()}"]
    names = ["K"] + [f.name for f in nf.factors if f.poly is None]
    wide = max(len(n) for n in names + [f.q_name for f in nf.factors if f.order == 2 and f.poly is None])
    out.append(f"{indent}  {'K'.ljust(wide)} = {_value(nf.gain, k_unit, ascii_only)}")
    for f in nf.factors:
        if f.poly is not None:
            continue
        what = {("pole", 1): "pole", ("zero", 1): "zero", ("pole", 2): "pole pair", ("zero", 2): "zero pair"}
        rhp = " (right half-plane)" if f.sign < 0 or (f.q is not None and f.q != sympy.oo
                                                     and _is_negative(f.q)) else ""
        out.append(f"{indent}  {f.name.ljust(wide)} = {_w_text(f.w, ascii_only)}, {what[(f.where, f.order)]}{rhp}")
        if f.order == 2:
            q = "infinite" if f.q == sympy.oo else _value(f.q, "", ascii_only)
            out.append(f"{indent}  {f.q_name.ljust(wide)} = {q}")
    return out


def normal_form_dict(nf: NormalForm, unit=None) -> dict:
    """JSON-ready: the template and each symbol's exact value (SymPy syntax) and formatted value."""
    factors = []
    for f in nf.factors:
        d = {"where": f.where, "order": f.order, "multiplicity": f.multiplicity}
        if f.poly is not None:
            d["polynomial"] = expr_text(f.poly)
        else:
            d.update(name=f.name, w=expr_text(f.w), w_formatted=value_text(f.w, "rad/s"), sign=f.sign)
            if f.order == 2:
                d.update(q_name=f.q_name, Q="oo" if f.q == sympy.oo else expr_text(f.q))
        factors.append(d)
    k_unit = unit if nf.origin == 0 and unit is not None else ""
    return {"form": f"{nf.name}(s) = {nf.template()}", "K": expr_text(nf.gain),
            "K_formatted": value_text(nf.gain, k_unit), "origin_power": nf.origin, "factors": factors}


def normal_forms(solution, circuit, transfer: dict | None = None) -> dict[str, NormalForm]:
    """name -> ``NormalForm`` of each [find] quantity in s that has one.

    ``transfer`` (name -> ``TransferFunction``, e.g. a study's) is read when given; otherwise each
    result is read directly. Results with more than ``MAX_OPS`` operations are left out: nobody
    reads them as a product of factors, and factoring them would slow every report.
    """
    out = {}
    for name, v in solution.find.items():
        if name not in circuit.find or getattr(v, "is_large", False):
            continue
        if transfer is not None and name in transfer:
            v = transfer[name].expr
            if getattr(v, "is_large", False):
                continue
        e = as_expr(v)
        if not e.has(s) or sympy.count_ops(e) > MAX_OPS:
            continue
        nf = normal_form_of(e, name)
        if nf is not None:
            out[name] = nf
    return out
