"""One study of one circuit under one choice of values: every record, computed lazily and once.

Every front end -- the text report, ``--json``, ``export``, ``check``, the analysis commands, the
workbench and ``diff`` -- builds a :class:`Study` and asks it for records. A record is computed the
first time it is read and kept (``functools.cached_property``); the study never changes after that,
so it can be pickled to a child process, which computes records and sends the study back
(:meth:`Study.adopt` takes them in).

Records:

* ``system``, ``matrix``, ``solution``: the recorded procedure with the choice's substitutions,
  the labelled ``A x = b`` and the exact answer (FLINT polynomials where the solver uses them);
* ``warnings``: the structural warnings of the procedure, the cautions for the values in effect
  (hazardous voltages from the file or from ``--set``/substitutions, rails), node voltages beyond the
  limits and op-amp limit violations -- merged here and nowhere else;
* ``verdicts``: the audit of the ``[hand]`` claims;
* ``transfer``: H(s) of every ``[find]`` quantity that depends on s;
* ``numeric``: the same circuit with every known value substituted (for plots and number checks);
* ``limits``, ``comparison(f)``, ``sensitivities``, ``tolerance(...)``, ``response(...)``.

Long records have a time budget (:mod:`.budget`): :meth:`Study.records` returns what finished and
names what ran out, so a verdict is never lost waiting for something slower.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property

from nodeterm.engine.budget import OutOfBudget, budget
from nodeterm.engine.circuit.loader import load_circuit
from nodeterm.engine.circuit.model import Circuit
from nodeterm.engine.equations.system import System, build_system
from nodeterm.engine.errors import SolveError
from nodeterm.engine.solving.solve import solve_system
from nodeterm.engine.values import KNOWN, ValueChoice, nominal, numeric_values

RECORDS = ("system", "matrix", "solution", "warnings", "verdicts", "transfer", "limits")
"""The records :meth:`Study.records` knows by name."""


@dataclass(frozen=True)
class Omitted:
    """A record that was not computed, and why (in words a user can act on)."""

    record: str
    reason: str


@dataclass(frozen=True)
class Records:
    """A snapshot of the records a front end asked for; the presenters format only these.

    A record left as None was not asked for (or is in ``omitted`` with the reason).
    """

    circuit: Circuit
    choice: ValueChoice
    system: System | None = None
    matrix: object | None = None
    solution: object | None = None
    warnings: tuple = ()
    verdicts: tuple | None = None
    transfer: dict | None = None
    limits: tuple | None = None
    omitted: tuple[Omitted, ...] = field(default=())

    def omitted_reason(self, record: str) -> str | None:
        for o in self.omitted:
            if o.record == record:
                return o.reason
        return None


class Study:
    """The records of ``circuit`` with the substitutions of ``choice``.

    Args:
        circuit: a loaded circuit.
        choice: the substitutions, in order (the command line's ``--set``/``--known``/``--relations``,
            or the workbench's substitutions).
        explain_budget: seconds for the audit's explanations of failing claims (the verdicts come
            first either way); None for the audit's default.
    """

    def __init__(self, circuit: Circuit, choice: ValueChoice = ValueChoice(),
                 explain_budget: float | None = None) -> None:
        self.circuit = circuit
        self.choice = choice
        self.explain_budget = explain_budget

    @classmethod
    def from_file(cls, path: str, choice: ValueChoice = ValueChoice(), *, exact: bool = True,
                  explain_budget: float | None = None) -> "Study":
        """Load ``path``; with ``exact`` (the default) refuse circuits too large to solve exactly."""
        circuit = load_circuit(path)
        if exact:
            from nodeterm.engine.circuit.size_limits import check_exact_size
            check_exact_size(circuit)
        return cls(circuit, choice, explain_budget)

    def __repr__(self) -> str:  # short: Textual and loggers may repr it on the event loop
        return f"Study({self.circuit.path or self.circuit.title!r}, {self.choice.describe()})"

    def __getstate__(self) -> dict:
        return dict(self.__dict__)

    def __setstate__(self, state: dict) -> None:
        self.__dict__.update(state)

    # --- new studies --------------------------------------------------------------------------
    def with_choice(self, choice: ValueChoice) -> "Study":
        """The same circuit under another choice of values (records are computed anew)."""
        return Study(self.circuit, choice, self.explain_budget)

    def adopt(self, other: "Study") -> "Study":
        """Take in the records another copy of this study computed (e.g. in a child process)."""
        for name, value in other.__dict__.items():
            if name not in ("circuit", "choice", "explain_budget") and name not in self.__dict__:
                self.__dict__[name] = value
        return self

    def computed(self, name: str) -> bool:
        """True when the record ``name`` has been computed already."""
        return name in self.__dict__

    # --- records ------------------------------------------------------------------------------
    @cached_property
    def base_system(self) -> System:
        """The procedure as generated, before any substitution."""
        return build_system(self.circuit)

    @cached_property
    def system(self) -> System:
        """The procedure with each substitution of the choice recorded as a step."""
        system = self.base_system
        for step in self.choice.steps:
            system = system.apply(step)
        return system

    @cached_property
    def matrix(self):
        return self.system.matrix()

    @cached_property
    def solution(self):
        """The exact solution (raises :class:`SolveError` when there is none)."""
        return solve_system(self.system)

    @cached_property
    def numeric_values(self) -> dict:
        """Every parameter value known: the file's, overridden by the choice's ``set`` values."""
        return numeric_values(self.circuit, self.choice.set_items)

    @cached_property
    def nominal(self) -> dict:
        """Parameter symbol -> number, for the parameters with a number value."""
        return nominal(self.circuit, self.choice.set_items)

    @cached_property
    def numeric(self) -> "Study":
        """This study with every known value substituted too (itself when nothing is left to substitute)."""
        if self.system.apply(KNOWN) is self.system:
            return self
        return Study(self.circuit, self.choice.everything_known, self.explain_budget)

    @cached_property
    def warnings(self) -> tuple:
        """Every warning and caution for the values in effect, each once."""
        from nodeterm.engine.analysis.cautions import merge, model_warnings, node_cautions, source_cautions
        from nodeterm.engine.analysis.limits import limit_warnings
        groups = [self.system.warnings, model_warnings(self.circuit),
                  source_cautions(self.circuit, self.choice.set_items)]
        try:
            groups.append(node_cautions(self.solution.node_voltages))
        except SolveError:
            pass
        try:
            groups.append(limit_warnings(list(self.limits)))
        except SolveError:
            pass
        try:
            from nodeterm.engine.analysis.stability import stability_warnings, worth_checking
            if worth_checking(self.system):
                groups.append(stability_warnings(self.numeric.system))
        except SolveError:
            pass
        return tuple(merge(*groups))

    @cached_property
    def verdicts(self) -> tuple:
        """The audit of the ``[hand]`` claims (empty without them); a claim that cannot be checked is an
        ``error`` verdict."""
        if not self.circuit.hand:
            return ()
        from nodeterm.engine.audit.verdicts import audit_claims
        kwargs = {}
        if self.explain_budget is not None:
            import inspect
            if "explain_budget" in inspect.signature(audit_claims).parameters:
                kwargs["explain_budget"] = self.explain_budget
        return tuple(audit_claims(self.system, solution=self.solution, **kwargs))

    @cached_property
    def transfer(self) -> dict:
        """name -> TransferFunction of each ``[find]`` quantity in s (values in effect)."""
        from nodeterm.engine.analysis.transfer import transfer_functions
        return transfer_functions(self.solution, self.circuit)

    @cached_property
    def limits(self) -> tuple:
        """Op-amp outputs against rails and max_current, with every known value (empty without limits)."""
        from nodeterm.engine.analysis.limits import check_limits, limited_opamps
        if not limited_opamps(self.circuit):
            return ()
        num = self.numeric
        return tuple(check_limits(num.system, num.solution))

    @cached_property
    def scalar_quantities(self) -> dict:
        """Scalar quantities of every ``[find]`` result (DC gains, w0, Q, corners) in the parameters."""
        from nodeterm.engine.analysis.sensitivity import scalar_quantities
        return scalar_quantities(self.circuit, self.solution)

    @cached_property
    def sensitivities(self) -> list:
        """Normalized sensitivities of the scalar quantities, ranked at the nominal values."""
        from nodeterm.engine.analysis.sensitivity import sensitivities
        return sensitivities(self.scalar_quantities, self.nominal)

    def comparison(self, frequency: float | None = None):
        """Ideal against real op-amps (every known value), at ``frequency`` Hz."""
        from nodeterm.engine.analysis.realopamp import compare_models
        return compare_models(self.circuit, self.choice.set_items, frequency)

    def tolerance(self, samples: int, seed: int, distribution: str | None = None, progress=None):
        """Monte Carlo and worst case over the tolerances: ``(spreads, monte_carlo, worst_case)``."""
        from nodeterm.engine.analysis.tolerance import monte_carlo, spreads, worst_case
        spread_list = spreads(self.circuit, self.nominal, distribution)
        if not spread_list:
            return spread_list, {}, None
        mc = monte_carlo(self.scalar_quantities, spread_list, self.nominal, samples, seed, progress=progress)
        wc = worst_case(self.scalar_quantities, spread_list, self.nominal, self.sensitivities)
        return spread_list, mc, wc

    # --- snapshots ----------------------------------------------------------------------------
    def records(self, names=RECORDS, budgets: dict | None = None) -> Records:
        """Compute the records ``names`` (in order) and return a snapshot of them.

        Args:
            names: record names from :data:`RECORDS`.
            budgets: record name -> seconds; a record that runs past its budget is left out and
                named in ``Records.omitted`` with the reason. ``system``/``solution`` errors
                (bad input, singular circuits) are raised as usual.
        """
        budgets = budgets or {}
        got: dict = {}
        omitted: list[Omitted] = []
        for name in names:
            if name not in RECORDS:
                raise ValueError(f"unknown record {name!r}")
            seconds = budgets.get(name)
            try:
                with budget(seconds) as token:
                    got[name] = getattr(self, name)
            except OutOfBudget as exc:
                if exc.token is not token:
                    raise
                omitted.append(Omitted(name, f"not computed within {seconds:g} s"))
        if "warnings" in got:
            got["warnings"] = tuple(got["warnings"])
        for name in ("verdicts", "limits"):
            if name in got:
                got[name] = tuple(got[name])
        return Records(self.circuit, self.choice, **got, omitted=tuple(omitted))
