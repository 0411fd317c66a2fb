"""Speed of the explanation engine behind diagnose / diagnose_batch.

* one-pose diagnosis over the full hypothesis space, reflections on (the default):
  target <= 10 ms median over a grid of readings and slips;
* batch mode, 1e4 pose pairs: target <= 0.5 s.

Reference figures are measured in the same process with scipy.spatial.transform.Rotation:
for one pose, scipy turning the same number of candidate matrices into rotations and
their geodesic angles (``Rotation.from_matrix(...).magnitude()``); for the batch, scipy
scoring one hypothesis over all pairs (from_quat, composition, magnitude), times the
number of hypotheses posekit scores (an extrapolation, said so when printed).

Run: ``PYTHONPATH=. python benchmarks/bench_diagnose.py``
"""

from __future__ import annotations

import statistics
import time

import numpy as np
from scipy.spatial.transform import Rotation

import posekit as pk
from posekit.analysis.diagnose import diagnose, diagnose_batch


def _median_ms(fn, repeat=25):
    fn()
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return 1000 * statistics.median(times)


def one_pose():
    rot = Rotation.random(random_state=7)
    t = np.array([0.4, -0.2, 1.1])
    truth = np.eye(4)
    truth[:3, :3] = rot.as_matrix()
    truth[:3, 3] = t
    cases = {
        "7 numbers (position + quaternion)": " ".join(f"{v:.9f}" for v in [*t, *rot.as_quat()]),
        "4 numbers (quaternion)": " ".join(f"{v:.9f}" for v in rot.as_quat()),
        "9 numbers (3x3 matrix)": " ".join(f"{v:.9f}" for v in rot.as_matrix().T.ravel()),
        "16 numbers (4x4 transform)": " ".join(f"{v:.9f}" for v in truth.T.ravel()),
        "3 numbers (Euler / rotation vector)": " ".join(f"{v:.9f}" for v in rot.as_euler("xyz", degrees=True)),
        "6 numbers (position + Euler)": " ".join(f"{v:.9f}" for v in [*t, *rot.as_euler("xyz", degrees=True)]),
    }
    print("one-pose diagnosis (median of 25, text parsing included)")
    headline = []
    for name, text in cases.items():
        expected = truth if "position" in name or "4x4" in name else rot.as_matrix()
        d = diagnose(expected, text)
        ms = _median_ms(lambda: diagnose(expected, text))
        n = d.hypotheses_scored
        cand = np.tile(rot.as_matrix(), (min(n, 200_000), 1, 1))
        ref = _median_ms(lambda: Rotation.from_matrix(cand).magnitude(), repeat=5) * n / len(cand)
        print(f"  {name:38s} {n:>9d} hypotheses  posekit {ms:7.2f} ms   scipy from_matrix+magnitude of "
              f"{n} matrices {ref:8.2f} ms   ratio {ms / ref:5.2f}")
        headline.append(ms)
    grid = statistics.median(headline)
    print(f"  median over the grid above: {grid:.2f} ms (slowest {max(headline):.2f} ms); "
          f"target <= 10 ms median: {'met' if grid <= 10 else 'NOT met'}")


def slip_grid():
    """Median over a generated grid: every reading kind x every field that gives it meaning, flipped
    (single slips, the field stated or not) x 3 random poses; reflections on."""
    from posekit.core.convention import CHOICES
    from posekit.explain import FIELDS_OF_KIND, stated_reading, write_numbers
    kinds = {"quaternion": 4, "euler": 3, "matrix": 9, "transform": 16, "position-quaternion": 7,
             "position-euler": 6}
    times, count = [], 0
    for seed in range(3):
        rot = Rotation.random(random_state=100 + seed)
        r = rot.as_matrix()                                                   # scipy: the true pose
        t = np.random.default_rng(seed).normal(size=3)
        for kind, n in kinds.items():
            for field in FIELDS_OF_KIND[kind]:
                for stated_text in ("", f"{field}={CHOICES[field][0]}"):
                    stated = stated_reading(n, kind, stated_text or None)
                    other = next(v for v in CHOICES[field] if v != getattr(stated.convention, field))
                    nums = write_numbers(stated.with_fields(**{field: other}), r[None], t[None])[0]
                    expected = pk.make_transform(r, t) if stated.has_translation else r
                    text = " ".join(f"{v:.9f}" for v in nums)
                    times.append(_median_ms(lambda: diagnose(expected, text, assumed=stated_text or None,
                                                             assumed_kind=kind), repeat=5))
                    count += 1
    med = statistics.median(times)
    print(f"slip grid: {count} diagnoses (6 kinds x every field x stated or not x 3 poses), median of 5 each: "
          f"median {med:.2f} ms, 90th percentile {np.percentile(times, 90):.2f} ms, slowest {max(times):.2f} ms; "
          f"target <= 10 ms median: {'met' if med <= 10 else 'NOT met'}")


def batch(n=10_000):
    rots = Rotation.random(n, random_state=3)
    t = np.random.default_rng(3).normal(size=(n, 3))
    truth = np.zeros((n, 4, 4))
    truth[:, :3, :3] = rots.as_matrix()
    truth[:, :3, 3] = t
    truth[:, 3, 3] = 1
    logged = np.hstack([t, rots.as_quat()])  # logged scalar-last
    b = diagnose_batch(truth, logged)
    times = []
    for _ in range(5):
        t0 = time.perf_counter()
        diagnose_batch(truth, logged)
        times.append(time.perf_counter() - t0)
    ms = 1000 * statistics.median(times)

    def scipy_one():
        obs = Rotation.from_quat(logged[:, 3:])
        return (obs.inv() * rots).magnitude()

    one = _median_ms(scipy_one, repeat=5)
    ref = one * b.hypotheses_scored
    print(f"batch mode, {n} pose pairs: {b.hypotheses_scored} hypotheses, each against every pair")
    print(f"  posekit {ms:.1f} ms (median of 5); best: {b.best.sentence}")
    print(f"  scipy scoring one hypothesis over the pairs: {one:.2f} ms; extrapolated to every hypothesis "
          f"{ref / 1000:.1f} s; ratio {ms / ref:.2e}")
    print(f"  target <= 0.5 s: {'met' if ms <= 500 else 'NOT met'}")


if __name__ == "__main__":
    print(f"posekit {pk.__version__}")
    one_pose()
    slip_grid()
    batch()
