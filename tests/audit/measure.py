"""Print how well the audit explains the corpus of wrong hand derivations.

    python tests/audit/measure.py [-v]

Counts the verdicts, then the share of wrong equations whose headline names the right node and
part(s), and the share of wrong claims whose headline gives a fix (see corpus_tools.py for the exact
checks). ``-v`` lists the misses.
"""

from __future__ import annotations

import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).parent))

from corpus_tools import load_cases, run, score  # noqa: E402


def main(argv: list[str]) -> int:
    s = score(run(load_cases()))
    n = s["claims"]
    print(f"corpus: {n} claims on {s['circuits']} circuits")
    print(f"verdicts right: {s['right']}/{n}; false alarms (a right claim reported wrong): "
          f"{len(s['false_alarms'])}; wrong claims passed: {len(s['missed'])}")
    a, b = s["located"]
    print(f"headline names the right node and part(s): {a}/{b} wrong equations ({100 * a / b:.0f}%)")
    a, b = s["actionable"]
    print(f"headline gives a fix (names what is wrong and says what to do): {a}/{b} wrong claims "
          f"({100 * a / b:.0f}%)")
    if "-v" in argv:
        for key in ("false_alarms", "missed", "not_located", "not_actionable"):
            for c, v in s[key]:
                print(f"  {key}: {c.circuit}:{c.line} {c.name}: expected {c.node or '-'} "
                      f"{','.join(c.parts) or '-'} '{c.cause}'; got [{v.status}] {v.message}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
