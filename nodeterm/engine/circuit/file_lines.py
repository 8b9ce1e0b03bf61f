"""Where each table and key sits in a circuit file's text: lines and columns for error messages.

``tomllib`` reports no line numbers for the values it returns. :class:`_Lines`
scans the text once for table headers and ``key =`` lines, which is enough to
point the user at the offending line (and, for a string value, its column).
Written by hand: tomllib keeps no source positions, and a light scan is enough here.

>>> where = _Lines('title = "x"\\n[parts]\\nR1 = { value = "10k" }\\n')
>>> where.key("parts", "R1"), where.tables["parts"], where.column_of(3, "10k", after="value")
(3, 2, 17)
"""

from __future__ import annotations

import re

_HEADER = re.compile(r"^\s*\[\s*([A-Za-z0-9_\-\"' .]+?)\s*\]\s*(#.*)?$")
_KEY = re.compile(r"^\s*(\"[^\"]*\"|'[^']*'|[A-Za-z0-9_\-]+)\s*=")


class _Lines:
    """Where each table and key sits in the file text (1-based lines)."""

    def __init__(self, text: str) -> None:
        self.lines = text.splitlines()
        self.keys: dict[tuple[str, str], int] = {}
        self.tables: dict[str, int] = {}
        self.repeated: list[tuple[str, str, int, int]] = []  # (table, key or "", first line, repeated line)
        table = ""
        for number, line in enumerate(self.lines, start=1):
            m = _HEADER.match(line)
            if m:
                table = m.group(1).strip().strip("\"'")
                first = self.tables.setdefault(table, number)
                if first != number:
                    self.repeated.append((table, "", first, number))
                continue
            m = _KEY.match(line)
            if m:
                key = m.group(1).strip("\"'")
                first = self.keys.setdefault((table, key), number)
                if first != number:
                    self.repeated.append((table, key, first, number))

    def key(self, table: str, key: str) -> int | None:
        return self.keys.get((table, key))

    def column_of(self, line: int | None, needle: str, after: str = "") -> int | None:
        """1-based column where the string literal ``needle`` starts on ``line`` (inside its quotes)."""
        if line is None or not (1 <= line <= len(self.lines)):
            return None
        text = self.lines[line - 1]
        start = 0
        if after:
            m = re.search(r"\b" + re.escape(after) + r"\s*=", text)
            if m:
                start = m.end()
        for quote in ('"', "'"):
            pos = text.find(quote + needle + quote, start)
            if pos >= 0:
                return pos + 2
        return None
