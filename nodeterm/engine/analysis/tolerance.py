"""Tolerance analysis: Monte Carlo (seeded, batched NumPy) and worst case.

Each parameter with a ``tolerance`` varies independently around its nominal value:

* ``uniform``: x0*(1 + t*U(-1, 1));
* ``normal``: x0*(1 + (t/3)*N(0, 1)) -- the tolerance read as three standard deviations
  (common practice, no source).

A quantity is turned once into a NumPy function with ``sympy.lambdify`` and evaluated on
whole batches of samples, never sample by sample in SymPy.

Worst case by derivative signs (the extreme-value or vertex method: a quantity monotonic
in each parameter over the tolerance box takes its extremes at a corner, and the corner
of the maximum has each parameter at the end where the partial derivative points;
Spence and Soin, Tolerance Design of Electronic Circuits, worst-case analysis, from
memory). The direction is the sign of dF/dx, not of the normalized sensitivity
S = (dF/dx)*(x/F): the two differ when F (an inverting gain) or x is negative, since
sign(dF/dx) = sign(S)*sign(F)*sign(x). With few parameters the result is checked
against every corner of the box.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass
from typing import Callable

import numpy as np
import sympy

from nodeterm.engine.symbols import as_expr
from nodeterm.engine.errors import InputError
from nodeterm.engine.symbols import param, s
from nodeterm.engine.analysis.sensitivity import Sensitivity, sign_of

DISTRIBUTIONS = ("uniform", "normal")
MAX_CORNERS_PARAMS = 12
"""Worst case checks all 2**n corners up to this many toleranced parameters."""


@dataclass(frozen=True)
class Spread:
    """One parameter's variation."""

    name: str
    nominal: float
    tolerance: float
    distribution: str


def spreads(circuit, nominal: dict, distribution: str | None = None) -> list[Spread]:
    """The toleranced parameters with a numeric nominal value (``distribution`` overrides the file)."""
    if distribution is not None and distribution not in DISTRIBUTIONS:
        raise InputError(f"distribution {distribution!r} is not known",
                         hint="use " + " or ".join(DISTRIBUTIONS), file="<command line>")
    out = []
    for name, p in circuit.parameters.items():
        if p.tolerance is None or param(name) not in nominal:
            continue
        out.append(Spread(name, float(nominal[param(name)]), float(p.tolerance),
                          distribution or p.distribution or "uniform"))
    return out


def _function(expr: sympy.Expr, names: list[str]) -> Callable:
    symbols = [param(n) for n in names]
    return sympy.lambdify(symbols, expr, modules="numpy")


def _fixed(expr: sympy.Expr, nominal: dict, varying: set[str]) -> sympy.Expr:
    return expr.xreplace({k: v for k, v in nominal.items() if str(k) not in varying})


@dataclass(frozen=True)
class MonteCarlo:
    """Statistics of one quantity over the samples."""

    quantity: str
    samples: np.ndarray
    nominal: float
    seed: int
    varied: tuple[str, ...]

    @property
    def min(self) -> float:
        return float(self.samples.min())

    @property
    def max(self) -> float:
        return float(self.samples.max())

    @property
    def mean(self) -> float:
        return float(self.samples.mean())

    @property
    def std(self) -> float:
        return float(self.samples.std(ddof=1)) if self.samples.size > 1 else 0.0

    def histogram(self, bins: int = 20) -> tuple[np.ndarray, np.ndarray]:
        return np.histogram(self.samples, bins=bins)


def draw(spread_list: list[Spread], n: int, rng: np.random.Generator) -> dict[str, np.ndarray]:
    """n samples of each parameter."""
    out = {}
    for sp in spread_list:
        if sp.distribution == "normal":
            dev = rng.standard_normal(n) * (sp.tolerance / 3)
        else:
            dev = rng.uniform(-1.0, 1.0, n) * sp.tolerance
        out[sp.name] = sp.nominal * (1 + dev)
    return out


def monte_carlo(quantities: dict[str, sympy.Expr], spread_list: list[Spread], nominal: dict,
                samples: int = 10000, seed: int = 1, batch: int = 20000,
                progress: Callable[[int, int], None] | None = None) -> dict[str, MonteCarlo]:
    """Sample every quantity with the same draws.

    Args:
        quantities: name -> expression in the parameters (no s).
        spread_list: the toleranced parameters.
        nominal: parameter symbol -> nominal value for all the others.
        samples: number of samples N.
        seed: seed of NumPy's generator (the same seed gives the same result).
        batch: samples per NumPy batch.
        progress: called with (done, total) after each batch.

    Raises:
        InputError: a quantity still depends on a parameter without a value, or N < 2.
    """
    if samples < 2:
        raise InputError(f"--samples {samples} is too few", hint="give at least 2 (thousands are usual)",
                         file="<command line>")
    names = [sp.name for sp in spread_list]
    funcs = {}
    for qname, expr in quantities.items():
        fixed = _fixed(as_expr(expr), nominal, set(names))
        rest = fixed.free_symbols - {param(n) for n in names}
        if rest or fixed.has(s):
            raise InputError(f"{qname} still depends on {', '.join(sorted(map(str, rest))) or 's'}",
                             hint="give every parameter a value (in the file or with --set NAME=VALUE)",
                             file="<command line>")
        funcs[qname] = (_function(fixed, names), float(fixed.xreplace(nominal)))
    rng = np.random.default_rng(seed)
    chunks: dict[str, list[np.ndarray]] = {q: [] for q in quantities}
    done = 0
    while done < samples:
        k = min(batch, samples - done)
        xs = draw(spread_list, k, rng)
        args = [xs[n] for n in names]
        for qname, (fn, _) in funcs.items():
            val = np.asarray(fn(*args), dtype=float)
            chunks[qname].append(np.broadcast_to(val, (k,)).copy())
        done += k
        if progress:
            progress(done, samples)
    return {q: MonteCarlo(q, np.concatenate(chunks[q]), funcs[q][1], seed, tuple(names)) for q in quantities}


@dataclass(frozen=True)
class WorstCase:
    """Extremes of one quantity over the tolerance box.

    Attributes:
        low, high: from the sensitivity signs.
        corner_low, corner_high: the true extremes over all corners (None when too many parameters).
        corners: how many corners were checked.
        low_at, high_at: parameter -> -1/+1 ends chosen for low and high.
    """

    quantity: str
    nominal: float
    low: float
    high: float
    corner_low: float | None
    corner_high: float | None
    corners: int
    low_at: dict
    high_at: dict

    @property
    def agrees(self) -> bool | None:
        if self.corner_low is None:
            return None
        return bool(np.isclose(self.low, self.corner_low, rtol=1e-9, atol=0)
                    and np.isclose(self.high, self.corner_high, rtol=1e-9, atol=0))


def worst_case(quantities: dict[str, sympy.Expr], spread_list: list[Spread], nominal: dict,
               sens: list[Sensitivity]) -> dict[str, WorstCase]:
    """Worst case of each quantity from the sensitivity signs, checked against all corners when few."""
    names = [sp.name for sp in spread_list]
    out = {}
    for qname, expr in quantities.items():
        fixed = _fixed(as_expr(expr), nominal, set(names))
        fn = _function(fixed, names)
        nom = float(fixed.xreplace(nominal))
        hi_at = _uphill(fixed, spread_list, nom, sign_of(sens, qname))
        lo_at = {n: -v for n, v in hi_at.items()}

        def at(ends: dict) -> float:
            return float(fn(*[sp.nominal * (1 + ends[sp.name] * sp.tolerance) for sp in spread_list]))

        c_lo = c_hi = None
        corners = 0
        if names and len(names) <= MAX_CORNERS_PARAMS:
            grid = np.array(list(itertools.product((-1.0, 1.0), repeat=len(names))))
            args = [sp.nominal * (1 + grid[:, i] * sp.tolerance) for i, sp in enumerate(spread_list)]
            vals = np.broadcast_to(np.asarray(fn(*args), dtype=float), (len(grid),))
            c_lo, c_hi, corners = float(vals.min()), float(vals.max()), len(grid)
        out[qname] = WorstCase(qname, nom, at(lo_at), at(hi_at), c_lo, c_hi, corners, lo_at, hi_at)
    return out


def _uphill(fixed: sympy.Expr, spread_list: list[Spread], nominal: float, s_signs: dict[str, int]) -> dict[str, int]:
    """Parameter -> +1/-1: the end of its band that raises the quantity (0 when it does not move it).

    The sign of dF/dx at the nominal point; where that cannot be evaluated, sign(S)*sign(F)*sign(x)
    from the normalized sensitivity S.
    """
    point = {param(sp.name): sympy.Float(sp.nominal) for sp in spread_list}
    out = {}
    for sp in spread_list:
        x = param(sp.name)
        try:
            d = complex(sympy.diff(fixed, x).xreplace(point))
            out[sp.name] = 0 if d.real == 0 else (1 if d.real > 0 else -1)
        except (TypeError, ValueError, ZeroDivisionError):
            f_sign = 0 if nominal == 0 else (1 if nominal > 0 else -1)
            x_sign = 1 if sp.nominal >= 0 else -1
            out[sp.name] = s_signs.get(sp.name, 0) * f_sign * x_sign
    return out

