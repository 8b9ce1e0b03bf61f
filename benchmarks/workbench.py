"""The workbench on a 50-node circuit: time to the first screen, and the event loop's longest stall.

    python benchmarks/workbench.py            # alone (about 3 minutes; --quick: 4 symbols only, 30 s)
    python benchmarks/run.py                  # with the solver benchmarks, rows in the same table

Targets (issue 6): the first screen of a 50-node circuit in under 1 s, and the event loop never
blocked for more than 100 ms while the long work runs in workers.

The circuit is generated here: a 16-stage signal chain (each stage an RC low-pass into a
non-inverting op-amp stage), then an output divider: 50 nodes besides the reference, 16 op-amps.
Two variants: identical stages (four shared symbols, each with a value in the file) and
every part its own symbol (64 symbols; the fully symbolic solve takes tens of seconds, and the
walk waits 3 s for it, then steps on and substitutes the values, which replaces that solve).

Each walk runs in a fresh interpreter, as a user starts the workbench (cold imports and caches);
the first-screen time runs from starting that interpreter to the steps pane drawn. The app runs
headless at 80x24 with ``App.run_test``. From the first screen on, a ticker on the same event loop
wakes every 10 ms and records the largest gap between two wake-ups beyond those 10 ms: that is how
long the loop could not answer a key press. The walk: open, step forward x5, substitute every
known value, results pane, analysis pane, each time waiting for the workers to finish.

The peer, measured in the same run (4 symbols only: with 64 it would block for minutes), is the
same walk with the solve and the printing of its results done on the event loop (what the
workbench would do without workers). Ratios are the peer's time over ours.
"""

from __future__ import annotations

import argparse
import asyncio
import json
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

FIRST_SCREEN_TARGET = 1.0   # s
STALL_TARGET = 0.100        # s
TICK = 0.010                # s
SIZE = (80, 24)


# --- circuit ----------------------------------------------------------------------------------
def signal_chain(stages: int = 16, own_symbols: bool = False) -> str:
    """A chain of ``stages`` RC low-pass + non-inverting gain stages and an output divider.

    3 nodes per stage (filter node, feedback node, output) plus the input and the divider tap:
    16 stages give 50 nodes besides the reference. Every parameter has a value in the file, so the
    workbench opens symbolic and ``k`` makes it numeric.
    """
    lines = ['title = "Sensor signal chain, RC and gain stages"', 'reference = "gnd"',
             "[parameters]", 'Vin = ""']
    parts = ['VS = { kind = "voltage_source", nodes = ["in", "gnd"], value = "Vin" }']
    if not own_symbols:
        lines += ['R = "10k"', 'C = "10n"', 'Rf = "22k"', 'Rg = "10k"']
    prev = "in"
    for k in range(1, stages + 1):
        names = (f"R{k}", f"C{k}", f"Rf{k}", f"Rg{k}") if own_symbols else ("R", "C", "Rf", "Rg")
        r, c, rf, rg = names
        if own_symbols:
            lines += [f'{r} = "{k}k"', f'{c} = "10n"', f'{rf} = "22k"', f'{rg} = "10k"']
        parts += [f'RS{k} = {{ kind = "resistor", nodes = ["{prev}", "a{k}"], value = "{r}" }}',
                  f'CS{k} = {{ kind = "capacitor", nodes = ["a{k}", "gnd"], value = "{c}" }}',
                  f'U{k} = {{ kind = "opamp", plus = "a{k}", minus = "g{k}", out = "o{k}" }}',
                  f'RF{k} = {{ kind = "resistor", nodes = ["o{k}", "g{k}"], value = "{rf}" }}',
                  f'RG{k} = {{ kind = "resistor", nodes = ["g{k}", "gnd"], value = "{rg}" }}']
        prev = f"o{k}"
    lines += ['Rt = "4.7k"', 'Rb = "4.7k"']
    parts += [f'RT = {{ kind = "resistor", nodes = ["{prev}", "tap"], value = "Rt" }}',
              'RB = { kind = "resistor", nodes = ["tap", "gnd"], value = "Rb" }']
    return "\n".join(lines + ["[parts]"] + parts + ["[find]", 'gain = "V_tap/V_in"']) + "\n"


# --- measuring --------------------------------------------------------------------------------
class StallMeter:
    """An asyncio task on the app's loop that wakes every TICK and keeps the longest extra gap."""

    def __init__(self) -> None:
        self.worst = 0.0
        self.where = ""
        self.phase = "open"
        self._task: asyncio.Task | None = None

    async def _run(self) -> None:
        last = time.perf_counter()
        while True:
            await asyncio.sleep(TICK)
            now = time.perf_counter()
            gap = now - last - TICK
            if gap > self.worst:
                self.worst, self.where = gap, self.phase
            last = now

    def start(self) -> None:
        self._task = asyncio.get_running_loop().create_task(self._run())

    def stop(self) -> None:
        if self._task is not None:
            self._task.cancel()


async def _settle(pilot, app, limit: float) -> None:
    """Wait until no worker of the app is running (or ``limit`` seconds pass)."""
    from textual.worker import WorkerState
    end = time.perf_counter() + limit
    while time.perf_counter() < end:
        await pilot.pause(0.05)
        busy = [w for w in app.workers if w.state in (WorkerState.PENDING, WorkerState.RUNNING)
                and not w.is_cancelled]
        if not busy and app.busy_since is None:
            break
    await pilot.pause()


def _screen_text(app) -> str:
    """What the terminal shows (rendered by Textual's compositor, outside the timings)."""
    import io

    from rich.console import Console
    console = Console(width=SIZE[0], height=SIZE[1], record=True, file=io.StringIO(),
                      color_system=None, legacy_windows=False)
    console.print(app.screen._compositor.render_update(full=True))
    return console.export_text()


async def walk(app_class, path: str, open_limit: float = 120.0, settle_limit: float = 120.0) -> dict:
    """Open ``path`` in ``app_class`` at 80x24 and walk the flow; times in seconds.

    After opening, the walk waits for the symbolic solve at most ``open_limit`` seconds (then steps
    on while it runs, and the substitution replaces it).
    """
    meter = StallMeter()
    out: dict = {}
    t0 = time.perf_counter()
    app = app_class(path, poll=False)
    async with app.run_test(size=SIZE) as pilot:
        while "Step 1 of" not in str(app.query_one("#step-head").render()):
            await pilot.pause(0.005)
        await pilot.pause(0)  # the screen brought up to date (pause() would wait for the CPU to idle)
        meter.start()  # from the first screen on: before it there is nothing to answer
        out["first_screen_at"] = time.time()
        out["first_screen_in_process"] = time.perf_counter() - t0
        out["screen_ok"] = "Step 1 of" in _screen_text(app)
        await _settle(pilot, app, open_limit)
        out["open_to_solved"] = time.perf_counter() - t0 if app.solution is not None else None
        meter.phase = "step forward x5"
        for _ in range(5):
            await pilot.press("n")
        await pilot.pause()
        out["kcl_shown"] = "KCL" in _screen_text(app)
        meter.phase = "substitute known"
        await pilot.press("k")
        await _settle(pilot, app, settle_limit)
        meter.phase = "results pane"
        await pilot.press("5")
        await _settle(pilot, app, settle_limit)
        meter.phase = "analysis pane"
        await pilot.press("7")
        await _settle(pilot, app, settle_limit)
        await pilot.pause(0.2)
        out["results_ok"] = app.solution is not None and "gain" in str(app.query_one("#results-text").render())
        out["total"] = time.perf_counter() - t0
        meter.stop()
        out["stall"], out["stall_where"] = meter.worst, meter.where
        await pilot.press("q")
    return out


def blocking_app_class():
    """The peer: the workbench with its records computed and printed on the event loop instead of in a
    child process."""
    from nodeterm.ui import solver_process
    from nodeterm.ui.app import Workbench
    from nodeterm.ui.matrix_pane import MatrixPane
    from nodeterm.ui.results_pane import ResultsPane

    class BlockingWorkbench(Workbench):
        CSS_PATH = str(ROOT / "nodeterm" / "ui" / "workbench.tcss")  # relative paths follow the subclass

        def request_records(self) -> None:
            entry = self.entry
            wanted = self._wanted(entry) if entry is not None else []
            if not wanted:
                return
            options = {"width": self.query_one(ResultsPane).text_width, "two_d": self.two_d,
                       "claims": dict(self.session.claims), "matrix_width": self.query_one(MatrixPane).text_width}
            solver_process.compute_records(entry.study, tuple(wanted), options,
                                           lambda kind, part: self._received(entry, part))
    return BlockingWorkbench


def _walk_in_process(path: str, blocking: bool, open_limit: float) -> dict:
    """One walk in a fresh interpreter, as a user starts the workbench: cold imports and caches.

    The first-screen time runs from just before the interpreter is started to the first screen.
    """
    cmd = [sys.executable, __file__, "--walk", path, "--open-limit", str(open_limit)]
    if blocking:
        cmd.append("--blocking")
    start = time.time()
    out = subprocess.run(cmd, capture_output=True, text=True, cwd=ROOT, timeout=1800)
    if out.returncode != 0:
        raise RuntimeError(f"walk failed: {out.stderr[-2000:]}")
    result = json.loads(out.stdout.strip().splitlines()[-1])
    result["first_screen"] = result.pop("first_screen_at") - start
    return result


def _child_walk(path: str, blocking: bool, open_limit: float) -> None:
    import logging
    logging.getLogger("nodeterm").propagate = False
    from nodeterm.ui.app import Workbench
    result = asyncio.run(walk(blocking_app_class() if blocking else Workbench, path, open_limit))
    print(json.dumps(result))


CASES = (("4 symbols", False, 120.0), ("64 symbols", True, 3.0))
"""(label, every part its own symbol, seconds to wait for the symbolic solve before walking on)"""


def measure(quick: bool = False, row=None) -> dict:
    """Run the walks and print rows through ``row(case, ours, peer, peer_name, note)``."""
    results = {}
    with tempfile.TemporaryDirectory() as tmp:
        for label, own, open_limit in CASES[:1] if quick else CASES:
            path = Path(tmp) / f"chain_{'own' if own else 'shared'}.toml"
            path.write_text(signal_chain(16, own))
            ours = _walk_in_process(str(path), False, open_limit)
            peer = None if own else _walk_in_process(str(path), True, open_limit)
            results[label] = (ours, peer)
            ok = "" if ours["screen_ok"] and ours["kcl_shown"] and ours["results_ok"] else "  (SCREEN CHECK FAILED)"
            row(f"50-node workbench, {label}: first screen", ours["first_screen"],
                peer["first_screen"] if peer else None, "solve on the event loop" if peer else "",
                f"{ours['first_screen'] / FIRST_SCREEN_TARGET:.2f} of the 1 s target from a new "
                f"interpreter; {ours['first_screen_in_process']:.2f} s from App(){ok}")
            row(f"50-node workbench, {label}: longest stall", ours["stall"],
                peer["stall"] if peer else None, "solve on the event loop" if peer else "",
                f"{ours['stall'] / STALL_TARGET:.2f} of the 0.1 s target; at {ours['stall_where']}; "
                f"walk {ours['total']:.1f} s")
    return results


# --- in a real terminal: bytes written, first screen, results of a big symbolic circuit -------------
STEP_BYTES_TARGET = 5000    # bytes per step key at 80x24
ENV = None


def _env() -> dict:
    import os
    return dict(os.environ, NO_COLOR="1", TERM="xterm-256color")


def ladder(n: int) -> str:
    """RC low-pass ladder of n sections, every R and C its own symbol, [find] H = V_n<n>/Vin."""
    lines = [f'title = "RC ladder, {n} sections"', 'reference = "gnd"', "[parameters]", 'Vin = ""']
    lines += [f'R{k} = ""\nC{k} = ""' for k in range(1, n + 1)]
    lines += ["[parts]", 'VS = { kind = "voltage_source", nodes = ["n0", "gnd"], value = "Vin" }']
    for k in range(1, n + 1):
        lines.append(f'RS{k} = {{ kind = "resistor", nodes = ["n{k - 1}", "n{k}"], value = "R{k}" }}')
        lines.append(f'CS{k} = {{ kind = "capacitor", nodes = ["n{k}", "gnd"], value = "C{k}" }}')
    lines += ["[find]", f'H = "V_n{n}/V_n0"']
    return "\n".join(lines) + "\n"


def _open(args: list[str]):
    sys.path.insert(0, str(Path(__file__).resolve().parent))
    from terminal import Terminal
    return Terminal([sys.executable, "-m", "nodeterm", *args], SIZE[0], SIZE[1], env=_env(), cwd=str(ROOT))


def _settled(term, seconds: float = 1.5) -> None:
    """Wait until nothing is written for ``seconds`` (the busy time ticks once a second while busy)."""
    term.quiet(seconds, timeout=120)


def first_screen(path: str | None = None, runs: int = 3) -> list[float]:
    """Seconds from starting a new interpreter to the steps pane on the terminal."""
    times = []
    for _ in range(runs):
        term = _open([path] if path else [])
        times.append(term.wait_for("Step 1 of", 60) - term.started)
        _settled(term, 1.0)
        term.send("q")
        term.close()
    return times


def first_results(path: str | None = None, runs: int = 3) -> list[tuple[float, float]]:
    """(first screen, results on screen) in seconds from starting a new interpreter, pressing 5 (the
    results pane) as soon as the first screen is up: the first screen comes before the engine is
    imported in the workbench's process, the results after it and the solve."""
    out = []
    for _ in range(runs):
        term = _open([path] if path else [])
        first = term.wait_for("Step 1 of", 60) - term.started
        term.send("5")
        out.append((first, term.wait_for("Node voltages", 120) - term.started))
        _settled(term, 1.0)
        term.send("q")
        term.close()
    return out


def terminal_bytes(path: str | None = None, idle_seconds: float = 5.0) -> dict:
    """Bytes written per step key (n and b, each after the screen settled) and per idle second."""
    term = _open([path] if path else [])
    term.wait_for("Step 1 of", 60)
    _settled(term)
    steps = []
    for key in "nnnnbbbb":
        before = term.total
        term.send(key)
        steps.append(term.answer(before, 0.5, 10))
    _settled(term, 2.0)
    before = term.total
    time.sleep(idle_seconds)
    idle = (term.total - before) / idle_seconds
    keys = {}
    for key, label in (("k", "substitute known"), ("u", "undo"), ("5", "results pane"), ("2", "steps pane")):
        before = term.total
        term.send(key)
        keys[label] = term.answer(before, 1.5, 60)
    term.send("q")
    term.close()
    return {"steps": steps, "idle_per_s": idle, "keys": keys}


def ladder_results(n: int = 9, runs: int = 2) -> dict:
    """Seconds to the results of the fully symbolic n-section ladder: workbench (from a new interpreter,
    results pane opened at the first screen) against ``nodeterm solve`` as a whole process."""
    out: dict = {"workbench": [], "cli": []}
    with tempfile.TemporaryDirectory() as tmp:
        path = str(Path(tmp) / f"ladder{n}.toml")
        Path(path).write_text(ladder(n))
        for _ in range(runs):
            start = time.perf_counter()
            subprocess.run([sys.executable, "-m", "nodeterm", "solve", path], capture_output=True, cwd=ROOT,
                           check=True, env=_env())
            out["cli"].append(time.perf_counter() - start)
            term = _open([path])
            term.wait_for("Step 1 of", 60)
            term.send("5")
            out["workbench"].append(term.wait_for("Node voltages", 300) - term.started)
            _settled(term, 1.0)
            term.send("q")
            term.close()
    return out


def measure_terminal(row) -> dict:
    """The terminal rows of the benchmark table."""
    first = first_screen()
    row("workbench first screen (kiln demo, pty 80x24)", min(first), None, "",
        f"{min(first) / FIRST_SCREEN_TARGET:.2f} of the 1 s target from a new interpreter; runs "
        + ", ".join(f"{t:.2f}" for t in first))
    both = first_results()
    row("workbench results pane, 5 pressed at the first screen", min(r for _, r in both), None, "",
        "results on screen from a new interpreter; runs " + ", ".join(f"{r:.2f}" for _, r in both))
    chain = None
    with tempfile.TemporaryDirectory() as tmp:
        chain = Path(tmp) / "chain.toml"
        chain.write_text(signal_chain(16, False))
        for label, path in (("kiln demo", None), ("50-node chain", str(chain))):
            got = terminal_bytes(path)
            row(f"bytes per step key, {label}", max(got["steps"]), None, "",
                f"max of n x4, b x4 (target {STEP_BYTES_TARGET}); each: {got['steps']}; "
                f"idle {got['idle_per_s']:.0f} B/s (target 0); " + ", ".join(f"{k} {v}" for k, v in got["keys"].items()),
                unit="B")
    lad = ladder_results()
    wb, cli = min(lad["workbench"]), min(lad["cli"])
    row("9-section symbolic ladder: results in the workbench", wb, cli, "nodeterm solve (whole process)",
        f"{wb / cli:.2f}x the CLI (target at most 2x); runs " + ", ".join(f"{t:.2f}" for t in lad["workbench"]))
    return {"first": first, "ladder": lad}


def _print_row(case, ours, peer, peer_name, note="", unit="s"):
    if unit == "B":
        print(f"{case:44s} {ours:7d} B         -         -  {peer_name:26s} {note}", flush=True)
        return
    ratio = f"{peer / ours:8.1f}x" if peer else "       -"
    peer_t = f"{peer:9.3f}" if peer else "        -"
    print(f"{case:44s} {ours:9.3f} {peer_t}  {ratio}  {peer_name:26s} {note}", flush=True)


if __name__ == "__main__":
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="only the identical-stages circuit")
    ap.add_argument("--terminal", action="store_true", help="only the measurements in a real terminal (pty)")
    ap.add_argument("--walk", help=argparse.SUPPRESS)
    ap.add_argument("--blocking", action="store_true", help=argparse.SUPPRESS)
    ap.add_argument("--open-limit", type=float, default=120.0, help=argparse.SUPPRESS)
    args = ap.parse_args()
    if args.walk:
        _child_walk(args.walk, args.blocking, args.open_limit)
    elif args.terminal:
        measure_terminal(_print_row)
    else:
        measure_terminal(_print_row)
        measure(args.quick, _print_row)
