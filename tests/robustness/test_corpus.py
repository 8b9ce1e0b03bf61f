"""Hostile and broken circuit files, each run through the real command line.

Every file in ``corpus/`` has one row in :data:`CASES`: the command, the exit
status it must end with and a fragment of the one-line message it must print.
A refusal must name the file, never show a Python traceback, and come before
the subprocess timeout (a hang guard, not a speed check: speed is measured in
benchmarks/).  Code-injection payloads run ``touch nodeterm_was_run`` if they
are ever executed; the test checks that the file never appears.

Cases too big or too odd to commit (a 50 MB file, 100,000 parts, a directory,
a missing or unreadable file, a device) are generated in a temporary folder.

The subprocesses run concurrently (a few at a time) in one fixture, so the
whole corpus costs about as much as its slowest few files.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import pytest

from nodeterm.engine.circuit.expr import MAX_DEPTH, MAX_EXPONENT, MAX_LENGTH, MAX_LITERAL_DIGITS, MAX_NUMBER_BITS
from nodeterm.engine.circuit.loader import MAX_FILE_BYTES, MAX_PARTS

CORPUS = Path(__file__).parent / "corpus"
HANG_GUARD = 120  # seconds; a refusal takes about two (interpreter and SymPy start-up)
MARKER = "nodeterm_was_run"

# file: (command, exit status, fragment of the message, or a tuple of acceptable fragments)
CASES: dict[str, tuple[str, int, str | tuple[str, ...]]] = {
    # code injection: rejected by the expression parser, never run
    "inject_import_call.toml": ("solve", 2, "part R2 value: unexpected character \"'\""),
    "inject_dunder_name.toml": ("solve", 2, "name '__import__' is not allowed"),
    "inject_builtins_name.toml": ("solve", 2, "name '__builtins__' is not allowed"),
    "inject_attribute.toml": ("solve", 2, "unexpected character '.'"),
    "inject_lambda.toml": ("solve", 2, "unexpected character ':'"),
    "inject_call_eval.toml": ("solve", 2, "eval() is not a function of the language"),
    "inject_call_exp.toml": ("solve", 2, "exp() is not a function of the language"),
    "inject_call_open.toml": ("solve", 2, "open() is not a function of the language"),
    "inject_comprehension.toml": ("solve", 2, "unexpected character '['"),
    "inject_semicolon.toml": ("solve", 2, "unexpected character ';'"),
    "inject_fstring.toml": ("solve", 2, "unexpected character \"'\""),
    "inject_find.toml": ("solve", 2, "[find] bad: unexpected character"),
    "inject_hand.toml": ("check", 2, "name '__class__' is not allowed"),
    "inject_node_name.toml": ("solve", 2, "node name 'out; rm -rf ~' is not valid"),
    "inject_part_kind.toml": ("solve", 2, "unknown kind '__import__'"),
    # powers and numbers: bounded by a clear limit, not a hang
    "power_tower.toml": ("solve", 2, f"exponent 10000000000 is too large (limit {MAX_EXPONENT})"),
    "huge_exponent.toml": ("solve", 2, f"exponent 100000 is too large (limit {MAX_EXPONENT})"),
    "huge_root.toml": ("solve", 2, f"(limit {MAX_EXPONENT})"),
    "huge_power_number.toml": ("solve", 2, "the number is too large to compute exactly"),
    "power_chain_numbers.toml": ("solve", 2, f"numbers of more than {MAX_NUMBER_BITS} bits"),
    "power_chain_degree.toml": ("solve", 2, f"degree 128 in its symbols (limit {MAX_EXPONENT})"),
    "literal_exponent_overflow.toml": ("solve", 2, "exponent 999999 in '1e999999' is out of range"),
    "literal_too_many_digits.toml": ("solve", 2, f"has more than {MAX_LITERAL_DIGITS} digits"),
    "toml_float_inf.toml": ("solve", 2, "parameter X is inf, which is not a finite number"),
    "toml_float_minus_inf.toml": ("solve", 2, "parameter X is -inf, which is not a finite number"),
    "toml_float_nan.toml": ("solve", 2, "parameter X is nan, which is not a finite number"),
    "toml_float_overflow.toml": ("solve", 2, "parameter X is inf, which is not a finite number"),
    "toml_integer_70_digits.toml": ("solve", 2, f"integer of more than {MAX_LITERAL_DIGITS} digits"),
    "toml_integer_5000_digits.toml": ("solve", 2, f"a number has more than {MAX_LITERAL_DIGITS} digits"),
    # nesting and length
    "parentheses_10000_deep.toml": ("solve", 2, f"characters long (limit {MAX_LENGTH})"),
    "parentheses_100_deep.toml": ("solve", 2, f"nested more than {MAX_DEPTH} levels deep"),
    "unary_minus_500_deep.toml": ("solve", 2, f"nested more than {MAX_DEPTH} levels deep"),
    "sqrt_80_deep.toml": ("solve", 2, f"nested more than {MAX_DEPTH} levels deep"),
    "expression_too_long.toml": ("solve", 2, f"characters long (limit {MAX_LENGTH})"),
    "toml_arrays_10000_deep.toml": ("solve", 2, "TOML nesting is too deep"),
    "toml_inline_tables_5000_deep.toml": ("solve", 2, "TOML nesting is too deep"),
    # the pure-Python TOML parser builds dotted tables in a loop, its compiled build recurses: either refusal
    "toml_dotted_table_5000_deep.toml": ("solve", 2, ("unknown top-level key 't'", "TOML nesting is too deep")),
    "long_bad_part_id.toml": ("solve", 2, "is not valid"),
    # encodings and empty files
    "non_utf8_byte.toml": ("solve", 2, "the file is not UTF-8 text (byte 0xff)"),
    "latin1_micro_sign.toml": ("solve", 2, "the file is not UTF-8 text (byte 0xb5)"),
    "utf16.toml": ("solve", 2, "the file is not UTF-8 text"),
    "binary_junk.toml": ("solve", 2, "the file is not UTF-8 text"),
    "nul_byte.toml": ("solve", 2, "TOML syntax error"),
    "empty.toml": ("solve", 2, "missing [parts] table"),
    "whitespace_only.toml": ("solve", 2, "missing [parts] table"),
    "comments_only.toml": ("solve", 2, "missing [parts] table"),
}

# Files that must load and solve: a byte-order mark and CRLF line endings are ordinary text files.
# The divider's ratio Rbot/(Rtop + Rbot) = 4.7k/14.7k = 47/147 (voltage divider, common practice, no source).
GOOD = ("byte_order_mark.toml", "crlf_line_endings.toml", "bom_and_crlf.toml")


def _run(args: list[str], cwd: Path) -> subprocess.CompletedProcess:
    """The real command line in a fresh interpreter; a hang fails the test instead of the suite."""
    try:
        return subprocess.run([sys.executable, "-m", "nodeterm", *args], cwd=cwd, capture_output=True,
                              text=True, timeout=HANG_GUARD, errors="replace")
    except subprocess.TimeoutExpired:
        pytest.fail(f"nodeterm {' '.join(a[:80] for a in args)} ran for more than {HANG_GUARD} s")


@pytest.fixture(scope="module")
def workdir(tmp_path_factory) -> Path:
    return tmp_path_factory.mktemp("corpus_cwd")


@pytest.fixture(scope="module")
def generated(tmp_path_factory) -> dict[str, tuple[list[str], int, str]]:
    """Cases built at test time: name -> (arguments, exit status, message fragment)."""
    d = tmp_path_factory.mktemp("generated")
    folder = d / "a_folder.toml"
    folder.mkdir()
    big = d / "fifty_megabytes.toml"
    with big.open("w") as f:  # a valid-looking file, 50 MB of comments after the parts
        f.write('[parts]\nR1 = { kind = "resistor", nodes = ["a", "gnd"], value = "1k" }\n')
        line = "# " + "x" * 1021 + "\n"
        for _ in range(50 * 1024):
            f.write(line)
    many = d / "hundred_thousand_parts.toml"  # under the byte limit, over the part limit
    many.write_text("[parts]\n" + "".join(f'a{i}={{kind="resistor",nodes=["a","b"],value=1}}\n'
                                          for i in range(100_000)))
    assert many.stat().st_size <= MAX_FILE_BYTES
    cases = {
        "directory": ([str(folder)], 2, "is a directory, not a circuit file"),
        "missing file": ([str(d / "no_such_circuit.toml")], 2, "no such file"),
        "50 MB file": ([str(big)], 2, f"more than the limit of {MAX_FILE_BYTES}"),
        "100,000 parts": ([str(many)], 2, f"100000 parts is more than the limit of {MAX_PARTS}"),
    }
    if Path("/dev/zero").exists():  # a device that reports size 0 and never ends
        cases["/dev/zero"] = (["/dev/zero"], 2, f"more than the limit of {MAX_FILE_BYTES} bytes")
    return cases


@pytest.fixture(scope="module")
def results(workdir, generated) -> dict[str, subprocess.CompletedProcess]:
    """Run every case at once, a few processes at a time."""
    jobs = {name: [command, str(CORPUS / name)] for name, (command, _, _) in CASES.items()}
    jobs.update({name: ["solve", str(CORPUS / name), "--known", "--json"] for name in GOOD})
    jobs.update({name: ["solve", *args] for name, (args, _, _) in generated.items()})
    jobs["inject_hand.toml solve"] = ["solve", str(CORPUS / "inject_hand.toml")]
    with ThreadPoolExecutor(max_workers=max(2, min(6, (os.cpu_count() or 2) * 2))) as pool:
        futures = {name: pool.submit(_run, args, workdir) for name, args in jobs.items()}
        return {name: f.result() for name, f in futures.items()}


def _check_refusal(proc: subprocess.CompletedProcess, status: int, fragment, file: str) -> None:
    out = proc.stderr + proc.stdout
    assert "Traceback" not in out, out[-2000:]
    assert proc.returncode == status, (proc.returncode, out[-2000:])
    fragments = (fragment,) if isinstance(fragment, str) else fragment
    assert any(f in out for f in fragments), f"expected {fragment!r} in:\n{out[-2000:]}"
    assert file in out, f"the message must name the file {file}:\n{out[-2000:]}"
    message = proc.stderr.strip()
    if proc.stderr and "\n" not in message:  # one line, readable even for a huge echoed name
        assert len(message) < 1000, message


def test_every_corpus_file_has_a_case():
    on_disk = {p.name for p in CORPUS.glob("*.toml")}
    assert on_disk == set(CASES) | set(GOOD)


@pytest.mark.parametrize("name", sorted(CASES))
def test_corpus_file_is_refused_with_its_message(name, results, workdir):
    _, status, fragment = CASES[name]
    _check_refusal(results[name], status, fragment, name)
    assert not (workdir / MARKER).exists(), "a payload in the file was executed"


@pytest.mark.parametrize("name", GOOD)
def test_bom_and_crlf_files_load_and_solve(name, results):
    proc = results[name]
    assert proc.returncode == 0 and "Traceback" not in proc.stderr, proc.stderr
    data = json.loads(proc.stdout)
    assert data["find"]["ratio"] == "47/147"
    assert data["node_voltages"]["in"] == "5"


@pytest.mark.parametrize("case", ["directory", "missing file", "50 MB file", "100,000 parts", "/dev/zero"])
def test_generated_file_is_refused(case, results, generated):
    if case not in generated:
        pytest.skip("no /dev/zero on this system")
    args, status, fragment = generated[case]
    _check_refusal(results[case], status, fragment, args[0])


def test_hand_payload_is_kept_as_text_by_solve_and_never_run(results, workdir):
    # solve does not read [hand]; check (above) rejects the same text with a message.
    proc = results["inject_hand.toml solve"]
    assert proc.returncode == 0 and "Traceback" not in proc.stderr, proc.stderr
    assert not (workdir / MARKER).exists()


def test_set_value_with_a_payload_is_refused(workdir):
    proc = _run(["solve", str(CORPUS / "crlf_line_endings.toml"),
                 "--set", f"Rtop=__import__('os').system('touch {MARKER}')"], workdir)
    assert proc.returncode == 2 and "Traceback" not in proc.stderr, proc.stderr
    assert "unexpected character" in proc.stderr
    assert not (workdir / MARKER).exists()


def test_unreadable_file_is_refused(tmp_path, monkeypatch, capsys):
    """chmod 000; as root the file stays readable, so the refusal is simulated at the open call."""
    from nodeterm.cli import main

    path = tmp_path / "locked.toml"
    path.write_bytes((CORPUS / "crlf_line_endings.toml").read_bytes())
    path.chmod(0)
    try:
        if os.geteuid() != 0:
            proc = _run(["solve", str(path)], tmp_path)
            assert proc.returncode == 2 and "Traceback" not in proc.stderr
            assert "permission denied" in proc.stderr and str(path) in proc.stderr
            return
        real_open = Path.open

        def refuse(self, *args, **kwargs):
            if self == path:
                raise PermissionError(13, "Permission denied", str(self))
            return real_open(self, *args, **kwargs)

        monkeypatch.setattr(Path, "open", refuse)
        assert main(["solve", str(path)]) == 2
        err = capsys.readouterr().err
        assert "permission denied reading the file" in err and str(path) in err
        assert "Traceback" not in err
    finally:
        path.chmod(0o644)
