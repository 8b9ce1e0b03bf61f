"""The frequency-response section of the analysis pane: magnitude and phase plots, -3 dB band, CSV.

For each ``[find]`` quantity that depends on s, the engine gives H(s)
(:func:`~nodeterm.engine.analysis.transfer.transfer_functions`), its response over a
log range chosen from the poles and zeros (``frequency_response``) and its -3 dB points
(``bandwidth_3db``); the presenter draws the plot as text (``response_plot``, plotext,
colourless) and writes the CSV (``response_csv``). This widget only picks which
quantity is shown, sizes the plot to the pane and asks where to write the file.

The engine work runs in a thread worker; a result for an older system is dropped.
"""

from __future__ import annotations

import os
from dataclasses import dataclass

from textual import work
from textual.containers import Vertical
from textual.widgets import Static
from textual.worker import get_current_worker

from nodeterm.ui.safety import describe, guarded

MIN_PLOT_HEIGHT = 19
"""Lines; below this plotext's tick labels of the two panels start to run into each other."""


@dataclass(frozen=True)
class Response:
    """One [find] quantity in s: its H(s), and its response and -3 dB band when every value is known."""

    name: str
    tf: object
    response: object | None = None
    bandwidth: object | None = None


def responses_of(system, solution) -> list[Response]:
    """The transfer function of every [find] quantity in s, with its response when H(s) is numeric."""
    from nodeterm.engine.analysis.transfer import bandwidth_3db, frequency_response, transfer_functions
    out = []
    for name, tf in transfer_functions(solution, system.circuit).items():
        if tf.is_numeric:
            out.append(Response(name, tf, frequency_response(tf), bandwidth_3db(tf)))
        else:
            out.append(Response(name, tf))
    return out


def band_text(r: Response) -> str:
    """The -3 dB band of one response in words (with the reference gain it is measured from)."""
    from nodeterm.present.format import eng
    bw = r.bandwidth
    if bw is None:
        return "-3 dB band: none (no gain at DC and no peak inside the range: an integrator or a high-pass)"
    ref = f"{bw.reference_db:.2f} dB"
    if bw.low is None:
        where = f"DC to {eng(bw.high, 'Hz')}" if bw.high else "DC to beyond the plotted range"
        return f"-3 dB band: {where} (3 dB below the DC gain, {ref})"
    high = eng(bw.high, "Hz") if bw.high else "beyond the range"
    return f"-3 dB band: {eng(bw.low, 'Hz')} to {high} (3 dB below the peak, {ref})"


def common_range(items: list[Response]) -> tuple[float, float]:
    """One log range covering every numeric response (the CSV has a single frequency column)."""
    lows = [float(r.response.freqs[0]) for r in items if r.response is not None]
    highs = [float(r.response.freqs[-1]) for r in items if r.response is not None]
    return min(lows), max(highs)


class ResponseView(Vertical):
    """Magnitude and phase of one [find] quantity at a time; ``g`` shows the next one."""

    DEFAULT_CSS = """
    ResponseView { height: auto; }
    ResponseView > Static { width: 100%; }
    #response-head { text-style: bold; }
    """

    def __init__(self, **kwargs) -> None:
        super().__init__(**kwargs)
        self.items: list[Response] = []
        self.index = 0
        self.system = None          # the system the items belong to
        self.computing = False
        self.pending_csv: tuple | None = None  # a CSV asked for while computing: (circuit path,)
        self._drawn: tuple | None = None

    def compose(self):
        yield Static("Frequency response: open this pane after a solve", id="response-head", markup=False)
        yield Static("", id="response-plot", markup=False)

    # --- computing ---------------------------------------------------------------
    def show_system(self, system, solution) -> None:
        """Compute the responses of ``system`` (in a worker) and show the first quantity."""
        if system is self.system:
            return
        self.system, self.items, self.index, self._drawn = system, [], 0, None
        self.computing = True
        self._head("Frequency response: computing...")
        self.query_one("#response-plot", Static).update("")
        self._worker(system, solution)

    @work(thread=True, exclusive=True, group="response", description="frequency response")
    def _worker(self, system, solution) -> None:
        from nodeterm.ui.solver_process import Cancelled, call_in_child
        worker = get_current_worker()
        import plotext  # noqa: F401 - its first import takes ~0.2 s: here, not on the event loop when drawing
        try:  # in a child process: SymPy and FLINT would hold the GIL, and the event loop with it
            items, error = call_in_child(responses_of, system, solution, cancelled=lambda: worker.is_cancelled), None
        except Cancelled:
            return
        except Exception as exc:  # noqa: BLE001 - shown in place by _computed
            items, error = [], exc
        if not worker.is_cancelled:
            self.app.call_from_thread(self._computed, system, items, error)

    @guarded
    def _computed(self, system, items, error) -> None:
        if system is not self.system:
            return  # for an older system
        self.computing = False
        pending, self.pending_csv = self.pending_csv, None
        if error is not None:
            self._head(f"Frequency response: could not compute ({describe(error)})")
            self.app.report_error(error, "compute the frequency response")
            return
        self.items = items
        self.redraw()
        if pending is not None:
            self.ask_csv_path(*pending)

    # --- showing -----------------------------------------------------------------
    def _head(self, text: str) -> None:
        self.query_one("#response-head", Static).update(text)

    @property
    def current(self) -> Response | None:
        return self.items[self.index] if self.items else None

    def next_quantity(self) -> str | None:
        """Show the next [find] quantity in s; returns its name (None when there is none)."""
        if not self.items:
            return None
        self.index = (self.index + 1) % len(self.items)
        self.redraw()
        return self.items[self.index].name

    def plot_size(self) -> tuple[int, int]:
        """Width and height for the plot: the pane's width, one screenful high (never below a minimum)."""
        width = self.size.width or 78
        pane = self.parent
        visible = getattr(pane, "scrollable_content_region", None)
        height = (visible.height if visible is not None and visible.height else 20) - 2
        return max(40, width), max(MIN_PLOT_HEIGHT, height)

    def redraw(self) -> None:
        """Draw the current quantity at the current size (nothing to do when that is on screen)."""
        if self.system is None:
            return
        plot = self.query_one("#response-plot", Static)
        r = self.current
        size = self.plot_size() if r is not None and r.response is not None else None
        key = (id(r), size)
        if key == self._drawn:
            return
        self._drawn = key
        if r is None:
            self._head("Frequency response: no [find] quantity depends on s")
            plot.update("(a capacitor, an inductor or an op-amp gbw in the signal path makes one;\n"
                        " write e.g. H = \"V_out/V_in\" in [find])")
            return
        count = f" ({self.index + 1} of {len(self.items)}; g: next)" if len(self.items) > 1 else ""
        if r.response is None:
            missing = ", ".join(sorted(map(str, r.tf.symbols)))
            self._head(f"Frequency response of {r.name}{count}")
            plot.update(f"{r.name} still has symbols without a value: {missing}.\n"
                        "Press k to substitute the values the file gives (or v to type one);\n"
                        "the magnitude and phase plots then appear here.")
            return
        from nodeterm.present.analysis import response_plot
        self._head(f"{r.name}: {band_text(r)}{count}")
        plot.update(response_plot(r.response, *size))

    def on_resize(self) -> None:
        if self.current is not None and self.current.response is not None:
            self.redraw()

    # --- CSV ---------------------------------------------------------------------
    def csv_text(self) -> str:
        """f, |H| dB and phase of every numeric [find] response over one common log range."""
        from nodeterm.engine.analysis.transfer import frequency_response
        from nodeterm.engine.errors import InputError
        from nodeterm.present.analysis import response_csv
        numeric = [r for r in self.items if r.response is not None]
        if not numeric:
            raise InputError("nothing to write: no [find] quantity has a numeric frequency response yet",
                             hint="substitute the values first (k), then write the CSV",
                             file="frequency response")
        lo, hi = common_range(numeric)
        points = max(len(r.response.freqs) for r in numeric)
        return response_csv([frequency_response(r.tf, lo, hi, points) for r in numeric])

    def default_csv_path(self, circuit_path: str | None) -> str:
        stem = os.path.splitext(os.path.basename(circuit_path or "circuit"))[0]
        return os.path.join(os.getcwd(), f"{stem}-response.csv")

    def write_csv(self, path: str, force: bool = False) -> bool:
        """Write the CSV atomically; an existing file is replaced only with ``force``."""
        from nodeterm.engine.errors import InputError
        from nodeterm.present.export import write_atomic
        try:
            write_atomic(path, self.csv_text(), force=force)
        except InputError as err:
            self.app.report_error(err, "write the CSV")
            return False
        self.app.notify(f"wrote {path}", timeout=5, markup=False)
        return True

    def ask_csv_path(self, circuit_path: str | None) -> None:
        """Ask where to write the CSV; ask again before replacing a file."""
        from nodeterm.ui.dialogs import ConfirmScreen, PathScreen
        if self.computing or self.system is None:  # asked before the responses are known
            self.pending_csv = (circuit_path,)
            self.app.notify("computing the frequency response; the CSV dialog opens when it is ready",
                            timeout=4)
            return
        if not any(r.response is not None for r in self.items):
            self.write_csv(self.default_csv_path(circuit_path))  # reports why there is nothing to write
            return

        def chosen(path: str | None) -> None:
            if not path:
                return
            if os.path.lexists(path):
                self.app.push_screen(ConfirmScreen(f"{path} exists. Replace it?", "Replace", "Keep it"),
                                     callback=lambda yes: self.write_csv(path, force=True) if yes else None)
            else:
                self.write_csv(path)

        names = ", ".join(r.name for r in self.items if r.response is not None)
        self.app.push_screen(PathScreen(f"Write the frequency response of {names} as CSV to:",
                                        self.default_csv_path(circuit_path),
                                        note="Enter: write   Esc: cancel   (f in Hz, |H| in dB, phase in degrees)"),
                             callback=chosen)
