"""Gimbal lock, seen from every side: distance to the pole, a lock gauge, sensitivity, every Euler solution.

Every function takes canonical rotations ``(..., 3, 3)`` (active, parent-from-child;
read user numbers first with :func:`posekit.read_rotation`) and a
:class:`~posekit.core.convention.Convention` (or its text form).  Euler angles go in
and come out **in the convention's unit**; the readback is exactly what
:func:`posekit.write_rotation` writes.  The convention is applied only through
``read_rotation``/``write_rotation``.

Facts used (common practice; also stated in Shuster, "A Survey of Attitude
Representations", J. Astronautical Sciences 41(4), 1993, §5):

- the pole ("gimbal lock") is the middle angle at ±90 degrees for Tait-Bryan
  sequences, 0 or 180 degrees for proper Euler sequences;
- the geodesic distance from a rotation to the nearest singular rotation equals how
  far the middle angle is from its pole (the middle angle is the angle between the
  first and the third turn axis, minus 90 degrees for Tait-Bryan, and the least turn
  that changes the angle between two unit vectors by ``d`` is a turn by ``d``);
- away from the pole every rotation has exactly two Euler triplets: for Tait-Bryan
  ``(a, b, c)`` and ``(a + pi, pi - b, c + pi)``, for proper Euler ``(a, b, c)`` and
  ``(a + pi, -b, c + pi)``; at the pole only ``first + third`` or only
  ``first - third`` is fixed (which one depends on the sequence, the pole and
  intrinsic/extrinsic; derived below in :func:`_fixed_sign`).

The Jacobian (angle rates -> angular velocity) is written column by column: each
column is the axis of one turn expressed in the frame asked for (derivation in
:func:`_jacobian_of_euler_matrix`).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from ..core import rotation as rot
from ..core.checks import as_numbers, checked_matrix
from ..core.convention import Convention
from ..core.errors import PoseInputError
from ..core.reading import as_convention, read_rotation, write_rotation

__all__ = [
    "FRAMES",
    "DEFAULT_POLE_TOLERANCE",
    "LockGauge",
    "Sensitivity",
    "EulerSolutions",
    "PoleAnalysis",
    "pole_distance",
    "euler_rate_jacobian",
    "lock_gauge",
    "readback_sensitivity",
    "euler_solutions",
    "pole_readout",
    "analyse_pole",
]

#: Frames the angular velocity can be expressed in: "body" = the child frame's own
#: (moving) axes, "space" = the parent frame's (fixed) axes.
FRAMES = ("body", "space")

#: Default pole tolerance in radians: a middle angle this close to its pole counts as at the pole.
DEFAULT_POLE_TOLERANCE = 1e-9


def _scale(conv: Convention) -> float:
    return np.pi / 180.0 if conv.degrees else 1.0


def _unit_word(conv: Convention) -> str:
    return "degrees" if conv.degrees else "radians"


def _fmt(x: float) -> str:
    return f"{float(x):.6g}"


@lru_cache(maxsize=None)
def _euler_matrix_is_transposed(conv: Convention) -> bool:
    """True when ``read_rotation(angles, "euler", conv)`` is the transpose of the plain Euler product.

    Found by asking the core, so this module never re-implements how ``action`` or
    ``direction`` act (a convention is applied only by read_rotation/write_rotation).
    """
    probe = np.array([0.3, 0.5, 0.7])  # radians, far from every pole
    plain = rot.matrix_of_euler(probe, conv.axes_letters, conv.intrinsic)
    read = read_rotation(probe / _scale(conv), "euler", conv)
    if np.allclose(read, plain, atol=1e-12):
        return False
    if np.allclose(read, plain.T, atol=1e-12):
        return True
    raise AssertionError(f"core reading of Euler angles is neither the Euler product nor its transpose for {conv}")


def _check_frame(frame, conv: Convention) -> str:
    if frame is None:
        return "body" if conv.intrinsic else "space"
    if frame not in FRAMES:
        raise PoseInputError(f"frame: got {frame!r}; accepted: 'body' (the child's own axes), "
                             "'space' (the parent's fixed axes), or None (body for intrinsic, space for extrinsic)")
    return frame


def _readback(rotation, conv: Convention, check: bool = True):
    """Canonical ``(..., 3, 3)`` -> (readback in the convention's unit (..., 3), radians (..., 3))."""
    m = checked_matrix(rotation) if check else np.asarray(rotation, dtype=np.float64)
    angles = write_rotation(m, "euler", conv, check=False)
    return m, angles, angles * _scale(conv)


def _distance_of_middle(middle_rad, conv: Convention):
    """Radians from the middle angle (as written by the core) to its nearest pole."""
    if conv.is_tait_bryan:
        return np.maximum(0.5 * np.pi - np.abs(middle_rad), 0.0)
    return np.maximum(np.minimum(middle_rad, np.pi - middle_rad), 0.0)


def _pole_middle(middle_rad, conv: Convention):
    """The nearest pole's middle angle in radians: ±pi/2 (Tait-Bryan), 0 or pi (proper Euler)."""
    if conv.is_tait_bryan:
        return np.where(middle_rad >= 0, 0.5 * np.pi, -0.5 * np.pi)
    return np.where(middle_rad <= 0.5 * np.pi, 0.0, np.pi)


def pole_distance(rotation, convention=None) -> np.ndarray:
    """Angular distance from rotations to the nearest gimbal-lock pole of the convention.

    ``rotation (..., 3, 3)`` canonical -> ``(...)`` in the convention's unit.  This is
    both how far the middle Euler angle is from its pole and the geodesic distance to
    the nearest rotation where the convention locks (see the module notes).

    >>> R = read_rotation([10, 80, 20], "euler", "unit=degrees")
    >>> round(float(pole_distance(R, "unit=degrees")), 9)
    10.0
    """
    conv = as_convention(convention)
    _, _, rad = _readback(rotation, conv)
    return _distance_of_middle(rad[..., 1], conv) / _scale(conv)


def _unit_axis(i: int) -> np.ndarray:
    e = np.zeros(3)
    e[i] = 1.0
    return e


def _jacobian_of_euler_matrix(rad, sequence: str, intrinsic: bool):
    """(space, body) Jacobians of the plain Euler product ``M`` for radian angles ``(..., 3)``.

    ``omega_space`` is defined by ``dM/dt M^T = [omega_space]x`` and ``omega_body`` by
    ``M^T dM/dt = [omega_body]x`` (common practice).  With ``d/da Rp(a) = [e_p]x Rp(a)``:

    - intrinsic, ``M = Rp(a) Rq(b) Rr(c)``:
      space columns ``e_p, Rp(a) e_q, Rp(a) Rq(b) e_r``;
      body columns ``Rr(c)^T Rq(b)^T e_p, Rr(c)^T e_q, e_r``;
    - extrinsic, ``M = Rr(c) Rq(b) Rp(a)``:
      space columns ``Rr(c) Rq(b) e_p, Rr(c) e_q, e_r``;
      body columns ``e_p, Rp(a)^T e_q, Rp(a)^T Rq(b)^T e_r``.
    """
    p, q, r = sequence
    ep, eq, er = (_unit_axis(rot.AXIS_INDEX[x]) for x in sequence)
    Ra = rot.elementary_matrix(p, rad[..., 0])
    Rb = rot.elementary_matrix(q, rad[..., 1])
    Rc = rot.elementary_matrix(r, rad[..., 2])
    lead = rad.shape[:-1]
    space = np.empty(lead + (3, 3))
    body = np.empty(lead + (3, 3))
    T = lambda m: np.swapaxes(m, -1, -2)  # noqa: E731
    if intrinsic:
        space[..., :, 0] = ep
        space[..., :, 1] = Ra @ eq
        space[..., :, 2] = (Ra @ Rb) @ er
        body[..., :, 0] = (T(Rc) @ T(Rb)) @ ep
        body[..., :, 1] = T(Rc) @ eq
        body[..., :, 2] = er
    else:
        space[..., :, 0] = (Rc @ Rb) @ ep
        space[..., :, 1] = Rc @ eq
        space[..., :, 2] = er
        body[..., :, 0] = ep
        body[..., :, 1] = T(Ra) @ eq
        body[..., :, 2] = (T(Ra) @ T(Rb)) @ er
    return space, body


def euler_rate_jacobian(angles, convention=None, frame: str | None = None) -> np.ndarray:
    """Jacobian from Euler angle rates to the angular velocity of the child frame relative to the parent.

    ``angles (..., 3)`` in the convention's unit -> ``J (..., 3, 3)`` with
    ``omega = J @ d(angles)/dt``; ``omega`` in radians per unit time, the rates in the
    convention's unit per unit time.  ``omega`` is the angular velocity of the
    rotation ``R = read_rotation(angles, "euler", convention)``:
    ``frame="space"`` gives it in the parent's fixed axes (``dR/dt R^T = [omega]x``),
    ``frame="body"`` in the child's own axes (``R^T dR/dt = [omega]x``).  The default
    ``frame=None`` is **body for intrinsic** conventions (the turns are about the
    moving axes) and **space for extrinsic** ones (about the fixed axes).  Each
    column is then one turn axis; the singular values are the same in both frames.

    >>> J = euler_rate_jacobian([0.0, 0.0, 0.0], "sequence=z-y-x")   # body: columns z, y, x
    >>> J.round(12).tolist()
    [[0.0, 0.0, 1.0], [0.0, 1.0, 0.0], [1.0, 0.0, 0.0]]
    """
    conv = as_convention(convention)
    frame = _check_frame(frame, conv)
    scale = _scale(conv)
    rad = as_numbers(angles, "Euler angles", (3,)) * scale
    space, body = _jacobian_of_euler_matrix(rad, conv.axes_letters, conv.intrinsic)
    if _euler_matrix_is_transposed(conv):
        # R = M^T: dR/dt R^T = (M^T dM/dt)^T = -[omega_body(M)]x, R^T dR/dt = -[omega_space(M)]x.
        space, body = -body, -space
    return (space if frame == "space" else body) * scale


@dataclass(frozen=True)
class LockGauge:
    """How close a convention is to locking: singular values of the rate Jacobian.

    ``angles (..., 3)`` the readback in the convention's unit; ``jacobian (..., 3, 3)``
    maps rates in radians per unit time to angular velocity in ``frame`` (the gauge is
    unit-free); ``singular_values (..., 3)`` descending; ``gauge (...)`` the smallest
    singular value, 0 at the pole and 1 as far from it as the convention allows
    (Tait-Bryan: ``sqrt(1 - |sin middle|)``; proper Euler: ``sqrt(1 - |cos middle|)``);
    ``condition (...)`` largest / smallest singular value, infinite at the pole.
    """

    convention: Convention
    frame: str
    angles: np.ndarray
    jacobian: np.ndarray
    singular_values: np.ndarray
    gauge: np.ndarray
    condition: np.ndarray

    def summary(self) -> str:
        g = np.asarray(self.gauge)
        worst = float(np.min(g))
        text = (f"lock gauge (smallest singular value of the angle-rate Jacobian, {self.frame} frame) "
                f"is {_fmt(worst)}" + (" at its lowest" if g.ndim else ""))
        cond = float(np.max(self.condition))
        text += f"; condition number {'infinite' if not np.isfinite(cond) else _fmt(cond)}"
        if worst < 1e-6:
            text += "; at the pole the three angle rates can no longer produce every angular velocity"
        return text


def lock_gauge(rotation, convention=None, frame: str | None = None) -> LockGauge:
    """Lock gauge of rotations ``(..., 3, 3)`` under a convention -> :class:`LockGauge`.

    The Jacobian is taken at the readback angles (:func:`euler_rate_jacobian`, in
    radians); ``frame`` as there (default body for intrinsic, space for extrinsic).

    >>> g = lock_gauge(read_rotation([0, 90, 0], "euler", "unit=degrees"), "unit=degrees")
    >>> bool(g.gauge < 1e-12)
    True
    """
    conv = as_convention(convention)
    frame = _check_frame(frame, conv)
    _, angles, _ = _readback(rotation, conv)
    return _gauge_of_readback(conv, frame, angles)


def _gauge_of_readback(conv: Convention, frame: str, angles) -> LockGauge:
    jac = euler_rate_jacobian(angles, conv, frame) / _scale(conv)
    sv = np.linalg.svd(jac, compute_uv=False)
    smallest = sv[..., 2]
    cond = np.divide(sv[..., 0], smallest, out=np.full(smallest.shape, np.inf), where=smallest > 0)
    return LockGauge(conv, frame, angles, jac, sv, smallest, cond)


@dataclass(frozen=True)
class Sensitivity:
    """How far the Euler readback moves per radian of a tiny turn of the rotation.

    Both figures are radians of readback (Euclidean norm over the three angles, outer
    angles compared modulo a full turn) per radian of turn, whatever the convention's
    unit.  ``predicted (...)`` is ``1 / gauge`` (the largest singular value of the
    inverse Jacobian; infinite at the pole); ``measured (...)`` is the largest change
    seen over turns of ``step`` radians about the parent's ±x, ±y, ±z axes and about
    ±the direction the Jacobian is weakest in.  Near the pole the readback jumps, so
    ``measured`` grows towards ``pi / step``.
    """

    convention: Convention
    step: float
    predicted: np.ndarray
    measured: np.ndarray

    def summary(self) -> str:
        p, m = float(np.max(self.predicted)), float(np.max(self.measured))
        words = f"{'infinite' if not np.isfinite(p) else _fmt(p)} (predicted, 1/gauge)"
        text = (f"a turn of {self.step:g} rad moves the Euler readback by up to {_fmt(m)} rad per rad "
                f"(measured); {words}")
        if m * self.step > 0.1:
            text += "; the readback jumps here: the angles are not a continuous function of the rotation near the pole"
        return text


def _skew(v):
    out = np.zeros(v.shape[:-1] + (3, 3))
    out[..., 0, 1], out[..., 0, 2] = -v[..., 2], v[..., 1]
    out[..., 1, 0], out[..., 1, 2] = v[..., 2], -v[..., 0]
    out[..., 2, 0], out[..., 2, 1] = -v[..., 1], v[..., 0]
    return out


def readback_sensitivity(rotation, convention=None, step: float = 1e-6) -> Sensitivity:
    """Sensitivity of the Euler readback of rotations ``(..., 3, 3)`` -> :class:`Sensitivity`.

    >>> s = readback_sensitivity(read_rotation([0, 60, 0], "euler", "unit=degrees"), "unit=degrees")
    >>> bool(abs(s.measured - s.predicted) < 1e-3 * s.predicted)
    True
    """
    conv = as_convention(convention)
    if not (isinstance(step, (int, float)) and 0 < step < 0.1):
        raise PoseInputError(f"step: got {step!r}; expected a small positive number of radians (below 0.1)")
    m, angles, rad = _readback(rotation, conv)
    gauge = lock_gauge(m, conv, "space")
    _, _, vt = np.linalg.svd(np.swapaxes(gauge.jacobian, -1, -2))  # rows of vt: left singular vectors of J
    weak = vt[..., 2, :]
    dirs = np.concatenate([np.broadcast_to(np.vstack([np.eye(3), -np.eye(3)]), m.shape[:-2] + (6, 3)),
                           weak[..., None, :], -weak[..., None, :]], axis=-2)
    turns = rot.matrix_of_quaternion(rot.quaternion_of_rotvec(dirs * step))  # canonical turns, radians
    moved = turns @ m[..., None, :, :]
    _, _, rad2 = _readback(moved, conv)
    d = rad2 - rad[..., None, :]
    d = rot.wrap_signed(d)
    measured = np.max(np.sqrt(np.sum(d * d, axis=-1)), axis=-1) / step
    predicted = np.divide(1.0, gauge.gauge, out=np.full(gauge.gauge.shape, np.inf), where=gauge.gauge > 0)
    return Sensitivity(conv, float(step), predicted, measured)


def _fixed_sign(conv: Convention, pole_rad):
    """+1 where only first + third is fixed at the pole, -1 where only first - third is.

    Intrinsic ``Rp(a) Rq(b0) Rr(c)``: ``Rq(b0) Rr(c) Rq(b0)^T`` is a turn by ``c``
    about ``Rq(b0) e_r = s e_p``, so the product is ``Rp(a + s c) Rq(b0)`` with
    ``s = e_p . Rq(b0) e_r``.  Extrinsic ``Rr(c) Rq(b0) Rp(a) = Rr(c + s a) Rq(b0)``
    with ``s = e_r . Rq(b0) e_p``.  (Derived; checked for all sequences in the tests
    by rebuilding every family member.)
    """
    p, q, r = conv.axes_letters
    ep, er = _unit_axis(rot.AXIS_INDEX[p]), _unit_axis(rot.AXIS_INDEX[r])
    Rq = rot.elementary_matrix(q, pole_rad)
    if conv.intrinsic:
        s = np.einsum("i,...ij,j->...", ep, Rq, er)
    else:
        s = np.einsum("i,...ij,j->...", er, Rq, ep)
    return np.where(s >= 0, 1, -1).astype(np.int8)


def _wrap_outer(rad, conv: Convention):
    return conv.wrapped(rad)


_wrap_signed = rot.wrap_signed


@dataclass(frozen=True)
class EulerSolutions:
    """Every Euler triplet of rotations ``(...)`` under one convention (all angles in its unit).

    - ``angles (..., 3)``: the readback (what ``write_rotation`` writes);
    - ``distance (...)``: distance to the nearest pole; ``pole_middle (...)`` that pole's middle angle;
    - ``tolerance``: a middle angle within this of its pole counts as at the pole;
    - ``at_pole (...)`` bool;
    - ``regular (..., 2, 3)``: the two regular triplets (at the pole both are members
      of the family; within the tolerance they reproduce the rotation to about ``distance``);
    - ``fixed_sign (...)``: +1 where only ``first + third`` is fixed at the nearest pole,
      -1 where only ``first - third`` is;
    - ``fixed_value (...)``: that sum or difference (wrapped like an outer angle); NaN away from the pole;
    - ``family_first (S,)``: the sampled values of the free first angle;
    - ``family (..., S, 3)``: members ``(first, pole_middle, third)`` with the fixed
      combination held; NaN away from the pole.
    """

    convention: Convention
    angles: np.ndarray
    distance: np.ndarray
    pole_middle: np.ndarray
    tolerance: float
    at_pole: np.ndarray
    regular: np.ndarray
    fixed_sign: np.ndarray
    fixed_value: np.ndarray
    family_first: np.ndarray
    family: np.ndarray

    def words(self, index=()) -> str:
        """One rotation's solutions in words; ``index`` picks it from a batch (a tuple of ints)."""
        unit = _unit_word(self.convention)
        idx = tuple(index) if isinstance(index, tuple) else (index,)
        a = np.asarray(self.angles)[idx]
        fmt3 = lambda t: "(" + ", ".join(_fmt(v) for v in t) + ")"  # noqa: E731
        if not bool(np.asarray(self.at_pole)[idx]):
            reg = np.asarray(self.regular)[idx]
            return (f"{_fmt(np.asarray(self.distance)[idx])} {unit} from the pole (tolerance {_fmt(self.tolerance)} "
                    f"{unit}): exactly two Euler triplets give this orientation, {fmt3(reg[0])} and {fmt3(reg[1])} "
                    f"{unit}")
        s = int(np.asarray(self.fixed_sign)[idx])
        k = float(np.asarray(self.fixed_value)[idx])
        b0 = float(np.asarray(self.pole_middle)[idx])
        combo = "first + third" if s > 0 else "first - third"
        rule = f"third = {_fmt(k)} - first" if s > 0 else f"third = first - {_fmt(k)}"
        return (f"at the pole (middle angle {_fmt(b0)} {unit}; readback {fmt3(a)} is "
                f"{_fmt(np.asarray(self.distance)[idx])} {unit} from it, tolerance {_fmt(self.tolerance)} {unit}): "
                f"only {combo} is fixed, {combo} = {_fmt(k)} {unit}; every (first, {_fmt(b0)}, third) with "
                f"{rule} gives the same orientation (up to wrapping by a full turn)")

    def summary(self) -> str:
        at = np.asarray(self.at_pole)
        if at.ndim == 0:
            return self.words()
        n, k = at.size, int(np.count_nonzero(at))
        text = f"{n} rotations, {k} at the pole (tolerance {_fmt(self.tolerance)} {_unit_word(self.convention)})"
        if k:
            first = tuple(int(i) for i in np.argwhere(at)[0])
            text += f"; first at index {first}: " + self.words(first)
        return text


def euler_solutions(rotation, convention=None, tolerance: float | None = None, samples: int = 73) -> EulerSolutions:
    """All Euler solutions of rotations ``(..., 3, 3)`` -> :class:`EulerSolutions`.

    ``tolerance`` in the convention's unit (default 1e-9 radians, expressed in the
    unit); ``samples`` members of each pole family, the free first angle spread evenly
    over one full turn of the outer range.

    >>> conv = "unit=degrees"
    >>> sol = euler_solutions(read_rotation([30, 90, 10], "euler", conv), conv)
    >>> print(sol.words())  # doctest: +ELLIPSIS
    at the pole (middle angle 90 degrees; ...): only first - third is fixed, first - third = 20 degrees; ...
    """
    conv = as_convention(convention)
    scale = _scale(conv)
    if tolerance is None:
        tolerance = DEFAULT_POLE_TOLERANCE / scale
    if not (isinstance(tolerance, (int, float)) and np.isfinite(tolerance) and tolerance >= 0):
        raise PoseInputError(f"tolerance: got {tolerance!r}; expected a finite number >= 0 in "
                             f"{_unit_word(conv)}")
    if not (isinstance(samples, (int, np.integer)) and samples >= 2):
        raise PoseInputError(f"samples: got {samples!r}; expected an integer >= 2")
    _, angles, rad = _readback(rotation, conv)
    return _solutions_of_readback(conv, angles, rad, tolerance, samples)


def _wrap_outer_one(x: float, conv: Convention) -> float:
    """:func:`_wrap_outer` of one float, with the same operations (Python's % is numpy's remainder)."""
    out = (x + np.pi) % (2 * np.pi) - np.pi
    if out <= -np.pi:
        out += 2 * np.pi
    if conv.wrap == "positive":
        out = out % (2 * np.pi)
        if out >= 2 * np.pi:
            out = 0.0
    return out


def _solutions_of_one(conv: Convention, angles, rad, tolerance: float, samples: int) -> EulerSolutions:
    """:func:`_solutions_of_readback` for a single rotation, on floats: the same numbers, fewer numpy calls."""
    scale = _scale(conv)
    a, b, c = (float(v) for v in rad)
    if conv.is_tait_bryan:
        dist = max(0.5 * np.pi - abs(b), 0.0)
        b0 = 0.5 * np.pi if b >= 0 else -0.5 * np.pi
        second_middle = (np.pi - b + np.pi) % (2 * np.pi) - np.pi
        if second_middle <= -np.pi:
            second_middle += 2 * np.pi
    else:
        dist = max(min(b, np.pi - b), 0.0)
        b0 = 0.0 if b <= 0.5 * np.pi else np.pi
        second_middle = -b
    at = dist <= tolerance * scale
    regular = np.array([[_wrap_outer_one(a, conv), b, _wrap_outer_one(c, conv)],
                        [_wrap_outer_one(a + np.pi, conv), second_middle, _wrap_outer_one(c + np.pi, conv)]])
    s = _fixed_sign(conv, np.float64(b0))
    k = _wrap_outer_one(a + int(s) * c, conv)
    start = 0.0 if conv.wrap == "positive" else -np.pi
    free = start + 2 * np.pi * (np.arange(samples) + (0 if conv.wrap == "positive" else 1)) / samples
    if at:
        third = _wrap_outer(s * (k - free), conv)
        fam = np.stack([free, np.full(samples, b0), third], axis=-1) / scale
    else:
        fam = np.full((samples, 3), np.nan)
    return EulerSolutions(conv, angles, np.float64(dist) / scale, np.float64(b0) / scale, float(tolerance),
                          np.bool_(at), regular / scale, s, np.array(k / scale if at else np.nan),
                          free / scale, fam)


def _solutions_of_readback(conv: Convention, angles, rad, tolerance: float, samples: int) -> EulerSolutions:
    if rad.shape == (3,):
        return _solutions_of_one(conv, angles, rad, tolerance, samples)
    return _solutions_of_batch(conv, angles, rad, tolerance, samples)


def _solutions_of_batch(conv: Convention, angles, rad, tolerance: float, samples: int) -> EulerSolutions:
    scale = _scale(conv)
    a, b, c = rad[..., 0], rad[..., 1], rad[..., 2]
    dist = _distance_of_middle(b, conv)
    b0 = _pole_middle(b, conv)
    at = dist <= tolerance * scale
    second_middle = _wrap_signed(np.pi - b) if conv.is_tait_bryan else -b
    wa, wc, wa2, wc2 = _wrap_outer(np.stack([a, c, a + np.pi, c + np.pi]), conv)  # one pass, same numbers
    regular = np.stack([wa, b, wc, wa2, second_middle, wc2], axis=-1).reshape(b.shape + (2, 3))
    s = _fixed_sign(conv, b0)
    k = _wrap_outer(a + s * c, conv)
    start = 0.0 if conv.wrap == "positive" else -np.pi
    free = start + 2 * np.pi * (np.arange(samples) + (0 if conv.wrap == "positive" else 1)) / samples
    third = _wrap_outer(s[..., None] * (k[..., None] - free), conv)
    fam = np.stack(np.broadcast_arrays(free, b0[..., None], third), axis=-1)
    fam = np.where(at[..., None, None], fam, np.nan)
    return EulerSolutions(conv, angles, dist / scale, b0 / scale, float(tolerance), at, regular / scale, s,
                          np.where(at, k / scale, np.nan), free / scale, fam / scale)


def pole_readout(rotation, convention=None, frame: str | None = None, samples: int = 73, *, check: bool = True):
    """``(euler_solutions(R, c), lock_gauge(R, c, frame))`` of rotations ``(..., 3, 3)`` from one readback.

    The same two results as the separate calls (same defaults), for callers that show
    both on every update (the explorer's readouts): the rotation is checked and the
    Euler readback written once instead of twice.  ``check=False`` skips checking a
    rotation that posekit's core has just computed (as in ``write_rotation``).

    >>> sol, gauge = pole_readout(read_rotation([0, 90, 0], "euler", "unit=degrees"), "unit=degrees")
    >>> bool(sol.at_pole), bool(gauge.gauge < 1e-12)
    (True, True)
    """
    conv = as_convention(convention)
    frame = _check_frame(frame, conv)
    if not (isinstance(samples, (int, np.integer)) and samples >= 2):
        raise PoseInputError(f"samples: got {samples!r}; expected an integer >= 2")
    _, angles, rad = _readback(rotation, conv, check)
    return (_solutions_of_readback(conv, angles, rad, DEFAULT_POLE_TOLERANCE / _scale(conv), samples),
            _gauge_of_readback(conv, frame, angles))


@dataclass(frozen=True)
class PoleAnalysis:
    """Everything about one batch of rotations and the pole: distance, gauge, sensitivity, solutions."""

    convention: Convention
    distance: np.ndarray
    gauge: LockGauge
    sensitivity: Sensitivity
    solutions: EulerSolutions

    def summary(self) -> str:
        unit = _unit_word(self.convention)
        return "; ".join([f"convention: {self.convention.describe_euler()}",
                          f"nearest pole {_fmt(np.min(self.distance))} {unit} away",
                          self.gauge.summary(), self.sensitivity.summary(), self.solutions.summary()])


def analyse_pole(rotation, convention=None, *, frame: str | None = None, tolerance: float | None = None,
                 samples: int = 73, step: float = 1e-6) -> PoleAnalysis:
    """Distance, lock gauge, sensitivity and all solutions of rotations ``(..., 3, 3)`` -> :class:`PoleAnalysis`.

    >>> conv = "sequence=z-y-x unit=degrees"
    >>> print(analyse_pole(read_rotation([40, 89, 5], "euler", conv), conv).summary())  # doctest: +ELLIPSIS
    convention: turn the first angle about z, ...; nearest pole 1 degrees away; ...
    """
    conv = as_convention(convention)
    m = checked_matrix(rotation)
    return PoleAnalysis(conv, pole_distance(m, conv), lock_gauge(m, conv, frame),
                        readback_sensitivity(m, conv, step), euler_solutions(m, conv, tolerance, samples))
