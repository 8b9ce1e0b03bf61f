"""Time budgets for long work: stop a computation after some seconds, nested inside an outer limit.

Python cannot stop a thread from outside, and SymPy and FLINT calls are not cooperative, so the
budget is a POSIX interval timer (``signal.setitimer``) that raises :class:`OutOfBudget` in the
main thread. One real-time timer serves every level: an inner budget takes the smaller of its own
time and what is left of the outer one, and gives the outer one back (less the time used) when it
ends. In another thread, or where ``setitimer`` is missing, the work runs without a budget.
"""

from __future__ import annotations

import contextlib
import signal
import threading
import time


class OutOfBudget(Exception):
    """The work ran past its time budget."""

    def __init__(self, seconds: float, token: object = None) -> None:
        super().__init__(f"stopped after {seconds:g} s")
        self.seconds = seconds
        self.token = token  # which budget ran out (what ``budget()`` yielded)


_stack: list[tuple[float, float, object]] = []  # (deadline on the monotonic clock, seconds, token)


def usable() -> bool:
    return hasattr(signal, "setitimer") and threading.current_thread() is threading.main_thread()


@contextlib.contextmanager
def budget(seconds: float | None):
    """Run the body for at most ``seconds`` (None or <= 0: no budget of its own).

    Yields:
        A token; the :class:`OutOfBudget` raised when this budget runs out carries it, so that a caller
        catches its own budget and lets an outer one through.

    Raises:
        OutOfBudget: from inside the body when the time is up.
    """
    token = object()
    if not seconds or seconds <= 0 or not usable():
        yield token
        return
    now = time.monotonic()
    deadline = now + seconds
    outer = _stack[-1][0] if _stack else None
    _stack.append((deadline, seconds, token))
    previous = signal.getsignal(signal.SIGALRM)

    def expire(signum, frame):
        # the earliest deadline that has passed names the budget that ran out
        t = time.monotonic()
        for d, secs, tok in reversed(_stack):
            if d <= t + 1e-3:
                raise OutOfBudget(secs, tok)
        raise OutOfBudget(_stack[-1][1], _stack[-1][2])

    signal.signal(signal.SIGALRM, expire)
    signal.setitimer(signal.ITIMER_REAL, max(1e-3, min(deadline, outer or deadline) - now))
    try:
        yield token
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        _stack.pop()
        signal.signal(signal.SIGALRM, previous)
        if _stack:  # give the outer budget its remaining time back
            left = _stack[-1][0] - time.monotonic()
            if left <= 0:
                raise OutOfBudget(_stack[-1][1], _stack[-1][2])
            signal.setitimer(signal.ITIMER_REAL, left)


def remaining() -> float | None:
    """Seconds left in the innermost budget, or None without one."""
    return None if not _stack else max(0.0, _stack[-1][0] - time.monotonic())
