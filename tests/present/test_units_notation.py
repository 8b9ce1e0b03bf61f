"""Engineering notation, units of results and the dimension algebra behind them.

Checks against facts of the trade (SI prefixes, units of derived quantities), published formulas
(named beside each check) and SymPy's own unit system (``sympy.physics.units``) as a reference.
"""

from __future__ import annotations

from fractions import Fraction
from pathlib import Path

import pytest
import sympy
from sympy.physics import units as u
from sympy.physics.units.systems.si import SI, dimsys_SI

from nodeterm.engine import load_circuit, parse_circuit
from nodeterm.present.dimensions import (AMPERE, FARAD, HENRY, HERTZ, OHM, ONE, SECOND, SIEMENS, VOLT, Dim,
                                         dim_of, find_units, parameter_dimensions, unit_of)
from nodeterm.present.format import eng, number_text, value_text
from nodeterm.present.text import report

ROOT = Path(__file__).resolve().parents[2]
CIRCUITS = ROOT / "circuits"
s = sympy.Symbol("s")

def _records(circuit, known: bool = False, sets: dict | None = None):
    """The records the CLI formats (a Study with the values chosen)."""
    from nodeterm.engine.study import Study
    from nodeterm.engine.values import ValueChoice
    return Study(circuit, ValueChoice.from_options(sets, known=known)).records(
        ("system", "matrix", "solution", "warnings"))


# --- engineering notation: common practice, no source ---------------------------------------------
@pytest.mark.parametrize("value, unit, text", [
    (4.7e3, "", "4.7 k"),            # common practice, no source
    (4.7e3, "Ω", "4.7 kΩ"),          # common practice, no source
    (0.0051, "A", "5.1 mA"),         # common practice, no source
    (4.88e-6, "A", "4.88 µA"),       # common practice, no source
    (100e-9, "F", "100 nF"),         # common practice, no source
    (2.2e6, "Ω", "2.2 MΩ"),          # common practice, no source
    (1.5e-12, "F", "1.5 pF"),        # common practice, no source
    (-4.88, "V", "-4.88 V"),         # common practice, no source
    (999.96, "V", "1 kV"),           # rounds to 1.000e3: one prefix up (common practice, no source)
    (33.86e3, "Hz", "33.86 kHz"),    # common practice, no source
])
def test_eng_prefixes(value, unit, text):
    assert eng(value, unit) == text


def test_eng_ascii_micro():
    assert eng(4.7e-6, "F", ascii_only=True) == "4.7 uF"  # 'u' for micro in 7-bit text: common practice


def test_ratios_and_inverse_units_take_no_prefix():
    # "707.1 m" would read as metres; a ratio is a plain number (common practice, no source)
    assert number_text(0.70711, "V/V") == "0.7071 V/V"
    assert number_text(6283.2, "/s") == "6283 /s"
    assert number_text(0.70711, "") == "0.7071"


def test_exact_first_then_value_with_unit():
    # the kiln preamp's input current with Vtc = 48.8 mV and Rin = 10 kohm: 4.88 uA (Ohm's law)
    assert value_text(sympy.Rational(61, 12500000), "A") == "61/12500000 (≈ 4.88 µA)"
    assert value_text(sympy.Rational(61, 12500000), "A", ascii_only=True) == "61/12500000 (~ 4.88 uA)"
    assert value_text(sympy.Integer(5), "V") == "5 V"


def test_dc_value_of_a_transimpedance():
    # Zt = -Rf/(1 + s*Rf*Cf) with Rf = 1 Mohm, Cf = 4.7 pF: DC value -Rf = -1 Mohm
    # (Horowitz & Hill, The Art of Electronics, 3rd ed., sec. 4.3, from memory)
    zt = -sympy.Integer(10) ** 13 / (47 * s + 10 ** 7)
    assert sympy.simplify(zt - (-10 ** 6 / (1 + s * 10 ** 6 * sympy.Rational(47, 10 ** 13)))) == 0
    assert value_text(zt, unit_of(OHM)) == "-10000000000000/(47*s + 10000000) (DC ≈ -1 MΩ)"


def test_symbolic_result_gets_its_unit_as_a_tag():
    assert value_text(-sympy.Symbol("Rf"), unit_of(OHM), tag=True) == "-Rf  [Ω]"
    assert value_text(-sympy.Symbol("Rf"), unit_of(OHM)) == "-Rf"


# --- units of derived quantities: facts of the trade, checked against sympy.physics.units -------------
def _sympy_dim(quantity) -> Dim:
    """A sympy.physics.units expression's dimension in volts, amperes and seconds."""
    dim = u.Dimension(SI.get_dimensional_expr(quantity))
    names = {str(k.name): Fraction(int(v)) for k, v in dimsys_SI.get_dimensional_dependencies(dim).items()}
    m, L, T, I = (names.get(k, Fraction(0)) for k in ("mass", "length", "time", "current"))
    assert L == 2 * m, "not an electrical quantity"
    # V = M L^2 T^-3 I^-1, so M^m L^2m T^T I^I = V^m A^(I + m) s^(T + 3m)
    return Dim(m, I + m, T + 3 * m)


@pytest.mark.parametrize("ours, theirs", [
    (VOLT, u.volt), (AMPERE, u.ampere), (SECOND, u.second), (OHM, u.ohm), (SIEMENS, u.siemens),
    (FARAD, u.farad), (HENRY, u.henry), (HERTZ, u.hertz),
])
def test_base_units_agree_with_sympy_units(ours, theirs):
    assert ours == _sympy_dim(theirs)


@pytest.mark.parametrize("formula, dims, theirs", [
    # time constant tau = R*C (common practice, no source)
    ("R*C", {"R": OHM, "C": FARAD}, u.ohm * u.farad),
    # L/R time constant (common practice, no source)
    ("L/R", {"L": HENRY, "R": OHM}, u.henry / u.ohm),
    # Sallen-Key natural frequency w0 = 1/(R*sqrt(C1*C2)) (Franco, Design with Operational
    # Amplifiers, 3rd ed., sec. 3.4, from memory)
    ("1/(R*sqrt(C1*C2))", {"R": OHM, "C1": FARAD, "C2": FARAD}, 1 / u.second),
    # LC resonance w0 = 1/sqrt(L*C) (common practice, no source)
    ("1/sqrt(L*C)", {"L": HENRY, "C": FARAD}, 1 / u.second),
    # transconductance gm = Ic/VT (Sedra & Smith, Microelectronic Circuits, sec. 6.2, from memory)
    ("Ic/VT", {"Ic": AMPERE, "VT": VOLT}, u.siemens),
    # charge on a capacitor Q = C*V (common practice, no source)
    ("C*Vc", {"C": FARAD, "Vc": VOLT}, u.coulomb),
    # slew rate of an integrator I/C (common practice, no source)
    ("Ich/C", {"Ich": AMPERE, "C": FARAD}, u.volt / u.second),
])
def test_dimensions_of_published_formulas(formula, dims, theirs):
    from nodeterm.engine.circuit.expr import parse_expression
    expr = parse_expression(formula, resolve=lambda name: sympy.Symbol(name))
    assert dim_of(expr, dims) == _sympy_dim(theirs)


def test_mixed_dimensions_give_no_unit():
    R, C = sympy.symbols("R C")
    assert dim_of(R + C, {"R": OHM, "C": FARAD}) is None


def test_unit_names():
    assert unit_of(OHM).symbol == "Ω"
    assert unit_of(SIEMENS).symbol == "S"
    assert unit_of(VOLT / SECOND).symbol == "V/s"
    assert unit_of(ONE, "V/V").symbol == "V/V" and not unit_of(ONE, "V/V").prefix
    assert unit_of(None).symbol == ""


# --- dimensions of parameters from the parts they set ------------------------------------------------
TIA = """
title = "Photodiode transimpedance stage"
[parameters]
Iph = ""
Rf = "1M"
Cf = "4.7p"
[parts]
PD = { kind = "current_source", nodes = ["gnd", "inv"], value = "Iph" }
RF = { kind = "resistor", nodes = ["inv", "out"], value = "Rf" }
CF = { kind = "capacitor", nodes = ["inv", "out"], value = "Cf" }
U1 = { kind = "opamp", plus = "gnd", minus = "inv", out = "out" }
[find]
Zt = "V_out/Iph"
Zt2 = "V_out/I_PD"
Iout = "I_U1"
gain = "V_out/V_inv"
"""


def test_transimpedance_gain_is_in_ohms():
    # Vout = -Iph*Rf at DC: the transimpedance V_out/I_in is a resistance
    # (Horowitz & Hill, The Art of Electronics, 3rd ed., sec. 4.3, from memory)
    c = parse_circuit(TIA)
    units = find_units(c)
    assert units["Zt"].symbol == "Ω" and units["Zt2"].symbol == "Ω"
    assert units["Iout"].symbol == "A"
    assert units["gain"].symbol == "V/V"
    text = report(_records(c, known=True))
    assert "Zt = -10000000000000/(47*s + 10000000) (DC ≈ -1 MΩ)" in text


def test_parameter_dimensions_of_the_demos():
    kiln = parameter_dimensions(load_circuit(str(CIRCUITS / "kiln_preamp.toml")))
    assert kiln["Rin"] == OHM and kiln["Rf"] == OHM and kiln["Vtc"] == VOLT
    assert kiln["Gain"] == ONE                      # from Rf = Gain*Rin
    loop = parameter_dimensions(load_circuit(str(CIRCUITS / "greenhouse_loop.toml")))
    assert loop["Izero"] == AMPERE                  # written "4mA"
    assert loop["Span"] == SIEMENS                  # from Rsense = 1/(2*Span)
    ramp = parameter_dimensions(load_circuit(str(CIRCUITS / "vent_ramp_integrator.toml")))
    assert ramp["tau"] == SECOND                    # from C = tau/R, though tau = 1 is a plain number
    fan = parameter_dimensions(load_circuit(str(CIRCUITS / "fan_booster.toml")))
    assert fan["beta"] == ONE                       # the gain of a cccs
    assert fan["VT"] == VOLT and fan["IC"] == AMPERE


def test_report_shows_units_of_every_numeric_result():
    c = load_circuit(str(CIRCUITS / "kiln_preamp.toml"))
    text = report(_records(c, known=True, sets={"Vtc": "48.8m"}))
    # Vout = -(Rf/Rin)*Vtc = -100*48.8 mV = -4.88 V (inverting amplifier; Sedra & Smith sec. 2.2, from memory)
    assert "V_out = -122/25 (≈ -4.88 V)" in text
    assert "I_R1 = 61/12500000 (≈ 4.88 µA)" in text
    assert "gain = -100 V/V" in text
    assert "Iin = 61/12500000 (≈ 4.88 µA)" in text


def test_real_model_comparison_shows_units():
    # non-inverting amplifier with finite open-loop gain A0: G = (1 + Rf/Rg)/(1 + (1 + Rf/Rg)/A0)
    # (Franco, Design with Operational Amplifiers, ch. 1, from memory): 10/(1 + 10/1e6) = 1000000/100001
    from nodeterm.engine.study import Study
    from nodeterm.present.analysis import comparison_lines
    c = load_circuit(str(ROOT / "tests" / "analysis" / "noninverting_gbw.toml"))
    lines = comparison_lines(Study(c).comparison(None), units=find_units(c))
    assert "  at DC: ideal 10, real 1000000/100001 (≈ 10 V/V)" in lines


def test_json_formatted_leaves_out_large_symbolic_results_and_keeps_small_ones():
    # A large symbolic result has no number to add: its formatted text would repeat the exact
    # field (docs/json-contract.md, `formatted`). Small and numeric results keep theirs.
    import json
    from nodeterm.engine.study import Study
    from nodeterm.present.jsonout import to_json
    lines = ['[parameters]', 'Vin = ""'] + [f'R{k} = ""\nC{k} = ""' for k in range(1, 6)]
    lines += ['[parts]', 'VS = { kind = "voltage_source", nodes = ["n0", "gnd"], value = "Vin" }']
    for k in range(1, 6):
        lines.append(f'RS{k} = {{ kind = "resistor", nodes = ["n{k - 1}", "n{k}"], value = "R{k}" }}')
        lines.append(f'CS{k} = {{ kind = "capacitor", nodes = ["n{k}", "gnd"], value = "C{k}" }}')
    study = Study(parse_circuit("\n".join(lines) + "\n"))
    data = json.loads(to_json(study.records(("system", "matrix", "solution", "warnings"))))
    large = {n for n, v in study.solution.node_voltages.items() if getattr(v, "is_large", False)}
    assert large  # the 5-section ladder's node voltages are large (89-term denominator)
    assert set(data["node_voltages"]) - set(data["formatted"]["node_voltages"]) == large
    assert data["formatted"]["node_voltages"]["n0"] == data["node_voltages"]["n0"]
    for node in large:
        assert sympy.sympify(data["node_voltages"][node]) == sympy.sympify(study.solution.node_voltages[node].text)


def test_streamed_json_with_long_strings_written_raw_is_the_same_text(monkeypatch):
    # write_json writes long expressions between the encoded pieces as they are; the text must
    # be exactly what the standard library's encoder gives (json.dumps, the reference), including
    # strings that need escaping (a quote and non-ASCII in the title) which stay encoded.
    import io
    from nodeterm.engine.study import Study
    from nodeterm.present import jsonout
    text = 'title = "Kiln \\"hot\\" leg, 1 µA"\n' + LADDER_3
    records = Study(parse_circuit(text)).records(("system", "matrix", "solution", "warnings", "transfer"))
    monkeypatch.setattr(jsonout, "RAW_STRING_CHARS", 5)  # every string longer than 5 goes the raw way
    out = io.StringIO()
    jsonout.write_json(records, out)
    assert out.getvalue() == jsonout.to_json(records) + "\n"


LADDER_3 = """[parameters]
Vin = ""
R1 = ""
R2 = ""
R3 = ""
C1 = ""
C2 = ""
C3 = ""
[parts]
VS = { kind = "voltage_source", nodes = ["n0", "gnd"], value = "Vin" }
RS1 = { kind = "resistor", nodes = ["n0", "n1"], value = "R1" }
CS1 = { kind = "capacitor", nodes = ["n1", "gnd"], value = "C1" }
RS2 = { kind = "resistor", nodes = ["n1", "n2"], value = "R2" }
CS2 = { kind = "capacitor", nodes = ["n2", "gnd"], value = "C2" }
RS3 = { kind = "resistor", nodes = ["n2", "n3"], value = "R3" }
CS3 = { kind = "capacitor", nodes = ["n3", "gnd"], value = "C3" }
[find]
H = "V_n3/Vin"
"""
