"""The workbench's first screen, printed by a child process before the engine is imported here.

What must hold (the design of :mod:`nodeterm.ui.first_screen`, no outside source):

- the first screen is what the workbench draws for the same file once its session is open, so the
  switch from one to the other changes nothing on screen (but for the op-amp feedback check's
  warnings, which come with the session);
- keys pressed before the session is open are neither lost nor run early: they run in order once it is;
- a file that does not load is refused with the same one-line message and exit status 2 as
  ``nodeterm solve`` gives, before any screen, and without a traceback;
- the command imports neither SymPy nor the engine before the first screen is drawn.
"""

from __future__ import annotations

import subprocess
import sys
import threading

import pytest

from nodeterm.demos import demo_path
from nodeterm.ui import first_screen
from nodeterm.ui.app import Workbench
from wb_helpers import ladder, prompts, settle, text_of

SIZE = (80, 24)
DEMOS = ("kiln_preamp.toml", "greenhouse_loop.toml", "vibration_lowpass.toml", "oxygen_cell_diffamp.toml",
         "fan_booster.toml", "strain_bridge_ina.toml")


def screen_lines(app) -> dict:
    """What the steps pane, the status and the warnings lines show."""
    return {"head": text_of(app, "#step-head"), "text": text_of(app, "#step-text"),
            "equations": prompts(app, "#equation-list"), "parts": prompts(app, "#parts-list"),
            "warnings": text_of(app, "#warnings"), "status": text_of(app, "#status")}


class HeldSession:
    """Holds the workbench's session in its worker thread until :meth:`release` (so a test sees the
    first screen as it is before the engine is ready)."""

    def __init__(self, monkeypatch) -> None:
        self.gate = threading.Event()
        original = Workbench._open_session

        def held(app, path):
            self.gate.wait(30)
            original(app, path)
        monkeypatch.setattr(Workbench, "_open_session", held)

    def release(self) -> None:
        self.gate.set()


def idle_status(text: str) -> str:
    return text.split(" | BUSY")[0]


@pytest.mark.parametrize("name", DEMOS)
async def test_first_screen_is_what_the_open_session_draws(name, monkeypatch):
    path = demo_path(name)
    first = first_screen.compute(path)
    app = Workbench(path, poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        session = screen_lines(app)
    held = HeldSession(monkeypatch)
    with_first = Workbench(path, poll=False, first=first)
    async with with_first.run_test(size=SIZE) as pilot:
        await pilot.pause(0.1)
        assert not with_first.session.loaded
        before = screen_lines(with_first)  # drawn from the child's text, before the session is open
        held.release()
        await settle(pilot, with_first)
        for _ in range(100):
            if with_first.session.loaded:
                break
            await pilot.pause(0.05)
        await settle(pilot, with_first)
        after = screen_lines(with_first)
    for key in ("head", "text", "equations", "parts", "warnings"):
        assert before[key] == session[key], key
        assert after[key] == session[key], key
    assert idle_status(before["status"]) == idle_status(session["status"])
    assert "step 1/" in before["status"]


async def test_keys_pressed_before_the_session_opens_run_in_order_once_it_is(monkeypatch):
    held = HeldSession(monkeypatch)
    path = demo_path("kiln_preamp.toml")
    app = Workbench(path, poll=False, first=first_screen.compute(path))
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause(0.2)
        assert "Step 1 of 5" in text_of(app, "#step-head")
        assert not app.session.loaded
        await pilot.press("n", "n", "k", "5")         # two steps on, every known value, results pane
        await pilot.pause(0.1)
        assert "Step 1 of 5" in text_of(app, "#step-head") and app.query_one("#panes").active == "steps"
        held.release()
        await settle(pilot, app)
        for _ in range(100):
            if app.query_one("#panes").active == "results":
                break
            await pilot.pause(0.05)
        await settle(pilot, app)
        assert app.query_one("#panes").active == "results"
        assert app.session.done() == ["all known values"]
        # the inverting preamp with its file values: gain = -Rf/Rin = -Gain = -100 (common practice)
        assert "gain = -100" in text_of(app, "#results-text")
        await pilot.press("u", "2")                   # and the keys work as usual afterwards
        assert app.session.done() == []


async def test_a_file_that_no_longer_loads_when_the_session_opens_is_reported_on_screen(tmp_path, monkeypatch):
    path = tmp_path / "stage.toml"
    path.write_text(open(demo_path("kiln_preamp.toml"), encoding="utf-8").read(), encoding="utf-8")
    first = first_screen.compute(str(path))
    path.write_text("[parts]\nR1 = { kind = \"resistor\", nodes = [\"a\", \"gnd\"], value = \"Rx\" }\n")
    app = Workbench(str(path), poll=False, first=first)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        for _ in range(100):
            if app.held is None:
                break
            await pilot.pause(0.05)
        assert app.held is None and not app.session.loaded
        assert "Rx" in text_of(app, "#problem")
        await pilot.press("n", "q")                   # the app stays up and quits cleanly


def run_command(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "nodeterm", *args], capture_output=True, text=True,
                          stdin=subprocess.DEVNULL, timeout=120)


@pytest.mark.parametrize("body", [
    "[parts]\nR1 = { kind = \"resistor\", nodes = [\"a\", \"gnd\"], value = \"2*Rx\" }\n",   # unknown name
    "[parts]\nR1 = { kind = \"resistor\", nodes = [\"a\", \"gnd\"], value = 0 }\n",          # zero resistor
    "[parts\n",                                                                              # TOML syntax
])
def test_a_bad_file_is_refused_before_the_screen_as_solve_refuses_it(tmp_path, body):
    path = tmp_path / "bad.toml"
    path.write_text(body, encoding="utf-8")
    workbench = run_command(str(path))
    solve = run_command("solve", str(path))
    assert workbench.returncode == 2 and solve.returncode == 2
    assert workbench.stdout == ""                          # no screen was drawn
    assert workbench.stderr == solve.stderr                # the same one-line message
    assert workbench.stderr.startswith(f"nodeterm: {path}:") and workbench.stderr.count("\n") == 1
    assert "Traceback" not in workbench.stderr


def test_a_missing_file_is_refused_with_exit_status_2(tmp_path):
    gone = run_command(str(tmp_path / "gone.toml"))
    assert gone.returncode == 2 and "no such file" in gone.stderr and "Traceback" not in gone.stderr


def test_without_the_child_process_the_command_loads_the_file_itself(tmp_path, monkeypatch, capsys):
    from nodeterm import cli
    path = tmp_path / "bad.toml"
    path.write_text("[parts]\nR1 = { kind = \"resistor\", nodes = [\"a\", \"gnd\"], value = \"2*Rx\" }\n")
    monkeypatch.setattr(first_screen, "start", lambda p, w=None: None)  # no process can be started
    assert cli.main([str(path)]) == 2
    err = capsys.readouterr().err
    assert err.startswith(f"nodeterm: {path}:2:") and "Rx" in err


def test_a_child_that_fails_gives_no_first_screen_and_is_logged(cache_home):
    proc = subprocess.Popen([sys.executable, "-c", "import sys; sys.stderr.write('boom'); sys.exit(3)"],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    assert first_screen.Pending(proc).result() is None
    log = (cache_home / "nodeterm" / "workbench.log").read_text()
    assert "exit status 3" in log and "boom" in log


def test_the_child_prints_the_first_screen_of_the_bundled_demo():
    got = first_screen.start(None).result()
    assert got == first_screen.compute(demo_path())
    assert got.steps == 5 and got.step_head.startswith("Step 1 of 5")


def test_the_command_imports_no_sympy_before_the_first_screen():
    """Everything the parent imports before drawing the first screen (the command line, the workbench,
    the first screen) stays clear of SymPy, NumPy and the engine's heavy modules."""
    code = ("import sys\n"
            "import nodeterm.cli, nodeterm.ui.app, nodeterm.ui.first_screen, nodeterm.present.panes\n"
            "heavy = [m for m in ('sympy', 'numpy', 'flint', 'nodeterm.engine.circuit.loader',\n"
            "                     'nodeterm.engine.study', 'nodeterm.present.format') if m in sys.modules]\n"
            "print(heavy)\n"
            "sys.exit(1 if heavy else 0)\n")
    run = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert run.returncode == 0, run.stdout + run.stderr


def test_every_subcommand_is_known_without_importing_it():
    from nodeterm import cli
    assert set(cli.COMMAND_NAMES) == set(cli.commands())



class NoAnswer:
    """A first-screen process that failed (its result is None: the workbench loads the file itself)."""

    def result(self):
        return None


async def test_the_workbench_waits_for_the_first_screen_process_before_its_screen():
    path = demo_path("kiln_preamp.toml")
    app = Workbench(path, poll=False, pending=first_screen.start(path))
    async with app.run_test(size=SIZE) as pilot:
        assert app.first is not None or app.session.loaded      # the answer came before the first frame
        assert "Step 1 of 5" in text_of(app, "#step-head")
        await pilot.press("n")                                  # held until the session is open, then run
        for _ in range(100):
            if "Step 2 of 5" in text_of(app, "#step-head"):
                break
            await pilot.pause(0.05)
        assert "Step 2 of 5" in text_of(app, "#step-head")


@pytest.mark.parametrize("pending", ["refusing", "failed"])
def test_a_refused_file_ends_the_workbench_before_the_terminal_is_touched(tmp_path, pending, capfd):
    from nodeterm.engine.errors import InputError
    from nodeterm.ui.app import run
    path = tmp_path / "bad.toml"
    path.write_text("[parts]\nR1 = { kind = \"resistor\", nodes = [\"a\", \"gnd\"], value = \"2*Rx\" }\n")
    waiting = first_screen.start(str(path)) if pending == "refusing" else NoAnswer()
    with pytest.raises(InputError) as refused:
        run(str(path), pending=waiting)
    assert str(refused.value).startswith(f"{path}:2:") and "Rx" in str(refused.value)
    assert capfd.readouterr() == ("", "")   # not a byte to the terminal: no screen was started


async def test_without_a_first_screen_the_workbench_opens_the_file_as_before(kiln):
    app = Workbench(str(kiln), poll=False, pending=NoAnswer())
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        assert app.first is None and app.held is None and app.session.loaded
        await pilot.press("n")
        assert "Step 2 of 5" in text_of(app, "#step-head")


SWAPPED = """\
title = "Op-amp inputs swapped by mistake"
reference = "gnd"
[parameters]
Vin = ""
R1 = "10k"
R2 = "100k"
[parts]
Vs = { kind = "voltage_source", nodes = ["in", "gnd"], value = "Vin" }
R1 = { kind = "resistor", nodes = ["in", "p"], value = "R1" }
R2 = { kind = "resistor", nodes = ["p", "out"], value = "R2" }
U1 = { kind = "opamp", plus = "p", minus = "gnd", out = "out" }
"""


async def test_the_feedback_warning_comes_with_the_session(tmp_path, monkeypatch):
    # The output fed back to the + input is positive feedback: V+ = V- does not hold (common practice,
    # no source). The first screen leaves that check out; the open session shows its warning.
    path = tmp_path / "swapped.toml"
    path.write_text(SWAPPED, encoding="utf-8")
    first = first_screen.compute(str(path))
    assert "no negative feedback" not in first.warnings
    held = HeldSession(monkeypatch)
    app = Workbench(str(path), poll=False, first=first)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause(0.1)
        assert "Step 1 of" in text_of(app, "#step-head") and "no negative feedback" not in text_of(app, "#warnings")
        held.release()
        for _ in range(100):
            if app.session.loaded:
                break
            await pilot.pause(0.05)
        await settle(pilot, app)
        assert "op-amp U1 has no negative feedback" in text_of(app, "#warnings")


def test_the_first_screen_process_needs_no_numpy():
    code = ("import sys\n"
            "from nodeterm.demos import demo_path\n"
            "from nodeterm.ui.first_screen import compute\n"
            "compute(demo_path())\n"
            "sys.exit(1 if 'numpy' in sys.modules or 'textual' in sys.modules else 0)\n")
    run = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert run.returncode == 0, run.stdout + run.stderr


LADDER_5 = ladder(5)


def results_pane_text(app) -> str:
    return text_of(app, "#results-text")


async def _wait(pilot, cond, seconds: float = 30.0) -> bool:
    for _ in range(int(seconds / 0.05)):
        if cond():
            return True
        await pilot.pause(0.05)
    return cond()


async def test_results_printed_with_the_first_screen_show_before_the_session_opens(tmp_path, monkeypatch):
    # A large solution's Results text comes from the first screen's process; the results key pressed
    # first shows it before the session is open, and it is the text the solver process gives
    # (the reference: nodeterm.ui.solver_process._results on the opened file's study).
    from nodeterm.engine.study import Study
    from nodeterm.ui.solver_process import _results
    path = tmp_path / "ladder5.toml"
    path.write_text(LADDER_5)
    gate = HeldSession(monkeypatch)
    app = Workbench(str(path), poll=False, pending=first_screen.start(str(path), 78))
    async with app.run_test(size=SIZE) as pilot:
        await pilot.press("5")
        assert await _wait(pilot, lambda: "V_n5" in results_pane_text(app))
        assert not app.session.loaded                      # shown before the session is open
        early = results_pane_text(app)
        gate.release()
        await settle(pilot, app, 60)
        assert app.session.loaded and not app.held
        want = _results(Study.from_file(str(path)), False, 78)
        assert app.entry.texts[("results", False, 78)] == want   # the session kept them
        assert results_pane_text(app) == early                 # and the pane did not change


async def test_a_key_before_the_results_key_keeps_its_order(tmp_path, monkeypatch):
    # n then 5 before the session is open: nothing runs early; n moves to step 2, then 5 shows the results.
    path = tmp_path / "ladder5.toml"
    path.write_text(LADDER_5)
    gate = HeldSession(monkeypatch)
    app = Workbench(str(path), poll=False, pending=first_screen.start(str(path), 78))
    async with app.run_test(size=SIZE) as pilot:
        await pilot.press("n", "5")
        await pilot.pause(1.0)
        assert "Step 1 of" in text_of(app, "#step-head") and "V_n5" not in results_pane_text(app)
        gate.release()
        await settle(pilot, app, 60)
        assert await _wait(pilot, lambda: "V_n5" in results_pane_text(app))
        assert "Step 2 of" in text_of(app, "#step-head")
