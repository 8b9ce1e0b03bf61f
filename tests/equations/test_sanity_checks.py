"""Circuit sanity checks: connectivity warnings, the op-amp feedback check, and typos that never go unnoticed.

Facts checked (sources beside each test):
  * a node that one pin only touches carries no current through that pin's part
    (Kirchhoff's current law at that node; common practice, no source);
  * the feedback factor of the inverting and non-inverting amplifiers,
    beta = R1/(R1 + R2) seen from the output at the inverting input (Franco, Design
    with Operational Amplifiers and Analog Integrated Circuits, ch. 1, feedback
    factor; from memory), and its sign reversed when the inputs are swapped, which
    is the Schmitt-trigger (comparator with hysteresis) connection of positive
    feedback (Franco, ch. 9, from memory);
  * a comparator without any feedback (Franco, ch. 9, from memory);
  * the unity-gain Sallen-Key low-pass has positive feedback through a capacitor
    but negative feedback overall (Franco, ch. 3, from memory): not flagged.
"""

from __future__ import annotations

import re
import tomllib
from pathlib import Path

import pytest
import sympy
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from nodeterm.cli import main
from nodeterm.engine import InputError, build_system, parse_circuit
from nodeterm.engine.equations.connectivity import connectivity_warnings
from nodeterm.engine.equations.feedback import opamp_feedback
from nodeterm.engine.solving.solve import solve_system
from nodeterm.engine.symbols import s

ROOT = Path(__file__).resolve().parents[2]
CIRCUITS = sorted((ROOT / "circuits").glob("*.toml")) + sorted((ROOT / "tests" / "published").glob("*.toml"))

INVERTING = """\
title = "kiln preamp"
[parameters]
Vtc = ""
Rin = "10k"
Rf = "1M"
[parts]
TC = { kind = "voltage_source", nodes = ["in", "gnd"], value = "Vtc" }
R1 = { kind = "resistor", nodes = ["in", "inv"], value = "Rin" }
R2 = { kind = "resistor", nodes = ["inv", "out"], value = "Rf" }
U1 = { kind = "opamp", plus = "gnd", minus = "inv", out = "out" }
[find]
gain = "V_out/V_in"
"""


def with_part(text: str, line: str) -> str:
    """``text`` with one more line at the end of [parts]."""
    return text.replace("[find]", line + "\n[find]")


def codes(text: str) -> list[str]:
    return [w.code for w in build_system(parse_circuit(text)).warnings]


# ----------------------------------------------------------------------------- connectivity
def test_node_typo_is_named_with_the_node_meant(tmp_path, capsys):
    text = INVERTING.replace('nodes = ["in", "inv"]', 'nodes = ["inn", "inv"]')
    warnings = [w for w in build_system(parse_circuit(text)).warnings if w.code == "single-pin-node"]
    assert len(warnings) == 1
    assert warnings[0].part == "R1"  # the part to fix: [find] spells the node 'in'
    assert "'inn'" in warnings[0].message and "did you mean 'in' for both?" in warnings[0].message
    path = tmp_path / "typo.toml"
    path.write_text(text)
    assert main(["solve", str(path)]) == 0  # a warning does not change the exit status
    out = capsys.readouterr().out
    assert "warning: nodes 'in'" in out


def test_single_pin_node_alone_gets_nearest_name():
    text = with_part(INVERTING, 'R3 = { kind = "resistor", nodes = ["out", "ouy"], value = "1k" }')
    [w] = [w for w in build_system(parse_circuit(text)).warnings if w.code == "single-pin-node"]
    assert "node 'ouy' is touched by one pin only" in w.message and "did you mean 'out'?" in w.message
    assert "no current flows through R3" in w.message


def test_lone_pin_without_near_name_suggests_connecting():
    text = with_part(INVERTING, 'R3 = { kind = "resistor", nodes = ["out", "testpoint"], value = "1k" }')
    [w] = [w for w in connectivity_warnings(parse_circuit(text)) if w.code == "single-pin-node"]
    assert "connect 'testpoint'" in w.message


def test_sensed_node_is_not_lonely():
    """A source node read only by a controlled source's control pins is a normal drive, not a typo."""
    text = """
[parts]
V1 = { kind = "voltage_source", nodes = ["in", "gnd"], value = "1" }
E1 = { kind = "vcvs", nodes = ["out", "gnd"], control = ["in", "gnd"], gain = "10" }
RL = { kind = "resistor", nodes = ["out", "gnd"], value = "1k" }
"""
    assert "single-pin-node" not in codes(text)


def test_control_on_one_node():
    text = """
[parts]
V1 = { kind = "voltage_source", nodes = ["in", "gnd"], value = "1" }
R1 = { kind = "resistor", nodes = ["in", "gnd"], value = "1k" }
E1 = { kind = "vcvs", nodes = ["out", "gnd"], control = ["in", "in"], gain = "10" }
RL = { kind = "resistor", nodes = ["out", "gnd"], value = "1k" }
"""
    [w] = [w for w in build_system(parse_circuit(text)).warnings if w.code == "control-on-one-node"]
    assert w.part == "E1" and "always 0" in w.message


def test_unused_parameter_and_chain_through_unused():
    text = INVERTING.replace('Rf = "1M"', 'Rf = "1M"\nGain = "100"\nRx = "Gain*Rin"')
    ws = [w for w in build_system(parse_circuit(text)).warnings if w.code == "unused-parameter"]
    assert [re.search(r"'(\w+)'", w.message).group(1) for w in ws] == ["Gain", "Rx"]
    assert "only by Rx" in ws[0].message


def test_parameter_used_only_by_find_or_hand_is_used():
    text = INVERTING.replace('Rf = "1M"', 'Rf = "1M"\nGexp = ""') + '[hand]\ng = "gain = -Gexp"\n'
    assert "unused-parameter" not in codes(text)


@pytest.mark.parametrize("path", CIRCUITS, ids=lambda p: p.name)
def test_demos_and_published_cases_have_no_sanity_warnings(path):
    """Our own demos and the published worked examples are correct circuits: no check fires on them."""
    found = {w.code for w in build_system(parse_circuit(path.read_text(), str(path))).warnings}
    assert not found & {"single-pin-node", "unused-parameter", "control-on-one-node", "no-negative-feedback"}


# ----------------------------------------------------------------------------- feedback
def test_feedback_factor_of_inverting_amplifier_matches_formula():
    """beta = R1/(R1 + R2) at the inverting input (Franco ch. 1, from memory)."""
    f = opamp_feedback(parse_circuit(INVERTING))["U1"]
    assert f.kind == "negative" and f.virtual_short
    assert f.beta_dc == pytest.approx(10e3 / (10e3 + 1e6), rel=1e-12)


def test_swapped_inputs_are_positive_feedback_and_flagged(tmp_path, capsys):
    """Inputs swapped: the Schmitt-trigger connection, beta = -R1/(R1 + R2) (Franco ch. 9, from memory)."""
    text = INVERTING.replace('plus = "gnd", minus = "inv"', 'plus = "inv", minus = "gnd"')
    f = opamp_feedback(parse_circuit(text))["U1"]
    assert f.kind == "positive" and not f.virtual_short
    assert f.beta_dc == pytest.approx(-10e3 / (10e3 + 1e6), rel=1e-12)
    system = build_system(parse_circuit(text))
    [w] = [w for w in system.warnings if w.code == "no-negative-feedback"]
    assert w.part == "U1" and "V+ = V- does not apply" in w.message
    step = next(st for st in system.steps if st.kind == "opamps")
    assert "U1 has no negative feedback" in step.text and step.data["feedback"] == {"U1": "positive"}
    path = tmp_path / "swapped.toml"
    path.write_text(text)
    assert main(["solve", str(path)]) == 0
    assert "no negative feedback" in capsys.readouterr().out


def test_noninverting_feedback_factor():
    """Non-inverting amplifier: beta = Rg/(Rg + Rf) (Franco ch. 1, from memory)."""
    text = """
[parts]
V1 = { kind = "voltage_source", nodes = ["in", "gnd"], value = "1" }
RG = { kind = "resistor", nodes = ["m", "gnd"], value = "2.2k" }
RF = { kind = "resistor", nodes = ["m", "out"], value = "6.8k" }
U1 = { kind = "opamp", plus = "in", minus = "m", out = "out" }
"""
    f = opamp_feedback(parse_circuit(text))["U1"]
    assert f.kind == "negative" and f.beta_dc == pytest.approx(2.2 / 9.0, rel=1e-12)


def test_comparator_without_feedback():
    text = """
[parts]
V1 = { kind = "voltage_source", nodes = ["in", "gnd"], value = "1" }
R1 = { kind = "resistor", nodes = ["in", "gnd"], value = "1k" }
RL = { kind = "resistor", nodes = ["out", "gnd"], value = "1k" }
U1 = { kind = "opamp", plus = "in", minus = "gnd", out = "out" }
"""
    assert opamp_feedback(parse_circuit(text))["U1"].kind == "none"


def test_integrator_with_swapped_inputs_is_flagged_and_the_right_one_is_not():
    text = (ROOT / "tests" / "published" / "inverting_integrator.toml").read_text()
    assert opamp_feedback(parse_circuit(text))["U1"].kind == "negative"  # beta(0) = 0, beta > 0 above DC
    swapped = text.replace('plus = "gnd", minus = "inv"', 'plus = "inv", minus = "gnd"')
    assert opamp_feedback(parse_circuit(swapped))["U1"].kind == "positive"


def test_sallen_key_swapped_is_flagged():
    text = (ROOT / "tests" / "published" / "sallen_key_lowpass.toml").read_text()
    assert opamp_feedback(parse_circuit(text))["U1"].kind == "negative"
    swapped = text.replace('plus = "p", minus = "out"', 'plus = "out", minus = "p"')
    assert opamp_feedback(parse_circuit(swapped))["U1"].kind == "positive"


COMPOSITE = """
[parts]
V1 = { kind = "voltage_source", nodes = ["in", "gnd"], value = "1" }
R1 = { kind = "resistor", nodes = ["in", "m"], value = "1k" }
R2 = { kind = "resistor", nodes = ["m", "out"], value = "10k" }
U1 = { kind = "opamp", plus = "gnd", minus = "m", out = "x" }
R3 = { kind = "resistor", nodes = ["x", "y"], value = "1k" }
U2 = { kind = "opamp", plus = "y", minus = "gnd", out = "out" }
"""


def test_loop_through_two_opamps():
    """One loop through an inverting and a non-inverting stage: negative overall (sign rule, common practice)."""
    ok = opamp_feedback(parse_circuit(COMPOSITE))
    assert {k: f.kind for k, f in ok.items()} == {"U1": "negative", "U2": "negative"}
    bad = opamp_feedback(parse_circuit(COMPOSITE.replace('plus = "y", minus = "gnd"', 'plus = "gnd", minus = "y"')))
    assert {k: f.kind for k, f in bad.items()} == {"U1": "positive", "U2": "positive"}


def test_feedback_sign_that_depends_on_values():
    """Negative feedback through R2 against positive feedback through R3: the larger conductance wins."""
    text = """
[parameters]
Ra = ""
[parts]
V1 = { kind = "voltage_source", nodes = ["in", "gnd"], value = "1" }
R1 = { kind = "resistor", nodes = ["in", "m"], value = "1k" }
R2 = { kind = "resistor", nodes = ["m", "out"], value = "Ra" }
R4 = { kind = "resistor", nodes = ["p", "gnd"], value = "1k" }
R3 = { kind = "resistor", nodes = ["p", "out"], value = "1k" }
U1 = { kind = "opamp", plus = "p", minus = "m", out = "out" }
"""
    assert opamp_feedback(parse_circuit(text), {"Ra": 500})["U1"].kind == "negative"
    assert opamp_feedback(parse_circuit(text), {"Ra": 2000})["U1"].kind == "positive"
    assert opamp_feedback(parse_circuit(text))["U1"].kind == "depends-on-values"


# ----------------------------------------------------------------------------- a renamed node never goes unnoticed
PIN = re.compile(r'(nodes\s*=\s*\[\s*"([^"]*)"\s*,\s*"([^"]*)"\s*\])|((plus|minus|out)\s*=\s*"([^"]*)")')


def pins_of(text: str) -> list[tuple[int, int, int, str]]:
    """(line index, start, end, node) of every node name written in a part's pin list."""
    found = []
    in_parts = False
    for i, line in enumerate(text.splitlines()):
        if line.strip().startswith("["):
            in_parts = line.strip() == "[parts]"
            continue
        if not in_parts:
            continue
        for m in PIN.finditer(line):
            groups = (2, 3) if m.group(1) else (6,)
            found += [(i, m.start(g), m.end(g), m.group(g)) for g in groups]
    return found


def outcome(text: str, values: dict):
    """('error',) or (warnings, exact node voltages, currents and [find] at one point of s)."""
    try:
        system = build_system(parse_circuit(text))
        solution = solve_system(system.substitute(values))
    except InputError:
        return ("error",)
    point = sympy.Rational(7, 3)

    def at(v):
        e = sympy.sympify(v, strict=True).xreplace({s: point})
        return e if e.is_Number else sympy.simplify(e)

    warned = frozenset((w.code, w.part) for w in system.warnings)
    return (warned, {n: at(v) for n, v in solution.node_voltages.items()},
            {p: at(v) for p, v in solution.currents.items()}, {n: at(v) for n, v in solution.find.items()})


@st.composite
def renamed(draw):
    path = draw(st.sampled_from(CIRCUITS))
    text = path.read_text()
    pins = pins_of(text)
    line, start, end, old = draw(st.sampled_from(pins))
    nodes = sorted({p[3] for p in pins} - {old})
    typo = draw(st.sampled_from([old + "x", old[:-1] or "z", old.upper() if old.upper() != old else old.lower(),
                                 old + old[-1], "n_" + old]))
    new = draw(st.one_of(st.just(typo), st.sampled_from(nodes)))
    lines = text.splitlines()
    lines[line] = lines[line][:start] + new + lines[line][end:]
    return path.name, text, "\n".join(lines) + "\n", f"{old} -> {new} on line {line + 1}"


@settings(max_examples=80, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(renamed())
def test_renaming_one_node_in_a_pin_list_never_goes_unnoticed(case):
    """A changed node name gives an error, a new warning, or a different solution: never the same silent answer."""
    name, before, after, what = case
    params = tomllib.loads(before).get("parameters", {})
    values = {n: sympy.Rational(k + 2, 3) * (1 if n.startswith(("V", "I")) else 1000) for k, n in enumerate(params)}
    old, new = outcome(before, values), outcome(after, values)
    assert old != ("error",), name
    if new == ("error",):
        return
    assert new[0] - old[0] or new[1:] != old[1:], f"{name}: {what} changed nothing"
