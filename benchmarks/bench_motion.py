"""Speed of explain_known_motion and explain_rates on streams of 1e5 samples.

Known motion: a log of 1e5 samples at 100 Hz (1000 s: the body still, three turns of 3 s each
about the three body axes, each after a long pause) diagnosed against its description, for

* quaternions written scalar-last, stated scalar-first (every quaternion reading tried);
* X-Y-Z Euler angles in degrees, stated Z-Y-X (every Euler and rotation-vector reading: 50).

Rates: 1e5 gyro samples (body frame, degrees per second, on a clock 0.3 s behind) against 1e5
orientation samples: the clock offset from the angular speeds, the rates integrated between key
samples under both units, and 192 readings (frame x unit x 48 signed axis permutations).

Reference, measured in the same process: scipy.spatial.transform.Rotation doing the conversions on
every row -- for the known motion, the log under every reading posekit tries (``from_quat`` /
``from_euler`` / ``from_rotvec`` / ``from_matrix``) followed by the angles of consecutive relative
rotations (``(r[:-1].inv() * r[1:]).magnitude()``); for the rates, the orientation once with its
relative rotations and every rate step as a rotation (``from_rotvec``) under both units.  posekit
reads a thinned set of rows for the known motion (every N // 4096-th, finer where a reading needs
it) and does far more than convert (segmentation, fits, the ties and the simulated motions that
separate them), so the ratio says how the whole diagnosis compares with converting every row once.
The streams are made with scipy; nothing here is a check's reference.

Run: ``PYTHONPATH=. python benchmarks/bench_motion.py``
"""

from __future__ import annotations

import math
import time

import numpy as np
from scipy.spatial.transform import Rotation, RotationSpline

from posekit.analysis.motion import explain_known_motion, explain_rates
from posekit.explain import readings_of, stated_reading

N = 100_000
RATE = 100.0
DESCRIPTION = "rolled 90 degrees right, then pitched 90 degrees down, then yawed 90 degrees left"


def _known_motion_log(seed=1):
    """1e5 samples: a long pause, then each turn (3 s, smoothstep) followed by a long pause (scipy products)."""
    turns = [(0, math.pi / 2), (1, math.pi / 2), (2, math.pi / 2)]
    turn_rows = int(3.0 * RATE)
    pause_rows = (N - len(turns) * turn_rows) // (len(turns) + 1)
    rots, cur = [], Rotation.identity()
    rots += [cur] * pause_rows
    for axis, angle in turns:
        f = np.arange(1, turn_rows + 1) / turn_rows
        rots.append(cur * Rotation.from_rotvec(np.outer(angle * f * f * (3 - 2 * f), np.eye(3)[axis])))
        cur = cur * Rotation.from_rotvec(np.eye(3)[axis] * angle)
        rots += [cur] * pause_rows
    body = Rotation.concatenate(rots)
    body = body[:N] if len(body) >= N else Rotation.concatenate([body, Rotation.concatenate([cur] * (N - len(body)))])
    rng = np.random.default_rng(seed)
    noise = Rotation.from_rotvec(rng.normal(size=(N, 3)) * math.radians(0.2))
    sensor = Rotation.random(random_state=seed) * body * Rotation.random(random_state=seed + 1) * noise
    return np.arange(N) / RATE, sensor


def _scipy_readings(values, stated):
    t0 = time.perf_counter()
    for reading in readings_of(stated):
        c = reading.convention
        if reading.kind == "quaternion":
            r = Rotation.from_quat(values, scalar_first=c.scalar == "first")
        elif reading.kind == "euler":
            seq = c.sequence.replace("-", "")
            r = Rotation.from_euler(seq.upper() if c.intrinsic else seq, values, degrees=c.unit == "degrees")
        elif reading.kind == "rotation-vector":
            r = Rotation.from_rotvec(values, degrees=c.unit == "degrees")
        else:
            r = Rotation.from_matrix(values.reshape(-1, 3, 3))
        (r[:-1].inv() * r[1:]).magnitude()
    return time.perf_counter() - t0


def _rate_streams(seed=2):
    duration = N / RATE
    keys = np.linspace(0.0, duration + 4.0, int(duration / 8) + 2)
    spline = RotationSpline(keys, Rotation.random(len(keys), random_state=seed))
    t_o = np.arange(N) / RATE
    t_r = np.arange(N) / RATE + 1.0 - 0.3                 # the rate clock, 0.3 s behind
    gyro = np.degrees(spline(t_r + 0.3, 1))                # scipy: body-frame rates, logged in degrees per second
    return t_o, spline(t_o).as_quat(scalar_first=True), t_r, gyro


def _scipy_rates(q_o, t_r, gyro):
    t0 = time.perf_counter()
    r = Rotation.from_quat(q_o, scalar_first=True)
    (r[:-1].inv() * r[1:]).magnitude()
    dt = np.diff(t_r)[:, None]
    for scale in (1.0, math.pi / 180.0):
        Rotation.from_rotvec(0.5 * (gyro[:-1] + gyro[1:]) * scale * dt)
    return time.perf_counter() - t0


def _best(fn, repeat=3):
    best, out = math.inf, None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def main():
    t, sensor = _known_motion_log()
    cases = {
        "quaternions scalar-last, stated scalar-first": (sensor.as_quat(), "scalar=first"),
        "X-Y-Z Euler degrees, stated Z-Y-X": (sensor.as_euler("XYZ", degrees=True), "sequence=z-y-x unit=degrees"),
    }
    print(f"explain_known_motion: a log of {N} samples against '{DESCRIPTION}'")
    for name, (values, stated) in cases.items():
        explain_known_motion(t[:3000], values[:3000], stated, "rolled 1 degrees right")   # warm caches (errors fine)
        took, out = _best(lambda: explain_known_motion(t, values, stated, DESCRIPTION))
        ref = min(_scipy_readings(values, stated_reading(values.shape[1], convention=stated)) for _ in range(3))
        print(f"  {name}")
        print(f"    posekit {took:.3f} s; scipy, every reading's conversions and relative angles on every row "
              f"{ref:.3f} s; ratio {took / ref:.2f}")
        print(f"    explained {out.explained}, {len(out.ties)} ties; {out.sentence}; turns measured "
              + ", ".join(f"{m.turned_degrees:.2f}" for m in out.turns) + " degrees")

    t_o, q_o, t_r, gyro = _rate_streams()
    print(f"explain_rates: {N} rate samples against {N} orientation samples (offset found)")
    took, out = _best(lambda: explain_rates(t_r, gyro, t_o, q_o, "scalar=first"))
    ref = min(_scipy_rates(q_o, t_r, gyro) for _ in range(3))
    print(f"    posekit {took:.3f} s; scipy, the orientation's relative angles and every rate step as a rotation "
          f"(both units) {ref:.3f} s; ratio {took / ref:.2f}")
    print(f"    offset {out.offset:+.4f} s (true +0.3000), {out.motion['intervals']} intervals; {out.sentence}")


if __name__ == "__main__":
    main()
