"""Drive a program in a pseudo-terminal of a given size and count what it writes to the terminal.

Used by ``benchmarks/workbench.py`` to measure the workbench as a user over SSH sees it: bytes
written per key and per idle second, and the time from starting the program to its first screen.
Standard library only (``pty``, ``termios``); Linux and macOS.
"""

from __future__ import annotations

import fcntl
import os
import re
import select
import signal
import struct
import subprocess
import termios
import threading
import time

_ESCAPE = re.compile(rb"\x1b(\[[0-?]*[ -/]*[@-~]|\][^\x07\x1b]*(\x07|\x1b\\)|[PX^_][^\x1b]*\x1b\\|[@-Z\\-_])")


def plain(data: bytes) -> str:
    """Text of a terminal byte stream with its control sequences removed (for finding words in it)."""
    return _ESCAPE.sub(b"", data).decode("utf-8", "replace")


class Terminal:
    """A program in a pty of ``cols`` x ``rows``; a thread keeps everything it writes, with the time."""

    def __init__(self, argv: list[str], cols: int = 80, rows: int = 24, env: dict | None = None,
                 cwd: str | None = None) -> None:
        master, slave = os.openpty()
        fcntl.ioctl(slave, termios.TIOCSWINSZ, struct.pack("HHHH", rows, cols, 0, 0))
        full_env = dict(os.environ if env is None else env)
        full_env.setdefault("TERM", "xterm-256color")
        full_env["COLUMNS"], full_env["LINES"] = str(cols), str(rows)
        self.started = time.perf_counter()
        self.proc = subprocess.Popen(argv, stdin=slave, stdout=slave, stderr=slave, env=full_env, cwd=cwd,
                                     start_new_session=True, close_fds=True)
        os.close(slave)
        self.master = master
        self.chunks: list[tuple[float, bytes]] = []
        self._lock = threading.Lock()
        self._reader = threading.Thread(target=self._read, daemon=True)
        self._reader.start()

    def _read(self) -> None:
        while True:
            try:
                ready, _, _ = select.select([self.master], [], [], 0.2)
            except (OSError, ValueError):
                return
            if not ready:
                if self.proc.poll() is not None:
                    return
                continue
            try:
                data = os.read(self.master, 65536)
            except OSError:
                return
            if not data:
                return
            with self._lock:
                self.chunks.append((time.perf_counter(), data))
            self._answer(data)

    def _answer(self, data: bytes) -> None:
        """Answer the terminal queries a program may send (cursor position, device attributes)."""
        if b"\x1b[6n" in data:
            self.send("\x1b[1;1R")
        if b"\x1b[c" in data:
            self.send("\x1b[?62;c")

    # --- reading ----------------------------------------------------------------------------
    @property
    def total(self) -> int:
        """Bytes written so far."""
        with self._lock:
            return sum(len(c) for _, c in self.chunks)

    def output(self, since: int = 0) -> bytes:
        with self._lock:
            data = b"".join(c for _, c in self.chunks)
        return data[since:]

    def wait_for(self, text: str, timeout: float = 30.0, since: int = 0) -> float:
        """Wait until ``text`` appears in the output after byte ``since``; returns when it arrived."""
        end = time.perf_counter() + timeout
        while time.perf_counter() < end:
            with self._lock:
                chunks = list(self.chunks)
            data = b"".join(c for _, c in chunks)[since:]
            if text in plain(data):
                seen, prefix = 0, b""
                for t, c in chunks:  # the chunk that completed it
                    prefix += c
                    if len(prefix) > since and text in plain(prefix[since:]):
                        return t
            time.sleep(0.01)
        raise TimeoutError(f"{text!r} did not appear in {timeout} s; the terminal got:\n"
                           + plain(self.output(since))[-2000:])

    def quiet(self, seconds: float = 0.5, timeout: float = 30.0) -> None:
        """Wait until nothing has been written for ``seconds``."""
        end = time.perf_counter() + timeout
        while time.perf_counter() < end:
            with self._lock:
                last = self.chunks[-1][0] if self.chunks else self.started
            if time.perf_counter() - last >= seconds:
                return
            time.sleep(0.02)

    def answer(self, before: int, seconds: float = 0.5, timeout: float = 30.0) -> int:
        """Wait for output past byte ``before`` (the answer to a key), then for ``seconds`` of quiet;
        returns the bytes written since ``before`` (0 when nothing came within ``timeout``)."""
        end = time.perf_counter() + timeout
        while self.total <= before and time.perf_counter() < end:
            time.sleep(0.01)
        if self.total > before:
            self.quiet(seconds, timeout)
        return self.total - before

    # --- writing ----------------------------------------------------------------------------
    def send(self, keys: str) -> None:
        os.write(self.master, keys.encode())

    def close(self, timeout: float = 5.0) -> int | None:
        """Wait for the program to end (after a quit key was sent); kill it when it does not."""
        try:
            return self.proc.wait(timeout)
        except subprocess.TimeoutExpired:
            os.killpg(self.proc.pid, signal.SIGKILL)
            self.proc.wait()
            return None
        finally:
            self._reader.join(1)
            os.close(self.master)
