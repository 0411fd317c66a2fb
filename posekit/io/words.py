"""Read a pose described in words: ``"pitched 25 degrees down, 0.3 m forward"``.

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

__all__ = ["DescriptionError", "DescribedPose", "read_description", "MAX_TURN_DEGREES", "MAX_DISTANCE"]

#: The largest turn a description may state: ten full turns.
MAX_TURN_DEGREES = 3600.0
#: The largest move a description may state, in metres (1000 km).
MAX_DISTANCE = 1.0e6

_ACCEPTED = ("clauses such as 'pitched 25 degrees down', 'yawed 10 deg left', 'rolled 5 degrees right', "
             "'turned 90 degrees about z', '0.3 m forward', '20 cm left', 'level'; frame words forward=+x, "
             "left=+y, up=+z; numbers written with a dot, e.g. 2.5")


class DescriptionError(PoseInputError):
    """A pose description in words could not be read; says which word failed and where."""


@dataclass(frozen=True, eq=False)
class DescribedPose:
    """What a description says: ``rotation (3, 3)``, ``translation (3,)`` in metres, and the ``text``."""

    rotation: np.ndarray
    translation: np.ndarray
    text: str


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
_NOT_FINITE = {"nan", "inf", "infinity"}

_NUMBER = re.compile(r"[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?")
_TOKEN = re.compile(r"[+-]?[0-9]+(?:\.[0-9]*)?(?:[eE][+-]?[0-9]+)?|[+-]?\.[0-9]+|[A-Za-z]+|°|[+-]|[,;]|\S")
_DIGIT_COMMA_DIGIT = re.compile(r"[0-9],[0-9]")
_BLANKS = " \t\r\n\f\v\u00a0\u2002\u2003\u2009\u202f"


def read_description(text: str, *, limit: int = PASTE_LIMIT) -> DescribedPose:
    """Read a description in words (see the module docstring) into a rotation and a translation.

    Raises :class:`DescriptionError`, or :class:`~posekit.io.limits.InputTooLargeError` for text
    longer than ``limit`` characters.

    >>> p = read_description("pitched 90 degrees down, 0.3 m forward")
    >>> np.round(p.rotation @ [1, 0, 0], 12).tolist(), p.translation.tolist()
    ([0.0, 0.0, -1.0], [0.3, 0.0, 0.0])
    """
    if not isinstance(text, str):
        raise DescriptionError(f"pose description: got {type(text).__name__}; expected text such as "
                               "'pitched 25 degrees down, 0.3 m forward'")
    check_text_size(text, what="pose description", limit=limit)

    def fail(msg, pos):
        line, column, shown = point_at(text, pos)
        raise DescriptionError(f"pose description: {msg} at line {line}, column {column} (offset {pos}):\n"
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
    r = np.eye(3)
    t = np.zeros(3)
    seen_any = False
    i = 0

    def where(j):
        return tokens[j][1] if j < len(tokens) else len(text)

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
                fail(f"expected an angle after {excerpt(word, 40)}", where(j))
            value_at = tokens[j][1]
            j += 1
            if j >= len(tokens) or tokens[j][0].lower() not in _ANGLE_WORDS:
                fail("expected an angle unit (degrees or radians)", where(j))
            angle = value * _ANGLE_WORDS[tokens[j][0].lower()]
            if abs(angle) > math.radians(MAX_TURN_DEGREES):
                fail(f"a turn of {value:g} {tokens[j][0]} is more than {MAX_TURN_DEGREES:g} degrees (ten full turns); "
                     "no pose is described that way", value_at)
            j += 1
            if low in _TURNS:
                axis, signs = _TURNS[low]
                while j < len(tokens) and tokens[j][0].lower() in _FILLER:
                    j += 1
                if direction is None and j < len(tokens) and tokens[j][0].lower() in _DIRECTIONS:
                    direction = tokens[j][0].lower()
                    j += 1
                if direction is None:
                    fail(f"{excerpt(word, 40)} needs a direction word ({' or '.join(signs)})", pos)
                if direction not in signs:
                    fail(f"'{direction}' is not a direction for {excerpt(word, 40)} (use {' or '.join(signs)})", pos)
                angle *= signs[direction]
            else:
                if j >= len(tokens) or tokens[j][0].lower() != "about":
                    fail(f"expected 'about x|y|z' after the angle of {excerpt(word, 40)}", where(j))
                j += 1
                sign = 1.0
                if j < len(tokens) and tokens[j][0] in "+-":
                    sign = -1.0 if tokens[j][0] == "-" else 1.0
                    j += 1
                if j >= len(tokens) or tokens[j][0].lower() not in ("x", "y", "z"):
                    fail("expected the axis x, y or z", where(j))
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
                    fail(f"expected a distance after {excerpt(word, 40)}", where(j))
            value_at = tokens[j][1]
            j += 1
            if j >= len(tokens) or tokens[j][0].lower() not in _LENGTH_WORDS:
                if j < len(tokens) and tokens[j][0].lower() in _ANGLE_WORDS:
                    fail("an angle needs a verb (pitched, yawed, rolled, turned ... about)", pos)
                fail("expected a length unit (m, cm or mm)", where(j))
            dist = value * _LENGTH_WORDS[tokens[j][0].lower()]
            if abs(dist) > MAX_DISTANCE:
                fail(f"a move of {value:g} {tokens[j][0]} is more than {MAX_DISTANCE:g} m; no pose is described "
                     "that way", value_at)
            j += 1
            if direction is None:
                if j >= len(tokens) or tokens[j][0].lower() not in _DIRECTIONS:
                    fail("expected a direction word (forward, back, left, right, up, down)", where(j))
                direction = tokens[j][0].lower()
                j += 1
            axis, sign = _DIRECTIONS[direction]
            t[axis] += sign * dist
            seen_any = True
            i = j
            continue
        fail(f"unknown word {excerpt(word, 40)}", pos)
    if not seen_any:
        fail("nothing to read", 0)
    r = rot.matrix_of_quaternion(rot.quaternion_of_matrix(r))
    return DescribedPose(r, t, text)
