"""The immutable circuit model: parameters, parts, quantities to find, hand claims.

Objects are frozen dataclasses validated by the loader (:mod:`.loader`), which
is the only place that builds them from user text.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import sympy

from nodeterm.engine.errors import Warning
from nodeterm.engine.circuit.parts import Part
from nodeterm.engine.symbols import param


@dataclass(frozen=True)
class Parameter:
    """A named circuit parameter.

    Attributes:
        name: the parameter's name (also its SymPy symbol's name).
        value: its value as written (may name other parameters), or None when unknown.
        line: line in the file, or None.
        tolerance: relative tolerance (e.g. 1/100 for 1 %), or None.
        text: the value as written in the file.
        distribution: "uniform" or "normal" (used by tolerance analyses).
    """

    name: str
    value: sympy.Expr | None
    line: int | None = None
    tolerance: sympy.Expr | None = None
    text: str = ""
    distribution: str = "uniform"

    @property
    def symbol(self) -> sympy.Symbol:
        return param(self.name)


@dataclass(frozen=True)
class FindItem:
    """A quantity the user asks for, e.g. ``gain = "V_out/V_in"``."""

    name: str
    expr: sympy.Expr
    text: str
    line: int | None = None


@dataclass(frozen=True)
class HandItem:
    """One claim of the engineer's own derivation, kept as text (checked by the audit)."""

    name: str
    text: str
    line: int | None = None
    column: int | None = None


@dataclass(frozen=True)
class Circuit:
    """A validated circuit.

    Attributes:
        title: one-line description.
        reference: the reference node (0 V).
        nodes: every node, reference first, then in order of first appearance.
        parts: the parts in file order.
        parameters: name -> Parameter, in file order.
        find: name -> FindItem.
        hand: name -> HandItem.
        path: the file it came from, or None.
        warnings: legal but suspicious things found while loading.
        source_text: the file text (for the audit's column reporting and reloads).
    """

    title: str
    reference: str
    nodes: tuple[str, ...]
    parts: tuple[Part, ...]
    parameters: dict[str, Parameter] = field(default_factory=dict)
    find: dict[str, FindItem] = field(default_factory=dict)
    hand: dict[str, HandItem] = field(default_factory=dict)
    path: str | None = None
    warnings: tuple[Warning, ...] = ()
    source_text: str = ""

    def part(self, part_id: str) -> Part:
        """The part with id ``part_id`` (KeyError if none)."""
        for p in self.parts:
            if p.id == part_id:
                return p
        raise KeyError(part_id)

    @property
    def part_ids(self) -> tuple[str, ...]:
        return tuple(p.id for p in self.parts)

    @property
    def opamp_outputs(self) -> tuple[str, ...]:
        return tuple(p.out for p in self.parts if p.kind == "opamp")

    def known_values(self) -> dict[str, sympy.Expr]:
        """Every parameter that has a value, resolved through other parameters.

        A value that depends on a parameter without a value stays in terms of it.
        """
        raw = {n: p.value for n, p in self.parameters.items() if p.value is not None}
        resolved: dict[str, sympy.Expr] = {}
        subs = {param(n): v for n, v in raw.items()}
        for name, value in raw.items():
            for _ in range(len(raw) + 1):  # the loader rejects cycles, so this terminates
                new = value.xreplace(subs)
                if new == value:
                    break
                value = new
            resolved[name] = value
        return resolved
