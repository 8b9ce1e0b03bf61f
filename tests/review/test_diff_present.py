"""The diff's presenters: the JSON lists and names, the Markdown sections, the workbench pane text."""

from __future__ import annotations

import json

from nodeterm.engine import parse_circuit
from nodeterm.engine.review import diff_circuits
from nodeterm.present.diff import diff_dict, diff_json, diff_markdown, diff_pane_text

BASE = """[parameters]
Vs = "1"
Rin = "10k"
Rf = "100k"
[parts]
VS = { kind = "voltage_source", nodes = ["in", "gnd"], value = "Vs" }
R1 = { kind = "resistor", nodes = ["in", "inv"], value = "Rin" }
R2 = { kind = "resistor", nodes = ["inv", "out"], value = "Rf" }
U1 = { kind = "opamp", plus = "gnd", minus = "inv", out = "out" }
[find]
gain = "V_out/V_in"
[hand]
gain = "-Rf/Rin"
"""
CHANGED = (BASE.replace('"inv"', '"sj"').replace('Rf = "100k"', 'Rf = "47k"')
           .replace('value = "Rf" }', 'value = "2*Rf" }')
           .replace("[find]", 'R3 = { kind = "resistor", nodes = ["sj", "gnd"], value = "1M" }\n[find]'))


def diff():
    return diff_circuits(parse_circuit(BASE, "old.toml"), parse_circuit(CHANGED, "new.toml"))


def test_json_lists_and_names():
    data = json.loads(diff_json(diff()))
    for key in ("parts", "parameters", "equations", "results", "claims", "warnings"):
        assert isinstance(data[key], list)
    names = {"parts": "part", "parameters": "parameter", "results": "result", "claims": "claim",
             "nodes": "node"}
    for key, name in names.items():
        assert data[key] and all(isinstance(e[name], str) and e[name] for e in data[key]), key
    assert all(e["at"] and (e.get("node") or e.get("part")) for e in data["equations"])
    assert {(p["part"], p["change"]) for p in data["parts"]} == {("R2", "changed"), ("R3", "added")}
    assert data["nodes"][0]["old_node"] == "inv" and data["nodes"][0]["node"] == "sj"
    assert {c["claim"] for c in data["claims"]} == {"gain"}
    assert data["results_changed"] is True and diff_dict(diff())["summary"].startswith("Changed:")


def test_markdown_has_a_section_per_list():
    md = diff_markdown(diff())
    assert md.startswith("## Changes from `old.toml` to `new.toml`")
    for title in ("### Parts", "### Parameters", "### Nodes", "### Equations", "### Results ([find])",
                  "### Claims ([hand])"):
        assert title in md
    assert "- inv renamed to sj (connections changed too: R1, R2, U1.minus, R3)" in md


def test_pane_text_fits_the_pane():
    for width in (40, 60, 80):
        text = diff_pane_text(diff(), width)
        assert max(len(line) for line in text.splitlines()) <= width
        assert "Results ([find])" in text
    assert "No earlier state" in diff_pane_text(None, 60)


def test_changed_labels_mark_the_new_equations():
    assert diff().changed_labels == frozenset({"KCL at sj"})
