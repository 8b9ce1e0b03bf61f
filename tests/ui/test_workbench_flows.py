"""Pilot tests of the workbench flows: open, walk the steps, substitute, matrix, results, reload, export,
help, quit. Expected circuit values come from the inverting-amplifier formulas (common practice, no
source: gain -Rf/Rin, input current Vin/Rin, which the op-amp output sinks when unloaded)."""

from __future__ import annotations

import json
import os

import sympy

from nodeterm.ui.app import Workbench
from nodeterm.present.export import EXTENSIONS, FORMATS
from nodeterm.ui.dialogs import ConfirmScreen, ExportScreen, HelpScreen, PathScreen, ValueScreen
from nodeterm.ui.keys import KEYS
from wb_helpers import ladder, prompts, settle, text_of

SIZE = (80, 24)


async def test_opens_bundled_demo_and_shows_steps():
    app = Workbench(None, poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        assert app.session.path.endswith("kiln_preamp.toml")
        assert "kiln_preamp.toml" in text_of(app, "#status")
        assert "Step 1 of 5" in text_of(app, "#step-head")
        assert app.query_one("#panes").active == "steps"


async def test_step_forward_and_back(kiln):
    app = Workbench(str(kiln), poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        await pilot.press("n", "n")
        assert "Step 3 of 5: KCL" in text_of(app, "#step-head")
        eqs = prompts(app, "#equation-list")
        assert eqs and "[KCL at inv]" in eqs[0]
        step = text_of(app, "#step-text")
        assert "No KCL at out (output of U1)" in step
        assert step.count("out (output of U1)") == 1     # said once
        await pilot.press("b")
        assert "Step 2 of 5" in text_of(app, "#step-head")
        await pilot.press("b", "b")  # already at the first step: stays, says so
        assert "Step 1 of 5" in text_of(app, "#step-head")
        for _ in range(10):
            await pilot.press("n")
        assert "Step 5 of 5" in text_of(app, "#step-head")


async def test_equation_marks_its_parts_and_part_marks_its_terms(kiln):
    app = Workbench(str(kiln), poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        await pilot.press("n", "n")
        parts = prompts(app, "#parts-list")
        marked = [p.split()[1] for p in parts if p.startswith("*")]
        assert marked == ["R1", "R2"]  # the KCL at inv holds R1 and R2, not TC or U1
        app.query_one("#parts-list").focus()
        await pilot.pause()
        await pilot.press("down")   # TC -> R1
        await pilot.pause()
        assert app.query_one("#steps-pane").selected_part == "R1"
        eq = prompts(app, "#equation-list")[0]
        assert "* R1: (V_inv - V_in)/Rin" in eq
        assert "* R2" not in eq
        assert any(p.startswith("▶ R1") for p in prompts(app, "#parts-list"))


async def test_substitute_bad_value_and_undo(kiln):
    app = Workbench(str(kiln), poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        await pilot.press("3")
        assert app.query_one("#panes").active == "values"
        await pilot.press("down", "down")     # Vtc -> Gain -> Rin
        assert app.query_one("#values-pane").selected == "Rin"
        await pilot.press("enter")            # the value dialog, on the highlighted parameter
        await pilot.pause()
        assert isinstance(app.screen, ValueScreen)
        assert text_of(app.screen, "#value-label") == "Rin ="
        await pilot.press(*"10kk", "enter")    # bad value: explained in the dialog, nothing changes
        assert text_of(app.screen, "#value-error").startswith("! ")
        assert isinstance(app.screen, ValueScreen)
        assert app.system.values == {}
        assert app.is_running
        app.screen.query_one("#value-input").value = ""
        await pilot.press(*"4.7k", "enter")
        await settle(pilot, app)
        assert not isinstance(app.screen, ValueScreen)
        assert app.system.values == {"Rin": sympy.Integer(4700)}
        assert "Substitute Rin" in text_of(app, "#step-head")   # the new step is shown
        assert app.focused.id == "param-list"   # keys work again after applying
        await pilot.press("u")
        await settle(pilot, app)
        assert app.system.values == {}
        await pilot.press("u")   # nothing left: a message, no change
        assert app.system.values == {}
        assert "nothing to undo" in app.last_message


async def test_substitute_all_known_then_results_numeric(kiln):
    app = Workbench(str(kiln), poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        await pilot.press("k")
        await settle(pilot, app)
        assert set(app.system.values) == {"Gain", "Rin", "Rf"}
        assert app.substitute("Vtc", "48.8m")     # type K near 1200 C (type K table, from memory)
        await settle(pilot, app)
        await pilot.press("5")
        text = text_of(app, "#results-text")
        # inverting amplifier: V_out = -Rf/Rin * Vtc = -100 * 48.8 mV
        assert "V_out = -122/25 (≈ -4.88 V)" in text
        # the op-amp output sinks the input current Vtc/Rin = 4.88 uA
        assert "Op-amp output currents" in text
        assert "I_U1 = -61/12500000 (≈ -4.88 µA)" in text
        assert "Source currents" in text and "I_TC" in text
        assert "gain = -100" in text


async def test_matrix_and_symbolic_results_shown(kiln):
    app = Workbench(str(kiln), poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        await pilot.press("4")
        matrix = text_of(app, "#matrix-text")
        assert "KCL at inv" in matrix and "V_out" in matrix and "| b" in matrix
        await pilot.press("5")
        text = text_of(app, "#results-text")
        Rf, Rin, Vtc = sympy.symbols("Rf Rin Vtc")
        assert sympy.simplify(app.solution.find["gain"] + Rf / Rin) == 0
        assert "gain = -Rf/Rin" in text
        assert "I_U1 = -Vtc/Rin" in text


async def test_reload_broken_file_keeps_last_good_state(loaded):
    app = Workbench(str(loaded), poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        good = app.system
        assert not app.query_one("#problem").display
        loaded.write_text(loaded.read_text().replace('value = "R2" }', 'value = "R2"'))  # broken TOML
        os.utime(loaded, ns=(1, 1))
        app.poll_file()
        await pilot.pause()
        assert app.system is good
        assert app.query_one("#problem").display
        assert "loaded.toml" in text_of(app, "#problem")
        assert prompts(app, "#parts-list")   # last good circuit still on screen
        app.poll_file()                      # same broken file: not reported again
        loaded.write_text(loaded.read_text().replace('value = "R2"\n', 'value = "R2" }\n')
                          .replace('RL = "2k"', 'RL = "1k"'))
        os.utime(loaded, ns=(2, 2))
        app.poll_file()
        await settle(pilot, app)
        assert not app.query_one("#problem").display
        assert app.system.circuit.parameters["RL"].text == "1k"


async def test_reload_replays_substitutions(loaded):
    app = Workbench(str(loaded), poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        assert app.substitute("R1", "10k")
        await pilot.press("r")
        await settle(pilot, app)
        assert app.system.values == {"R1": 10000}


async def test_open_another_file_and_bad_path(kiln, loaded, tmp_path):
    app = Workbench(str(kiln), poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        await pilot.press("o")
        assert isinstance(app.screen, PathScreen)
        field = app.screen.query_one("#path-input")
        field.value = str(tmp_path / "missing.toml")
        await pilot.press("enter")
        assert isinstance(app.screen, PathScreen)       # stays open, says why
        assert "missing.toml" in text_of(app.screen, "#path-error")
        assert app.session.path == str(kiln)
        field.value = str(loaded)
        await pilot.press("enter")
        await settle(pilot, app)
        assert not isinstance(app.screen, PathScreen)
        assert app.session.path == str(loaded)
        assert "loaded.toml" in text_of(app, "#status")


async def test_export_writes_file_and_asks_before_replacing(kiln, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    app = Workbench(str(kiln), poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        await pilot.press("e")
        assert isinstance(app.screen, ExportScreen)
        target = tmp_path / "kiln-equations.txt"
        assert app.screen.query_one("#path-input").value == str(target)
        await pilot.press("enter")
        await pilot.pause()
        text = target.read_text()
        assert "[KCL at inv]" in text and "Matrix form A x = b" in text and "I_U1 = -Vtc/Rin" in text
        target.write_text("old")
        await pilot.press("e", "enter")
        await pilot.pause()
        assert isinstance(app.screen, ConfirmScreen)
        await pilot.press("n")
        assert target.read_text() == "old"
        await pilot.press("e", "enter")
        await pilot.pause()
        await pilot.press("y")
        await pilot.pause()
        assert "[KCL at inv]" in target.read_text()
        assert [p.name for p in tmp_path.iterdir() if p.name.endswith(".tmp")] == []


async def test_export_every_format(kiln, tmp_path):
    app = Workbench(str(kiln), poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        for fmt in FORMATS:
            path = tmp_path / f"out-{fmt}{EXTENSIONS[fmt]}"
            assert app.export(str(path), fmt), app.last_error
            text = path.read_text(encoding="utf-8")
            assert "KCL at inv" in text
        data = json.loads((tmp_path / "out-json.json").read_text())
        assert data["title"].startswith("Kiln")
        (tmp_path / "out-ascii.txt").read_bytes().decode("ascii")   # strictly 7-bit


async def test_export_failure_is_reported_and_leaves_nothing(kiln, tmp_path):
    app = Workbench(str(kiln), poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        assert not app.export(str(tmp_path / "no-such-folder" / "x.txt"))
        assert "nothing was written" in app.last_error
        assert app.is_running
        assert not (tmp_path / "no-such-folder").exists()


async def test_claims_typed_and_from_file(kiln):
    app = Workbench(str(kiln), poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        await pilot.pause(0.5)
        await pilot.press("6")
        text = text_of(app, "#claims-text")
        assert "4 claims: 4 hold" in text     # the demo's [hand] derivation is right
        # a sign error on R2's term (the classic slip): the audit must say it fails
        await pilot.press(*"(V_inv - V_in)/Rin - (V_inv - V_out)/Rf = 0", "enter")
        for _ in range(100):
            await pilot.pause(0.05)
            if "5 claims" in text_of(app, "#claims-text"):
                break
        text = text_of(app, "#claims-text")
        assert "typed1 [FAILS]" in text and "R2" in text
        assert app.focused.id == "claim-input"     # the box keeps the keys for the next claim
        await pilot.press(*"gain = -Rf/Rin", "enter")   # a result claim under a [find] name
        for _ in range(100):
            await pilot.pause(0.05)
            if "6 claims" in text_of(app, "#claims-text"):
                break
        assert "6 claims: 5 hold, 1 fails" in text_of(app, "#claims-text")
        await pilot.press(*"V_out", "enter")   # no '=': explained inline
        assert text_of(app, "#claim-error").startswith("! a claim needs '='")


async def test_help_lists_every_key_and_palette_has_every_action():
    app = Workbench(None, poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        await pilot.press("question_mark")
        assert isinstance(app.screen, HelpScreen)
        text = text_of(app.screen, "#help-text")
        for key in KEYS:
            assert key.title in text
        await pilot.press("escape")
        assert not isinstance(app.screen, HelpScreen)
        titles = {c.title.replace("\\[", "[") for c in app.get_system_commands(app.screen)}
        assert {k.title for k in KEYS if k.action != "leave"} <= titles


async def test_quit_exits_with_status_zero():
    app = Workbench(None, poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        await pilot.press("q")
        await pilot.pause()
    assert app.return_code == 0


async def test_two_d_form_toggle(kiln):
    app = Workbench(str(kiln), poll=False)
    async with app.run_test(size=(100, 30)) as pilot:
        await settle(pilot, app)
        await pilot.press("n", "n", "f")
        assert "2-D form" in text_of(app, "#status")
        eq = prompts(app, "#equation-list")[0]
        assert "─" in eq          # a fraction bar of the 2-D form
        await pilot.press("f")
        assert "(V_inv - V_in)/Rin + (V_inv - V_out)/Rf = 0" in prompts(app, "#equation-list")[0]


async def test_analysis_pane_shows_transfer_function():
    """Unity-gain Sallen-Key low-pass with equal R and Cf = 2*Cg: w0 = 1/(R*sqrt(Cf*Cg)) and
    Q = sqrt(Cf/Cg)/2 = 1/sqrt(2), the Butterworth response (common practice, no source; the
    standard Sallen-Key design equations)."""
    from nodeterm.demos import demo_path
    app = Workbench(demo_path("vibration_lowpass.toml"), poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        await pilot.press("k")
        await settle(pilot, app)
        await pilot.press("7")
        for _ in range(400):
            await pilot.pause(0.05)
            if "second-order" in text_of(app, "#analysis-text"):
                break
        text = text_of(app, "#analysis-text")
        R, Cg = 10_000, sympy.Rational(10, 10**9)
        w0 = 1 / (R * sympy.sqrt(2 * Cg * Cg))
        assert f"w0 = {sympy.sstr(w0)}" in text
        assert "Q = sqrt(2)/2" in text
        assert "note:" in text


LADDER_5 = ladder(5)


async def test_export_of_a_large_solution_runs_off_the_event_loop_and_writes_the_results(tmp_path):
    # A large solution stays in the solver process; the export is rendered there and written when
    # it comes back. The file holds the same results as the command line's export (the reference).
    from nodeterm.cli import main
    circuit = tmp_path / "ladder5.toml"
    circuit.write_text(LADDER_5)
    app = Workbench(str(circuit), poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app, 60)
        assert not app.entry.has("solution")  # the large solution stayed in the child
        target = tmp_path / "ladder5.md"
        assert app.export(str(target), "markdown")
        assert "export" in app.busy  # handed to the solver process; the screen keeps answering
        await pilot.press("2")       # a key meanwhile is served
        await settle(pilot, app, 60)
        assert app.is_running
        text = target.read_text(encoding="utf-8")
    cli_out = tmp_path / "cli.md"
    assert main(["export", str(circuit), "--to", "markdown", "--output", str(cli_out)]) == 0
    want = cli_out.read_text(encoding="utf-8")
    assert "V_n5" in text and text.split("## Results", 1)[-1] == want.split("## Results", 1)[-1]
