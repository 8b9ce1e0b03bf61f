"""Speed of nodeterm's solvers against a peer computation measured in the same run.

    python benchmarks/run.py            # everything (about a minute; sympy.solve on 9 sections is the slow part)
    python benchmarks/run.py --quick    # skip the slowest peer runs

Cases (all circuits generated here, none read from disk except through the normal loader):

* RC ladders, n sections, every R and C its own symbol: our exact solve (FLINT path) against
  ``sympy.solve`` on the same reduced equations; 12 sections ours only (the peer takes minutes).
* Fully symbolic op-amp circuits (a state-variable filter, a three-op-amp instrumentation amp):
  file to printed report, against ``sympy.solve`` on the same equations.
* A 100 x 100 resistor mesh (10,001 nodes): ``solve --numeric`` from file to node voltages, and
  our solve against SciPy's ``splu`` on the same matrix; peak memory of a fresh process.
* Monte Carlo, 100,000 samples of a 20-node circuit: batched solve against a per-sample
  ``numpy.linalg.solve`` loop (timed on a slice, scaled).
* Whole commands on big circuits (``benchmarks/records.py``): every record of the 9-section ladder
  (``solve --json``, each export format, ``check``, ``response``) against the text report, the
  12-section JSON, and ``--numeric`` on the mesh against a tomllib + SciPy script.
* The workbench on a 50-node op-amp chain (``benchmarks/workbench.py``): time to the first screen
  and the event loop's longest stall, against the same walk with the solve on the event loop.

Speed goals are ratios printed here, never timed assertions in tests.
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import sympy

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from nodeterm.engine import build_system, load_circuit, parse_circuit  # noqa: E402
from nodeterm.engine.solving.numeric import NumericModel  # noqa: E402
from nodeterm.present.format import expr_text  # noqa: E402
from nodeterm.present.text import report  # noqa: E402
from nodeterm.engine.solving.solve import solve_system  # noqa: E402
from nodeterm.engine.study import Study  # noqa: E402

sys.path.insert(0, str(Path(__file__).resolve().parent))
import records  # noqa: E402 - benchmarks/records.py: whole commands on big circuits (issue-11 targets)
import workbench  # noqa: E402 - benchmarks/workbench.py, next to this file


# --- circuits ---------------------------------------------------------------------------------
def ladder(n: int) -> str:
    """RC low-pass ladder of n sections, fully symbolic."""
    lines = [f'title = "RC ladder, {n} sections"', "[parameters]", 'Vin = ""']
    lines += [f'R{k} = ""\nC{k} = ""' for k in range(1, n + 1)]
    lines += ["[parts]", 'VS = { kind = "voltage_source", nodes = ["n0", "gnd"], value = "Vin" }']
    for k in range(1, n + 1):
        lines.append(f'RS{k} = {{ kind = "resistor", nodes = ["n{k - 1}", "n{k}"], value = "R{k}" }}')
        lines.append(f'CS{k} = {{ kind = "capacitor", nodes = ["n{k}", "gnd"], value = "C{k}" }}')
    return "\n".join(lines) + "\n"


STATE_VARIABLE = """
title = "State-variable filter (three op-amps), fully symbolic"
[parameters]
Vin = ""
R1 = ""
R2 = ""
R3 = ""
R4 = ""
R5 = ""
R6 = ""
C1 = ""
C2 = ""
[parts]
VS = { kind = "voltage_source", nodes = ["in", "gnd"], value = "Vin" }
RIN = { kind = "resistor", nodes = ["in", "sm"], value = "R1" }
RFB = { kind = "resistor", nodes = ["sm", "hp"], value = "R2" }
RLP = { kind = "resistor", nodes = ["lp", "sm"], value = "R3" }
RQ1 = { kind = "resistor", nodes = ["bp", "sp"], value = "R4" }
RQ2 = { kind = "resistor", nodes = ["sp", "gnd"], value = "R4" }
U1 = { kind = "opamp", plus = "sp", minus = "sm", out = "hp" }
RI1 = { kind = "resistor", nodes = ["hp", "m2"], value = "R5" }
CI1 = { kind = "capacitor", nodes = ["m2", "bp"], value = "C1" }
U2 = { kind = "opamp", plus = "gnd", minus = "m2", out = "bp" }
RI2 = { kind = "resistor", nodes = ["bp", "m3"], value = "R6" }
CI2 = { kind = "capacitor", nodes = ["m3", "lp"], value = "C2" }
U3 = { kind = "opamp", plus = "gnd", minus = "m3", out = "lp" }
[find]
lowpass = "V_lp/V_in"
bandpass = "V_bp/V_in"
"""

INSTRUMENTATION = """
title = "Three-op-amp instrumentation amplifier, fully symbolic"
[parameters]
V1 = ""
V2 = ""
Rs1 = ""
Rs2 = ""
Rf1 = ""
Rf2 = ""
Rg = ""
Ra = ""
Rb = ""
Rc = ""
Rd = ""
RL = ""
[parts]
VA = { kind = "voltage_source", nodes = ["a", "gnd"], value = "V1" }
VB = { kind = "voltage_source", nodes = ["b", "gnd"], value = "V2" }
RSA = { kind = "resistor", nodes = ["a", "pa"], value = "Rs1" }
RSB = { kind = "resistor", nodes = ["b", "pb"], value = "Rs2" }
U1 = { kind = "opamp", plus = "pa", minus = "g1", out = "o1" }
U2 = { kind = "opamp", plus = "pb", minus = "g2", out = "o2" }
RF1 = { kind = "resistor", nodes = ["o1", "g1"], value = "Rf1" }
RG = { kind = "resistor", nodes = ["g1", "g2"], value = "Rg" }
RF2 = { kind = "resistor", nodes = ["g2", "o2"], value = "Rf2" }
R1 = { kind = "resistor", nodes = ["o1", "m3"], value = "Ra" }
R2 = { kind = "resistor", nodes = ["m3", "out"], value = "Rb" }
R3 = { kind = "resistor", nodes = ["o2", "p3"], value = "Rc" }
R4 = { kind = "resistor", nodes = ["p3", "gnd"], value = "Rd" }
U3 = { kind = "opamp", plus = "p3", minus = "m3", out = "out" }
RLOAD = { kind = "resistor", nodes = ["out", "gnd"], value = "RL" }
[find]
gain = "V_out/(V2 - V1)"
"""


def mesh(rows: int, cols: int) -> str:
    """A resistor mesh fed at one corner, loaded at the other; values from a short repeating list."""
    lines = ['title = "resistor mesh"', "[parts]", 'VS = { kind = "voltage_source", nodes = ["m0_0", "gnd"], value = "5" }']
    k = 0
    for i in range(rows):
        for j in range(cols):
            if j + 1 < cols:
                k += 1
                lines.append(f'R{k} = {{ kind = "resistor", nodes = ["m{i}_{j}", "m{i}_{j + 1}"], '
                             f'value = "{1 + k % 7}k" }}')
            if i + 1 < rows:
                k += 1
                lines.append(f'R{k} = {{ kind = "resistor", nodes = ["m{i}_{j}", "m{i + 1}_{j}"], '
                             f'value = "{1 + k % 5}.2k" }}')
    lines.append(f'RL = {{ kind = "resistor", nodes = ["m{rows - 1}_{cols - 1}", "gnd"], value = "100" }}')
    return "\n".join(lines) + "\n"


def monte_carlo_circuit(n: int = 20) -> str:
    """A 20-node R-2R ladder into an inverting op-amp stage, each resistor its own 1 % parameter."""
    lines = ['title = "R-2R ladder and inverting stage"', "[parameters]", "Vref = 2.5"]
    parts = ['VR = { kind = "voltage_source", nodes = ["t0", "gnd"], value = "Vref" }']
    for k in range(n - 3):
        lines.append(f'Ra{k} = {{ value = "10k", tolerance = "1%" }}')
        lines.append(f'Rb{k} = {{ value = "20k", tolerance = "1%" }}')
        parts.append(f'RA{k} = {{ kind = "resistor", nodes = ["t{k}", "t{k + 1}"], value = "Ra{k}" }}')
        parts.append(f'RB{k} = {{ kind = "resistor", nodes = ["t{k}", "gnd"], value = "Rb{k}" }}')
    last = n - 3
    lines += ['Rin = { value = "20k", tolerance = "1%" }', 'Rf = { value = "10k", tolerance = "1%" }']
    parts += [f'RIN = {{ kind = "resistor", nodes = ["t{last}", "inv"], value = "Rin" }}',
              'RF = { kind = "resistor", nodes = ["inv", "out"], value = "Rf" }',
              'U1 = { kind = "opamp", plus = "gnd", minus = "inv", out = "out" }']
    return "\n".join(lines + ["[parts]"] + parts) + "\n"


# --- helpers ------------------------------------------------------------------------------------
def timed(fn, repeat: int = 1):
    best, out = float("inf"), None
    for _ in range(repeat):
        t = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t)
    return best, out


def peer_sympy_solve(system):
    """sympy.solve on the reduced equations of the same system: every node voltage."""
    eqs = [e.lhs - e.rhs for e in system.reduced_equations]
    return sympy.solve(eqs, list(system.reduced_unknowns), dict=True)


ROWS: list[tuple] = []


def row(case: str, ours: float, peer: float | None, peer_name: str, note: str = "") -> None:
    ratio = f"{peer / ours:8.1f}x" if peer else "       -"
    ROWS.append((case, ours, peer, peer_name, ratio, note))
    peer_t = f"{peer:9.3f}" if peer else "        -"
    print(f"{case:44s} {ours:9.3f} {peer_t}  {ratio}  {peer_name:26s} {note}", flush=True)


def symbolic_ladders(quick: bool) -> float:
    headline = 0.0
    for n in (5, 7, 9, 12):
        system = build_system(parse_circuit(ladder(n)))
        ours, sol = timed(lambda: [expr_text(v) for v in solve_system(system).node_voltages.values()], repeat=3)
        peer = None
        if n <= (7 if quick else 9):
            peer, _ = timed(lambda: peer_sympy_solve(system))
        terms = len(solve_system(system).node_voltages[f"n{n}"].fraction[1])
        row(f"ladder {n} sections, exact, all node voltages", ours, peer, "sympy.solve (same eqs)",
            f"{terms} terms in the denominator")
        if n == 9 and peer:
            headline = peer / ours
    return headline


def opamp_circuits(quick: bool) -> None:
    for name, text in (("state-variable filter", STATE_VARIABLE), ("3-op-amp instrumentation amp", INSTRUMENTATION)):
        with tempfile.NamedTemporaryFile("w", suffix=".toml", delete=False) as f:
            f.write(text)
        try:
            def ours_fn():
                study = Study(load_circuit(f.name))
                return report(study.records(("system", "matrix", "solution", "warnings")))
            ours, _ = timed(ours_fn, repeat=3)
            system = build_system(load_circuit(f.name))
            peer, _ = timed(lambda: peer_sympy_solve(system))
            solve_only, _ = timed(lambda: solve_system(system), repeat=3)
            row(f"{name}: file to printed report", ours, None, "", "target < 0.5 s")
            row(f"{name}: solve only", solve_only, peer, "sympy.solve (same eqs)",
                "ours also derives every current")
        finally:
            os.unlink(f.name)


def numeric_mesh() -> tuple[float, float]:
    from scipy.sparse.linalg import splu
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "mesh.toml"
        path.write_text(mesh(100, 100))

        def file_to_voltages():
            return NumericModel(load_circuit(path)).solve()
        ours_file, sol = timed(file_to_voltages, repeat=3)
        model = NumericModel(load_circuit(path))
        A, b = model.matrix()
        ours_solve, _ = timed(model.solve, repeat=5)
        peer, x = timed(lambda: splu(A).solve(b), repeat=5)
        err = max(abs(sol.node_voltages[n] - x[i]) for n, i in model.node_index.items())
        row("10k-node mesh --numeric: file to voltages", ours_file, None, "", f"{len(model.nodes) + 1} nodes")
        row("10k-node mesh: our solve (+ every current)", ours_solve, peer, "scipy splu, same matrix",
            f"max |dV| = {err:.1e} V")
        # a fresh process: peak memory and the whole command line
        # VmHWM: this process's own peak (ru_maxrss would inherit the parent's peak across fork)
        code = ("import sys, io, contextlib; from nodeterm.cli import main; "
                "buf = io.StringIO()\nwith contextlib.redirect_stdout(buf): rc = main(['solve', sys.argv[1], "
                "'--numeric', '--json'])\n"
                "print([l.split()[1] for l in open('/proc/self/status') if l.startswith('VmHWM')][0])")
        t = time.perf_counter()
        out = subprocess.run([sys.executable, "-c", code, str(path)], capture_output=True, text=True,
                             cwd=ROOT, check=True)
        wall = time.perf_counter() - t
        peak_mb = int(out.stdout.strip().splitlines()[-1]) / 1024
        row("10k-node `solve --numeric --json`, new process", wall, None, "",
            f"peak RSS {peak_mb:.0f} MB (incl. interpreter, SymPy, SciPy)")
    return ours_solve, peer


def monte_carlo() -> None:
    circuit = parse_circuit(monte_carlo_circuit(20))
    model = NumericModel(circuit)
    rng = np.random.default_rng(1)
    N = 100_000
    names = [n for n, p in circuit.parameters.items() if p.tolerance is not None]
    samples = {n: float(circuit.parameters[n].value) * (1 + float(circuit.parameters[n].tolerance)
                                                         * rng.uniform(-1, 1, N)) for n in names}
    ours, out = timed(lambda: model.solve_batch(samples), repeat=2)
    # peer: the same matrices solved one at a time with numpy (a slice, scaled to N)
    m = 2000
    sub = {n: v[:m] for n, v in samples.items()}
    from scipy.sparse import coo_matrix
    funcs = [sympy.lambdify([sympy.Symbol(n) for n in names], c.xreplace(
        {k: v for k, v in model.subs.items() if str(k) not in names})) for c in model.coefficients]

    def peer_fn():
        res = np.empty((m, model.size))
        ia = model.cols >= 0
        for i in range(m):
            vals = np.array([float(f(*[sub[n][i] for n in names])) for f in funcs])
            data = model.signs * vals[model.cidx]
            A = coo_matrix((data[ia], (model.rows[ia], model.cols[ia])), shape=(model.size,) * 2).toarray()
            b = np.zeros(model.size)
            np.add.at(b, model.rows[~ia], data[~ia])
            res[i] = np.linalg.solve(A, b)
        return res
    peer_m, ref = timed(peer_fn)
    assert np.allclose(out[:m], ref)
    row(f"Monte Carlo {N} samples, {len(circuit.nodes)} nodes", ours, peer_m * N / m,
        "per-sample numpy loop", f"peer timed on {m}, scaled")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="skip the slowest peer runs (sympy.solve, 9 sections)")
    args = ap.parse_args()
    print(f"{'case':44s} {'ours s':>9s} {'peer s':>9s}  {'ratio':>9s}  {'peer':26s} note")
    print("-" * 120)
    headline = symbolic_ladders(args.quick)
    opamp_circuits(args.quick)
    ours_solve, peer = numeric_mesh()
    monte_carlo()
    rec = records.measure(args.quick, row)
    wb = workbench.measure(args.quick, row)
    first = max(ours["first_screen"] for ours, _ in wb.values())
    stall = max(ours["stall"] for ours, _ in wb.values())
    ui = (f"; workbench, 50 nodes: first screen {first:.2f} s (target < 1 s), longest event-loop stall "
          f"{stall * 1000:.0f} ms (target < 100 ms)")
    print("-" * 120)
    print(f"records: 9-section ladder, every record at most {rec['records_worst']:.2f}x the text report "
          "(target <= 2x)" + (f"; solve --json {rec['json_vs_sympy']:.0f}x faster than sympy.solve (target >= 100x)"
                              if "json_vs_sympy" in rec else "")
          + f"; 12-section JSON {rec['json12']:.2f} s (target < 2 s); 10k-node --numeric {rec['mesh']:.2f}x "
            "a tomllib + SciPy script (target <= 1.5x)")
    if headline:
        print(f"headline: 9-section symbolic ladder {headline:.0f}x faster than sympy.solve "
              f"(target >= 100x); 10k-node solve {ours_solve / peer:.2f}x SciPy's splu time (target <= 2x)" + ui)
    else:
        print(f"headline: 10k-node solve {ours_solve / peer:.2f}x SciPy's splu time (target <= 2x)" + ui
              + "; run without --quick for the 9-section ratio against sympy.solve")


if __name__ == "__main__":
    main()
