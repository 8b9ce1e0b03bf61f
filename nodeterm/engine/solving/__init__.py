"""Solving: exact (FLINT polynomials, SymPy fallback), double precision, and why a system is singular."""
