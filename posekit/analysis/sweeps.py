"""Sweeps: walk a path of rotations and record every representation at each step.

This is the data a side-by-side view plots: the Euler readback jumps near the pole and
at wraps, the quaternion as written (scalar >= 0) flips sign, the matrix never jumps on
a continuous path.  One frozen :class:`Sweep` holds all of it.

Entry points (all angles in the convention's unit):

- :func:`sweep_one_angle` -- one Euler angle swept through given values, the other two fixed;
- :func:`sweep_between` -- a slerp (Shoemake, SIGGRAPH 1985) between two rotations in N steps;
- :func:`sweep_rotations` -- any path of canonical rotations you already have.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..core import rotation as rot
from ..core.checks import as_numbers, checked_matrix
from ..core.convention import Convention
from ..core.errors import PoseInputError
from ..core.reading import as_convention, read_rotation, write_rotation
from .singularity import lock_gauge

__all__ = ["Sweep", "DEFAULT_JUMP_THRESHOLD", "sign_continuous", "sweep_rotations", "sweep_one_angle", "sweep_between"]

#: Default jump threshold in radians (90 degrees): an Euler angle or the path moving
#: further than this in one step is marked as a jump.
DEFAULT_JUMP_THRESHOLD = 0.5 * np.pi


@dataclass(frozen=True)
class Sweep:
    """Every representation along a path of N rotations (leading axes ``...`` allowed).

    Arrays (angles in the convention's unit):

    - ``parameter (..., N)``: the swept value (an angle for :func:`sweep_one_angle`,
      the slerp fraction 0..1 for :func:`sweep_between`, the step index otherwise);
    - ``rotation (..., N, 3, 3)``: canonical (active, parent-from-child) rotations;
    - ``euler (..., N, 3)``: the Euler readback, exactly as ``write_rotation`` writes it;
    - ``quaternion (..., N, 4)``: sign-continuous (each step's sign chosen so the dot
      product with the previous step is >= 0), in the convention's scalar order and algebra;
    - ``quaternion_written (..., N, 4)``: as ``write_rotation`` writes it (scalar >= 0);
    - ``matrix (..., N, 3, 3)``: the matrix as written under the convention (its 9 entries);
    - ``gauge (..., N)``: lock gauge (:func:`posekit.analysis.lock_gauge`), 0 at the pole;
    - ``step_angle (..., N)``: geodesic turn (radians) from the previous step, 0 at step 0;
    - ``euler_jumps (..., N)``: some Euler angle changed by more than ``threshold`` from the
      previous step (outer angles compared as written, i.e. a wrap counts);
    - ``quaternion_jumps (..., N)``: the written quaternion flipped sign (dot with the
      previous step < 0: it moved further than its negative would have);
    - ``matrix_jumps (..., N)``: the matrix moved, i.e. the path itself turned by more
      than ``threshold`` (radians equivalent) in one step; never on a fine continuous path.

    Step 0 never counts as a jump.  ``threshold`` is in the convention's unit.
    """

    convention: Convention
    threshold: float
    parameter: np.ndarray
    rotation: np.ndarray
    euler: np.ndarray
    quaternion: np.ndarray
    quaternion_written: np.ndarray
    matrix: np.ndarray
    gauge: np.ndarray
    step_angle: np.ndarray
    euler_jumps: np.ndarray
    quaternion_jumps: np.ndarray
    matrix_jumps: np.ndarray

    @property
    def steps(self) -> int:
        return int(self.parameter.shape[-1])

    def summary(self) -> str:
        unit = "degrees" if self.convention.degrees else "radians"
        e, q, m = (int(np.count_nonzero(x)) for x in (self.euler_jumps, self.quaternion_jumps, self.matrix_jumps))
        lowest = float(np.min(self.gauge))
        where = np.unravel_index(int(np.argmin(self.gauge)), self.gauge.shape)
        text = (f"{self.steps} steps under '{self.convention.describe_euler()}': Euler readback jumps at {e} step(s), "
                f"the written quaternion flips sign at {q}, the matrix jumps at {m} "
                f"(threshold {self.threshold:.6g} {unit}); lowest lock gauge {lowest:.3g} at step {where[-1]}")
        if e:
            first = np.argwhere(self.euler_jumps)[0]
            text += f"; first Euler jump at step {int(first[-1])}"
        return text


def _check_threshold(threshold, conv: Convention) -> float:
    scale = np.pi / 180.0 if conv.degrees else 1.0
    if threshold is None:
        return DEFAULT_JUMP_THRESHOLD / scale
    if not (isinstance(threshold, (int, float)) and np.isfinite(threshold) and threshold > 0):
        raise PoseInputError(f"threshold: got {threshold!r}; expected a positive number in "
                             f"{'degrees' if conv.degrees else 'radians'}")
    return float(threshold)


def sign_continuous(quaternions) -> np.ndarray:
    """Flip signs along the second-to-last axis so neighbours have dot >= 0: ``(..., N, 4) -> (..., N, 4)``.

    ``q`` and ``-q`` are the same rotation (double cover; common practice), so this
    changes no orientation.  The first quaternion keeps its sign.

    >>> sign_continuous([[1, 0, 0, 0], [-1, 0, 0, 0]]).tolist()
    [[1.0, 0.0, 0.0, 0.0], [1.0, 0.0, 0.0, 0.0]]
    """
    q = as_numbers(quaternions, "quaternions", (4,))
    if q.ndim < 2:
        raise PoseInputError(f"quaternions: got shape {q.shape}; expected a path (..., N, 4)")
    dots = np.sum(q[..., 1:, :] * q[..., :-1, :], axis=-1)
    flips = np.where(dots < 0, -1.0, 1.0)
    signs = np.concatenate([np.ones(q.shape[:-2] + (1,)), np.cumprod(flips, axis=-1)], axis=-1)
    return q * signs[..., None] + 0.0  # + 0.0 turns -0.0 into 0.0


def sweep_rotations(rotations, convention=None, parameter=None, threshold: float | None = None) -> Sweep:
    """Sweep along a given path of canonical rotations ``(..., N, 3, 3)`` -> :class:`Sweep`.

    ``parameter (N,)`` or ``(..., N)`` labels the steps (default 0..N-1);
    ``threshold`` in the convention's unit (default 90 degrees).

    >>> from posekit.core.rotation import elementary_matrix
    >>> s = sweep_rotations(elementary_matrix("z", np.linspace(0, 2 * np.pi, 9)), "unit=degrees")
    >>> s.euler_jumps.tolist()   # yaw wraps from 180 to -135 at step 5
    [False, False, False, False, False, True, False, False, False]
    """
    conv = as_convention(convention)
    thr = _check_threshold(threshold, conv)
    scale = np.pi / 180.0 if conv.degrees else 1.0
    r = checked_matrix(rotations, "path of rotations")
    if r.ndim < 3 or r.shape[-3] < 2:
        raise PoseInputError(f"path of rotations: got shape {r.shape}; expected (..., N, 3, 3) with N >= 2 steps")
    n = r.shape[-3]
    if parameter is None:
        par = np.broadcast_to(np.arange(n, dtype=np.float64), r.shape[:-2]).copy()
    else:
        par = as_numbers(parameter, "parameter", None)
        try:
            par = np.broadcast_to(par, r.shape[:-2]).copy()
        except ValueError:
            raise PoseInputError(f"parameter: got shape {par.shape}; expected ({n},) or {r.shape[:-2]}") from None
    euler = write_rotation(r, "euler", conv, check=False)
    written = write_rotation(r, "quaternion", conv, check=False)
    quat = sign_continuous(written)
    matrix = write_rotation(r, "matrix", conv, check=False)
    gauge = lock_gauge(r, conv).gauge
    qc = rot.quaternion_of_matrix(r)
    step = np.concatenate([np.zeros(r.shape[:-3] + (1,)),
                           rot.angle_between_quaternions(qc[..., :-1, :], qc[..., 1:, :])], axis=-1)
    false = np.zeros(r.shape[:-3] + (1,), dtype=bool)
    de = np.max(np.abs(np.diff(euler, axis=-2)), axis=-1)
    euler_jumps = np.concatenate([false, de > thr], axis=-1)
    qdots = np.sum(written[..., 1:, :] * written[..., :-1, :], axis=-1)
    quaternion_jumps = np.concatenate([false, qdots < 0], axis=-1)
    matrix_jumps = step > thr * scale
    return Sweep(conv, thr, par, r, euler, quat, written, matrix, gauge, step, euler_jumps, quaternion_jumps,
                 matrix_jumps)


def sweep_one_angle(angles, index: int, values, convention=None, threshold: float | None = None) -> Sweep:
    """Sweep Euler angle number ``index`` (0, 1, 2 in the convention's listing) through ``values``.

    ``angles (..., 3)`` the fixed triplet (its ``index`` entry is replaced), ``values
    (N,)``; both in the convention's unit -> :class:`Sweep` with ``parameter = values``.
    Sweeping the middle angle through the pole with the others fixed shows the lock.

    >>> s = sweep_one_angle([30, 0, 20], 1, np.linspace(80, 100, 21), "unit=degrees")
    >>> int(np.argmin(s.gauge)), bool(s.euler_jumps.any()), bool(s.matrix_jumps.any())
    (10, True, False)
    """
    conv = as_convention(convention)
    base = as_numbers(angles, "Euler angles", (3,))
    if not (isinstance(index, (int, np.integer)) and 0 <= index <= 2):
        raise PoseInputError(f"index: got {index!r}; expected 0, 1 or 2 (which Euler angle to sweep)")
    v = as_numbers(values, "values", None)
    if v.ndim != 1 or v.size < 2:
        raise PoseInputError(f"values: got shape {v.shape}; expected (N,) with N >= 2")
    path = np.repeat(base[..., None, :], v.size, axis=-2)
    path[..., index] = v
    return sweep_rotations(read_rotation(path, "euler", conv), conv, v, threshold)


def sweep_between(rotation_a, rotation_b, steps: int, convention=None, threshold: float | None = None) -> Sweep:
    """Slerp from ``rotation_a`` to ``rotation_b`` (canonical ``(..., 3, 3)``) in ``steps`` steps.

    Shortest arc (Shoemake 1985); ``parameter`` is the fraction ``linspace(0, 1, steps)``.

    >>> from posekit.core.rotation import elementary_matrix
    >>> s = sweep_between(np.eye(3), elementary_matrix("y", 3.0), 31, "sequence=z-y-x")
    >>> bool(s.matrix_jumps.any()), bool(s.euler_jumps.any())   # crosses pitch 90 degrees
    (False, True)
    """
    conv = as_convention(convention)
    a = checked_matrix(rotation_a, "rotation_a")
    b = checked_matrix(rotation_b, "rotation_b")
    if not (isinstance(steps, (int, np.integer)) and steps >= 2):
        raise PoseInputError(f"steps: got {steps!r}; expected an integer >= 2")
    t = np.linspace(0.0, 1.0, int(steps))
    qa = rot.quaternion_of_matrix(a)[..., None, :]
    qb = rot.quaternion_of_matrix(b)[..., None, :]
    path = rot.matrix_of_quaternion(rot.slerp_quaternions(qa, qb, t))
    return sweep_rotations(path, conv, t, threshold)
