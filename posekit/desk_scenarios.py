"""Invented demo scenarios for the debugging desk and the trajectory view.

DEMO DATA ONLY. Everything here is invented for showing the widgets; none of it is
a reference for any check (the tests compare the widgets with posekit's own
analysis functions, never with these numbers).

Scenario: a vineyard robot carries a row camera that should sit pitched 25
degrees down and 0.3 m forward of the base.  Its driver logs the camera pose as
``x y z qx qy qz qw`` (scalar last), and the mapping script reads the quaternion
scalar first.  A calibration run logs 12 poses of a second camera whose mount is
turned 5 degrees about its own z (a constant offset no convention explains).  A
drive along a row logs the base attitude as quaternions with the sign flipping now
and then, heading wrapping through 180 degrees, a pitch that climbs towards the pole,
one dropped stretch of samples and one bump faster than the rate limit.

``python -m posekit.desk_scenarios`` prints the scenarios.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .core.reading import read_rotation, write_rotation
from .core.rotation import elementary_matrix

__all__ = ["DemoPaste", "DemoBatch", "DemoDrive", "camera_paste", "mount_batch", "row_drive"]

DEMO_LABEL = "invented demo data, not a check reference"


@dataclass(frozen=True)
class DemoPaste:
    """One pose: what the engineer expected (in words) and the text the driver logged."""

    label: str
    expected: str
    pasted: str
    convention: str


@dataclass(frozen=True)
class DemoBatch:
    """Several pairs: expected Euler angles ``(N, 3)`` degrees and logged quaternions ``(N, 4)``."""

    label: str
    expected: np.ndarray
    observed: np.ndarray
    convention: str


@dataclass(frozen=True)
class DemoDrive:
    """A logged drive: ``times (N,)`` seconds, quaternions ``(N, 4)`` scalar first, and the limits to check."""

    label: str
    times: np.ndarray
    quaternions: np.ndarray
    convention: str
    rate_limit: float

    def report(self):
        """The trajectory check of this drive (posekit.analysis.trajectory.check_trajectory)."""
        from .analysis.trajectory import check_trajectory

        return check_trajectory(self.times, self.quaternions, "quaternion", self.convention,
                                rate_limit=self.rate_limit)


def camera_paste() -> DemoPaste:
    """The row camera: expected 'pitched 25 degrees down, 0.3 m forward', logged scalar last (demo data)."""
    r = elementary_matrix("y", np.radians(25.0))
    q = write_rotation(r, "quaternion", "scalar=last")
    pasted = " ".join(f"{v:.4f}" for v in (0.3, 0.0, 0.0, *q))
    return DemoPaste(DEMO_LABEL, "pitched 25 degrees down, 0.3 m forward", pasted, "sequence=z-y-x unit=degrees")


def mount_batch(n: int = 12, seed: int = 4) -> DemoBatch:
    """12 calibration poses of a camera whose mount is turned 5 degrees about its z (demo data)."""
    rng = np.random.default_rng(seed)
    angles = np.column_stack([rng.uniform(-60, 60, n), rng.uniform(-20, 20, n), rng.uniform(-10, 10, n)])
    conv = "sequence=z-y-x unit=degrees"
    truth = read_rotation(angles, "euler", conv)
    mount = elementary_matrix("z", np.radians(5.0))
    logged = write_rotation(truth @ mount, "quaternion", "scalar=last")
    return DemoBatch(DEMO_LABEL, np.round(angles, 4), np.round(logged, 6), conv)


def row_drive(n: int = 400) -> DemoDrive:
    """A drive along a vineyard row, 10 Hz, with the faults listed in the module docstring (demo data)."""
    t = np.arange(n) * 0.1
    t[250:] += 1.5                                        # samples dropped for 1.5 s
    yaw = 150.0 + 0.18 * np.arange(n)                     # heading through 180 degrees
    pitch = np.where(np.arange(n) > 320, 60 + 0.35 * (np.arange(n) - 320), 5 * np.sin(t / 3))
    roll = 2 * np.sin(t)
    roll[180] += 20.0                                     # one bump
    conv = "sequence=z-y-x unit=degrees"
    q = write_rotation(read_rotation(np.column_stack([yaw, pitch, roll]), "euler", conv), "quaternion")
    sign = np.ones(n)
    sign[90:130] = -1.0                                   # the driver flips the stored sign
    sign[300:305] = -1.0
    return DemoDrive(DEMO_LABEL, t, q * sign[:, None], conv, 150.0)


def main() -> None:  # pragma: no cover - a demo printout
    p = camera_paste()
    print(f"[{p.label}]\nexpected: {p.expected}\npasted:   {p.pasted}\n")
    b = mount_batch()
    print(f"[{b.label}] {len(b.observed)} calibration pairs, first logged quaternion {b.observed[0]}\n")
    print(f"[{row_drive().label}]\n" + row_drive().report().summary())


if __name__ == "__main__":  # pragma: no cover
    main()
