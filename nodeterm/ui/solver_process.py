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
PRELOAD = ["nodeterm.engine", "nodeterm.engine.solving.solve", "nodeterm.engine.solving.fastsolve", "nodeterm.engine.analysis.transfer",
           "nodeterm.ui.matrix_pane", "nodeterm.ui.results_pane", "nodeterm.ui.analysis_pane",
           "nodeterm.ui.response_pane", "nodeterm.ui.solver_process"]

_context = None
_context_lock = threading.Lock()


class Cancelled(Exception):
    """The caller no longer wants the answer (the child was terminated)."""


@dataclass
class Solved:
    """What the child sends back: the matrix and its text, then the solution and its text."""

    matrix: object = None
    matrix_text: str = ""
    solution: object = None
    printed: str = ""


def solve_and_print(system, two_d: bool, width: int, send: Callable[[str, object], None]) -> None:
    """Matrix, then solution, each with the text the panes show; ``send`` passes them on."""
    from nodeterm.ui.matrix_pane import matrix_text
    from nodeterm.ui.results_pane import results_text
    matrix = system.matrix()
    send("matrix", Solved(matrix, matrix_text(matrix)))
    from nodeterm.engine.solving.solve import solve_system
    solution = solve_system(system)
    try:
        printed = results_text(system, solution, two_d, width)
    except Exception as exc:  # noqa: BLE001 - the solution is still good for the other panes
        from nodeterm.ui.safety import describe
        printed = f"! could not print the results: {describe(exc)}"
    send("solved", Solved(matrix, "", solution, printed))


def _child(conn, fn, args) -> None:
    def send(kind: str, value) -> None:
        conn.send_bytes(pickle.dumps((kind, value), protocol=pickle.HIGHEST_PROTOCOL))
    try:
        fn(*args, send=send)
    except BaseException as exc:  # noqa: BLE001 - handed to the parent, which reports it
        try:
            pickle.dumps(exc)
        except Exception:  # noqa: BLE001 - an exception that does not pickle: keep its text
            exc = RuntimeError(f"{type(exc).__name__}: {exc}")
        send("error", exc)
    finally:
        conn.close()


def _returning(fn, *args, send) -> None:
    send("done", fn(*args))


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


def solve_in_process(system, two_d: bool, width: int, cancelled: Callable[[], bool],
                     on_matrix: Callable[[Solved], None]) -> Solved:
    """Solve ``system`` in a child process; ``on_matrix`` gets the matrix as soon as it is there.

    Raises:
        Cancelled: ``cancelled()`` became true; the child has been terminated.
        Exception: whatever the engine raised in the child (InputError, SolveError...).
    """
    if IN_CHILD:
        try:
            return _run(solve_and_print, (system, two_d, width), cancelled, lambda kind, part: on_matrix(part))
        except _NoChild:
            pass
    return _solve_here(system, two_d, width, cancelled, on_matrix)


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
            if kind in ("done", "solved"):
                return value
            if on_part is not None and not cancelled():
                on_part(kind, value)
    finally:
        recv.close()
        if proc.is_alive():
            proc.terminate()
        proc.join(timeout=1)


def _solve_here(system, two_d, width, cancelled, on_matrix) -> Solved:
    """The same work in the calling thread (no child process could be started)."""
    out: list[Solved] = []

    def send(kind: str, value: Solved) -> None:
        if kind == "matrix":
            if not cancelled():
                on_matrix(value)
        else:
            out.append(value)
    solve_and_print(system, two_d, width, send)
    if cancelled():
        raise Cancelled()
    return out[-1]
