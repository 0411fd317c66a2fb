"""Known motion: name the reading of a logged orientation stream from what physically happened,
or from a rate stream of the same body.

**Known motion** (:func:`explain_known_motion`).  The user has no trusted pose, only a log and
a description of the motion in the words :func:`posekit.io.words.read_motion` reads ("tilted
nose up about 90 degrees, then back", "turned left in place a full turn").  Each sample is
``R_k = W B_k M``: the unknown world frame ``W``, the body's attitude ``B_k``, the sensor's
mount ``M`` (``p_body = M p_sensor``).  The relative rotation between two samples,
``R_i^T R_j = M^T (B_i^T B_j) M``, no longer holds ``W``; its angle holds neither ``W`` nor
``M``.  Summing the body-frame increments ``log(R_k^T R_{k+1})`` gives a *turning path* in the
sensor's axes (:func:`turning_path`): a turn about one body axis is a straight piece of it,
as long as the angle turned (a full turn is ``2 pi`` long, not 0).  So the log is cut into as
many straight pieces as the description has turns (the fewest-squares polyline through the
path, by dynamic programming: the intervals where the body turns, matched to the described
turns in order), and each piece gives the angle turned, how straight it was, and its axis.
Two turns about different axes fix ``M`` (Wahba's problem, solved as Park & Martin 1994 do,
:func:`~posekit.analysis.alignment.park_martin_rotation`); a known mount is used as given.

Every reading of the numbers the explanation engine knows (:func:`posekit.explain.readings_of`:
component order, Euler sequence, intrinsic/extrinsic, unit, algebra, rotation vector vs
Euler angles), under each relation (action, direction, a transposed matrix), and with a known
mount each remap of the sensor's axes (the 48 signed permutations: handedness too), is
scored by the engine's rule: ``0.5 sum (residual / scale)^2`` over the turns (angle,
overshoot, axis, straightness) plus ``PRIOR_WEIGHT * Slip.deviations()``; readings within the
tolerances rank first, the prior orders them.  The angles' scale is the user's tolerance (how
far the description may be off is theirs to say); the axes' and straightness' scale is the
straightest reading's own rms figure (the motion as really made), so a reading that bends
clean turns loses to one that does not even inside a generous tolerance.  Words and code come from
:func:`posekit.explain.sentence` and :func:`posekit.explain.fix_code`.

Ambiguity is stated: readings that fit as well are listed under the first explanation,
each with what would tell it apart -- a further turn found by simulating it (the turn is
written under the leading reading and read back under the other), or nothing, when the two
readings differ only by a constant turn of the sensor or of the world frame (then only the
mount, or a pose against a known world, tells them apart).  Relative motions never see a
remap of the world frame (ENU/NED, its handedness).

**Rates** (:func:`explain_rates`).  A rate stream (a gyro's three numbers per sample) and
an orientation stream of the same body: the clock offset from the angular speeds (the
cross-correlation of :mod:`posekit.analysis.streams`), then the rates integrated in numpy
(:func:`integrate_rates`) between key samples and compared with the orientation's relative
rotations, over every rate reading: body or world frame, radians or degrees per second, and
the 48 signed axis permutations (sign flips, axis order, handedness).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field

import numpy as np

from ..core import rotation as rot
from ..core.checks import as_numbers, checked_count, checked_matrix, checked_tolerance
from ..core.errors import ConventionError, PoseInputError, WrongShapeError, excerpt, summarise
from ..explain import (PRIOR_WEIGHT, REMAPS, STATED_COST, Reading, Slip, angles_between, describe_remap, fix_code,
                       readings_of, read_numbers, relations, remap_cost, sentence, write_numbers)
from ..io.words import DescribedMotion, DescriptionError, read_motion, turn_words
from .streams import (DEFAULT_PAIR_ANGLE, MEMBERS_SHOWN, OFFSET_METHOD, TimeOffset, angular_speeds, checked_stream,
                      checked_times, encode_slip, estimate_offset, key_samples, motion_of, park_martin_rotation,
                      read_reference, rotation_vectors, speed_grid)

__all__ = ["KnownMotionError", "StillLogError", "RateStreamError", "RateReadingError", "TurnMeasure", "Tie",
           "MotionExplanation", "MotionDiagnosis", "RateReading", "RateExplanation", "RateDiagnosis",
           "turning_path", "integrate_rates", "explain_known_motion", "rate_reading", "explain_rates"]

#: Rows of the log the turning path is built from (every ``N // ROWS``-th sample; a stream whose steps
#: are too coarse for its own motion is read again at a finer stride).
ROWS = 4096
#: Points of the turning path the polyline is fitted through (spaced by the angle turned).
PATH_POINTS = 160
#: A step of the path longer than this (radians) is too coarse to follow a turn: that stream is read finer.
COARSE_STEP = math.radians(45.0)
#: An approximate angle ("about 90 degrees") may be off by this share of itself (or the angle tolerance).
APPROXIMATE_SHARE = 0.2
#: A simulated extra turn separates two readings when the other one's residual exceeds this many tolerances.
SEPARATES = 1.5
#: The smallest scale (radians) of how straight and how well aligned a turn can be measured: the ranking's noise
#: scale for axes and wobble is the straightest reading's own figure, never below this, never above the tolerance.
STRAIGHT_FLOOR = math.radians(0.5)
#: Readings that fit within the tolerances and whose data term is within this of the best one's are ties.
TIE_MARGIN = 2.0
#: Readings whose ties are classified (simulated) under the first explanation.
TIES_EXAMINED = 48

_AXES = ("x", "y", "z")


# --------------------------------------------------------------------------------------
# errors
# --------------------------------------------------------------------------------------

class KnownMotionError(PoseInputError):
    """A known-motion or rate check that cannot run as given (each subclass says why and what would do)."""


class StillLogError(KnownMotionError):
    """The log does not turn (or not enough) to be compared with anything."""


class RateStreamError(KnownMotionError, WrongShapeError):
    """A rate stream that is not three finite numbers per sample."""


class RateReadingError(KnownMotionError, ConventionError):
    """Text for a rate reading that posekit cannot read."""


# --------------------------------------------------------------------------------------
# the turning path and its straight pieces
# --------------------------------------------------------------------------------------

def turning_path(rotations) -> np.ndarray:
    """The turning path of a stream: ``(N, 3, 3)`` rotations -> ``(N, 3)``, radians, starting at 0.

    The running sum of the body-frame increments ``log(R_k^T R_{k+1})`` (rotation vectors,
    Park & Martin 1994's log map).  A turn about one body axis is a straight piece along
    that axis, as long as the angle turned: a full turn is ``2 pi`` long.  Noise on the
    samples telescopes (each sample's error enters two increments with opposite signs), so
    it does not pile up along the path.

    >>> from posekit.core.rotation import elementary_matrix as E
    >>> path = turning_path(np.stack([E("z", a) for a in np.linspace(0, 2 * np.pi, 9)]))
    >>> np.round(path[-1], 9).tolist()
    [0.0, 0.0, 6.283185307]
    """
    r = np.asarray(rotations, dtype=np.float64)
    inc = rotation_vectors(np.swapaxes(r[:-1], -1, -2) @ r[1:])
    return np.concatenate([np.zeros((1, 3)), np.cumsum(inc, axis=0)])


class _Pieces:
    """How far path points stray from straight pieces, from prefix sums (O(1) per piece).

    A piece from point ``i`` to point ``j`` predicts each point between by its share of the
    angle turned: ``x_i + (s_k - s_i) / (s_j - s_i) (x_j - x_i)`` (``s``: the angle turned so
    far); its cost is the sum of squared distances of the points from their predictions.  A
    turn about one axis costs 0; a piece that runs out and back, or bends, does not."""

    def __init__(self, x, s):
        self.x = x
        self.s = s
        z = np.zeros((1, 3))
        self.c1 = np.concatenate([z, np.cumsum(x, axis=0)])
        self.c2 = np.concatenate([[0.0], np.cumsum(np.sum(x * x, axis=1))])
        self.cs = np.concatenate([[0.0], np.cumsum(s)])
        self.css = np.concatenate([[0.0], np.cumsum(s * s)])
        self.csx = np.concatenate([z, np.cumsum(s[:, None] * x, axis=0)])

    def cost(self, i, j):
        """The cost of the piece from point ``i`` to point ``j`` (arrays broadcast)."""
        i = np.asarray(i)
        j = np.asarray(j)
        n = (j - i + 1).astype(float)
        c1 = self.c1[j + 1] - self.c1[i]
        c2 = self.c2[j + 1] - self.c2[i]
        cs = self.cs[j + 1] - self.cs[i]
        css = self.css[j + 1] - self.css[i]
        csx = self.csx[j + 1] - self.csx[i]
        a = self.x[i]
        d = self.x[j] - a
        si = self.s[i]
        span = self.s[j] - si
        inv = np.where(span > 1e-12, 1.0 / np.where(span > 1e-12, span, 1.0), 0.0)
        spread = c2 - 2.0 * np.sum(a * c1, -1) + n * np.sum(a * a, -1)                  # sum |x - a|^2
        cross = inv * (np.sum((csx - si[..., None] * c1) * d, -1) - (cs - n * si) * np.sum(a * d, -1))
        lam2 = inv * inv * (css - 2.0 * si * cs + n * si * si)
        return np.maximum(spread - 2.0 * cross + np.sum(d * d, -1) * lam2, 0.0)


def _polyline(pieces: _Pieces, k: int):
    """Breakpoints ``(k + 1,)`` (point indices, first 0, last n - 1) of the fewest-squares k-piece
    polyline through the points whose corners are points (dynamic programming), or None."""
    n = len(pieces.x)
    if k > n - 1:
        return None
    i, j = np.triu_indices(n, 1)
    c = np.full((n, n), np.inf)
    c[i, j] = pieces.cost(i, j)
    best = np.full(n, np.inf)
    best[0] = 0.0
    back = np.zeros((k + 1, n), dtype=int)
    for m in range(1, k + 1):
        total = best[:, None] + c
        back[m] = np.argmin(total, axis=0)
        best = total[back[m], np.arange(n)]
    if not np.isfinite(best[n - 1]):
        return None
    out = [n - 1]
    for m in range(k, 0, -1):
        out.append(int(back[m][out[-1]]))
    return np.array(out[::-1])


@dataclass
class _Path:
    """One reading's turning path on the rows read, cut into the described turns."""

    rows: np.ndarray              # sample indices read
    vectors: np.ndarray           # (K, 3) each turn's piece, sensor axes, radians
    wobble: np.ndarray            # (K,) radians: rms distance of the piece's points from its chord over its length
    overshoot: np.ndarray         # (K,) radians: how far the piece runs past its ends along its chord
    spans: np.ndarray             # (K, 2) sample indices: first and last turning sample of each piece
    turning_runs: int             # stretches of turning separated by stillness
    usable: bool = True


def _smoothed(path, h: int):
    """The path averaged over ``2 h + 1`` rows (the ends held): noise on the samples, which the path carries
    as is (not summed), shrinks by ``sqrt(2 h + 1)``; a turn's corner moves by less than ``h`` rows."""
    pad = np.concatenate([np.repeat(path[:1], h, 0), path, np.repeat(path[-1:], h, 0)])
    c = np.concatenate([np.zeros((1, 3)), np.cumsum(pad, axis=0)])
    return (c[2 * h + 1:] - c[:-2 * h - 1]) / (2 * h + 1)


def _moving(path, described: float):
    """Which steps of the path turn, the window ``h`` (rows) that told them, and the path smoothed a little
    (over 5 rows) for the pieces.

    A step turns when the path, averaged over ``2 h + 1`` rows, moves over the ``2 h + 1`` rows
    around it by more than the noise would move it.  The noise is the median size of the raw
    path's second differences (smooth motion barely has any): about ``3.8 sigma`` for a
    per-sample error of ``sigma`` per axis, divided by ``sqrt(2 h + 1)`` by the averaging.  The
    window is the smallest that shows a turn at least as fast as the described motion spread
    over the whole log (``described`` radians over all the rows: no turn is slower), with a
    factor of two to spare; at most a fiftieth of the rows."""
    n = len(path) - 1
    fine = _smoothed(path, 2)
    if n < 2:
        return np.ones(n, dtype=bool), 2, fine
    inc = np.diff(path, axis=0)
    noise = float(np.median(np.linalg.norm(np.diff(inc, axis=0), axis=1)))
    slowest = described / n                                     # radians per row, if it turned all the time
    h = 2
    while (2 * h + 1) ** 1.5 * slowest < 6.0 * noise and h < n // 50:
        h *= 2
    smooth = _smoothed(path, h) if h != 2 else fine
    pad = np.concatenate([np.repeat(smooth[:1], h, 0), smooth, np.repeat(smooth[-1:], h, 0)])
    disp = np.linalg.norm(pad[2 * h + 1:2 * h + 1 + n] - pad[:n], axis=1)            # over steps k - h .. k + h
    top = float(np.max(disp)) if n else 0.0
    return disp > max(3.0 * noise / math.sqrt(2 * h + 1), 0.01 * top, 1e-9), h, fine


def _stretches(moving, span: int) -> int:
    """Stretches of turning separated by stillness, each at least ``span`` steps long (shorter gaps are
    bridged, shorter stretches are noise)."""
    edges = np.diff(np.concatenate([[0], moving.astype(int), [0]]))
    starts, ends = np.flatnonzero(edges == 1), np.flatnonzero(edges == -1)
    if not starts.size:
        return 0
    keep_s, keep_e = [starts[0]], [ends[0]]
    for a, b in zip(starts[1:], ends[1:]):
        if a - keep_e[-1] < span:
            keep_e[-1] = b
        else:
            keep_s.append(a)
            keep_e.append(b)
    return int(sum(1 for a, b in zip(keep_s, keep_e) if b - a >= span))


def _cut(path, k: int, rows, described: float) -> _Path:
    """The turning path ``(n, 3)`` on sample ``rows`` cut into ``k`` straight pieces, in order.

    ``described``: the angle the description turns in all (radians); a path that turns less
    than half or more than twice that cannot fit it, and is cut at equal shares of its turning
    instead of searched (it still gets its residuals, only not the best cut)."""
    n = len(path)
    moving, h, smooth = _moving(path, described)
    runs = _stretches(moving, 2 * h + 1)
    # the angle turned so far, along the smoothed path and only where the body turns (a pause adds nothing)
    turned = np.concatenate([[0.0], np.cumsum(np.linalg.norm(np.diff(smooth, axis=0), axis=1) * moving)])
    keep = np.zeros(n, dtype=bool)
    keep[0] = keep[-1] = True
    keep[:-1] |= moving
    keep[1:] |= moving
    fine = np.flatnonzero(keep)                           # rows of the path on turning stretches (and both ends)
    pts = smooth[fine]
    arc = turned[fine]
    empty = _Path(rows, np.zeros((k, 3)), np.zeros(k), np.zeros(k), np.zeros((k, 2), dtype=int), runs, False)
    if arc[-1] <= 0 or len(fine) < k + 1:
        return empty
    pieces = _Pieces(pts, arc)
    if not 0.5 * described <= arc[-1] <= 2.0 * described:
        b = np.searchsorted(arc, np.linspace(0.0, arc[-1], k + 1)).clip(0, len(fine) - 1)
        b[0], b[-1] = 0, len(fine) - 1
        if np.any(np.diff(b) <= 0):
            return empty
        refine = 0
    else:
        targets = np.linspace(0.0, arc[-1], min(PATH_POINTS, len(fine)))
        coarse = np.unique(np.concatenate([[0], np.searchsorted(arc, targets),
                                           [len(fine) - 1]]).clip(0, len(fine) - 1))
        bp = _polyline(_Pieces(pts[coarse], arc[coarse]), k)
        if bp is None:
            return empty
        b = coarse[bp]                                    # breakpoints on the fine points
        refine = 2
    for _ in range(refine):                                    # each inner corner moved to its best fine point
        for m in range(1, k):
            lo, hi = b[m - 1] + 1, b[m + 1] - 1
            if hi < lo:
                continue
            cand = np.arange(lo, hi + 1)
            total = pieces.cost(np.full(len(cand), b[m - 1]), cand) + pieces.cost(cand, np.full(len(cand), b[m + 1]))
            b[m] = int(cand[int(np.argmin(total))])
    # a corner next to a pause (within a few per cent of the turning on either side) moves into the pause, to its
    # stillest row (the middle of a long pause, the moment of a brief stop): the slow ends of the turns on both sides, below the turning threshold,
    # then fall into their own pieces
    cut = fine[b].copy()
    gaps = np.flatnonzero(np.diff(fine) > 1)
    for m in range(1, k):
        near = gaps[(gaps >= b[m - 1]) & (gaps < b[m + 1])]
        if not near.size:
            continue
        g = int(near[np.argmin(np.abs(arc[near] - arc[b[m]]))])
        reach = max(0.05 * min(arc[b[m]] - arc[b[m - 1]], arc[b[m + 1]] - arc[b[m]]), math.radians(1.0))
        if abs(arc[g] - arc[b[m]]) <= reach:
            b[m] = g
            lo_g, hi_g = fine[g], fine[g + 1]                 # the stillest row of the pause (its middle when still)
            speed = np.linalg.norm(smooth[lo_g + 1:hi_g + 1] - smooth[lo_g:hi_g], axis=1)
            quiet = np.flatnonzero(speed <= speed.min() + 1e-12 + 0.05 * (speed.max() - speed.min()))
            cut[m] = lo_g + 1 + int(quiet[len(quiet) // 2]) if speed.size else (lo_g + hi_g) // 2
    vec = smooth[cut[1:]] - smooth[cut[:-1]]
    length = np.linalg.norm(vec, axis=1)
    wobble = np.zeros(k)
    over = np.zeros(k)
    spans = np.zeros((k, 2), dtype=int)
    for m in range(k):
        seg = np.concatenate([smooth[cut[m]][None], pts[b[m] + 1:b[m + 1] + 1], smooth[cut[m + 1]][None]]) \
            - smooth[cut[m]]
        u = vec[m] / length[m] if length[m] > 0 else np.zeros(3)
        along = seg @ u
        off = np.sqrt(np.mean(np.sum((seg - np.outer(along, u)) ** 2, axis=1)))
        wobble[m] = math.atan2(float(off), float(length[m]))
        over[m] = max(float(np.max(along)) - length[m], 0.0) + max(-float(np.min(along)), 0.0)
        lo_row, hi_row = cut[m], cut[m + 1]
        inside = np.flatnonzero(moving[lo_row:hi_row]) + lo_row
        spans[m] = (rows[inside[0]], rows[min(inside[-1] + 1, n - 1)]) if inside.size else (rows[lo_row], rows[hi_row])
    return _Path(rows, vec, wobble, over, spans, runs, bool(np.all(np.isfinite(vec))))


# --------------------------------------------------------------------------------------
# results
# --------------------------------------------------------------------------------------

def _plain(value):
    """A float for JSON: None for NaN and infinity (strict JSON has neither)."""
    v = float(value)
    return v if math.isfinite(v) else None


@dataclass(frozen=True, eq=False)
class TurnMeasure:
    """One described turn against the log, under one reading.

    ``described_degrees`` (signed about the body ``axis``), ``approximate`` and
    ``tolerance_degrees`` (the angle tolerance, widened for "about"); ``turned_degrees``:
    the length of the log's piece (the angle turned, a full turn is 360); ``measured_degrees``:
    the piece in the body frame (through the mount) projected on the described axis, signed
    like ``described_degrees``; ``axis_sensor (3,)``: the piece's axis in the sensor's axes;
    ``axis_error_degrees`` between the piece's axis, in the body frame, and the described
    axis; ``wobble_degrees``: how far the turn strayed from one axis; ``overshoot_degrees``:
    how far it ran past its ends; ``start`` / ``end``: seconds, the first and last turning
    sample of the piece; ``within``: every residual within its tolerance.
    """

    index: int
    words: str
    axis: str
    described_degrees: float
    approximate: bool
    tolerance_degrees: float
    turned_degrees: float
    measured_degrees: float
    axis_sensor: np.ndarray
    axis_error_degrees: float
    wobble_degrees: float
    overshoot_degrees: float
    start: float
    end: float
    within: bool

    def as_dict(self) -> dict:
        return {"index": self.index, "words": self.words, "axis": self.axis,
                "described_degrees": self.described_degrees, "approximate": self.approximate,
                "tolerance_degrees": self.tolerance_degrees, "turned_degrees": _plain(self.turned_degrees),
                "measured_degrees": _plain(self.measured_degrees),
                "axis_sensor": [_plain(v) for v in self.axis_sensor],
                "axis_error_degrees": _plain(self.axis_error_degrees), "wobble_degrees": _plain(self.wobble_degrees),
                "overshoot_degrees": _plain(self.overshoot_degrees), "start_seconds": self.start,
                "end_seconds": self.end, "within_tolerance": self.within}


@dataclass(frozen=True)
class Tie:
    """A reading that fits the evidence as well as the first explanation.

    ``how``: ``"same"`` (the same mistake written another way: the same rotations from any
    numbers), ``"unseen"`` (differs from the first only by a constant turn or mirror that
    this kind of evidence cannot see; ``motion`` says what would), or ``"separable"``
    (``motion``: the further motion that would tell them apart, in words posekit reads, or
    None when no simple one was found).  ``words``: that said in a sentence; ``slip``: the
    tied reading (a :class:`~posekit.explain.Slip`, or a :class:`RateReading` for rates).
    """

    sentence: str
    how: str
    motion: str | None = None
    words: str = ""
    slip: object = field(default=None, compare=False, repr=False)

    def as_dict(self) -> dict:
        return {"sentence": self.sentence, "how": self.how, "motion": self.motion, "words": self.words,
                "reading": None if self.slip is None else self.slip.as_dict()}


@dataclass(frozen=True, eq=False)
class MotionExplanation:
    """One reading of the log, scored against the described motion.

    ``slip`` (:class:`~posekit.explain.Slip`, the stated reading vs how the numbers were
    written), ``sentence``, ``code`` (posekit code undoing the slip on ``logged_numbers``,
    the log's ``(N, n)`` array); ``mount (3, 3)``: the sensor's frame in the body frame
    (``p_body = M p_sensor``), fitted unless it was given; ``turns``: one
    :class:`TurnMeasure` per described turn; ``cost`` = data term + ``PRIOR_WEIGHT *
    deviations``; ``fits``: every turn within its tolerances; ``same``: sentences of slips
    that are this one written another way.
    """

    rank: int
    slip: Slip
    sentence: str
    code: str
    mount: np.ndarray
    turns: tuple[TurnMeasure, ...]
    cost: float
    data_cost: float
    deviations: float
    fits: bool
    same: tuple[str, ...] = ()

    def as_dict(self) -> dict:
        return {"rank": self.rank, "sentence": self.sentence, "code": self.code, "reading": self.slip.true.text(),
                "kind": self.slip.true.kind, "mount": np.round(self.mount, 12).tolist(),
                "turns": [t.as_dict() for t in self.turns], "cost": _plain(self.cost),
                "data_cost": _plain(self.data_cost),
                "deviations": self.deviations, "fits": self.fits, "same_mistake_written_another_way": list(self.same),
                "slip": self.slip.as_dict()}


def _tie_lines(ties, shown: int = MEMBERS_SHOWN) -> list[str]:
    out = []
    for t in ties[:shown]:
        if t.how == "same":
            out.append(f"     same mistake written another way: {t.sentence}")
        elif t.how == "unseen":
            out.append(f"     fits exactly as well: {t.sentence} -- {t.words}")
        else:
            out.append(f"     fits as well: {t.sentence} -- {t.words}")
    if len(ties) > shown:
        out.append(f"     ... and {len(ties) - shown} more listed in the JSON output (as_dict)")
    return out


@dataclass(frozen=True, eq=False)
class MotionDiagnosis:
    """What :func:`explain_known_motion` found.

    ``explanations`` ranked (:class:`MotionExplanation`, best first); ``turns`` the best
    one's per-turn measures (described vs measured); ``ties``: readings that fit as well as
    the best (:class:`Tie`, each with what would separate it); ``slip`` / ``sentence`` /
    ``verdict``; ``explained``: the best reading fits every turn within the tolerances;
    ``mount``: the best one's mount (given or fitted); ``mount_given``; ``stated`` (the log's
    stated reading); ``motion`` (the description read); ``step_seconds``: the time between the
    rows the turning path was built from (the turns' start and end are that precise);
    ``straightness_scale_degrees``: the noise scale the ranking gave axis errors and wobble (the
    straightest reading's own, see :func:`explain_known_motion`); ``notes``.
    """

    explanations: tuple[MotionExplanation, ...]
    ties: tuple[Tie, ...]
    ties_left_out: int
    verdict: str
    explained: bool
    stated: Reading
    motion: DescribedMotion
    mount_given: bool
    step_seconds: float
    straightness_scale_degrees: float
    notes: tuple[str, ...] = ()

    @property
    def best(self) -> MotionExplanation:
        return self.explanations[0]

    @property
    def slip(self) -> Slip:
        return self.best.slip

    @property
    def sentence(self) -> str:
        return self.best.sentence

    @property
    def turns(self) -> tuple[TurnMeasure, ...]:
        return self.best.turns

    @property
    def mount(self) -> np.ndarray:
        return self.best.mount

    def summary(self) -> str:
        """Plain-text report, one fact per line."""
        lines = [self.verdict, f"the log: {self.stated.said_back()}",
                 f"the motion: {self.motion.text.strip()} ({len(self.motion.turns)} turn"
                 f"{'s' if len(self.motion.turns) != 1 else ''})",
                 "mount (sensor frame in the body frame, FLU): " + ("given" if self.mount_given else "fitted") + " "
                 + np.array2string(np.round(self.mount, 4), separator=", ").replace("\n", "")]
        lines.append("turns, described against measured (under the best reading):")
        for t in self.turns:
            lines.append(f"  {t.index + 1}. {t.words}: described {t.described_degrees:+.4g} deg"
                         f"{' (about)' if t.approximate else ''}, measured {t.measured_degrees:+.4g} deg (turned "
                         f"{t.turned_degrees:.4g}), axis off by {t.axis_error_degrees:.3g} deg, wobble "
                         f"{t.wobble_degrees:.3g} deg, from {t.start:.6g} s to {t.end:.6g} s"
                         f"{'' if t.within else ' -- outside the tolerance'}")
        lines += [f"note: {n}" for n in self.notes]
        lines.append("readings, best first:")
        for e in self.explanations:
            lines.append(f"  {e.rank}. cost {e.cost:.4g}{'' if e.fits else ' (outside the tolerances)'}: "
                         f"{e.sentence}")
            for s in e.same:
                lines.append(f"     same mistake written another way: {s}")
            if e.rank == 1:
                lines += _tie_lines(self.ties)
                if self.ties_left_out:
                    lines.append(f"     ... and {self.ties_left_out} more that fit as well, not examined")
        lines.append("fix for the log's numbers (logged_numbers: the (N, n) array):\n" + self.best.code)
        return "\n".join(lines)

    def as_dict(self) -> dict:
        """The result as plain data (JSON-ready)."""
        return {"verdict": self.verdict, "explained": self.explained, "sentence": self.sentence,
                "stated": self.stated.as_dict(), "description": self.motion.text,
                "mount": np.round(self.mount, 12).tolist(), "mount_given": self.mount_given,
                "turns": [t.as_dict() for t in self.turns], "ties": [t.as_dict() for t in self.ties],
                "ties_left_out": self.ties_left_out, "time_step_seconds": self.step_seconds,
                "straightness_scale_degrees": self.straightness_scale_degrees,
                "notes": list(self.notes), "slip": self.slip.as_dict(),
                "explanations": [e.as_dict() for e in self.explanations]}


# --------------------------------------------------------------------------------------
# known motion: candidates
# --------------------------------------------------------------------------------------

@dataclass
class _Turns:
    """The described turns as arrays: body axes ``(K, 3)``, signed angles ``(K,)``, angle tolerances ``(K,)``."""

    axes: np.ndarray
    angles: np.ndarray
    tol: np.ndarray
    base: float

    @property
    def vectors(self) -> np.ndarray:
        return self.axes * self.angles[:, None]


def _turns_of(motion: DescribedMotion, tol_a: float) -> _Turns:
    axes = np.array([t.axis_vector for t in motion.turns])
    angles = np.array([t.angle for t in motion.turns])
    tol = np.array([max(tol_a, APPROXIMATE_SHARE * abs(t.angle)) if t.approximate else tol_a for t in motion.turns])
    return _Turns(axes, angles, tol, tol_a)


def _residuals(vectors, wobble, overshoot, turns: _Turns, mount, tol_x):
    """Normalised residuals ``(..., K, 4)`` (angle, overshoot, axis, wobble) and the mounts ``(..., 3, 3)``.

    ``vectors (..., K, 3)``: the log's pieces in the sensor's axes; ``mount``: a known
    ``(3, 3)`` (or ``(..., 3, 3)``), or None to fit it by Wahba's problem (Park & Martin 1994)."""
    vectors = np.asarray(vectors, dtype=float)
    lead = vectors.shape[:-2]
    if mount is None:
        flat = vectors.reshape(-1, *vectors.shape[-2:])
        mounts = np.stack([park_martin_rotation(turns.vectors, v) for v in flat]).reshape(lead + (3, 3))
    else:
        mounts = np.broadcast_to(mount, lead + (3, 3))
    body = np.einsum("...ab,...kb->...ka", mounts, vectors)
    length = np.linalg.norm(vectors, axis=-1)
    target = turns.vectors
    cosang = np.sum(body * target, -1) / np.maximum(length * np.abs(turns.angles), 1e-300)
    axis_err = np.arccos(np.clip(cosang, -1.0, 1.0))
    angle_err = length - np.abs(turns.angles)
    res = np.stack([angle_err / turns.tol, np.broadcast_to(overshoot, angle_err.shape) / turns.tol,
                    axis_err / tol_x, np.broadcast_to(wobble, angle_err.shape) / tol_x], axis=-1)
    return res, mounts, body


@dataclass
class _Candidate:
    slip: Slip
    path: _Path
    remap: int
    mount: np.ndarray
    res: np.ndarray               # (K, 4) normalised
    data_cost: float
    cost: float
    fits: bool
    body: np.ndarray              # (K, 3) pieces in the body frame


def _stream_rotations(reading: Reading, values, rows):
    with np.errstate(all="ignore"):
        r, _ = read_numbers(reading, values[rows])
    return r


def _stream_paths(reading: Reading, values, rows, k: int, described: float):
    """The two paths of one reading: its rotations as read, and transposed (the action or direction flipped);
    and the handedness the numbers read with (+1, or -1 for a matrix log of reflections)."""
    out = []
    r = _stream_rotations(reading, values, rows)
    with np.errstate(all="ignore"):
        handed = 1.0 if not np.linalg.det(r[0]) < 0 else -1.0
    for transposed in (False, True):
        rr = np.swapaxes(r, -1, -2) if transposed else r
        with np.errstate(all="ignore"):
            path = np.nan_to_num(turning_path(rr), nan=0.0, posinf=0.0, neginf=0.0)
        step = np.linalg.norm(np.diff(path, axis=0), axis=1)
        coarse = float(np.quantile(step, 0.99)) if len(step) else 0.0
        use = rows
        # steps too coarse for this reading's own motion: read finer -- unless the path is already far longer
        # than the described motion (a reading that scrambles the numbers stays scrambled when read finer)
        if coarse > COARSE_STEP and rows[1] - rows[0] > 1 and float(np.sum(step)) <= 4.0 * described:
            w = int(rows[1] - rows[0])
            finer = max(1, w // int(math.ceil(coarse / math.radians(30.0))))
            use = np.arange(0, len(values), finer)
            if use[-1] != len(values) - 1:
                use = np.append(use, len(values) - 1)
            rf = _stream_rotations(reading, values, use)
            rf = np.swapaxes(rf, -1, -2) if transposed else rf
            with np.errstate(all="ignore"):
                path = np.nan_to_num(turning_path(rf), nan=0.0, posinf=0.0, neginf=0.0)
        out.append((transposed, _cut(path, k, use, described)))
    return out, handed


def _score(stated: Reading, paths, turns: _Turns, mount, tol_x) -> list[_Candidate]:
    """Every relation (and, with a known mount, every remap of the sensor's axes) of one reading's two paths."""
    out: list[_Candidate] = []
    k = len(turns.angles)
    a0, d0 = stated.convention.action, stated.convention.direction
    for reading, (path_pair, handed) in paths:
        by_t = dict(path_pair)
        for action, direction, transposed, _ in relations(stated):
            flips = (action != a0) + (direction != d0) + int(transposed)
            path = by_t[bool(flips % 2)]
            true = reading.with_fields(action=action, direction=direction)
            if not path.usable:
                res = np.full((k, 4), np.inf)
                slip = Slip(stated, true, transposed)
                out.append(_Candidate(slip, path, 0, np.eye(3), res, math.inf, math.inf, False, np.zeros((k, 3))))
                continue
            if mount is None:
                remaps = [0]
                vecs = path.vectors[None]
            else:        # the corrected pieces of each remap Q: det(Q) Q v (a conjugation turns rotation vectors so);
                # only the remaps that leave the corrected numbers rotations (a quaternion cannot hold a reflection)
                det = np.linalg.det(REMAPS)
                remaps = [int(q) for q in np.flatnonzero(det * handed > 0)]
                vecs = det[remaps, None, None] * np.einsum("qab,kb->qka", REMAPS[remaps], path.vectors)
            res, mounts, body = _residuals(vecs, path.wobble, path.overshoot, turns, mount, tol_x)
            data = 0.5 * np.sum(res ** 2, axis=(-2, -1))
            for qi, q in enumerate(remaps):
                slip = Slip(stated, true, transposed, 0, q)
                d = float(data[qi])
                cost = d + PRIOR_WEIGHT * slip.deviations()
                fits = bool(np.all(np.abs(res[qi]) <= 1.0))
                out.append(_Candidate(slip, path, q, mounts[qi], res[qi], d, cost, fits, body[qi]))
    return out


# --------------------------------------------------------------------------------------
# known motion: ties and the motion that separates them
# --------------------------------------------------------------------------------------

def _same_everywhere(a: Slip, b: Slip, probe) -> bool:
    with np.errstate(all="ignore"):
        ra, _ = a.decode(probe)
        rb, _ = b.decode(probe)
    return bool(np.all(np.isfinite(ra)) and np.max(np.abs(ra - rb)) <= 1e-9)


def _probe_poses(stated: Reading) -> np.ndarray:
    """Six fixed random poses written under the stated reading: five relative rotations with axes in every
    direction, so a transposed reading is never a conjugate of the plain one on them (two relative rotations,
    whose axes span only a plane, could not tell)."""
    rng = np.random.default_rng(20240612)
    q = rng.normal(size=(6, 4))
    r = rot.matrix_of_quaternion(q / np.linalg.norm(q, axis=1, keepdims=True))
    return write_numbers(stated, r, rng.normal(size=(6, 3)) if stated.has_translation else None)


def _constant_apart(a: Slip, b: Slip, probe):
    """None, or the constant turn ``B (3, 3)`` of the sensor with ``b``'s rotations = ``A a's B`` on any numbers."""
    with np.errstate(all="ignore"):
        ra, _ = a.decode(probe)
        rb, _ = b.decode(probe)
        rel_a = np.swapaxes(ra[:1], -1, -2) @ ra[1:]
        rel_b = np.swapaxes(rb[:1], -1, -2) @ rb[1:]
        if not (np.all(np.isfinite(rel_a)) and np.all(np.isfinite(rel_b))):
            return None
        x = park_martin_rotation(rotation_vectors(rel_b), rotation_vectors(rel_a))          # rel_b = X rel_a X^T
        gap = angles_between(x @ rel_a @ x.T, rel_b)
    return x if np.all(gap <= 1e-6) else None


_EXTRA_TURNS = ((0, math.pi / 2), (1, math.pi / 2), (2, math.pi / 2))


def _extras(motion: DescribedMotion):
    """Further motions to try, simplest first: one turn about an axis the description does not use, any
    single turn, then two turns about different axes without turning back."""
    used = set(motion.axes_used())
    singles = sorted(_EXTRA_TURNS, key=lambda t: (t[0] in used, t[0]))
    out = [[s] for s in singles]
    for a, b in ((1, 0), (2, 1), (0, 2), (0, 1), (1, 2), (2, 0)):
        out.append([_EXTRA_TURNS[a], _EXTRA_TURNS[b]])
    return out


def _body_track(turn_list):
    """Body attitudes ``(S, 3, 3)`` through the turns (intrinsic), and each turn's first and last index."""
    mats = [np.eye(3)]
    bounds = []
    for axis, angle in turn_list:
        steps = max(6, int(math.ceil(abs(angle) / math.radians(30.0))))
        first = len(mats) - 1
        for s in range(1, steps + 1):
            mats.append(mats[first] @ rot.elementary_matrix(_AXES[axis], angle * s / steps))
        bounds.append((first, len(mats) - 1))
    return np.stack(mats), bounds


def _simulated_residual(lead: _Candidate, rival: Slip, start, turn_list, turns: _Turns, mount_given, tol_x):
    """The rival's largest normalised residual on the lead's truth through ``turn_list``, written under the lead."""
    body, bounds = _body_track(turn_list)
    m = lead.mount
    truth = start @ m.T @ body @ m
    try:
        numbers = encode_slip(lead.slip, truth, None)
    except PoseInputError:
        return None
    with np.errstate(all="ignore"):
        r, _ = rival.decode(numbers)
        path = turning_path(r)
        if not np.all(np.isfinite(path)):
            return math.inf
    vec = np.array([path[b] - path[a] for a, b in bounds])
    wob = np.zeros(len(bounds))
    over = np.zeros(len(bounds))
    for i, (a, b) in enumerate(bounds):
        seg = path[a:b + 1] - path[a]
        L = np.linalg.norm(vec[i])
        if L <= 0:
            continue
        u = vec[i] / L
        s = seg @ u
        wob[i] = math.atan2(float(np.sqrt(np.mean(np.sum((seg - np.outer(s, u)) ** 2, 1)))), L)
        over[i] = max(float(np.max(s)) - L, 0.0) + max(-float(np.min(s)), 0.0)
    tv = _Turns(np.eye(3)[[a for a, _ in turn_list]], np.array([g for _, g in turn_list]),
                np.concatenate([turns.tol, np.full(len(turn_list) - len(turns.tol), turns.base)]), turns.base)
    res, _, _ = _residuals(vec, wob, over, tv, lead.mount if mount_given else None, tol_x)
    return float(np.max(np.abs(res)))


def _separating(lead: _Candidate, rival: Slip, motion: DescribedMotion, start, turns: _Turns, mount_given, tol_x):
    base = [(t.axis, t.angle) for t in motion.turns]
    for extra in _extras(motion):
        got = _simulated_residual(lead, rival, start, base + extra, turns, mount_given, tol_x)
        if got is not None and got > SEPARATES:
            words = ", then ".join(turn_words(a, g) for a, g in extra)
            if len(extra) == 1:
                how = (f"a turn about the body's {_AXES[extra[0][0]]} axis as well would separate them, e.g. "
                       f"'{words}' after the described motion")
            else:
                how = (f"two more turns about different axes, each from where the last one ended (no turning back "
                       f"in between), would separate them, e.g. '{words}' after the described motion")
            return words, how
    return None, ("no single added turn or pair of turns separates them in a simulation; record a longer motion "
                  "about all three axes without returning in between")


def _unseen_words(x, mount_given) -> str:
    if float(angles_between(x, np.eye(3))) <= 1e-6:
        return ("differs only by a constant turn or mirror of the world frame: relative motions cannot see it, no "
                "motion tells them apart; only a pose against a known world frame would")
    if mount_given:
        return ""
    return ("differs by a constant turn of the sensor (another mount) and of the world frame: no motion tells them "
            "apart; giving the mount would")


# --------------------------------------------------------------------------------------
# known motion: the public function
# --------------------------------------------------------------------------------------

def _rescore(candidates, tol_x) -> float:
    """The data term of every candidate with the noise scale of axes and wobble taken from the data: the
    straightest reading's rms axis error and wobble (the motion as it was really made, plus noise), within
    ``[STRAIGHT_FLOOR, tol_x]``.  A reading that bends every turn by 5 degrees then loses to one that bends
    none, even when both stay inside a generous tolerance; the angles keep the user's tolerances (how far the
    description may be off is the user's to say).  Returns the scale (radians)."""
    straight = [math.sqrt(float(np.mean(c.res[:, 2:] ** 2))) * tol_x for c in candidates
                if np.all(np.isfinite(c.res))]
    scale = min(max(min(straight, default=tol_x), STRAIGHT_FLOOR), tol_x)
    for c in candidates:
        r = np.array(c.res, dtype=float)
        r[:, 2:] *= tol_x / scale
        c.data_cost = 0.5 * float(np.sum(r ** 2)) if np.all(np.isfinite(r)) else math.inf
        c.cost = c.data_cost + PRIOR_WEIGHT * c.slip.deviations()
    return scale


def _checked_mount(mount):
    if mount is None:
        return None
    if isinstance(mount, str):
        if mount.strip().lower() in ("identity", "aligned", "none-turned"):
            return np.eye(3)
        raise KnownMotionError(f"mount: got text {excerpt(mount, 40)}; accepted: 'identity' (the sensor's axes are "
                               "the body's forward-left-up axes), a (3, 3) rotation (the sensor frame in the body "
                               "frame, p_body = M p_sensor), or None (unknown: fitted from the motion)")
    arr = as_numbers(mount, "mount")
    if arr.shape != (3, 3):
        raise WrongShapeError(f"mount: got shape {arr.shape}; expected a (3, 3) rotation (the sensor frame in the "
                              "body frame, p_body = M p_sensor), 'identity', or None")
    return checked_matrix(arr, "mount")


def _checked_degrees(value, name: str, largest: float = math.pi) -> float:
    v = checked_tolerance(value, name, " radians")
    if v > largest:
        raise KnownMotionError(f"{name}: got {summarise(value)} radians ({math.degrees(v):.4g} degrees); accepted: "
                               f"a finite number > 0 and <= {largest:.4g} radians")
    return v


def _lower_first(text: str) -> str:
    """A sentence inside another: first letter lower case, final stop dropped (names such as FLU kept)."""
    return text[:1].lower() + text[1:].rstrip(".")


def _sentence(slip: Slip) -> str:
    if slip.is_none:
        return "The log, read as stated, follows the described motion: no convention error found."
    return sentence(slip)


def _measures(c: _Candidate, motion: DescribedMotion, turns: _Turns, times, tol_x) -> tuple[TurnMeasure, ...]:
    out = []
    for i, t in enumerate(motion.turns):
        v = c.path.vectors[i]
        length = float(np.linalg.norm(v))
        res = c.res[i]
        measured = float(np.dot(c.body[i], turns.axes[i]))
        a, b = c.path.spans[i]
        out.append(TurnMeasure(
            i, t.text.strip() or t.words(), _AXES[t.axis], math.degrees(t.angle), t.approximate,
            math.degrees(float(turns.tol[i])), math.degrees(length), math.degrees(measured),
            v / length if length > 0 else np.zeros(3), math.degrees(float(abs(res[2]) * tol_x)),
            math.degrees(float(abs(res[3]) * tol_x)), math.degrees(float(abs(res[1]) * turns.tol[i])),
            float(times[a]), float(times[b]), bool(np.all(np.abs(res) <= 1.0))))
    return tuple(out)


def explain_known_motion(times, values, reading=None, description=None, *, kind: str | None = None, mount=None,
                         angle_tolerance: float = math.radians(10.0), axis_tolerance: float = math.radians(10.0),
                         limit: int = 5) -> MotionDiagnosis:
    """Which reading of a logged orientation stream makes it follow a described motion.

    ``times (N,)``: strictly increasing seconds; ``values (N, n)``: one row of numbers per
    sample (n = 3, 4, 6, 7, 9, 12 or 16; only the rotation is used), read under ``reading``
    (convention text, a :class:`~posekit.Convention`, a :class:`~posekit.explain.Reading`,
    or None; ``kind`` names the kind when the count alone does not).  ``description``: what
    physically happened, in the words :func:`posekit.io.words.read_motion` reads (or its
    :class:`~posekit.io.words.DescribedMotion`), about the body's forward-left-up axes.
    ``mount``: the sensor's frame in the body frame (``(3, 3)``, ``p_body = M p_sensor``, or
    ``"identity"``), or None (unknown: fitted; then the sensor's axis remaps are not seen).
    ``angle_tolerance`` (radians) is how far a measured angle may be from the described one
    (approximate angles, "about 90 degrees", are allowed :data:`APPROXIMATE_SHARE` of
    themselves when that is more); ``axis_tolerance`` how far a turn's axis may stray.  A
    reading *fits* when every turn is within these; readings that fit are ranked by the data
    term and the prior, where axis errors and wobble are measured against the straightest
    reading's own rms figure (within :data:`STRAIGHT_FLOOR` and ``axis_tolerance``): a reading
    that bends clean turns by five degrees then loses to one that bends none.

    Returns a :class:`MotionDiagnosis`: the readings ranked (best first), the best one's
    turns described against measured, the readings that fit as well with what would tell
    them apart (:class:`Tie`), and a verdict; ``explained`` is False when no reading fits
    the described motion within the tolerances.  Raises
    :class:`~posekit.io.words.DescriptionError` for a description posekit cannot read,
    :class:`StillLogError` when the log does not turn, and posekit's input errors.

    >>> from scipy.spatial.transform import Rotation
    >>> t = np.linspace(0, 12, 1201)
    >>> ramp = np.clip((t - 1) / 4, 0, 1) - np.clip((t - 7) / 4, 0, 1)   # up 90 degrees, hold, back
    >>> body = Rotation.from_rotvec(np.outer(-np.pi / 2 * ramp, [0, 1, 0]))
    >>> logged = (Rotation.from_euler("z", 30, degrees=True) * body).as_quat()   # x, y, z, w
    >>> out = explain_known_motion(t, logged, "scalar=first",
    ...                            "tilted nose up about 90 degrees, then back", mount="identity")
    >>> out.sentence
    'The quaternion was written scalar-last but read scalar-first (stated).'
    >>> [round(m.measured_degrees) for m in out.turns]
    [-90, 90]
    """
    tol_a = _checked_degrees(angle_tolerance, "angle_tolerance")
    tol_x = _checked_degrees(axis_tolerance, "axis_tolerance")
    limit = checked_count(limit, "limit", " (explanations to list)")
    known = _checked_mount(mount)
    if isinstance(description, DescribedMotion):
        motion = description
    elif isinstance(description, str):
        motion = read_motion(description)
    else:
        raise DescriptionError(f"description: got {type(description).__name__}; expected text such as 'tilted nose "
                               "up about 90 degrees, then back' (posekit.io.words.read_motion)")
    arr, stated = checked_stream(values, "values", reading, kind, "reading")
    t = checked_times(times, "times", len(arr))
    n = len(arr)
    k = len(motion.turns)
    turns = _turns_of(motion, tol_a)
    w = max(1, n // ROWS)
    rows = np.arange(0, n, w)
    if rows[-1] != n - 1:
        rows = np.append(rows, n - 1)

    # the stated reading must show turning at all (stillness is the same under every reading)
    with np.errstate(all="ignore"):
        r_stated = _stream_rotations(stated, arr, rows)
        still_path = np.nan_to_num(turning_path(r_stated))
    if not np.any(np.linalg.norm(np.diff(still_path, axis=0), axis=1) > 1e-9):
        raise StillLogError(f"values: the log never turns ({n} samples, {float(t[-1] - t[0]):.4g} s, read as "
                            f"{stated.describe()}); accepted: a log recorded while the body made the described "
                            "motion")

    candidates: list[_Candidate] = []
    for r in readings_of(stated):
        paths = [(r, _stream_paths(r, arr, rows, k, float(np.sum(np.abs(turns.angles)))))]
        candidates += _score(stated, paths, turns, known, tol_x)
    scale = _rescore(candidates, tol_x)
    candidates.sort(key=lambda c: (not c.fits, round(c.cost, 6), c.slip.order_key()))
    probe = _probe_poses(stated)

    # explanations: the ranked candidates, each slip written two ways listed once
    explanations: list[MotionExplanation] = []
    leads: list[_Candidate] = []
    for c in candidates:
        if len(leads) >= limit:
            break
        twin = next((e for e in leads if _same_everywhere(e.slip, c.slip, probe)), None)
        if twin is not None:
            continue
        leads.append(c)
    for rank, c in enumerate(leads, start=1):
        same = []
        for o in candidates[:400]:
            if o is c or o.slip.deviations() > c.slip.deviations() + 1.0:
                continue
            if abs(o.data_cost - c.data_cost) <= 1e-9 * (1 + c.data_cost) and _same_everywhere(c.slip, o.slip, probe):
                s = _sentence(o.slip)
                if s != _sentence(c.slip) and s not in same:
                    same.append(s)
        explanations.append(MotionExplanation(rank, c.slip, _sentence(c.slip), fix_code(c.slip, batch=True),
                                              c.mount.copy(), _measures(c, motion, turns, t, tol_x),
                                              float(c.cost), float(c.data_cost), float(c.slip.deviations()),
                                              c.fits, tuple(same[:MEMBERS_SHOWN])))
    best = leads[0]
    explained = best.fits

    # ties: every other reading the data cannot reject, with what would tell it apart
    ties: list[Tie] = []
    left_out = 0
    notes: list[str] = []
    if explained:
        with np.errstate(all="ignore"):
            start, _ = best.slip.decode(arr[:1])
        start = start[0]
        seen = {_sentence(best.slip), *explanations[0].same}
        examined = 0
        for c in candidates[1:]:
            if not c.fits:
                break
            if c.data_cost > best.data_cost + TIE_MARGIN:
                continue
            s = _sentence(c.slip)
            if s in seen:
                continue
            seen.add(s)
            if examined >= TIES_EXAMINED or len(ties) >= 3 * MEMBERS_SHOWN:
                left_out += 1
                continue
            examined += 1
            if _same_everywhere(best.slip, c.slip, probe):
                continue                                       # already said under "same"
            x = _constant_apart(best.slip, c.slip, probe)
            words = _unseen_words(x, known is not None) if x is not None else ""
            if words:
                ties.append(Tie(s, "unseen", None, words, c.slip))
                continue
            move, how = _separating(best, c.slip, motion, start, turns, known is not None, tol_x)
            ties.append(Tie(s, "separable", move, how, c.slip))
        if ties:
            tied = len(ties) + left_out
            unseen = sum(1 for x in ties if x.how == "unseen")
            moves: dict = {}
            for x in ties:
                if x.how == "separable" and x.motion:
                    moves[x.motion] = moves.get(x.motion, 0) + 1
            parts = []
            if moves:
                move, count = max(moves.items(), key=lambda kv: kv[1])
                parts.append(f"adding '{move}' after the described motion would tell {count} of them apart")
            if unseen:
                parts.append(f"{unseen} differ only by a constant turn no motion shows")
            verdict = (f"{explanations[0].sentence} But {tied} other reading{'s' if tied != 1 else ''} fit"
                       f"{'s' if tied == 1 else ''} this motion as well (listed under the first explanation)"
                       + (": " + "; ".join(parts) if parts else "") + ".")
        else:
            verdict = explanations[0].sentence
    elif not math.isfinite(best.data_cost):
        verdict = (f"No reading of the log follows the described motion: under no reading does the log turn enough "
                   f"to be cut into the {k} turn{'s' if k != 1 else ''} described; check the description and the "
                   "time span of the log")
    else:
        worst = max(best.res.flatten(), key=abs)
        verdict = (f"No reading of the log follows the described motion within the tolerances (angle "
                   f"{math.degrees(tol_a):.3g} degrees, axis {math.degrees(tol_x):.3g} degrees): the closest "
                   f"({_lower_first(explanations[0].sentence)}) is still off by {abs(worst):.3g} tolerances; check "
                   "the description (which turns, how far, in what order), the time span of the log, or whether the "
                   "sensor is on the body described")
    if known is None:
        notes.append("the mount is unknown: a remap of the sensor's own axes (or its handedness) looks like another "
                     "mount to relative motions and is not tested; give mount= to test for one")
    notes.append("relative motions cannot see the world frame: a remap of it (ENU/NED, its handedness) is never "
                 "named here")
    if stated.has_translation:
        notes.append("the positions in the log are not used: a known motion is checked by its turns (so a length "
                     "unit or a translation frame cannot be named here)")
    if best.path.turning_runs > k:
        notes.append(f"the log turns in {best.path.turning_runs} separate stretches but the description has {k} "
                     f"turn{'s' if k != 1 else ''}: check that the description covers the whole log")
    step = float(np.median(np.diff(t[best.path.rows]))) if len(best.path.rows) > 1 else 0.0
    return MotionDiagnosis(tuple(explanations), tuple(ties), left_out, verdict, bool(explained), stated, motion,
                           known is not None, step, math.degrees(scale), tuple(notes))


# --------------------------------------------------------------------------------------
# rates: readings, integration
# --------------------------------------------------------------------------------------

_RATE_CHOICES = {"frame": ("body", "world"), "unit": ("radians", "degrees")}
_RATE_UNIT_WORDS = {"radians": "radians per second", "degrees": "degrees per second"}
_MINUS_IDENTITY = int(np.flatnonzero(np.all(np.asarray(REMAPS) == -np.eye(3), axis=(1, 2)))[0])


@dataclass(frozen=True)
class RateReading:
    """How a rate stream's three numbers per sample are read.

    ``frame``: ``"body"`` (about the body's own axes, as a gyro measures) or ``"world"``
    (about the fixed axes); ``unit``: ``"radians"`` or ``"degrees"`` per second; ``remap``:
    index into :data:`posekit.explain.REMAPS`, the signed axis permutation ``S`` with
    ``logged = S @ rates`` (sign flips, axis order, handedness); ``stated``: the fields the
    user chose (a stated field costs more to contradict).
    """

    frame: str = "body"
    unit: str = "radians"
    remap: int = 0
    stated: frozenset = field(default_factory=frozenset)

    def __post_init__(self):
        for name, choices in _RATE_CHOICES.items():
            if getattr(self, name) not in choices:
                raise RateReadingError(f"rate reading: {name}={getattr(self, name)!r}; accepted: "
                                       + ", ".join(f"{name}={c}" for c in choices))
        object.__setattr__(self, "stated", frozenset(self.stated))

    @property
    def scale(self) -> float:
        """Radians per second per logged unit."""
        return math.pi / 180.0 if self.unit == "degrees" else 1.0

    def text(self) -> str:
        return f"frame={self.frame} unit={self.unit}"

    def describe(self) -> str:
        axes = "" if self.remap == 0 else f", axes as logged = S @ true with {describe_remap(REMAPS[self.remap])}"
        return f"{self.frame}-frame rates in {_RATE_UNIT_WORDS[self.unit]}{axes}"

    def said_back(self) -> str:
        stated = [f"{k}={getattr(self, k)}" for k in _RATE_CHOICES if k in self.stated]
        free = [f"{k}={getattr(self, k)}" for k in _RATE_CHOICES if k not in self.stated]
        return (f"read as {self.describe()}; you stated {' '.join(stated) if stated else 'no field'}"
                + (f"; not stated, so free to be wrong: {' '.join(free)}" if free else ""))

    def decode(self, logged, rotations=None) -> np.ndarray:
        """Logged rates ``(N, 3)`` -> body-frame radians per second ``(N, 3)`` (``rotations (N, 3, 3)``, the
        body's orientation, are needed for world-frame rates: ``w_body = R^T w_world``)."""
        w = np.asarray(logged, dtype=float) @ REMAPS[self.remap] * self.scale
        if self.frame == "world":
            w = np.einsum("...ba,...b->...a", rotations, w)
        return w

    def encode(self, body_rates, rotations=None) -> np.ndarray:
        """Body-frame radians per second ``(N, 3)`` -> the numbers this reading would log."""
        w = np.asarray(body_rates, dtype=float)
        if self.frame == "world":
            w = np.einsum("...ab,...b->...a", rotations, w)
        return w @ REMAPS[self.remap].T / self.scale

    def as_dict(self) -> dict:
        return {"frame": self.frame, "unit": self.unit, "remap": REMAPS[self.remap].astype(int).tolist(),
                "stated": sorted(self.stated), "words": self.describe()}


def rate_reading(value=None) -> RateReading:
    """A :class:`RateReading` from text (``"frame=world unit=degrees"``: keys ``frame`` = body | world,
    ``unit`` = radians | degrees, per second; the keys written are the stated fields), a RateReading, or None.

    >>> rate_reading("unit=degrees").said_back()
    'read as body-frame rates in degrees per second; you stated unit=degrees; not stated, so free to be wrong: frame=body'
    """
    if value is None:
        return RateReading()
    if isinstance(value, RateReading):
        return value
    if not isinstance(value, str):
        raise RateReadingError(f"rate reading: got {type(value).__name__} {summarise(value, 40)}; accepted: text such "
                               "as 'frame=world unit=degrees', a RateReading, or None")
    if len(value) > 200:
        raise RateReadingError(f"rate reading: got {len(value)} characters; accepted: at most 200, e.g. "
                               "'frame=world unit=degrees'")
    settings = {}
    for word in (w for w in re.split(r"[\s,;]+", value.strip()) if w):
        key, eq, val = word.partition("=")
        if not eq or key not in _RATE_CHOICES or val not in _RATE_CHOICES[key]:
            raise RateReadingError(f"rate reading: {excerpt(word, 40)} is not a setting posekit knows; accepted: "
                                   "frame=body|world and unit=radians|degrees (per second), e.g. 'frame=world "
                                   "unit=degrees'")
        if key in settings:
            raise RateReadingError(f"rate reading: {key} is given twice in {excerpt(value, 60)}; accepted: each key "
                                   "once")
        settings[key] = val
    return RateReading(settings.get("frame", "body"), settings.get("unit", "radians"), 0, frozenset(settings))


def _rate_deviations(stated: RateReading, true: RateReading) -> float:
    """The prior of :mod:`posekit.explain.slips` for rates: a field off a default 1, off a stated field
    ``STATED_COST``; the axis remap as a remap (``remap_cost``), except every sign flipped (``-I``), which is one
    slip (a rate sign convention), not a handedness flip of three axes."""
    n = 0.0
    for f in _RATE_CHOICES:
        if getattr(stated, f) != getattr(true, f):
            n += STATED_COST if f in stated.stated else 1.0
    n += 1.0 if true.remap == _MINUS_IDENTITY else float(remap_cost(true.remap))
    return n


def _rate_order(stated: RateReading, true: RateReading) -> tuple:
    return (round(_rate_deviations(stated, true), 9), true.frame != stated.frame, true.unit != stated.unit,
            true.remap)


def rate_sentence(stated: RateReading, true: RateReading) -> str:
    """What a rate slip claims, as one sentence (the same shape as :func:`posekit.explain.sentence`)."""
    parts = []
    if true.frame != stated.frame:
        mark = " (stated)" if "frame" in stated.stated else ""
        what = {"world": "world-frame (about the fixed axes)", "body": "body-frame (about the body's own axes)"}
        parts.append(f"the rates are {what[true.frame]} but were read as {stated.frame}-frame rates{mark}")
    if true.unit != stated.unit:
        mark = " (stated)" if "unit" in stated.stated else ""
        parts.append(f"the rates were logged in {_RATE_UNIT_WORDS[true.unit]} but read as "
                     f"{_RATE_UNIT_WORDS[stated.unit]}{mark}")
    if true.remap != stated.remap:
        s = REMAPS[true.remap]
        if true.remap == _MINUS_IDENTITY:
            parts.append("every rate's sign is flipped")
        elif np.allclose(np.abs(np.diag(s)), 1) and np.sum(np.diag(s) < 0) == 1:
            parts.append(f"the {_AXES[int(np.argmin(np.diag(s)))]} rate's sign is flipped")
        else:
            parts.append(f"the rate axes are remapped: {describe_remap(s)}")
    if not parts:
        return "The rates, read as stated, match the orientation stream: no convention error found."
    text = parts[0] if len(parts) == 1 else ", ".join(parts[:-1]) + ", and " + parts[-1]
    return text[0].upper() + text[1:] + "."


def rate_fix_code(stated: RateReading, true: RateReading) -> str:
    """A numpy snippet: the logged rates read as written, written back in the stated reading."""
    s = REMAPS[true.remap]
    lines = ["import numpy as np", "",
             "rates = np.asarray(logged_rates, dtype=float)  # (N, 3) as logged",
             f"# as logged: {true.describe()}"]
    if true.remap:
        lines.append("S = np.array([" + ", ".join("[" + ", ".join(f"{v:g}" for v in row) + "]" for row in s)
                     + "])  # logged = S @ true")
        lines.append("rates = rates @ S  # each row S^T w: the axes as the orientation stream has them")
    if true.unit != stated.unit:
        lines.append("rates = np.radians(rates)" if true.unit == "degrees" else "rates = np.degrees(rates)")
    if true.frame != stated.frame:
        lines.append("# R: (N, 3, 3) the body's orientation at each rate sample (p_world = R p_body)")
        if true.frame == "world":
            lines.append("rates = np.einsum('nba,nb->na', R, rates)  # world-frame rates into the body frame")
        else:
            lines.append("rates = np.einsum('nab,nb->na', R, rates)  # body-frame rates into the world frame")
    lines.append(f"corrected = rates  # {stated.describe()}")
    return "\n".join(lines)


def _scan(q, reverse: bool = False) -> np.ndarray:
    """Running products of unit quaternions ``(L, 4)`` -> ``(L + 1, 4)`` starting at identity:
    ``q_1 q_2 ... q_k`` (or ``q_k ... q_1`` with ``reverse``), by a Hillis-Steele scan (log2 L
    vectorised rounds of Hamilton products; Hillis & Steele 1986, CACM 29(12))."""
    out = np.array(q, dtype=float)
    step = 1
    n = len(out)
    while step < n:
        left, right = out[:-step], out[step:]
        prod = rot.hamilton_product(right, left) if reverse else rot.hamilton_product(left, right)
        out = np.concatenate([out[:step], prod / np.linalg.norm(prod, axis=1, keepdims=True)])
        step *= 2
    return np.concatenate([[[1.0, 0.0, 0.0, 0.0]], out])


def _increments(times, rates):
    """Quaternions of each step ``[t_i, t_{i+1}]``: the mean of its two rates (radians per second) times its length."""
    dt = np.diff(times)
    w = 0.5 * (rates[:-1] + rates[1:]) * dt[:, None]
    return rot.quaternion_of_rotvec(w)


def integrate_rates(times, rates, frame: str = "body") -> np.ndarray:
    """Orientations ``(N, 3, 3)`` from angular rates, relative to the first sample (identity there).

    ``times (N,)`` seconds, ``rates (N, 3)`` radians per second; each step ``[t_i, t_{i+1}]``
    turns by the mean of its two rates times its length (the trapezoid rule; exact for a
    constant rate about a fixed axis).  ``frame="body"``: rates about the body's own axes,
    ``R_{i+1} = R_i exp(w dt)``; ``"world"``: about the fixed axes, ``R_{i+1} = exp(w dt) R_i``.
    The running products are a parallel prefix scan in numpy, not a Python loop.

    >>> t = np.linspace(0, 2, 201)
    >>> r = integrate_rates(t, np.tile([0, 0, np.pi / 4], (201, 1)))
    >>> (np.round(r[-1] @ [1, 0, 0], 12) + 0.0).tolist()      # 90 degrees about z
    [0.0, 1.0, 0.0]
    """
    if frame not in ("body", "world"):
        raise RateReadingError(f"frame: got {summarise(frame, 30)}; accepted: 'body' or 'world'")
    t = np.asarray(times, dtype=float)
    w = np.asarray(rates, dtype=float)
    return rot.matrix_of_quaternion(_scan(_increments(t, w), reverse=frame == "world"))


@dataclass(frozen=True, eq=False)
class RateExplanation:
    """One reading of the rates: ``reading`` (the true one), ``sentence``, ``code`` (numpy undoing it on
    ``logged_rates``), ``residual_degrees (J,)``: per key interval, the angle between the integrated rates and
    the orientation's relative rotation; ``cost``, ``deviations``, ``fits`` (rms within the tolerance)."""

    rank: int
    reading: RateReading
    sentence: str
    code: str
    residual_degrees: np.ndarray
    cost: float
    deviations: float
    fits: bool

    @property
    def rms_degrees(self) -> float:
        return float(np.sqrt(np.mean(self.residual_degrees ** 2)))

    @property
    def max_degrees(self) -> float:
        return float(np.max(self.residual_degrees))

    def as_dict(self) -> dict:
        return {"rank": self.rank, "reading": self.reading.as_dict(), "sentence": self.sentence, "code": self.code,
                "residual_degrees": self.residual_degrees.tolist(), "rms_degrees": self.rms_degrees,
                "max_degrees": self.max_degrees, "cost": self.cost, "deviations": self.deviations,
                "fits": self.fits}


@dataclass(frozen=True, eq=False)
class RateDiagnosis:
    """What :func:`explain_rates` found.

    ``offset`` seconds to add to the rate stamps (the orientation's clock = rate clock +
    offset) and ``time_offset`` (:class:`~posekit.analysis.alignment.TimeOffset`, None when
    the offset was given); ``speed_mismatch``: per unit, how far the rate magnitudes are from
    the orientation's angular speeds (rms share); ``explanations`` ranked; ``ties``; the
    ``verdict``; ``explained``: the best reading's rms residual is within the tolerance;
    ``intervals (J, 2)``: the key intervals (seconds, the orientation's clock); ``motion``.
    """

    offset: float
    time_offset: TimeOffset | None
    speed_mismatch: dict
    explanations: tuple[RateExplanation, ...]
    ties: tuple[Tie, ...]
    verdict: str
    explained: bool
    stated_rates: RateReading
    stated_orientation: Reading
    intervals: np.ndarray
    motion: dict
    notes: tuple[str, ...] = ()

    @property
    def best(self) -> RateExplanation:
        return self.explanations[0]

    @property
    def reading(self) -> RateReading:
        return self.best.reading

    @property
    def sentence(self) -> str:
        return self.best.sentence

    def summary(self) -> str:
        """Plain-text report, one fact per line."""
        lines = [self.verdict, f"rates: {self.stated_rates.said_back()}",
                 f"orientation (reference): {self.stated_orientation.said_back()}"]
        if self.time_offset is None:
            lines.append(f"time offset: {self.offset:+.6g} s added to the rate stamps (given)")
        else:
            lines.append(f"time offset: add {self.offset:+.6g} s to the rate stamps (uncertainty "
                         f"{self.time_offset.uncertainty:.2g} s, speed correlation {self.time_offset.correlation:.4f})")
        lines.append("speed mismatch by unit: " + ", ".join(f"{u} {100 * m:.3g} %" for u, m in
                                                            self.speed_mismatch.items()))
        lines.append(f"motion: turned {self.motion['total_rotation_degrees']:.4g} degrees over "
                     f"{self.motion['intervals']} intervals, rotation axes spread "
                     f"{self.motion['axis_spread_degrees']:.3g} degrees")
        lines += [f"note: {n}" for n in self.notes]
        lines.append("readings of the rates, best first:")
        for e in self.explanations:
            lines.append(f"  {e.rank}. rms {e.rms_degrees:.3g} degrees, cost {e.cost:.4g}"
                         f"{'' if e.fits else ' (outside the tolerance)'}: {e.sentence}")
            if e.rank == 1:
                lines += _tie_lines(self.ties)
        lines.append("fix for the rates (logged_rates: the (N, 3) array):\n" + self.best.code)
        return "\n".join(lines)

    def as_dict(self) -> dict:
        return {"verdict": self.verdict, "explained": self.explained, "sentence": self.sentence,
                "offset_seconds": self.offset, "offset_given": self.time_offset is None,
                "offset_method": OFFSET_METHOD,
                "time_offset": None if self.time_offset is None else self.time_offset.as_dict(),
                "speed_mismatch": {k: _plain(v) for k, v in self.speed_mismatch.items()},
                "stated_rates": self.stated_rates.as_dict(),
                "stated_orientation": self.stated_orientation.as_dict(), "intervals_seconds": self.intervals.tolist(),
                "motion": dict(self.motion), "notes": list(self.notes), "ties": [t.as_dict() for t in self.ties],
                "reading": self.reading.as_dict(), "explanations": [e.as_dict() for e in self.explanations]}


def _rate_separating(lead: RateReading, rival: RateReading, attitudes):
    """The turn about a body axis whose rates, logged under ``lead``, ``rival`` reads otherwise (at the first
    attitude where one does)."""
    for i, att in enumerate(attitudes):
        for e in range(3):
            back = rival.decode(lead.encode(np.eye(3)[e], att), att)
            if np.linalg.norm(back - np.eye(3)[e]) > 1e-6:
                return turn_words(e, math.pi / 2), (
                    f"a turn about the body's {_AXES[e]} axis would separate them, e.g. '{turn_words(e, math.pi / 2)}'"
                    + ("" if i == 0 else " once the body is turned away from where the log ends"))
    return None, "no single turn separates them"


def _checked_rates(rates, times_rates):
    arr = as_numbers(rates, "rates")
    if arr.ndim != 2 or arr.shape[1] != 3:
        raise RateStreamError(f"rates: got shape {arr.shape}; expected (N, 3): three angular rates per sample")
    if len(arr) < 20:
        raise RateStreamError(f"rates: got {len(arr)} samples; expected at least 20 (a stretch of motion)")
    return arr, checked_times(times_rates, "times_rates", len(arr))


def explain_rates(times_rates, rates, times_orientation, values, reading=None, *, rates_reading=None,
                  kind: str | None = None, offset: float | None = None, max_offset: float | None = None,
                  min_overlap: float = 0.5, pair_angle: float = DEFAULT_PAIR_ANGLE, max_pairs: int = 400,
                  rotation_tolerance: float = math.radians(1.0), limit: int = 5) -> RateDiagnosis:
    """How a rate stream was logged, judged against an orientation stream of the same body.

    ``times_rates (M,)`` seconds and ``rates (M, 3)`` (a gyro's numbers, read under
    ``rates_reading``: text such as ``"frame=body unit=degrees"``, a :class:`RateReading`, or
    None for body-frame radians per second); ``times_orientation (N,)`` and ``values (N, n)``
    read under ``reading`` / ``kind`` as the reference (their own clock).  ``offset``: seconds
    to add to the rate stamps to put them on the orientation's clock, or None to estimate it
    from the angular speeds (:data:`~posekit.analysis.alignment.OFFSET_METHOD`; ``max_offset``
    and ``min_overlap`` bound the search).  Key samples ``pair_angle`` radians of turning
    apart (at most ``max_pairs`` intervals); between them the rates are integrated
    (:func:`integrate_rates`) under every reading -- body or world frame, radians or degrees
    per second, each of the 48 signed axis permutations -- and compared with the
    orientation's relative rotation over the same interval (``rotation_tolerance`` radians
    rms).  The rate axes are taken to be the orientation's body axes up to that permutation.

    Returns a :class:`RateDiagnosis`.  Raises :class:`RateStreamError`,
    :class:`RateReadingError`, :class:`StillLogError` and posekit's input errors.

    >>> from scipy.spatial.transform import Rotation, RotationSpline
    >>> keys = np.linspace(0, 30, 7)
    >>> spline = RotationSpline(keys, Rotation.random(7, random_state=4))    # ground truth (scipy)
    >>> t = np.arange(0, 30, 0.01)
    >>> gyro = np.degrees(spline(t, 1))                    # body-frame rates, logged in degrees per second
    >>> out = explain_rates(t, gyro, t, spline(t).as_quat(scalar_first=True), "scalar=first", offset=0.0)
    >>> out.sentence
    'The rates were logged in degrees per second but read as radians per second.'
    """
    stated_r = rate_reading(rates_reading)
    tol = checked_tolerance(rotation_tolerance, "rotation_tolerance", " radians")
    pair_angle = _checked_degrees(pair_angle, "pair_angle", math.radians(90.0))
    max_pairs = checked_count(max_pairs, "max_pairs", " (key intervals)")
    limit = checked_count(limit, "limit", " (explanations to list)")
    min_overlap = checked_tolerance(min_overlap, "min_overlap", " (a fraction of the shorter stream)")
    if min_overlap > 1:
        raise KnownMotionError(f"min_overlap: got {min_overlap:g}; accepted a fraction > 0 and <= 1 of the shorter "
                               "stream")
    if max_offset is not None:
        max_offset = checked_tolerance(max_offset, "max_offset", " seconds")
    if offset is not None:
        off = as_numbers(offset, "offset")
        if off.shape != ():
            raise WrongShapeError(f"offset: got shape {off.shape}; expected one number of seconds (or None)")
        offset = float(off)
    w_log, tr = _checked_rates(rates, times_rates)
    arr, stated_o = checked_stream(values, "values", reading, kind, "reading")
    to = checked_times(times_orientation, "times_orientation", len(arr))
    r_o, _ = read_reference(stated_o, arr, "values")
    notes: list[str] = []

    # --- the clock offset (angular speeds do not depend on frame, sign or axis order) ------------
    speed_raw = np.linalg.norm(w_log, axis=1)
    dt_o = float(np.median(np.diff(to)))
    stride = max(1, int(round(max(dt_o, float(np.median(np.diff(tr)))) / dt_o)))
    mid_o, speed_o = angular_speeds(to, r_o, stride)
    time_offset = None
    if offset is None:
        if np.std(speed_o) <= 1e-6 * (np.mean(speed_o) + 1e-12) or np.max(speed_o) <= 0:
            raise StillLogError(
                f"values: the orientation's angular speed hardly varies (mean "
                f"{math.degrees(float(np.mean(speed_o))):.4g} deg/s): the clock offset cannot be found from it; "
                "record a motion that speeds up and slows down, or give offset= (0 when both streams share one clock)")
        grid = speed_grid(mid_o, speed_o, dt_o, tr, max_offset, min_overlap,
                           {"max_offset": "max_offset", "min_overlap": "min_overlap"})
        time_offset = estimate_offset(grid, tr, speed_raw, refine=True)   # Pearson's r: the unit does not matter
        offset = time_offset.offset
        if time_offset.ambiguous:
            notes.append(f"the speed correlation has a second peak ({time_offset.second_peak:.4f} against "
                         f"{time_offset.correlation:.4f}): a periodic motion leaves the offset ambiguous; give offset=")
    # the speeds themselves (not only their shape) say the unit: rms(|w| - speed) / rms(speed) at that offset
    s_o = np.interp(tr + offset, mid_o, speed_o, left=np.nan, right=np.nan)
    ok = np.isfinite(s_o)
    mismatch = {}
    for unit, scale in (("radians", 1.0), ("degrees", math.pi / 180.0)):
        if np.any(ok) and np.any(s_o[ok] > 0):
            mismatch[unit] = float(np.sqrt(np.mean((speed_raw[ok] * scale - s_o[ok]) ** 2) / np.mean(s_o[ok] ** 2)))
        else:
            mismatch[unit] = float("nan")

    # --- key intervals and the orientation's relative rotations over them ------------------------
    q_o = rot.quaternion_of_matrix(r_o)
    step_ang = angles_between(r_o[:-1], r_o[1:])
    cum_o = np.concatenate([[0.0], np.cumsum(step_ang)])
    keys = key_samples(to, cum_o, q_o, None, tr, offset, pair_angle, max_pairs)
    if keys is None:
        raise StillLogError(f"times_rates: shifted by the offset ({offset:+.6g} s), fewer than 3 rate samples fall "
                            "inside the orientation stream's time span; accepted: two streams of one stretch of motion")
    rows, ra = keys["rows"], keys["ra"]
    total, spread, _ = motion_of(keys["alpha"])
    if total < 10.0 * tol:
        raise StillLogError(f"values: the orientation turned only {math.degrees(total):.3g} degrees over the rates' "
                            "span: too little to judge the rates; record a motion of some tens of degrees")
    delta = {"body": np.swapaxes(ra[:-1], -1, -2) @ ra[1:], "world": ra[1:] @ np.swapaxes(ra[:-1], -1, -2)}
    lo, hi = int(rows[0]), int(rows[-1])
    local = rows - lo
    products = {}
    for unit in ("radians", "degrees"):
        scale = math.pi / 180.0 if unit == "degrees" else 1.0
        inc = _increments(tr[lo:hi + 1], w_log[lo:hi + 1] * scale)
        fwd = _scan(inc)
        rev = _scan(inc, reverse=True)
        f_rel = rot.hamilton_product(rot.conjugate(fwd[local[:-1]]), fwd[local[1:]])      # in time order
        w_rel = rot.hamilton_product(rev[local[1:]], rot.conjugate(rev[local[:-1]]))      # reverse order
        products[unit] = (rot.matrix_of_quaternion(f_rel), rot.matrix_of_quaternion(w_rel))

    # --- every reading: frame x unit x signed permutation ---------------------------------------
    proper = np.asarray(REMAPS[:24])
    signed = np.concatenate([proper, -proper])
    index = np.argmin(np.sum(np.abs(signed[:, None] - np.asarray(REMAPS)[None]), axis=(2, 3)), axis=1)
    cands = []
    for frame in ("body", "world"):
        for unit in ("radians", "degrees"):
            fwd, rev = products[unit]
            # body: proper S -> S^T F S; improper S = -P -> P^T W^T P.  world: S^T W S; -P -> P^T F^T P
            same_sign, flipped = (fwd, np.swapaxes(rev, -1, -2)) if frame == "body" else \
                (rev, np.swapaxes(fwd, -1, -2))
            for half, base in ((0, same_sign), (24, flipped)):
                pred = np.einsum("pba,jbc,pcd->pjad", proper, base, proper)
                res = angles_between(np.broadcast_to(delta[frame], pred.shape), pred)        # (24, J)
                for p in range(24):
                    true = RateReading(frame, unit, int(index[half + p]), stated_r.stated)
                    dev = _rate_deviations(stated_r, true)
                    r = res[p]
                    rms = float(np.sqrt(np.mean(r ** 2)))
                    data = 0.5 * float(np.sum((r / tol) ** 2))
                    cands.append((rms <= tol, data + PRIOR_WEIGHT * dev, _rate_order(stated_r, true), true, r, data,
                                  dev))
    cands.sort(key=lambda c: (not c[0], c[1], c[2]))
    explanations = tuple(
        RateExplanation(rank, c[3], rate_sentence(stated_r, c[3]), rate_fix_code(stated_r, c[3]), np.degrees(c[4]),
                        float(c[1]), float(c[6]), bool(c[0]))
        for rank, c in enumerate(cands[:limit], start=1))
    best = explanations[0]
    explained = best.fits

    # --- ties: readings the data cannot reject, with the turn that would separate them -----------
    ties = []
    if explained:
        r_last = ra[-1]
        attitudes = [r_last] + [r_last @ rot.elementary_matrix(a, math.pi / 2) for a in _AXES]
        for c in cands[1:]:
            if not c[0] or len(ties) >= 3 * MEMBERS_SHOWN:
                break
            move, how = _rate_separating(best.reading, c[3], attitudes)
            ties.append(Tie(rate_sentence(stated_r, c[3]), "separable", move, how, c[3]))
        verdict = best.sentence if not ties else (
            f"{best.sentence} But {len(ties)} other reading{'s' if len(ties) != 1 else ''} fit"
            f"{'s' if len(ties) == 1 else ''} these rates as well (listed under the first explanation).")
    else:
        verdict = (f"No reading of the rates matches the orientation stream: the closest "
                   f"({_lower_first(best.sentence)}) still leaves {best.rms_degrees:.3g} degrees rms per interval "
                   f"(tolerance {math.degrees(tol):.3g} degrees); check the clocks, the orientation's reading, and "
                   "whether the rate sensor's axes are the orientation's body axes")
        b_frame, b_unit = best.reading.frame, best.reading.unit
        fwd, rev = products[b_unit]
        integ = fwd if b_frame == "body" else rev
        x = park_martin_rotation(rotation_vectors(delta[b_frame]), rotation_vectors(integ))
        gap = angles_between(np.broadcast_to(delta[b_frame], integ.shape), x @ integ @ x.T)
        rms_x = float(np.sqrt(np.mean(gap ** 2)))
        if rms_x <= tol:
            notes.append(f"one constant turn of the rate axes by {math.degrees(float(angles_between(x, np.eye(3)))):.3g}"
                         f" degrees (no signed permutation) would match ({math.degrees(rms_x):.3g} degrees rms): the "
                         "rate sensor may be mounted at an angle to the orientation's body axes")
    if best.reading.frame != stated_r.frame and best.reading.remap == _MINUS_IDENTITY:
        notes.append("body rates against an orientation read as its inverse look like world-frame rates with every "
                     "sign flipped (and the other way round): if the orientation stream's direction is in doubt, "
                     "check it first (explain_known_motion)")
    intervals = np.stack([keys["times"][:-1], keys["times"][1:]], axis=1)
    motion = {"total_rotation_degrees": math.degrees(total), "axis_spread_degrees": math.degrees(spread),
              "intervals": int(len(rows) - 1)}
    return RateDiagnosis(float(offset), time_offset, mismatch, explanations, tuple(ties), verdict, bool(explained),
                         stated_r, stated_o, intervals, motion, tuple(notes))
