"""Two sensors bolted to one rigid body: their clock offset, the mount between them, and the slip in B.

Stream A (the reference, read as stated) and stream B (its reading under suspicion) log
the orientation -- or the pose -- of two sensors on one rigid body, each in its own
conventions and on its own clock.  :func:`align_streams` answers three questions in order:

1. **Time offset.**  The angular speed ``|omega(t)|`` of a rigid body is the same for every
   sensor on it and does not depend on the frame the orientation is written in, on active
   vs passive, on the transform direction or on the quaternion algebra (each of those
   transposes every matrix or turns it by a constant, and the angle of ``R_k^T R_{k+1}``
   survives both).  Both speeds are resampled onto one grid and cross-correlated
   (:data:`OFFSET_METHOD` says how, and how the uncertainty is made).  Readings that change
   what the numbers *mean* -- component order, Euler sequence, angle unit, kind -- change
   the speeds, so every reading of B (:func:`posekit.explain.readings_of`) is tried and
   ranked by how well its speeds match A's: the first evidence for the diagnosis.
2. **Mount.**  Paired relative motions satisfy ``A_i X = X B_i`` (``X``: B's frame in A's
   body frame, ``p_A = X p_B``).  Rotation by the closed form of Park & Martin 1994
   (:func:`park_martin_rotation`), translation by stacked linear least squares
   (:func:`mount_translation`).  A motion that cannot fix ``X`` (too little rotation, or
   every rotation axis along one line) raises :class:`DegenerateMotionError` saying which
   motion to add.
3. **Explanation.**  Over every reading of B and the engine's relations (the rotation
   transposed, the direction flipped; length unit and translation frame for poses), the
   one under which *one constant mount* explains every pair -- smallest residual of
   ``A_i X`` against ``X B_i``, plus the engine's prior -- is the diagnosis, returned as a
   :class:`~posekit.explain.Slip` with its sentence and fix code.  An axis remap of B's own
   frame is a different mount as far as relative motions go; given ``nominal_mount`` (the
   mount from the drawing), a found mount that is the nominal one times a signed axis
   permutation is named as that remap.  Readings the data cannot tell apart are said, with
   the motion that would separate them.

Conventions of the results: ``offset`` is the number of seconds to *add to B's time
stamps* to put them on A's clock; ``mount`` maps B's (corrected) frame into A's body frame;
residuals are per pair of consecutive key samples, in degrees and metres (A's length unit).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

import numpy as np

from ..core import rotation as rot
from ..core.checks import as_numbers, checked_count, checked_matrix, checked_tolerance
from ..core.errors import PoseInputError, WrongShapeError, plural, summarise
from ..explain import (EQUIVALENT, PRIOR_WEIGHT, PROPER_REMAPS, Reading, Slip, angles_between,
                       describe_remap, fix_code, read_numbers, readings_of, relations, remap_cost, sentence,
                       write_numbers)
from ..io.limits import LOG_LIMIT
from ..io.logs import read_log
from .streams import (DEFAULT_PAIR_ANGLE, MEMBERS_SHOWN, OFFSET_METHOD, AlignmentError, CorrelationCurve,
                      DegenerateMotionError, NoOverlapError, ReferenceStreamError, StreamLogError, StreamTimesError,
                      TimeOffset, angular_speeds, checked_labels, checked_stream, checked_times, encode_slip,
                      estimate_offset, key_samples, motion_of, mount_translation, park_martin_rotation,
                      read_reference, relative_angles, relative_motions, rotation_vectors,
                      solve_mount, speed_grid)

__all__ = ["AlignmentError", "StreamTimesError", "NoOverlapError", "DegenerateMotionError", "ReferenceStreamError",
           "OFFSET_METHOD", "LABEL_KEYS", "TimeOffset", "CorrelationCurve", "SpeedCurves", "SpeedMatch",
           "PairResiduals", "MountExplanation", "StreamAlignment", "relative_angles", "angular_speeds",
           "park_martin_rotation", "mount_translation", "solve_mount", "align_streams",
           "StreamLogError", "StreamLog", "LOG_LABEL_KEYS", "column_entries", "read_stream_log"]

#: How many speed classes get the fine (full-resolution) offset besides those that match nearly as well.
REFINED_CLASSES = 3
#: The extra turn tried when a near tie needs a second motion to separate it.
PROBE_TURN = math.radians(30.0)


# --------------------------------------------------------------------------------------
# results
# --------------------------------------------------------------------------------------

@dataclass(frozen=True, eq=False)
class SpeedCurves:
    """Both streams' angular speeds as step 1 compared them, B's under the diagnosed reading.

    ``times_a (Na,)``: mid-times (seconds, A's clock) of A's speeds ``speed_a (Na,)``;
    ``times_b (Nb,)``: mid-times on *B's own clock* of B's speeds ``speed_b (Nb,)``, read
    under ``reading`` (the diagnosed reading of B; speeds do not depend on its action or
    direction); speeds in radians per second (:func:`angular_speeds`); ``offset``: seconds
    added to B's stamps, so :attr:`times_b_aligned` puts B's speeds on A's clock.
    """

    times_a: np.ndarray
    speed_a: np.ndarray
    times_b: np.ndarray
    speed_b: np.ndarray
    offset: float
    reading: Reading

    @property
    def times_b_aligned(self) -> np.ndarray:
        """B's speed mid-times on A's clock: ``times_b + offset``."""
        return self.times_b + self.offset

    def as_dict(self) -> dict:
        return {"unit": "radians per second", "times_a_seconds": self.times_a.tolist(),
                "speed_a": self.speed_a.tolist(), "times_b_seconds": self.times_b.tolist(),
                "speed_b": self.speed_b.tolist(), "offset_seconds": self.offset, "reading_b": self.reading.text()}


@dataclass(frozen=True, eq=False)
class SpeedMatch:
    """Step 1's evidence for one reading of B: how well its angular speeds match A's.

    ``reading``: the simplest reading of the class (fewest deviations from the stated one);
    ``readings``: every reading with these same speeds (they differ only in what the speeds
    cannot see, e.g. a transposed matrix or an axis relabelling); ``time_offset`` found
    with them; ``slip``: ``Slip(stated, reading)`` and its ``sentence``.
    """

    rank: int
    reading: Reading
    readings: tuple[Reading, ...]
    time_offset: TimeOffset
    slip: Slip
    sentence: str

    def as_dict(self) -> dict:
        return {"rank": self.rank, "reading": self.reading.text(), "kind": self.reading.kind,
                "words": self.reading.describe(), "sentence": self.sentence,
                "same_speeds": [r.text() for r in self.readings[1:]], **self.time_offset.as_dict()}


@dataclass(frozen=True, eq=False)
class PairResiduals:
    """Per-pair residuals of ``A_i X`` against ``X B_i``: ``times (P, 2)`` (start, end on A's clock),
    ``rotation_degrees (P,)``, ``translation (P,)`` in A's length unit or None (rotation only)."""

    times: np.ndarray
    rotation_degrees: np.ndarray
    translation: np.ndarray | None

    @property
    def rotation_rms(self) -> float:
        return float(np.sqrt(np.mean(self.rotation_degrees ** 2)))

    @property
    def rotation_max(self) -> float:
        return float(np.max(self.rotation_degrees))

    @property
    def translation_rms(self) -> float | None:
        return None if self.translation is None else float(np.sqrt(np.mean(self.translation ** 2)))

    @property
    def translation_max(self) -> float | None:
        return None if self.translation is None else float(np.max(self.translation))

    def as_dict(self) -> dict:
        return {"pairs": int(len(self.rotation_degrees)), "times": self.times.tolist(),
                "rotation_degrees": self.rotation_degrees.tolist(), "rotation_rms_degrees": self.rotation_rms,
                "rotation_max_degrees": self.rotation_max,
                "translation": None if self.translation is None else self.translation.tolist(),
                "translation_rms": self.translation_rms, "translation_max": self.translation_max}


@dataclass(frozen=True, eq=False)
class MountExplanation:
    """One reading of B (with its relation, unit and remap) under which one constant mount was fitted.

    ``slip``: the :class:`~posekit.explain.Slip` (B's stated reading vs how its numbers were
    written); ``sentence`` and ``code`` (a runnable posekit snippet undoing the slip on
    ``logged_numbers``, B's ``(N, n)`` array); ``mount_rotation (3, 3)``, ``mount_translation
    (3,)`` or None: B's corrected frame in A's body frame; ``mount_numbers``: that mount
    written in B's stated reading; ``residuals``; ``time_offset`` (of this reading's speeds);
    ``cost`` (``0.5 sum (residual / tolerance)^2 + PRIOR_WEIGHT * deviations``, plus the
    nominal-mount term when one was given); ``speed_rank``: its reading's place in step 1.

    ``same``: other slips that read B's numbers to the same rotations for every input (the
    same mistake written another way); ``mount_only``: ``(sentence, words)`` of readings
    that fit these data exactly as well with a different mount (B's axes relabelled: only
    the mount, or ``nominal_mount``, tells them apart); ``separable``: ``(sentence,
    motion words)`` of readings that fit these data nearly as well and the extra motion
    that would tell them apart; ``near_tie``: this one leads only by the prior or a margin
    the data barely give.  ``nominal_angle_degrees``: angle between the mount and the
    nominal one (None without a nominal mount).
    """

    rank: int
    slip: Slip
    sentence: str
    code: str
    mount_rotation: np.ndarray
    mount_translation: np.ndarray | None
    mount_numbers: tuple[float, ...]
    residuals: PairResiduals
    time_offset: TimeOffset
    cost: float
    deviations: float
    speed_rank: int
    same: tuple[str, ...] = ()
    mount_only: tuple[tuple[str, str], ...] = ()
    separable: tuple[tuple[str, str], ...] = ()
    near_tie: bool = False
    nominal_angle_degrees: float | None = None

    @property
    def mount(self) -> np.ndarray:
        """``(4, 4)`` with a translation, else ``(3, 3)``."""
        if self.mount_translation is None:
            return self.mount_rotation.copy()
        m = np.eye(4)
        m[:3, :3], m[:3, 3] = self.mount_rotation, self.mount_translation
        return m

    def as_dict(self) -> dict:
        return {"rank": self.rank, "sentence": self.sentence, "code": self.code,
                "reading": self.slip.true.text(), "kind": self.slip.true.kind,
                "mount": np.round(self.mount, 12).tolist(), "mount_numbers": [float(v) for v in self.mount_numbers],
                "residuals": self.residuals.as_dict(), "time_offset": self.time_offset.as_dict(),
                "cost": self.cost, "deviations": self.deviations, "speed_rank": self.speed_rank,
                "same_mistake_written_another_way": list(self.same),
                "fits_as_well_with_another_mount": [{"sentence": s, "mount": w} for s, w in self.mount_only],
                "another_motion_would_separate": [{"sentence": s, "motion": w} for s, w in self.separable],
                "near_tie": self.near_tie, "nominal_angle_degrees": self.nominal_angle_degrees,
                "slip": self.slip.as_dict()}


@dataclass(frozen=True, eq=False)
class StreamAlignment:
    """What :func:`align_streams` found.

    ``offset`` / ``offset_uncertainty`` seconds (add to B's stamps); ``time_offset`` the full
    :class:`TimeOffset` of the diagnosed reading; ``mount`` ``(4, 4)`` (both streams carry
    positions) or ``(3, 3)``: B's corrected frame in A's body frame; ``mount_numbers`` it
    written in B's stated reading; ``residuals`` (:class:`PairResiduals`) of the diagnosis;
    ``explanations`` ranked (:class:`MountExplanation`, best first); ``speed_matches`` step 1's
    ranking (:class:`SpeedMatch`); ``slip`` / ``sentence`` / ``verdict``; ``explained``: the
    best explanation's rms residuals are within the tolerances; ``motion``: how much and
    about which axes A turned over the pairs; ``notes``.  ``correlation``
    (:class:`CorrelationCurve`) and ``speeds`` (:class:`SpeedCurves`): the speed correlation
    per trial offset and both speed curves, of the diagnosed reading of B, for drawing.
    """

    offset: float
    offset_uncertainty: float
    time_offset: TimeOffset
    mount: np.ndarray
    mount_numbers: tuple[float, ...]
    residuals: PairResiduals
    explanations: tuple[MountExplanation, ...]
    speed_matches: tuple[SpeedMatch, ...]
    slip: Slip
    sentence: str
    verdict: str
    explained: bool
    stated_a: Reading
    stated_b: Reading
    motion: dict
    notes: tuple[str, ...] = ()
    correlation: CorrelationCurve | None = None
    speeds: SpeedCurves | None = None

    @property
    def best(self) -> MountExplanation:
        return self.explanations[0]

    @property
    def mount_rotation(self) -> np.ndarray:
        return self.mount[:3, :3]

    @property
    def mount_translation(self) -> np.ndarray | None:
        return self.mount[:3, 3] if self.mount.shape == (4, 4) else None

    def summary(self) -> str:
        """Plain-text report, one fact per line."""
        r = self.residuals
        lines = [self.verdict,
                 f"stream A (reference): {self.stated_a.said_back()}",
                 f"stream B: {self.stated_b.said_back()}",
                 f"time offset: add {self.offset:+.6g} s to B's stamps (uncertainty {self.offset_uncertainty:.2g} s, "
                 f"speed correlation {self.time_offset.correlation:.4f}, speed mismatch "
                 f"{100 * self.time_offset.mismatch:.3g} %)",
                 "mount (B's frame in A's body frame): " + np.array2string(np.round(self.mount, 6), separator=", ")
                 .replace("\n", ""),
                 "mount in B's stated reading: " + ", ".join(f"{v:.9g}" for v in self.mount_numbers),
                 f"{len(r.rotation_degrees)} pairs; rotation residual rms {r.rotation_rms:.3g}, max "
                 f"{r.rotation_max:.3g} degrees" + ("" if r.translation is None else
                                                   f"; translation rms {r.translation_rms:.3g}, max "
                                                   f"{r.translation_max:.3g}"),
                 f"motion: turned {self.motion['total_rotation_degrees']:.4g} degrees in all, rotation axes spread "
                 f"{self.motion['axis_spread_degrees']:.3g} degrees"]
        lines += [f"note: {n}" for n in self.notes]
        lines.append("speeds (step 1), best first:")
        for m in self.speed_matches:
            lines.append(f"  {m.rank}. mismatch {100 * m.time_offset.mismatch:.3g} %, correlation "
                         f"{m.time_offset.correlation:.4f}: {m.sentence}")
        lines.append("one constant mount (step 2), best first:")
        for e in self.explanations:
            res = e.residuals
            lines.append(f"  {e.rank}. rms {res.rotation_rms:.3g} degrees"
                         + ("" if res.translation is None else f", {res.translation_rms:.3g} m")
                         + f", cost {e.cost:.4g}{' (near tie)' if e.near_tie else ''}: {e.sentence}")
            for s in e.same:
                lines.append(f"     same mistake written another way: {s}")
            # every tie of the first explanation; below it, the first two of each kind (the rest in as_dict())
            shown = MEMBERS_SHOWN if e.rank == 1 else 2
            for label, members in (("fits exactly as well with another mount", e.mount_only),
                                   ("nearly as well", e.separable)):
                for s, w in members[:shown]:
                    lines.append(f"     {label}: {s} ({w})" if label.startswith("fits") else f"     {label}: {s} -- {w}")
                if len(members) > shown:
                    lines.append(f"     ... and {plural(len(members) - shown, 'more reading')} that "
                                 f"{'fit' if len(members) - shown > 1 else 'fits'} {label.split(' ', 1)[1]} (all in "
                                 "as_dict() and --json)")
        lines.append("fix for B's numbers (logged_numbers: B's (N, n) array):\n" + self.best.code)
        return "\n".join(lines)

    def as_dict(self, curves: bool = False) -> dict:
        """The result as plain data (JSON-ready); ``curves`` adds ``correlation_curve`` and ``speed_curves``."""
        out = self._plain()
        if curves:
            out["correlation_curve"] = None if self.correlation is None else self.correlation.as_dict()
            out["speed_curves"] = None if self.speeds is None else self.speeds.as_dict()
        return out

    def _plain(self) -> dict:
        return {"verdict": self.verdict, "explained": self.explained, "sentence": self.sentence,
                "offset_seconds": self.offset, "offset_uncertainty_seconds": self.offset_uncertainty,
                "offset_method": OFFSET_METHOD, "time_offset": self.time_offset.as_dict(),
                "mount": np.round(self.mount, 12).tolist(), "mount_numbers": [float(v) for v in self.mount_numbers],
                "residuals": self.residuals.as_dict(), "stated_a": self.stated_a.as_dict(),
                "stated_b": self.stated_b.as_dict(), "motion": dict(self.motion), "notes": list(self.notes),
                "slip": self.slip.as_dict(), "speed_matches": [m.as_dict() for m in self.speed_matches],
                "explanations": [e.as_dict() for e in self.explanations]}


# --------------------------------------------------------------------------------------
# inputs
# --------------------------------------------------------------------------------------

#: The inputs messages name; :func:`align_streams` ``labels`` may give each its caller's words.
LABEL_KEYS = ("times_a", "values_a", "reading_a", "times_b", "values_b", "reading_b", "nominal_mount", "max_offset",
              "min_overlap")


def _checked_angle(value, name: str, largest: float = math.pi) -> float:
    v = checked_tolerance(value, name, " radians")
    if v > largest:
        raise AlignmentError(f"{name}: got {summarise(value)} radians ({math.degrees(v):.4g} degrees); "
                             f"accepted: a finite number > 0 and <= {largest:.4g} radians")
    return v


def _nominal(value, name: str = "nominal_mount"):
    if value is None:
        return None
    arr = as_numbers(value, name)
    if arr.shape == (4, 4):
        arr = arr[:3, :3]
    if arr.shape != (3, 3):
        raise WrongShapeError(f"{name}: got shape {arr.shape}; expected the expected mount as a canonical "
                              "(3, 3) rotation or (4, 4) transform (B's frame in A's body frame)")
    return checked_matrix(arr, name)


# --------------------------------------------------------------------------------------
# speed classes (step 1)
# --------------------------------------------------------------------------------------

def _speed_key(reading: Reading) -> Reading:
    """A reading with the same speeds for sure: the JPL algebra and a column-major 3x3 or 4x4 give
    the transposed matrix of the same numbers (posekit.explain.readings.read_numbers), and a
    transposed stack has the same relative angles (:func:`relative_angles`)."""
    settings = {}
    if reading.rotation_kind == "quaternion":
        settings["algebra"] = "hamilton"
    if reading.kind == "matrix" or (reading.kind == "transform" and reading.count == 16):
        settings["layout"] = "row-major"
    return reading.with_fields(**settings) if settings else reading


@dataclass
class _Class:
    readings: list
    mid: np.ndarray
    speed: np.ndarray
    found: TimeOffset | None = None
    pairs: dict | None = None
    rank: int = 0
    key: Reading | None = None
    curve: CorrelationCurve | None = None
    thinned: bool = False


def _speeds_of(key: Reading, times, values, stride: int, every: int = 1):
    """Angular speeds of ``values`` read under ``key`` (action and direction as stated: the speeds do not
    see them), at every ``every``-th sample: only the rows those speeds need are read."""
    reading = key.with_fields(action="active", direction="parent-from-child")
    with np.errstate(all="ignore"):
        if every == 1:
            r, _ = read_numbers(reading, values)
            mid, speed = angular_speeds(times, r, stride)
        else:
            k = np.arange(0, len(values) - stride, every)
            r, _ = read_numbers(reading, values[np.concatenate([k, k + stride])])
            dt = times[k + stride] - times[k]
            mid, speed = 0.5 * (times[k] + times[k + stride]), relative_angles(r[:len(k)], r[len(k):]) / dt
    return mid, np.nan_to_num(speed, nan=0.0, posinf=0.0, neginf=0.0)


def _speed_classes(stated: Reading, times_b, values_b, stride: int, every: int) -> list[_Class]:
    by_key: dict = {}
    classes: list[_Class] = []
    prints: list[tuple[float, float]] = []
    for reading in readings_of(stated):
        key = _speed_key(reading)
        if key in by_key:
            by_key[key].readings.append(reading)
            continue
        mid, speed = _speeds_of(key, times_b, values_b, stride, every)
        fp = (float(np.sum(speed)), float(np.sum(speed[::7])))
        for j, (s0, s1) in enumerate(prints):   # the same speeds (an axis relabelling): one class
            if abs(s0 - fp[0]) <= 1e-9 * (abs(s0) + 1) and abs(s1 - fp[1]) <= 1e-9 * (abs(s1) + 1) \
                    and np.allclose(classes[j].speed, speed, rtol=1e-9, atol=1e-12):
                classes[j].readings.append(reading)
                by_key[key] = classes[j]
                break
        else:
            c = _Class([reading], mid, speed, key=key)
            classes.append(c)
            prints.append(fp)
            by_key[key] = c
    for c in classes:
        c.readings.sort(key=lambda r: Slip(stated, r).order_key())
    return classes


# --------------------------------------------------------------------------------------
# pairs (step 2)
# --------------------------------------------------------------------------------------


_AXIS_NAMES = ("x", "y", "z")


def _axis_words(v) -> str:
    v = np.asarray(v, dtype=float)
    k = int(np.argmax(np.abs(v)))
    if abs(abs(v[k]) - 1.0) < 1e-6:
        return f"A's body {_AXIS_NAMES[k]} axis"
    return "the axis (" + ", ".join(f"{x:.2f}" for x in v) + ") in A's body frame"


def _check_motion(alpha, min_rotation, min_axis_spread):
    total, spread, vt = motion_of(alpha)
    if total < min_rotation:
        raise DegenerateMotionError(
            f"stream A turned only {math.degrees(total):.3g} degrees in all over the overlap ({len(alpha)} pairs); "
            f"the mount needs at least {math.degrees(min_rotation):.3g} degrees: turn the rig by more, about two "
            "axes at least "
            f"{math.degrees(min_axis_spread):.3g} degrees apart")
    if spread < min_axis_spread:
        u = vt[0] / np.linalg.norm(vt[0])
        away = np.degrees(np.arccos(np.clip(np.abs(u), 0.0, 1.0)))            # each body axis from the line
        k = int(np.argmax(away))
        raise DegenerateMotionError(
            f"stream A's rotation axes all lie within {math.degrees(spread):.3g} degrees of one line, about "
            f"{_axis_words(u)} ({math.degrees(total):.4g} degrees turned): a turn about that line cannot fix the "
            "mount's rotation about it; turn about a second axis, at least "
            f"{math.degrees(min_axis_spread):.3g} degrees away from the first, by a similar amount (for example "
            f"about A's body {_AXIS_NAMES[k]} axis, {away[k]:.3g} degrees from it)")
    return total, spread, vt


# --------------------------------------------------------------------------------------
# candidates (step 3)
# --------------------------------------------------------------------------------------

@dataclass
class _Fit:
    slip: Slip
    cls: _Class
    rot_b: np.ndarray            # decoded B rotations at the key rows (P + 1, 3, 3), as written (no remap)
    mount_written: np.ndarray     # X for B's frame as written
    mount: np.ndarray             # X for B's corrected frame (remap undone)
    translation: np.ndarray | None
    rres: np.ndarray
    tres: np.ndarray | None
    cost: float
    nominal_angle: float | None


def _fits(stated_b, classes, values_b, compare_t, tol_r, tol_t, nominal, tol_n):
    out: list[_Fit] = []
    variants = [(s, f) for s in (1.0, 1e-3, 1e3) for f in ("parent", "child-axes", "inverse-translation")] \
        if compare_t else [(1.0, "parent")]
    proper = np.asarray(PROPER_REMAPS)
    remap_prior = PRIOR_WEIGHT * remap_cost(np.arange(24))
    for cls in classes:
        p = cls.pairs
        if p is None:
            continue
        rows = p["rows"]
        nums = values_b[rows]
        a_rel, alpha = p["a_rel"], p["alpha"]
        for reading in cls.readings:
            for action, direction, transposed, _ in relations(stated_b):
                true = reading.with_fields(action=action, direction=direction)
                read = read_numbers(true, nums)
                base = Slip(stated_b, true, transposed)
                r_b, _ = base.decode(nums, read=read)
                with np.errstate(all="ignore"):
                    b_rel, _ = relative_motions(r_b, None)
                    beta = rotation_vectors(b_rel)
                    if not np.all(np.isfinite(beta)):
                        continue
                    x = park_martin_rotation(alpha, beta)
                    rres = angles_between(a_rel @ x, x @ b_rel)
                if not np.all(np.isfinite(rres)):
                    continue
                rot_fit = 0.5 * float(np.sum((rres / tol_r) ** 2))
                # the remap of B's own frame that best explains the nominal mount (proper ones only)
                q_i, n_ang, n_cost = 0, None, 0.0
                if nominal is not None:
                    ang = angles_between(np.broadcast_to(nominal, proper.shape), x @ np.swapaxes(proper, -1, -2))
                    c_q = 0.5 * (ang / tol_n) ** 2 + remap_prior
                    q_i = int(np.argmin(c_q))
                    n_ang, n_cost = float(ang[q_i]), 0.5 * float(ang[q_i] / tol_n) ** 2
                mount = x @ proper[q_i].T
                # a rotation already 10 tolerances off rms: its length unit and translation frame cannot rescue it
                tried = variants if math.sqrt(float(np.mean(rres ** 2))) <= 10.0 * tol_r else variants[:1]
                if compare_t:
                    decoded = [Slip(stated_b, true, transposed, 0, 0, s, f).decode(nums, read=read)[1]
                               for s, f in tried]
                    tb_rel = np.stack([np.einsum("nba,nb->na", r_b[:-1], t[1:] - t[:-1]) for t in decoded])
                    with np.errstate(all="ignore"):
                        tx, _ = mount_translation(a_rel, p["ta_rel"], x, tb_rel)            # (V, 3)
                        err = (np.einsum("nab,vb->vna", a_rel - np.eye(3), tx)
                               - (np.einsum("ab,vnb->vna", x, tb_rel) - p["ta_rel"]))
                    tres_all = np.linalg.norm(err, axis=-1)                                # (V, P)
                else:
                    tx, tres_all = [None], [None]
                for v, (scale, frame) in enumerate(tried):
                    tres = tres_all[v]
                    if tres is not None and not np.all(np.isfinite(tres)):
                        continue
                    slip = Slip(stated_b, true, transposed, 0, int(q_i), scale, frame)
                    cost = rot_fit + n_cost + PRIOR_WEIGHT * slip.deviations()
                    if tres is not None:
                        cost += 0.5 * float(np.sum((tres / tol_t) ** 2))
                    out.append(_Fit(slip, cls, r_b, x, mount, None if tres is None else tx[v], rres, tres, cost,
                                    n_ang))
    out.sort(key=lambda f: (f.cost, f.slip.order_key()))
    return out


_PROBE_SEED = 20240611


def _probe(stated: Reading) -> np.ndarray:
    """Three fixed random poses written under the stated reading: inputs on which slips that differ, differ."""
    rng = np.random.default_rng(_PROBE_SEED)
    q = rng.normal(size=(3, 4))
    r = rot.matrix_of_quaternion(q / np.linalg.norm(q, axis=1, keepdims=True))
    return write_numbers(stated, r, rng.normal(size=(3, 3)) if stated.has_translation else None)


def _separating_motion(lead: _Fit, rival: _Fit, values_b, vt, tol_r) -> str:
    """Which extra turn of the rig (from the last key sample) would tell ``rival`` from ``lead``."""
    row = int(lead.cls.pairs["rows"][-1])
    nums = values_b[row]
    r_last, t_last = lead.slip.decode(nums)
    axes = [np.eye(3)[k] for k in range(3)] + [vt[k] / np.linalg.norm(vt[k]) for k in range(1, min(3, len(vt)))]
    best = (-1.0, None)
    for d in axes:
        turn = rot.matrix_of_quaternion(rot.quaternion_of_rotvec(PROBE_TURN * d))
        b_true = lead.mount.T @ turn @ lead.mount
        try:
            new = encode_slip(lead.slip, r_last @ b_true, t_last)
        except PoseInputError:
            continue
        with np.errstate(all="ignore"):
            r0, _ = rival.slip.decode(nums)
            r1, _ = rival.slip.decode(new)
            res = float(angles_between(turn @ rival.mount, rival.mount @ (r0.T @ r1)))
        if np.isfinite(res) and res > best[0]:
            best = (res, d)
    if best[1] is None or best[0] <= 3.0 * tol_r:
        return ("no single extra turn from the last key pose separates them; record a longer motion about "
                "other axes")
    return (f"a {math.degrees(PROBE_TURN):.0f}-degree turn about {_axis_words(best[1])} would separate them "
            f"(this reading would then leave {math.degrees(best[0]):.3g} degrees)")


def _mount_words(lead: _Fit, other: _Fit) -> str:
    q = lead.mount.T @ other.mount
    ang = angles_between(np.broadcast_to(q, PROPER_REMAPS.shape), np.asarray(PROPER_REMAPS))
    j = int(np.argmin(ang))
    turn = math.degrees(float(angles_between(lead.mount, other.mount)))
    if ang[j] < 1e-6:
        return (f"its mount is {turn:.3g} degrees from this one: this mount followed by "
                f"{describe_remap(np.asarray(PROPER_REMAPS[j]))}")
    return f"mount {turn:.3g} degrees from this one"


def _same_everywhere(a: _Fit, b: _Fit, probe) -> bool:
    if np.max(np.abs(a.rot_b - b.rot_b)) > EQUIVALENT or a.slip.child_remap != b.slip.child_remap:
        return False
    ra, ta = a.slip.decode(probe)
    rb, tb = b.slip.decode(probe)
    if np.max(np.abs(ra - rb)) > EQUIVALENT:
        return False
    return ta is None or tb is None or np.max(np.abs(ta - tb)) <= EQUIVALENT


def _fits_within(f: _Fit, tol_r, tol_t) -> bool:
    ok = math.sqrt(float(np.mean(f.rres ** 2))) <= tol_r
    return ok and (f.tres is None or math.sqrt(float(np.mean(f.tres ** 2))) <= tol_t)


def _groups(fits: list[_Fit], limit: int):
    """Greedy groups of fits with the same residuals on every pair (and the same nominal angle)."""
    groups: list[list[_Fit]] = []
    for f in fits:
        for g in groups:
            lead = g[0]
            if len(f.rres) == len(lead.rres) and np.max(np.abs(f.rres - lead.rres)) <= EQUIVALENT \
                    and (f.tres is None or np.max(np.abs(f.tres - lead.tres)) <= EQUIVALENT) \
                    and (f.nominal_angle is None or abs(f.nominal_angle - lead.nominal_angle) <= EQUIVALENT):
                g.append(f)
                break
        else:
            if len(groups) >= 4 * limit:
                continue
            groups.append([f])
    return groups


# --------------------------------------------------------------------------------------
# the public function
# --------------------------------------------------------------------------------------

def align_streams(times_a, values_a, reading_a, times_b, values_b, reading_b, *, kind_a: str | None = None,
                  kind_b: str | None = None, nominal_mount=None, nominal_tolerance: float = math.radians(5.0),
                  max_offset: float | None = None, min_overlap: float = 0.5,
                  pair_angle: float = DEFAULT_PAIR_ANGLE, max_pairs: int = 400,
                  min_rotation: float = math.radians(30.0), min_axis_spread: float = math.radians(15.0),
                  rotation_tolerance: float = math.radians(0.5), translation_tolerance: float = 0.005,
                  limit: int = 5, labels=None) -> StreamAlignment:
    """Time offset, rigid mount and the convention slip of stream B against reference stream A.

    ``times_a (Na,)``, ``times_b (Nb,)``: strictly increasing seconds, each on its own clock.
    ``values_a (Na, n_a)``, ``values_b (Nb, n_b)``: one row of pose numbers per sample (n = 3,
    4, 6, 7, 9, 12 or 16), read under ``reading_a`` / ``reading_b`` (convention text such as
    ``"scalar=last"``, a :class:`~posekit.Convention`, a :class:`~posekit.explain.Reading`, or
    None; ``kind_a`` / ``kind_b`` name the kind when the count alone does not).  Stream A is
    the reference (read as stated); the slip is sought in B.  Each row is the sensor's frame in
    its own world frame (``p_world = R p_sensor``, as read); the two world frames may differ.

    Steps (see the module docstring): the offset from the angular speeds of every reading of B
    (:attr:`StreamAlignment.speed_matches`), key samples ``pair_angle`` radians of A's turning
    apart (at most ``max_pairs`` pairs), the mount of every reading and relation by Park &
    Martin 1994, and the ranking.  Positions are compared when both streams carry them (then B's
    length unit, mm or m, and translation frame are tried too).  ``nominal_mount`` (canonical
    ``(3, 3)`` or ``(4, 4)``, B's frame in A's body frame, e.g. from the drawing): the found mount
    is compared with it (``nominal_tolerance`` radians) and a mount that is the nominal one times
    an axis permutation is named as a remap of B's axes.  ``max_offset`` (seconds) bounds
    ``|offset|``; lags whose overlap is below ``min_overlap`` of the shorter stream are skipped.
    ``labels``: how messages and notes name the inputs (a mapping from any of :data:`LABEL_KEYS`
    to words, e.g. a widget's boxes or a command's flags; the others keep their parameter names).

    Raises :class:`DegenerateMotionError` when A turned less than ``min_rotation`` radians over
    the pairs or about one axis only (spread below ``min_axis_spread``), saying which motion
    to add; :class:`NoOverlapError`, :class:`StreamTimesError`, :class:`ReferenceStreamError`
    and posekit's input errors for unusable inputs.

    >>> from scipy.spatial.transform import Rotation, RotationSpline
    >>> keys = np.linspace(0, 40, 9)
    >>> spline = RotationSpline(keys, Rotation.random(9, random_state=3))   # ground truth (scipy)
    >>> mount = Rotation.from_euler("ZYX", [90, 0, -90], degrees=True)     # B's frame in A's body frame
    >>> ta = np.arange(0, 40, 0.01)
    >>> tb = np.arange(1, 39, 0.03)                                          # B's clock: 0.25 s behind
    >>> qa = spline(ta).as_quat(scalar_first=True)                           # A: scalar-first, as stated
    >>> qb = (spline(tb + 0.25) * mount).as_quat()                           # B: logged scalar-last ...
    >>> drawing = Rotation.from_euler("ZYX", [88, 1, -91], degrees=True).as_matrix()  # the mount, roughly
    >>> out = align_streams(ta, qa, "scalar=first", tb, qb, "scalar=first",  # ... but said scalar-first
    ...                     nominal_mount=drawing)
    >>> round(out.offset, 2), out.sentence
    (0.25, 'The quaternion was written scalar-last but read scalar-first (stated).')
    >>> round(float(np.degrees(angles_between(out.mount, mount.as_matrix()))), 2)
    0.0

    Without ``nominal_mount`` the same data name the transposed reading first and list the
    scalar order under ``mount_only``: reordering a quaternion's four numbers gives the
    rotation or its transpose turned by constant rotations on both sides (the four numbers
    move by an orthogonal map, a pair of quaternion products, with or without conjugation),
    which relative motions cannot see and the mount absorbs.
    """
    tol_r = checked_tolerance(rotation_tolerance, "rotation_tolerance", " radians")
    tol_t = checked_tolerance(translation_tolerance, "translation_tolerance", " (length units)")
    tol_n = checked_tolerance(nominal_tolerance, "nominal_tolerance", " radians")
    pair_angle = _checked_angle(pair_angle, "pair_angle", math.radians(90.0))
    min_rot = checked_tolerance(min_rotation, "min_rotation", " radians")
    min_spread = _checked_angle(min_axis_spread, "min_axis_spread", math.radians(90.0))
    max_pairs = checked_count(max_pairs, "max_pairs", " (pairs of key samples)")
    limit = checked_count(limit, "limit", " (explanations to list)")
    min_overlap = checked_tolerance(min_overlap, "min_overlap", " (a fraction of the shorter stream)")
    if min_overlap > 1:
        raise AlignmentError(f"min_overlap: got {min_overlap:g}; accepted a fraction > 0 and <= 1 of the shorter "
                             "stream")
    if max_offset is not None:
        max_offset = checked_tolerance(max_offset, "max_offset", " seconds")
    words = checked_labels(labels, LABEL_KEYS)
    nominal = _nominal(nominal_mount, words["nominal_mount"])

    va, stated_a = checked_stream(values_a, words["values_a"], reading_a, kind_a, words["reading_a"])
    vb, stated_b = checked_stream(values_b, words["values_b"], reading_b, kind_b, words["reading_b"])
    ta = checked_times(times_a, words["times_a"], len(va))
    tb = checked_times(times_b, words["times_b"], len(vb))
    r_a, t_a = read_reference(stated_a, va, words["values_a"])
    notes: list[str] = []

    # --- step 1: speeds, one grid, the offset of every reading of B ------------------------------
    dt_a, dt_b = float(np.median(np.diff(ta))), float(np.median(np.diff(tb)))
    window = max(dt_a, dt_b)
    stride_a, stride_b = max(1, int(round(window / dt_a))), max(1, int(round(window / dt_b)))
    mid_a, speed_a = angular_speeds(ta, r_a, stride_a)
    if np.std(speed_a) <= 1e-6 * (np.mean(speed_a) + 1e-12) or np.max(speed_a) <= 0:
        raise DegenerateMotionError(
            f"stream A's angular speed hardly varies (mean {math.degrees(float(np.mean(speed_a))):.4g} deg/s, "
            f"spread {math.degrees(float(np.std(speed_a))):.3g} deg/s): the clock offset cannot be found from "
            "it; record a motion that speeds up and slows down (start and stop)")
    grid = speed_grid(mid_a, speed_a, dt_a, tb, max_offset, min_overlap, words)
    h, block = grid.h, grid.block

    # ranking on the coarse grid needs about one speed per coarse cell: read only the rows those need
    every = max(1, int(block * h / dt_b))
    classes = _speed_classes(stated_b, tb, vb, stride_b, every)
    coarse = []
    for c in classes:
        coarse.append(estimate_offset(grid, c.mid, c.speed, refine=False))
    order = sorted(range(len(classes)), key=lambda i: (np.nan_to_num(coarse[i].mismatch, nan=np.inf),
                                                       Slip(stated_b, classes[i].readings[0]).order_key()))
    best_m = np.nan_to_num(coarse[order[0]].mismatch, nan=np.inf)
    for rank, i in enumerate(order, start=1):
        c = classes[i]
        c.rank = rank
        near = np.nan_to_num(coarse[i].mismatch, nan=np.inf) <= max(3.0 * best_m, best_m + 0.1)
        if rank <= REFINED_CLASSES or near:
            if every > 1:
                c.mid, c.speed = _speeds_of(c.key, tb, vb, stride_b)
            c.found, c.curve = estimate_offset(grid, c.mid, c.speed, refine=True, curve=True)
        else:
            c.found, c.thinned = coarse[i], every > 1
    ranked = [classes[i] for i in order]
    speed_matches = tuple(
        SpeedMatch(c.rank, c.readings[0], tuple(c.readings), c.found, Slip(stated_b, c.readings[0]),
                   _reading_sentence(Slip(stated_b, c.readings[0])))
        for c in ranked[:limit])
    if ranked[0].found.mismatch > 0.25:
        notes.append(f"no reading of B has angular speeds like A's (best mismatch {100 * ranked[0].found.mismatch:.3g}"
                     " %): check A's reading, the time stamps' unit, or whether both sensors are on one body")
    if ranked[0].found.ambiguous:
        notes.append(f"the speed correlation has a second peak ({ranked[0].found.second_peak:.4f} against "
                     f"{ranked[0].found.correlation:.4f}): a periodic motion leaves the offset ambiguous")

    # --- step 2: key samples on A's clock for every class; A's motion must fix the mount --------
    q_a = rot.quaternion_of_matrix(r_a)
    step_ang = relative_angles(r_a[:-1], r_a[1:])
    cum_a = np.concatenate([[0.0], np.cumsum(step_ang)])
    for c in ranked:
        c.pairs = key_samples(ta, cum_a, q_a, t_a, tb, c.found.offset, pair_angle, max_pairs)
    lead_pairs = ranked[0].pairs
    if lead_pairs is None:
        raise NoOverlapError(f"stream B, shifted by the offset found ({ranked[0].found.offset:+.6g} s), has fewer "
                             "than 3 samples inside stream A's time span; accepted: streams that record the same "
                             "motion over a common stretch of time")
    total, spread, vt = _check_motion(lead_pairs["alpha"], min_rot, min_spread)
    compare_t = t_a is not None and stated_b.has_translation
    if t_a is not None and not stated_b.has_translation:
        notes.append("stream B carries no positions: the mount's rotation only")
    elif stated_b.has_translation and t_a is None:
        notes.append("stream A carries no positions: the mount's rotation only (B's positions are not used)")
    if nominal is None:
        notes.append("an axis remap of B's own frame looks like a different mount to relative motions: give "
                     f"{words['nominal_mount']} (the mount you expect) to test for one")

    # --- step 3: one constant mount per reading, relation and unit; rank; group ---------------
    fits = _fits(stated_b, ranked, vb, compare_t, tol_r, tol_t, nominal, tol_n)
    if not fits:
        raise DegenerateMotionError("no reading of stream B gives usable relative motions over the key samples; "
                                    "accepted: B numbers that read as rotations under some reading")
    groups = _groups(fits, limit)
    probe = _probe(stated_b)
    explanations: list[MountExplanation] = []
    lead_fit = groups[0][0]
    for rank, g in enumerate(groups[:limit], start=1):
        lead = g[0]
        same, mount_only, separable = [], [], []
        lead_sentence = _sentence(lead.slip)
        for other in g[1:]:
            if other.slip.deviations() > lead.slip.deviations() + 1.0:
                continue            # claims more than one more mistake than the lead: says more than the data show
            s = _sentence(other.slip)
            if _same_everywhere(lead, other, probe):
                if s != lead_sentence and s not in same:
                    same.append(s)
            elif float(angles_between(lead.mount, other.mount)) > 1e-6:
                if len(mount_only) < MEMBERS_SHOWN and all(s != m for m, _ in mount_only):
                    mount_only.append((s, _mount_words(lead, other)))
            elif len(separable) < MEMBERS_SHOWN and all(s != m for m, _ in separable):
                separable.append((s, _separating_motion(lead, other, vb, vt, tol_r)))
        near = False
        if rank == 1:
            near = bool(mount_only or separable)
            if len(groups) > 1:
                runner = groups[1][0]
                if _fits_within(runner, tol_r, tol_t) or runner.cost - lead.cost < PRIOR_WEIGHT:
                    near = True
        else:
            near = _fits_within(lead, tol_r, tol_t) or lead.cost - lead_fit.cost < PRIOR_WEIGHT
            if near and lead.slip != lead_fit.slip:
                separable.insert(0, ("this reading, against the first explanation",
                                     _separating_motion(lead_fit, lead, vb, vt, tol_r)))
        explanations.append(_explanation(rank, lead, stated_b, lead.cls.pairs, tuple(same), tuple(mount_only),
                                         tuple(separable), near))
    best = explanations[0]
    if best.mount_only and nominal is None:
        notes.append(f"{len(best.mount_only)} other reading(s) fit these data exactly as well with another mount "
                     "(listed under the first explanation): no motion separates them, only the mount does -- "
                     f"compare the mounts with the drawing, or give {words['nominal_mount']}")
    if len(explanations) > 1 and explanations[1].near_tie and not best.near_tie:
        explanations[0] = _replace_near(best)
        best = explanations[0]
    explained = best.residuals.rotation_rms <= math.degrees(tol_r) and (
        best.residuals.translation is None or best.residuals.translation_rms <= tol_t)
    if not explained:
        tr = "" if best.residuals.translation is None else f" and {best.residuals.translation_rms:.3g} m"
        verdict = (f"No reading of B fits one constant mount: the closest ({best.sentence[:-1].lower()}) still "
                   f"leaves {best.residuals.rotation_rms:.3g} degrees{tr} rms (tolerances "
                   f"{math.degrees(tol_r):.3g} degrees, {tol_t:g}); check the streams' clocks and that both "
                   "sensors are on one rigid body")
    else:
        verdict = best.sentence
    if lead_fit.cls.rank != 1:
        notes.append(f"the diagnosed reading's speeds rank {lead_fit.cls.rank} in step 1: the mount fit outvoted the "
                     "speed match")
    motion = {"total_rotation_degrees": math.degrees(total), "axis_spread_degrees": math.degrees(spread),
              "dominant_axis": [float(v) for v in vt[0]], "pairs": int(len(lead_fit.rres))}
    # --- the diagnosed reading's speeds and correlation curve, for drawing ---------------------
    chosen = lead_fit.cls
    if chosen.curve is None:                  # the speeds its offset came from, the search as it ran
        _, chosen.curve = estimate_offset(grid, chosen.mid, chosen.speed, refine=chosen.found.refined, curve=True)
    if chosen.thinned:                        # ranked on thinned rows only: every row's speed for drawing
        chosen.mid, chosen.speed = _speeds_of(chosen.key, tb, vb, stride_b)
    speeds = SpeedCurves(mid_a, speed_a, chosen.mid, chosen.speed, chosen.found.offset, lead_fit.slip.true)
    return StreamAlignment(best.time_offset.offset, best.time_offset.uncertainty, best.time_offset, best.mount,
                           best.mount_numbers, best.residuals, tuple(explanations), speed_matches, best.slip,
                           best.sentence, verdict, bool(explained), stated_a, stated_b, motion, tuple(notes),
                           chosen.curve, speeds)


def _reading_sentence(slip: Slip) -> str:
    if slip.is_none:
        return "B's numbers read as stated."
    return sentence(slip)


def _sentence(slip: Slip) -> str:
    if slip.is_none:
        return "B's numbers, read as stated, fit one constant mount: no convention error found."
    return sentence(slip)


def _mount_numbers(stated: Reading, rotation, translation) -> tuple[float, ...]:
    """The mount written in B's stated reading (its rotation kind alone when there is no translation)."""
    reading = stated
    if translation is None and stated.has_translation:
        kind = stated.rotation_kind
        reading = Reading(kind, stated.convention, stated.stated, stated.position_first)
    nums = write_numbers(reading, rotation, translation if reading.has_translation else None)
    return tuple(float(v) + 0.0 for v in np.ravel(nums))


def _explanation(rank, fit: _Fit, stated_b, pairs, same, mount_only, separable, near) -> MountExplanation:
    times = np.stack([pairs["times"][:-1], pairs["times"][1:]], axis=1)
    res = PairResiduals(times, np.degrees(fit.rres), fit.tres)
    return MountExplanation(
        rank, fit.slip, _sentence(fit.slip), fix_code(fit.slip, batch=True), fit.mount.copy(),
        None if fit.translation is None else np.asarray(fit.translation, dtype=float).copy(),
        _mount_numbers(stated_b, fit.mount, fit.translation), res, fit.cls.found, float(fit.cost),
        float(fit.slip.deviations()), fit.cls.rank, same, mount_only, separable, bool(near),
        None if fit.nominal_angle is None else math.degrees(fit.nominal_angle))


def _replace_near(e: MountExplanation) -> MountExplanation:
    from dataclasses import replace
    return replace(e, near_tie=True)


# --------------------------------------------------------------------------------------
# one stream from a log file
# --------------------------------------------------------------------------------------

#: The inputs :func:`read_stream_log` messages name; ``labels`` may give each its caller's words.
LOG_LABEL_KEYS = ("source", "time_column", "value_columns")
#: Header names read as the time column when none is named (lower case, spaces and dots as ``_``).
TIME_NAMES = ("time", "t", "timestamp", "stamp", "times", "timestamps", "time_s", "t_s", "seconds", "sec", "secs",
              "time_sec", "timestamp_s", "stamp_s")
#: Rejected rows named in a message (the count says how many more).
ROWS_NAMED = 3


@dataclass(frozen=True, eq=False)
class StreamLog:
    """One stream read from a log: ``times (N,)`` seconds, ``values (N, n)`` in the columns' order.

    ``source``: the log as messages name it; ``time_column`` and ``value_columns``: the header
    names read (``"column k"`` without a header); ``inferred``: which of the two were chosen by
    posekit (``"time"``, ``"values"``) rather than named by the caller.
    """

    source: str
    times: np.ndarray
    values: np.ndarray
    time_column: str
    value_columns: tuple[str, ...]
    inferred: tuple[str, ...] = ()

    def words(self) -> str:
        """One line: which columns were read as what."""
        time_how = " (found by its name)" if "time" in self.inferred else ""
        values_how = " (every other column, in file order)" if "values" in self.inferred else ""
        return (f"{len(self.times)} rows; time column {self.time_column}{time_how}; {len(self.value_columns)} value "
                f"columns {', '.join(self.value_columns)}{values_how}")


def _log_words(labels) -> dict:
    return checked_labels(labels, LOG_LABEL_KEYS, StreamLogError)


def _plain_name(name: str) -> str:
    return re.sub(r"[\s.\-/:\[\]()]+", "_", name.strip().lower()).strip("_")


def column_entries(value, what: str = "value_columns") -> list:
    """Column names or 0-based numbers: a list as given, or text split at its commas (each entry stripped);
    an empty entry raises :class:`StreamLogError` naming ``what``.

    >>> column_entries(" qw, qx,qy , qz")
    ['qw', 'qx', 'qy', 'qz']
    """
    if isinstance(value, str):
        parts = [p.strip() for p in value.split(",")]
        if any(not p for p in parts):
            raise StreamLogError(f"{what}: got {summarise(value, 60)}, with an empty entry; accepted: column names or "
                                 "0-based column numbers separated by commas, e.g. qw, qx, qy, qz")
        return parts
    if isinstance(value, (list, tuple)):
        return list(value)
    raise StreamLogError(f"{what}: got {summarise(value, 40)}; accepted: column names or 0-based column numbers, as "
                         "a list or as text separated by commas")


def _column_index(entry, names, header: bool, what: str) -> int:
    if isinstance(entry, str) and header and entry in names:
        where = [i for i, n in enumerate(names) if n == entry]
        if len(where) > 1:
            raise StreamLogError(f"{what}: the header names {len(where)} columns {summarise(entry, 30)} (columns "
                                 f"{', '.join(map(str, where))}), so which one to read is unclear; accepted: a "
                                 "0-based column number instead, or rename the extra columns")
        return where[0]
    if isinstance(entry, str) and entry.isascii() and entry.isdigit():
        entry = int(entry)
    if isinstance(entry, (int, np.integer)) and not isinstance(entry, bool):
        if not 0 <= entry < len(names):
            raise StreamLogError(f"{what}: column number {int(entry)} does not exist; the log has {len(names)} "
                                 f"columns, numbered 0 to {len(names) - 1}")
        return int(entry)
    if isinstance(entry, str):
        if not header:
            raise StreamLogError(f"{what}: column name {summarise(entry, 40)} given, but the log has no header "
                                 "line; accepted: 0-based column numbers")
        close = [i for i, n in enumerate(names) if _plain_name(n) == _plain_name(entry)]
        if len(close) == 1:
            return close[0]
        shown = ", ".join(summarise(n, 24) for n in names[:12]) + (", ..." if len(names) > 12 else "")
        raise StreamLogError(f"{what}: no column {summarise(entry, 40)} in the header; accepted: one of {shown}, or "
                             "a 0-based column number")
    raise StreamLogError(f"{what}: got {summarise(entry, 40)}; accepted: a column name or a 0-based column number")


def read_stream_log(source, time_column=None, value_columns=None, *, labels=None,
                    limit: int = LOG_LIMIT) -> StreamLog:
    """One stream for :func:`align_streams` from a log (read by :func:`posekit.io.logs.read_log`).

    ``time_column``: a header name or 0-based column number, or None for the column named
    like a time (:data:`TIME_NAMES`).  ``value_columns``: names or numbers, as a list or as
    text separated by commas (``"qw, qx, qy, qz"``), in the order the reading takes them;
    None or blank text: every other column in file order.  Times are seconds.  Every row
    must hold a finite number in each column read: rows that do not are named (row, line,
    reason) in a :class:`StreamLogError`, never dropped.  ``labels``: how messages name
    ``source``, ``time_column`` and ``value_columns`` (:data:`LOG_LABEL_KEYS`).

    >>> import io
    >>> log = read_stream_log(io.StringIO("t,qw,qx,qy,qz\\n0,1,0,0,0\\n0.1,1,0,0,0\\n"))
    >>> log.words()
    '2 rows; time column t (found by its name); 4 value columns qw, qx, qy, qz (every other column, in file order)'
    """
    words = _log_words(labels)
    table = read_log(source, limit=limit)
    names, header = list(table.names), bool(table.header)
    inferred = []
    if time_column is None or (isinstance(time_column, str) and not time_column.strip()):
        if not header:
            raise StreamLogError(f"{words['time_column']}: the log has no header line, so no column can be found by "
                                 "its name; accepted: the time column's 0-based number")
        found = [i for i, n in enumerate(names) if _plain_name(n) in TIME_NAMES]
        if len(found) != 1:
            what = "no column is" if not found else f"{len(found)} columns are"
            shown = ", ".join(summarise(n, 24) for n in names[:12]) + (", ..." if len(names) > 12 else "")
            raise StreamLogError(f"{words['time_column']}: {what} named like a time ({', '.join(TIME_NAMES[:4])}, "
                                 f"...) among {shown}; accepted: the time column's name or 0-based number")
        ti = found[0]
        inferred.append("time")
    else:
        entries = column_entries(time_column, words["time_column"]) if isinstance(time_column, str) \
            else [time_column]
        if len(entries) != 1:
            raise StreamLogError(f"{words['time_column']}: got {len(entries)} columns; accepted: one column name or "
                                 "0-based column number")
        ti = _column_index(entries[0], names, header, words["time_column"])
    if value_columns is None or (isinstance(value_columns, str) and not value_columns.strip()):
        vi = [i for i in range(len(names)) if i != ti]
        inferred.append("values")
    else:
        vi = [_column_index(e, names, header, words["value_columns"])
              for e in column_entries(value_columns, words["value_columns"])]
    if ti in vi:
        raise StreamLogError(f"{words['value_columns']}: column {summarise(names[ti], 30)} is the time column too; "
                             "accepted: value columns other than the time column")
    twice = sorted({i for i in vi if vi.count(i) > 1})
    if twice:
        raise StreamLogError(f"{words['value_columns']}: column {summarise(names[twice[0]], 30)} is listed "
                             f"{vi.count(twice[0])} times; accepted: each column once")
    if not vi:
        raise StreamLogError(f"{words['value_columns']}: the log has no column besides the time; accepted: a log "
                             "with the pose numbers in columns beside the time")
    arr, rejected = table.numbers([ti] + vi)
    bad = np.flatnonzero(~np.all(np.isfinite(arr), axis=1))
    if len(rejected) or bad.size:
        listed = {r.row: r.words() for r in rejected}
        lines = getattr(table, "lines", None)
        for r in bad.tolist():
            if r not in listed:
                line = "" if lines is None else f" (line {int(lines[r])})"
                listed[r] = f"row {r}{line}: NaN or infinity"
        rows = sorted(listed)
        more = f", and {len(rows) - ROWS_NAMED} more" if len(rows) > ROWS_NAMED else ""
        raise StreamLogError(f"{words['source']}: {plural(len(rows), 'row')} cannot be read as numbers in the "
                             "columns used: " + "; ".join(listed[r] for r in rows[:ROWS_NAMED]) + f"{more}; accepted: a finite number "
                             "in every column read on every row (fix or delete those rows: none is skipped)")
    return StreamLog(str(table.source), np.ascontiguousarray(arr[:, 0]), np.ascontiguousarray(arr[:, 1:]),
                     names[ti], tuple(names[i] for i in vi), tuple(inferred))
