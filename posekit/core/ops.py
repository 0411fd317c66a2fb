"""Operations on canonical rotation matrices: compose, invert, turn vectors, distance, slerp.

All inputs are canonical matrices ``(..., 3, 3)`` (see :mod:`posekit.core.rotation`);
read user numbers first with :func:`posekit.read_rotation`.
"""

from __future__ import annotations

import numpy as np

from . import compiled, rotation as rot
from .checks import (ORTHONORMAL_TOLERANCE, _gram_and_det_block, as_numbers, checked_matrix, common_batch,
                     raise_unless_rotation, require_finite, require_magnitude, require_representable_angles)
from .errors import WrongTypeError

__all__ = ["compose", "invert", "turn_vectors", "angle_between", "slerp"]


def compose(*rotations) -> np.ndarray:
    """Product ``R1 @ R2 @ ...`` of ``(..., 3, 3)`` rotations (broadcast) -> ``(..., 3, 3)``.

    With parent-from-child matrices, ``compose(world_from_base, base_from_camera)``
    is ``world_from_camera``.

    >>> from posekit.core.rotation import elementary_matrix as E
    >>> bool(np.allclose(compose(E("z", 0.3), E("z", 0.4)), E("z", 0.7)))
    True
    """
    if not rotations:
        raise WrongTypeError("compose(): got no rotations; expected at least one rotation matrix (..., 3, 3)")
    # each factor is checked once: by a compiled loop's fused check, or by checked_matrix
    out = as_numbers(rotations[0], "rotation matrix", (3, 3), finite=False)
    checked = False
    for i, r in enumerate(rotations[1:], start=2):
        r = as_numbers(r, "rotation matrix", (3, 3), finite=False)
        common_batch("compose", (f"the product of rotations 1 to {i - 1}" if i > 2 else "rotation 1", out.shape, 2),
                     (f"rotation {i}", r.shape, 2))
        loops = compiled.loops_for(r.size // 9) if r.shape == out.shape else None
        if loops is None:
            out = (out if checked else checked_matrix(out)) @ checked_matrix(r)
            checked = True
            continue
        # one compiled pass checks both factors (as checked_matrix does) and multiplies them
        a, b = np.ascontiguousarray(out).reshape(-1, 9), np.ascontiguousarray(r).reshape(-1, 9)
        product = np.empty_like(a)
        if sum(compiled.over_rows(loops.compose, (a, b, product), ORTHONORMAL_TOLERANCE)):
            checked_matrix(out), checked_matrix(r)  # raises the typed error with its message
        out, checked = product.reshape(r.shape), True
    return out if checked else checked_matrix(out)


def invert(rotation) -> np.ndarray:
    """Inverse of rotations, i.e. the transpose: ``(..., 3, 3) -> (..., 3, 3)``."""
    return np.ascontiguousarray(np.swapaxes(checked_matrix(rotation), -1, -2))


def turn_vectors(rotation, vectors) -> np.ndarray:
    """Apply rotations to vectors: ``R (..., 3, 3)``, ``v (..., 3)`` -> ``R v (..., 3)`` (broadcast).

    >>> from posekit.core.rotation import elementary_matrix as E
    >>> np.round(turn_vectors(E("z", np.pi / 2), [1, 0, 0]), 12).tolist()
    [0.0, 1.0, 0.0]
    """
    r = as_numbers(rotation, "rotation matrix", (3, 3), finite=False)  # checked below, or by the loop
    v = as_numbers(vectors, "vectors", (3,))
    require_magnitude(v, "vectors")
    if r.shape[:-2] != v.shape[:-1]:
        common_batch("turn_vectors", ("rotation", r.shape, 2), ("vectors", v.shape, 1))
        return np.matmul(checked_matrix(r), v[..., None])[..., 0]
    # one pass checks the matrices (as checked_matrix does) and turns the vectors
    flat_r, lead = rot._rows(r, 9)
    flat_v, _ = rot._rows(v, 3)
    loops = compiled.loops_for(flat_r.shape[0])
    if loops is not None:
        out = np.empty_like(flat_v)
        if sum(compiled.over_rows(loops.turn, (flat_r, flat_v, out), ORTHONORMAL_TOLERANCE)):
            checked_matrix(r)  # raises the typed error with its message
        return out.reshape(lead + (3,))
    require_finite(r, "rotation matrix")
    res = rot._blocked(_check_and_turn_block, 5, flat_r, flat_v)
    raise_unless_rotation(r, res[:, 3].reshape(lead), res[:, 4].reshape(lead))
    return np.ascontiguousarray(res[:, :3]).reshape(lead + (3,))


def _check_and_turn_block(out, m, v):
    _gram_and_det_block(out[:, 3:], m)
    m00, m01, m02, m10, m11, m12, m20, m21, m22 = m.T.copy()  # entry-major: contiguous operands
    x, y, z = v.T.copy()
    out[:, 0] = m00 * x + m01 * y + m02 * z
    out[:, 1] = m10 * x + m11 * y + m12 * z
    out[:, 2] = m20 * x + m21 * y + m22 * z


def angle_between(a, b) -> np.ndarray:
    """Geodesic angle in radians ``[0, pi]`` between rotations ``(..., 3, 3)`` -> ``(...)``.

    Computed through quaternions with an atan2 form, accurate near 0 and near pi
    (``acos((trace(A^T B) - 1) / 2)`` loses half the digits there; common practice).
    """
    ma, mb = checked_matrix(a), checked_matrix(b)
    common_batch("angle_between", ("a", ma.shape, 2), ("b", mb.shape, 2))
    return rot.angle_between_quaternions(rot.quaternion_of_matrix(ma), rot.quaternion_of_matrix(mb))


def slerp(a, b, t) -> np.ndarray:
    """Rotation a fraction ``t`` of the way from ``a`` to ``b`` along the shortest arc.

    ``a, b (..., 3, 3)``, ``t (...)`` -> ``(..., 3, 3)`` (Shoemake 1985); the batch shapes of
    ``a``, ``b`` and ``t`` broadcast.  ``t`` may lie outside [0, 1] to extrapolate, as long as
    the extrapolated angle (up to ``pi |t|``) stays representable to ``ANGLE_TOLERANCE``.

    >>> from posekit.core.rotation import elementary_matrix as E
    >>> bool(np.allclose(slerp(np.eye(3), E("z", np.pi / 2), 0.5), E("z", np.pi / 4)))
    True
    """
    ma, mb = checked_matrix(a), checked_matrix(b)
    t = checked_fraction(t, "t")
    common_batch("slerp", ("a", ma.shape, 2), ("b", mb.shape, 2), ("t", t.shape, 0))
    qa = rot.quaternion_of_matrix(ma)
    qb = rot.quaternion_of_matrix(mb)
    return rot.matrix_of_quaternion(rot.slerp_quaternions(qa, qb, t))


def checked_fraction(t, name: str = "t") -> np.ndarray:
    """An interpolation parameter ``t (...)`` as float64: real, finite, and small enough that
    ``pi |t|`` (the largest angle it can turn) is representable to ``ANGLE_TOLERANCE``."""
    t = as_numbers(t, name, None)
    require_representable_angles(t, name, scale=np.pi, unit="",
                                 advice=f"{name} scales a turn of up to pi radians; extrapolate less far")
    return t
