"""A failed export leaves no partial file and says why, through the real command path.

``nodeterm export FILE --to FORMAT -o PATH`` runs in-process (``nodeterm.cli.main``)
while the operating system is made to fail: a read-only folder (as root a
chmod does not stop writes, so the refusal is simulated where the temporary
file is created), a full disk at the data sync or at the final rename
(``OSError(ENOSPC)``). Each time: exit status 2, one line naming the path and
the cause, the old file untouched, and no temporary file left in the folder.
"""

from __future__ import annotations

import errno
import os
import tempfile
from importlib import resources

import pytest

from nodeterm.cli import main

DEMO = str(resources.files("nodeterm.circuits").joinpath("kiln_preamp.toml"))


def export(target, *extra: str) -> list[str]:
    return ["export", DEMO, "--to", "markdown", "-o", str(target), *extra]


def full_disk(*args, **kwargs):
    raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))


def refused(capsys, argv, cause: str) -> str:
    status = main(argv)
    out, err = capsys.readouterr()
    assert status == 2, (status, out, err)
    assert "Traceback" not in out + err
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert argv[argv.index("-o") + 1] in lines[0] and cause in lines[0], lines[0]
    return lines[0]


def test_export_works_before_we_break_it(tmp_path, capsys):
    target = tmp_path / "kiln.md"
    assert main(export(target)) == 0
    capsys.readouterr()
    assert target.read_text(encoding="utf-8").strip()
    assert os.listdir(tmp_path) == ["kiln.md"]


def test_read_only_folder(tmp_path, capsys, monkeypatch):
    folder = tmp_path / "ro"
    folder.mkdir()
    folder.chmod(0o555)
    try:
        if os.geteuid() == 0:  # root writes anyway: refuse where the file would be created
            def read_only(*args, **kwargs):
                raise OSError(errno.EROFS, os.strerror(errno.EROFS))
            monkeypatch.setattr(tempfile, "mkstemp", read_only)
            cause = os.strerror(errno.EROFS)
        else:
            cause = os.strerror(errno.EACCES)
        refused(capsys, export(folder / "kiln.md"), cause)
        assert os.listdir(folder) == []
    finally:
        folder.chmod(0o755)


@pytest.mark.parametrize("where", ["fsync", "replace"])
def test_disk_full_keeps_the_old_file_and_leaves_no_temporary(tmp_path, capsys, monkeypatch, where):
    target = tmp_path / "kiln.md"
    target.write_text("the previous export\n", encoding="utf-8")
    monkeypatch.setattr(os, where, full_disk)
    refused(capsys, export(target, "--force"), os.strerror(errno.ENOSPC))
    assert target.read_text(encoding="utf-8") == "the previous export\n"
    assert os.listdir(tmp_path) == ["kiln.md"]


def test_disk_full_on_a_new_file_leaves_nothing(tmp_path, capsys, monkeypatch):
    monkeypatch.setattr(os, "fsync", full_disk)
    refused(capsys, export(tmp_path / "kiln.md"), os.strerror(errno.ENOSPC))
    assert os.listdir(tmp_path) == []
