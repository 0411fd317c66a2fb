"""Speed of reading and refusing texts at their size limits: pasted numbers and saved states.

The guards must keep work linear in the text: a mebibyte paste is read, or a hostile one refused,
in well under a second of CPU (target <= 1 s each); a state text near its 8 MiB limit is refused
in seconds, not minutes (target <= 15 s each: a quadratic step would take minutes).

Reference, measured in the same process on the same text: Python's ``json.loads`` where the
text is JSON (what the state loader runs after its checks), and ``str.split`` where it is not
(the least any reader of the text must do).  CPU time (``time.process_time``), so the figures hold
on a busy machine as well.  The texts are the tests' own (tests/test_paste_hostile.py,
tests/test_state_hostile.py), which check what is read or refused, never how long it takes.

Run: ``PYTHONPATH=. python benchmarks/bench_input_guards.py``
"""

from __future__ import annotations

import json
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tests"))

from test_paste_hostile import DENSE, HOSTILE_MEBIBYTES  # noqa: E402
from test_state_hostile import LARGE_TEXTS  # noqa: E402

from posekit.analysis import parse_numbers  # noqa: E402
from posekit.core.errors import PoseInputError  # noqa: E402
from posekit.io.settings import StateFileError  # noqa: E402
from posekit.io.state import state_from_json  # noqa: E402

PASTE_TARGET, STATE_TARGET = 1.0, 15.0


def _cpu(fn, text):
    start = time.process_time()
    try:
        fn(text)
    except (PoseInputError, StateFileError, ValueError):
        pass
    return time.process_time() - start


def _reference(text):
    """``json.loads`` when the text is JSON, else ``str.split``; returns (what, seconds)."""
    start = time.process_time()
    try:
        json.loads(text)
        what = "json.loads"
    except (ValueError, RecursionError):
        text.split()
        what = "str.split"
    return what, time.process_time() - start


def _table(title, cases, fn, target):
    print(f"\n{title} (target <= {target:g} s of CPU each)")
    print(f"  {'text':44s} {'chars':>9s} {'posekit s':>10s} {'reference':>11s} {'ref s':>7s} {'ratio':>7s}")
    worst = 0.0
    for label in sorted(cases):
        text = cases[label]()
        spent = _cpu(fn, text)
        what, ref = _reference(text)
        worst = max(worst, spent)
        ratio = f"{spent / ref:7.1f}" if ref > 0 else "      -"
        print(f"  {label[:44]:44s} {len(text):9d} {spent:10.3f} {what:>11s} {ref:7.3f} {ratio}")
    print(f"  slowest: {worst:.3f} s -> {'met' if worst <= target else 'MISSED'}")
    return worst <= target


def main() -> int:
    ok = _table("Mebibyte pastes read whole", DENSE, parse_numbers, PASTE_TARGET)
    ok &= _table("Hostile mebibyte pastes refused", HOSTILE_MEBIBYTES, parse_numbers, PASTE_TARGET)
    ok &= _table("Largest hostile state texts refused", LARGE_TEXTS, state_from_json, STATE_TARGET)
    print("\nall targets met" if ok else "\nsome target missed")
    return 0


if __name__ == "__main__":
    sys.exit(main())
