"""Read a pose or a motion described in words: ``"pitched 25 degrees down, 0.3 m forward"``,
``"tilted nose up about 90 degrees, then back"``, ``"turned left in place a full turn"``.

Frame words (FLU body axes, right-handed): forward = +x, back = -x, left = +y,
right = -y, up = +z, down = -z.  Turns, each about the body's *current* axes and
applied in the order written (intrinsic): ``pitched N degrees down|up`` (down =
+N about y), ``yawed N degrees left|right`` (left = +N about z), ``rolled N
degrees right|left`` (right = +N about x, the right side going down),
``turned|rotated N degrees about [+|-]x|y|z``.  ``turned`` / ``rotated`` with a direction
word is a yaw (left, right) or a pitch (up, down); ``tilted`` with one is a pitch (up,
down: the nose) or a roll (left, right: that side going down).  The direction word may
come before or after the angle.  Angle units: degrees, deg, °, radians, rad (one is
required); or turns: ``a full turn``, ``half a turn``, ``a quarter turn``, ``N turns``.
``about``, ``around``, ``roughly``, ``approximately``, ``nearly`` or ``almost`` before an
angle marks it approximate (``about 90 degrees``; ``about x`` after an angle still names
the axis).  ``back`` right after a turn (``then back``) is that turn undone: the same axis,
the opposite way.  Moves: ``N m|cm|mm forward|back|left|right|up|down`` (the direction
word may come first), expressed in the parent frame's axes and summed.  ``level`` /
``identity`` means no turn.  Clauses are separated by commas, semicolons or
"and"/"then"; words such as "nose", "in place", "by", "again" are read over.

:func:`read_description` reads a pose (the turns composed, the moves summed);
:func:`read_motion` reads a motion: the turns one by one, in order, for comparison with a
logged stream (moves are refused there: an orientation log cannot show them).
:func:`turn_words` writes one turn in words these readers read back.

What is refused, each with a :class:`DescriptionError` that says what was wrong, where,
and what is accepted: text longer than :data:`~posekit.io.limits.PASTE_LIMIT` characters
(:class:`~posekit.io.limits.InputTooLargeError`), numbers that are not finite (``nan``,
``inf``, ``1e400``), turns beyond :data:`MAX_TURN_DEGREES` and moves beyond
:data:`MAX_DISTANCE` metres (no pose is described that way; the arithmetic would also
lose every digit), a comma between digits (``2,5 degrees``: a decimal comma is asked
about, not guessed), and characters outside ASCII other than ``°`` and blanks (a
Cyrillic ``е`` looks like ``e``; the message names its code point).

Imports numpy, the standard library and :mod:`posekit.core` only; the expected-pose
value built from it lives in :func:`posekit.analysis.pose_from_words`.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

import numpy as np

from ..core import rotation as rot
from ..core.errors import PoseInputError, excerpt, odd_characters
from .limits import PASTE_LIMIT, check_text_size
from .paste import point_at

__all__ = ["DescriptionError", "DescribedPose", "DescribedTurn", "DescribedMotion", "read_description",
           "read_motion", "turn_words", "MAX_TURN_DEGREES", "MAX_DISTANCE"]

#: The largest turn a description may state: ten full turns.
MAX_TURN_DEGREES = 3600.0
#: The largest move a description may state, in metres (1000 km).
MAX_DISTANCE = 1.0e6

_ACCEPTED = ("clauses such as 'pitched 25 degrees down', 'yawed 10 deg left', 'rolled 5 degrees right', "
             "'turned 90 degrees about z', 'turned left a full turn', 'tilted nose up about 90 degrees, then back', "
             "'0.3 m forward', '20 cm left', 'level'; frame words forward=+x, left=+y, up=+z; numbers written "
             "with a dot, e.g. 2.5")


class DescriptionError(PoseInputError):
    """A pose description in words could not be read; says which word failed and where."""


@dataclass(frozen=True, eq=False)
class DescribedPose:
    """What a description says: ``rotation (3, 3)``, ``translation (3,)`` in metres, and the ``text``."""

    rotation: np.ndarray
    translation: np.ndarray
    text: str


@dataclass(frozen=True)
class DescribedTurn:
    """One turn of a described motion, about a body axis.

    ``axis``: 0, 1, 2 for the body's x (forward), y (left), z (up) axis; ``angle``: radians,
    signed by the right-hand rule about that axis (a full turn is ``2 pi``, not 0);
    ``approximate``: the text said "about" (or a like word) before the angle; ``start`` /
    ``end``: character offsets of the clause in the description; ``undoes``: the index of
    the turn this one undoes (``then back``), else None.
    """

    axis: int
    angle: float
    approximate: bool
    start: int
    end: int
    text: str
    undoes: int | None = None

    @property
    def axis_vector(self) -> np.ndarray:
        """The body axis as a unit vector ``(3,)``."""
        return np.eye(3)[self.axis]

    @property
    def rotation_vector(self) -> np.ndarray:
        """``angle * axis`` ``(3,)``, radians."""
        return self.angle * np.eye(3)[self.axis]

    def words(self) -> str:
        """The turn in words, as :func:`turn_words` writes it (approximate ones with "about")."""
        return turn_words(self.axis, self.angle, approximate=self.approximate)


@dataclass(frozen=True, eq=False)
class DescribedMotion:
    """What a motion description says: ``turns`` in order, and the ``text``."""

    turns: tuple[DescribedTurn, ...]
    text: str

    def rotation(self) -> np.ndarray:
        """The whole motion composed (body axes, intrinsic): ``(3, 3)``."""
        r = np.eye(3)
        for t in self.turns:
            r = r @ rot.elementary_matrix("xyz"[t.axis], t.angle)
        return r

    def axes_used(self) -> tuple[int, ...]:
        """The body axes the turns are about, each once, in the order they first appear."""
        return tuple(dict.fromkeys(t.axis for t in self.turns))


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
_ABOUT_VERBS = {"turned", "rotated", "turn", "rotate", "tilted", "tilt"}
# a direction word with an about-verb: (axis, sign); FLU body axes, signs as for pitch, yaw and roll
_YAW_OR_PITCH = {"left": (2, 1.0), "right": (2, -1.0), "up": (1, -1.0), "down": (1, 1.0)}
_PITCH_OR_ROLL = {"up": (1, -1.0), "down": (1, 1.0), "left": (0, -1.0), "right": (0, 1.0)}
_ABOUT_DIRECTIONS = {"turned": _YAW_OR_PITCH, "rotated": _YAW_OR_PITCH, "turn": _YAW_OR_PITCH,
                     "rotate": _YAW_OR_PITCH, "tilted": _PITCH_OR_ROLL, "tilt": _PITCH_OR_ROLL}
_ANGLE_WORDS = {"degree": math.pi / 180, "degrees": math.pi / 180, "deg": math.pi / 180, "°": math.pi / 180,
                "radian": 1.0, "radians": 1.0, "rad": 1.0}
_TURN_UNITS = {"turn", "turns", "revolution", "revolutions"}
_FRACTIONS = {"full": 1.0, "whole": 1.0, "half": 0.5, "quarter": 0.25}
_APPROXIMATE = {"about", "around", "roughly", "approximately", "nearly", "almost"}
_LENGTH_WORDS = {"m": 1.0, "metre": 1.0, "metres": 1.0, "meter": 1.0, "meters": 1.0, "cm": 0.01,
                 "centimetres": 0.01, "centimeters": 0.01, "mm": 0.001, "millimetres": 0.001,
                 "millimeters": 0.001}
_FILLER = {"and", "then", "by", "nose", "of", "the", "a", "to", "its", "is", "it", "with", "plus", "in", "place",
           "again", "start"}
_NOT_FINITE = {"nan", "inf", "infinity"}

_NUMBER = re.compile(r"[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?")
_TOKEN = re.compile(r"[+-]?[0-9]+(?:\.[0-9]*)?(?:[eE][+-]?[0-9]+)?|[+-]?\.[0-9]+|[A-Za-z]+|°|[+-]|[,;]|\S")
_DIGIT_COMMA_DIGIT = re.compile(r"[0-9],[0-9]")
_BLANKS = " \t\r\n\f\v\u00a0\u2002\u2003\u2009\u202f"


@dataclass
class _Step:
    """One clause as read: a turn (``axis``, ``angle``) or a move (``axis``, ``distance``)."""

    what: str
    axis: int
    amount: float
    start: int
    end: int
    approximate: bool = False
    undoes: int | None = None


def _read_steps(text, limit: int, what: str, example: str) -> list[_Step]:
    """The clauses of a description, in order (the one parser behind both readers)."""
    if not isinstance(text, str):
        raise DescriptionError(f"{what}: got {type(text).__name__}; expected text such as {example!r}")
    check_text_size(text, what=what, limit=limit)

    def fail(msg, pos):
        line, column, shown = point_at(text, pos)
        raise DescriptionError(f"{what}: {msg} at line {line}, column {column} (offset {pos}):\n"
                               f"{shown}\naccepted: {_ACCEPTED}")

    odd = odd_characters(text, allowed="°" + _BLANKS)
    if odd:
        at = next(i for i, ch in enumerate(text) if not (32 <= ord(ch) < 127 or ch in "°" + _BLANKS))
        fail("characters outside plain ASCII (some only look like letters, digits or signs): " + "; ".join(odd)
             + "; write the description in plain ASCII (the ° sign may stay)", at)
    m = _DIGIT_COMMA_DIGIT.search(text)
    if m:
        lo = m.start()
        while lo > 0 and (text[lo - 1].isdigit() or text[lo - 1] == "."):
            lo -= 1
        hi = m.end()
        while hi < len(text) and text[hi].isdigit():
            hi += 1
        written = text[lo:hi]
        whole, _, frac = written.partition(",")
        fail(f"the comma in {excerpt(written, 40)} sits between digits: it reads as one number with a decimal "
             f"comma ({whole}.{frac}) or as two numbers ({whole} and {frac}), and posekit does not guess; write "
             f"decimals with a dot ({whole}.{frac}) and put a space after a comma that separates clauses", lo)

    tokens = [(m.group(0), m.start()) for m in _TOKEN.finditer(text)]
    steps: list[_Step] = []
    seen_any = False
    i = 0

    def where(j):
        return tokens[j][1] if j < len(tokens) else len(text)

    def low_at(j):
        return tokens[j][0].lower() if j < len(tokens) else ""

    def end_of(j):
        """The offset just past token ``j - 1`` (the last one read)."""
        return tokens[j - 1][1] + len(tokens[j - 1][0]) if j > 0 else 0

    def skip_filler(j):
        while j < len(tokens) and tokens[j][0].lower() in _FILLER:
            j += 1
        return j

    def number_at(j):
        """The finite number at token ``j``, None if it is no number; refuses nan, inf and overflow."""
        if j >= len(tokens):
            return None
        word, pos = tokens[j]
        if word.lower() in _NOT_FINITE:
            fail(f"{excerpt(word, 20)} is not a finite number; give the value as digits", pos)
        if not _NUMBER.fullmatch(word):
            return None
        value = float(word)
        if not math.isfinite(value):
            fail(f"{excerpt(word, 40)} is too large to be a finite number", pos)
        return value

    def angle_at(j, verb):
        """The angle phrase from token ``j``: ``(angle in radians, approximate, next token)``."""
        approximate = False
        j = skip_filler(j)
        if low_at(j) in _APPROXIMATE:
            k = skip_filler(j + 1)
            if number_at(k) is not None or low_at(k) in _FRACTIONS:
                approximate, j = True, k
        value = number_at(j)
        if value is not None:
            value_at = tokens[j][1]
            j += 1
            k = j + 1 if low_at(j) == "full" else j
            if low_at(k) in _TURN_UNITS:
                angle, unit_word, j = value * 2.0 * math.pi, tokens[k][0], k + 1
            elif low_at(j) in _ANGLE_WORDS:
                angle, unit_word, j = value * _ANGLE_WORDS[low_at(j)], tokens[j][0], j + 1
            else:
                fail("expected an angle unit (degrees or radians, or turns)", where(j))
            if abs(angle) > math.radians(MAX_TURN_DEGREES):
                fail(f"a turn of {value:g} {unit_word} is more than {MAX_TURN_DEGREES:g} degrees (ten full turns); "
                     "no pose is described that way", value_at)
            return angle, approximate, j
        if low_at(j) in _FRACTIONS:
            share = _FRACTIONS[low_at(j)]
            k = skip_filler(j + 1)
            if low_at(k) not in _TURN_UNITS:
                fail(f"expected 'turn' after {excerpt(tokens[j][0], 20)} (e.g. 'a full turn', 'half a turn')",
                     where(k))
            return share * 2.0 * math.pi, approximate, k + 1
        fail(f"expected an angle after {excerpt(verb, 40)}", where(j))

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
        if low == "back" and number_at(i + 1) is None and steps and steps[-1].what == "turn":
            last = len(steps) - 1                                 # "then back": the last turn undone
            j = i + 1
            if low_at(j) == "again":
                j += 1
            steps.append(_Step("turn", steps[last].axis, -steps[last].amount, pos, end_of(j),
                               steps[last].approximate, last))
            seen_any = True
            i = j
            continue
        if low in _TURNS or low in _ABOUT_VERBS:
            j = skip_filler(i + 1)
            direction = None
            if low_at(j) in _DIRECTIONS:  # "pitched down 25 degrees", "turned left a full turn"
                direction = low_at(j)
                j += 1
            angle, approximate, j = angle_at(j, word)
            if low in _TURNS:
                axis, signs = _TURNS[low]
                j = skip_filler(j)
                if direction is None and low_at(j) in _DIRECTIONS:
                    direction = low_at(j)
                    j += 1
                if direction is None:
                    fail(f"{excerpt(word, 40)} needs a direction word ({' or '.join(signs)})", pos)
                if direction not in signs:
                    fail(f"'{direction}' is not a direction for {excerpt(word, 40)} (use {' or '.join(signs)})", pos)
                angle *= signs[direction]
            else:
                table = _ABOUT_DIRECTIONS[low]
                k = skip_filler(j)
                if direction is None and low_at(k) in _DIRECTIONS and low_at(k) in table:
                    direction, j = low_at(k), k + 1
                if direction is not None:
                    if direction not in table:
                        fail(f"'{direction}' is not a direction for {excerpt(word, 40)} (use "
                             f"{' or '.join(table)}, or 'about x|y|z')", pos)
                    axis, sign = table[direction]
                else:
                    if low_at(j) != "about":
                        fail(f"expected 'about x|y|z' after the angle of {excerpt(word, 40)}", where(j))
                    j += 1
                    sign = 1.0
                    if j < len(tokens) and tokens[j][0] in "+-":
                        sign = -1.0 if tokens[j][0] == "-" else 1.0
                        j += 1
                    if low_at(j) not in ("x", "y", "z"):
                        fail("expected the axis x, y or z", where(j))
                    axis = "xyz".index(low_at(j))
                    j += 1
                angle *= sign
            steps.append(_Step("turn", axis, angle, pos, end_of(j), approximate))
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
                    fail(f"expected a distance after {excerpt(word, 40)}", where(j))
            value_at = tokens[j][1]
            j += 1
            if j >= len(tokens) or low_at(j) not in _LENGTH_WORDS:
                if j < len(tokens) and low_at(j) in _ANGLE_WORDS:
                    fail("an angle needs a verb (pitched, yawed, rolled, turned ... about)", pos)
                fail("expected a length unit (m, cm or mm)", where(j))
            dist = value * _LENGTH_WORDS[low_at(j)]
            if abs(dist) > MAX_DISTANCE:
                fail(f"a move of {value:g} {tokens[j][0]} is more than {MAX_DISTANCE:g} m; no pose is described "
                     "that way", value_at)
            j += 1
            if direction is None:
                if j >= len(tokens) or low_at(j) not in _DIRECTIONS:
                    fail("expected a direction word (forward, back, left, right, up, down)", where(j))
                direction = low_at(j)
                j += 1
            axis, sign = _DIRECTIONS[direction]
            steps.append(_Step("move", axis, sign * dist, pos, end_of(j)))
            seen_any = True
            i = j
            continue
        fail(f"unknown word {excerpt(word, 40)}", pos)
    if not seen_any:
        fail("nothing to read", 0)
    return steps


def read_description(text: str, *, limit: int = PASTE_LIMIT) -> DescribedPose:
    """Read a pose described in words (see the module docstring) into a rotation and a translation.

    Raises :class:`DescriptionError`, or :class:`~posekit.io.limits.InputTooLargeError` for text
    longer than ``limit`` characters.

    >>> p = read_description("pitched 90 degrees down, 0.3 m forward")
    >>> np.round(p.rotation @ [1, 0, 0], 12).tolist(), p.translation.tolist()
    ([0.0, 0.0, -1.0], [0.3, 0.0, 0.0])
    """
    steps = _read_steps(text, limit, "pose description", "pitched 25 degrees down, 0.3 m forward")
    r = np.eye(3)
    t = np.zeros(3)
    for s in steps:
        if s.what == "turn":
            r = r @ rot.elementary_matrix("xyz"[s.axis], s.amount)
        else:
            t[s.axis] += s.amount
    r = rot.matrix_of_quaternion(rot.quaternion_of_matrix(r))
    return DescribedPose(r, t, text)


def read_motion(text: str, *, limit: int = PASTE_LIMIT) -> DescribedMotion:
    """Read a described motion (see the module docstring) into its turns, one by one, in order.

    Each turn keeps its full angle (a full turn is ``2 pi``), whether it was approximate,
    and where it was written.  Raises :class:`DescriptionError` for what
    :func:`read_description` refuses, for a move (an orientation log cannot show it), and
    for a description without a turn.

    >>> m = read_motion("tilted nose up about 90 degrees, then back")
    >>> [(t.axis, round(math.degrees(t.angle)), t.approximate, t.undoes) for t in m.turns]
    [(1, -90, True, None), (1, 90, True, 0)]
    >>> [round(math.degrees(t.angle)) for t in read_motion("turned left in place a full turn").turns]
    [360]
    """
    steps = _read_steps(text, limit, "motion description", "tilted nose up about 90 degrees, then back")

    def fail(msg, pos):
        line, column, shown = point_at(text, pos)
        raise DescriptionError(f"motion description: {msg} at line {line}, column {column} (offset {pos}):\n"
                               f"{shown}\naccepted: turns only, e.g. 'tilted nose up about 90 degrees, then back', "
                               "'turned left in place a full turn', 'rolled 90 degrees right, then pitched 90 "
                               "degrees down'")

    turns: list[DescribedTurn] = []
    index: dict[int, int] = {}
    for k, s in enumerate(steps):
        if s.what == "move":
            fail(f"{excerpt(text[s.start:s.end], 40)} is a move; an orientation log cannot show a move, so a motion "
                 "is described by its turns alone", s.start)
        index[k] = len(turns)
        turns.append(DescribedTurn(s.axis, float(s.amount), s.approximate, s.start, s.end, text[s.start:s.end],
                                   None if s.undoes is None else index[s.undoes]))
    if not turns:
        fail("no turn described ('level' alone is no motion)", 0)
    return DescribedMotion(tuple(turns), text)


_TURN_PHRASES = {(0, 1.0): ("rolled", "right"), (0, -1.0): ("rolled", "left"), (1, 1.0): ("pitched", "down"),
                 (1, -1.0): ("pitched", "up"), (2, 1.0): ("yawed", "left"), (2, -1.0): ("yawed", "right")}


def turn_words(axis: int, angle: float, *, approximate: bool = False) -> str:
    """One turn about body axis ``axis`` (0, 1, 2: x, y, z) by ``angle`` radians, in words that
    :func:`read_motion` reads back.

    >>> turn_words(0, math.pi / 2), turn_words(2, -2 * math.pi, approximate=True)
    ('rolled 90 degrees right', 'yawed about 360 degrees right')
    """
    if axis not in (0, 1, 2):
        raise DescriptionError(f"turn_words: axis {axis!r}; accepted: 0, 1 or 2 (the body's x, y or z axis)")
    verb, direction = _TURN_PHRASES[(axis, 1.0 if angle >= 0 else -1.0)]
    return f"{verb} {'about ' if approximate else ''}{abs(math.degrees(angle)):.4g} degrees {direction}"
