"""The exact answer of a solve, and what both exact solvers share to derive it."""

from __future__ import annotations

from dataclasses import dataclass, field

from nodeterm.engine.errors import SolveError


@dataclass(frozen=True)
class Solution:
    """The exact answer.

    Attributes:
        node_voltages: node -> voltage (reference included).
        currents: part id -> current (op-amp: leaving the output pin into node out).
        find: name -> value of each [find] quantity.
        is_reactive: True when any result depends on s.
        values: parameter values that were substituted.
    """

    node_voltages: dict
    currents: dict
    find: dict
    is_reactive: bool = False
    values: dict = field(default_factory=dict)


def peel_order(nodes, ref: str, branches: dict) -> list[tuple[str, str, str, str]]:
    """The order in which KCL gives each source-branch current, peeling the source forest from its leaves.

    ``branches`` maps a part id to its (a, b) nodes and is emptied of the parts it orders; each entry
    of the result is (part id, the node whose KCL gives its current, a, b).

    >>> br = {"V1": ("a", "gnd"), "V2": ("b", "a")}
    >>> peel_order(["gnd", "a", "b"], "gnd", br)
    [('V2', 'b', 'b', 'a'), ('V1', 'a', 'a', 'gnd')]
    """
    order = []
    progress = True
    while branches and progress:
        progress = False
        for node in nodes:
            if node == ref:
                continue
            incident = [pid for pid, (a, b) in branches.items() if node in (a, b)]
            if len(incident) != 1:
                continue
            pid = incident[0]
            a, b = branches.pop(pid)
            order.append((pid, node, a, b))
            progress = True
    return order


def diagnose_singular(system, m) -> SolveError:
    """Explain in circuit terms why the node equations have no unique solution."""
    from nodeterm.engine.solving.diagnose import explain_singular
    return explain_singular(system, m)
