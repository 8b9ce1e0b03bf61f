"""Op-amp limits, load compliance, Monte Carlo, worst case and cautions.

References:
  * The output swing and current checks are the definition of the limits (common practice,
    no source): an output outside [low, high] or a current above max_current is flagged.
  * Monte Carlo spread of a divider: the exact mean and variance of R2/(R1 + R2) over the
    uniform tolerance box, computed here with SciPy's ``dblquad``; the statistical error of
    the sampled standard deviation is about std/sqrt(2N).
  * Extra-low-voltage limits 50 V AC rms / 120 V ripple-free DC: IEC 61140 (from memory).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
import sympy
from scipy import integrate

from nodeterm.engine import build_system, load_circuit, parse_circuit
from nodeterm.engine.analysis.cautions import source_cautions, voltage_caution
from nodeterm.engine.analysis.limits import check_limits, compliance_range, limit_warnings
from nodeterm.engine.analysis.realopamp import prepared
from nodeterm.engine.analysis.sensitivity import nominal_values, scalar_quantities, sensitivities
from nodeterm.engine.analysis.tolerance import monte_carlo, spreads, worst_case
from nodeterm.engine.solving.solve import solve_system

HERE = Path(__file__).parent


# --- limits -----------------------------------------------------------------------------------------
@pytest.mark.parametrize("vin, flagged", [("1", False), ("1.1", False), ("1.3", True), ("-1.3", True)])
def test_output_swing_check_on_an_amplifier_driven_into_its_rails(vin, flagged):
    # gain 10 (1 + 9k/1k), rails +/-12 V: 1.3 V in asks for 13 V out, past the rail.
    c = load_circuit(str(HERE / "noninverting_gbw.toml"))
    system = prepared(c, {"Vin": vin})
    (check,) = check_limits(system, solve_system(system))
    assert check.checked
    assert bool(check.problems) == flagged
    v_dc = float(sympy.sympify(vin)) * 10 / (1 + 10 / 1e6)
    assert float(sympy.limit(check.v_out, sympy.Symbol("s"), 0)) == pytest.approx(v_dc, rel=1e-12)
    if flagged:
        (w,) = limit_warnings([check])
        assert w.code == "opamp-limit" and w.part == "U1" and "rails" in w.message


def test_output_current_limit():
    # U1 drives the 10k feedback chain plus a 100 ohm load: 10 V/100 ohm = 100 mA > 20 mA.
    c = parse_circuit('''
[parts]
VS = { kind = "voltage_source", nodes = ["in", "gnd"], value = 1 }
RG = { kind = "resistor", nodes = ["fb", "gnd"], value = "1k" }
RF = { kind = "resistor", nodes = ["fb", "out"], value = "9k" }
RL = { kind = "resistor", nodes = ["out", "gnd"], value = "100" }
U1 = { kind = "opamp", plus = "in", minus = "fb", out = "out", rails = ["-15", "15"], max_current = "20m" }
''')
    system = build_system(c)
    (check,) = check_limits(system, solve_system(system))
    assert check.i_out == sympy.Rational(10, 100) + sympy.Rational(1, 1000)  # load + feedback chain
    assert any("max_current" in p for p in check.problems)
    assert not any("rails" in p for p in check.problems)


def test_compliance_range_of_a_current_sink():
    # I = Vset/Rsense = 10 mA; V_out = Vset + I*Rload <= 15 V  =>  Rload <= (15 - 1)/0.01 = 1400 ohm.
    c = load_circuit(str(HERE / "loop_compliance.toml"))
    comp = compliance_range(c)
    assert comp.load == "Rload"
    assert comp.allowed == sympy.Interval.Lopen(0, 1400)
    assert comp.find["Iload"] == sympy.Rational(1, 100)
    # a 20 V set point would need 200 mA > 25 mA: no load works
    assert compliance_range(c, {"Vset": sympy.Integer(20)}).allowed == sympy.EmptySet


# --- Monte Carlo and worst case -------------------------------------------------------------------------
def _divider():
    c = load_circuit(str(HERE / "divider_tolerance.toml"))
    nominal = nominal_values(c)
    return c, scalar_quantities(c), nominal, spreads(c, nominal)


def test_monte_carlo_spread_of_a_divider_matches_its_exact_variance():
    c, q, nominal, sp = _divider()
    r1, r2, t = 10e3, 4.7e3, 0.05
    f = lambda a, b: (r2 * (1 + b)) / (r1 * (1 + a) + r2 * (1 + b))  # noqa: E731
    box = 1 / (2 * t) ** 2
    mean = integrate.dblquad(lambda b, a: f(a, b) * box, -t, t, -t, t)[0]
    second = integrate.dblquad(lambda b, a: f(a, b) ** 2 * box, -t, t, -t, t)[0]
    std = np.sqrt(second - mean**2)
    n = 200_000
    mc = monte_carlo(q, sp, nominal, samples=n, seed=7)["ratio"]
    assert mc.samples.shape == (n,)
    assert mc.mean == pytest.approx(mean, abs=5 * std / np.sqrt(n))
    assert mc.std == pytest.approx(std, rel=5 / np.sqrt(2 * n))
    # every sample inside the worst-case band
    lo = r2 * 0.95 / (r1 * 1.05 + r2 * 0.95)
    hi = r2 * 1.05 / (r1 * 0.95 + r2 * 1.05)
    assert lo - 1e-15 <= mc.min and mc.max <= hi + 1e-15


def test_monte_carlo_is_seeded_and_batched_consistently():
    c, q, nominal, sp = _divider()
    a = monte_carlo(q, sp, nominal, samples=5000, seed=3, batch=5000)["ratio"].samples
    b = monte_carlo(q, sp, nominal, samples=5000, seed=3, batch=5000)["ratio"].samples
    d = monte_carlo(q, sp, nominal, samples=5000, seed=4)["ratio"].samples
    assert np.array_equal(a, b) and not np.array_equal(a, d)
    seen = []
    monte_carlo(q, sp, nominal, samples=2500, seed=3, batch=1000, progress=lambda k, n: seen.append((k, n)))
    assert seen == [(1000, 2500), (2000, 2500), (2500, 2500)]


def test_normal_distribution_reads_the_tolerance_as_three_sigma():
    # first-order (delta-method) spread: std(F)/F = sqrt(sum S_i^2 * (t/3)^2) with S = -+R1/(R1+R2)
    c, q, nominal, sp = _divider()
    sp_n = spreads(c, nominal, "normal")
    mc = monte_carlo(q, sp_n, nominal, samples=200_000, seed=11)["ratio"]
    s1 = 10e3 / 14.7e3
    expected = (4.7 / 14.7) * np.sqrt(2) * s1 * 0.05 / 3
    assert mc.std == pytest.approx(expected, rel=0.02)


def test_worst_case_of_a_divider_is_the_analytic_corner():
    c, q, nominal, sp = _divider()
    wc = worst_case(q, sp, nominal, sensitivities(q, nominal))["ratio"]
    assert wc.low == pytest.approx(4.7e3 * 0.95 / (10e3 * 1.05 + 4.7e3 * 0.95), rel=1e-12)
    assert wc.high == pytest.approx(4.7e3 * 1.05 / (10e3 * 0.95 + 4.7e3 * 1.05), rel=1e-12)
    assert wc.corners == 4 and wc.agrees
    assert wc.high_at == {"R1": -1, "R2": 1}


# --- cautions -------------------------------------------------------------------------------------------
@pytest.mark.parametrize("volts, hazardous", [(24, False), (50, False), (60, True), (120, True), (-325, True)])
def test_voltage_cautions_follow_the_extra_low_voltage_limits(volts, hazardous):
    w = voltage_caution(volts, "source VM", "VM")
    assert (w is not None) == hazardous
    if w is not None:
        assert "local electrical codes and licensed practice" in w.message and w.part == "VM"


def test_mains_source_gives_a_caution_in_the_system_warnings():
    c = parse_circuit('''
[parameters]
Vmains = "325"
[parts]
VM = { kind = "voltage_source", nodes = ["line", "gnd"], value = "Vmains" }
R1 = { kind = "resistor", nodes = ["line", "sense"], value = "1M" }
R2 = { kind = "resistor", nodes = ["sense", "gnd"], value = "1k" }
''')
    from nodeterm.engine.study import Study
    codes = [(w.code, w.part) for w in Study(c).warnings]
    assert ("hazardous-voltage", "VM") in codes
    # --set values are seen too
    assert source_cautions(c, {"Vmains": sympy.Integer(12)}) == []
