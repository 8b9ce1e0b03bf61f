"""The tolerance section of the analysis pane: Monte Carlo with a progress bar, worst case, histogram.

The engine does the work (:mod:`nodeterm.engine.analysis.tolerance`: seeded Monte Carlo
batched with NumPy, worst case from the sensitivity signs checked against the corners);
the presenters turn it into text (``tolerance_lines``, ``histogram_plot``). This widget
starts the run in a thread worker, moves a ``ProgressBar`` from the engine's progress
callback (through ``call_from_thread``), and stops the run between two batches when it
is cancelled. With the default batch size, N samples and a seed give the same numbers as
``nodeterm tolerance --samples N --seed S``.
"""

from __future__ import annotations

from dataclasses import dataclass

from textual import work
from textual.containers import Vertical
from textual.widgets import ProgressBar, Static
from textual.worker import get_current_worker

from nodeterm.ui.safety import describe, guarded

SAMPLES = 100_000
SEED = 1


class Cancelled(Exception):
    """Raised from the progress callback to stop a Monte Carlo run between two batches."""


@dataclass(frozen=True)
class Study:
    """A finished tolerance run: statistics, worst case, the spreads, and quantities left out (name -> why)."""

    mc: dict
    wc: dict
    spreads: list
    skipped: dict


def toleranced(circuit) -> list[str]:
    """Names of the parameters that carry a tolerance."""
    return [n for n, p in circuit.parameters.items() if p.tolerance is not None]


def tolerance_study(system, samples: int = SAMPLES, seed: int = SEED, progress=None) -> Study:
    """Monte Carlo and worst case of every scalar [find] quantity whose parameters all have values.

    Nominal values: the file's, then the values substituted in the workbench (as ``--set`` on
    the command line). A quantity that still depends on a parameter without a value is left out
    and named in ``skipped``.
    """
    from nodeterm.engine.analysis.sensitivity import nominal_values, scalar_quantities, sensitivities
    from nodeterm.engine.analysis.tolerance import monte_carlo, spreads, worst_case
    circuit = system.circuit
    nominal = nominal_values(circuit, dict(system.values))
    spread_list = spreads(circuit, nominal)
    quantities, skipped = {}, {}
    for name, expr in scalar_quantities(circuit).items():
        rest = expr.free_symbols - set(nominal)
        if rest:
            skipped[name] = "no value for " + ", ".join(sorted(map(str, rest)))
        else:
            quantities[name] = expr
    if not spread_list or not quantities:
        return Study({}, {}, spread_list, skipped)
    mc = monte_carlo(quantities, spread_list, nominal, samples, seed, progress=progress)
    wc = worst_case(quantities, spread_list, nominal, sensitivities(quantities, nominal))
    return Study(mc, wc, spread_list, skipped)


class ToleranceView(Vertical):
    """Runs Monte Carlo on request (``m``) and shows the spread of each quantity."""

    DEFAULT_CSS = """
    ToleranceView { height: auto; margin-top: 1; }
    ToleranceView > Static { width: 100%; }
    #tolerance-head { text-style: bold; }
    #mc-progress { display: none; }
    #mc-progress.running { display: block; }
    """

    def __init__(self, **kwargs) -> None:
        super().__init__(**kwargs)
        self.system = None
        self.study: Study | None = None
        self.running = False
        self.last_progress: tuple[int, int] | None = None
        self.shown: tuple | None = None  # (samples, seed, width) of the results on screen

    def compose(self):
        yield Static("Tolerances: open this pane after a solve", id="tolerance-head", markup=False)
        yield ProgressBar(id="mc-progress", show_eta=False)
        yield Static("", id="tolerance-text", markup=False)
        yield Static("", id="tolerance-plot", markup=False)

    def _show(self, head: str, text: str = "", plot: str = "") -> None:
        self.query_one("#tolerance-head", Static).update(head)
        self.query_one("#tolerance-text", Static).update(text)
        self.query_one("#tolerance-plot", Static).update(plot)

    def show_system(self, system) -> None:
        """Say what a run would vary; a result or a run for another system is dropped."""
        if system is self.system:
            return
        self.cancel()
        self.system, self.study = system, None
        names = toleranced(system.circuit)
        if names:
            self._show(f"Monte Carlo and worst case: m runs {SAMPLES} samples (seed {SEED})",
                       "parameters with a tolerance: " + ", ".join(names))
        else:
            self._show("Monte Carlo and worst case: no parameter has a tolerance",
                       'give one in the file: R1 = { value = "10k", tolerance = "1%" }\n'
                       "(circuits/soil_moisture_probe.toml is a demo with tolerances)")

    # --- running -----------------------------------------------------------------
    def run(self, samples: int = SAMPLES, seed: int = SEED) -> bool:
        """Start a Monte Carlo run in a worker; False (with the reason on screen) when there is nothing to vary."""
        if self.system is None:
            return False
        if not toleranced(self.system.circuit):
            self.app.notify("no parameter has a tolerance: nothing to vary", timeout=4)
            return False
        self.running, self.study, self.last_progress = True, None, None
        bar = self.query_one("#mc-progress", ProgressBar)
        bar.update(total=samples, progress=0)
        bar.add_class("running")
        self._show(f"Monte Carlo: {samples} samples, seed {seed}... (c cancels)")
        self._worker(self.system, samples, seed)
        return True

    @work(thread=True, exclusive=True, group="monte-carlo", description="Monte Carlo")
    def _worker(self, system, samples: int, seed: int) -> None:
        worker = get_current_worker()

        def progress(done: int, total: int) -> None:
            if worker.is_cancelled:
                raise Cancelled
            self.app.call_from_thread(self._progress, system, done, total)

        try:
            study, error = tolerance_study(system, samples, seed, progress), None
        except Cancelled:
            return
        except Exception as exc:  # noqa: BLE001 - shown in place by _finished
            study, error = None, exc
        if not worker.is_cancelled:
            self.app.call_from_thread(self._finished, system, samples, seed, study, error)

    @guarded
    def _progress(self, system, done: int, total: int) -> None:
        if system is not self.system or not self.running:
            return
        self.last_progress = (done, total)
        self.query_one("#mc-progress", ProgressBar).update(total=total, progress=done)
        self.query_one("#tolerance-head", Static).update(
            f"Monte Carlo: {done}/{total} samples... (c cancels)")

    def cancel(self) -> bool:
        """Stop a running Monte Carlo; True when one was running."""
        if not self.running:
            return False
        self.workers.cancel_group(self, "monte-carlo")
        self.running = False
        self.query_one("#mc-progress", ProgressBar).remove_class("running")
        done = f" after {self.last_progress[0]} of {self.last_progress[1]} samples" if self.last_progress else ""
        self._show(f"Monte Carlo cancelled{done} (m runs it again)")
        return True

    @guarded
    def _finished(self, system, samples: int, seed: int, study: Study | None, error) -> None:
        if system is not self.system or not self.running:
            return
        self.running = False
        self.query_one("#mc-progress", ProgressBar).remove_class("running")
        if error is not None:
            self._show(f"Monte Carlo failed: {describe(error)}")
            self.app.report_error(error, "run Monte Carlo")
            return
        self.study, self.shown = study, (samples, seed, self.size.width)
        self._show(*self._texts(study, samples, seed))

    def on_resize(self) -> None:
        """Draw the histograms again at the new width."""
        if self.study is not None and self.shown and self.shown[2] != self.size.width:
            samples, seed, _ = self.shown
            self.shown = (samples, seed, self.size.width)
            self._show(*self._texts(self.study, samples, seed))

    def _texts(self, study: Study, samples: int, seed: int) -> tuple[str, str, str]:
        from nodeterm.present.analysis import histogram_plot, tolerance_lines
        head = f"Monte Carlo and worst case: {samples} samples, seed {seed} (m runs again)"
        lines = [f"(same numbers: nodeterm tolerance FILE --samples {samples} --seed {seed})"]
        lines += tolerance_lines(study.mc, study.wc, study.spreads)
        if any("." in name for name in study.mc):
            lines += ["", "(.corner and .w0 are in rad/s; .dc and .Q are plain ratios)"]
        for name, why in study.skipped.items():
            lines.append(f"{name}: left out ({why}; substitute it with v)")
        if not study.mc:
            lines.append("nothing to sample: no quantity has values for all its parameters")
        width = max(40, self.size.width or 78)
        plots = [histogram_plot(r, 20, width, 14) for r in study.mc.values()]
        return head, "\n".join(lines), "\n\n".join(plots)
