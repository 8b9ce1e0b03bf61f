"""Export of a solved system and its audit: one ``render`` for every format, one atomic file writer.

The CLI (``nodeterm export``) and the workbench call the same two functions:

* :func:`render` turns the engine's record into text in one of :data:`FORMATS`;
* :func:`write_atomic` writes it to a file: a temporary file in the same
  directory, flushed and fsync'ed, then renamed over the target, so a reader
  never sees a half-written file and a failure leaves nothing behind. An
  existing file is replaced only with ``force=True`` (the CLI's ``--force``, the
  UI's confirmation).

Every export carries :data:`BENCH_NOTE`.
"""

from __future__ import annotations

import json
import os
import tempfile

from nodeterm.engine.errors import InputError

FORMATS = ("text", "ascii", "markdown", "latex", "json")
EXTENSIONS = {"text": ".txt", "ascii": ".txt", "markdown": ".md", "latex": ".tex", "json": ".json"}
BENCH_NOTE = ("Results assume linear, ideal models (ideal op-amps, exact part values); "
              "confirm them on the bench before relying on them.")


class ExportError(InputError):
    """The export could not be written (the message says why; nothing was left behind)."""


def render(records, fmt: str = "text") -> str:
    """The report of a study's records in format ``fmt``.

    Args:
        records: :class:`nodeterm.engine.study.Records` with system, matrix, solution, warnings and
            (optionally) verdicts, transfer and limits.
        fmt: one of :data:`FORMATS`.

    Raises:
        ExportError: for an unknown format.
    """
    verdicts = list(records.verdicts or [])
    if fmt in ("text", "ascii"):
        from nodeterm.present.text import report, to_ascii, verdicts_text
        ascii_only = fmt == "ascii"
        out = report(records, ascii_only=ascii_only)
        if verdicts:
            out += "\nAudit of the hand derivation\n" + verdicts_text(verdicts, records.circuit.path)
        out += "\nNote: " + BENCH_NOTE + "\n"
        return to_ascii(out) if ascii_only else out
    if fmt == "markdown":
        from nodeterm.present.markdown import render_markdown
        return render_markdown(records, note=BENCH_NOTE)
    if fmt == "latex":
        from nodeterm.present.latex import render_latex
        return render_latex(records, note=BENCH_NOTE)
    if fmt == "json":
        from nodeterm.present.jsonout import export_dict
        return json.dumps(export_dict(records, note=BENCH_NOTE), indent=2,
                          ensure_ascii=False) + "\n"
    raise ExportError(f"unknown export format {fmt!r}", hint="formats: " + ", ".join(FORMATS))


def write_atomic(path, text: str, force: bool = False) -> int:
    """Write ``text`` (UTF-8) to ``path`` atomically; returns the number of bytes written.

    Raises:
        ExportError: the file exists and ``force`` is False, or the write failed
            (no partial file is left either way).
    """
    path = os.fspath(path)
    target = os.path.abspath(path)
    directory = os.path.dirname(target)
    if os.path.isdir(target):
        raise ExportError("is a directory", hint="give a file name, e.g. report.md", file=path)
    if not os.path.isdir(directory):
        raise ExportError(f"directory {directory!r} does not exist; nothing was written",
                          hint="create it first or choose another path", file=path)
    if os.path.lexists(target) and not force:
        raise ExportError("file already exists; nothing was written",
                          hint="use --force to replace it, or choose another path", file=path)
    data = text.encode("utf-8")
    try:
        fd, tmp = tempfile.mkstemp(prefix="." + os.path.basename(target) + ".", suffix=".tmp", dir=directory)
    except OSError as err:
        raise ExportError(f"cannot write in {directory!r} ({err.strerror or err}); nothing was written",
                          hint="check the directory's permissions or choose another path", file=path) from None
    try:
        try:
            mode = os.stat(target).st_mode & 0o777
        except OSError:
            umask = os.umask(0)
            os.umask(umask)
            mode = 0o666 & ~umask
        with os.fdopen(fd, "wb") as f:
            os.fchmod(f.fileno(), mode)
            f.write(data)
            f.flush()
            os.fsync(f.fileno())
        if force:
            os.replace(tmp, target)
        else:
            try:
                os.link(tmp, target)  # fails if the file appeared meanwhile: never clobber without force
            except FileExistsError:
                raise ExportError("file already exists; nothing was written",
                                  hint="use --force to replace it, or choose another path", file=path) from None
            except OSError:  # a file system without hard links
                if os.path.lexists(target):
                    raise ExportError("file already exists; nothing was written",
                                      hint="use --force to replace it", file=path) from None
                os.replace(tmp, target)
            else:
                os.unlink(tmp)
        _fsync_dir(directory)
    except ExportError:
        _remove(tmp)
        raise
    except OSError as err:
        _remove(tmp)
        raise ExportError(f"cannot write the file ({err.strerror or err}); nothing was written",
                          hint="check free space and permissions", file=path) from None
    except BaseException:
        _remove(tmp)
        raise
    return len(data)


def _remove(tmp: str) -> None:
    try:
        os.unlink(tmp)
    except FileNotFoundError:
        pass
    except OSError:
        pass


def _fsync_dir(directory: str) -> None:
    """Make the rename durable (best effort: not every platform can open a directory)."""
    try:
        fd = os.open(directory, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)
