"""Trajectory checks: scan a logged stream of orientations for the things that look like jumps.

Input is arrays (:func:`check_trajectory`) or a CSV or Parquet log read by
:mod:`posekit.io.logs` (pyarrow when installed, else numpy and the csv module;
:func:`read_trajectory_csv`, :func:`check_trajectory_csv`).  Poses are quaternions
``(N, 4)``, Euler angles ``(N, 3)`` or matrices ``(N, 3, 3)`` / ``(N, 9)``, read under a
:class:`~posekit.core.convention.Convention` by :func:`posekit.read_rotation` (the only
place a convention is applied).  Up to 1e6 rows are scanned in fixed-size chunks, so the
memory used beyond the output arrays stays small.

Found (each a :class:`Finding` with row numbers, spans and times):

- ``quaternion_sign_flips``: the stored quaternion's dot product with the previous row's
  is negative (``q`` and ``-q`` are one rotation: double cover, common practice);
  ``report.quaternion`` is a sign-continuous copy of the input numbers;
- ``euler_wraps``: an Euler angle (the input angles, or the readback of quaternions and
  matrices) changed by more than half a turn in one row; ``report.euler`` is an
  unwrapped copy (multiples of a full turn added, as ``numpy.unwrap`` does);
- ``near_gimbal_lock``: the middle Euler angle within ``lock_margin`` of its pole
  (±90 degrees Tait-Bryan, 0 or 180 proper Euler; common practice);
- ``quaternion_norm_drift``: ``| |q| - 1 |`` above ``norm_tolerance``;
- ``non_orthonormal``: ``|M^T M - I|_F`` above ``matrix_tolerance`` (these rows are also rejected);
- ``time_backwards``, ``time_duplicates``, ``time_gaps``: timestamps that go back, repeat,
  or jump by more than ``gap_limit``;
- ``rate_above_limit``: geodesic turn between rows over the time step above ``rate_limit``.

Rows that name no rotation (NaN or infinite numbers, zero-length quaternion, a matrix
that is not orthonormal or is a reflection, unreadable CSV fields) are **rejected**:
each is listed with its reason and left out of every other check; the checks between
neighbours then compare the nearest used rows.  Quaternions with norm drift are used
as ``q / |q|`` for rates and angles, and the report says so.
"""

from __future__ import annotations

import io  # noqa: F401 - used by the doctests
import re
from dataclasses import dataclass, field
from types import MappingProxyType

import numpy as np

from ..core.checks import orthonormality_error
from ..core.rotation import wrap_signed
from ..core.convention import CHOICES, Convention
from ..core.errors import WrongShapeError, WrongTypeError, excerpt, odd_characters, plural, summarise
from ..core.reading import as_convention, read_rotation, write_rotation
from ..explain import Reading, Slip, read_numbers, sentence, stated_fields
from ..io.limits import LOG_LIMIT
from ..io.logs import (DuplicateColumnError, EmptyTrajectoryError, MissingColumnError, RejectedRow,
                       TrajectoryInputError, names_words, read_log)

__all__ = [
    "TrajectoryInputError",
    "MissingColumnError",
    "EmptyTrajectoryError",
    "DuplicateColumnError",
    "TRAJECTORY_KINDS",
    "FINDINGS",
    "RejectedRow",
    "Span",
    "Finding",
    "ColumnMapping",
    "TrajectoryTable",
    "MotionPrior",
    "TrajectoryReport",
    "check_trajectory",
    "read_trajectory_csv",
    "check_trajectory_csv",
]


TRAJECTORY_KINDS = ("quaternion", "euler", "matrix")

FINDINGS = {
    "quaternion_sign_flips": "the stored quaternion flips sign from the previous row (same rotation, a jump in numbers)",
    "euler_wraps": "an Euler angle jumps by more than half a turn from the previous row (a wrap)",
    "near_gimbal_lock": "the middle Euler angle is within the lock margin of its pole",
    "quaternion_norm_drift": "the quaternion's length is off 1 by more than the norm tolerance",
    "non_orthonormal": "the matrix is not orthonormal within the matrix tolerance (row rejected)",
    "time_backwards": "the timestamp is earlier than the previous row's",
    "time_duplicates": "the timestamp equals the previous row's",
    "time_gaps": "the time step from the previous row is longer than the gap limit",
    "rate_above_limit": "the turn rate from the previous row is above the rate limit",
}

_CHUNK = 1 << 14


@dataclass(frozen=True)
class Span:
    """Consecutive flagged rows ``first_row..last_row`` (inclusive) and their times."""

    first_row: int
    last_row: int
    first_time: float
    last_time: float

    def words(self) -> str:
        if self.first_row == self.last_row:
            return f"row {self.first_row} (t = {self.first_time:.9g})"
        return f"rows {self.first_row}-{self.last_row} (t = {self.first_time:.9g} to {self.last_time:.9g})"


@dataclass(frozen=True)
class Finding:
    """One kind of finding: flagged ``rows (K,)`` and their runs as spans (arrays of length S)."""

    name: str
    description: str
    rows: np.ndarray
    span_first: np.ndarray
    span_last: np.ndarray
    span_first_time: np.ndarray
    span_last_time: np.ndarray
    checked: bool = True

    @property
    def count(self) -> int:
        return int(self.rows.size)

    @property
    def spans(self) -> tuple[Span, ...]:
        return tuple(Span(int(a), int(b), float(ta), float(tb)) for a, b, ta, tb in
                     zip(self.span_first, self.span_last, self.span_first_time, self.span_last_time))

    def words(self, limit: int = 5) -> str:
        if not self.checked:
            return f"{self.name}: not checked ({self.description})"
        if not self.count:
            return f"{self.name}: none"
        shown = "; ".join(s.words() for s in self.spans[:limit])
        more = f"; and {plural(self.span_first.size - limit, 'more span')}" if self.span_first.size > limit else ""
        spans = plural(int(self.span_first.size), "span")
        return f"{self.name}: {plural(self.count, 'row')} in {spans} -- {shown}{more}"


def _finding(name: str, rows, times, checked: bool = True, description: str | None = None) -> Finding:
    rows = np.asarray(rows, dtype=np.int64)
    if rows.size:
        breaks = np.flatnonzero(np.diff(rows) > 1)
        first = rows[np.concatenate([[0], breaks + 1])]
        last = rows[np.concatenate([breaks, [rows.size - 1]])]
    else:
        first = last = np.zeros(0, dtype=np.int64)
    return Finding(name, description or FINDINGS[name], rows, first, last, times[first], times[last], checked)


@dataclass(frozen=True)
class ColumnMapping:
    """Which CSV columns were read as what; ``inferred`` says whether posekit guessed it from the headers."""

    time: str
    values: tuple[str, ...]
    kind: str
    inferred: bool
    words: str
    notes: tuple[str, ...] = ()


@dataclass(frozen=True)
class TrajectoryTable:
    """A CSV or Parquet log read into arrays: ``times (N,)``, ``values (N, 4) / (N, 3) / (N, 9) / (N, 3, 3)``.

    Rows that could not be read hold NaN and are listed in ``rejected``; ``lines (N,)``
    are their 1-based line numbers in the file (None for Parquet, whose rows have no
    lines).  ``reader``: ``"pyarrow"`` or ``"python"``, the reader that read it;
    ``format``: ``"csv"`` or ``"parquet"``.
    """

    source: str
    times: np.ndarray
    values: np.ndarray
    kind: str
    mapping: ColumnMapping
    lines: np.ndarray | None
    rejected: tuple[RejectedRow, ...]
    reader: str = "python"
    format: str = "csv"


@dataclass(frozen=True)
class MotionPrior:
    """Ground-vehicle motion prior: the turn axis between rows should stay near the vertical axis.

    ``world_share (3,)`` and ``body_share (3,)`` are the turn-weighted mean of the
    squared axis components (sum 1) of the row-to-row turns, in the parent (world) frame
    (``R_k R_{k-1}^T``) and in the child (body) frame (``R_{k-1}^T R_k``).  ``passed`` is
    True when the vertical share is at least ``share_needed`` in both frames, None when
    the vehicle turned too little to judge (``total_turn`` radians).  ``suggestions``
    says which axis swap or convention mix-up would make the axis vertical;
    ``candidates`` lists ``(convention text, world share, body share)`` for every
    alternative reading tried on a subsample.
    """

    vertical: str
    share_needed: float
    total_turn: float
    world_share: np.ndarray
    body_share: np.ndarray
    passed: bool | None
    suggestions: tuple[str, ...]
    candidates: tuple[tuple[str, float, float], ...]

    def words(self) -> str:
        v = self.vertical
        head = (f"ground-vehicle prior (turn axis near {v}): world shares x/y/z "
                f"{'/'.join(f'{s:.2f}' for s in self.world_share)}, body shares "
                f"{'/'.join(f'{s:.2f}' for s in self.body_share)}, needed {self.share_needed:.2f} on {v}")
        if self.passed is None:
            return head + f"; too little turning to judge (total {self.total_turn:.3g} rad)"
        if self.passed:
            return head + "; passed"
        return head + "; FAILED: " + ("; ".join(self.suggestions) if self.suggestions else
                                      "no single axis swap or convention change tried makes it vertical")


@dataclass(frozen=True)
class TrajectoryReport:
    """The result of a trajectory scan (all arrays have one entry per input row, NaN where rejected).

    - ``times (N,)``; ``used (N,)`` bool, False for rejected rows;
    - ``quaternion (N, 4)``: sign-continuous copy of the input numbers (quaternion input; else None);
    - ``norm (N,)``: quaternion length (quaternion input; else None);
    - ``orthonormality (N,)``: ``|M^T M - I|_F`` (matrix input; else None);
    - ``euler (N, 3)``: unwrapped Euler angles in the convention's unit (the input angles,
      or the readback of quaternions/matrices); ``euler_wrapped`` gives them wrapped back;
    - ``pole_distance (N,)``: distance of the middle angle to its pole, convention's unit;
    - ``rate (N,)``: turn rate from the previous used row, convention's unit per time unit
      (NaN on the first used row and where the time step is not positive);
    - ``findings``: name -> :class:`Finding` (see :data:`FINDINGS`);
    - ``rejected``: every row left out, with its reason;
    - ``settings``: every threshold used, in words and numbers;
    - ``mapping``: the CSV column mapping (CSV input; else None); ``prior``: the
      ground-vehicle check (when asked for; else None).
    """

    convention: Convention
    kind: str
    rows: int
    times: np.ndarray
    used: np.ndarray
    quaternion: np.ndarray | None
    norm: np.ndarray | None
    orthonormality: np.ndarray | None
    euler: np.ndarray
    pole_distance: np.ndarray
    rate: np.ndarray
    findings: MappingProxyType
    rejected: tuple[RejectedRow, ...]
    settings: MappingProxyType
    mapping: ColumnMapping | None = None
    prior: MotionPrior | None = None
    notes: tuple[str, ...] = field(default=())

    @property
    def euler_wrapped(self) -> np.ndarray:
        """The Euler angles as stored/read back: ``euler`` wrapped to (-half turn, half turn]."""
        return wrap_signed(self.euler, 180.0 if self.convention.degrees else np.pi)

    def counts(self) -> dict[str, int]:
        """Number of flagged rows per finding, plus ``rejected``."""
        out = {name: f.count for name, f in self.findings.items()}
        out["rejected"] = len(self.rejected)
        return out

    def summary(self, limit: int = 5) -> str:
        lines = [f"{self.rows} rows of {self.kind} under '{self.convention.to_text()}', "
                 f"{int(np.count_nonzero(self.used))} used, {len(self.rejected)} rejected"]
        if self.mapping is not None:
            lines.append(self.mapping.words)
            lines.extend(self.mapping.notes)
        lines.extend(self.notes)
        lines.extend(f.words(limit) for f in self.findings.values())
        for r in self.rejected[:limit]:
            lines.append("rejected " + r.words())
        if len(self.rejected) > limit:
            lines.append(f"... and {len(self.rejected) - limit} more rejected rows (see report.rejected)")
        if self.prior is not None:
            lines.append(self.prior.words())
        lines.append("settings: " + ", ".join(f"{k} = {v}" for k, v in self.settings.items()))
        return "\n".join(lines)


# --------------------------------------------------------------------------------------------- arrays


def _numeric(value, name: str) -> np.ndarray:
    if value is None or isinstance(value, (str, bytes, dict, set)):
        raise WrongTypeError(f"{name}: got {type(value).__name__}; expected an array of numbers")
    try:
        arr = np.asarray(value)
    except ValueError as exc:
        raise WrongTypeError(f"{name}: could not be read as a rectangular array of numbers") from exc
    if arr.dtype.kind not in "iuf":
        raise WrongTypeError(f"{name}: got items of type {arr.dtype}; expected real numbers "
                             "(NaN allowed: such rows are rejected and listed)")
    return np.asarray(arr, dtype=np.float64)


def _kind_of(values: np.ndarray, kind: str | None) -> str:
    shape = values.shape
    by_shape = {(4,): "quaternion", (3,): "euler", (9,): "matrix", (3, 3): "matrix"}
    guess = by_shape.get(shape[1:]) if values.ndim in (2, 3) else None
    if kind is None:
        if guess is None:
            raise WrongShapeError(f"pose values: got shape {shape}; expected (N, 4) quaternions, (N, 3) Euler "
                                  "angles, or (N, 3, 3) / (N, 9) matrices")
        return guess
    if kind not in TRAJECTORY_KINDS:
        raise TrajectoryInputError(f"kind: got {kind!r}; accepted: {', '.join(TRAJECTORY_KINDS)}")
    if guess != kind:
        want = {"quaternion": "(N, 4)", "euler": "(N, 3)", "matrix": "(N, 3, 3) or (N, 9)"}[kind]
        raise WrongShapeError(f"pose values: got shape {shape} for kind '{kind}'; expected {want}")
    return kind


def _positive(value, name: str, unit: str, allow_none: bool = False):
    if value is None and allow_none:
        return None
    if not (isinstance(value, (int, float, np.floating, np.integer)) and not isinstance(value, bool)
            and np.isfinite(value) and value > 0):
        raise TrajectoryInputError(f"{name}: got {value!r}; expected a positive finite number ({unit})")
    return float(value)


def _vee_angle(a):
    """Turn angle (radians) and axis of rotation matrices ``(n, 3, 3)``; atan2 form (common practice)."""
    v = 0.5 * np.stack([a[:, 2, 1] - a[:, 1, 2], a[:, 0, 2] - a[:, 2, 0], a[:, 1, 0] - a[:, 0, 1]], axis=-1)
    s = np.sqrt(np.sum(v * v, axis=-1))
    c = 0.5 * (a[:, 0, 0] + a[:, 1, 1] + a[:, 2, 2] - 1.0)
    return np.arctan2(s, c), v, s


def _axis_shares(rot_prev, ang, v_body, sin_ang):
    """Turn-weighted squared-axis sums (world (3,), body (3,)) and the total turn of row-to-row turns.

    ``ang``, ``v_body = sin(ang) * axis`` and ``sin_ang`` describe the body-frame turns
    ``R_{k-1}^T R_k``; the world-frame turn ``R_k R_{k-1}^T = R_{k-1} (R_{k-1}^T R_k) R_{k-1}^T``
    has the axis ``R_{k-1} axis`` (conjugation; common practice).
    """
    ok = sin_ang > 1e-12
    w = np.where(ok, ang / np.where(ok, sin_ang * sin_ang, 1.0), 0.0)
    v_world = np.einsum("nij,nj->ni", rot_prev, v_body)
    return (np.sum(v_world * v_world * w[:, None], axis=0), np.sum(v_body * v_body * w[:, None], axis=0),
            float(np.sum(ang[ok])))


def _turns(rots):
    """Body-frame row-to-row turns of ``(n, 3, 3)`` rotations: (previous rotations, angle, sin*axis, sin)."""
    ang, v, s = _vee_angle(np.swapaxes(rots[:-1], -1, -2) @ rots[1:])
    return rots[:-1], ang, v, s


def _rows_of(values, kind, conv, lo, hi, pos):
    """Rows ``pos[lo:hi]`` (or the slice ``lo:hi`` when pos is None) of the used values."""
    return values[lo:hi] if pos is None else values[pos[lo:hi]]


def check_trajectory(times, values, kind: str | None = None, convention=None, *, rate_limit: float | None = None,
                     gap_limit: float | None = None, gap_factor: float = 5.0, norm_tolerance: float = 1e-3,
                     matrix_tolerance: float = 1e-6, lock_margin: float | None = None,
                     ground_vehicle: bool = False, vertical: str = "z", share_needed: float = 0.8) -> TrajectoryReport:
    """Scan a trajectory: ``times (N,)`` and ``values`` (N, 4) / (N, 3) / (N, 3, 3) / (N, 9) -> :class:`TrajectoryReport`.

    ``kind`` is inferred from the shape when None.  Angles and rates are in the
    convention's unit: ``rate_limit`` per time unit (None: not checked),
    ``lock_margin`` (default 5 degrees).  ``gap_limit`` in time units (default
    ``gap_factor`` times the median positive time step).  ``ground_vehicle=True`` runs
    the motion prior with the ``vertical`` axis ("x", "y" or "z") and ``share_needed``.

    >>> t = np.arange(5.0)
    >>> q = np.array([[1, 0, 0, 0], [-1, 0, 0, 0], [1, 0, 0, 0], [1, 0, 0, 0], [1, 0, 0, 0.0]])
    >>> check_trajectory(t, q).findings["quaternion_sign_flips"].rows.tolist()
    [1, 2]
    """
    return _scan(times, values, kind, convention, rate_limit=rate_limit, gap_limit=gap_limit, gap_factor=gap_factor,
                 norm_tolerance=norm_tolerance, matrix_tolerance=matrix_tolerance, lock_margin=lock_margin,
                 ground_vehicle=ground_vehicle, vertical=vertical, share_needed=share_needed)


def _scan(times, values, kind, convention, *, rate_limit=None, gap_limit=None, gap_factor=5.0, norm_tolerance=1e-3,
          matrix_tolerance=1e-6, lock_margin=None, ground_vehicle=False, vertical="z", share_needed=0.8,
          _known: tuple[RejectedRow, ...] = (), _mapping: ColumnMapping | None = None, _lines=None):
    """:func:`check_trajectory`, plus the rows a CSV reader already rejected, its mapping and line numbers."""
    conv = as_convention(convention)
    scale = np.pi / 180.0 if conv.degrees else 1.0
    unit = "degrees" if conv.degrees else "radians"
    t = _numeric(times, "timestamps")
    vals = _numeric(values, "pose values")
    if t.ndim != 1:
        raise WrongShapeError(f"timestamps: got shape {t.shape}; expected (N,)")
    if vals.shape[:1] != t.shape:
        raise WrongShapeError(f"pose values: got {vals.shape[0] if vals.ndim else 0} rows for {t.size} timestamps; "
                              "expected one pose per timestamp")
    n = t.size
    if n == 0:
        raise EmptyTrajectoryError("trajectory: got 0 rows; expected at least one timestamp and pose")
    kind = _kind_of(vals, kind)
    rate_limit = _positive(rate_limit, "rate_limit", f"{unit} per time unit", allow_none=True)
    gap_factor = _positive(gap_factor, "gap_factor", "times the median time step")
    gap_limit = _positive(gap_limit, "gap_limit", "time units", allow_none=True)
    norm_tolerance = _positive(norm_tolerance, "norm_tolerance", "quaternion length")
    matrix_tolerance = _positive(matrix_tolerance, "matrix_tolerance", "|M^T M - I| in Frobenius norm")
    lock_margin = (5.0 * np.pi / 180.0 / scale) if lock_margin is None else _positive(lock_margin, "lock_margin", unit)
    if vertical not in ("x", "y", "z"):
        raise TrajectoryInputError(f"vertical: got {vertical!r}; accepted: 'x', 'y', 'z'")
    share_needed = _positive(share_needed, "share_needed", "a share between 0 and 1")

    known = {r.row for r in _known}
    lines = None if _lines is None else np.asarray(_lines)
    rejected: list[RejectedRow] = []

    def reject(rows, reason, cause=None):
        for r in rows:
            r = int(r)
            if r not in known:
                known.add(r)
                rejected.append(RejectedRow(r, reason(r) if callable(reason) else reason,
                                            None if lines is None else int(lines[r]),
                                            cause or (reason if isinstance(reason, str) else "")))

    # --- which rows name a rotation at all --------------------------------------------------------
    flat = vals.reshape(n, -1)
    used = np.isfinite(t)
    reject(np.flatnonzero(~used), "the timestamp is NaN or infinite")
    finite_vals = np.isfinite(flat).all(axis=1)
    reject(np.flatnonzero(used & ~finite_vals), "a pose value is NaN or infinite")
    used &= finite_vals
    norm = ortho = None
    non_ortho_rows = np.zeros(0, dtype=np.int64)
    if kind == "quaternion":
        norm = np.sqrt(np.einsum("ij,ij->i", flat, flat))
        norm[~finite_vals] = np.nan
        zero = used & ~(norm > 1e-12)
        reject(np.flatnonzero(zero), "the quaternion has zero length")
        used &= ~zero
    elif kind == "matrix":
        ortho = np.full(n, np.nan)
        m9 = flat
        for lo in range(0, n, _CHUNK):
            blk = m9[lo:lo + _CHUNK].reshape(-1, 3, 3)
            ortho[lo:lo + _CHUNK] = orthonormality_error(np.where(np.isfinite(blk), blk, 0.0))
        ortho[~finite_vals] = np.nan
        bad = used & ~(ortho <= matrix_tolerance)
        non_ortho_rows = np.flatnonzero(bad)
        reject(non_ortho_rows, lambda r: f"not orthonormal: |M^T M - I| = {ortho[r]:.3g} "
                                         f"(tolerance {matrix_tolerance:g})", "not orthonormal")
        used &= ~bad
        cand = np.flatnonzero(used)
        dets = np.empty(cand.size)
        for lo in range(0, cand.size, _CHUNK):
            dets[lo:lo + _CHUNK] = np.linalg.det(m9[cand[lo:lo + _CHUNK]].reshape(-1, 3, 3))
        refl = cand[dets < 0]
        reject(refl, "determinant is -1: a reflection (handedness flip), not a rotation")
        used[refl] = False
    all_used = bool(used.all())
    pos = None if all_used else np.flatnonzero(used)
    m = n if all_used else pos.size
    if m == 0:
        raise EmptyTrajectoryError(f"trajectory: all {n} rows were rejected, so no rotation is left to check: "
                                   f"{_rejection_words(tuple(_known) + tuple(rejected))}; accepted: rows with a "
                                   "finite timestamp and pose values that name a rotation")

    # --- timestamps -------------------------------------------------------------------------------
    tu = t if all_used else t[pos]
    dt = np.diff(tu)
    next_row = (lambda mask: np.flatnonzero(mask) + 1) if all_used else (lambda mask: pos[1:][mask])  # noqa: E731
    backwards = next_row(dt < 0)
    duplicates = next_row(dt == 0)
    if gap_limit is None:
        positive = dt[dt > 0]
        gap_used = gap_factor * float(np.median(positive)) if positive.size else np.inf
        del positive
    else:
        gap_used = gap_limit
    gaps = next_row(dt > gap_used)

    # --- chunked scan -----------------------------------------------------------------------------
    half = 180.0 if conv.degrees else np.pi
    period = 2 * half
    euler = np.full((n, 3), np.nan)
    pole = np.full(n, np.nan)
    rate = np.full(n, np.nan)
    quat = np.full((n, 4), np.nan) if kind == "quaternion" else None
    flips, wraps = [], []
    carry_sign = 1.0
    carry_offset = np.zeros(3)
    world_sum = np.zeros(3)
    body_sum = np.zeros(3)
    total_turn = 0.0
    prev_rot = prev_eul = prev_q = None
    for lo in range(0, m, _CHUNK):
        hi = min(lo + _CHUNK, m)
        rows = np.arange(lo, hi) if all_used else pos[lo:hi]
        v = _rows_of(vals, kind, conv, lo, hi, pos)
        r = read_rotation(v, kind, conv, normalise=True) if kind != "matrix" else \
            read_rotation(v, kind, conv, tolerance=matrix_tolerance)
        readback = write_rotation(r, "euler", conv, check=False)
        eul = v if kind == "euler" else readback
        mid = readback[:, 1] * scale
        dist = (np.maximum(0.5 * np.pi - np.abs(mid), 0.0) if conv.is_tait_bryan
                else np.maximum(np.minimum(mid, np.pi - mid), 0.0))
        pole[rows] = dist / scale
        # Euler unwrap against the previous used row
        eul_ext = eul if prev_eul is None else np.concatenate([prev_eul[None], eul])
        d = np.diff(eul_ext, axis=0)
        turns = np.round(d / period) * (np.abs(d) > half)
        wrap_rows = np.flatnonzero(np.any(turns != 0, axis=1))
        off = carry_offset - period * np.cumsum(turns, axis=0)
        if prev_eul is None:
            euler[rows[0]] = eul[0] + carry_offset
            euler[rows[1:]] = eul[1:] + off
            wraps.append(rows[1:][wrap_rows])
        else:
            euler[rows] = eul + off
            wraps.append(rows[wrap_rows])
        if off.shape[0]:
            carry_offset = off[-1]
        # turn rate
        r_ext = r if prev_rot is None else np.concatenate([prev_rot[None], r])
        if r_ext.shape[0] > 1:
            ang, v_body, sin_ang = _vee_angle(np.swapaxes(r_ext[:-1], -1, -2) @ r_ext[1:])
            first = lo if prev_rot is None else lo - 1
            step_dt = dt[first:hi - 1]
            with np.errstate(divide="ignore", invalid="ignore"):
                rr = np.where(step_dt > 0, ang / np.where(step_dt > 0, step_dt, 1.0), np.nan) / scale
            rate[rows[1:] if prev_rot is None else rows] = rr
            if ground_vehicle:
                ws, bs, tt = _axis_shares(r_ext[:-1], ang, v_body, sin_ang)
                world_sum += ws
                body_sum += bs
                total_turn += tt
        # quaternion sign continuity (on the stored numbers)
        if kind == "quaternion":
            q_ext = v if prev_q is None else np.concatenate([prev_q[None], v])
            dots = np.einsum("ij,ij->i", q_ext[1:], q_ext[:-1])
            flip = dots < 0
            signs = carry_sign * np.cumprod(np.where(flip, -1.0, 1.0))
            if prev_q is None:
                quat[rows[0]] = v[0] * carry_sign
                quat[rows[1:]] = v[1:] * signs[:, None]
                flips.append(rows[1:][flip])
            else:
                quat[rows] = v * signs[:, None]
                flips.append(rows[flip])
            if signs.size:
                carry_sign = float(signs[-1])
            prev_q = v[-1]
        prev_rot, prev_eul = r[-1], eul[-1]

    # --- findings ---------------------------------------------------------------------------------
    cat = lambda parts: np.concatenate(parts) if parts else np.zeros(0, dtype=np.int64)  # noqa: E731
    F = {}
    F["quaternion_sign_flips"] = _finding("quaternion_sign_flips", cat(flips), t, kind == "quaternion",
                                          None if kind == "quaternion" else "only for quaternion input")
    F["euler_wraps"] = _finding("euler_wraps", cat(wraps), t)
    F["near_gimbal_lock"] = _finding("near_gimbal_lock", np.flatnonzero(pole < lock_margin), t)
    if kind == "quaternion":
        drift = np.concatenate([np.flatnonzero(used[lo:lo + _CHUNK] & (np.abs(norm[lo:lo + _CHUNK] - 1.0) >
                                                                        norm_tolerance)) + lo
                                for lo in range(0, n, _CHUNK)])
        F["quaternion_norm_drift"] = _finding("quaternion_norm_drift", drift, t)
    else:
        F["quaternion_norm_drift"] = _finding("quaternion_norm_drift", [], t, False, "only for quaternion input")
    F["non_orthonormal"] = _finding("non_orthonormal", non_ortho_rows, t, kind == "matrix",
                                    None if kind == "matrix" else "only for matrix input")
    F["time_backwards"] = _finding("time_backwards", backwards, t)
    F["time_duplicates"] = _finding("time_duplicates", duplicates, t)
    F["time_gaps"] = _finding("time_gaps", gaps, t)
    if rate_limit is None:
        F["rate_above_limit"] = _finding("rate_above_limit", [], t, False, "no rate_limit given")
    else:
        F["rate_above_limit"] = _finding("rate_above_limit", np.flatnonzero(rate > rate_limit), t)

    settings = {
        "rate_limit": "not checked" if rate_limit is None else f"{rate_limit:g} {unit} per time unit",
        "gap_limit": (f"{gap_used:g} time units" + ("" if gap_limit is not None else
                                                     f" ({gap_factor:g} x the median positive time step)")),
        "lock_margin": f"{lock_margin:g} {unit}",
        "norm_tolerance": f"{norm_tolerance:g}",
        "matrix_tolerance": f"{matrix_tolerance:g}",
        "wrap_threshold": f"half a turn ({half:g} {unit})",
    }
    notes = []
    if kind == "quaternion" and F["quaternion_norm_drift"].count:
        notes.append("quaternions with norm drift were used as q/|q| for rates, angles and the Euler readback")
    if kind != "euler":
        notes.append("euler_wraps and near_gimbal_lock refer to the Euler readback under the convention")

    prior = None
    if ground_vehicle:
        prior = _motion_prior(vals, kind, conv, stated_fields(convention), pos, m, vertical, share_needed,
                              world_sum, body_sum, total_turn)
    all_rejected = tuple(sorted(tuple(_known) + tuple(rejected), key=lambda r: r.row))
    return TrajectoryReport(conv, kind, n, t, used, quat, norm, ortho, euler, pole, rate, MappingProxyType(F),
                            all_rejected, MappingProxyType(settings), _mapping, prior, tuple(notes))


def _rejection_words(rows, shown: int = 3) -> str:
    """Rejected rows counted per cause, most common first, each with its first few lines (or rows)."""
    groups: dict[str, list[RejectedRow]] = {}
    for r in sorted(rows, key=lambda x: x.row):
        groups.setdefault(r.cause or r.reason, []).append(r)
    parts = []
    for cause, rs in sorted(groups.items(), key=lambda kv: (-len(kv[1]), kv[1][0].row)):
        label = "line" if rs[0].line is not None else "row"
        where = ", ".join(str(r.line if r.line is not None else r.row) for r in rs[:shown])
        parts.append(f"{len(rs)} row{'s' if len(rs) > 1 else ''}: {cause} ({label}{'s' if len(rs) > 1 else ''} "
                     f"{where}{', ...' if len(rs) > shown else ''})")
    first = min(rows, key=lambda x: x.row)
    return "; ".join(parts) + f"; first: {first.words()}"


def _shares_of(rots):
    ws, bs, total = _axis_shares(*_turns(rots))
    tw, tb = float(np.sum(ws)), float(np.sum(bs))
    return (ws / tw if tw > 0 else ws), (bs / tb if tb > 0 else bs), total


def _motion_prior(vals, kind, conv, stated, pos, m, vertical, share_needed, world_sum, body_sum,
                  total_turn) -> MotionPrior:
    iv = "xyz".index(vertical)
    tw, tb = float(np.sum(world_sum)), float(np.sum(body_sum))
    world = world_sum / tw if tw > 0 else world_sum
    body = body_sum / tb if tb > 0 else body_sum
    if total_turn < 0.05:
        return MotionPrior(vertical, share_needed, total_turn, world, body, None, (), ())
    passed = bool(world[iv] >= share_needed and body[iv] >= share_needed)
    if passed:
        return MotionPrior(vertical, share_needed, total_turn, world, body, True, (), ())
    suggestions = []
    for name, share in (("parent (world)", world), ("child (body)", body)):
        j = int(np.argmax(share))
        if j != iv and share[j] >= share_needed:
            suggestions.append(f"the {name} frame turns about its {'xyz'[j]} axis ({share[j]:.2f} of the turning): "
                               f"swapping its {'xyz'[j]} and {vertical} axes (e.g. {'an' if j == 0 else 'a'} {'xyz'[j]}-up frame) "
                               "would make the turn axis vertical")
    # every other reading of the same numbers (the explanation engine's slips), on an even subsample
    take = np.linspace(0, m - 1, min(m, 20001)).astype(np.int64)
    rows = take if pos is None else pos[take]
    sub = vals[rows]
    candidates, good = _motion_candidates(sub, kind, conv, stated, iv)
    good = [c for c in good if min(c[1], c[2]) >= share_needed]
    if good:
        shown = "; ".join(f"{sentence(slip)[:-1]} ({text}: world share {w:.2f}, body share {b:.2f})"
                          for (text, w, b), slip in ((c[:3], c[3]) for c in good[:8]))
        more = f" and {len(good) - 8} more" if len(good) > 8 else ""
        suggestions.append(f"{len(good)} other reading(s) of the same numbers make the turn axis vertical, best "
                           f"first: {shown}{more}; small tilts make several readings fit, so confirm with a "
                           "known pose")
    return MotionPrior(vertical, share_needed, total_turn, world, body, False, tuple(suggestions), tuple(candidates))


def _motion_candidates(sub, kind, conv, stated, iv):
    """Every reading one or more fields away (the engine's :func:`~posekit.explain.readings_of`), scored by
    how vertical the turn axis becomes -> ``(candidates (text, world, body), ranked [(text, w, b, slip)])``.

    Ranking: the vertical share (to 2 digits, the smaller of world and body), then a Tait-Bryan
    reading before a proper Euler one (a small middle angle of a proper Euler sequence would put a
    level vehicle at gimbal lock), then the engine's prior (:meth:`~posekit.explain.Slip.deviations`:
    a field the caller stated costs more) and its fixed tie order.  Transposing every rotation
    (passive vs active, direction) only swaps the world and body turns, so motion alone cannot
    see it and it is not tried here; nor is another kind of numbers, which the caller states, nor
    another angle unit: shrinking every angle makes any motion look level, so the turn axis cannot
    judge the unit (the rate limit does).
    """
    nested = kind == "matrix" and sub.ndim == 3
    numbers = sub.reshape(len(sub), -1)
    start = Reading(kind, conv, stated, count=numbers.shape[1])
    scored = []
    for reading in start.alternatives():
        slip = Slip(start, reading)
        changes = slip.field_changes()
        if slip.kind_changed or any(f == "unit" or (nested and f == "layout") for f, _, _ in changes):
            continue
        rr, _ = read_numbers(reading, numbers)
        if kind == "matrix" and np.any(orthonormality_error(rr) > 1e-3):
            continue  # read this way the numbers are no rotation
        ws, bs, _ = _shares_of(rr)
        text = " ".join(f"{f}={new}" for f, _, new in changes)
        scored.append((text, float(ws[iv]), float(bs[iv]), slip))
    scored.sort(key=lambda c: (-round(min(c[1], c[2]), 2), c[3].true.convention.is_proper_euler and kind == "euler",
                               c[3].deviations(), c[3].order_key()))
    return tuple(c[:3] for c in scored), scored


# --------------------------------------------------------------------------------------------- CSV

_TIME_NAMES = {"t", "time", "times", "timestamp", "timestamps", "stamp", "sec", "secs", "seconds", "time_s",
               "t_s", "time_sec", "timestamp_s", "time_ns", "timestamp_ns", "stamp_s"}
_QUAT_WORDS = ("q", "quat", "quaternion", "orientation", "ori", "rot", "rotation", "att", "attitude")


def _norm_name(name: str) -> str:
    return re.sub(r"[\s.\-/:\[\]()]+", "_", name.strip().strip("\"'").lower()).strip("_")


def _clash(role: str, idx, names, head) -> DuplicateColumnError:
    cols = ", ".join(f"{excerpt(names[i], 30)} (column {i})" for i in idx)
    return DuplicateColumnError(
        f"{head[0]}: {role} is claimed by {len(idx)} columns: {cols}, so which one to read "
        "is unclear; accepted: one column per role: rename the extra columns, or pass time_column= and "
        "value_columns= as 0-based column numbers")


def _infer(names, kind, conv, head):
    """(time index, value indices, kind, words, notes, matrix-by-name flag) from header names.

    Two columns that claim one role (the same name twice, or ``qw`` and ``q_w``) raise
    :class:`DuplicateColumnError` when that role is read.
    """
    norm = [_norm_name(x) for x in names]
    time_cands = [i for i, x in enumerate(norm) if x in _TIME_NAMES]
    if not time_cands:
        time_cands = [i for i, x in enumerate(norm) if x.startswith("time") or "stamp" in x]
    if not time_cands:
        raise MissingColumnError(f"{head[0]}: no timestamp column found among "
                                 f"{names_words(names)}; accepted: a name such as 'time', 'timestamp', 't' or "
                                 "'stamp', or pass time_column=")
    time_idx = time_cands[0]
    same_time = [i for i, x in enumerate(norm) if x == norm[time_idx]]
    if len(same_time) > 1:
        raise _clash(f"the timestamp {excerpt(names[time_idx], 30)}", same_time, names, head)
    notes = []
    found = {}
    clashes = {}
    # quaternion: groups prefix + w/x/y/z
    groups: dict[str, dict[str, list[int]]] = {}
    for i, x in enumerate(norm):
        mt = re.fullmatch(r"(.*?)_?([wxyz])", x)
        if mt:
            groups.setdefault(mt.group(1), {}).setdefault(mt.group(2), []).append(i)
    quat_groups = [(p, g) for p, g in groups.items() if set(g) == set("wxyz")
                   and (p == "" or any(w in p.split("_") or p.endswith(w) for w in _QUAT_WORDS))]
    quat_groups.sort(key=lambda pg: pg[0] == "")  # prefer a named prefix over bare w, x, y, z
    if quat_groups:
        p, g = quat_groups[0]
        order = "wxyz" if conv.scalar == "first" else "xyzw"
        found["quaternion"] = ([g[c][0] for c in order], f"quaternion columns "
                               f"{', '.join(names[g[c][0]] for c in order)} read as ({', '.join(order)}) per "
                               f"scalar={conv.scalar}")
        clashes["quaternion"] = [(f"quaternion component {c}", g[c]) for c in order if len(g[c]) > 1]
    # matrix by entry names
    entries: dict[tuple[int, int], list[int]] = {}
    for i, x in enumerate(norm):
        mt = re.fullmatch(r"(?:r|m|rot|mat|matrix|r_)?_?([0-3])_?([0-3])", x)
        if mt:
            entries.setdefault((int(mt.group(1)), int(mt.group(2))), []).append(i)
    for base in (0, 1):
        want = [(r + base, c + base) for r in range(3) for c in range(3)]
        if all(k in entries for k in want) and "matrix" not in found:
            idx = [entries[k][0] for k in want]
            found["matrix"] = (idx, f"matrix columns {', '.join(names[i] for i in idx)} read by their row/column "
                               f"names ({'1' if base else '0'}-based), so the layout setting does not apply")
            clashes["matrix"] = [(f"matrix entry row {k[0]} column {k[1]}", entries[k]) for k in want
                                 if len(entries[k]) > 1]
    # euler by roll / pitch / yaw
    rpy: dict[str, list[int]] = {}
    for i, x in enumerate(norm):
        mt = re.search(r"(?:^|_)(roll|pitch|yaw)(?:_|$)", x)
        if mt:
            rpy.setdefault(mt.group(1), []).append(i)
    if len(rpy) == 3:
        if conv.is_proper_euler:
            if kind == "euler" or not (set(found) - {"euler"}):
                raise MissingColumnError(
                    f"{head[0]}: roll/pitch/yaw columns cannot be placed in the proper Euler sequence "
                    f"{conv.sequence} (it turns about one axis twice); accepted: value_columns= in the sequence's "
                    "order")
        else:
            about = {"x": "roll", "y": "pitch", "z": "yaw"}  # aircraft roll/pitch/yaw axes, common practice
            idx = [rpy[about[a]][0] for a in conv.axes_letters]
            found["euler"] = (idx, f"Euler columns {', '.join(names[i] for i in idx)} placed in the order of "
                              f"sequence {conv.sequence} (roll about x, pitch about y, yaw about z)")
            clashes["euler"] = [(f"the {w} angle", rpy[w]) for w in ("roll", "pitch", "yaw") if len(rpy[w]) > 1]
            says_degrees = any("deg" in norm[i] for i in idx)
            says_radians = any("rad" in norm[i] and "deg" not in norm[i] for i in idx)
            if says_degrees and not conv.degrees:
                notes.append("note: the Euler column names mention degrees but the convention says radians")
            if says_radians and conv.degrees:
                notes.append("note: the Euler column names mention radians but the convention says degrees")
    if kind is not None:
        if kind not in found:
            raise MissingColumnError(f"{head[0]}: no {kind} columns recognised among "
                                     f"{names_words(names)}{_duplicate_words(names)}; accepted: header names posekit "
                                     "knows (qw..qz, r11..r33, roll/pitch/yaw), or pass value_columns=")
        chosen = kind
    else:
        chosen = next((k for k in ("quaternion", "matrix", "euler") if k in found), None)
        if chosen is None:
            raise MissingColumnError(
                f"{head[0]}: no pose columns recognised among {names_words(names)}"
                f"{_duplicate_words(names)}{_odd_name_words(names)}; accepted: quaternion columns such as qw, qx, "
                "qy, qz, matrix entries r00..r22, or roll, pitch, yaw; or pass value_columns=")
        if len(found) > 1:
            notes.append(f"note: columns for {', '.join(sorted(found))} were all found; used {chosen} "
                         "(pass kind= to choose)")
    for role, idx in clashes.get(chosen, ()):
        raise _clash(role, idx, names, head)
    idx, words = found[chosen]
    return time_idx, idx, chosen, words, notes, chosen == "matrix"


def _odd_name_words(names) -> str:
    """Header names holding characters outside ASCII (a Cyrillic 'х' looks like 'x'), each character named."""
    odd = [(n, odd_characters(n[:60])) for n in names if not n.isascii()][:3]
    if not odd:
        return ""
    return " (outside ASCII: " + "; ".join(f"{excerpt(n, 30)} holds {', '.join(o[:2])}" for n, o in odd) + ")"


def _duplicate_words(names) -> str:
    where: dict[str, list[int]] = {}
    for i, n in enumerate(names):
        where.setdefault(n, []).append(i)
    dup = [(n, ix) for n, ix in where.items() if len(ix) > 1]
    if not dup:
        return ""
    return " (" + "; ".join(f"{excerpt(n, 30)} is the name of columns {', '.join(map(str, ix))}"
                            for n, ix in dup[:3]) + ")"


def _resolve(col, names, header: bool, what: str, head=("CSV header", "the header")) -> int:
    if isinstance(col, (int, np.integer)) and not isinstance(col, bool):
        if not 0 <= col < len(names):
            raise MissingColumnError(f"{what}: column number {col} does not exist; the file has {len(names)} "
                                     f"columns: accepted: 0 to {len(names) - 1}")
        return int(col)
    if isinstance(col, str):
        if not header:
            raise MissingColumnError(f"{what}: column name {excerpt(col, 40)} given but the file has no header "
                                     "line; accepted: 0-based column numbers")
        exact = [i for i, x in enumerate(names) if x == col]
        if len(exact) > 1:
            raise _clash(f"{what} {excerpt(col, 30)}", exact, names, head)
        if exact:
            return exact[0]
        normed = [i for i, x in enumerate(names) if _norm_name(x) == _norm_name(col)]
        if len(normed) > 1:
            raise _clash(f"{what} {excerpt(col, 30)}", normed, names, head)
        if normed:
            return normed[0]
        raise MissingColumnError(f"{what}: column {excerpt(col, 40)} is not in {head[1]}; "
                                 f"accepted: one of {names_words(names)}, or a 0-based column number")
    raise TrajectoryInputError(f"{what}: got {summarise(col, 40)}; expected a column name or a 0-based column number")


def read_trajectory_csv(source, *, kind: str | None = None, convention=None, time_column=None, value_columns=None,
                        delimiter: str | None = None, comment: str | None = "#",
                        limit: int = LOG_LIMIT, reader: str = "auto") -> TrajectoryTable:
    """Read a CSV (or Parquet) file of timestamps and poses -> :class:`TrajectoryTable`.

    ``source``: a path, ``"-"`` (standard input) or an open file; at most ``limit``
    bytes are read (default :data:`~posekit.io.limits.LOG_LIMIT`, 1 GiB; past it a
    :class:`~posekit.io.logs.LogTooLargeError` names the limit: pass a larger
    ``limit=``).  Lines and fields are read by :func:`posekit.io.logs.read_log`: the
    delimiter (comma, semicolon, tab or white space) is detected from the first line
    unless given; lines starting with ``comment`` and blank lines are skipped; quoted
    fields are read as Python's csv module reads them.  Columns: ``time_column`` and
    ``value_columns`` (names or 0-based numbers; 4 -> quaternion in the convention's
    scalar order, 3 -> Euler angles in the sequence's order, 9 -> a matrix per
    ``layout``), or inferred from the header and described in ``mapping.words``.
    Rows with more or fewer fields than the header, an empty field, text in a numeric
    column or NaN are kept as NaN and listed in ``rejected`` with their reason and
    line; a missing or doubly named column, an empty file or a file with no data rows
    raises a :class:`TrajectoryInputError` subclass.

    ``reader``: ``"auto"`` (pyarrow when the optional package is installed, else the
    Python reader), ``"pyarrow"`` or ``"python"``; both give the same table (see
    :mod:`posekit.io.logs`).  A Parquet file (recognised by its signature) is read by
    pyarrow with the same column mapping: its column names are the header, rows have no
    line numbers, a null value rejects its row, and a column that holds no numbers
    raises :class:`~posekit.io.logs.LogColumnTypeError` naming it.

    >>> text = io.StringIO("time,qw,qx,qy,qz\\n0,1,0,0,0\\n1,oops,0,0,0\\n")
    >>> table = read_trajectory_csv(text)
    >>> table.mapping.words.split(";")[1]
    ' quaternion columns qw, qx, qy, qz read as (w, x, y, z) per scalar=first'
    >>> table.rejected[0].words().split(";")[0]
    "row 1 (line 3): text 'oops' in numeric column qw"
    """
    conv = as_convention(convention)
    log = read_log(source, limit=limit, delimiter=delimiter, comment=comment, reader=reader)
    name, header, hl = log.source, log.header, log.header_line
    names = list(log.names)
    if log.format == "parquet":
        head = (f"Parquet file {name}", f"the columns of Parquet file {name}")
    else:
        head = (f"CSV header (line {hl})", f"the header (line {hl})")
    notes: list[str] = []
    by_name_matrix = False
    if value_columns is None:
        if not header:
            raise MissingColumnError(f"CSV file {name} has no header line, so the columns cannot be inferred; "
                                     "accepted: time_column= and value_columns= as 0-based column numbers")
        ti, vi, kind_found, words, notes, by_name_matrix = _infer(names, kind, conv, head)
        if time_column is not None:
            ti = _resolve(time_column, names, header, "time_column", head)
        inferred = True
    else:
        if time_column is None:
            raise MissingColumnError("value_columns given without time_column; accepted: both, or neither to infer "
                                     "them from the header")
        ti = _resolve(time_column, names, header, "time_column", head)
        if isinstance(value_columns, (str, bytes)) or not hasattr(value_columns, "__len__"):
            raise TrajectoryInputError(f"value_columns: got {summarise(value_columns, 40)}; expected a list of "
                                       "names or numbers")
        vi = [_resolve(c, names, header, "value_columns", head) for c in value_columns]
        by_count = {4: "quaternion", 3: "euler", 9: "matrix"}
        kind_found = kind or by_count.get(len(vi))
        if kind_found is None or by_count.get(len(vi)) != kind_found:
            raise WrongShapeError(f"value_columns: got {len(vi)} columns for kind {kind!r}; expected 4 "
                                  "(quaternion), 3 (Euler angles) or 9 (matrix)")
        words = f"{kind_found} columns {', '.join(names[i] for i in vi)} as given"
        inferred = False
    cols = [ti] + list(vi)
    twice = sorted({c for c in cols if cols.count(c) > 1})
    if twice:
        raise TrajectoryInputError(f"columns: {', '.join(f'{excerpt(names[c], 30)} (column {c})' for c in twice)} "
                                   "would be read twice (as the time and a pose value, or as two pose values); "
                                   "accepted: a different column for the time and for each value")
    unused = {n: ix for n, ix in log.duplicates().items() if not set(ix) & set(cols)}
    notes = list(notes) + [f"note: {head[1]} names columns {', '.join(map(str, ix))} all "
                           f"{excerpt(n, 30)}; none of them is read" for n, ix in list(unused.items())[:3]]
    words = f"time column {names[ti]}; {words}" + ("; inferred from the header (pass time_column= and "
                                                    "value_columns= to override)" if inferred else "")
    mapping = ColumnMapping(names[ti], tuple(names[i] for i in vi), kind_found, inferred, words, tuple(notes))
    arr, rejected = log.numbers(cols)
    line_no, reader, fmt = log.lines, log.reader, log.format
    del log                                   # the file's bytes and lines go before the arrays are copied
    bad = ~np.isfinite(arr).all(axis=1)
    if bad.any():
        seen = {r.row for r in rejected}
        for r in np.flatnonzero(bad):
            if int(r) not in seen:
                which = [names[c] for c, ok in zip(cols, np.isfinite(arr[r])) if not ok]
                rejected.append(RejectedRow(int(r), f"NaN or infinity in column {', '.join(which)}; accepted: finite "
                                            "numbers", None if line_no is None else int(line_no[r]),
                                            "NaN or infinity"))
        rejected.sort(key=lambda x: x.row)
    times = np.ascontiguousarray(arr[:, 0])
    values = np.ascontiguousarray(arr[:, 1:])
    if by_name_matrix:
        values = values.reshape(-1, 3, 3)
    return TrajectoryTable(str(name), times, values, kind_found, mapping, line_no, tuple(rejected), reader, fmt)


def check_trajectory_csv(source, *, kind: str | None = None, convention=None, time_column=None, value_columns=None,
                         delimiter: str | None = None, comment: str | None = "#", limit: int = LOG_LIMIT,
                         reader: str = "auto", **checks) -> TrajectoryReport:
    """Read a CSV or Parquet log (:func:`read_trajectory_csv`), scan it (:func:`check_trajectory`) -> a report.

    The report carries the column mapping and lists the unreadable rows with their
    file line numbers.  ``limit``: the most bytes read (default 1 GiB); ``reader``: as in
    :func:`read_trajectory_csv`.  ``checks`` are the keyword options of
    :func:`check_trajectory`.

    >>> text = io.StringIO("t,qx,qy,qz,qw\\n0,0,0,0,1\\n1,0,0,0,-1\\n2,0,0,0,-1\\n")
    >>> check_trajectory_csv(text).counts()["quaternion_sign_flips"]
    1
    """
    unknown = set(checks) - _CHECK_OPTIONS
    if unknown:
        raise TrajectoryInputError(f"unknown option(s) {sorted(unknown)}; accepted: "
                                   f"{', '.join(sorted(_CHECK_OPTIONS))}")
    conv = as_convention(convention)
    table = read_trajectory_csv(source, kind=kind, convention=conv, time_column=time_column,
                                value_columns=value_columns, delimiter=delimiter, comment=comment, limit=limit,
                                reader=reader)
    return _scan(table.times, table.values, table.kind, conv, _known=table.rejected, _mapping=table.mapping,
                 _lines=table.lines, **checks)


_CHECK_OPTIONS = {"rate_limit", "gap_limit", "gap_factor", "norm_tolerance", "matrix_tolerance", "lock_margin",
                  "ground_vehicle", "vertical", "share_needed"}
