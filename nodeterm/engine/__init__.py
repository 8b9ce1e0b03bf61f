"""The nodeterm engine: circuit model, parser, node equations, exact solving, audit and analyses.

Never imports Textual. Stages, one subpackage each: ``circuit`` (expression language, model, part
kinds, TOML loader), ``equations`` (the recorded node-voltage procedure), ``solving`` (exact and
double precision), ``audit`` (the engineer's own claims), ``analysis`` (beyond the ideal answer).
:mod:`nodeterm.engine.study` puts them together for every front end. Entry points::

    from nodeterm.engine import load_circuit, parse_circuit, build_system
"""

from nodeterm.engine.circuit.loader import load_circuit, parse_circuit
from nodeterm.engine.circuit.model import Circuit, FindItem, HandItem, Parameter
from nodeterm.engine.equations.equation import Equation, Step, Term
from nodeterm.engine.equations.system import MatrixForm, System, build_system
from nodeterm.engine.errors import CircuitError, InputError, SolveError, Warning
from nodeterm.engine.solving.solution import Solution

__all__ = [
    "Circuit", "CircuitError", "Equation", "FindItem", "HandItem", "InputError", "MatrixForm",
    "Parameter", "Solution", "SolveError", "Step", "System", "Term", "Warning", "build_system",
    "load_circuit", "parse_circuit",
]
