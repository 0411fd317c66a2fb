"""Name the broken convention: compare an expected pose with observed numbers.

"I expected this pose; the system gives me these numbers -- what went wrong?"
:func:`diagnose` answers with ranked explanations, each one plain sentence, the
rotation and translation residuals, the corrected numbers and a posekit snippet.
:func:`diagnose_batch` does the same for N logged/ground-truth pairs at once and,
when no single convention error fits, fits a constant offset.

The hypothesis space (every combination is scored):

* every interpretation the parser lists for the observed numbers
  (:func:`posekit.analysis.parse.interpret_numbers`: layouts, quaternion orders and
  algebras, every Euler sequence intrinsic/extrinsic, degrees/radians, rotation
  vector, position first or last);
* the relation of the observed pose to the truth: as is, rotation transposed
  (passive vs active, or the inverse rotation with the translation untouched), or
  the whole transform inverted (child-from-parent instead of parent-from-child);
* a fixed axis remap on the parent side and on the child side: one of the 24 proper
  signed permutation matrices each (48 with reflections when ``reflections=True``;
  an improper one is reported as a handedness flip);
* the translation as is, expressed in the child frame's axes, or taken from the
  inverse transform (the parent origin seen from the child);
* the translation numbers in metres, millimetres (read as metres), or metres read
  as millimetres.

Forward model of a hypothesis (truth ``(R_e, t_e)`` -> observed ``(M, t)``):
``(R', t') = X(R_e, t_e)`` (X: identity, rotation transposed, inverse);
``t'' = f(R', t')`` (f: ``t'``, ``R'^T t'``, ``-R'^T t'``); ``M = P R' Q``,
``t = P t'' / s``.  Residuals: the geodesic angle between ``M`` and ``P R' Q``
(posekit.angle_between's atan2 form) and ``|s t - P t''|`` in metres.

**The prior that breaks ties** (stated, as the issue asks): every independent
deviation from the reading you assumed costs the same, ``PRIOR_WEIGHT`` = 3 units
of cost, i.e. a prior probability ``exp(-3 k)`` for an explanation with ``k``
deviations.  Deviations: each convention field that differs from the assumed
reading (sequence, intrinsic/extrinsic, unit, scalar position, algebra, layout),
a different kind of numbers (rotation vector instead of Euler angles) or order
(rotation before position), the transposed or inverted pose, a translation in the
wrong frame, a length unit: 1 each; a remap: 1 for a named frame change (ENU/NED,
FLU/FRD, optical) or one mirrored axis, 1.5 for any other proper remap, 2.5 for any
other reflection (arbitrary remaps are rarer than reading mistakes).
The cost of a hypothesis is ``0.5 (rotation residual / rotation_tolerance)^2 +
0.5 (translation residual / translation_tolerance)^2 + 3 k``; the lowest cost
ranks first.  Hypotheses whose residuals agree to 1e-9 are *indistinguishable from
this sample* and are grouped (the simplest one speaks for the group); a distinct
explanation is flagged as a near tie of the best when its residuals are within the
tolerances of the best one's, or when its cost is less than one deviation
(``PRIOR_WEIGHT``) above the best -- then the prior, not the data, decided the order.
"""

from __future__ import annotations

import itertools
import math
import re
from dataclasses import dataclass

import numpy as np

from ..core import rotation as rot
from ..core.checks import as_numbers, checked_matrix
from ..core.convention import Convention
from ..core.errors import PoseInputError, WrongShapeError
from ..core.reading import as_convention, read_rotation, write_rotation
from ..core.transforms import Pose, read_transform
from .parse import Interpretation, NoInterpretationError, ParsedNumbers, interpret_numbers, parse_numbers

__all__ = ["PRIOR_WEIGHT", "DescriptionError", "ExpectedPose", "Explanation", "Diagnosis", "BatchDiagnosis",
           "ConstantOffset", "axis_remaps", "describe_remap", "pose_from_words", "expected_pose", "diagnose",
           "diagnose_batch", "average_rotation"]

#: Cost of one deviation from the assumed reading (prior ``exp(-PRIOR_WEIGHT k)``).
PRIOR_WEIGHT = 3.0
#: Residuals this close (radians, metres) count as exactly equal: indistinguishable.
EQUIVALENT = 1e-9


class DescriptionError(PoseInputError):
    """A pose description in words could not be read; says which word failed and where."""


# --------------------------------------------------------------------------------------
# axis remaps
# --------------------------------------------------------------------------------------

def _signed_permutations():
    mats = []
    for perm in itertools.permutations(range(3)):
        for signs in itertools.product((1.0, -1.0), repeat=3):
            m = np.zeros((3, 3))
            for r, (c, s) in enumerate(zip(perm, signs)):
                m[r, c] = s
            mats.append(m)
    mats = np.array(mats)
    det = np.round(np.linalg.det(mats))
    ident = np.all(mats == np.eye(3), axis=(1, 2))
    order = np.lexsort((~ident, det < 0))  # identity first, then proper, then improper
    return mats[order]


_ALL_REMAPS = _signed_permutations()
_ALL_REMAPS.setflags(write=False)


def axis_remaps(reflections: bool = False) -> np.ndarray:
    """The signed permutation matrices: ``(24, 3, 3)`` proper, or ``(48, 3, 3)`` with reflections.

    Identity first, then the other proper ones, then (if asked) the 24 with det -1.
    Common practice: there are 24 proper signed axis permutations and 48 in all.

    >>> axis_remaps().shape, axis_remaps(True).shape
    ((24, 3, 3), (48, 3, 3))
    """
    return _ALL_REMAPS[:48 if reflections else 24].copy()


_NAMED_REMAPS = {
    "ENU <-> NED": np.array([[0, 1, 0], [1, 0, 0], [0, 0, -1.0]]),
    "FLU <-> FRD": np.diag([1.0, -1.0, -1.0]),
    "FLU body -> optical (x right, y down, z forward)": np.array([[0, -1, 0], [0, 0, -1], [1, 0, 0.0]]),
    "optical (x right, y down, z forward) -> FLU body": np.array([[0, 0, 1], [-1, 0, 0], [0, -1, 0.0]]),
}


_REMAP_WORDS: dict[bytes, str] = {}


def _remap_words(matrix: np.ndarray) -> str:
    key = np.asarray(matrix, dtype=np.float64).tobytes()
    text = _REMAP_WORDS.get(key)
    if text is None:
        text = _REMAP_WORDS[key] = describe_remap(matrix)
    return text


def describe_remap(matrix) -> str:
    """A signed permutation ``(3, 3)`` in words: its name if common, else the axis map.

    The matrix maps expected coordinates to observed ones (``p_obs = P p_exp``).

    >>> describe_remap([[0, 1, 0], [1, 0, 0], [0, 0, -1]])
    'ENU <-> NED (new x = old y, new y = old x, new z = -old z)'
    """
    m = np.asarray(matrix, dtype=np.float64)
    letters = "xyz"
    words = []
    for r in range(3):
        c = int(np.argmax(np.abs(m[r])))
        words.append(f"new {letters[r]} = {'-' if m[r, c] < 0 else ''}old {letters[c]}")
    axis_map = ", ".join(words)
    for name, ref in _NAMED_REMAPS.items():
        if np.array_equal(m, ref):
            return f"{name} ({axis_map})"
    if np.linalg.det(m) < 0:
        if np.allclose(np.abs(np.diag(m)), 1):
            flipped = [letters[i] for i in range(3) if m[i, i] < 0]
            if len(flipped) == 1:
                return f"the {flipped[0]} axis mirrored, a handedness flip ({axis_map})"
        return f"a handedness flip ({axis_map})"
    if np.array_equal(m, np.eye(3)):
        return f"no remap ({axis_map})"
    rv = rot.rotvec_of_quaternion(rot.quaternion_of_matrix(m))
    angle = float(np.linalg.norm(rv))
    axis = rv / angle
    k = int(np.argmax(np.abs(axis)))
    if abs(abs(axis[k]) - 1) < 1e-9:
        return (f"a {math.degrees(angle):.0f}-degree turn about {'+' if axis[k] > 0 else '-'}{letters[k]} "
                f"({axis_map})")
    return f"a {math.degrees(angle):.0f}-degree turn of the axes ({axis_map})"


def _remap_cost(mats: np.ndarray) -> np.ndarray:
    """Deviations charged for a remap: 0 identity, 1 a named frame change (ENU/NED, FLU/FRD,
    optical) or a single mirrored axis, 1.5 any other proper remap, 2.5 any other reflection."""
    ident = np.all(mats == np.eye(3), axis=(1, 2))
    improper = np.linalg.det(mats) < 0
    named = np.zeros(len(mats), dtype=bool)
    for ref in _NAMED_REMAPS.values():
        named |= np.all(mats == ref, axis=(1, 2))
    diag = np.all(mats * (1 - np.eye(3)) == 0, axis=(1, 2))
    single_mirror = diag & improper & (np.sum(np.diagonal(mats, axis1=1, axis2=2) < 0, axis=1) == 1)
    cost = np.where(improper, 2.5, 1.5)
    cost = np.where(named | single_mirror, 1.0, cost)
    return np.where(ident, 0.0, cost)


# --------------------------------------------------------------------------------------
# the expected pose
# --------------------------------------------------------------------------------------

@dataclass(frozen=True, eq=False)
class ExpectedPose:
    """The pose you expected: canonical ``rotation (..., 3, 3)``, ``translation (..., 3)`` or None."""

    rotation: np.ndarray
    translation: np.ndarray | None
    source: str

    @property
    def matrix(self) -> np.ndarray:
        t = np.zeros(self.rotation.shape[:-2] + (3,)) if self.translation is None else self.translation
        out = np.zeros(self.rotation.shape[:-2] + (4, 4))
        out[..., :3, :3] = self.rotation
        out[..., :3, 3] = t
        out[..., 3, 3] = 1.0
        return out


_DIRECTIONS = {"forward": (0, 1.0), "forwards": (0, 1.0), "ahead": (0, 1.0), "back": (0, -1.0),
               "backward": (0, -1.0), "backwards": (0, -1.0), "left": (1, 1.0), "right": (1, -1.0),
               "up": (2, 1.0), "down": (2, -1.0)}
# rotation verbs: (axis, sign of the turn for each direction word); FLU body axes
_TURNS = {
    "pitch": (1, {"down": 1.0, "up": -1.0}), "pitched": (1, {"down": 1.0, "up": -1.0}),
    "yaw": (2, {"left": 1.0, "right": -1.0}), "yawed": (2, {"left": 1.0, "right": -1.0}),
    "roll": (0, {"right": 1.0, "left": -1.0}), "rolled": (0, {"right": 1.0, "left": -1.0}),
    "heading": (2, {"left": 1.0, "right": -1.0}),
}
_ABOUT_VERBS = {"turned", "rotated", "turn", "rotate", "tilted"}
_ANGLE_WORDS = {"degree": math.pi / 180, "degrees": math.pi / 180, "deg": math.pi / 180, "°": math.pi / 180,
                "radian": 1.0, "radians": 1.0, "rad": 1.0}
_LENGTH_WORDS = {"m": 1.0, "metre": 1.0, "metres": 1.0, "meter": 1.0, "meters": 1.0, "cm": 0.01,
                 "centimetres": 0.01, "centimeters": 0.01, "mm": 0.001, "millimetres": 0.001,
                 "millimeters": 0.001}
_FILLER = {"and", "then", "by", "nose", "of", "the", "a", "to", "its", "is", "it", "with", "plus"}


def pose_from_words(text: str) -> ExpectedPose:
    """Build a pose from a short description, e.g. ``"pitched 25 degrees down, 0.3 m forward"``.

    Frame words (FLU body axes, right-handed): forward = +x, back = -x, left = +y,
    right = -y, up = +z, down = -z.  Turns, each about the body's *current* axes and
    applied in the order written (intrinsic): ``pitched N degrees down|up`` (down =
    +N about y), ``yawed N degrees left|right`` (left = +N about z), ``rolled N
    degrees right|left`` (right = +N about x, the right side going down),
    ``turned|rotated N degrees about [+|-]x|y|z``.  Angle units: degrees, deg, °,
    radians, rad (one is required).  Moves: ``N m|cm|mm forward|back|left|right|up|down``
    (the direction word may come first), expressed in the parent frame's axes and
    summed.  ``level`` / ``identity`` means no turn.  Clauses are separated by commas,
    semicolons or "and"/"then".

    ``(text) -> ExpectedPose`` with ``rotation (3, 3)`` and ``translation (3,)``.

    >>> p = pose_from_words("pitched 90 degrees down, 0.3 m forward")
    >>> np.round(p.rotation @ [1, 0, 0], 12).tolist(), p.translation.tolist()
    ([0.0, 0.0, -1.0], [0.3, 0.0, 0.0])
    """
    if not isinstance(text, str):
        raise DescriptionError(f"pose description: got {type(text).__name__}; expected text such as "
                               "'pitched 25 degrees down, 0.3 m forward'")
    tokens = [(m.group(0), m.start()) for m in re.finditer(r"[+-]?\d+(?:\.\d*)?(?:[eE][+-]?\d+)?|[+-]?\.\d+|"
                                                           r"[A-Za-z]+|°|[+-]|[,;]|\S", text)]
    r = np.eye(3)
    t = np.zeros(3)
    seen_any = False
    i = 0

    def fail(msg, pos):
        caret = text + "\n" + " " * pos + "^"
        raise DescriptionError(f"pose description: {msg} at offset {pos}:\n{caret}\naccepted: clauses such as "
                               "'pitched 25 degrees down', 'yawed 10 deg left', 'rolled 5 degrees right', "
                               "'turned 90 degrees about z', '0.3 m forward', '20 cm left', 'level'; frame words "
                               "forward=+x, left=+y, up=+z")

    def number_at(j):
        if j < len(tokens):
            try:
                return float(tokens[j][0])
            except ValueError:
                return None
        return None

    while i < len(tokens):
        word, pos = tokens[i]
        low = word.lower()
        if low in _FILLER or word in ",;":
            i += 1
            continue
        if low in ("level", "identity", "upright"):
            seen_any = True
            i += 1
            continue
        if low in _TURNS or low in _ABOUT_VERBS:
            j = i + 1
            direction = None
            while j < len(tokens) and tokens[j][0].lower() in _FILLER:
                j += 1
            if j < len(tokens) and tokens[j][0].lower() in _DIRECTIONS:  # "pitched down 25 degrees"
                direction = tokens[j][0].lower()
                j += 1
            value = number_at(j)
            if value is None:
                fail(f"expected an angle after '{word}'", tokens[j][1] if j < len(tokens) else len(text))
            j += 1
            if j >= len(tokens) or tokens[j][0].lower() not in _ANGLE_WORDS:
                fail("expected an angle unit (degrees or radians)", tokens[j][1] if j < len(tokens) else len(text))
            angle = value * _ANGLE_WORDS[tokens[j][0].lower()]
            j += 1
            if low in _TURNS:
                axis, signs = _TURNS[low]
                while j < len(tokens) and tokens[j][0].lower() in _FILLER:
                    j += 1
                if direction is None and j < len(tokens) and tokens[j][0].lower() in _DIRECTIONS:
                    direction = tokens[j][0].lower()
                    j += 1
                if direction is None:
                    fail(f"'{word}' needs a direction word ({' or '.join(signs)})", pos)
                if direction not in signs:
                    fail(f"'{direction}' is not a direction for '{word}' (use {' or '.join(signs)})", pos)
                angle *= signs[direction]
            else:
                if j >= len(tokens) or tokens[j][0].lower() != "about":
                    fail(f"expected 'about x|y|z' after the angle of '{word}'",
                         tokens[j][1] if j < len(tokens) else len(text))
                j += 1
                sign = 1.0
                if j < len(tokens) and tokens[j][0] in "+-":
                    sign = -1.0 if tokens[j][0] == "-" else 1.0
                    j += 1
                if j >= len(tokens) or tokens[j][0].lower() not in ("x", "y", "z"):
                    fail("expected the axis x, y or z", tokens[j][1] if j < len(tokens) else len(text))
                axis = "xyz".index(tokens[j][0].lower())
                angle *= sign
                j += 1
            r = r @ rot.elementary_matrix("xyz"[axis], angle)
            seen_any = True
            i = j
            continue
        value = number_at(i)
        if value is not None or low in _DIRECTIONS:
            j = i
            direction = None
            if value is None:
                direction = low
                j += 1
                value = number_at(j)
                if value is None:
                    fail(f"expected a distance after '{word}'", tokens[j][1] if j < len(tokens) else len(text))
            j += 1
            if j >= len(tokens) or tokens[j][0].lower() not in _LENGTH_WORDS:
                if j < len(tokens) and tokens[j][0].lower() in _ANGLE_WORDS:
                    fail("an angle needs a verb (pitched, yawed, rolled, turned ... about)", pos)
                fail("expected a length unit (m, cm or mm)", tokens[j][1] if j < len(tokens) else len(text))
            dist = value * _LENGTH_WORDS[tokens[j][0].lower()]
            j += 1
            if direction is None:
                if j >= len(tokens) or tokens[j][0].lower() not in _DIRECTIONS:
                    fail("expected a direction word (forward, back, left, right, up, down)",
                         tokens[j][1] if j < len(tokens) else len(text))
                direction = tokens[j][0].lower()
                j += 1
            axis, sign = _DIRECTIONS[direction]
            t[axis] += sign * dist
            seen_any = True
            i = j
            continue
        fail(f"unknown word '{word}'", pos)
    if not seen_any:
        fail("nothing to read", 0)
    r = rot.matrix_of_quaternion(rot.quaternion_of_matrix(r))
    return ExpectedPose(r, t, f"described: {text.strip()}")


def expected_pose(value, kind: str | None = None, convention=None) -> ExpectedPose:
    """The expected pose from any representation: ``-> ExpectedPose``.

    ``value`` may be an :class:`ExpectedPose`, a :class:`posekit.Pose`, a description
    in words (see :func:`pose_from_words`), pasted text or numbers.  Numbers are read
    under ``convention`` (posekit text form; default the canonical one) as ``kind``
    (``matrix``, ``quaternion``, ``euler``, ``rotation-vector``, ``position-quaternion``,
    ``position-euler``); without ``kind`` the count decides: 9 or (3, 3) matrix,
    16 / 12 / (4, 4) / (3, 4) transform, 4 quaternion, 3 Euler, 7 position-quaternion,
    6 position-euler.  The convention is applied as stated -- nothing is guessed here.

    >>> expected_pose([0, 0, 0, 1], convention="scalar=last").rotation.tolist()
    [[1.0, 0.0, 0.0], [0.0, 1.0, 0.0], [0.0, 0.0, 1.0]]
    """
    if isinstance(value, ExpectedPose):
        return value
    if isinstance(value, Pose):
        return ExpectedPose(value.rotation, value.translation, "a posekit Pose")
    conv = as_convention(convention)
    if isinstance(value, str):
        if re.search(r"[A-Za-z]{3,}", value) and not re.search(r"array|[:=\[{]", value):
            return pose_from_words(value)
        parsed = parse_numbers(value)
        arr = np.asarray(parsed.numbers).reshape(parsed.shape)
        if parsed.names:
            interps = parsed.require_interpretations()
            match = [i for i in interps if all(getattr(conv, k) == v for k, v in i.fields().items()
                                               if k not in ("scalar",))]
            if not match:
                raise PoseInputError(f"expected pose: no reading of {value!r} matches the convention "
                                     f"{conv.to_text()!r}")
            best = match[0]
            return ExpectedPose(best.rotation, best.translation, f"named values read under {conv.to_text()}")
        value = arr
    arr = as_numbers(value, "expected pose", None)
    if kind is None:
        shape = arr.shape
        if shape[-2:] in ((4, 4), (3, 4)) or shape[-1:] in ((16,), (12,)):
            kind = "transform"
        elif shape[-2:] == (3, 3) or shape[-1:] == (9,):
            kind = "matrix"
        else:
            kind = {4: "quaternion", 3: "euler", 7: "position-quaternion", 6: "position-euler"}.get(shape[-1])
            if kind is None:
                raise WrongShapeError(f"expected pose: got shape {shape}; expected 3, 4, 6, 7, 9, 12 or 16 numbers "
                                      "(or (3, 3), (3, 4), (4, 4)), or name the kind")
    if kind in ("transform", "position-quaternion", "position-euler"):
        m = read_transform(arr, "matrix" if kind == "transform" else kind, conv)
        return ExpectedPose(m[..., :3, :3], m[..., :3, 3], f"{kind} read under {conv.to_text()}")
    return ExpectedPose(read_rotation(arr, kind, conv), None, f"{kind} read under {conv.to_text()}")


# --------------------------------------------------------------------------------------
# explanations
# --------------------------------------------------------------------------------------

_RELATIONS = ("as-is", "rotation-transposed", "inverse")
_FRAMES = ("parent", "child-axes", "inverse-translation")
_SCALES = (1.0, 1e-3, 1e3)


@dataclass(frozen=True, eq=False)
class Explanation:
    """One ranked explanation (a group of hypotheses indistinguishable from the sample).

    ``rotation_residual`` radians, ``translation_residual`` metres (None without
    translations); ``corrected_rotation (..., 3, 3)``, ``corrected_translation
    (..., 3)``: the observed numbers read the way this explanation says (the pose the
    system meant); ``corrected_numbers``: that pose written in the reading you
    assumed; ``code``: a posekit snippet doing the corrected reading.
    """

    rank: int
    sentence: str
    rotation_residual: float
    translation_residual: float | None
    cost: float
    deviations: float
    interpretation: Interpretation
    relation: str
    parent_remap: np.ndarray
    child_remap: np.ndarray
    translation_frame: str
    length_scale: float
    corrected_rotation: np.ndarray
    corrected_translation: np.ndarray | None
    corrected_numbers: tuple[float, ...]
    code: str
    equivalents: tuple[str, ...] = ()
    near_tie: bool = False
    handedness_flip: bool = False
    members: tuple[dict, ...] = ()

    @property
    def indistinguishable(self) -> bool:
        return bool(self.equivalents)

    def as_dict(self) -> dict:
        return {"rank": self.rank, "sentence": self.sentence,
                "rotation_residual_degrees": float(np.degrees(self.rotation_residual)),
                "translation_residual": self.translation_residual, "cost": self.cost,
                "deviations": self.deviations, "reading": self.interpretation.describe(),
                "reading_convention": self.interpretation.convention_text(), "relation": self.relation,
                "parent_remap": self.parent_remap.tolist(), "child_remap": self.child_remap.tolist(),
                "translation_frame": self.translation_frame, "length_scale": self.length_scale,
                "corrected_rotation": np.round(self.corrected_rotation, 12).tolist(),
                "corrected_translation": (None if self.corrected_translation is None
                                          else np.round(self.corrected_translation, 12).tolist()),
                "corrected_numbers": list(self.corrected_numbers), "code": self.code,
                "indistinguishable_from": list(self.equivalents), "near_tie": self.near_tie,
                "handedness_flip": self.handedness_flip, "members": [dict(m) for m in self.members]}


@dataclass(frozen=True, eq=False)
class Diagnosis:
    """Ranked explanations for one expected/observed pair (best first)."""

    explanations: tuple[Explanation, ...]
    hypotheses_scored: int
    assumed: Convention
    assumed_reading: str
    expected: ExpectedPose
    parsed: ParsedNumbers | None
    prior: str
    notes: tuple[str, ...] = ()

    @property
    def best(self) -> Explanation:
        return self.explanations[0]

    @property
    def near_tie(self) -> bool:
        return len(self.explanations) > 1 and self.explanations[1].near_tie

    def summary(self, limit: int = 5) -> str:
        """Plain text: the best sentence first, then the others with residuals."""
        lines = [f"scored {self.hypotheses_scored} hypotheses; you read the numbers as {self.assumed_reading}"]
        lines += [f"note: {n}" for n in self.notes]
        for e in self.explanations[:limit]:
            tr = "" if e.translation_residual is None else f", translation off by {e.translation_residual:.4g} m"
            flag = "  [near tie]" if e.near_tie else ""
            lines.append(f"{e.rank}. {e.sentence}{flag}")
            lines.append(f"   rotation off by {math.degrees(e.rotation_residual):.4g} degrees{tr}; "
                         f"{e.deviations:g} deviation(s), cost {e.cost:.3g}")
            if e.equivalents:
                shown = " | ".join(e.equivalents[:2])
                more = f" (and {len(e.equivalents) - 2} more)" if len(e.equivalents) > 2 else ""
                lines.append(f"   indistinguishable from this one sample: {shown}{more}")
        if self.near_tie:
            lines.append("caution: the first explanations nearly tie; one more sample would tell them apart")
        e = self.best
        lines.append("corrected numbers (in your reading): " + ", ".join(f"{v:.6g}" for v in e.corrected_numbers))
        lines.append("corrected reading with posekit:\n" + e.code)
        return "\n".join(lines)

    def as_dict(self) -> dict:
        return {"hypotheses_scored": self.hypotheses_scored, "assumed": self.assumed.to_text(),
                "assumed_reading": self.assumed_reading, "prior": self.prior, "notes": list(self.notes),
                "near_tie": self.near_tie, "explanations": [e.as_dict() for e in self.explanations]}


PRIOR_TEXT = (f"each deviation from the assumed reading costs {PRIOR_WEIGHT:g} (prior exp(-{PRIOR_WEIGHT:g} k)): 1 per "
              "convention field, kind, order, transposed/inverted pose, translation frame or length unit; a remap "
              "1 if named (ENU/NED, FLU/FRD, optical) or a single mirrored axis, 1.5 other proper, 2.5 other "
              "reflection; cost = 0.5 (rotation residual / rotation tolerance)^2 + 0.5 (translation residual / "
              "translation tolerance)^2 + 3 k; equal residuals are broken by fewer deviations")


def _default_kind(count: int) -> tuple[str, bool]:
    return {3: ("euler", True), 4: ("quaternion", True), 6: ("position-euler", True),
            7: ("position-quaternion", True), 9: ("matrix", True), 12: ("transform", True),
            16: ("transform", True)}.get(count, ("matrix", True))


def _reading_deviations(interp: Interpretation, assumed: Convention, assumed_kind: str,
                        named: bool) -> list[str]:
    """Sentences for every way this reading differs from the assumed one."""
    out = []
    a = assumed
    c = interp.convention
    if not named and interp.position_first is False:
        out.append("the rotation comes before the position but was read after it")
    rk = interp.rotation_kind
    ak = assumed_kind.replace("position-", "")
    if not named and rk != ak and {rk, ak} <= {"euler", "rotation-vector"}:
        names = {"euler": "Euler angles", "rotation-vector": "a rotation vector"}
        out.append(f"the angles are {names[rk]} but were read as {names[ak]}")
    if rk == "quaternion":
        if c.scalar != a.scalar and not named:
            out.append(f"the quaternion was written scalar-{c.scalar} but read scalar-{a.scalar}")
        if c.algebra != a.algebra:
            nm = {"hamilton": "Hamilton (ij = k)", "jpl": "JPL (ij = -k)"}
            out.append(f"the quaternion follows the {nm[c.algebra]} algebra but was read as {nm[a.algebra]}")
    elif rk == "euler":
        if c.sequence != a.sequence or c.axes != a.axes:
            if c.sequence != a.sequence and c.axes != a.axes:
                out.append(f"the Euler angles are {c.sequence} {c.axes} but were read as {a.sequence} {a.axes}")
            elif c.sequence != a.sequence:
                out.append(f"the Euler sequence is {c.sequence} but was read as {a.sequence}")
            else:
                out.append(f"the Euler angles are {c.axes} (about the {'moving' if c.intrinsic else 'fixed'} axes) "
                           f"but were read as {a.axes}")
        if c.unit != a.unit:
            out.append(f"the angles were written in {c.unit} but read as {a.unit}")
    elif rk == "rotation-vector":
        if c.unit != a.unit:
            out.append(f"the rotation vector's length is in {c.unit} but was read as {a.unit}")
    elif interp.kind in ("matrix", "transform"):
        if c.layout != a.layout:
            words = {"row-major": "row by row", "column-major": "column by column"}
            out.append(f"the matrix was written {words[c.layout]} ({c.layout}) but read {words[a.layout]}")
    return out


def _deviation_count(interp, assumed, assumed_kind, named) -> int:
    c = interp.convention
    a = assumed
    n = 0
    if not named and interp.position_first is False:
        n += 1
    rk = interp.rotation_kind
    ak = assumed_kind.replace("position-", "")
    if not named and rk != ak:
        n += 1
    fields = interp.fields()
    for k, v in fields.items():
        if k == "scalar" and named:
            continue
        if getattr(a, k) != v:
            n += 1
    return n


def _assumed_reading(assumed: Convention, kind: str, count: int) -> str:
    if kind in ("matrix", "transform"):
        fake = Interpretation(kind, assumed, np.eye(3), None, 1.0, (), True, count)
    else:
        fake = Interpretation(kind, assumed, np.eye(3), np.zeros(3) if "position" in kind else None, 1.0, (),
                              True, count)
    return fake.describe()


def _relation_sentence(relation: str, has_translation: bool) -> str | None:
    if relation == "rotation-transposed":
        if has_translation:
            return ("the rotation is transposed (active/passive or the inverse rotation) while the translation "
                    "is not")
        return "the rotation is the inverse (transpose) of the expected one: passive vs active, or child-from-parent"
    if relation == "inverse":
        return "the pose is the inverse transform (child-from-parent instead of parent-from-child)"
    return None


def _frame_sentence(frame: str) -> str | None:
    if frame == "child-axes":
        return "the translation is expressed in the child frame's axes instead of the parent's"
    if frame == "inverse-translation":
        return "the translation is that of the inverse transform (the parent origin seen from the child)"
    return None


def _scale_sentence(s: float) -> str | None:
    if s == 1e-3:
        return "the translation was written in millimetres but read as metres"
    if s == 1e3:
        return "the translation was written in metres but read as millimetres"
    return None


def _sentence(parts: list[str]) -> str:
    if not parts:
        return "The numbers match the expected pose as read: no convention error found."
    text = parts[0] if len(parts) == 1 else ", ".join(parts[:-1]) + ", and " + parts[-1]
    return text[0].upper() + text[1:] + "."


def _fmt_matrix(m) -> str:
    return "np.array([" + ", ".join("[" + ", ".join(f"{v:g}" for v in row) + "]" for row in m) + "])"


def _snippet(interp: Interpretation, relation: str, p: np.ndarray, q: np.ndarray, frame: str, scale: float,
             has_t: bool) -> str:
    nums = ", ".join(repr(float(v)) for v in interp.numbers)
    lines = ["import numpy as np", "import posekit as pk", "", f"numbers = [{nums}]"]
    plain = (np.array_equal(p, np.eye(3)) and np.array_equal(q, np.eye(3)) and frame == "parent"
             and scale == 1.0)
    read = interp.code("numbers")
    if plain and relation != "as-is" and interp.rotation_kind in ("quaternion", "euler", "rotation-vector") \
            and "nearest" not in read:
        extra = "action=passive" if relation == "rotation-transposed" else "direction=child-from-parent"
        conv = (interp.convention_text() + " " + extra).strip()
        if relation == "inverse" and has_t:
            rk = "position-quaternion" if interp.rotation_kind == "quaternion" else "position-euler"
            if interp.kind.startswith("position-") and interp.rotation_kind != "rotation-vector":
                order = "np.ravel(numbers)" if interp.position_first else \
                    f"np.r_[np.ravel(numbers)[-3:], np.ravel(numbers)[:{interp.count - 3}]]"
                norm = ", normalise=True" if "normalise=True" in read else ""
                lines.append(f'T = pk.read_transform({order}, "{rk}", "{conv}"{norm})')
                lines.append("R, t = T[:3, :3], T[:3, 3]")
                return "\n".join(lines)
        if relation == "rotation-transposed" or not has_t:
            lines.append(read.replace(f'"{interp.convention_text()}"', f'"{conv}"') if interp.convention_text()
                         else read.replace(f'"{interp.rotation_kind}"', f'"{interp.rotation_kind}", "{conv}"'))
            return "\n".join(lines)
    lines.append(read)
    if not has_t:
        lines = [ln for ln in lines if not ln.startswith("t = ")]
    if not np.array_equal(p, np.eye(3)) or not np.array_equal(q, np.eye(3)):
        lines.append(f"P = {_fmt_matrix(p)}  # parent remap, p_observed = P p_expected")
        lines.append(f"Q = {_fmt_matrix(q)}  # child remap, p_expected_child = Q p_observed_child")
        lines.append("R = P.T @ R @ Q.T")
        if has_t:
            lines.append("t = P.T @ t")
    if has_t and scale != 1.0:
        lines.append(f"t = t * {scale:g}  # " + ("millimetres -> metres" if scale < 1 else "metres read as mm"))
    if has_t and frame == "child-axes":
        lines.append("t = R @ t  # the translation was in the child frame's axes")
    elif has_t and frame == "inverse-translation":
        lines.append("t = -R @ t  # the translation was the inverse transform's")
    if relation == "rotation-transposed":
        lines.append("R = R.T")
    elif relation == "inverse":
        lines.append("R, t = R.T, -R.T @ t" if has_t else "R = R.T")
    return "\n".join(lines)


def _angles(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Geodesic angle between (..., 3, 3) orthogonal matrices (either may be improper).

    Proper relative matrix: posekit's atan2 form through the quaternion (accurate near
    0 and pi, common practice).  Improper (a mirror cannot be a rotation residual): the
    trace formula clipped, which is >= 90 degrees.
    """
    rel = np.swapaxes(a, -1, -2) @ b
    det = np.einsum("...i,...i->...", rel[..., 0, :], np.cross(rel[..., 1, :], rel[..., 2, :]))
    proper = det > 0
    out = np.empty(rel.shape[:-2])
    if np.any(proper):
        q = rot.quaternion_of_matrix(rel[proper])
        out[proper] = 2.0 * np.arctan2(np.sqrt(np.sum(q[..., 1:] ** 2, axis=-1)), np.abs(q[..., 0]))
    if np.any(~proper):
        tr = np.trace(rel[~proper], axis1=-2, axis2=-1)
        out[~proper] = np.arccos(np.clip((tr - 1) / 2, -1, 1))
    return out


def _observed_interpretations(observed):
    parsed = None
    if isinstance(observed, ParsedNumbers):
        parsed = observed
    elif isinstance(observed, str):
        parsed = parse_numbers(observed)
    if parsed is not None:
        return parsed, tuple(i for i in parsed.require_interpretations() if i.kind != "position"), bool(parsed.names)
    if isinstance(observed, Pose):
        observed = observed.matrix
    arr = as_numbers(observed, "observed numbers", None)
    shape = arr.shape
    interps = interpret_numbers(arr.reshape(-1), shape)
    return None, interps, False


def diagnose(expected, observed, *, assumed=None, assumed_kind: str | None = None,
             expected_kind: str | None = None, expected_convention=None, reflections: bool = False,
             rotation_tolerance: float = math.radians(0.5), translation_tolerance: float = 0.005,
             limit: int = 5) -> Diagnosis:
    """Rank explanations of how the observed numbers came from the expected pose.

    ``expected``: anything :func:`expected_pose` takes (with ``expected_kind`` and
    ``expected_convention``), e.g. a description ``"yawed 30 degrees left, 1 m up"``.
    ``observed``: pasted text, a :class:`~posekit.analysis.parse.ParsedNumbers`, or
    numbers (3, 4, 6, 7, 9, 12 or 16 of them, any nesting).  ``assumed``: the
    convention you read the observed numbers with (default: ``expected_convention``,
    else posekit's default); ``assumed_kind`` the kind you read them as (default by
    count).  ``reflections=True`` adds the 24 improper remaps.  Tolerances are the
    noise scales of the cost (radians, metres).  Scoring is vectorised: the rotation
    residual of every (reading, relation, parent remap, child remap) comes from one
    stacked product of the flattened matrices (``<M, P R Q>_F``), the translation
    residual of every (reading, length unit, relation, frame, parent remap) from one
    broadcast; the lowest total costs are then found exactly without forming the full
    grid (see ``_best_separable``), re-scored with the exact geodesic angle, grouped
    and ranked.  Returns the best ``limit`` groups.

    >>> d = diagnose([0.2, 0.1, -0.3], "-0.1534, 0.0343, 0.1060, 0.9819",
    ...              expected_kind="euler")   # yaw-pitch-roll radians; the quaternion logged scalar-last
    >>> d.best.sentence
    'The quaternion was written scalar-last but read scalar-first.'
    """
    exp = expected_pose(expected, expected_kind, expected_convention)
    if exp.rotation.ndim != 2:
        raise WrongShapeError("diagnose: the expected pose must be a single pose; use diagnose_batch for many")
    parsed, interps, named = _observed_interpretations(observed)
    if not interps:
        raise NoInterpretationError("diagnose: the observed numbers hold no rotation to compare")
    count = interps[0].count
    assumed_conv = as_convention(assumed if assumed is not None else expected_convention)
    akind = assumed_kind or (interps[0].kind if named else _default_kind(count)[0])
    remaps = axis_remaps(reflections)
    n_remap = len(remaps)
    r_e = exp.rotation
    has_t = exp.translation is not None and interps[0].translation is not None
    notes = []
    if exp.translation is not None and interps[0].translation is None:
        notes.append("the observed numbers hold no translation; only the rotation is compared")
    if exp.translation is None and interps[0].translation is not None:
        notes.append("the expected pose has no translation; only the rotation is compared")
    if parsed is not None:
        notes += list(parsed.notes)

    k_count = len(interps)
    obs = np.stack([i.rotation for i in interps])                       # (K, 3, 3)
    dev = np.array([_deviation_count(i, assumed_conv, akind, named) for i in interps], dtype=float)
    # rotation predictions S[x, p, q] = P_p X(R_e) P_q  -> residual via <M, S>_F in one matmul
    base = np.stack([r_e, r_e.T])                                        # (2, 3, 3)
    pred = np.ascontiguousarray(np.einsum("pab,xbc,qcd->xpqad", remaps, base, remaps).reshape(-1, 9))
    obs9 = np.ascontiguousarray(obs.reshape(k_count, 9))
    # einsum, not BLAS: for these small products waking BLAS threads costs more than the sum
    g = np.einsum("kj,hj->kh", obs9, pred)                               # (K, 2*NP*NQ)
    m2 = np.sum(obs9 * obs9, axis=1)
    chord2 = np.maximum(m2[:, None] + 3.0 - 2.0 * g, 0.0)               # |M - S|_F^2
    # |M - S|_F^2 = 8 sin^2(theta/2), so chord^2 / 2 = theta^2 (1 + O(theta^2)): the short list is
    # picked on this proxy, then re-ranked on the exact geodesic angle
    rot_cost = (0.25 * chord2 / rotation_tolerance ** 2).reshape(k_count, 2, n_remap, n_remap)
    c_remap = _remap_cost(remaps)
    prior_rot = PRIOR_WEIGHT * (c_remap[:, None] + c_remap[None, :])     # (NP, NQ)
    if has_t:
        t_e = exp.translation
        rels = []
        for rel in _RELATIONS:
            r1 = r_e if rel == "as-is" else r_e.T
            t1 = -r_e.T @ t_e if rel == "inverse" else t_e
            rels.append([t1, r1.T @ t1, -r1.T @ t1])
        v = np.array(rels)                                               # (X3, F3, 3)
        pt = np.einsum("pab,xfb->xfpa", remaps, v)                       # (X, F, NP, 3)
        t_obs = np.stack([i.translation for i in interps])               # (K, 3)
        # |s t - P v|^2 = s^2 |t|^2 - 2 s t.(P v) + |v|^2  (|P v| = |v|); exact values for the short list below
        sc = np.array(_SCALES)
        dot = np.einsum("ka,xfpa->kxfp", t_obs, pt)                      # (K, X, F, NP)
        tt = np.sum(t_obs * t_obs, axis=1)
        vv = np.sum(v * v, axis=-1)                                      # (X, F)
        sq = (sc[None, :, None, None, None] ** 2 * tt[:, None, None, None, None]
              - 2.0 * sc[None, :, None, None, None] * dot[:, None] + vv[None, None, :, :, None])
        t_cost = 0.5 * np.maximum(sq, 0.0) / translation_tolerance ** 2    # (K, S, X, F, NP)
        prior_t = PRIOR_WEIGHT * (np.array([0, 1, 1.0])[:, None, None] + np.array([0, 1, 1.0])[None, :, None]
                                  + np.array([0, 1, 1.0])[None, None, :])  # (S, X, F): each non-default is 1
        xr = np.array([0, 1, 1])
        a_rot = rot_cost + prior_rot[None, None] + PRIOR_WEIGHT * dev[:, None, None, None]   # (K, 2, P, Q)
        b_full = t_cost + prior_t[None, :, :, :, None]                                       # (K, S, X, F, P)
        n_scored = int(k_count * len(_RELATIONS) * n_remap * n_remap * len(_SCALES) * len(_FRAMES))
        top_n = max(64, 12 * limit)
        combos, flat_cost = _best_separable(a_rot, b_full, top_n, xr)
    else:
        total = rot_cost + prior_rot[None, None] + PRIOR_WEIGHT * (dev[:, None, None, None]
                                                                   + np.array([0, 1.0])[None, :, None, None])
        n_scored = int(total.size)
        top_n = max(64, 12 * limit)
        combos, flat_cost = _best_dense(total, top_n)
    idx = np.arange(len(flat_cost))

    # precise residuals and corrected poses for the short list, vectorised
    if has_t:
        k_i, s_i, x_i, f_i, p_i, q_i = combos.T
    else:
        k_i, x_i, p_i, q_i = combos.T
        s_i = np.zeros_like(k_i)
        f_i = np.zeros_like(k_i)
    xr_i = x_i if not has_t else np.array([0, 1, 1])[x_i]
    pm, qm = remaps[p_i], remaps[q_i]
    m_obs = obs[k_i]
    predicted = pm @ base[xr_i] @ qm
    rres = _angles(m_obs, predicted)
    n_mat = np.swapaxes(pm, -1, -2) @ m_obs @ np.swapaxes(qm, -1, -2)
    corr_r = np.where((xr_i > 0)[:, None, None], np.swapaxes(n_mat, -1, -2), n_mat)
    if has_t:
        tres = np.sqrt(np.sum((t_obs[k_i] * sc[s_i][:, None] - pt[x_i, f_i, p_i]) ** 2, axis=-1))
        u = np.einsum("nba,nb->na", pm, t_obs[k_i] * np.array(_SCALES)[s_i][:, None])
        tprime = np.where((f_i == 1)[:, None], np.einsum("nab,nb->na", n_mat, u),
                          np.where((f_i == 2)[:, None], -np.einsum("nab,nb->na", n_mat, u), u))
        corr_t = np.where((x_i == 2)[:, None], -np.einsum("nba,nb->na", n_mat, tprime), tprime)
        cost = (0.5 * (rres / rotation_tolerance) ** 2 + 0.5 * (tres / translation_tolerance) ** 2
                + flat_cost - (rot_cost[k_i, xr[x_i], p_i, q_i] + t_cost[k_i, s_i, x_i, f_i, p_i]))
    else:
        tres = np.zeros(len(idx))
        corr_t = None
        cost = 0.5 * (rres / rotation_tolerance) ** 2 + flat_cost - rot_cost[k_i, x_i, p_i, q_i]
    order = np.argsort(cost, kind="stable")

    # group hypotheses whose residuals agree to EQUIVALENT
    groups: list[list[int]] = []
    for j in order:
        for g_ in groups:
            h = g_[0]
            if abs(rres[j] - rres[h]) <= EQUIVALENT and abs(tres[j] - tres[h]) <= EQUIVALENT:
                g_.append(j)
                break
        else:
            groups.append([j])
    # representative: fewest deviations in the group (prior), then the listed order
    prior_only = cost - 0.5 * (rres / rotation_tolerance) ** 2 - (0.5 * (tres / translation_tolerance) ** 2
                                                                   if has_t else 0.0)
    explanations = []
    best_r, best_t = None, None
    for rank, g_ in enumerate(groups[:limit], start=1):
        g_sorted = sorted(g_, key=lambda j: (prior_only[j], cost[j]))
        rep = g_sorted[0]

        def words(j):
            interp = interps[k_i[j]]
            parts = _reading_deviations(interp, assumed_conv, akind, named)
            rel = _RELATIONS[x_i[j]] if has_t else ("as-is", "rotation-transposed")[x_i[j]]
            s = _relation_sentence(rel, has_t)
            if s:
                parts.append(s)
            if not np.array_equal(pm[j], np.eye(3)):
                parts.append(f"the parent frame's axes are remapped: {_remap_words(pm[j])}")
            if not np.array_equal(qm[j], np.eye(3)):
                parts.append(f"the child frame's axes are remapped: {_remap_words(qm[j].T)}")
            if has_t:
                for s in (_frame_sentence(_FRAMES[f_i[j]]), _scale_sentence(_SCALES[s_i[j]])):
                    if s:
                        parts.append(s)
            return _sentence(parts), rel

        sentence, rel = words(rep)
        others = [words(j)[0] for j in g_sorted[1:]]
        equivalents = tuple(dict.fromkeys(w for w in others if w != sentence))
        interp = interps[k_i[rep]]
        cr = corr_r[rep]
        ct = None if corr_t is None else corr_t[rep]
        improper = bool(np.linalg.det(pm[rep]) * np.linalg.det(qm[rep]) < 0 or np.linalg.det(cr) < 0)
        nums = _corrected_numbers(cr, ct, akind, assumed_conv, improper)
        code = _snippet(interp, rel, pm[rep], qm[rep], _FRAMES[f_i[rep]], _SCALES[s_i[rep]], has_t)
        if best_r is None:
            best_r, best_t, best_cost = rres[rep], tres[rep], cost[rep]
            near = False
        else:
            near = bool((abs(rres[rep] - best_r) < rotation_tolerance
                         and (not has_t or abs(tres[rep] - best_t) < translation_tolerance))
                        or cost[rep] - best_cost < PRIOR_WEIGHT)
        explanations.append(Explanation(
            rank, sentence, float(rres[rep]), float(tres[rep]) if has_t else None, float(cost[rep]),
            round(float(prior_only[rep] / PRIOR_WEIGHT), 6) + 0.0, interp, rel, pm[rep].copy(), qm[rep].copy(),
            _FRAMES[f_i[rep]], float(_SCALES[s_i[rep]]), cr.copy(), None if ct is None else ct.copy(), nums,
            code, equivalents, near, improper,
            tuple(_member(interps[k_i[j]], (_RELATIONS[x_i[j]] if has_t else ("as-is", "rotation-transposed")[x_i[j]]),
                          pm[j], qm[j], _FRAMES[f_i[j]], _SCALES[s_i[j]]) for j in g_sorted)))
    if len(explanations) > 1 and explanations[1].near_tie:
        first = explanations[0]
        explanations[0] = Explanation(**{**first.__dict__, "near_tie": True})
    if not reflections and np.any(np.linalg.det(obs) < 0):
        notes.append("the observed 3x3 block is a reflection (det -1); rerun with reflections to score "
                     "handedness flips")
    return Diagnosis(tuple(explanations), n_scored, assumed_conv, _assumed_reading(assumed_conv, akind, count),
                     exp, parsed, PRIOR_TEXT, tuple(notes))


def _best_dense(total: np.ndarray, top_n: int):
    """The ``top_n`` smallest entries of a cost array: (index rows (M, ndim), costs (M,)), sorted."""
    flat = total.reshape(-1)
    top_n = min(top_n, flat.size)
    idx = np.argpartition(flat, top_n - 1)[:top_n]
    idx = idx[np.argsort(flat[idx], kind="stable")]
    return np.array(np.unravel_index(idx, total.shape)).T, flat[idx]


def _best_separable(a_rot: np.ndarray, b_full: np.ndarray, top_n: int, xmap: np.ndarray):
    """Exact ``top_n`` of ``A[k, xmap[x], p, q] + B[k, s, x, f, p]`` without forming the full sum.

    Given ``(k, x, p)`` the two parts are independent, so the cell's best cost is
    ``min_q A + min_{s,f} B``.  The ``top_n``-th smallest cell best ``T`` bounds the
    ``top_n``-th best hypothesis, and every hypothesis costing <= T lies in a cell whose
    best is <= T: only those cells are expanded.  Rows are ``(k, s, x, f, p, q)``.
    """
    k_n, _, p_n, q_n = a_rot.shape
    _, s_n, x_n, f_n, _ = b_full.shape
    b_cells = np.transpose(b_full, (0, 2, 4, 1, 3)).reshape(k_n, x_n, p_n, s_n * f_n)   # (K, X, P, S*F)
    lower = a_rot.min(axis=-1)[:, xmap] + b_cells.min(axis=-1)                           # (K, X, P)
    flat_lb = lower.reshape(-1)
    n = min(top_n, flat_lb.size)
    bound = np.partition(flat_lb, n - 1)[n - 1]
    cells = np.flatnonzero(flat_lb <= bound)
    kk, xx, pp = np.unravel_index(cells, lower.shape)
    sub = b_cells[kk, xx, pp][:, :, None] + a_rot[kk, xmap[xx], pp][:, None, :]          # (C, S*F, Q)
    flat = sub.reshape(-1)
    m = min(top_n, flat.size)
    idx = np.argpartition(flat, m - 1)[:m]
    idx = idx[np.argsort(flat[idx], kind="stable")]
    c, sf, q = np.unravel_index(idx, sub.shape)
    s_i, f_i = np.divmod(sf, f_n)
    rows = np.stack([kk[c], s_i, xx[c], f_i, pp[c], q], axis=1)
    return rows, flat[idx]


def _member(interp: Interpretation, relation: str, p: np.ndarray, q: np.ndarray, frame: str, scale: float) -> dict:
    return {"reading": interp.convention_text(), "kind": interp.kind, "position_first": interp.position_first,
            "relation": relation, "parent_remap": np.asarray(p).astype(int).tolist(),
            "child_remap": np.asarray(q).astype(int).tolist(), "translation_frame": frame,
            "length_scale": float(scale)}


def _corrected_numbers(r, t, kind: str, conv: Convention, improper: bool) -> tuple[float, ...]:
    if improper or np.linalg.det(r) < 0:
        vals = list(np.ravel(r))
    elif kind in ("matrix", "transform"):
        vals = list(write_rotation(r, "matrix", conv.changed(direction="parent-from-child"), flat=True, check=False))
    else:
        rk = kind.replace("position-", "")
        vals = list(write_rotation(r, rk, conv.changed(direction="parent-from-child"), check=False))
    if t is not None:
        vals = list(t) + vals if kind != "transform" else vals + list(t)
    return tuple(float(round(v, 12)) for v in vals)


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
    """Batch result: ``explanations`` as for one pair (costs summed over the pairs),
    ``rotation_residuals (N,)`` and ``translation_residuals (N,)`` of the best one,
    ``statistics`` (median, rms, max per residual), ``consistent`` (the best fits every
    pair within tolerance), and ``offset`` (a :class:`ConstantOffset`, fitted when no
    single convention error is consistent, else None)."""

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

    @property
    def best(self) -> Explanation:
        return self.explanations[0]

    def summary(self) -> str:
        lines = [f"{self.pairs} pairs; scored {self.hypotheses_scored} hypotheses, each against every pair"]
        lines += [f"note: {n}" for n in self.notes]
        for e in self.explanations:
            lines.append(f"{e.rank}. {e.sentence}" + ("  [near tie]" if e.near_tie else ""))
            if e.equivalents:
                more = f" (and {len(e.equivalents) - 2} more)" if len(e.equivalents) > 2 else ""
                lines.append("   indistinguishable from these pairs: " + " | ".join(e.equivalents[:2]) + more)
        s = self.statistics
        lines.append(f"best explanation, rotation residual per pair: median {s['rotation_median_degrees']:.4g}, "
                     f"rms {s['rotation_rms_degrees']:.4g}, max {s['rotation_max_degrees']:.4g} degrees")
        if self.translation_residuals is not None:
            lines.append(f"translation residual per pair: median {s['translation_median']:.4g}, rms "
                         f"{s['translation_rms']:.4g}, max {s['translation_max']:.4g} m")
        lines.append("consistent with every pair" if self.consistent else "no single convention error fits every pair")
        if self.offset is not None:
            lines.append("constant offset: " + self.offset.sentence)
        return "\n".join(lines)

    def as_dict(self) -> dict:
        out = {"pairs": self.pairs, "hypotheses_scored": self.hypotheses_scored, "consistent": self.consistent,
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


def diagnose_batch(expected, observed, *, assumed=None, assumed_kind: str | None = None,
                   expected_kind: str | None = None, expected_convention=None, reflections: bool = False,
                   rotation_tolerance: float = math.radians(0.5), translation_tolerance: float = 0.005,
                   snap_tolerance: float = math.radians(2.0), limit: int = 5) -> BatchDiagnosis:
    """The single convention error consistent with N pairs, or a constant offset.

    ``expected``: ``(N, 4, 4)`` / ``(N, 3, 3)`` canonical poses, an
    :class:`ExpectedPose` batch, or ``(N, n)`` numbers read with ``expected_kind`` and
    ``expected_convention``.  ``observed``: ``(N, n)`` raw numbers (n = 3, 4, 6, 7, 9,
    12 or 16).  The same hypothesis space as :func:`diagnose`; the score of a
    hypothesis sums, over the pairs, ``0.5 chordal^2 / tolerance^2`` (chordal angle
    from ``|M - P R Q|_F``, computed for every ``(P, Q)`` at once from one 9x9
    cross-covariance per reading) and the translation squared error (closed form from
    3x3 sums), plus the prior once.  When the best explanation does not fit every pair
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
    if isinstance(expected, ExpectedPose):
        exp = expected
    else:
        arr = as_numbers(expected, "expected poses", None)
        if expected_kind is None and arr.shape[-2:] in ((4, 4), (3, 3)) and arr.ndim == 3:
            if arr.shape[-1] == 4:
                exp = ExpectedPose(arr[:, :3, :3], arr[:, :3, 3], "transforms")
            else:
                exp = ExpectedPose(arr, None, "rotations")
        else:
            exp = expected_pose(arr, expected_kind, expected_convention)
    r_e = checked_matrix(exp.rotation).reshape(-1, 3, 3)
    n_pairs = r_e.shape[0]
    obs_arr = as_numbers(observed, "observed numbers", None)
    if obs_arr.ndim == 3:
        obs_arr = obs_arr.reshape(obs_arr.shape[0], -1)
    if obs_arr.ndim != 2 or obs_arr.shape[0] != n_pairs:
        raise WrongShapeError(f"diagnose_batch: observed numbers have shape {obs_arr.shape}; expected "
                              f"({n_pairs}, n), one row per expected pose")
    interps = interpret_numbers(obs_arr)
    count = obs_arr.shape[1]
    assumed_conv = as_convention(assumed if assumed is not None else expected_convention)
    akind = assumed_kind or _default_kind(count)[0]
    remaps = axis_remaps(reflections)
    n_remap = len(remaps)
    k_count = len(interps)
    has_t = exp.translation is not None and interps[0].translation is not None
    notes = []
    if exp.translation is not None and not has_t:
        notes.append("the observed numbers hold no translation; only rotations are compared")
    dev = np.array([_deviation_count(i, assumed_conv, akind, False) for i in interps], dtype=float)
    obs = np.stack([i.rotation for i in interps])                       # (K, N, 3, 3)
    m9 = obs.reshape(k_count, n_pairs, 9)
    r9 = np.stack([r_e.reshape(n_pairs, 9), np.swapaxes(r_e, -1, -2).reshape(n_pairs, 9)])  # (2, N, 9)
    # W[k, x, (b, c), (a, d)] = sum_i R_i[b, c] M_i[a, d]: one BLAS call per reading
    w = np.einsum("xnj,knl->kxjl", r9, m9, optimize=True).reshape(k_count, 2, 3, 3, 3, 3)
    # sum_i <M_i, P R_i Q> = sum P_ab R_bc Q_cd M_ad
    z = np.einsum("pab,kxbcad->kxpcd", remaps, w, optimize=True)
    g = np.einsum("qcd,kxpcd->kxpq", remaps, z, optimize=True)          # (K, 2, NP, NQ)
    m2 = np.sum(m9 * m9, axis=(1, 2))
    chord2 = np.maximum(m2[:, None, None, None] + 3.0 * n_pairs - 2.0 * g, 0.0)
    rot_cost = 0.5 * (chord2 / 2.0) / rotation_tolerance ** 2          # chordal^2 / 2 ~ theta^2 when small
    c_remap = _remap_cost(remaps)
    prior_rot = PRIOR_WEIGHT * (c_remap[:, None] + c_remap[None, :])
    if has_t:
        t_e = exp.translation.reshape(-1, 3)
        vs = []
        for rel in _RELATIONS:
            r1 = r_e if rel == "as-is" else np.swapaxes(r_e, -1, -2)
            t1 = -np.einsum("nba,nb->na", r_e, t_e) if rel == "inverse" else t_e
            vs.append([t1, np.einsum("nba,nb->na", r1, t1), -np.einsum("nba,nb->na", r1, t1)])
        v = np.array(vs)                                                 # (X, F, N, 3)
        t_obs = np.stack([i.translation for i in interps])               # (K, N, 3)
        c = np.einsum("kna,xfnb->kxfab", t_obs, v)                       # sum_i t_i v_i^T
        cross = np.einsum("pab,kxfab->kxfp", remaps, c)                  # sum_i t_i . P v_i
        tt = np.sum(t_obs * t_obs, axis=(1, 2))                          # (K,)
        vv = np.sum(v * v, axis=(2, 3))                                  # (X, F)
        sc = np.array(_SCALES)
        sse = (sc[None, :, None, None, None] ** 2 * tt[:, None, None, None, None]
               - 2 * sc[None, :, None, None, None] * cross[:, None]
               + vv[None, None, :, :, None])                             # (K, S, X, F, NP)
        t_cost = 0.5 * np.maximum(sse, 0.0) / translation_tolerance ** 2
        prior_t = PRIOR_WEIGHT * (np.array([0, 1, 1.0])[:, None, None] + np.array([0, 1, 1.0])[None, :, None]
                                  + np.array([0, 1, 1.0])[None, None, :])
        xr = np.array([0, 1, 1])
        a_rot = rot_cost + prior_rot[None, None] + PRIOR_WEIGHT * dev[:, None, None, None]
        b_full = t_cost + prior_t[None, :, :, :, None]
        n_scored = int(k_count * len(_RELATIONS) * n_remap * n_remap * len(_SCALES) * len(_FRAMES))
        combos, flat_cost = _best_separable(a_rot, b_full, max(32, 8 * limit), xr)
    else:
        total = rot_cost + prior_rot[None, None] + PRIOR_WEIGHT * (dev[:, None, None, None]
                                                                   + np.array([0, 1.0])[None, :, None, None])
        n_scored = int(total.size)
        combos, flat_cost = _best_dense(total, max(32, 8 * limit))
    # per-pair precise residuals for the short list
    results = []
    angle_cache: dict = {}
    for row, cst in zip(combos, flat_cost):
        if has_t:
            k, s, x, f, p, q = row
            xr_ = [0, 1, 1][x]
        else:
            k, x, p, q = row
            s = f = 0
            xr_ = x
        pm, qm = remaps[p], remaps[q]
        key = (int(k), int(xr_), int(p), int(q))
        if key not in angle_cache:
            base = r_e if xr_ == 0 else np.swapaxes(r_e, -1, -2)
            angle_cache[key] = _angles(obs[k], pm @ base @ qm)
        rr = angle_cache[key]
        if has_t:
            pred_t = v[x, f] @ pm.T
            tr = np.sqrt(np.sum((t_obs[k] * _SCALES[s] - pred_t) ** 2, axis=-1))
        else:
            tr = None
        prior = cst - (rot_cost[k, xr_, p, q] + (t_cost[k, s, x, f, p] if has_t else 0.0))
        exact = float(np.sum(0.5 * (rr / rotation_tolerance) ** 2)
                      + (np.sum(0.5 * (tr / translation_tolerance) ** 2) if has_t else 0.0) + prior)
        results.append((exact, prior, int(k), int(s), int(x), int(f), int(p), int(q), rr, tr))
    results.sort(key=lambda r: r[0])
    groups: list[list] = []
    for r in results:
        for g_ in groups:
            h = g_[0]
            if np.max(np.abs(r[8] - h[8])) <= EQUIVALENT and (r[9] is None or np.max(np.abs(r[9] - h[9])) <= EQUIVALENT):
                g_.append(r)
                break
        else:
            groups.append([r])
    explanations = []
    for rank, g_ in enumerate(groups[:limit], start=1):
        g_sorted = sorted(g_, key=lambda r: (r[1], r[0]))
        rep = g_sorted[0]

        def words(r):
            _, _, k, s, x, f, p, q, _, _ = r
            parts = _reading_deviations(interps[k], assumed_conv, akind, False)
            rel = _RELATIONS[x] if has_t else ("as-is", "rotation-transposed")[x]
            st = _relation_sentence(rel, has_t)
            if st:
                parts.append(st)
            if p != 0:
                parts.append(f"the parent frame's axes are remapped: {_remap_words(remaps[p])}")
            if q != 0:
                parts.append(f"the child frame's axes are remapped: {_remap_words(remaps[q].T)}")
            if has_t:
                for st in (_frame_sentence(_FRAMES[f]), _scale_sentence(_SCALES[s])):
                    if st:
                        parts.append(st)
            return _sentence(parts), rel

        sentence, rel = words(rep)
        others = [words(r)[0] for r in g_sorted[1:]]
        equivalents = tuple(dict.fromkeys(w for w in others if w != sentence))
        _, prior, k, s, x, f, p, q, rr, tr = rep
        interp = interps[k]
        explanations.append(Explanation(
            rank, sentence, float(np.sqrt(np.mean(rr * rr))), None if tr is None else float(np.sqrt(np.mean(tr * tr))),
            float(rep[0]), round(float(prior / PRIOR_WEIGHT), 6) + 0.0, interp, rel, remaps[p].copy(), remaps[q].copy(),
            _FRAMES[f], float(_SCALES[s]), np.eye(3), None, (),
            _batch_snippet(_snippet(_one_row(interp), rel, remaps[p], remaps[q], _FRAMES[f], _SCALES[s], has_t)),
            equivalents, False, bool(np.linalg.det(remaps[p]) * np.linalg.det(remaps[q]) < 0),
            tuple(_member(interps[r[2]], (_RELATIONS[r[4]] if has_t else ("as-is", "rotation-transposed")[r[4]]),
                          remaps[r[6]], remaps[r[7]], _FRAMES[r[5]], _SCALES[r[3]]) for r in g_sorted)))
    best_rr, best_tr = groups[0][0][8], groups[0][0][9]
    for e_i in range(1, len(explanations)):
        g0, gi = groups[0][0], groups[e_i][0]
        near = bool((abs(np.sqrt(np.mean(gi[8] ** 2)) - np.sqrt(np.mean(g0[8] ** 2))) < rotation_tolerance
                     and (gi[9] is None or abs(np.sqrt(np.mean(gi[9] ** 2)) - np.sqrt(np.mean(g0[9] ** 2)))
                          < translation_tolerance))
                    or gi[0] - g0[0] < PRIOR_WEIGHT)
        explanations[e_i] = Explanation(**{**explanations[e_i].__dict__, "near_tie": near})
        if near:
            explanations[0] = Explanation(**{**explanations[0].__dict__, "near_tie": True})
    consistent = bool(np.max(best_rr) <= 3 * rotation_tolerance
                      and (best_tr is None or np.max(best_tr) <= 3 * translation_tolerance))
    offset = None
    if not consistent:
        offset = _fit_offset(r_e, exp.translation if has_t else None, interps, assumed_conv, akind, remaps,
                             snap_tolerance, has_t, rotation_tolerance)
    return BatchDiagnosis(tuple(explanations), n_scored, n_pairs, best_rr, best_tr,
                          _stats(best_rr, best_tr), consistent, offset, PRIOR_TEXT, tuple(notes))


def _batch_snippet(code: str) -> str:
    """Turn a one-pose snippet into one over an (N, n) array ``numbers`` (broadcasting)."""
    rep = [("numbers = []", "numbers = np.asarray(logged_numbers)  # (N, n): one pose per row"),
           ("np.ravel(numbers)", "numbers"), ("[3:]", "[..., 3:]"), ("[:3]", "[..., :3]"), ("[-3:]", "[..., -3:]"),
           ("[:4]", "[..., :4]"), ("[:3, :3]", "[..., :3, :3]"), ("[:3, 3]", "[..., :3, 3]"),
           ("P.T @ t", "t @ P"), ("-R @ t", "-np.einsum('nab,nb->na', R, t)"),
           ("R @ t  #", "np.einsum('nab,nb->na', R, t)  #"), ("R.T, -R.T @ t", "np.swapaxes(R, -1, -2), "
                                                               "-np.einsum('nba,nb->na', R, t)"),
           ("R = R.T", "R = np.swapaxes(R, -1, -2)")]
    for a, b in rep:
        code = code.replace(a, b)
    code = code.replace("np.r_[numbers[..., -3:], numbers[:", "np.concatenate([numbers[..., -3:], numbers[..., :")
    if "np.concatenate" in code:
        code = code.replace("]],", "]], axis=-1),")
    return code


def _one_row(interp: Interpretation) -> Interpretation:
    """The interpretation with placeholder numbers for a batch snippet (reads row by row)."""
    from dataclasses import replace
    return replace(interp, numbers=())


def _fit_offset(r_e, t_e, interps, assumed_conv, akind, remaps, snap_tolerance, has_t,
                rotation_tolerance) -> ConstantOffset:
    """Best constant left or right offset over every reading of the observed numbers.

    Left: ``M_i = A R_i`` maximises ``tr(A^T sum M_i R_i^T)``; right: ``M_i = R_i B``
    maximises ``tr(B^T sum R_i^T M_i)`` -- Wahba's problem, solved by the SVD with the
    det fix (Kabsch 1976), for every reading and both sides in one stacked SVD.  The
    summed chordal residual follows from the same 3x3 sums, so the choice costs no
    per-pair work; the deviations of the reading are charged as in the ranking.
    """
    m_all = np.stack([i.rotation for i in interps])                      # (K, N, 3, 3)
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
    dev = np.array([_deviation_count(i, assumed_conv, akind, False) for i in interps], dtype=float)
    cost = 0.25 * chord2 / rotation_tolerance ** 2 + PRIOR_WEIGHT * np.concatenate([dev, dev])
    best = int(np.argmin(cost))
    side = "left" if best < len(interps) else "right"
    interp = interps[best % len(interps)]
    m = interp.rotation
    a = a_all[best]
    res = _angles(m, a @ r_e if side == "left" else r_e @ a)
    trans = tres = None
    if has_t:
        t_o = interp.translation
        if side == "left":
            trans = np.mean(t_o - np.einsum("ab,nb->na", a, t_e), axis=0)
            tres = np.linalg.norm(t_o - np.einsum("ab,nb->na", a, t_e) - trans, axis=-1)
        else:
            d = np.einsum("nba,nb->na", r_e, t_o - t_e)                     # R_i^T (t_obs - t_e)
            trans = np.mean(d, axis=0)
            tres = np.linalg.norm(t_o - t_e - np.einsum("nab,b->na", r_e, trans), axis=-1)
    proper = remaps[np.linalg.det(remaps) > 0]
    ang = _angles(np.broadcast_to(a, proper.shape), proper)
    j = int(np.argmin(ang))
    # snapping to the identity would call a small mounting offset "no remap": only real remaps snap
    is_identity = bool(np.array_equal(proper[j], np.eye(3)))
    snapped = proper[j].copy() if ang[j] <= snap_tolerance and not is_identity else None
    where = "parent (left) side: observed = A expected" if side == "left" else \
        "child (right) side: observed = expected B"
    rv = np.degrees(np.linalg.norm(rot.rotvec_of_quaternion(rot.quaternion_of_matrix(a))))
    if snapped is not None:
        sentence = (f"a constant offset on the {where}, {rv:.3g} degrees, within {math.degrees(ang[j]):.3g} degrees "
                    f"of the axis remap {describe_remap(snapped if side == 'left' else snapped.T)}")
    else:
        sentence = (f"a constant offset on the {where}, a turn of {rv:.3g} degrees that is no axis remap "
                    f"(nearest remap {math.degrees(ang[j]):.3g} degrees away): a mounting or calibration offset")
    sentence += f"; read as {interp.describe()}"
    return ConstantOffset(side, a, trans, snapped, float(ang[j]), sentence, res, tres)
