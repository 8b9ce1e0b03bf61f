"""Analyses beyond the ideal answer: transfer functions, real op-amps, limits, sensitivity,
tolerances and cautions. Pure engine code: NumPy, SciPy and SymPy only, never Textual.
"""
