"""Helpers for the workbench tests: a circuit file to edit, and waiting for the solve worker."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from nodeterm.demos import demo_path

KILN = Path(demo_path("kiln_preamp.toml"))

# A loaded inverting stage (our own demo values): the output current feeds RL and R2.
LOADED = """\
title = "Loaded inverting stage"
reference = "gnd"
[parameters]
Vin = ""
R1 = "10k"
R2 = "100k"
RL = "2k"
[parts]
Vs = { kind = "voltage_source", nodes = ["in", "gnd"], value = "Vin" }
R1 = { kind = "resistor", nodes = ["in", "inv"], value = "R1" }
R2 = { kind = "resistor", nodes = ["inv", "out"], value = "R2" }
RL = { kind = "resistor", nodes = ["out", "gnd"], value = "RL" }
U1 = { kind = "opamp", plus = "gnd", minus = "inv", out = "out" }
[find]
gain = "V_out/V_in"
"""


@pytest.fixture(autouse=True)
def cache_home(tmp_path, monkeypatch):
    """Keep the workbench log out of the real home folder."""
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "cache"))
    import nodeterm.ui.safety as safety
    monkeypatch.setattr(safety, "_logger", None)
    return tmp_path / "cache"


@pytest.fixture
def kiln(tmp_path) -> Path:
    path = tmp_path / "kiln.toml"
    shutil.copy(KILN, path)
    return path


@pytest.fixture
def loaded(tmp_path) -> Path:
    path = tmp_path / "loaded.toml"
    path.write_text(LOADED, encoding="utf-8")
    return path
