"""The peer of ``nodeterm solve --numeric`` on a resistor mesh: plain tomllib + SciPy, no nodeterm.

    python benchmarks/mesh_peer.py FILE.toml > voltages.txt

Reads a circuit of resistors and DC voltage sources (values as numbers with an optional SI prefix),
builds the same modified-node sparse matrix (every node voltage but the reference, plus each
source's current), solves it with SciPy's ``splu`` and prints every node voltage and part current,
one per line, as ``nodeterm solve --numeric`` does. It knows nothing else (no other part kinds, no
checks, no parameters): it is the least work that gives the same numbers.
"""

from __future__ import annotations

import sys
import tomllib

import numpy as np
from scipy.sparse import coo_matrix
from scipy.sparse.linalg import splu

PREFIX = {"T": 1e12, "G": 1e9, "M": 1e6, "k": 1e3, "m": 1e-3, "u": 1e-6, "µ": 1e-6, "n": 1e-9, "p": 1e-12}


def number(text: str) -> float:
    text = text.strip()
    if text[-1] in PREFIX:
        return float(text[:-1]) * PREFIX[text[-1]]
    return float(text)


def main(path: str) -> None:
    with open(path, "rb") as f:
        data = tomllib.load(f)
    parts = data["parts"]
    ref = "gnd"
    nodes: dict[str, int] = {}
    for p in parts.values():
        for n in p["nodes"]:
            if n != ref and n not in nodes:
                nodes[n] = len(nodes)
    sources = [pid for pid, p in parts.items() if p["kind"] == "voltage_source"]
    size = len(nodes) + len(sources)
    rows, cols, vals = [], [], []
    b = np.zeros(size)
    resistors = []
    for pid, p in parts.items():
        a, c = p["nodes"]
        ia, ic = nodes.get(a, -1), nodes.get(c, -1)
        if p["kind"] == "resistor":
            g = 1.0 / number(p["value"])
            resistors.append((pid, ia, ic, g))
            for i, j, v in ((ia, ia, g), (ic, ic, g), (ia, ic, -g), (ic, ia, -g)):
                if i >= 0 and j >= 0:
                    rows.append(i)
                    cols.append(j)
                    vals.append(v)
    for k, pid in enumerate(sources):
        a, c = parts[pid]["nodes"]
        j = len(nodes) + k
        for n, sign in ((a, 1.0), (c, -1.0)):
            if n != ref:
                rows += [nodes[n], j]
                cols += [j, nodes[n]]
                vals += [sign, sign]
        b[j] = number(parts[pid]["value"])
    A = coo_matrix((vals, (rows, cols)), shape=(size, size)).tocsc()
    x = splu(A).solve(b)
    xv = np.append(x[:len(nodes)], 0.0)
    xl = x.tolist()
    out = [f"V_{ref} = 0.0"]
    out += [f"V_{n} = {xl[i]!r}" for n, i in nodes.items()]
    ids, ia, ic, g = zip(*resistors)
    currents = (xv[list(ia)] - xv[list(ic)]) * np.array(g)
    out += [f"I_{pid} = {i!r}" for pid, i in zip(ids, currents.tolist())]
    out += [f"I_{pid} = {xl[len(nodes) + k]!r}" for k, pid in enumerate(sources)]
    sys.stdout.write("\n".join(out) + "\n")


if __name__ == "__main__":
    main(sys.argv[1])
