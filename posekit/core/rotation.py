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

from . import compiled

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
    "wrap_signed",
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


#: Rows per block in the blocked kernels below: a block's temporaries stay in the CPU
#: cache, which is several times faster than whole-array numpy passes for 1e6 rows.
BLOCK = 8192
#: Up to this many rows, kernels take the plain route with fewer numpy calls; longer batches
#: take the compiled loops when built (:mod:`posekit.core.compiled`), else the blocked numpy
#: kernels.  Tests cover all three.
SMALL_BATCH = compiled.MIN_ROWS
#: Passed as a tolerance to the compiled loops where no input check is wanted.
NO_CHECK = float("inf")


def _rows(a, width: int):
    """``(..., width)`` -> C-contiguous float64 ``(n, width)`` and the leading shape."""
    a = np.asarray(a, dtype=np.float64)
    lead = a.shape[: a.ndim - 1] if width != 9 else a.shape[: a.ndim - 2]
    return np.ascontiguousarray(a).reshape(-1, width), lead


def _blocked(kernel, out_width: int, *flats):
    """Run ``kernel(out_block, *in_blocks)`` over row blocks of ``(n, k)`` inputs -> ``(n, out_width)``."""
    n = flats[0].shape[0]
    out = np.empty((n, out_width), dtype=np.float64)
    for start in range(0, max(n, 1), BLOCK):
        stop = start + BLOCK
        kernel(out[start:stop], *(f[start:stop] for f in flats))
    return out


def _term_sum(terms):
    """Sum of signed products ``(sign, a, b)``, skipping structural zeros (None)."""
    acc = None
    for sign, a, b in terms:
        if a is None or b is None:
            continue
        t = a * b
        if acc is None:
            acc = t if sign > 0 else -t
        elif sign > 0:
            acc += t
        else:
            acc -= t
    return acc


def _product_parts(p, q):
    """Hamilton product of quaternions given as 4 component arrays (None = structural zero)."""
    pw, px, py, pz = p
    qw, qx, qy, qz = q
    return [_term_sum([(1, pw, qw), (-1, px, qx), (-1, py, qy), (-1, pz, qz)]),
            _term_sum([(1, pw, qx), (1, px, qw), (1, py, qz), (-1, pz, qy)]),
            _term_sum([(1, pw, qy), (-1, px, qz), (1, py, qw), (1, pz, qx)]),
            _term_sum([(1, pw, qz), (1, px, qy), (-1, py, qx), (1, pz, qw)])]


#: Squared quaternion lengths in this range are used as they are by the homogeneous form of
#: :func:`_write_matrix_of_parts` (and by the compiled loop: NORM2_LOW, NORM2_HIGH in _loops.c);
#: outside it (components beyond about 1e150 or all below about 1e-150, where the squares
#: overflow or underflow) the row is first scaled by a power of two (:func:`_power_of_two_scaled`).
NORM2_RANGE = (1e-300, 1e300)


def _power_of_two_scaled(v):
    """Rows of ``v (..., k)`` times ``2**-e``, and ``e (...)``: ``2**e`` is just above the row's
    largest |component| (``np.frexp``: largest = m 2**e, 0.5 <= m < 1); rows of zeros, or holding
    NaN or infinity, keep ``e = 0``.  A power of two scales exactly (IEEE 754 binary64) while the
    result stays in the normal range, so the scaled row points the same way and its length (0.5
    to 2 for up to 4 components) is computed without overflow or underflow."""
    top = np.max(np.abs(v), axis=-1)
    e = np.where(np.isfinite(top), np.frexp(top)[1], 0)
    return np.ldexp(v, -e[..., None]), e


def unit_rows(v):
    """Rows of ``v (..., k)`` divided by their length, the length taken of the power-of-two scaled
    rows (:func:`_power_of_two_scaled`), so every finite nonzero row gives a unit row:
    (1e300, 0, 0, 1e300) -> (0.7071..., 0, 0, 0.7071...).  Where the plain ``v / |v|`` neither
    overflows nor underflows this is the same to the bit.  Rows of zeros give NaN (callers refuse
    zero lengths first).

    >>> unit_rows([1e300, 0, 0, 1e300]).round(12).tolist()
    [0.707106781187, 0.0, 0.0, 0.707106781187]
    """
    s, _ = _power_of_two_scaled(np.asarray(v, dtype=np.float64))
    return s / np.sqrt(np.einsum("...i,...i->...", s, s))[..., None]


def _write_matrix_of_parts(out, w, x, y, z, normalise: bool = False):
    """Fill ``out (n, 9)`` with the active matrix of quaternion components (Shuster 1993, Hamilton form).

    ``normalise=True`` uses the homogeneous form (every product scaled by 2 / |q|^2), which
    divides the length out in the same pass; rows whose squared length is outside
    ``NORM2_RANGE`` are scaled by a power of two first, as the compiled loop does (the same bits)."""
    if normalise:
        with np.errstate(over="ignore"):  # overflowing rows are redone below
            nn = w * w + x * x + y * y + z * z
        odd = ~((nn >= NORM2_RANGE[0]) & (nn <= NORM2_RANGE[1]))  # NaN too
        if odd.any():
            scaled, _ = _power_of_two_scaled(np.stack([w[odd], x[odd], y[odd], z[odd]], axis=-1))
            w, x, y, z = (np.array(c, dtype=np.float64) for c in (w, x, y, z))
            w[odd], x[odd], y[odd], z[odd] = scaled[:, 0], scaled[:, 1], scaled[:, 2], scaled[:, 3]
            nn = w * w + x * x + y * y + z * z
        s = 2.0 / nn
        x2, y2, z2 = x * s, y * s, z * s
    else:
        x2, y2, z2 = x + x, y + y, z + z
    xx, yy, zz = x * x2, y * y2, z * z2
    xy, xz, yz = x * y2, x * z2, y * z2
    wx, wy, wz = w * x2, w * y2, w * z2
    out[:, 0] = 1.0 - (yy + zz)
    out[:, 1] = xy - wz
    out[:, 2] = xz + wy
    out[:, 3] = xy + wz
    out[:, 4] = 1.0 - (xx + zz)
    out[:, 5] = yz - wx
    out[:, 6] = xz - wy
    out[:, 7] = yz + wx
    out[:, 8] = 1.0 - (xx + yy)


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

    A length a rounding error off 1 is divided out in the same pass (homogeneous form).
    ``R v`` equals the vector part of ``q ⊗ (0, v) ⊗ q*`` (Shuster 1993, Hamilton form).

    >>> np.round(matrix_of_quaternion([np.cos(np.pi/4), 0, 0, np.sin(np.pi/4)]), 12).tolist()
    [[0.0, -1.0, 0.0], [1.0, 0.0, 0.0], [0.0, 0.0, 1.0]]
    """
    flat, lead = _rows(q, 4)
    loops = compiled.loops_for(flat.shape[0])
    if loops is not None:
        out = np.empty((flat.shape[0], 9))
        compiled.over_rows(loops.quaternion_matrix, (flat, out), False, False, NO_CHECK)
    else:
        out = _blocked(lambda o, f: _write_matrix_of_parts(o, f[:, 0], f[:, 1], f[:, 2], f[:, 3], True), 9, flat)
    return out.reshape(lead + (3, 3))


def quaternion_of_matrix(m):
    """Unit Hamilton quaternion with ``w >= 0`` of rotation matrices: ``(..., 3, 3) -> (..., 4)``.

    Shepperd's branch choice (1978): the largest of trace, R00, R11, R22 picks the
    well-conditioned branch, so 180-degree turns (trace -1) are exact; the chosen
    column of Shepperd's symmetric 4x4 matrix is normalised (Markley, JGCD 31(2), 2008).
    """
    flat, lead = _rows(m, 9)
    loops = compiled.loops_for(flat.shape[0])
    if loops is not None:
        out = np.empty((flat.shape[0], 4))
        compiled.over_rows(loops.matrix_quaternion, (flat, out), False, False, NO_CHECK)
        return out.reshape(lead + (4,))
    return _blocked(_quaternion_of_matrix_block, 4, flat).reshape(lead + (4,))


def _quaternion_of_matrix_block(out, f):
    # The symmetric matrix K (Shepperd 1978) has columns proportional to q: column k is
    # 4 q_k q.  Taking the column with the largest diagonal 4 q_k^2 (>= 1 for a rotation)
    # and normalising it is well conditioned everywhere, 180-degree turns included.
    m00, m01, m02, m10, m11, m12, m20, m21, m22 = (f[:, i] for i in range(9))
    tr = m00 + m11 + m22
    lo = 1.0 - tr
    d0, d1, d2, d3 = 1.0 + tr, lo + 2.0 * m00, lo + 2.0 * m11, lo + 2.0 * m22  # 4 q_k^2
    wx, wy, wz = m21 - m12, m02 - m20, m10 - m01  # 4 w x, 4 w y, 4 w z
    xy, xz, yz = m01 + m10, m02 + m20, m12 + m21  # 4 x y, 4 x z, 4 y z
    pick1 = d1 > d0
    top = np.maximum(d0, d1)
    pick2 = d2 > top
    top = np.maximum(top, d2)
    pick3 = d3 > top
    pick2 &= ~pick3
    pick1 &= ~(pick2 | pick3)
    w = np.where(pick3, wz, np.where(pick2, wy, np.where(pick1, wx, d0)))
    x = np.where(pick3, xz, np.where(pick2, xy, np.where(pick1, d1, wx)))
    y = np.where(pick3, yz, np.where(pick2, d2, np.where(pick1, xy, wy)))
    z = np.where(pick3, d3, np.where(pick2, yz, np.where(pick1, xz, wz)))
    inv = 1.0 / np.sqrt(w * w + x * x + y * y + z * z)
    np.negative(inv, out=inv, where=w < 0)  # canonical sign: w >= 0 (double cover)
    out[:, 0] = w * inv
    out[:, 1] = x * inv
    out[:, 2] = y * inv
    out[:, 3] = z * inv


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


def _half_angle_parts(angle):
    """cos and sin of half the angle from one tangent: with t = tan(angle / 4),
    cos = (1 - t^2) / (1 + t^2) and sin = 2 t / (1 + t^2) (the tangent half-angle
    substitution, common practice).  numpy's tan is vectorised where sin/cos are not,
    so this is several times faster than calling both; accuracy is a few ulp."""
    if angle.size <= SMALL_BATCH:  # small batches: two plain calls are cheaper than the six below
        half = 0.5 * angle
        return np.cos(half), np.sin(half)
    t = np.tan(0.25 * angle)
    np.clip(t, -1e150, 1e150, out=t)  # keeps t * t finite; beyond it sin is 0 to 1e-150
    t2 = t * t
    inv = 1.0 / (1.0 + t2)
    return (1.0 - t2) * inv, (t + t) * inv


def _euler_parts(a, sequence: str, intrinsic: bool):
    """Quaternion components (w, x, y, z) of Euler angle columns, structural zeros skipped."""
    p, q, r = _axes(sequence)
    parts = []
    for axis, col in zip((p, q, r), (a[:, 0], a[:, 1], a[:, 2])):
        c, s = _half_angle_parts(col)
        e = [c, None, None, None]
        e[1 + axis] = s
        parts.append(e)
    e1, e2, e3 = parts
    if intrinsic:
        return _product_parts(_product_parts(e1, e2), e3)
    return _product_parts(_product_parts(e3, e2), e1)


def _zero_if_none(x, n):
    return np.zeros(n) if x is None else x


def quaternion_of_euler(angles, sequence: str, intrinsic: bool):
    """Hamilton quaternion of Euler angles in radians: ``(..., 3) -> (..., 4)``.

    Intrinsic (a, b, c) about (p, q, r): ``R = Rp(a) Rq(b) Rr(c)``.
    Extrinsic (a, b, c) about fixed (p, q, r), applied in that order:
    ``R = Rr(c) Rq(b) Rp(a)`` (Craig, Introduction to Robotics, 3rd ed., §2.8, from memory).
    """
    flat, lead = _rows(angles, 3)

    def block(out, a):
        for i, part in enumerate(_euler_parts(a, sequence, intrinsic)):
            out[:, i] = 0.0 if part is None else part

    return _blocked(block, 4, flat).reshape(lead + (4,))


def matrix_of_euler(angles, sequence: str, intrinsic: bool, transpose: bool = False):
    """Active rotation matrix of Euler angles in radians: ``(..., 3) -> (..., 3, 3)``.

    The product of the three elementary quaternions, turned into the matrix in the
    same pass (no intermediate arrays of the whole batch).  ``transpose=True`` returns
    the transposed matrices (the passive reading) at no extra cost.

    >>> R = matrix_of_euler([np.pi / 2, 0, 0], "zyx", intrinsic=True)
    >>> np.round(R @ [1, 0, 0], 12).tolist()
    [0.0, 1.0, 0.0]
    """
    flat, lead = _rows(angles, 3)
    loops = compiled.loops_for(flat.shape[0])
    if loops is not None:
        out = np.empty((flat.shape[0], 9))
        compiled.over_rows(loops.euler_matrix, (flat, out), _axes(sequence), intrinsic, transpose)
        return out.reshape(lead + (3, 3))

    def block(out, a):
        w, x, y, z = (_zero_if_none(part, a.shape[0]) for part in _euler_parts(a, sequence, intrinsic))
        _write_matrix_of_parts(out, w, x, y, z)

    m = _blocked(block, 9, flat).reshape(lead + (3, 3))
    return np.ascontiguousarray(np.swapaxes(m, -1, -2)) if transpose else m


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
    flat, lead = _rows(q, 4)
    i, j, k, proper, eps = _method_axes(sequence, intrinsic)

    def block(out, f):
        w = f[:, 0]
        qi, qj, qk = f[:, 1 + i], f[:, 1 + j], f[:, 1 + k]
        if proper:
            a, b, c, d = w, qi, qj, qk * eps
        else:
            a, b, c, d = w - qj, qi + qk * eps, qj + w, qk * eps - qi
        s_plus = np.sqrt(a * a + b * b)  # |entries| <= 2: no overflow, so no hypot needed
        s_minus = np.sqrt(c * c + d * d)
        t2 = 2.0 * np.arctan2(s_minus, s_plus)
        tp = np.arctan2(b, a)
        tm = np.arctan2(d, c)
        t1 = tp - tm
        t3 = tp + tm
        # At a pole, put the whole sum/difference in the angle that is third in the
        # user's listing: t3 for extrinsic, t1 (reversed later) for intrinsic.
        at_zero = s_minus <= POLE_SNAP  # only t1 + t3 = 2 tp is fixed
        at_pi = s_plus <= POLE_SNAP  # only t3 - t1 = 2 tm is fixed
        if at_zero.any() or at_pi.any():
            pole = at_zero | at_pi
            if intrinsic:
                t3 = np.where(at_zero, 2.0 * tp, np.where(at_pi, 2.0 * tm, t3))
                t1 = np.where(pole, 0.0, t1)
            else:
                t1 = np.where(at_zero, 2.0 * tp, np.where(at_pi, -2.0 * tm, t1))
                t3 = np.where(pole, 0.0, t3)
        if not proper:
            t3 = eps * t3
            t2 = t2 - 0.5 * np.pi
            dist = 0.5 * np.pi - np.abs(t2)
        else:
            dist = np.minimum(t2, np.pi - t2)
        t1 = _wrap_near(t1)
        t3 = _wrap_near(t3)
        first, last = (2, 0) if intrinsic else (0, 2)
        out[:, first] = t1
        out[:, 1] = t2
        out[:, last] = t3
        out[:, 3] = np.maximum(dist, 0.0)

    res = _blocked(block, 4, flat)
    return np.ascontiguousarray(res[:, :3]).reshape(lead + (3,)), res[:, 3].reshape(lead)


def _method_axes(sequence: str, intrinsic: bool):
    """(i, j, k, proper, eps) of Bernardes & Viollet (2022) for a sequence as the user lists it."""
    seq = sequence if not intrinsic else sequence[::-1]
    i, j, k = _axes(seq)
    proper = i == k
    if proper:
        k = 3 - i - j
    eps = (i - j) * (j - k) * (k - i) / 2.0
    return i, j, k, proper, eps


def euler_of_matrix(m, sequence: str, intrinsic: bool):
    """Euler angles (radians) of rotation matrices: ``(..., 3, 3) -> ((..., 3), (...))``; see :func:`euler_of_quaternion`."""
    flat, lead = _rows(m, 9)
    if compiled.loops_for(flat.shape[0]) is not None:
        angles, dist, _ = euler_of_matrix_rows(flat, sequence, intrinsic)
        return angles.reshape(lead + (3,)), dist.reshape(lead)
    return euler_of_quaternion(quaternion_of_matrix(m), sequence, intrinsic)


def euler_of_matrix_rows(flat, sequence: str, intrinsic: bool, transpose: bool = False,
                         tolerance: float = NO_CHECK, scale: float = 1.0, distance: bool = True):
    """Compiled route of :func:`euler_of_matrix` for ``(n, 9)`` rows (``transpose`` reads each
    matrix transposed), with the matrix check fused in.

    Returns ``(angles (n, 3) times scale, pole distance (n) or None, rows that failed the check)``.
    """
    loops = compiled._loops
    i, j, k, proper, eps = _method_axes(sequence, intrinsic)
    n = flat.shape[0]
    angles, dist = np.empty((n, 3)), (np.empty(n) if distance else None)
    bad = compiled.over_rows(loops.euler_of_matrix, (flat, angles, dist), (i, j, k), proper, eps, intrinsic,
                             transpose, tolerance, scale)
    return angles, dist, sum(bad)


def _wrap_near(a):
    """Wrap angles in [-2 pi, 2 pi] to (-pi, pi] with one compare-and-shift each way."""
    a = np.where(a > np.pi, a - 2.0 * np.pi, a)
    return np.where(a <= -np.pi, a + 2.0 * np.pi, a)


def wrap_signed(a, half=np.pi):
    """Wrap angles to ``(-half, half]`` (radians by default; ``half=180`` for degrees): ``(...) -> (...)``.

    The one signed wrap of posekit (the ``wrap=signed`` choice of a convention).

    >>> wrap_signed([np.pi, -np.pi, 3 * np.pi / 2]).round(6).tolist()
    [3.141593, 3.141593, -1.570796]
    """
    a = np.asarray(a, dtype=np.float64)
    out = np.remainder(a + half, 2.0 * half) - half
    return np.where(out <= -half, out + 2.0 * half, out)



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
    ts = np.where(small, theta, 0.0)  # the series only sees small angles (no overflow for huge ones)
    scale = np.where(small, 0.5 - ts * ts / 48.0 + ts ** 4 / 3840.0, np.sin(half) / safe)
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
    # theta / sin(theta/2), with sin(theta/2) = vn and theta = 2 atan(vn / w):
    # series (2 / w) (1 - vn^2 / (3 w^2)) near 0
    w_safe = np.where(w == 0, 1.0, w)
    scale = np.where(small, 2.0 / w_safe * (1.0 - vn * vn / (3.0 * w_safe * w_safe)), theta / safe)
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
