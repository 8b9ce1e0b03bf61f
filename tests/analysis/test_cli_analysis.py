"""The analysis commands end to end: bad input (exit 2, one line with file and line),
the CSV round trip, the plots, limit exit status and the additive JSON keys.

The expected numbers come from the published formulas checked in the other test files
(Butterworth Q = 1/sqrt(2), f_3dB = f0; Franco ch. 3, from memory).
"""

from __future__ import annotations

import csv
import json
from pathlib import Path

import numpy as np
import pytest

from nodeterm.cli import main
from nodeterm.engine import build_system, load_circuit
from nodeterm.engine.analysis.transfer import transfer_functions
from nodeterm.engine.solving.solve import solve_system

HERE = Path(__file__).parent
DEMOS = HERE.parent.parent / "circuits"

OPAMP_FILE = '''title = "bad op-amp values"
[parts]
VS = {{ kind = "voltage_source", nodes = ["in", "gnd"], value = 1 }}
RG = {{ kind = "resistor", nodes = ["fb", "gnd"], value = "1k" }}
RF = {{ kind = "resistor", nodes = ["fb", "out"], value = "9k" }}
U1 = {{ kind = "opamp", plus = "in", minus = "fb", out = "out", {keys} }}
'''

TOL_FILE = '''title = "bad tolerance"
[parameters]
R1 = {{ value = "10k", tolerance = "{tol}" }}
[parts]
VS = {{ kind = "voltage_source", nodes = ["in", "gnd"], value = 1 }}
RA = {{ kind = "resistor", nodes = ["in", "gnd"], value = "R1" }}
'''


def run(capsys, *argv):
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


@pytest.mark.parametrize("keys, words", [
    ('rails = ["12", "-12"]', "low >= high"),
    ('rails = ["5", "5"]', "low >= high"),
    ('gain = "100k", gbw = "0"', "gbw = 0 must be positive"),
    ('gain = "100k", gbw = "-1M"', "must be positive"),
    ('max_current = "-20m"', "max_current"),
])
def test_bad_opamp_values_exit_2_with_file_and_line(tmp_path, capsys, keys, words):
    f = tmp_path / "bad.toml"
    f.write_text(OPAMP_FILE.format(keys=keys))
    code, out, err = run(capsys, "limits", f)
    assert code == 2 and out == ""
    assert err.count("\n") == 1 and f"{f}:6" in err and words in err and "Traceback" not in err


@pytest.mark.parametrize("tol, words", [("-1%", "negative"), ("150%", "above 100%")])
def test_bad_tolerance_exit_2(tmp_path, capsys, tol, words):
    f = tmp_path / "tol.toml"
    f.write_text(TOL_FILE.format(tol=tol))
    code, out, err = run(capsys, "tolerance", f)
    assert code == 2 and f"{f}:3" in err and words in err and err.count("\n") == 1


@pytest.mark.parametrize("lo, hi", [("10k", "1k"), ("1k", "1k")])
def test_empty_frequency_range_exit_2(capsys, lo, hi):
    code, out, err = run(capsys, "response", DEMOS / "vibration_lowpass.toml", "--from", lo, "--to", hi)
    assert code == 2 and "from >= to" in err and err.count("\n") == 1


@pytest.mark.parametrize("argv, words", [
    (["--from", "-5"], "not a positive frequency"),
    (["--from", "abc"], "--from"),
    (["--set", "Nope=1"], "no parameter 'Nope'"),
])
def test_other_bad_command_line_values(capsys, argv, words):
    code, out, err = run(capsys, "response", DEMOS / "vibration_lowpass.toml", *argv)
    assert code == 2 and words in err


def test_response_csv_round_trip(tmp_path, capsys):
    path = tmp_path / "h.csv"
    code, out, err = run(capsys, "response", DEMOS / "vibration_lowpass.toml", "--csv", path,
                         "--from", "10", "--to", "100k", "--points", "51")
    assert code == 0 and f"wrote {path}" in out
    lines = path.read_text().splitlines()
    assert lines[0].startswith("# ") and "bench" in lines[0]
    rows = list(csv.reader(lines[1:]))
    assert rows[0] == ["frequency_hz", "H_magnitude_db", "H_phase_deg"]
    data = np.array(rows[1:], dtype=float)
    assert data.shape == (51, 3)
    assert data[0, 0] == pytest.approx(10) and data[-1, 0] == pytest.approx(1e5)
    c = load_circuit(str(DEMOS / "vibration_lowpass.toml"))
    tf = transfer_functions(solve_system(build_system(c).substitute_known()), c)["H"]
    h = tf.evaluate(data[:, 0])
    assert np.allclose(data[:, 1], 20 * np.log10(np.abs(h)), atol=1e-6)
    assert np.allclose(data[:, 2], np.degrees(np.unwrap(np.angle(h))), atol=1e-6)


def test_response_text_and_plot_fit_the_terminal(capsys):
    code, out, err = run(capsys, "response", DEMOS / "vibration_lowpass.toml", "--plot", "--width", "78")
    assert code == 0
    assert "Q = sqrt(2)/2" in out and "second-order pole" in out
    assert "|H| (dB)" in out and "1k" in out
    assert max(len(line) for line in out.splitlines() if "│" in line) <= 78
    assert out.rstrip().endswith("must be confirmed on the bench.")


def test_limits_exit_1_when_exceeded_and_0_when_inside(capsys):
    f = HERE / "noninverting_gbw.toml"
    code, out, _ = run(capsys, "limits", f, "--set", "Vin=1.3")
    assert code == 1 and "EXCEEDED" in out and "outside its rails" in out
    code, out, _ = run(capsys, "limits", f, "--set", "Vin=0.5")
    assert code == 0 and "U1: OK" in out


def test_limits_reports_the_load_range(capsys):
    code, out, _ = run(capsys, "limits", HERE / "loop_compliance.toml")
    assert code == 0 and "0 < Rload <= 1.4 kohm" in out


def test_real_tolerance_sensitivity_commands(capsys):
    code, out, _ = run(capsys, "real", HERE / "noninverting_gbw.toml", "--at", "10k")
    assert code == 0 and "relative error at 10 kHz" in out and "DC to 100 kHz" in out
    assert "[gain equation of U1]" in out
    code, out, _ = run(capsys, "tolerance", HERE / "divider_tolerance.toml", "--samples", "2000", "--seed", "5",
                       "--plot", "--bins", "8")
    assert code == 0 and "2000 samples, seed 5" in out and "all 4 corners" in out
    code2, out2, _ = run(capsys, "tolerance", HERE / "divider_tolerance.toml", "--samples", "2000", "--seed", "5")
    assert out2.split("worst case")[0] == out.split("worst case")[0]  # same seed, same statistics
    code, out, _ = run(capsys, "sensitivity", DEMOS / "vibration_lowpass.toml")
    assert code == 0 and "H.w0" in out and "-0.5000" in out


def test_solve_json_gains_transfer_limits_and_warnings(capsys):
    code, out, _ = run(capsys, "solve", DEMOS / "vibration_lowpass.toml", "--json", "--known")
    d = json.loads(out)
    assert code == 0
    h = d["transfer"]["H"]
    assert h["denominator_coeffs"] == ["1", "10000", "50000000"]
    assert h["sections"][0]["Q"] == "sqrt(2)/2"
    assert d["limits"] == {} and d["note"].endswith("bench.")
    # (--set without --known: `solve --known --set` substitutes the file values first, so a --set of a
    # parameter that has a file value arrives too late; reported to the CLI's owner)
    code, out, _ = run(capsys, "solve", HERE / "noninverting_gbw.toml", "--json",
                       "--set", "Vin=2", "--set", "Rg=1k", "--set", "Rf=9k")
    d = json.loads(out)
    assert d["limits"]["U1"]["ok"] is False
    assert {"code": "opamp-limit", "part": "U1"}.items() <= d["warnings"][0].items()
    for key in ("title", "equations", "matrix", "node_voltages", "currents", "find"):
        assert key in d  # the existing contract is kept


def test_analysis_commands_do_not_import_textual():
    import subprocess
    import sys
    code = ("import sys; from nodeterm.cli import main; "
            f"main(['response', {str(DEMOS / 'vibration_lowpass.toml')!r}, '--plot']); "
            "sys.exit(1 if 'textual' in sys.modules else 0)")
    assert subprocess.run([sys.executable, "-c", code], capture_output=True).returncode == 0
