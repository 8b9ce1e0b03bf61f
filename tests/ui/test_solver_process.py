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
from nodeterm.ui import solver_process
from nodeterm.ui.matrix_pane import matrix_text
from nodeterm.ui.results_pane import results_text
from nodeterm.engine.solving.solve import solve_system


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


def test_child_process_gives_the_same_text_as_this_process():
    system = build_system(parse_circuit(chain(4)))
    seen = []
    done = solver_process.solve_in_process(system, False, 70, lambda: False, seen.append)
    assert seen and seen[0].matrix_text == matrix_text(system.matrix())
    assert done.printed == results_text(system, solve_system(system), False, 70)
    assert done.solution.node_voltages.keys() == solve_system(system).node_voltages.keys()


def test_engine_errors_come_back_as_themselves():
    text = ('[parts]\nVS = { kind = "voltage_source", nodes = ["a", "gnd"], value = "1" }\n'
            'R1 = { kind = "resistor", nodes = ["a", "out"], value = "1k" }\n'
            'I1 = { kind = "current_source", nodes = ["out", "x"], value = "1m" }\n'
            'I2 = { kind = "current_source", nodes = ["x", "gnd"], value = "1m" }\n')  # x: only current sources
    system = build_system(parse_circuit(text))
    with pytest.raises(SolveError) as local:
        solve_system(system)
    with pytest.raises(type(local.value)) as remote:
        solver_process.solve_in_process(system, False, 70, lambda: False, lambda part: None)
    assert str(remote.value) == str(local.value)


def test_cancelling_terminates_the_child():
    system = build_system(parse_circuit(chain(4)))
    start = time.monotonic()
    with pytest.raises(solver_process.Cancelled):
        solver_process.solve_in_process(system, False, 70, lambda: time.monotonic() - start > 0.01,
                                        lambda part: None)
    assert not [p for p in __import__("multiprocessing").active_children() if p.name == "nodeterm-solver"]


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
