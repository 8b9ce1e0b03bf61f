"""The exact solve (and the analyses) in a child process, so the workbench's event loop is never starved.

A thread worker shares the GIL with the event loop, and FLINT and SymPy hold it for long stretches:
a 12-stage symbolic op-amp chain solved in a thread stalled the loop for 140 ms, a 16-stage one for
seconds (measured with ``benchmarks/workbench.py``). So the solve worker (still a thread, which only
waits) hands the work to a child process: the matrix, the solution and the printed results come back
pickled (SymPy expressions pickle; the engine's large results pickle as polynomial coefficients).
Cancelling terminates the child, so an abandoned symbolic solve stops using the CPU at once.
The analyses of a solved system (:func:`call_in_child`) run the same way.

Children are forked from a ``forkserver`` that has imported the engine (forking the workbench
itself, which runs threads, is unsafe, and a freshly spawned interpreter would import SymPy again
for every solve). Where no process can be started, the work runs in the calling thread instead.
"""

from __future__ import annotations

import multiprocessing
import pickle
import threading
from dataclasses import dataclass
from typing import Callable

POLL_SECONDS = 0.05
IN_CHILD = True
"""False runs the work in the calling thread (tests that patch the engine in this process use it)."""
PRELOAD = ["nodeterm.engine", "nodeterm.engine.solving.solve", "nodeterm.engine.solving.fastsolve",
           "nodeterm.engine.analysis.transfer", "nodeterm.present.panes", "nodeterm.present.text",
           "nodeterm.engine.study", "nodeterm.ui.analyses", "nodeterm.ui.solver_process"]
"""What the fork server imports once: the engine and the presenters, never a widget."""

_context = None
_context_lock = threading.Lock()


class Cancelled(Exception):
    """The caller no longer wants the answer (the child was terminated)."""


RECORDS = ("matrix", "solution", "warnings", "verdicts", "analysis")
"""What the workbench asks the solver process for, in this order."""


@dataclass
class Part:
    """One record as it comes back: ``carrier`` is a study holding only that record (the workbench
    adopts it into its own study), ``texts`` the pane text printed for it, ``error`` why it failed."""

    name: str
    carrier: object = None
    texts: dict | None = None
    error: BaseException | None = None


def compute_records(study, wanted, options: dict, send: Callable[[str, object], None]) -> None:
    """Compute the records ``wanted`` of ``study`` (in :data:`RECORDS` order) and print their pane text.

    ``options``: ``width`` and ``two_d`` for the printed results, ``matrix_width``, ``claims`` (name -> text) typed in
    the workbench. Each record is sent as a :class:`Part` as soon as it is there; a record that
    fails is sent with its error, and the records that need it are not computed.
    """
    from nodeterm.present import panes
    width, two_d = options.get("width", 78), options.get("two_d", False)
    for name in [r for r in RECORDS if r in wanted]:
        carrier = study.with_choice(study.choice)
        try:
            if name == "matrix":
                value = study.matrix
                mwidth = options.get("matrix_width", width)
                texts = {("matrix", mwidth): panes.matrix_text(value, mwidth)}
            elif name == "solution":
                value = study.solution
                texts = {("results", two_d, width): _results(study, two_d, width)}
                if _large(value):  # megabytes to pickle and seconds to unpickle: only its text goes back
                    value = None
            elif name == "warnings":
                value = study.warnings
                texts = {}
            elif name == "verdicts":
                value = study.verdicts
                typed = options.get("claims") or {}
                verdicts = list(value)
                if typed:
                    from nodeterm.engine.audit.verdicts import audit_claims
                    verdicts += audit_claims(study.system, dict(typed), solution=study.solution)
                key = tuple(typed.items())
                texts = {("claims", key): "\n".join(panes.claims_lines(verdicts)), ("verdicts", key): tuple(verdicts)}
            else:
                from nodeterm.ui.analyses import analysis_lines
                value = None
                texts = {("analysis",): "\n".join(analysis_lines(study))}
        except Exception as exc:  # noqa: BLE001 - sent on; the workbench shows it in the pane
            send(name, Part(name, error=_picklable(exc)))
            if name in ("matrix", "solution"):
                return
            continue
        if value is not None:
            carrier.__dict__[name] = value
        send(name, Part(name, carrier, texts))


def export_text(study, verdicts: tuple, fmt: str) -> str:
    """The export of ``study`` in format ``fmt`` with its results (run in a child by the workbench:
    a large solution is kept only in the solver process, so it is solved again there)."""
    from nodeterm.engine.study import Records
    from nodeterm.present.export import render
    return render(Records(study.circuit, study.choice, system=study.system, matrix=study.matrix,
                          solution=study.solution, warnings=tuple(study.warnings), verdicts=tuple(verdicts)),
                  fmt)


def diff_of(previous, study):
    """What changed from study ``previous`` to ``study`` (the workbench's reload diff)."""
    from nodeterm.engine.review.diff import diff_studies
    return diff_studies(previous.with_choice(previous.choice), study.with_choice(study.choice),
                        "previous version", "now")


def _large(solution) -> bool:
    """True when a solution holds results kept as polynomials (a 9-section symbolic ladder's pickle is
    tens of megabytes): the workbench gets their text, and the records that need them are computed here."""
    values = list(solution.node_voltages.values()) + list(solution.currents.values()) + list(solution.find.values())
    return any(getattr(v, "is_large", False) for v in values)


def _results(study, two_d: bool, width: int) -> str:
    from nodeterm.present import panes
    try:
        return panes.results_text(study.system, study.solution, two_d, width, pretty=panes.pretty)
    except Exception as exc:  # noqa: BLE001 - the solution is still good for the other panes
        return f"! could not print the results: {type(exc).__name__}: {exc}"


def _picklable(exc: BaseException) -> BaseException:
    try:
        pickle.dumps(exc)
        return exc
    except Exception:  # noqa: BLE001 - an exception that does not pickle: keep its text
        return RuntimeError(f"{type(exc).__name__}: {exc}")


def _child(conn, fn, args) -> None:
    def send(kind: str, value) -> None:
        conn.send_bytes(pickle.dumps((kind, value), protocol=pickle.HIGHEST_PROTOCOL))
    try:
        fn(*args, send=send)
        send("done", None)
    except BaseException as exc:  # noqa: BLE001 - handed to the parent, which reports it
        send("error", _picklable(exc))
    finally:
        conn.close()


def _returning(fn, *args, send) -> None:
    send("result", fn(*args))


def context():
    """The multiprocessing context children start from (its server is started on first use)."""
    global _context
    with _context_lock:
        if _context is None:
            methods = multiprocessing.get_all_start_methods()
            ctx = multiprocessing.get_context("forkserver" if "forkserver" in methods else "spawn")
            if ctx.get_start_method() == "forkserver":
                ctx.set_forkserver_preload(PRELOAD)
            _context = ctx
        return _context


def start_server() -> None:
    """Start the fork server (and multiprocessing's resource tracker) now.

    Call it before Textual runs: while the app runs, ``sys.stderr`` is Textual's capture object,
    whose file descriptor the resource tracker cannot inherit ("bad value(s) in fds_to_keep"), and
    every child would fail to start. Starting only spawns the server: it imports the engine on its own.
    """
    try:
        ctx = context()
        if ctx.get_start_method() == "forkserver":
            from multiprocessing import forkserver
            forkserver.ensure_running()
    except Exception:  # noqa: BLE001 - then the work runs in the worker thread (see _NoChild)
        pass


def start_tracker() -> None:
    """Start only multiprocessing's resource tracker now (it must start before Textual runs, see
    :func:`start_server`); the fork server can then start later, once the first screen is drawn, so
    its imports do not compete with drawing it."""
    try:
        if context().get_start_method() == "forkserver":
            from multiprocessing import resource_tracker
            resource_tracker.ensure_running()
    except Exception:  # noqa: BLE001 - start_server tries again; else the work runs in the worker thread
        pass


def records_in_process(study, wanted, options: dict, cancelled: Callable[[], bool],
                       on_part: Callable[[Part], None]) -> None:
    """Compute records of ``study`` in a child process (:func:`compute_records`); ``on_part`` gets each.

    Raises:
        Cancelled: ``cancelled()`` became true; the child has been terminated.
    """
    if IN_CHILD:
        try:
            _run(compute_records, (study, tuple(wanted), options), cancelled,
                 lambda kind, part: on_part(part))
            return
        except _NoChild:
            pass
    mine = study.with_choice(study.choice).adopt(study)  # a copy: a cancelled run must not fill the caller's
    compute_records(mine, tuple(wanted), options, lambda kind, part: None if cancelled() else on_part(part))
    if cancelled():
        raise Cancelled()


def call_in_child(fn: Callable, *args, cancelled: Callable[[], bool]):
    """``fn(*args)`` in a child process (``fn`` a module-level function, arguments and result picklable).

    Raises:
        Cancelled: ``cancelled()`` became true; the child has been terminated.
    """
    if IN_CHILD:
        try:
            return _run(_returning, (fn,) + args, cancelled, None)
        except _NoChild:
            pass
    result = fn(*args)
    if cancelled():
        raise Cancelled()
    return result


class _NoChild(Exception):
    """No child process could be started here."""


def _run(fn, args, cancelled, on_part):
    try:
        ctx = context()
        recv, send = ctx.Pipe(duplex=False)
        proc = ctx.Process(target=_child, args=(send, fn, args), daemon=True, name="nodeterm-solver")
        proc.start()
    except (OSError, ValueError, RuntimeError, pickle.PicklingError) as exc:
        raise _NoChild() from exc
    send.close()
    try:
        while True:
            while not recv.poll(POLL_SECONDS):
                if cancelled():
                    raise Cancelled()
                if not proc.is_alive() and not recv.poll(0):
                    raise RuntimeError(f"the solver process ended without an answer (exit code {proc.exitcode})")
            try:
                kind, value = pickle.loads(recv.recv_bytes())
            except EOFError:
                raise RuntimeError(f"the solver process ended without an answer (exit code {proc.exitcode})") \
                    from None
            if kind == "error":
                raise value
            if kind == "result":
                return value
            if kind == "done":
                return None
            if on_part is not None and not cancelled():
                on_part(kind, value)
    finally:
        recv.close()
        if proc.is_alive():
            proc.terminate()
        proc.join(timeout=1)
