"""Natural frequencies of the ideal circuit: a mode in the right half-plane means the answer is not real.

Every result of the node equations A(s) x = b(s) (KCL, plus V+ = V- for each op-amp) is a cofactor
of A divided by det A(s), so the roots of det A(s) are the circuit's natural frequencies: the modes
it has with every source set to zero, whether or not a source excites them (an oscillator with no
input solves to zero everywhere). A root with a positive real part is a mode that grows: the
circuit oscillates or runs to a rail, and the solved results (a DC point, a transfer function)
describe no steady state (natural frequencies as the zeros of the network determinant: Chua, Desoer
and Kuh, Linear and Nonlinear Circuits, ch. on natural frequencies, from memory; the Wien-bridge
oscillator starts when its amplifier gain exceeds 3: Franco, Design with Operational Amplifiers and
Analog Integrated Circuits, ch. on oscillators, from memory).

This complements :mod:`nodeterm.engine.equations.feedback`, which finds loops that run away at a
real frequency (inputs swapped, comparators): V+ = V- is symmetric, so the ideal equations cannot
see the sign of an op-amp's loop, but they do carry a loop that is too strong at a complex
frequency (a Wien bridge with gain 3.5, a Sallen-Key stage with gain above 3).

Only with every value known (the values in effect): the determinant is exact (FLINT polynomials in
s, :mod:`nodeterm.engine.solving.fraction_free`) and its roots are isolated with interval
arithmetic (python-flint's ``fmpz_poly.complex_roots``), so a root is reported only when its real
part is certainly positive. Written here because no library takes a circuit's equations to their
natural frequencies; the algebra is FLINT's.
"""

from __future__ import annotations

from nodeterm.engine.errors import Warning
from nodeterm.engine.symbols import s

MAX_UNKNOWNS = 120
"""Larger systems are not checked (the determinant's degree grows with every capacitor)."""
MAX_TERMS = 200_000
"""The elimination stops past this many polynomial terms (the check is then left out)."""


def worth_checking(system) -> bool:
    """Small enough, and something depends on s (a resistive circuit has no modes)."""
    m = system.matrix()
    return m.A.shape[1] <= MAX_UNKNOWNS and m.A.has(s)


def characteristic_polynomial(system) -> list[int] | None:
    """Integer coefficients of det A(s) (lowest power first, common factors of the row scales removed).

    None when a parameter is still a symbol, the equations are not square, or the work is out of
    bounds; ``[]`` when nothing depends on s (a resistive circuit has no modes).
    """
    from nodeterm.engine.solving.fastsolve import PolyField, Unsupported, _symbols_and_atoms, cleared_row
    from nodeterm.engine.solving.fraction_free import TooManyTerms, determinant
    m = system.matrix()
    A = m.A
    n = A.shape[1]
    if A.shape[0] != n or n == 0 or n > MAX_UNKNOWNS:
        return None
    try:
        syms, atoms = _symbols_and_atoms(list(A))
    except Unsupported:
        return None
    if syms - {s} or atoms:
        return None
    if s not in syms:
        return []
    field = PolyField({s})
    rows, scale = [], field.one
    try:
        for i in range(n):
            row, den = cleared_row(field, {j: field.ev(A[i, j]) for j in range(n) if A[i, j] != 0})
            rows.append(row)
            scale = scale * den
        det = determinant(rows, n, field.one, MAX_TERMS)
    except (TooManyTerms, Unsupported, ZeroDivisionError):
        return None
    if det.is_zero():
        return None  # singular: the solve reports it
    g = det.gcd(scale)  # det A(s) = det/scale: the roots of the row scales are not modes
    if not g.is_one():
        det = det / g
    coeffs = [0] * (det.degrees()[0] + 1)
    for exps, c in det.to_dict().items():
        coeffs[exps[0]] = int(c)
    return coeffs


def growing_modes(system) -> list[complex] | None:
    """Natural frequencies whose real part is certainly positive (each once, rad/s), or None
    when the check cannot be made (see :func:`characteristic_polynomial`)."""
    import flint
    coeffs = characteristic_polynomial(system)
    if coeffs is None:
        return None
    if len(coeffs) < 2:
        return []
    out = []
    for root, _ in flint.fmpz_poly(coeffs).complex_roots():
        if root.real > 0:  # an interval: True only when the whole ball is right of the axis
            out.append(complex(float(root.real.mid()), float(root.imag.mid())))
    return out


def stability_warnings(system) -> list[Warning]:
    """An ``unstable`` warning when the circuit, with the values in effect, has a growing mode."""
    roots = growing_modes(system) or []
    shown = [z for z in roots if z.imag >= 0]  # a complex pair once
    if not shown:
        return []
    shown.sort(key=lambda z: -z.real)
    text = ", ".join(_root_text(z) for z in shown[:3]) + (f" and {len(shown) - 3} more" if len(shown) > 3 else "")
    return [Warning(
        "unstable",
        f"with these values the circuit has natural frequencies in the right half-plane (s = {text} rad/s): "
        "it oscillates or runs to a supply rail, so the results describe no steady state; an amplifier "
        "or filter needs less loop gain (an oscillator is meant to start this way)")]


def _root_text(z: complex) -> str:
    if abs(z.imag) <= 1e-12 * abs(z):
        return f"{z.real:.4g}"
    return f"{z.real:.4g} ± {abs(z.imag):.4g}j"
