"""Transfer functions in the normalized forms engineers write, beside the raw ratio N(s)/D(s).

    H(s) = K * s^k * prod(1 + s/wz) * prod(s**2/w0z**2 + s/(Qz*w0z) + 1)
                   / (prod(1 + s/wp) * prod(s**2/w0**2 + s/(Q*w0) + 1))

K is the gain of the flat part (the DC gain when there is no pole or zero at the origin), each
first-order factor ``a1*s + a0`` becomes ``a0*(1 + s/wc)`` with ``wc = a0/a1`` (``1 - s/wc`` for a
right-half-plane root), each second-order ``a2*s**2 + a1*s + a0`` becomes
``a0*(s**2/w0**2 + s/(Q*w0) + 1)`` with ``w0 = sqrt(a0/a2)`` and ``Q = sqrt(a0*a2)/a1``
(Franco, Design with Operational Amplifiers, ch. 3 -- from memory). Because every normalized
factor is 1 at s = 0, K is the ratio of the lowest non-zero coefficients of N and D.

Read from the engine's ``TransferFunction`` record (its ``sections``, coefficients and roots);
nothing here factors or solves again.
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


def _is_negative(x: sympy.Expr) -> bool:
    """Negative as a number, or for every positive value of its symbols (component values)."""
    x = as_expr(x)
    if x.is_number:
        return bool(x.is_real and x < 0)
    pos = x.xreplace({y: sympy.Symbol(y.name, positive=True) for y in x.free_symbols})
    return bool(pos.is_negative)


def _root_near(roots, w: float, order: int):
    """The root of magnitude w (order 1: real; order 2: the one with positive imaginary part)."""
    best = None
    for r in roots or ():
        z = complex(r)
        if order == 2 and z.imag <= 0:
            continue
        if order == 1 and abs(z.imag) > 1e-9 * max(abs(z), 1e-300):
            continue
        if best is None or abs(abs(z) - w) < abs(abs(best) - w):
            best = z
    return best


def normal_form(tf) -> NormalForm | None:
    """The normalized form of a ``TransferFunction``, or None when its factors are not known.

    >>> from nodeterm.engine.analysis.transfer import transfer_function
    >>> R, C = sympy.symbols("R C")
    >>> nf = normal_form(transfer_function(-R/(s*R*C + 1)))
    >>> nf.template(), nf.gain, nf.poles[0].w
    ('K/(1 + s/wp)', -R, 1/(C*R))
    """
    if not tf.sections and tf.order > 0 and len(tf.num_coeffs) > 1:
        return None
    kn, n_low = _lowest(tf.num_coeffs)
    kd, d_low = _lowest(tf.den_coeffs)
    if n_low == 0 or d_low == 0:
        return None
    gain = sympy.cancel(n_low / d_low)
    factors: list[NormalFactor] = []
    degree = {"zero": 0, "pole": 0}
    for sec in tf.sections:
        if sec.factor is not None and not as_expr(sec.factor).has(s):
            continue
        if sec.order == 0:  # a root at the origin: counted by the lowest coefficients
            degree[sec.where] += sec.multiplicity
            continue
        roots = tf.poles if sec.where == "pole" else tf.zeros
        if sec.order == 1 and sec.w0 is not None:
            w, sign = sec.w0, 1
            if sec.factor is not None:
                a1, a0 = sympy.Poly(sec.factor, s).all_coeffs()
                if _is_negative(a0 / a1):
                    sign = -1
                    w = sec.w0 if sec.w0.is_number else sympy.cancel(-sec.w0)
            else:
                r = _root_near(roots, float(sec.w0), 1)
                sign = -1 if r is not None and r.real > 0 else 1
            factors.append(NormalFactor(sec.where, 1, w, None, sign, sec.multiplicity))
        elif sec.order == 2 and sec.w0 is not None:
            q = sec.q
            if sec.factor is None and q is not None and q != sympy.oo:
                r = _root_near(roots, float(sec.w0), 2)
                if r is not None and r.real > 0:
                    q = -q
            factors.append(NormalFactor(sec.where, 2, sec.w0, q, 1, sec.multiplicity))
        elif sec.factor is not None:
            f0 = as_expr(sec.factor).subs(s, 0)
            if f0 == 0:
                return None
            poly = sympy.collect(sympy.expand(sympy.cancel(sec.factor / f0)), s)
            factors.append(NormalFactor(sec.where, sec.order, None, None, 1, sec.multiplicity, poly=poly))
        else:
            return None
        degree[sec.where] += sec.order * sec.multiplicity
    if degree["zero"] != len(tf.num_coeffs) - 1 or degree["pole"] != len(tf.den_coeffs) - 1:
        return None  # the sections do not account for every root: no form rather than a wrong one
    return NormalForm(tf.name, gain, kn - kd, tuple(_named(factors)))


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


def readable_transfer(solution, circuit, transfer: dict | None = None) -> dict:
    """name -> ``TransferFunction`` of each [find] quantity in s small enough to read.

    ``transfer`` (e.g. a study's transfer functions) is used when given; otherwise they are
    computed here, skipping large results (more than ``MAX_OPS`` operations), which would take
    long to factor and which nobody reads as a product of factors anyway.
    """
    if transfer is not None:
        return dict(transfer)
    from nodeterm.engine.analysis.transfer import transfer_function
    out = {}
    for name, v in solution.find.items():
        if name not in circuit.find or getattr(v, "is_large", False):
            continue
        e = as_expr(v)
        if not e.has(s) or sympy.count_ops(e) > MAX_OPS:
            continue
        out[name] = transfer_function(e, name)
    return out


def normal_forms(solution, circuit, transfer: dict | None = None) -> dict[str, NormalForm]:
    """name -> ``NormalForm`` of each [find] quantity in s that has one."""
    out = {}
    for name, tf in readable_transfer(solution, circuit, transfer).items():
        nf = normal_form(tf)
        if nf is not None:
            out[name] = nf
    return out
