"""Worker threads that never hold up quitting.

Textual runs thread workers on the event loop's default executor. A standard
``ThreadPoolExecutor`` is joined when the loop closes and again at interpreter
exit, so quitting during a long symbolic solve would leave the program hanging
until the solve ends. :class:`DaemonExecutor` runs each job on a daemon thread
instead, and its ``shutdown`` does not wait: the result of an abandoned solve
is simply never read (the App already drops stale results).
"""

from __future__ import annotations

import asyncio
import threading
from concurrent.futures import Future, ThreadPoolExecutor


class DaemonExecutor(ThreadPoolExecutor):
    """A ThreadPoolExecutor (asyncio insists on the type) that starts one daemon thread per job."""

    def submit(self, fn, /, *args, **kwargs) -> Future:
        future: Future = Future()

        def runner() -> None:
            if not future.set_running_or_notify_cancel():
                return
            try:
                result = fn(*args, **kwargs)
            except BaseException as exc:  # noqa: BLE001 - handed to whoever awaits the future
                future.set_exception(exc)
            else:
                future.set_result(result)

        threading.Thread(target=runner, name="nodeterm-worker", daemon=True).start()
        return future

    def shutdown(self, wait: bool = True, *, cancel_futures: bool = False) -> None:
        """Do not wait for running jobs: their results are no longer wanted."""


def install() -> None:
    """Make the running event loop use a :class:`DaemonExecutor` for thread workers."""
    asyncio.get_running_loop().set_default_executor(DaemonExecutor(max_workers=1))
