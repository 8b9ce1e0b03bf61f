"""Random mutations of the bundled demo circuits end in a result or a one-line refusal, never a traceback.

Hypothesis takes a demo file and applies one to three mutations: a line
deleted or duplicated, a name changed (to another name of the file, a new
name, or junk), the text truncated, junk bytes (possibly not UTF-8) inserted.
``nodeterm solve`` then runs in-process through ``nodeterm.cli.main``: it must
return 0 (the mutation left a valid circuit) or 2 with one line on stderr that
names the file. Any exception escaping ``main`` fails the test with its
traceback (``NODETERM_MUTATIONS=2000`` runs a longer search locally). A few fixed mutations also go through the real command line in a
subprocess, to check the exit status and stderr of the installed entry point.
"""

from __future__ import annotations

import os
import re
import subprocess
import sys
from importlib import resources
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from nodeterm.cli import main

DEMOS = sorted(p.name for p in resources.files("nodeterm.circuits").iterdir() if p.name.endswith(".toml"))
NAME = re.compile(rb"[A-Za-z_][A-Za-z0-9_]*")


def demo_bytes(name: str) -> bytes:
    return resources.files("nodeterm.circuits").joinpath(name).read_bytes()


@st.composite
def mutated(draw) -> tuple[str, bytes, list[str]]:
    name = draw(st.sampled_from(DEMOS))
    data = demo_bytes(name)
    done: list[str] = []
    for _ in range(draw(st.integers(1, 3))):
        lines = data.split(b"\n")
        what = draw(st.sampled_from(["delete", "duplicate", "rename", "truncate", "junk"]))
        if what == "delete" and len(lines) > 1:
            i = draw(st.integers(0, len(lines) - 1))
            done.append(f"delete line {i + 1}")
            del lines[i]
            data = b"\n".join(lines)
        elif what == "duplicate":
            i = draw(st.integers(0, len(lines) - 1))
            j = draw(st.integers(0, len(lines)))
            done.append(f"copy line {i + 1} before line {j + 1}")
            lines.insert(j, lines[i])
            data = b"\n".join(lines)
        elif what == "rename":
            names = sorted(set(NAME.findall(data)))
            if not names:
                continue
            old = draw(st.sampled_from(names))
            new = draw(st.one_of(st.sampled_from(names), st.from_regex(rb"\A[A-Za-z_][A-Za-z0-9_]{0,6}\Z"),
                                 st.binary(min_size=0, max_size=6)))
            every = draw(st.booleans())
            done.append(f"rename {old!r} -> {new!r} ({'all' if every else 'first'})")
            data = data.replace(old, new) if every else data.replace(old, new, 1)
        elif what == "truncate":
            cut = draw(st.integers(0, len(data)))
            done.append(f"truncate at byte {cut}")
            data = data[:cut]
        else:
            at = draw(st.integers(0, len(data)))
            junk = draw(st.one_of(st.binary(min_size=1, max_size=12),
                                  st.sampled_from([b"\xff\xfe", b"\x00", b"\xef\xbb\xbf", b"\r", b"[", b"{", b'"',
                                                   b"=", b"^99", b"__import__", b"\\u0000", b"1e999"])))
            done.append(f"insert {junk!r} at byte {at}")
            data = data[:at] + junk + data[at:]
    return name, data, done


@pytest.fixture(scope="module")
def folder(tmp_path_factory) -> Path:
    return tmp_path_factory.mktemp("mutations")


@settings(max_examples=int(os.environ.get("NODETERM_MUTATIONS", "150")), deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture,
                                                                  HealthCheck.too_slow])
@given(mutated())
def test_mutated_demo_solves_or_is_refused_in_one_line(folder, capsys, case):
    name, data, done = case
    path = folder / f"mutated_{name}"
    path.write_bytes(data)
    status = main(["solve", str(path)])
    out, err = capsys.readouterr()
    assert status in (0, 2), (status, done, err)
    assert "Traceback" not in out + err, done
    if status == 2:
        message = err.strip()
        assert message.startswith(f"nodeterm: {path}"), (done, message)
        assert "\n" not in message, (done, message)
        assert ": error: " in message, (done, message)
    else:
        assert "Node voltages" in out or "node voltages" in out.lower(), (done, out[:500])


FIXED = {
    "truncated": lambda b: b[: len(b) // 2],
    "line deleted": lambda b: b"\n".join(ln for ln in b.split(b"\n") if b"[parts]" not in ln),
    "junk bytes": lambda b: b[:40] + b"\xff\x00\xfe" + b[40:],
    "duplicated part": lambda b: b + b"\n" + next(ln for ln in b.split(b"\n") if b"kind" in ln) + b"\n",
}


@pytest.mark.parametrize("mutation", sorted(FIXED))
def test_fixed_mutation_through_the_real_command_line(mutation, tmp_path):
    path = tmp_path / "kiln.toml"
    path.write_bytes(FIXED[mutation](demo_bytes("kiln_preamp.toml")))
    proc = subprocess.run([sys.executable, "-m", "nodeterm", "solve", str(path)], capture_output=True,
                          text=True, errors="replace", timeout=120)
    assert proc.returncode == 2, proc.stderr
    assert "Traceback" not in proc.stderr
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith(f"nodeterm: {path}"), proc.stderr
