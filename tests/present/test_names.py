"""Names in LaTeX and in the 2-D form: a multi-letter name is one symbol, subscripts one way only."""

from __future__ import annotations

import re
from pathlib import Path

import sympy

from nodeterm.engine import load_circuit
from nodeterm.present.export import render
from nodeterm.present.format import expr_text, pretty_text
from nodeterm.present.latex import latex_name, tex

ROOT = Path(__file__).resolve().parents[2]
SUBSCRIPTS = "₀₁₂₃₄₅₆₇₈₉ₐₑₒₓₔₕₖₗₘₙₚₛₜᵢᵣᵤᵥⱼ"

def _records(circuit, known: bool = False, sets: dict | None = None):
    """The records the CLI formats (a Study with the values chosen)."""
    from nodeterm.engine.study import Study
    from nodeterm.engine.values import ValueChoice
    return Study(circuit, ValueChoice.from_options(sets, known=known)).records(
        ("system", "matrix", "solution", "warnings"))


def test_multi_letter_names_are_one_symbol_in_latex():
    # In TeX math, adjacent letters are a product (C times f); a multi-letter name is set as one
    # word, e.g. with \mathit (common practice, no source; ISO 80000-2 sets such names as one unit)
    Cf, Iph, Rin, R1 = sympy.symbols("Cf Iph Rin R1")
    out = tex(Iph * Rin / (1 + sympy.Symbol("s") * Cf * R1))
    assert r"\mathit{Cf}" in out and r"\mathit{Iph}" in out and r"\mathit{Rin}" in out
    assert "R_{1}" in out
    bare = re.sub(r"\\[a-zA-Z]+(\{[^}]*\})?", " ", out)  # drop commands and their first argument
    assert not re.search(r"(?<![A-Za-z])(Cf|Iph|Rin)(?![A-Za-z])", bare), out


def test_sympy_default_would_set_them_as_products():
    # the reference printer's default, the fault this fixes: the letters side by side
    assert sympy.latex(sympy.Symbol("Cf")) == "Cf"


def test_subscripted_names():
    assert latex_name("V_out") == r"V_{\mathrm{out}}"
    assert latex_name("I_R1") == r"I_{\mathrm{R1}}"
    assert latex_name("alpha") == r"\alpha"
    assert latex_name("s") == "s"


def test_latex_export_has_no_multi_letter_products():
    c = load_circuit(str(ROOT / "circuits" / "soil_moisture_probe.toml"))
    doc = render(_records(c), "latex")
    for name in ("Rf", "Rg", "Cf", "Co", "Ro", "Vprobe"):
        assert rf"\mathit{{{name}}}" in doc
    math = "\n".join(ln for ln in doc.splitlines() if "&=" in ln)
    bare = re.sub(r"\\(mathit|mathrm|text)\{[^}]*\}", " ", math)
    assert not re.search(r"(?<![A-Za-z\\])(Rf|Rg|Cf|Co|Ro|Vprobe)(?![A-Za-z])", bare)
    assert "Transfer functions in normalized form" in doc and r"\omega_{p1}" in doc


def test_pretty_form_writes_names_as_in_the_one_line_form():
    V_out, V_gnd, V_in, R1, Cf = sympy.symbols("V_out V_gnd V_in R1 Cf")
    e = V_out / V_gnd + R1 * V_in / Cf
    text = pretty_text(e)
    assert not any(ch in text for ch in SUBSCRIPTS), text
    for name in ("V_out", "V_gnd", "V_in", "R1", "Cf"):
        assert name in text and name in expr_text(e)
    # SymPy's own pretty printer mixes the two: subscript letters for V_out, an underscore for V_gnd
    default = sympy.pretty(e, use_unicode=True)
    assert "V_gnd" in default and any(ch in default for ch in SUBSCRIPTS)


def test_pretty_form_respects_the_width():
    e = sum(sympy.Symbol(f"R{i}") / sympy.Symbol(f"C{i}") for i in range(30))
    assert pretty_text(e, width=40) is None
    assert pretty_text(sympy.Symbol("V_out"), width=40) == "V_out"
