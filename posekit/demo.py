"""A short terminal demo of the core on an invented scenario (``python -m posekit.demo``).

Scenario (invented for the demo, not a check): a river-survey boat carries an IMU
that should sit yawed 30 degrees and pitched 10 degrees nose-down relative to the
hull.  The IMU driver logs its mount quaternion scalar-last; the mapping script
reads it scalar-first.  The demo shows the two readings side by side, the size of
the error, and how Euler angles stop meaning what they seem near pitch 90 degrees.
"""

from __future__ import annotations

import numpy as np

import posekit as pk


def _fmt(values) -> str:
    return "[" + ", ".join(f"{v: .4f}" for v in np.ravel(values)) + "]"


def main() -> None:
    degrees = pk.Convention(sequence="z-y-x", unit="degrees")
    expected = pk.read_rotation([30.0, -10.0, 0.0], "euler", degrees)
    logged = pk.write_rotation(expected, "quaternion", "scalar=last")
    print("posekit demo: a survey boat's IMU mount (invented scenario)\n")
    print("Expected mount, yaw-pitch-roll in degrees:", _fmt([30.0, -10.0, 0.0]))
    print("  convention in words:", degrees.describe().split(";")[0])
    print("Driver logs the quaternion scalar-last:     ", _fmt(logged))

    wrong = pk.read_rotation(logged, "quaternion", "scalar=first")
    right = pk.read_rotation(logged, "quaternion", "scalar=last")
    err_wrong = np.degrees(pk.angle_between(expected, wrong))
    err_right = np.degrees(pk.angle_between(expected, right))
    print("\nRead scalar-first (the bug):  yaw-pitch-roll",
          _fmt(pk.write_rotation(wrong, "euler", degrees)), f"-> off by {err_wrong:.2f} degrees")
    print("Read scalar-last (the fix):   yaw-pitch-roll",
          _fmt(pk.write_rotation(right, "euler", degrees)), f"-> off by {err_right:.2e} degrees")

    print("\nNear gimbal lock (pitch 89.9 -> 90 degrees), the Euler readback jumps, the matrix does not:")
    for pitch in (89.9, 89.99, 90.0):
        r = pk.read_rotation([40.0, pitch, 25.0], "euler", degrees)
        back = pk.write_rotation(r, "euler", degrees)
        again = pk.read_rotation(back, "euler", degrees)
        print(f"  entered [40, {pitch}, 25] -> read back {_fmt(back)}; "
              f"orientation difference {np.degrees(pk.angle_between(r, again)):.1e} degrees")
    print("\nAt the pole only yaw - roll is fixed; posekit returns the member with roll = 0.")
    print("Caution: a transform that looks right here must still be checked on the real system at low speed "
          "with a stop within reach, under the machine-safety standards and site rules that apply.")


if __name__ == "__main__":
    main()
