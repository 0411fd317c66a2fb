"""Read numbers under a convention into the canonical rotation, and write them back.

The canonical rotation (see :mod:`posekit.core.rotation`) is the active matrix that
maps child coordinates into the parent frame.  Reading applies, in this order:

1. the representation's own rule: Euler sequence and intrinsic/extrinsic, the
   unit, quaternion scalar position and algebra (JPL gives the transpose of the
   Hamilton matrix for the same four numbers; Trawny & Roumeliotis 2005), the
   flat layout of 9 numbers;
2. ``action``: *passive* parameters (angles, quaternions, rotation vectors) build
   the transpose of the active matrix (Diebel 2006 writes all 12 sequences this
   way).  A written-out matrix is already a map, so ``action`` does not apply to it;
3. ``direction``: *child-from-parent* numbers describe the inverse map, so the
   canonical (parent-from-child) rotation is their transpose.

Writing runs the same steps backwards, so ``write_rotation(read_rotation(x))``
returns ``x`` (up to the double cover of quaternions and the Euler pole family).

Kinds of numbers (the ``kind`` argument):

=================  =============  ===============================================
kind               numbers        meaning
=================  =============  ===============================================
matrix             (..., 3, 3)    rotation matrix; or (..., 9) flat, per ``layout``
quaternion         (..., 4)       per ``scalar`` and ``algebra``
euler              (..., 3)       per ``sequence``, ``axes``, ``unit``
rotation-vector    (..., 3)       axis times angle (length in ``unit``)
axis-angle         (..., 4)       unit axis (x, y, z) then angle (in ``unit``)
planar-angle       (...)          a turn about z (in ``unit``)
=================  =============  ===============================================
"""

from __future__ import annotations

import numpy as np

from . import compiled, rotation as rot
from .checks import (ORTHONORMAL_TOLERANCE, UNIT_TOLERANCE, as_numbers, checked_flag, checked_matrix,
                     checked_quaternion, checked_tolerance, common_batch, require_magnitude,
                     require_representable_angles)
from .convention import DEFAULT, Convention
from .errors import NotUnitQuaternionError, PoseInputError, WrongShapeError, WrongTypeError, ZeroQuaternionError, \
    excerpt

__all__ = ["KINDS", "read_rotation", "write_rotation", "convert", "as_convention",
           "quaternion_product", "describe_numbers"]

KINDS = ("matrix", "quaternion", "euler", "rotation-vector", "axis-angle", "planar-angle")
#: Length tolerance given to the compiled loop when quaternions are normalised on purpose:
#: any finite length passes (zero lengths are counted apart), NaN and infinity still fail.
ANY_LENGTH = 1e300


def as_convention(convention) -> Convention:
    """Accept a :class:`Convention`, its text form, or None (the default)."""
    if convention is None:
        return DEFAULT
    if isinstance(convention, Convention):
        return convention
    return Convention.parse(convention)


def _check_kind(kind: str) -> None:
    if not isinstance(kind, str):
        raise WrongTypeError(f"kind: got {excerpt(kind)} of type {type(kind).__name__}; expected one of the words "
                             f"{', '.join(KINDS)}")
    if kind not in KINDS:
        raise PoseInputError(f"unknown kind of numbers {excerpt(kind)}; accepted: {', '.join(KINDS)}")


def _angles(numbers, name: str, conv: Convention, width) -> np.ndarray:
    """Angles (or rotation vectors, ``width`` 3 with ``norms``) read as float64 in the convention's
    unit, refused when too large to name a rotation to ``ANGLE_TOLERANCE`` (np.spacing)."""
    a = as_numbers(numbers, name, width)
    require_representable_angles(a, name, _angle_scale(conv), conv.unit, norms=name == "rotation vector")
    return a


def _angle_scale(conv: Convention) -> float:
    return np.pi / 180.0 if conv.degrees else 1.0


def _flip_count(conv: Convention, parameterised: bool, kind: str) -> int:
    flips = 0
    if parameterised and conv.action == "passive":
        flips += 1
    if kind == "quaternion" and conv.algebra == "jpl":
        flips += 1
    if conv.direction == "child-from-parent":
        flips += 1
    return flips


def _quaternion_in(numbers, conv: Convention, normalise: bool, tolerance: float):
    q = checked_quaternion(numbers, "quaternion", tolerance=tolerance, normalise=normalise)
    if conv.scalar == "last":
        q = np.concatenate([q[..., 3:], q[..., :3]], axis=-1)
    return q  # within the unit tolerance; matrix_of_quaternion divides the length out


def _canonical_quaternion(numbers, kind: str, conv: Convention, normalise: bool, tolerance: float):
    """Hamilton scalar-first quaternion *as the representation writes it* (steps 1 only)."""
    scale = _angle_scale(conv)
    if kind == "quaternion":
        return _quaternion_in(numbers, conv, normalise, tolerance)
    if kind == "euler":
        a = _angles(numbers, "Euler angles", conv, (3,)) * scale
        return rot.quaternion_of_euler(a, conv.axes_letters, conv.intrinsic)
    if kind == "rotation-vector":
        v = _angles(numbers, "rotation vector", conv, (3,)) * scale
        return rot.quaternion_of_rotvec(v)
    if kind == "axis-angle":
        aa = as_numbers(numbers, "axis-angle", (4,))
        require_representable_angles(aa[..., 3], "axis-angle angle", scale, conv.unit)
        axis = aa[..., :3]
        n = np.hypot(np.hypot(axis[..., 0], axis[..., 1]), axis[..., 2])  # hypot: no overflow for huge axes
        if np.any(n < 1e-12):
            raise ZeroQuaternionError("axis-angle: the axis has zero length; expected a unit axis (x, y, z) "
                                      "followed by the angle")
        if not normalise and np.any(np.abs(n - 1.0) > tolerance):
            worst = np.unravel_index(np.argmax(np.abs(n - 1.0)), n.shape)
            raise NotUnitQuaternionError(
                f"axis-angle: the axis length is {float(n[worst]):.9g}"
                f"{' at index ' + str(tuple(int(i) for i in worst)) if n.ndim else ''}, not 1 within "
                f"{tolerance:g}; expected a unit axis. Pass normalise=True to divide by the length on purpose")
        return rot.quaternion_of_rotvec(axis / n[..., None] * (aa[..., 3] * scale)[..., None])
    if kind == "planar-angle":
        a = _angles(numbers, "planar angle", conv, None) * scale
        out = np.zeros(a.shape + (4,))
        out[..., 0] = np.cos(0.5 * a)
        out[..., 3] = np.sin(0.5 * a)
        return out
    raise AssertionError(kind)


def read_rotation(numbers, kind: str = "matrix", convention=None, *, normalise: bool = False,
                  tolerance: float | None = None) -> np.ndarray:
    """Read numbers of one ``kind`` under ``convention`` -> canonical matrices ``(..., 3, 3)``.

    ``normalise=True`` divides quaternions (and axis-angle axes) by their length on
    purpose; otherwise a length off 1 by more than ``tolerance`` is an error.

    >>> R = read_rotation([90, 0, 0], "euler", "unit=degrees")
    >>> np.round(R @ [1, 0, 0], 12).tolist()
    [0.0, 1.0, 0.0]
    """
    conv = as_convention(convention)
    _check_kind(kind)
    normalise = checked_flag(normalise, "normalise")
    if tolerance is not None:
        tolerance = checked_tolerance(tolerance, "tolerance")
    if kind == "matrix":
        tol = ORTHONORMAL_TOLERANCE if tolerance is None else tolerance
        m = as_numbers(numbers, "rotation matrix", None, finite=False)  # checked_matrix checks finiteness
        if m.shape[-1:] == (9,) and not (m.ndim >= 2 and m.shape[-2:] == (3, 3)):
            m = m.reshape(m.shape[:-1] + (3, 3))
            if conv.layout == "column-major":
                m = np.swapaxes(m, -1, -2)
        m = checked_matrix(m, "rotation matrix", tolerance=tol)
        if conv.direction == "child-from-parent":
            m = np.swapaxes(m, -1, -2)
        return np.ascontiguousarray(m)
    if kind == "euler":  # direct, without a batch of intermediate quaternions
        a = _angles(numbers, "Euler angles", conv, (3,))
        scale = _angle_scale(conv)
        return rot.matrix_of_euler(a * scale if scale != 1.0 else a, conv.axes_letters, conv.intrinsic,
                                   transpose=_flip_count(conv, True, kind) % 2 == 1)
    tol = UNIT_TOLERANCE if tolerance is None else tolerance
    if kind == "quaternion":
        numbers = q = as_numbers(numbers, "quaternion", (4,), finite=False)  # checked below or by the loop
        # normalise=True: rows of any finite length are scaled by a power of two before their length
        # is taken (rotation.unit_rows, the same in the compiled loop), so 1e300 or 1e-300 are fine
        loops = compiled.loops_for(q.size // 4)
        if loops is not None:  # check, reorder, conjugate and convert in one compiled pass
            flat = np.ascontiguousarray(q).reshape(-1, 4)
            out = np.empty((flat.shape[0], 9))
            last, conj = conv.scalar == "last", _flip_count(conv, True, kind) % 2 == 1
            unit_tol = ANY_LENGTH if normalise else tol  # finite, so NaN and infinity still fail
            counts = compiled.over_rows(loops.quaternion_matrix, (flat, out), last, conj, unit_tol)
            if any(off or zero for off, zero in counts):  # raises the typed error with its message
                checked_quaternion(q, "quaternion", tolerance=tol, normalise=normalise)
            return out.reshape(q.shape[:-1] + (3, 3))
    q = _canonical_quaternion(numbers, kind, conv, normalise, tol)
    if _flip_count(conv, True, kind) % 2:
        q = rot.conjugate(q)
    return rot.matrix_of_quaternion(q)


def _wrap_out(angles, conv: Convention, outer: tuple[int, ...]):
    """The outer angles (radians, already signed) put in the convention's range (``Convention.wrapped``)."""
    if conv.wrap == "positive":
        angles = angles.copy()
        for i in outer:
            angles[..., i] = conv.wrapped(angles[..., i])
    return angles


def write_rotation(matrix, kind: str = "quaternion", convention=None, *, flat: bool = False,
                   check: bool = True):
    """Write canonical matrices ``(..., 3, 3)`` as numbers of ``kind`` under ``convention``.

    Quaternions come out with their scalar part >= 0.  Euler angles come out with
    outer angles wrapped per ``wrap`` and, at a pole, the documented family member
    (third listed angle 0; see :func:`posekit.core.rotation.euler_of_quaternion`).
    ``flat=True`` writes matrices as ``(..., 9)`` per ``layout``.

    >>> write_rotation(np.eye(3), "quaternion", "scalar=last").tolist()
    [0.0, 0.0, 0.0, 1.0]
    """
    conv = as_convention(convention)
    _check_kind(kind)
    flat, check = checked_flag(flat, "flat"), checked_flag(check, "check")
    scale = _angle_scale(conv)
    if not check:  # trusted to be rotations: only the type and shape are checked
        matrix = as_numbers(matrix, "rotation matrix", (3, 3), finite=False)
    if kind in ("quaternion", "euler"):
        m = as_numbers(matrix, "rotation matrix", (3, 3), finite=False) if check else matrix
        loops = compiled.loops_for(m.size // 9)
        if loops is not None:  # the loop's check also fails NaN and infinity
            return _write_compiled(loops, m, kind, conv, scale, check)
        matrix = m
    m = checked_matrix(matrix) if check else matrix
    if kind == "matrix":
        if conv.direction == "child-from-parent":
            m = np.swapaxes(m, -1, -2)
        if flat:
            if conv.layout == "column-major":
                m = np.swapaxes(m, -1, -2)
            return np.ascontiguousarray(m).reshape(m.shape[:-2] + (9,))
        return np.ascontiguousarray(m)
    q = rot.quaternion_of_matrix(m)
    if _flip_count(conv, True, kind) % 2:
        q = rot.conjugate(q)
    if kind == "quaternion":  # quaternion_of_matrix gives w >= 0 and conjugation keeps w
        if conv.scalar == "last":
            q = np.concatenate([q[..., 1:], q[..., :1]], axis=-1)
        return q
    if kind == "euler":
        angles, _ = rot.euler_of_quaternion(q, conv.axes_letters, conv.intrinsic)
        angles = _wrap_out(angles, conv, (0, 2))
        return angles / scale if scale != 1.0 else angles
    if kind == "rotation-vector":
        return rot.rotvec_of_quaternion(q) / scale
    if kind == "axis-angle":
        rv = rot.rotvec_of_quaternion(q)
        angle = np.sqrt(np.sum(rv * rv, axis=-1))
        axis = np.where(angle[..., None] > 0, rv / np.where(angle > 0, angle, 1.0)[..., None],
                        np.array([0.0, 0.0, 1.0]))
        return np.concatenate([axis, (angle / scale)[..., None]], axis=-1)
    if kind == "planar-angle":
        tilt = np.sqrt(q[..., 1] ** 2 + q[..., 2] ** 2)
        if np.any(tilt > 1e-9):
            worst = float(np.degrees(2 * np.arcsin(np.minimum(np.max(tilt), 1.0))))
            raise WrongShapeError(f"planar-angle: the rotation is not a turn about z (it tilts the z axis by up "
                                  f"to {worst:.6g} degrees); only turns about z can be written as a planar angle")
        a = 2.0 * np.arctan2(q[..., 3], q[..., 0])
        return conv.wrapped(a) / scale
    raise AssertionError(kind)


def _write_compiled(loops, m, kind: str, conv: Convention, scale: float, check: bool):
    """:func:`write_rotation` of a large batch as quaternions or Euler angles in one compiled
    pass that also checks the matrices (:mod:`posekit.core.compiled`)."""
    flat = np.ascontiguousarray(m).reshape(-1, 9)
    flip = _flip_count(conv, True, kind) % 2 == 1  # the conjugate quaternion is the transposed matrix
    tol = ORTHONORMAL_TOLERANCE if check else rot.NO_CHECK
    if kind == "quaternion":
        out = np.empty((flat.shape[0], 4))
        last = conv.scalar == "last"
        bad = sum(compiled.over_rows(loops.matrix_quaternion, (flat, out), flip, last, tol))
        shape = m.shape[:-2] + (4,)
    else:
        if conv.wrap == "positive":  # wrap in radians, then scale
            out, _, bad = rot.euler_of_matrix_rows(flat, conv.axes_letters, conv.intrinsic, flip, tol,
                                                   distance=False)
            out = _wrap_out(out, conv, (0, 2)) / scale
        else:  # the loop scales as it writes
            out, _, bad = rot.euler_of_matrix_rows(flat, conv.axes_letters, conv.intrinsic, flip, tol, 1.0 / scale,
                                                   distance=False)
        shape = m.shape[:-2] + (3,)
    if bad and check:
        checked_matrix(m)  # raises the typed error with its message
    return out.reshape(shape)


def convert(numbers, source_kind: str, target_kind: str, source=None, target=None, **options):
    """Numbers of one kind and convention -> numbers of another kind and convention.

    >>> convert([0, 0, 0, 1], "quaternion", "quaternion", "scalar=last", "scalar=first").tolist()
    [1.0, 0.0, 0.0, 0.0]
    """
    unknown = sorted(set(options) - {"normalise", "tolerance", "flat"})
    if unknown:
        raise WrongTypeError(f"convert: unknown option {excerpt(unknown[0])}; accepted: normalise, tolerance "
                             "(for reading), flat (for writing)")
    normalise = options.pop("normalise", False)
    tolerance = options.pop("tolerance", None)
    m = read_rotation(numbers, source_kind, source, normalise=normalise, tolerance=tolerance)
    return write_rotation(m, target_kind, target, check=False, **options)


def quaternion_product(p, q, convention=None):
    """``p ⊗ q`` in the convention's scalar position and algebra: ``(..., 4)`` each.

    JPL: ``p ⊗ q`` equals the Hamilton product ``q ⊗ p`` of the same numbers
    (Sommer et al., Aerospace 5(3):72, 2018).

    >>> quaternion_product([1, 0, 0, 0], [0, 1, 0, 0], "scalar=last").tolist()   # i j = k, scalar last
    [0.0, 0.0, 1.0, 0.0]
    """
    conv = as_convention(convention)
    p = as_numbers(p, "quaternion p", (4,))
    q = as_numbers(q, "quaternion q", (4,))
    require_magnitude(p, "quaternion p")  # products of entries up to LARGEST_COORDINATE stay finite
    require_magnitude(q, "quaternion q")
    common_batch("quaternion_product", ("quaternion p", p.shape, 1), ("quaternion q", q.shape, 1))
    if conv.scalar == "last":
        p = np.concatenate([p[..., 3:], p[..., :3]], axis=-1)
        q = np.concatenate([q[..., 3:], q[..., :3]], axis=-1)
    out = rot.hamilton_product(p, q) if conv.algebra == "hamilton" else rot.hamilton_product(q, p)
    if conv.scalar == "last":
        out = np.concatenate([out[..., 1:], out[..., :1]], axis=-1)
    return out


def describe_numbers(kind: str, convention, *, count: int | None = None, position_first: bool = True,
                     euler_detail: bool = False, action: bool = False, direction: bool = False) -> str:
    """How a row of numbers is read, in words: the one wording of every reading posekit shows.

    ``kind`` is a representation (``quaternion``, ``euler``, ``rotation-vector``, ``matrix``),
    ``transform`` (``count`` 12 or 16), ``position`` or ``position-<representation>``;
    ``euler_detail`` adds the turns in words, ``action`` / ``direction`` add those fields.

    >>> describe_numbers("quaternion", "scalar=last")
    'a quaternion written (x, y, z, w), Hamilton algebra'
    >>> describe_numbers("position-euler", "unit=degrees", position_first=False, direction=True)
    'Euler angles z-y-x intrinsic in degrees, parent-from-child, then a position (x, y, z)'
    """
    c = as_convention(convention)
    if kind == "position":
        return "a position (x, y, z) only"
    rk = kind[len("position-"):] if kind.startswith("position-") else kind
    layout = "row by row" if c.layout == "row-major" else "column by column"
    if rk == "quaternion":
        order = "(w, x, y, z)" if c.scalar == "first" else "(x, y, z, w)"
        text = f"a quaternion written {order}, {'Hamilton' if c.algebra == 'hamilton' else 'JPL'} algebra"
    elif rk == "euler":
        text = f"Euler angles {c.sequence} {c.axes} in {c.unit}"
        if euler_detail:
            text += f" ({c.describe_euler()})"
    elif rk == "rotation-vector":
        text = f"a rotation vector (axis times angle) in {c.unit}"
    elif rk == "transform":
        text = f"a {'4x4 transform' if count == 16 else '3x4 [R | t] matrix'} written {layout}"
    else:
        text = f"a 3x3 matrix written {layout}"
    if action:
        text += ", " + c.action
    if direction:
        text += ", " + c.direction
    if kind.startswith("position-"):
        text = f"a position (x, y, z) then {text}" if position_first else f"{text}, then a position (x, y, z)"
    return text
