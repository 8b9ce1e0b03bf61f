"""Load the corpus of wrong hand derivations (tests/audit/corpus/) and score the audit's headlines.

A claim's expectations come from our own hand derivation of each circuit (see the claims files).
Two measures, both on the headline (the verdict's one-line message, what `nodeterm check` prints
after the claim's name):

* **located**: of the wrong *equations* with an expected node and part, the share whose headline names
  that node and every expected part;
* **actionable**: of all wrong claims, the share whose headline names what was expected (node, parts,
  and the cause's words) and contains an instruction (one of :data:`ACTIONS`), and none of the words
  the claim forbids (a misleading hint).

Mechanical checks on purpose: they can be rerun on any change of the wording.
"""

from __future__ import annotations

import re
import tomllib
from dataclasses import dataclass
from pathlib import Path

from nodeterm.engine import build_system, load_circuit
from nodeterm.engine.audit.verdicts import Auditor

CORPUS = Path(__file__).parent / "corpus"
ACTIONS = ("add", "drop", "write", "use", "change", "swap", "invert", "multiply", "remove", "include",
           "replace", "check it with", "run")


@dataclass
class Case:
    circuit: str
    name: str
    text: str
    verdict: str
    node: str = ""
    parts: tuple[str, ...] = ()
    cause: str = ""
    note: str = ""
    forbid: str = ""
    line: int = 0


def load_cases() -> list[Case]:
    cases = []
    for path in sorted(CORPUS.glob("*.claims.toml")):
        circuit = path.name.replace(".claims.toml", ".toml")
        lines = path.read_text().splitlines()
        data = tomllib.loads(path.read_text())
        for c in data["claims"]:
            line = next((i for i, ln in enumerate(lines, 1) if f'name = "{c["name"]}"' in ln), 0)
            cases.append(Case(circuit, c["name"], c["text"], c["verdict"], c.get("node", ""),
                              tuple(p for p in c.get("parts", "").split(",") if p), c.get("cause", ""),
                              c.get("note", ""), c.get("forbid", ""), line))
    return cases


def run(cases: list[Case], explain_budget: float | None = 10.0):
    """(case, verdict) for every case, one auditor per circuit."""
    auditors: dict[str, Auditor] = {}
    out = []
    for case in cases:
        if case.circuit not in auditors:
            auditors[case.circuit] = Auditor(build_system(load_circuit(str(CORPUS / case.circuit))),
                                             explain_budget=explain_budget)
        out.append((case, auditors[case.circuit].check(case.name, case.text)))
    return out


def _names(text: str, word: str) -> bool:
    """``word`` appears in ``text`` as a name (V_inv counts for inv; RB2 does not count for RB)."""
    return re.search(rf"(?<![A-Za-z0-9]){re.escape(word)}(?![A-Za-z0-9])", text) is not None


def located(case: Case, message: str) -> bool:
    return _names(message, case.node) and all(_names(message, p) for p in case.parts)


def actionable(case: Case, message: str) -> bool:
    low = message.lower()
    if case.node and not _names(message, case.node):
        return False
    if not all(_names(message, p) for p in case.parts):
        return False
    if case.cause and case.cause.lower() not in low:
        return False
    if case.forbid and case.forbid.lower() in low:
        return False
    return any(re.search(rf"\b{re.escape(a)}\b", low) for a in ACTIONS)


def score(results):
    """A dict of counts: verdicts right, false alarms, located and actionable shares, and the misses."""
    right = sum(1 for c, v in results if v.status == c.verdict)
    false_alarms = [(c, v) for c, v in results if c.verdict == "holds" and v.status != "holds"]
    missed = [(c, v) for c, v in results if c.verdict == "fails" and v.status != "fails"]
    eq = [(c, v) for c, v in results if c.verdict == "fails" and c.node and c.parts]
    wrong = [(c, v) for c, v in results if c.verdict == "fails"]
    loc_ok = [(c, v) for c, v in eq if located(c, v.message)]
    act_ok = [(c, v) for c, v in wrong if actionable(c, v.message)]
    notes = [(c, v) for c, v in results if c.note]
    return {
        "claims": len(results), "circuits": len({c.circuit for c, _ in results}),
        "right": right, "false_alarms": false_alarms, "missed": missed,
        "located": (len(loc_ok), len(eq)), "actionable": (len(act_ok), len(wrong)),
        "not_located": [(c, v) for c, v in eq if (c, v) not in loc_ok],
        "not_actionable": [(c, v) for c, v in wrong if (c, v) not in act_ok],
        "notes": notes,
    }
