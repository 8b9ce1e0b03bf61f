"""``nodeterm diff``: [hand] verdicts that flip, warnings and cautions that appear or clear, parts renamed.

Expected values: inverting gain -R2/R1 (Sedra & Smith, Microelectronic Circuits, sec. 2.2, from memory);
extra-low voltage ends at 120 V ripple-free DC (IEC 61140, from memory), so a 300 V source is cautioned;
a node reached only through a capacitor has no DC path (common practice, no source).
"""

from __future__ import annotations

import sympy

from nodeterm.engine import parse_circuit
from nodeterm.engine.review import diff_circuits

STAGE = """title = "Kiln preamp under review"
[parameters]
Vtc = "50m"
Rin = "10k"
Rf = "1M"
[parts]
TC = { kind = "voltage_source", nodes = ["in", "gnd"], value = "Vtc" }
R1 = { kind = "resistor", nodes = ["in", "inv"], value = "Rin" }
R2 = { kind = "resistor", nodes = ["inv", "out"], value = "Rf" }
U1 = { kind = "opamp", plus = "gnd", minus = "inv", out = "out" }
[find]
gain = "V_out/V_in"
[hand]
kcl_inv = "(V_inv - V_in)/Rin + (V_inv - V_out)/Rf = 0"
gain = "-Rf/Rin"
"""


def test_claim_flips_when_a_part_value_changes():
    """R2 = 2*Rf: the claimed gain -Rf/Rin no longer holds (the gain is -R2/R1 = -2*Rf/Rin), and the
    claimed KCL at inv, written with Rf for R2, fails too. Expected: both flip holds -> fails."""
    old = parse_circuit(STAGE)
    new = parse_circuit(STAGE.replace('nodes = ["inv", "out"], value = "Rf"', 'nodes = ["inv", "out"], value = "2*Rf"'))
    d = diff_circuits(old, new)
    assert {(c.name, c.change, c.old_status, c.new_status) for c in d.claims} == {
        ("gain", "flipped", "holds", "fails"), ("kcl_inv", "flipped", "holds", "fails")}
    (gain,) = d.results
    Rf, Rin = sympy.symbols("Rf Rin")
    assert sympy.simplify(gain.new - (-2 * Rf / Rin)) == 0
    assert gain.old_value == -100 and gain.new_value == -200


def test_claims_that_keep_their_verdict_are_not_listed():
    old = parse_circuit(STAGE)
    new = parse_circuit(STAGE.replace('Rin = "10k"', 'Rin = "4.7k"'))
    d = diff_circuits(old, new)
    assert d.claims == ()  # symbolic claims hold for any Rin
    assert [(p.name, p.fields[0].old, p.fields[0].new) for p in d.parameters] == [("Rin", "10k", "4.7k")]


def test_hazard_caution_appears_and_clears():
    """Vtc 50 mV -> 300 V: a hazardous-voltage caution appears (above 120 V DC, IEC 61140 from memory);
    and back again, it clears."""
    low = parse_circuit(STAGE)
    high = parse_circuit(STAGE.replace('Vtc = "50m"', 'Vtc = "300"'))
    up = diff_circuits(low, high)
    assert "hazardous-voltage" in {w.code for w in up.warnings if w.change == "appeared"}
    assert any(w.part == "TC" for w in up.warnings)
    assert not [w for w in up.warnings if w.change == "cleared"]
    down = diff_circuits(high, low)
    assert {w.code for w in down.warnings} == {"hazardous-voltage"}
    assert {w.change for w in down.warnings} == {"cleared"}


def test_no_dc_path_warning_appears():
    """R1 replaced by a capacitor: node inv reaches the reference only through capacitors -> the
    structural no-dc-path warning appears; R1's kind change is reported on the part."""
    old = parse_circuit(STAGE)
    new = parse_circuit(STAGE.replace('R1 = { kind = "resistor", nodes = ["in", "inv"], value = "Rin" }',
                                      'R1 = { kind = "capacitor", nodes = ["in", "inv"], value = "Rin" }')
                        .replace('R2 = { kind = "resistor"', 'R2 = { kind = "capacitor"'))
    d = diff_circuits(old, new)
    assert ("appeared", "no-dc-path") in {(w.change, w.code) for w in d.warnings}
    r1 = [p for p in d.parts if p.part == "R1"][0]
    assert [(f.field, f.old, f.new) for f in r1.fields] == [("kind", "resistor", "capacitor")]


def test_part_renamed_is_one_entry_and_no_equation_change():
    """R2 renamed RF, nothing else: one part entry (renamed from R2); the KCL at inv is the same
    equation with RF's term, so no equation or result is reported."""
    old = parse_circuit(STAGE)
    new = parse_circuit(STAGE.replace("R2 = {", "RF = {"))
    d = diff_circuits(old, new)
    assert [(p.part, p.change, p.old_part) for p in d.parts] == [("RF", "renamed", "R2")]
    assert d.equations == () and d.results == () and d.nodes == ()


def test_a_revision_that_does_not_solve_still_reports_its_parts():
    """The new revision leaves node x floating (no path to the reference): the parts are compared, and
    a note says the equations cannot be written."""
    old = parse_circuit(STAGE)
    new = parse_circuit(STAGE.replace("[find]", 'RX = { kind = "resistor", nodes = ["x", "y"], value = "1k" }\n[find]'))
    d = diff_circuits(old, new)
    assert [(p.part, p.change) for p in d.parts] == [("RX", "added")]
    assert any(n.startswith("new: the equations cannot be written") for n in d.notes)
    assert [(r.name, r.change) for r in d.results] == [("gain", "changed")]


def test_real_opamp_inputs_swapped_changes_the_result():
    """With a finite open-loop gain A the swap matters: before, G = -(Rf/Rin)/(1 + (1 + Rf/Rin)/A)
    (Sedra & Smith sec. 2.2, finite open-loop gain, from memory); after, V_out = A*V_inv with the
    divider V_inv = (Rf*V_in + Rin*V_out)/(Rin + Rf), solved here with SymPy. Expected: U1 changed with
    the latch note, its gain equation changed sign, and the gain result changed to that formula."""
    A, Rf, Rin, vin, vout, vinv = sympy.symbols("A Rf Rin vin vout vinv")
    real = STAGE.replace('out = "out" }', 'out = "out", gain = "100k" }')
    old = parse_circuit(real)
    new = parse_circuit(real.replace('plus = "gnd", minus = "inv"', 'plus = "inv", minus = "gnd"'))
    d = diff_circuits(old, new)
    (u1,) = d.parts
    assert u1.part == "U1" and "latches" in u1.note
    assert [(e.kind, e.at) for e in d.equations] == [("opamp_gain", "U1")]
    gain = [r for r in d.results if r.name == "gain"][0]
    before = -(Rf / Rin) / (1 + (1 + Rf / Rin) / A)
    sol = sympy.solve([vout - A * vinv, vinv - (Rf * vin + Rin * vout) / (Rin + Rf)], [vout, vinv])
    after = sol[vout] / vin
    assert sympy.simplify(gain.old - before.subs(A, 100_000)) == 0
    assert sympy.simplify(gain.new - after.subs(A, 100_000)) == 0


def test_a_warning_about_a_renamed_node_is_the_same_warning():
    """Both revisions have inv fed only through capacitors (no DC path); the new one calls the node
    in_sum. Expected: the rename, and no warning appeared or cleared."""
    caps = (STAGE.replace('R1 = { kind = "resistor"', 'R1 = { kind = "capacitor"')
            .replace('R2 = { kind = "resistor"', 'R2 = { kind = "capacitor"'))
    d = diff_circuits(parse_circuit(caps), parse_circuit(caps.replace('"inv"', '"in_sum"')))
    assert [(n.old_node, n.node) for n in d.nodes] == [("inv", "in_sum")]
    assert d.warnings == ()
