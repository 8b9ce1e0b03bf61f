"""``nodeterm diff``: what changed between two revisions of a circuit, in circuit terms.

``diff OLD NEW`` compares two files; ``diff FILE --since REV`` compares FILE as
committed at git revision REV with the working copy. Text by default (80
columns), ``--markdown`` for a review, ``--json`` for scripts. Exit status: 0 when
it ran, 2 on bad input; with ``--fail-on-result-change``, 1 when any ``[find]``
result changed (for CI). Never imports Textual.
"""

from __future__ import annotations

import sys

from nodeterm.cli_common import DEFAULT_TIME_LIMIT
from nodeterm.engine import InputError, load_circuit


def add_parsers(sub) -> None:
    p = sub.add_parser("diff", help="what changed between two revisions of a circuit: parts, parameters, "
                                    "equations term by term, results, claims, warnings")
    p.add_argument("file", metavar="OLD", help="the old circuit file (with --since: the file in your working copy)")
    p.add_argument("new", metavar="NEW", nargs="?", help="the new circuit file")
    p.add_argument("--since", metavar="REV",
                   help="compare FILE as committed at git revision REV (commit, branch, tag) with the working copy")
    form = p.add_mutually_exclusive_group()
    form.add_argument("--json", action="store_true", help="print one JSON object (see docs/json-contract.md)")
    form.add_argument("--markdown", action="store_true", help="print Markdown, to paste into a review")
    p.add_argument("--set", action="append", metavar="NAME=VALUE",
                   help="substitute a parameter value into the results of both revisions (repeatable)")
    p.add_argument("--known", action="store_true",
                   help="substitute every parameter that has a value in each file into its results")
    p.add_argument("--relations", action="store_true",
                   help="substitute only the file values written in terms of other parameters (R3 = \"R2\")")
    p.add_argument("--ascii", action="store_true", help="7-bit text only")
    p.add_argument("--fail-on-result-change", action="store_true",
                   help="exit 1 when any [find] result was added, removed or changed (for CI)")
    p.add_argument("--time-limit", type=float, default=DEFAULT_TIME_LIMIT, metavar="SECONDS",
                   help=f"give up after this many seconds (default {DEFAULT_TIME_LIMIT:g}; 0 for no limit)")


def _circuits(args):
    if args.since is not None:
        if args.new is not None:
            raise InputError("give either NEW or --since REV, not both",
                             hint="nodeterm diff OLD NEW, or nodeterm diff FILE --since REV", file="<command line>")
        from nodeterm.engine.review.revisions import load_revision
        old = load_revision(args.file, args.since)
        return old, load_circuit(args.file), f"{args.file}@{args.since}", args.file
    if args.new is None:
        raise InputError("nothing to compare with: give NEW or --since REV",
                         hint="nodeterm diff OLD NEW, or nodeterm diff FILE --since HEAD", file="<command line>")
    return load_circuit(args.file), load_circuit(args.new), args.file, args.new


def _study(circuit, args, label: str):
    """The study of one revision with the value options (checked against that revision's parameters)."""
    from nodeterm.cli_common import EXPLAIN_BUDGET, choice_from
    from nodeterm.engine.circuit.size_limits import check_exact_size
    from nodeterm.engine.study import Study
    from nodeterm.engine.values import COMMAND_LINE, parse_values
    check_exact_size(circuit)
    study = Study(circuit, choice_from(args), explain_budget=EXPLAIN_BUDGET)
    try:
        parse_values(circuit, study.choice.set_items, COMMAND_LINE)
    except InputError as err:
        err.message = f"{err.message} (in {label})"
        raise
    return study


def cmd_diff(args) -> int:
    from nodeterm.engine.review import diff_studies
    from nodeterm.present.diff import diff_json, diff_markdown, diff_text
    old, new, old_label, new_label = _circuits(args)
    diff = diff_studies(_study(old, args, old_label), _study(new, args, new_label), old_label, new_label)
    if args.json:
        print(diff_json(diff))
    elif args.markdown:
        sys.stdout.write(diff_markdown(diff))
    else:
        sys.stdout.write(diff_text(diff, ascii_only=args.ascii))
    return 1 if args.fail_on_result_change and diff.results_changed else 0


COMMANDS = {"diff": cmd_diff}
