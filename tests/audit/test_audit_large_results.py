"""The audit on large results (checked in the solver's FLINT field) gives SymPy's verdicts.

Every result of these circuits is forced large (kept as polynomials) by setting the solver's size
limit to zero; each claim, and wrong variants of it (a flipped sign, a factor of 2, swapped
parameters, the result upside down), must get the same verdict, the same matched equations and
the same likely cause as on the SymPy path (``cancel`` deciding; the reference).
The hand derivations are the ones in this folder (published forms named in those files).
"""

from __future__ import annotations

import glob
from pathlib import Path

import pytest

from nodeterm.engine import build_system, load_circuit
from nodeterm.engine.audit.verdicts import Auditor
from nodeterm.engine.solving.solve import solve_system
from nodeterm.engine.solving import forms as solve_mod

HERE = Path(__file__).resolve().parent
FILES = sorted(glob.glob(str(HERE / "*.toml")))


def variants(circuit) -> dict[str, str]:
    out = {}
    for name, item in circuit.hand.items():
        text = item.text
        out[name] = text
        if name in circuit.find:  # a claimed result
            out[f"{name}!neg"] = f"-({text})"
            out[f"{name}!two"] = f"2*({text})"
            out[f"{name}!inv"] = f"1/({text})"
            params = sorted(p for p in circuit.parameters if p in text)
            if len(params) >= 2:
                a, b = params[:2]
                out[f"{name}!swap"] = text.replace(a, "@").replace(b, a).replace("@", b)
        elif text.count("=") == 1:
            left, right = text.split("=")
            out[f"{name}!sign"] = f"{left} = -({right.strip()}) + 1" if right.strip() != "0" else f"-({left}) = 1"
            if "+" in left:
                out[f"{name}!flip"] = left.replace("+", "-", 1) + "=" + right
    return out


def key(v) -> tuple:
    d = v.details
    return (v.status, v.kind, v.matches, v.step, d.get("cause"), d.get("example"), d.get("closest"),
            tuple(d.get("differences", ())), d.get("quantity"))


@pytest.mark.parametrize("path", FILES, ids=lambda p: Path(p).stem)
def test_large_results_get_the_same_verdicts_as_sympy(path, monkeypatch):
    circuit = load_circuit(path)
    claims = variants(circuit)
    names = {k: k.split("!")[0] for k in claims}
    system = build_system(circuit)

    def verdicts():
        auditor = Auditor(system, solve_system(system), explain_budget=None)  # no time budget: whole answers
        return auditor, {k: auditor.check(names[k], t) for k, t in claims.items()}

    _, reference = verdicts()
    monkeypatch.setattr(solve_mod, "FACTOR_LIMIT", 0)
    auditor, fast = verdicts()
    assert auditor.at is not None  # the FLINT path is the one taken
    assert any(v.status == "fails" for v in reference.values())
    for k in claims:
        assert key(fast[k]) == key(reference[k]), (k, fast[k].message, reference[k].message)
        if fast[k].kind == "equation":
            assert fast[k].message == reference[k].message
