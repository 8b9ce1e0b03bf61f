"""A bounded fuzz of the expression parser and the circuit loader: zero crashes.

Hypothesis feeds ``parse_expression`` arbitrary text, text from the
language's own alphabet, and grammar-shaped expressions with hostile pieces;
it feeds ``parse_circuit`` arbitrary text and TOML-shaped circuits built from
random tables, kinds, keys and values, and then writes and solves the
equations of what loads. The only exceptions allowed are the engine's own
``ExpressionError`` / ``InputError``; anything else (RecursionError,
ValueError, ZeroDivisionError, a SymPy error...) is a crash.

The run is bounded by ``max_examples`` so the whole file stays well under a
minute in CI; ``NODETERM_FUZZ=<n>`` multiplies the examples for a longer local
search. Parsed values must be exact (no floats).
"""

from __future__ import annotations

import os

import sympy
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from nodeterm.engine import InputError, build_system, parse_circuit
from nodeterm.engine.circuit.expr import ExpressionError, parse_expression
from nodeterm.engine.solving.solve import solve_system

SCALE = int(os.environ.get("NODETERM_FUZZ", "1"))
FUZZ = settings(max_examples=150 * SCALE, deadline=None,
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much])

NAMES = {"R1": sympy.Symbol("R1"), "C": sympy.Symbol("C"), "s": sympy.Symbol("s"), "V_out": sympy.Symbol("V_out")}
ALPHABET = "0123456789.eE+-*/^()pnuµμmkMGTΩohmFHVASz_ RCsqrtpiV_out,'\"[]{}:;=\\\t\n"


def resolve(name: str):
    return NAMES.get(name)


def parse_or_refuse(text: str):
    try:
        value = parse_expression(text, resolve)
    except ExpressionError as err:
        assert err.column is None or 1 <= err.column <= len(text) + 1, (text, err.column)
        str(err)  # the message renders
        return None
    assert isinstance(value, sympy.Basic), text
    assert not value.has(sympy.Float), (text, value)
    return value


atoms = st.one_of(
    st.from_regex(r"\A[0-9]{1,4}(\.[0-9]{0,3})?([eE][+-]?[0-9]{1,4})?[pnumkMGT]?(ohm|F|H|V|A|S|Hz|Ω)?\Z"),
    st.sampled_from(["R1", "C", "s", "V_out", "pi", "sqrt(2)", "0", "__import__", "x", "sqrt", "I_R1",
                     "1e300", "1e-300", "9" * 61, "()", ""]),
)


def combine(children):
    binary = st.tuples(children, st.sampled_from(["+", "-", "*", "/", "^", "**", " ", "^-", "//", "***"]),
                       children).map("".join)
    return st.one_of(binary, children.map(lambda c: f"({c})"), children.map(lambda c: f"-{c}"),
                     children.map(lambda c: f"sqrt({c})"), children.map(lambda c: f"{c})"))


expressions = st.recursive(atoms, combine, max_leaves=25)


@FUZZ
@given(st.text(max_size=120))
def test_any_text_parses_or_is_refused(text):
    parse_or_refuse(text)


@FUZZ
@given(st.text(alphabet=ALPHABET, max_size=80))
def test_text_from_the_language_alphabet_parses_or_is_refused(text):
    parse_or_refuse(text)


@FUZZ
@given(expressions)
def test_grammar_shaped_expressions_parse_or_are_refused(text):
    parse_or_refuse(text)


def test_known_expressions_still_parse():
    # Guards the fuzz: the parser accepts the language (values from the file-format docs).
    assert parse_or_refuse("4.7k") == 4700
    assert parse_or_refuse("100nF") == sympy.Rational(1, 10**7)
    assert parse_or_refuse("2^-1") == sympy.Rational(1, 2)
    assert parse_or_refuse("1/(s*C)") == 1 / (NAMES["s"] * NAMES["C"])
    assert parse_or_refuse("10^10^10") is None


# ----------------------------------------------------------------------------- circuit files
KINDS = ["resistor", "capacitor", "inductor", "voltage_source", "current_source", "vcvs", "vccs", "ccvs", "cccs", "opamp",
         "lamp", ""]
NODES = ["gnd", "a", "b", "out", "0", "a-b", ""]
KEYS = ["nodes", "value", "gain", "control", "plus", "minus", "out", "rails", "gbw", "kind", "colour"]
toml_strings = st.one_of(st.sampled_from(NODES), expressions, st.text(alphabet=ALPHABET, max_size=12))


def toml_string(text: str) -> str:
    return '"' + text.replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\n").replace("\t", "\\t") + '"'


toml_values = st.one_of(
    toml_strings.map(toml_string),
    st.integers(-10**70, 10**70).map(str),
    st.sampled_from(["inf", "nan", "-inf", "1e999", "0.0", "-1.5", "true", "[]", "{}", '["a", "gnd"]',
                     '["a", "b", "c"]', '["out", "out"]', "[1, 2]"]),
    st.lists(st.sampled_from(NODES), min_size=0, max_size=3).map(lambda ns: "[" + ", ".join(map(toml_string, ns)) + "]"),
)


@st.composite
def circuit_texts(draw) -> str:
    lines = []
    if draw(st.booleans()):
        lines.append(f"reference = {toml_string(draw(st.sampled_from(NODES)))}")
    if draw(st.booleans()):
        lines.append("[parameters]")
        for i in range(draw(st.integers(0, 3))):
            lines.append(f"P{i} = {draw(toml_values)}")
    if draw(st.integers(0, 9)):
        lines.append("[parts]")
        for i in range(draw(st.integers(0, 5))):
            kind = draw(st.sampled_from(KINDS))
            fields = [f"kind = {toml_string(kind)}"] if draw(st.integers(0, 9)) else []
            keys = KEYS if not fields else [k for k in KEYS if k != "kind"]
            for key in draw(st.lists(st.sampled_from(keys), max_size=4, unique=True)):
                fields.append(f"{key} = {draw(toml_values)}")
            pid = draw(st.sampled_from([f"X{i}", f"X{i}", "R1", "9z", '"a b"']))
            lines.append(f"{pid} = {{ {', '.join(fields)} }}")
    if draw(st.booleans()):
        lines.append("[find]")
        lines.append(f"q = {draw(toml_values)}")
    if draw(st.booleans()):
        lines.append("[hand]")
        lines.append(f"h = {draw(toml_values)}")
    return "\n".join(lines) + "\n"


def load_or_refuse(text: str) -> None:
    try:
        circuit = parse_circuit(text, "fuzz.toml")
        system = build_system(circuit)
        solve_system(system.substitute_known())
    except InputError as err:
        assert err.file == "fuzz.toml", err  # every refusal names the file
        assert "\n" not in str(err)


@FUZZ
@given(st.text(max_size=300))
def test_any_text_loads_or_is_refused(text):
    load_or_refuse(text)


@FUZZ
@given(circuit_texts())
def test_toml_shaped_circuits_load_or_are_refused(text):
    load_or_refuse(text)


@settings(max_examples=100 * SCALE, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.sampled_from(['R1 = { kind = "resistor", nodes = ["a", "gnd"], value = "1k" }',
                        'V1 = { kind = "voltage_source", nodes = ["a", "gnd"], value = 5 }']),
       st.text(alphabet=ALPHABET + "#", max_size=60))
def test_a_valid_line_with_a_random_tail_loads_or_is_refused(line, tail):
    load_or_refuse("[parts]\n" + line + tail + "\n" + 'R9 = { kind = "resistor", nodes = ["a", "gnd"], value = "2k" }\n')


REQUIRED = {"resistor": ("nodes", "value"), "capacitor": ("nodes", "value"), "inductor": ("nodes", "value"),
            "voltage_source": ("nodes", "value"), "current_source": ("nodes", "value"), "vcvs": ("nodes", "control", "gain"),
            "vccs": ("nodes", "control", "gain"), "ccvs": ("nodes", "control", "gain"),
            "cccs": ("nodes", "control", "gain"), "opamp": ("plus", "minus", "out")}
GOOD_NODES = ["gnd", "a", "b", "c", "out"]


@st.composite
def near_valid_circuits(draw) -> str:
    """Circuits with the right keys and mostly sensible values: they reach build_system and solve."""
    count = draw(st.integers(1, 6))
    ids = [f"X{i}" for i in range(count)]
    lines = ["[parameters]", 'K = "2"', 'Rp = "1k"', 'Sym = ""', "[parts]"]
    for pid in ids:
        kind = draw(st.sampled_from(sorted(REQUIRED)))
        fields = [f'kind = "{kind}"']
        for key in REQUIRED[kind]:
            if draw(st.integers(0, 19)) == 0:
                value = draw(toml_values)
            elif key == "nodes":
                value = "[" + ", ".join(toml_string(n) for n in draw(
                    st.lists(st.sampled_from(GOOD_NODES), min_size=2, max_size=2, unique=True))) + "]"
            elif key == "control" and kind in ("ccvs", "cccs"):
                value = toml_string(draw(st.sampled_from(ids)))
            elif key == "control":
                value = "[" + ", ".join(toml_string(n) for n in draw(
                    st.lists(st.sampled_from(GOOD_NODES), min_size=2, max_size=2, unique=True))) + "]"
            elif key in ("plus", "minus", "out"):
                value = toml_string(draw(st.sampled_from(GOOD_NODES)))
            else:
                value = toml_string(draw(st.sampled_from(["1k", "-2", "K", "Rp", "Sym", "10n", "s", "0",
                                                          "1/(1+Sym)", "K^2*Rp", "100"])))
            fields.append(f"{key} = {value}")
        lines.append(f"{pid} = {{ {', '.join(fields)} }}")
    lines += ["[find]", f'q = {toml_string(draw(st.sampled_from(["V_a/V_b", "I_X0", "V_out", "V_a - V_c"])))}']
    return "\n".join(lines) + "\n"


@FUZZ
@given(near_valid_circuits())
def test_near_valid_circuits_solve_or_are_refused(text):
    load_or_refuse(text)
