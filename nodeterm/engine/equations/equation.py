"""Equations of the node-voltage procedure: per-part terms, labels, and the recorded steps.

An :class:`Equation` is one ``lhs = rhs`` the procedure writes (a KCL, a known
voltage, a source constraint, an op-amp input equality or gain equation); a KCL
keeps each part's current as a :class:`Term`, so an equation can be explained
part by part. A :class:`Step` records the equations written at one step of the
procedure and why. All are immutable.

>>> from nodeterm.engine.symbols import V, param
>>> e = Equation("kcl", "inv", V("inv")/param("R1"), sympy.Integer(0),
...              (Term("R1", V("inv")/param("R1")),), ("R1",), _label("kcl", "inv"))
>>> e.label, e.residual
('KCL at inv', V_inv/R1)
>>> e.subs({V("inv"): sympy.Integer(2)}).terms[0].expr
2/R1
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import sympy

KCL_KINDS = ("kcl", "supernode_kcl")
OPAMP_KINDS = ("opamp_equality", "opamp_gain")


@dataclass(frozen=True)
class Term:
    """One part's current leaving a node (or supernode), as it appears in a KCL equation."""

    part: str
    expr: sympy.Expr


@dataclass(frozen=True)
class Equation:
    """One equation ``lhs = rhs`` of the procedure.

    Attributes:
        kind: "kcl", "supernode_kcl", "known_voltage", "source_constraint",
            "opamp_equality" or "opamp_gain".
        at: the node, the supernode ("a+b") or the part the equation belongs to.
        lhs, rhs: the two sides.
        terms: for KCL, each part's current leaving the node.
        parts: the parts the equation involves.
        label: a short human label, e.g. "KCL at inv".
    """

    kind: str
    at: str
    lhs: sympy.Expr
    rhs: sympy.Expr
    terms: tuple[Term, ...] = ()
    parts: tuple[str, ...] = ()
    label: str = ""

    @property
    def residual(self) -> sympy.Expr:
        return self.lhs - self.rhs

    def subs(self, mapping: dict) -> "Equation":
        """The same equation with ``mapping`` substituted (terms too)."""
        if not mapping:
            return self
        terms = tuple(Term(t.part, t.expr.xreplace(mapping)) for t in self.terms)
        return replace(self, lhs=self.lhs.xreplace(mapping), rhs=self.rhs.xreplace(mapping), terms=terms)


@dataclass(frozen=True)
class Step:
    """One recorded step of the procedure.

    Attributes:
        kind: "reference", "sources", "kcl", "opamps", "known_substitution",
            "parameter_substitution".
        title: a heading.
        text: what was done and why, in a few sentences.
        equations: the equations written or obtained at this step.
        data: step-specific facts (e.g. ``skipped`` nodes, ``supernodes``, ``values``).
    """

    kind: str
    title: str
    text: str
    equations: tuple[Equation, ...] = ()
    data: dict = field(default_factory=dict)


def _label(kind: str, at: str) -> str:
    return {
        "kcl": f"KCL at {at}",
        "supernode_kcl": f"KCL at supernode {at}",
        "known_voltage": f"known voltage at {at}",
        "source_constraint": f"constraint of {at}",
        "opamp_equality": f"input equality of {at}",
        "opamp_gain": f"gain equation of {at}",
    }[kind]
