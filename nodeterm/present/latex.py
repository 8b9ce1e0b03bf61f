r"""LaTeX report: a complete document (``article`` + ``amsmath``) with an ``align*`` per step.

Equations go through SymPy's LaTeX printer. Prose (titles, step texts,
verdicts) is made 7-bit and escaped, so the document compiles with any TeX
engine without extra fonts or packages.
"""

from __future__ import annotations

import re

import sympy

from nodeterm.engine.symbols import as_expr
from nodeterm.present.text import to_ascii

_SPECIAL = {"\\": r"\textbackslash{}", "&": r"\&", "%": r"\%", "$": r"\$", "#": r"\#", "_": r"\_",
            "{": r"\{", "}": r"\}", "~": r"\textasciitilde{}", "^": r"\textasciicircum{}",
            "<": r"\textless{}", ">": r"\textgreater{}", "|": r"\textbar{}"}


def escape(text: str) -> str:
    r"""Plain text for LaTeX: 7-bit, special characters escaped.

    >>> escape("V_out ~ 5% & R#1")
    'V\\_out \\textasciitilde{} 5\\% \\& R\\#1'
    """
    return "".join(_SPECIAL.get(ch, ch) for ch in to_ascii(str(text)))


_LETTERS_DIGITS = re.compile(r"([A-Za-z]+)([0-9]+)")


def latex_name(name: str) -> str:
    r"""A name as one symbol: a multi-letter name in one italic word, never a product of letters.

    ``V_out`` -> ``V_{\mathrm{out}}`` (the subscript is a label, upright), ``Rin`` -> ``\mathit{Rin}``,
    ``R1`` -> ``R_{1}``, ``Cf2`` -> ``\mathit{Cf}_{2}``, Greek names as Greek letters.

    >>> latex_name("Cf"), latex_name("V_out"), latex_name("R1"), latex_name("I_R1"), latex_name("alpha")
    ('\\mathit{Cf}', 'V_{\\mathrm{out}}', 'R_{1}', 'I_{\\mathrm{R1}}', '\\alpha')
    """
    from sympy.printing.latex import greek_letters_set, translate
    base, _, sub = name.partition("_")
    digits = ""
    m = _LETTERS_DIGITS.fullmatch(base)
    if m:
        base, digits = m.group(1), m.group(2)
    if base.lower() in greek_letters_set or len(base) == 1:
        head = translate(base) if len(base) > 1 else base
    else:
        head = rf"\mathit{{{base}}}"
    subs = [x for x in (digits, rf"\mathrm{{{_escape_sub(sub)}}}" if sub else "") if x]
    return head + (f"_{{{','.join(subs)}}}" if subs else "")


def _escape_sub(text: str) -> str:
    return text.replace("_", r"\_")


def tex(expr) -> str:
    """SymPy's LaTeX for an expression, each name set as one symbol (:func:`latex_name`).

    A large exact result prints itself from its polynomials (``LargeExpr._latex``), under the same names.
    """
    if getattr(expr, "is_large", False):
        field = expr._field
        dummies = set(field.atoms.values())
        names = {x: latex_name(x.name) for x in field.symbols if x not in dummies}
        return sympy.latex(expr, symbol_names=names)
    e = expr if isinstance(expr, sympy.MatrixBase) else as_expr(expr)
    names = {x: latex_name(x.name) for x in e.free_symbols if isinstance(x, sympy.Symbol)}
    return sympy.latex(e, symbol_names=names)


_TEX_UNIT = {"µ": r"\mu ", "Ω": r"\Omega", "·": r"\cdot "}


def _unit_mathrm(unit: str) -> str:
    for k, v in _TEX_UNIT.items():
        unit = unit.replace(k, v)
    return rf"\mathrm{{{unit.strip()}}}"


def unit_tex(text: str) -> str:
    r"""``4.88 µA`` -> ``4.88\,\mathrm{\mu A}``: a number with its unit, upright.

    >>> unit_tex("4.7 kΩ"), unit_tex("0.7071")
    ('4.7\\,\\mathrm{k\\Omega}', '0.7071')
    """
    number, _, unit = text.partition(" ")
    if "e" in number:
        mant, exp = number.split("e")
        number = rf"{mant} \times 10^{{{int(exp)}}}"
    return rf"{number}\,{_unit_mathrm(unit)}" if unit else number


def approx_tex(value, unit="") -> str:
    r"""`` \approx 4.88\,\mathrm{\mu A}`` after a number, ``\quad(\text{DC} \approx ...)`` after an
    expression in s with a DC value, the unit in brackets after a symbolic [find] result; else ""."""
    from nodeterm.present.format import _unit, dc_value, is_numeric, number_text
    if getattr(value, "is_large", False):
        return ""
    e = as_expr(value)
    symbol, _ = _unit(unit)
    if is_numeric(e) and e.is_real:
        if e.is_Integer and abs(int(e)) < 1000:
            return rf"\,{_unit_mathrm(symbol)}" if symbol else ""
        return r" \approx " + unit_tex(number_text(float(e), unit))
    dc = dc_value(e)
    if dc is not None and dc.is_real:
        return r" \quad (\text{DC} \approx " + unit_tex(number_text(float(dc), unit)) + ")"
    if symbol and not isinstance(unit, str):
        return rf" \quad [{_unit_mathrm(symbol)}]"
    return ""


def _form_name(name: str) -> str:
    r"""wp1 -> \omega_{p1}, w0 -> \omega_{0}, w0z -> \omega_{0z}, Q1 -> Q_{1}, Qz -> Q_{z}."""
    if name.startswith("w"):
        return r"\omega_{" + name[1:] + "}"
    return "Q" + (f"_{{{name[1:]}}}" if len(name) > 1 else "")


def normal_form_rows(nf, unit="") -> list[tuple[str, str, str]]:
    """Align rows: H(s) in normalized form, then K and each corner frequency / w0 and Q."""
    from nodeterm.present.format import number_text
    from nodeterm.engine.symbols import s
    K = sympy.Symbol("K")
    top = [K] + ([s ** nf.origin] if nf.origin > 0 else [])
    bottom = [s ** -nf.origin] if nf.origin < 0 else []
    names = {K: "K"}
    for f in nf.factors:
        if f.poly is not None:
            g = f.poly
        else:
            w = sympy.Symbol(f.name)
            names[w] = _form_name(f.name)
            if f.order == 1:
                g = sympy.Add(1, s / w if f.sign > 0 else -s / w, evaluate=False)
            elif f.q == sympy.oo:
                g = sympy.Add(s ** 2 / w ** 2, 1, evaluate=False)
            else:
                q = sympy.Symbol(f.q_name)
                names[q] = _form_name(f.q_name)
                g = sympy.Add(s ** 2 / w ** 2, s / (q * w), 1, evaluate=False)
        g = sympy.Pow(g, f.multiplicity, evaluate=False) if f.multiplicity > 1 else g
        (top if f.where == "zero" else bottom).append(g)

    def product(items):
        return items[0] if len(items) == 1 else sympy.Mul(*items, evaluate=False)

    lhs = rf"\text{{{escape(nf.name)}}}(s)"
    form = sympy.latex(product(top), symbol_names=names, order="none")
    if bottom:
        form = rf"\frac{{{form}}}{{{sympy.latex(product(bottom), symbol_names=names, order='none')}}}"
    rows = [(lhs, form, "normalized form")]
    k_unit = unit if nf.origin == 0 else ""
    rows.append(("K", tex(nf.gain) + approx_tex(nf.gain, k_unit), ""))
    for f in nf.factors:
        if f.poly is None:
            rows.append((_form_name(f.name), tex(f.w) + approx_tex(f.w, "rad/s"), f.where))
            if f.order == 2:
                q = r"\infty" if f.q == sympy.oo else tex(f.q) + approx_tex(f.q, "")
                rows.append((_form_name(f.q_name), q, ""))
    return rows


def _align(rows: list[tuple[str, str, str]]) -> list[str]:
    """An align* block: (lhs, rhs, label) rows."""
    if not rows:
        return []
    out = [r"\begin{align*}"]
    for i, (lhs, rhs, label) in enumerate(rows):
        end = r" \\" if i < len(rows) - 1 else ""
        tag = rf" && \text{{{escape(label)}}}" if label else ""
        out.append(f"  {lhs} &= {rhs}{tag}{end}")
    out.append(r"\end{align*}")
    return out


def render_latex(records, note: str = "") -> str:
    """The whole report of a study's records as a LaTeX document."""
    system, solution, verdicts = records.system, records.solution, records.verdicts
    c = system.circuit
    cols = max(10, len(system.reduced_unknowns) + 2)  # amsmath matrices allow 10 columns by default
    out = [r"\documentclass[10pt]{article}", r"\usepackage{amsmath}", r"\allowdisplaybreaks",
           rf"\setcounter{{MaxMatrixCols}}{{{cols}}}",
           rf"\title{{{escape(c.title or 'Circuit')}}}", r"\date{}", r"\begin{document}", r"\maketitle", ""]
    if note:
        out += [rf"\noindent\textbf{{Note.}} {escape(note)}", ""]
    if records.warnings:
        out.append(r"\begin{itemize}")
        out += [rf"  \item Warning ({escape(w.code)}): {escape(w.message)}" for w in records.warnings]
        out += [r"\end{itemize}", ""]
    for i, step in enumerate(system.steps, start=1):
        out += [rf"\section*{{Step {i}. {escape(step.title)}}}", escape(step.text), ""]
        out += _align([(tex(e.lhs), tex(e.rhs), e.label) for e in step.equations])
        out.append("")
    m = records.matrix
    out += [r"\section*{Matrix form $A x = b$}"]
    if m.rows:
        x = sympy.Matrix([sympy.Symbol(col) for col in m.cols])
        out += [r"\begin{equation*}", f"  {tex(m.A)} {tex(x)} = {tex(m.b)}", r"\end{equation*}",
                "Rows, in order: " + escape("; ".join(m.rows)) + ".", ""]
    else:
        out += ["No equations left to solve.", ""]
    if solution is not None:
        from nodeterm.present.dimensions import find_units
        from nodeterm.present.normal_form import normal_forms
        units = find_units(c)
        out += [r"\section*{Results}"]
        rows = [(tex(sympy.Symbol(f"V_{n}")), tex(v) + approx_tex(v, "V"), "reference" if n == c.reference else "")
                for n, v in solution.node_voltages.items()]
        rows += [(tex(sympy.Symbol(f"I_{pid}")), tex(v) + approx_tex(v, "A"), "")
                 for pid, v in solution.currents.items()]
        rows += [(rf"\text{{{escape(name)}}}", tex(v) + approx_tex(v, units[name]), c.find[name].text)
                 for name, v in solution.find.items()]
        out += _align(rows) + [""]
        forms = normal_forms(solution, c)
        if forms:
            out += [r"\subsection*{Transfer functions in normalized form}"]
            for name, nf in forms.items():
                out += _align(normal_form_rows(nf, units[name])) + [""]
    if verdicts:
        from nodeterm.engine.audit.verdicts import summary
        out += [r"\section*{Audit of the hand derivation}", escape(summary(verdicts)) + ".", r"\begin{itemize}"]
        for v in verdicts:
            out.append(rf"  \item \textbf{{{escape(v.name)}}} ({escape(v.status)}): \texttt{{{escape(v.text)}}}"
                       rf"\\ {escape(v.message)}")
        out += [r"\end{itemize}", ""]
    out += [r"\end{document}", ""]
    return "\n".join(out)
