"""Writing files atomically: a temporary file in the same folder, then ``os.replace``.

A failure (read-only folder, full disk) leaves no partial file behind and
raises OSError with the reason.
"""

from __future__ import annotations

import os
import tempfile


def write_atomic(path: str, text: str) -> None:
    """Write ``text`` to ``path`` so that readers see the old file or the whole new one."""
    folder = os.path.dirname(os.path.abspath(path))
    fd, tmp = tempfile.mkstemp(prefix=".nodeterm-", suffix=".tmp", dir=folder)
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="\n") as fh:
            fh.write(text)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise
