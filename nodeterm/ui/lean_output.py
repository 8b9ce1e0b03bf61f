"""Write only the screen lines that changed (less to send over a slow or metered SSH link).

Textual redraws a widget whole when any of it changes: each line of the widget's region is sent as
a cursor move followed by the line's cells. When a step changes the equations, the lines of the
parts list and the empty rows below the equations are sent again unchanged. :class:`LineCache`
remembers what was last sent at each cursor position and drops a line that would write exactly the
same cells again. A line written over part of another forgets that other one, and anything that
may have changed the terminal behind our back (a resize, a clear, re-entering the alternate screen)
forgets everything.
"""

from __future__ import annotations

import re

from rich.cells import cell_len

_MOVE = re.compile(r"\x1b\[(\d+);(\d+)H")
_ESCAPES = re.compile(r"\x1b(\[[0-?]*[ -/]*[@-~]|\][^\x07\x1b]*(\x07|\x1b\\)|[@-Z\\-_])")
_MODES = re.compile(r"\x1b\[\?[0-9;]*[hl]")
_RESETS = ("\x1b[2J", "\x1b[?1049h", "\x1b[H\x1b[2J", "\x1bc")


class LineCache:
    """What was last written at each (row, column), to leave out lines that would not change anything."""

    def __init__(self) -> None:
        self.rows: dict[int, dict[int, tuple[int, str]]] = {}
        self.saved = 0  # characters left out (for tests and benchmarks)

    def forget(self) -> None:
        self.rows.clear()

    def filter(self, data: str) -> str:
        """``data`` less the lines that would write the same cells again."""
        if any(r in data for r in _RESETS):
            self.forget()
            return data
        pieces = _MOVE.split(data)
        if len(pieces) == 1:
            return data
        out = [pieces[0]]
        for i in range(1, len(pieces), 3):
            row, col, body = int(pieces[i]), int(pieces[i + 1]), pieces[i + 2]
            move = f"\x1b[{row};{col}H"
            modes = "".join(_MODES.findall(body))  # cursor and sync switches draw nothing: always sent
            cells = _MODES.sub("", body)
            text = _ESCAPES.sub("", cells).replace("\r", "").replace("\n", "")
            width = cell_len(text)
            if width == 0 or "\x1b[K" in cells or "\x1b[J" in cells:
                if "\x1b[K" in cells or "\x1b[J" in cells:  # an erase may change anything on the row
                    self.rows.pop(row, None)
                out.append(move + body)
                continue
            spans = self.rows.setdefault(row, {})
            if spans.get(col) == (width, cells):
                self.saved += len(move) + len(cells)
                out.append(modes)
                continue
            for start in [s for s, (w, _) in spans.items() if s != col and s < col + width and col < s + w]:
                del spans[start]
            spans[col] = (width, cells)
            out.append(move + body)
        return "".join(out)


_SEQUENCE = re.compile(r"\x1b(\[[0-?]*[ -/]*[@-~]|\][^\x07\x1b]*(\x07|\x1b\\)|[@-Z\\-_78c=>])")
_SGR = re.compile(r"\x1b\[([0-9;:]*)m")
_KEEPS_STYLE = re.compile(r"\x1b\[(\d*;\d*H|\?(?!104[789])[0-9;]*[hl])")  # cursor moves, modes (not the
_DEFAULT_COLOURS = ("39", "49", "39;49", "49;39")                    # alternate screen's, which saves the style)
_RESTORES_STYLE = re.compile(r"\x1b(8|\[\?104[789][hl])")


class StyleCache:
    """Sends a change of text style only where a character is drawn in a style other than the last one sent.

    Textual writes every segment of a line as ``style, text, reset``: at 80x24 with ``NO_COLOR`` most
    segments are ``ESC[39;49m`` (default colours) and ``ESC[0m``, more bytes than the text itself.
    Here the style each character would be drawn in (the codes since the last reset) is worked out, and
    codes are sent only before text or an erase whose style differs from what the terminal has; the
    default colours right after a reset change nothing. Every character is drawn, and every erase done,
    in the same style as before, and each write ends in the style the unfiltered stream ends in.
    """

    def __init__(self) -> None:
        self.sent: tuple[str, ...] | None = ()  # codes in effect on the terminal since a reset; None: unknown
        self.wanted: tuple[str, ...] = ()       # codes in effect in the unfiltered stream

    def _want(self, params: str) -> None:
        first, _, rest = params.partition(";")
        if first in ("", "0"):
            self.wanted = ()
            if not rest:
                return
            params = rest
        if not self.wanted and params in _DEFAULT_COLOURS:
            return
        self.wanted += (params,)

    def _sync(self) -> str:
        sent, wanted = self.sent, self.wanted
        if sent == wanted:
            return ""
        self.sent = wanted
        if sent is not None and wanted[:len(sent)] == sent:
            return "".join(f"\x1b[{p}m" for p in wanted[len(sent):])
        return "\x1b[0m" + "".join(f"\x1b[{p}m" for p in wanted)

    def filter(self, data: str) -> str:
        """``data`` with the style codes that change nothing left out."""
        out = []
        pos = 0
        for m in _SEQUENCE.finditer(data):
            if m.start() > pos:
                out.append(self._sync() + data[pos:m.start()])
            pos = m.end()
            seq = m.group(0)
            sgr = _SGR.fullmatch(seq)
            if sgr:
                self._want(sgr.group(1))
            elif _KEEPS_STYLE.fullmatch(seq):
                out.append(seq)
            else:  # an erase or anything else: sent in the style it would have met
                out.append(self._sync() + seq)
                if seq == "\x1bc":  # the terminal reset: its style too
                    self.sent = self.wanted = ()
                elif _RESTORES_STYLE.fullmatch(seq):  # a saved style comes back: not known here
                    self.sent = None
        if pos < len(data):
            out.append(self._sync() + data[pos:])
        out.append(self._sync())
        return "".join(out)


def lean_driver(base):
    """A subclass of the Textual driver ``base`` whose output goes through a :class:`LineCache`, then a
    :class:`StyleCache`."""

    class LeanDriver(base):
        def __init__(self, *args, **kwargs) -> None:
            super().__init__(*args, **kwargs)
            self.line_cache = LineCache()
            self.style_cache = StyleCache()

        def write(self, data: str) -> None:
            super().write(self.style_cache.filter(self.line_cache.filter(data)))

    LeanDriver.__name__ = f"Lean{base.__name__}"
    return LeanDriver
