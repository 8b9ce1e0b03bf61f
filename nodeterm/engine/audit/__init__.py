"""Audit of the engineer's own equations and results ([hand] claims)."""
