r"""LaTeX report: a complete document (``article`` + ``amsmath``) with an ``align*`` per step.

Equations go through SymPy's LaTeX printer. Prose (titles, step texts,
verdicts) is made 7-bit and escaped, so the document compiles with any TeX
engine without extra fonts or packages.
"""

from __future__ import annotations

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


def tex(expr) -> str:
    """SymPy's LaTeX for an expression."""
    return sympy.latex(as_expr(expr))


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
        out += [r"\section*{Results}"]
        rows = [(tex(sympy.Symbol(f"V_{n}")), tex(v), "reference" if n == c.reference else "")
                for n, v in solution.node_voltages.items()]
        rows += [(tex(sympy.Symbol(f"I_{pid}")), tex(v), "") for pid, v in solution.currents.items()]
        rows += [(rf"\text{{{escape(name)}}}", tex(v), c.find[name].text) for name, v in solution.find.items()]
        out += _align(rows) + [""]
    if verdicts:
        from nodeterm.engine.audit.verdicts import summary
        out += [r"\section*{Audit of the hand derivation}", escape(summary(verdicts)) + ".", r"\begin{itemize}"]
        for v in verdicts:
            out.append(rf"  \item \textbf{{{escape(v.name)}}} ({escape(v.status)}): \texttt{{{escape(v.text)}}}"
                       rf"\\ {escape(v.message)}")
        out += [r"\end{itemize}", ""]
    out += [r"\end{document}", ""]
    return "\n".join(out)
