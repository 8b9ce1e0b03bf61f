"""Design review: what changed between two revisions of a circuit, in circuit terms.

:func:`diff_studies` compares two studies and returns an immutable
:class:`CircuitDiff` (parts, parameters, nodes, equations term by term,
results, claims, warnings); :mod:`.revisions` reads a file as committed at a
git revision.
"""

from nodeterm.engine.review.diff import CircuitDiff, diff_circuits, diff_studies

__all__ = ["CircuitDiff", "diff_circuits", "diff_studies"]
