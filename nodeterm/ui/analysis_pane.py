"""The analysis pane: frequency response plots, Monte Carlo, then the analyses as text.

From the top: the keys of the pane; the magnitude and phase of one [find] quantity in s
(:class:`~.response_pane.ResponseView`, ``g`` the next quantity, ``w`` the CSV); the
tolerance run (:class:`~.tolerance_view.ToleranceView`, ``m`` runs, ``c`` cancels); and
the text of every analysis that applies, computed and printed in the solver process
(:func:`nodeterm.ui.analyses.analysis_lines`) when the pane is shown.
"""

from __future__ import annotations

from nodeterm.ui.response_pane import ResponseView
from nodeterm.ui.tolerance_view import ToleranceView
from nodeterm.ui.views import PagedVerticalScroll, TextView

KEYS_LINE = "g next [find] plot  w write CSV  m Monte Carlo  c cancel  PgUp/PgDn scroll"


class AnalysisPane(PagedVerticalScroll):
    """Response plots and the tolerance run on top, the text of the analyses below (computed on request)."""

    DEFAULT_CSS = """
    AnalysisPane { overflow-y: scroll; }  /* the scrollbar always there: the plots keep their width */
    AnalysisPane > TextView { width: 100%; }
    #analysis-keys { text-style: reverse; }
    #analysis-text { margin-top: 1; }
    """

    def compose(self):
        yield TextView(KEYS_LINE, id="analysis-keys")
        yield ResponseView(id="response-view")
        yield ToleranceView(id="tolerance-view")
        yield TextView("(open this pane or press a to run the analyses)", id="analysis-text")

    def show_text(self, text: str) -> None:
        self.query_one("#analysis-text", TextView).set(text)

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
