"""Speed of the debugging desk (target): from paste to explanations shown, kernel side.

Target: <= 50 ms median for one pose.  The paste is simulated the way the page
delivers it: the desk's Textarea ``value`` is set in-process, which runs the whole
handler (parse, diagnose, list, detail panel, 3D restyle message).  No browser is
involved; the front-end's own drawing time is not included.

Reference, measured in the same process: ``parse_numbers`` + ``diagnose`` alone on the
same text (the analysis the desk cannot avoid), so the ratio is the cost of the glue.
The expected numbers are read as the desk reads them: the unit not stated (degrees
first, radians scored too), so both sides do the same work.

The time to an answer in a real browser, from an empty notebook, is measured by
benchmarks/bench_time_to_answer.py.

Run: ``PYTHONPATH=. python benchmarks/bench_desk.py``
"""

from __future__ import annotations

import statistics
import time

import numpy as np

import posekit as pk
from posekit.analysis.diagnose import diagnose, expected_pose
from posekit.io.paste import parse_numbers
from posekit.widgets import DebugDesk

CONV = "sequence=z-y-x unit=degrees"
REPEAT = 41


def _median_ms(fn, repeat=REPEAT):
    fn()
    times = []
    for k in range(repeat):
        t0 = time.perf_counter()
        fn(k)
        times.append(time.perf_counter() - t0)
    return 1000 * statistics.median(times)


def main() -> None:
    cases = {}
    angles = [30.0, -10.0, 5.0]
    rot = pk.read_rotation(angles, "euler", CONV)
    t = np.array([0.3, -0.1, 0.8])
    q = pk.write_rotation(rot, "quaternion", "scalar=last")
    cases["4 numbers, quaternion scalar-last"] = (" ".join(map(str, angles)), "euler",
                                                  [", ".join(f"{v:.6f}" for v in q) + " " * k for k in range(2)])
    m = pk.invert_transform(pk.make_transform(rot, t))
    cases["16 numbers, 4x4 inverse transform"] = (" ".join(repr(float(v)) for v in pk.make_transform(rot, t).ravel()),
                                                  "transform",
                                                  ["\n".join(" ".join(f"{v:.9f}" for v in row) for row in m) + " " * k
                                                   for k in range(2)])
    cases["7 numbers, position + quaternion"] = ("pitched 25 degrees down, 0.3 m forward", None,
                                                 [" ".join(f"{v:.5f}" for v in (0.3, 0, 0, 0, 0.21644, 0, 0.97630)) + " " * k
                                                  for k in range(2)])
    print(f"debugging desk, paste -> explanations shown (kernel side, median of {REPEAT})")
    worst = 0.0
    for name, (expected, kind, texts) in cases.items():
        desk = DebugDesk(pasted=texts[0], expected=expected, expected_kind=kind or "by count", convention=CONV)

        def paste(k=0):
            desk.paste_box.value = texts[(k + 1) % 2]  # alternate (a trailing space), so every paste is a change

        ms = _median_ms(paste)
        assert desk.diagnosis is not None and desk.explanation_list.options
        exp = expected_pose(expected, kind, None)   # as the desk reads it: the bar's unit is not stated for it

        def reference(k=0):
            diagnose(exp, parse_numbers(texts[(k + 1) % 2]), expected_convention=CONV)

        ref = _median_ms(reference)
        worst = max(worst, ms)
        print(f"  {name:36s} desk {ms:6.2f} ms   parse+diagnose alone {ref:6.2f} ms   ratio {ms / ref:4.2f}")
    print(f"slowest case {worst:.2f} ms; target <= 50 ms: {'met' if worst <= 50 else 'NOT met'}")


if __name__ == "__main__":
    main()
