"""Name the broken convention: compare an expected pose with observed numbers.

"I expected this pose; the system gives me these numbers -- what went wrong?"
:func:`diagnose` (one pair) and :func:`diagnose_batch` (N pairs) both hand the
question to the one explanation engine (:mod:`posekit.explain`): the user's *stated*
reading of the observed numbers is the start, every slip ("written one way, read
another") is scored against every pair at once, and each ranked explanation is
rendered from its :class:`~posekit.explain.Slip`: one sentence, the residuals, the
corrected numbers (the observed numbers fixed, written in the stated reading: same
kind, count and layout, so they paste back) and a runnable snippet.

The expected side is a reading too: bare numbers, named angles (``yaw=10 pitch=20
roll=30``), lists, numbers with a unit word (``10 20 30 degrees``), or a description
in words.  What it was read as is said back in one line (``expected_reading``) and as
values (``ExpectedPose.guess``: kind, unit, on what grounds, and the other readings one
choice away).  Angles typed without a unit -- expected or observed -- are read in
degrees (:data:`TYPED_UNIT`, what people type; the core's canonical unit stays radians);
the other unit is scored too, charged more when the magnitudes rule it out (radians
beyond 2 pi, common practice) and less when they point to it, and a note says so
whenever the magnitudes suggest the unit not read.

The prior is written once, in :mod:`posekit.explain.slips` (``PRIOR_TEXT`` says it in
words).  When even the best explanation leaves a residual above the tolerances, the
result says that no single slip explains the numbers (``explained`` is False) and
lists the closest partial explanations; it never reports "no error" then.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, replace

import numpy as np

from ..core import rotation as rot
from ..core.checks import (ORTHONORMAL_TOLERANCE, as_numbers, checked_count, checked_matrix, checked_tolerance,
                           nearest_rotation, orthonormality_error, require_magnitude, require_representable_angles)
from ..core.convention import CHOICES, DEFAULT, Convention
from ..core.errors import (NotOrthonormalError, PoseInputError, WrongShapeError, WrongTypeError, ZeroQuaternionError,
                           summarise)
from ..core.reading import as_convention, read_rotation, write_rotation  # noqa: F401 (doctest)
from ..core.transforms import Pose, read_transform
from ..explain import (PRIOR_WEIGHT, REMAPS, STATED_COST, Candidate, ExpectedSide, Reading, describe_remap,
                       fix_code, readings_of, score, sentence, stated_fields, stated_reading, write_numbers)
from ..explain.readings import COUNTS, read_numbers, split_numbers
from ..explain.scorer import det3
from ..io.limits import PASTE_LIMIT, check_text_size
from ..io.paste import Interpretation, NoInterpretationError, ParsedNumbers, parse_numbers
from ..io.words import DescriptionError, read_description

__all__ = ["PRIOR_WEIGHT", "PRIOR_TEXT", "TYPED_UNIT", "DescriptionError", "ExpectedPose", "ExpectedGuess",
           "ReadingChoice", "Explanation", "Diagnosis", "BatchDiagnosis", "ConstantOffset", "axis_remaps",
           "describe_remap", "pose_from_words", "expected_pose", "expected_rows", "diagnose", "diagnose_batch",
           "average_rotation"]

PRIOR_TEXT = (f"each deviation from the stated reading costs {PRIOR_WEIGHT:g} (prior exp(-{PRIOR_WEIGHT:g} k)): 1 per "
              f"field you did not state, {STATED_COST:g} per field you stated, 1 per other kind of numbers, position "
              "order, transposed rotation block, translation frame or length unit; a remap 1 if named (ENU/NED, "
              "FLU/FRD, optical), 2.5 other proper, 3 a single mirrored axis, 4 other reflection; cost = sum over "
              "pairs of 0.5 (rotation residual / rotation tolerance)^2 + 0.5 (translation residual / translation "
              "tolerance)^2, plus 3 k once; exact ties go to the fixed family order direction, action, layout, "
              "scalar, algebra, unit, axes, sequence, kind, order, transpose, length, frame, remaps")


def axis_remaps(reflections: bool = False) -> np.ndarray:
    """The signed permutation matrices: ``(24, 3, 3)`` proper, or ``(48, 3, 3)`` with reflections.

    Identity first, then the other proper ones, then (if asked) the 24 with det -1.
    Common practice: there are 24 proper signed axis permutations and 48 in all.

    >>> axis_remaps().shape, axis_remaps(True).shape
    ((24, 3, 3), (48, 3, 3))
    """
    return np.array(REMAPS[:48 if reflections else 24])


def _check_tolerances(rotation_tolerance, translation_tolerance, limit, snap_tolerance=math.radians(2.0)):
    """The settings as (float, float, int, float), or the typed error of core.checks naming what is accepted."""
    return (checked_tolerance(rotation_tolerance, "rotation_tolerance", " radians"),
            checked_tolerance(translation_tolerance, "translation_tolerance", " (length units, as the numbers)"),
            checked_count(limit, "limit", " (how many explanations to list)"),
            checked_tolerance(snap_tolerance, "snap_tolerance", " radians"))


# --------------------------------------------------------------------------------------
# the expected pose
# --------------------------------------------------------------------------------------

#: The unit typed angles are read in when nobody stated one: degrees, what people type (common
#: practice).  posekit's core keeps radians as its canonical unit (``Convention``'s default); only
#: angles typed or pasted without a unit -- on the expected side, in the observed numbers, in the desk
#: and on the command line -- start in degrees, and the other unit is still scored.
TYPED_UNIT = "degrees"


@dataclass(frozen=True)
class ReadingChoice:
    """Another way to read the same expected input, as values: what changes, and to what.

    ``field``: ``"kind"``, ``"unit"``, ``"scalar"`` or ``"layout"``; ``value``: the new kind or
    the field's new word; ``kind``: the kind the input is read as with this choice;
    ``convention``: the convention text (the stated keys only) to read it with.  Passing
    ``kind`` as ``expected_kind`` and ``convention`` as ``expected_convention`` reads the
    input this way.
    """

    field: str
    value: str
    kind: str
    convention: str

    def as_dict(self) -> dict:
        return {"field": self.field, "value": self.value, "kind": self.kind, "convention": self.convention}


@dataclass(frozen=True)
class ExpectedGuess:
    """What the expected input was taken to be, as values (the desk and the command line render it).

    ``source``: ``numbers``, ``named`` (named components), ``words`` or ``pose``; ``words``: the
    reading in a few words; ``kind`` (None for words and poses) and ``kind_from`` (``count``,
    ``names`` or ``given``); ``count``: numbers per pose; ``unit`` the angles were read in (None:
    no angles typed as numbers) and ``unit_from``: ``default`` (nobody stated it, so
    :data:`TYPED_UNIT`), ``stated`` (convention text or a unit word) or ``given`` (a Convention
    object's own unit); ``largest``: the largest angle magnitude typed; ``suggests``: the unit
    those magnitudes point to when it is not ``unit`` (beyond 2 pi: degrees; within 2 pi and not
    whole numbers: radians), else None; ``convention``: the convention text read with (stated
    keys only); ``names``: the component names typed; ``alternatives``: :class:`ReadingChoice`
    values, each one click or one flag away.

    >>> g = expected_pose("30 -10 90").guess
    >>> g.line()
    'read as: Euler angles z-y-x in degrees (from 3 numbers; magnitudes up to 90)'
    >>> [(c.field, c.value) for c in g.alternatives]
    [('kind', 'rotation-vector'), ('unit', 'radians')]
    """

    source: str
    words: str
    kind: str | None = None
    kind_from: str = ""
    count: int = 0
    unit: str | None = None
    unit_from: str | None = None
    largest: float | None = None
    suggests: str | None = None
    convention: str = ""
    names: tuple = ()
    alternatives: tuple = ()

    def line(self) -> str:
        """One line: what the input was read as and on what grounds."""
        basis = []
        if self.source == "numbers":
            basis.append(f"from {self.count} number{'' if self.count == 1 else 's'}" if self.kind_from == "count"
                         else "the kind you chose")
        elif self.source == "named":
            shown = ", ".join(str(n) for n in self.names[:6]) + (", ..." if len(self.names) > 6 else "")
            basis.append(f"from the names {shown}" if self.kind_from == "names" else "the kind you chose")
        if self.unit is not None and self.largest is not None:
            if self.unit_from == "default":
                basis.append(f"magnitudes up to {self.largest:.4g}" + ("" if self.largest > 2 * math.pi
                                                                        else f"; no unit typed, so {TYPED_UNIT}"))
            elif self.unit_from == "given":
                basis.append(f"the unit of the convention given; magnitudes up to {self.largest:.4g}")
            else:
                basis.append(f"unit stated; magnitudes up to {self.largest:.4g}")
        return f"read as: {self.words}" + (f" ({'; '.join(basis)})" if basis else "")

    def note(self) -> str:
        """A warning when the magnitudes point to the other unit ("" when they do not)."""
        if self.suggests is None or self.largest is None:
            return ""
        if self.suggests == "radians":
            return (f"the magnitudes (up to {self.largest:.4g}, not whole numbers) look like radians, but they were "
                    f"read as {self.unit}" + (" because no unit was typed" if self.unit_from == "default" else
                                              " as stated"))
        return (f"the magnitudes (up to {self.largest:.4g}) go beyond 2 pi, which looks like degrees, but they "
                f"were read as {self.unit}" + (" as stated" if self.unit_from == "stated" else ""))

    def as_dict(self) -> dict:
        return {"source": self.source, "words": self.words, "kind": self.kind, "kind_from": self.kind_from,
                "count": self.count, "unit": self.unit, "unit_from": self.unit_from, "largest": self.largest,
                "suggests": self.suggests, "convention": self.convention, "names": list(self.names),
                "line": self.line(), "note": self.note(), "alternatives": [c.as_dict() for c in self.alternatives]}


@dataclass(frozen=True, eq=False)
class ExpectedPose:
    """The pose you expected: canonical ``rotation (..., 3, 3)``, ``translation (..., 3)`` or None.

    ``reading``: one line saying what the input was read as (kind, sequence, unit, and
    what was not stated).  ``alternatives``: other plausible readings of the same input
    as ``(rotation, translation, deviations, words)``, scored too (an unstated angle unit).
    ``guess``: the same reading as values, with the other readings one choice away
    (:class:`ExpectedGuess`; None for an ExpectedPose built by hand).
    """

    rotation: np.ndarray
    translation: np.ndarray | None
    source: str
    reading: str = ""
    alternatives: tuple = ()
    guess: ExpectedGuess | None = None

    @property
    def matrix(self) -> np.ndarray:
        t = np.zeros(self.rotation.shape[:-2] + (3,)) if self.translation is None else self.translation
        out = np.zeros(self.rotation.shape[:-2] + (4, 4))
        out[..., :3, :3] = self.rotation
        out[..., :3, 3] = t
        out[..., 3, 3] = 1.0
        return out

    def sides(self, n_pairs: int | None = None) -> list[ExpectedSide]:
        """Every reading of the expected input as scorer sides ``(N, 3, 3)``, the plausible one first."""
        out = []
        for r, t, dev, words in [(self.rotation, self.translation, 0.0, self.reading)] + list(self.alternatives):
            r = np.asarray(r, dtype=np.float64)
            if r.ndim == 2:
                r = r[None]
                t = None if t is None else np.asarray(t, dtype=np.float64)[None]
            if n_pairs is not None and r.shape[0] == 1 and n_pairs > 1:
                r = np.repeat(r, n_pairs, 0)
                t = None if t is None else np.repeat(t, n_pairs, 0)
            out.append(ExpectedSide(r, t, float(dev), words))
        return out

def pose_from_words(text: str, *, limit: int = PASTE_LIMIT) -> ExpectedPose:
    """Build a pose from a short description, e.g. ``"pitched 25 degrees down, 0.3 m forward"``.

    The words are read by :func:`posekit.io.words.read_description`, whose docstring lists the
    frame words (forward-left-up body axes), the turns (about the current axes, in the order
    written), the moves and what is refused (:class:`DescriptionError`; text longer than
    ``limit`` characters raises :class:`~posekit.io.limits.InputTooLargeError`).

    ``(text) -> ExpectedPose`` with ``rotation (3, 3)`` and ``translation (3,)``.

    >>> p = pose_from_words("pitched 90 degrees down, 0.3 m forward")
    >>> np.round(p.rotation @ [1, 0, 0], 12).tolist(), p.translation.tolist()
    ([0.0, 0.0, -1.0], [0.3, 0.0, 0.0])
    """
    d = read_description(text, limit=limit)
    return ExpectedPose(d.rotation, d.translation, f"described: {d.text.strip()}",
                        f"expected: described: {d.text.strip()} (forward-left-up body axes, turns in the order "
                        "written)", guess=ExpectedGuess("words", "a description in words (forward-left-up body axes, "
                                                                 "turns in the order written)"))



#: A unit word at the end of the expected numbers ("10 20 30 degrees"); searched, then the body is the
#: text before it with blanks and commas stripped (a lazy body before a greedy run was quadratic).
_UNIT_WORD = re.compile(r"(?P<unit>degrees|degree|deg|°|radians|radian|rad)\s*\Z")
_ANGLE_KINDS = ("euler", "rotation-vector", "position-euler", "position-rotation-vector")
_KIND_BY_COUNT = {4: "quaternion", 3: "euler", 7: "position-quaternion", 6: "position-euler", 9: "matrix",
                  12: "transform", 16: "transform"}


def _angle_part(kind: str, arr: np.ndarray) -> np.ndarray:
    return arr[..., 3:] if kind.startswith("position-") else arr


def _largest(angles: np.ndarray) -> float:
    return float(np.max(np.abs(angles))) if angles.size else 0.0


def _suggested_unit(angles: np.ndarray) -> str | None:
    """The unit the magnitudes point to: degrees beyond 2 pi (no one writes more than a turn in radians),
    radians when every magnitude is within 2 pi and some are not whole numbers (typed degrees are mostly
    whole, radians almost never are), else None (common practice)."""
    largest = _largest(angles)
    if largest > 2 * math.pi:
        return "degrees"
    a = np.abs(np.asarray(angles, dtype=float))
    if largest > 0 and np.any(np.abs(a - np.round(a)) > 1e-9):
        return "radians"
    return None


def _unit_alternative(other: str, angles: np.ndarray) -> tuple[float, str]:
    """(deviations, words) for reading unstated angles in ``other`` instead: a plain deviation (1), more
    when the magnitudes rule it out (radians beyond 2 pi: 3, more than a stated field's contradiction),
    less when they point to it (0.5: cheaper than any slip, still not free)."""
    suggested = _suggested_unit(angles)
    if other == "radians" and suggested == "degrees":
        return 3.0, "the expected angles were meant in radians (though their size says degrees)"
    if suggested == other:
        return 0.5, f"the expected angles were meant in {other} (as their size suggests)"
    return 1.0, f"the expected angles were meant in {other}"


def _stated_pairs(convention) -> dict:
    """The stated convention fields as ``{field: word}`` (canonical words), in ``CHOICES`` order."""
    keys = stated_fields(convention)
    conv = as_convention(convention)
    return {f: getattr(conv, f) for f in CHOICES if f in keys}


def _pairs_text(pairs: dict) -> str:
    return " ".join(f"{k}={v}" for k, v in pairs.items())


def _guess_words(kind: str, conv: Convention, count: int, flat: bool) -> str:
    """The reading in a few words, e.g. 'Euler angles z-y-x in degrees', 'a quaternion (x, y, z, w)'."""
    rk = kind.replace("position-", "")
    if rk == "euler":
        text = f"Euler angles {conv.sequence}{' extrinsic' if conv.axes == 'extrinsic' else ''} in {conv.unit}"
    elif rk == "rotation-vector":
        text = f"a rotation vector (axis times angle) in {conv.unit}"
    elif rk == "quaternion":
        text = f"a quaternion {'(w, x, y, z)' if conv.scalar == 'first' else '(x, y, z, w)'}" + \
            (", JPL algebra" if conv.algebra == "jpl" else "")
    else:
        text = ("a 3x3 rotation matrix" if kind == "matrix" else
                "a 4x4 transform" if count == 16 else "a 3x4 [R | t] matrix")
        if flat:
            text += " written " + ("row by row" if conv.layout == "row-major" else "column by column")
    if kind.startswith("position-"):
        text = f"a position (x, y, z) then {text}"
    if conv.direction == "child-from-parent" and (kind.startswith("position-") or kind == "transform"):
        text += ", mapping parent to child"
    return text


def _choices(kind: str, count: int, flat: bool, pairs: dict, unit: str | None, unit_word: bool) -> tuple:
    """The other readings of the same numbers, one field at a time: another kind with this count, the other
    angle unit, the other quaternion scalar position, the other flat matrix layout."""
    out = [ReadingChoice("kind", k, k, _pairs_text(pairs)) for k in COUNTS if count in COUNTS[k] and k != kind]
    conv = as_convention(_pairs_text(pairs) or None)
    if kind in _ANGLE_KINDS and unit is not None and not unit_word:
        other = "radians" if unit == "degrees" else "degrees"
        out.append(ReadingChoice("unit", other, kind, _pairs_text({**pairs, "unit": other})))
    if kind.endswith("quaternion"):
        other = "last" if conv.scalar == "first" else "first"
        out.append(ReadingChoice("scalar", other, kind, _pairs_text({**pairs, "scalar": other})))
    if kind in ("matrix", "transform") and flat:
        other = "column-major" if conv.layout == "row-major" else "row-major"
        out.append(ReadingChoice("layout", other, kind, _pairs_text({**pairs, "layout": other})))
    return tuple(out)


def _read_expected(arr: np.ndarray, kind: str, conv: Convention):
    if kind in ("transform", "matrix"):
        return _read_expected_matrix(arr, kind, conv)
    if kind in ("transform", "position-quaternion", "position-euler"):
        m = read_transform(arr, "matrix" if kind == "transform" else kind, conv)
        return m[..., :3, :3], m[..., :3, 3]
    if kind == "position-rotation-vector":
        r = read_rotation(arr[..., 3:], "rotation-vector", conv.changed(direction="parent-from-child"))
        t = arr[..., :3].copy()
        return _inverted(r, t) if conv.direction == "child-from-parent" else (r, t)
    return read_rotation(arr, kind, conv), None


def _read_expected_matrix(arr: np.ndarray, kind: str, conv: Convention):
    """A written-out matrix read as posekit reads it, except that printed digits (off orthonormal by up
    to ``PRINTED_DIGITS``) are projected onto the nearest rotation (Higham 1986) instead of refused."""
    strict = read_transform if kind == "transform" else read_rotation
    try:
        m = strict(arr, "matrix", conv)
    except NotOrthonormalError:
        flat = arr.reshape(arr.shape[:-2] + (-1,)) if arr.ndim >= 2 and arr.shape[-2:] in ((4, 4), (3, 4), (3, 3)) \
            else arr
        if arr.ndim >= 2 and arr.shape[-2:] in ((4, 4), (3, 4), (3, 3)):
            conv = conv.changed(layout="row-major")          # nested rows are rows as printed
        n = flat.shape[-1]
        reading = Reading("transform" if n in (12, 16) else "matrix", conv, count=n)
        r, t = read_numbers(reading, flat)
        if np.max(orthonormality_error(r)) > PRINTED_DIGITS:
            strict(arr, "matrix", conv.changed(layout=reading.convention.layout))   # raises the typed error
        projected = nearest_rotation(r).rotation
        return projected, t
    return (m[..., :3, :3], m[..., :3, 3]) if kind == "transform" else (m, None)


def _inverted(r, t):
    rt = np.swapaxes(r, -1, -2)
    return rt, -np.einsum("...ab,...b->...a", rt, t)


def _numbers_reading(arr: np.ndarray, kind: str | None, convention, unit_word: str | None,
                     source: str, rows: bool = False) -> ExpectedPose:
    """Numbers -> ExpectedPose.  ``rows``: every row of a 2-D array is one pose (batch), never a matrix."""
    conv = as_convention(convention)
    stated = stated_fields(convention)
    kind_from = "count" if kind is None else "given"
    nested = not rows and arr.ndim >= 2 and arr.shape[-2:] in ((4, 4), (3, 4), (3, 3))
    if kind is None:
        shape = arr.shape
        if rows:
            kind = _KIND_BY_COUNT.get(shape[-1]) if shape else None
        elif shape[-2:] in ((4, 4), (3, 4)) or shape[-1:] in ((16,), (12,)):
            kind = "transform"
        elif shape[-2:] == (3, 3) or shape[-1:] == (9,):
            kind = "matrix"
        else:
            kind = _KIND_BY_COUNT.get(shape[-1]) if shape else None
        if kind is None:
            what = f"{shape[-1]} numbers on each line" if rows and shape else f"shape {shape}"
            raise WrongShapeError(f"expected pose: got {what}; expected 3, 4, 6, 7, 9, 12 or 16 numbers "
                                  "(or (3, 3), (3, 4), (4, 4)), or name the kind")
    if unit_word is not None:
        if kind not in _ANGLE_KINDS:
            raise PoseInputError(f"expected pose: a unit word ({unit_word}) only goes with angles; these numbers were "
                                 f"read as a {kind}")
        conv = conv.changed(unit=unit_word)
        stated = stated | {"unit"}
    alternatives = []
    unit_note = ""
    unit = unit_from = largest = suggests = None
    if kind in _ANGLE_KINDS:
        angles = _angle_part(kind, arr)
        largest = _largest(angles)
        if "unit" in stated:
            unit_from = "stated"
        else:
            # unstated: a Convention object keeps its own unit, anything else starts in the typed unit
            unit_from = "given" if isinstance(convention, Convention) else "default"
            if unit_from == "default":
                conv = conv.changed(unit=TYPED_UNIT)
            other = "radians" if conv.unit == "degrees" else "degrees"
            why = ("posekit reads typed angles in degrees when no unit is stated" if unit_from == "default"
                   else "the unit of the convention given")
            unit_note = f"; unit not stated: read as {conv.unit} ({why}), {other} scored too"
            r2, t2 = _read_expected(arr, kind, conv.changed(unit=other))
            alternatives.append((r2, t2, *_unit_alternative(other, angles)))
        unit = conv.unit
        suggests = _suggested_unit(angles)
        suggests = None if suggests == unit else suggests
    r, t = _read_expected(arr, kind, conv)
    if kind in ("transform", "matrix"):
        try:
            (read_transform if kind == "transform" else read_rotation)(arr, "matrix", conv)
        except NotOrthonormalError:
            unit_note += ("; its 3x3 block is off orthonormal (printed digits): the nearest rotation was taken "
                          "(Higham 1986)")
    count = arr.shape[-2] * arr.shape[-1] if nested else arr.shape[-1]
    reading = Reading(kind, conv, stated, count=count)
    pairs = _stated_pairs(convention)
    guess = ExpectedGuess("numbers", _guess_words(kind, conv, count, not nested), kind, kind_from, count, unit,
                          unit_from, largest, suggests, _pairs_text(pairs), (),
                          _choices(kind, count, not nested, pairs, unit, unit_word is not None))
    if suggests is not None:
        unit_note += "; " + guess.note()
    words = "expected " + reading.describe() + unit_note
    return ExpectedPose(r, t, source, words, tuple(alternatives), guess)


def expected_rows(rows, kind: str | None = None, convention=None) -> ExpectedPose:
    """Expected poses given one per row: ``(N, n)`` numbers -> an ExpectedPose batch.

    Like :func:`expected_pose`, except that each row is one pose whatever N is (three rows of three
    numbers are three sets of Euler angles, not one matrix); the count of a row decides the kind.

    >>> expected_rows([[10, 20, 30], [0, 0, 90], [5, 0, 0]]).rotation.shape
    (3, 3, 3)
    """
    if kind is not None and not isinstance(kind, str):
        return expected_pose(rows, kind, convention)   # the typed error for a kind that is no word
    if isinstance(convention, str) and not convention.strip():
        convention = None
    arr = as_numbers(rows, "expected poses", None)
    if arr.ndim != 2:
        raise WrongShapeError(f"expected poses: got shape {arr.shape}; expected (N, n): one pose of n numbers per "
                              "row")
    return _numbers_reading(arr, kind, convention, None, "numbers, one pose per row", rows=True)


def expected_pose(value, kind: str | None = None, convention=None) -> ExpectedPose:
    """The expected pose from any representation: ``-> ExpectedPose``.

    ``value`` may be an :class:`ExpectedPose`, a :class:`posekit.Pose`, a description
    in words (see :func:`pose_from_words`), pasted text (bare numbers, a list, named
    components such as ``yaw=10 pitch=20 roll=30``, or numbers followed by a unit word:
    ``10 20 30 degrees``) or numbers.  Numbers are read under ``convention`` (posekit
    text form; its keys are the stated fields) as ``kind`` (``matrix``, ``transform``,
    ``quaternion``, ``euler``, ``rotation-vector``, ``position-quaternion``,
    ``position-euler``); without ``kind`` the count decides: 9 or (3, 3) matrix,
    16 / 12 / (4, 4) / (3, 4) transform, 4 quaternion, 3 Euler, 7 position-quaternion,
    6 position-euler.  Angles whose unit nobody stated are read in degrees
    (:data:`TYPED_UNIT`; a Convention object keeps its own unit) and the other unit is
    kept as an alternative, charged by how plausible the magnitudes make it; the
    result's ``reading`` says so in one line and its ``guess`` holds the same as values,
    with the other readings (:class:`ReadingChoice`) one choice away.

    >>> e = expected_pose("10 20 30")
    >>> e.reading
    'expected Euler angles z-y-x intrinsic in degrees, active, parent-from-child; unit not stated: read as degrees (posekit reads typed angles in degrees when no unit is stated), radians scored too'
    >>> expected_pose("0.2 0.1 -0.3").guess.note()
    'the magnitudes (up to 0.3, not whole numbers) look like radians, but they were read as degrees because no unit was typed'
    """
    if kind is not None and not isinstance(kind, str):
        raise WrongTypeError(f"kind of the expected pose: got {summarise(kind)} of type {type(kind).__name__}; expected None (the "
                             "count decides) or a word: matrix, transform, quaternion, euler, rotation-vector, "
                             "position-quaternion, position-euler")
    if isinstance(value, ExpectedPose):
        return value
    if isinstance(convention, str) and not convention.strip():
        convention = None   # blank text states nothing (a ReadingChoice's convention may be blank)
    if isinstance(value, Pose):
        return ExpectedPose(value.rotation, value.translation, "a posekit Pose", "expected: a posekit Pose",
                            guess=ExpectedGuess("pose", "a posekit Pose"))
    conv = as_convention(convention)
    if isinstance(value, str):
        unit_word = None
        check_text_size(value, what="expected pose text")
        m = _UNIT_WORD.search(value)
        body = value[:m.start()].rstrip(" \t\r\n\f\v,") if m else ""
        if m and re.fullmatch(r"[\s\d.eE+\-,;\[\]()]*", body) and re.search(r"\d", body):
            value, unit_word = body, m.group("unit")
            unit_word = "degrees" if unit_word.startswith("deg") or unit_word == "°" else "radians"
        elif re.search(r"[A-Za-z]{3,}", value) and not re.search(r"array|[:=\[{]", value):
            return pose_from_words(value)
        parsed = parse_numbers(value)
        if parsed.names:
            return _named_expected(parsed, conv, convention, value, kind)
        return _numbers_reading(np.asarray(parsed.numbers).reshape(parsed.shape), kind, convention, unit_word,
                                f"numbers: {value.strip()}")
    arr = as_numbers(value, "expected pose", None)
    return _numbers_reading(arr, kind, convention, None, "numbers")


def _named_expected(parsed: ParsedNumbers, conv: Convention, convention, text: str,
                    kind: str | None = None) -> ExpectedPose:
    """Named components: the names fix the slots; ``kind``, the convention (or the usual yaw-pitch-roll)
    the rest."""
    interps = [i for i in parsed.require_interpretations() if i.kind != "position"]
    if kind is not None:
        chosen = [i for i in interps if kind in (i.kind, i.rotation_kind)]
        if not chosen:
            raise PoseInputError(f"expected pose: the named values {text.strip()[:80]!r} cannot be read as {kind}; "
                                 f"they can be read as: {', '.join(sorted({i.kind for i in interps}))}")
        interps = chosen
    stated = stated_fields(convention)
    kinds = {i.rotation_kind for i in interps}
    pool = interps
    if "euler" in kinds:
        seq = conv.sequence if "sequence" in stated else "z-y-x"
        axes = conv.axes if "axes" in stated else "intrinsic"
        pool = [i for i in interps if i.rotation_kind != "euler" or
                (i.convention.sequence == seq and i.convention.axes == axes)] or interps
    fixed = {"sequence", "axes", "unit", "algebra"} & stated
    pool = [i for i in pool if all(getattr(i.convention, f) == getattr(conv, f) for f in fixed
                                   if f in i.fields())] or None
    if pool is None:
        raise PoseInputError(f"expected pose: no reading of {text!r} matches the stated convention {conv.to_text()!r}")
    units = sorted({i.convention.unit for i in pool if i.rotation_kind in ("euler", "rotation-vector")})
    alternatives = []
    note = ""
    lead = pool[0]
    unit = unit_from = largest = suggests = None
    choices = []
    pairs = _stated_pairs(convention)
    if len(units) == 2:  # the text did not say the unit
        angles = np.asarray([v for v in lead.numbers][3:] if lead.kind.startswith("position-") else lead.numbers)
        largest = _largest(angles)
        if "unit" in stated:
            unit, unit_from = conv.unit, "stated"
        else:
            unit_from = "given" if isinstance(convention, Convention) else "default"
            unit = conv.unit if unit_from == "given" else TYPED_UNIT
        lead = next(i for i in pool if i.convention.unit == unit)
        other = next(i for i in pool if i.convention.unit != unit and i.rotation_kind == lead.rotation_kind)
        if "unit" not in stated:
            alternatives.append((other.rotation, other.translation, *_unit_alternative(other.convention.unit,
                                                                                      angles)))
            note = f"; unit not stated: read as {unit}, {other.convention.unit} scored too"
        suggests = _suggested_unit(angles)
        suggests = None if suggests == unit else suggests
        choices.append(ReadingChoice("unit", other.convention.unit, lead.kind,
                                     _pairs_text({**pairs, "unit": other.convention.unit})))
    names = tuple(str(n) for n in parsed.names)
    guess = ExpectedGuess("named", _guess_words(lead.kind, lead.convention, len(lead.numbers), True), lead.kind,
                          "names" if kind is None else "given", len(lead.numbers), unit, unit_from, largest,
                          suggests, _pairs_text(pairs), names, tuple(choices))
    if suggests is not None:
        note += "; " + guess.note()
    words = f"expected named components read as {lead.describe()}" + note
    return ExpectedPose(lead.rotation, lead.translation, f"named values: {text.strip()}", words, tuple(alternatives),
                        guess)




# --------------------------------------------------------------------------------------
# the observed side: the stated reading and the readings to try
# --------------------------------------------------------------------------------------

def _observed(observed, assumed, assumed_kind, n_pairs: int | None, borrowed=None):
    """-> (stated Reading, candidates, parsed or None, notes).  ``n_pairs`` None: one pose.

    ``borrowed``: the expected side's convention, used for the observed numbers when the user gave
    none of their own; its fields are then taken as read, not as stated for these numbers.
    """
    parsed = None
    if isinstance(observed, ParsedNumbers):
        parsed = observed
    elif isinstance(observed, str):
        parsed = parse_numbers(observed)
    if parsed is not None:
        arr = np.asarray(parsed.numbers, dtype=np.float64).reshape(1, -1)
    else:
        if isinstance(observed, Pose):
            observed = observed.matrix
        arr = as_numbers(observed, "observed numbers", None)
        if n_pairs is None:
            arr = arr.reshape(1, -1)
        else:
            arr = arr.reshape(arr.shape[0], -1) if arr.ndim >= 2 else arr.reshape(1, -1)
            if arr.shape[0] != n_pairs:
                raise WrongShapeError(f"diagnose_batch: observed numbers have shape {np.shape(observed)}; expected "
                                      f"({n_pairs}, n), one row per expected pose")
    count = arr.shape[1]
    notes = [] if parsed is None else list(parsed.notes)
    stated_set = None if borrowed is None else frozenset()   # the expected side's convention states nothing here
    assumed, stated_set = _typed_unit(assumed, stated_set)
    if parsed is not None and parsed.names:
        interps = [i for i in parsed.require_interpretations() if i.kind != "position"]
        if not interps:
            raise NoInterpretationError("diagnose: the observed numbers hold no rotation to compare")
        conv = assumed
        if _named_scalar(parsed.names) is not None and "scalar" not in stated_fields(assumed):
            # the names fix which number is w: say the numbers back (and correct them) in the order typed
            conv = as_convention(assumed).changed(scalar=_named_scalar(parsed.names))
            stated_set = stated_fields(assumed) if stated_set is None else stated_set
        stated = stated_reading(count, assumed_kind or interps[0].kind, conv, stated=stated_set,
                                position_first=interps[0].position_first)
        cands = _named_candidates(interps, stated)
        _check_observed(stated, cands[0].numbers, notes)
        return stated, cands, parsed, notes
    stated = stated_reading(count, assumed_kind, assumed, stated=stated_set)
    _check_observed(stated, arr, notes)
    _unit_note(stated, arr, notes)
    return stated, [Candidate(r, arr) for r in readings_of(stated)], parsed, notes


def _typed_unit(assumed, stated_set):
    """The observed side's reading with the typed-angle default: when neither the reading given nor a
    Convention object says the unit, angles are read in :data:`TYPED_UNIT` -- not stated, so still free
    to be wrong -- as on the expected side.  -> (convention or reading, stated field set or None)."""
    if isinstance(assumed, (Convention, Reading)):
        return assumed, stated_set
    blank = assumed is None or (isinstance(assumed, str) and not assumed.strip())
    keys = frozenset() if blank else stated_fields(assumed)
    if "unit" in keys:
        return assumed, stated_set
    conv = as_convention(None if blank else assumed).changed(unit=TYPED_UNIT)
    return conv, (keys if stated_set is None else stated_set)


def _unit_note(stated: Reading, numbers: np.ndarray, notes: list) -> None:
    """Say so when observed angles read in one unit have magnitudes that point to the other."""
    if stated.rotation_kind not in ("euler", "rotation-vector"):
        return
    angles, _ = split_numbers(stated, numbers)
    suggested = _suggested_unit(angles)
    unit = stated.convention.unit
    if suggested is None or suggested == unit:
        return
    how = "as stated" if "unit" in stated.stated else (
        "because no unit was given" if unit == TYPED_UNIT else "as the convention given says")
    looks = "not whole numbers" if suggested == "radians" else "beyond 2 pi"
    notes.append(f"the observed angles were read in {unit} {how}; their magnitudes (up to {_largest(angles):.4g}, "
                 f"{looks}) look like {suggested}: the ranking scores both units")


#: How far a written-out matrix may be off orthonormal (|M^T M - I|, Frobenius) and still be read
#: as a rotation printed with few digits (four decimals give about 1e-4); beyond it, no convention
#: explains the numbers (a scale, a shear, a wrong kind of matrix) and diagnose says so.
PRINTED_DIGITS = 1e-3


def _named_scalar(names) -> str | None:
    """``first`` / ``last`` when named components put w before / after the x of its own group; None without w."""
    full = [str(n).lower().rpartition(".") for n in names]
    w = next((i for i, (_, _, k) in enumerate(full) if k in ("w", "qw")), None)
    if w is None:
        return None
    xs = [i for i, (sect, _, k) in enumerate(full) if sect == full[w][0] and k in ("x", "qx")]
    if full[w][2] == "qw":
        xs = [i for i, (_, _, k) in enumerate(full) if k == "qx"] or xs
    if not xs:
        return None
    return "first" if w < xs[-1] else "last"


def _check_observed(stated: Reading, numbers: np.ndarray, notes: list) -> None:
    """Refuse numbers no convention can explain; note what was done to printed digits."""
    require_magnitude(numbers, "observed numbers")
    if stated.rotation_kind in ("euler", "rotation-vector"):
        angles, _ = split_numbers(stated, numbers)
        degrees = "unit" not in stated.stated or stated.convention.unit == "degrees"  # unstated: the lenient unit
        require_representable_angles(angles, "observed angles", np.pi / 180.0 if degrees else 1.0,
                                     "degrees" if degrees else "radians", norms=stated.rotation_kind != "euler")
    r, _ = read_numbers(stated, numbers) if stated.rotation_kind == "matrix" else (None, None)
    if r is not None:
        # the least any layout of these numbers is off orthonormal (a 4x4 read in the other layout has its
        # translation in the block)
        err = min((orthonormality_error(read_numbers(x, numbers)[0]) for x in readings_of(stated)),
                  key=lambda e: float(np.max(e)))
        if np.max(err) > PRINTED_DIGITS:
            try:
                checked_matrix(r, "observed 3x3 block", tolerance=PRINTED_DIGITS)
            except NotOrthonormalError as exc:
                raise NotOrthonormalError(f"diagnose: no convention explains these numbers, they are no rotation: "
                                          f"{exc} (printed digits may be off by up to {PRINTED_DIGITS:g})") from None
        if np.max(err) > ORTHONORMAL_TOLERANCE:
            notes.append(f"the observed 3x3 block is off orthonormal by {float(np.max(err)):.2g} (printed digits): "
                         "corrected numbers come from the nearest rotation")
    if stated.rotation_kind == "quaternion":
        rot_part = numbers[..., -4:] if not stated.kind.startswith("position-") or stated.position_first \
            else numbers[..., :4]
        length = np.sqrt(np.sum(rot_part * rot_part, axis=-1))
        if np.any(length < 1e-12):
            raise ZeroQuaternionError("observed quaternion: it has zero length, so it is no rotation under any "
                                      "convention; expected four numbers of length 1 (or near it, as printed)")
        worst = float(np.max(np.abs(length - 1.0)))
        if worst > PRINTED_DIGITS:
            notes.append(f"the observed quaternion has length {float(length.ravel()[0]):.6g}, not 1: it was divided "
                         "by its length (a length far from 1 may mean these numbers are not a quaternion)")


def _named_candidates(interps: list[Interpretation], stated: Reading) -> list[Candidate]:
    """Candidates of named numbers: the names fix the slots (so the scalar position is no slip)."""
    out, seen = [], set()
    for i in interps:
        fields = {k: v for k, v in i.fields().items()}
        nums = np.asarray(i.numbers, dtype=np.float64)
        if i.rotation_kind == "quaternion" and fields.get("scalar") != stated.convention.scalar:
            q = nums[-4:]
            q = np.r_[q[3:], q[:3]] if fields["scalar"] == "last" else np.r_[q[1:], q[:1]]
            nums = np.r_[nums[:-4], q]
            fields["scalar"] = stated.convention.scalar
        if i.kind.startswith("position-") and not i.position_first:
            nums = np.r_[nums[-3:], nums[:-3]]
        reading = Reading(i.kind, stated.convention.changed(**fields), stated.stated,
                          stated.position_first if i.kind.startswith("position-") else True, stated.count)
        if i.kind.startswith("position-") and not stated.position_first:
            nums = np.r_[nums[3:], nums[:3]]
        key = (reading, nums.tobytes())
        if key not in seen:
            seen.add(key)
            out.append(Candidate(reading, nums[None]))
    return out


# --------------------------------------------------------------------------------------
# explanations
# --------------------------------------------------------------------------------------

@dataclass(frozen=True, eq=False)
class Explanation:
    """One ranked explanation: a group of slips that fit the sample equally well, led by the simplest.

    ``rotation_residual`` radians and ``translation_residual`` metres (None without
    translations; RMS over the pairs in a batch); ``corrected_rotation`` /
    ``corrected_translation``: the pose the observed numbers really denote;
    ``corrected_numbers``: that pose written in the stated reading (same kind, count,
    layout and order: it pastes back; a tuple of rows in a batch); ``code``: a runnable
    snippet doing the same.  ``equivalents``: the same mistake written another way
    (identical for every input); ``separable``: slips that fit this sample only, each
    with numbers (in the stated reading) of a pose that would tell them apart.
    """

    rank: int
    sentence: str
    rotation_residual: float
    translation_residual: float | None
    cost: float
    deviations: float
    interpretation: Reading
    relation: str
    parent_remap: np.ndarray
    child_remap: np.ndarray
    translation_frame: str
    length_scale: float
    corrected_rotation: np.ndarray
    corrected_translation: np.ndarray | None
    corrected_numbers: tuple
    code: str
    equivalents: tuple[str, ...] = ()
    near_tie: bool = False
    handedness_flip: bool = False
    members: tuple[dict, ...] = ()
    separable: tuple[tuple[str, tuple[float, ...] | None], ...] = ()
    slip: object = None
    expected_reading: str = ""

    @property
    def indistinguishable(self) -> bool:
        return bool(self.equivalents or self.separable)

    def as_dict(self) -> dict:
        return {"rank": self.rank, "sentence": self.sentence,
                "rotation_residual_degrees": float(np.degrees(self.rotation_residual)),
                "translation_residual": self.translation_residual, "cost": self.cost,
                "deviations": self.deviations, "reading": self.interpretation.describe(),
                "reading_convention": self.interpretation.text(), "relation": self.relation,
                "parent_remap": self.parent_remap.tolist(), "child_remap": self.child_remap.tolist(),
                "translation_frame": self.translation_frame, "length_scale": self.length_scale,
                "corrected_rotation": np.round(self.corrected_rotation, 12).tolist(),
                "corrected_translation": (None if self.corrected_translation is None
                                          else np.round(self.corrected_translation, 12).tolist()),
                "corrected_numbers": _plain(self.corrected_numbers), "code": self.code,
                "same_mistake_written_another_way": list(self.equivalents),
                "another_sample_would_separate": [{"sentence": s, "separating_numbers": None if n is None else list(n)}
                                                  for s, n in self.separable],
                "near_tie": self.near_tie, "handedness_flip": self.handedness_flip,
                "expected_reading": self.expected_reading, "members": [dict(m) for m in self.members],
                "slip": None if self.slip is None else self.slip.as_dict()}


def _plain(nums):
    return [_plain(v) for v in nums] if isinstance(nums, tuple) else float(nums)


def _member(slip) -> dict:
    """One slip of a group as plain data: the reading's own fields (``reading``, only those off the
    default), the relation, remaps, frame and scale, its deviations and field changes."""
    reading = " ".join(f"{k}={v}" for k, v in slip.true.fields().items()
                       if k not in ("action", "direction") and getattr(DEFAULT, k) != v)
    return {"reading": reading, "kind": slip.true.kind, "position_first": slip.true.position_first,
            "relation": _relation(slip), "parent_remap": REMAPS[slip.parent_remap].astype(int).tolist(),
            "child_remap": REMAPS[slip.child_remap].astype(int).tolist(),
            "translation_frame": slip.translation_frame, "length_scale": slip.length_scale,
            "deviations": slip.deviations(), "changes": [list(c) for c in slip.field_changes()],
            "rotation_block_transposed": slip.transposed, "handedness_flip": slip.improper}


def _relation(slip) -> str:
    changed = {f for f, _, _ in slip.field_changes()}
    if "direction" in changed:
        return "inverse"
    if "action" in changed or slip.transposed:
        return "rotation-transposed"
    return "as-is"


def _rounded(values: np.ndarray) -> tuple:
    v = np.where(np.abs(values) < 5e-16, 0.0, values)  # no "-0" or 1e-17 float noise in numbers people paste
    v = v + 0.0                                          # -0.0 -> 0.0
    return tuple(v.tolist()) if v.ndim == 1 else tuple(map(tuple, v.tolist()))


def _corrected(h, stated: Reading, numbers):
    """Corrected numbers in the stated reading; off-orthonormal printed digits are projected (and said).

    The pose is decoded again with :meth:`Slip.decode` (the readers the fix code calls), so the
    numbers shown and the numbers the code prints agree to the last bit, also at a pole.
    """
    r, t = h.slip.decode(numbers)
    err = orthonormality_error(r)
    project = bool(np.max(err) > ORTHONORMAL_TOLERANCE or np.any(det3(r) < 0))
    if project:
        u, _, vt = np.linalg.svd(r)
        d = np.sign(np.linalg.det(u @ vt))
        u[..., :, 2] *= d[..., None]
        r = u @ vt
    nums = write_numbers(stated, r, t)
    return r, t, nums, project


def _explanations(ranking, stated: Reading, candidates, single: bool, tol_r: float, tol_t: float,
                  expected_words: list[str]) -> list[Explanation]:
    out = []
    best = ranking.groups[0].lead
    for rank, g in enumerate(ranking.groups, start=1):
        h = g.lead
        r, t_fix, nums, project = _corrected(h, stated, candidates[h.candidate].numbers)
        raw = candidates[h.candidate].numbers[0] if single else None
        normalise = bool(raw is not None and h.slip.true.rotation_kind == "quaternion" and abs(np.linalg.norm(
            raw[-4:] if h.slip.true.kind == "quaternion" or h.slip.true.position_first else raw[:4]) - 1) > 1e-6)
        code = fix_code(h.slip, raw, batch=not single, normalise=normalise, project=project)
        rr, tr = h.rotation_rms, h.translation_rms
        fits = rr <= tol_r and (tr is None or tr <= tol_t)
        if h.slip.is_none and not fits:
            sent = (f"Read as stated, the numbers are {math.degrees(rr):.3g} degrees"
                    + ("" if tr is None else f" and {tr:.4g} m") + " off the expected pose.")
        elif h.slip.is_none and h.expected:
            words = expected_words[h.expected]
            sent = words[0].upper() + words[1:] + "; read that way, the observed numbers match as you read them."
        else:
            sent = sentence(h.slip)
            if h.expected:
                sent = sent[:-1] + f", and {expected_words[h.expected]}."
        # (the scorer keeps only members within one deviation of the lead)
        same = tuple(w for w in dict.fromkeys(sentence(o.slip) for o in g.same) if w != sent)
        sep = tuple((sentence(o.slip), None if n is None else tuple(float(v) for v in np.round(n, 9)))
                    for o, n in g.separable)
        # a near tie: the prior, not the data, put the first one first (both fit, or nearly the same cost)
        # (or, for the first, other slips fit these numbers equally and only another sample would tell)
        near = bool(sep) if rank == 1 else bool(fits or (abs(rr - best.rotation_rms) < tol_r and
                                                         (tr is None or abs(tr - best.translation_rms) < tol_t))
                                                or h.cost - best.cost < PRIOR_WEIGHT)
        out.append(Explanation(
            rank, sent, rr, tr, h.cost, round(h.deviations, 6) + 0.0, h.slip.true, _relation(h.slip),
            REMAPS[h.slip.parent_remap].copy(), REMAPS[h.slip.child_remap].copy(), h.slip.translation_frame,
            h.slip.length_scale, r[0] if single else r,
            None if t_fix is None else (t_fix[0] if single else t_fix),
            _rounded(nums[0] if single else nums), code, same, near, h.slip.improper,
            tuple(_member(o.slip) for o in (h,) + g.same + tuple(x for x, _ in g.separable)), sep, h.slip,
            expected_words[h.expected]))
    if len(out) > 1 and out[1].near_tie:
        out[0] = replace(out[0], near_tie=True)
    return out


def _verdict(e: Explanation, tol_r: float, tol_t: float) -> tuple[bool, str]:
    fits = e.rotation_residual <= tol_r and (e.translation_residual is None or e.translation_residual <= tol_t)
    if not fits:
        tr = "" if e.translation_residual is None else f" and {e.translation_residual:.4g} m"
        return False, (f"No single slip explains these numbers: the closest explanation still leaves "
                       f"{math.degrees(e.rotation_residual):.3g} degrees{tr} (tolerances "
                       f"{math.degrees(tol_r):.3g} degrees, {tol_t:g} m). Closest partial explanations below.")
    if e.deviations == 0:
        return True, "The numbers match the expected pose as you read them: no convention error."
    return True, e.sentence


@dataclass(frozen=True, eq=False)
class Diagnosis:
    """Ranked explanations for one expected/observed pair (best first).

    ``explained``: the best explanation fits within the tolerances; ``verdict``: one
    line (never "no error" when the residual exceeds them).  ``stated``: the observed
    side's stated reading; ``assumed_reading``: it said back in one line (never empty);
    ``expected_reading``: what the expected input was read as; ``as_read``: the observed
    pose under the stated reading, ``(rotation (3, 3), translation (3,) or None)``.
    """

    explanations: tuple[Explanation, ...]
    hypotheses_scored: int
    assumed: Convention
    assumed_reading: str
    expected: ExpectedPose
    parsed: ParsedNumbers | None
    prior: str
    notes: tuple[str, ...] = ()
    stated: Reading | None = None
    expected_reading: str = ""
    explained: bool = True
    verdict: str = ""
    as_read: tuple = (None, None)

    @property
    def best(self) -> Explanation:
        return self.explanations[0]

    @property
    def near_tie(self) -> bool:
        """True when the data did not decide the lead: another explanation fits nearly as well, or other
        slips fit these numbers equally (another sample would separate them)."""
        return self.explanations[0].near_tie or (len(self.explanations) > 1 and self.explanations[1].near_tie)

    def summary(self, limit: int = 5) -> str:
        """Plain text: the verdict, both readings, then each explanation with residuals."""
        lines = [self.verdict, f"observed: {self.assumed_reading}", self.expected_reading or "expected: as given",
                 f"scored {self.hypotheses_scored} hypotheses"]
        lines += [f"note: {n}" for n in self.notes]
        lines += _explanation_lines(self.explanations[:limit])
        if self.near_tie:
            lines.append("caution: the first explanations nearly tie; read the notes under each")
        e = self.best
        lines.append("corrected numbers (in your stated reading): " + ", ".join(f"{v:.9g}" for v in e.corrected_numbers))
        lines.append("corrected reading with posekit:\n" + e.code)
        return "\n".join(lines)

    def as_dict(self) -> dict:
        return {"verdict": self.verdict, "explained": self.explained, "hypotheses_scored": self.hypotheses_scored,
                "assumed": self.assumed.to_text(), "assumed_reading": self.assumed_reading,
                "stated_reading": None if self.stated is None else self.stated.as_dict(),
                "expected_reading": self.expected_reading, "prior": self.prior, "notes": list(self.notes),
                "near_tie": self.near_tie, "explanations": [e.as_dict() for e in self.explanations]}


def _explanation_lines(explanations) -> list[str]:
    lines = []
    for e in explanations:
        tr = "" if e.translation_residual is None else f", translation off by {e.translation_residual:.4g} m"
        lines.append(f"{e.rank}. {e.sentence}" + ("  [near tie]" if e.near_tie else ""))
        lines.append(f"   rotation off by {math.degrees(e.rotation_residual):.4g} degrees{tr}; "
                     f"{e.deviations:g} deviation{'s' if e.deviations != 1 else ''}, cost {e.cost:.3g}")
        for s in e.equivalents[:2]:
            lines.append(f"   the same mistake written another way: {s}")
        for s, n in e.separable[:2]:
            probe = "" if n is None else " (e.g. the numbers " + ", ".join(f"{v:.6g}" for v in n) + ")"
            lines.append(f"   fits these numbers equally, another sample would separate it{probe}: {s}")
    return lines


def _run(stated, candidates, exp: ExpectedPose, n_pairs: int, single: bool, reflections: bool,
         tol_r: float, tol_t: float, limit: int):
    sides = exp.sides(n_pairs)
    ranking = score(stated, candidates, sides, rotation_tolerance=tol_r, translation_tolerance=tol_t,
                    reflections=reflections, keep=max(64, 12 * limit) if single else max(24, 6 * limit), limit=limit)
    explanations = _explanations(ranking, stated, candidates, single, tol_r, tol_t, [s.words for s in sides])
    return ranking, explanations


def _said_back(stated: Reading, borrowed) -> str:
    line = stated.said_back()
    if borrowed is not None:
        line += " (you gave no reading for these numbers: the expected side's convention was used, stating nothing)"
    return line


def _translation_notes(exp_t, obs_t) -> list[str]:
    if exp_t and not obs_t:
        return ["the observed numbers hold no translation; only the rotation is compared"]
    if obs_t and not exp_t:
        return ["the expected pose has no translation; only the rotation is compared"]
    return []


def diagnose(expected, observed, *, assumed=None, assumed_kind: str | None = None,
             expected_kind: str | None = None, expected_convention=None, reflections: bool = True,
             rotation_tolerance: float = math.radians(0.5), translation_tolerance: float = 0.005,
             limit: int = 5) -> Diagnosis:
    """Rank explanations of how the observed numbers came from the expected pose.

    ``expected``: anything :func:`expected_pose` takes (with ``expected_kind`` and
    ``expected_convention``), e.g. ``"yawed 30 degrees left, 1 m up"`` or ``"10 20 30"``.
    ``observed``: pasted text, a :class:`~posekit.analysis.parse.ParsedNumbers`, or
    numbers (3, 4, 6, 7, 9, 12 or 16 of them, any nesting).  ``assumed``: the reading
    you gave the observed numbers, as convention text whose keys are the fields you
    *state* (default: ``expected_convention``, else nothing stated); ``assumed_kind``
    the kind (default by count).  Stated fields are contradicted only as named
    deviations.  Reflections (handedness flips) are scored unless ``reflections=False``.
    Tolerances: radians and metres, finite and > 0.  Returns the best ``limit`` groups.

    Angles typed without a unit (on either side) are read in degrees, the other unit scored too.

    >>> d = diagnose([0.2, 0.1, -0.3], "-0.1534, 0.0343, 0.1060, 0.9819", expected_kind="euler",
    ...              expected_convention="unit=radians")   # yaw-pitch-roll; the quaternion logged scalar-last
    >>> d.best.sentence
    'The quaternion was written scalar-last but read scalar-first.'
    """
    rotation_tolerance, translation_tolerance, limit, _ = _check_tolerances(rotation_tolerance, translation_tolerance,
                                                                           limit)
    exp = expected_pose(expected, expected_kind, expected_convention)
    if exp.rotation.ndim != 2:
        raise WrongShapeError("diagnose: the expected pose must be a single pose; use diagnose_batch for many")
    borrowed = expected_convention if assumed is None and expected_convention is not None else None
    stated, candidates, parsed, notes = _observed(observed, assumed if assumed is not None else expected_convention,
                                                  assumed_kind, None, borrowed)
    notes += _translation_notes(exp.translation is not None, stated.has_translation)
    ranking, explanations = _run(stated, candidates, exp, 1, True, reflections, rotation_tolerance,
                                 translation_tolerance, limit)
    explained, verdict = _verdict(explanations[0], rotation_tolerance, translation_tolerance)
    as_read = read_numbers(stated, candidates[0].numbers)
    as_read = (as_read[0][0], None if as_read[1] is None else as_read[1][0])
    if not reflections and np.linalg.det(as_read[0]) < 0:
        notes.append("the observed 3x3 block is a reflection (det -1); handedness flips were left out on request")
    return Diagnosis(tuple(explanations), ranking.hypotheses_scored, stated.convention, _said_back(stated, borrowed), exp,
                     parsed, PRIOR_TEXT, tuple(notes), stated, exp.reading, explained, verdict, as_read)


# --------------------------------------------------------------------------------------
# batch mode
# --------------------------------------------------------------------------------------

def average_rotation(rotations, weights=None) -> np.ndarray:
    """Quaternion average of ``(N, 3, 3)`` rotations -> ``(3, 3)``.

    Markley, Cheng, Crassidis, Oshman, "Averaging Quaternions", JGCD 30(4), 2007: the
    eigenvector of ``sum w_i q_i q_i^T`` with the largest eigenvalue; it minimises the
    weighted sum of squared Frobenius distances between attitude matrices.

    >>> from posekit.core.rotation import elementary_matrix as E
    >>> bool(np.allclose(average_rotation(np.stack([E("z", 0.1), E("z", 0.3)])), E("z", 0.2)))
    True
    """
    r = checked_matrix(rotations)
    q = rot.quaternion_of_matrix(r).reshape(-1, 4)
    w = np.ones(len(q)) if weights is None else np.asarray(weights, dtype=float).reshape(-1)
    mat = (q * w[:, None]).T @ q
    vals, vecs = np.linalg.eigh(mat)
    return rot.matrix_of_quaternion(vecs[:, -1])


@dataclass(frozen=True, eq=False)
class ConstantOffset:
    """A constant rotation (and translation) offset fitted over all pairs.

    ``side``: ``left`` (observed = A expected, the parent frame differs) or ``right``
    (observed = expected B, the child/mount frame differs).  ``rotation (3, 3)``,
    ``translation (3,)`` or None.  ``snapped_remap``: the nearest signed permutation
    when within ``snap_tolerance`` (else None), ``snap_angle`` radians to it.
    """

    side: str
    rotation: np.ndarray
    translation: np.ndarray | None
    snapped_remap: np.ndarray | None
    snap_angle: float
    sentence: str
    residuals: np.ndarray
    translation_residuals: np.ndarray | None


@dataclass(frozen=True, eq=False)
class BatchDiagnosis:
    """Batch result: ``explanations`` as for one pair (costs summed over the pairs, residuals
    RMS), ``rotation_residuals (N,)`` and ``translation_residuals (N,)`` of the best one,
    ``statistics`` (median, rms, max per residual), ``consistent`` (the best fits every
    pair within 3 tolerances), ``explained`` (its RMS residuals are within the
    tolerances), ``verdict``, and ``offset`` (a :class:`ConstantOffset`, fitted when no
    single slip is consistent, else None)."""

    explanations: tuple[Explanation, ...]
    hypotheses_scored: int
    pairs: int
    rotation_residuals: np.ndarray
    translation_residuals: np.ndarray | None
    statistics: dict
    consistent: bool
    offset: ConstantOffset | None
    prior: str
    notes: tuple[str, ...] = ()
    stated: Reading | None = None
    assumed_reading: str = ""
    expected_reading: str = ""
    explained: bool = True
    verdict: str = ""

    @property
    def best(self) -> Explanation:
        return self.explanations[0]

    def summary(self) -> str:
        lines = [self.verdict, f"observed: {self.assumed_reading}", self.expected_reading or "expected: as given",
                 f"{self.pairs} pairs; scored {self.hypotheses_scored} hypotheses, each against every pair"]
        lines += [f"note: {n}" for n in self.notes]
        lines += _explanation_lines(self.explanations)
        s = self.statistics
        lines.append(f"best explanation, rotation residual per pair: median {s['rotation_median_degrees']:.4g}, "
                     f"rms {s['rotation_rms_degrees']:.4g}, max {s['rotation_max_degrees']:.4g} degrees")
        if self.translation_residuals is not None:
            lines.append(f"translation residual per pair: median {s['translation_median']:.4g}, rms "
                         f"{s['translation_rms']:.4g}, max {s['translation_max']:.4g} m")
        lines.append("consistent with every pair" if self.consistent else "no single slip fits every pair")
        if self.offset is not None:
            lines.append("constant offset: " + self.offset.sentence)
        lines.append("corrected reading with posekit (logged_numbers: your (N, n) array):\n" + self.best.code)
        return "\n".join(lines)

    def as_dict(self) -> dict:
        out = {"verdict": self.verdict, "explained": self.explained, "pairs": self.pairs,
               "hypotheses_scored": self.hypotheses_scored, "consistent": self.consistent,
               "assumed_reading": self.assumed_reading,
               "stated_reading": None if self.stated is None else self.stated.as_dict(),
               "expected_reading": self.expected_reading,
               "statistics": self.statistics, "prior": self.prior, "notes": list(self.notes),
               "explanations": [e.as_dict() for e in self.explanations],
               "rotation_residuals_degrees": np.degrees(self.rotation_residuals).tolist(),
               "translation_residuals": (None if self.translation_residuals is None
                                         else self.translation_residuals.tolist())}
        if self.offset is not None:
            o = self.offset
            out["offset"] = {"side": o.side, "rotation": o.rotation.tolist(),
                             "translation": None if o.translation is None else o.translation.tolist(),
                             "snapped_remap": None if o.snapped_remap is None else o.snapped_remap.tolist(),
                             "snap_angle_degrees": math.degrees(o.snap_angle), "sentence": o.sentence,
                             "rotation_residuals_degrees": np.degrees(o.residuals).tolist()}
        return out


def _stats(r, t):
    d = np.degrees(r)
    out = {"rotation_median_degrees": float(np.median(d)), "rotation_rms_degrees": float(np.sqrt(np.mean(d * d))),
           "rotation_max_degrees": float(np.max(d))}
    if t is not None:
        out.update({"translation_median": float(np.median(t)), "translation_rms": float(np.sqrt(np.mean(t * t))),
                    "translation_max": float(np.max(t))})
    return out


def _batch_expected(expected, expected_kind, expected_convention) -> ExpectedPose:
    if isinstance(expected, ExpectedPose):
        return expected
    arr = as_numbers(expected, "expected poses", None)
    if expected_kind is None and arr.ndim == 3 and arr.shape[-2:] in ((4, 4), (3, 3)):
        if arr.shape[-1] == 4:
            return ExpectedPose(arr[:, :3, :3], arr[:, :3, 3], "transforms", "expected canonical 4x4 transforms")
        return ExpectedPose(arr, None, "rotations", "expected canonical 3x3 rotations")
    if arr.ndim == 2:  # one pose per row, whatever the number of rows (three rows of three are no matrix here)
        return expected_rows(arr, expected_kind, expected_convention)
    return expected_pose(arr, expected_kind, expected_convention)


def diagnose_batch(expected, observed, *, assumed=None, assumed_kind: str | None = None,
                   expected_kind: str | None = None, expected_convention=None, reflections: bool = True,
                   rotation_tolerance: float = math.radians(0.5), translation_tolerance: float = 0.005,
                   snap_tolerance: float = math.radians(2.0), limit: int = 5) -> BatchDiagnosis:
    """The single slip consistent with N pairs, or a constant offset.

    ``expected``: ``(N, 4, 4)`` / ``(N, 3, 3)`` canonical poses, an
    :class:`ExpectedPose` batch, or ``(N, n)`` numbers, one pose per row, read with ``expected_kind``
    and ``expected_convention`` (:func:`expected_rows`).  ``observed``: ``(N, n)`` raw numbers (n = 3, 4, 6, 7, 9,
    12 or 16).  The same engine as :func:`diagnose`: one score per slip summed over the
    pairs, the prior charged once.  When the best explanation does not fit every pair
    within 3 tolerances, a constant left or right offset is fitted (Wahba's problem by
    the SVD, equal to the quaternion average of Markley et al. 2007) under every
    reading of the numbers, the best (residual plus prior) kept, and snapped to the
    nearest axis remap when within ``snap_tolerance``.

    >>> from posekit.core.rotation import elementary_matrix as E
    >>> truth = E("z", np.linspace(0, 1, 5))                        # (5, 3, 3)
    >>> obs = write_rotation(truth, "quaternion", "scalar=last")     # (5, 4), logged scalar-last
    >>> diagnose_batch(truth, obs).best.sentence
    'The quaternion was written scalar-last but read scalar-first.'
    """
    rotation_tolerance, translation_tolerance, limit, snap_tolerance = _check_tolerances(
        rotation_tolerance, translation_tolerance, limit, snap_tolerance)
    exp = _batch_expected(expected, expected_kind, expected_convention)
    r_e = checked_matrix(exp.rotation).reshape(-1, 3, 3)
    n_pairs = r_e.shape[0]
    borrowed = expected_convention if assumed is None and expected_convention is not None else None
    stated, candidates, _, notes = _observed(observed, assumed if assumed is not None else expected_convention,
                                             assumed_kind, n_pairs, borrowed)
    has_t = exp.translation is not None and stated.has_translation
    notes += _translation_notes(exp.translation is not None, stated.has_translation)
    ranking, explanations = _run(stated, candidates, exp, n_pairs, False, reflections, rotation_tolerance,
                                 translation_tolerance, limit)
    lead = ranking.groups[0].lead
    best_rr = lead.rotation_residuals
    best_tr = lead.translation_residuals
    explained, verdict = _verdict(explanations[0], rotation_tolerance, translation_tolerance)
    consistent = bool(np.max(best_rr) <= 3 * rotation_tolerance
                      and (best_tr is None or np.max(best_tr) <= 3 * translation_tolerance))
    offset = None
    if not consistent:
        t_e = exp.translation.reshape(-1, 3) if has_t else None
        offset = _fit_offset(r_e, t_e, stated, candidates, snap_tolerance, rotation_tolerance)
    return BatchDiagnosis(tuple(explanations), ranking.hypotheses_scored, n_pairs, best_rr, best_tr,
                          _stats(best_rr, best_tr), consistent, offset, PRIOR_TEXT, tuple(notes), stated,
                          _said_back(stated, borrowed), exp.reading, explained, verdict)


def _fit_offset(r_e, t_e, stated: Reading, candidates, snap_tolerance, rotation_tolerance) -> ConstantOffset:
    """Best constant left or right offset over every reading of the observed numbers.

    Left: ``M_i = A R_i`` maximises ``tr(A^T sum M_i R_i^T)``; right: ``M_i = R_i B``
    maximises ``tr(B^T sum R_i^T M_i)`` -- Wahba's problem, solved by the SVD with the
    det fix (Kabsch 1976), for every reading and both sides in one stacked SVD.  The
    summed chordal residual follows from the same 3x3 sums, so the choice costs no
    per-pair work; the deviations of the reading are charged as in the ranking.
    """
    from ..explain import Slip, angles_between
    read = [read_numbers(c.reading, c.numbers) for c in candidates]
    m_all = np.stack([m for m, _ in read])                                # (K, N, 3, 3)
    b_left = np.einsum("knab,ncb->kac", m_all, r_e)                      # sum M_i R_i^T
    b_right = np.einsum("nba,knbc->kac", r_e, m_all)                     # sum R_i^T M_i
    b = np.concatenate([b_left, b_right])                                # (2K, 3, 3)
    u, _, vt = np.linalg.svd(b)
    d = np.sign(np.linalg.det(u @ vt))
    u[..., :, 2] *= np.where(d == 0, 1.0, d)[..., None]
    a_all = u @ vt
    m2 = np.sum(m_all * m_all, axis=(1, 2, 3))
    n = r_e.shape[0]
    chord2 = np.concatenate([m2, m2]) + 3.0 * n - 2.0 * np.einsum("kab,kab->k", a_all, b)
    dev = np.array([Slip(stated, c.reading).deviations() for c in candidates])
    cost = 0.25 * chord2 / rotation_tolerance ** 2 + PRIOR_WEIGHT * np.concatenate([dev, dev])
    best = int(np.argmin(cost))
    side = "left" if best < len(candidates) else "right"
    k = best % len(candidates)
    m, t_o = read[k]
    a = a_all[best]
    res = angles_between(m, a @ r_e if side == "left" else r_e @ a)
    trans = tres = None
    if t_e is not None and t_o is not None:
        if side == "left":
            trans = np.mean(t_o - np.einsum("ab,nb->na", a, t_e), axis=0)
            tres = np.linalg.norm(t_o - np.einsum("ab,nb->na", a, t_e) - trans, axis=-1)
        else:
            dd = np.einsum("nba,nb->na", r_e, t_o - t_e)                      # R_i^T (t_obs - t_e)
            trans = np.mean(dd, axis=0)
            tres = np.linalg.norm(t_o - t_e - np.einsum("nab,b->na", r_e, trans), axis=-1)
    proper = np.asarray(REMAPS[:24])
    ang = angles_between(np.broadcast_to(a, proper.shape), proper)
    j = int(np.argmin(ang))
    # snapping to the identity would call a small mounting offset "no remap": only real remaps snap
    is_identity = bool(np.array_equal(proper[j], np.eye(3)))
    snapped = proper[j].copy() if ang[j] <= snap_tolerance and not is_identity else None
    where = "parent (left) side: observed = A expected" if side == "left" else \
        "child (right) side: observed = expected B"
    rv = np.degrees(np.linalg.norm(rot.rotvec_of_quaternion(rot.quaternion_of_matrix(a))))
    if snapped is not None:
        text = (f"a constant offset on the {where}, {rv:.3g} degrees, within {math.degrees(ang[j]):.3g} degrees "
                f"of the axis remap {describe_remap(snapped if side == 'left' else snapped.T)}")
    else:
        text = (f"a constant offset on the {where}, a turn of {rv:.3g} degrees that is no axis remap "
                f"(nearest remap {math.degrees(ang[j]):.3g} degrees away): a mounting or calibration offset")
    text += f"; read as {candidates[k].reading.describe()}"
    return ConstantOffset(side, a, trans, snapped, float(ang[j]), text, res, tres)
