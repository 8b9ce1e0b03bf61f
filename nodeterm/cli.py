"""The ``nodeterm`` command line: a thin layer over the study and the presenters.

``nodeterm solve FILE`` and the other batch commands never import Textual;
``nodeterm [FILE]`` opens the workbench (the Textual UI) lazily.
Exit status: 0 success, 1 a check found a wrong claim (or a warning with ``--strict``), 2 bad input.

Each subcommand module (``cli_audit``, ``cli_analysis``, ``cli_diff``) provides ``add_parsers(sub)`` and a
``COMMANDS`` table; this module puts them together. The options they share are in :mod:`.cli_common`.
They import the engine (SymPy), so they are imported only when a subcommand runs: the workbench
draws its first screen before the engine is imported in this process (:mod:`nodeterm.ui.first_screen`).
"""

from __future__ import annotations

import gc
import os
import sys

# A command is one short process that builds many objects and frees few: the cyclic collector's
# default (a pass every 700 allocations) rescans the big SymPy heap over and over. Fewer, larger
# passes take 10-15 % off loading a 10,000-part file and off big exact results, at the same peak
# memory (measured with benchmarks/records.py). Set before the heavy imports.
gc.set_threshold(100_000, 50, 100)

COMMAND_NAMES = ("solve", "check", "export", "response", "real", "limits", "sensitivity", "tolerance", "diff")
"""Every subcommand (the keys of :data:`COMMANDS`, known without importing the subcommand modules)."""

SOLVE_RECORDS = ("system", "matrix", "solution", "warnings")
JSON_RECORDS = SOLVE_RECORDS + ("transfer", "limits")
JSON_BUDGETS = {"transfer": 20.0}
"""Seconds for the transfer-function record of ``solve --json``; past it the JSON says it was left out."""


def cmd_solve(args) -> int:
    from nodeterm.cli_common import strict_status, study_from
    if args.numeric:
        return _solve_numeric(args)
    study = study_from(args)
    if args.json:
        from nodeterm.present.jsonout import write_json
        records = study.records(JSON_RECORDS, budgets=JSON_BUDGETS)
        write_json(records, sys.stdout)
    else:
        from nodeterm.present.text import report
        records = study.records(SOLVE_RECORDS)
        sys.stdout.write(report(records, ascii_only=args.ascii))
    return strict_status(args, records.warnings, 0)


def _solve_numeric(args) -> int:
    """``solve --numeric``: double precision from the compiled circuit (nodeterm.engine.solving.numeric)."""
    import math

    from nodeterm.engine.circuit.size_limits import EXACT_NODE_LIMIT
    from nodeterm.engine.solving.numeric import NumericModel
    from nodeterm.present.numeric import numeric_json, numeric_report
    from nodeterm.cli_common import study_from
    study = study_from(args, exact=False)
    circuit = study.circuit
    s_value = 0 if args.frequency is None else complex(0, 2 * math.pi * args.frequency)
    solution = NumericModel(circuit, study.numeric_values).solve(s_value)
    if args.json:
        records = study.records(("system", "matrix", "warnings")) if len(circuit.nodes) <= EXACT_NODE_LIMIT \
            else None
        print(numeric_json(circuit, solution, records))
    else:
        sys.stdout.write(numeric_report(circuit, solution, ascii_only=args.ascii))
    return 0


def commands() -> dict:
    """name -> the function that runs the subcommand (imports the subcommand modules on first use)."""
    table = globals().get("COMMANDS")
    if table is None:
        from nodeterm import cli_analysis, cli_audit, cli_diff
        table = {"solve": cmd_solve, **cli_audit.COMMANDS, **cli_analysis.COMMANDS, **cli_diff.COMMANDS}
        globals()["COMMANDS"] = table
    return table


def __getattr__(name: str):
    if name == "COMMANDS":  # ``cli.COMMANDS``: the table, built on first use
        return commands()
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def build_parser() -> argparse.ArgumentParser:
    import argparse
    from nodeterm import cli_analysis, cli_audit, cli_diff
    from nodeterm.cli_common import add_common
    parser = argparse.ArgumentParser(
        prog="nodeterm",
        description="Node-voltage equations of op-amp circuits: derive, solve exactly, audit, export. "
                    "'nodeterm [FILE]' opens the workbench (the bundled demo without FILE).")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    p = sub.add_parser("solve", help="print the steps, equations, matrix and exact results")
    add_common(p)
    p.add_argument("--json", action="store_true", help="print one JSON object (see docs/json-contract.md)")
    p.add_argument("--numeric", action="store_true",
                   help="double precision instead of exact fractions (every parameter needs a value); "
                        "for big circuits")
    p.add_argument("--frequency", type=float, metavar="HZ",
                   help="with --numeric: solve at s = j*2*pi*HZ instead of DC")
    cli_audit.add_parsers(sub)
    cli_analysis.add_parsers(sub)
    cli_diff.add_parsers(sub)
    return parser


def open_workbench(path: str | None, pending=None) -> int:
    """Open the workbench on ``path`` (the bundled demo when None); a file that does not load is
    reported (InputError) before the screen opens.

    A child process (``pending``, else started here) loads the file and prints the first screen's
    text while this process imports Textual (:mod:`nodeterm.ui.first_screen`); without it, the
    file is loaded here first.
    """
    if pending is None:
        from nodeterm.ui import first_screen
        pending = first_screen.start(path, first_screen.results_width())
    from nodeterm.ui.app import run  # Textual is imported only here
    if pending is not None:
        return run(path, pending=pending)  # raises InputError for a bad file, before the screen opens
    if path is not None:
        from nodeterm.engine.circuit.loader import load_circuit
        load_circuit(path)  # a bad file is reported here, before the screen opens
    return run(path)


def main(argv: list[str] | None = None) -> int:
    argv = list(sys.argv[1:] if argv is None else argv)
    workbench = not argv or (argv[0] not in COMMAND_NAMES and argv[0] not in ("-h", "--help", "--version")
                             and not argv[0].startswith("-"))
    pending = None
    if workbench and len(argv) <= 1:  # the first screen's process starts before anything else is imported
        from nodeterm.ui import first_screen
        pending = first_screen.start(argv[0] if argv else None, first_screen.results_width())
    from nodeterm.engine.budget import OutOfBudget, budget  # light (no SymPy)
    from nodeterm.engine.errors import InputError
    try:
        if workbench:
            if len(argv) > 1:
                print(f"nodeterm: unexpected arguments {' '.join(argv[1:])!r}; "
                      "use 'nodeterm FILE' or 'nodeterm COMMAND ...' (see nodeterm --help)", file=sys.stderr)
                return 2
            return open_workbench(argv[0] if argv else None, pending)
        if argv[0] == "--version":
            from nodeterm import __version__
            print(f"nodeterm {__version__}")
            return 0
        parser = build_parser()
        try:
            args = parser.parse_args(argv)
        except SystemExit as exc:  # argparse already printed its message
            return 0 if exc.code == 0 else 2
        from nodeterm.cli_common import DEFAULT_TIME_LIMIT
        limit = getattr(args, "time_limit", DEFAULT_TIME_LIMIT)
        try:
            with budget(limit) as token:
                return commands()[args.command](args)
        except OutOfBudget as exc:
            if exc.token is not token:
                raise
            print(f"nodeterm: {getattr(args, 'file', '')}: error: the exact work did not finish "
                  f"within {limit:g} s; substitute values (--known, --set NAME=VALUE) to shrink the algebra, "
                  + ("use --numeric, " if hasattr(args, "numeric") else "")  # only where the command has it
                  + "or raise --time-limit", file=sys.stderr)
            return 2
    except InputError as err:
        print(f"nodeterm: {err}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("nodeterm: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:
        return 0
    except OSError as err:  # the output could not be written (a full disk, a closed terminal...)
        print(f"nodeterm: error: could not write the output: {err.strerror or err}", file=sys.stderr)
        return 2


def entry() -> None:
    """The ``nodeterm`` console script: :func:`main`, then a batch command leaves at once.

    A command is one short process: once its answer is printed, freeing every object one by one
    (a 10,000-part circuit, SymPy's caches) takes about 0.2 s and changes nothing, so a batch
    command flushes its output streams and ends the process without that teardown. Files the
    commands write are closed before (``with`` blocks). The workbench ends the usual way.
    """
    code = main()
    argv = sys.argv[1:]
    if not argv or argv[0] not in COMMAND_NAMES:
        sys.exit(code)
    for stream in (sys.stdout, sys.stderr):
        try:
            stream.flush()
        except (OSError, ValueError):  # the reader went away, the disk is full, the stream is closed
            pass
    os._exit(code)


__all__ = ["COMMANDS", "COMMAND_NAMES", "build_parser", "commands", "entry", "main"]

if __name__ == "__main__":  # pragma: no cover
    entry()
