"""Canonical rotation math: one internal convention, every representation.

Inside posekit a rotation is always the **active** rotation that turns the parent
frame's axes onto the child frame's axes, so that the matrix maps child coordinates
to parent coordinates (``p_parent = R @ p_child``).  Quaternions are Hamilton
(``ij = k``) and scalar-first ``(w, x, y, z)``, with ``R(p ⊗ q) = R(p) R(q)``.
Angles are radians.  Everything a user types is translated into this one form by
:mod:`posekit.core.reading`, which knows the :class:`~posekit.core.convention.Convention`.

Every function broadcasts over leading axes and works on float64 arrays with no
Python loop per element.

Sources:
- Elementary rotations and the right-hand rule: common practice.
- Hamilton product: Hamilton's relations i^2 = j^2 = k^2 = ijk = -1 (1843).
- Quaternion -> matrix: Shuster, "A Survey of Attitude Representations",
  J. Astronautical Sciences 41(4), 1993 (written here for the Hamilton, active form).
- Matrix -> quaternion: Shepperd, J. Guidance and Control 1(3), 1978: take the
  largest of (trace, R00, R11, R22) to choose a well-conditioned branch.
- Quaternion -> Euler angles, any of the 12 sequences: Bernardes & Viollet,
  "Quaternion to Euler angles conversion: a direct, general and computationally
  efficient method", PLoS ONE 17(11), 2022.
- Rodrigues' formula (1840) for rotation vectors, evaluated through the quaternion.
- Slerp: Shoemake, SIGGRAPH 1985.
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "AXIS_INDEX",
    "SEQUENCES",
    "TAIT_BRYAN",
    "PROPER_EULER",
    "hamilton_product",
    "conjugate",
    "matrix_of_quaternion",
    "quaternion_of_matrix",
    "matrix_of_euler",
    "quaternion_of_euler",
    "euler_of_quaternion",
    "euler_of_matrix",
    "quaternion_of_rotvec",
    "rotvec_of_quaternion",
    "elementary_matrix",
    "angle_between_quaternions",
    "slerp_quaternions",
    "canonical_sign",
]

AXIS_INDEX = {"x": 0, "y": 1, "z": 2}
TAIT_BRYAN = ("xyz", "xzy", "yxz", "yzx", "zxy", "zyx")
PROPER_EULER = ("xyx", "xzx", "yxy", "yzy", "zxz", "zyz")
SEQUENCES = TAIT_BRYAN + PROPER_EULER

#: Below this, the middle angle is taken as exactly at the pole and the third listed
#: angle is set to 0 (orientation error of that choice stays under ~1e-13 rad).
POLE_SNAP = 1e-14


def _split(q):
    return q[..., 0], q[..., 1], q[..., 2], q[..., 3]


def hamilton_product(p, q):
    """Hamilton product ``p ⊗ q`` of ``(..., 4)`` scalar-first quaternions -> ``(..., 4)``.

    >>> hamilton_product([0, 1, 0, 0], [0, 0, 1, 0]).tolist()  # i j = k
    [0.0, 0.0, 0.0, 1.0]
    """
    p = np.asarray(p, dtype=np.float64)
    q = np.asarray(q, dtype=np.float64)
    pw, px, py, pz = _split(p)
    qw, qx, qy, qz = _split(q)
    shape = np.broadcast_shapes(p.shape, q.shape)
    out = np.empty(shape, dtype=np.float64)
    out[..., 0] = pw * qw - px * qx - py * qy - pz * qz
    out[..., 1] = pw * qx + px * qw + py * qz - pz * qy
    out[..., 2] = pw * qy - px * qz + py * qw + pz * qx
    out[..., 3] = pw * qz + px * qy - py * qx + pz * qw
    return out


def conjugate(q):
    """Quaternion conjugate ``(w, -x, -y, -z)``, ``(..., 4) -> (..., 4)``; the inverse of a unit quaternion."""
    q = np.array(q, dtype=np.float64, copy=True)
    q[..., 1:] *= -1.0
    return q


def canonical_sign(q):
    """Flip ``q`` to ``-q`` where ``w < 0`` so ``w >= 0`` (same rotation, double cover). ``(..., 4)``."""
    q = np.asarray(q, dtype=np.float64)
    return np.where(q[..., :1] < 0, -q, q)


def matrix_of_quaternion(q):
    """Active rotation matrix of unit Hamilton quaternions: ``(..., 4) -> (..., 3, 3)``.

    ``R v`` equals the vector part of ``q ⊗ (0, v) ⊗ q*`` (Shuster 1993, Hamilton form).

    >>> np.round(matrix_of_quaternion([np.cos(np.pi/4), 0, 0, np.sin(np.pi/4)]), 12).tolist()
    [[0.0, -1.0, 0.0], [1.0, 0.0, 0.0], [0.0, 0.0, 1.0]]
    """
    q = np.asarray(q, dtype=np.float64)
    w, x, y, z = _split(q)
    out = np.empty(q.shape[:-1] + (3, 3), dtype=np.float64)
    xx, yy, zz = x * x, y * y, z * z
    xy, xz, yz = x * y, x * z, y * z
    wx, wy, wz = w * x, w * y, w * z
    out[..., 0, 0] = 1.0 - 2.0 * (yy + zz)
    out[..., 0, 1] = 2.0 * (xy - wz)
    out[..., 0, 2] = 2.0 * (xz + wy)
    out[..., 1, 0] = 2.0 * (xy + wz)
    out[..., 1, 1] = 1.0 - 2.0 * (xx + zz)
    out[..., 1, 2] = 2.0 * (yz - wx)
    out[..., 2, 0] = 2.0 * (xz - wy)
    out[..., 2, 1] = 2.0 * (yz + wx)
    out[..., 2, 2] = 1.0 - 2.0 * (xx + yy)
    return out


def quaternion_of_matrix(m):
    """Unit Hamilton quaternion with ``w >= 0`` of rotation matrices: ``(..., 3, 3) -> (..., 4)``.

    Shepperd's branch choice (1978): the largest of trace, R00, R11, R22 picks the
    component computed from a square root, so 180-degree turns (trace -1) are exact.
    """
    m = np.asarray(m, dtype=np.float64)
    lead = m.shape[:-2]
    f = m.reshape(-1, 9)
    m00, m01, m02, m10, m11, m12, m20, m21, m22 = (f[:, i] for i in range(9))
    tr = m00 + m11 + m22
    choice = np.argmax(np.stack([tr, m00, m11, m22]), axis=0)
    out = np.empty((f.shape[0], 4), dtype=np.float64)
    for k in range(4):
        idx = np.flatnonzero(choice == k)
        if idx.size == 0:
            continue
        a00, a11, a22 = m00[idx], m11[idx], m22[idx]
        s01, d01 = m01[idx] + m10[idx], m10[idx] - m01[idx]
        s02, d02 = m02[idx] + m20[idx], m02[idx] - m20[idx]
        s12, d12 = m12[idx] + m21[idx], m21[idx] - m12[idx]
        if k == 0:
            r = np.sqrt(np.maximum(1.0 + a00 + a11 + a22, 0.0))
            comps = (0.5 * r, d12, d02, d01)
        elif k == 1:
            r = np.sqrt(np.maximum(1.0 + a00 - a11 - a22, 0.0))
            comps = (d12, 0.5 * r, s01, s02)
        elif k == 2:
            r = np.sqrt(np.maximum(1.0 - a00 + a11 - a22, 0.0))
            comps = (d02, s01, 0.5 * r, s12)
        else:
            r = np.sqrt(np.maximum(1.0 - a00 - a11 + a22, 0.0))
            comps = (d01, s02, s12, 0.5 * r)
        inv = 0.5 / r
        for c in range(4):
            out[idx, c] = comps[c] if c == k else comps[c] * inv
    out /= np.sqrt(np.sum(out * out, axis=-1))[:, None]
    out = canonical_sign(out)
    return out.reshape(lead + (4,))


def _axes(sequence: str) -> tuple[int, int, int]:
    return tuple(AXIS_INDEX[c] for c in sequence)  # type: ignore[return-value]


def _elementary_quaternion(axis: int, angle):
    half = 0.5 * np.asarray(angle, dtype=np.float64)
    out = np.zeros(half.shape + (4,), dtype=np.float64)
    out[..., 0] = np.cos(half)
    out[..., 1 + axis] = np.sin(half)
    return out


def elementary_matrix(axis: str, angle):
    """Active elementary rotation about ``x``, ``y`` or ``z``: ``(...) -> (..., 3, 3)``.

    ``Rz(a) = [[cos a, -sin a, 0], [sin a, cos a, 0], [0, 0, 1]]`` (right-hand rule, common practice).
    """
    a = np.asarray(angle, dtype=np.float64)
    i = AXIS_INDEX[axis]
    j, k = (i + 1) % 3, (i + 2) % 3
    c, s = np.cos(a), np.sin(a)
    out = np.zeros(a.shape + (3, 3), dtype=np.float64)
    out[..., i, i] = 1.0
    out[..., j, j] = c
    out[..., k, k] = c
    out[..., k, j] = s
    out[..., j, k] = -s
    return out


def quaternion_of_euler(angles, sequence: str, intrinsic: bool):
    """Hamilton quaternion of Euler angles in radians: ``(..., 3) -> (..., 4)``.

    Intrinsic (a, b, c) about (p, q, r): ``R = Rp(a) Rq(b) Rr(c)``.
    Extrinsic (a, b, c) about fixed (p, q, r), applied in that order:
    ``R = Rr(c) Rq(b) Rp(a)`` (Craig, Introduction to Robotics, 3rd ed., §2.8, from memory).
    """
    angles = np.asarray(angles, dtype=np.float64)
    p, q, r = _axes(sequence)
    e1 = _elementary_quaternion(p, angles[..., 0])
    e2 = _elementary_quaternion(q, angles[..., 1])
    e3 = _elementary_quaternion(r, angles[..., 2])
    if intrinsic:
        return hamilton_product(hamilton_product(e1, e2), e3)
    return hamilton_product(hamilton_product(e3, e2), e1)


def matrix_of_euler(angles, sequence: str, intrinsic: bool):
    """Active rotation matrix of Euler angles in radians: ``(..., 3) -> (..., 3, 3)``.

    >>> R = matrix_of_euler([np.pi / 2, 0, 0], "zyx", intrinsic=True)
    >>> np.round(R @ [1, 0, 0], 12).tolist()
    [0.0, 1.0, 0.0]
    """
    return matrix_of_quaternion(quaternion_of_euler(angles, sequence, intrinsic))


def euler_of_quaternion(q, sequence: str, intrinsic: bool):
    """Euler angles (radians) of unit Hamilton quaternions, plus the distance to the pole.

    ``(..., 4) -> (angles (..., 3), pole_distance (...))``.  Outer angles are in
    (-pi, pi]; the middle angle is in [-pi/2, pi/2] for Tait-Bryan sequences and
    [0, pi] for proper Euler sequences.  ``pole_distance`` is how far (radians) the
    middle angle is from its singular value (±pi/2 Tait-Bryan; 0 or pi proper).

    At the pole only the sum or the difference of the outer angles is fixed; this
    function then returns the member whose **third listed angle is 0**, the first
    carrying the whole sum or difference.  The orientation is reproduced either way.
    Method: Bernardes & Viollet, PLoS ONE 17(11), 2022.
    """
    q = np.asarray(q, dtype=np.float64)
    seq = sequence if not intrinsic else sequence[::-1]
    i, j, k = _axes(seq)
    proper = i == k
    if proper:
        k = 3 - i - j
    eps = (i - j) * (j - k) * (k - i) / 2.0
    w = q[..., 0]
    qi, qj, qk = q[..., 1 + i], q[..., 1 + j], q[..., 1 + k]
    if proper:
        a, b, c, d = w, qi, qj, qk * eps
    else:
        a, b, c, d = w - qj, qi + qk * eps, qj + w, qk * eps - qi
    s_plus = np.hypot(a, b)
    s_minus = np.hypot(c, d)
    t2 = 2.0 * np.arctan2(s_minus, s_plus)
    tp = np.arctan2(b, a)
    tm = np.arctan2(d, c)
    t1 = tp - tm
    t3 = tp + tm
    # At a pole, put the whole sum/difference in the angle that is third in the
    # user's listing: t3 for extrinsic, t1 (reversed later) for intrinsic.
    at_zero = s_minus <= POLE_SNAP  # only t1 + t3 = 2 tp is fixed
    at_pi = s_plus <= POLE_SNAP  # only t3 - t1 = 2 tm is fixed
    if intrinsic:
        t3 = np.where(at_zero, 2.0 * tp, np.where(at_pi, 2.0 * tm, t3))
        t1 = np.where(at_zero | at_pi, 0.0, t1)
    else:
        t1 = np.where(at_zero, 2.0 * tp, np.where(at_pi, -2.0 * tm, t1))
        t3 = np.where(at_zero | at_pi, 0.0, t3)
    if not proper:
        t3 = eps * t3
        t2 = t2 - 0.5 * np.pi
        dist = 0.5 * np.pi - np.abs(t2)
    else:
        dist = np.minimum(t2, np.pi - t2)
    t1 = _wrap(t1)
    t3 = _wrap(t3)
    out = np.stack([t1, t2, t3], axis=-1)
    if intrinsic:
        out = out[..., ::-1]
    return np.ascontiguousarray(out), np.maximum(dist, 0.0)


def euler_of_matrix(m, sequence: str, intrinsic: bool):
    """Euler angles (radians) of rotation matrices: ``(..., 3, 3) -> ((..., 3), (...))``; see :func:`euler_of_quaternion`."""
    return euler_of_quaternion(quaternion_of_matrix(m), sequence, intrinsic)


def _wrap(a):
    """Wrap to (-pi, pi]."""
    a = np.asarray(a, dtype=np.float64)
    out = np.remainder(a + np.pi, 2.0 * np.pi) - np.pi
    return np.where(out <= -np.pi, out + 2.0 * np.pi, out)


def quaternion_of_rotvec(v):
    """Unit quaternion of rotation vectors (axis * angle, radians): ``(..., 3) -> (..., 4)``.

    Rodrigues (1840) through the half-angle; a Taylor series keeps tiny angles exact.
    """
    v = np.asarray(v, dtype=np.float64)
    theta = np.sqrt(np.sum(v * v, axis=-1))
    half = 0.5 * theta
    small = theta < 1e-4
    safe = np.where(small, 1.0, theta)
    # sin(theta/2)/theta, series 1/2 - theta^2/48 + theta^4/3840 for small angles
    scale = np.where(small, 0.5 - theta * theta / 48.0 + theta ** 4 / 3840.0, np.sin(half) / safe)
    out = np.empty(v.shape[:-1] + (4,), dtype=np.float64)
    out[..., 0] = np.cos(half)
    out[..., 1:] = v * scale[..., None]
    return out


def rotvec_of_quaternion(q):
    """Rotation vector (axis * angle, angle in [0, pi]) of unit quaternions: ``(..., 4) -> (..., 3)``."""
    q = canonical_sign(q)
    w = q[..., 0]
    vn = np.sqrt(np.sum(q[..., 1:] ** 2, axis=-1))
    theta = 2.0 * np.arctan2(vn, w)
    small = vn < 1e-8
    safe = np.where(small, 1.0, vn)
    # theta / sin(theta/2), with sin(theta/2) = vn; series 2/w (1 + vn^2/(6 w^2)) near 0
    scale = np.where(small, 2.0 / np.where(w == 0, 1.0, w) * (1.0 + vn * vn / 6.0), theta / safe)
    return q[..., 1:] * scale[..., None]


def angle_between_quaternions(p, q):
    """Geodesic angle (radians, in [0, pi]) between rotations given as unit quaternions.

    ``2 * atan2(|vec(p* ⊗ q)|, |w(p* ⊗ q)|)``: the atan2 form is accurate near 0 and
    pi where ``2 acos(|<p, q>|)`` loses digits (common practice).  ``(..., 4) -> (...)``.
    """
    rel = hamilton_product(conjugate(p), q)
    return 2.0 * np.arctan2(np.sqrt(np.sum(rel[..., 1:] ** 2, axis=-1)), np.abs(rel[..., 0]))


def slerp_quaternions(p, q, t):
    """Shortest-path spherical interpolation (Shoemake 1985): ``p, q (..., 4), t (...) -> (..., 4)``.

    ``p ⊗ exp(t log(p* ⊗ q))`` with the sign of ``p* ⊗ q`` chosen so the path is the
    short one; t = 0 gives p, t = 1 gives q (or -q).
    """
    p = np.asarray(p, dtype=np.float64)
    rel = canonical_sign(hamilton_product(conjugate(p), q))
    rv = rotvec_of_quaternion(rel)
    t = np.asarray(t, dtype=np.float64)
    return hamilton_product(p, quaternion_of_rotvec(rv * t[..., None]))
