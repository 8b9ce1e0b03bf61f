"""One test per kind of bad input: a clear one-line message, exit status 2, never a traceback.

Each test writes a small circuit file, runs ``nodeterm solve`` in-process
(``nodeterm.cli.main``) and checks the exit status and the message: the file,
the line (and column) when known, what is wrong and how to fix it.  The engine
exceptions are checked too where the test needs their fields.

Circuits whose equations cannot be solved (no DC path, loops of sources,
current-source-only nodes, op-amps without feedback) must be explained in
circuit terms, not as a "singular matrix".  Expected facts are common practice
(no source): e.g. a node joined to the rest only through current sources has
no voltage-dependent term in its KCL, so its voltage is not fixed.
"""

from __future__ import annotations

import builtins
import json
import re
from pathlib import Path

import pytest
import sympy

from nodeterm.cli import main
from nodeterm.engine import InputError, SolveError, build_system, parse_circuit
from nodeterm.engine.solving.solve import solve_system

DIVIDER = """\
title = "greenhouse sensor divider"
[parameters]
Rtop = "10k"
Rbot = "4.7k"
[parts]
V1 = { kind = "voltage_source", nodes = ["in", "gnd"], value = "5" }
R1 = { kind = "resistor", nodes = ["in", "out"], value = "Rtop" }
R2 = { kind = "resistor", nodes = ["out", "gnd"], value = "Rbot" }
"""


def run_solve(tmp_path: Path, text: str, capsys, *extra: str, name: str = "bad.toml") -> tuple[int, str, str]:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    status = main(["solve", str(path), *extra])
    out, err = capsys.readouterr()
    assert "Traceback" not in out + err
    return status, out, err


def refused(tmp_path: Path, text: str, capsys, fragment: str, *, line: int | None = None,
            column: int | None = None) -> str:
    """Run solve, expect exit 2 and one line naming the file (and line/column) with the fragment and a hint."""
    status, out, err = run_solve(tmp_path, text, capsys)
    assert status == 2, (status, out, err)
    message = err.strip()
    assert "\n" not in message, message
    where = re.escape(f"{tmp_path / 'bad.toml'}")
    if line is None:
        where += r"(:\d+(:\d+)?)?"  # the line when the engine knows it; not asked here
    else:
        where += f":{line}" + (f":{column}" if column is not None else r"(:\d+)?")
    assert re.match(f"nodeterm: {where}: error: ", message), message
    assert fragment in message, message
    assert "; " in message.split(": error: ", 1)[1], f"no hint in: {message}"
    return message


# ----------------------------------------------------------------------------- the file itself
def test_toml_syntax_error_gives_line_and_column(tmp_path, capsys):
    text = DIVIDER.replace('R2 = { kind = "resistor",', 'R2 = { kind = "resistor"')
    line = text.splitlines().index([ln for ln in text.splitlines() if ln.startswith("R2")][0]) + 1
    message = refused(tmp_path, text, capsys, "TOML syntax error", line=line)
    assert re.search(rf":{line}:\d+: error", message)


def test_missing_parts_table(tmp_path, capsys):
    text = 'title = "no parts"\n[parameters]\nR = "1k"\n'
    refused(tmp_path, text, capsys, "missing [parts] table")


def test_unknown_kind(tmp_path, capsys):
    text = DIVIDER + 'L9 = { kind = "lamp", nodes = ["out", "gnd"], value = "1" }\n'
    message = refused(tmp_path, text, capsys, "part L9: unknown kind 'lamp'", line=9)
    assert "resistor" in message  # the hint lists the kinds


@pytest.mark.parametrize("word, meant", [("vsource", "voltage_source"), ("isource", "current_source"),
                                         ("VoltageSource", "voltage_source"), ("current source", "current_source")])
def test_source_kinds_are_full_words(tmp_path, capsys, word, meant):
    """Sources are written in the trade's full words; a short or spaced spelling is refused with the word meant."""
    text = DIVIDER + f'S9 = {{ kind = "{word}", nodes = ["out", "gnd"], value = "1" }}\n'
    message = refused(tmp_path, text, capsys, f"part S9: unknown kind {word!r}", line=9, column=16)
    assert f"did you mean {meant!r}?" in message


def test_missing_key(tmp_path, capsys):
    text = DIVIDER + 'R3 = { kind = "resistor", nodes = ["out", "gnd"] }\n'
    refused(tmp_path, text, capsys, "part R3 (resistor) is missing key 'value'", line=9)


def test_extra_key(tmp_path, capsys):
    text = DIVIDER + 'R3 = { kind = "resistor", nodes = ["out", "gnd"], value = "1k", watts = 2 }\n'
    refused(tmp_path, text, capsys, "part R3 (resistor) has unknown key 'watts'", line=9)


def test_node_name_with_bad_characters(tmp_path, capsys):
    text = DIVIDER + 'R3 = { kind = "resistor", nodes = ["out-2", "gnd"], value = "1k" }\n'
    refused(tmp_path, text, capsys, "node name 'out-2' is not valid", line=9)


def test_part_id_with_bad_characters(tmp_path, capsys):
    text = DIVIDER + '3R = { kind = "resistor", nodes = ["out", "gnd"], value = "1k" }\n'
    refused(tmp_path, text, capsys, "part id '3R' is not valid", line=9)


def test_expression_that_does_not_parse_shows_the_column(tmp_path, capsys):
    text = DIVIDER.replace('Rbot = "4.7k"', 'Rbot = "4.7k +* 2"')
    line_text = text.splitlines()[3]
    column = line_text.index("*") + 1  # the stray operator, counted in the file line
    refused(tmp_path, text, capsys, "unexpected '*'", line=4, column=column)


def test_unknown_name_in_an_expression(tmp_path, capsys):
    text = DIVIDER.replace('value = "Rbot"', 'value = "Rbottom"')
    line_text = text.splitlines()[7]
    refused(tmp_path, text, capsys, "unknown name 'Rbottom'", line=8, column=line_text.index("Rbottom") + 1)


def test_parameter_cycle_names_the_cycle(tmp_path, capsys):
    text = DIVIDER.replace('Rtop = "10k"', 'Rtop = "2*Rbot"').replace('Rbot = "4.7k"', 'Rbot = "Rtop/2"')
    message = refused(tmp_path, text, capsys, "parameter cycle:")
    assert "Rbot -> Rtop -> Rbot" in message or "Rtop -> Rbot -> Rtop" in message


def test_control_naming_a_missing_part(tmp_path, capsys):
    text = DIVIDER + 'F1 = { kind = "cccs", nodes = ["out", "gnd"], control = "R7", gain = 10 }\n'
    refused(tmp_path, text, capsys, "control names part 'R7', which does not exist", line=9)


def test_reference_node_not_used(tmp_path, capsys):
    text = 'reference = "com"\n' + DIVIDER.split("\n", 1)[1]
    refused(tmp_path, text, capsys, "the reference node 'com' is not used by any part", line=1)


def test_part_with_both_ends_on_one_node(tmp_path, capsys):
    text = DIVIDER + 'R3 = { kind = "resistor", nodes = ["out", "out"], value = "1k" }\n'
    refused(tmp_path, text, capsys, "part R3 has both ends on node 'out'", line=9)


def test_zero_resistor_is_an_error(tmp_path, capsys):
    text = DIVIDER.replace('Rbot = "4.7k"', 'Rbot = "0"')
    refused(tmp_path, text, capsys, "resistor R2 has value 0", line=8)


def test_negative_value_is_a_warning_and_still_solves(tmp_path, capsys):
    # Divider with a negative lower leg: V_out = 5 * Rbot/(Rtop + Rbot) = 5 * (-5k)/(5k) = -5 V
    # (voltage divider formula, common practice, no source).
    text = DIVIDER.replace('Rbot = "4.7k"', 'Rbot = "-5k"')
    status, out, err = run_solve(tmp_path, text, capsys, "--known", "--json")
    assert status == 0, err
    data = json.loads(out)
    assert sympy.sympify(data["node_voltages"]["out"]) == -5
    codes = [(w["code"], w["part"]) for w in data["warnings"]]
    assert ("negative-value", "R2") in codes


# ----------------------------------------------------------------------------- unsolvable circuits
def test_node_with_no_path_to_the_reference(tmp_path, capsys):
    text = DIVIDER + ('R3 = { kind = "resistor", nodes = ["x", "y"], value = "1k" }\n'
                      'R4 = { kind = "resistor", nodes = ["y", "x"], value = "2k" }\n')
    message = refused(tmp_path, text, capsys, "no path to the reference node 'gnd'")
    assert "x" in message and "y" in message


def test_node_with_no_dc_path_only_capacitors_is_warned_and_solves(tmp_path, capsys):
    text = DIVIDER + 'C1 = { kind = "capacitor", nodes = ["out", "x"], value = "100n" }\n' \
                     'C2 = { kind = "capacitor", nodes = ["x", "gnd"], value = "100n" }\n'
    status, out, err = run_solve(tmp_path, text, capsys, "--json")
    assert status == 0, err
    data = json.loads(out)
    assert "no-dc-path" in [w["code"] for w in data["warnings"]]
    # Two equal capacitors in series halve the divider voltage (capacitive divider, common practice).
    assert sympy.simplify(sympy.sympify(data["node_voltages"]["x"]) - sympy.sympify(data["node_voltages"]["out"]) / 2) == 0


def test_loop_of_voltage_sources(tmp_path, capsys):
    text = DIVIDER + ('V2 = { kind = "voltage_source", nodes = ["in", "mid"], value = "2" }\n'
                      'V3 = { kind = "voltage_source", nodes = ["mid", "gnd"], value = "3" }\n')
    message = refused(tmp_path, text, capsys, "voltage sources form a loop")
    assert all(v in message for v in ("V1", "V2", "V3"))


def test_node_fed_only_by_current_sources(tmp_path, capsys):
    text = DIVIDER + ('I1 = { kind = "current_source", nodes = ["out", "x"], value = "1m" }\n'
                      'I2 = { kind = "current_source", nodes = ["x", "gnd"], value = "1m" }\n')
    message = refused(tmp_path, text, capsys, "fed only by current sources")
    assert "'x'" in message
    with pytest.raises(SolveError):
        solve_system(build_system(parse_circuit(text, "bad.toml")))


def test_opamp_with_no_feedback_path(tmp_path, capsys):
    text = DIVIDER + ('U1 = { kind = "opamp", plus = "out", minus = "m", out = "o" }\n'
                      'R3 = { kind = "resistor", nodes = ["m", "gnd"], value = "1k" }\n'
                      'R4 = { kind = "resistor", nodes = ["o", "gnd"], value = "1k" }\n')
    message = refused(tmp_path, text, capsys, "op-amp U1 has no feedback path", line=9)
    assert "'o'" in message


# ----------------------------------------------------------------------------- hostile text
PAYLOAD = "__import__('os').system('touch nodeterm_was_run')"


def test_import_payload_is_rejected_and_never_run(tmp_path, capsys, monkeypatch):
    """The payload must stop at the parser: eval/exec/sympify/parse_expr never see file text."""
    seen: list[str] = []

    def spy(name, real):
        def wrapper(*args, **kwargs):
            if any(isinstance(a, str) and ("__import__" in a or "nodeterm_was_run" in a) for a in args):
                seen.append(name)
                raise RuntimeError(f"file text reached {name}")
            return real(*args, **kwargs)
        return wrapper

    def sympify_spy(a, *args, **kwargs):
        if isinstance(a, str):
            seen.append(f"sympify({a!r})")
        return real_sympify(a, *args, **kwargs)

    import sympy.parsing.sympy_parser as sympy_parser
    real_sympify = sympy.sympify
    cases = {
        "value": DIVIDER.replace('value = "Rbot"', f'value = "{PAYLOAD}"'),
        "parameter": DIVIDER.replace('Rbot = "4.7k"', f'Rbot = "{PAYLOAD}"'),
        "find": DIVIDER + f'[find]\nx = "{PAYLOAD}"\n',
    }
    monkeypatch.chdir(tmp_path)
    results = {}
    with monkeypatch.context() as m:  # the spies are removed before any assertion is reported
        for name in ("eval", "exec"):
            m.setattr(builtins, name, spy(name, getattr(builtins, name)))
        m.setattr(sympy, "sympify", sympify_spy)
        m.setattr(sympy_parser, "parse_expr", spy("parse_expr", sympy_parser.parse_expr))
        for where, text in cases.items():
            results[where] = run_solve(tmp_path, text, capsys)
        # A good file goes all the way through the spies: no text reaches them on the normal path either.
        good = run_solve(tmp_path, DIVIDER, capsys, "--known", "--json")
    assert seen == []
    assert not (tmp_path / "nodeterm_was_run").exists()
    for where, (status, out, err) in results.items():
        assert status == 2, (where, err)
        assert "unexpected character" in err and "__import__" in err, (where, err)
    status, out, err = good
    assert status == 0, err
    assert sympy.Rational(json.loads(out)["node_voltages"]["out"]) == sympy.Rational(5 * 4700, 14700)


def test_value_that_expands_to_thousands_of_terms_is_refused(tmp_path, capsys):
    # (a+b+c)^64 is short to write but has C(66, 2) = 2145 terms expanded (binomial count, common practice).
    from nodeterm.cli import main
    f = tmp_path / "blowup.toml"
    f.write_text('[parameters]\na = ""\nb = ""\nc = ""\n[parts]\n'
                 'V1 = { kind = "voltage_source", nodes = ["in", "gnd"], value = "(a+b+c)^64" }\n'
                 'R1 = { kind = "resistor", nodes = ["in", "gnd"], value = "a" }\n')
    assert main(["solve", str(f)]) == 2
    err = capsys.readouterr().err
    assert f"{f}:6" in err and "more than 1000 terms" in err


def test_time_limit_stops_long_work_with_a_message(tmp_path, capsys):
    import time
    from nodeterm import cli
    f = tmp_path / "ok.toml"
    f.write_text('[parts]\nV1 = { kind = "voltage_source", nodes = ["in", "gnd"], value = 1 }\n'
                 'R1 = { kind = "resistor", nodes = ["in", "gnd"], value = 1 }\n')

    def slow(args):
        time.sleep(5)
        return 0

    original = cli.COMMANDS["solve"]
    cli.COMMANDS["solve"] = slow
    try:
        assert cli.main(["solve", str(f), "--time-limit", "0.2"]) == 2
    finally:
        cli.COMMANDS["solve"] = original
    assert "did not finish within 0.2 s" in capsys.readouterr().err


def test_near_misses_get_a_did_you_mean(tmp_path, capsys):
    from nodeterm.cli import main
    cases = {
        'R1 = { kind = "resistr", nodes = ["a", "gnd"], value = 1 }': "did you mean 'resistor'?",
        'R1 = { kind = "resistor", nodes = ["a", "gnd"], valu = 1 }': "did you mean 'value'?",
        'R1 = { kind = "resistor", nodes = ["a", "gnd"], value = "2*Rinn" }': "did you mean 'Rin'?",
    }
    for i, (line, expected) in enumerate(cases.items()):
        f = tmp_path / f"near{i}.toml"
        f.write_text('[parameters]\nRin = "10k"\n[parts]\n'
                     'V1 = { kind = "voltage_source", nodes = ["a", "gnd"], value = 1 }\n' + line + "\n")
        assert main(["solve", str(f)]) == 2
        err = capsys.readouterr().err
        assert f"{f}:5" in err and expected in err


# ----------------------------------------------------------------------------- names written twice, near misses
def test_duplicate_part_id_names_the_part_and_both_lines(tmp_path, capsys):
    """TOML only says it cannot overwrite a value; the message names the part and both lines."""
    text = DIVIDER + 'R1 = { kind = "resistor", nodes = ["out", "gnd"], value = "1k" }\n'
    message = refused(tmp_path, text, capsys, "part R1 is defined twice, on lines 7 and 9", line=9, column=1)
    assert "Cannot overwrite" not in message


def test_duplicate_parameter_and_table(tmp_path, capsys):
    text = DIVIDER.replace('Rbot = "4.7k"', 'Rbot = "4.7k"\nRtop = "1k"')
    refused(tmp_path, text, capsys, "parameter Rtop is defined twice, on lines 3 and 5", line=5)
    text = DIVIDER + '[parts]\nR3 = { kind = "resistor", nodes = ["out", "gnd"], value = "1k" }\n'
    refused(tmp_path, text, capsys, "table [parts] is written twice, on lines 5 and 9", line=9)


def test_find_name_typo_gets_did_you_mean(tmp_path, capsys):
    text = DIVIDER + '[find]\nratio = "V_outt/V_in"\n'
    message = refused(tmp_path, text, capsys, "[find] ratio: unknown name 'V_outt'", line=10)
    assert "did you mean 'V_out'?" in message
    text = DIVIDER + '[find]\ncurrent = "I_R1x"\n'
    assert "did you mean 'I_R1'?" in refused(tmp_path, text, capsys, "unknown name 'I_R1x'", line=10)


def test_opamp_input_typo_gets_node_name(tmp_path, capsys):
    text = DIVIDER + 'U1 = { kind = "opamp", plus = "outt", minus = "fb", out = "fb" }\n'
    message = refused(tmp_path, text, capsys, "node outt has no path to the reference", line=9, column=32)
    assert "did you mean 'out'?" in message


def test_control_names_get_did_you_mean(tmp_path, capsys):
    text = DIVIDER + 'F1 = { kind = "cccs", nodes = ["out", "gnd"], control = "R11", gain = "2" }\n'
    assert "did you mean 'R1'?" in refused(tmp_path, text, capsys, "control names part 'R11'", line=9)
    text = DIVIDER + 'G1 = { kind = "vccs", nodes = ["out", "gnd"], control = ["inn", "gnd"], gain = "2" }\n'
    assert "did you mean 'in'?" in refused(tmp_path, text, capsys, "control node 'inn'", line=9)
