"""The workbench's first screen, printed by a child process while the workbench imports Textual.

Opening the workbench costs two large imports: SymPy with the engine (about 0.45 s on the
development machine) and Textual (about 0.25 s). One after the other, the first screen came up
near a second after the command started. So ``nodeterm [FILE]`` starts a child process (:func:`start`,
running :func:`main`) that loads the circuit, writes the procedure and prints
the text of the first screen -- step 1 with its equations and parts, the status and warnings
lines (less the op-amp feedback check: NumPy and its numbers, about 0.1 s; its warnings come with
the session) -- while the parent imports Textual; both imports run at once on two cores.
The parent draws that text, then imports the engine itself, loads the file into its session and
asks for the solve (solve after). Keys pressed meanwhile wait and run in order (:mod:`.app`).

The text is printed by the same functions of :mod:`nodeterm.present.panes` the panes use, so the
session's own drawing replaces it without a visible change. A file that does not load is reported
by the child before the screen opens (the command prints the same one-line message and exits 2).
When no child can be started, or it fails, the parent loads the file itself as before.

This module never imports Textual, and imports the engine only in the child.
"""

from __future__ import annotations

import os
import subprocess
import sys
from dataclasses import asdict, dataclass

from nodeterm.engine.errors import InputError


@dataclass(frozen=True)
class FirstScreen:
    """The text of the workbench's first screen (plain strings: nothing to unpickle, no SymPy)."""

    path: str                            # the file, as the session will open it
    step_head: str                       # step 1's head line and its text
    step_text: str
    steps: int                           # how many steps the procedure has
    equations: tuple[str, ...]           # step 1's equations, the first one selected
    parts: tuple[tuple[str, str], ...]   # (part id, prompt) of the parts list
    value_count: int                     # values substituted (none yet: the status line says symbolic)
    warnings: str                        # the line under the status line ("" when none)


class Refused(InputError):
    """The file does not load: its one-line message as the child printed it."""

    def __init__(self, text: str) -> None:
        super().__init__(text)
        self.text = text

    def __str__(self) -> str:
        return self.text


EARLY_SECONDS = 1.0
"""How long the child may go on solving for :func:`early_results` after printing the first screen."""


def compute(path: str) -> FirstScreen:
    """Load ``path``, write its procedure and print the first screen (imports the engine).

    Raises:
        InputError: the file does not load.
    """
    return _compute(path)[0]


def _compute(path: str):
    from nodeterm.engine.circuit.loader import load_circuit
    from nodeterm.engine.equations.system import build_system
    from nodeterm.present import panes
    # Study(circuit).system before any substitution, less the op-amp feedback check (NumPy): it
    # changes neither step 1 nor the step count, and its warnings come when the session is open
    system = build_system(load_circuit(path), check_feedback=False)
    circuit = system.circuit
    step = system.steps[0]
    selected = 0 if step.equations else None
    tied = panes.equation_parts(step.equations[0]) if step.equations else ()
    return FirstScreen(
        path=path,
        step_head=panes.step_heading(0, len(system.steps), step),
        step_text=panes.step_text(step),
        steps=len(system.steps),
        equations=tuple(panes.equation_prompts(step, selected, None)),
        parts=tuple(zip([p.id for p in circuit.parts], panes.part_prompts(circuit.parts, None, tied))),
        value_count=len(system.values),
        warnings=panes.warnings_line(system.warnings),
    ), system


def early_results(system, width: int) -> str | None:
    """The Results pane's text of the opened file (nothing substituted), when its solution is large.

    A large solution's text is all the workbench ever receives of it (:mod:`.solver_process`), and
    this process has the engine imported and the equations written already: printing the text here,
    right after the first screen, spares waiting for the workbench's own import and the solver's
    process server (a 9-section symbolic ladder's results came 1 s after the first screen). A small
    solution is left to the usual way (the workbench also needs the solution itself).
    """
    from nodeterm.engine.solving.solve import solve_system
    from nodeterm.present import panes
    from nodeterm.ui.solver_process import _large
    solution = solve_system(system)
    if not _large(solution):
        return None
    return panes.results_text(system, solution, False, width, pretty=panes.pretty)


class Pending:
    """The child at work; :meth:`result` waits for its answer."""

    def __init__(self, proc: subprocess.Popen) -> None:
        self.proc = proc

    def result(self) -> FirstScreen | None:
        """The first screen, or None when the child failed (the caller then loads the file itself).

        Reads the child's first line only: the child may go on printing the results (:meth:`early`).

        Raises:
            Refused: the file does not load (an InputError with the child's one-line message).
        """
        import json
        try:
            line = self.proc.stdout.readline()
        except BaseException:
            self.proc.kill()
            self.proc.wait()
            raise
        try:
            answer = json.loads(line.decode("utf-8"))
        except (ValueError, UnicodeDecodeError):
            self.proc.kill()
            _, err = self.proc.communicate()
            _log_failure(self.proc.returncode, err)
            return None
        if "refused" in answer:
            self.proc.communicate()
            raise Refused(answer["refused"])
        screen = answer["screen"]
        return FirstScreen(**{**screen, "equations": tuple(screen["equations"]),
                              "parts": tuple(tuple(p) for p in screen["parts"])})


    def early(self) -> tuple[int, str] | None:
        """Waits for the child to end: (width, Results pane text) when it printed them, else None."""
        import json
        try:
            rest, _ = self.proc.communicate()
        except (OSError, ValueError):
            return None
        for line in rest.decode("utf-8", "replace").splitlines():
            try:
                got = json.loads(line).get("results")
            except (ValueError, AttributeError):
                continue
            if isinstance(got, dict) and isinstance(got.get("text"), str) and isinstance(got.get("width"), int):
                return got["width"], got["text"]
        return None

    def stop(self) -> None:
        """End the child (its results are no longer wanted)."""
        if self.proc.poll() is None:
            self.proc.kill()
        try:
            self.proc.communicate()
        except (OSError, ValueError):
            pass


def results_width() -> int:
    """The Results pane's text width at this terminal's size (:func:`nodeterm.ui.results_pane.text_width`)."""
    import shutil
    return max(30, shutil.get_terminal_size((80, 24)).columns - 2)


def start(path: str | None, width: int | None = None) -> Pending | None:
    """Start the child on ``path`` (the bundled demo when None); None when it cannot be started.

    ``width``: also print the Results pane's text for that width when the solution is large
    (:func:`early_results`)."""
    if path is None:
        from nodeterm.demos import demo_path
        path = demo_path()
    # The child imports from the same places as this process: this nodeterm, then this sys.path (not
    # the working directory). -S skips the site module (this sys.path already holds what it adds).
    root = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
    paths = [root] + [p for p in sys.path if p and p != root]
    code = f"import sys; sys.path[:] = {paths!r}; from {__name__} import main; main(sys.argv[1:])"
    try:
        proc = subprocess.Popen([sys.executable, "-S", "-c", code, path] + ([str(width)] if width else []),
                                stdin=subprocess.DEVNULL,
                                stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    except OSError:
        return None
    return Pending(proc)


def _log_failure(status, err: bytes) -> None:
    from nodeterm.ui.safety import logger
    text = err.decode("utf-8", "replace").strip()
    logger().warning("the first-screen process failed (exit status %s); the workbench loads the file "
                     "itself\n%s", status, text)


def main(argv: list[str]) -> int:
    """In the child: print one JSON line, ``{"screen": ...}`` or ``{"refused": message}``; with a
    width (``argv[1]``), then ``{"results": {"width": ..., "text": ...}}`` when the solution is large."""
    import gc
    import json
    gc.disable()  # a short-lived process that frees little: no collector passes while importing SymPy
    system = None
    try:
        screen, system = _compute(argv[0])
        answer = {"screen": asdict(screen)}
    except InputError as err:
        answer = {"refused": str(err)}
    sys.stdout.write(json.dumps(answer) + "\n")
    sys.stdout.flush()
    if system is not None and len(argv) > 1:
        try:
            from nodeterm.engine.budget import budget
            width = int(argv[1])
            with budget(EARLY_SECONDS):
                text = early_results(system, width)
            if text is not None:
                sys.stdout.write(json.dumps({"results": {"width": width, "text": text}}) + "\n")
                sys.stdout.flush()
        except BaseException:  # noqa: BLE001 - a help only: the workbench solves as usual
            pass
    os._exit(0)  # skip tearing down SymPy's caches: the parent is waiting for the exit


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
