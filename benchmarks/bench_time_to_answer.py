"""Time to answer: from an empty notebook to the right corrected code, for three invented bugs.

Starts JupyterLab and headless Chromium (tests/browser/harness.py) and drives the debugging
desk exactly as the browser test does (``answer_from_empty_notebook`` and ``BUGS`` are
imported from tests/browser/test_desk_browser.py): type one line into an empty cell, run
it, type the pose expected, paste the numbers got and, where the engineer's code read
them another way, choose that one setting in the convention bar.  The clock starts at
the first action (the notebook open, its kernel idle) and stops when the corrected code
is in the page; the code is then run and its numbers checked against
scipy.spatial.transform.Rotation (the reference named in each bug).

Prints, per bug: the actions taken, how many, and the seconds; then the slowest.
Target: every answer in under 60 s with at most 5 actions.

Run: ``PYTHONPATH=. python benchmarks/bench_time_to_answer.py`` (needs Chromium; see
tests/browser/harness.py).
"""

from __future__ import annotations

import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests" / "browser"))

from harness import LabSession  # noqa: E402
from test_desk_browser import BUGS, _check_corrected, _run_code, answer_from_empty_notebook  # noqa: E402


def main() -> None:
    rows = []
    with LabSession() as lab:
        for k, bug in enumerate(BUGS):
            page, actions, seconds, code = answer_from_empty_notebook(lab, bug, f"bench_answer_{k}.ipynb")
            _check_corrected(bug, _run_code(code))   # the answer is right (scipy), or this raises
            page.close()
            rows.append((bug.name, actions, seconds))
    print("time to answer: empty notebook -> corrected code in the page (JupyterLab, headless Chromium)")
    for name, actions, seconds in rows:
        print(f"  {name:45s} {len(actions)} actions  {seconds:6.1f} s   ({'; '.join(actions)})")
    worst = max(s for _, _, s in rows)
    most = max(len(a) for _, a, _ in rows)
    met = worst < 60 and most <= 5
    print(f"slowest {worst:.1f} s, most actions {most}; target < 60 s and <= 5 actions: {'met' if met else 'NOT met'}")


if __name__ == "__main__":
    main()
