"""What every ``nodeterm`` subcommand shares: the common options, building the study, the time limit.

A subcommand is three moves: build a :class:`~nodeterm.engine.study.Study` from the common options
(:func:`study_from`), pick the records it needs, pass them to a presenter. The options mean the same
in every command (see :mod:`nodeterm.engine.values`):

``--set NAME=VALUE``  substitute NAME into the exact results (repeatable; the value may use other parameters)
``--known``           substitute every parameter that has a value in the file
``--relations``       substitute only the file values written in terms of other parameters (``R3 = "R2"``)
``--time-limit S``    give up after S seconds (exit 2)
``--strict``          exit 1 when there is any warning or caution (a warning alone never changes the
                      exit status otherwise)
``--ascii``           7-bit output only

Numeric work (plots, Monte Carlo, limits, real op-amp errors) always uses every value known.
"""

from __future__ import annotations

import argparse

from nodeterm.engine.study import Study
from nodeterm.engine.values import ValueChoice

DEFAULT_TIME_LIMIT = 60.0
EXPLAIN_BUDGET = 10.0
"""Seconds the audit may spend explaining failing claims after their verdicts (``check``, ``export``)."""


def add_common(p: argparse.ArgumentParser) -> None:
    """The options every subcommand on one circuit file takes."""
    p.add_argument("file", help="circuit file (TOML)")
    p.add_argument("--set", action="append", metavar="NAME=VALUE",
                   help="substitute a parameter value into the exact results (repeatable), e.g. --set R1=10k")
    p.add_argument("--known", action="store_true", help="substitute every parameter that has a value in the file")
    p.add_argument("--relations", action="store_true",
                   help="substitute only the file values written in terms of other parameters (R3 = \"R2\")")
    p.add_argument("--ascii", action="store_true", help="7-bit output only")
    p.add_argument("--strict", action="store_true", help="exit 1 when there is any warning or caution")
    p.add_argument("--time-limit", type=float, default=DEFAULT_TIME_LIMIT, metavar="SECONDS",
                   help=f"give up after this many seconds (default {DEFAULT_TIME_LIMIT:g}; 0 for no limit)")


def choice_from(args) -> ValueChoice:
    return ValueChoice.from_options(getattr(args, "set", None), known=getattr(args, "known", False),
                                    relations=getattr(args, "relations", False))


def study_from(args, exact: bool = True) -> Study:
    """Load the file and make the study the common options ask for (bad input raises InputError)."""
    from nodeterm.engine.values import COMMAND_LINE, parse_values
    study = Study.from_file(args.file, choice_from(args), exact=exact, explain_budget=getattr(args, "explain_time", EXPLAIN_BUDGET))
    parse_values(study.circuit, study.choice.set_items, COMMAND_LINE)  # a bad --set is reported before any work
    return study


def strict_status(args, warnings, status: int) -> int:
    """``status``, or 1 when ``--strict`` is given and there is a warning."""
    if getattr(args, "strict", False) and warnings and status == 0:
        return 1
    return status
