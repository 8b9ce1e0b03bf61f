"""The workbench's flows keystroke by keystroke: undo after every kind of substitution, redo, back,
claims typed one after another, the value dialog with Up/Down, and the focus rules.

Expected circuit values come from the inverting-amplifier formulas (common practice, no source):
gain = -Rf/Rin, and the op-amp output sinks the input current Vtc/Rin when the output is unloaded.
"""

from __future__ import annotations

import sympy

from nodeterm.ui.app import Workbench
from nodeterm.ui.dialogs import ValueScreen
from wb_helpers import prompts, settle, text_of

SIZE = (80, 24)
Rf, Rin, Vtc, Gain = sympy.symbols("Rf Rin Vtc Gain")


def check_consistent(app) -> None:
    """Every pane shows the same study: steps, values, results and claims (no stale pane, no error)."""
    system = app.system
    steps = app.query_one("#steps-pane")
    total = len(system.steps)
    assert 0 <= steps.index < total
    assert text_of(app, "#step-head").startswith(f"Step {steps.index + 1} of {total}:")
    assert f"step {steps.index + 1}/{total}" in text_of(app, "#status")
    assert len(prompts(app, "#parts-list")) == len(system.circuit.parts)
    for name, row in zip(system.circuit.parameters, prompts(app, "#param-list")):
        assert ("now a symbol" in row) == (name not in system.values), row
    results = text_of(app, "#results-text")
    if system.values:
        assert results.startswith("With " + ", ".join(f"{k} = {v}" for k, v in system.values.items()))
    else:
        assert results.startswith("Symbolic")
    assert app.solution is not None
    claims = text_of(app, "#claims-text")
    assert "claims" in claims and "checking" not in claims
    assert "internal error" not in app.last_error


def gain_shown(app) -> str:
    line = [ln for ln in text_of(app, "#results-text").splitlines() if ln.strip().startswith("gain =")]
    value = line[0].split("=", 1)[1]
    for end in ("  [", " ("):       # the unit of a symbolic result, the value in engineering notation
        value = value.split(end)[0]
    return value.strip()


async def open_kiln(pilot, app):
    await settle(pilot, app)
    check_consistent(app)


async def test_undo_after_one_value_then_back(kiln):
    app = Workbench(str(kiln), poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await open_kiln(pilot, app)
        await pilot.press("3", "down", "down", "enter")     # Vtc -> Gain -> Rin, Enter: the dialog
        await pilot.press(*"4.7k", "enter")
        await settle(pilot, app)
        assert app.system.values == {"Rin": 4700}
        assert sympy.sympify(gain_shown(app)) == -Rf / 4700
        check_consistent(app)
        await pilot.press("u")
        await settle(pilot, app)
        assert app.system.values == {}
        assert sympy.sympify(gain_shown(app)) == -Rf / Rin
        check_consistent(app)
        await pilot.press("u")                               # nothing left
        assert "nothing to undo" in app.last_message
        await pilot.press("b", "b", "b")                     # back along the steps: never past the first
        check_consistent(app)
        await pilot.press("b", "b", "b", "b")
        assert app.query_one("#steps-pane").index == 0
        check_consistent(app)


async def test_undo_after_all_known_values_then_back_and_claims(kiln):
    app = Workbench(str(kiln), poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await open_kiln(pilot, app)
        await pilot.press("k")
        await settle(pilot, app)
        assert app.query_one("#steps-pane").index == 5        # the substitution step is shown: 6 of 6
        assert gain_shown(app) == "-100 V/V"         # gain = -Rf/Rin = -Gain
        check_consistent(app)
        await pilot.press("u")                                # the flow: k, u, u, b, claims
        await settle(pilot, app)
        assert app.query_one("#steps-pane").index == 4        # clamped to the 5 steps left
        assert app.system.values == {}
        check_consistent(app)
        await pilot.press("u")
        assert "nothing to undo" in app.last_message
        await pilot.press("b")
        assert app.query_one("#steps-pane").index == 3
        check_consistent(app)
        await pilot.press("6")
        assert app.focused.id == "claim-input"
        await pilot.press(*"V_inv = 0", "enter")
        await pilot.press(*"gain = -Rf/Rin", "enter")         # typed one after another: the box keeps focus
        await pilot.press(*"gain = Rf/Rin", "enter")          # a sign slip: fails
        await settle(pilot, app)
        text = text_of(app, "#claims-text")
        assert text.startswith("6 claims: 5 hold, 1 fails"), text
        assert app.focused.id == "claim-input"
        assert app.system.values == {}                        # the k typed nowhere: nothing substituted


async def test_undo_and_redo_after_a_typed_expression(kiln):
    app = Workbench(str(kiln), poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await open_kiln(pilot, app)
        await pilot.press("3", "up")                          # from the first parameter Up wraps to the last
        assert app.query_one("#values-pane").selected == "Rf"
        await pilot.press("v")
        await pilot.pause()
        assert text_of(app.screen, "#value-label") == "Rf ="
        await pilot.press(*"2*Gain*Rin", "enter")
        await settle(pilot, app)
        assert sympy.sympify(gain_shown(app)) == -2 * Gain    # -Rf/Rin with Rf = 2*Gain*Rin
        check_consistent(app)
        await pilot.press("u")
        await settle(pilot, app)
        assert sympy.sympify(gain_shown(app)) == -Rf / Rin
        check_consistent(app)
        await pilot.press("ctrl+r")                           # redo: the study comes back with its records
        await pilot.pause()
        assert sympy.sympify(gain_shown(app)) == -2 * Gain
        check_consistent(app)
        await pilot.press("ctrl+r")
        assert "nothing to redo" in app.last_message


async def test_value_dialog_up_down_choose_the_parameter_the_value_lands_on(kiln):
    app = Workbench(str(kiln), poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await open_kiln(pilot, app)
        await pilot.press("v")                                # from the steps pane: dialog on Vtc
        await pilot.pause()
        assert isinstance(app.screen, ValueScreen)
        assert text_of(app.screen, "#value-label") == "Vtc ="
        await pilot.press(*"48.8m")                           # typed first, parameter chosen after
        await pilot.press("down", "down")
        assert text_of(app.screen, "#value-label") == "Rin ="
        await pilot.press("up")
        assert text_of(app.screen, "#value-label") == "Gain ="
        await pilot.press("down", "enter")
        await settle(pilot, app)
        assert not isinstance(app.screen, ValueScreen)
        assert app.system.values == {"Rin": sympy.Rational(488, 10000)}   # on Rin, as shown, not on Vtc
        check_consistent(app)


async def test_a_substituted_parameter_takes_a_new_value(kiln):
    app = Workbench(str(kiln), poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await open_kiln(pilot, app)
        await pilot.press("k")
        await settle(pilot, app)
        assert app.substitute("Rin", "4.7k")
        await settle(pilot, app)
        assert app.system.values["Rin"] == 4700
        assert app.system.values["Rf"] == 470000             # Rf = Gain*Rin follows the new Rin
        assert "I_U1 = -Vtc/4700" in text_of(app, "#results-text")
        check_consistent(app)


async def test_typed_text_never_runs_as_a_command_and_esc_leaves_the_box(kiln):
    app = Workbench(str(kiln), poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await open_kiln(pilot, app)
        await pilot.press("6", *"k7nbuo3")
        assert app.query_one("#panes").active == "claims"
        assert app.query_one("#claim-input").value == "k7nbuo3"
        assert app.system.values == {}
        assert "TYPING" in text_of(app, "#status")
        await pilot.press("escape", "7")                     # Esc leaves the box: pane keys work again
        assert app.query_one("#panes").active == "analysis"
        assert "TYPING" not in text_of(app, "#status")
        await pilot.press("3", "5", "1", "2")                # pane keys from every pane
        assert app.query_one("#panes").active == "steps"


async def test_reload_and_resolve_in_any_order(loaded):
    app = Workbench(str(loaded), poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        await pilot.press("k", "s", "r", "u", "s", "ctrl+r", "r", "n", "b")
        await settle(pilot, app)
        assert app.system.values and set(app.system.values) == {"R1", "R2", "RL"}
        # inverting stage: gain = -R2/R1 = -10 (common practice, no source)
        assert gain_shown(app) == "-10 V/V"
        assert "internal error" not in app.last_error
        loaded.write_text(loaded.read_text().replace('R2 = "100k"', 'R2 = "47k"'))
        await pilot.press("r")
        await settle(pilot, app)
        assert gain_shown(app) == "-47/10"
        await pilot.press("u")
        await settle(pilot, app)
        assert sympy.sympify(gain_shown(app)) == -sympy.Symbol("R2") / sympy.Symbol("R1")
