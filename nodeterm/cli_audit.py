"""``nodeterm check`` and ``nodeterm export``: the audit and the exports from the command line.

``check FILE`` prints one verdict per ``[hand]`` claim and exits with
0 when every claim holds, 1 when any claim does not hold, 2 on bad input: a
file that does not load, a circuit that cannot be solved, no ``[hand]`` table,
or a claim that cannot be checked (unparseable, unknown name, no ``=``, an
identity) -- such a claim is reported as an ``error`` verdict and the rest are
still checked.

``export FILE --to FORMAT`` prints the report, or writes it atomically with
``-o PATH`` (``--force`` to replace an existing file). Neither imports Textual.
"""

from __future__ import annotations

import json
import sys

from nodeterm.cli_common import EXPLAIN_BUDGET, add_common, strict_status, study_from
from nodeterm.engine.errors import InputError
from nodeterm.present.export import FORMATS, render, write_atomic

CHECK_RECORDS = ("system", "solution", "verdicts", "warnings")
EXPORT_RECORDS = ("system", "matrix", "solution", "warnings", "verdicts")
JSON_EXPORT_RECORDS = EXPORT_RECORDS + ("transfer", "limits")  # the solve --json contract's analysis keys
EXPORT_BUDGETS = {"transfer": 20.0}


def add_parsers(sub) -> None:
    p = sub.add_parser("check", help="audit the [hand] derivation: one verdict per claim "
                                     "(exit 0 all hold, 1 any fails, 2 bad input)")
    add_common(p)
    p.add_argument("--json", action="store_true", help="print the verdicts as one JSON object")
    p.add_argument("--explain-time", type=float, default=EXPLAIN_BUDGET, metavar="SECONDS",
                   help=f"time each failing claim's explanation may take (default {EXPLAIN_BUDGET:g}; "
                        "the verdicts never wait for it)")
    p = sub.add_parser("export", help="write the steps, equations, matrix, results and audit in a format")
    add_common(p)
    p.add_argument("--to", required=True, choices=FORMATS, metavar="FORMAT",
                   help="one of: " + ", ".join(FORMATS))
    p.add_argument("-o", "--output", metavar="PATH", help="write to PATH (atomically) instead of printing")
    p.add_argument("--force", action="store_true", help="replace PATH if it exists")


def cmd_check(args) -> int:
    from nodeterm.engine.audit.verdicts import exit_status
    from nodeterm.present.jsonout import check_dict
    from nodeterm.present.text import verdicts_text
    study = study_from(args)
    circuit = study.circuit
    if not circuit.hand:
        raise InputError("no claims to check: the file has no [hand] table",
                         hint='add [hand] with your equations, e.g. kcl_inv = "(V_inv - V_in)/R1 + '
                              '(V_inv - V_out)/R2 = 0" (see docs/circuit-file.md)', file=circuit.path)
    try:
        records = study.records(CHECK_RECORDS)
    except InputError as err:
        raise without_numeric(err) from None
    if args.json:
        print(json.dumps(check_dict(records), indent=2, ensure_ascii=False))
    else:
        sys.stdout.write(verdicts_text(records.verdicts, circuit.path, ascii_only=args.ascii,
                                       warnings=records.warnings))
    return strict_status(args, records.warnings, exit_status(records.verdicts))


def without_numeric(err: InputError) -> InputError:
    """``check`` and ``export`` have no --numeric: a solver's hint must not suggest it there."""
    if err.hint and "--numeric" in err.hint:
        err.hint = (err.hint.replace(", or solve in double precision with --numeric", "")
                    .replace("with --numeric", "with `nodeterm solve --numeric`"))
    return err


def cmd_export(args) -> int:
    study = study_from(args)
    try:
        records = study.records(JSON_EXPORT_RECORDS if args.to == "json" else EXPORT_RECORDS,
                                budgets=EXPORT_BUDGETS)
    except InputError as err:
        raise without_numeric(err) from None
    fmt = "ascii" if args.ascii and args.to == "text" else args.to
    text = render(records, fmt)
    if args.output:
        size = write_atomic(args.output, text, force=args.force)
        print(f"nodeterm: wrote {args.output} ({args.to}, {size} bytes)", file=sys.stderr)
    else:
        sys.stdout.write(text)
    return strict_status(args, records.warnings, 0)


COMMANDS = {"check": cmd_check, "export": cmd_export}
