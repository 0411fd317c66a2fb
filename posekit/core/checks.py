"""Validation of raw inputs, and projection onto the nearest rotation.

Nothing here repairs an input silently: a check either passes the numbers on
unchanged (as float64) or raises a typed error from :mod:`posekit.core.errors`.
:func:`nearest_rotation` is the one place that changes numbers, and it reports
how far it moved them.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass
from numbers import Number

import numpy as np

from .errors import (
    BadCountError,
    BadToleranceError,
    BroadcastError,
    CountTypeError,
    MagnitudeError,
    MaskedEntriesError,
    NotFiniteError,
    NotOrthonormalError,
    NotUnitQuaternionError,
    ReflectionError,
    ToleranceTypeError,
    WrongShapeError,
    WrongTypeError,
    ZeroQuaternionError,
    summarise,
)
from . import compiled
from .rotation import SMALL_BATCH, _blocked, _rows, unit_rows

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
        raise WrongTypeError(f"{name}: got a {type(value).__name__} {summarise(value)}; expected a list or array of "
                             "numbers")
    if isinstance(value, (bool, np.bool_)):
        raise WrongTypeError(f"{name}: got a boolean {value!r}; expected numbers")
    if isinstance(value, np.ma.MaskedArray):
        value = _unmasked(value, name)
    try:
        with warnings.catch_warnings():  # numpy turns a masked item in a list into NaN with a warning
            warnings.filterwarnings("error", message=".*masked element", category=UserWarning)
            arr = np.asarray(value)
    except UserWarning as exc:
        raise MaskedEntriesError(f"{name}: holds numpy's masked constant ({summarise(value)}); expected numbers "
                                 "without masked entries: fill or drop them first, saying what they stand for") from exc
    except ValueError as exc:  # ragged nesting
        raise WrongTypeError(f"{name}: the nested lists have unequal lengths ({summarise(value)}); "
                             "expected a rectangular block of numbers") from exc
    if arr.dtype == object:
        return _python_integers(arr, value, name)
    if arr.dtype.kind == "b":
        raise WrongTypeError(f"{name}: got booleans {summarise(arr)}; expected numbers")
    if arr.dtype.kind == "c":
        raise WrongTypeError(f"{name}: got complex numbers {summarise(arr)}; expected real numbers")
    if arr.dtype.kind in "USV":
        raise WrongTypeError(f"{name}: got text items {summarise(arr)}; expected numbers")
    if arr.dtype.kind not in "iuf":
        raise WrongTypeError(f"{name}: got items of type {arr.dtype}; expected real numbers")
    if arr.dtype.kind == "f" and arr.dtype.itemsize > 8:  # long double: may hold more than float64 can
        with np.errstate(over="ignore"):
            out = np.asarray(arr, dtype=np.float64)
        _require_float64_range(arr, out, name)
        return out
    return np.asarray(arr, dtype=np.float64)


def _unmasked(value: np.ma.MaskedArray, name: str) -> np.ndarray:
    """The data of a masked array with no masked entry; a masked entry is refused, never guessed."""
    mask = np.ma.getmaskarray(value)
    if mask.any():
        count = int(np.count_nonzero(mask))
        first = tuple(int(i) for i in np.argwhere(mask)[0])
        raise MaskedEntriesError(
            f"{name}: got a masked array of shape {value.shape} with {count} masked "
            f"entr{'y' if count == 1 else 'ies'} (first at index {first}); expected numbers without masked "
            "entries: fill them (value.filled(...)) or drop them (value.compressed(), or index the rows you "
            "keep) first, saying what they stand for")
    return np.asarray(value.data)


def _python_integers(arr: np.ndarray, value, name: str) -> np.ndarray:
    """An object array is read only when every item is a Python int too long for int64; else refused."""
    items = arr.ravel()
    if arr.ndim == 0 or not items.size or not all(type(x) is int for x in items):
        kinds = sorted({type(x).__name__ for x in items[:1000]} - {"int", "float"})
        said = f"; items of type {', '.join(kinds[:5])}" if kinds else ""
        raise WrongTypeError(f"{name}: could not read {summarise(value)} as a rectangular block of "
                             f"numbers (ragged lists or non-numeric items{said}); expected real numbers (int or "
                             "float), e.g. [[1, 0, 0], ...]")
    try:
        return np.asarray(arr, dtype=np.float64)
    except OverflowError as exc:  # an int beyond the largest finite float64
        raise MagnitudeError(f"{name}: holds an integer too large for float64 ({summarise(value)}); expected "
                             f"magnitudes below {np.finfo(np.float64).max:.4g} (the largest finite float64, "
                             "IEEE 754)") from exc


def _require_float64_range(original: np.ndarray, converted: np.ndarray, name: str) -> None:
    """Refuse finite numbers that became infinite when narrowed to float64."""
    grew = np.isinf(converted) & np.isfinite(original)
    if grew.any():
        first = tuple(int(i) for i in np.argwhere(grew)[0]) if grew.ndim else ()
        seen = np.format_float_scientific(original[first], precision=6, trim="-")  # f-strings would say inf
        raise MagnitudeError(f"{name}: the finite number {seen} at index {first} is too large for "
                             f"float64; expected magnitudes below {np.finfo(np.float64).max:.4g} (the largest "
                             "finite float64, IEEE 754)")


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
    with np.errstate(over="ignore", invalid="ignore"):  # a sum of huge finite entries may overflow
        total = np.add.reduce(arr, axis=None)
    if not np.isfinite(total) and not np.all(np.isfinite(arr)):
        bad = np.argwhere(~np.isfinite(arr))[0]
        raise NotFiniteError(f"{name}: holds NaN or infinity (first at index {tuple(int(i) for i in bad)}, "
                             f"value {arr[tuple(bad)]}); expected finite numbers")


_EYE3 = np.eye(3)
_EYE3.setflags(write=False)


def _gram_and_det_block(out, f):
    """Per 3x3 row of ``f (n, 9)``: ``|M^T M - I|_F`` and ``det M`` (cofactor expansion)."""
    # entry-major copy of the block: contiguous operands run numpy's vectorised loops
    m00, m01, m02, m10, m11, m12, m20, m21, m22 = f.T.copy()
    with np.errstate(over="ignore", invalid="ignore"):  # huge entries give inf, which fails the check
        _gram_and_det_rows(out, m00, m01, m02, m10, m11, m12, m20, m21, m22)


def _gram_and_det_rows(out, m00, m01, m02, m10, m11, m12, m20, m21, m22):
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
    """Frobenius norm of ``M^T M - I`` for ``(..., n, n)`` -> ``(...)``.

    A measurement, not a check: NaN entries give NaN, entries so large the products overflow give inf."""
    m = as_numbers(matrix, "matrix", None, finite=False)
    if m.ndim < 2 or m.shape[-1] != m.shape[-2]:
        raise WrongShapeError(f"matrix: got shape {m.shape}; expected square matrices of shape (..., n, n)")
    with np.errstate(over="ignore", invalid="ignore"):
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
    tolerance = checked_tolerance(tolerance, "tolerance")
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
            f"|M^T M - I| = {worst:.3g} (tolerance {tolerance:g}){scale}. Expected a rotation matrix: "
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
    divided by its length, taken after scaling by a power of two (exact), so components
    up to the largest float64 normalise too: (1e300, 0, 0, 1e300) -> (0.7071..., 0, 0, 0.7071...).
    """
    tolerance = checked_tolerance(tolerance, "tolerance")
    q = as_numbers(value, name, (4,))
    with np.errstate(over="ignore"):  # a length beyond float64 is inf here: not zero, not unit
        n = np.sqrt(np.einsum("...i,...i->...", q, q))
    if np.any(n < 1e-12):
        where = _first_bad(n < 1e-12)
        raise ZeroQuaternionError(f"{name}: has zero length{' at index ' + str(where) if where else ''}; "
                                  "a quaternion must have length 1 to name a rotation")
    if normalise:
        return unit_rows(q)
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
    require_magnitude(m, "matrix")
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


# --- settings and magnitudes ------------------------------------------------------------

#: Accepted range of every tolerance: its square (used by the scorers) stays a normal,
#: finite float64 number (normal numbers span about 2.2e-308 to 1.8e308, IEEE 754).
SMALLEST_TOLERANCE = 1e-150
LARGEST_TOLERANCE = 1e150
#: Largest accepted magnitude of a coordinate (a translation, point, direction or vector
#: entry).  Far beyond any physical length in any unit (the observable universe is about
#: 9e26 m; from memory), and small enough that rotating, inverting and composing, and the
#: squares and sums of squares taken of the results, stay finite in float64 (IEEE 754).
LARGEST_COORDINATE = 1e100
#: Precision asked of every angle read from numbers (radians): an angle whose neighbouring
#: float64 numbers are further apart than this (``np.spacing``) is refused, since the
#: rotation it names is not known to this precision (1e-9 rad is about 6e-8 degrees, far
#: below any sensor's resolution; common practice).
ANGLE_TOLERANCE = 1e-9


def checked_tolerance(value, name: str = "tolerance", unit: str = "") -> float:
    """A tolerance as a float, or :class:`BadToleranceError` (:class:`ToleranceTypeError` for non-numbers).

    Accepted: a real number (not a boolean) from ``SMALLEST_TOLERANCE`` to ``LARGEST_TOLERANCE``;
    0, negatives, NaN and infinity are refused, nothing is clipped.

    >>> checked_tolerance(1e-6)
    1e-06
    """
    accepted = f"a finite number from {SMALLEST_TOLERANCE:g} to {LARGEST_TOLERANCE:g}{unit}"
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, Number) or isinstance(value, complex) \
            or (isinstance(value, np.generic) and value.dtype.kind not in "iuf"):
        what = "text " if isinstance(value, (str, bytes)) else ("a boolean " if isinstance(value, (bool, np.bool_))
                                                               else f"a {type(value).__name__} ")
        raise ToleranceTypeError(f"{name}: got {what}{summarise(value)}; expected a real number: accepted {accepted}")
    try:
        v = float(value)
    except OverflowError:  # a Python int beyond float64
        v = float("inf")
    if not (SMALLEST_TOLERANCE <= v <= LARGEST_TOLERANCE):  # NaN fails too
        why = "a tolerance must be > 0" if v <= 0 else ("NaN is no tolerance" if v != v else "out of range")
        raise BadToleranceError(f"{name}: got {summarise(value)} ({why}); accepted {accepted}")
    return v


def checked_count(value, name: str, what: str = "") -> int:
    """A whole number >= 1 as an int, or :class:`BadCountError` (:class:`CountTypeError` for non-integers).

    >>> checked_count(5, "limit")
    5
    """
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, (int, np.integer)):
        raise CountTypeError(f"{name}: got {summarise(value)} of type {type(value).__name__}; expected a whole "
                             f"number (int) >= 1{what}")
    if value < 1:
        raise BadCountError(f"{name}: got {int(value)}; expected a whole number >= 1{what}")
    return int(value)


def checked_flag(value, name: str) -> bool:
    """``True`` or ``False`` (numpy booleans too); anything else -- 1, "yes", None -- is refused."""
    if not isinstance(value, (bool, np.bool_)):
        raise WrongTypeError(f"{name}: got {summarise(value)} of type {type(value).__name__}; expected True or False")
    return bool(value)


def require_magnitude(arr: np.ndarray, name: str, largest: float = LARGEST_COORDINATE) -> None:
    """Refuse (:class:`MagnitudeError`) finite entries beyond ``largest`` in magnitude: results of
    rotating, inverting or composing them could overflow float64."""
    if arr.size and max(-float(np.min(arr)), float(np.max(arr))) > largest:
        require_finite(arr, name)  # NaN and infinity are named as such
        first = tuple(int(i) for i in np.argwhere(np.abs(arr) > largest)[0]) if arr.ndim else ()
        raise MagnitudeError(f"{name}: magnitude {float(arr[first]):.6g} at index {first} is too large: results "
                             f"computed from it could overflow float64; accepted: magnitudes up to {largest:g}")


def largest_angle(tolerance: float = ANGLE_TOLERANCE) -> float:
    """The first magnitude (radians) whose float64 spacing exceeds ``tolerance``: ``2^(e + 53)``
    with ``2^e <= tolerance < 2^(e+1)`` (spacing is ``2^(k - 52)`` on ``[2^k, 2^(k+1))``, IEEE 754).

    >>> bool(largest_angle(1e-9) == 2.0 ** 23 and np.spacing(2.0 ** 23) > 1e-9 >= np.spacing(np.nextafter(2.0 ** 23, 0)))
    True
    """
    import math

    _, e = math.frexp(tolerance)  # tolerance = m 2^e, 0.5 <= m < 1
    return math.ldexp(1.0, e + 52)


def require_representable_angles(angles: np.ndarray, name: str, scale: float = 1.0, unit: str = "radians",
                                 tolerance: float = ANGLE_TOLERANCE, norms: bool = False,
                                 advice: str = "Wrap the angles first (numpy.remainder(a, 360) for degrees is exact)"
                                 ) -> None:
    """Refuse (:class:`MagnitudeError`) angles (in ``unit``; ``scale`` turns them into radians) whose
    float64 spacing in radians exceeds ``tolerance``: the rotation they name is not known to that
    precision.  ``norms=True`` checks the lengths of rows ``(..., 3)`` (rotation vectors)."""
    import math

    if not angles.size:
        return
    if norms:
        with np.errstate(over="ignore"):
            mag = np.sqrt(np.einsum("...i,...i->...", angles, angles))  # overflow -> inf, refused below
    else:
        mag = angles
    big = max(-float(np.min(mag)), float(np.max(mag))) * scale
    with np.errstate(over="ignore", invalid="ignore"):
        if np.spacing(big) <= tolerance:  # spacing grows with magnitude: the largest decides (NaN from inf fails)
            return
    limit = largest_angle(tolerance)
    with np.errstate(over="ignore"):
        bad = ~(np.abs(mag) * scale < limit)
    first = tuple(int(i) for i in np.argwhere(bad)[0]) if bad.ndim else ()
    seen = math.hypot(*angles[first]) if norms else float(angles[first])
    what = "length" if norms else "magnitude"
    unit_text = f" {unit}" if unit else ""
    in_radians = "" if scale == 1.0 else (f" ({limit:.7g} radians)" if unit else f" (a turn of {limit:.7g} radians)")
    with np.errstate(over="ignore", invalid="ignore"):
        gap = float(np.spacing(min(abs(seen) * scale, np.finfo(np.float64).max)))
    raise MagnitudeError(
        f"{name}: {what} {seen:.6g}{unit_text}{' at index ' + str(first) if first else ''} is too large to name "
        f"a rotation to within {tolerance:g} radians: neighbouring float64 numbers there are {gap:.3g} radians "
        f"apart (np.spacing); accepted: {what}s below {limit / scale:.7g}{unit_text}{in_radians}. {advice}")


def common_batch(where: str, *parts) -> tuple[int, ...]:
    """Broadcast batch shape of ``parts = (name, shape, trailing_ndim)``, or :class:`BroadcastError`
    naming every shape and numpy's broadcasting rule.

    >>> common_batch("compose", ("a", (1, 3, 3), 2), ("b", (5, 3, 3), 2))
    (5,)
    """
    leads = [tuple(shape[: len(shape) - k]) for _, shape, k in parts]
    try:
        return tuple(np.broadcast_shapes(*leads))
    except ValueError:
        said = ", ".join(f"{name} of shape {tuple(shape)} (batch {lead})" for (name, shape, _), lead in zip(parts, leads))
        raise BroadcastError(f"{where}: the batch shapes do not broadcast together: {said}; expected batch shapes "
                             "that broadcast under numpy's rules (axis by axis from the right: equal, or 1, or "
                             "missing), e.g. (1, 3, 3) with (5, 3, 3)") from None
