"""The nodeterm workbench: a thin Textual application over a session of studies.

The App routes messages and renders; it holds no results of its own. State lives in the
:class:`~.session.Session`: an undo stack of entries, each an immutable study with the records and
pane text computed for it. Records (matrix, solution, verdicts, analyses) and their text are
computed in a child process (:mod:`.solver_process`) and adopted into the entry they were asked
for, so undo, redo, reload and re-solve always show one study's records together. Pane text comes
from :mod:`nodeterm.present.panes`; every pane redraws only when its text changes, and nothing is
written while idle (the busy time ticks once a second, only while busy).

Opened from the command line, the first screen is text printed by a child process while this one
imported Textual (:mod:`.first_screen`): it is drawn at once, then the engine is imported in a
worker thread and the session opens the file; keys pressed meanwhile are held and run in order
once it is open, and only then is the solve asked for.

Focus rules: typed text never runs as a command (a focused box takes every printable key); a
value always lands on the parameter named beside the box (the value dialog, Up/Down choose it);
pane keys work from every pane except while typing in a box, which Esc leaves.
"""

from __future__ import annotations

import asyncio
import gc
import os
import time
from functools import partial

from textual import events, on, work
from textual.app import App, SystemCommand
from textual.binding import Binding
from textual.css.query import NoMatches
from textual.markup import escape
from textual.widgets import Footer, Input, TabbedContent, TabPane
from textual.worker import get_current_worker

from nodeterm.engine.errors import InputError
from nodeterm.present import panes
from nodeterm.ui import solver_process, threads
from nodeterm.ui.analysis_pane import AnalysisPane
from nodeterm.ui.circuit_pane import CircuitPane
from nodeterm.ui.claims_pane import ClaimsPane
from nodeterm.ui.first_screen import FirstScreen, Pending
from nodeterm.ui.dialogs import DiffScreen, ConfirmScreen, ExportScreen, HelpScreen, PathScreen, ValueScreen
from nodeterm.ui.keys import KEYS, help_text
from nodeterm.ui.matrix_pane import MatrixPane
from nodeterm.ui.results_pane import ResultsPane
from nodeterm.ui.safety import describe, guarded, logger
from nodeterm.ui.session import Entry, Session
from nodeterm.ui.steps_pane import StepsPane
from nodeterm.ui.values_pane import ValuesPane
from nodeterm.ui.views import TextView

PANES = ("circuit", "steps", "values", "matrix", "results", "claims", "analysis")
POLL_SECONDS = 1.0
NO = {"matrix": "no matrix", "solution": "no results", "verdicts": "claims not checked", "analysis": "no analyses"}
FOCUS = {"steps": "#equation-list", "values": "#param-list", "claims": "#claim-input"}


class Workbench(App):
    """Walk a circuit's node equations, substitute values, read the matrix and the results."""

    CSS_PATH = "workbench.tcss"
    TITLE = "nodeterm"
    BINDINGS = [Binding(k.keys, k.action, k.shown or k.title, show=bool(k.shown)) for k in KEYS]

    def __init__(self, path: str | None = None, poll: bool = True, first: FirstScreen | None = None,
                 pending: Pending | None = None) -> None:
        """``first``: the first screen's text, printed elsewhere (:mod:`.first_screen`) for ``path``;
        drawn at once, while the engine is imported and the session opens ``first.path``.
        ``pending``: the process printing it, still at work (its answer is awaited in :meth:`on_load`)."""
        # NO_COLOR: the terminal's own colours with every colour removed, instead of greys in 256
        # colours (a third of the bytes of every redraw over SSH)
        self.plain = os.environ.get("NO_COLOR") is not None
        super().__init__(ansi_color=True if self.plain else None)
        # No animations: the tab underline's slide alone sent about 3 KB per pane key at 80x24
        self.animation_level = "none"
        self.first = first
        self.pending = pending
        self.refused: InputError | None = None  # why the file was refused before any screen
        self.held: list[events.Key] | None = [] if first or pending else None  # keys waiting for the session
        if first is None and pending is None:
            solver_process.start_server()  # before Textual takes over sys.stderr
        else:
            solver_process.start_tracker()  # before Textual takes over sys.stderr; the server after the first screen
        self.start_path = path
        self.poll = poll
        self.session = Session()
        self.two_d = False
        self.busy: dict[str, tuple[str, float]] = {}  # worker group -> (what, since); empty when idle
        self.last_error = ""        # last error shown (tests read it)
        self.last_message = ""
        self._busy_timer = None

    def get_driver_class(self):
        """The platform's driver, sending only the screen lines that changed (:mod:`.lean_output`)."""
        from nodeterm.ui.lean_output import lean_driver
        return lean_driver(super().get_driver_class())

    def on_resize(self) -> None:
        cache = getattr(self._driver, "line_cache", None)
        if cache is not None:
            cache.forget()  # the terminal may have redrawn or cut anything

    # --- layout -----------------------------------------------------------
    def compose(self):
        yield TextView("nodeterm: loading...", id="status")
        yield TextView("", id="problem")
        yield TextView("", id="warnings")
        # With a first screen, only the steps pane is there to draw it: the others (hidden behind
        # their tabs) are mounted once it is drawn (_after_first_screen), which makes it come sooner.
        self.later = []
        panes_ = (("1 Circuit", "circuit", CircuitPane), ("2 Steps", "steps", StepsPane),
                  ("3 Values", "values", ValuesPane), ("4 Matrix", "matrix", MatrixPane),
                  ("5 Results", "results", ResultsPane), ("6 Claims", "claims", ClaimsPane),
                  ("7 Analysis", "analysis", AnalysisPane))
        with TabbedContent(id="panes", initial="steps"):
            for title, name, widget in panes_:
                with TabPane(title, id=name):
                    if self.first is None or name == "steps":
                        yield widget(id=f"{name}-pane")
                    else:
                        self.later.append((name, widget))
        yield TextView("", id="message")
        yield Footer()

    async def on_load(self) -> None:
        """Wait for the first screen's process here: Textual starts the terminal only after this
        (its Load event comes before the driver), so the app's own start-up overlaps that process's
        work, and a file it refuses ends the app before anything is drawn (:func:`run` raises it)."""
        pending, self.pending = self.pending, None
        if pending is None:
            return
        try:
            self.first = await asyncio.to_thread(pending.result)
            if self.first is None and self.start_path is not None:  # no first screen: load the file here
                await asyncio.to_thread(_check_loads, self.start_path)
        except InputError as err:
            self.refused = err
            self.exit(return_code=2)
            return
        if self.first is None:
            self.held = None
        else:
            self.first_process = pending  # it may go on to print the results (first_screen.early_results)
        # The first screen's process has ended: the solver's server imports the engine on the other
        # core while this one draws the screen, so the solve can start as soon as the session is open.
        solver_process.start_server()

    def on_mount(self) -> None:
        if self.plain:
            self.theme = "ansi-dark"
        threads.install()
        # Everything alive now lives as long as the app: keep it out of the collector's full passes,
        # which otherwise pause the loop ~0.1 s.
        gc.freeze()
        for line in ("#problem", "#warnings"):
            self.query_one(line).display = False
        if self.poll:
            self.set_interval(POLL_SECONDS, self.poll_file)
        if self.first is not None:
            self._show_first(self.first)
            self.call_after_refresh(self._after_first_screen)
        else:
            solver_process.start_server()  # (started already unless a first screen was awaited)
            self.open_path(self.start_path)
        self.query_one("#equation-list").focus()

    # --- the first screen, before the engine is imported --------------------------------------
    def _show_first(self, first: FirstScreen) -> None:
        self.query_one(StepsPane).show_first(first.step_head, first.step_text, list(first.equations),
                                             list(first.parts))
        self._set_line("#warnings", first.warnings)
        self._update_status()

    async def _after_first_screen(self) -> None:
        """The first screen is drawn: start the solver processes' server, import the engine and open
        the session in a worker thread, and mount the other panes meanwhile (the held keys wait until
        the session is open, so no pane shows before)."""
        self.panes_mounted = asyncio.Event()
        solver_process.start_server()
        self.run_worker(partial(self._open_session, self.first.path), thread=True, group="session",
                        description="importing the engine and opening the file")
        process = getattr(self, "first_process", None)
        if process is not None:
            self.run_worker(partial(self._early_work, process), thread=True, group="early",
                            description="results printed with the first screen")
        for name, widget in self.later:
            await self.query_one(f"#{name}", TabPane).mount(widget(id=f"{name}-pane"))
        self.later = []
        self.panes_mounted.set()
        self._early_held_key()

    def _early_work(self, process) -> None:
        """In a worker thread: wait for the first screen's process to end; adopt the results it printed."""
        got = process.early()
        if got is not None:
            self.call_from_thread(self._early_results, *got)

    def _early_results(self, width: int, text: str) -> None:
        """The Results pane's text of the opened file, printed by the first screen's process: kept for
        the session's first entry (nothing substituted), which then does not wait for the solver."""
        self.early = (("results", False, width), text)
        self._install_early()
        self._early_held_key()

    def _early_held_key(self) -> None:
        """The results key pressed first and held, before the results were there: show them now."""
        if self.held and not self.session.loaded:
            first, rest = self.held[0], self.held[1:]
            self.held = []
            self.held = rest if self._early_pane(first) else [first] + rest

    def _install_early(self) -> None:
        early = getattr(self, "early", None)
        if early is None or not self.session.loaded:
            return
        entry = self.session.stack[0]
        key, text = early
        # only the file as opened (not reloaded since), nothing substituted
        if entry.study is getattr(self, "opened_study", None) and not entry.study.choice.steps \
                and key not in entry.texts:
            entry.texts[key] = text
            if entry is self.entry:
                self._show_records(entry)
                self._update_status()

    def _early_pane(self, key: events.Key) -> bool:
        """Before the session is open: the results key, pressed before any other, shows the results
        the first screen's process printed (the session then keeps them). True when it did."""
        early = getattr(self, "early", None)
        mounted = getattr(self, "panes_mounted", None)
        if early is None or self.held or mounted is None or not mounted.is_set():
            return False
        if not any(k.action == "pane('results')" and key.key in k.keys.split(",") for k in KEYS):
            return False
        self.query_one(ResultsPane).show_note(early[1])  # as _show_records shows a solution's text
        self.show_pane("results")
        return True

    def _open_session(self, path: str) -> None:
        """In a worker thread: import the engine and open ``path`` in a new session."""
        from nodeterm.ui.session import Session
        session = Session()
        try:
            session.open(path)
        except Exception as exc:  # noqa: BLE001 - shown by _session_opened
            self.call_from_thread(self._session_opened, None, exc)
            return
        self.call_from_thread(self._session_opened, session, None)

    @guarded
    async def _session_opened(self, session, error: BaseException | None) -> None:
        """The session is open (or could not open): show it, ask for the solve, run the held keys."""
        await self.panes_mounted.wait()
        held, self.held = self.held or [], None
        try:
            if error is None:
                self.session = session
                self.first = None
                self.opened_study = session.stack[0].study
                self._install_early()  # before show_entry asks the solver for what the entry lacks
                self.show_entry(step=0)
            else:
                self._set_line("#problem", f"! {describe(error)}")
                self.report_error(error, "open the file")
            gc.freeze()  # the engine's modules, imported just now, live as long as the app
        finally:
            for key in held:
                self.post_message(events.Key(key.key, key.character))

    async def on_event(self, event: events.Event) -> None:
        """Until the session is open, keys are held (and run in order once it is); the mouse waits."""
        if self.held is not None and isinstance(event, events.InputEvent) and not event.is_forwarded:
            if isinstance(event, events.Key) and not self._early_pane(event):
                self.held.append(event)
            return
        await super().on_event(event)

    # --- compatibility views of the current state (tests and exports read them) -------------------
    @property
    def entry(self) -> Entry | None:
        return self.session.entry

    @property
    def system(self):
        return self.session.system

    @property
    def solution(self):
        entry = self.entry
        return entry.study.solution if entry is not None and entry.has("solution") else None

    @property
    def verdicts(self) -> list:
        entry = self.entry
        if entry is None:
            return []
        return list(entry.texts.get(("verdicts", tuple(self.session.claims.items())), ()))

    @property
    def busy_since(self) -> float | None:
        return min((since for _, since in self.busy.values()), default=None)

    # --- messages -------------------------------------------------------------
    def notify(self, message: str, *, title: str = "", severity: str = "information", timeout=None,
               markup: bool = True) -> None:
        """Messages go to the line above the footer (a toast would cover the panes); they stay until
        the next one."""
        text = f"{title}: {message}" if title else str(message)
        text = " ".join(text.split())
        if severity == "error":
            text = "! " + text
            self.last_error = text
        self.last_message = text
        try:
            self.query_one("#message", TextView).set(text)
        except NoMatches:
            pass

    def report_error(self, exc: BaseException, doing: str = "") -> None:
        """Show a failure as a message and log it; the state on screen is untouched."""
        msg = describe(exc)
        if isinstance(exc, InputError):
            logger().info("%s: %s", doing, msg)
        else:
            logger().error("%s failed", doing, exc_info=exc)
        self.notify(msg, title=f"could not {doing}" if doing else "error", severity="error")
        self.last_error = msg

    def _set_line(self, selector: str, text: str) -> None:
        line = self.query_one(selector, TextView)
        line.set(text)
        if line.display != bool(text):
            line.display = bool(text)

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
            still = f"  (still showing {os.path.basename(self.session.path)})" if self.session.loaded else ""
            self._set_line("#problem", f"! {err}{still}")
            raise
        self._set_line("#problem", "")
        self.workers.cancel_group(self, "records")
        self.show_entry(step=0)

    def try_open(self, path: str) -> str | None:
        """Open ``path``; return the error text instead of raising (for the open dialog)."""
        from nodeterm.engine import load_circuit
        try:
            load_circuit(path)
        except InputError as err:
            return str(err)
        self.open_path(path)
        return None

    @guarded
    def reload(self) -> None:
        """Load the file again; a file that no longer loads keeps the last good state on screen."""
        previous = self.entry.study if self.entry is not None else None
        try:
            dropped = self.session.reload()
        except InputError as err:
            self._set_line("#problem", f"! file no longer loads, showing the last good version: {err}")
            raise
        self._set_line("#problem", "")
        self.workers.cancel_group(self, "records")
        self.busy.pop("records", None)
        self.show_entry()
        note = f"reloaded {os.path.basename(self.session.path)}"
        self.notify("; ".join([note] + dropped), severity="warning" if dropped else "information")
        if previous is not None and self.entry is not None:
            self.compare_with(previous, self.entry.study)

    def compare_with(self, previous, study) -> None:
        """Work out what changed between the previous good state and ``study`` (key d shows it)."""
        self.last_diff = None
        self.query_one(StepsPane).mark_changed(())
        self.run_worker(partial(self._diff_work, previous, study), thread=True, group="diff", exclusive=True,
                        description="what the reload changed")

    def _diff_work(self, previous, study) -> None:
        """Runs in a thread that only waits: the diff solves both versions in the solver process
        (in a thread it would hold the GIL and stall the screen on a big circuit)."""
        worker = get_current_worker()
        try:
            diff = solver_process.call_in_child(solver_process.diff_of, previous, study,
                                                cancelled=lambda: worker.is_cancelled)
        except solver_process.Cancelled:
            return
        except Exception as exc:  # noqa: BLE001 - the diff is a help; the reload itself succeeded
            if not worker.is_cancelled:
                self.call_from_thread(self.notify, f"could not compare with the previous version: "
                                      f"{describe(exc)}", severity="warning")
            return
        if not worker.is_cancelled:
            self.call_from_thread(self._diff_ready, diff)

    def _diff_ready(self, diff) -> None:
        self.last_diff = diff
        self.query_one(StepsPane).mark_changed(diff.changed_labels)
        if diff.is_empty:
            what = "nothing changed in the circuit's terms"
        elif diff.changed_labels:
            what = "changed equations marked ~ in the steps"
        else:
            what = "changes found, no equation changed"
        self.notify(f"compared with the previous version: {what}; d shows the diff")

    @guarded
    def action_show_diff(self) -> None:
        """Show the diff of the last reload against the previous good version."""
        from nodeterm.present.diff import diff_pane_text
        width = max(40, self.size.width - 6)
        self.push_screen(DiffScreen(diff_pane_text(getattr(self, "last_diff", None), width)))

    @guarded
    def poll_file(self) -> None:
        """Reload when the file changed on disk (called every second; draws nothing otherwise)."""
        if self.session.loaded and self.session.changed_on_disk():
            self.reload()

    # --- rendering ------------------------------------------------------------
    def show_entry(self, step: int | None = None, last: bool = False) -> None:
        """Put the current entry on every pane (each redraws only what changed), then ask for the
        records it still lacks."""
        entry = self.entry
        if entry is None:
            return
        system = entry.system
        steps = self.query_one(StepsPane)
        if step is not None:
            steps.index = step
        steps.show(system, last=last)
        self.query_one(CircuitPane).show_text("\n".join(
            panes.circuit_lines(system.circuit, system.values, self._warnings(entry))))
        self.query_one(ValuesPane).show(system.circuit.parameters, system.values,
                                        panes.history_text(self.session.done(), self.session.undone()))
        self._show_warnings(entry)
        self._show_records(entry)
        self.request_records()
        self._update_status()

    def _warnings(self, entry: Entry) -> tuple:
        if entry.has("warnings"):
            return tuple(entry.study.warnings)
        return tuple(entry.system.warnings)

    def _show_warnings(self, entry: Entry) -> None:
        self._set_line("#warnings", panes.warnings_line(self._warnings(entry)))

    def _text_keys(self) -> dict[str, tuple]:
        width = self.query_one(ResultsPane).text_width
        return {"matrix": ("matrix", self.query_one(MatrixPane).text_width),
                "solution": ("results", self.two_d, width),
                "warnings": ("warnings",),
                "verdicts": ("claims", tuple(self.session.claims.items())),
                "analysis": ("analysis",)}

    def _show_records(self, entry: Entry) -> None:
        """The matrix, results, claims and analyses of ``entry``: text when there, else why not."""
        keys = self._text_keys()
        busy = "records" in self.busy
        notes = {"matrix": "computing the matrix...", "solution": "solving... (c cancels)",
                 "verdicts": "checking the claims...", "analysis": "analysing... (c cancels)"}
        for name, show in (("matrix", self.query_one(MatrixPane).show_text),
                           ("solution", self.query_one(ResultsPane).show_note),
                           ("verdicts", self.query_one(ClaimsPane).show_verdicts),
                           ("analysis", self.query_one(AnalysisPane).show_text)):
            text = entry.texts.get(keys[name])
            if text is not None:
                show(text)
                continue
            error = entry.texts.get(("error", name)) or entry.texts.get(("error", "solution"))
            if error:
                show(f"{NO[name]}: {error} (s tries again)")
            elif entry.texts.get(("cancelled",)):
                show("cancelled (s solves again)")
            elif name == "verdicts" and not entry.system.circuit.hand and not self.session.claims:
                show("(no claims yet: type one above; a [hand] table in the file is checked too)")
            elif name == "analysis" and self.query_one(TabbedContent).active != "analysis":
                show("(open this pane or press a to run the analyses)")
            else:
                show(notes[name] if busy or name != "analysis" else "(a runs the analyses)")
        if entry.has("solution") and self.query_one(TabbedContent).active == "analysis":
            self.query_one(AnalysisPane).show_system(entry.system, entry.study.solution)

    def _wanted(self, entry: Entry) -> list[str]:
        keys = self._text_keys()
        if entry.texts.get(("cancelled",)) or entry.texts.get(("error", "solution")):
            return []
        wanted = [name for name in ("matrix", "solution") if keys[name] not in entry.texts
                  and ("error", name) not in entry.texts]
        if not entry.has("warnings") and ("error", "warnings") not in entry.texts:
            wanted.append("warnings")
        if keys["verdicts"] not in entry.texts and (entry.system.circuit.hand or self.session.claims) \
                and ("error", "verdicts") not in entry.texts:
            wanted.append("verdicts")
        if self.query_one(TabbedContent).active == "analysis" and keys["analysis"] not in entry.texts \
                and ("error", "analysis") not in entry.texts:
            wanted.append("analysis")
        return wanted

    def request_records(self) -> None:
        """Ask the solver process for what the current entry lacks (one request at a time)."""
        entry = self.entry
        if entry is None:
            return
        wanted = self._wanted(entry)
        if not wanted:
            return
        what = "solving" if "solution" in wanted else ("checking claims" if "verdicts" in wanted else "analysing")
        self._set_busy("records", what)
        self._records_worker(entry, tuple(wanted), {"width": self.query_one(ResultsPane).text_width,
                                                    "two_d": self.two_d, "claims": dict(self.session.claims)},
                             self.query_one(MatrixPane).text_width)

    @work(thread=True, exclusive=True, group="records", description="computing records")
    def _records_worker(self, entry: Entry, wanted: tuple, options: dict, matrix_width: int) -> None:
        """Waits for the child process; each record is handed to the event loop as it comes."""
        worker = get_current_worker()

        def received(part) -> None:
            if not worker.is_cancelled:
                self.call_from_thread(self._received, entry, part)
        try:
            solver_process.records_in_process(entry.study, wanted, dict(options, matrix_width=matrix_width),
                                              lambda: worker.is_cancelled, received)
            error = None
        except solver_process.Cancelled:
            return
        except Exception as exc:  # noqa: BLE001 - reported on screen by _finished
            error = exc
        if not worker.is_cancelled:
            self.call_from_thread(self._finished, entry, error)

    @guarded
    def _received(self, entry: Entry, part) -> None:
        """One record for ``entry`` (current or not: it stays with its study for undo and redo)."""
        if part.error is not None:
            entry.texts[("error", part.name)] = describe(part.error)
            if entry is self.entry:
                self.report_error(part.error, "compute the " + {"solution": "results"}.get(part.name, part.name))
        else:
            entry.study.adopt(part.carrier)
            entry.texts.update(part.texts)
        if entry is self.entry:
            self._show_records(entry)
            if part.name == "warnings":
                self._show_warnings(entry)
                self.query_one(CircuitPane).show_text("\n".join(
                    panes.circuit_lines(entry.system.circuit, entry.system.values, self._warnings(entry))))

    @guarded
    def _finished(self, entry: Entry, error) -> None:
        self._set_busy("records", None)
        if error is not None and entry is self.entry:
            entry.texts[("error", "solution")] = describe(error)
            self._show_records(entry)
            self.report_error(error, "solve")
        if entry is self.entry:
            self.request_records()  # what was asked for meanwhile (a typed claim, the analysis pane)
        self._update_status()

    # --- the status line and the busy time ---------------------------------------------------
    def _set_busy(self, group: str, what: str | None) -> None:
        if what is None:
            self.busy.pop(group, None)
        else:
            self.busy[group] = (what, time.monotonic())
        if self.busy and self._busy_timer is None:
            self._busy_timer = self.set_interval(1.0, self._update_status)
        elif not self.busy and self._busy_timer is not None:
            self._busy_timer.stop()
            self._busy_timer = None
        self._update_status()

    def _update_status(self) -> None:
        try:
            self._write_status()
        except NoMatches:  # during start-up or shut-down
            pass

    def _write_status(self) -> None:
        pane = self.query_one(TabbedContent).active
        steps = self.query_one(StepsPane)
        busy = None
        if self.busy:
            what, since = min(self.busy.values(), key=lambda b: b[1])
            busy = (what, int(time.monotonic() - since))
        system = self.system
        path, total, values = self.session.path, len(steps.steps), len(system.values) if system is not None else None
        if system is None and self.first is not None:  # the first screen, before the session is open
            path, total, values = self.first.path, self.first.steps, self.first.value_count
        text = panes.status_line(pane, os.path.basename(path) if path else None,
                                 (steps.index + 1, total) if total else None, values, self.two_d, busy,
                                 self.size.width or 80)
        if isinstance(self.focused, Input):
            text = "TYPING, Esc leaves | " + text
        self.query_one("#status", TextView).set(text)

    @on(StepsPane.StepChanged)
    @guarded
    def _step_changed(self) -> None:
        self._update_status()

    def on_descendant_focus(self) -> None:
        self._update_status()

    def on_descendant_blur(self) -> None:
        self._update_status()

    # --- panes -------------------------------------------------------------------
    @guarded
    def action_pane(self, name: str) -> None:
        self.show_pane(name)

    @on(TabbedContent.TabActivated)
    @guarded
    def _pane_changed(self) -> None:
        self._update_status()
        if self.query_one(TabbedContent).active == "analysis" and self.entry is not None:
            self._show_records(self.entry)
            if "records" not in self.busy:
                self.request_records()

    def show_pane(self, name: str) -> None:
        self.query_one(TabbedContent).active = name
        self.query_one(FOCUS.get(name, f"#{name}-pane")).focus()

    @guarded
    def action_analyse(self) -> None:
        self.show_pane("analysis")

    # --- steps -------------------------------------------------------------------
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
            self.notify("already at the " + ("last" if delta > 0 else "first") + " step")
        return moved

    # --- values ------------------------------------------------------------------
    @guarded
    def action_type_value(self, name: str | None = None) -> None:
        """Open the value dialog on ``name`` (the parameter highlighted in the values pane by default)."""
        system = self.system
        if system is None:
            return
        params = list(system.circuit.parameters)
        if not params:
            self.notify("this circuit has no parameters to give values to")
            return
        pane = self.query_one(ValuesPane)
        rows = panes.value_rows(system.circuit.parameters, system.values)
        self.push_screen(ValueScreen(params, rows, name or pane.selected or params[0], self._apply_value))

    @on(ValuesPane.Pick)
    @guarded
    def _pick(self, event: ValuesPane.Pick) -> None:
        self.action_type_value(event.name)

    def _apply_value(self, name: str, value: str) -> str | None:
        """The value dialog's Enter: substitute, or return what is wrong with the value."""
        try:
            self.substitute(name, value, raise_errors=True)
        except InputError as err:
            return f"! {err.message}" + (f"; {err.hint}" if err.hint else "")
        self.query_one(ValuesPane).select(name)
        return None

    def substitute(self, name: str, value: str, raise_errors: bool = False) -> bool:
        """Substitute one value (a number or an expression in the other parameters)."""
        try:
            self.session.substitute(name, value)
        except InputError as err:
            if raise_errors:
                raise
            self.report_error(err, "substitute")
            return False
        self._moved(f"substituted {name} = {value}", last=True)
        return True

    @guarded
    def action_substitute_known(self) -> None:
        self.substitute_known()

    def substitute_known(self) -> bool:
        if self.session.substitute_known() is None:
            self.notify("every value the file gives is already substituted")
            return False
        self._moved("substituted every value the file gives", last=True)
        return True

    @guarded
    def action_undo(self) -> None:
        self.undo()

    def undo(self) -> bool:
        label = self.entry.label if self.entry is not None else ""
        if self.session.undo() is None:
            self.notify("nothing to undo")
            return False
        self._moved(f"took back {label} (Ctrl+R redoes)")
        return True

    @guarded
    def action_redo(self) -> None:
        self.redo()

    def redo(self) -> bool:
        if self.session.redo() is None:
            self.notify("nothing to redo")
            return False
        self._moved(f"redid {self.entry.label}", last=True)
        return True

    def _moved(self, message: str, last: bool = False) -> None:
        """The session moved to another entry: show it (its records, if it had them, at once)."""
        self.workers.cancel_group(self, "records")
        self.busy.pop("records", None)
        self.show_entry(last=last)
        self.notify(message)

    # --- claims ------------------------------------------------------------------
    @on(ClaimsPane.Check)
    @guarded
    def _check_claim(self, event: ClaimsPane.Check) -> None:
        self.check_claim(event.text)

    def check_claim(self, text: str) -> bool:
        """Add a typed claim: ``NAME = value`` for a [find] name is a claimed result, else an equation."""
        pane = self.query_one(ClaimsPane)
        if self.entry is None:
            return False
        try:
            self.session.add_claim(text)
        except InputError as err:
            pane.show_error(f"! {err.message}")
            return False
        pane.accepted()
        self._show_records(self.entry)
        if "records" not in self.busy:
            self.request_records()
        return True

    # --- solving -----------------------------------------------------------------
    @guarded
    def action_toggle_form(self) -> None:
        self.two_d = not self.two_d
        self.query_one(StepsPane).set_two_d(self.two_d)
        if self.entry is not None:
            self._show_records(self.entry)
            if "records" not in self.busy:
                self.request_records()
        self._update_status()

    @guarded
    def action_solve(self) -> None:
        """Solve again: forget a cancel or an error of this entry and ask for its records."""
        entry = self.entry
        if entry is None:
            return
        for key in [k for k in entry.texts if k[0] in ("error", "cancelled")]:
            del entry.texts[key]
        self.workers.cancel_group(self, "records")
        self.busy.pop("records", None)
        self._show_records(entry)
        self.request_records()

    @guarded
    def action_cancel(self) -> None:
        self.cancel_solve()

    def cancel_solve(self) -> bool:
        if self.query_one(AnalysisPane).cancel_running():
            self.notify("Monte Carlo cancelled")
            return True
        if "records" not in self.busy:
            return False
        what = self.busy["records"][0]
        self.workers.cancel_group(self, "records")
        self._set_busy("records", None)
        entry = self.entry
        if entry is not None:
            entry.texts[("cancelled",)] = True
            self._show_records(entry)
        self.notify(f"{what} cancelled (s solves again)")
        return True

    @guarded
    def action_leave(self) -> None:
        """Esc: leave a text box (the keys work again), else cancel what runs."""
        if isinstance(self.focused, Input):
            if self.query_one(TabbedContent).active == "claims":
                self.query_one("#claims-scroll").focus()
            else:
                self.show_pane(self.query_one(TabbedContent).active)
        elif self.busy or self.query_one(AnalysisPane).running:
            self.cancel_solve()

    # --- analysis pane -------------------------------------------------------------
    @guarded
    def action_response_next(self) -> None:
        self.show_pane("analysis")
        pane = self.query_one(AnalysisPane)
        if pane.next_quantity() is None:
            self.notify("no frequency response to show (yet): the analysis pane says why")
        elif pane.quantity_count() == 1:
            self.notify("only one quantity of the find table depends on s")

    @guarded
    def action_write_response(self) -> None:
        self.show_pane("analysis")
        self.query_one(AnalysisPane).write_csv(self.session.path)

    @guarded
    def action_monte_carlo(self) -> None:
        self.show_pane("analysis")
        if self.system is not None:
            self.query_one(AnalysisPane).run_monte_carlo(self.system)

    # --- files ---------------------------------------------------------------------
    @guarded
    def action_open_file(self) -> None:
        start = os.path.dirname(self.session.path or "") + os.sep if self.session.path else ""
        self.push_screen(PathScreen("Open a circuit file (TOML):", start, check=self.try_open))

    @guarded
    def action_reload(self) -> None:
        self.reload()

    @guarded
    def action_export(self) -> None:
        from nodeterm.present.export import EXTENSIONS, FORMATS
        stem = os.path.splitext(os.path.basename(self.session.path or "circuit"))[0]
        self.push_screen(ExportScreen(FORMATS, EXTENSIONS, stem, os.getcwd()), callback=self._export_to)

    def export_text(self, fmt: str = "text") -> str:
        """The equation set of what is on screen in format ``fmt`` (with results when solved)."""
        from nodeterm.present.export import render
        from nodeterm.present.text import matrix_lines, steps_lines
        entry = self.entry
        system = entry.system
        if entry.has("solution") or self._text_keys()["solution"] in entry.texts:
            # a large solution stays in the solver process (only its text comes back): solve it here
            from nodeterm.engine.study import Records
            study = entry.study
            return render(Records(study.circuit, study.choice, system=system, matrix=study.matrix,
                                  solution=study.solution, warnings=tuple(study.warnings),
                                  verdicts=tuple(self.verdicts)), fmt)
        if fmt not in ("text", "ascii"):
            raise InputError(f"the {fmt} export needs the results, and the solve has not finished",
                             hint="wait for it (or press s to solve again), then export")
        matrix = entry.study.matrix if entry.has("matrix") else system.matrix()
        lines = steps_lines(system) + ["Matrix form A x = b"] + ["  " + ln for ln in matrix_lines(matrix)]
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
        """Write the equation set to ``path`` atomically; a failure is reported and leaves no file.

        A large solution stays in the solver process (only its text came back): the export is then
        rendered in a child process and written when it comes back, so the screen keeps answering
        (a 9-section symbolic ladder takes seconds). Returns False on a failure seen at once.
        """
        entry = self.entry
        if entry is not None and not entry.has("solution") and self._text_keys()["solution"] in entry.texts:
            self._set_busy("export", f"exporting {fmt}")
            self._export_worker(entry.study, tuple(self.verdicts), path, fmt, force)
            return True
        from nodeterm.present.export import write_atomic
        try:
            write_atomic(path, self.export_text(fmt), force=force)
        except InputError as err:
            self.report_error(err, "export")
            return False
        self.notify(f"wrote {path} ({fmt})")
        return True

    @work(thread=True, group="export", description="exporting")
    def _export_worker(self, study, verdicts: tuple, path: str, fmt: str, force: bool) -> None:
        """Renders in a child process (this thread only waits), then writes on the event loop."""
        worker = get_current_worker()
        try:
            text = solver_process.call_in_child(solver_process.export_text, study, verdicts, fmt,
                                                cancelled=lambda: worker.is_cancelled)
        except solver_process.Cancelled:
            return
        except Exception as exc:  # noqa: BLE001 - reported on screen
            if not worker.is_cancelled:
                self.call_from_thread(self._export_done, path, fmt, None, force, exc)
            return
        if not worker.is_cancelled:
            self.call_from_thread(self._export_done, path, fmt, text, force, None)

    @guarded
    def _export_done(self, path: str, fmt: str, text: str | None, force: bool, error) -> None:
        from nodeterm.present.export import write_atomic
        self._set_busy("export", None)
        self._update_status()
        if error is not None:
            self.report_error(error, "export")
            return
        try:
            write_atomic(path, text, force=force)
        except InputError as err:
            self.report_error(err, "export")
            return
        self.notify(f"wrote {path} ({fmt})")

    # --- help, palette, quitting ------------------------------------------------------
    @guarded
    def action_help(self) -> None:
        self.push_screen(HelpScreen(help_text()))

    def pending_input(self) -> list[str]:
        """What the user typed and has not applied (quitting would lose it)."""
        claim = self.query_one(ClaimsPane).pending
        return [f"the claim {claim!r} not yet checked"] if claim else []

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

    def get_system_commands(self, screen):
        """Every action by name (titles escaped: they name tables such as [find])."""
        for key in KEYS:
            if key.action in ("leave",):
                continue
            yield SystemCommand(escape(key.title), f"key: {key.display}", partial(self.run_action, key.action))
        yield SystemCommand("Theme", "Change the colour theme", self.action_change_theme)


def _check_loads(path: str) -> None:
    from nodeterm.engine.circuit.loader import load_circuit
    load_circuit(path)


def run(path: str | None, first: FirstScreen | None = None, pending: Pending | None = None) -> int:
    """Run the workbench on ``path`` (the bundled demo when None); returns the exit status.

    ``first``: the first screen's text printed by :mod:`.first_screen` for that file, drawn at once;
    ``pending``: the process printing it, still at work.

    Raises:
        InputError: the file does not load (found before the terminal was touched).
    """
    app = Workbench(path, first=first, pending=pending)
    result = app.run()
    if app.refused is not None:
        raise app.refused
    return result if isinstance(result, int) else (app.return_code or 0)
