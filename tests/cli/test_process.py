"""The ``nodeterm`` command as a whole process (``python -m nodeterm``, what the console script runs).

A batch command ends without the interpreter's teardown (nodeterm.cli.entry): these checks make
sure nothing is lost by that: the whole output arrives, the exit status is the command's, a closed
pipe is not an error, and a written file is complete.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
DEMOS = sorted((ROOT / "circuits").glob("*.toml"))


def run(*args, **kw):
    return subprocess.run([sys.executable, "-m", "nodeterm", *args], capture_output=True, text=True,
                          timeout=300, **kw)


def test_whole_output_arrives_and_equals_the_in_process_command(capsys):
    from nodeterm.cli import main
    path = str(DEMOS[0])
    assert main(["solve", path, "--json"]) == 0
    inside = capsys.readouterr().out
    proc = run("solve", path, "--json")
    assert proc.returncode == 0
    assert proc.stdout == inside
    json.loads(proc.stdout)


def test_exit_status_of_bad_input_is_two_with_one_message(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text('[parts]\nR1 = { kind = "resistor", nodes = ["a", "a"], value = "1k" }\n')
    proc = run("solve", str(bad))
    assert proc.returncode == 2
    assert proc.stderr.startswith("nodeterm: ") and "Traceback" not in proc.stderr


def test_a_reader_that_stops_early_is_not_an_error():
    # `nodeterm solve FILE | head -1`: the pipe closes while the report is written.
    proc = subprocess.run(f'"{sys.executable}" -m nodeterm solve "{DEMOS[0]}" | head -c 20', shell=True,
                          capture_output=True, text=True, timeout=300)
    assert len(proc.stdout) == 20
    assert "Traceback" not in proc.stderr


@pytest.mark.parametrize("fmt", ["markdown", "json"])
def test_exported_file_is_complete(tmp_path, fmt):
    out = tmp_path / f"eq.{fmt}"
    proc = run("export", str(DEMOS[0]), "--to", fmt, "--output", str(out))
    assert proc.returncode == 0, proc.stderr
    if fmt == "json":
        json.loads(out.read_text())
    else:
        assert out.read_text().endswith("\n")


def test_a_full_disk_gets_one_line_and_status_two():
    # Writing to /dev/full fails with ENOSPC (Linux): one message, no traceback.
    if not Path("/dev/full").exists():
        pytest.skip("no /dev/full here")
    with open("/dev/full", "w") as full:
        proc = subprocess.run([sys.executable, "-m", "nodeterm", "solve", str(DEMOS[0])], stdout=full,
                              stderr=subprocess.PIPE, text=True, timeout=300)
    assert proc.returncode == 2
    assert proc.stderr.startswith("nodeterm: error: could not write the output") and "Traceback" not in proc.stderr
