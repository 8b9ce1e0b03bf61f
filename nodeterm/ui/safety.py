"""Keeping the workbench alive: every action runs guarded, failures are shown and logged.

An exception inside an action becomes a one-line message on screen and a
traceback in the log file (``$XDG_CACHE_HOME/nodeterm/workbench.log``, else
``~/.cache/nodeterm/workbench.log``); the state on screen is left as it was.
"""

from __future__ import annotations

import functools
import inspect
import logging
import os
from pathlib import Path

from nodeterm.engine.errors import InputError

_logger: logging.Logger | None = None


def log_path() -> Path:
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    return Path(base) / "nodeterm" / "workbench.log"


def logger() -> logging.Logger:
    """The workbench logger, writing to :func:`log_path` (silently nowhere if that cannot be created)."""
    global _logger
    if _logger is None:
        _logger = logging.getLogger("nodeterm.workbench")
        _logger.propagate = False
        _logger.setLevel(logging.INFO)
        try:
            path = log_path()
            path.parent.mkdir(parents=True, exist_ok=True)
            handler: logging.Handler = logging.FileHandler(path, encoding="utf-8")
        except OSError:
            handler = logging.NullHandler()
        handler.setFormatter(logging.Formatter("%(asctime)s %(levelname)s %(message)s"))
        _logger.addHandler(handler)
    return _logger


def describe(exc: BaseException) -> str:
    """One line for the user: input errors as the engine words them, others with their type."""
    if isinstance(exc, InputError):
        return str(exc)
    text = str(exc).strip().splitlines()[0] if str(exc).strip() else ""
    return f"internal error ({type(exc).__name__}{': ' + text if text else ''}); see {log_path()}"


def guarded(method):
    """Run an app or widget method so that an exception is reported instead of ending the program.

    The object must have ``app`` (or be the App) with a ``report_error(exc, doing)`` method.
    """
    doing = method.__name__.removeprefix("action_").replace("_", " ")

    if inspect.iscoroutinefunction(method):
        @functools.wraps(method)
        async def awrapper(self, *args, **kwargs):
            try:
                return await method(self, *args, **kwargs)
            except Exception as exc:  # noqa: BLE001
                target = self if hasattr(self, "report_error") else self.app
                target.report_error(exc, doing)
                return None
        return awrapper

    @functools.wraps(method)
    def wrapper(self, *args, **kwargs):
        try:
            return method(self, *args, **kwargs)
        except Exception as exc:  # noqa: BLE001 - the point is to survive anything
            target = self if hasattr(self, "report_error") else self.app
            target.report_error(exc, doing)
            return None
    return wrapper
