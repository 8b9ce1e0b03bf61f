"""The analysis pane: frequency response plots, Monte Carlo, then the analyses as text.

From the top: the keys of the pane; the magnitude and phase of one [find] quantity in s
(:class:`~.response_pane.ResponseView`, ``g`` the next quantity, ``w`` the CSV); the
tolerance run (:class:`~.tolerance_view.ToleranceView`, ``m`` runs, ``c`` cancels); and
the text of every analysis that applies (:func:`analysis_lines`: transfer functions,
limits, real op-amp model, sensitivities, cautions).

:func:`analysis_lines` calls the engine's analyses and the analysis presenters,
each section on its own so that one failing analysis is reported in place and
the others still show. It is computed on request (the pane shown, or ``a``)
in a worker, because some analyses take a while.
"""

from __future__ import annotations

from textual.containers import VerticalScroll
from textual.widgets import Static

from nodeterm.ui.response_pane import ResponseView
from nodeterm.ui.safety import describe, logger
from nodeterm.ui.tolerance_view import ToleranceView

KEYS_LINE = ("g next [find] plot  w write CSV  m Monte Carlo  c cancel  "
             "PgUp/PgDn scroll")


def _section(title: str, make) -> list[str]:
    try:
        lines = make()
    except Exception as exc:  # noqa: BLE001 - one analysis failing must not hide the others
        logger().error("analysis %r failed", title, exc_info=exc)
        lines = [f"! could not compute: {describe(exc)}"]
    if not lines:
        return []
    return [title, "-" * len(title)] + list(lines) + [""]


def analysis_lines(system, solution) -> list[str]:
    """Every analysis that applies to the circuit, as text lines."""
    from nodeterm.engine.analysis.cautions import LINEAR_NOTE, merge, node_cautions, source_cautions
    from nodeterm.engine.analysis.limits import check_limits, limit_warnings, limited_opamps
    from nodeterm.engine.analysis.realopamp import compare_models, has_real_model
    from nodeterm.engine.analysis.sensitivity import nominal_values, scalar_quantities, sensitivities
    from nodeterm.engine.analysis.transfer import transfer_functions
    from nodeterm.present import analysis as show

    circuit = system.circuit
    out: list[str] = []
    checks: list = []

    def cautions():
        extra = source_cautions(circuit, system.values) + node_cautions(solution.node_voltages)
        return show.warning_lines(merge(system.warnings, extra, limit_warnings(checks)))

    def transfer():
        tfs = transfer_functions(solution, circuit)
        lines: list[str] = []
        for tf in tfs.values():
            lines += show.transfer_lines(tf) + [""]
        return lines

    def limits():
        if not limited_opamps(circuit):
            return []
        checks.extend(check_limits(system, solution))
        return show.limits_lines(checks)

    def real():
        if not has_real_model(circuit):
            return []
        return show.comparison_lines(compare_models(circuit, dict(system.values)))

    def sensitivity():
        quantities = scalar_quantities(circuit)  # symbolic, then evaluated at the nominal values
        if not quantities:
            return []
        return show.sensitivity_lines(sensitivities(quantities, nominal_values(circuit, dict(system.values))))

    out += _section("Transfer functions of the [find] quantities (in s)", transfer)
    out += _section("Op-amp output limits (rails, max_current)", limits)
    out += _section("Real op-amp model against the ideal one", real)
    out += _section("Normalized sensitivities (% change per % change of a parameter)", sensitivity)
    out += _section("Cautions", cautions)
    if not out:
        out = ["No analysis applies: no [find] quantity depends on s, no op-amp has limits or a real model.", ""]
    out.append(f"note: {LINEAR_NOTE}")
    return out


class AnalysisPane(VerticalScroll):
    """Response plots and the tolerance run on top, the text of the analyses below (computed on request)."""

    DEFAULT_CSS = """
    AnalysisPane { overflow-y: scroll; }  /* the scrollbar always there: the plots keep their width */
    AnalysisPane > Static { width: 100%; }
    #analysis-keys { text-style: reverse; }
    #analysis-text { margin-top: 1; }
    """

    def compose(self):
        yield Static(KEYS_LINE, id="analysis-keys", markup=False)
        yield ResponseView(id="response-view")
        yield ToleranceView(id="tolerance-view")
        yield Static("(open this pane or press a to run the analyses)", id="analysis-text", markup=False)

    def show_lines(self, lines: list[str]) -> None:
        self.query_one("#analysis-text", Static).update("\n".join(lines))

    def show_system(self, system, solution) -> None:
        """Start the response plots of a solved system and get the tolerance section ready for it."""
        self.query_one(ResponseView).show_system(system, solution)
        self.query_one(ToleranceView).show_system(system)

    def next_quantity(self) -> str | None:
        """Plot the next [find] quantity in s (scrolled into view)."""
        name = self.query_one(ResponseView).next_quantity()
        self.scroll_to_widget(self.query_one(ResponseView), top=True)
        return name

    def quantity_count(self) -> int:
        """How many [find] quantities in s there are to plot."""
        return len(self.query_one(ResponseView).items)

    def write_csv(self, circuit_path: str | None) -> None:
        """Ask for a path and write the response CSV."""
        self.query_one(ResponseView).ask_csv_path(circuit_path)

    def run_monte_carlo(self, system, samples: int | None = None, seed: int | None = None) -> bool:
        """Start a Monte Carlo run on ``system`` (scrolled into view); False when there is nothing to vary."""
        view = self.query_one(ToleranceView)
        view.show_system(system)
        kwargs = {k: v for k, v in (("samples", samples), ("seed", seed)) if v is not None}
        started = view.run(**kwargs)
        self.scroll_to_widget(view, top=True)
        return started

    def cancel_running(self) -> bool:
        """Cancel a running Monte Carlo; True when one was running."""
        return self.query_one(ToleranceView).cancel()

    @property
    def running(self) -> bool:
        """True while a Monte Carlo run is going."""
        return self.query_one(ToleranceView).running
