"""Compare two studies of a circuit: :func:`diff_studies` -> :class:`CircuitDiff`.

The structure (parts, parameters, nodes, equations) comes from the circuits and
the equations as generated; the outcomes (results, verdicts, warnings) from the
studies' records, so the diff costs what ``solve`` and ``check`` cost on the two
revisions. A revision whose equations cannot be written or solved still gets its
part and parameter changes; what could not be compared is said in ``notes``.

>>> from nodeterm.engine.circuit.loader import parse_circuit
>>> a = parse_circuit('''
... [parts]
... V1 = { kind = "voltage_source", nodes = ["in", "gnd"], value = "1" }
... R1 = { kind = "resistor", nodes = ["in", "mid"], value = "1k" }
... R2 = { kind = "resistor", nodes = ["mid", "gnd"], value = "1k" }
... [find]
... half = "V_mid"
... ''')
>>> b = parse_circuit(a.source_text.replace('"mid", "gnd"], value = "1k"', '"mid", "gnd"], value = "3k"'))
>>> d = diff_circuits(a, b)
>>> [(p.part, p.fields[0].old, p.fields[0].new) for p in d.parts]
[('R2', '1000', '3000')]
>>> [(r.name, r.old, r.new, r.relative) for r in d.results]
[('half', 1/2, 3/4, 1/2)]
"""

from __future__ import annotations

from nodeterm.engine.circuit.model import Circuit
from nodeterm.engine.errors import InputError
from nodeterm.engine.symbols import as_expr, s
from nodeterm.engine.review.matching import match_nodes, match_parts
from nodeterm.engine.review.outcomes import Side, claim_changes, reading, result_changes, warning_changes
from nodeterm.engine.review.records import CircuitDiff
from nodeterm.engine.review.structure import (equation_changes, node_changes, parameter_changes,
                                              part_changes)


def _attempt(fn):
    """(value, "") or (None, the one-line reason it failed)."""
    try:
        return fn(), ""
    except InputError as err:  # CircuitError, SolveError (singular, too large)
        return None, err.message


def _base_equations(study):
    system = getattr(study, "base_system", None)
    return (system if system is not None else study.system).equations


def _side(study) -> Side:
    find, error = _attempt(lambda: dict(study.solution.find))
    if error:
        warnings, _ = _attempt(lambda: tuple(study.warnings))
        return Side(warnings=warnings or (), error=error)
    numeric, _ = _attempt(lambda: study.numeric)
    valued = transfer = None
    if numeric is not None:
        valued, _ = _attempt(lambda: dict(numeric.solution.find))
    transfer = _readings(numeric, valued if valued is not None else find)
    verdicts, _ = _attempt(lambda: tuple(study.verdicts))
    warnings, _ = _attempt(lambda: tuple((numeric or study).warnings))
    return Side(find, valued, transfer, verdicts, warnings or ())


def _readings(numeric, results: dict) -> dict:
    """H(s) of the results in s: the study's transfer functions when every value is a number (poles,
    zeros and sections are cheap then), else a light reading (gains, w0 and Q from the coefficients;
    exact symbolic roots can take seconds and are not compared)."""
    in_s = {n: v for n, v in results.items() if not getattr(v, "is_large", False) and as_expr(v).has(s)}
    if numeric is not None and in_s and all(as_expr(v).free_symbols <= {s} for v in in_s.values()):
        transfer, _ = _attempt(lambda: dict(numeric.transfer))
        if transfer is not None:
            return transfer
    return {n: r for n, r in ((n, reading(v)) for n, v in in_s.items()) if r is not None}


def diff_studies(old, new, old_label: str = "", new_label: str = "") -> CircuitDiff:
    """What changed from study ``old`` to study ``new``, in circuit terms.

    Args:
        old, new: studies (:class:`nodeterm.engine.study.Study`) of the two revisions.
        old_label, new_label: where each came from, for the report (default: the circuits' paths).
    """
    oc, nc = old.circuit, new.circuit
    match = match_nodes(oc, nc)
    parts = match_parts(oc, nc, match.mapping)
    part_list = part_changes(oc, nc, match.mapping, parts)
    swapped = {c.part for c in part_list if c.note.startswith("inputs swapped")}
    notes: list[str] = []
    old_eqs, old_err = _attempt(lambda: _base_equations(old))
    new_eqs, new_err = _attempt(lambda: _base_equations(new))
    equations = []
    if old_err:
        notes.append(f"old: the equations cannot be written: {old_err}")
    if new_err:
        notes.append(f"new: the equations cannot be written: {new_err}")
    if not old_err and not new_err:
        equations = equation_changes(old_eqs, new_eqs, match.mapping, parts, swapped)
    a, b = _side(old), _side(new)
    for tag, side, err in (("old", a, old_err), ("new", b, new_err)):
        if side.error and not err:
            notes.append(f"{tag}: no results: {side.error}")
    return CircuitDiff(
        old_label=old_label or oc.path or "old", new_label=new_label or nc.path or "new",
        parts=tuple(part_list), parameters=tuple(parameter_changes(oc, nc)),
        nodes=tuple(node_changes(oc, nc, match)), equations=tuple(equations),
        results=tuple(result_changes(a, b, tuple(oc.find), tuple(nc.find))),
        claims=tuple(claim_changes(a, b)),
        warnings=tuple(warning_changes(a, b, match.mapping, parts)),
        notes=tuple(notes))


def diff_circuits(old: Circuit, new: Circuit, old_label: str = "", new_label: str = "") -> CircuitDiff:
    """:func:`diff_studies` of two circuits with no values chosen (results symbolic, and with the file's values)."""
    return diff_studies(_study(old), _study(new), old_label, new_label)


def _study(circuit: Circuit):
    from nodeterm.engine.study import Study
    return Study(circuit)
