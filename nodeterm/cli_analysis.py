"""Subcommands for the analyses beyond the ideal answer (registered with :mod:`nodeterm.cli`).

``nodeterm response FILE``    H(s), poles/zeros, w0/Q, frequency response (``--plot``, ``--csv PATH``)
``nodeterm real FILE``        the [find] quantities with ideal op-amps and with the real model
``nodeterm limits FILE``      op-amp output voltage/current against rails/max_current; load range
``nodeterm sensitivity FILE`` normalized sensitivities, ranked
``nodeterm tolerance FILE``   Monte Carlo and worst case over the parameter tolerances

The common options mean what they mean everywhere (:mod:`nodeterm.cli_common`): ``--set``,
``--known`` and ``--relations`` choose what is substituted into the exact results shown; the numbers
(responses, limits, Monte Carlo, real op-amp errors) always use every value known, the file's
overridden by ``--set``. Exit 0 ok, 1 a limit is exceeded (``limits``), 2 bad input. Never imports
Textual.
"""

from __future__ import annotations

import sys

from nodeterm.cli_common import add_common, strict_status, study_from
from nodeterm.engine.circuit.expr import ExpressionError, parse_expression
from nodeterm.engine.errors import InputError, SolveError

CMDLINE = "<command line>"


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


def add_parsers(sub) -> None:
    p = sub.add_parser("response", help="H(s) = N/D, poles, zeros, w0/Q, frequency response")
    add_common(p)
    p.add_argument("--find", metavar="NAME", help="only this [find] quantity")
    p.add_argument("--from", dest="f_from", metavar="FREQ", help="lowest frequency (Hz), e.g. 10")
    p.add_argument("--to", dest="f_to", metavar="FREQ", help="highest frequency (Hz), e.g. 100k")
    p.add_argument("--points", type=int, default=400, help="frequencies in the sweep (default 400)")
    p.add_argument("--plot", action="store_true", help="draw magnitude and phase in the terminal")
    p.add_argument("--csv", metavar="PATH", help="write f, |H| dB, phase to a CSV file ('-' for stdout)")
    p.add_argument("--width", type=int, default=80, help="plot width in characters")
    p.add_argument("--height", type=int, default=22, help="plot height in lines")

    p = sub.add_parser("real", help="[find] quantities with ideal op-amps against the real model")
    add_common(p)
    p.add_argument("--at", metavar="FREQ", help="frequency for the relative error (default 1 kHz)")

    p = sub.add_parser("limits", help="op-amp output voltage and current against rails and max_current")
    add_common(p)
    p.add_argument("--load", metavar="NAME", help="the load parameter for the compliance range "
                                                  "(default: the one parameter left without a value)")

    p = sub.add_parser("sensitivity", help="normalized sensitivity of each quantity to each parameter")
    add_common(p)

    p = sub.add_parser("tolerance", help="Monte Carlo and worst case over the parameter tolerances")
    add_common(p)
    p.add_argument("--samples", type=int, default=10000, help="number of Monte Carlo samples (default 10000)")
    p.add_argument("--seed", type=int, default=1, help="random seed (default 1)")
    p.add_argument("--distribution", choices=("uniform", "normal"),
                   help="override every parameter's distribution")
    p.add_argument("--plot", action="store_true", help="draw a histogram of each quantity")
    p.add_argument("--bins", type=int, default=20, help="histogram bins (default 20)")


def cmd_response(args) -> int:
    from nodeterm.engine.analysis.transfer import auto_range, frequency_response
    from nodeterm.engine.solving.fastsolve import ResultTooLarge
    from nodeterm.present.analysis import response_csv, response_plot, response_table, transfer_lines
    f_lo, f_hi = frequency_range(args.f_from, args.f_to)
    if args.points < 2:
        raise InputError(f"--points {args.points} is too few", hint="give at least 2", file=CMDLINE)
    study = study_from(args)
    circuit = study.circuit
    if args.find is not None and args.find not in circuit.find:
        from nodeterm.engine.values import did_you_mean
        near = did_you_mean(args.find, circuit.find)
        raise InputError(f"--find {args.find!r} is not a [find] quantity" + (f"; {near}" if near else ""),
                         hint="[find]: " + (", ".join(circuit.find) or "(none)"), file=CMDLINE)
    numeric = study.numeric
    tfs = numeric.transfer
    try:  # the exact form with the values in effect is shown beside the numbers when it is not too large
        tfs_sym = study.transfer if study is not numeric else tfs
        too_large = ""
    except ResultTooLarge as exc:
        tfs_sym, too_large = {}, exc.message
    if args.find:
        tfs_sym = {k: v for k, v in tfs_sym.items() if k == args.find}
        tfs = {k: v for k, v in tfs.items() if k == args.find}
    numeric_tfs = [tf for tf in tfs.values() if tf.is_numeric]
    if len(numeric_tfs) > 1 and (f_lo is None or f_hi is None):
        # one shared range, so that the CSV's frequency column serves every quantity
        ranges = [auto_range(tf) for tf in numeric_tfs]
        f_lo = min(r[0] for r in ranges) if f_lo is None else f_lo
        f_hi = max(r[1] for r in ranges) if f_hi is None else f_hi
    lines: list[str] = []
    if not tfs:
        lines.append("No [find] quantity depends on s: the circuit has no capacitor, inductor or op-amp gbw "
                     "in its path (or ask for a ratio such as V_out/V_in in [find]).")
    in_effect = "With the values substituted (" + "; ".join(study.choice.describe()) + "):" \
        if study.choice.steps else "With every parameter as a symbol:"
    responses = []
    from nodeterm.present.dimensions import find_units
    units = find_units(circuit)
    for name, tf in tfs.items():
        if name in tfs_sym:
            lines += [in_effect] + ["  " + ln for ln in transfer_lines(tfs_sym[name], args.ascii,
                                                                        units.get(name))]
        else:
            lines += [f"{in_effect[:-1]}: not shown ({too_large}).", ""]
        if study is not numeric and (name not in tfs_sym or tf.expr != tfs_sym[name].expr):
            lines += ["", "With every value known:"] + ["  " + ln for ln in transfer_lines(tf, args.ascii,
                                                                                         units.get(name))]
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
    warnings = _warnings(study)
    _finish(lines, warnings, args.ascii)
    return strict_status(args, warnings, 0)


def _warnings(study) -> tuple:
    """The study's warnings and those of its numbers (cautions need values)."""
    from nodeterm.engine.analysis.cautions import merge
    try:
        return tuple(merge(study.warnings, study.numeric.warnings))
    except SolveError:
        return tuple(study.system.warnings)


def cmd_real(args) -> int:
    from nodeterm.engine.analysis.realopamp import has_real_model
    from nodeterm.present.analysis import comparison_lines
    f = _frequency(args.at, "--at")
    study = study_from(args)
    circuit = study.circuit
    if not has_real_model(circuit):
        _print([f"{args.file}: no op-amp has gain or gbw, so the real model equals the ideal one.",
                'Add e.g. gain = "200k", gbw = "1MHz", rin = "2Meg", rout = "75" to an opamp line '
                "(see docs/circuit-file.md)."])
        return 0
    cmp = study.comparison(f)
    warnings = _warnings(study)
    from nodeterm.present.dimensions import find_units
    _finish(comparison_lines(cmp, args.ascii, find_units(circuit)), warnings, args.ascii)
    return strict_status(args, warnings, 0)


def cmd_limits(args) -> int:
    from nodeterm.engine.analysis.limits import compliance_range, limited_opamps
    from nodeterm.present.analysis import compliance_lines, limits_lines
    study = study_from(args)
    circuit = study.circuit
    values = study.choice.set_items
    if not limited_opamps(circuit):
        _print([f"{args.file}: no op-amp has rails or max_current.",
                'Add e.g. rails = ["-12", "12"], max_current = "20m" to an opamp line.'])
        return 0
    lines: list[str] = []
    if args.load:
        comp = compliance_range(circuit, values, args.load)
        lines += compliance_lines(comp, ascii_only=args.ascii)
        warnings = tuple(study.system.warnings)
        _finish(lines, warnings, args.ascii)
        return strict_status(args, warnings, 0)
    checks = list(study.limits)
    lines += limits_lines(checks, args.ascii)
    if any(not c.checked for c in checks):
        try:
            comp = compliance_range(circuit, values, None)
        except InputError as err:
            lines.append(f"(no load range: {err.message}; {err.hint})")
        else:
            lines += [""] + compliance_lines(comp, ascii_only=args.ascii)
    warnings = _warnings(study)
    _finish(lines, warnings, args.ascii)
    return 1 if any(c.problems for c in checks) else strict_status(args, warnings, 0)


def cmd_sensitivity(args) -> int:
    from nodeterm.present.analysis import sensitivity_lines
    study = study_from(args)
    warnings = _warnings(study)
    _finish(sensitivity_lines(study.sensitivities, args.ascii), warnings, args.ascii)
    return strict_status(args, warnings, 0)


def cmd_tolerance(args) -> int:
    from nodeterm.present.analysis import histogram_plot, tolerance_lines
    if args.bins < 1:
        raise InputError(f"--bins {args.bins} is too few", hint="give at least 1", file=CMDLINE)
    study = study_from(args)
    progress = None
    if sys.stderr.isatty():  # a person watching: one line, rewritten in place; nothing in pipes and logs
        def progress(done: int, total: int) -> None:
            sys.stderr.write(f"\rMonte Carlo: {100 * done // total:3d} % ({done}/{total} samples)")
            if done == total:
                sys.stderr.write("\n")
            sys.stderr.flush()
    spread_list, mc, wc = study.tolerance(args.samples, args.seed, args.distribution, progress=progress)
    if not spread_list:
        _print([f"{args.file}: no parameter has a tolerance.",
                'Write a parameter as R1 = { value = "10k", tolerance = "1%" } (distribution = "normal" '
                "optional)."])
        return 0
    lines = tolerance_lines(mc, wc, spread_list, args.ascii)
    fixed = sorted(sp.name for sp in spread_list if sp.name in study.system.values)
    if fixed:
        lines += ["", f"note: {', '.join(fixed)} have a tolerance but are substituted (--set/--known/--relations), "
                      "so they do not vary here."]
    if args.plot:
        for r in mc.values():
            lines += ["", histogram_plot(r, args.bins)]
    warnings = _warnings(study)
    _finish(lines, warnings, args.ascii)
    return strict_status(args, warnings, 0)


COMMANDS = {"response": cmd_response, "real": cmd_real, "limits": cmd_limits, "sensitivity": cmd_sensitivity,
            "tolerance": cmd_tolerance}
