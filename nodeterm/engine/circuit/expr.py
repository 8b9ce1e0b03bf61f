"""The expression language of circuit files, parsed straight into SymPy objects.

Written by hand (a tokenizer and a recursive-descent parser with precedence
climbing) because the language must be closed: file text never reaches
``eval``, ``exec``, ``sympify`` or ``parse_expr``, engineering numbers such as
``4.7k`` or ``100nF`` need their own tokens, and every error must carry the
column where it happened. SymPy's own parsers accept far more than we allow.

The language::

    expression := term (("+" | "-") term)*
    term       := unary (("*" | "/") unary)*
    unary      := ("+" | "-") unary | power
    power      := atom (("^" | "**") unary)?          right-associative
    atom       := NUMBER | NAME | "sqrt" "(" expression ")" | "pi" | "(" expression ")"
    NUMBER     := digits [. digits] [e[+-]digits] [SI prefix] [unit]
                | digits LETTER digits [unit]             IEC 60062 letter-digit code

SI prefixes: p n u µ m k M G T (``m`` milli, ``M`` mega). Units: Ω ohm F H V A S Hz;
they do not change the value, and :mod:`.units` checks them against what the value
sets. The letter-digit code writes the letter for the decimal point: ``4k7`` = 4.7k,
``2R2`` = 2.2 ohm, ``1M5`` = 1.5M, ``4n7`` = 4.7n (R and K as well as the SI letters).

Limits keep hostile input from running for long: text length, nesting depth,
size of exponents and of numeric literals.

>>> parse_expression("4.7k")
4700
>>> parse_expression("2*R1 + 100nF", resolve=lambda n: __import__("sympy").Symbol(n))
2*R1 + 1/10000000
>>> parse_expression("1/(s*C)", resolve=lambda n: __import__("sympy").Symbol(n))
1/(C*s)
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from typing import Callable

import sympy

from nodeterm.engine.symbols import as_expr
from nodeterm.engine.errors import InputError

MAX_LENGTH = 10_000
MAX_DEPTH = 64
MAX_EXPONENT = 64
MAX_LITERAL_DIGITS = 60
MAX_LITERAL_EXPONENT = 300
MAX_NUMBER_BITS = 20_000

SI_PREFIXES = {
    "p": sympy.Rational(1, 10**12),
    "n": sympy.Rational(1, 10**9),
    "u": sympy.Rational(1, 10**6),
    "µ": sympy.Rational(1, 10**6),  # micro sign U+00B5
    "μ": sympy.Rational(1, 10**6),  # Greek mu U+03BC
    "m": sympy.Rational(1, 10**3),
    "k": sympy.Integer(10**3),
    "M": sympy.Integer(10**6),
    "G": sympy.Integer(10**9),
    "T": sympy.Integer(10**12),
}
UNITS = ("ohm", "Ω", "Hz", "F", "H", "V", "A", "S")

Resolver = Callable[[str], "sympy.Expr | None"]


class ExpressionError(InputError):
    """An expression that does not parse, or names something unknown.

    ``column`` is 1-based within the expression text.
    """


_NUMBER = re.compile(
    r"(?P<mant>(?:[0-9]+\.?[0-9]*|\.[0-9]+))(?P<exp>[eE][+-]?[0-9]+)?"
    r"(?P<prefix>[pnuµμmkMGT])?(?P<unit>ohm|Ω|Hz|F|H|V|A|S)?"
)
_CODE = re.compile(  # IEC 60062 letter-digit code: 4k7, 2R2, 1M5, 4n7 (the letter is the decimal point)
    r"(?P<int>[0-9]+)(?P<mark>[RKkMGTpnuµμm])(?P<frac>[0-9]+)(?P<unit>ohm|Ω|Hz|F|H|V|A|S)?"
)
_CODE_SCALE = {"R": sympy.Integer(1), "K": sympy.Integer(10**3), **SI_PREFIXES}
_UNIT_SPELLINGS = {"ohm": "ohm", "ohms": "ohm", "f": "F", "farad": "F", "h": "H", "henry": "H", "v": "V",
                   "volt": "V", "volts": "V", "a": "A", "amp": "A", "amps": "A", "hz": "Hz",
                   "siemens": "S"}
_NAME = re.compile(r"[A-Za-z_][A-Za-z0-9_]*")
_DIGITS = "0123456789"  # ASCII only: str.isdigit() and \d also accept ¹ or ٣
_OPERATORS = ("**", "+", "-", "*", "/", "^", "(", ")")


@dataclass(frozen=True)
class Token:
    kind: str  # "num", "name", "op", "end"
    text: str
    column: int  # 1-based
    value: sympy.Expr | None = None
    unit: str = ""  # the unit written after a number ("ohm", "F", ...; "R" for the IEC code 2R2)


def _number_value(match: re.Match, column: int) -> sympy.Expr:
    mant, exp, prefix = match.group("mant"), match.group("exp"), match.group("prefix")
    if len(mant) > MAX_LITERAL_DIGITS:
        raise ExpressionError(f"number {mant!r} has more than {MAX_LITERAL_DIGITS} digits",
                              hint="write it with an exponent or an SI prefix", column=column)
    value = sympy.Rational(mant)
    if exp:
        power = int(exp[1:])
        if abs(power) > MAX_LITERAL_EXPONENT:
            raise ExpressionError(f"exponent {exp[1:]} in {match.group(0)!r} is out of range "
                                  f"(|exponent| <= {MAX_LITERAL_EXPONENT})",
                                  hint="check the number", column=column)
        value = value * sympy.Rational(10) ** power
    if prefix:
        value = value * SI_PREFIXES[prefix]
    return value


def _code_token(m: re.Match, column: int) -> Token:
    """A number in the IEC 60062 letter-digit code (IEC 60062, marking codes for resistors and capacitors;
    from memory): the letter stands for the decimal point and the multiplier, R for units of ohms."""
    mark, unit = m.group("mark"), m.group("unit") or ""
    if mark == "R":
        if unit not in ("", "ohm", "Ω"):
            raise ExpressionError(f"{m.group(0)!r}: R in the letter-digit code marks ohms, not {unit}",
                                  hint=f"write {m.group('int')}R{m.group('frac')} for ohms", column=column)
        unit = unit or "R"
    value = sympy.Rational(f"{m.group('int')}.{m.group('frac')}") * _CODE_SCALE[mark]
    return Token("num", m.group(0), column, value, unit)


def _number_advice(m: re.Match, rest: str) -> str:
    """How to fix a number followed by letters that are neither a prefix nor a unit (targeted where we can)."""
    number, prefix = m.group(0), m.group("prefix")
    mant = m.group("mant") + (m.group("exp") or "")
    if rest.startswith("K") and not prefix and not m.group("unit"):
        return f"K is not an SI prefix (it is the kelvin): write {mant}k for kilo"
    if prefix in ("m", "M") and not m.group("unit") and rest.lower().startswith("eg"):
        return (f"'meg' is not an SI prefix: write {mant}M for mega (upper-case M; lower-case m is milli), "
                f"e.g. {mant}M or {mant}Mohm")
    unit = m.group("unit") or ""
    if rest == "s" and not unit:
        return (f"seconds carry no unit here: write {number} for a time in seconds, or {number}*s for a "
                "number times the Laplace variable s")
    if unit and (unit + rest).lower() in _UNIT_SPELLINGS:
        word, base = (unit + rest).lower(), number[: len(number) - len(unit)]
    elif not unit and rest.lower() in _UNIT_SPELLINGS:
        word, base = rest.lower(), number
    else:
        word = base = ""
    if word:
        return f"units are written ohm or Ω, F, H, V, A, S, Hz (case matters): write {base}{_UNIT_SPELLINGS[word]}"
    return ("a number may be followed by one SI prefix (p n u µ m k M G T) and one unit "
            "(Ω ohm F H V A S Hz), e.g. 4.7k, 100nF, 2.2kohm, or be written in the letter-digit code "
            "4k7; write * between a number and a name")


def _spaced_advice(number: Token, word: Token) -> str | None:
    """Advice for a number followed, after a space, by a prefix, unit or digits: ``10 k``, ``100 nF``, ``1 000``."""
    if word.kind == "num":
        return f"remove the space inside the number: write {number.text}{word.text}"
    if word.text == "K":
        return f"remove the space, and write k for kilo (K is the kelvin): {number.text}k"
    if word.text.lower() in ("meg", "megohm"):
        return f"remove the space, and write M for mega: {number.text}M"
    try:
        joined = tokenize(number.text + word.text)
    except ExpressionError:
        return None
    if len(joined) == 2:  # one number, then the end
        return f"remove the space inside the number: write {number.text}{word.text}"
    return None


def tokenize(text: str) -> list[Token]:
    """Split ``text`` into tokens, or raise :class:`ExpressionError` with a column.

    >>> [t.text for t in tokenize("2.2kΩ*(a+b)^2")]
    ['2.2kΩ', '*', '(', 'a', '+', 'b', ')', '^', '2', '']
    """
    if len(text) > MAX_LENGTH:
        raise ExpressionError(f"expression is {len(text)} characters long (limit {MAX_LENGTH})",
                              hint="split it into parameters", column=1)
    tokens: list[Token] = []
    i = 0
    while i < len(text):
        ch = text[i]
        col = i + 1
        if ch in " \t":
            i += 1
            continue
        if ch in _DIGITS or (ch == "." and i + 1 < len(text) and text[i + 1] in _DIGITS):
            code = _CODE.match(text, i)
            if code and not (code.end() < len(text) and (text[code.end()].isalnum() or text[code.end()] in "_.")):
                tokens.append(_code_token(code, col))
                i = code.end()
                continue
            m = _NUMBER.match(text, i)
            assert m is not None  # a digit always starts a number
            end = m.end()
            if end < len(text) and (text[end].isalnum() or text[end] in "_µμΩ."):
                tail = _NAME.match(text, end)
                bad = text[i:tail.end()] if tail else text[i:end + 1]
                raise ExpressionError(f"cannot read number {bad!r}", hint=_number_advice(m, text[end:tail.end()]
                                                                                         if tail else ""),
                                      column=col)
            tokens.append(Token("num", m.group(0), col, _number_value(m, col), m.group("unit") or ""))
            i = end
            continue
        if ch.isalpha() or ch == "_":
            m = _NAME.match(text, i)
            if m is None:  # a non-ASCII letter
                raise ExpressionError(f"unexpected character {ch!r}",
                                      hint="names use the letters A-Z, a-z, digits and _", column=col)
            tokens.append(Token("name", m.group(0), col))
            i = m.end()
            continue
        for op in _OPERATORS:
            if text.startswith(op, i):
                tokens.append(Token("op", op, col))
                i += len(op)
                break
        else:
            raise ExpressionError(f"unexpected character {ch!r}",
                                  hint="expressions use numbers, names, + - * / ^ ( ) and sqrt()",
                                  column=col)
    tokens.append(Token("end", "", len(text) + 1))
    return tokens


class _Parser:
    def __init__(self, text: str, resolve: Resolver) -> None:
        self.text = text
        self.tokens = tokenize(text)
        self.pos = 0
        self.resolve = resolve
        self.depth = 0

    @property
    def tok(self) -> Token:
        return self.tokens[self.pos]

    def take(self) -> Token:
        tok = self.tokens[self.pos]
        self.pos += 1
        return tok

    def expect(self, op: str) -> None:
        tok = self.tok
        if tok.kind != "op" or tok.text != op:
            found = "the end" if tok.kind == "end" else repr(tok.text)
            raise ExpressionError(f"expected {op!r} but found {found}",
                                  hint="check the brackets", column=tok.column)
        self.pos += 1

    def enter(self, column: int) -> None:
        self.depth += 1
        if self.depth > MAX_DEPTH:
            raise ExpressionError(f"expression is nested more than {MAX_DEPTH} levels deep",
                                  hint="simplify it or split it into parameters", column=column)

    def parse(self) -> sympy.Expr:
        if self.tok.kind == "end":
            raise ExpressionError("empty expression", hint="write a value such as 10k", column=1)
        value = self.expression()
        if self.tok.kind != "end":
            tok = self.tok
            before = self.tokens[self.pos - 1] if self.pos else None
            advice = _spaced_advice(before, tok) if before is not None and before.kind == "num" else None
            raise ExpressionError(f"unexpected {tok.text!r}",
                                  hint=advice or "write an operator (+ - * / ^) between values", column=tok.column)
        return value

    def expression(self) -> sympy.Expr:
        value = self.term()
        while self.tok.kind == "op" and self.tok.text in "+-":
            op = self.take().text
            rhs = self.term()
            value = value + rhs if op == "+" else value - rhs
        return value

    def term(self) -> sympy.Expr:
        value = self.unary()
        while self.tok.kind == "op" and self.tok.text in ("*", "/"):
            op = self.take()
            rhs = self.unary()
            if op.text == "*":
                value = value * rhs
            else:
                if rhs == 0:
                    raise ExpressionError("division by zero", hint="check the divisor",
                                          column=op.column)
                value = value / rhs
        return value

    def unary(self) -> sympy.Expr:
        tok = self.tok
        if tok.kind == "op" and tok.text in "+-":
            self.take()
            self.enter(tok.column)
            operand = self.unary()
            self.depth -= 1
            return -operand if tok.text == "-" else operand
        return self.power()

    def power(self) -> sympy.Expr:
        base = self.atom()
        tok = self.tok
        if tok.kind == "op" and tok.text in ("^", "**"):
            self.take()
            self.enter(tok.column)
            exponent = self.unary()
            self.depth -= 1
            if not exponent.is_Rational:
                raise ExpressionError("an exponent must be a plain number",
                                      hint="write e.g. R^2 or x^(1/2)", column=tok.column + len(tok.text))
            if abs(exponent) > MAX_EXPONENT or (exponent.q > MAX_EXPONENT):
                raise ExpressionError(f"exponent {exponent} is too large (limit {MAX_EXPONENT})",
                                      hint="circuit values never need such powers; check the expression",
                                      column=tok.column + len(tok.text))
            if base.is_Rational and base != 0:
                bits = max(abs(base.p).bit_length(), base.q.bit_length()) * abs(exponent)
                if bits > MAX_NUMBER_BITS:
                    raise ExpressionError("the number is too large to compute exactly",
                                          hint="check the powers in the expression",
                                          column=tok.column)
            if base == 0 and exponent < 0:
                raise ExpressionError("division by zero (0 to a negative power)", column=tok.column)
            result = base ** exponent
            if result.is_Number and not result.is_finite:
                raise ExpressionError("the value is not finite", column=tok.column)
            return result
        return base

    def atom(self) -> sympy.Expr:
        tok = self.take()
        if tok.kind == "num":
            return tok.value
        if tok.kind == "op" and tok.text == "(":
            self.enter(tok.column)
            value = self.expression()
            self.expect(")")
            self.depth -= 1
            return value
        if tok.kind == "name":
            if tok.text == "sqrt":
                if not (self.tok.kind == "op" and self.tok.text == "("):
                    raise ExpressionError("sqrt must be followed by '('", hint="write sqrt(x)",
                                          column=self.tok.column)
                self.take()
                self.enter(tok.column)
                arg = self.expression()
                self.expect(")")
                self.depth -= 1
                if arg.is_Number and arg < 0:
                    raise ExpressionError("square root of a negative number", column=tok.column)
                return sympy.sqrt(arg)
            if self.tok.kind == "op" and self.tok.text == "(":
                raise ExpressionError(f"{tok.text}() is not a function of the language",
                                      hint="the only function is sqrt()", column=tok.column)
            if tok.text == "pi":
                return sympy.pi
            if tok.text.startswith("__"):
                raise ExpressionError(f"name {tok.text!r} is not allowed",
                                      hint="names may not start with '__'", column=tok.column)
            value = self.resolve(tok.text)
            if value is None:
                raise ExpressionError(f"unknown name {tok.text!r}",
                                      hint="use a parameter of [parameters], V_<node>, I_<part> or s",
                                      column=tok.column)
            return value
        if tok.kind == "end":
            raise ExpressionError("expression ends too early", hint="complete the expression",
                                  column=tok.column)
        raise ExpressionError(f"unexpected {tok.text!r}",
                              hint="expected a number, a name or '('", column=tok.column)


Bound = tuple[int, int, int, int]  # (numerator bits, denominator bits, numerator degree, denominator degree)
SYMBOL_BOUND: Bound = (0, 0, 1, 0)


def size_bound(expr: sympy.Expr, known: dict | None = None) -> Bound:
    """Upper bounds on the size of ``expr`` once written as one expanded fraction.

    Returns (bits of the numerator's numbers, bits of the denominator's, total degree of the
    numerator in the symbols, of the denominator). ``known`` maps a symbol (a parameter) to the
    bound of the value it stands for, so sizes add up across parameters that refer to each other:
    each expression is bounded on its own by the parser, but ``p2 = "(p1 + 2)^64"`` over a chain of
    parameters would grow numbers of 64**n bits. Computed on the tree as written, expanding nothing.

    >>> a = sympy.Symbol("a")
    >>> size_bound((a + 3)**4)
    (16, 0, 4, 0)
    >>> size_bound(1/a**2, {a: (400, 0, 1, 0)})
    (0, 800, 0, 2)
    """
    known = known or {}
    if expr.is_Rational:
        return (abs(expr.p).bit_length(), 0 if expr.q == 1 else expr.q.bit_length(), 0, 0)
    if expr.is_Symbol:
        return known.get(expr, SYMBOL_BOUND)
    if expr.is_Pow and expr.exp.is_Rational:
        nb, db, nd, dd = size_bound(expr.base, known)
        k = abs(expr.exp.p)
        return (db * k, nb * k, dd * k, nd * k) if expr.exp < 0 else (nb * k, db * k, nd * k, dd * k)
    args = [size_bound(a, known) for a in expr.args]
    if not args:  # pi and other constants: like a symbol
        return SYMBOL_BOUND
    if expr.is_Add:  # over the common denominator
        db, dd = sum(b[1] for b in args), sum(b[3] for b in args)
        return (max(b[0] - b[1] for b in args) + db + len(args).bit_length(), db,
                max(b[2] - b[3] for b in args) + dd, dd)
    return tuple(sum(b[i] for b in args) for i in range(4))  # products (and anything else)


MAX_TERMS = 1000  # terms of a value once expanded over one denominator


def term_bound(expr: sympy.Expr, known: dict | None = None) -> tuple[int, int]:
    """Upper bounds on the number of terms of ``expr``'s numerator and denominator once expanded.

    ``known`` maps a parameter symbol to the bound of its value, as in :func:`size_bound`.
    A value such as ``(a+b+c)^64`` is short to write but expands to 2,145 terms and would make
    an exact solve run for minutes; the loader refuses it with this bound.

    >>> a, b, c = sympy.symbols("a b c")
    >>> term_bound((a + b + c)**64)
    (2145, 1)
    >>> term_bound(1/a + 1/b)
    (2, 1)
    """
    known = known or {}
    cap = 10 * MAX_TERMS  # numbers past the cap only need to say "too many"

    def go(e) -> tuple[int, int]:
        if e.is_Symbol:
            return known.get(e, (1, 1))
        if e.is_Atom:
            return (1, 1)
        if e.is_Pow and e.exp.is_Integer:
            n, d = go(e.base)
            k = abs(int(e.exp))
            grow = lambda m: 1 if m == 1 else min(cap, math.comb(m + k - 1, k))  # noqa: E731
            return (grow(d), grow(n)) if e.exp < 0 else (grow(n), grow(d))
        if e.is_Pow:  # a root: an opaque quantity of its own
            return (1, 1)
        args = [go(x) for x in e.args]
        den = 1
        for _, d in args:
            den = min(cap, den * d)
        if e.is_Add:
            num = 0
            for n, d in args:
                num = min(cap, num + n * max(1, den // max(d, 1)))
            return (num, den)
        num = 1
        for n, _ in args:
            num = min(cap, num * n)
        return (num, den)

    return go(as_expr(expr))


def _no_names(name: str) -> None:
    return None


def parse_expression(text: str, resolve: Resolver = _no_names) -> sympy.Expr:
    """Parse ``text`` into a SymPy expression.

    Args:
        text: the expression as written by the user.
        resolve: maps a name to its SymPy value, or returns None if the name is unknown.

    Raises:
        ExpressionError: with the 1-based column of the problem.

    >>> parse_expression("10^10^10")
    Traceback (most recent call last):
    ...
    nodeterm.engine.circuit.expr.ExpressionError: <input> (column 4): error: exponent 10000000000 is too large (limit 64); circuit values never need such powers; check the expression
    """
    if not isinstance(text, str):
        raise ExpressionError(f"expected text, got {type(text).__name__}", column=1)
    return _Parser(text, resolve).parse()
