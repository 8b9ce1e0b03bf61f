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

import difflib
import re
from dataclasses import dataclass
from typing import ClassVar, Protocol

import sympy

from nodeterm.engine.symbols import s


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

    def links(self, reference: str) -> list[tuple[str, str]]:
        """Node pairs this part joins for connectivity (a DC path for non-capacitive kinds)."""
        br = self.branch(reference)
        return [br if br is not None else (self.nodes[0], self.nodes[1])]

    def check(self, numeric) -> list[tuple[str, str]]:
        """(message, hint) for each impossible kind-specific value.

        Args:
            numeric: maps one of the part's expressions to its number once parameters are
                resolved, or to None when it is not a plain real number.
        """
        return []

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
    kind: ClassVar[str] = "current_source"
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
    kind: ClassVar[str] = "voltage_source"
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

    Ideal (no ``gain``, no ``gbw``): no input current, V_plus = V_minus, output current unconstrained.

    Real model (``gain`` = A0 and/or ``gbw`` in Hz): the open-loop gain is the single-pole
    A(s) = A0/(1 + s*A0/(2*pi*GBW)); A0 alone gives a flat gain, GBW alone the integrator 2*pi*GBW/s.
    Without ``rout`` the output is a branch: V_out = A(s)*(V_plus - V_minus), its KCL skipped.
    With ``rout`` the output is the source A(s)*(V_plus - V_minus) behind rout, so node out gets an
    ordinary KCL and the op-amp is not a branch. ``rin`` is a resistance between plus and minus.
    ``rin`` and ``rout`` only act in the real model (with ``gain`` or ``gbw``).
    I_<id> always leaves the output pin into node out.
    """

    kind: ClassVar[str] = "opamp"
    keys: ClassVar[tuple[str, ...]] = ("plus", "minus", "out")
    optional: ClassVar[tuple[str, ...]] = ("gain", "gbw", "rin", "rout", "rails", "max_current")
    describe: ClassVar[str] = ("ideal without gain/gbw (V_plus = V_minus); with them: "
                               "V_out = A(s)*(V_plus - V_minus), A(s) = gain/(1 + s*gain/(2*pi*gbw))")

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
        return self.gain is None and self.get("gbw") is None

    def open_loop_gain(self) -> sympy.Expr | None:
        """A(s) of the real model, or None for an ideal op-amp.

        >>> OpAmp("U1", ("p", "m", "o"), gain=sympy.Integer(1000)).open_loop_gain()
        1000
        >>> OpAmp("U1", ("p", "m", "o"), extra=(("gbw", sympy.Integer(10**6)),)).open_loop_gain()
        2000000*pi/s
        """
        a0, gbw = self.gain, self.get("gbw")
        if gbw is None:
            return a0
        wt = 2 * sympy.pi * gbw
        if a0 is None:
            return wt / s
        return a0 / (1 + s * a0 / wt)

    def _rin(self):
        return None if self.ideal else self.get("rin")

    def _rout(self):
        return None if self.ideal else self.get("rout")

    def _drive(self, ctx: Context) -> sympy.Expr:
        return self.open_loop_gain() * (ctx.V(self.plus) - ctx.V(self.minus))

    def branch(self, reference: str) -> tuple[str, str] | None:
        if self._rout() is not None:
            return None  # a source behind rout: node out gets an ordinary KCL
        # The output stage drives node out from the reference: current flows reference -> out inside it.
        return reference, self.out

    def links(self, reference: str) -> list[tuple[str, str]]:
        pairs = [(reference, self.out)]
        if self._rin() is not None:
            pairs.append((self.plus, self.minus))
        return pairs

    def kcl_terms(self, ctx: Context) -> list[tuple[str, sympy.Expr]]:
        terms: list[tuple[str, sympy.Expr]] = []
        rin = self._rin()
        if rin is not None:
            i_in = (ctx.V(self.plus) - ctx.V(self.minus)) / rin
            terms += [(self.plus, i_in), (self.minus, -i_in)]
        rout = self._rout()
        if rout is not None:
            i_back = (ctx.V(self.out) - self._drive(ctx)) / rout  # leaves node out into the output pin
            terms += [(self.out, i_back), (ctx.reference, -i_back)]
        return terms

    def through(self, ctx: Context) -> sympy.Expr:
        rout = self._rout()
        if rout is None:
            raise NotImplementedError
        return (self._drive(ctx) - ctx.V(self.out)) / rout

    def constraint(self, ctx: Context) -> Constraint | None:
        if self.ideal:
            return Constraint("opamp_equality", ctx.V(self.plus), ctx.V(self.minus), (self.id,))
        if self._rout() is not None:
            return None
        return Constraint("opamp_gain", ctx.V(self.out), self._drive(ctx), (self.id,))

    def controls(self) -> tuple[str, ...]:
        return (self.plus, self.minus)

    def check(self, numeric) -> list[tuple[str, str]]:
        problems: list[tuple[str, str]] = []
        for key, what in (("gbw", "gain-bandwidth product"), ("rin", "input resistance"),
                          ("rout", "output resistance"), ("max_current", "output current limit")):
            v = numeric(self.get(key))
            if v is not None and v <= 0:
                problems.append((f"op-amp {self.id}: {key} = {v} must be positive ({what})",
                                 f"give {key} a value above 0"))
        g = numeric(self.gain)
        if g is not None and g == 0:
            problems.append((f"op-amp {self.id}: gain = 0 makes the output always 0",
                             "give the open-loop gain, e.g. gain = \"100k\", or remove it for an ideal op-amp"))
        rails = self.get("rails")
        if rails is not None:
            low, high = (numeric(r) for r in rails)
            if low is not None and high is not None and low >= high:
                problems.append((f"op-amp {self.id}: rails = [{low}, {high}] has low >= high",
                                 "write rails = [low, high] with low below high, e.g. [\"-12\", \"12\"]"))
        return problems


KINDS: dict[str, type[Part]] = {
    cls.kind: cls
    for cls in (Resistor, Capacitor, Inductor, VoltageSource, CurrentSource,
                VCVS, VCCS, CCVS, CCCS, OpAmp)
}


def suggest_kind(word: object) -> str | None:
    """The kind a misspelt or abbreviated kind word most likely means, or None.

    Kind words are the trade's full words. A source abbreviated by the letter of
    the quantity it sets (V for voltage, I for current) is recognised, as is any
    near miss, whatever its case or separators.

    >>> suggest_kind("isource"), suggest_kind("Voltage Source"), suggest_kind("resistr")
    ('current_source', 'voltage_source', 'resistor')
    >>> suggest_kind("diode") is None
    True
    """
    if not isinstance(word, str):
        return None
    plain = re.sub(r"[^a-z]", "", word.lower())
    for stem in ("source", "src", "sourc"):
        if plain.endswith(stem) and len(plain) > len(stem):
            head = plain[: -len(stem)]
            if "voltage".startswith(head) or head == "v":
                return "voltage_source"
            if "current".startswith(head) or head == "i":
                return "current_source"
    flat = {k.replace("_", ""): k for k in KINDS}
    close = difflib.get_close_matches(plain, list(flat), n=1)
    return flat[close[0]] if close else None

