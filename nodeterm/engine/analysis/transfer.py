"""Transfer functions H(s) = N(s)/D(s): poles, zeros, gains, sections and frequency response.

SymPy does the exact part (``Poly``, ``roots``, ``factor_list``); NumPy evaluates
N(jw)/D(jw) over arrays of frequencies (``numpy.polyval``) and finds roots of orders
above two; SciPy's ``brentq`` refines the -3 dB points. What is written by hand is
only the trade's reading of the factors (Horowitz & Hill, The Art of Electronics, ch. 6;
Franco, Design with Operational Amplifiers, ch. 3 -- from memory):

* first-order factor ``a1*s + a0``: corner ``wc = a0/a1``;
* second-order factor ``a2*s**2 + a1*s + a0``: ``w0 = sqrt(a0/a2)``, ``Q = sqrt(a0*a2)/a1``,
  damping ``zeta = 1/(2*Q)``; ``f = w/(2*pi)`` throughout.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import sympy

from nodeterm.engine.symbols import as_expr
from nodeterm.engine.symbols import s

SQRT2_DB = 20 * math.log10(math.sqrt(2))  # 3.0103 dB
MAX_TERMS_FOR_DETAIL = 200
"""Symbolic N and D with more terms than this get no exact roots or factored sections."""


@dataclass(frozen=True)
class Section:
    """One factor of N(s) or D(s), read as the trade reads it.

    Attributes:
        where: "pole" (a factor of D) or "zero" (a factor of N).
        order: 1 or 2 (0 for a factor s alone: a pole or zero at the origin).
        factor: the factor as an expression in s (None for a numeric split of a higher factor).
        w0: corner (order 1) or natural frequency (order 2) in rad/s.
        q: quality factor (order 2), or None; negative for a pair in the right half-plane.
        multiplicity: how many times the factor appears.
        right_half_plane: True when the factor's roots have a positive real part (an unstable
            pole, or a zero that adds phase lag: 1 - s/wc). ``w0`` stays the magnitude.
    """

    where: str
    order: int
    factor: sympy.Expr | None
    w0: sympy.Expr | None = None
    q: sympy.Expr | None = None
    multiplicity: int = 1
    right_half_plane: bool = False

    @property
    def f0(self) -> sympy.Expr | None:
        return None if self.w0 is None else self.w0 / (2 * sympy.pi)

    @property
    def damping(self) -> sympy.Expr | None:
        return None if self.q is None else 1 / (2 * self.q)


@dataclass(frozen=True)
class TransferFunction:
    """H(s) of one [find] quantity.

    Attributes:
        name: the [find] name.
        expr: H(s) in canonical form.
        num, den: N(s) and D(s), collected in powers of s.
        num_coeffs, den_coeffs: coefficients, highest power of s first.
        poles, zeros: exact roots when the order is at most 2, complex numbers when the
            coefficients are numbers, else None (symbolic and of higher order).
        dc_gain: H(0) (``oo`` for a pole at the origin).
        hf_gain: lim H(s) for s -> oo.
        sections: first- and second-order factors of D (poles) and N (zeros).
    """

    name: str
    expr: sympy.Expr
    num: sympy.Expr
    den: sympy.Expr
    num_coeffs: tuple
    den_coeffs: tuple
    poles: tuple | None
    zeros: tuple | None
    dc_gain: sympy.Expr
    hf_gain: sympy.Expr
    sections: tuple[Section, ...] = field(default=())
    params: frozenset | None = None
    """The free symbols other than s, when known without building the expression (large results)."""

    @property
    def order(self) -> int:
        return len(self.den_coeffs) - 1

    @property
    def symbols(self) -> set:
        """Free symbols other than s (parameters still without a value)."""
        if self.params is not None:
            return set(self.params)
        return self.expr.free_symbols - {s}

    @property
    def is_numeric(self) -> bool:
        return not self.symbols

    def evaluate(self, freqs_hz) -> np.ndarray:
        """H(j*2*pi*f) for an array of frequencies in Hz (needs every parameter value)."""
        if not self.is_numeric:
            raise ValueError("H(s) still has symbols: " + ", ".join(sorted(map(str, self.symbols))))
        jw = 2j * np.pi * np.asarray(freqs_hz, dtype=float)
        n = np.array([complex(c) for c in self.num_coeffs])
        d = np.array([complex(c) for c in self.den_coeffs])
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.polyval(n, jw) / np.polyval(d, jw)


def _positive(expr: sympy.Expr) -> tuple[sympy.Expr, dict]:
    """Replace symbols by positive ones (component values) so square roots simplify."""
    fwd = {x: sympy.Symbol(x.name, positive=True) for x in expr.free_symbols if x != s}
    return expr.xreplace(fwd), {v: k for k, v in fwd.items()}


def _negative(expr: sympy.Expr) -> bool:
    """True when ``expr`` is negative for every positive value of its parameters."""
    return bool(_positive(as_expr(expr))[0].is_negative)


def _simplify_positive(expr: sympy.Expr) -> sympy.Expr:
    pos, back = _positive(as_expr(expr))
    return sympy.simplify(sympy.powsimp(pos, force=True)).xreplace(back)


def _coeffs(expr: sympy.Expr) -> tuple:
    return tuple(sympy.Poly(expr, s).all_coeffs())


def _roots(poly_expr: sympy.Expr) -> tuple | None:
    """Roots with multiplicity: exact up to order 2, numeric for numbers, else None."""
    poly = sympy.Poly(poly_expr, s)
    if poly.degree() <= 0:
        return ()
    numeric = not (poly_expr.free_symbols - {s})
    if poly.degree() <= 2:
        found = sympy.roots(poly)
        if sum(found.values()) == poly.degree():
            return tuple(_tidy_root(r) for r, m in found.items() for _ in range(m))
    if numeric:
        return numeric_roots(poly.all_coeffs())
    return None


def _tidy_root(r: sympy.Expr) -> sympy.Expr:
    """An exact root in a readable form: one fraction, common factors pulled out.

    ``simplify`` gives much the same for the roots of a symbolic quadratic at ten times the cost
    (seconds on a state-variable filter); numbers still get it (it is quick on them).
    """
    if r.is_number:
        return sympy.simplify(r)
    if any(not p.exp.is_Integer for p in r.atoms(sympy.Pow)):
        return sympy.factor_terms(sympy.together(r))
    return sympy.factor(sympy.cancel(r))


def numeric_roots(coeffs) -> tuple:
    """Roots (with multiplicity) of a polynomial with number coefficients, highest power first.

    Rational coefficients (the usual case: exact values) go to FLINT's certified root isolation,
    which gives real roots exactly real and every root to double precision: NumPy's companion-matrix
    roots of a 16th-order filter's denominator are off by 1e-5 relative and show real poles as
    complex pairs with tiny imaginary parts. Other numbers (floats, roots) use ``numpy.roots``.

    >>> numeric_roots([1, 3, 2])
    ((-2+0j), (-1+0j))
    """
    exact = [sympy.Rational(c) if not isinstance(c, sympy.Basic) else c for c in coeffs]
    try:
        import flint
    except ImportError:  # pragma: no cover - python-flint is a dependency
        flint = None
    if flint is not None and all(c.is_Rational for c in exact):
        poly = flint.fmpq_poly([flint.fmpq(int(c.p), int(c.q)) for c in reversed(exact)])
        out = []
        for z, mult in poly.complex_roots():
            out += [complex(z.mid())] * mult  # a real root's imaginary part is exactly 0
        return tuple(out)
    return tuple(complex(r) for r in np.roots([complex(c) for c in coeffs]))


def _sections(poly_expr: sympy.Expr, where: str) -> list[Section]:
    out: list[Section] = []
    if sympy.Poly(poly_expr, s).degree() <= 0:
        return out
    _, factors = sympy.factor_list(poly_expr, s)
    for factor, mult in factors:
        poly = sympy.Poly(factor, s)
        c = poly.all_coeffs()
        if poly.degree() == 1:
            a1, a0 = c
            if a0 == 0:
                out.append(Section(where, 0, factor, sympy.Integer(0), None, mult))
            else:
                ratio = a0 / a1  # the root is s = -a0/a1: in the right half-plane when a0/a1 < 0
                rhp = _negative(ratio)  # with every parameter positive (component values)
                out.append(Section(where, 1, factor, _simplify_positive(-ratio if rhp else sympy.Abs(ratio)
                                                                        if ratio.is_number else ratio),
                                   None, mult, rhp))
        elif poly.degree() == 2 and c[1] != 0 and not _real_split(c):
            a2, a1, a0 = c
            w0 = _simplify_positive(sympy.sqrt(a0 / a2))
            q = _simplify_positive(sympy.sqrt(a0 * a2) / a1)
            rhp = _negative(q)  # a1/a2 < 0: the roots have a positive real part
            out.append(Section(where, 2, factor, w0, q, mult, rhp))
        elif poly.degree() == 2 and c[1] == 0:
            a2, _, a0 = c
            out.append(Section(where, 2, factor, _simplify_positive(sympy.sqrt(a0 / a2)), sympy.oo, mult))
        elif not (factor.free_symbols - {s}):
            out += [Section(where, sec.order, None, sec.w0, sec.q, mult, sec.right_half_plane)
                    for sec in _numeric_sections(c, where)]
        else:
            out.append(Section(where, poly.degree(), factor, None, None, mult))
    return out


def _real_split(c) -> bool:
    """A numeric quadratic with real roots is read as two first-order factors."""
    if any(x.free_symbols for x in c):
        return False
    a2, a1, a0 = (float(x) for x in c)
    return a1 * a1 - 4 * a2 * a0 >= 0


def _numeric_sections(coeffs, where: str) -> list[Section]:
    """Split numeric roots into real corners and complex pairs (w0 = |p|, Q = |p|/(-2*Re p)).

    A root in the right half-plane keeps its sign: the section is marked ``right_half_plane``
    and a complex pair's Q is negative (s**2/w0**2 + s/(Q*w0) + 1 has roots with real part
    -w0/(2*Q)).
    """
    roots = [complex(r) for r in numeric_roots(coeffs)]
    out = []
    for r in sorted(roots, key=lambda z: (abs(z), z.imag)):
        mag = abs(r)
        if abs(r.imag) <= 1e-9 * max(mag, 1e-300):
            out.append(Section(where, 0 if mag == 0 else 1, None, sympy.Float(mag),
                               right_half_plane=mag != 0 and r.real > 0))
        elif r.imag > 0:
            q = sympy.oo if r.real == 0 else sympy.Float(mag / (-2 * r.real))
            out.append(Section(where, 2, None, sympy.Float(mag), q, right_half_plane=r.real > 0))
    return out


def _limit_ratio(num_coeffs, den_coeffs, at_zero: bool) -> sympy.Expr:
    if at_zero:
        n0, d0 = num_coeffs[-1], den_coeffs[-1]
        if d0 == 0:
            return sympy.zoo if n0 != 0 else sympy.nan
        return sympy.simplify(n0 / d0)
    dn, dd = len(num_coeffs) - 1, len(den_coeffs) - 1
    if dn < dd:
        return sympy.Integer(0)
    if dn > dd:
        return sympy.oo
    return sympy.simplify(num_coeffs[0] / den_coeffs[0])


def transfer_function(expr: sympy.Expr, name: str = "H") -> TransferFunction:
    """Read an expression in s as H(s) = N(s)/D(s).

    Rational functions with integer coefficients (every result of the exact solver, large ones
    included) are read straight from their FLINT polynomials (:func:`transfer_from_polynomials`);
    anything else (floats, roots, pi) goes through SymPy (:func:`transfer_function_sympy`).

    >>> R, C = sympy.symbols("R C")
    >>> tf = transfer_function(1/(s*R*C + 1))
    >>> tf.den_coeffs, tf.poles, tf.dc_gain, tf.hf_gain
    ((C*R, 1), (-1/(C*R),), 1, 0)
    >>> [(x.order, x.w0) for x in tf.sections]
    [(1, 1/(C*R))]
    """
    polys = polynomials(expr)
    if polys is not None:
        return transfer_from_polynomials(*polys, name=name)
    return transfer_function_sympy(expr, name)


def transfer_function_sympy(expr: sympy.Expr, name: str = "H") -> TransferFunction:
    """:func:`transfer_function` by SymPy alone (``cancel``, ``Poly``): the fallback and the reference.

    >>> R, C = sympy.symbols("R C")
    >>> transfer_function_sympy(1/(s*R*C + 1)).den_coeffs
    (C*R, 1)
    """
    expr = sympy.cancel(sympy.together(as_expr(expr)))
    num, den = sympy.fraction(expr)
    num, den = sympy.expand(num), sympy.expand(den)
    lead = sympy.Poly(den, s).LC()
    if lead.is_number and lead < 0:
        num, den = -num, -den
    num_c, den_c = _coeffs(num), _coeffs(den)
    # Factoring and exact roots of very large symbolic polynomials can take minutes; keep them to sizes
    # a person reads (numeric coefficients are always cheap).
    small = len(sympy.Add.make_args(num)) + len(sympy.Add.make_args(den)) <= MAX_TERMS_FOR_DETAIL
    numeric = not ((num.free_symbols | den.free_symbols) - {s})
    detail = small or numeric
    return TransferFunction(
        name=name, expr=num / den,
        num=sympy.collect(num, s), den=sympy.collect(den, s),
        num_coeffs=num_c, den_coeffs=den_c,
        poles=_roots(den) if detail else None, zeros=_roots(num) if detail else None,
        dc_gain=_limit_ratio(num_c, den_c, True), hf_gain=_limit_ratio(num_c, den_c, False),
        sections=tuple(_sections(den, "pole") + _sections(num, "zero")) if detail else ())


# --- the polynomial path -----------------------------------------------------------------------
def polynomials(expr) -> tuple | None:
    """``(field, num, den)``: the FLINT polynomials of a rational function in lowest terms, or None.

    A large result of the exact solver (:class:`~nodeterm.engine.solving.fastsolve.LargeExpr`)
    hands over its own polynomials; a SymPy expression is converted when it is a rational function
    with rational coefficients and no roots or pi (those go to SymPy).
    """
    from nodeterm.engine.solving import fastsolve
    if fastsolve.flint is None:  # pragma: no cover - python-flint is a dependency
        return None
    if getattr(expr, "is_large", False):
        if expr._field.atoms or expr._field.s_index is None:
            return None
        num, den = expr.fraction
        return expr._field, num, den
    try:
        e = as_expr(expr)
        syms, atoms = fastsolve._symbols_and_atoms([e])
        if atoms:
            return None
        field = fastsolve.PolyField(syms | {s})
        num, den = field.reduce(field.ev(e))
    except (fastsolve.Unsupported, ZeroDivisionError, TypeError, sympy.SympifyError):
        return None
    return field, num, den


def _s_coefficients(field, p) -> dict:
    """{k: coefficient of s**k} of a polynomial (no entry for a zero coefficient)."""
    if p.is_zero():
        return {}
    return dict(field._s_groups(p))


def _poly_value(field, p):
    """A polynomial as a value: a SymPy expression when small, else a LargeExpr printed from FLINT."""
    from nodeterm.engine.solving.fastsolve import LargeExpr, large_terms
    if len(p) <= large_terms():
        return field.collected_expr(p) if not p.is_zero() else sympy.Integer(0)
    return LargeExpr(field, p, field.one, reduced=True)


def _poly_ratio(field, num, den):
    """``num/den`` (den not zero) in lowest terms, in the solver's canonical form."""
    return field.result(field.reduce((num, den)), reduced=True)


def transfer_from_polynomials(field, num, den, name: str = "H") -> TransferFunction:
    """H(s) = N(s)/D(s) read from FLINT polynomials: coefficients per power of s split off in C.

    Nothing here builds a SymPy expression of the whole N or D when they are large: the
    coefficients, N, D, H itself and the gains are SymPy only up to the solver's size limit
    (:func:`~nodeterm.engine.solving.fastsolve.large_terms`) and lazy ``LargeExpr`` above it. Exact
    roots and factored sections are computed (by SymPy, on the expanded polynomials) only up to
    :data:`MAX_TERMS_FOR_DETAIL` terms or when the coefficients are numbers.

    >>> R, C = sympy.symbols("R C")
    >>> tf = transfer_function(R*C*s/(R*C*s + 1))
    >>> tf.num_coeffs, tf.den_coeffs, tf.dc_gain, tf.hf_gain
    ((C*R, 0), (C*R, 1), 0, 1)
    """
    from nodeterm.engine.solving.fastsolve import LargeExpr
    dg = _s_coefficients(field, den)
    top = dg[max(dg)]
    if top.is_constant() and top.leading_coefficient() < 0:
        num, den = -num, -den
        dg = {k: -c for k, c in dg.items()}
    ng = _s_coefficients(field, num)
    dd, dn = max(dg), max(ng, default=0)
    num_c = tuple(_poly_value(field, ng[k]) if k in ng else sympy.Integer(0) for k in range(dn, -1, -1))
    den_c = tuple(_poly_value(field, dg[k]) if k in dg else sympy.Integer(0) for k in range(dd, -1, -1))
    si = field.s_index
    degrees = [max(a, b) for a, b in zip(num.degrees(), den.degrees())]
    params = frozenset(x for i, x in enumerate(field.symbols) if i != si and degrees[i] > 0)
    numeric = not params
    small = len(num) + len(den) <= MAX_TERMS_FOR_DETAIL
    zero = field.zero
    n0, d0 = ng.get(0, zero), dg.get(0, zero)
    if d0.is_zero():
        dc = sympy.zoo if not n0.is_zero() else sympy.nan
    else:
        dc = _poly_ratio(field, n0, d0)
    if dn < dd:
        hf = sympy.Integer(0)
    elif dn > dd:
        hf = sympy.oo
    else:
        hf = _poly_ratio(field, ng[dn], dg[dd])
    if small or numeric:  # sizes a person reads: SymPy gives exact roots and factored sections
        num_e, den_e = field.poly_expr(num), field.poly_expr(den)
        expr = num_e / den_e
        poles, zeros = _roots(den_e), _roots(num_e)
        sections = tuple(_sections(den_e, "pole") + _sections(num_e, "zero"))
    else:
        expr = LargeExpr(field, num, den, reduced=True)
        poles = zeros = None
        sections = ()
    return TransferFunction(
        name=name, expr=expr, num=_poly_value(field, num), den=_poly_value(field, den),
        num_coeffs=num_c, den_coeffs=den_c, poles=poles, zeros=zeros, dc_gain=dc, hf_gain=hf,
        sections=sections, params=params)


def transfer_functions(solution, circuit) -> dict[str, TransferFunction]:
    """H(s) of every [find] quantity that depends on s."""
    return {name: transfer_function(v, name) for name, v in solution.find.items()
            if name in circuit.find and depends_on_s(v)}


def depends_on_s(value) -> bool:
    """Whether a result depends on s, without building the SymPy expression of a large one."""
    if getattr(value, "is_large", False):
        return value.depends_on_s()
    return as_expr(value).has(s)


# --- frequency response ------------------------------------------------------------------------
@dataclass(frozen=True)
class FrequencyResponse:
    """Magnitude and phase of H(j*2*pi*f) over an array of frequencies."""

    name: str
    freqs: np.ndarray  # Hz
    h: np.ndarray  # complex

    @property
    def magnitude_db(self) -> np.ndarray:
        with np.errstate(divide="ignore"):
            return 20 * np.log10(np.abs(self.h))

    @property
    def phase_deg(self) -> np.ndarray:
        return np.degrees(np.unwrap(np.angle(self.h)))


def characteristic_frequencies(tf: TransferFunction) -> list[float]:
    """|p|/(2*pi) of every non-zero pole and zero, in Hz (numeric H only)."""
    out = []
    for roots in (tf.poles, tf.zeros):
        for r in roots or ():
            m = abs(complex(r))
            if m > 0 and math.isfinite(m):
                out.append(m / (2 * math.pi))
    return sorted(out)


def auto_range(tf: TransferFunction) -> tuple[float, float]:
    """A log range two decades either side of the poles and zeros (1 Hz to 1 MHz without any).

    >>> R, C = sympy.Integer(1000), sympy.Rational(1, 10**6)
    >>> auto_range(transfer_function(1/(s*R*C + 1)))
    (1.0, 100000.0)
    """
    f = characteristic_frequencies(tf)
    if not f:
        return 1.0, 1e6
    lo = 10 ** (math.floor(math.log10(f[0])) - 2)
    hi = 10 ** (math.ceil(math.log10(f[-1])) + 2)
    return float(lo), float(hi)


def frequency_response(tf: TransferFunction, f_from: float | None = None, f_to: float | None = None,
                       points: int = 400) -> FrequencyResponse:
    """Response over a log range (``auto_range`` where not given)."""
    lo, hi = auto_range(tf)
    lo = lo if f_from is None else f_from
    hi = hi if f_to is None else f_to
    freqs = np.logspace(math.log10(lo), math.log10(hi), points)
    return FrequencyResponse(tf.name, freqs, tf.evaluate(freqs))


@dataclass(frozen=True)
class Bandwidth:
    """The -3 dB points (Hz) around the reference gain (None where the response does not cross)."""

    reference_db: float
    low: float | None
    high: float | None


def bandwidth_3db(tf: TransferFunction) -> Bandwidth | None:
    """-3 dB points: below the DC gain for a response that passes DC, else around an interior peak.

    None when H(s) still has symbols or has no band (integrator, high-pass).

    >>> bw = bandwidth_3db(transfer_function(1000/(s + 1000)))
    >>> round(bw.high, 3), bw.low
    (159.155, None)
    """
    from scipy.optimize import brentq

    if not tf.is_numeric:
        return None
    lo, hi = auto_range(tf)
    lo, hi = lo / 100, hi * 100
    freqs = np.logspace(math.log10(lo), math.log10(hi), 4000)
    mag = 20 * np.log10(np.maximum(np.abs(tf.evaluate(freqs)), 1e-300))
    dc = tf.dc_gain
    passes_dc = dc.is_number and dc.is_finite and dc != 0
    peak = 0 if passes_dc else int(np.argmax(mag))
    if not passes_dc and peak in (0, len(freqs) - 1):
        return None  # no interior peak (an integrator or a high-pass): no band to speak of
    if passes_dc:
        ref = 20 * math.log10(abs(complex(dc)))
    else:  # refine the sampled peak between its neighbours
        from scipy.optimize import minimize_scalar
        a, b = math.log10(freqs[peak - 1]), math.log10(freqs[peak + 1])
        best = minimize_scalar(lambda lf: -abs(complex(tf.evaluate([10 ** lf])[0])), bounds=(a, b),
                               method="bounded", options={"xatol": 1e-12})
        ref = max(float(mag[peak]), 20 * math.log10(-best.fun))
    target = ref - SQRT2_DB

    def g(logf: float) -> float:
        return 20 * math.log10(max(abs(complex(tf.evaluate([10 ** logf])[0])), 1e-300)) - target

    def crossing(indices) -> float | None:
        prev = None
        for i in indices:
            if prev is not None and (mag[prev] - target) * (mag[i] - target) <= 0 and mag[prev] != mag[i]:
                a, b = sorted((math.log10(freqs[prev]), math.log10(freqs[i])))
                return 10 ** brentq(g, a, b, xtol=1e-12)
            prev = i
        return None

    high = crossing(range(peak, len(freqs)))
    low = None if passes_dc else crossing(range(peak, -1, -1))
    return Bandwidth(ref, low, high)


def gain_at(tf: TransferFunction, f_hz: float) -> complex:
    """H(j*2*pi*f) at one frequency."""
    return complex(tf.evaluate([f_hz])[0])
