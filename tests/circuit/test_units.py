"""Units that are checked, the IEC 60062 letter-digit code, and targeted advice for common ways to miswrite a value.

Facts used: SI derived units ohm = V/A, S = A/V, F = A*s/V, H = V*s/A, Hz = 1/s
(SI Brochure, 9th edition, section 2.3.4; from memory); the SI prefix for kilo is a
lower-case k and K is the kelvin, mega is an upper-case M and m is milli (SI
Brochure, section 3; from memory); the letter-digit code writes the letter in place
of the decimal point, R for ohms: 4k7 = 4.7 kohm, 2R2 = 2.2 ohm, 1M5 = 1.5 Mohm,
4n7 = 4.7 nF (IEC 60062, from memory). Each bad value is refused in one line with
file:line:column and exit status 2.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest
import sympy

from nodeterm.cli import main
from nodeterm.engine import InputError, parse_circuit
from nodeterm.engine.circuit.expr import parse_expression
from nodeterm.engine.circuit.units import dimension

FILE = """\
title = "greenhouse sensor filter"
[parameters]
Cx = "100nF"
[parts]
V1 = { kind = "voltage_source", nodes = ["in", "gnd"], value = "5V" }
R1 = { kind = "resistor", nodes = ["in", "out"], value = "10kohm" }
C1 = { kind = "capacitor", nodes = ["out", "gnd"], value = "Cx" }
"""


def refused(tmp_path: Path, text: str, capsys, fragment: str, line: int) -> str:
    path = tmp_path / "bad.toml"
    path.write_text(text, encoding="utf-8")
    status = main(["solve", str(path)])
    out, err = capsys.readouterr()
    assert status == 2, (status, out, err)
    message = err.strip()
    assert "\n" not in message and "Traceback" not in message
    assert re.match(rf"nodeterm: {re.escape(str(path))}:{line}:\d+: error: ", message), message
    assert fragment in message, message
    return message


def test_units_that_fit_are_accepted():
    c = parse_circuit(FILE)
    assert c.part("R1").value == 10_000 and c.parameters["Cx"].value == sympy.Rational(1, 10**7)


@pytest.mark.parametrize("part, value, fragment", [
    ("R1", "10uF", "part R1 value '10uF' is a capacitance (F), but a resistor value is a resistance (ohm)"),
    ("V1", "5A", "part V1 value '5A' is a current (A), but a voltage source value is a voltage (V)"),
    ("R1", "2mS", "is a conductance (S), but a resistor value is a resistance (ohm)"),
    ("C1", "1mH", "is an inductance (H), but a capacitor value is a capacitance (F)"),
])
def test_unit_that_does_not_fit_the_part(tmp_path, capsys, part, value, fragment):
    line = next(i for i, ln in enumerate(FILE.splitlines(), 1) if ln.startswith(part + " "))
    text = re.sub(rf'^({part} = .*value = )"[^"]*"', rf'\g<1>"{value}"', FILE, flags=re.M)
    refused(tmp_path, text, capsys, fragment, line)


def test_unit_through_a_parameter_names_it(tmp_path, capsys):
    text = FILE.replace('value = "10kohm"', 'value = "Cx"')
    message = refused(tmp_path, text, capsys, "part R1 value 'Cx' is a capacitance (F)", 6)
    assert "check the unit of parameter Cx" in message


def test_units_follow_products_and_quotients():
    """1/(s*C) is an impedance; V/A a resistance; S*ohm a pure number (SI Brochure 2.3.4, from memory)."""
    assert dimension("1/(s*1uF)").text == "ohm"
    assert dimension("5V/2mA").text == "ohm"
    assert dimension("2mS*1kohm").text == "no unit"
    assert dimension("sqrt(1H/1uF)").text == "ohm"  # characteristic impedance sqrt(L/C)
    assert dimension("2*Rx").status == "unstated"  # a parameter without a unit is never guessed


@pytest.mark.parametrize("kind, key, good, bad", [
    ("vcvs", "gain", "10", "10V"), ("cccs", "gain", "50", "50A"),
    ("vccs", "gain", "2mS", "2kohm"), ("ccvs", "gain", "1kohm", "1mS"),
])
def test_controlled_source_gains(tmp_path, capsys, kind, key, good, bad):
    """VCVS and CCCS gains are pure numbers, a VCCS gain a conductance, a CCVS gain a resistance."""
    control = '["in", "gnd"]' if kind in ("vcvs", "vccs") else '"R1"'
    def file(gain: str) -> str:
        return (FILE + f'E1 = {{ kind = "{kind}", nodes = ["x", "gnd"], control = {control}, {key} = "{gain}" }}\n'
                + 'RL = { kind = "resistor", nodes = ["x", "gnd"], value = "1k" }\n')

    parse_circuit(file(good))
    refused(tmp_path, file(bad), capsys, f"part E1 {key} '{bad}'", 8)


def test_a_sum_of_different_units(tmp_path, capsys):
    text = FILE.replace('value = "10kohm"', 'value = "10kohm + 1uF"')
    refused(tmp_path, text, capsys, "adds a capacitance (F) to a resistance (ohm)", 6)


@pytest.mark.parametrize("text, value", [
    ("4k7", 4700), ("2R2", sympy.Rational(22, 10)), ("1M5", 1_500_000), ("4n7", sympy.Rational(47, 10**10)),
    ("4K7", 4700), ("R1*2", None),
])
def test_iec_letter_digit_code(text, value):
    got = parse_expression(text, lambda n: sympy.Symbol(n))
    if value is not None:
        assert got == value
    else:  # R1 is a name, not the code: the code starts with a digit
        assert got == 2 * sympy.Symbol("R1")


def test_letter_digit_r_is_ohms(tmp_path, capsys):
    assert dimension("2R2").text == "ohm"
    text = FILE.replace('value = "Cx"', 'value = "2R2"')
    refused(tmp_path, text, capsys, "part C1 value '2R2' is a resistance (ohm)", 7)


@pytest.mark.parametrize("value, advice", [
    ("10 K", "remove the space, and write k for kilo (K is the kelvin): 10k"),
    ("10K", "K is not an SI prefix (it is the kelvin): write 10k for kilo"),
    ("1meg", "'meg' is not an SI prefix: write 1M for mega"),
    ("1Meg", "'meg' is not an SI prefix: write 1M for mega"),
    ("10 k", "remove the space inside the number: write 10k"),
    ("100 nF", "remove the space inside the number: write 100nF"),
    ("10kOhm", "write 10kohm"),
    ("10kohms", "write 10kohm"),
    ("1ms", "seconds carry no unit here: write 1m"),  # s is the Laplace variable, S the siemens
])
def test_targeted_advice(tmp_path, capsys, value, advice):
    text = FILE.replace('value = "10kohm"', f'value = "{value}"')
    message = refused(tmp_path, text, capsys, "part R1 value", 6)
    assert advice in message
    assert "write an operator" not in message


def test_column_points_into_the_value(tmp_path, capsys):
    text = FILE.replace('value = "10kohm"', 'value = "10 k"')
    message = refused(tmp_path, text, capsys, "part R1 value", 6)
    line = text.splitlines()[5]
    column = int(re.search(r":6:(\d+):", message).group(1))
    assert line[column - 1] == "k"


def test_numbers_without_units_are_unchanged():
    assert parse_expression("4.7k") == 4700 and parse_expression("100n") == sympy.Rational(1, 10**7)
    with pytest.raises(InputError):
        parse_expression("4.7k5")


def test_set_value_with_the_wrong_unit(tmp_path, capsys):
    path = tmp_path / "f.toml"
    path.write_text(FILE, encoding="utf-8")
    assert main(["solve", str(path), "--set", "Cx=47nF"]) == 0
    capsys.readouterr()
    assert main(["solve", str(path), "--set", "Cx=10kohm"]) == 2
    err = capsys.readouterr().err.strip()
    assert "Cx = '10kohm' is a resistance (ohm), but a capacitor value is a capacitance (F)" in err
    assert "\n" not in err
