"""A circuit file as committed at a git revision, read with the git command line.

``git show REV:./NAME`` run in the file's folder gives the committed text; it is
parsed like a file on disk (same limits, same one-line errors), labelled
``PATH@REV``. Every failure is an :class:`InputError`: git missing, the file not
in a repository, a revision that does not exist, a file that did not exist at
that revision.
"""

from __future__ import annotations

import os
import subprocess
from pathlib import Path

from nodeterm.engine.circuit.loader import MAX_FILE_BYTES, parse_circuit
from nodeterm.engine.circuit.model import Circuit
from nodeterm.engine.errors import InputError

GIT_TIMEOUT = 30.0
"""Seconds a git command may take before it is given up."""


def _git(folder: Path, *args: str) -> subprocess.CompletedProcess:
    env = {**os.environ, "GIT_TERMINAL_PROMPT": "0", "LC_ALL": "C"}
    try:
        return subprocess.run(["git", "-C", str(folder), *args], capture_output=True, env=env,
                              stdin=subprocess.DEVNULL, timeout=GIT_TIMEOUT, check=False)
    except FileNotFoundError:
        raise InputError("git is not installed (the git command was not found)",
                         hint="install git, or compare two files: nodeterm diff OLD NEW") from None
    except subprocess.TimeoutExpired:
        raise InputError(f"git did not answer within {GIT_TIMEOUT:g} s", hint="check the repository") from None


def _first_line(data: bytes) -> str:
    text = data.decode("utf-8", "replace").strip()
    return text.splitlines()[0] if text else ""


def read_revision(path: str, rev: str) -> tuple[str, str]:
    """The text of ``path`` as committed at ``rev``, and its label ``path@rev``.

    Raises:
        InputError: ``path`` does not exist, is not in a git repository, ``rev`` is not a
            revision, or ``path`` did not exist at ``rev``.
    """
    label = f"{path}@{rev}"
    p = Path(path)
    if not p.is_file():
        raise InputError("no such file" if not p.exists() else "not a file",
                         hint="give the path of the circuit file in your working copy", file=path)
    if not rev or rev.startswith("-") or any(c in rev for c in "\n\0"):
        raise InputError(f"{rev!r} is not a revision", hint="give a commit, branch or tag, e.g. --since HEAD~1",
                         file=path)
    folder = p.resolve().parent
    top = _git(folder, "rev-parse", "--show-toplevel")
    if top.returncode != 0:
        raise InputError("the file is not in a git repository, so --since has no revision to read",
                         hint="commit it to a repository, or compare two files: nodeterm diff OLD NEW", file=path)
    commit = _git(folder, "rev-parse", "--verify", "--quiet", f"{rev}^{{commit}}")
    if commit.returncode != 0:
        raise InputError(f"revision {rev!r} does not exist in the repository",
                         hint="give a commit, branch or tag that 'git log' shows, e.g. --since HEAD~1", file=path)
    name = p.resolve().name
    shown = _git(folder, "show", f"{rev}:./{name}")
    if shown.returncode != 0:
        raise InputError(f"the file did not exist at revision {rev!r} ({_first_line(shown.stderr) or 'git show failed'})",
                         hint="give a revision where the file was committed ('git log -- FILE' lists them)",
                         file=path)
    data = shown.stdout
    if len(data) > MAX_FILE_BYTES:
        raise InputError(f"the file at {rev} is {len(data)} bytes, more than the limit of {MAX_FILE_BYTES}",
                         file=label)
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as err:
        raise InputError(f"the file at {rev} is not UTF-8 text (byte 0x{data[err.start]:02x})",
                         hint="save the file as UTF-8", file=label,
                         line=data[:err.start].count(b"\n") + 1) from None
    return text, label


def load_revision(path: str, rev: str) -> Circuit:
    """The circuit of ``path`` as committed at ``rev`` (errors name ``path@rev`` and the line)."""
    text, label = read_revision(path, rev)
    return parse_circuit(text, label)
