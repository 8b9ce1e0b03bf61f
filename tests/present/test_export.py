"""Exports (nodeterm.present.export and ``nodeterm export``): every format round-trips or validates.

* JSON parses back, and its expressions, read with our own expression parser, equal the exact
  solution (SymPy decides the equality).
* ASCII output is 7-bit, even for a circuit whose title and texts are not.
* Markdown tables are well formed (same number of cells in every row, a separator row).
* LaTeX environments and braces balance; the document is compiled when a TeX engine is on PATH
  (skipped otherwise: none is installed in the dev venv).
* Files are written atomically and never replaced without ``force``; a failed write leaves nothing.
"""

from __future__ import annotations

import json
import os
import re
import shutil
import subprocess
import sys
from pathlib import Path

import pytest
import sympy

from nodeterm.cli import main
from nodeterm.engine import load_circuit
from nodeterm.engine.study import Study
from nodeterm.engine.values import ValueChoice
from nodeterm.engine.circuit.expr import parse_expression
from nodeterm.present.export import BENCH_NOTE, FORMATS, ExportError, render, write_atomic

ROOT = Path(__file__).parents[2]
AUDIT = Path(__file__).parents[1] / "audit"
DEMOS = sorted((ROOT / "circuits").glob("*.toml"))
CASES = [AUDIT / "sallen_key.toml", AUDIT / "difference.toml", ROOT / "circuits" / "kiln_preamp.toml",
         ROOT / "circuits" / "greenhouse_loop.toml"]

UNICODE_CIRCUIT = '''title = "Préampli — 4.7 kΩ ±1 % ≈ µA"
[parameters]
Vin = "1"
R1 = "4.7kΩ"
R2 = "10k"
[parts]
Vs = { kind = "voltage_source", nodes = ["in", "gnd"], value = "Vin" }
Ra = { kind = "resistor", nodes = ["in", "inv"], value = "R1" }
Rb = { kind = "resistor", nodes = ["inv", "out"], value = "R2" }
U1 = { kind = "opamp", plus = "gnd", minus = "inv", out = "out" }
[find]
gain = "V_out/V_in"
[hand]
gain = "-R2/R1"
wrong = "(V_inv - V_in)/R1 = 0"
'''


def prepared(path, known: bool = False):
    """The records ``nodeterm export`` formats (Study, as the CLI builds it)."""
    study = Study(load_circuit(str(path)), ValueChoice.from_options(known=known))
    return study.records(("system", "matrix", "solution", "warnings", "verdicts", "transfer", "limits"))


def sym(name: str):
    return sympy.Symbol(name)


# ----------------------------------------------------------------------------- JSON
@pytest.mark.parametrize("path", CASES, ids=lambda p: p.name)
def test_json_round_trip(path):
    records = prepared(path)
    system, solution, verdicts = records.system, records.solution, list(records.verdicts)
    data = json.loads(render(records, "json"))
    for node, text in data["node_voltages"].items():
        assert sympy.simplify(parse_expression(text, sym) - solution.node_voltages[node]) == 0, node
    for pid, text in data["currents"].items():
        assert sympy.simplify(parse_expression(text, sym) - solution.currents[pid]) == 0, pid
    for name, text in data["find"].items():
        assert sympy.simplify(parse_expression(text, sym) - solution.find[name]) == 0, name
    assert [s["title"] for s in data["steps"]] == [s.title for s in system.steps]
    eqs = [e for s in data["steps"] for e in s["equations"]]
    assert sum(len(s.equations) for s in system.steps) == len(eqs)
    for step, original in zip(data["steps"], system.steps):
        for e, eq in zip(step["equations"], original.equations):
            assert sympy.expand(parse_expression(e["lhs"], sym) - parse_expression(e["rhs"], sym)
                                - (eq.lhs - eq.rhs)) == 0
    assert [(v["name"], v["status"]) for v in data["verdicts"]] == [(v.name, v.status) for v in verdicts]
    assert data["note"] == BENCH_NOTE
    # the solve --json contract is kept
    for key in ("title", "reference", "unknowns", "skipped", "equations", "matrix", "values", "warnings"):
        assert key in data


# ----------------------------------------------------------------------------- ASCII
def test_ascii_is_seven_bit(tmp_path):
    path = tmp_path / "unicode.toml"
    path.write_text(UNICODE_CIRCUIT, encoding="utf-8")
    for p in [path] + DEMOS:
        records = prepared(p, known=True)
        system, solution, verdicts = records.system, records.solution, list(records.verdicts)
        text = render(records, "ascii")
        bad = [ch for ch in text if ord(ch) > 127]
        assert not bad, (p.name, bad[:5])
        assert BENCH_NOTE in text
    assert "Preampli - 4.7 kohm +/-1 % ~ uA" in render(prepared(path), "ascii")


def test_text_keeps_unicode_and_lists_verdicts(tmp_path):
    path = tmp_path / "unicode.toml"
    path.write_text(UNICODE_CIRCUIT, encoding="utf-8")
    text = render(prepared(path), "text")
    assert "Préampli" in text and "Audit of the hand derivation" in text
    assert "missing the term from Rb" in text


# ----------------------------------------------------------------------------- Markdown
def _tables(text: str) -> list[list[str]]:
    blocks, current = [], []
    for line in text.splitlines():
        if line.startswith("|"):
            current.append(line)
        elif current:
            blocks.append(current)
            current = []
    if current:
        blocks.append(current)
    return blocks


def _cells(line: str) -> int:
    return len(re.split(r"(?<!\\)\|", line)) - 2


@pytest.mark.parametrize("path", CASES, ids=lambda p: p.name)
def test_markdown_tables_are_well_formed(path):
    records = prepared(path)
    system, solution, verdicts = records.system, records.solution, list(records.verdicts)
    text = render(records, "markdown")
    tables = _tables(text)
    assert len(tables) >= 4  # matrix, node voltages, currents, verdicts
    for rows in tables:
        assert len(rows) >= 3
        assert re.fullmatch(r"\|(---\|)+", rows[1]), rows[1]
        widths = {_cells(r) for r in rows}
        assert len(widths) == 1, rows
        assert all(r.endswith("|") for r in rows)
    heads = [ln for ln in text.splitlines() if ln.startswith("## Step ")]
    assert len(heads) == len(system.steps)
    assert BENCH_NOTE in text
    m = system.matrix()
    matrix_table = [t for t in tables if t[0].startswith("| equation")][0]
    assert len(matrix_table) == 2 + len(m.rows) and _cells(matrix_table[0]) == len(m.cols) + 2


# ----------------------------------------------------------------------------- LaTeX
def _balanced(tex: str) -> None:
    stack = []
    for m in re.finditer(r"\\(begin|end)\{([^}]*)\}", tex):
        if m.group(1) == "begin":
            stack.append(m.group(2))
        else:
            assert stack and stack.pop() == m.group(2), m.group(0)
    assert not stack, stack
    depth = 0
    for m in re.finditer(r"\\\\|\\[{}]|[{}]", tex):
        tok = m.group(0)
        if tok == "{":
            depth += 1
        elif tok == "}":
            depth -= 1
            assert depth >= 0
    assert depth == 0


@pytest.mark.parametrize("path", CASES, ids=lambda p: p.name)
def test_latex_is_balanced(path):
    records = prepared(path)
    system, solution, verdicts = records.system, records.solution, list(records.verdicts)
    tex = render(records, "latex")
    _balanced(tex)
    assert tex.count(r"\begin{align*}") >= 4
    assert all(ord(ch) < 128 for ch in tex)
    assert tex.startswith(r"\documentclass") and tex.rstrip().endswith(r"\end{document}")


TEX = shutil.which("pdflatex") or shutil.which("lualatex") or shutil.which("xelatex")


@pytest.mark.skipif(TEX is None, reason="no TeX engine on PATH")
def test_latex_compiles(tmp_path):  # pragma: no cover - needs TeX
    records = prepared(AUDIT / "sallen_key.toml")
    system, solution, verdicts = records.system, records.solution, list(records.verdicts)
    (tmp_path / "r.tex").write_text(render(records, "latex"))
    done = subprocess.run([TEX, "-interaction=nonstopmode", "-halt-on-error", "r.tex"], cwd=tmp_path,
                          capture_output=True, text=True, timeout=120)
    assert done.returncode == 0, done.stdout[-2000:]


def test_every_format_carries_the_bench_note():
    records = prepared(AUDIT / "inverting.toml")
    system, solution, verdicts = records.system, records.solution, list(records.verdicts)
    for fmt in FORMATS:
        text = render(records, fmt)
        assert "confirm them on the bench" in text, fmt


def test_unknown_format():
    records = prepared(AUDIT / "inverting.toml")
    system, solution, verdicts = records.system, records.solution, list(records.verdicts)
    with pytest.raises(ExportError, match="unknown export format"):
        render(records, "pdf")


# ----------------------------------------------------------------------------- atomic writes
def test_write_atomic_refuses_to_replace_without_force(tmp_path):
    target = tmp_path / "r.md"
    write_atomic(target, "first\n")
    with pytest.raises(ExportError, match="already exists") as info:
        write_atomic(target, "second\n")
    assert "--force" in str(info.value)
    assert target.read_text() == "first\n"
    write_atomic(target, "second\n", force=True)
    assert target.read_text() == "second\n"
    assert sorted(os.listdir(tmp_path)) == ["r.md"]


def test_write_atomic_failure_leaves_nothing(tmp_path, monkeypatch):
    target = tmp_path / "r.md"
    target.write_text("old\n")

    def broken(fd):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(os, "fsync", broken)
    with pytest.raises(ExportError, match="No space left on device"):
        write_atomic(target, "new\n", force=True)
    assert target.read_text() == "old\n"
    assert sorted(os.listdir(tmp_path)) == ["r.md"]


def test_write_atomic_missing_directory(tmp_path):
    with pytest.raises(ExportError, match="does not exist"):
        write_atomic(tmp_path / "nope" / "r.md", "x")
    with pytest.raises(ExportError, match="is a directory"):
        write_atomic(tmp_path, "x")


def test_cli_export_to_file(tmp_path, capsys):
    out = tmp_path / "r.json"
    args = ["export", str(AUDIT / "summing.toml"), "--to", "json", "-o", str(out)]
    assert main(args) == 0
    data = json.loads(out.read_text())
    assert data["title"] == "Summing amplifier, hand derivation"
    assert main(args) == 2
    err = capsys.readouterr().err
    assert "already exists" in err and "--force" in err and len(err.strip().splitlines()) == 2  # wrote + error
    assert main(args + ["--force"]) == 0


def test_cli_export_stdout_with_set(capsys):
    assert main(["export", str(AUDIT / "inverting.toml"), "--to", "markdown", "--set", "R1=10k",
                 "--set", "R2=1M"]) == 0
    out = capsys.readouterr().out
    assert out.startswith("# Inverting amplifier") and "`-100 V/V`" in out


def test_cli_export_bad_format(capsys):
    assert main(["export", str(AUDIT / "inverting.toml"), "--to", "pdf"]) == 2


def test_export_does_not_import_textual():
    code = ("import sys; from nodeterm.cli import main; "
            f"rc = main(['export', {str(AUDIT / 'inverting.toml')!r}, '--to', 'latex']); "
            "assert 'textual' not in sys.modules, 'textual imported'; sys.exit(rc)")
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert done.returncode == 0, done.stderr
