"""Parameter values: the one place that parses and resolves them.

Every front end (``solve``, ``check``, ``export``, the analysis commands, the workbench) says what
to substitute with a :class:`ValueChoice` and gets its values from here. The meaning is the same
everywhere:

* ``--set NAME=VALUE`` substitutes NAME into the exact results (the value may use other parameters;
  later ``--set`` of the same name wins);
* ``--known`` substitutes every parameter that has a value in the file (values already set win, and a
  file value written in terms of them uses theirs);
* ``--relations`` substitutes only the file values written in terms of other parameters
  (``R3 = "R2"``, ``Rf = "Gain*Rin"``), so matched parts and ratios show in a result that is
  otherwise symbolic;
* numeric work (frequency responses, Monte Carlo, real op-amp errors, limit checks) always evaluates
  with every value known: the file's, overridden by ``--set``. Those numbers never change the exact
  results printed beside them.

Text goes through the expression parser of :mod:`nodeterm.engine.circuit.expr` only.
"""

from __future__ import annotations

import difflib
from dataclasses import dataclass

import sympy

from nodeterm.engine.circuit.expr import ExpressionError, parse_expression
from nodeterm.engine.circuit.units import value_unit_error
from nodeterm.engine.errors import InputError
from nodeterm.engine.symbols import as_expr, param

COMMAND_LINE = "--set"


@dataclass(frozen=True)
class Substitution:
    """One substitution the user asked for, in order.

    Attributes:
        kind: ``"set"`` (the values in ``items``), ``"known"`` (every file value) or ``"relations"``
            (every file value written in terms of other parameters).
        items: for ``"set"``: (name, value) pairs; a value is text in the expression language or a
            SymPy expression.
    """

    kind: str
    items: tuple = ()

    def describe(self) -> str:
        if self.kind == "known":
            return "all known values"
        if self.kind == "relations":
            return "the relations between parameters"
        return ", ".join(f"{n} = {v}" for n, v in self.items)


KNOWN = Substitution("known")
RELATIONS = Substitution("relations")


@dataclass(frozen=True)
class ValueChoice:
    """What to substitute into the exact results: substitutions applied one after another.

    >>> ValueChoice.from_options(["R1=10k"], known=True).describe()
    ['R1 = 10k', 'all known values']
    """

    steps: tuple[Substitution, ...] = ()

    @classmethod
    def from_options(cls, sets: list[str] | dict | None = None, known: bool = False,
                     relations: bool = False) -> "ValueChoice":
        """The command-line options: ``--set`` first (its values win), then relations, then ``--known``."""
        steps = []
        items = parse_set_options(sets) if not isinstance(sets, dict) else dict(sets)
        if items:
            steps.append(Substitution("set", tuple(items.items())))
        if relations:
            steps.append(RELATIONS)
        if known:
            steps.append(KNOWN)
        return cls(tuple(steps))

    def then(self, step: Substitution) -> "ValueChoice":
        return ValueChoice(self.steps + (step,))

    def undo(self) -> "ValueChoice":
        return ValueChoice(self.steps[:-1])

    @property
    def set_items(self) -> dict:
        """Every ``set`` value, later ones winning."""
        out: dict = {}
        for step in self.steps:
            if step.kind == "set":
                out.update(dict(step.items))
        return out

    @property
    def everything_known(self) -> "ValueChoice":
        """This choice followed by every known value (for numeric work)."""
        return self if self.steps and self.steps[-1] == KNOWN else self.then(KNOWN)

    def describe(self) -> list[str]:
        return [s.describe() for s in self.steps]


def parse_set_options(items: list[str] | None) -> dict[str, str]:
    """``NAME=VALUE`` strings to a dict (text values, parsed later against the circuit)."""
    values: dict[str, str] = {}
    for item in items or []:
        if "=" not in item:
            raise InputError(f"--set {item!r} is not NAME=VALUE", hint="write e.g. --set R1=10k",
                             file="<command line>")
        name, value = item.split("=", 1)
        values[name.strip()] = value.strip()
    return values


def did_you_mean(name: str, candidates) -> str:
    """``"; did you mean 'Rin'?"`` for the closest candidate, or ``""``."""
    close = difflib.get_close_matches(name, list(candidates), n=1, cutoff=0.6)
    if not close:
        lowered = {c.lower(): c for c in candidates}
        if name.lower() in lowered:
            close = [lowered[name.lower()]]
    return f"did you mean {close[0]!r}?" if close else ""


def parse_value(circuit, name: str, raw, source: str | None = None) -> sympy.Expr:
    """One value for parameter ``name``: text through our parser, numbers exactly, SymPy objects as they are.

    Raises:
        InputError: unknown parameter (with did-you-mean), a bad value, or a value that names itself.
    """
    params = circuit.parameters
    source = source or circuit.path
    if name not in params:
        near = did_you_mean(name, params)
        raise InputError(f"no parameter {name!r} in the circuit",
                         hint=(f"{near} " if near else "") + "parameters: " + (", ".join(params) or "(none)"),
                         file=source)
    if isinstance(raw, sympy.Basic):
        value = as_expr(raw)  # already a SymPy object, never text
    elif isinstance(raw, bool):
        raise InputError(f"value for {name} must be a number or an expression", file=source)
    elif isinstance(raw, int):
        value = sympy.Integer(raw)
    elif isinstance(raw, float):
        value = sympy.Rational(repr(raw))
    else:
        try:
            value = parse_expression(str(raw), lambda n: param(n) if n in params else None)
        except ExpressionError as err:
            raise InputError(f"value for {name}: {err.message} in {str(raw)!r}", hint=err.hint,
                             column=err.column, file=source) from None
        wrong = value_unit_error(circuit, name, str(raw))
        if wrong:
            raise InputError(wrong, hint="give the value in the unit of what it sets, or without a unit",
                             file=source)
    if value.has(param(name)):
        raise InputError(f"value for {name} refers to {name} itself", hint="give a plain value", file=source)
    return value


def parse_values(circuit, raw: dict, source: str | None = None) -> dict[str, sympy.Expr]:
    """Several values (see :func:`parse_value`), in order."""
    return {name: parse_value(circuit, name, v, source) for name, v in raw.items()}


def _settle(subs: dict) -> dict:
    """Substitute the mapping into itself until nothing changes (the loader rejects cycles)."""
    for _ in range(len(subs) + 1):
        new = {k: v.xreplace(subs) for k, v in subs.items()}
        if new == subs:
            break
        subs = new
    return subs


def file_values(circuit) -> dict[str, sympy.Expr]:
    """Every parameter value written in the file, as written."""
    return {n: p.value for n, p in circuit.parameters.items() if p.value is not None}


def relations(circuit) -> dict[str, sympy.Expr]:
    """File values written in terms of other parameters, resolved through each other only.

    >>> from nodeterm.engine.circuit.loader import parse_circuit
    >>> c = parse_circuit('''
    ... [parameters]
    ... Gain = 100
    ... Rin = "10k"
    ... Rf = "Gain*Rin"
    ... R3 = "Rf"
    ... [parts]
    ... R1 = { kind = "resistor", nodes = ["a", "gnd"], value = "Rf + R3 + Gain*Rin" }
    ... ''')
    >>> relations(c)
    {'Rf': Gain*Rin, 'R3': Gain*Rin}
    """
    rel = {n: v for n, v in file_values(circuit).items() if v.free_symbols}
    subs = _settle({param(n): v for n, v in rel.items()})
    return {str(k): v for k, v in subs.items()}


def numeric_values(circuit, sets: dict | None = None) -> dict[str, sympy.Expr]:
    """Every value known for numeric work: the file's, overridden by ``sets``, each resolved through the others.

    An override reaches the parameters written in terms of it (``Cf = "2*Cg"`` follows ``Cg``).

    >>> from nodeterm.engine.circuit.loader import parse_circuit
    >>> c = parse_circuit('''
    ... [parameters]
    ... Cg = "10n"
    ... Cf = "2*Cg"
    ... [parts]
    ... C1 = { kind = "capacitor", nodes = ["a", "gnd"], value = "Cf" }
    ... ''')
    >>> numeric_values(c, {"Cg": "100n"})["Cf"]
    1/5000000
    """
    raw = file_values(circuit)
    raw.update(parse_values(circuit, sets or {}, COMMAND_LINE))
    subs = _settle({param(n): v for n, v in raw.items()})
    return {str(k): v for k, v in subs.items()}


def nominal(circuit, sets: dict | None = None) -> dict[sympy.Symbol, sympy.Expr]:
    """Parameter symbol -> value, for the parameters whose value is a number."""
    return {param(n): v for n, v in numeric_values(circuit, sets).items() if v.is_number}


def step_values(circuit, step: Substitution, already: dict) -> dict[str, sympy.Expr]:
    """The values one substitution step puts into the exact results.

    Args:
        circuit: the circuit.
        step: the substitution.
        already: name -> value substituted by earlier steps (they win over the file's values).
    """
    if step.kind == "set":
        return parse_values(circuit, dict(step.items), COMMAND_LINE)
    if step.kind == "relations":
        return {n: v for n, v in relations(circuit).items() if n not in already}
    if step.kind == "known":
        raw = {n: v for n, v in file_values(circuit).items() if n not in already}
        if not raw:
            return {}
        mapping = {param(n): v for n, v in {**raw, **already}.items()}
        out = {}
        for name, value in raw.items():
            for _ in range(len(mapping) + 1):  # the loader rejects cycles, so this ends
                new = value.xreplace(mapping)
                if new == value:
                    break
                value = new
            out[name] = value
        return out
    raise ValueError(f"unknown substitution kind {step.kind!r}")
