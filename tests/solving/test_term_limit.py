"""Exact work past the term limit is refused with a clear message, and the limit is not too tight.

References: the term count of the fully symbolic RC ladder's denominator is the Fibonacci number
F(2n+1) (continuants: Graham, Knuth, Patashnik, Concrete Mathematics, 6.7, from memory), so the
sizes below are known without running the solver; the answers themselves are checked against the
pure-SymPy path in test_fast_paths.py.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest
import sympy

from nodeterm.engine import SolveError, build_system, load_circuit, parse_circuit
from nodeterm.engine.solving import fastsolve
from nodeterm.engine.solving.solve import solve_system

sys.path.insert(0, str(Path(__file__).parent))
from test_fast_paths import FILES, assert_same, ladder, slow_solve  # noqa: E402


def op_amp_chain(stages: int, values: bool = False) -> str:
    """Buffered RC low-pass stages with gain, every part its own symbol: the determinant is the
    product of one two-term factor per stage, so it has 2**stages terms. ``values`` gives every
    part a value in the file (invented, for the numeric response) and asks for the chain's gain."""
    lines = ["[parameters]", 'Vin = ""']
    parts = ['VS = { kind = "voltage_source", nodes = ["in", "gnd"], value = "Vin" }']
    prev = "in"
    for k in range(1, stages + 1):
        given = (f"{k}k", "10n", "22k", "10k") if values else ("", "", "", "")
        lines += [f'{name}{k} = "{v}"' for name, v in zip(("R", "C", "Rf", "Rg"), given)]
        parts += [f'RS{k} = {{ kind = "resistor", nodes = ["{prev}", "a{k}"], value = "R{k}" }}',
                  f'CS{k} = {{ kind = "capacitor", nodes = ["a{k}", "gnd"], value = "C{k}" }}',
                  f'U{k} = {{ kind = "opamp", plus = "a{k}", minus = "g{k}", out = "o{k}" }}',
                  f'RF{k} = {{ kind = "resistor", nodes = ["o{k}", "g{k}"], value = "Rf{k}" }}',
                  f'RG{k} = {{ kind = "resistor", nodes = ["g{k}", "gnd"], value = "Rg{k}" }}']
        prev = f"o{k}"
    find = ["[find]", f'gain = "V_o{stages}/V_in"'] if values else []
    return "\n".join(lines + ["[parts]"] + parts + find) + "\n"


def test_results_past_the_limit_are_refused_with_what_to_do(monkeypatch):
    # 6 sections: F(13) = 233 terms in the shared denominator, a few thousand in all the results
    monkeypatch.setattr(fastsolve, "TERM_LIMIT", 2000)
    with pytest.raises(fastsolve.ResultTooLarge) as err:
        solve_system(build_system(parse_circuit(ladder(6))))
    assert isinstance(err.value, SolveError)  # an InputError: exit status 2 on the command line
    text = str(err.value)
    assert "the exact answer is too large" in text and "the limit is 2,000" in text
    assert "13 parameter(s) as symbols (C1, C2, C3, C4, C5, C6, ...)" in text  # Vin, R1..R6, C1..C6
    assert "--known" in text and "--set NAME=VALUE" in text and "--numeric" in text


def test_an_elimination_past_the_limit_stops_inside_the_elimination(monkeypatch):
    monkeypatch.setattr(fastsolve, "TERM_LIMIT", 40)
    with pytest.raises(fastsolve.ResultTooLarge, match="the elimination would hold over"):
        solve_system(build_system(parse_circuit(ladder(6))))


def test_the_twelve_section_ladder_is_not_refused():
    # 3.0 million terms in all its results, under the 5 million limit; its denominator F(25)
    solution = solve_system(build_system(parse_circuit(ladder(12))))
    num, den = solution.node_voltages["n12"].fraction
    assert len(den) == sympy.fibonacci(25) == 75025


def test_known_factor_sums_give_the_sympy_answers(monkeypatch):
    # Every determinant treated as a known factor of later denominators (the shortcuts in
    # PolyField.add and PolyField.reduce), on circuits whose currents sum fractions over several
    # denominators and whose determinant factors (one factor per stage of the chain).
    monkeypatch.setattr(fastsolve, "KNOWN_FACTOR_TERMS", 0)
    monkeypatch.setattr(fastsolve, "SLOW_GCDS", 0)
    for text in (ladder(4), op_amp_chain(3)):
        system = build_system(parse_circuit(text))
        assert_same(fastsolve.solve_system_fast(system), slow_solve(system))


@pytest.mark.parametrize("path", FILES, ids=lambda p: Path(p).stem)
def test_known_factor_shortcuts_on_every_bundled_and_published_circuit(path, monkeypatch):
    monkeypatch.setattr(fastsolve, "KNOWN_FACTOR_TERMS", 0)
    monkeypatch.setattr(fastsolve, "SLOW_GCDS", 0)
    system = build_system(load_circuit(path))
    try:
        slow = slow_solve(system)
    except SolveError:
        return  # singular: covered in test_fast_paths.py
    assert_same(fastsolve.solve_system_fast(system), slow)


def test_command_line_refuses_a_sixteen_stage_symbolic_chain_quickly(tmp_path):
    # 2**16 terms in the determinant and tens of millions in the results: refused with exit
    # status 2, instead of printing hundreds of megabytes (the hang guard is not a speed check)
    path = tmp_path / "chain16.toml"
    path.write_text(op_amp_chain(16))
    proc = subprocess.run([sys.executable, "-m", "nodeterm", "solve", str(path)], capture_output=True,
                          text=True, timeout=120)
    assert proc.returncode == 2, proc.stderr[-2000:]
    assert "Traceback" not in proc.stderr
    assert f"{path}: error: the exact answer is too large" in proc.stderr
    assert proc.stdout == ""
    # the frequency response needs only the numbers: shown, with the symbolic form left out
    path.write_text(op_amp_chain(16, values=True))
    proc = subprocess.run([sys.executable, "-m", "nodeterm", "response", str(path)], capture_output=True,
                          text=True, timeout=120)
    assert proc.returncode == 0, proc.stderr[-2000:]
    assert "With every parameter as a symbol: not shown (the exact answer is too large" in proc.stdout
    assert "order 16" in proc.stdout and "Frequency response of gain" in proc.stdout
