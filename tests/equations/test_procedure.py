"""The recorded procedure: which equations are written, and why.

Reference results are worked by hand with the node method (nodal analysis as in
Alexander & Sadiku, Fundamentals of Electric Circuits, ch. 3, "Nodal analysis with
voltage sources" (supernodes) — from memory) and cross-checked with NumPy.
"""

import subprocess
import sys

import numpy as np
import sympy

from nodeterm.engine import build_system, parse_circuit
from nodeterm.engine.symbols import I, V, s
from nodeterm.engine.solving.solve import solve_system


def system_of(parts: str, extra: str = ""):
    return build_system(parse_circuit(extra + "\n[parts]\n" + parts))


def test_chain_of_sources_gives_known_voltages():
    sys_ = system_of('''
V1 = { kind = "voltage_source", nodes = ["a", "gnd"], value = 5 }
V2 = { kind = "voltage_source", nodes = ["b", "a"], value = 3 }
R1 = { kind = "resistor", nodes = ["b", "gnd"], value = 1 }
''')
    known = [e for e in sys_.equations if e.kind == "known_voltage"]
    assert [(e.at, e.rhs) for e in known] == [("a", 5), ("b", 8)]
    assert known[1].parts == ("V1", "V2")
    sol = solve_system(sys_)
    assert sol.node_voltages["b"] == 8
    assert sol.currents["V2"] == -8  # I flows p -> n through the source: the source delivers 8 A out of b


def test_floating_source_makes_one_supernode_kcl():
    sys_ = system_of('''
I1 = { kind = "current_source", nodes = ["gnd", "a"], value = 2 }
V1 = { kind = "voltage_source", nodes = ["a", "b"], value = 4 }
R1 = { kind = "resistor", nodes = ["a", "gnd"], value = 2 }
R2 = { kind = "resistor", nodes = ["b", "gnd"], value = 4 }
''')
    kinds = [e.kind for e in sys_.equations]
    assert kinds.count("supernode_kcl") == 1 and kinds.count("source_constraint") == 1
    assert len(sys_.equations) == len(sys_.unknowns)
    # Independent check: Va/2 + Vb/4 = 2, Va - Vb = 4  ->  Va = 16/3, Vb = 4/3
    A = np.array([[0.5, 0.25], [1.0, -1.0]])
    va, vb = np.linalg.solve(A, [2.0, 4.0])
    sol = solve_system(sys_)
    assert abs(float(sol.node_voltages["a"]) - va) < 1e-12 and abs(float(sol.node_voltages["b"]) - vb) < 1e-12


def test_opamp_output_kcl_is_skipped_and_its_current_comes_from_it():
    sys_ = system_of('''
V1 = { kind = "voltage_source", nodes = ["in", "gnd"], value = "Vi" }
R1 = { kind = "resistor", nodes = ["in", "inv"], value = "Ri" }
R2 = { kind = "resistor", nodes = ["inv", "out"], value = "Rf" }
RL = { kind = "resistor", nodes = ["out", "gnd"], value = "RL" }
U1 = { kind = "opamp", plus = "gnd", minus = "inv", out = "out" }
''', '[parameters]\nVi = ""\nRi = ""\nRf = ""\nRL = ""')
    assert sys_.skipped == (("out", "U1"),)
    assert not any(e.at == "out" for e in sys_.equations if e.kind == "kcl")
    assert [e.kind for e in sys_.equations].count("opamp_equality") == 1
    sol = solve_system(sys_)
    Vi, Ri, Rf, RL = sympy.symbols("Vi Ri Rf RL")
    vout = -Rf / Ri * Vi  # inverting amplifier (common practice, no source)
    assert sympy.simplify(sol.node_voltages["out"] - vout) == 0
    # KCL at the output: the op-amp supplies the load and the feedback currents
    assert sympy.simplify(sol.currents["U1"] - (vout / RL + vout / Rf)) == 0


def test_current_controlled_source_sensing_a_source_adds_that_current():
    sys_ = system_of('''
V1 = { kind = "voltage_source", nodes = ["a", "gnd"], value = 10 }
R1 = { kind = "resistor", nodes = ["a", "b"], value = 5 }
Vm = { kind = "voltage_source", nodes = ["b", "c"], value = 0 }
R2 = { kind = "resistor", nodes = ["c", "gnd"], value = 5 }
F1 = { kind = "cccs", nodes = ["gnd", "c"], control = "Vm", gain = 1 }
''')
    assert I("Vm") in sys_.unknowns
    sol = solve_system(sys_)
    # Independent MNA with NumPy: unknowns Vb, Vc, Im
    # KCL b: (Vb-10)/5 + Im = 0 ; KCL c: Vc/5 - Im - Im = 0 ; Vb - Vc = 0
    A = np.array([[0.2, 0, 1], [0, 0.2, -2], [1, -1, 0]])
    vb, vc, im = np.linalg.solve(A, [2, 0, 0])
    assert abs(float(sol.node_voltages["c"]) - vc) < 1e-12
    assert abs(float(sol.currents["Vm"]) - im) < 1e-12


def test_reactive_result_is_one_fraction_collected_in_s():
    sys_ = system_of('''
V1 = { kind = "voltage_source", nodes = ["in", "gnd"], value = 1 }
R1 = { kind = "resistor", nodes = ["in", "out"], value = "R" }
C1 = { kind = "capacitor", nodes = ["out", "gnd"], value = "C" }
''', '[parameters]\nR = ""\nC = ""')
    sol = solve_system(sys_)
    R, C = sympy.symbols("R C")
    assert sol.is_reactive
    assert sol.node_voltages["out"] == 1 / (C * R * s + 1)  # RC low-pass (common practice, no source)


def test_substitution_is_recorded_and_undoable():
    base = system_of('''
V1 = { kind = "voltage_source", nodes = ["in", "gnd"], value = "Vin" }
R1 = { kind = "resistor", nodes = ["in", "out"], value = "R1" }
R2 = { kind = "resistor", nodes = ["out", "gnd"], value = "R2" }
''', '[parameters]\nVin = "12"\nR1 = "10k"\nR2 = "R1"')
    done = base.substitute_known()
    assert done.steps[-1].kind == "parameter_substitution"
    assert solve_system(done).node_voltages["out"] == 6
    assert solve_system(base).node_voltages["out"] == sympy.Symbol("R2") * sympy.Symbol("Vin") / (
        sympy.Symbol("R1") + sympy.Symbol("R2"))
    later = base.substitute({"R1": "1k"}).substitute({"R2": "2*R1"})
    assert later.values["R2"] == 2000


def test_matrix_is_labelled():
    sys_ = system_of('''
V1 = { kind = "voltage_source", nodes = ["in", "gnd"], value = 1 }
R1 = { kind = "resistor", nodes = ["in", "out"], value = 1 }
R2 = { kind = "resistor", nodes = ["out", "gnd"], value = 1 }
''')
    m = sys_.matrix()
    assert m.rows == ("KCL at out",) and m.cols == ("V_out",)
    assert m.A[0, 0] == 2 and m.b[0, 0] == 1


def test_engine_and_batch_commands_never_import_textual(tmp_path):
    code = ("import sys, nodeterm.engine, nodeterm.present.text, nodeterm.present.jsonout, nodeterm.cli;"
            "assert 'textual' not in sys.modules, 'textual imported'")
    subprocess.run([sys.executable, "-c", code], check=True)


def test_set_values_win_over_file_values_with_known():
    from nodeterm.cli import main
    import io, contextlib, json, pathlib
    demo = pathlib.Path(__file__).resolve().parents[2] / "circuits" / "kiln_preamp.toml"
    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        assert main(["solve", str(demo), "--known", "--set", "Gain=47", "--json"]) == 0
    data = json.loads(out.getvalue())
    assert data["find"]["gain"] == "-47"  # Rf = Gain*Rin in the file follows the --set value
