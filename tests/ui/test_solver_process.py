"""The workbench's solve in a child process gives what the same solve gives in this process.

References: the in-process ``System.solve`` (itself checked against ``sympy.solve`` in the engine
tests) and SymPy's own ``cancel`` for the large results' values.
"""

from __future__ import annotations

import pickle
import time

import pytest
import sympy

from nodeterm.engine import SolveError, build_system, parse_circuit
from nodeterm.present import panes
from nodeterm.ui import solver_process
from nodeterm.engine.solving.solve import solve_system
from nodeterm.engine.study import Study


def chain(stages: int) -> str:
    """RC low-pass + non-inverting gain stages with shared symbols (a demo of our own)."""
    lines = ['title = "gain chain"', "[parameters]", 'Vin = ""', 'R = "10k"', 'C = "10n"', 'Rf = "22k"',
             'Rg = "10k"', "[parts]", 'VS = { kind = "voltage_source", nodes = ["in", "gnd"], value = "Vin" }']
    prev = "in"
    for k in range(1, stages + 1):
        lines += [f'RS{k} = {{ kind = "resistor", nodes = ["{prev}", "a{k}"], value = "R" }}',
                  f'CS{k} = {{ kind = "capacitor", nodes = ["a{k}", "gnd"], value = "C" }}',
                  f'U{k} = {{ kind = "opamp", plus = "a{k}", minus = "g{k}", out = "o{k}" }}',
                  f'RF{k} = {{ kind = "resistor", nodes = ["o{k}", "g{k}"], value = "Rf" }}',
                  f'RG{k} = {{ kind = "resistor", nodes = ["g{k}", "gnd"], value = "Rg" }}']
        prev = f"o{k}"
    return "\n".join(lines) + "\n"


def test_large_results_survive_pickling():
    system = build_system(parse_circuit(chain(10)))
    solution = solve_system(system)
    large = [v for v in solution.node_voltages.values() if getattr(v, "is_large", False)]
    assert large, "the 10-stage chain should give results kept as polynomials"
    back = pickle.loads(pickle.dumps(solution))
    for node, v in solution.node_voltages.items():
        w = back.node_voltages[node]
        assert str(w) == str(v)
        assert sympy.cancel(sympy.sympify(w) - sympy.sympify(v)) == 0


def test_the_work_runs_in_another_process():
    import os
    solver_process.start_server()
    assert solver_process.call_in_child(os.getpid, cancelled=lambda: False) != os.getpid()


def records_of(study, wanted=("matrix", "solution"), cancelled=lambda: False, **options):
    parts = []
    solver_process.records_in_process(study, wanted, dict({"width": 70}, **options), cancelled, parts.append)
    return {p.name: p for p in parts}


def test_child_process_gives_the_same_records_and_text_as_this_process():
    circuit = parse_circuit(chain(4))
    parts = records_of(Study(circuit))
    here = Study(circuit)
    assert parts["matrix"].texts == {("matrix", 70): panes.matrix_text(here.matrix, 70)}
    assert parts["solution"].texts == {("results", False, 70): panes.results_text(here.system, here.solution,
                                                                                  False, 70, panes.pretty)}
    theirs = Study(circuit).adopt(parts["solution"].carrier)
    assert theirs.computed("solution")
    assert theirs.solution.node_voltages.keys() == here.solution.node_voltages.keys()
    for node, v in here.solution.node_voltages.items():
        assert sympy.simplify(sympy.sympify(theirs.solution.node_voltages[node]) - sympy.sympify(v)) == 0


def test_engine_errors_come_back_as_themselves():
    text = ('[parts]\nVS = { kind = "voltage_source", nodes = ["a", "gnd"], value = "1" }\n'
            'R1 = { kind = "resistor", nodes = ["a", "out"], value = "1k" }\n'
            'I1 = { kind = "current_source", nodes = ["out", "x"], value = "1m" }\n'
            'I2 = { kind = "current_source", nodes = ["x", "gnd"], value = "1m" }\n')  # x: only current sources
    circuit = parse_circuit(text)
    with pytest.raises(SolveError) as local:
        Study(circuit).solution  # noqa: B018
    parts = records_of(Study(circuit), ("matrix", "solution", "verdicts"))
    error = parts["solution"].error
    assert type(error) is type(local.value) and str(error) == str(local.value)
    assert "verdicts" not in parts        # what needs the solution is not attempted


def test_cancelling_terminates_the_child():
    study = Study(parse_circuit(chain(4)))
    start = time.monotonic()
    with pytest.raises(solver_process.Cancelled):
        records_of(study, cancelled=lambda: time.monotonic() - start > 0.01)
    assert not [p for p in __import__("multiprocessing").active_children() if p.name == "nodeterm-solver"]


def test_the_solver_process_imports_no_widget():
    """The child computes records and prints pane text from the engine and the presenters only."""
    import subprocess
    import sys
    code = ("import sys; import nodeterm.ui.solver_process as sp, nodeterm.ui.analyses; "
            "print(sorted(m for m in sys.modules if m.startswith('textual') or m.endswith('_pane')))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]"
    for name in solver_process.PRELOAD:
        assert not name.endswith("_pane") and "textual" not in name


def own_symbols_chain(stages: int) -> str:
    """The same chain with every part its own symbol: 14 stages take seconds to solve and print
    (16 are refused at once: the exact answer would pass the term limit)."""
    lines = ['title = "gain chain, every part its own symbol"', "[parameters]", 'Vin = ""']
    parts = ['VS = { kind = "voltage_source", nodes = ["in", "gnd"], value = "Vin" }']
    prev = "in"
    for k in range(1, stages + 1):
        lines += [f'R{k} = "{k}k"', f'C{k} = "10n"', f'Rf{k} = "22k"', f'Rg{k} = "10k"']
        parts += [f'RS{k} = {{ kind = "resistor", nodes = ["{prev}", "a{k}"], value = "R{k}" }}',
                  f'CS{k} = {{ kind = "capacitor", nodes = ["a{k}", "gnd"], value = "C{k}" }}',
                  f'U{k} = {{ kind = "opamp", plus = "a{k}", minus = "g{k}", out = "o{k}" }}',
                  f'RF{k} = {{ kind = "resistor", nodes = ["o{k}", "g{k}"], value = "Rf{k}" }}',
                  f'RG{k} = {{ kind = "resistor", nodes = ["g{k}", "gnd"], value = "Rg{k}" }}']
        prev = f"o{k}"
    return "\n".join(lines + ["[parts]"] + parts) + "\n"


def solver_children():
    import multiprocessing
    return [p for p in multiprocessing.active_children() if p.name == "nodeterm-solver"]


async def test_cancel_in_the_workbench_stops_the_solver_process(tmp_path):
    from nodeterm.ui.app import Workbench
    from wb_helpers import settle, text_of
    path = tmp_path / "chain.toml"
    path.write_text(own_symbols_chain(14))
    app = Workbench(str(path), poll=False)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause(0.5)
        assert "BUSY solving" in text_of(app, "#status")
        assert solver_children()                     # solving in a child, not in this process
        await pilot.press("n")                       # the interface answers while the child solves
        assert "Step 2 of" in text_of(app, "#step-head")
        await pilot.press("c")
        assert "cancelled" in text_of(app, "#results-text")
        for _ in range(40):                          # the waiting thread terminates the child
            await pilot.pause(0.05)
            if not solver_children():
                break
        assert not solver_children()
        await pilot.press("k")                       # all values known: a quick numeric solve
        await settle(pilot, app)
        assert app.solution is not None and "Node voltages" in text_of(app, "#results-text")


async def test_quit_during_a_solve_in_the_child_exits_at_once(tmp_path):
    from nodeterm.ui.app import Workbench
    from wb_helpers import text_of
    path = tmp_path / "chain.toml"
    path.write_text(own_symbols_chain(14))
    app = Workbench(str(path), poll=False)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause(0.5)
        assert "BUSY" in text_of(app, "#status")
        start = time.monotonic()
        await pilot.press("q")
        await pilot.pause()
    assert app.return_code == 0
    assert time.monotonic() - start < 5             # not the tens of seconds the solve would take
    for _ in range(40):                              # and the child does not go on using the CPU
        if not solver_children():
            break
        time.sleep(0.05)
    assert not solver_children()
