"""The audit's explanations: time budget, wording, and what the command line says.

Expectations are facts of the trade checked by hand on small circuits (common practice, no source):
a wrong claim's verdict does not wait for its explanation; a check never suggests an option the
command does not have; the text report says each verdict once.
"""

from __future__ import annotations

import json
from pathlib import Path

from nodeterm.cli import main
from nodeterm.cli_audit import without_numeric
from nodeterm.engine import build_system, load_circuit
from nodeterm.engine.audit.verdicts import audit_claim, audit_claims
from nodeterm.engine.errors import InputError
from nodeterm.present.text import verdicts_text

CORPUS = Path(__file__).parent / "corpus"


def _system(name):
    return build_system(load_circuit(str(CORPUS / name)))


def test_verdict_comes_even_when_the_explanation_has_no_time():
    # RB's sign flipped at x (own derivation of the Sallen-Key KCL): the verdict is fails whatever the budget
    system = _system("seismic_sallen_key.toml")
    text = "(V_x - V_in)/R1 - (V_x - V_p)/R2 + s*C1*(V_x - V_out) = 0"
    quick = audit_claim(system, "k", text, explain_budget=1e-9)
    assert quick.status == "fails"
    assert "stopped short" in quick.message and "stopped short" in quick.details["explanation"]
    full = audit_claim(system, "k", text, explain_budget=None)
    assert full.status == "fails" and "RB" in full.message and "stopped" not in full.message


def test_audit_claims_passes_the_budget_on():
    system = _system("hydrophone_mfb.toml")
    claims = {"k": "(V_x - V_in)/R1 + (V_x - V_m)/R3 + (V_x - V_out)/R2 = 0", "ok": "V_m = 0"}
    quick = audit_claims(system, claims, explain_budget=1e-9)
    assert [v.status for v in quick] == ["fails", "holds"]
    assert "stopped short" in quick[0].message


def test_two_slips_are_both_named():
    # RA written with R2 and RC's sign flipped (own derivation of the MFB KCL at x)
    v = audit_claim(_system("hydrophone_mfb.toml"), "k",
                    "(V_x - V_in)/R2 + s*C1*V_x - (V_x - V_m)/R3 + (V_x - V_out)/R2 = 0")
    assert v.status == "fails"
    assert "RA" in v.message and "RC" in v.message and "also" in v.message
    assert len(v.details["differences"]) == 2 and set(v.details["parts"]) == {"RA", "RC"}


def test_json_carries_node_parts_causes_and_fix(tmp_path, capsys):
    text = (CORPUS / "photodiode_tia.toml").read_text() + (
        '\n[hand]\nkcl_inv = "Iph - V_out/Rf - s*Cf*V_out = 0"\n')
    path = tmp_path / "tia.toml"
    path.write_text(text)
    assert main(["check", str(path), "--json", "--explain-time", "30"]) == 1
    v = json.loads(capsys.readouterr().out)["verdicts"][0]
    assert v["status"] == "fails" and v["details"]["node"] == "inv"
    assert v["details"]["causes"] == ["virtual-ground"] and "U1" in v["details"]["parts"]
    assert v["details"]["fix"] and "V_inv = V_p" in v["details"]["fix"][0]


def test_text_says_each_thing_once(tmp_path):
    system = _system("dosimeter_two_stage.toml")
    verdicts = audit_claims(system, {"gain": "Rb*Rd/(Ra*Rc)", "k": "(V_m2 - V_o1)/Rc + (V_m2 - V_o1)/Rd = 0",
                                     "gain2": "Rb*Rd/(Ra*Rc) + 1"})
    out = verdicts_text(verdicts, "f.toml")
    assert "[holds] holds" not in out and "[FAILS] fails" not in out
    assert "with :" not in out
    for line in out.splitlines():
        assert line.count("differ") <= 1
    assert out.count("difference") + out.count("differ by") <= 1


def test_no_option_the_command_lacks():
    err = InputError("the exact answer is too large", hint="substitute values (--set NAME=VALUE, or --known "
                     "for every value in the file), or solve in double precision with --numeric")
    assert "--numeric" not in without_numeric(err).hint
    assert "--known" in without_numeric(err).hint


def test_claim_with_numbers_suggests_known_and_is_right_with_it():
    # R1 = 10k, R2 = 1M in the file; the KCL at inv with those numbers (own derivation)
    system = _system("kiln_values.toml")
    v = audit_claim(system, "k", "(V_inv - V_in)/10000 + (V_inv - V_out)/1000000 = 0")
    assert v.status == "fails" and "--known" in v.message and "holds" in v.message
    assert audit_claim(system.substitute_known(), "k", "(V_inv - V_in)/10000 + (V_inv - V_out)/1000000 = 0"
                       ).status == "holds"


def test_division_by_a_zero_node_voltage_has_reason_and_example():
    v = audit_claim(_system("kiln_values.toml"), "k", "V_out/V_inv = -Rf/Rin")
    assert v.status == "fails" and "V_inv" in v.message and "virtual ground" in v.message
    assert "e.g." in v.message and v.details["divides_by"] == "V_inv"


def test_matched_ratio_hint_only_where_parts_can_match():
    # Howland pump: Vin/R1 needs R1*R4 = R2*R3 (can be met); Vin/(R1 + RL) is not a matching question
    system = _system("heater_howland.toml")
    assert "R1*R4 = R2*R3" in audit_claim(system, "Iload", "Vin/R1").message
    assert "matched" not in audit_claim(system, "Iload", "Vin/(R1 + RL)").message
