"""Speed of align_streams: two sensors on one rigid body, 1e5 samples per stream.

Offset + mount + diagnosis in one call, target <= 2 s, for two cases:

* B logged as JPL quaternions, stated Hamilton (every quaternion reading of B tried);
* B logged as Z-Y-X Euler angles in degrees, stated radians (every Euler and rotation-vector
  reading of B tried: 50 readings over the whole stream).

Reference, measured in the same process: scipy.spatial.transform.Rotation doing step 1's
rotation conversions on the same numbers -- A once, and B under every reading with its own
speeds, on every row (``from_quat`` / ``from_euler`` / ``from_rotvec`` / ``from_matrix``), each
followed by the angles of consecutive relative rotations (``(r[:-1].inv() * r[1:]).magnitude()``).
posekit reads every row only for the best-matching readings and a thinned set of rows (one
speed per coarse-grid cell) to rank the others, so the reference does more conversions than
posekit does; the ratio says how the whole call compares with converting every row once.
The streams are made with scipy (RotationSpline through random key orientations, a random
mount and clock offset); nothing here is a check's reference.

Run: ``PYTHONPATH=. python benchmarks/bench_alignment.py``
"""

from __future__ import annotations

import math
import time

import numpy as np
from scipy.spatial.transform import Rotation, RotationSpline

from posekit.analysis.alignment import _speed_key, align_streams
from posekit.explain import readings_of, stated_reading

N = 100_000
RATE = 100.0            # both streams: 1e5 samples at 100 Hz = 1000 s
TARGET = 2.0


def _streams(seed=1):
    rng = np.random.default_rng(seed)
    duration = N / RATE
    keys = np.linspace(0.0, duration + 10.0, int(duration / 5) + 3)
    spline = RotationSpline(keys, Rotation.random(len(keys), random_state=seed))
    mount = Rotation.random(random_state=seed + 1)
    offset = float(rng.uniform(-2, 2))
    ta = np.arange(N) / RATE + 3.0
    tb = np.arange(N) / RATE + 3.0 - offset + 0.3 / RATE     # B's own clock, not on A's grid
    ra = spline(ta)
    rb = Rotation.random(random_state=seed + 2) * spline(tb + offset) * mount
    return ta, ra.as_quat(scalar_first=True), tb, rb, mount, offset


def _scipy_reference(values_a, values_b, stated_b):
    """scipy: the same conversions posekit makes over the whole streams, and the relative angles."""
    def magnitudes(r):
        return (r[:-1].inv() * r[1:]).magnitude()

    t0 = time.perf_counter()
    magnitudes(Rotation.from_quat(values_a, scalar_first=True))
    seen = set()
    for reading in readings_of(stated_b):
        key = _speed_key(reading)
        if key in seen:
            continue
        seen.add(key)
        c = reading.convention
        if reading.kind == "quaternion":
            r = Rotation.from_quat(values_b, scalar_first=c.scalar == "first")
        elif reading.kind == "euler":
            seq = c.sequence.replace("-", "")
            r = Rotation.from_euler(seq.upper() if c.intrinsic else seq, values_b, degrees=c.unit == "degrees")
        elif reading.kind == "rotation-vector":
            r = Rotation.from_rotvec(values_b, degrees=c.unit == "degrees")
        else:
            r = Rotation.from_matrix(values_b.reshape(-1, 3, 3))
        magnitudes(r)
    return time.perf_counter() - t0


def main():
    ta, qa, tb, rb, mount, offset = _streams()
    cases = {
        "JPL quaternions, stated Hamilton (scalar-last)": (rb.inv().as_quat(), "scalar=last algebra=hamilton", None),
        "Z-Y-X Euler degrees, stated radians": (rb.as_euler("ZYX", degrees=True), "sequence=z-y-x unit=radians",
                                                None),
    }
    print(f"align_streams: two streams of {N} samples each (offset + mount + diagnosis), target <= {TARGET} s")
    for name, (values_b, stated, nominal) in cases.items():
        align_streams(ta[:2000], qa[:2000], "scalar=first", tb[:2000], values_b[:2000], stated)   # warm caches
        best = math.inf
        for _ in range(3):
            t0 = time.perf_counter()
            out = align_streams(ta, qa, "scalar=first", tb, values_b, stated, nominal_mount=nominal)
            best = min(best, time.perf_counter() - t0)
        ref = min(_scipy_reference(qa, values_b, stated_reading(values_b.shape[1], convention=stated))
                  for _ in range(3))
        err = float(np.degrees((Rotation.from_matrix(out.mount_rotation).inv() * mount).magnitude()))
        print(f"  {name}")
        print(f"    posekit {best:.3f} s ({'met' if best <= TARGET else 'NOT met'}); "
              f"scipy, step 1's conversions and relative angles on every row {ref:.3f} s; ratio {best / ref:.2f}")
        print(f"    offset error {1e3 * (out.offset - offset):+.2e} ms (uncertainty {1e3 * out.offset_uncertainty:.3g} "
              f"ms), mount error {err:.2e} degrees, {len(out.residuals.rotation_degrees)} pairs; {out.sentence}")


if __name__ == "__main__":
    main()
