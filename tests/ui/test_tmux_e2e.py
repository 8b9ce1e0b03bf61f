"""End to end: the real ``nodeterm`` command in tmux at 80x24 with NO_COLOR=1.

Starts the installed console script next to this Python, sends keys, reads the
screen with ``capture-pane``. Skipped only when tmux is not installed.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import time
import uuid
from pathlib import Path

import pytest

pytestmark = pytest.mark.skipif(shutil.which("tmux") is None, reason="tmux is not installed")

NODETERM = Path(sys.executable).with_name("nodeterm")


def tmux(*args: str) -> str:
    return subprocess.run(["tmux", *args], check=True, capture_output=True, text=True).stdout


def screen(name: str) -> str:
    return tmux("capture-pane", "-p", "-t", name)


def wait_for(name: str, text: str, seconds: float = 30.0) -> str:
    end = time.monotonic() + seconds
    shown = ""
    while time.monotonic() < end:
        shown = screen(name)
        if text in shown:
            return shown
        time.sleep(0.2)
    raise AssertionError(f"{text!r} never appeared; screen was:\n{shown}")


def test_demo_in_tmux_walk_step_and_quit(tmp_path):
    assert NODETERM.exists(), f"console script not found at {NODETERM}"
    name = f"nodeterm-e2e-{uuid.uuid4().hex[:8]}"
    status_file = tmp_path / "status"
    # Textual draws on stderr, so stderr stays on the terminal; a traceback would show on the screen.
    command = (f"NO_COLOR=1 XDG_CACHE_HOME={tmp_path} {NODETERM}; "
               f"echo $? > {status_file}; sleep 30")
    tmux("new-session", "-d", "-s", name, "-x", "80", "-y", "24", command)
    try:
        first = wait_for(name, "Step 1 of 5")
        assert "kiln_preamp.toml" in first
        wait_for(name, "symbolic")
        tmux("send-keys", "-t", name, "n", "n")
        kcl = wait_for(name, "Step 3 of 5")
        assert kcl != first
        assert "[KCL at inv]" in kcl
        assert "(V_inv - V_in)/Rin + (V_inv - V_out)/Rf = 0" in kcl
        for line in kcl.splitlines():
            assert len(line) <= 80
        tmux("send-keys", "-t", name, "5")
        wait_for(name, "Op-amp output currents")
        tmux("send-keys", "-t", name, "q")
        end = time.monotonic() + 15
        while not status_file.exists() and time.monotonic() < end:
            time.sleep(0.2)
        assert status_file.read_text().strip() == "0"
        assert "Traceback" not in screen(name)
    finally:
        subprocess.run(["tmux", "kill-session", "-t", name], capture_output=True)
