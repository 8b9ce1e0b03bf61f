"""The study pipeline: one meaning for --set/--known/--relations, records computed once, picklable,
warnings from the values in effect in every front end, and time budgets that name what ran out."""

from __future__ import annotations

import json
import pickle
import time
from pathlib import Path

import pytest
import sympy

from nodeterm.cli import main
from nodeterm.engine import parse_circuit
from nodeterm.engine.budget import OutOfBudget, budget
from nodeterm.engine.study import Study
from nodeterm.engine.values import KNOWN, RELATIONS, Substitution, ValueChoice

ROOT = Path(__file__).resolve().parents[2]
PUBLISHED = ROOT / "tests" / "published"
P = sympy.Symbol

DIFF_AMP = '''
title = "difference amplifier, matched by relation"
reference = "gnd"
[parameters]
V1 = ""
V2 = ""
R1 = ""
R2 = ""
R3 = "R1"
R4 = "R2"
[parts]
S1 = { kind = "voltage_source", nodes = ["a", "gnd"], value = "V1" }
S2 = { kind = "voltage_source", nodes = ["b", "gnd"], value = "V2" }
RA = { kind = "resistor", nodes = ["a", "m"], value = "R1" }
RB = { kind = "resistor", nodes = ["m", "out"], value = "R2" }
RC = { kind = "resistor", nodes = ["b", "p"], value = "R3" }
RD = { kind = "resistor", nodes = ["p", "gnd"], value = "R4" }
U1 = { kind = "opamp", plus = "p", minus = "m", out = "out" }
[find]
vout = "V_out"
'''


def test_relations_apply_matched_ratios_and_keep_the_rest_symbolic():
    # Sedra & Smith, Microelectronic Circuits, ch. 2, difference amplifier: with R3/R4 = R1/R2,
    # vO = (R2/R1)(vI2 - vI1) (from memory).
    c = parse_circuit(DIFF_AMP)
    plain = Study(c).solution.find["vout"]
    assert {str(x) for x in plain.free_symbols} >= {"R3", "R4"}  # without relations: the general form
    matched = Study(c, ValueChoice((RELATIONS,))).solution.find["vout"]
    assert sympy.simplify(matched - P("R2") / P("R1") * (P("V2") - P("V1"))) == 0


def test_relations_option_on_the_command_line(tmp_path, capsys):
    f = tmp_path / "diff.toml"
    f.write_text(DIFF_AMP)
    assert main(["solve", str(f), "--relations", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    got = sympy.sympify(data["find"]["vout"])  # our own JSON output, read back by SymPy
    assert sympy.simplify(got - P("R2") / P("R1") * (P("V2") - P("V1"))) == 0
    assert set(data["values"]) == {"R3", "R4"}


def test_set_then_known_order_and_meaning():
    # Rf = Gain*Rin in the file: --set Rin wins, and --known then uses the set Rin for Rf.
    c = parse_circuit('''
[parameters]
Vin = "1"
Gain = 100
Rin = "10k"
Rf = "Gain*Rin"
[parts]
VS = { kind = "voltage_source", nodes = ["in", "gnd"], value = "Vin" }
R1 = { kind = "resistor", nodes = ["in", "inv"], value = "Rin" }
R2 = { kind = "resistor", nodes = ["inv", "out"], value = "Rf" }
U1 = { kind = "opamp", plus = "gnd", minus = "inv", out = "out" }
''')
    study = Study(c, ValueChoice.from_options(["Rin=4.7k"], known=True))
    # inverting amplifier: vout = -(Rf/Rin) vin (Sedra & Smith ch. 2, from memory) = -Gain with Rf = Gain*Rin
    assert study.solution.node_voltages["out"] == -100
    assert study.system.values["Rf"] == 470000
    assert [s.kind for s in study.choice.steps] == ["set", "known"]


def test_records_are_computed_once_and_survive_pickling():
    c = parse_circuit((PUBLISHED / "inverting_amplifier.toml").read_text())
    study = Study(c)
    sol = study.solution
    assert study.solution is sol  # kept, not recomputed
    back = pickle.loads(pickle.dumps(study))
    assert back.computed("solution") and back.solution.node_voltages == sol.node_voltages
    fresh = Study(c).adopt(back)
    assert fresh.computed("solution") and fresh.solution.node_voltages == sol.node_voltages


def test_undo_of_a_choice():
    choice = ValueChoice().then(Substitution("set", (("R1", "1k"),))).then(KNOWN)
    assert choice.undo().steps == (Substitution("set", (("R1", "1k"),)),)
    assert choice.undo().undo() == ValueChoice()


HV = '''
title = "mains sense divider"
[parameters]
Vline = ""
[parts]
VM = { kind = "voltage_source", nodes = ["line", "gnd"], value = "Vline" }
R1 = { kind = "resistor", nodes = ["line", "sense"], value = "1M" }
R2 = { kind = "resistor", nodes = ["sense", "gnd"], value = "1k" }
[find]
vs = "V_sense"
'''


@pytest.mark.parametrize("argv", [
    ["solve"], ["solve", "--json"], ["export", "--to", "markdown"], ["export", "--to", "latex"],
    ["export", "--to", "json"], ["export", "--to", "text"],
])
def test_a_hazardous_value_from_set_is_cautioned_in_every_output(tmp_path, capsys, argv):
    # Extra-low voltage: 50 V AC rms / 120 V ripple-free DC (IEC 61140, from memory): 400 V is above both.
    f = tmp_path / "hv.toml"
    f.write_text(HV)
    assert main([argv[0], str(f), *argv[1:], "--set", "Vline=400"]) == 0
    out = capsys.readouterr().out
    assert "hazardous-voltage" in out or "400 V, above the extra-low-voltage limits" in out
    # and not without the value
    assert main([argv[0], str(f), *argv[1:]]) == 0
    assert "extra-low-voltage" not in capsys.readouterr().out


def test_strict_turns_a_warning_into_exit_1(tmp_path, capsys):
    f = tmp_path / "hv.toml"
    f.write_text(HV)
    assert main(["solve", str(f), "--set", "Vline=400"]) == 0
    assert main(["solve", str(f), "--set", "Vline=400", "--strict"]) == 1
    assert main(["solve", str(f), "--set", "Vline=4", "--strict"]) == 0
    capsys.readouterr()


def _spin(seconds: float) -> None:
    end = time.monotonic() + seconds
    while time.monotonic() < end:
        pass


def test_budget_stops_work_and_names_itself():
    with pytest.raises(OutOfBudget) as info:
        with budget(0.05) as token:
            _spin(5)
    assert info.value.token is token


def test_inner_budget_does_not_end_the_outer_one():
    with budget(5) as outer:
        try:
            with budget(0.05) as inner:
                _spin(5)
        except OutOfBudget as exc:
            assert exc.token is inner
        _spin(0.01)  # the outer budget still runs
    assert outer is not None


def test_outer_budget_is_not_taken_for_the_inner_one():
    with pytest.raises(OutOfBudget) as info:
        with budget(0.05) as outer:
            with budget(10):
                _spin(5)
    assert info.value.token is outer


def test_a_record_past_its_budget_is_named_and_the_rest_kept(monkeypatch):
    c = parse_circuit((PUBLISHED / "sallen_key_lowpass.toml").read_text())
    study = Study(c)
    import nodeterm.engine.analysis.transfer as transfer

    def slow(solution, circuit):
        _spin(5)
    monkeypatch.setattr(transfer, "transfer_functions", slow)
    rec = study.records(("system", "solution", "transfer", "warnings"), budgets={"transfer": 0.05})
    assert rec.solution is not None and rec.transfer is None
    assert rec.omitted_reason("transfer") == "not computed within 0.05 s"
