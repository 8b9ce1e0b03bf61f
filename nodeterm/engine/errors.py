"""Errors and warnings the engine reports about a user's input.

Every error a user can cause is an :class:`InputError` (or a subclass). It carries
the file, the line and column when known, what is wrong and how to fix it, and
renders as one line::

    circuits/x.toml:12:9: error: resistor R1 has value 0; a resistor must be non-zero (use a wire: give both parts the same node)

The CLI prints ``str(err)`` and exits with status 2; nothing else is shown.
"""

from __future__ import annotations

import difflib
from dataclasses import dataclass

MAX_MESSAGE = 300  # characters of ``message`` shown by ``str(err)``; the middle of a longer one is elided


class InputError(Exception):
    """A problem in the user's input, explained in one line.

    Args:
        message: what is wrong, in circuit terms.
        hint: how to fix it (optional).
        file: the file concerned, if any.
        line: 1-based line number, if known.
        column: 1-based column number, if known.

    >>> str(InputError("bad value", hint="use a number", file="a.toml", line=3, column=7))
    'a.toml:3:7: error: bad value; use a number'
    """

    def __init__(self, message: str, *, hint: str = "", file: str | None = None,
                 line: int | None = None, column: int | None = None) -> None:
        super().__init__(message)
        self.message = message
        self.hint = hint
        self.file = file
        self.line = line
        self.column = column

    def located(self, *, file: str | None = None, line: int | None = None,
                column: int | None = None) -> "InputError":
        """Fill in location fields that are still unknown and return self."""
        if self.file is None:
            self.file = file
        if self.line is None:
            self.line = line
        if self.column is None:
            self.column = column
        return self

    @property
    def location(self) -> str:
        parts = [self.file or "<input>"]
        if self.line is not None:
            parts.append(str(self.line))
            if self.column is not None:
                parts.append(str(self.column))
        elif self.column is not None:
            return f"{parts[0]} (column {self.column})"
        return ":".join(parts)

    def __str__(self) -> str:
        message = self.message
        if len(message) > MAX_MESSAGE:  # a huge name or expression echoed back stays one readable line
            keep = MAX_MESSAGE // 2
            message = f"{message[:keep]} ... {message[-keep:]}"
        text = f"{self.location}: error: {message}"
        if self.hint:
            text += f"; {self.hint}"
        return text


class CircuitError(InputError):
    """The circuit is well formed but its topology is wrong (loop of sources, floating node...)."""


class SolveError(CircuitError):
    """The node equations cannot be solved; the message says why in circuit terms."""


@dataclass(frozen=True)
class Warning:  # noqa: A001 - a domain name, shadows the builtin only inside this package
    """Something legal but worth a second look (a negative resistor, a hazardous source...).

    Attributes:
        code: short stable identifier, e.g. ``"negative-value"``.
        message: one sentence for the user.
        part: the part concerned, or ``""``.
    """

    code: str
    message: str
    part: str = ""

    def as_dict(self) -> dict[str, str]:
        return {"code": self.code, "message": self.message, "part": self.part}


def did_you_mean(word: object, choices) -> str:
    """``"did you mean 'in'? "`` when ``word`` is a near miss of one of ``choices`` (case ignored), else ``""``.

    >>> did_you_mean("V_outt", ["V_out", "V_in"]), did_you_mean("OUT", ["out"]), did_you_mean("zz", ["out"])
    ("did you mean 'V_out'? ", "did you mean 'out'? ", '')
    """
    if not isinstance(word, str):
        return ""
    choices = [c for c in choices if c != word]
    lower = {c.lower(): c for c in choices}
    close = difflib.get_close_matches(word.lower(), list(lower), n=1)
    return f"did you mean {lower[close[0]]!r}? " if close else ""

