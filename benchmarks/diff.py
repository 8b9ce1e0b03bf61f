"""Speed of ``nodeterm diff`` against ``nodeterm solve`` of the same two revisions, in the same run.

    python benchmarks/diff.py

The diff builds one study per revision and reads its records (equations, solution, the solution
with the file's values, verdicts, warnings), then compares them; the peer is the text report of
``solve`` on both revisions. A ratio near 1 (peer/ours) means the diff costs about what solving
both revisions costs. Circuits are the generated ones of ``run.py`` and ``workbench.py``, each with
one part value changed.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(Path(__file__).resolve().parent))

from nodeterm.engine import parse_circuit  # noqa: E402
from nodeterm.engine.review import diff_circuits  # noqa: E402
from nodeterm.present.diff import diff_text  # noqa: E402
from nodeterm.engine.study import Study  # noqa: E402
from nodeterm.present.text import report  # noqa: E402


def _timed(fn) -> float:
    best = float("inf")
    for _ in range(2):
        t = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t)
    return best


def cases():
    import run
    import workbench
    chain = workbench.signal_chain(16)
    return [
        ("9-section symbolic RC ladder", run.ladder(9), ('value = "R5"', 'value = "R4"')),
        ("symbolic state-variable filter", run.STATE_VARIABLE, ('value = "R6"', 'value = "R5"')),
        ("symbolic 3-op-amp INA", run.INSTRUMENTATION, ('value = "Rd"', 'value = "Rc"')),
        ("16-stage op-amp chain, values in the file", chain,
         ('nodes = ["o3", "g3"], value = "Rf"', 'nodes = ["o3", "g3"], value = "2*Rf"')),
    ]


def main() -> None:
    print(f"{'case':44s} {'diff':>9s} {'2 solves':>9s}  ratio")
    for name, text, (old, new) in cases():
        a, b = parse_circuit(text), parse_circuit(text.replace(old, new, 1))

        def solve_both():
            for c in (a, b):
                report(Study(c).records(("system", "matrix", "solution", "warnings")))

        ours = _timed(lambda: diff_text(diff_circuits(a, b)))
        peer = _timed(solve_both)
        print(f"{name:44s} {ours:9.3f} {peer:9.3f}  {peer / ours:5.2f}x", flush=True)


if __name__ == "__main__":
    main()
