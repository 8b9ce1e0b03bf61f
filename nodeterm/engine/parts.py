"""Part kinds: how each kind of part enters the node equations.

One small base class, :class:`Part`. A kind says

* which keys it takes in the circuit file (``keys``, ``optional``),
* the current it carries from one node to another (``kcl_terms``), in terms of
  node voltages, or
* that it fixes a voltage instead (``branch``): its current is then not known
  from the node voltages, and the kind gives the ``constraint`` equation that
  replaces the KCL it makes impossible to write.

The engine (:mod:`.system`) never branches on the kind, so adding a kind means
one class here (registered in ``KINDS``) and one test.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar, Protocol

import sympy

from .symbols import s


class Context(Protocol):
    """What a part may ask of the engine while writing equations."""

    reference: str

    def V(self, node: str) -> sympy.Expr:
        """Voltage of a node (0 for the reference)."""

    def current_of(self, part_id: str) -> sympy.Expr:
        """Current of another part, in terms of node voltages (or its own unknown)."""


@dataclass(frozen=True)
class Constraint:
    """An equation a voltage-defining part adds: ``lhs = rhs``."""

    kind: str  # "source_constraint", "opamp_equality", "opamp_gain"
    lhs: sympy.Expr
    rhs: sympy.Expr
    parts: tuple[str, ...]


@dataclass(frozen=True)
class Part:
    """Base of all part kinds.

    Attributes:
        id: the part's id from the file.
        nodes: its terminals (for an op-amp: plus, minus, out).
        line: line in the file, or None.
        value: the main value (resistance, capacitance, source value...), or None.
        gain: the gain of a controlled source or op-amp, or None.
        control: control nodes (tuple) or the id of the controlling part (str), or None.
        extra: further kind-specific keys (op-amp limits, real-model data...), as parsed expressions or text.
    """

    id: str
    nodes: tuple[str, ...]
    line: int | None = None
    value: sympy.Expr | None = None
    gain: sympy.Expr | None = None
    control: tuple[str, ...] | str | None = None
    extra: tuple[tuple[str, object], ...] = ()

    kind: ClassVar[str] = ""
    keys: ClassVar[tuple[str, ...]] = ()  # required keys besides "kind"
    optional: ClassVar[tuple[str, ...]] = ()
    describe: ClassVar[str] = ""
    value_must_be_nonzero: ClassVar[bool] = False

    def get(self, key: str, default: object = None) -> object:
        """A kind-specific extra key."""
        return dict(self.extra).get(key, default)

    # --- how the part enters the equations --------------------------------
    def branch(self, reference: str) -> tuple[str, str] | None:
        """(p, n) when the part fixes a voltage between p and n; its current then flows p -> n inside it."""
        return None

    def kcl_terms(self, ctx: Context) -> list[tuple[str, sympy.Expr]]:
        """Currents leaving each node through this part: [(node, current), ...]."""
        a, b = self.nodes[0], self.nodes[1]
        i = self.through(ctx)
        return [(a, i), (b, -i)]


    def through(self, ctx: Context) -> sympy.Expr:
        """Current from nodes[0] to nodes[1] through the part (non-branch parts)."""
        raise NotImplementedError

    def constraint(self, ctx: Context) -> Constraint | None:
        """The equation a voltage-defining part adds."""
        return None

    def current(self, ctx: Context, branch_current: sympy.Expr | None) -> sympy.Expr:
        """The part's reported current I_<id>, given the solved branch current if it has one."""
        if branch_current is not None:
            return branch_current
        return self.through(ctx)

    @property
    def terminals(self) -> tuple[str, ...]:
        return self.nodes

    def controls(self) -> tuple[str, ...]:
        """Nodes whose voltages this part senses (not terminals)."""
        return self.control if isinstance(self.control, tuple) else ()


@dataclass(frozen=True)
class _Passive(Part):
    """A two-terminal part with an admittance: each node sees (V_here - V_there)*Y, as written by hand."""

    def admittance(self) -> sympy.Expr:
        raise NotImplementedError

    def through(self, ctx: Context) -> sympy.Expr:
        return (ctx.V(self.nodes[0]) - ctx.V(self.nodes[1])) * self.admittance()

    def kcl_terms(self, ctx: Context) -> list[tuple[str, sympy.Expr]]:
        a, b = self.nodes[0], self.nodes[1]
        y = self.admittance()
        return [(a, (ctx.V(a) - ctx.V(b)) * y), (b, (ctx.V(b) - ctx.V(a)) * y)]


@dataclass(frozen=True)
class Resistor(_Passive):
    kind: ClassVar[str] = "resistor"
    keys: ClassVar[tuple[str, ...]] = ("nodes", "value")
    describe: ClassVar[str] = "I flows a -> b through it"
    value_must_be_nonzero: ClassVar[bool] = True

    def admittance(self) -> sympy.Expr:
        return 1 / self.value


@dataclass(frozen=True)
class Capacitor(_Passive):
    kind: ClassVar[str] = "capacitor"
    keys: ClassVar[tuple[str, ...]] = ("nodes", "value")
    describe: ClassVar[str] = "admittance s*C"
    value_must_be_nonzero: ClassVar[bool] = True

    def admittance(self) -> sympy.Expr:
        return s * self.value


@dataclass(frozen=True)
class Inductor(_Passive):
    kind: ClassVar[str] = "inductor"
    keys: ClassVar[tuple[str, ...]] = ("nodes", "value")
    describe: ClassVar[str] = "impedance s*L"
    value_must_be_nonzero: ClassVar[bool] = True

    def admittance(self) -> sympy.Expr:
        return 1 / (s * self.value)


@dataclass(frozen=True)
class CurrentSource(Part):
    kind: ClassVar[str] = "isource"
    keys: ClassVar[tuple[str, ...]] = ("nodes", "value")
    describe: ClassVar[str] = "current value flows a -> b through it"

    def through(self, ctx: Context) -> sympy.Expr:
        return self.value


@dataclass(frozen=True)
class VCCS(Part):
    kind: ClassVar[str] = "vccs"
    keys: ClassVar[tuple[str, ...]] = ("nodes", "control", "gain")
    describe: ClassVar[str] = "current gain*(V_cp - V_cn) flows a -> b through it"

    def through(self, ctx: Context) -> sympy.Expr:
        cp, cn = self.control
        return self.gain * (ctx.V(cp) - ctx.V(cn))


@dataclass(frozen=True)
class CCCS(Part):
    kind: ClassVar[str] = "cccs"
    keys: ClassVar[tuple[str, ...]] = ("nodes", "control", "gain")
    describe: ClassVar[str] = "current gain*I_control flows a -> b through it"

    def through(self, ctx: Context) -> sympy.Expr:
        return self.gain * ctx.current_of(self.control)


@dataclass(frozen=True)
class VoltageSource(Part):
    kind: ClassVar[str] = "vsource"
    keys: ClassVar[tuple[str, ...]] = ("nodes", "value")
    describe: ClassVar[str] = "V_p - V_n = value; I flows p -> n through it"
    independent: ClassVar[bool] = True

    def branch(self, reference: str) -> tuple[str, str] | None:
        return self.nodes[0], self.nodes[1]

    def kcl_terms(self, ctx: Context) -> list[tuple[str, sympy.Expr]]:
        return []

    def emf(self, ctx: Context) -> sympy.Expr:
        return self.value

    def constraint(self, ctx: Context) -> Constraint | None:
        p, n = self.nodes
        return Constraint("source_constraint", ctx.V(p) - ctx.V(n), self.emf(ctx), (self.id,))


@dataclass(frozen=True)
class VCVS(VoltageSource):
    kind: ClassVar[str] = "vcvs"
    keys: ClassVar[tuple[str, ...]] = ("nodes", "control", "gain")
    describe: ClassVar[str] = "V_p - V_n = gain*(V_cp - V_cn)"
    independent: ClassVar[bool] = False

    def emf(self, ctx: Context) -> sympy.Expr:
        cp, cn = self.control
        return self.gain * (ctx.V(cp) - ctx.V(cn))


@dataclass(frozen=True)
class CCVS(VoltageSource):
    kind: ClassVar[str] = "ccvs"
    keys: ClassVar[tuple[str, ...]] = ("nodes", "control", "gain")
    describe: ClassVar[str] = "V_p - V_n = gain*I_control"
    independent: ClassVar[bool] = False

    def emf(self, ctx: Context) -> sympy.Expr:
        return self.gain * ctx.current_of(self.control)


@dataclass(frozen=True)
class OpAmp(Part):
    """An op-amp: ``nodes`` = (plus, minus, out).

    Ideal (no ``gain``): no input current, V_plus = V_minus, output current unconstrained.
    With ``gain``: V_out = gain*(V_plus - V_minus). Its current I_<id> leaves the output pin into node out.
    """

    kind: ClassVar[str] = "opamp"
    keys: ClassVar[tuple[str, ...]] = ("plus", "minus", "out")
    optional: ClassVar[tuple[str, ...]] = ("gain", "gbw", "rin", "rout", "rails", "max_current")
    describe: ClassVar[str] = "ideal without gain (V_plus = V_minus); with gain: V_out = gain*(V_plus - V_minus)"

    @property
    def plus(self) -> str:
        return self.nodes[0]

    @property
    def minus(self) -> str:
        return self.nodes[1]

    @property
    def out(self) -> str:
        return self.nodes[2]

    @property
    def ideal(self) -> bool:
        return self.gain is None

    def branch(self, reference: str) -> tuple[str, str] | None:
        # The output stage drives node out from the reference: current flows reference -> out inside it.
        return reference, self.out

    def kcl_terms(self, ctx: Context) -> list[tuple[str, sympy.Expr]]:
        return []

    def constraint(self, ctx: Context) -> Constraint | None:
        if self.ideal:
            return Constraint("opamp_equality", ctx.V(self.plus), ctx.V(self.minus), (self.id,))
        return Constraint("opamp_gain", ctx.V(self.out),
                          self.gain * (ctx.V(self.plus) - ctx.V(self.minus)), (self.id,))

    def controls(self) -> tuple[str, ...]:
        return (self.plus, self.minus)


KINDS: dict[str, type[Part]] = {
    cls.kind: cls
    for cls in (Resistor, Capacitor, Inductor, VoltageSource, CurrentSource,
                VCVS, VCCS, CCVS, CCCS, OpAmp)
}
