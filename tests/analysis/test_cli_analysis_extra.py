"""The response command's CSV with several quantities shares one frequency column."""

import csv

import numpy as np

from nodeterm.cli import main

TWO_RC = '''title = "two RC sections"
[parameters]
R = "1k"
C = "1u"
[parts]
V1 = { kind = "voltage_source", nodes = ["in", "gnd"], value = 1 }
R1 = { kind = "resistor", nodes = ["in", "a"], value = "R" }
C1 = { kind = "capacitor", nodes = ["a", "gnd"], value = "C" }
R2 = { kind = "resistor", nodes = ["in", "b"], value = "100*R" }
C2 = { kind = "capacitor", nodes = ["b", "gnd"], value = "C" }
[find]
Ha = "V_a/V_in"
Hb = "V_b/V_in"
'''


def test_csv_of_two_quantities_is_right_for_both(tmp_path, capsys):
    f = tmp_path / "rc2.toml"
    f.write_text(TWO_RC)
    out = tmp_path / "rc2.csv"
    assert main(["response", str(f), "--known", "--csv", str(out)]) == 0
    rows = [r for r in csv.reader(l for l in out.read_text().splitlines() if not l.startswith("#"))]
    head, data = rows[0], np.array(rows[1:], dtype=float)
    assert head == ["frequency_hz", "Ha_magnitude_db", "Ha_phase_deg", "Hb_magnitude_db", "Hb_phase_deg"]
    w = 2 * np.pi * data[:, 0]
    # First-order RC low-pass |H| = 1/sqrt(1 + (wRC)^2) (common practice, no source), each at its own RC.
    for col, rc in ((1, 1e3 * 1e-6), (3, 1e5 * 1e-6)):
        expect = -10 * np.log10(1 + (w * rc) ** 2)
        assert np.allclose(data[:, col], expect, atol=1e-6)
