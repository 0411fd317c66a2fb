"""Homogeneous transforms: SE(3) as ``(..., 4, 4)`` and SE(2) as ``(..., 3, 3)``.

``T = [[R, t], [0, 1]]``; ``T^-1 = [[R^T, -R^T t], [0, 1]]``; points carry a
homogeneous 1 and are moved by the translation, directions carry a 0 and are only
turned (common practice; Craig, Introduction to Robotics, 3rd ed., §2.3-2.5, from
memory).  Canonical transforms map child coordinates into the parent frame
(``p_parent = T p_child``); read other conventions with :func:`read_transform`.

The generic operations (:func:`compose_transforms`, :func:`invert_transform`,
:func:`transform_points`, :func:`transform_directions`) take either size and tell
them apart by the last axis (4 -> spatial, 3 -> planar).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import rotation as rot
from .checks import (ORTHONORMAL_TOLERANCE, as_numbers, checked_flag, checked_matrix, checked_tolerance, common_batch,
                     require_magnitude, require_representable_angles)
from .convention import Convention
from .errors import PoseInputError, WrongShapeError, WrongTypeError, excerpt, summarise
from .ops import checked_fraction
from .reading import as_convention, read_rotation, write_rotation

__all__ = [
    "TRANSFORM_KINDS",
    "make_transform",
    "split_transform",
    "checked_transform",
    "compose_transforms",
    "invert_transform",
    "transform_points",
    "transform_directions",
    "interpolate_transforms",
    "make_planar",
    "planar_parts",
    "interpolate_planar",
    "read_transform",
    "write_transform",
    "Pose",
]

TRANSFORM_KINDS = ("matrix", "position-quaternion", "position-euler")


def make_transform(rotation, translation) -> np.ndarray:
    """``R (..., 3, 3)`` and ``t (..., 3)`` -> ``T (..., 4, 4)`` (broadcast).

    >>> make_transform(np.eye(3), [1, 2, 3])[:3, 3].tolist()
    [1.0, 2.0, 3.0]
    """
    r = checked_matrix(rotation)
    t = as_numbers(translation, "translation", (3,))
    require_magnitude(t, "translation")
    lead = common_batch("make_transform", ("rotation", r.shape, 2), ("translation", t.shape, 1))
    out = np.zeros(lead + (4, 4))
    out[..., :3, :3] = r
    out[..., :3, 3] = t
    out[..., 3, 3] = 1.0
    return out


def _size(m: np.ndarray, name: str) -> int:
    if m.ndim < 2 or m.shape[-1] != m.shape[-2] or m.shape[-1] not in (3, 4):
        raise WrongShapeError(f"{name}: got shape {m.shape}; expected (..., 4, 4) for SE(3) or (..., 3, 3) "
                              "for SE(2)")
    return m.shape[-1]


def checked_transform(value, name: str = "transform", size: int | None = None,
                      tolerance: float = ORTHONORMAL_TOLERANCE) -> np.ndarray:
    """Validate homogeneous transforms ``(..., n, n)``, n = 4 (SE(3)) or 3 (SE(2)).

    The last row must be ``[0, ..., 0, 1]``: a translation found in the bottom row
    is reported as the tell-tale of a column-major matrix read row-major.
    """
    if size is not None and (isinstance(size, (bool, np.bool_)) or not isinstance(size, (int, np.integer))
                             or size not in (3, 4)):
        raise WrongTypeError(f"size: got {summarise(size)}; expected 4 (SE(3)), 3 (SE(2)) or None (either)")
    tolerance = checked_tolerance(tolerance, "tolerance")
    m = as_numbers(value, name, None)
    n = _size(m, name) if size is None else size
    if m.shape[-2:] != (n, n):
        raise WrongShapeError(f"{name}: got shape {m.shape}; expected (..., {n}, {n})")
    bottom = m[..., n - 1, :]
    want = np.zeros(n)
    want[-1] = 1.0
    if np.any(np.abs(bottom - want) > 1e-9):
        hint = ""
        if np.all(np.abs(m[..., : n - 1, n - 1]) < 1e-12) and np.any(np.abs(bottom[..., : n - 1]) > 1e-9):
            hint = (" The translation sits in the bottom row and the last column is empty: this is a "
                    "column-major matrix read row by row; read it with layout=column-major")
        raise WrongShapeError(f"{name}: the last row is {np.array2string(bottom.reshape(-1, n)[0])}, expected "
                              f"{np.array2string(want)}.{hint}")
    checked_matrix(m[..., : n - 1, : n - 1], f"{name} rotation block", tolerance=tolerance, size=n - 1)
    require_magnitude(m[..., : n - 1, n - 1], f"{name} translation")
    return m


def split_transform(transform):
    """``T (..., n, n)`` -> ``(R (..., n-1, n-1), t (..., n-1))`` (copies)."""
    m = checked_transform(transform)
    n = m.shape[-1]
    return m[..., : n - 1, : n - 1].copy(), m[..., : n - 1, n - 1].copy()


def compose_transforms(*transforms) -> np.ndarray:
    """``T1 @ T2 @ ...`` (broadcast); ``compose_transforms(world_from_base, base_from_cam)`` is world_from_cam."""
    if not transforms:
        raise WrongTypeError("compose_transforms(): got no transforms; expected at least one (..., 4, 4) or "
                             "(..., 3, 3) transform")
    out = checked_transform(transforms[0])
    for i, t in enumerate(transforms[1:], start=2):
        nxt = checked_transform(t)
        if nxt.shape[-1] != out.shape[-1]:
            raise WrongShapeError(f"cannot compose a {out.shape[-1]}x{out.shape[-1]} transform with a "
                                  f"{nxt.shape[-1]}x{nxt.shape[-1]} one; both must be SE(3) or both SE(2)")
        common_batch("compose_transforms", ("transform 1" if i == 2 else f"the product of transforms 1 to {i - 1}",
                                            out.shape, 2),
                     (f"transform {i}", nxt.shape, 2))
        out = out @ nxt  # translations stay below LARGEST_COORDINATE times the chain's length: no overflow
    return out


def invert_transform(transform) -> np.ndarray:
    """``T^-1 = [[R^T, -R^T t], [0, 1]]`` exactly, for ``(..., n, n)``."""
    m = checked_transform(transform)
    n = m.shape[-1]
    r = m[..., : n - 1, : n - 1]
    t = m[..., : n - 1, n - 1]
    rt = np.swapaxes(r, -1, -2)
    out = np.zeros_like(m)
    out[..., : n - 1, : n - 1] = rt
    out[..., : n - 1, n - 1] = -np.matmul(rt, t[..., None])[..., 0]
    out[..., n - 1, n - 1] = 1.0
    return out


def transform_points(transform, points) -> np.ndarray:
    """Move points (homogeneous 1): ``T (..., n, n)``, ``p (..., n-1)`` -> ``R p + t``."""
    m = checked_transform(transform)
    n = m.shape[-1]
    p = as_numbers(points, "points", (n - 1,))
    require_magnitude(p, "points")
    common_batch("transform_points", ("transform", m.shape, 2), ("points", p.shape, 1))
    return np.matmul(m[..., : n - 1, : n - 1], p[..., None])[..., 0] + m[..., : n - 1, n - 1]


def transform_directions(transform, directions) -> np.ndarray:
    """Turn directions (homogeneous 0; translation ignored): ``-> R d``."""
    m = checked_transform(transform)
    n = m.shape[-1]
    d = as_numbers(directions, "directions", (n - 1,))
    require_magnitude(d, "directions")
    common_batch("transform_directions", ("transform", m.shape, 2), ("directions", d.shape, 1))
    return np.matmul(m[..., : n - 1, : n - 1], d[..., None])[..., 0]


def interpolate_transforms(a, b, t) -> np.ndarray:
    """Slerp the rotation and interpolate the translation linearly: ``(..., 4, 4)``, ``t (...)``.

    This is the common "decoupled" interpolation (common practice); the origin moves
    on a straight line.
    """
    ma = checked_transform(a, size=4)
    mb = checked_transform(b, size=4)
    t = checked_fraction(t, "t")
    common_batch("interpolate_transforms", ("a", ma.shape, 2), ("b", mb.shape, 2), ("t", t.shape, 0))
    qa = rot.quaternion_of_matrix(ma[..., :3, :3])
    qb = rot.quaternion_of_matrix(mb[..., :3, :3])
    r = rot.matrix_of_quaternion(rot.slerp_quaternions(qa, qb, t))
    trans = ma[..., :3, 3] * (1.0 - t)[..., None] + mb[..., :3, 3] * t[..., None]
    return make_transform(r, trans)


# --- SE(2) -------------------------------------------------------------------------

def make_planar(x, y, angle, degrees: bool = False) -> np.ndarray:
    """``T = [[c, -s, x], [s, c, y], [0, 0, 1]]`` from position and heading: ``(...) -> (..., 3, 3)``.

    >>> np.round(make_planar(1, 2, 90, degrees=True), 12).tolist()
    [[0.0, -1.0, 1.0], [1.0, 0.0, 2.0], [0.0, 0.0, 1.0]]
    """
    degrees = checked_flag(degrees, "degrees")
    x = as_numbers(x, "x", None)
    y = as_numbers(y, "y", None)
    require_magnitude(x, "x")
    require_magnitude(y, "y")
    a = as_numbers(angle, "angle", None)
    scale = np.pi / 180.0 if degrees else 1.0
    require_representable_angles(a, "angle", scale, "degrees" if degrees else "radians")
    a = a * scale
    lead = common_batch("make_planar", ("x", x.shape, 0), ("y", y.shape, 0), ("angle", a.shape, 0))
    c, s = np.cos(a), np.sin(a)
    out = np.zeros(lead + (3, 3))
    out[..., 0, 0] = c
    out[..., 0, 1] = -s
    out[..., 1, 0] = s
    out[..., 1, 1] = c
    out[..., 0, 2] = x
    out[..., 1, 2] = y
    out[..., 2, 2] = 1.0
    return out


def planar_parts(transform, degrees: bool = False):
    """``T (..., 3, 3)`` -> ``(x, y, angle)`` each ``(...)``, angle in (-pi, pi] (or degrees)."""
    degrees = checked_flag(degrees, "degrees")
    m = checked_transform(transform, size=3)
    a = np.arctan2(m[..., 1, 0], m[..., 0, 0])
    if degrees:
        a = np.degrees(a)
    return m[..., 0, 2].copy(), m[..., 1, 2].copy(), a


def interpolate_planar(a, b, t) -> np.ndarray:
    """Shortest-way heading interpolation and straight-line position for SE(2): ``(..., 3, 3)``."""
    xa, ya, ha = planar_parts(a)
    xb, yb, hb = planar_parts(b)
    t = checked_fraction(t, "t")
    common_batch("interpolate_planar", ("a", xa.shape + (3, 3), 2), ("b", xb.shape + (3, 3), 2), ("t", t.shape, 0))
    dh = rot.wrap_signed(hb - ha)
    return make_planar(xa + (xb - xa) * t, ya + (yb - ya) * t, ha + dh * t)


# --- reading and writing whole poses -----------------------------------------------

def _check_kind(kind: str) -> None:
    if not isinstance(kind, str):
        raise WrongTypeError(f"kind: got {excerpt(kind)} of type {type(kind).__name__}; expected one of the words "
                             f"{', '.join(TRANSFORM_KINDS)}")
    if kind not in TRANSFORM_KINDS:
        raise PoseInputError(f"unknown kind of transform numbers {excerpt(kind)}; accepted: "
                             f"{', '.join(TRANSFORM_KINDS)}")


def read_transform(numbers, kind: str = "matrix", convention=None, *, normalise: bool = False) -> np.ndarray:
    """Read numbers under ``convention`` -> canonical parent-from-child ``(..., 4, 4)``.

    Kinds: ``matrix`` ``(..., 4, 4)``, ``(..., 3, 4)``, or flat ``(..., 16)`` /
    ``(..., 12)`` read per ``layout`` (a column-major 12 is a 4x3 whose columns are
    the 3x4 rows); ``position-quaternion`` ``(..., 7)``: x, y, z then the quaternion
    per ``scalar``/``algebra``; ``position-euler`` ``(..., 6)``: x, y, z then the
    Euler angles.  ``action`` turns the rotation part only; ``direction``
    child-from-parent inverts the whole transform.
    """
    conv = as_convention(convention)
    _check_kind(kind)
    normalise = checked_flag(normalise, "normalise")
    if kind == "matrix":
        m = as_numbers(numbers, "transform", None)
        flat = m.shape[-1:] in ((16,), (12,)) and not (m.ndim >= 2 and m.shape[-2:] in ((4, 4), (3, 4)))
        if flat:
            rows = 4 if m.shape[-1] == 16 else 3
            if conv.layout == "row-major":
                m = m.reshape(m.shape[:-1] + (rows, 4))
            else:
                m = np.swapaxes(m.reshape(m.shape[:-1] + (4, rows)), -1, -2)
        if m.shape[-2:] == (3, 4):
            bottom = np.zeros(m.shape[:-2] + (1, 4))
            bottom[..., 0, 3] = 1.0
            m = np.concatenate([m, bottom], axis=-2)
        if m.ndim < 2 or m.shape[-2:] != (4, 4):
            raise WrongShapeError(f"transform: got shape {np.shape(numbers)}; expected (..., 4, 4), (..., 3, 4), "
                                  "or flat 16 or 12 numbers")
        m = checked_transform(m, size=4)
    else:
        width = 7 if kind == "position-quaternion" else 6
        v = as_numbers(numbers, kind, (width,))
        rkind = "quaternion" if width == 7 else "euler"
        r = read_rotation(v[..., 3:], rkind, conv.changed(direction="parent-from-child"), normalise=normalise)
        m = make_transform(r, v[..., :3])
    if conv.direction == "child-from-parent":
        m = invert_transform(m)
    return m


def write_transform(transform, kind: str = "matrix", convention=None, *, flat: bool = False) -> np.ndarray:
    """Write canonical ``(..., 4, 4)`` under ``convention``; the inverse of :func:`read_transform`."""
    conv = as_convention(convention)
    _check_kind(kind)
    flat = checked_flag(flat, "flat")
    m = checked_transform(transform, size=4)
    if conv.direction == "child-from-parent":
        m = invert_transform(m)
    if kind == "matrix":
        if flat:
            if conv.layout == "column-major":
                m = np.swapaxes(m, -1, -2)
            return np.ascontiguousarray(m).reshape(m.shape[:-2] + (16,))
        return m
    inner = conv.changed(direction="parent-from-child")
    rkind = "quaternion" if kind == "position-quaternion" else "euler"
    r = write_rotation(m[..., :3, :3], rkind, inner, check=False)
    return np.concatenate([m[..., :3, 3], r], axis=-1)


@dataclass(frozen=True, eq=False)
class Pose:
    """A frozen, hashable rigid transform (one or a batch): canonical parent-from-child ``(..., 4, 4)``.

    >>> p = Pose.read([1, 2, 3, 1, 0, 0, 0], "position-quaternion")
    >>> p.translation.tolist(), p == Pose(p.matrix)
    ([1.0, 2.0, 3.0], True)
    """

    matrix: np.ndarray
    __array_ufunc__ = None  # ``array @ pose`` asks the Pose (which refuses it) instead of making an object array

    def __post_init__(self):
        m = np.array(checked_transform(self.matrix, "pose", size=4), dtype=np.float64, copy=True)
        m.setflags(write=False)
        object.__setattr__(self, "matrix", m)

    @classmethod
    def read(cls, numbers, kind: str = "matrix", convention: Convention | str | None = None, **options) -> "Pose":
        """Build from user numbers; see :func:`read_transform`."""
        return cls(read_transform(numbers, kind, convention, **options))

    def write(self, kind: str = "matrix", convention: Convention | str | None = None, **options) -> np.ndarray:
        """Numbers under ``convention``; see :func:`write_transform`."""
        return write_transform(self.matrix, kind, convention, **options)

    @property
    def rotation(self) -> np.ndarray:
        return self.matrix[..., :3, :3].copy()

    @property
    def translation(self) -> np.ndarray:
        return self.matrix[..., :3, 3].copy()

    def inverse(self) -> "Pose":
        return Pose(invert_transform(self.matrix))

    def __matmul__(self, other: "Pose") -> "Pose":
        if not isinstance(other, Pose):
            raise WrongTypeError(f"Pose @ {summarise(other)}: expected a Pose on both sides; to move points use "
                                 "transform_points(pose.matrix, points)")
        common_batch("Pose @ Pose", ("left pose", self.matrix.shape, 2), ("right pose", other.matrix.shape, 2))
        return Pose(self.matrix @ other.matrix)

    def __rmatmul__(self, other) -> "Pose":
        raise WrongTypeError(f"{summarise(other)} @ Pose: expected a Pose on both sides; to move points use "
                             "transform_points(pose.matrix, points)")

    def __eq__(self, other) -> bool:
        return isinstance(other, Pose) and self.matrix.shape == other.matrix.shape and \
            bool(np.array_equal(self.matrix, other.matrix))

    def __hash__(self) -> int:
        return hash((self.matrix.shape, self.matrix.tobytes()))

    def __repr__(self) -> str:
        if self.matrix.ndim == 2:
            return f"Pose(matrix={np.array2string(self.matrix, precision=6, separator=', ')})"
        return f"Pose(batch of shape {self.matrix.shape[:-2]})"
