"""Every record as fast as the text report: whole commands on big circuits, against a peer in the same run.

    python benchmarks/records.py            # alone (about 2 minutes; --quick skips sympy.solve, 20 s)
    python benchmarks/run.py                # with the solver benchmarks, rows in the same table

Cases (whole processes, started with ``subprocess``; circuits generated here):

* The fully symbolic 9-section RC ladder (every R and C its own symbol, ``[find] H = V_n9/Vin``):
  ``solve --json``, ``export --to`` each format, ``check`` with a one-claim ``[hand]`` (a KCL that
  holds) and ``response``, each against ``solve`` (text) on the same file. Target: at most 2x.
* ``solve --json`` on the same ladder against ``sympy.solve`` on the same reduced equations, both in
  this process with the imports done (file to JSON text against the peer's node voltages); the whole
  process is printed too. Target: at least 100x faster.
* The 12-section ladder's ``solve --json``. Target: under 2 s.
* A 100 x 100 resistor mesh (10,001 nodes): ``solve --numeric`` against ``benchmarks/mesh_peer.py``,
  a plain tomllib + SciPy script that builds the same sparse matrix, solves it and prints the same
  numbers. Target: at most 1.5x.

The machine may be shared: each pair is run alternately (ours, peer, ours, peer...) and the best of
each is kept, so both see the same load; the load average is printed with the rows.
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(ROOT))


def ladder(n: int, hand: bool = False) -> str:
    """RC low-pass ladder of n sections, every R and C its own symbol; H = V_n{n}/Vin."""
    lines = [f'title = "RC ladder, {n} sections"', "[parameters]", 'Vin = ""']
    lines += [f'R{k} = ""\nC{k} = ""' for k in range(1, n + 1)]
    lines += ["[parts]", 'VS = { kind = "voltage_source", nodes = ["n0", "gnd"], value = "Vin" }']
    for k in range(1, n + 1):
        lines.append(f'RS{k} = {{ kind = "resistor", nodes = ["n{k - 1}", "n{k}"], value = "R{k}" }}')
        lines.append(f'CS{k} = {{ kind = "capacitor", nodes = ["n{k}", "gnd"], value = "C{k}" }}')
    lines += ["[find]", f'H = "V_n{n}/Vin"']
    if hand:
        lines += ["[hand]", 'kcl_n1 = "(V_n1 - Vin)/R1 + C1*s*V_n1 + (V_n1 - V_n2)/R2 = 0"']
    return "\n".join(lines) + "\n"


def mesh(rows: int, cols: int) -> str:
    """A resistor mesh fed at one corner, loaded at the other; values from a short repeating list."""
    lines = ['title = "resistor mesh"', "[parts]",
             'VS = { kind = "voltage_source", nodes = ["m0_0", "gnd"], value = "5" }']
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


def nodeterm(*args: str) -> list[str]:
    return [sys.executable, "-m", "nodeterm", *args]


def run(cmd: list[str], ok=(0,)) -> float:
    """Wall time of one whole process (output discarded); fails loudly on an unexpected status."""
    t = time.perf_counter()
    out = subprocess.run(cmd, cwd=ROOT, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
    wall = time.perf_counter() - t
    if out.returncode not in ok:
        raise RuntimeError(f"{' '.join(cmd[2:])} exited {out.returncode}: {out.stderr.strip()[-400:]}")
    return wall


def paired(ours: list[str], peer: list[str], repeat: int = 3, ok=(0,)) -> tuple[float, float]:
    """Best of ``repeat`` alternate runs of each command (both see the same load)."""
    a, b = [], []
    for _ in range(repeat):
        a.append(run(ours, ok))
        b.append(run(peer))
    return min(a), min(b)


def load() -> str:
    one, five, _ = os.getloadavg()
    return f"load {one:.1f}/{five:.1f} on {os.cpu_count()} cores"


def measure(quick: bool = False, row=None) -> dict:
    """Run every case, print rows through ``row(case, ours, peer, peer_name, note)``; return the ratios."""
    row = row or _print_row
    out: dict = {}
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        f9, h9, f12 = tmp / "ladder9.toml", tmp / "ladder9_hand.toml", tmp / "ladder12.toml"
        f9.write_text(ladder(9))
        h9.write_text(ladder(9, hand=True))
        f12.write_text(ladder(12))
        text = nodeterm("solve", str(f9))
        cases = [("solve --json", nodeterm("solve", str(f9), "--json"), (0,))]
        for fmt in ("text", "ascii", "markdown", "latex", "json"):
            cases.append((f"export --to {fmt}", nodeterm("export", str(f9), "--to", fmt, "-o",
                                                          str(tmp / f"out.{fmt}"), "--force"), (0,)))
        cases.append(("check, one-claim [hand]", nodeterm("check", str(h9)), (0,)))
        cases.append(("response", nodeterm("response", str(f9)), (0,)))
        worst = 0.0
        for label, cmd, ok in cases:
            ours, peer = paired(cmd, text, ok=ok)
            worst = max(worst, ours / peer)
            out[label] = ours / peer
            row(f"ladder 9: {label}", ours, peer, "solve (text), same file",
                f"{ours / peer:.2f}x the text report (target <= 2x); {load()}")
        out["records_worst"] = worst

        if not quick:
            from nodeterm.engine import build_system, load_circuit
            import sympy
            system = build_system(load_circuit(str(f9)))
            eqs = [e.lhs - e.rhs for e in system.reduced_equations]
            t = time.perf_counter()
            sympy.solve(eqs, list(system.reduced_unknowns), dict=True)
            peer = time.perf_counter() - t
            from nodeterm.cli import JSON_BUDGETS, JSON_RECORDS
            from nodeterm.engine.study import Study
            from nodeterm.present.jsonout import to_json

            def json_in_process():  # what solve --json does after its imports: file to JSON text
                return to_json(Study.from_file(str(f9)).records(JSON_RECORDS, budgets=JSON_BUDGETS))
            json_in_process()  # warm: imports made once
            best = float("inf")
            for _ in range(3):
                t = time.perf_counter()
                json_in_process()
                best = min(best, time.perf_counter() - t)
            out["json_vs_sympy"] = peer / best
            row("ladder 9: solve --json, file to JSON text", best, peer, "sympy.solve (same eqs)",
                f"{peer / best:.0f}x faster (target >= 100x); in this process, imports done; {load()}")
            whole = min(run(cases[0][1]) for _ in range(3))
            row("ladder 9: solve --json, whole process", whole, peer, "sympy.solve (same eqs)",
                f"{peer / whole:.0f}x faster, counting Python's start and imports; {load()}")

        ours = min(run(nodeterm("solve", str(f12), "--json", "--time-limit", "0")) for _ in range(2))
        out["json12"] = ours
        row("ladder 12: solve --json, whole process", ours, None, "",
            f"target < 2 s; {load()}")

        m = tmp / "mesh.toml"
        m.write_text(mesh(100, 100))
        ours, peer = paired(nodeterm("solve", str(m), "--numeric"),
                            [sys.executable, str(HERE / "mesh_peer.py"), str(m)])
        out["mesh"] = ours / peer
        row("10k-node mesh: solve --numeric, whole process", ours, peer, "tomllib + SciPy script",
            f"{ours / peer:.2f}x the script (target <= 1.5x); {load()}")
    return out


def _print_row(case, ours, peer, peer_name, note=""):
    ratio = f"{peer / ours:8.2f}x" if peer else "        -"
    peer_t = f"{peer:9.3f}" if peer else "        -"
    print(f"{case:46s} {ours:9.3f} {peer_t}  {ratio}  {peer_name:26s} {note}", flush=True)


if __name__ == "__main__":
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="skip sympy.solve on the 9-section ladder")
    args = ap.parse_args()
    print(f"{'case':46s} {'ours s':>9s} {'peer s':>9s}  {'peer/ours':>9s}  {'peer':26s} note")
    print("-" * 130)
    r = measure(args.quick)
    print("-" * 130)
    print(f"headline: 9-section ladder records at most {r['records_worst']:.2f}x the text report (target <= 2x)"
          + (f"; solve --json {r['json_vs_sympy']:.0f}x faster than sympy.solve (target >= 100x)"
             if "json_vs_sympy" in r else "")
          + f"; 12-section JSON {r['json12']:.2f} s (target < 2 s); 10k-node --numeric {r['mesh']:.2f}x the "
            "SciPy script (target <= 1.5x)")
