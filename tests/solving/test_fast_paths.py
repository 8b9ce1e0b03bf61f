"""The fast paths give the same answers as the reference paths (no timing here: see benchmarks/).

* Exact: the FLINT path (nodeterm.engine.solving.fastsolve) against the pure-SymPy path (DomainMatrix
  ``solve_den`` then ``sympy.cancel``), result by result, structurally equal.
* Large results: their text, read back by SymPy, equals the SymPy path's expression.
* Numeric: the sparse-LU path against the exact solution evaluated by SymPy, and the batched
  solver against ``numpy.linalg.solve`` one case at a time.
"""

from __future__ import annotations

import glob
import math
from pathlib import Path

import numpy as np
import pytest
import sympy

from nodeterm.engine import SolveError, build_system, load_circuit, parse_circuit
from nodeterm.engine.solving import fastsolve
from nodeterm.engine.solving.fraction_free import determinant
from nodeterm.engine.solving.numeric import NumericModel
from nodeterm.engine.solving.solve import solve_linear, solve_linear_sympy, solve_system_sympy
from nodeterm.engine.symbols import s
from nodeterm.engine.solving.solve import solve_system
from nodeterm.engine.values import parse_values

ROOT = Path(__file__).resolve().parents[2]
FILES = sorted(glob.glob(str(ROOT / "circuits" / "*.toml")) + glob.glob(str(ROOT / "tests" / "published" / "*.toml")))


def slow_solve(system):
    """The pure-SymPy path, with FLINT switched off for solve_linear too."""
    saved = fastsolve.flint
    fastsolve.flint = None
    try:
        return solve_system_sympy(system)
    finally:
        fastsolve.flint = saved


def ladder(n: int) -> str:
    lines = ["[parameters]", 'Vin = ""'] + [f'R{k} = ""\nC{k} = ""' for k in range(1, n + 1)]
    lines += ["[parts]", 'VS = { kind = "voltage_source", nodes = ["n0", "gnd"], value = "Vin" }']
    for k in range(1, n + 1):
        lines.append(f'RS{k} = {{ kind = "resistor", nodes = ["n{k - 1}", "n{k}"], value = "R{k}" }}')
        lines.append(f'CS{k} = {{ kind = "capacitor", nodes = ["n{k}", "gnd"], value = "C{k}" }}')
    return "\n".join(lines) + "\n"


def assert_same(fast, slow):
    for group in ("node_voltages", "currents", "find"):
        a, b = getattr(fast, group), getattr(slow, group)
        assert list(a) == list(b)
        for key in a:
            assert sympy.sympify(a[key]) == b[key], (group, key, a[key], b[key])
    assert fast.is_reactive == slow.is_reactive


@pytest.mark.parametrize("path", FILES, ids=lambda p: Path(p).stem)
@pytest.mark.parametrize("known", [False, True], ids=["symbolic", "known"])
def test_fast_equals_sympy_path_on_every_bundled_and_published_circuit(path, known):
    system = build_system(load_circuit(path))
    if known:
        system = system.substitute_known()
    try:
        slow = slow_solve(system)
    except SolveError:
        with pytest.raises(SolveError):
            fastsolve.solve_system_fast(system)
        return
    assert_same(fastsolve.solve_system_fast(system), slow)


OPAMP_CASES = {
    # single-pole op-amp model (gbw brings pi into the coefficients), with rin and rout
    "real_opamp": """
[parameters]
Vin = ""
Rg = ""
Rf = ""
[parts]
VS = { kind = "voltage_source", nodes = ["in", "gnd"], value = "Vin" }
RG = { kind = "resistor", nodes = ["m", "gnd"], value = "Rg" }
RF = { kind = "resistor", nodes = ["m", "out"], value = "Rf" }
U1 = { kind = "opamp", plus = "in", minus = "m", out = "out", gain = "100k", gbw = "1M", rin = "1M", rout = "50" }
""",
    # controlled sources: a VCVS and a CCCS sensing a resistor's current
    "controlled": """
[parameters]
Vs = ""
R1 = ""
R2 = ""
k = ""
beta = ""
[parts]
VS = { kind = "voltage_source", nodes = ["a", "gnd"], value = "Vs" }
R1 = { kind = "resistor", nodes = ["a", "b"], value = "R1" }
R2 = { kind = "resistor", nodes = ["b", "gnd"], value = "R2" }
E1 = { kind = "vcvs", nodes = ["c", "gnd"], control = ["b", "gnd"], gain = "k" }
R3 = { kind = "resistor", nodes = ["c", "d"], value = "R1" }
F1 = { kind = "cccs", nodes = ["d", "gnd"], control = "R1", gain = "beta" }
[find]
ratio = "V_d/V_a"
""",
    # a floating source (supernode) and an inductor
    "supernode_rl": """
[parameters]
Va = ""
Vx = ""
R1 = ""
R2 = ""
L1 = ""
[parts]
VA = { kind = "voltage_source", nodes = ["a", "gnd"], value = "Va" }
VX = { kind = "voltage_source", nodes = ["b", "c"], value = "Vx" }
R1 = { kind = "resistor", nodes = ["a", "b"], value = "R1" }
L1 = { kind = "inductor", nodes = ["c", "gnd"], value = "L1" }
R2 = { kind = "resistor", nodes = ["b", "gnd"], value = "R2" }
""",
}


@pytest.mark.parametrize("name", sorted(OPAMP_CASES))
def test_fast_equals_sympy_path_on_op_amp_models_and_controlled_sources(name):
    system = build_system(parse_circuit(OPAMP_CASES[name]))
    assert_same(fastsolve.solve_system_fast(system), slow_solve(system))


@pytest.mark.parametrize("n", [2, 3, 5])
def test_symbolic_ladder_fast_equals_sympy_path_and_large_text_reads_back(n):
    system = build_system(parse_circuit(ladder(n)))
    fast, slow = fastsolve.solve_system_fast(system), slow_solve(system)
    assert_same(fast, slow)
    for node, value in fast.node_voltages.items():
        if isinstance(value, fastsolve.LargeExpr):  # printed straight from the polynomials
            assert sympy.sympify(value.text) == slow.node_voltages[node]
            assert sympy.sstr(value) == value.text


def test_ladder_denominator_term_count_is_a_fibonacci_number():
    # The denominator of an n-section RC ladder with distinct symbols is a continuant with
    # F(2n+1) terms (term count of continuants: Graham, Knuth, Patashnik, Concrete Mathematics,
    # 6.7 "Continuants", from memory); checked for n = 4 after SymPy's own expansion.
    system = build_system(parse_circuit(ladder(4)))
    value = fastsolve.solve_system_fast(system).node_voltages["n4"]
    den = sympy.fraction(sympy.sympify(value))[1]
    assert len(sympy.Add.make_args(sympy.expand(den))) == sympy.fibonacci(9) == 34


def test_solve_linear_fast_equals_domain_matrix_path():
    x, y, z = sympy.symbols("x y z")
    A = sympy.Matrix([[x + 1, -x, 0], [-x, x + y + s, -y], [0, -y, y + z]])
    b = sympy.Matrix([1, 0, sympy.Rational(1, 3)])
    assert solve_linear(A, b) == solve_linear_sympy(A, b)
    singular = sympy.Matrix([[x, y], [2 * x, 2 * y]])
    assert fastsolve.solve_linear_fast(singular, sympy.Matrix([1, 2])) is None
    assert solve_linear_sympy(singular, sympy.Matrix([1, 2])) is None


def test_determinant_matches_sympy_on_a_dense_symbolic_matrix():
    syms = sympy.symbols("a0:9")
    M = sympy.Matrix(3, 3, syms)
    field = fastsolve.PolyField(syms)
    rows = [{j: field.ev(M[i, j])[0] for j in range(3)} for i in range(3)]
    det = determinant(rows, 3, field.one)
    assert field.poly_expr(det) == sympy.expand(M.det())


def test_numeric_path_matches_exact_solution():
    path = ROOT / "tests" / "published" / "sallen_key_lowpass.toml"
    circuit = load_circuit(path)
    text = path.read_text()
    values = {"Vin": 1, "R1": "10k", "R2": "22k", "C1": "10n", "C2": "4.7n"}
    names = [n for n in values if n in circuit.parameters]
    if len(names) < len(values):
        pytest.skip("the published Sallen-Key file names its parameters differently")
    exact = solve_system(build_system(circuit).substitute(values))
    f = 1000.0
    num = NumericModel(circuit, parse_values(circuit, values)).solve(complex(0, 2 * math.pi * f))
    for node, v in exact.node_voltages.items():
        want = complex(sympy.N(sympy.sympify(v).subs(s, sympy.I * 2 * sympy.pi * f)))
        assert abs(num.node_voltages[node] - want) <= 1e-9 * max(1.0, abs(want)), node
    assert text  # the file was read


def test_numeric_mesh_matches_dense_numpy_solve():
    lines = ["[parts]", 'VS = { kind = "voltage_source", nodes = ["m0_0", "gnd"], value = "3" }']
    k = 0
    for i in range(6):
        for j in range(6):
            for di, dj in ((0, 1), (1, 0)):
                if i + di < 6 and j + dj < 6:
                    k += 1
                    lines.append(f'R{k} = {{ kind = "resistor", nodes = ["m{i}_{j}", "m{i + di}_{j + dj}"], '
                                 f'value = "{1 + k % 4}k" }}')
    lines.append('RL = { kind = "resistor", nodes = ["m5_5", "gnd"], value = "470" }')
    circuit = parse_circuit("\n".join(lines))
    model = NumericModel(circuit)
    A, b = model.matrix()
    x = np.linalg.solve(A.toarray(), b)
    sol = model.solve()
    for n, i in model.node_index.items():
        assert sol.node_voltages[n] == pytest.approx(x[i], rel=1e-12, abs=1e-15)
    # KCL at every node from the reported currents (Kirchhoff's current law, common practice)
    leaving = {n: 0.0 for n in circuit.nodes}
    for p in circuit.parts:
        leaving[p.nodes[0]] += sol.currents[p.id].real if isinstance(sol.currents[p.id], complex) else sol.currents[p.id]
        leaving[p.nodes[1]] -= sol.currents[p.id].real if isinstance(sol.currents[p.id], complex) else sol.currents[p.id]
    assert all(abs(v) < 1e-12 for n, v in leaving.items() if n != circuit.reference)


def test_batched_solve_matches_one_at_a_time():
    circuit = parse_circuit("""
[parameters]
Vin = 1
Ra = { value = "10k", tolerance = "5%" }
Rb = { value = "4.7k", tolerance = "5%" }
Rf = { value = "100k", tolerance = "5%" }
[parts]
VS = { kind = "voltage_source", nodes = ["in", "gnd"], value = "Vin" }
RA = { kind = "resistor", nodes = ["in", "m"], value = "Ra" }
RB = { kind = "resistor", nodes = ["m", "gnd"], value = "Rb" }
RF = { kind = "resistor", nodes = ["m", "out"], value = "Rf" }
U1 = { kind = "opamp", plus = "gnd", minus = "m", out = "out" }
""")
    model = NumericModel(circuit)
    rng = np.random.default_rng(0)
    samples = {"Ra": rng.uniform(9.5e3, 10.5e3, 50), "Rf": rng.uniform(95e3, 105e3, 50)}
    out = model.solve_batch(samples, chunk=16)
    col = model.node_column("out")
    for i in range(50):  # inverting amplifier: V_out = -Rf/Ra * Vin (any op-amp text, e.g. Sedra/Smith 2.2)
        assert out[i, col] == pytest.approx(-samples["Rf"][i] / samples["Ra"][i], rel=1e-12)
        single = model.__class__(circuit, {"Ra": sympy.Float(samples["Ra"][i]),
                                           "Rf": sympy.Float(samples["Rf"][i])}).solve()
        assert out[i, col] == pytest.approx(single.node_voltages["out"].real, rel=1e-12)


def _random_poly(F, rng, names, terms, degree=2):
    """A random integer polynomial in the generators ``names`` of ``F`` (invented test data)."""
    gens = {n: F.gens[F.names.index(n)] for n in names}
    p = F.zero
    for _ in range(terms):
        m = F.ctx.constant(rng.randint(-9, 9) or 1)
        for n in rng.sample(names, rng.randint(1, len(names))):
            m = m * gens[n] ** rng.randint(1, degree)
        p = p + m
    return p


@pytest.mark.parametrize("seed", range(12))
def test_reduction_against_a_known_factor_equals_the_plain_gcd(seed):
    # Lowest terms of num/(f*rest), with f a known factor (the system's determinant), by the
    # content argument in PolyField._reduce_coprime_known, against FLINT's own GCD (the
    # reference: the general-purpose algorithm) on random polynomials with shared factors.
    import random
    rng = random.Random(seed)
    syms = sympy.symbols("a b c d e")
    F = fastsolve.PolyField(set(syms))
    names = [str(x) for x in syms]
    missing = rng.choice(names)  # a variable of f that the numerator lacks
    others = [n for n in names if n != missing]
    common = _random_poly(F, rng, rng.sample(others, 2), 2)
    f = _random_poly(F, rng, names, 40) * common * F.gens[F.names.index(rng.choice(names))]
    F.known_factors.append(f)
    num = _random_poly(F, rng, rng.sample(others, 3), 6) * (common if seed % 2 else F.one)
    rest = F.one if seed % 3 == 0 else _random_poly(F, rng, names[:2], 2)
    den = f * rest
    got = F._reduce_coprime_known(num, den)
    assert got is not None
    g = num.gcd(den)
    want = (num / g, den / g)
    # equal as fractions and both in lowest terms (equal up to the sign of the pair)
    assert got[0] * want[1] == got[1] * want[0]
    assert got[0].gcd(got[1]).is_one() or got[0].gcd(got[1]) == -F.one
    assert len(got[1]) == len(want[1])
