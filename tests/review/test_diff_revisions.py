"""``nodeterm diff``: each kind of change in a temporary git repository, with its expected report.

Every case states what the report must say. Expected results come from published formulas, named
beside each check (from memory), or from an independent SymPy solve of the nodal equations written
here by hand:

* inverting amplifier: gain = -R2/R1 (Sedra & Smith, Microelectronic Circuits, sec. 2.2, from memory);
* resistors in parallel: R2*R3/(R2 + R3) (Alexander & Sadiku, Fundamentals of Electric Circuits,
  sec. 2.7, from memory);
* unity-gain Sallen-Key low-pass: H = 1/(s^2*R1*R2*C1*C2 + s*C2*(R1 + R2) + 1), C1 from the middle
  node to the output (Franco, Design with Operational Amplifiers, sec. 3.3, from memory);
  second-order factor a2*s^2 + a1*s + a0: w0 = sqrt(a0/a2), Q = sqrt(a0*a2)/a1 (same source);
* an ideal op-amp holds V_plus = V_minus and its output is a voltage source of zero output
  resistance, so a load on the output changes no node voltage (common practice, no source).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys

import pytest
import sympy

from nodeterm.cli import main
from nodeterm.engine.review import diff_circuits
from nodeterm.engine import parse_circuit

VSRC = "voltage_source"

INVERTING = f"""title = "Greenhouse light sensor stage, inverting"
reference = "gnd"

[parameters]
Vs = ""
Rin = "10k"
Rf = "100k"

[parts]
VS = {{ kind = "{VSRC}", nodes = ["in", "gnd"], value = "Vs" }}
R1 = {{ kind = "resistor", nodes = ["in", "inv"], value = "Rin" }}
R2 = {{ kind = "resistor", nodes = ["inv", "out"], value = "Rf" }}
U1 = {{ kind = "opamp", plus = "gnd", minus = "inv", out = "out" }}

[find]
gain = "V_out/V_in"
Iin = "I_R1"
"""

Rin, Rf, Vs = sympy.symbols("Rin Rf Vs")


def _git(repo, *args):
    env = {**os.environ, "GIT_AUTHOR_NAME": "Test", "GIT_AUTHOR_EMAIL": "test@example.org",
           "GIT_COMMITTER_NAME": "Test", "GIT_COMMITTER_EMAIL": "test@example.org",
           "GIT_CONFIG_GLOBAL": os.devnull, "GIT_CONFIG_NOSYSTEM": "1"}
    return subprocess.run(["git", "-C", str(repo), *args], check=True, capture_output=True, env=env, text=True)


@pytest.fixture
def repo(tmp_path, monkeypatch):
    """A repository with three revisions of stage.toml: v1 the base, v2 Rf raised, v3 R3 added beside R2."""
    monkeypatch.setenv("GIT_CEILING_DIRECTORIES", str(tmp_path.parent))
    root = tmp_path / "repo"
    root.mkdir()
    _git(root, "init", "-q")
    f = root / "stage.toml"
    f.write_text(INVERTING)
    _git(root, "add", "stage.toml")
    _git(root, "commit", "-q", "-m", "base")
    _git(root, "tag", "v1")
    f.write_text(INVERTING.replace('Rf = "100k"', 'Rf = "220k"'))
    _git(root, "commit", "-q", "-am", "more gain")
    _git(root, "tag", "v2")
    f.write_text(f.read_text().replace("[find]", 'R3 = { kind = "resistor", nodes = ["inv", "out"], value = "Rf" }\n\n[find]'))
    _git(root, "commit", "-q", "-am", "R3 beside R2")
    _git(root, "tag", "v3")
    return root


def run(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def run_json(capsys, *argv):
    code, out, err = run(capsys, *argv, "--json")
    assert code == 0, err
    return json.loads(out)


def only(entries, key, name):
    found = [e for e in entries if e[key] == name]
    assert len(found) == 1, entries
    return found[0]


def test_value_change_since_a_revision(repo, capsys):
    """Expected: parameter Rf 100k -> 220k; no part, node or equation changes (the equations are in Rf);
    gain symbolically -Rf/Rin both times, with the file's values -10 -> -22 (+120 %); Iin unchanged."""
    data = run_json(capsys, "diff", str(repo / "stage.toml"), "--since", "HEAD~1")  # v2 -> v3: R3 only
    assert [p["part"] for p in data["parts"]] == ["R3"] and data["parameters"] == []
    git_v2 = subprocess.run(["git", "-C", str(repo), "show", "v2:stage.toml"], capture_output=True, text=True,
                            check=True).stdout
    (repo / "stage.toml").write_text(git_v2)
    data = run_json(capsys, "diff", str(repo / "stage.toml"), "--since", "v1")
    assert data["parts"] == [] and data["nodes"] == [] and data["equations"] == []
    p = only(data["parameters"], "parameter", "Rf")
    assert p["change"] == "changed" and p["fields"] == [{"field": "value", "old": "100k", "new": "220k"}]
    gain = only(data["results"], "result", "gain")
    expected_old = -sympy.Integer(100_000) / 10_000  # -R2/R1, Sedra & Smith sec. 2.2
    expected_new = -sympy.Integer(220_000) / 10_000
    assert sympy.sympify(gain["old"]) == sympy.sympify(gain["new"]) == -Rf / Rin
    assert sympy.sympify(gain["old_value"]) == expected_old
    assert sympy.sympify(gain["new_value"]) == expected_new
    assert sympy.sympify(gain["relative"]) == (expected_new - expected_old) / expected_old
    assert gain["sign_flip"] is False
    assert [r["result"] for r in data["results"]] == ["gain"]  # Iin = Vs/Rin does not involve Rf
    assert data["results_changed"] is True
    code, out, _ = run(capsys, "diff", str(repo / "stage.toml"), "--since", "v1")
    assert code == 0
    assert "Rf changed" in out and "value: 100k -> 220k" in out and "-10 -> -22 (+120 %)" in out
    code, _, _ = run(capsys, "diff", str(repo / "stage.toml"), "--since", "v1", "--fail-on-result-change")
    assert code == 1


def test_part_added_in_parallel(repo, capsys):
    """v2 -> v3: R3 (Rf) added on inv, out beside R2. Expected: part R3 added; the KCL at inv gains the
    term (V_inv - V_out)/Rf from R3 and nothing else; gain -Rf/Rin -> -(Rf||Rf)/Rin = -Rf/(2*Rin)
    (parallel resistors, Alexander & Sadiku sec. 2.7; inverting gain, Sedra & Smith sec. 2.2), with the
    file's values -22 -> -11 (-50 %)."""
    data = run_json(capsys, "diff", str(repo / "stage.toml"), "--since", "v2")
    part = only(data["parts"], "part", "R3")
    assert part["change"] == "added" and part["kind"] == "resistor" and part["where"] == "inv, out"
    assert data["parameters"] == [] and data["nodes"] == []
    eq = only(data["equations"], "at", "inv")
    assert eq["kind"] == "kcl" and eq["change"] == "changed" and eq["node"] == "inv"
    assert [(t["part"], t["change"]) for t in eq["terms"]] == [("R3", "added")]
    V_inv, V_out = sympy.symbols("V_inv V_out")
    assert sympy.simplify(sympy.sympify(eq["terms"][0]["new"]) - (V_inv - V_out) / Rf) == 0
    assert len(data["equations"]) == 1
    gain = only(data["results"], "result", "gain")
    parallel = Rf * Rf / (Rf + Rf)
    assert sympy.simplify(sympy.sympify(gain["new"]) - (-parallel / Rin)) == 0
    assert sympy.sympify(gain["old_value"]) == -22 and sympy.sympify(gain["new_value"]) == -11
    assert gain["relative_float"] == pytest.approx(-0.5)
    assert [r["result"] for r in data["results"]] == ["gain"]
    code, out, _ = run(capsys, "diff", str(repo / "stage.toml"), "--since", "v2", "--markdown")
    assert code == 0 and "### Parts" in out and "R3 (resistor) added on inv, out" in out
    assert "+ R3: `(V_inv - V_out)/Rf` (term added)" in out


def test_both_revisions_back(repo, capsys):
    """v1 -> v3 holds both changes: Rf changed and R3 added; gain -10 -> -11 with the file's values."""
    data = run_json(capsys, "diff", str(repo / "stage.toml"), "--since", "v1")
    assert [p["part"] for p in data["parts"]] == ["R3"]
    assert [p["parameter"] for p in data["parameters"]] == ["Rf"]
    gain = only(data["results"], "result", "gain")
    assert sympy.sympify(gain["old_value"]) == -10 and sympy.sympify(gain["new_value"]) == -11


def write(tmp_path, name, text):
    path = tmp_path / name
    path.write_text(text)
    return str(path)


def test_opamp_inputs_swapped(tmp_path, capsys):
    """U1's plus and minus exchanged. Expected: part U1 changed (plus gnd -> inv, minus inv -> gnd) with
    the inputs-swapped note; the input equality of U1 reported as the same equality with its sides
    exchanged; no KCL changes and no result changes, because an ideal op-amp only holds
    V_plus = V_minus (common practice, no source) -- which is why the note asks to check the feedback."""
    old = write(tmp_path, "old.toml", INVERTING)
    new = write(tmp_path, "new.toml", INVERTING.replace('plus = "gnd", minus = "inv"', 'plus = "inv", minus = "gnd"'))
    data = run_json(capsys, "diff", old, new)
    u1 = only(data["parts"], "part", "U1")
    assert {(f["field"], f["old"], f["new"]) for f in u1["fields"]} == {("plus", "gnd", "inv"),
                                                                      ("minus", "inv", "gnd")}
    assert "inputs swapped" in u1["note"]
    eq = only(data["equations"], "at", "U1")
    assert eq["kind"] == "opamp_equality" and eq["part"] == "U1" and "inputs swapped" in eq["how"]
    assert len(data["equations"]) == 1
    assert data["results"] == [] and data["results_changed"] is False
    code, _, _ = run(capsys, "diff", old, new, "--fail-on-result-change")
    assert code == 0


def test_node_renamed(tmp_path, capsys):
    """Node inv renamed to sum everywhere. Expected: one node entry, a rename with the same connections
    (R1, R2, U1.minus); no part, equation or result changes (not a removal plus an addition)."""
    old = write(tmp_path, "old.toml", INVERTING)
    new = write(tmp_path, "new.toml", INVERTING.replace('"inv"', '"sum"'))
    data = run_json(capsys, "diff", old, new)
    assert data["nodes"] == [{"node": "sum", "change": "renamed", "old_node": "inv", "same_connections": True,
                              "pins": ["R1", "R2", "U1.minus"]}]
    for key in ("parts", "parameters", "equations", "results", "claims", "warnings"):
        assert data[key] == [], key
    code, out, _ = run(capsys, "diff", old, new)
    assert "inv renamed to sum (same connections: R1, R2, U1.minus)" in out


def test_renamed_node_that_also_gained_a_part(tmp_path):
    """inv renamed to sum and a resistor added from sum to gnd: still one node renamed (connections
    changed too), its KCL shows the added term only; the gain does not change (the inverting input is
    a virtual ground, so a resistor from it to ground carries no current -- Sedra & Smith sec. 2.2)."""
    old = parse_circuit(INVERTING)
    new = parse_circuit(INVERTING.replace('"inv"', '"sum"').replace(
        "[find]", 'R4 = { kind = "resistor", nodes = ["sum", "gnd"], value = "Rin" }\n\n[find]'))
    d = diff_circuits(old, new)
    assert [(n.old_node, n.node, n.change, n.same_connections) for n in d.nodes] == [("inv", "sum", "renamed", False)]
    assert [(e.label, e.old_at, [(t.part, t.change) for t in e.terms]) for e in d.equations] == [
        ("KCL at sum", "inv", [("R4", "added")])]
    assert d.results == ()


def test_part_moved_to_another_node(tmp_path, capsys):
    """C1 of a unity-gain Sallen-Key low-pass moved from (n1, out) to (n1, gnd): the filter becomes a
    buffered RC-RC ladder. Expected: part C1 changed (nodes n1, out -> n1, gnd); KCL at n1 changed in
    C1's term only (no longer V_out); H changed; with R1 = R2 = R and C1 = 2*C2 the pole pair keeps
    w0 = 1/(R*sqrt(C1*C2)) and Q moves from sqrt(2)/2 to sqrt(2)/4 (-50 %). The expected forms come
    from Franco sec. 3.3 for the filter and a SymPy solve of the ladder's nodal equations."""
    text = f"""title = "Pump vibration anti-alias filter"
[parameters]
Vacc = ""
R = "10k"
Cg = "10n"
Cf = "2*Cg"
[parts]
ACC = {{ kind = "{VSRC}", nodes = ["in", "gnd"], value = "Vacc" }}
R1 = {{ kind = "resistor", nodes = ["in", "n1"], value = "R" }}
R2 = {{ kind = "resistor", nodes = ["n1", "p"], value = "R" }}
C1 = {{ kind = "capacitor", nodes = ["n1", "out"], value = "Cf" }}
C2 = {{ kind = "capacitor", nodes = ["p", "gnd"], value = "Cg" }}
U1 = {{ kind = "opamp", plus = "p", minus = "out", out = "out" }}
[find]
H = "V_out/V_in"
"""
    old = write(tmp_path, "old.toml", text)
    new = write(tmp_path, "new.toml", text.replace('["n1", "out"], value = "Cf"', '["n1", "gnd"], value = "Cf"'))
    data = run_json(capsys, "diff", old, new)
    c1 = only(data["parts"], "part", "C1")
    assert c1["fields"] == [{"field": "nodes", "old": "n1, out", "new": "n1, gnd"}]
    eq = only(data["equations"], "at", "n1")
    assert [(t["part"], t["change"], t["how"]) for t in eq["terms"]] == [("C1", "changed", "no longer V_out")]
    assert len(data["equations"]) == 1
    # Expected H before and after: Franco sec. 3.3, and an independent SymPy solve of the ladder.
    s, R, Cf, Cg, Vin = sympy.symbols("s R Cf Cg Vin")
    v1, vp = sympy.symbols("v1 vp")
    ladder = sympy.solve([(v1 - Vin) / R + (v1 - vp) / R + s * Cf * v1, (vp - v1) / R + s * Cg * vp], [v1, vp])
    h_new = ladder[vp] / Vin
    h_old = 1 / (s**2 * R * R * Cf * Cg + s * Cg * (R + R) + 1)
    res = only(data["results"], "result", "H")
    assert sympy.simplify(sympy.sympify(res["old"]) - h_old) == 0
    assert sympy.simplify(sympy.sympify(res["new"]) - h_new) == 0
    values = {R: 10_000, Cg: sympy.Rational(1, 10**8), Cf: sympy.Rational(2, 10**8)}

    def w0_q(h):
        den = sympy.Poly(sympy.fraction(sympy.cancel(h.subs(values)))[1], s)
        a2, a1, a0 = den.all_coeffs()
        return sympy.sqrt(a0 / a2), sympy.sqrt(a0 * a2) / a1

    (w_old, q_old), (w_new, q_new) = w0_q(h_old), w0_q(h_new)
    assert sympy.simplify(q_old - sympy.sqrt(2) / 2) == 0 and sympy.simplify(q_new - sympy.sqrt(2) / 4) == 0
    moves = {m["what"]: m for m in res["moves"]}
    assert "w0 (rad/s)" not in moves  # w0 = 1/(R*sqrt(Cf*Cg)) both times
    q = moves["Q"]
    assert sympy.simplify(sympy.sympify(q["old"]) - q_old) == 0
    assert sympy.simplify(sympy.sympify(q["new"]) - q_new) == 0
    assert q["relative_float"] == pytest.approx(-0.5)
    assert sympy.simplify(w_old - w_new) == 0
    code, out, _ = run(capsys, "diff", old, new)
    assert "Q: " in out and "(-50 %)" in out


def test_redundant_part_changes_no_result(tmp_path, capsys):
    """A load RL from the op-amp output to ground. Expected: part RL added and nothing else -- no
    equation (no KCL is written at an ideal op-amp output) and no result changes, as an ideal op-amp
    output has zero output resistance (common practice, no source); --fail-on-result-change exits 0."""
    old = write(tmp_path, "old.toml", INVERTING)
    new = write(tmp_path, "new.toml", INVERTING.replace(
        "[find]", 'RL = { kind = "resistor", nodes = ["out", "gnd"], value = "2k" }\n\n[find]'))
    data = run_json(capsys, "diff", old, new)
    assert [(p["part"], p["change"], p["where"]) for p in data["parts"]] == [("RL", "added", "out, gnd")]
    for key in ("parameters", "nodes", "equations", "results", "claims", "warnings"):
        assert data[key] == [], key
    code, out, _ = run(capsys, "diff", old, new, "--fail-on-result-change")
    assert code == 0 and "Changed: 1 part." in out


def test_source_reversed_flips_the_sign(tmp_path, capsys):
    """VS's nodes reversed: V_in = -Vs, so I_R1 = V_in/R1 changes sign (Ohm's law; the inverting input
    is a virtual ground, Sedra & Smith sec. 2.2) while the gain V_out/V_in does not."""
    old = write(tmp_path, "old.toml", INVERTING)
    new = write(tmp_path, "new.toml", INVERTING.replace('nodes = ["in", "gnd"], value = "Vs"',
                                                        'nodes = ["gnd", "in"], value = "Vs"'))
    data = run_json(capsys, "diff", old, new)
    vs = only(data["parts"], "part", "VS")
    assert vs["fields"] == [{"field": "nodes", "old": "in, gnd", "new": "gnd, in"}]
    iin = only(data["results"], "result", "Iin")
    assert sympy.sympify(iin["old"]) == Vs / Rin and sympy.sympify(iin["new"]) == -Vs / Rin
    assert iin["sign_flip"] is True and sympy.sympify(iin["ratio"]) == -1
    assert [r["result"] for r in data["results"]] == ["Iin"]
    eq = only(data["equations"], "at", "in")
    assert eq["kind"] == "known_voltage" and eq["change"] == "changed"


def test_text_report_fits_80_columns(tmp_path, capsys):
    old = write(tmp_path, "old.toml", INVERTING)
    new = write(tmp_path, "new.toml", INVERTING.replace('"inv"', '"a_much_longer_summing_junction_name"').replace(
        'Rf = "100k"', 'Rf = "(100k + 22k)*(1 + 1/1000)*(47k/(47k + 1k))"'))
    code, out, _ = run(capsys, "diff", old, new)
    assert code == 0
    assert max(len(line) for line in out.splitlines()) <= 80


def test_identical_files_report_nothing(tmp_path, capsys):
    old = write(tmp_path, "old.toml", INVERTING)
    new = write(tmp_path, "new.toml", INVERTING.replace("Greenhouse", "Greenhouse (copy)"))
    code, out, _ = run(capsys, "diff", old, new, "--fail-on-result-change")
    assert code == 0 and "No change in circuit terms." in out


def test_value_options_apply_to_both_revisions(tmp_path, capsys):
    """--known substitutes each file's values into its own results: gain -Rf/Rin becomes -10 and -22
    (Sedra & Smith sec. 2.2); --set Vs=2 puts the source value into Iin = Vs/Rin = 2/10k on both sides,
    so Iin (Rin unchanged) is not listed."""
    old = write(tmp_path, "old.toml", INVERTING)
    new = write(tmp_path, "new.toml", INVERTING.replace('Rf = "100k"', 'Rf = "220k"'))
    data = run_json(capsys, "diff", old, new, "--known")
    gain = only(data["results"], "result", "gain")
    assert sympy.sympify(gain["old"]) == -10 and sympy.sympify(gain["new"]) == -22
    data = run_json(capsys, "diff", old, new, "--set", "Vs=2")
    assert [r["result"] for r in data["results"]] == ["gain"]
    code, out, err = run(capsys, "diff", old, new, "--set", "Vx=2")
    assert code == 2 and out == "" and "no parameter 'Vx'" in err and "old.toml" in err


def test_opamp_input_moved_changes_its_equality(tmp_path, capsys):
    """U1's plus input moved from gnd to a new divider node ref (R5, R6 from in): expected: parts R5 and
    R6 added, U1 changed (plus gnd -> ref), node ref appeared with its own KCL, the input equality of U1
    changed from 0 = V_inv to V_ref = V_inv; the gain becomes that of a difference amplifier fed with
    V_in on both inputs, -Rf/Rin + (1 + Rf/Rin)*R6/(R5 + R6) (Sedra & Smith sec. 2.4, from memory)."""
    old = write(tmp_path, "old.toml", INVERTING)
    new = write(tmp_path, "new.toml", INVERTING.replace('plus = "gnd"', 'plus = "ref"').replace(
        "[find]", 'R5 = { kind = "resistor", nodes = ["in", "ref"], value = "Rin" }\n'
                  'R6 = { kind = "resistor", nodes = ["ref", "gnd"], value = "Rf" }\n\n[find]'))
    data = run_json(capsys, "diff", old, new)
    assert {(p["part"], p["change"]) for p in data["parts"]} == {("U1", "changed"), ("R5", "added"),
                                                                ("R6", "added")}
    assert [(n["node"], n["change"]) for n in data["nodes"]] == [("ref", "appeared")]
    eq = only(data["equations"], "at", "U1")
    V_ref, V_inv = sympy.symbols("V_ref V_inv")
    assert sympy.sympify(eq["old"]["lhs"]) - sympy.sympify(eq["old"]["rhs"]) in (V_inv, -V_inv)
    assert sympy.expand(sympy.sympify(eq["new"]["lhs"]) - sympy.sympify(eq["new"]["rhs"])) in (
        V_ref - V_inv, V_inv - V_ref)
    assert only(data["equations"], "at", "ref")["change"] == "added"
    gain = only(data["results"], "result", "gain")
    expected = -Rf / Rin + (1 + Rf / Rin) * Rf / (Rin + Rf)  # R5 = Rin, R6 = Rf
    assert sympy.simplify(sympy.sympify(gain["new"]) - expected) == 0


def test_command_runs_as_a_program(tmp_path):
    """python -m nodeterm diff, as CI would run it: exit 1 with --fail-on-result-change, Textual not loaded."""
    old = write(tmp_path, "old.toml", INVERTING)
    new = write(tmp_path, "new.toml", INVERTING.replace('Rf = "100k"', 'Rf = "220k"'))
    code = ("import sys; sys.argv = ['nodeterm', 'diff', %r, %r, '--fail-on-result-change'];"
            "from nodeterm.cli import main; status = main(sys.argv[1:]);"
            "assert 'textual' not in sys.modules; sys.exit(status)") % (old, new)
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert done.returncode == 1, done.stderr
    assert "Rf changed" in done.stdout and "-10 -> -22 (+120 %)" in done.stdout
