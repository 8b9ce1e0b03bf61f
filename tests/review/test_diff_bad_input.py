"""``nodeterm diff`` on bad input: one line on stderr naming the file, what is wrong and how to fix it;
exit status 2, nothing on stdout."""

from __future__ import annotations

import os
import subprocess

import pytest

from nodeterm.cli import main

GOOD = """[parts]
R1 = { kind = "resistor", nodes = ["a", "gnd"], value = "1k" }
R2 = { kind = "resistor", nodes = ["a", "b"], value = "1k" }
R3 = { kind = "resistor", nodes = ["b", "gnd"], value = "1k" }
"""


def _git(repo, *args):
    env = {**os.environ, "GIT_AUTHOR_NAME": "Test", "GIT_AUTHOR_EMAIL": "test@example.org",
           "GIT_COMMITTER_NAME": "Test", "GIT_COMMITTER_EMAIL": "test@example.org",
           "GIT_CONFIG_GLOBAL": os.devnull, "GIT_CONFIG_NOSYSTEM": "1"}
    subprocess.run(["git", "-C", str(repo), *args], check=True, capture_output=True, env=env)


@pytest.fixture
def isolated(tmp_path, monkeypatch):
    """tmp_path, with git told not to look for a repository above it."""
    monkeypatch.setenv("GIT_CEILING_DIRECTORIES", str(tmp_path.parent))
    return tmp_path


@pytest.fixture
def repo(isolated):
    root = isolated / "repo"
    root.mkdir()
    _git(root, "init", "-q")
    (root / "net.toml").write_text(GOOD)
    _git(root, "add", "net.toml")
    _git(root, "commit", "-q", "-m", "first")
    return root


def fails(capsys, *argv) -> str:
    code = main(list(argv))
    out, err = capsys.readouterr()
    assert code == 2, (out, err)
    assert out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in err
    return lines[0]


def test_file_not_in_a_repository(isolated, capsys):
    f = isolated / "loose.toml"
    f.write_text(GOOD)
    line = fails(capsys, "diff", str(f), "--since", "HEAD")
    assert line.startswith(f"nodeterm: {f}: error: the file is not in a git repository")
    assert "nodeterm diff OLD NEW" in line


def test_unknown_revision(repo, capsys):
    line = fails(capsys, "diff", str(repo / "net.toml"), "--since", "no-such-tag")
    assert "revision 'no-such-tag' does not exist" in line and "--since HEAD~1" in line


def test_revision_before_the_file_existed(repo, capsys):
    (repo / "later.toml").write_text(GOOD)
    _git(repo, "add", "later.toml")
    _git(repo, "commit", "-q", "-m", "second")
    line = fails(capsys, "diff", str(repo / "later.toml"), "--since", "HEAD~1")
    assert "did not exist at revision 'HEAD~1'" in line


def test_missing_working_file(repo, capsys):
    line = fails(capsys, "diff", str(repo / "gone.toml"), "--since", "HEAD")
    assert "gone.toml: error: no such file" in line


def test_missing_file_of_two(isolated, capsys):
    f = isolated / "a.toml"
    f.write_text(GOOD)
    line = fails(capsys, "diff", str(f), str(isolated / "b.toml"))
    assert "b.toml: error: no such file" in line


def test_option_looking_revision_is_refused(repo, capsys):
    line = fails(capsys, "diff", str(repo / "net.toml"), "--since=--output=/tmp/x")
    assert "is not a revision" in line


def test_broken_file_at_the_revision_names_file_rev_and_line(repo, capsys):
    (repo / "net.toml").write_text(GOOD.replace('value = "1k" }\nR3', 'value = "1k }\nR3'))
    _git(repo, "commit", "-q", "-am", "broken")
    (repo / "net.toml").write_text(GOOD)
    line = fails(capsys, "diff", str(repo / "net.toml"), "--since", "HEAD")
    assert f"{repo / 'net.toml'}@HEAD:3:" in line and "TOML syntax error" in line


def test_neither_new_nor_since(isolated, capsys):
    f = isolated / "a.toml"
    f.write_text(GOOD)
    assert "give NEW or --since REV" in fails(capsys, "diff", str(f))


def test_both_new_and_since(repo, capsys):
    f = repo / "net.toml"
    assert "not both" in fails(capsys, "diff", str(f), str(f), "--since", "HEAD")


def test_since_with_no_change_exits_0(repo, capsys):
    assert main(["diff", str(repo / "net.toml"), "--since", "HEAD", "--fail-on-result-change"]) == 0
    assert "No change in circuit terms." in capsys.readouterr().out
