"""Leaving out unchanged screen lines never changes what the terminal shows.

Reference: the unfiltered stream, replayed on a minimal terminal model (cursor moves, printed cells;
colour codes carry no cells) -- the filtered stream must leave every cell the same.
"""

from __future__ import annotations

import random
import re

from nodeterm.ui.lean_output import LineCache

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
