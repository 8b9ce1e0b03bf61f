"""Subcommands for the analyses beyond the ideal answer (registered with :mod:`nodeterm.cli`).

``nodeterm response FILE``    H(s), poles/zeros, w0/Q, frequency response (``--plot``, ``--csv PATH``)
``nodeterm real FILE``        the [find] quantities with ideal op-amps and with the real model
``nodeterm limits FILE``      op-amp output voltage/current against rails/max_current; load range
``nodeterm sensitivity FILE`` normalized sensitivities, ranked
``nodeterm tolerance FILE``   Monte Carlo and worst case over the parameter tolerances

Values come from the file, then ``--set NAME=VALUE``. Exit 0 ok, 1 a limit is exceeded
(``limits``), 2 bad input. Never imports Textual.
"""

from __future__ import annotations

import argparse
import sys

import sympy

from nodeterm.cli import DEFAULT_TIME_LIMIT, command, parse_sets, register_subcommand
from nodeterm.engine import InputError, build_system, load_circuit
from nodeterm.engine.circuit.expr import ExpressionError, parse_expression
from nodeterm.engine.symbols import param

CMDLINE = "<command line>"


def _values(circuit, args) -> dict[str, sympy.Expr]:
    """--set values parsed with the expression parser (never sympify)."""
    out = {}
    params = circuit.parameters
    for name, text in parse_sets(getattr(args, "set", None)).items():
        if name not in params:
            raise InputError(f"--set {name}: no parameter {name!r} in the circuit",
                             hint="parameters: " + (", ".join(params) or "(none)"), file=CMDLINE)
        try:
            out[name] = parse_expression(text, lambda n: param(n) if n in params else None)
        except ExpressionError as err:
            raise InputError(f"--set {name}={text}: {err.message}", hint=err.hint, file=CMDLINE) from None
    return out


def _frequency(text: str | None, option: str) -> float | None:
    if text is None:
        return None
    try:
        value = parse_expression(text)
    except ExpressionError as err:
        raise InputError(f"{option} {text!r}: {err.message}", hint="write e.g. 10, 1k or 2.5MHz",
                         file=CMDLINE) from None
    if not (value.is_number and value.is_real) or value <= 0:
        raise InputError(f"{option} {text!r} is not a positive frequency", hint="write e.g. 10, 1k or 2.5MHz",
                         file=CMDLINE)
    return float(value)


def frequency_range(f_from: str | None, f_to: str | None) -> tuple[float | None, float | None]:
    """--from/--to parsed and checked (from < to)."""
    lo, hi = _frequency(f_from, "--from"), _frequency(f_to, "--to")
    if lo is not None and hi is not None and lo >= hi:
        raise InputError(f"frequency range --from {f_from} --to {f_to} is empty (from >= to)",
                         hint="give --from below --to, e.g. --from 10 --to 100k", file=CMDLINE)
    return lo, hi


def _print(lines) -> None:
    sys.stdout.write("\n".join(lines).rstrip("\n") + "\n")


def _finish(lines, warnings, ascii_only: bool) -> None:
    from nodeterm.engine.analysis.cautions import LINEAR_NOTE
    from nodeterm.present.analysis import warning_lines
    text = "\n".join(warning_lines(warnings) + ([""] if warnings else []) + list(lines) + ["", f"note: {LINEAR_NOTE}"])
    if ascii_only:
        text = text.replace("≈", "~").replace("µ", "u").replace("Ω", "ohm")
    sys.stdout.write(text + "\n")


def _common(p: argparse.ArgumentParser) -> None:
    p.add_argument("file", help="circuit file (TOML)")
    p.add_argument("--set", action="append", metavar="NAME=VALUE",
                   help="override a parameter value (repeatable), e.g. --set R1=10k")
    p.add_argument("--known", action="store_true",
                   help="accepted for symmetry with solve: the analyses always use the file's values")
    p.add_argument("--ascii", action="store_true", help="7-bit output only")
    p.add_argument("--time-limit", type=float, default=DEFAULT_TIME_LIMIT, metavar="SECONDS",
                   help=f"give up after this many seconds (default {DEFAULT_TIME_LIMIT:g}; 0 for no limit)")


@register_subcommand
def _add(sub) -> None:
    p = sub.add_parser("response", help="H(s) = N/D, poles, zeros, w0/Q, frequency response")
    _common(p)
    p.add_argument("--find", metavar="NAME", help="only this [find] quantity")
    p.add_argument("--from", dest="f_from", metavar="FREQ", help="lowest frequency (Hz), e.g. 10")
    p.add_argument("--to", dest="f_to", metavar="FREQ", help="highest frequency (Hz), e.g. 100k")
    p.add_argument("--points", type=int, default=400, help="frequencies in the sweep (default 400)")
    p.add_argument("--plot", action="store_true", help="draw magnitude and phase in the terminal")
    p.add_argument("--csv", metavar="PATH", help="write f, |H| dB, phase to a CSV file ('-' for stdout)")
    p.add_argument("--width", type=int, default=80, help="plot width in characters")
    p.add_argument("--height", type=int, default=22, help="plot height in lines")

    p = sub.add_parser("real", help="[find] quantities with ideal op-amps against the real model")
    _common(p)
    p.add_argument("--at", metavar="FREQ", help="frequency for the relative error (default 1 kHz)")

    p = sub.add_parser("limits", help="op-amp output voltage and current against rails and max_current")
    _common(p)
    p.add_argument("--load", metavar="NAME", help="the load parameter for the compliance range "
                                                  "(default: the one parameter left without a value)")

    p = sub.add_parser("sensitivity", help="normalized sensitivity of each quantity to each parameter")
    _common(p)

    p = sub.add_parser("tolerance", help="Monte Carlo and worst case over the parameter tolerances")
    _common(p)
    p.add_argument("--samples", type=int, default=10000, help="number of Monte Carlo samples (default 10000)")
    p.add_argument("--seed", type=int, default=1, help="random seed (default 1)")
    p.add_argument("--distribution", choices=("uniform", "normal"),
                   help="override every parameter's distribution")
    p.add_argument("--plot", action="store_true", help="draw a histogram of each quantity")
    p.add_argument("--bins", type=int, default=20, help="histogram bins (default 20)")


@command("response")
def cmd_response(args) -> int:
    from nodeterm.engine.analysis.realopamp import prepared
    from nodeterm.engine.analysis.transfer import auto_range, frequency_response, transfer_functions
    from nodeterm.engine.solving.fastsolve import ResultTooLarge
    from nodeterm.present.analysis import response_csv, response_plot, response_table, transfer_lines
    f_lo, f_hi = frequency_range(args.f_from, args.f_to)
    if args.points < 2:
        raise InputError(f"--points {args.points} is too few", hint="give at least 2", file=CMDLINE)
    circuit = load_circuit(args.file)
    values = _values(circuit, args)
    if args.find is not None and args.find not in circuit.find:
        raise InputError(f"--find {args.find!r} is not a [find] quantity",
                         hint="[find]: " + (", ".join(circuit.find) or "(none)"), file=CMDLINE)
    system = prepared(circuit, values)
    tfs = transfer_functions(system.solve(), circuit)
    try:  # the symbolic form is shown beside the numbers when it is not too large
        tfs_sym = transfer_functions(build_system(circuit).solve(), circuit) if system.values else tfs
        too_large = ""
    except ResultTooLarge as exc:
        tfs_sym, too_large = {}, exc.message
    if args.find:
        tfs_sym = {k: v for k, v in tfs_sym.items() if k == args.find}
        tfs = {k: v for k, v in tfs.items() if k == args.find}
    numeric = [tf for tf in tfs.values() if tf.is_numeric]
    if len(numeric) > 1 and (f_lo is None or f_hi is None):
        # one shared range, so that the CSV's frequency column serves every quantity
        ranges = [auto_range(tf) for tf in numeric]
        f_lo = min(r[0] for r in ranges) if f_lo is None else f_lo
        f_hi = max(r[1] for r in ranges) if f_hi is None else f_hi
    lines: list[str] = []
    if not tfs:
        lines.append("No [find] quantity depends on s: the circuit has no capacitor, inductor or op-amp gbw "
                     "in its path (or ask for a ratio such as V_out/V_in in [find]).")
    responses = []
    for name, tf in tfs.items():
        if name in tfs_sym:
            lines += ["With every parameter as a symbol:"] + ["  " + ln for ln in transfer_lines(tfs_sym[name], args.ascii)]
        else:
            lines += [f"With every parameter as a symbol: not shown ({too_large}).", ""]
        if system.values and (name not in tfs_sym or tf.expr != tfs_sym[name].expr):
            lines += ["", "With the values:"] + ["  " + ln for ln in transfer_lines(tf, args.ascii)]
        if tf.is_numeric:
            resp = frequency_response(tf, f_lo, f_hi, args.points)
            responses.append(resp)
            lines += ["", f"Frequency response of {name}:"] + response_table(resp, ascii_only=args.ascii)
            if args.plot:
                lines += ["", response_plot(resp, args.width, args.height)]
        else:
            lines.append(f"  (no frequency response: give values for {', '.join(sorted(map(str, tf.symbols)))}"
                         " with --set or in the file)")
        lines.append("")
    if args.csv:
        if not responses:
            raise InputError("nothing to write: no [find] quantity has a numeric frequency response",
                             hint="give every parameter a value (in the file or with --set)", file=CMDLINE)
        text = response_csv(responses)
        if args.csv == "-":
            sys.stdout.write(text)
            return 0
        from nodeterm.present.export import write_atomic
        write_atomic(args.csv, text, force=True)  # asked for by name: replaced, atomically (ExportError says why not)
        lines.append(f"wrote {args.csv}")
    _finish(lines, _warnings(system), args.ascii)
    return 0


def _warnings(system, solution=None, checks=()):
    from nodeterm.engine.analysis.cautions import merge, node_cautions, source_cautions
    from nodeterm.engine.analysis.limits import limit_warnings
    extra = source_cautions(system.circuit, system.values)
    if solution is not None:
        extra += node_cautions(solution.node_voltages)
    return merge(system.warnings, extra, limit_warnings(list(checks)))


@command("real")
def cmd_real(args) -> int:
    from nodeterm.engine.analysis.realopamp import compare_models, has_real_model
    from nodeterm.present.analysis import comparison_lines
    f = _frequency(args.at, "--at")
    circuit = load_circuit(args.file)
    values = _values(circuit, args)
    if not has_real_model(circuit):
        _print([f"{args.file}: no op-amp has gain or gbw, so the real model equals the ideal one.",
                'Add e.g. gain = "200k", gbw = "1MHz", rin = "2Meg", rout = "75" to an opamp line '
                "(see docs/circuit-file.md)."])
        return 0
    cmp = compare_models(circuit, values, f)
    _finish(comparison_lines(cmp, args.ascii), _warnings(cmp.real_system), args.ascii)
    return 0


@command("limits")
def cmd_limits(args) -> int:
    from nodeterm.engine.analysis.limits import check_limits, compliance_range, limited_opamps
    from nodeterm.engine.analysis.realopamp import prepared
    from nodeterm.present.analysis import compliance_lines, limits_lines
    circuit = load_circuit(args.file)
    values = _values(circuit, args)
    if not limited_opamps(circuit):
        _print([f"{args.file}: no op-amp has rails or max_current.",
                'Add e.g. rails = ["-12", "12"], max_current = "20m" to an opamp line.'])
        return 0
    lines: list[str] = []
    if args.load:
        comp = compliance_range(circuit, values, args.load)
        lines += compliance_lines(comp, ascii_only=args.ascii)
        system = prepared(circuit, {n: v for n, v in values.items() if n != args.load})
        _finish(lines, _warnings(system), args.ascii)
        return 0
    system = prepared(circuit, values)
    solution = system.solve()
    checks = check_limits(system, solution)
    lines += limits_lines(checks, args.ascii)
    if any(not c.checked for c in checks):
        try:
            comp = compliance_range(circuit, values, None)
        except InputError as err:
            lines.append(f"(no load range: {err.message}; {err.hint})")
        else:
            lines += [""] + compliance_lines(comp, ascii_only=args.ascii)
    _finish(lines, _warnings(system, solution, checks), args.ascii)
    return 1 if any(c.problems for c in checks) else 0


@command("sensitivity")
def cmd_sensitivity(args) -> int:
    from nodeterm.engine.analysis.sensitivity import nominal_values, scalar_quantities, sensitivities
    from nodeterm.present.analysis import sensitivity_lines
    circuit = load_circuit(args.file)
    values = _values(circuit, args)
    quantities = scalar_quantities(circuit)
    sens = sensitivities(quantities, nominal_values(circuit, values))
    system = build_system(circuit)
    _finish(sensitivity_lines(sens, args.ascii), _warnings(system.substitute(values) if values else system),
            args.ascii)
    return 0


@command("tolerance")
def cmd_tolerance(args) -> int:
    from nodeterm.engine.analysis.sensitivity import nominal_values, scalar_quantities, sensitivities
    from nodeterm.engine.analysis.tolerance import monte_carlo, spreads, worst_case
    from nodeterm.present.analysis import histogram_plot, tolerance_lines
    if args.bins < 1:
        raise InputError(f"--bins {args.bins} is too few", hint="give at least 1", file=CMDLINE)
    circuit = load_circuit(args.file)
    values = _values(circuit, args)
    nominal = nominal_values(circuit, values)
    spread_list = spreads(circuit, nominal, args.distribution)
    if not spread_list:
        _print([f"{args.file}: no parameter has a tolerance.",
                'Write a parameter as R1 = { value = "10k", tolerance = "1%" } (distribution = "normal" '
                "optional)."])
        return 0
    quantities = scalar_quantities(circuit)
    progress = None
    if sys.stderr.isatty():  # a person watching: one line, rewritten in place; nothing in pipes and logs
        def progress(done: int, total: int) -> None:
            sys.stderr.write(f"\rMonte Carlo: {100 * done // total:3d} % ({done}/{total} samples)")
            if done == total:
                sys.stderr.write("\n")
            sys.stderr.flush()
    mc = monte_carlo(quantities, spread_list, nominal, args.samples, args.seed, progress=progress)
    wc = worst_case(quantities, spread_list, nominal, sensitivities(quantities, nominal))
    lines = tolerance_lines(mc, wc, spread_list, args.ascii)
    if args.plot:
        for r in mc.values():
            lines += ["", histogram_plot(r, args.bins)]
    system = build_system(circuit)
    _finish(lines, _warnings(system.substitute(values) if values else system), args.ascii)
    return 0
