"""Worst case of quantities of either sign, against brute force over every corner of the tolerance box.

Method under test: worst case from the signs of the partial derivatives (the
extreme-value or vertex method; Spence and Soin, Tolerance Design of Electronic
Circuits, worst-case analysis, from memory): for a quantity monotonic in each
parameter the extremes sit at corners of the box. The reference here is an
independent brute force: ``itertools.product`` over all 2**n corners, evaluated
exactly with SymPy rationals. An inverting gain -Rf/Rin is negative, so its
normalized sensitivities point the other way from its derivatives; the worst case
must still find the true low and high and agree with the corners.
"""

from __future__ import annotations

import itertools

import pytest
import sympy
from hypothesis import given, settings
from hypothesis import strategies as st

from nodeterm.engine import parse_circuit
from nodeterm.engine.analysis.sensitivity import nominal_values, scalar_quantities, sensitivities
from nodeterm.engine.analysis.tolerance import spreads, worst_case
from nodeterm.engine.symbols import param

INVERTING = """
[parameters]
Vin = "1"
Rin = { value = "%s", tolerance = "%s" }
Rf = { value = "%s", tolerance = "%s" }
Rload = { value = "2k", tolerance = "5%%" }
[parts]
VS = { kind = "voltage_source", nodes = ["in", "gnd"], value = "Vin" }
R1 = { kind = "resistor", nodes = ["in", "inv"], value = "Rin" }
R2 = { kind = "resistor", nodes = ["inv", "out"], value = "Rf" }
RL = { kind = "resistor", nodes = ["out", "gnd"], value = "Rload" }
U1 = { kind = "opamp", plus = "gnd", minus = "inv", out = "out" }
[find]
gain = "V_out/V_in"
Iload = "I_RL"
Ifb = "I_R2"
"""


def brute_force(expr: sympy.Expr, spread_list, nominal: dict) -> tuple[sympy.Rational, sympy.Rational]:
    """Exact min and max of ``expr`` over every corner of the tolerance box."""
    fixed = {k: v for k, v in nominal.items() if str(k) not in {sp.name for sp in spread_list}}
    expr = expr.xreplace(fixed)
    values = []
    for ends in itertools.product((-1, 1), repeat=len(spread_list)):
        point = {param(sp.name): sympy.Rational(repr(sp.nominal)) * (1 + e * sympy.Rational(repr(sp.tolerance)))
                 for e, sp in zip(ends, spread_list)}
        values.append(expr.xreplace(point))
    return min(values), max(values)


def check(text: str) -> dict:
    c = parse_circuit(text)
    nominal = nominal_values(c)
    q = scalar_quantities(c)
    sp = spreads(c, nominal)
    wc = worst_case(q, sp, nominal, sensitivities(q, nominal))
    for name, w in wc.items():
        lo, hi = brute_force(q[name], sp, nominal)
        assert w.low == pytest.approx(float(lo), rel=1e-12), (name, w)
        assert w.high == pytest.approx(float(hi), rel=1e-12), (name, w)
        assert w.agrees, (name, w)
    return wc


def test_inverting_gain_is_negative_and_its_worst_case_is_the_true_one():
    wc = check(INVERTING % ("10k", "1%", "100k", "1%"))
    g = wc["gain"]
    assert g.nominal == pytest.approx(-10.0)
    # the most negative gain has the largest Rf and the smallest Rin: -Rf(1+t)/(Rin(1-t))
    assert g.low == pytest.approx(-100e3 * 1.01 / (10e3 * 0.99), rel=1e-12)
    assert g.high == pytest.approx(-100e3 * 0.99 / (10e3 * 1.01), rel=1e-12)
    assert g.low_at == {"Rin": -1, "Rf": 1, "Rload": 0}


def test_negative_currents_and_a_parameter_that_does_not_matter():
    wc = check(INVERTING % ("4.7k", "5%", "47k", "2%"))
    assert wc["Iload"].nominal < 0 < wc["Ifb"].nominal  # V_out < 0: the load current flows out -> gnd negative


@settings(max_examples=25, deadline=None)
@given(rin=st.sampled_from(["1k", "2.2k", "10k", "47k"]), rf=st.sampled_from(["3.3k", "22k", "100k", "1M"]),
       t1=st.sampled_from(["0.1%", "1%", "5%", "20%"]), t2=st.sampled_from(["0.5%", "2%", "10%"]))
def test_worst_case_matches_brute_force(rin, rf, t1, t2):
    check(INVERTING % (rin, t1, rf, t2))
