"""The workbench never dies: failing actions are reported and logged, long solves can be cancelled."""

from __future__ import annotations

import threading

from nodeterm.ui import solver_process
from nodeterm.ui.app import Workbench
from nodeterm.ui.steps_pane import StepsPane
from wb_helpers import settle, text_of

SIZE = (80, 24)


async def test_failing_action_is_reported_logged_and_state_kept(kiln, cache_home, monkeypatch):
    app = Workbench(str(kiln), poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        before = app.system

        def broken(self, delta):
            raise RuntimeError("simulated fault")
        monkeypatch.setattr(StepsPane, "go", broken)
        await pilot.press("n")
        await pilot.pause()
        assert app.is_running
        assert "internal error (RuntimeError: simulated fault)" in app.last_error
        assert app.system is before
        log = (cache_home / "nodeterm" / "workbench.log").read_text()
        assert "simulated fault" in log and "Traceback" in log
        monkeypatch.undo()
        await pilot.press("n")     # the user can go on
        assert "Step 2 of 5" in text_of(app, "#step-head")


async def test_long_solve_shows_busy_and_can_be_cancelled(kiln, monkeypatch):
    release = threading.Event()
    from nodeterm.engine import study as solve_module  # where the study calls the solver
    real = solve_module.solve_system

    def slow(system):
        release.wait(10)
        return real(system)
    monkeypatch.setattr(solve_module, "solve_system", slow)
    monkeypatch.setattr(solver_process, "IN_CHILD", False)  # the patched solve exists in this process only
    app = Workbench(str(kiln), poll=False)
    try:
        async with app.run_test(size=SIZE) as pilot:
            await pilot.pause(0.6)
            assert "BUSY solving" in text_of(app, "#status")
            await pilot.press("n")          # the interface still answers while solving
            assert "Step 2 of 5" in text_of(app, "#step-head")
            await pilot.press("c")
            assert "BUSY" not in text_of(app, "#status")
            assert "cancelled" in text_of(app, "#results-text")
            release.set()
            await pilot.pause(0.3)
            assert app.solution is None      # the late result of a cancelled solve is dropped
            await pilot.press("s")           # solve again
            await settle(pilot, app)
            assert app.solution is not None
    finally:
        release.set()


async def test_singular_circuit_reports_without_dying(tmp_path):
    path = tmp_path / "open_loop.toml"
    # an op-amp whose output feeds nothing back: the ideal rules leave V_out undetermined
    path.write_text('reference = "gnd"\n[parameters]\nVin = ""\nR1 = "1k"\n[parts]\n'
                    'Vs = { kind = "voltage_source", nodes = ["in", "gnd"], value = "Vin" }\n'
                    'R1 = { kind = "resistor", nodes = ["in", "x"], value = "R1" }\n'
                    'R2 = { kind = "resistor", nodes = ["x", "gnd"], value = "R1" }\n'
                    'RL = { kind = "resistor", nodes = ["out", "gnd"], value = "R1" }\n'
                    'U1 = { kind = "opamp", plus = "x", minus = "gnd", out = "out" }\n')
    app = Workbench(str(path), poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        assert app.is_running
        if app.solution is None:
            assert "no results" in text_of(app, "#results-text")


async def test_quit_during_a_long_solve_does_not_wait_for_it(kiln, monkeypatch):
    """Solves run on daemon threads, so quitting never hangs on an abandoned solve."""
    release = threading.Event()
    names = []

    def stuck(system):
        names.append((threading.current_thread().name, threading.current_thread().daemon))
        release.wait(30)
        raise RuntimeError("abandoned")
    monkeypatch.setattr("nodeterm.engine.study.solve_system", stuck)
    monkeypatch.setattr(solver_process, "IN_CHILD", False)  # the patched solve exists in this process only
    app = Workbench(str(kiln), poll=False)
    try:
        async with app.run_test(size=SIZE) as pilot:
            await pilot.pause(0.5)
            assert "BUSY" in text_of(app, "#status")
            await pilot.press("q")
            await pilot.pause()
        assert app.return_code == 0
        assert names == [("nodeterm-worker", True)]
    finally:
        release.set()


async def test_quit_asks_before_losing_a_typed_claim(kiln):
    app = Workbench(str(kiln), poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        await pilot.press("6", *"V_inv = 0", "ctrl+q")
        await pilot.pause()
        from nodeterm.ui.dialogs import ConfirmScreen
        assert isinstance(app.screen, ConfirmScreen)
        assert "claim 'V_inv = 0'" in text_of(app.screen, ".dialog-question")
        await pilot.press("escape")
        assert app.is_running and app.query_one("#claim-input").value == "V_inv = 0"
