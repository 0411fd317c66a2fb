"""Validation of raw inputs, and projection onto the nearest rotation.

Nothing here repairs an input silently: a check either passes the numbers on
unchanged (as float64) or raises a typed error from :mod:`posekit.core.errors`.
:func:`nearest_rotation` is the one place that changes numbers, and it reports
how far it moved them.
"""

from __future__ import annotations

from dataclasses import dataclass
from numbers import Number

import numpy as np

from .errors import (
    NotFiniteError,
    NotOrthonormalError,
    NotUnitQuaternionError,
    ReflectionError,
    WrongShapeError,
    WrongTypeError,
    ZeroQuaternionError,
    summarise,
)
from . import compiled
from .rotation import SMALL_BATCH, _blocked, _rows

__all__ = [
    "ORTHONORMAL_TOLERANCE",
    "UNIT_TOLERANCE",
    "as_numbers",
    "checked_matrix",
    "checked_quaternion",
    "orthonormality_error",
    "nearest_rotation",
    "Projection",
]

#: Largest accepted Frobenius norm of ``R^T R - I`` for a rotation matrix.
ORTHONORMAL_TOLERANCE = 1e-6
#: Largest accepted ``| |q| - 1 |`` for a unit quaternion.
UNIT_TOLERANCE = 1e-6


def _numbers_of_anything(value, name: str, trailing):
    """The type checks of :func:`as_numbers` for anything but a float64 array -> float64 array."""
    if value is None:
        raise WrongTypeError(f"{name}: got None; expected numbers, e.g. a list or numpy array"
                             + (f" with last axes of shape {trailing}" if trailing else ""))
    if isinstance(value, (str, bytes)):
        raise WrongTypeError(f"{name}: got text {summarise(value)}; expected numbers. "
                             "To read pasted text use posekit.analysis.parse_numbers.")
    if isinstance(value, (dict, set)):
        raise WrongTypeError(f"{name}: got a {type(value).__name__}; expected a list or array of numbers")
    if isinstance(value, (bool, np.bool_)):
        raise WrongTypeError(f"{name}: got a boolean {value!r}; expected numbers")
    try:
        arr = np.asarray(value)
    except ValueError as exc:  # ragged nesting
        raise WrongTypeError(f"{name}: the nested lists have unequal lengths ({summarise(value)}); "
                             "expected a rectangular block of numbers") from exc
    if arr.dtype == object:
        raise WrongTypeError(f"{name}: could not read {summarise(value)} as a rectangular block of "
                             "numbers (ragged lists or non-numeric items); expected e.g. [[1, 0, 0], ...]")
    if arr.dtype.kind == "b":
        raise WrongTypeError(f"{name}: got booleans; expected numbers")
    if arr.dtype.kind == "c":
        raise WrongTypeError(f"{name}: got complex numbers {summarise(arr)}; expected real numbers")
    if arr.dtype.kind in "USV":
        raise WrongTypeError(f"{name}: got text items {summarise(arr)}; expected numbers")
    if arr.dtype.kind not in "iuf":
        raise WrongTypeError(f"{name}: got items of type {arr.dtype}; expected real numbers")
    return np.asarray(arr, dtype=np.float64)


def as_numbers(value, name: str, trailing: tuple[int, ...] | None = None, *, finite: bool = True) -> np.ndarray:
    """Turn ``value`` into a float64 array, or raise a typed error.

    ``trailing`` is the required shape of the last axes, e.g. ``(3, 3)``; leading
    axes are free (batches).  Rejects strings, None, booleans, ragged lists, complex
    numbers, empty input, NaN and infinity.

    >>> as_numbers([1, 2, 3], "angles", (3,)).dtype
    dtype('float64')
    """
    if type(value) is np.ndarray and value.dtype == np.float64:
        arr = value  # the common case: skip the type checks below
    else:
        arr = _numbers_of_anything(value, name, trailing)
    if arr.size == 0:
        raise WrongShapeError(f"{name}: got an empty input of shape {arr.shape}; expected "
                              + (f"shape (..., {', '.join(map(str, trailing))})" if trailing else "numbers"))
    if trailing is not None:
        k = len(trailing)
        if arr.ndim < k or arr.shape[arr.ndim - k:] != tuple(trailing):
            want = "(..., " + ", ".join(map(str, trailing)) + ")"
            hint = ""
            if arr.size in (9, 16) and trailing in ((3, 3), (4, 4)):
                hint = " (a flat list of numbers must be reshaped, stating row- or column-major layout)"
            raise WrongShapeError(f"{name}: got shape {arr.shape}; expected shape {want}{hint}")
    if finite:
        require_finite(arr, name)
    return arr


def require_finite(arr: np.ndarray, name: str) -> None:
    """Raise :class:`NotFiniteError` naming the first NaN or infinity of a float64 array.

    Callers that pass ``finite=False`` to :func:`as_numbers` must call this before using the
    numbers, unless a compiled loop's check already failed every non-finite row (its
    fallback then calls this)."""
    # a finite sum proves every entry finite (NaN and inf propagate); only a non-finite sum
    # (or an overflowing one) needs the elementwise look
    if not np.isfinite(np.add.reduce(arr, axis=None)) and not np.all(np.isfinite(arr)):
        bad = np.argwhere(~np.isfinite(arr))[0]
        raise NotFiniteError(f"{name}: holds NaN or infinity (first at index {tuple(int(i) for i in bad)}, "
                             f"value {arr[tuple(bad)]}); expected finite numbers")


_EYE3 = np.eye(3)
_EYE3.setflags(write=False)


def _gram_and_det_block(out, f):
    """Per 3x3 row of ``f (n, 9)``: ``|M^T M - I|_F`` and ``det M`` (cofactor expansion)."""
    # entry-major copy of the block: contiguous operands run numpy's vectorised loops
    m00, m01, m02, m10, m11, m12, m20, m21, m22 = f.T.copy()
    g00 = m00 * m00 + m10 * m10 + m20 * m20 - 1.0
    g11 = m01 * m01 + m11 * m11 + m21 * m21 - 1.0
    g22 = m02 * m02 + m12 * m12 + m22 * m22 - 1.0
    g01 = m00 * m01 + m10 * m11 + m20 * m21
    g02 = m00 * m02 + m10 * m12 + m20 * m22
    g12 = m01 * m02 + m11 * m12 + m21 * m22
    out[:, 0] = np.sqrt(g00 * g00 + g11 * g11 + g22 * g22 + 2.0 * (g01 * g01 + g02 * g02 + g12 * g12))
    out[:, 1] = m00 * (m11 * m22 - m12 * m21) - m01 * (m10 * m22 - m12 * m20) + m02 * (m10 * m21 - m11 * m20)


def _gram_and_det(m: np.ndarray):
    """``(..., 3, 3)`` -> (orthonormality error ``(...)``, determinant ``(...)``), one blocked pass."""
    if m.size <= 9 * SMALL_BATCH:  # small batches: fewer, whole-array numpy calls beat the per-entry formulas
        g = np.matmul(np.swapaxes(m, -1, -2), m) - _EYE3
        return np.sqrt(np.einsum("...ij,...ij->...", g, g)), np.linalg.det(m)
    flat, lead = _rows(m, 9)
    res = _blocked(_gram_and_det_block, 2, flat)
    return res[:, 0].reshape(lead), res[:, 1].reshape(lead)


def orthonormality_error(matrix: np.ndarray) -> np.ndarray:
    """Frobenius norm of ``M^T M - I`` for ``(..., n, n)`` -> ``(...)``."""
    m = np.asarray(matrix, dtype=np.float64)
    if m.shape[-2:] == (3, 3):
        return _gram_and_det(m)[0]
    g = np.swapaxes(m, -1, -2) @ m
    g = g - np.eye(m.shape[-1])
    return np.sqrt(np.sum(g * g, axis=(-2, -1)))


def _first_bad(mask: np.ndarray) -> tuple[int, ...]:
    return tuple(int(i) for i in np.argwhere(mask)[0]) if mask.ndim else ()


def checked_matrix(value, name: str = "rotation matrix", tolerance: float = ORTHONORMAL_TOLERANCE,
                   size: int = 3) -> np.ndarray:
    """Validate a rotation matrix ``(..., size, size)`` and return it as float64.

    Raises :class:`NotOrthonormalError` (with the error size) when ``M^T M`` is off
    the identity by more than ``tolerance`` in Frobenius norm, and
    :class:`ReflectionError` when the matrix is orthonormal but has det -1.
    """
    m = as_numbers(value, name, (size, size), finite=False)
    loops = compiled.loops_for(m.size // 9) if size == 3 else None
    if loops is not None:  # one compiled pass; NaN and infinity fail it too
        flat = np.ascontiguousarray(m).reshape(-1, 9)
        if sum(compiled.over_rows(loops.check, (flat,), tolerance)) == 0:
            return m
        # a row failed: the numpy checks below find it and raise with the full message
    require_finite(m, name)
    with np.errstate(over="ignore", invalid="ignore"):  # entries so large they overflow fail the check below
        if size == 3:
            err, det = _gram_and_det(m)
        else:
            err, det = orthonormality_error(m), np.linalg.det(m)
    raise_unless_rotation(m, err, det, name, tolerance)
    return m


def raise_unless_rotation(m, err, det, name: str = "rotation matrix",
                          tolerance: float = ORTHONORMAL_TOLERANCE) -> None:
    """Raise the typed error of :func:`checked_matrix` given precomputed ``err`` and ``det`` ``(...)``."""
    size = m.shape[-1]
    if (~(err <= tolerance)).any():  # NaN (from entries so large their products overflow) fails too
        where = _first_bad(~(err <= tolerance))
        worst = float(np.max(np.where(np.isnan(err), np.inf, err)))
        d = float(det[where]) if where else float(det)
        scale = ""
        if abs(abs(d) ** (1.0 / size) - 1.0) > 1e-3:
            scale = f"; its determinant is {d:.6g}, so it looks scaled by about {abs(d) ** (1.0 / size):.6g}"
        raise NotOrthonormalError(
            f"{name}: not orthonormal{' at index ' + str(where) if where else ''}: "
            f"|M^T M - I| = {worst:.3g} (tolerance {tolerance:g}){scale}. A rotation matrix must have "
            "orthonormal columns and det +1; use posekit.nearest_rotation to project a noisy matrix "
            "and see how far it moves")
    if (det < 0).any():
        where = _first_bad(det < 0)
        raise ReflectionError(
            f"{name}: determinant is -1{' at index ' + str(where) if where else ''}: this is a reflection "
            "(a handedness flip, e.g. one axis negated or a left-handed frame), not a rotation. "
            "Expected det +1; if the data really is left-handed, state the axis flip explicitly")


def checked_quaternion(value, name: str = "quaternion", tolerance: float = UNIT_TOLERANCE,
                       normalise: bool = False) -> np.ndarray:
    """Validate quaternions ``(..., 4)``; return float64, normalised only when asked.

    A length below 1e-12 raises :class:`ZeroQuaternionError`.  With
    ``normalise=False`` a length off 1 by more than ``tolerance`` raises
    :class:`NotUnitQuaternionError`; with ``normalise=True`` every quaternion is
    divided by its length.
    """
    q = as_numbers(value, name, (4,))
    n = np.sqrt(np.einsum("...i,...i->...", q, q))
    if np.any(n < 1e-12):
        where = _first_bad(n < 1e-12)
        raise ZeroQuaternionError(f"{name}: has zero length{' at index ' + str(where) if where else ''}; "
                                  "a quaternion must have length 1 to name a rotation")
    if normalise:
        return q / n[..., None]
    off = np.abs(n - 1.0)
    if np.any(off > tolerance):
        where = _first_bad(off > tolerance)
        seen = float(n[where]) if where else float(n)
        raise NotUnitQuaternionError(
            f"{name}: length is {seen:.9g}{' at index ' + str(where) if where else ''}, off 1 by more than "
            f"the tolerance {tolerance:g}; expected a unit quaternion. Pass normalise=True to divide by "
            "the length on purpose")
    return q


@dataclass(frozen=True)
class Projection:
    """Result of :func:`nearest_rotation`.

    ``rotation`` ``(..., 3, 3)`` is the nearest proper rotation in Frobenius norm;
    ``moved`` ``(...)`` is ``|R - M|_F``; ``orthonormality_error`` ``(...)`` is
    ``|M^T M - I|_F`` of the input; ``determinant`` ``(...)`` is ``det M``;
    ``was_reflection`` ``(...)`` is True where ``det M < 0`` (the nearest *rotation*
    then differs from the nearest orthogonal matrix).
    """

    rotation: np.ndarray
    moved: np.ndarray
    orthonormality_error: np.ndarray
    determinant: np.ndarray
    was_reflection: np.ndarray

    def summary(self) -> str:
        worst = float(np.max(self.moved))
        flips = int(np.count_nonzero(self.was_reflection))
        text = f"moved by at most {worst:.3g} (Frobenius); input |M^T M - I| up to {float(np.max(self.orthonormality_error)):.3g}"
        if flips:
            text += f"; {flips} input(s) had det < 0 (a reflection) and were projected to the nearest rotation"
        return text


def nearest_rotation(matrix) -> Projection:
    """Project ``(..., 3, 3)`` matrices onto the nearest rotation, reporting the move.

    Polar decomposition via the SVD (Higham 1986, "Computing the Polar
    Decomposition"): ``M = U S V^T`` -> ``R = U diag(1, 1, d) V^T`` with
    ``d = sign(det(U V^T))`` so that ``det R = +1`` (Kabsch 1976 sign fix).

    >>> p = nearest_rotation([[1.01, 0, 0], [0, 1, 0], [0, 0, 0.99]])
    >>> bool(abs(p.moved - 0.01414) < 1e-4)
    True
    """
    m = as_numbers(matrix, "matrix", (3, 3))
    u, _, vt = np.linalg.svd(m)
    d = np.sign(np.linalg.det(u @ vt))
    d = np.where(d == 0, 1.0, d)
    u = u.copy()
    u[..., :, 2] *= d[..., None]
    r = u @ vt
    moved = np.sqrt(np.sum((r - m) ** 2, axis=(-2, -1)))
    det = np.linalg.det(m)
    return Projection(r, moved, orthonormality_error(m), det, det < 0)


def is_number(x) -> bool:
    return isinstance(x, Number) and not isinstance(x, bool)
