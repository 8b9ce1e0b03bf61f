"""The per-node connection list: which part pins meet at each node."""

from __future__ import annotations

from pathlib import Path

import pytest

from nodeterm.engine import load_circuit, parse_circuit
from nodeterm.present.connections import connection_lines, node_connections, pins
from nodeterm.present.text import report

ROOT = Path(__file__).resolve().parents[2]
DEMOS = sorted((ROOT / "circuits").glob("*.toml"))

def _records(circuit, known: bool = False, sets: dict | None = None):
    """The records the CLI formats (a Study with the values chosen)."""
    from nodeterm.engine.study import Study
    from nodeterm.engine.values import ValueChoice
    return Study(circuit, ValueChoice.from_options(sets, known=known)).records(
        ("system", "matrix", "solution", "warnings"))


def test_inverting_amplifier_connections():
    # the kiln preamp is the textbook inverting amplifier: R1 from the input to the inverting
    # input, R2 from there to the output, U1's plus at ground (Sedra & Smith, sec. 2.2, from memory)
    conns = node_connections(load_circuit(str(ROOT / "circuits" / "kiln_preamp.toml")))
    assert conns["inv"] == ["R1.2", "R2.1", "U1.minus"]
    assert conns["out"] == ["R2.2", "U1.out"]
    assert conns["gnd"] == ["TC.n", "U1.plus"]
    assert conns["in"] == ["TC.p", "R1.1"]


@pytest.mark.parametrize("path", DEMOS, ids=lambda p: p.stem)
def test_every_pin_is_listed_once_at_the_node_the_file_gives(path):
    c = load_circuit(str(path))
    conns = node_connections(c)
    listed = [(node, item) for node, items in conns.items() for item in items]
    expected = [(node, f"{p.id}.{pin}") for p in c.parts for pin, node in pins(p)]
    assert sorted(listed) == sorted(expected)
    n_pins = sum(len(p.nodes) + (len(p.control) if isinstance(p.control, tuple) else 0) for p in c.parts)
    assert len(listed) == n_pins
    assert set(conns) == set(c.nodes)


def test_sensing_pins_and_a_dangling_node_are_shown():
    c = parse_circuit("""
[parts]
V1 = { kind = "voltage_source", nodes = ["a", "gnd"], value = "1" }
R1 = { kind = "resistor", nodes = ["a", "b"], value = "1k" }
R2 = { kind = "resistor", nodes = ["b", "gnd"], value = "1k" }
E1 = { kind = "vcvs", nodes = ["c", "gnd"], control = ["b", "gnd"], gain = "2" }
R3 = { kind = "resistor", nodes = ["c", "gnd"], value = "1k" }
R4 = { kind = "resistor", nodes = ["c", "d"], value = "1k" }
""")
    conns = node_connections(c)
    assert "E1.cp" in conns["b"] and "E1.cn" in conns["gnd"] and "E1.p" in conns["c"]
    lines = connection_lines(c)
    assert any(ln.startswith("  d") and "only one pin" in ln for ln in lines)


def test_long_lists_wrap_within_80_columns():
    parts = "\n".join(f'R{i} = {{ kind = "resistor", nodes = ["hub", "n{i}"], value = "1k" }}' for i in range(40))
    parts += "\n" + "\n".join(f'G{i} = {{ kind = "resistor", nodes = ["n{i}", "gnd"], value = "1k" }}'
                              for i in range(40))
    c = parse_circuit("[parts]\n" + parts)
    lines = connection_lines(c, width=80)
    assert all(len(ln) <= 80 for ln in lines)
    assert sum(ln.count(".") for ln in lines) == 160


def test_report_has_the_connection_section():
    c = load_circuit(str(ROOT / "circuits" / "kiln_preamp.toml"))
    text = report(_records(c))
    assert "Connections at each node (part.pin)\n  gnd: TC.n, U1.plus\n" in text
    assert "  inv: R1.2, R2.1, U1.minus\n" in text
