"""The workbench's view of what a reload changed: after the file is edited and reloaded, key d shows the
same diff as ``nodeterm diff`` against the previous good state, and the changed equations are marked ~
in the Steps pane. Expected values: inverting amplifier gain -Rf/Rin; a second feedback resistor equal to
Rf in parallel halves the feedback resistance, so the gain halves (common practice, no source)."""

from __future__ import annotations

import os

from nodeterm.present import panes
from nodeterm.ui.app import Workbench
from nodeterm.ui.dialogs import DiffScreen
from nodeterm.ui.steps_pane import StepsPane
from wb_helpers import prompts, settle, text_of


def diff_text(app) -> str:
    return str(app.screen.query_one("#diff-text").render())

SIZE = (80, 24)


async def _wait_for_diff(pilot, app, seconds: float = 30.0) -> None:
    for _ in range(int(seconds / 0.1)):
        if getattr(app, "last_diff", None) is not None:
            return
        await pilot.pause(0.1)


async def test_reload_shows_the_diff_and_marks_changed_equations(kiln):
    app = Workbench(str(kiln), poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        await pilot.press("d")                       # nothing reloaded yet: says so
        assert isinstance(app.screen, DiffScreen)
        assert "No earlier state" in diff_text(app)
        await pilot.press("escape")
        text = kiln.read_text()
        assert 'R2 = { kind = "resistor", nodes = ["inv", "out"], value = "Rf" }' in text
        kiln.write_text(text.replace(
            'R2 = { kind = "resistor", nodes = ["inv", "out"], value = "Rf" }',
            'R2 = { kind = "resistor", nodes = ["inv", "out"], value = "Rf" }\n'
            'R3 = { kind = "resistor", nodes = ["inv", "out"], value = "Rf" }'))
        os.utime(kiln, ns=(5, 5))
        await pilot.press("r")
        await settle(pilot, app)
        await _wait_for_diff(pilot, app)
        assert app.last_diff is not None and not app.last_diff.is_empty
        await pilot.press("d")
        shown = diff_text(app)
        assert "R3" in shown and "gain" in shown
        await pilot.press("d")                       # d closes it again
        assert not isinstance(app.screen, DiffScreen)
        await pilot.press("2")
        while "KCL" not in text_of(app, "#step-head"):
            await pilot.press("n")
        assert any("[KCL at inv]" in p for p in prompts(app, "#equation-list"))
        pane = app.query_one(StepsPane)
        assert "KCL at inv" in pane.changed_labels
        pane.select_equation(None)                   # not the selected one: it shows the changed mark
        await pilot.pause()
        assert prompts(app, "#equation-list")[0].startswith(f"{panes.CHANGED} [KCL at inv]")


async def test_reload_without_changes_in_the_results_says_so(kiln):
    app = Workbench(str(kiln), poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        kiln.write_text(kiln.read_text().replace('title = ', '# a comment only\ntitle = ', 1))
        os.utime(kiln, ns=(6, 6))
        await pilot.press("r")
        await settle(pilot, app)
        await _wait_for_diff(pilot, app)
        assert app.last_diff is not None and app.last_diff.is_empty
        assert not app.query_one(StepsPane).changed_labels
