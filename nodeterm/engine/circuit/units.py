"""Units that mean something: the dimension of a value, checked against what it sets.

A number may carry a unit (``10kohm``, ``100nF``, ``5V``); the unit is checked, not
ignored. :func:`dimension` follows an expression's units through products,
quotients, powers and parameters and returns a :class:`Dim`; :func:`check_part_value`
compares it with what the key of a part kind needs (a resistor's ``value`` is a
resistance, a VCCS's ``gain`` a conductance...).

A plain number (``10k``) says nothing about its unit: alone it fits any key, and in
a product it is a pure factor (``2*1kohm`` is a resistance). A parameter written
without any unit is *unstated* (``Span = "16m"`` may well be in A/V): every
expression that uses it is unstated too and is not checked, so files without units
behave as before.

Dimensions are exponents of volt, ampere and second: ohm = V/A, S = A/V,
F = A*s/V, H = V*s/A, Hz = 1/s (SI Brochure, 9th edition, section 2.3.4, derived
units; from memory). The IEC 60062 letter-digit code ``2R2`` writes R for the
decimal point of a resistance, so it is stated in ohms.

Written by hand: it walks the tokens of :func:`.expr.tokenize` with the same
grammar as the parser; no units library knows this expression language.

>>> dimension("10kohm").text, dimension("100nF*2").text, dimension("1/(s*1uF)").text
('ohm', 'F', 'ohm')
>>> dimension("10k").status
'pure'
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

from nodeterm.engine.circuit.expr import ExpressionError, tokenize

Exps = tuple[Fraction, Fraction, Fraction]  # volt, ampere, second

_ZERO: Exps = (Fraction(0), Fraction(0), Fraction(0))


def _e(v: int, a: int, t: int) -> Exps:
    return (Fraction(v), Fraction(a), Fraction(t))


UNIT_EXPS: dict[str, Exps] = {
    "ohm": _e(1, -1, 0), "Ω": _e(1, -1, 0), "R": _e(1, -1, 0), "S": _e(-1, 1, 0), "F": _e(-1, 1, 1),
    "H": _e(1, -1, 1), "V": _e(1, 0, 0), "A": _e(0, 1, 0), "Hz": _e(0, 0, -1),
}
NAMES: dict[Exps, tuple[str, str]] = {
    _e(1, -1, 0): ("ohm", "a resistance"), _e(-1, 1, 0): ("S", "a conductance"),
    _e(-1, 1, 1): ("F", "a capacitance"), _e(1, -1, 1): ("H", "an inductance"),
    _e(1, 0, 0): ("V", "a voltage"), _e(0, 1, 0): ("A", "a current"), _e(0, 0, -1): ("Hz", "a frequency"),
    _ZERO: ("no unit", "a pure number"),
}


@dataclass(frozen=True)
class Dim:
    """The dimension of a value: ``status`` "stated" (``exps`` known), "pure" (plain numbers only) or "unstated"."""

    status: str
    exps: Exps = _ZERO

    @property
    def text(self) -> str:
        if self.status != "stated":
            return self.status
        if self.exps in NAMES:
            return NAMES[self.exps][0]
        parts = [f"{u}^{e}" if e != 1 else u for u, e in zip(("V", "A", "s"), self.exps) if e]
        return "*".join(parts)

    @property
    def what(self) -> str:
        return NAMES.get(self.exps, (self.text, f"a quantity in {self.text}"))[1]


PURE = Dim("pure")
UNSTATED = Dim("unstated")
SECOND_INV = Dim("stated", _e(0, 0, -1))  # the Laplace variable s


def _mul(a: Dim, b: Dim, sign: int = 1) -> Dim:
    if "unstated" in (a.status, b.status):
        return UNSTATED
    if a.status == b.status == "pure":
        return PURE
    return Dim("stated", tuple(x + sign * y for x, y in zip(a.exps, b.exps)))


def _add(a: Dim, b: Dim, column: int) -> Dim:
    if "unstated" in (a.status, b.status):
        return UNSTATED
    if a.status == "pure":
        return b
    if b.status == "pure" or a.exps == b.exps:
        return a
    raise ExpressionError(f"adds {b.what} ({b.text}) to {a.what} ({a.text})",
                          hint="terms of a sum must have the same unit", column=column)


class _Walker:
    def __init__(self, text: str, names: dict[str, Dim]) -> None:
        self.tokens = tokenize(text)
        self.pos = 0
        self.names = names

    @property
    def tok(self):
        return self.tokens[self.pos]

    def take(self):
        tok = self.tokens[self.pos]
        self.pos += 1
        return tok

    def is_op(self, *ops: str) -> bool:
        return self.tok.kind == "op" and self.tok.text in ops

    def expression(self) -> Dim:
        value = self.term()
        while self.is_op("+", "-"):
            col = self.take().column
            value = _add(value, self.term(), col)
        return value

    def term(self) -> Dim:
        value = self.unary()
        while self.is_op("*", "/"):
            op = self.take().text
            value = _mul(value, self.unary(), 1 if op == "*" else -1)
        return value

    def unary(self) -> Dim:
        if self.is_op("+", "-"):
            self.take()
            return self.unary()
        return self.power()

    def power(self) -> Dim:
        base = self.atom()
        if self.is_op("^", "**"):
            self.take()
            start = self.pos
            self.unary()
            exponent = _exponent(self.tokens[start:self.pos])
            if base.status != "stated":
                return base
            if exponent is None:
                return UNSTATED
            return Dim("stated", tuple(x * exponent for x in base.exps))
        return base

    def atom(self) -> Dim:
        tok = self.take()
        if tok.kind == "num":
            unit = tok.unit
            return Dim("stated", UNIT_EXPS[unit]) if unit else PURE
        if tok.kind == "op" and tok.text == "(":
            value = self.expression()
            self.take()  # ")": the parser has checked the brackets
            return value
        if tok.kind == "name":
            if tok.text == "sqrt":
                self.take()
                inner = self.expression()
                self.take()
                if inner.status != "stated":
                    return inner
                return Dim("stated", tuple(x / 2 for x in inner.exps))
            if tok.text == "pi":
                return PURE
            if tok.text == "s":
                return self.names.get("s", SECOND_INV)
            return self.names.get(tok.text, UNSTATED)
        return UNSTATED


def _exponent(tokens) -> Fraction | None:
    """The exponent as a number when it is written with numbers only (the parser insists on that)."""
    text = "".join(t.text for t in tokens)
    try:
        sign, body = (-1, text[1:]) if text.startswith("-") else (1, text.lstrip("+"))
        body = body.strip("()")
        if "/" in body:
            p, q = body.split("/")
            return sign * Fraction(int(p.strip("()")), int(q.strip("()")))
        return sign * Fraction(body)
    except (ValueError, ZeroDivisionError):
        return None


def dimension(text: object, names: dict[str, Dim] | None = None) -> Dim:
    """The dimension of an expression (text that already parses); a TOML number is pure.

    Args:
        text: the value as written.
        names: parameter name -> its Dim (missing names are unstated).
    """
    if not isinstance(text, str):
        return PURE
    return _Walker(text, names or {}).expression()


# what each key of each kind sets
EXPECTED: dict[tuple[str, str], Exps] = {
    ("resistor", "value"): UNIT_EXPS["ohm"], ("capacitor", "value"): UNIT_EXPS["F"],
    ("inductor", "value"): UNIT_EXPS["H"], ("voltage_source", "value"): UNIT_EXPS["V"],
    ("current_source", "value"): UNIT_EXPS["A"],
    ("vcvs", "gain"): _ZERO, ("cccs", "gain"): _ZERO, ("vccs", "gain"): UNIT_EXPS["S"],
    ("ccvs", "gain"): UNIT_EXPS["ohm"],
    ("opamp", "gain"): _ZERO, ("opamp", "gbw"): UNIT_EXPS["Hz"], ("opamp", "rin"): UNIT_EXPS["ohm"],
    ("opamp", "rout"): UNIT_EXPS["ohm"], ("opamp", "rails"): UNIT_EXPS["V"],
    ("opamp", "max_current"): UNIT_EXPS["A"],
}


def mismatch(kind: str, key: str, dim: Dim) -> str | None:
    """What is wrong when ``dim`` does not fit ``key`` of a part of ``kind``, else None.

    >>> mismatch("resistor", "value", dimension("10uF"))
    'is a capacitance (F), but a resistor value is a resistance (ohm)'
    >>> mismatch("vccs", "gain", dimension("2mS")) is None, mismatch("vcvs", "gain", dimension("10")) is None
    (True, True)
    """
    want = EXPECTED.get((kind, key))
    if want is None or dim.status != "stated" or dim.exps == want:
        return None
    need = Dim("stated", want)
    return f"is {dim.what} ({dim.text}), but a {kind.replace('_', ' ')} {key} is {need.what} ({need.text})"


def value_unit_error(circuit, name: str, text: str) -> str | None:
    """Why a value given for parameter ``name`` (``--set``, the workbench) has the wrong unit, or None.

    Checked where a part's value or gain is that parameter itself; a value without a unit is never wrong.

    >>> from nodeterm.engine.circuit.loader import parse_circuit
    >>> c = parse_circuit('[parameters]\\nRin = "10k"\\n[parts]\\nR1 = { kind = "resistor", nodes = ["a", "gnd"], value = "Rin" }')
    >>> value_unit_error(c, "Rin", "10uF")
    "Rin = '10uF' is a capacitance (F), but a resistor value is a resistance (ohm) (Rin is the value of R1)"
    >>> value_unit_error(c, "Rin", "4k7") is None
    True
    """
    try:
        dim = dimension(text)
    except ExpressionError:
        return None  # the parser reports it
    if dim.status != "stated":
        return None
    from nodeterm.engine.symbols import param
    symbol = param(name)
    for p in circuit.parts:
        keys = [("value", p.value), ("gain", p.gain)] + [(k, v) for k, v in p.extra]
        for key, expr in keys:
            if expr == symbol:
                wrong = mismatch(p.kind, key, dim)
                if wrong:
                    return f"{name} = {text!r} {wrong} ({name} is the {key} of {p.id})"
    return None

