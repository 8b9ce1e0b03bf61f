"""Audit of hand derivations (nodeterm.engine.audit.verdicts) and ``nodeterm check``.

The circuits in tests/audit/ carry correct hand derivations of published circuits, each written in
several scalings and arrangements; the source of each formula is named in its file:

* inverting.toml, noninverting.toml, summing.toml, difference.toml: Sedra & Smith, Microelectronic
  Circuits, ch. 2 (from memory);
* sallen_key.toml: Franco, Design with Operational Amplifiers and Analog Integrated Circuits, ch. 3
  (from memory).

Every claim must hold. Then one error is injected into a claim at a time (dropped term, flipped sign,
wrong coefficient, a result off by a factor of 2...) and the verdict must fail and name the node and
the part where the error is. The numeric example of each failure is re-checked independently: the
example's values are substituted with ``System.substitute`` and the claim's two sides evaluated at
that solution with SymPy must differ.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest
import sympy

from nodeterm.cli import main
from nodeterm.engine import build_system, load_circuit
from nodeterm.engine.audit.verdicts import Verdict, audit_claim, audit_claims, exit_status
from nodeterm.engine.circuit.expr import parse_expression
from nodeterm.engine.circuit.loader import quantity_resolver
from nodeterm.engine.symbols import V, I
from nodeterm.engine.solving.solve import solve_system

HERE = Path(__file__).parent
FILES = sorted(p.name for p in HERE.glob("*.toml"))


def system_of(name: str):
    return build_system(load_circuit(str(HERE / name)))


# ----------------------------------------------------------------------------- correct derivations
@pytest.mark.parametrize("name", FILES)
def test_published_hand_derivations_hold(name):
    system = system_of(name)
    verdicts = audit_claims(system)
    assert len(verdicts) == len(system.circuit.hand) >= 4
    for v in verdicts:
        assert v.status == "holds", (v.name, v.message)
        assert v.line is not None and v.column is not None
        if v.kind == "equation":
            assert v.matches, v.message
            assert v.step is not None and system.steps[v.step - 1].kind in ("kcl", "opamps")
    assert exit_status(verdicts) == 0


def test_scaled_claim_reports_its_factor():
    system = system_of("inverting.toml")
    v = audit_claim(system, "k", "R2*(V_inv - V_in) + R1*(V_inv - V_out) = 0")
    assert v.matches == ("KCL at inv",)
    assert "multiplied by R1*R2" in v.message
    assert system.steps[v.step - 1].kind == "kcl"


def test_claim_after_substituting_a_constraint_names_the_constraint():
    # V_fb replaced by V_in because U1 holds its inputs equal (common practice, no source).
    v = audit_claim(system_of("noninverting.toml"), "k", "V_in/R1 + (V_in - V_out)/R2 = 0")
    assert v.status == "holds"
    assert v.matches == ("KCL at fb",)
    assert "input equality of U1" in v.message


def test_holds_after_parameter_values_are_substituted():
    system = system_of("inverting.toml").substitute({"R1": "10k", "R2": "1M"})
    verdicts = audit_claims(system)
    assert all(v.status == "holds" for v in verdicts), [v.message for v in verdicts]
    assert audit_claim(system, "gain", "-50").status == "fails"


# ----------------------------------------------------------------------------- injected errors
# (file, claim, text with one error, node label, part, words that must appear)
EQUATION_ERRORS = [
    ("inverting.toml", "dropped term", "(V_inv - V_in)/R1 = 0", "KCL at inv", "Rb", "missing"),
    ("inverting.toml", "flipped sign", "(V_inv - V_in)/R1 - (V_inv - V_out)/R2 = 0", "KCL at inv", "Rb",
     "sign error"),
    ("inverting.toml", "wrong coefficient, scaled", "R2*(V_inv - V_in) + 3*R1*(V_inv - V_out) = 0",
     "KCL at inv", "Rb", "wrong coefficient"),
    ("inverting.toml", "wrong resistor", "(V_inv - V_in)/R1 + (V_inv - V_out)/R1 = 0", "KCL at inv", "Rb",
     "R1 written where R2 belongs"),
    ("noninverting.toml", "flipped sign, scaled", "2*R2*V_fb - 2*R1*(V_fb - V_out) = 0", "KCL at fb", "Rf",
     "sign error"),
    ("noninverting.toml", "dropped term", "(V_fb - V_out)/R2 = 0", "KCL at fb", "Rg", "missing"),
    ("summing.toml", "dropped term, substituted", "V1/R1 + V_out/Rf = 0", "KCL at sum", "RB", "missing"),
    ("summing.toml", "wrong coefficient, scaled",
     "R2*Rf*(V_sum - V_a) + 2*R1*Rf*(V_sum - V_b) + R1*R2*(V_sum - V_out) = 0", "KCL at sum", "RB",
     "wrong coefficient"),
    ("summing.toml", "flipped sign", "(V_sum - V_a)/R1 + (V_sum - V_b)/R2 + (V_out - V_sum)/Rf = 0",
     "KCL at sum", "RF", "sign error"),
    ("difference.toml", "flipped sign", "(V_p - V_b)/R3 - V_p/R4 = 0", "KCL at p", "RD", "sign error"),
    ("difference.toml", "dropped term", "(V_m - V_out)/R2 = 0", "KCL at m", "RA", "missing"),
    ("sallen_key.toml", "dropped term", "(V_x - V_in)/R1 + s*C1*(V_x - V_out) = 0", "KCL at x", "RB",
     "missing"),
    ("sallen_key.toml", "flipped sign", "(V_p - V_x)/R2 - s*C2*V_p = 0", "KCL at p", "CB", "sign error"),
    ("sallen_key.toml", "wrong coefficient, scaled",
     "R2*(V_x - V_in) + R1*(V_x - V_p) + 2*s*R1*R2*C1*(V_x - V_out) = 0", "KCL at x", "CA",
     "wrong coefficient"),
]


def _sides_at(system, text: str, values: dict[str, str]):
    """The two sides of a claim evaluated at the exact solution for ``values`` (independent re-check)."""
    c = system.circuit
    sub = system.substitute({k: v for k, v in values.items() if k in c.parameters})
    sol = solve_system(sub)
    env = {V(n): v for n, v in sol.node_voltages.items()}
    env.update({I(p): v for p, v in sol.currents.items()})
    env.update({sympy.Symbol(k): parse_expression(v) for k, v in values.items()})
    resolve = quantity_resolver(c.parameters, c.nodes, c.part_ids)
    left, right = text.split("=")
    return [sympy.cancel(parse_expression(side, resolve).xreplace(env).xreplace(env)) for side in (left, right)]


@pytest.mark.parametrize("name,what,text,label,part,words", EQUATION_ERRORS,
                         ids=[f"{e[0]}-{e[1]}" for e in EQUATION_ERRORS])
def test_injected_equation_error_is_caught_and_located(name, what, text, label, part, words):
    system = system_of(name)
    v = audit_claim(system, "claim", text)
    assert v.status == "fails", v.message
    assert v.matches == (label,), v.message
    node = label.split(" at ")[1]
    first = v.details["differences"][0]
    assert f"from {part}" in first and words in first, v.message
    assert label in v.message and part in v.message and node in v.message
    assert system.steps[v.step - 1].kind == "kcl"
    ex = v.details["example"]
    assert ex["lhs"] != ex["rhs"]
    left, right = _sides_at(system, text, ex["values"])
    assert sympy.simplify(left - right) != 0
    assert str(left) == ex["lhs"] and str(right) == ex["rhs"]


# (file, name, wrong result, words of the likely cause)
RESULT_ERRORS = [
    ("inverting.toml", "gain", "-2*R2/R1", "factor of 2"),
    ("inverting.toml", "gain", "R2/R1", "sign error"),
    ("inverting.toml", "gain", "-R1/R2", "R1 and R2 are swapped"),
    ("noninverting.toml", "gain", "R2/R1", "missing '1 +'"),
    ("summing.toml", "vout", "-(Rf/R1*V1 + Rf/R2*V2)/2", "factor of 1/2"),
    ("difference.toml", "vout", "(R3/(R3 + R4))*(1 + R2/R1)*V2 - (R2/R1)*V1", "R3 and R4 are swapped"),
    ("sallen_key.toml", "H", "2/(s^2*R1*R2*C1*C2 + s*C2*(R1 + R2) + 1)", "factor of 2"),
    ("sallen_key.toml", "H", "1/(s^2*R1*R2*C1*C2 + s*C1*(R1 + R2) + 1)", "C1 and C2 are swapped"),
]


@pytest.mark.parametrize("name,key,text,cause", RESULT_ERRORS, ids=[f"{e[0]}-{e[3]}" for e in RESULT_ERRORS])
def test_wrong_result_is_caught_with_its_cause(name, key, text, cause):
    system = system_of(name)
    v = audit_claim(system, key, text)
    assert v.status == "fails" and v.kind == "result"
    assert cause in v.details["cause"] and cause in v.message
    solved = solve_system(system).find[key]
    assert v.details["solved"] == sympy.sstr(solved)
    ex = v.details["example"]
    assert ex["claimed"] != ex["solved"]


def test_numeric_fallback_is_reported():
    # sqrt(R2**2) is R2 only for positive R2: cancel cannot decide, random positive points do.
    v = audit_claim(system_of("inverting.toml"), "gain", "-sqrt(R2^2)/R1")
    assert v.status == "holds"
    assert "numeric" in v.message and "numeric" in v.details["method"]
    w = audit_claim(system_of("inverting.toml"), "gain", "-sqrt(R2^2)/R1 + sqrt(R1)/100")
    assert w.status == "fails"


# ----------------------------------------------------------------------------- bad claims
def test_claim_without_equals_sign():
    v = audit_claim(system_of("inverting.toml"), "kcl", "(V_inv - V_in)/R1 + (V_inv - V_out)/R2")
    assert v.status == "error" and "no '='" in v.message and "'kcl'" in v.message


def test_claim_naming_an_unknown_node_gives_key_and_column():
    v = audit_claim(system_of("inverting.toml"), "kcl", "(V_inv - V_inn)/R1 = 0")
    assert v.status == "error"
    assert "'inn'" in v.message and "column 10" in v.message and v.column == 10


def test_identity_is_an_error():
    v = audit_claim(system_of("inverting.toml"), "z", "0 = 0")
    assert v.status == "error" and "identity" in v.message
    w = audit_claim(system_of("inverting.toml"), "z", "V_out/R1 = V_out/R1")
    assert w.status == "error"


def test_unparseable_claim_column_counts_from_the_file(tmp_path):
    text = (HERE / "inverting.toml").read_text().replace('gain = "-R2/R1"', 'gain = "-R2/(R1"')
    path = tmp_path / "bad.toml"
    path.write_text(text)
    system = build_system(load_circuit(str(path)))
    v = [v for v in audit_claims(system) if v.name == "gain"][0]
    line = text.splitlines()[v.line - 1]
    assert v.status == "error" and "')'" in v.message
    assert line.startswith("gain") and v.column == line.index("-R2/(R1") + 1 + len("-R2/(R1")


def test_verdict_is_frozen():
    v = audit_claim(system_of("inverting.toml"), "z", "V_inv = 0")
    assert isinstance(v, Verdict)
    with pytest.raises(AttributeError):
        v.status = "fails"  # type: ignore[misc]


# ----------------------------------------------------------------------------- nodeterm check
def _wrong_copy(tmp_path, name, old, new):
    text = (HERE / name).read_text()
    assert old in text
    path = tmp_path / name
    path.write_text(text.replace(old, new))
    return str(path)


def test_check_exit_status_all_hold(capsys):
    assert main(["check", str(HERE / "sallen_key.toml")]) == 0
    out = capsys.readouterr().out
    assert "6 claims: 6 hold, 0 fail" in out


def test_check_exit_status_one_fails(tmp_path, capsys):
    path = _wrong_copy(tmp_path, "summing.toml", '"V1/R1 + V2/R2 + V_out/Rf = 0"', '"V1/R1 + V_out/Rf = 0"')
    assert main(["check", path]) == 1
    out = capsys.readouterr().out
    assert "[FAILS]" in out and "missing the term from RB" in out and "KCL at sum" in out


def test_check_exit_status_bad_claim(tmp_path, capsys):
    path = _wrong_copy(tmp_path, "summing.toml", '"V1/R1 + V2/R2 + V_out/Rf = 0"', '"V1/R1 + V2/R2 + V_out/Rf"')
    assert main(["check", path]) == 2
    out = capsys.readouterr().out
    assert "[ERROR]" in out and "no '='" in out
    assert "3 hold" in out  # the other claims are still checked


def test_check_without_hand_table(capsys):
    assert main(["check", str(Path(__file__).parents[1] / "published" / "inverting_amplifier.toml")]) == 2
    err = capsys.readouterr().err
    assert "no [hand] table" in err and "Traceback" not in err and len(err.strip().splitlines()) == 1


def test_check_json(tmp_path, capsys):
    path = _wrong_copy(tmp_path, "inverting.toml", 'gain = "-R2/R1"', 'gain = "-2*R2/R1"')
    assert main(["check", path, "--json"]) == 1
    data = json.loads(capsys.readouterr().out)
    assert data["exit_status"] == 1
    by_name = {v["name"]: v for v in data["verdicts"]}
    assert by_name["gain"]["status"] == "fails" and by_name["kcl_inv"]["status"] == "holds"
    assert by_name["kcl_inv"]["matches"] == ["KCL at inv"]


def test_check_with_set_and_known():
    path = str(Path(__file__).parents[2] / "circuits" / "kiln_preamp.toml")
    assert main(["check", path, "--known"]) == 0
    assert main(["check", path, "--set", "Rin=20k"]) == 0


def test_check_does_not_import_textual(tmp_path):
    code = ("import sys; from nodeterm.cli import main; "
            f"rc = main(['check', {str(HERE / 'inverting.toml')!r}]); "
            "assert 'textual' not in sys.modules, 'textual imported'; sys.exit(rc)")
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert done.returncode == 0, done.stderr


def test_claim_about_one_node_compares_the_value():
    # Voltage divider at the + input: V_p = V2*R4/(R3 + R4) (common practice, no source); R3, R4 swapped here.
    v = audit_claim(system_of("difference.toml"), "vp", "V_p = V2*R3/(R3 + R4)")
    assert v.status == "fails" and "V_p" in v.message and "R3 and R4 are swapped" in v.message


def test_matched_ratio_formula_on_unmatched_parts():
    # V_out = (R2/R1)*(V2 - V1) holds only for R2/R1 = R4/R3 (Sedra & Smith, sec. 2.4, from memory).
    v = audit_claim(system_of("difference.toml"), "vout", "(R2/R1)*(V2 - V1)")
    assert v.status == "fails" and "R1*R4 = R2*R3" in v.details["cause"]
