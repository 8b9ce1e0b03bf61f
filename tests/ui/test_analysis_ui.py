"""Pilot tests of the analysis pane: frequency response plots and CSV, Monte Carlo with progress and cancel.

References for the expected numbers:

* Unity-gain Sallen-Key low-pass with equal resistors R and Cf = 2*Cg (the vibration demo):
  H(s) = 1/(s**2*R**2*Cf*Cg + 2*s*R*Cg + 1), a Butterworth section whose -3 dB frequency is
  f0 = 1/(2*pi*R*sqrt(Cf*Cg)) (Sallen & Key design equations; common practice, no source).
  The magnitudes in the CSV are checked against that formula evaluated with NumPy.
* RC low-pass: -3 dB at fc = 1/(2*pi*R*C) (common practice, no source).
* Non-inverting gain 1 + Rf/Rg (common practice, no source). With Rf and Rg uniform within +/-t,
  first-order propagation of uncertainty (JCGM 100:2008, GUM, 5.1.2 -- from memory) and the
  variance t**2/3 of a uniform relative deviation give std = (Rf/Rg)*t*sqrt(2/3); the extremes
  are 1 + (Rf/Rg)*(1 +/- t)/(1 -/+ t).
"""

from __future__ import annotations

import csv
import math
import time

import numpy as np
import pytest

from nodeterm.demos import demo_path
from nodeterm.ui.app import Workbench
from nodeterm.ui.dialogs import ConfirmScreen, PathScreen
from wb_helpers import settle, text_of

SIZE = (80, 24)
VIBRATION = demo_path("vibration_lowpass.toml")
SOIL = demo_path("soil_moisture_probe.toml")

# Two RC low-pass sections in a row behind a buffer (our own demo values): two [find] quantities in s.
TWO_FIND = """\
title = "Two RC sections"
[parameters]
Vin = ""
R = "1k"
C = "1uF"
[parts]
VS = { kind = "voltage_source", nodes = ["in", "gnd"], value = "Vin" }
R1 = { kind = "resistor", nodes = ["in", "a"], value = "R" }
C1 = { kind = "capacitor", nodes = ["a", "gnd"], value = "C" }
U1 = { kind = "opamp", plus = "a", minus = "b", out = "b" }
R2 = { kind = "resistor", nodes = ["b", "c"], value = "R" }
C2 = { kind = "capacitor", nodes = ["c", "gnd"], value = "C" }
[find]
Hfirst = "V_a/V_in"
Hboth = "V_c/V_in"
"""


async def wait_for(pilot, check, seconds: float = 20.0) -> bool:
    for _ in range(int(seconds / 0.05)):
        if check():
            return True
        await pilot.pause(0.05)
    return check()


def plot_text(app) -> str:
    return text_of(app, "#response-plot")


async def open_with_known_values(pilot, app) -> None:
    await settle(pilot, app)
    await pilot.press("k")
    await settle(pilot, app)
    await pilot.press("7")
    assert await wait_for(pilot, lambda: "|H| (dB)" in plot_text(app))


async def test_response_plot_appears_after_substituting_known_values():
    app = Workbench(VIBRATION, poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        await pilot.press("7")
        assert await wait_for(pilot, lambda: "still has symbols" in plot_text(app))
        assert "Press k" in plot_text(app)
        await pilot.press("k")
        await settle(pilot, app)
        assert await wait_for(pilot, lambda: "|H| (dB)" in plot_text(app))
        plot = plot_text(app)
        assert "phase of H (degrees)" in plot and "frequency (Hz)" in plot
        assert "\x1b" not in plot  # plotext's colourless output: legible with NO_COLOR
        width = app.query_one("#response-view").size.width
        assert max(len(line) for line in plot.splitlines()) <= width <= 80
        f0 = 1 / (2 * math.pi * 10e3 * math.sqrt(20e-9 * 10e-9))  # 1125.4 Hz
        assert f"-3 dB band: DC to {f0 / 1000:.4g} kHz" in text_of(app, "#response-head")


async def test_g_shows_the_next_find_quantity(tmp_path):
    path = tmp_path / "two.toml"
    path.write_text(TWO_FIND, encoding="utf-8")
    app = Workbench(str(path), poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        await pilot.press("k")
        await settle(pilot, app)
        await pilot.press("7")
        assert await wait_for(pilot, lambda: "|Hfirst| (dB)" in plot_text(app))
        fc = 1 / (2 * math.pi * 1e3 * 1e-6)  # 159.2 Hz
        head = text_of(app, "#response-head")
        assert f"DC to {fc:.4g} Hz" in head and "1 of 2" in head
        await pilot.press("g")
        await pilot.pause()
        assert "|Hboth| (dB)" in plot_text(app)
        assert "2 of 2" in text_of(app, "#response-head")
        # two equal sections: |H| = 1/(1 + (f/fc)**2) reaches 1/sqrt(2) at f = fc*sqrt(sqrt(2) - 1)
        assert f"DC to {fc * math.sqrt(math.sqrt(2) - 1):.4g} Hz" in text_of(app, "#response-head")
        await pilot.press("g")
        await pilot.pause()
        assert "|Hfirst| (dB)" in plot_text(app)


def read_csv(path):
    lines = path.read_text(encoding="utf-8").splitlines()
    assert lines[0].startswith("# ")  # the linear-model note
    rows = list(csv.reader(lines[1:]))
    return rows[0], np.array([[float(x) for x in r] for r in rows[1:]])


async def test_csv_written_and_replaced_only_after_asking(tmp_path):
    app = Workbench(VIBRATION, poll=False)
    target = tmp_path / "bode.csv"
    async with app.run_test(size=SIZE) as pilot:
        await open_with_known_values(pilot, app)
        await pilot.press("w")
        await pilot.pause()
        assert isinstance(app.screen, PathScreen)
        app.screen.query_one("#path-input").value = str(target)
        await pilot.press("enter")
        await pilot.pause()
        assert target.is_file()
        head, data = read_csv(target)
        assert head == ["frequency_hz", "H_magnitude_db", "H_phase_deg"]
        f = data[:, 0]
        w = 2 * np.pi * f
        R, Cg, Cf = 10e3, 10e-9, 20e-9
        h = 1 / (1 - w**2 * R**2 * Cf * Cg + 2j * w * R * Cg)
        np.testing.assert_allclose(data[:, 1], 20 * np.log10(np.abs(h)), atol=1e-6)
        np.testing.assert_allclose(data[:, 2], np.degrees(np.unwrap(np.angle(h))), atol=1e-5)

        # an existing file: asked first; "n" keeps it, "y" replaces it
        target.write_text("keep me\n", encoding="utf-8")
        await pilot.press("w")
        await pilot.pause()
        app.screen.query_one("#path-input").value = str(target)
        await pilot.press("enter")
        await pilot.pause()
        assert isinstance(app.screen, ConfirmScreen)
        await pilot.press("n")
        await pilot.pause()
        assert target.read_text(encoding="utf-8") == "keep me\n"
        await pilot.press("w")
        await pilot.pause()
        app.screen.query_one("#path-input").value = str(target)
        await pilot.press("enter", "y")
        await pilot.pause()
        assert read_csv(target)[0][0] == "frequency_hz"


async def test_csv_asked_for_before_the_response_is_computed_opens_when_ready(tmp_path):
    app = Workbench(VIBRATION, poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        await pilot.press("k")
        await settle(pilot, app)
        await pilot.press("w")  # the pane opens and starts computing; the dialog follows
        assert await wait_for(pilot, lambda: isinstance(app.screen, PathScreen) and app.screen.query("#path-input"))
        app.screen.query_one("#path-input").value = str(tmp_path / "early.csv")
        await pilot.press("enter")
        assert await wait_for(pilot, lambda: (tmp_path / "early.csv").exists())  # written by a worker
        assert read_csv(tmp_path / "early.csv")[0] == ["frequency_hz", "H_magnitude_db", "H_phase_deg"]


async def test_csv_without_values_says_why(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    app = Workbench(VIBRATION, poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        await pilot.press("7")
        assert await wait_for(pilot, lambda: "still has symbols" in plot_text(app))
        await pilot.press("w")
        await pilot.pause()
        assert not isinstance(app.screen, PathScreen)
        assert "nothing to write" in app.last_error
        assert not list(tmp_path.glob("*.csv"))


@pytest.fixture
def slow_batches(monkeypatch):
    """Make each Monte Carlo batch take a while so that the progress and a cancel can be seen."""
    from nodeterm.engine.analysis import tolerance
    real = tolerance.draw
    calls = []

    def draw(*args, **kwargs):
        calls.append(time.monotonic())
        time.sleep(0.2)
        return real(*args, **kwargs)

    monkeypatch.setattr(tolerance, "draw", draw)
    return calls


async def test_monte_carlo_shows_progress_then_statistics_and_histogram(slow_batches):
    app = Workbench(SOIL, poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        await pilot.press("m")
        bar = app.query_one("#mc-progress")
        assert app.query_one("#panes").active == "analysis"
        assert await wait_for(pilot, lambda: bar.progress > 0)
        assert bar.display and bar.total == 100_000 and bar.progress < 100_000
        assert "samples... (c cancels)" in text_of(app, "#tolerance-head")
        assert await wait_for(pilot, lambda: "H.dc: nominal 2.5" in text_of(app, "#tolerance-text"))
        assert not bar.display
        text = text_of(app, "#tolerance-text")
        study = app.query_one("#tolerance-view").study
        dc = study.mc["H.dc"]
        assert dc.samples.size == 100_000
        gain, t = 15e3 / 10e3, 0.01
        assert dc.std == pytest.approx(gain * t * math.sqrt(2 / 3), rel=0.02)
        assert dc.mean == pytest.approx(1 + gain, rel=1e-3)
        low, high = 1 + gain * (1 - t) / (1 + t), 1 + gain * (1 + t) / (1 - t)
        assert f"worst case (sensitivity signs): {low:.6g} to {high:.6g}" in text
        assert "all 32 corners" in text and "(agrees)" in text
        assert "H.dc: 100000 samples" in text_of(app, "#tolerance-plot")  # the histogram's title


async def test_monte_carlo_cancel(slow_batches):
    app = Workbench(SOIL, poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        await pilot.press("m")
        bar = app.query_one("#mc-progress")
        assert await wait_for(pilot, lambda: bar.progress > 0)
        await pilot.press("c")
        await pilot.pause()
        batches = len(slow_batches)
        assert batches < 5
        assert "Monte Carlo cancelled after" in text_of(app, "#tolerance-head")
        assert not bar.display
        await pilot.pause(1.5)  # longer than the rest of the run would have taken
        assert len(slow_batches) <= batches + 1  # the worker stopped at the next batch
        view = app.query_one("#tolerance-view")
        assert view.study is None and not view.running
        assert "nominal" not in text_of(app, "#tolerance-text")
        await pilot.press("m")  # runs again after a cancel
        assert await wait_for(pilot, lambda: view.study is not None)


async def test_monte_carlo_without_tolerances_says_how_to_add_them():
    app = Workbench(VIBRATION, poll=False)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot, app)
        await pilot.press("m")
        await pilot.pause()
        assert "no parameter has a tolerance" in text_of(app, "#tolerance-head")
        assert 'tolerance = "1%"' in text_of(app, "#tolerance-text")
        assert not app.query_one("#tolerance-view").running


async def test_help_lists_the_analysis_keys():
    from nodeterm.ui.keys import help_text
    text = help_text()
    for key, words in (("g", "plot the next [find]"), ("w", "CSV"), ("m", "Monte Carlo")):
        assert any(line.startswith(f"  {key} ") and words in line for line in text.splitlines()), key
