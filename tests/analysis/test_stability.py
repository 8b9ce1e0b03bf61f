"""Natural frequencies of the ideal circuit (nodeterm.engine.analysis.stability).

References:
* Wien-bridge oscillator: with the series RC and parallel RC arms equal, the loop's characteristic
  polynomial is (R*C*s)**2 + (3 - K)*R*C*s + 1 with K = 1 + Rf/Rg, so it oscillates (poles in the
  right half-plane) when K > 3 and decays when K < 3 (Franco, Design with Operational Amplifiers and
  Analog Integrated Circuits, ch. on oscillators, from memory). Roots compared with numpy.roots.
* Equal-component Sallen-Key low-pass with gain K: Q = 1/(3 - K), unstable for K > 3 (Franco, ch. 3,
  from memory).
"""

from __future__ import annotations

import glob
import json
from pathlib import Path

import numpy as np
import pytest

from nodeterm.cli import main
from nodeterm.engine import parse_circuit
from nodeterm.engine.analysis.stability import characteristic_polynomial, growing_modes
from nodeterm.engine.study import Study

ROOT = Path(__file__).resolve().parents[2]

WIEN = """title = "Wien-bridge tone source (invented values)"
[parameters]
R = "10k"
C = "10n"
Rg = "10k"
Rf = "{rf}"
[parts]
RS = {{ kind = "resistor", nodes = ["out", "a"], value = "R" }}
CS = {{ kind = "capacitor", nodes = ["a", "p"], value = "C" }}
RP = {{ kind = "resistor", nodes = ["p", "gnd"], value = "R" }}
CP = {{ kind = "capacitor", nodes = ["p", "gnd"], value = "C" }}
RG = {{ kind = "resistor", nodes = ["m", "gnd"], value = "Rg" }}
RF = {{ kind = "resistor", nodes = ["m", "out"], value = "Rf" }}
U1 = {{ kind = "opamp", plus = "p", minus = "m", out = "out" }}
"""

SALLEN_KEY = """title = "Equal-component Sallen-Key low-pass (invented values)"
[parameters]
Vin = "1"
R = "10k"
C = "10n"
Rg = "10k"
Rf = "{rf}"
[parts]
VS = {{ kind = "voltage_source", nodes = ["in", "gnd"], value = "Vin" }}
R1 = {{ kind = "resistor", nodes = ["in", "a"], value = "R" }}
R2 = {{ kind = "resistor", nodes = ["a", "p"], value = "R" }}
C1 = {{ kind = "capacitor", nodes = ["a", "out"], value = "C" }}
C2 = {{ kind = "capacitor", nodes = ["p", "gnd"], value = "C" }}
RG = {{ kind = "resistor", nodes = ["m", "gnd"], value = "Rg" }}
RF = {{ kind = "resistor", nodes = ["m", "out"], value = "Rf" }}
U1 = {{ kind = "opamp", plus = "p", minus = "m", out = "out" }}
"""


def codes(text: str) -> list[str]:
    return [w.code for w in Study(parse_circuit(text)).warnings]


@pytest.mark.parametrize("rf, k", [("15k", 2.5), ("25k", 3.5), ("19k", 2.9), ("21k", 3.1)])
def test_wien_bridge_modes_match_the_textbook_polynomial(rf, k):
    study = Study(parse_circuit(WIEN.format(rf=rf))).numeric
    coeffs = characteristic_polynomial(study.system)
    rc = 10e3 * 10e-9
    ours = np.sort_complex(np.roots([float(c) for c in reversed(coeffs)]))
    theirs = np.sort_complex(np.roots([rc * rc, (3 - k) * rc, 1]))
    assert ours == pytest.approx(theirs, rel=1e-9)
    modes = growing_modes(study.system)
    assert (len(modes) == 2) == (k > 3)
    assert ("unstable" in codes(WIEN.format(rf=rf))) == (k > 3)


@pytest.mark.parametrize("rf, unstable", [("1", False), ("15k", False), ("25k", True)])
def test_equal_component_sallen_key_is_unstable_above_gain_three(rf, unstable):
    assert ("unstable" in codes(SALLEN_KEY.format(rf=rf))) == unstable


def test_resistive_and_symbolic_circuits_are_not_checked():
    divider = ('[parts]\nVS = { kind = "voltage_source", nodes = ["a", "gnd"], value = "5" }\n'
               'R1 = { kind = "resistor", nodes = ["a", "b"], value = "1k" }\n'
               'R2 = { kind = "resistor", nodes = ["b", "gnd"], value = "2k" }\n')
    assert characteristic_polynomial(Study(parse_circuit(divider)).system) == []
    symbolic = WIEN.format(rf="25k").replace('C = "10n"', 'C = ""')
    assert characteristic_polynomial(Study(parse_circuit(symbolic)).numeric.system) is None
    assert "unstable" not in codes(symbolic)


def test_unstable_warning_in_json_and_strict_exit(tmp_path, capsys):
    path = tmp_path / "wien.toml"
    path.write_text(WIEN.format(rf="25k"))
    assert main(["solve", str(path), "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert [w["code"] for w in data["warnings"]] == ["unstable"]
    assert main(["solve", str(path), "--strict"]) == 1


@pytest.mark.parametrize("path", sorted(glob.glob(str(ROOT / "circuits" / "*.toml"))
                                        + glob.glob(str(ROOT / "tests" / "published" / "*.toml"))))
def test_no_bundled_or_published_circuit_is_flagged(path):
    # Amplifiers, filters and references designed to settle (common practice, no source).
    study = Study.from_file(path)
    assert "unstable" not in [w.code for w in study.warnings]
