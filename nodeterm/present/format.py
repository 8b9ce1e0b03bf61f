"""Formatting of expressions and numbers for people: one-line forms and engineering notation.

Expressions use SymPy's string printer (one-line, ``**`` for powers), so what
the user reads can be pasted back into a circuit file. Numbers get engineering
notation with SI prefixes (``4.7 k``, ``-5.1 m``).
"""

from __future__ import annotations

import math

import sympy

from nodeterm.engine.symbols import as_expr
_PREFIXES = [(12, "T"), (9, "G"), (6, "M"), (3, "k"), (0, ""), (-3, "m"), (-6, "µ"), (-9, "n"), (-12, "p"),
             (-15, "f")]
_PREFIX_OF = dict(_PREFIXES)


def eng(value: float, unit: str = "", digits: int = 4, ascii_only: bool = False) -> str:
    """Engineering notation with an SI prefix.

    >>> eng(0.0051, "A")
    '5.1 mA'
    >>> eng(-4700, "Ω")
    '-4.7 kΩ'
    >>> eng(0)
    '0'
    """
    if value == 0:
        return "0" + (f" {unit}" if unit else "")
    if not math.isfinite(value):
        return str(value)
    exp3 = int(math.floor(math.log10(abs(value)) / 3) * 3)
    exp3 = max(-15, min(12, exp3))
    mant = value / 10 ** exp3
    text = f"{mant:.{digits}g}"
    if abs(float(text)) >= 1000 and exp3 < 12:  # rounding pushed it to the next prefix (999.96 -> 1 k)
        exp3 += 3
        mant = value / 10 ** exp3
        text = f"{mant:.{digits}g}"
    if "e" in text:
        text = f"{float(text):g}"
    prefix = _PREFIX_OF[exp3]
    if ascii_only and prefix == "µ":
        prefix = "u"
    sep = " " if (prefix or unit) else ""
    return f"{text}{sep}{prefix}{unit}"


def expr_text(expr, ascii_only: bool = False, hand: bool = False) -> str:
    """One-line form of an expression in SymPy syntax (``**`` powers).

    Results print in SymPy's order (descending powers of s). ``hand=True`` keeps
    the order the terms were written in, for the terms of a KCL equation.

    >>> R, V1, V2, s = sympy.symbols("R V_1 V_2 s")
    >>> expr_text((V2 - V1)/(2*R), hand=True)
    '(V_2 - V_1)/(2*R)'
    >>> expr_text(1/(s**2 + 3*s + 2))
    '1/(s**2 + 3*s + 2)'
    """
    return sympy.sstr(expr, order="none" if hand else None)


def equation_text(e, ascii_only: bool = False) -> str:
    """``lhs = rhs``; a KCL written by the procedure shows its terms in the order written."""
    if e.terms and e.kind in ("kcl", "supernode_kcl"):
        text = ""
        for i, t in enumerate(e.terms):
            term = expr_text(t.expr, hand=True)
            if i and term.startswith("-"):
                text += " - " + term[1:]
            else:
                text += (" + " if i else "") + term
        return f"{text} = {expr_text(e.rhs)}"
    return f"{expr_text(e.lhs)} = {expr_text(e.rhs)}"


def is_numeric(expr) -> bool:
    if getattr(expr, "is_large", False):  # a large lazy result (engine.fastsolve.LargeExpr): never a number
        return False
    expr = as_expr(expr)
    return bool(expr.is_number) and not expr.has(sympy.zoo, sympy.nan)


def _unit(unit) -> tuple[str, bool]:
    """(symbol, takes SI prefixes) of a unit given as text or as a ``dimensions.Unit``."""
    if isinstance(unit, str):
        return unit, bool(unit) and unit not in ("V/V", "A/A") and not unit.startswith("/")
    return unit.symbol, unit.prefix


def number_text(x: float, unit="", ascii_only: bool = False) -> str:
    """A number in its unit: engineering notation where the unit takes prefixes, else 4 digits.

    >>> number_text(4.88e-6, "A"), number_text(-0.5, "V/V"), number_text(6283.2, "/s")
    ('4.88 µA', '-0.5 V/V', '6283 /s')
    """
    symbol, prefix = _unit(unit)
    if prefix:
        return eng(x, symbol, ascii_only=ascii_only)
    text = f"{x:.4g}"
    if "e" in text:  # 1e+06 -> 1e6
        mant, exp = text.split("e")
        text = f"{mant}e{int(exp)}"
    return f"{text} {symbol}" if symbol else text


def dc_value(expr):
    """H(0) of an expression in s with number coefficients, or None (symbols, a pole at s = 0, too large).

    >>> s = sympy.Symbol("s")
    >>> dc_value(-10**13/(47*s + 10**7))
    -1000000
    >>> dc_value(1/s) is None
    True
    """
    from nodeterm.engine.symbols import s
    if getattr(expr, "is_large", False):
        return None
    e = as_expr(expr)
    if e.free_symbols != {s}:
        return None
    num, den = sympy.fraction(sympy.cancel(sympy.together(e)))
    n0, d0 = num.subs(s, 0), den.subs(s, 0)
    if d0 == 0 or not (n0.is_number and d0.is_number):
        return None
    return sympy.nsimplify(n0 / d0) if (n0 / d0).has(sympy.Float) else n0 / d0


def value_text(expr, unit="", ascii_only: bool = False, tag: bool = False) -> str:
    """An exact result, then its value in engineering notation with its unit when it is a number.

    ``unit`` is text ("V", "A") or a ``dimensions.Unit``. An expression in s with number
    coefficients gets its DC value; ``tag=True`` puts the unit after a symbolic result.

    >>> value_text(sympy.Rational(-51, 10000), "A")
    '-51/10000 (≈ -5.1 mA)'
    >>> value_text(sympy.Rational(61, 12500000), "A")
    '61/12500000 (≈ 4.88 µA)'
    >>> value_text(-10**13/(47*sympy.Symbol("s") + 10**7), "Ω")
    '-10000000000000/(47*s + 10000000) (DC ≈ -1 MΩ)'
    >>> value_text(sympy.Symbol("Rf")*2, "Ω", tag=True)
    '2*Rf  [Ω]'
    """
    symbol, _ = _unit(unit)
    text = expr_text(expr)
    approx = "~" if ascii_only else "≈"
    if is_numeric(expr) and as_expr(expr).is_real:
        value = as_expr(expr)
        if value.is_Integer and abs(int(value)) < 1000:
            return f"{text} {symbol}".rstrip()
        return f"{text} ({approx} {number_text(float(value), unit, ascii_only)})"
    dc = dc_value(expr)
    if dc is not None and dc.is_real:
        if dc.is_Integer and abs(int(dc)) < 1000:
            return f"{text} (DC: {dc} {symbol})".replace(" )", ")")
        return f"{text} (DC {approx} {number_text(float(dc), unit, ascii_only)})"
    if tag and symbol and not getattr(expr, "is_large", False):
        return f"{text}  [{symbol}]"
    return text


def pretty_text(expr, width: int | None = None) -> str | None:
    """The 2-D form of an expression (or of ``sympy.Eq``), names written as in the one-line form.

    SymPy's pretty printer turns ``V_out`` into V with subscript letters where Unicode has them
    (``Vₒᵤₜ``) and leaves ``V_gnd`` with its underscore (there is no subscript g), and ``R1``
    becomes ``R₁``: the same kind of name would show two ways. Here every name is printed as
    written, so the 2-D form matches the one-line form and the circuit file.
    Returns None when a line is wider than ``width`` or the printer fails.

    >>> print(pretty_text(sympy.Symbol("V_out")/sympy.Symbol("V_gnd") + sympy.Symbol("R1")))
         V_out
    R1 + ─────
         V_gnd
    """
    from sympy.printing.pretty.pretty import PrettyPrinter
    from sympy.printing.pretty.stringpict import prettyForm

    class _Names(PrettyPrinter):
        def _print_Symbol(self, e, bold_name=False):  # noqa: D401 - SymPy printer hook
            return prettyForm(e.name)

    try:
        text = _Names({"use_unicode": True, "wrap_line": False}).doprint(expr)
    except Exception:  # noqa: BLE001 - the 2-D form is optional decoration; the caller keeps one line
        return None
    if width is not None and max((len(ln) for ln in text.splitlines()), default=0) > width:
        return None
    return text
