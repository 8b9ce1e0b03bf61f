"""Every bundled demo circuit loads, solves, and satisfies KCL at every node.

KCL at each node, with the op-amp output currents reported by the solver, is
the node method's own definition (common practice, no source): it checks the
solution without trusting the procedure that produced it.
"""

import json
import pathlib

import pytest
import sympy

from nodeterm.cli import main
from nodeterm.engine import build_system, load_circuit
from nodeterm.engine.symbols import s
from nodeterm.engine.solving.solve import solve_system

DEMOS = sorted((pathlib.Path(__file__).resolve().parents[2] / "circuits").glob("*.toml"))


@pytest.mark.parametrize("path", DEMOS, ids=lambda p: p.stem)
def test_demo_solves_and_satisfies_kcl(path):
    system = build_system(load_circuit(path)).substitute_known()
    sol = solve_system(system)
    circuit = system.circuit
    net = {n: sympy.Integer(0) for n in circuit.nodes}
    for p in circuit.parts:
        i = sol.currents[p.id]
        if p.kind == "opamp":
            net[p.out] -= i  # the op-amp's current enters node out (and returns through its supplies)
            continue
        net[p.nodes[0]] += i  # I flows nodes[0] -> nodes[1] through the part
        net[p.nodes[1]] -= i
    point = {s: sympy.Rational(3, 7) * 1000 * sympy.I}
    for n, total in net.items():
        if n == circuit.reference or any(p.kind == "opamp" and p.out == n and p.get("rout") is not None
                                         for p in circuit.parts):
            continue
        assert sympy.simplify(total.xreplace(point)) == 0, f"KCL fails at {n} in {path.name}"


@pytest.mark.parametrize("path", DEMOS, ids=lambda p: p.stem)
def test_demo_through_the_command_line(path, capsys):
    assert main(["solve", str(path)]) == 0
    assert "Node voltages" in capsys.readouterr().out
    assert main(["solve", str(path), "--known", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert set(data["node_voltages"]) == set(load_circuit(path).nodes)
