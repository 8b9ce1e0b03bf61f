"""The nodeterm workbench: a thin Textual application over the engine's recorded procedure.

The App wires panes to the :class:`~.session.Session`; every action is
guarded (:mod:`.safety`) so that a failure shows a message, is logged, and
leaves the last good state on screen. Solving (with the printing of the results)
and the analyses run in a child process driven by a thread worker
(:mod:`.solver_process`), so SymPy and FLINT never hold the GIL against the event
loop; cancelling terminates the child, and results for an older system are dropped.
Every ``@work`` has a ``description``: without one Textual builds it with ``repr()``
of the arguments (a whole solution) on the event loop.
"""

from __future__ import annotations

import gc
import os
import time
from functools import partial

from textual import on, work
from textual.app import App, SystemCommand
from textual.binding import Binding
from textual.css.query import NoMatches
from textual.reactive import var
from textual.widgets import Footer, Input, Static, TabbedContent, TabPane
from textual.worker import get_current_worker

from nodeterm.engine import InputError, load_circuit
from nodeterm.present.text import matrix_lines, report, steps_lines
from nodeterm.ui import solver_process, threads
from nodeterm.ui.analysis_pane import AnalysisPane, analysis_lines
from nodeterm.ui.circuit_pane import CircuitPane
from nodeterm.ui.claims_pane import ClaimsPane
from nodeterm.present.export import EXTENSIONS, FORMATS, render, write_atomic
from nodeterm.ui.dialogs import ConfirmScreen, ExportScreen, HelpScreen, PathScreen
from nodeterm.ui.keys import KEYS, help_text
from nodeterm.ui.matrix_pane import MatrixPane
from nodeterm.ui.results_pane import ResultsPane, results_text
from nodeterm.ui.safety import describe, guarded, logger
from nodeterm.ui.session import Session
from nodeterm.ui.steps_pane import StepsPane
from nodeterm.ui.values_pane import ValuesPane

PANES = ("circuit", "steps", "values", "matrix", "results", "claims", "analysis")
POLL_SECONDS = 1.0


class Workbench(App):
    """Walk a circuit's node equations, substitute values, read the matrix and the results."""

    CSS_PATH = "workbench.tcss"
    TITLE = "nodeterm"
    BINDINGS = [Binding(k.keys, k.action, k.shown or k.title, show=bool(k.shown)) for k in KEYS]

    system = var(None, always_update=True)
    two_d = var(False)

    def __init__(self, path: str | None = None, poll: bool = True) -> None:
        super().__init__()
        solver_process.start_server()  # before Textual takes over sys.stderr
        self.start_path = path
        self.poll = poll
        self.session = Session()
        self.solution = None        # solution of self.system, when known
        self.matrix_form = None
        self.busy_since: float | None = None
        self.busy_what = ""
        self.last_error = ""        # last message shown (tests and the status line read it)
        self.verdicts: list = []    # audit verdicts of the claims, for the exports
        self.typed_claims: dict[str, str] = {}  # claims typed in the claims pane, name -> text
        self.analysed = None        # the system whose analyses the analysis pane shows

    # --- layout -----------------------------------------------------------
    def compose(self):
        yield Static("", id="status", markup=False)
        yield Static("", id="problem", markup=False)
        with TabbedContent(id="panes", initial="steps"):
            with TabPane("1 Circuit", id="circuit"):
                yield CircuitPane(id="circuit-pane")
            with TabPane("2 Steps", id="steps"):
                yield StepsPane(id="steps-pane")
            with TabPane("3 Values", id="values"):
                yield ValuesPane(id="values-pane")
            with TabPane("4 Matrix", id="matrix"):
                yield MatrixPane(id="matrix-pane")
            with TabPane("5 Results", id="results"):
                yield ResultsPane(id="results-pane")
            with TabPane("6 Claims", id="claims"):
                yield ClaimsPane(id="claims-pane")
            with TabPane("7 Analysis", id="analysis"):
                yield AnalysisPane(id="analysis-pane")
        yield Footer()

    def on_mount(self) -> None:
        threads.install()
        # Everything alive now (modules, SymPy's and Textual's own objects, these widgets) lives as long
        # as the app: keep it out of the collector's full passes, which otherwise pause the loop ~0.1 s.
        gc.freeze()
        self.query_one("#problem").display = False
        self.set_interval(0.5, self._tick)
        if self.poll:
            self.set_interval(POLL_SECONDS, self.poll_file)
        self.open_path(self.start_path)
        self.query_one("#equation-list").focus()

    # --- errors -------------------------------------------------------------
    def report_error(self, exc: BaseException, doing: str = "") -> None:
        """Show a failure as a message and log it; the state on screen is untouched."""
        msg = describe(exc)
        self.last_error = msg
        if isinstance(exc, InputError):
            logger().info("%s: %s", doing, msg)
        else:
            logger().error("%s failed", doing, exc_info=exc)
        self.notify(msg, title=f"could not {doing}" if doing else "error", severity="error", timeout=10,
                    markup=False)  # engine messages name tables such as [find]

    def _set_problem(self, text: str) -> None:
        problem = self.query_one("#problem", Static)
        problem.update(f"! {text}" if text else "")
        problem.display = bool(text)

    # --- loading ------------------------------------------------------------
    @guarded
    def open_path(self, path: str | None) -> None:
        """Open a circuit file (the bundled demo when ``path`` is None)."""
        if path is None:
            from nodeterm.demos import demo_path
            path = demo_path()
        try:
            self.session.open(path)
        except InputError as err:
            if self.session.loaded:
                self._set_problem(f"{err}  (still showing {os.path.basename(self.session.path)})")
            else:
                self._set_problem(str(err))
            raise
        self._set_problem("")
        self.query_one(StepsPane).index = 0
        self.system = self.session.system

    def try_open(self, path: str) -> str | None:
        """Open ``path``; return the error text instead of raising (for the open dialog)."""
        try:
            load_circuit(path)
        except InputError as err:
            return str(err)
        self.open_path(path)
        return None

    @guarded
    def reload(self) -> None:
        """Load the file again; a file that no longer loads keeps the last good state on screen."""
        try:
            dropped = self.session.reload()
        except InputError as err:
            self._set_problem(f"file no longer loads, showing the last good version: {err}")
            raise
        self._set_problem("")
        for note in dropped:
            self.notify(note, severity="warning", timeout=8, markup=False)
        self.system = self.session.system
        self.notify(f"reloaded {os.path.basename(self.session.path)}", timeout=3)

    @guarded
    def poll_file(self) -> None:
        """Reload when the file changed on disk (called every second)."""
        if self.session.loaded and self.session.changed_on_disk():
            self.reload()

    # --- showing ------------------------------------------------------------
    @guarded
    def watch_system(self, system) -> None:
        if system is None:
            return
        self.solution = self.matrix_form = None
        self.query_one(CircuitPane).show(system)
        self.query_one(StepsPane).show(system)
        self.query_one(ValuesPane).show(system, self.session.describe_ops())
        self.query_one(MatrixPane).show_note("computing the matrix...")
        self.query_one(ResultsPane).show_note("solving...")
        self.start_solve()

    @guarded
    def watch_two_d(self, two_d: bool) -> None:
        self.query_one(StepsPane).set_two_d(two_d)
        if self.solution is not None:
            self._print_worker(self.system, self.solution, two_d, self.query_one(ResultsPane).text_width)

    @work(thread=True, exclusive=True, group="print", description="printing the results")
    def _print_worker(self, system, solution, two_d: bool, width: int) -> None:
        """Print the results in the other form (a large result takes a while to print)."""
        worker = get_current_worker()
        text = _printed(system, solution, two_d, width)
        if not worker.is_cancelled:
            self.call_from_thread(self._printed, system, two_d, text)

    @guarded
    def _printed(self, system, two_d: bool, text: str) -> None:
        if system is self.system and two_d == self.two_d and self.solution is not None:
            self.query_one(ResultsPane).show_text(text)

    @on(StepsPane.StepChanged)
    @guarded
    def _step_changed(self) -> None:
        self._update_status()

    def _update_status(self) -> None:
        try:
            self._write_status()
        except NoMatches:  # during start-up or shut-down
            pass

    def _write_status(self) -> None:
        pane = self.query_one(TabbedContent).active
        parts = [f"[{pane.capitalize()}]"] if pane else []
        if self.session.path:
            parts.append(os.path.basename(self.session.path))
        steps = self.query_one(StepsPane)
        if steps.steps:
            parts.append(f"step {steps.index + 1}/{len(steps.steps)}")
        if self.system is not None:
            n = len(self.system.values)
            parts.append(f"{n} value{'s' if n != 1 else ''} substituted" if n else "symbolic")
        parts.append("2-D form" if self.two_d else "one-line form")
        if self.busy_since is not None:
            parts.append(f"BUSY {self.busy_what} {time.monotonic() - self.busy_since:.0f}s (c cancels)")
        self.query_one("#status", Static).update(" | ".join(parts))

    @guarded
    def _tick(self) -> None:
        self._update_status()

    # --- solving in a worker ------------------------------------------------
    def start_solve(self) -> None:
        if self.system is None:
            return
        self.workers.cancel_group(self, "analysis")
        self.analysed = None
        self.busy_since, self.busy_what = time.monotonic(), "solving"
        self._update_status()
        self._solve_worker(self.system, self.two_d, self.query_one(ResultsPane).text_width)

    @work(thread=True, exclusive=True, group="solve", description="solving")
    def _solve_worker(self, system, two_d: bool, width: int) -> None:
        """Matrix, solution and their printed text, in a child process (this thread only waits)."""
        worker = get_current_worker()

        def matrix_ready(part) -> None:
            if not worker.is_cancelled:
                self.call_from_thread(self._solved, system, part.matrix, part.matrix_text, None, "", None, False)
        try:
            done = solver_process.solve_in_process(system, two_d, width, lambda: worker.is_cancelled,
                                                   matrix_ready)
            matrix, solution, printed, error = done.matrix, done.solution, done.printed, None
        except solver_process.Cancelled:
            return
        except Exception as exc:  # noqa: BLE001 - reported on screen by _solved
            matrix, solution, printed, error = self.matrix_form, None, "", exc
        if not worker.is_cancelled:
            self.call_from_thread(self._solved, system, matrix, "", solution, printed, error, True)

    @guarded
    def _solved(self, system, matrix, matrix_shown: str, solution, printed: str, error, done: bool) -> None:
        if system is not self.system:
            return  # a result for an older system: drop it
        if matrix is not None and self.matrix_form is None:
            self.matrix_form = matrix
            if matrix_shown:
                self.query_one(MatrixPane).show_text(matrix_shown)
        if not done:
            return
        self.busy_since = None
        if error is not None:
            note = describe(error)
            if matrix is None:
                self.query_one(MatrixPane).show_note(f"no matrix: {note}")
            self.query_one(ResultsPane).show_note(f"no results: {note}")
            self.report_error(error, "solve")
        else:
            self.solution = solution
            self.query_one(ResultsPane).show_text(printed)
            self.start_audit()
            if self.query_one(TabbedContent).active == "analysis":
                self.start_analysis()
        self._update_status()

    # --- analyses in a worker (on request) --------------------------------------
    def start_analysis(self) -> None:
        pane = self.query_one(AnalysisPane)
        if self.system is None or self.analysed is self.system:
            return
        if self.solution is None:
            pane.show_lines(["waiting for the solve to finish..."])
            return
        self.analysed = self.system
        pane.show_system(self.system, self.solution)
        pane.show_lines(["analysing... (the pane stays usable; c cancels)"])
        self.busy_since, self.busy_what = time.monotonic(), "analysing"
        self._analysis_worker(self.system, self.solution)

    @work(thread=True, exclusive=True, group="analysis", description="analysing")
    def _analysis_worker(self, system, solution) -> None:
        worker = get_current_worker()
        try:
            lines = solver_process.call_in_child(analysis_lines, system, solution,
                                                 cancelled=lambda: worker.is_cancelled)
        except solver_process.Cancelled:
            return
        except Exception as exc:  # noqa: BLE001
            lines = [f"! analyses failed: {describe(exc)}"]
        if not worker.is_cancelled:
            self.call_from_thread(self._analysed, system, lines)

    @guarded
    def _analysed(self, system, lines) -> None:
        if system is not self.system:
            return
        self.busy_since = None
        self.query_one(AnalysisPane).show_lines(lines)
        self._update_status()

    @guarded
    def action_analyse(self) -> None:
        self.show_pane("analysis")
        self.start_analysis()
    # --- audit of claims in a worker -----------------------------------------
    def start_audit(self) -> None:
        if self.system is None or self.solution is None:
            return
        if not self.system.circuit.hand and not self.typed_claims:
            self.verdicts = []
            self.query_one(ClaimsPane).show_verdicts([])
            return
        self.query_one(ClaimsPane).show_verdicts(["checking the claims..."])
        self._audit_worker(self.system, self.solution, dict(self.typed_claims))

    @work(thread=True, exclusive=True, group="audit", description="checking the claims")
    def _audit_worker(self, system, solution, typed: dict) -> None:
        from nodeterm.engine.audit.verdicts import audit_claims
        worker = get_current_worker()
        try:
            verdicts = audit_claims(system, None, solution=solution)
            if typed:
                verdicts += audit_claims(system, typed, solution=solution)
            error = None
        except Exception as exc:  # noqa: BLE001 - reported on screen by _audited
            verdicts, error = [], exc
        if not worker.is_cancelled:
            self.call_from_thread(self._audited, system, verdicts, error)

    @guarded
    def _audited(self, system, verdicts, error) -> None:
        if system is not self.system:
            return
        from nodeterm.engine.audit.verdicts import summary
        from nodeterm.present.text import verdict_lines
        pane = self.query_one(ClaimsPane)
        if error is not None:
            pane.show_verdicts([f"claims not checked: {describe(error)}"])
            self.report_error(error, "check the claims")
            return
        self.verdicts = verdicts
        lines = [summary(verdicts), ""] + verdict_lines(verdicts)
        pane.show_verdicts(lines)

    @on(ClaimsPane.Check)
    @guarded
    def _check_claim(self, event: ClaimsPane.Check) -> None:
        self.check_claim(event.text)

    def check_claim(self, text: str) -> bool:
        """Add a typed claim: ``NAME = value`` for a [find] name is a claimed result, else an equation."""
        pane = self.query_one(ClaimsPane)
        if self.system is None:
            return False
        head, sep, tail = text.partition("=")
        if sep and head.strip() in self.system.circuit.find and "=" not in tail:
            name, claim = head.strip(), tail.strip()
        else:
            if not sep:
                pane.show_error("! a claim needs '=': an equation, or NAME = value for a [find] name "
                                f"({', '.join(self.system.circuit.find) or 'this circuit has none'})")
                return False
            name, claim = f"typed{len(self.typed_claims) + 1}", text
        if self.solution is None:
            pane.show_error("! the solve has not finished; wait for it (s solves again)")
            return False
        self.typed_claims[name] = claim
        pane.accepted()
        self.start_audit()
        return True

    # --- actions (each calls a public method; all guarded) ------------------
    @guarded
    def action_help(self) -> None:
        self.push_screen(HelpScreen(help_text()))

    @guarded
    def action_pane(self, name: str) -> None:
        self.show_pane(name)

    @on(TabbedContent.TabActivated)
    @guarded
    def _pane_changed(self) -> None:
        self._update_status()
        if self.query_one(TabbedContent).active == "analysis":
            self.start_analysis()

    def show_pane(self, name: str) -> None:
        self.query_one(TabbedContent).active = name
        target = {"steps": "#equation-list", "values": "#param-list", "claims": "#claim-input"}.get(name)
        if target:
            self.query_one(target).focus()
        else:
            self.query_one(f"#{name}-pane").focus()

    @guarded
    def action_next_step(self) -> None:
        self.step(+1)

    @guarded
    def action_previous_step(self) -> None:
        self.step(-1)

    def step(self, delta: int) -> bool:
        """Walk the procedure; shows the steps pane."""
        if self.query_one(TabbedContent).active != "steps":
            self.show_pane("steps")
        moved = self.query_one(StepsPane).go(delta)
        if not moved:
            self.notify("already at the " + ("last" if delta > 0 else "first") + " step", timeout=2)
        return moved

    @guarded
    def action_type_value(self) -> None:
        self.show_pane("values")
        self.query_one(ValuesPane).focus_value()

    @on(ValuesPane.Apply)
    @guarded
    def _apply_value(self, event: ValuesPane.Apply) -> None:
        self.substitute(event.name, event.value)

    def substitute(self, name: str, value: str) -> bool:
        """Substitute one value; a bad value is explained under the value box."""
        pane = self.query_one(ValuesPane)
        try:
            self.session.substitute(name, value)
        except InputError as err:
            pane.show_error(f"! {err.message}" + (f"; {err.hint}" if err.hint else ""))
            return False
        pane.applied()
        self.system = self.session.system
        self.notify(f"substituted {name} = {value}", timeout=3)
        return True

    @guarded
    def action_substitute_known(self) -> None:
        self.substitute_known()

    def substitute_known(self) -> bool:
        if not self.session.substitute_known():
            self.notify("every value the file gives is already substituted", timeout=3)
            return False
        self.system = self.session.system
        self.notify("substituted every value the file gives", timeout=3)
        return True

    @guarded
    def action_undo(self) -> None:
        self.undo()

    def undo(self) -> bool:
        if not self.session.undo():
            self.notify("nothing to undo", timeout=2)
            return False
        self.system = self.session.system
        self.notify("took back the last substitution", timeout=3)
        return True

    @guarded
    def action_toggle_form(self) -> None:
        self.two_d = not self.two_d
        self._update_status()

    @guarded
    def action_solve(self) -> None:
        self.solution = self.matrix_form = None
        self.start_solve()

    @guarded
    def action_cancel(self) -> None:
        self.cancel_solve()

    def cancel_solve(self) -> bool:
        if self.query_one(AnalysisPane).cancel_running():
            self.notify("Monte Carlo cancelled", timeout=3)
            return True
        if self.busy_since is None:
            return False
        self.workers.cancel_group(self, "solve")
        self.workers.cancel_group(self, "analysis")
        if self.busy_what == "analysing":
            self.analysed = None
            self.query_one(AnalysisPane).show_lines(["analyses cancelled (a runs them again)"])
            self.busy_since = None
            self.notify("analyses cancelled", timeout=3)
            self._update_status()
            return True
        self.busy_since = None
        if self.matrix_form is None:
            self.query_one(MatrixPane).show_note("cancelled (s solves again)")
        self.query_one(ResultsPane).show_note("solve cancelled (s solves again)")
        self.notify("solve cancelled", timeout=3)
        self._update_status()
        return True

    @guarded
    def action_leave(self) -> None:
        if isinstance(self.focused, Input):
            if self.query_one(TabbedContent).active == "claims":
                self.query_one("#claims-scroll").focus()
            else:
                self.query_one("#param-list").focus()
        elif self.busy_since is not None or self.query_one(AnalysisPane).running:
            self.cancel_solve()

    @guarded
    def action_response_next(self) -> None:
        self.show_pane("analysis")
        pane = self.query_one(AnalysisPane)
        if pane.next_quantity() is None:
            self.notify("no frequency response to show (yet): the analysis pane says why", timeout=4)
        elif pane.quantity_count() == 1:
            self.notify("only one quantity of the find table depends on s", timeout=3)

    @guarded
    def action_write_response(self) -> None:
        self.show_pane("analysis")
        self.query_one(AnalysisPane).write_csv(self.session.path)

    @guarded
    def action_monte_carlo(self) -> None:
        self.show_pane("analysis")
        if self.system is not None:
            self.query_one(AnalysisPane).run_monte_carlo(self.system)

    @guarded
    def action_open_file(self) -> None:
        start = os.path.dirname(self.session.path or "") + os.sep if self.session.path else ""
        self.push_screen(PathScreen("Open a circuit file (TOML):", start, check=self.try_open))

    @guarded
    def action_reload(self) -> None:
        self.reload()

    @guarded
    def action_export(self) -> None:
        stem = os.path.splitext(os.path.basename(self.session.path or "circuit"))[0]
        self.push_screen(ExportScreen(FORMATS, EXTENSIONS, stem, os.getcwd()), callback=self._export_to)

    def export_text(self, fmt: str = "text") -> str:
        """The equation set of what is on screen in format ``fmt`` (with results when solved)."""
        system = self.system
        if self.solution is not None:
            from nodeterm.engine.study import Records
            records = Records(system.circuit, self.session.choice if hasattr(self.session, "choice") else None,
                              system=system, matrix=self.matrix_form or system.matrix(), solution=self.solution,
                              warnings=tuple(system.warnings), verdicts=tuple(self.verdicts or ()))
            return render(records, fmt)
        if fmt not in ("text", "ascii"):
            raise InputError(f"the {fmt} export needs the results, and the solve has not finished",
                             hint="wait for it (or press s to solve again), then export")
        lines = steps_lines(system) + ["Matrix form A x = b"]
        lines += ["  " + ln for ln in matrix_lines(self.matrix_form or system.matrix())]
        lines += ["", "(results not included: the solve had not finished)"]
        return "\n".join(lines) + "\n"

    @guarded
    def _export_to(self, choice: tuple[str, str] | None) -> None:
        if not choice:
            return
        path, fmt = choice
        if os.path.lexists(path):
            self.push_screen(ConfirmScreen(f"{path} exists. Replace it?", "Replace", "Keep it"),
                             callback=lambda yes: self.export(path, fmt, force=True) if yes else None)
        else:
            self.export(path, fmt)

    def export(self, path: str, fmt: str = "text", force: bool = False) -> bool:
        """Write the equation set to ``path`` atomically; a failure is reported and leaves no file."""
        try:
            write_atomic(path, self.export_text(fmt), force=force)
        except InputError as err:
            self.report_error(err, "export")
            return False
        self.notify(f"wrote {path} ({fmt})", timeout=5)
        return True

    def pending_input(self) -> list[str]:
        """What the user typed and has not applied (quitting would lose it)."""
        pending = []
        value = self.query_one(ValuesPane).pending
        if value:
            pending.append(f"the value {value!r} typed for {self.query_one(ValuesPane).selected}")
        claim = self.query_one(ClaimsPane).pending
        if claim:
            pending.append(f"the claim {claim!r} not yet checked")
        return pending

    @guarded
    def action_quit(self) -> None:
        self.request_quit()

    def request_quit(self) -> None:
        """Quit, asking first when typed input would be lost."""
        pending = self.pending_input()
        if not pending:
            self.exit(0)
            return
        question = "Quit and lose " + " and ".join(pending) + "?"
        self.push_screen(ConfirmScreen(question, "Quit", "Stay"),
                         callback=lambda yes: self.exit(0) if yes else None)

    # --- command palette: every action by name --------------------------------
    def get_system_commands(self, screen):
        for key in KEYS:
            if key.action in ("leave",):
                continue
            yield SystemCommand(key.title, f"key: {key.display}", partial(self.run_action, key.action))
        yield SystemCommand("Theme", "Change the colour theme", self.action_change_theme)


def _printed(system, solution, two_d: bool, width: int) -> str:
    """The results pane's text; a failure to print is shown in the pane, the solution is kept."""
    try:
        return results_text(system, solution, two_d, width)
    except Exception as exc:  # noqa: BLE001 - the solution is still good for the other panes
        logger().error("printing the results failed", exc_info=exc)
        return f"! could not print the results: {describe(exc)}"


def run(path: str | None) -> int:
    """Run the workbench on ``path`` (the bundled demo when None); returns the exit status."""
    app = Workbench(path)
    result = app.run()
    return result if isinstance(result, int) else (app.return_code or 0)
