"""A random-key monkey: several hundred keys on three circuits; the workbench stays up and quits cleanly.

Fixed seeds, so a failure replays; the number of keys bounds the time. Any key a user can press is
fair game (pane keys, steps, substitution, undo, redo, reload, re-solve, cancel, dialogs, typing),
except that the quit keys come only at the end (and the command palette, which can quit). Checks: the app runs after every key, no internal
error was ever shown, the panes show one study (steps within range), and quitting exits with 0.
"""

from __future__ import annotations

import random

import pytest

from nodeterm.demos import demo_path
from nodeterm.ui.app import Workbench

SIZE = (80, 24)
KEYS = (list("1234567nbvkufscrmgwa?") + ["escape", "enter", "tab", "shift+tab", "up", "down", "left", "right",
                                          "ctrl+r", "pageup", "pagedown", "backspace"]
        + list("0.k=V_ R+*/-xy"))
WEIGHTS = [3] * 21 + [4, 3, 2, 1, 3, 3, 2, 2, 2, 1, 1, 1] + [1] * 14
CIRCUITS = (("kiln_preamp.toml", 11), ("vibration_lowpass.toml", 12), ("soil_moisture_probe.toml", 13))
PRESSES = 300


@pytest.mark.timeout(600)
@pytest.mark.parametrize("name,seed", CIRCUITS)
async def test_random_keys_never_break_the_workbench(name, seed, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)            # exports and CSV files typed by the monkey land here
    rng = random.Random(seed)
    app = Workbench(demo_path(name), poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause(0.3)
        for i in range(PRESSES):
            key = rng.choices(KEYS, WEIGHTS)[0]
            await pilot.press(key)
            if i % 25 == 0:
                await pilot.pause(0.05)    # let workers deliver now and then, as a user's pauses would
            assert app.is_running, f"stopped after key {i} ({key!r})"
            assert "internal error" not in app.last_error, f"after key {i} ({key!r}): {app.last_error}"
            steps = app.query_one("#steps-pane")
            if app.system is not None:
                assert 0 <= steps.index < len(app.system.steps)
        for _ in range(4):                 # close dialogs, leave boxes
            await pilot.press("escape")
        await pilot.press("ctrl+q")
        await pilot.pause()
        if app.is_running:                 # a typed claim would be lost: say yes
            await pilot.press("y")
            await pilot.pause()
    assert app.return_code == 0
