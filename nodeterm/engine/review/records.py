"""The records of a circuit diff: immutable, plain fields, one per thing reported.

Expressions are kept as SymPy objects (presenters print them); the ``how`` and
``note`` fields are one short sentence each, in circuit terms.
"""

from __future__ import annotations

from dataclasses import dataclass

ADDED, REMOVED, CHANGED, RENAMED = "added", "removed", "changed", "renamed"
APPEARED, VANISHED, CLEARED = "appeared", "vanished", "cleared"
FLIPPED = "flipped"


@dataclass(frozen=True)
class FieldChange:
    """One field of a part or parameter: its old and new text ("" when absent)."""

    field: str
    old: str
    new: str


@dataclass(frozen=True)
class PartChange:
    """A part added, removed, changed or renamed.

    Attributes:
        part: its id (the new id when renamed).
        change: "added", "removed", "changed" or "renamed".
        kind: its kind (the new kind when it changed).
        fields: what changed (value, gain, nodes, plus, minus, out, control, kind, op-amp keys).
        old_part: the old id when renamed (else "").
        note: a remark for a reviewer (e.g. op-amp inputs swapped), or "".
        where: for an added or removed part, its nodes as text ("in, inv").
    """

    part: str
    change: str
    kind: str
    fields: tuple[FieldChange, ...] = ()
    old_part: str = ""
    note: str = ""
    where: str = ""


@dataclass(frozen=True)
class ParameterChange:
    """A parameter added, removed or changed (value as written, tolerance, distribution)."""

    name: str
    change: str
    fields: tuple[FieldChange, ...] = ()


@dataclass(frozen=True)
class NodeChange:
    """A node renamed, appeared or vanished.

    Attributes:
        node: the new name (the old one when it vanished).
        change: "renamed", "appeared" or "vanished".
        old_node: the old name when renamed.
        same_connections: for a rename: the same part pins touch it as before.
        pins: the part pins touching it ("R1", "U1.minus") in the new circuit (old when vanished).
    """

    node: str
    change: str
    old_node: str = ""
    same_connections: bool = True
    pins: tuple[str, ...] = ()


@dataclass(frozen=True)
class TermChange:
    """One part's term in a KCL equation: added, removed or changed (old and new current leaving the node)."""

    part: str
    change: str
    old: object = None
    new: object = None
    how: str = ""


@dataclass(frozen=True)
class EquationChange:
    """An equation of the procedure that was added, removed or changed.

    Attributes:
        at: the node, supernode ("a+b") or part it belongs to, in the new names.
        kind: its kind in the new circuit (old when removed): "kcl", "supernode_kcl", "known_voltage",
            "source_constraint", "opamp_equality", "opamp_gain".
        change: "added", "removed" or "changed".
        label: its label ("KCL at inv").
        old, new: the equations (old in the old circuit's names; None when absent).
        terms: for KCL, each part's term that changed.
        old_at: the old node/part name when it was renamed (else "").
        how: a remark (a kind that changed, op-amp inputs swapped...), or "".
    """

    at: str
    kind: str
    change: str
    label: str
    old: object = None
    new: object = None
    terms: tuple[TermChange, ...] = ()
    old_at: str = ""
    how: str = ""


@dataclass(frozen=True)
class Move:
    """A feature of a result that moved: a pole, a zero, w0 or Q of a section, the DC or high-frequency gain.

    Attributes:
        what: "dc gain", "hf gain", "pole", "zero", "w0 of pole pair", "Q of pole pair", "corner of pole"...
        old, new: the values (SymPy; None when the feature is absent on that side).
        relative: (new - old)/old when both are non-zero numbers, else None.
    """

    what: str
    old: object = None
    new: object = None
    relative: object = None


@dataclass(frozen=True)
class ResultChange:
    """A ``[find]`` result that was added, removed or changed.

    Attributes:
        name: the ``[find]`` name.
        change: "added", "removed" or "changed".
        old, new: the results as solved (symbolic unless values were chosen).
        old_value, new_value: the same with every value the file gives (None when no value applies or
            the side is absent).
        relative: (new_value - old_value)/old_value when both are non-zero numbers (not in s).
        ratio: new_value/old_value when it is free of s and of the node unknowns (None otherwise).
        sign_flip: the result changed sign (a negative ratio, or DC/high-frequency gains of opposite sign).
        moves: poles, zeros, w0, Q and gains that moved (results in s).
        note: why a side has no result (it does not solve), or "".
    """

    name: str
    change: str
    old: object = None
    new: object = None
    old_value: object = None
    new_value: object = None
    relative: object = None
    ratio: object = None
    sign_flip: bool = False
    moves: tuple[Move, ...] = ()
    note: str = ""


@dataclass(frozen=True)
class ClaimChange:
    """A ``[hand]`` claim whose verdict flipped, or a claim added or removed.

    Attributes:
        name: the claim's key.
        change: "flipped", "added" or "removed".
        old_status, new_status: "holds", "fails", "error" or "" (absent).
        message: the new verdict's message (the old one when removed).
    """

    name: str
    change: str
    old_status: str = ""
    new_status: str = ""
    message: str = ""


@dataclass(frozen=True)
class WarningChange:
    """A warning or caution that appeared or cleared."""

    change: str
    code: str
    message: str
    part: str = ""


@dataclass(frozen=True)
class CircuitDiff:
    """What changed from one revision of a circuit to another.

    Attributes:
        old_label, new_label: where each side came from (a path, ``path@REV``).
        parts, parameters, nodes, equations, results, claims, warnings: the changes, in circuit order.
        notes: things the diff could not compare (a side that does not solve...).
    """

    old_label: str
    new_label: str
    parts: tuple[PartChange, ...] = ()
    parameters: tuple[ParameterChange, ...] = ()
    nodes: tuple[NodeChange, ...] = ()
    equations: tuple[EquationChange, ...] = ()
    results: tuple[ResultChange, ...] = ()
    claims: tuple[ClaimChange, ...] = ()
    warnings: tuple[WarningChange, ...] = ()
    notes: tuple[str, ...] = ()

    @property
    def results_changed(self) -> bool:
        """Any ``[find]`` result added, removed or changed (what ``--fail-on-result-change`` tests)."""
        return bool(self.results)

    @property
    def changed_labels(self) -> frozenset[str]:
        """Labels of the new circuit's equations that were added or changed (to mark them in a view of the steps)."""
        return frozenset(e.new.label for e in self.equations if e.new is not None)

    @property
    def is_empty(self) -> bool:
        return not (self.parts or self.parameters or self.nodes or self.equations or self.results
                    or self.claims or self.warnings)
