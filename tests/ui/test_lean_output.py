"""Leaving out unchanged screen lines, and style codes that change nothing, never changes what the
terminal shows.

Reference for the lines: the unfiltered stream, replayed on a minimal terminal model (cursor moves,
printed cells; colour codes carry no cells) -- the filtered stream must leave every cell the same.
Reference for the styles: pyte, a VT terminal emulator (a reference library; skipped where it is not
installed), replaying both streams -- every cell's character and style, and the style of the next
character, must be the same.
"""

from __future__ import annotations

import random
import re

import pytest

from nodeterm.ui.lean_output import LineCache, StyleCache

MOVE = re.compile(r"\x1b\[(\d+);(\d+)H")
SGR = re.compile(r"\x1b\[[0-9;?]*[mhl]")


def screen(stream: str, rows: int = 6, cols: int = 30) -> list[str]:
    grid = [[" "] * cols for _ in range(rows)]
    r = c = 0
    for piece in re.split(r"(\x1b\[\d+;\d+H|\x1b\[2J)", stream):
        m = MOVE.fullmatch(piece)
        if m:
            r, c = int(m.group(1)) - 1, int(m.group(2)) - 1
        elif piece == "\x1b[2J":
            grid = [[" "] * cols for _ in range(rows)]
        else:
            for ch in SGR.sub("", piece).replace("\r", "").replace("\n", ""):
                if 0 <= r < rows and 0 <= c < cols:
                    grid[r][c] = ch
                c += 1
    return ["".join(row) for row in grid]


def random_frame(rng: random.Random) -> str:
    out = []
    for _ in range(rng.randint(1, 5)):
        row, col = rng.randint(1, 6), rng.choice([1, 1, 5, 12, 20])
        text = rng.choice(["abc", "abcdef", "   ", "xyz--", "▶ R1", "longer line here"])
        style = rng.choice(["", "\x1b[1m", "\x1b[39;49m"])
        out.append(f"\x1b[{row};{col}H{style}{text}\x1b[0m\r\n")
    if rng.random() < 0.05:
        out.insert(0, "\x1b[2J")
    return "\x1b[?2026h" + "".join(out) + "\x1b[?2026l"


def test_filtered_stream_shows_the_same_screen():
    rng = random.Random(7)
    for _ in range(200):
        cache, plain, lean = LineCache(), "", ""
        for _ in range(rng.randint(1, 30)):
            frame = random_frame(rng)
            plain += frame
            lean += cache.filter(frame)
            assert screen(lean) == screen(plain)


def test_an_unchanged_line_is_left_out():
    cache = LineCache()
    frame = "\x1b[3;1Hparts list\x1b[0m\x1b[3;20Hequation one\x1b[0m"
    assert cache.filter(frame) == frame
    second = "\x1b[3;1Hparts list\x1b[0m\x1b[3;20Hequation two\x1b[0m"
    assert cache.filter(second) == "\x1b[3;20Hequation two\x1b[0m"
    assert cache.saved > 0
    cache.filter("\x1b[?1049h")          # the alternate screen again: everything is sent anew
    assert cache.filter(second) == second


# --- style codes ----------------------------------------------------------------------------------
STYLES = ["\x1b[0m", "\x1b[m", "\x1b[39;49m", "\x1b[1;39;49m", "\x1b[2;39;49m", "\x1b[1m", "\x1b[7m",
          "\x1b[4;39;49m", "\x1b[38;5;196m", "\x1b[38;2;10;20;30;48;5;0m", "\x1b[0;1m", "\x1b[3m", "\x1b[39m"]


def styled_frame(rng: random.Random) -> str:
    """Segments as Textual writes them (``style, text, reset``), cursor moves, erases."""
    out = []
    for _ in range(rng.randint(1, 12)):
        pick = rng.random()
        if pick < 0.25:
            out.append(f"\x1b[{rng.randint(1, 6)};{rng.randint(1, 25)}H")
        elif pick < 0.3:
            out.append(rng.choice(["\x1b[K", "\x1b[2K", "\x1b[J"]))
        elif pick < 0.35:
            out.append(rng.choice(STYLES))
        else:
            out.append(rng.choice(STYLES) + rng.choice(["a", "bc", " ", "▶ R1", "xyz"]) + rng.choice(["\x1b[0m", ""]))
    return "".join(out)


def rendered(stream: str):
    """Every cell with its style on a VT terminal model (pyte, a reference emulator), and the style a
    character written next would get."""
    pyte = pytest.importorskip("pyte")
    term = pyte.Screen(30, 6)
    pyte.Stream(term).feed(stream)
    return [[term.buffer[y][x] for x in range(30)] for y in range(6)], term.cursor.attrs


def test_left_out_style_codes_change_no_cell_and_no_style():
    rng = random.Random(11)
    for _ in range(300):
        cache, plain, lean = StyleCache(), "", ""
        for _ in range(rng.randint(1, 6)):
            frame = styled_frame(rng)
            plain += frame
            lean += cache.filter(frame)
            assert rendered(lean) == rendered(plain), repr(plain)


def test_default_colours_around_each_segment_are_left_out():
    frame = "\x1b[2;1H\x1b[39;49m \x1b[0m\x1b[2;39;49m1 Circuit\x1b[0m\x1b[39;49m \x1b[0m\x1b[39;49m│\x1b[0m"
    lean = StyleCache().filter(frame)
    assert lean == "\x1b[2;1H \x1b[2;39;49m1 Circuit\x1b[0m │"
    assert rendered(lean) == rendered(frame)
