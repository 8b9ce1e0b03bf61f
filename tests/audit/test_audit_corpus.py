"""The corpus of wrong hand derivations (tests/audit/corpus/): verdicts and explanations.

Every expectation in the corpus comes from our own hand derivation of each circuit (the claims files
say so beside each claim); the circuits are scenarios of our own. Each verdict must be right (no
false alarm on a right claim, no wrong claim passed), and each failing claim's headline must name
the expected node, the expected part(s) and the cause's words, and say what to do (the mechanical
checks of corpus_tools.py; `python tests/audit/measure.py` prints the shares).
"""

from __future__ import annotations

import sys
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).parent))

from corpus_tools import actionable, load_cases, located, run  # noqa: E402

CASES = load_cases()
_RESULTS: dict = {}


def _verdict(case):
    if not _RESULTS:
        for c, v in run(CASES, explain_budget=None):  # no budget: the test is about what is said
            _RESULTS[(c.circuit, c.name)] = v
    return _RESULTS[(case.circuit, case.name)]


def test_corpus_size():
    assert len(CASES) >= 100
    assert len({c.circuit for c in CASES}) >= 10
    assert sum(1 for c in CASES if c.verdict == "fails") >= 60


@pytest.mark.parametrize("case", CASES, ids=[f"{c.circuit[:-5]}-{c.name}" for c in CASES])
def test_verdict_and_explanation(case):
    v = _verdict(case)
    assert v.status == case.verdict, v.message
    if case.verdict == "fails":
        if case.node and case.parts:
            assert located(case, v.message), v.message
        assert actionable(case, v.message), v.message


def test_messages_never_repeat_the_status_or_print_empty_values():
    for case in CASES:
        v = _verdict(case)
        assert not v.message.startswith(("holds", "fails")), v.message
        assert "with :" not in v.message and "--numeric" not in v.message, v.message


def test_notes_on_claims_that_lean_on_a_rule_that_does_not_apply():
    pytest.importorskip("nodeterm.engine.equations.feedback")  # the per-op-amp feedback check
    for case in CASES:
        if case.note:
            v = _verdict(case)
            assert case.note in v.message, v.message
