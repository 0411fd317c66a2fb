"""What every check of orientation streams shares: input checks, relative motion, angular speeds,
the hand-eye solvers and the clock offset from speed correlation.

Two checks build on it: :mod:`posekit.analysis.alignment` (two sensors on one rigid body: the
offset, the mount between them, the slip in B's reading) and :mod:`posekit.analysis.motion`
(one log against a described motion or a rate stream).

- **Input.**  :func:`checked_times`, :func:`checked_stream` and :func:`read_reference` check
  time stamps and values and say in the caller's words (:func:`checked_labels`) what was wrong.
- **Relative motion.**  The turn between samples, ``R_k^T R_{k+1}`` (:func:`relative_motions`),
  does not depend on the world frame; its angle does not depend on the frame, the action, the
  direction or the quaternion algebra either (:func:`relative_angles`, :func:`angular_speeds`).
- **Hand-eye.**  ``A_i X = X B_i`` for the mount ``X``: rotation by the closed form of
  Park & Martin 1994 (:func:`park_martin_rotation`), translation by stacked linear least
  squares (:func:`mount_translation`); :func:`motion_of` says how much and about how many axes
  a set of motions turns, which decides whether ``X`` is fixed at all.
- **Clock offset.**  Both angular speeds on one grid (:func:`speed_grid`), cross-correlated
  (:func:`estimate_offset`; :data:`OFFSET_METHOD` says how, and how the uncertainty is made).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from ..core import rotation as rot
from ..core.checks import as_numbers, orthonormality_error
from ..core.errors import PoseInputError, WrongShapeError, summarise
from ..explain import COUNTS, REMAPS, Reading, Slip, read_numbers, stated_reading, write_numbers
from ..explain.scorer import det3

__all__ = ["MIN_SAMPLES", "DEFAULT_PAIR_ANGLE", "READ_TOLERANCE", "MEMBERS_SHOWN", "OFFSET_METHOD",
           "AlignmentError", "StreamTimesError", "NoOverlapError", "DegenerateMotionError", "ReferenceStreamError",
           "StreamLogError", "TimeOffset", "CorrelationCurve", "SpeedGrid", "relative_angles", "angular_speeds",
           "rotation_vectors", "relative_motions", "park_martin_rotation", "mount_translation", "solve_mount",
           "motion_of", "key_samples", "speed_grid", "estimate_offset", "checked_labels", "checked_times",
           "checked_stream", "read_reference", "encode_slip", "plain_list"]


#: Fewest samples a stream may have.
MIN_SAMPLES = 20


#: Key samples closer than this in A's turning (radians) are merged; the default pair spacing.
DEFAULT_PAIR_ANGLE = math.radians(20.0)


#: Largest grid the coarse correlation runs on (samples per stream); finer grids are block-averaged.
COARSE_SAMPLES = 16384


#: Largest fine grid (samples per stream); a finer natural grid step is widened to stay below it.
FINE_SAMPLES = 1 << 21


#: A's numbers must read as rotations to this orthonormality error (printed digits, as posekit's diagnosis).
READ_TOLERANCE = 1e-3


#: At most this many readings listed per kind of tie under one explanation.
MEMBERS_SHOWN = 8


#: Contiguous blocks of the overlap for the delete-a-block jackknife of the offset.
JACKKNIFE_BLOCKS = 8


#: Lags on each side of the peak kept in :attr:`CorrelationCurve.peak_offsets` (on the grid the peak was refined on).
PEAK_LAGS = 6


OFFSET_METHOD = (
    "normalised cross-correlation (Pearson's coefficient per lag, over the overlap only) of A's and B's angular "
    "speeds |omega(t)| resampled onto one grid, computed with the FFT (coarse grid for every reading, the full "
    "grid around the peak for the best ones); the peak is refined to a sub-sample lag by a parabola through the "
    "top three lags. Uncertainty (one standard deviation, seconds) = sqrt(s_j^2 + s_i^2): s_j is the "
    f"delete-a-block jackknife of that sub-sample peak over {JACKKNIFE_BLOCKS} contiguous blocks of the overlap "
    "(Kunsch 1989, 'The jackknife and the bootstrap for general stationary observations', Annals of Statistics "
    "17(3)), the scatter the data themselves show; s_i is the distance between the parabola's peak and a "
    "three-point Gaussian fit's peak (Willert & Gharib 1991, Experiments in Fluids 10(4)), the part the peak's "
    "shape leaves open. The peak's lobe and a second peak beyond it are reported too (a periodic motion).")


class AlignmentError(PoseInputError):
    """Two streams that cannot be aligned as given (each subclass says why and what would do)."""


class StreamTimesError(AlignmentError, WrongShapeError):
    """Time stamps that are not one strictly increasing number per sample."""


class NoOverlapError(AlignmentError):
    """The two streams do not cover a long enough common stretch of time."""


class DegenerateMotionError(AlignmentError):
    """The motion cannot fix the offset or the mount; the message says which motion to add."""


class ReferenceStreamError(AlignmentError):
    """Stream A (the reference) does not read as rotations under its stated reading."""


class StreamLogError(AlignmentError):
    """A log cannot give one stream as mapped: a column missing or named twice, a row that is not numbers."""


def relative_angles(r0, r1) -> np.ndarray:
    """Angle (radians, in [0, pi]) of ``r0^T r1`` for ``(..., 3, 3)`` stacks -> ``(...)``.

    The log map of Park & Martin 1994 ("Robot sensor calibration: solving AX = XB on the
    Euclidean group", IEEE Trans. Robotics and Automation 10(5)): for ``T = r0^T r1``,
    ``1 + 2 cos(phi) = tr T`` and ``T - T^T = 2 sin(phi) [axis]x``.  ``tr T`` is the sum of
    the element-wise products of r0 and r1; ``2 sin(phi)`` is the length of ``sum_i c_i x d_i``
    over the columns ``c_i`` of r0 and ``d_i`` of r1, which is ``vee(S - S^T)`` of
    ``S = r1 r0^T`` (a rotation by the same angle), so no 3x3 product is formed;
    ``atan2(2 sin, 2 cos)`` keeps digits near 0 and pi (common practice).

    >>> from posekit.core.rotation import elementary_matrix as E
    >>> round(float(relative_angles(E("z", 0.2), E("z", 0.5))), 12)
    0.3
    """
    a = np.asarray(r0, dtype=np.float64)
    b = np.asarray(r1, dtype=np.float64)
    two_cos = np.einsum("...ij,...ij->...", a, b) - 1.0

    def dot(i, j):
        return np.einsum("...k,...k->...", a[..., i, :], b[..., j, :])

    x = dot(1, 2) - dot(2, 1)
    y = dot(2, 0) - dot(0, 2)
    z = dot(0, 1) - dot(1, 0)
    return np.arctan2(np.sqrt(x * x + y * y + z * z), two_cos)


def angular_speeds(times, rotations, stride: int = 1):
    """Angular speed magnitudes of one stream: ``times (N,)``, ``rotations (N, 3, 3)`` ->
    ``(mid-times (N - stride,), speeds (N - stride,) in radians per second)``.

    Each speed is the angle of ``R_k^T R_{k+stride}`` (:func:`relative_angles`) over the time
    between the two samples, stamped at their midpoint.  The angle does not change when
    every matrix is transposed or turned by one constant rotation on either side.
    """
    t = np.asarray(times, dtype=np.float64)
    r = np.asarray(rotations, dtype=np.float64)
    ang = relative_angles(r[:-stride], r[stride:])
    return 0.5 * (t[stride:] + t[:-stride]), ang / (t[stride:] - t[:-stride])


def rotation_vectors(matrices) -> np.ndarray:
    """Rotation vectors (log map, Park & Martin 1994) of ``(..., 3, 3)`` rotations, via the quaternion."""
    return rot.rotvec_of_quaternion(rot.quaternion_of_matrix(matrices))


def park_martin_rotation(alpha, beta) -> np.ndarray:
    """Rotation ``R_X`` of the mount from paired rotation vectors: ``alpha, beta (P, 3) -> (3, 3)``.

    Park & Martin 1994 (IEEE Trans. Robotics and Automation 10(5)): ``A_i X = X B_i`` gives
    ``alpha_i = R_X beta_i`` for the log maps ``alpha_i = log A_i``, ``beta_i = log B_i``; the
    least-squares solution is ``R_X = (M^T M)^(-1/2) M^T`` with ``M = sum_i beta_i alpha_i^T``.
    With ``M = U S V^T`` that is ``V U^T``, which this computes by the SVD, so it stays defined
    when the axes span only a plane (rank-2 ``M``); a reflection is turned into the nearest
    rotation by flipping the smallest singular direction (Arun, Huang & Blostein 1987,
    "Least-squares fitting of two 3-D point sets", IEEE Trans. PAMI 9(5); Umeyama 1991,
    IEEE Trans. PAMI 13(4)).

    >>> from posekit.core.rotation import elementary_matrix as E
    >>> beta = np.eye(3) * 0.4                        # turns about B's x, y, z axes
    >>> alpha = beta @ E("z", 0.3).T                   # alpha_i = R beta_i, R a turn of 0.3 about z
    >>> bool(np.allclose(park_martin_rotation(alpha, beta), E("z", 0.3)))
    True
    """
    a = np.asarray(alpha, dtype=np.float64).reshape(-1, 3)
    b = np.asarray(beta, dtype=np.float64).reshape(-1, 3)
    m = b.T @ a                                              # sum_i beta_i alpha_i^T
    u, _, vt = np.linalg.svd(m)
    d = np.sign(np.linalg.det(vt.T @ u.T)) or 1.0
    return vt.T @ np.diag([1.0, 1.0, d]) @ u.T


def mount_translation(rotation_a, translation_a, mount_rotation, translation_b):
    """Translation ``t_X`` of the mount by stacked linear least squares -> ``(t_X (3,), rank)``.

    From the translation part of ``A_i X = X B_i`` (Park & Martin 1994; Tsai & Lenz 1989,
    IEEE Trans. Robotics and Automation 5(3)): ``(R_Ai - I) t_X = R_X t_Bi - t_Ai``, all pairs
    stacked into one ``(3P, 3)`` system.  ``rotation_a (P, 3, 3)``, ``translation_a (P, 3)``,
    ``mount_rotation (3, 3)``, ``translation_b (P, 3)`` or ``(K, P, 3)`` (K right-hand sides at
    once -> ``t_X (K, 3)``).  ``rank`` < 3 means the rotation axes did not fix ``t_X``.
    """
    ra = np.asarray(rotation_a, dtype=np.float64)
    c = (ra - np.eye(3)).reshape(-1, 3)
    tb = np.asarray(translation_b, dtype=np.float64)
    rhs = np.einsum("ab,...nb->...na", mount_rotation, tb) - np.asarray(translation_a, dtype=np.float64)
    flat = rhs.reshape(rhs.shape[:-2] + (-1,))
    sol, _, rank, _ = np.linalg.lstsq(c, np.atleast_2d(flat).T, rcond=None)
    sol = sol.T
    return (sol[0] if rhs.ndim == 2 else sol), int(rank)


def solve_mount(motions_a, motions_b):
    """The mount ``X`` with ``A_i X = X B_i`` from paired relative motions.

    ``motions_a``, ``motions_b``: ``(P, 3, 3)`` rotations or ``(P, 4, 4)`` transforms, pair ``i``
    being the same interval seen by both sensors.  Returns ``(R_X (3, 3), t_X (3,) or None)``:
    rotation by :func:`park_martin_rotation` on the log maps, translation (4x4 input) by
    :func:`mount_translation`.  Needs at least two pairs whose rotation axes are not parallel
    (checked by :func:`align_streams`, not here).

    >>> from scipy.spatial.transform import Rotation
    >>> x = Rotation.from_euler("zyx", [30, -10, 5], degrees=True).as_matrix()
    >>> b = Rotation.from_rotvec([[0.5, 0, 0], [0, 0.4, 0.1], [0.2, 0, 0.6]]).as_matrix()
    >>> a = x @ b @ x.T                                          # A_i = X B_i X^T
    >>> bool(np.allclose(solve_mount(a, b)[0], x))
    True
    """
    a = as_numbers(motions_a, "motions_a")
    b = as_numbers(motions_b, "motions_b")
    if a.ndim != 3 or a.shape[1:] not in ((3, 3), (4, 4)) or b.shape != a.shape:
        raise WrongShapeError(f"solve_mount: got shapes {a.shape} and {b.shape}; expected two (P, 3, 3) or two "
                              "(P, 4, 4) stacks of the same shape (pair i = the same interval in both)")
    rx = park_martin_rotation(rotation_vectors(a[:, :3, :3]), rotation_vectors(b[:, :3, :3]))
    if a.shape[1] == 3:
        return rx, None
    tx, _ = mount_translation(a[:, :3, :3], a[:, :3, 3], rx, b[:, :3, 3])
    return rx, tx


@dataclass(frozen=True)
class TimeOffset:
    """The clock offset found from one reading's speeds.

    ``offset`` seconds to add to B's stamps (A's clock = B's + offset); ``uncertainty``
    seconds, one standard deviation (:data:`OFFSET_METHOD`: block jackknife plus peak-shape
    term); ``correlation`` Pearson's coefficient at the peak;
    ``second_peak`` the highest correlation outside the peak's lobe (NaN when none: a
    value near ``correlation`` means a periodic motion left the offset ambiguous);
    ``mismatch`` rms(|w_A| - |w_B|) / rms(|w_A|) over the overlap at the peak (the speeds
    of one rigid body are equal, not merely alike); ``grid_step`` seconds; ``overlap``
    seconds; ``samples`` independent speed samples in the overlap; ``refined``: the peak
    was searched on the full grid (else on the coarse one).
    """

    offset: float
    uncertainty: float
    correlation: float
    second_peak: float
    mismatch: float
    grid_step: float
    overlap: float
    samples: int
    refined: bool

    @property
    def ambiguous(self) -> bool:
        """Another lag correlates within two standard errors of the peak (a periodic motion); the
        standard error of a correlation coefficient is ``(1 - r^2) / sqrt(n - 1)`` (Pearson & Filon
        1898, Phil. Trans. R. Soc. A 191), n the independent speed samples in the overlap."""
        if not np.isfinite(self.second_peak):
            return False
        se = (1.0 - self.correlation ** 2) / math.sqrt(max(self.samples - 1, 1))
        return bool(self.correlation - self.second_peak <= 2.0 * se + 1e-3)

    def as_dict(self) -> dict:
        return {"offset_seconds": self.offset, "uncertainty_seconds": self.uncertainty,
                "correlation": self.correlation,
                "second_peak": None if not np.isfinite(self.second_peak) else self.second_peak,
                "mismatch": self.mismatch, "grid_step_seconds": self.grid_step, "overlap_seconds": self.overlap,
                "independent_samples": self.samples, "refined": self.refined, "ambiguous": self.ambiguous}


def _pearson_sums(a0, b0, ma, mb, lags, sab):
    """Pearson coefficient and mismatch of ``a[m + k]`` against ``b[m]`` over the overlap, per lag
    ``k``, from the cross sums ``sab`` of the mean-removed signals ``a0``, ``b0`` (means ``ma``, ``mb``)."""
    na, nb = len(a0), len(b0)
    m0 = np.maximum(0, -lags)
    m1 = np.minimum(nb, na - lags)
    n = np.maximum(m1 - m0, 0)
    ca = np.concatenate([[0.0], np.cumsum(a0)])
    caa = np.concatenate([[0.0], np.cumsum(a0 * a0)])
    cb = np.concatenate([[0.0], np.cumsum(b0)])
    cbb = np.concatenate([[0.0], np.cumsum(b0 * b0)])
    lo_a = np.clip(m0 + lags, 0, na)
    hi_a = np.clip(m1 + lags, 0, na)
    lo_b = np.clip(m0, 0, nb)
    hi_b = np.clip(m1, 0, nb)
    sa, saa = ca[hi_a] - ca[lo_a], caa[hi_a] - caa[lo_a]
    sb, sbb = cb[hi_b] - cb[lo_b], cbb[hi_b] - cbb[lo_b]
    with np.errstate(divide="ignore", invalid="ignore"):
        nn = np.where(n > 0, n, 1)
        va = saa - sa * sa / nn
        vb = sbb - sb * sb / nn
        r = (sab - sa * sb / nn) / np.sqrt(va * vb)
        d = ma - mb
        diff2 = saa + sbb - 2.0 * sab + 2.0 * d * (sa - sb) + n * d * d       # sum (a - b)^2 over the overlap
        aa = saa + 2.0 * ma * sa + n * ma * ma                                  # sum a^2 over the overlap
        mism = np.sqrt(np.maximum(diff2, 0.0) / aa)
    ok = (n > 1) & (va > 0) & (vb > 0) & np.isfinite(r)
    return np.where(ok, r, np.nan), np.where(ok, mism, np.nan), n


def _all_lags(a, b):
    """Every lag ``k`` (``a[m + k]`` against ``b[m]``): ``(lags, r, mismatch, n)``, the cross sums by the FFT."""
    ma, mb = float(np.mean(a)), float(np.mean(b))
    a0, b0 = a - ma, b - mb
    size = 1 << int(math.ceil(math.log2(len(a) + len(b) - 1)))
    cross = np.fft.irfft(np.fft.rfft(a0, size) * np.conj(np.fft.rfft(b0, size)), size)
    lags = np.arange(-(len(b) - 1), len(a))
    r, mism, n = _pearson_sums(a0, b0, ma, mb, lags, cross[lags % size])
    return lags, r, mism, n


def _at_lags(a, b, lags):
    """The same as :func:`_all_lags` at a few lags, the cross sums by direct dot products."""
    ma, mb = float(np.mean(a)), float(np.mean(b))
    a0, b0 = a - ma, b - mb
    sab = np.empty(len(lags))
    for i, k in enumerate(lags):
        lo, hi = max(0, -k), min(len(b), len(a) - k)
        sab[i] = float(np.dot(a0[lo + k:hi + k], b0[lo:hi])) if hi > lo else 0.0   # np.dot: no matmul dispatch
    return _pearson_sums(a0, b0, ma, mb, np.asarray(lags), sab)


def _block_mean(x, d):
    n = len(x) // d
    return x[:n * d].reshape(n, d).mean(axis=1)


def _peak_shift(cm, c0, cp):
    """Sub-sample shift of a three-point peak: the parabola's (common practice) and the Gaussian's
    (Willert & Gharib 1991, Experiments in Fluids 10(4)); the latter NaN unless all three are > 0."""
    den = cm - 2.0 * c0 + cp
    par = 0.5 * (cm - cp) / den if den < 0 else 0.0
    gau = float("nan")
    if min(cm, c0, cp) > 0:
        lm, l0, lp = math.log(cm), math.log(c0), math.log(cp)
        gden = lm - 2.0 * l0 + lp
        if gden < 0:
            gau = 0.5 * (lm - lp) / gden
    return float(np.clip(par, -0.5, 0.5)), gau, den


def _jackknife_shift(a, b, k: int, blocks: int = JACKKNIFE_BLOCKS) -> float:
    """Standard deviation (in lags) of the parabola's sub-sample peak around lag ``k`` by the
    delete-a-block jackknife (Kunsch 1989, Annals of Statistics 17(3)): the overlap of lags
    ``k - 1, k, k + 1`` is cut into ``blocks`` contiguous blocks, the peak is found again with
    each block left out, and ``var = (J - 1) / J * sum (shift_j - mean)^2``.  NaN when the
    overlap is too short to split or a left-out peak is no peak."""
    lags = (k - 1, k, k + 1)
    m0 = max(max(0, -lag) for lag in lags)
    m1 = min(min(len(b), len(a) - lag) for lag in lags)
    if m1 - m0 < 3 * blocks:
        return float("nan")
    edges = np.linspace(m0, m1, blocks + 1).astype(int)
    at = edges[:-1] - m0
    bseg = b[m0:m1] - np.mean(b[m0:m1])
    ma = float(np.mean(a[m0 + k:m1 + k]))
    counts = np.diff(edges).astype(float)
    n = counts.sum() - counts                                           # samples left with block j out

    def left_out(x):
        parts = np.add.reduceat(x, at)
        return parts.sum() - parts

    sb, sbb = left_out(bseg), left_out(bseg * bseg)
    rs = []
    for lag in lags:
        aseg = a[m0 + lag:m1 + lag] - ma
        sab, sa, saa = left_out(aseg * bseg), left_out(aseg), left_out(aseg * aseg)
        with np.errstate(divide="ignore", invalid="ignore"):
            rs.append((sab - sa * sb / n) / np.sqrt((saa - sa * sa / n) * (sbb - sb * sb / n)))
    rm, r0, rp = rs
    den = rm - 2.0 * r0 + rp
    if not np.all(den < 0):
        return float("nan")
    shifts = np.clip(0.5 * (rm - rp) / den, -1.0, 1.0)
    return float(math.sqrt((blocks - 1) / blocks * float(np.sum((shifts - shifts.mean()) ** 2))))


@dataclass
class SpeedGrid:
    """Both streams' speeds on one grid: ``a`` from ``start_a``, ``b`` from ``start_b``, step ``h``."""

    a: np.ndarray
    start_a: float
    h: float
    block: int
    a_coarse: np.ndarray
    window: float
    max_offset: float | None
    min_overlap: float
    words: dict


def speed_grid(mid_a, speed_a, dt_a: float, times_b, max_offset, min_overlap, words) -> SpeedGrid:
    """A's angular speeds on the grid B's speeds are correlated on: the finer of the two sample steps
    (widened to stay below :data:`FINE_SAMPLES`), block-averaged to below :data:`COARSE_SAMPLES`
    for the coarse search."""
    dt_b = float(np.median(np.diff(times_b)))
    h = min(dt_a, dt_b)
    span_a = float(mid_a[-1] - mid_a[0])
    span_b = float(times_b[-1] - times_b[0])
    longest = max(span_a, span_b)
    if longest / h > FINE_SAMPLES:
        h = longest / FINE_SAMPLES
    a_fine = _grid_of(mid_a, speed_a, float(mid_a[0]), h, span_a)
    block = max(1, int(math.ceil(max(len(a_fine), span_b / h + 1) / COARSE_SAMPLES)))
    return SpeedGrid(a_fine, float(mid_a[0]), h, block, _block_mean(a_fine, block) if block > 1 else a_fine,
                 max(dt_a, dt_b), max_offset, min_overlap, words)


def _grid_of(mid, speed, start, h, span):
    n = int(math.floor(span / h)) + 1
    return np.interp(start + h * np.arange(n), mid, speed)


def _lag_ok(lags, n, base, h, grid: SpeedGrid, n_min):
    ok = n >= n_min
    if grid.max_offset is not None:
        ok &= np.abs(base + h * lags) <= grid.max_offset + 0.5 * h
    return ok


def estimate_offset(grid: SpeedGrid, b_mid, b_speed, *, refine: bool = True, curve: bool = False):
    """Offset of B's speeds ``(mid-times, speeds)`` against A's on ``grid`` (:data:`OFFSET_METHOD`) -> TimeOffset,
    or ``(TimeOffset, CorrelationCurve)`` with ``curve``: the correlation per lag as the search saw it."""
    start_b = float(b_mid[0])
    b = _grid_of(b_mid, b_speed, start_b, grid.h, float(b_mid[-1] - b_mid[0]))
    base = grid.start_a - start_b                    # offset at lag 0: a[n] at start_a + n h, b[m] at start_b + m h
    d = grid.block
    n_min = max(3, int(grid.min_overlap * min(len(grid.a), len(b))))
    # coarse: block means (each block centred alike in both, so coarse lag K is fine lag K d)
    bc = _block_mean(b, d) if d > 1 else b
    lags, r, mism, n = _all_lags(grid.a_coarse, bc)
    ok = _lag_ok(lags, n, base, grid.h * d, grid, max(3, n_min // d)) & np.isfinite(r)
    if not np.any(ok):
        raise NoOverlapError(
            f"stream B: no time offset leaves an overlap of at least {grid.min_overlap:g} of the shorter stream"
            + ("" if grid.max_offset is None else f" within {grid.words['max_offset']} = {grid.max_offset:g} s")
            + f" (A's speeds span {len(grid.a) * grid.h:.4g} s, B's {len(b) * grid.h:.4g} s); accepted: streams "
              f"that record the same motion over a common stretch (lower {grid.words['min_overlap']} or raise "
              f"{grid.words['max_offset']})")
    rr = np.where(ok, r, -np.inf)
    i = int(np.argmax(rr))
    # the peak's lobe: downhill on both sides; the best correlation beyond it is the second peak
    lo = i
    while lo > 0 and ok[lo - 1] and rr[lo - 1] < rr[lo]:
        lo -= 1
    hi = i
    while hi < len(rr) - 1 and ok[hi + 1] and rr[hi + 1] < rr[hi]:
        hi += 1
    coarse_curve = (base + grid.h * d * lags, np.where(ok, r, np.nan), grid.h * d) if curve else None
    outside = np.concatenate([rr[:lo], rr[hi + 1:]])
    outside = outside[np.isfinite(outside)]
    second = float(outside.max()) if outside.size else float("nan")
    if refine and d > 1:
        k0 = int(lags[i]) * d
        lo_k, hi_k = k0 - 2 * d - 1, k0 + 2 * d + 1
        for _ in range(6):                            # widen while the best lag sits on the edge of the window
            fl = np.arange(lo_k, hi_k + 1)
            fr, fm, fn = _at_lags(grid.a, b, fl)
            fok = _lag_ok(fl, fn, base, grid.h, grid, n_min) & np.isfinite(fr)
            if not np.any(fok):
                break
            j = int(np.argmax(np.where(fok, fr, -np.inf)))
            if 0 < j < len(fl) - 1:
                break
            lo_k, hi_k = (lo_k - 2 * d, hi_k) if j == 0 else (lo_k, hi_k + 2 * d)
        if np.any(fok):
            lags, r, mism, n, ok, i, h = fl, fr, fm, fn, fok, j, grid.h
        else:
            h = grid.h * d
    else:
        h = grid.h * d
    sig_a, sig_b = (grid.a, b) if h == grid.h else (grid.a_coarse, bc)
    rho = float(r[i])
    shift, gauss, curv = 0.0, float("nan"), 0.0
    if 0 < i < len(r) - 1 and ok[i - 1] and ok[i + 1]:
        shift, gauss, curv = _peak_shift(float(r[i - 1]), rho, float(r[i + 1]))
    offset = base + h * (float(lags[i]) + shift)
    overlap = float(n[i]) * h
    samples = max(2, int(overlap / grid.window))
    if curv < 0:
        s_j = _jackknife_shift(sig_a, sig_b, int(lags[i]))
        s_j = 0.5 if not np.isfinite(s_j) else s_j            # too short to split: half a grid step
        s_i = abs(shift - gauss) if np.isfinite(gauss) else 0.5
        unc = h * math.sqrt(s_j * s_j + s_i * s_i)
    else:
        unc = float("inf")                           # no peak to refine: the lag is a grid edge
    found = TimeOffset(float(offset), float(unc), rho, second, float(mism[i]), float(h), overlap, samples,
                       bool(refine or d == 1))
    if not curve:
        return found
    near = slice(max(0, i - PEAK_LAGS), i + PEAK_LAGS + 1)
    return found, CorrelationCurve(*coarse_curve, base + h * np.asarray(lags[near], dtype=float),
                                   np.where(ok[near], r[near], np.nan), float(h), float(offset))


@dataclass(frozen=True, eq=False)
class CorrelationCurve:
    """Pearson's correlation of A's and B's angular speeds per trial offset (step 1, one reading of B).

    ``offsets (K,)``: seconds, the offset each lag stands for (add to B's stamps, as
    :attr:`TimeOffset.offset`), every lag searched, ``step`` seconds apart (the coarse grid
    when the streams are long); ``correlation (K,)``: the coefficient at each, NaN where the
    lag was not searched (overlap below ``min_overlap``, beyond ``max_offset``, or a constant
    stretch).  ``peak_offsets (J,)`` / ``peak_correlation (J,)``: the lags next to the peak
    on the grid the peak was refined on (``peak_step`` seconds apart, the full-resolution
    grid when the search was refined), at most :data:`PEAK_LAGS` on each side; ``offset``:
    the sub-sample peak reported, within half a ``peak_step`` of the best of those lags.
    """

    offsets: np.ndarray
    correlation: np.ndarray
    step: float
    peak_offsets: np.ndarray
    peak_correlation: np.ndarray
    peak_step: float
    offset: float

    @property
    def best_searched(self) -> float:
        """The offset (seconds) of the highest correlation among :attr:`offsets` (NaN if none was searched)."""
        if not np.any(np.isfinite(self.correlation)):
            return float("nan")
        return float(self.offsets[int(np.nanargmax(self.correlation))])

    def as_dict(self) -> dict:
        return {"offsets_seconds": self.offsets.tolist(), "correlation": plain_list(self.correlation),
                "step_seconds": self.step, "peak_offsets_seconds": self.peak_offsets.tolist(),
                "peak_correlation": plain_list(self.peak_correlation), "peak_step_seconds": self.peak_step,
                "offset_seconds": self.offset}


def plain_list(values) -> list:
    """Floats for JSON: NaN as None."""
    return [None if not np.isfinite(v) else float(v) for v in np.asarray(values, dtype=float)]


def checked_labels(labels, keys, error=None) -> dict:
    """The words messages use for each input: its own name unless ``labels`` gives other words."""
    error = error or AlignmentError
    words = {k: k for k in keys}
    if labels is None:
        return words
    if not isinstance(labels, Mapping):
        raise error(f"labels: got {summarise(labels, 40)}; accepted: a mapping from any of "
                    f"{', '.join(keys)} to the words messages should use")
    for k, v in labels.items():
        if k not in words or not isinstance(v, str) or not v.strip():
            raise error(f"labels: got {summarise(k, 30)}: {summarise(v, 30)}; accepted: keys "
                        f"{', '.join(keys)}, each with non-blank text")
        words[k] = v
    return words


def _retyped(exc: PoseInputError, message: str) -> PoseInputError:
    """The same kind of error with ``message`` (a plain AlignmentError when that type needs more arguments)."""
    try:
        return type(exc)(message)
    except TypeError:
        return AlignmentError(message)


def checked_times(times, name: str, n_values: int) -> np.ndarray:
    t = as_numbers(times, name)
    if t.ndim != 1:
        raise StreamTimesError(f"{name}: got shape {t.shape}; expected one time stamp (seconds) per sample, "
                               "shape (N,)")
    if len(t) != n_values:
        raise StreamTimesError(f"{name}: got {len(t)} time stamps for {n_values} rows of numbers; expected one "
                               "stamp per row")
    step = np.diff(t)
    bad = np.flatnonzero(step <= 0)
    if bad.size:
        k = int(bad[0])
        raise StreamTimesError(f"{name}: not strictly increasing at sample {k + 1}: {t[k]!r} then {t[k + 1]!r}; "
                               "expected strictly increasing stamps in seconds (sort the log, drop repeated stamps)")
    return t


def checked_stream(values, name: str, reading, kind, reading_name: str) -> tuple[np.ndarray, Reading]:
    arr = as_numbers(values, name)
    if arr.ndim != 2:
        raise WrongShapeError(f"{name}: got shape {arr.shape}; expected (N, n): one row of pose numbers per "
                              "sample, n = 3, 4, 6, 7, 9, 12 or 16")
    if arr.shape[0] < MIN_SAMPLES:
        raise StreamTimesError(f"{name}: got {arr.shape[0]} samples; expected at least {MIN_SAMPLES} (a stretch "
                               "of motion, not a few poses)")
    wanted = COUNTS.get(kind) if isinstance(kind, str) else None
    if wanted is not None and arr.shape[1] not in wanted and not isinstance(reading, Reading):
        raise WrongShapeError(f"{name}: rows of {arr.shape[1]} numbers, but a {kind} has "
                              f"{' or '.join(map(str, wanted))}; expected rows that fit the stated kind")
    try:
        stated = stated_reading(arr.shape[1], kind, reading)
    except PoseInputError as exc:
        raise _retyped(exc, f"{reading_name}: {exc}") from None
    if stated.count != arr.shape[1]:
        raise WrongShapeError(f"{name}: rows of {arr.shape[1]} numbers, but the reading {stated.describe()!r} "
                              f"has {stated.count}; expected rows that fit the stated reading")
    return arr, stated


def read_reference(stated: Reading, values: np.ndarray, name: str = "values_a"):
    r, t = read_numbers(stated, values)
    err = orthonormality_error(r)
    det = det3(r)
    bad = np.flatnonzero((err > READ_TOLERANCE) | (det <= 0) | ~np.isfinite(err))
    if bad.size:
        k = int(bad[0])
        why = "a reflection (det -1)" if det[k] <= 0 else f"off orthonormal by {float(err[k]):.3g}"
        raise ReferenceStreamError(
            f"{name}: row {k} ({summarise(values[k])}) read as {stated.describe()} is {why}; stream A is the "
            f"reference and must read as rotations (orthonormality error <= {READ_TOLERANCE:g}, det +1): state "
            "A's reading, or swap the streams so the trusted one is A")
    return r, t


def key_samples(times_a, cum_a, q_a, t_a, times_b, offset, pair_angle, max_pairs):
    """B rows spaced by ``pair_angle`` of A's turning (on A's clock), and A's pose at each (slerp, Shoemake 1985)."""
    s = times_b + offset
    inside = np.flatnonzero((s >= times_a[0]) & (s <= times_a[-1]))
    if len(inside) < 3:
        return None
    level = np.floor((np.interp(s[inside], times_a, cum_a) - np.interp(s[inside[0]], times_a, cum_a)) / pair_angle)
    rows = inside[np.concatenate([[True], np.diff(level) > 0])]
    if len(rows) > max_pairs + 1:
        rows = rows[np.unique(np.round(np.linspace(0, len(rows) - 1, max_pairs + 1)).astype(int))]
    if len(rows) < 3:       # A turned less than two pair angles: key samples evenly in time (the motion check judges)
        rows = inside[np.unique(np.round(np.linspace(0, len(inside) - 1, min(len(inside), 11))).astype(int))]
    sr = s[rows]
    j = np.clip(np.searchsorted(times_a, sr, side="right") - 1, 0, len(times_a) - 2)
    u = (sr - times_a[j]) / (times_a[j + 1] - times_a[j])
    ra = rot.matrix_of_quaternion(rot.slerp_quaternions(q_a[j], q_a[j + 1], u))
    ta = None if t_a is None else t_a[j] + u[:, None] * (t_a[j + 1] - t_a[j])
    a_rel, ta_rel = relative_motions(ra, ta)
    return {"rows": rows, "times": sr, "ra": ra, "ta": ta, "a_rel": a_rel, "ta_rel": ta_rel, "alpha": rotation_vectors(a_rel)}


def relative_motions(r, t):
    rel = np.swapaxes(r[:-1], -1, -2) @ r[1:]
    trel = None if t is None else np.einsum("nba,nb->na", r[:-1], t[1:] - t[:-1])
    return rel, trel


def motion_of(alpha):
    """Total turning and axis spread of the pairs' rotation vectors ``(P, 3)``.

    Spread: with ``s1 >= s2`` the singular values of the stacked vectors, ``2 atan(s2 / s1)``
    (derived here: two equal turns ``w`` about unit axes ``u``, ``v`` with ``u . v = cos(phi)`` give
    the Gram matrix ``w^2 (u u^T + v v^T)`` with eigenvalues ``w^2 (1 +- cos(phi))``, so
    ``s2 / s1 = tan(phi / 2)`` and the spread is ``phi``, the angle between the axes).
    """
    total = float(np.sum(np.linalg.norm(alpha, axis=1)))
    _, s, vt = np.linalg.svd(alpha, full_matrices=False)
    spread = 2.0 * math.atan2(float(s[1]) if len(s) > 1 else 0.0, float(s[0])) if s[0] > 0 else 0.0
    return total, spread, vt


def encode_slip(slip: Slip, r, t):
    """Numbers of a true pose under ``slip``: the forward model of posekit.explain.slips
    (the translation frame, the length scale, the remaps ``P R Q``, the transposed block,
    then the true reading's checked writer).  :meth:`Slip.decode` undoes it."""
    r = np.asarray(r, dtype=np.float64)
    if t is not None and slip.true.has_translation:
        t = np.asarray(t, dtype=np.float64)
        if slip.translation_frame == "child-axes":
            t = np.einsum("...ba,...b->...a", r, t)
        elif slip.translation_frame == "inverse-translation":
            t = -np.einsum("...ba,...b->...a", r, t)
        t = t / slip.length_scale
        t = np.einsum("ab,...b->...a", REMAPS[slip.parent_remap], t)
    else:
        t = None
    r = REMAPS[slip.parent_remap] @ r @ REMAPS[slip.child_remap]
    if slip.transposed:
        r = np.swapaxes(r, -1, -2)
    return write_numbers(slip.true, r, t)
