"""Size limits of circuit values: refuse what would make exact arithmetic blow up.

A value written in terms of other parameters (``Rf = "Gain*Rin"``) is bounded
through the whole chain before anything is expanded: the bits of its numbers,
its degree in its symbols and its number of terms (:func:`.expr.size_bound`,
:func:`.expr.term_bound`). Anything past :data:`.expr.MAX_NUMBER_BITS`,
:data:`.expr.MAX_EXPONENT` or :data:`.expr.MAX_TERMS` is refused with a message
naming the parameter or part and its line.

>>> from nodeterm.engine.errors import InputError
>>> limits = _SizeLimits(lambda message, hint="", line=None: InputError(message, hint=hint, line=line))
>>> limits.check((10, 10, 2, 0), "parameter R", 3)
>>> try:
...     limits.check((10, 10, 10**6, 0), "parameter R", 3)
... except InputError as err:
...     print(err.message)
parameter R: with the parameters it uses, its value has degree 1000000 in its symbols (limit 64)
"""

from __future__ import annotations

import math

from nodeterm.engine.errors import InputError
from nodeterm.engine.circuit.expr import MAX_EXPONENT, MAX_NUMBER_BITS, MAX_TERMS, size_bound, term_bound
from nodeterm.engine.circuit.model import Parameter
from nodeterm.engine.circuit.parts import Part
from nodeterm.engine.symbols import param


class _SizeLimits:
    """The size bounds of each parameter's value, and the checks against the limits.

    Args:
        error: makes the error to raise, ``error(message, hint=..., line=...)``.
    """

    def __init__(self, error) -> None:
        self.error = error
        self.bounds: dict = {}
        self.terms: dict = {}
        self.vars: dict = {}

    def check_parameters(self, params: dict[str, Parameter]) -> None:
        """Refuse values whose numbers or degree, with the parameters they use, would blow up."""
        self.bounds = {}
        self.terms = {}
        self.vars = {}

        def bound(name: str):
            sym = param(name)
            if sym not in self.bounds:
                value = params[name].value
                deps = {str(x) for x in value.free_symbols} if value is not None else set()
                for d in sorted(deps & set(params)):
                    bound(d)
                self.bounds[sym] = size_bound(value, self.bounds) if value is not None else (0, 0, 1, 0)
                self.terms[sym] = term_bound(value, self.terms) if value is not None else (1, 1)
                self.vars[sym] = (set().union(*(self.vars[param(d)] for d in deps & set(params)))
                                  | {n for n in deps if n not in params}) if value is not None else {name}
                self.check(self.bounds[sym], f"parameter {name}", params[name].line, self.terms[sym],
                           len(self.vars[sym]))
            return self.bounds[sym]

        for name in params:
            bound(name)

    def check_parts(self, parts: list[Part]) -> None:
        """Refuse part values and gains that, with the parameters they use, would blow up."""
        passed: set = set()  # parts share values (every 1k resistor): check each distinct one once
        for p in parts:
            for what, expr in (("value", p.value), ("gain", p.gain)):
                if expr is not None and expr not in passed:
                    syms = self.vars
                    nvars = len(set().union(*(syms.get(x, {str(x)}) for x in expr.free_symbols)))
                    self.check(size_bound(expr, self.bounds), f"part {p.id} {what}", p.line,
                               term_bound(expr, self.terms), nvars)
                    passed.add(expr)

    def check(self, b, what: str, line: int | None, terms: tuple[int, int] = (1, 1),
              nvars: int | None = None) -> None:
        """Raise when bound ``b`` (bits, bits, degree, degree), ``terms`` or ``nvars`` symbols exceed the limits."""
        if max(b[0], b[1]) > MAX_NUMBER_BITS:
            raise self.error(f"{what}: with the parameters it uses, its exact value would need numbers of "
                             f"more than {MAX_NUMBER_BITS} bits",
                             hint="check the powers in the chain of parameters", line=line)
        if max(b[2], b[3]) > MAX_EXPONENT:
            raise self.error(f"{what}: with the parameters it uses, its value has degree "
                             f"{max(b[2], b[3])} in its symbols (limit {MAX_EXPONENT})",
                             hint="check the powers in the chain of parameters", line=line)
        if nvars is not None:  # a polynomial of degree d in v symbols has at most C(v+d, d) terms
            cap = math.comb(nvars + max(b[2], b[3]), nvars) if nvars else 1
            terms = tuple(min(n, cap) for n in terms)
        if max(terms) > MAX_TERMS:
            raise self.error(f"{what}: with the parameters it uses, its value expands to more than "
                             f"{MAX_TERMS} terms",
                             hint="circuit values are short; check the powers (e.g. (a+b+c)^64) in the value",
                             line=line)


EXACT_NODE_LIMIT = 400
"""Above this many nodes ``nodeterm solve`` refuses exact solving and suggests ``--numeric``."""


def check_exact_size(circuit) -> None:
    """Refuse exact solving of a circuit too large for it, pointing to the numeric path.

    Raises:
        InputError: above :data:`EXACT_NODE_LIMIT` nodes.
    """
    if len(circuit.nodes) > EXACT_NODE_LIMIT:
        raise InputError(f"{len(circuit.nodes)} nodes is too many to solve exactly (the limit is "
                         f"{EXACT_NODE_LIMIT}: exact fractions grow with every node)",
                         hint="solve it in double precision with --numeric (every parameter needs a value)",
                         file=circuit.path)
