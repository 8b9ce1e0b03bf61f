"""The nodeterm engine: circuit model, parser, node equations, exact solving.

Never imports Textual. Public entry points::

    from nodeterm.engine import load_circuit, parse_circuit, build_system
"""

from .errors import CircuitError, InputError, SolveError, Warning
from .loader import load_circuit, parse_circuit
from .model import Circuit, FindItem, HandItem, Parameter
from .solve import Solution, canonical
from .system import Equation, MatrixForm, Step, System, Term, build_system

__all__ = [
    "Circuit", "CircuitError", "Equation", "FindItem", "HandItem", "InputError", "MatrixForm",
    "Parameter", "Solution", "SolveError", "Step", "System", "Term", "Warning", "build_system",
    "canonical", "load_circuit", "parse_circuit",
]
