"""The node-voltage procedure, step by step, as an engineer writes it by hand.

:func:`build_system` follows the procedure and records every step:

1. reference node and one unknown voltage per other node;
2. voltage-defining parts (sources, controlled voltage sources, op-amp outputs):
   a node tied to the reference through independent sources gets a known
   voltage; a source between unknown nodes makes a supernode and adds its
   constraint equation;
3. KCL (currents leaving = 0) at every node or supernode that does not contain
   an op-amp output (an op-amp output current is unconstrained), each term tied
   to its part;
4. one input equality V_plus = V_minus per ideal op-amp (the gain equation for
   a finite-gain op-amp);
5. substitution of the known voltages and of the input equalities.

Each step is a function of :mod:`.procedure`; the equations and steps it
records are the dataclasses of :mod:`.equation`. The
result is an immutable :class:`System`. ``System.substitute`` records one more
step and returns a new System. Solving is a separate stage
(:func:`nodeterm.engine.solving.solve.solve_system`), called by the study
(:mod:`nodeterm.engine.study`).
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import sympy

from nodeterm.engine.circuit.model import Circuit
from nodeterm.engine.equations.connectivity import connectivity_warnings
from nodeterm.engine.equations.equation import Equation, Step
from nodeterm.engine.equations.feedback import feedback_warnings, opamp_feedback
from nodeterm.engine.errors import Warning
from nodeterm.engine.equations.procedure import (_Context, _check_connected, _dc_path_warnings, kcl_step, opamp_step, reference_step,
                        sources_step, substitution_step, trees, voltage_tree)
from nodeterm.engine.symbols import param
from nodeterm.engine.values import KNOWN, Substitution, parse_values, step_values


@dataclass(frozen=True)
class MatrixForm:
    """The reduced system as ``A x = b`` with labelled rows and columns."""

    A: sympy.Matrix
    b: sympy.Matrix
    rows: tuple[str, ...]
    cols: tuple[str, ...]


def build_system(circuit: Circuit, check_feedback: bool = True) -> "System":
    """Write the node equations of ``circuit`` and record the procedure.

    ``check_feedback=False`` leaves out the op-amp feedback check (:mod:`.feedback`, numbers with
    NumPy, about 0.1 s with the import): no notes or warnings about op-amps without negative feedback.
    The workbench's first screen shows step 1 that way; its session builds the full procedure.

    >>> from nodeterm.engine.circuit.loader import parse_circuit
    >>> c = parse_circuit('''
    ... [parts]
    ... Vs = { kind = "voltage_source", nodes = ["in", "gnd"], value = "Vin" }
    ... R1 = { kind = "resistor", nodes = ["in", "inv"], value = "R1" }
    ... R2 = { kind = "resistor", nodes = ["inv", "out"], value = "R2" }
    ... U1 = { kind = "opamp", plus = "gnd", minus = "inv", out = "out" }
    ... [parameters]
    ... Vin = ""
    ... R1 = ""
    ... R2 = ""
    ... ''')
    >>> sys = build_system(c)
    >>> [e.label for e in sys.equations]
    ['known voltage at in', 'KCL at inv', 'input equality of U1']
    >>> sys.skipped
    (('out', 'U1'),)
    """
    _check_connected(circuit)
    needed: set[str] = set()
    ctx = _Context(circuit, needed)
    # Which source currents must be unknowns (a current-controlled source senses them)?
    for p in circuit.parts:
        if isinstance(p.control, str):
            ctx.current_of(p.control)
    branches, forest = voltage_tree(circuit, needed)
    components, ref_root = trees(circuit, forest)
    unknown_nodes, unknowns, reference = reference_step(circuit, needed)
    known, source_eqs, opamp_eqs, set_by_sources, skipped, sources = sources_step(
        circuit, ctx, branches, forest, components, ref_root, needed, unknown_nodes)
    kcl_eqs, kcl = kcl_step(circuit, ctx, components, ref_root, needed, skipped, set_by_sources)
    feedback = opamp_feedback(circuit) if check_feedback else {}
    opamps = opamp_step(circuit, opamp_eqs, feedback)
    equations = tuple(source_eqs + kcl_eqs + opamp_eqs)
    reduced, eliminated, red_unknowns, substitution = substitution_step(
        circuit, known, source_eqs + kcl_eqs + opamp_eqs, unknowns)
    steps = [reference, sources, kcl, opamps, substitution]
    warnings = (list(circuit.warnings) + connectivity_warnings(circuit) + feedback_warnings(feedback)
                + _dc_path_warnings(circuit))
    return System(circuit=circuit, equations=equations, unknowns=tuple(unknowns), skipped=skipped,
                  steps=tuple(steps), reduced_equations=tuple(reduced), reduced_unknowns=red_unknowns,
                  eliminated=eliminated, needed=tuple(sorted(needed)), values={},
                  warnings=tuple(warnings))


@dataclass(frozen=True)
class System:
    """The recorded node-voltage procedure of one circuit (immutable).

    Attributes:
        circuit: the circuit.
        equations: the equations as generated (before any substitution).
        unknowns: node voltages (and sensed source currents).
        skipped: (node, op-amp id) of the op-amp outputs whose KCL was not written.
        steps: the recorded steps.
        reduced_equations: what is left to solve after the substitutions.
        reduced_unknowns: its unknowns.
        eliminated: unknowns found by substitution (symbol -> expression in the others).
        needed: ids of sources whose current is an unknown.
        values: parameter values substituted so far.
        warnings: legal but suspicious things.
    """

    circuit: Circuit
    equations: tuple[Equation, ...]
    unknowns: tuple[sympy.Symbol, ...]
    skipped: tuple[tuple[str, str], ...]
    steps: tuple[Step, ...]
    reduced_equations: tuple[Equation, ...]
    reduced_unknowns: tuple[sympy.Symbol, ...]
    eliminated: dict
    needed: tuple[str, ...]
    values: dict
    warnings: tuple[Warning, ...] = ()

    # --- substitution ---------------------------------------------------------
    def substitute(self, values: dict, source: str | None = None) -> "System":
        """Substitute parameter values and record the step; returns a new System.

        Args:
            values: name -> value (text in the expression language, a number, or a SymPy expression),
                parsed by :func:`nodeterm.engine.values.parse_value`.
            source: what to name in an error message (a file, ``--set``); the circuit file by default.
        """
        parsed = parse_values(self.circuit, values, source)
        previous = {param(n): v for n, v in self.values.items()}
        parsed = {n: v.xreplace(previous) for n, v in parsed.items()}
        mapping = {param(n): v for n, v in parsed.items()}
        if not mapping:
            return self
        reduced = tuple(e.subs(mapping) for e in self.reduced_equations)
        eliminated = {k: v.xreplace(mapping) for k, v in self.eliminated.items()}
        values = {**{n: v.xreplace(mapping) for n, v in self.values.items()}, **parsed}
        step = Step("parameter_substitution", "Substitute " + ", ".join(parsed),
                    "Parameter values substituted: " + ", ".join(f"{n} = {v}" for n, v in parsed.items()) + ".",
                    reduced, data={"values": dict(parsed)})
        return replace(self, reduced_equations=reduced, eliminated=eliminated, values=values,
                       steps=self.steps + (step,))

    def apply(self, step: Substitution) -> "System":
        """One substitution step of a :class:`~nodeterm.engine.values.ValueChoice`; returns a new System."""
        found = step_values(self.circuit, step, self.values)
        source = "--set" if step.kind == "set" else None
        return self.substitute(found, source) if found else self

    def substitute_known(self) -> "System":
        """Substitute every parameter that has a value in the circuit file.

        Values already substituted win over the file's: a file value written in
        terms of them (``Rf = "Gain*Rin"`` after ``Rin = 4.7k``) uses theirs.
        """
        return self.apply(KNOWN)

    def without_substitutions(self) -> "System":
        """The system as generated, with no parameter values substituted."""
        return build_system(self.circuit)

    # --- matrix and solution ----------------------------------------------------
    def matrix(self) -> MatrixForm:
        """The reduced system as A x = b, rows labelled by equation, columns by unknown.

        Computed once per System (the System is immutable) and kept.
        """
        cached = self.__dict__.get("_matrix")
        if cached is not None:
            return cached
        residuals = [sympy.expand(e.residual) for e in self.reduced_equations]
        if self.reduced_unknowns:
            A, b = sympy.linear_eq_to_matrix(residuals, list(self.reduced_unknowns))
        else:
            A, b = sympy.zeros(len(residuals), 0), sympy.Matrix([-r for r in residuals])
        form = MatrixForm(A, b, tuple(e.label for e in self.reduced_equations),
                          tuple(str(u) for u in self.reduced_unknowns))
        object.__setattr__(self, "_matrix", form)  # a cache on a frozen dataclass, not state
        return form
