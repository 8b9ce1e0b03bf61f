"""Physical dimensions of parameters and results, and the unit each one is shown in.

A small dimension algebra over three base units, the volt, the ampere and the second: every
electrical quantity of a linear circuit is V^a * A^b * s^c (the ohm is V/A, the farad A*s/V, the
henry V*s/A, the Laplace variable s is 1/s). Each parameter gets its dimension from the parts it
sets (a resistor's value is in ohms, a capacitor's in farads, an op-amp's gain is dimensionless...)
and from the parameters written in terms of it (``Rf = "Gain*Rin"`` makes Gain dimensionless);
node voltages are in volts, part currents in amperes. A ``[find]`` quantity's dimension then
follows from its definition (``V_out/I_Isig`` is in ohms).

Written here rather than with ``sympy.physics.units``: that package's dimension system gives the
same answers (the tests compare against it) but importing it costs about 0.35 s, as long as the
rest of a ``nodeterm solve`` run, and only exponent arithmetic on three base units is needed.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from fractions import Fraction

import sympy

from nodeterm.engine.symbols import as_expr, s


@dataclass(frozen=True)
class Dim:
    """V^v * A^a * s^t with rational exponents."""

    v: Fraction = Fraction(0)
    a: Fraction = Fraction(0)
    t: Fraction = Fraction(0)

    def __mul__(self, other: Dim) -> Dim:
        return Dim(self.v + other.v, self.a + other.a, self.t + other.t)

    def __truediv__(self, other: Dim) -> Dim:
        return Dim(self.v - other.v, self.a - other.a, self.t - other.t)

    def __pow__(self, k) -> Dim:
        k = Fraction(k)
        return Dim(self.v * k, self.a * k, self.t * k)

    @property
    def is_dimensionless(self) -> bool:
        return not (self.v or self.a or self.t)


ONE = Dim()
VOLT = Dim(v=Fraction(1))
AMPERE = Dim(a=Fraction(1))
SECOND = Dim(t=Fraction(1))
OHM = VOLT / AMPERE
SIEMENS = AMPERE / VOLT
FARAD = AMPERE * SECOND / VOLT
HENRY = VOLT * SECOND / AMPERE
HERTZ = SECOND ** -1

_PASSIVE = {"resistor": OHM, "capacitor": FARAD, "inductor": HENRY}
_VALUE = {"voltage_source": VOLT, "current_source": AMPERE, **_PASSIVE}
_GAIN = {"vcvs": ONE, "cccs": ONE, "vccs": SIEMENS, "ccvs": OHM, "opamp": ONE}
_OPAMP_EXTRA = {"gbw": HERTZ, "rin": OHM, "rout": OHM, "rails": VOLT, "max_current": AMPERE}
_LITERAL_UNITS = {"ohm": OHM, "Ω": OHM, "Hz": HERTZ, "F": FARAD, "H": HENRY, "V": VOLT, "A": AMPERE,
                  "S": SIEMENS}
_LITERAL = re.compile(r"\s*[+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?\s*[pnuµμmkMGT]?"
                      r"(ohm|Ω|Hz|F|H|V|A|S)\s*")


# --- units ------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Unit:
    """How a quantity of one dimension is written.

    Attributes:
        symbol: the unit as printed ("V", "Ω", "A/V", "V/V"; "" for a plain number).
        prefix: whether SI prefixes apply (``4.7 kΩ``); False for ratios and inverse units,
            which are printed as plain numbers (``0.7071 V/V``, ``6283 /s``).
        dim: the dimension, or None when it could not be told.
    """

    symbol: str
    prefix: bool = True
    dim: Dim | None = None


PLAIN = Unit("", False, None)
_NAMED = {VOLT: "V", AMPERE: "A", SECOND: "s", OHM: "Ω", SIEMENS: "S", FARAD: "F", HENRY: "H",
          AMPERE * SECOND: "C", VOLT * AMPERE: "W", VOLT * AMPERE * SECOND: "J", VOLT * SECOND: "Wb"}


def _power(name: str, k: Fraction) -> str:
    if k == 1:
        return name
    return f"{name}^{k}" if k.denominator == 1 else f"{name}^({k})"


def unit_of(dim: Dim | None, ratio: str = "") -> Unit:
    """The unit a quantity of dimension ``dim`` is printed in.

    ``ratio`` names a dimensionless ratio ("V/V" for a voltage gain); other dimensionless
    quantities print as plain numbers.

    >>> unit_of(OHM).symbol, unit_of(VOLT / SECOND).symbol, unit_of(HERTZ).symbol
    ('Ω', 'V/s', '/s')
    >>> unit_of(ONE, "V/V")
    Unit(symbol='V/V', prefix=False, dim=Dim(v=Fraction(0, 1), a=Fraction(0, 1), t=Fraction(0, 1)))
    """
    if dim is None:
        return PLAIN
    if dim.is_dimensionless:
        return Unit(ratio, False, dim)
    if dim in _NAMED:
        return Unit(_NAMED[dim], True, dim)
    num = [_power(n, k) for n, k in (("V", dim.v), ("A", dim.a), ("s", dim.t)) if k > 0]
    den = [_power(n, -k) for n, k in (("V", dim.v), ("A", dim.a), ("s", dim.t)) if k < 0]
    top = "·".join(num)
    bottom = "·".join(den)
    if bottom and len(den) > 1:
        bottom = f"({bottom})"
    symbol = top + (f"/{bottom}" if bottom else "")
    return Unit(symbol, bool(top), dim)


# --- dimension of an expression ---------------------------------------------------------------------
def dim_of(expr, dims: dict[str, Dim]) -> Dim | None:
    """The dimension of ``expr``, or None when a name in it has none known or it mixes dimensions.

    Names: ``s`` is 1/s, ``V_<node>`` volts, ``I_<part>`` amperes, parameters from ``dims``.

    >>> R, C = sympy.symbols("R C")
    >>> dim_of(1/(1 + s*R*C), {"R": OHM, "C": FARAD}) == ONE
    True
    >>> dim_of(sympy.Symbol("V_out")/sympy.Symbol("I_R1"), {}) == OHM
    True
    """
    if getattr(expr, "is_large", False):
        return None
    return _dim(as_expr(expr), dims)


def _symbol_dim(x: sympy.Symbol, dims: dict[str, Dim]) -> Dim | None:
    if x == s:
        return HERTZ
    if x.name in dims:
        return dims[x.name]
    if x.name.startswith("V_"):
        return VOLT
    if x.name.startswith("I_"):
        return AMPERE
    return None


def _dim(e: sympy.Expr, dims: dict[str, Dim], strict: bool = False) -> Dim | None:
    """Dimension of ``e``; a sum takes that of its known terms unless ``strict`` (every term known)."""
    if e.is_number:
        return ONE
    if e.is_Symbol:
        return _symbol_dim(e, dims)
    if e.is_Add:
        found = {d for d in (_dim(t, dims, strict) for t in e.args if not t.is_zero)}
        if strict and None in found:
            return None
        known = found - {None}
        return known.pop() if len(known) == 1 else None
    if e.is_Mul:
        out = ONE
        for f in e.args:
            d = _dim(f, dims, strict)
            if d is None:
                return None
            out = out * d
        return out
    if e.is_Pow:
        base, exp = e.args
        d = _dim(base, dims, strict)
        if d is None:
            return None
        if d.is_dimensionless:
            return ONE
        return d ** Fraction(int(exp.p), int(exp.q)) if exp.is_Rational else None
    if isinstance(e, sympy.Abs):
        return _dim(e.args[0], dims, strict)
    if isinstance(e, sympy.Function) and all(_dim(a, dims, strict) == ONE for a in e.args):
        return ONE
    return None


def _solve(expr: sympy.Expr, target: Dim, dims: dict[str, Dim], free: set[str]) -> bool:
    """Give the one name of unknown dimension in ``expr`` the dimension that makes ``expr`` ``target``.

    Returns True when something was learnt. Sums: each term must be ``target``.
    """
    if expr.is_number:
        return False
    if expr.is_Add:
        return any([_solve(t, target, dims, free) for t in expr.args if not t.is_number])
    factors = [(b, e) for b, e in (f.as_base_exp() for f in sympy.Mul.make_args(expr)) if not b.is_number]
    unknown = [(b, e) for b, e in factors if _dim(b, dims, strict=True) is None]
    if len(unknown) != 1:
        return False
    base, exp = unknown[0]
    if not exp.is_Rational or exp == 0:
        return False
    rest = ONE
    for b, e in factors:
        if (b, e) != (base, exp):
            rest = rest * (_dim(b, dims) ** Fraction(int(e.p), int(e.q)))
    want = (target / rest) ** (1 / Fraction(int(exp.p), int(exp.q)))
    if base.is_Symbol:
        if base.name in free and base.name not in dims:
            dims[base.name] = want
            return True
        return False
    return _solve(base, want, dims, free)


def parameter_dimensions(circuit) -> dict[str, Dim]:
    """The dimension of every parameter that can be told from the parts and the other parameters.

    A parameter that sets no part and relates to none that does is left out.
    """
    free = set(circuit.parameters)
    dims: dict[str, Dim] = {}
    rules: list[tuple[sympy.Expr, Dim | sympy.Expr]] = []
    for p in circuit.parts:
        if p.value is not None and p.kind in _VALUE:
            rules.append((p.value, _VALUE[p.kind]))
        if p.gain is not None and p.kind in _GAIN:
            rules.append((p.gain, _GAIN[p.kind]))
        if p.kind == "opamp":
            for key, dim in _OPAMP_EXTRA.items():
                val = p.get(key)
                for v in val if isinstance(val, (tuple, list)) else (val,):
                    if isinstance(v, sympy.Basic):
                        rules.append((v, dim))
    for prm in circuit.parameters.values():  # a value written with its unit: Izero = "4mA"
        m = _LITERAL.fullmatch(prm.text or "")
        if m:
            dims[prm.name] = _LITERAL_UNITS[m.group(1)]
    # a plain number (tau = 1) says nothing about a parameter's dimension
    relations = [(prm.symbol, prm.value) for prm in circuit.parameters.values()
                 if prm.value is not None and as_expr(prm.value).free_symbols]
    for _ in range(len(free) + 2):
        learnt = False
        for expr, dim in rules:
            learnt |= _solve(as_expr(expr), dim, dims, free)
        for sym, value in relations:
            d_sym, d_val = _dim(sym, dims), _dim(value, dims, strict=True)
            if d_sym is None and d_val is not None:
                learnt |= _solve(sym, d_val, dims, free)
            elif d_sym is not None and d_val is None:
                learnt |= _solve(value, d_sym, dims, free)
        if not learnt:
            break
    return dims


def ratio_label(expr, dims: dict[str, Dim]) -> str:
    """"V/V" for a ratio of voltages, "A/A" of currents, else "".

    >>> ratio_label(sympy.Symbol("V_out")/sympy.Symbol("V_in"), {})
    'V/V'
    """
    e = as_expr(expr)
    num, den = sympy.fraction(sympy.together(e))
    dn, dd = _dim(num, dims), _dim(den, dims)
    if dn == dd == VOLT:
        return "V/V"
    if dn == dd == AMPERE:
        return "A/A"
    return ""


def find_units(circuit, dims: dict[str, Dim] | None = None) -> dict[str, Unit]:
    """The unit of each ``[find]`` quantity, from its definition (``PLAIN`` when unknown).

    Results keep the dimension of their definition whatever values are substituted, so
    this reads the definitions, never the solved expressions.
    """
    dims = parameter_dimensions(circuit) if dims is None else dims
    out = {}
    for name, item in circuit.find.items():
        d = _dim(item.expr, dims)
        out[name] = unit_of(d, ratio_label(item.expr, dims) if d == ONE else "")
    return out


def result_units(circuit) -> tuple[Unit, Unit, dict[str, Unit]]:
    """(unit of node voltages, unit of part currents, unit of each [find] quantity)."""
    return unit_of(VOLT), unit_of(AMPERE), find_units(circuit)


def results_dict(circuit, solution) -> dict:
    """The additive JSON keys ``units`` and ``formatted``: each result's unit, and its text as the
    reports print it (exact, then the value with SI prefix and unit: ``61/12500000 (≈ 4.88 µA)``).

    A large symbolic result (kept as polynomials, printed expanded) has no number to add, so its
    formatted text would repeat its exact field: it is left out of ``formatted`` (a 12-section
    symbolic ladder's JSON would otherwise double, to 237 MB)."""
    from nodeterm.present.format import value_text
    volt, amp, finds = result_units(circuit)

    def shown(results: dict) -> dict:  # a large result's text is its exact field: not written twice
        return {n: v for n, v in results.items() if not getattr(v, "is_large", False)}

    return {
        "units": {"node_voltages": volt.symbol, "currents": amp.symbol,
                  "find": {n: finds[n].symbol for n in solution.find if n in finds}},
        "formatted": {
            "node_voltages": {n: value_text(v, volt) for n, v in shown(solution.node_voltages).items()},
            "currents": {n: value_text(v, amp) for n, v in shown(solution.currents).items()},
            "find": {n: value_text(v, finds.get(n, PLAIN), tag=True) for n, v in shown(solution.find).items()},
        },
    }
