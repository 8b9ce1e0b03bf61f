"""The nodeterm engine: circuit model, parser, node equations, exact solving, audit and analyses.

Never imports Textual. Stages, one subpackage each: ``circuit`` (expression language, model, part
kinds, TOML loader), ``equations`` (the recorded node-voltage procedure), ``solving`` (exact and
double precision), ``audit`` (the engineer's own claims), ``analysis`` (beyond the ideal answer).
:mod:`nodeterm.engine.study` puts them together for every front end. Entry points::

    from nodeterm.engine import load_circuit, parse_circuit, build_system

The names below are imported on first use (PEP 562 module ``__getattr__``): importing a light
module of the engine (``nodeterm.engine.errors``) does not import SymPy, so the workbench can draw
its first screen before the heavy imports are done.
"""

from __future__ import annotations

import importlib

_WHERE = {
    "load_circuit": "circuit.loader", "parse_circuit": "circuit.loader",
    "Circuit": "circuit.model", "FindItem": "circuit.model", "HandItem": "circuit.model",
    "Parameter": "circuit.model",
    "Equation": "equations.equation", "Step": "equations.equation", "Term": "equations.equation",
    "MatrixForm": "equations.system", "System": "equations.system", "build_system": "equations.system",
    "CircuitError": "errors", "InputError": "errors", "SolveError": "errors", "Warning": "errors",
    "Solution": "solving.solution",
}
"""name -> the module (under ``nodeterm.engine``) it comes from."""

__all__ = sorted(_WHERE)


def __getattr__(name: str):
    where = _WHERE.get(name)
    if where is None:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    value = getattr(importlib.import_module(f"{__name__}.{where}"), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_WHERE))
