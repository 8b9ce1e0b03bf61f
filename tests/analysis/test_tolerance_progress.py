"""`nodeterm tolerance` shows a progress line on stderr for a person at a terminal, and nothing in a pipe.

The terminal is a pseudo-terminal from the standard library's ``pty`` module; the pipe is subprocess's.
"""

from __future__ import annotations

import os
import pty
import subprocess
import sys

import pytest

from nodeterm.demos import demo_path

SOIL = demo_path("soil_moisture_probe.toml")
ARGS = [sys.executable, "-m", "nodeterm", "tolerance", SOIL, "--samples", "60000"]


@pytest.mark.skipif(not hasattr(pty, "openpty"), reason="needs a pseudo-terminal")
def test_progress_on_a_terminal():
    main, sub = pty.openpty()
    try:
        proc = subprocess.run(ARGS, stdout=subprocess.PIPE, stderr=sub, timeout=120)
    finally:
        os.close(sub)
    chunks = []
    while True:
        try:
            data = os.read(main, 4096)
        except OSError:  # EIO once the other end is closed and drained
            break
        if not data:
            break
        chunks.append(data)
    os.close(main)
    err = b"".join(chunks).decode()
    assert proc.returncode == 0
    # batches of 20000 samples: 33 %, 66 %, then 100 % and a newline; each rewritten in place with \r
    assert "\rMonte Carlo:  33 % (20000/60000 samples)" in err
    assert "\rMonte Carlo: 100 % (60000/60000 samples)" in err
    assert "H.dc: nominal 2.5, 60000 samples" in proc.stdout.decode()


def test_no_progress_in_a_pipe():
    proc = subprocess.run(ARGS, capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0
    assert proc.stderr == ""
    assert "H.dc: nominal 2.5, 60000 samples" in proc.stdout
