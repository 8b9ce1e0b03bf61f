"""The nodeterm engine: circuit model, parser, node equations, exact solving.

Never imports Textual. Public entry points::

    from nodeterm.engine import load_circuit, parse_circuit, build_system
"""

from nodeterm.engine.errors import CircuitError, InputError, SolveError, Warning
from nodeterm.engine.circuit.loader import load_circuit, parse_circuit
from nodeterm.engine.circuit.model import Circuit, FindItem, HandItem, Parameter
from nodeterm.engine.solving.solve import Solution, canonical
from nodeterm.engine.equations.system import Equation, MatrixForm, Step, System, Term, build_system

__all__ = [
    "Circuit", "CircuitError", "Equation", "FindItem", "HandItem", "InputError", "MatrixForm",
    "Parameter", "Solution", "SolveError", "Step", "System", "Term", "Warning", "build_system",
    "canonical", "load_circuit", "parse_circuit",
]
