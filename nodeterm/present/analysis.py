"""Presenters of the analyses: text blocks, terminal plots (plotext), CSV and JSON-ready data.

Every function takes engine results and returns a string or plain data; none prints.
Plots are drawn by plotext into a string (``plot_size`` sets width x height in
character cells, so they fit an 80x24 terminal or a UI pane). plotext keeps one global
figure, so plotting is serialized with a lock; the numbers come from the engine and the
drawing stays optional.

Public functions for the workbench (see the docstrings):
``transfer_lines``, ``response_table``, ``response_plot``, ``response_csv``,
``comparison_lines``, ``limits_lines``, ``compliance_lines``, ``sensitivity_lines``,
``tolerance_lines``, ``histogram_plot``, ``warning_lines``, ``transfer_dict``,
``limits_dict``.
"""

from __future__ import annotations

import csv
import io
import math
import threading

import numpy as np
import sympy

from nodeterm.engine.symbols import as_expr
from nodeterm.engine.analysis.cautions import LINEAR_NOTE
from nodeterm.present.format import eng, expr_text

_PLOT_LOCK = threading.Lock()


def _real(x: float, unit, ascii_only: bool) -> str:
    # A dimensionless number (Q, a ratio) in plain notation: "707.1 m" would read as metres.
    if not isinstance(unit, str):  # a dimensions.Unit: prefixes only where the unit takes them
        from nodeterm.present.format import number_text
        return number_text(x, unit, ascii_only)
    return eng(x, unit, ascii_only=ascii_only) if unit else f"{x:.4g}"


def _num(value, unit: str = "", ascii_only: bool = False) -> str:
    """A number (or exact expression) for people: engineering notation when it has a unit."""
    if value is None:
        return "-"
    if isinstance(value, (int, float, np.floating)):
        return _real(float(value), unit, ascii_only)
    e = as_expr(value)
    if e in (sympy.zoo, sympy.oo):
        return "infinite"
    if e.is_number and e.is_real:
        return _real(float(e), unit, ascii_only)
    if e.is_number:
        z = complex(e)
        return f"{z.real:.4g}{z.imag:+.4g}j"
    return expr_text(e)


def _exact_and_number(value, unit: str = "", ascii_only: bool = False) -> str:
    e = as_expr(value)
    if e in (sympy.zoo, sympy.oo, -sympy.oo):
        return "infinite"
    text = expr_text(e)
    if e.is_number and e.is_real and not e.is_Integer:
        return f"{text} ({'~' if ascii_only else '≈'} {_num(e, unit, ascii_only)})"
    return text


def _root_text(r) -> str:
    if isinstance(r, complex):
        if abs(r.imag) < 1e-12 * max(abs(r), 1e-300):
            return f"{r.real:.6g}"
        return f"{r.real:.6g} {'+' if r.imag >= 0 else '-'} {abs(r.imag):.6g}j"
    e = as_expr(r)
    if e.is_number:
        z = complex(e)
        exact = expr_text(e)
        if abs(z.imag) < 1e-300:
            return exact if e.is_Rational else f"{exact} (≈ {z.real:.6g})"
        return f"{exact} (≈ {z.real:.6g} {'+' if z.imag >= 0 else '-'} {abs(z.imag):.6g}j)"
    return expr_text(e)


# --- transfer functions ------------------------------------------------------------------------
def transfer_lines(tf, ascii_only: bool = False, unit=None) -> list[str]:
    """H(s) = N/D, its normalized form, coefficients, poles, zeros, gains and sections.

    ``unit``: the unit of H (``dimensions.find_units``), shown with K.
    """
    from nodeterm.present.normal_form import normal_form, normal_form_lines
    out = [f"{tf.name}(s) = N(s)/D(s), order {tf.order}"]
    out.append(f"  N(s) = {expr_text(tf.num)}")
    out.append(f"  D(s) = {expr_text(tf.den)}")
    nf = normal_form(tf)
    if nf is not None:
        out.append("  normalized form:")
        out += normal_form_lines(nf, unit, "    ", ascii_only)
    out.append("  coefficients, highest power of s first:")
    out.append("    N: " + ", ".join(expr_text(c) for c in tf.num_coeffs))
    out.append("    D: " + ", ".join(expr_text(c) for c in tf.den_coeffs))
    for label, roots in (("poles", tf.poles), ("zeros", tf.zeros)):
        if roots is None:
            out.append(f"  {label}: order above 2 with symbols left; give values to find them numerically")
        elif not roots:
            out.append(f"  {label}: none")
        else:
            out.append(f"  {label} (rad/s):")
            out += [f"    s = {_root_text(r)}" for r in roots]
    out.append(f"  DC gain (s -> 0): {_exact_and_number(tf.dc_gain, '', ascii_only)}"
               + (f" = {20 * math.log10(abs(float(tf.dc_gain))):.2f} dB"
                  if tf.dc_gain.is_number and tf.dc_gain.is_finite and tf.dc_gain != 0 else ""))
    out.append(f"  high-frequency gain (s -> oo): {_exact_and_number(tf.hf_gain, '', ascii_only)}")
    for sec in tf.sections:
        what = "pole" if sec.where == "pole" else "zero"
        mult = f" (x{sec.multiplicity})" if sec.multiplicity > 1 else ""
        factor = f" [{expr_text(sec.factor)}]" if sec.factor is not None else ""
        if sec.right_half_plane:
            factor += (" (right half-plane: unstable)" if what == "pole" else
                       " (right half-plane: adds phase lag)")
        if sec.order == 0:
            out.append(f"  {what} at the origin{mult}{factor}: "
                       + ("integrator (-20 dB/decade)" if what == "pole" else "differentiator (+20 dB/decade)"))
        elif sec.order == 1 and sec.w0 is not None:
            out.append(f"  first-order {what}{mult}{factor}: corner wc = {_exact_and_number(sec.w0, 'rad/s', ascii_only)}"
                       f", fc = {_num(sec.f0, 'Hz', ascii_only)}")
        elif sec.order == 2 and sec.w0 is not None:
            q = "infinite" if sec.q == sympy.oo else _exact_and_number(sec.q, "", ascii_only)
            zeta = "0" if sec.q == sympy.oo else _exact_and_number(sympy.nsimplify(sec.damping)
                                                                     if sec.q.is_Float else sec.damping, "",
                                                                     ascii_only)
            out.append(f"  second-order {what}{mult}{factor}:")
            out.append(f"    w0 = {_exact_and_number(sec.w0, 'rad/s', ascii_only)}, f0 = {_num(sec.f0, 'Hz', ascii_only)}")
            out.append(f"    Q = {q}, damping zeta = {zeta}")
        else:
            out.append(f"  factor of order {sec.order}{factor}: give values to split it")
    return out


def response_table(resp, rows: int = 13, ascii_only: bool = False) -> list[str]:
    """A few rows of f, |H| dB and phase, evenly spaced in log f."""
    idx = np.unique(np.linspace(0, len(resp.freqs) - 1, rows).round().astype(int))
    mag, ph = resp.magnitude_db, resp.phase_deg
    out = [f"  {'f':>12}  {'|' + resp.name + '| dB':>10}  {'phase deg':>10}"]
    for i in idx:
        out.append(f"  {_num(resp.freqs[i], 'Hz', ascii_only):>12}  {mag[i]:>10.2f}  {ph[i]:>10.1f}")
    return out


def _figure():
    """plotext's figure object (plotext 6) or the module (plotext 5), cleared."""
    import plotext as plt
    fig = getattr(plt, "figure", None)
    if fig is not None and hasattr(fig, "plot_size"):
        fig.clear()
        return fig, 6
    plt.clf()
    return plt, 5


def _decade_ticks(lo: float, hi: float) -> tuple[list[float], list[str]]:
    """Tick positions in log10(f) at each decade, labelled with SI prefixes (10, 100, 1k...)."""
    ks = list(range(math.ceil(math.log10(lo) - 1e-9), math.floor(math.log10(hi) + 1e-9) + 1))
    return [float(k) for k in ks], [eng(10.0 ** k, digits=3).replace(" ", "") for k in ks]


def _line_plots(panels, width: int, height: int, xlabel: str, logx: bool) -> str:
    """panels: [(title, x, y)] stacked vertically."""
    with _PLOT_LOCK:
        fig, version = _figure()
        n = len(panels)
        if version == 6:
            fig.plot_size(width, height)
            fig.subplots(n, 1)
            for k, (title, x, y) in enumerate(panels, start=1):
                ax = fig.subplot(k, 1)
                # plotted against log10(f) with decade labels: plotext's own log scale ignores custom ticks
                xs = np.log10(np.asarray(x, dtype=float)) if logx else np.asarray(x, dtype=float)
                ax.draw(ax.signal(xs.tolist(), list(map(float, y))))
                if logx:
                    ax.ruler("x").ticks(*_decade_ticks(min(x), max(x)))
                ax.title(title)
                if k == n and xlabel:
                    ax.label(xlabel, "x")
            return fig.build().string(colorless=True)
        fig.plotsize(width, height)
        fig.subplots(n, 1)
        for k, (title, x, y) in enumerate(panels, start=1):
            fig.subplot(k, 1)
            fig.plot(list(map(float, x)), list(map(float, y)))
            if logx:
                fig.xscale("log")
            fig.title(title)
        fig.theme("clear")
        return fig.build()


def response_plot(resp, width: int = 80, height: int = 22) -> str:
    """Magnitude (dB) above phase (degrees) against log frequency, as text."""
    finite = np.isfinite(resp.magnitude_db)
    f = resp.freqs[finite]
    return _line_plots([(f"|{resp.name}| (dB)", f, resp.magnitude_db[finite]),
                        (f"phase of {resp.name} (degrees)", f, resp.phase_deg[finite])],
                       width, height, "frequency (Hz)", True)


def response_csv(responses) -> str:
    """CSV of one or more responses over the same frequencies: f, then |H| dB and phase per quantity.

    The first line is a comment with the linear-model note.
    """
    buf = io.StringIO()
    buf.write(f"# {LINEAR_NOTE}\n")
    w = csv.writer(buf, lineterminator="\n")
    head = ["frequency_hz"]
    for r in responses:
        head += [f"{r.name}_magnitude_db", f"{r.name}_phase_deg"]
    w.writerow(head)
    cols = [responses[0].freqs] + [c for r in responses for c in (r.magnitude_db, r.phase_deg)]
    for row in zip(*cols):
        w.writerow([f"{v:.10g}" for v in row])
    return buf.getvalue()


# --- ideal vs real -------------------------------------------------------------------------------
def _bw_text(bw, ascii_only: bool) -> str:
    if bw is None:
        return "-"
    if bw.low is None:
        return f"DC to {_num(bw.high, 'Hz', ascii_only)}" if bw.high else "beyond the range"
    return f"{_num(bw.low, 'Hz', ascii_only)} to {_num(bw.high, 'Hz', ascii_only)}"


def comparison_lines(cmp, ascii_only: bool = False, units: dict | None = None) -> list[str]:
    """Ideal against real model for every [find] quantity, then the real model's node equations.

    ``units``: [find] name -> unit (``dimensions.find_units``) for the DC values.
    """
    from nodeterm.present.text import equation_text
    out = ["Ideal op-amps against the real model (gain, gbw, rin, rout)", ""]
    for r in cmp.rows:
        unit = (units or {}).get(r.name, "")
        out.append(f"{r.name}")
        out.append(f"  ideal: {expr_text(r.ideal)}")
        out.append(f"  real:  {expr_text(r.real)}")
        out.append(f"  at DC: ideal {_exact_and_number(r.dc_ideal, unit, ascii_only)}, "
                   f"real {_exact_and_number(r.dc_real, unit, ascii_only)}")
        if r.dc_error is not None:
            e = r.dc_error
            pct = f" = {float(e) * 100:.4g} %" if e.is_number else ""
            out.append(f"  relative error at DC: {_exact_and_number(e, '', ascii_only)}{pct}")
        if r.error_at is not None:
            out.append(f"  relative error at {_num(cmp.frequency, 'Hz', ascii_only)}: {r.error_at * 100:.4g} %")
        out.append(f"  -3 dB band: ideal {_bw_text(r.bandwidth_ideal, ascii_only) if r.bandwidth_ideal else 'flat'}"
                   f", real {_bw_text(r.bandwidth_real, ascii_only) if r.bandwidth_real else 'flat'}")
        out.append("")
    out.append("Node equations of the real model")
    for e in cmp.real_system.equations:
        out.append(f"  [{e.label}]  {equation_text(e)}")
    return out


# --- limits ------------------------------------------------------------------------------------------
def limits_lines(checks, ascii_only: bool = False) -> list[str]:
    """Each limited op-amp's output voltage and current against its rails and max_current."""
    if not checks:
        return ["No op-amp has rails or max_current."]
    out = []
    for c in checks:
        status = "OK" if c.ok else ("cannot check: values missing" if not c.checked else "EXCEEDED")
        out.append(f"{c.part}: {status}")
        out.append(f"  output voltage: {_exact_and_number(c.v_out, 'V', ascii_only)}"
                   + (f"  rails [{_num(c.rails[0], 'V', ascii_only)}, {_num(c.rails[1], 'V', ascii_only)}]"
                      if c.rails else ""))
        out.append(f"  output current: {_exact_and_number(c.i_out, 'A', ascii_only)}"
                   + (f"  max {_num(c.max_current, 'A', ascii_only)}" if c.max_current is not None else ""))
        if c.v_peak is not None:
            out.append(f"  peak over frequency: {_num(c.v_peak, 'V', ascii_only)}, {_num(c.i_peak, 'A', ascii_only)}")
        out += [f"  ! {p}" for p in c.problems]
    return out


def _interval_text(allowed, name: str, unit: str, ascii_only: bool) -> str:
    if allowed == sympy.EmptySet:
        return f"no value of {name} keeps every op-amp inside its limits"
    if isinstance(allowed, sympy.Interval):
        lo = "" if allowed.start == 0 else f"{_num(allowed.start, unit, ascii_only)} {'<' if allowed.left_open else '<='} "
        hi = "" if allowed.end == sympy.oo else f" {'<' if allowed.right_open else '<='} {_num(allowed.end, unit, ascii_only)}"
        if not lo and not hi:
            return f"any {name} > 0"
        if not lo:
            lo = "0 < "
        return f"{lo}{name}{hi}"
    return f"{name} in {allowed}"


def compliance_lines(comp, unit: str = "ohm", ascii_only: bool = False) -> list[str]:
    """The load range over which every op-amp stays inside its limits."""
    out = [f"Load compliance ({comp.load} taken as a positive value, at DC):"]
    out.append("  " + _interval_text(comp.allowed, comp.load, unit, ascii_only))
    for pid, a in comp.per_opamp.items():
        out.append(f"    {pid}: {_interval_text(a, comp.load, unit, ascii_only)}")
    for name, f in comp.find.items():
        out.append(f"  {name} = {expr_text(f)}")
    return out


# --- sensitivity and tolerance -------------------------------------------------------------------------
def sensitivity_lines(sens, ascii_only: bool = False) -> list[str]:
    """Ranked normalized sensitivities, grouped by quantity."""
    if not sens:
        return ["No scalar quantity (a result without s, or the DC gain, corner, w0 or Q of a transfer function)",
                "depends on a parameter. Sections (corners, w0, Q) are read only from transfer functions small",
                "enough to factor exactly; with a large symbolic one, substitute values for the parts not",
                "studied (--set NAME=VALUE) so that the rest stay symbolic."]
    out = ["Normalized sensitivity S = (dF/dx)*(x/F): a 1 % change of x changes F by about S %"]
    current = None
    for r in sens:
        if r.quantity != current:
            current = r.quantity
            out.append(f"{current}")
        value = f"{r.value:+.4f}" if r.value is not None else "   (symbolic)"
        out.append(f"  {r.parameter:<12} {value:>10}   S = {expr_text(r.exact)}")
    return out


def tolerance_lines(mc: dict, wc: dict, spread_list, ascii_only: bool = False) -> list[str]:
    """Monte Carlo statistics and worst case per quantity."""
    out = ["Toleranced parameters: " + (", ".join(
        f"{sp.name} {sp.tolerance * 100:g} % {sp.distribution}" for sp in spread_list) or "none")]
    if spread_list and any(sp.distribution == "normal" for sp in spread_list):
        out.append("  (normal: the tolerance is taken as three standard deviations)")
    for q, r in mc.items():
        out.append("")
        out.append(f"{q}: nominal {r.nominal:.6g}, {r.samples.size} samples, seed {r.seed}")
        out.append(f"  min {r.min:.6g}   max {r.max:.6g}   mean {r.mean:.6g}   std {r.std:.4g}"
                   + (f" ({r.std / abs(r.mean) * 100:.3g} % of the mean)" if r.mean else ""))
        w = wc.get(q)
        if w is not None:
            out.append(f"  worst case (sensitivity signs): {w.low:.6g} to {w.high:.6g}")
            if w.corner_low is not None:
                agree = "agrees" if w.agrees else "DIFFERS: the quantity is not monotonic in its parameters"
                out.append(f"  all {w.corners} corners: {w.corner_low:.6g} to {w.corner_high:.6g} ({agree})")
    return out


def histogram_plot(mc, bins: int = 20, width: int = 80, height: int = 16) -> str:
    """Histogram of one quantity's samples, as text."""
    counts, edges = mc.histogram(bins)
    centers = (edges[:-1] + edges[1:]) / 2
    with _PLOT_LOCK:
        fig, version = _figure()
        if version == 6:
            fig.plot_size(width, height)
            bars = fig.bar([float(c) for c in centers], [int(c) for c in counts])
            if bars is not None:
                fig.draw(bars)
            fig.title(f"{mc.quantity}: {mc.samples.size} samples")
            return fig.build().string(colorless=True)
        fig.plotsize(width, height)
        fig.bar([float(c) for c in centers], [int(c) for c in counts])
        fig.title(f"{mc.quantity}: {mc.samples.size} samples")
        fig.theme("clear")
        return fig.build()


def warning_lines(warnings, width: int = 79) -> list[str]:
    """``warning [code] part: message`` per warning, wrapped to ``width`` (continued indented)."""
    from nodeterm.present.text import prose
    return [line for w in warnings
            for line in prose(w.message, "  ", f"warning [{w.code}]{' ' + w.part if w.part else ''}: ", width)]


# --- JSON-ready data ----------------------------------------------------------------------------------
def _json_num(e):
    e = as_expr(e)
    if e in (sympy.zoo, sympy.oo):
        return "oo"
    return expr_text(e)


def _json_root(r):
    if isinstance(r, complex):
        return {"re": r.real, "im": r.imag}
    return expr_text(r)


def transfer_dict(tf, unit=None) -> dict:
    """One transfer function as plain data (expressions as SymPy-syntax strings).

    ``normalized`` (additive): K and the factors of the normalized form, or null.
    """
    sections = []
    for sec in tf.sections:
        d = {"where": sec.where, "order": sec.order,
             "factor": expr_text(sec.factor) if sec.factor is not None else None,
             "right_half_plane": sec.right_half_plane}
        if sec.w0 is not None:
            d["w0"] = _json_num(sec.w0)
            d["f0"] = _json_num(sec.f0)
            if sec.w0.is_number:
                d["f0_hz"] = float(sec.f0)
        if sec.q is not None:
            d["Q"] = _json_num(sec.q)
            d["damping"] = _json_num(sec.damping)
        sections.append(d)
    return {"numerator": expr_text(tf.num), "denominator": expr_text(tf.den),
            "numerator_coeffs": [expr_text(c) for c in tf.num_coeffs],
            "denominator_coeffs": [expr_text(c) for c in tf.den_coeffs],
            "order": tf.order,
            "poles": None if tf.poles is None else [_json_root(r) for r in tf.poles],
            "zeros": None if tf.zeros is None else [_json_root(r) for r in tf.zeros],
            "dc_gain": _json_num(tf.dc_gain), "hf_gain": _json_num(tf.hf_gain),
            "sections": sections, "normalized": _normalized_dict(tf, unit)}


def _normalized_dict(tf, unit=None):
    from nodeterm.present.normal_form import normal_form, normal_form_dict
    nf = normal_form(tf)
    return None if nf is None else normal_form_dict(nf, unit)


def limits_dict(checks) -> dict:
    """Each limited op-amp's operating point and problems as plain data."""
    return {c.part: {"v_out": expr_text(c.v_out), "i_out": expr_text(c.i_out),
                     "rails": [expr_text(r) for r in c.rails] if c.rails else None,
                     "max_current": expr_text(c.max_current) if c.max_current is not None else None,
                     "checked": c.checked, "ok": c.ok, "problems": list(c.problems)} for c in checks}
