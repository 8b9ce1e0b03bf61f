"""The ``nodeterm`` command line: a thin layer over the engine and the presenters.

``nodeterm solve FILE`` and the other batch commands never import Textual;
``nodeterm [FILE]`` opens the workbench (the Textual UI) lazily.
Exit status: 0 success, 1 a check found a wrong claim, 2 bad input.
"""

from __future__ import annotations

import argparse
import contextlib
import signal
import sys
import threading
from importlib import resources

from nodeterm.engine import InputError, build_system, load_circuit

COMMANDS = {}
DEFAULT_DEMO = "kiln_preamp.toml"


def command(name):
    def deco(fn):
        COMMANDS[name] = fn
        return fn
    return deco


def demo_path(name: str = DEFAULT_DEMO) -> str:
    """Path of a bundled demo circuit (works after a non-editable install)."""
    return str(resources.files("nodeterm.circuits").joinpath(name))


def parse_sets(items: list[str] | None) -> dict[str, str]:
    values: dict[str, str] = {}
    for item in items or []:
        if "=" not in item:
            raise InputError(f"--set {item!r} is not NAME=VALUE", hint="write e.g. --set R1=10k",
                             file="<command line>")
        name, value = item.split("=", 1)
        values[name.strip()] = value.strip()
    return values


def prepare(args) -> "object":
    """Load, build and substitute as the common options ask."""
    circuit = load_circuit(args.file)
    if not getattr(args, "numeric", False):
        from nodeterm.engine.circuit.size_limits import check_exact_size  # not .numeric: that imports NumPy
        check_exact_size(circuit)
    system = build_system(circuit)
    sets = parse_sets(getattr(args, "set", None))
    if sets:  # --set first: its values win over the file's when --known is given too
        try:
            system = system.substitute(sets)
        except InputError as err:
            err.file = err.file if err.file not in (None, circuit.path) else "--set"
            raise
    if getattr(args, "known", False):
        system = system.substitute_known()
    return system


DEFAULT_TIME_LIMIT = 60.0


class OutOfTime(Exception):
    """The command ran past its time limit (--time-limit)."""


@contextlib.contextmanager
def time_limit(seconds: float | None):
    """Stop the work after ``seconds`` with :class:`OutOfTime` (main thread, POSIX only)."""
    usable = (seconds and seconds > 0 and hasattr(signal, "setitimer")
              and threading.current_thread() is threading.main_thread())
    if not usable:
        yield
        return

    def expire(signum, frame):
        raise OutOfTime()

    previous = signal.signal(signal.SIGALRM, expire)
    signal.setitimer(signal.ITIMER_REAL, seconds)
    try:
        yield
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, previous)


def add_common(p: argparse.ArgumentParser) -> None:
    p.add_argument("file", help="circuit file (TOML)")
    p.add_argument("--set", action="append", metavar="NAME=VALUE",
                   help="substitute a parameter value (repeatable), e.g. --set R1=10k")
    p.add_argument("--known", action="store_true", help="substitute every parameter that has a value in the file")
    p.add_argument("--time-limit", type=float, default=DEFAULT_TIME_LIMIT, metavar="SECONDS",
                   help=f"give up after this many seconds (default {DEFAULT_TIME_LIMIT:g}; 0 for no limit)")


@command("solve")
def cmd_solve(args) -> int:
    from nodeterm.present.jsonout import to_json
    from nodeterm.present.text import report
    if args.numeric:
        return _solve_numeric(args)
    system = prepare(args)
    solution = system.solve()
    if args.json:
        print(to_json(system, solution))
    else:
        sys.stdout.write(report(system, solution, ascii_only=args.ascii))
    return 0


def _solve_numeric(args) -> int:
    """``solve --numeric``: double precision from the compiled circuit (nodeterm.engine.solving.numeric)."""
    import math

    from nodeterm.engine.solving.numeric import EXACT_NODE_LIMIT, NumericModel, parse_values
    from nodeterm.present.numeric import numeric_json, numeric_report
    circuit = load_circuit(args.file)
    values = parse_values(circuit, parse_sets(args.set))
    s_value = 0 if args.frequency is None else complex(0, 2 * math.pi * args.frequency)
    solution = NumericModel(circuit, values).solve(s_value)
    if args.json:
        system = prepare(args) if len(circuit.nodes) <= EXACT_NODE_LIMIT else None
        print(numeric_json(circuit, solution, system))
    else:
        sys.stdout.write(numeric_report(circuit, solution, ascii_only=args.ascii))
    return 0


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="nodeterm",
        description="Node-voltage equations of op-amp circuits: derive, solve exactly, audit, export. "
                    "'nodeterm [FILE]' opens the workbench (the bundled demo without FILE).")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    p = sub.add_parser("solve", help="print the steps, equations, matrix and exact results")
    add_common(p)
    p.add_argument("--json", action="store_true", help="print one JSON object (see docs/json-contract.md)")
    p.add_argument("--ascii", action="store_true", help="7-bit output only")
    p.add_argument("--numeric", action="store_true",
                   help="double precision instead of exact fractions (every parameter needs a value); "
                        "for big circuits")
    p.add_argument("--frequency", type=float, metavar="HZ",
                   help="with --numeric: solve at s = j*2*pi*HZ instead of DC")
    for extend in _EXTENSIONS:
        extend(sub)
    return parser


_EXTENSIONS: list = []  # other modules add their subcommands here (see register_subcommand)


def register_subcommand(fn):
    """Let a module add a subcommand: fn(subparsers) adds a parser and @command registers its handler."""
    _EXTENSIONS.append(fn)
    return fn


def _load_extensions() -> None:
    import importlib
    for mod in ("nodeterm.cli_audit", "nodeterm.cli_analysis", "nodeterm.cli_diff"):
        try:
            importlib.import_module(mod)
        except ModuleNotFoundError as err:
            if err.name != mod:
                raise


def open_workbench(path: str | None) -> int:
    from nodeterm.ui.app import run  # Textual is imported only here
    return run(path)


def main(argv: list[str] | None = None) -> int:
    argv = list(sys.argv[1:] if argv is None else argv)
    _load_extensions()
    try:
        if not argv or (argv[0] not in COMMANDS and argv[0] not in ("-h", "--help", "--version")
                        and not argv[0].startswith("-")):
            if len(argv) > 1:
                print(f"nodeterm: unexpected arguments {' '.join(argv[1:])!r}; "
                      "use 'nodeterm FILE' or 'nodeterm COMMAND ...' (see nodeterm --help)", file=sys.stderr)
                return 2
            path = argv[0] if argv else None
            if path is not None:
                load_circuit(path)  # a bad file is reported here, before the screen opens
            return open_workbench(path)
        if argv[0] == "--version":
            from nodeterm import __version__
            print(f"nodeterm {__version__}")
            return 0
        parser = build_parser()
        try:
            args = parser.parse_args(argv)
        except SystemExit as exc:  # argparse already printed its message
            return 0 if exc.code == 0 else 2
        limit = getattr(args, "time_limit", DEFAULT_TIME_LIMIT)
        try:
            with time_limit(limit):
                return COMMANDS[args.command](args)
        except OutOfTime:
            print(f"nodeterm: {args.file if hasattr(args, 'file') else ''}: error: the exact work did not finish "
                  f"within {limit:g} s; substitute values (--known, --set NAME=VALUE) to shrink the algebra, "
                  "use --numeric, or raise --time-limit", file=sys.stderr)
            return 2
    except InputError as err:
        print(f"nodeterm: {err}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("nodeterm: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:
        return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
