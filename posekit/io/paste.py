"""Read pose numbers pasted as text, and list every plausible meaning of them.

:func:`parse_numbers` accepts what engineers paste from consoles, logs and other
languages:

* numpy reprs, ``array([[1., 0., 0.], ...], dtype=float32)`` (also ``np.array(...)``);
* nested lists and JSON arrays, ``[[1, 0, 0], [0, 1, 0], [0, 0, 1]]``, with or
  without commas (numpy prints ``[[1. 0. 0.]\\n [0. 1. 0.] ...]``), and rows
  separated by semicolons inside brackets (``[1 2 3; 4 5 6; 7 8 9]``);
* bare numbers separated by spaces, tabs, commas, semicolons or newlines, and
  multi-line printed matrices with or without brackets around each row;
* key-value text and JSON objects with component names: ``x y z w``,
  ``qx qy qz qw``, ``tx ty tz``, ``roll pitch yaw``, ``rx ry rz``, also grouped
  under ``position:`` / ``orientation:`` headings (``key: value`` or ``key=value``).
  Angle unit words (``deg``, ``degrees``, ``°``, ``rad``, ``radians``) and length
  unit words (``m``, ``cm``, ``mm``) may follow a value.

How the text is read, in order; every step takes time in proportion to the length of the text:

1. its size: at most :data:`~posekit.io.limits.PASTE_LIMIT` characters unless ``limit=`` says
   more (:class:`~posekit.io.limits.InputTooLargeError` otherwise), and the nesting of its
   brackets: at most :data:`MAX_NESTING` levels (:class:`NestingTooDeepError`);
2. commas that may be decimal commas or thousands separators (``0,7071 0 0 0,7071``,
   ``1,000.5 0 0``) are asked about, never guessed (:class:`AmbiguousCommaError`); commas used
   as separators throughout (``1, 2, 3``, ``1,0,0``) are separators;
3. a paste that is one bracketed list goes to the standard library first: :func:`json.loads`,
   then :func:`ast.literal_eval` (literals only: nothing is evaluated).  Their result is used
   only where posekit's own reader gives the same numbers and shape (the characters and the
   brackets are checked), otherwise the text goes on to step 4;
4. everything else goes through a scanner of posekit's own (one regular expression walks the
   text once, left to right) and a hand-written reader that checks the structure.  When the
   text cannot be read a :class:`PasteParseError` says where reading stopped (offset, line,
   column and a caret under the excerpt).

The result, :class:`ParsedNumbers`, holds the numbers, their shape, and every
plausible interpretation (:class:`Interpretation`) with a validity score in
[0, 1]; nothing is picked silently.  How the score is made:

* matrices: ``1 / (1 + (e / 1e-3)^2)`` with ``e = |M^T M - I|_F`` (printed digits
  give ``e`` near 1e-4; a non-rotation gives ``e`` near 1), halved for det -1 (a
  reflection), and for 4x4 times the same closeness of the bottom row to
  ``[0, 0, 0, 1]``;
* quaternions: the same closeness of the length to 1 (``| |q| - 1 |``, scale 1e-3);
* angles (Euler, rotation vector): judged from the magnitudes, see
  :func:`unit_judgement` -- both units are always listed.
"""

from __future__ import annotations

import ast
import json
import keyword
import math
import re
from dataclasses import dataclass, field, replace
from itertools import chain, compress, repeat
from operator import itemgetter, methodcaller

import numpy as np

from ..core import rotation as rot
from ..core.checks import as_numbers, orthonormality_error
from ..core.convention import Convention
from ..core.reading import describe_numbers
from ..core.errors import PoseInputError, excerpt, isolate_controls, odd_characters, plural
from .limits import PASTE_LIMIT, check_text_size

__all__ = ["PasteParseError", "NestingTooDeepError", "AmbiguousCommaError", "NoInterpretationError",
           "CodeNameError", "Interpretation", "ParsedNumbers", "parse_numbers", "interpret_numbers",
           "unit_judgement", "point_at", "SUPPORTED_COUNTS", "MAX_NESTING"]

#: How many numbers posekit knows how to interpret, and as what.
SUPPORTED_COUNTS = {
    3: "Euler angles (every sequence, intrinsic or extrinsic, degrees or radians) or a rotation vector",
    4: "a quaternion (scalar first or last, Hamilton or JPL)",
    6: "a position and Euler angles or a rotation vector, in either order",
    7: "a position and a quaternion, in either order",
    9: "a 3x3 rotation matrix (row- or column-major)",
    12: "a 3x4 [R | t] matrix (row- or column-major)",
    16: "a 4x4 homogeneous transform (row- or column-major)",
}

#: How deep brackets ( [ { may nest.  The deepest paste that means poses is a list of 4x4
#: matrices inside array(...): four levels; one more is allowed for a JSON object around it.
MAX_NESTING = 5

_ACCEPTED = ("numbers separated by spaces, commas, semicolons or newlines; nested [ ] lists; array([...]); "
             "JSON; or named components such as x: 1 y: 2 z: 3")


def point_at(text: str, position: int) -> tuple[int, int, str]:
    """``(line, column, excerpt)`` of a 0-based ``position`` in ``text``; both 1-based.

    The excerpt is the line (at most 70 characters of it, around the position) with a
    caret under the position; control and bidirectional characters are shown as
    ``<U+XXXX>`` (:func:`~posekit.core.errors.isolate_controls`) and the caret still
    points at the right place.  Takes time in proportion to ``len(text)``.

    >>> point_at("1 0 0\\n0 1 q", 10)
    (2, 5, '0 1 q\\n    ^')
    """
    position = max(0, min(int(position), len(text)))
    line_start = text.rfind("\n", 0, position) + 1
    line_end = text.find("\n", position)
    if line_end < 0:
        line_end = len(text)
    line = text.count("\n", 0, position) + 1
    column = position - line_start + 1
    lo, hi = line_start, line_end
    if line_end - line_start > 70:
        lo = max(line_start, position - 35)
        hi = min(line_end, lo + 70)
    prefix = "..." if lo > line_start else ""
    before = prefix + isolate_controls(text[lo:position])
    shown = before + isolate_controls(text[position:hi]) + ("..." if hi < line_end else "")
    return line, column, shown + "\n" + " " * len(before) + "^"


class PasteParseError(PoseInputError):
    """Pasted text could not be read as numbers; carries where reading stopped.

    Attributes: ``position`` (0-based character offset), ``line`` and ``column``
    (1-based), ``excerpt`` (the line with a caret under the position).
    """

    def __init__(self, reason: str, text: str, position: int, accepted: str | None = None):
        self.reason = reason
        self.text = text
        self.position = int(position)
        self.line, self.column, self.excerpt = point_at(text, self.position)
        super().__init__(f"could not read the pasted numbers: {reason} at line {self.line}, column {self.column} "
                         f"(offset {self.position}):\n{self.excerpt}\naccepted: {accepted or _ACCEPTED}")


class NestingTooDeepError(PasteParseError):
    """Brackets nested deeper than :data:`MAX_NESTING`: no pose is written that way."""


class AmbiguousCommaError(PasteParseError):
    """A comma that may be a decimal comma or a thousands separator: posekit asks instead of guessing."""


class NoInterpretationError(PoseInputError):
    """The numbers were read, but no pose representation has that many numbers."""


class CodeNameError(PoseInputError):
    """:meth:`Interpretation.code` was given a name that is not a Python identifier."""


class _Stop(Exception):
    """Reading stopped: at a character ``position``, or at token number ``token`` (its position is
    looked up only then)."""

    def __init__(self, reason: str, position: int = 0, kind: type = PasteParseError, accepted: str | None = None,
                 token: int | None = None):
        super().__init__(reason)
        self.reason = reason
        self.position = position
        self.kind = kind
        self.accepted = accepted
        self.token = token


def _q(word: str) -> str:
    """A piece of the pasted text, quoted and cut short for a message."""
    return excerpt(word, 40)


def _char_words(ch: str) -> str:
    """One unexpected character in words: ``'$'``, or its code point and name when it is not plain ASCII."""
    if 32 < ord(ch) < 127:
        return repr(ch)
    return "; ".join(odd_characters(ch)).replace(" at position 0", "") or f"U+{ord(ch):04X}"


# --------------------------------------------------------------------------------------
# guards that run before any reading: nesting and commas
# --------------------------------------------------------------------------------------

_BRACKET_STEP = np.zeros(128, dtype=np.int64)
_BRACKET_STEP[[ord(c) for c in "([{"]] = 1
_BRACKET_STEP[[ord(c) for c in ")]}"]] = -1


def _check_nesting(text: str) -> None:
    """Raise :class:`NestingTooDeepError` at the first bracket deeper than :data:`MAX_NESTING` (vectorised)."""
    if text.count("[") + text.count("(") + text.count("{") <= MAX_NESTING:
        return
    codes = np.frombuffer(text.encode("utf-32-le", "surrogatepass"), dtype="<u4")
    depth = np.cumsum(_BRACKET_STEP[np.minimum(codes, 127)])
    deepest = int(depth.max())
    if deepest > MAX_NESTING:
        at = int(np.argmax(depth > MAX_NESTING))
        raise _Stop(f"brackets nested {deepest} deep (this bracket opens level {MAX_NESTING + 1})", at,
                    NestingTooDeepError,
                    f"at most {MAX_NESTING} levels of brackets ( [ {{: a pose is a flat list, a matrix a list of "
                    "rows, a batch a list of matrices, possibly inside array(...) or a JSON object")


_HSPACE = r"[ \t\u00a0]"
_NUM_START = r"[+\-\u2212]?\.?[0-9]"
#: one comma between digits, alone in its run of digits and commas ("0,7071", "1.000,5"; not "1,0,0", and
#: not the exponent's digits in "1e-05,234")
_DECIMAL_COMMA = re.compile(r"(?<![\w.,])(?<![eE][+\-])[+\-\u2212]?([0-9]{1,3}(?:\.[0-9]{3})++|[0-9]++),"
                            r"([0-9]++(?:[eE][+\-]?[0-9]++)?+)(?![\w.]|,[0-9])")
#: groups of exactly three digits after commas, then a decimal point ("1,000.5", "12,345,678.25")
_THOUSANDS = re.compile(r"(?<![\w.,])(?<![eE][+\-])[+\-\u2212]?[1-9][0-9]{0,2}+(?:,[0-9]{3})++"
                        r"\.[0-9]*+(?:[eE][+\-]?[0-9]++)?+")
#: other separators between numbers: spaces, or a comma with a space beside it
_SPACED = re.compile(r"[0-9.]" + _HSPACE + r"++" + _NUM_START)
_LOOSE_COMMA = re.compile(r"[0-9.](?:" + _HSPACE + r"++," + _HSPACE + r"*+|," + _HSPACE + r"++)" + _NUM_START)
_NAMED_VALUE = re.compile(r"[:=]" + _HSPACE + r"*+$")


def _check_commas(text: str) -> None:
    """Refuse commas that point to a decimal comma or thousands grouping (:class:`AmbiguousCommaError`)."""
    if "," not in text:
        return
    m = _THOUSANDS.search(text)
    if m:
        written = m.group(0)
        parts = written.lstrip("+-\u2212").split(",")
        raise _Stop(f"{_q(written)} has groups of three digits after commas and then a decimal point: it reads as "
                    f"one number with thousands separators ({written.replace(',', '')}) or as {len(parts)} numbers "
                    f"({', '.join(parts)}); posekit does not guess", m.start(), AmbiguousCommaError,
                    f"numbers without thousands separators (write {written.replace(',', '')}), separated by "
                    "spaces or ', '")
    m = _DECIMAL_COMMA.search(text)
    if m is None:
        return
    spaced = _SPACED.search(text)
    loose = _LOOSE_COMMA.search(text)
    named = _NAMED_VALUE.search(text, max(0, m.start() - 40), m.start())
    if not (spaced or loose or named):
        return  # commas are the only separators: "1,5,2,5" is four numbers, "[0,1]" two
    whole, frac = m.group(1), m.group(2)
    sign = text[m.start()] if text[m.start()] in "+-\u2212" else ""
    readings = [f"one number with a decimal comma ({sign}{whole.replace('.', '')}.{frac})",
                f"two numbers ({sign}{whole} and {frac})"]
    if len(frac) == 3 and "." not in whole:
        readings.append(f"one number with a thousands separator ({sign}{whole}{frac})")
    why = ("it is the value of a named component" if named and not (spaced or loose) else
           "the other numbers are separated by " + ("spaces" if spaced else "a comma and a space"))
    raise _Stop(f"the comma in {_q(m.group(0))} sits between digits while {why}: it reads as "
                + " or as ".join(readings) + "; posekit does not guess", m.start(), AmbiguousCommaError,
                f"decimals written with a dot (e.g. {whole.replace('.', '')}.{frac}), and numbers separated the "
                "same way throughout (all by spaces, or all by ', ')")


# --------------------------------------------------------------------------------------
# the standard library first, for a paste that is one bracketed list
# --------------------------------------------------------------------------------------

_LIST_START = re.compile(r"[ \t\r\n]*+[\[(]")
#: what a Python literal of nested lists of numbers may hold and still read exactly as posekit reads it
_LITERAL_CHARS = re.compile(r"[0-9eE.+\-,\[\]() \t\r\n]*+")
_SIGN_SPACE = re.compile(r"[+\-][ \t\r\n]")   # Python reads "- 1" as -1; posekit refuses it
#: what Python would parse as operators, subscripts or calls ("1-2", "--1", "[1][2]", "(1)(2)"): never a
#: literal, and long chains of them are slow to parse, so the text goes straight to posekit's reader
_NOT_LITERAL = re.compile(r"[0-9.\])][ \t\r\n]*+[+\-]|[+\-][ \t\r\n]*+[+\-]|[\])][ \t\r\n]*+[\[(]")
_NEGATIVE_INT_ZERO = re.compile(r"-0++(?![0-9.eE])")  # Python's -0 is the integer 0; posekit reads -0.0


def _no_constant(name):
    raise ValueError(name)  # JSON's NaN / Infinity: the scanner names them


def _regular(value, brackets: int | None):
    """``(float64 array, shape)`` of regular nested lists of numbers, or None when posekit's reader would differ."""
    if type(value) not in (list, tuple):
        return None
    shape: list[int] = []
    level = [value]
    containers = 0
    while True:
        kinds = set(map(type, level))
        if kinds <= {list, tuple}:
            lengths = set(map(len, level))
            if len(lengths) != 1 or 0 in lengths or len(shape) >= MAX_NESTING:
                return None
            shape.append(lengths.pop())
            containers += len(level)
            level = list(chain.from_iterable(level))
            continue
        if kinds <= {int, float}:  # bool is neither
            break
        return None
    if brackets is not None and containers != brackets:
        return None  # "[(1), (2)]": Python's parentheses group, posekit's make a list
    try:
        arr = np.array(level, dtype=np.float64)
    except (OverflowError, ValueError):
        return None
    if not np.all(np.isfinite(arr)):
        return None
    return arr, tuple(shape)


def _from_standard_library(text: str):
    """``json.loads``, then ``ast.literal_eval`` (size and nesting already checked): ``(array, shape)`` or None."""
    if not _LIST_START.match(text):
        return None
    try:
        return _regular(json.loads(text, parse_int=float, parse_constant=_no_constant), None)
    except (ValueError, RecursionError):
        pass
    if (not _LITERAL_CHARS.fullmatch(text) or _SIGN_SPACE.search(text) or _NEGATIVE_INT_ZERO.search(text)
            or _NOT_LITERAL.search(text)):
        return None
    try:
        value = ast.literal_eval(text)
    except (ValueError, TypeError, SyntaxError, MemoryError, RecursionError, OverflowError):
        return None
    return _regular(value, text.count("[") + text.count("("))


# --------------------------------------------------------------------------------------
# scanner: one regular expression, one pass
# --------------------------------------------------------------------------------------

_NUMBER = r"[+\-]?(?:[0-9]+\.[0-9]*|\.[0-9]+|[0-9]+)(?:[eE][+\-]?[0-9]+)?"
_ANGLE_UNITS = {"deg": "degrees", "degs": "degrees", "degree": "degrees", "degrees": "degrees", "°": "degrees",
                "rad": "radians", "rads": "radians", "radian": "radians", "radians": "radians"}
_LENGTH_UNITS = {"m": 1.0, "metre": 1.0, "metres": 1.0, "meter": 1.0, "meters": 1.0, "cm": 0.01, "mm": 0.001}
_UNIT_WORDS = _ANGLE_UNITS.keys() | _LENGTH_UNITS.keys()
_NOT_FINITE = {"nan", "inf", "infinity"}
_GLUED_UNIT = ("(?i:" + "|".join(sorted((u for u in _UNIT_WORDS if u.isascii()), key=len, reverse=True))
               + r")(?![\w.])")
#: one token per match, blanks before it skipped: a number (ending before a unit word glued on, as in
#: "3deg", or with anything else glued to it, which makes it malformed), a punctuation character, a
#: word, a comment, a quoted text, the end, or any other single character
_TOKEN = re.compile(
    r"[ \t\r\f\v\u00a0]*+(" + _NUMBER + r"(?:(?=" + _GLUED_UNIT + r")|[\w.]*+)|[\[\](){},;:=\n]"
    r"|[A-Za-z_][A-Za-z_0-9]*+(?:\.[A-Za-z_][A-Za-z_0-9]*+)*+|\#[^\n]*+|\"[^\"\\\n]*+\"|'[^'\\\n]*+'|\Z|.)", re.S)
#: every token that starts like a number, joined by NUL: all of them numbers, nothing glued on
_NUMBERS_ONLY = re.compile(r"(?:" + _NUMBER + r")(?:\x00(?:" + _NUMBER + r"))*+")
_VALID_NUMBERS = re.compile(r"(?:(?:" + _NUMBER + r")\x00)*+")
_ONE_NUMBER = re.compile(_NUMBER)
#: one code character per token, from the token's first character: n number, w word, s quoted text,
#: # comment, u unit word, the punctuation character itself, ? anything else
_CODE = {c: "n" for c in "0123456789+-."}
_CODE.update({c: "w" for c in "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz_"})
_CODE.update({c: c for c in "[](){},;:=\n"})
_CODE.update({'"': "s", "'": "s", "#": "#", "°": "u"})


class _Tokens:
    """The tokens of a paste, as found by :data:`_TOKEN` in one pass.

    ``toks`` the token texts; ``codes`` one character per token (see :data:`_CODE`), so the
    reader can match runs of tokens with regular expressions.  Token positions are worked
    out only when a message needs one (or when comments are dropped).
    """

    __slots__ = ("text", "plain", "toks", "codes", "starts")

    def __init__(self, text: str):
        self.text = text
        # the typographic minus reads as '-'; one character for one, so offsets stay the same
        self.plain = text.replace("\u2212", "-") if "\u2212" in text else text
        toks = _TOKEN.findall(self.plain)
        while toks and not toks[-1]:
            toks.pop()  # the end of the text
        self.toks = toks
        self.codes = "".join(map(_CODE.get, map(itemgetter(0), toks), repeat("?")))
        self.starts: list[int] | None = None
        if "#" in self.codes:
            self._keep([c != "#" for c in self.codes])  # a comment runs to the end of the line

    def start(self, k: int) -> int:
        """Offset of token ``k`` in the text (the text's length past the last token)."""
        if self.starts is None:
            self.starts = [m.start(1) for m in _TOKEN.finditer(self.plain)][:len(self.toks)]
        return self.starts[k] if k < len(self.starts) else len(self.text)

    def _keep(self, keep: list[bool]) -> None:
        self.start(0)
        self.toks = list(compress(self.toks, keep))
        self.starts = list(compress(self.starts, keep))
        self.codes = "".join(compress(self.codes, keep))

    def check(self) -> None:
        """Raise at the first token that is no token (a stray character, an unclosed quote, a
        malformed or not-finite number); mark the unit words."""
        codes, toks = self.codes, self.toks
        first = len(codes)
        bad = codes.find("?")
        if bad >= 0:
            first = bad
        k = codes.find("s", 0, first)
        while k >= 0:
            s = toks[k]
            if len(s) < 2 or s[-1] != s[0]:
                first = k
                break
            k = codes.find("s", k + 1, first)
        units = []
        k = codes.find("w", 0, first)
        while k >= 0:
            low = toks[k].lower()
            if low in _NOT_FINITE:
                first = k
                break
            if low in _UNIT_WORDS:
                units.append(k)
            k = codes.find("w", k + 1, first)
        numbers = list(compress(toks, map("n".__eq__, codes)))
        joined = "\x00".join(numbers)
        if numbers and not _NUMBERS_ONLY.fullmatch(joined):
            valid = _VALID_NUMBERS.match(joined).end()  # the numbers before the first malformed one
            j = joined.count("\x00", 0, valid)
            k = int(np.flatnonzero(np.frombuffer(codes.encode("ascii"), dtype=np.uint8) == ord("n"))[j])
            first = min(first, k)
        if first < len(codes):
            raise _Stop(self._problem(first), self.start(first))
        if units:
            code_list = list(codes)
            for k in units:
                code_list[k] = "u"
            self.codes = "".join(code_list)

    def _problem(self, k: int) -> str:
        code, s = self.codes[k], self.toks[k]
        at = self.start(k)
        if code == "w":
            return f"{_q(s)} is not a finite number"
        if code == "n" and _ONE_NUMBER.match(s):  # "1.2.3", "1e", "12abc": a number must end at a separator
            written = self.text[at:at + len(s)]
            odd = [o.rsplit(" at position", 1)[0] for o in odd_characters(written)]
            return f"malformed number {_q(written)}" + (f" (it holds {'; '.join(odd)})" if odd else "")
        if (code == "n" and s in ("+", "-") and k + 1 < len(self.toks) and self.start(k + 1) == at + 1
                and self.toks[k + 1].lower() in _NOT_FINITE):
            return f"{_q(self.text[at] + self.toks[k + 1])} is not a finite number"
        return f"unexpected character {_char_words(self.text[at])}"

    def what(self, k: int) -> str:
        """Token ``k`` in words, for a message."""
        c, s = self.codes[k], self.toks[k]
        if c == "n":
            return f"number {_q(s)}"
        if c in "wu":
            return f"word {_q(s)}"
        if c == "s":
            return f"text {_q(s[1:-1])}"
        return "newline" if c == "\n" else f"'{c}'"

    def numbers(self, lo: int, hi: int) -> list[float]:
        """The numbers among tokens ``lo`` to ``hi``, in order."""
        return list(map(float, compress(self.toks[lo:hi], map("n".__eq__, self.codes[lo:hi]))))


def _scan(text: str) -> _Tokens:
    tokens = _Tokens(text)
    tokens.check()
    return tokens


# --------------------------------------------------------------------------------------
# structure
# --------------------------------------------------------------------------------------

_WRAPPERS = {"array", "np.array", "numpy.array", "matrix", "np.matrix", "numpy.matrix", "np.asarray",
             "asarray", "tensor", "torch.tensor", "quaternion", "tuple", "list"}

_SECTION_WORDS = {
    "position": "position", "translation": "position", "origin": "position", "pos": "position",
    "orientation": "rotation", "rotation": "rotation", "quaternion": "rotation", "quat": "rotation",
    "attitude": "rotation", "euler": "rotation", "angles": "rotation", "rot": "rotation",
    "pose": None, "transform": None,
}
_POSITION_NAMES = {"tx": "x", "ty": "y", "tz": "z", "px": "x", "py": "y", "pz": "z"}
_QUATERNION_NAMES = {"qx": "x", "qy": "y", "qz": "z", "qw": "w", "w": "w"}
_ANGLE_NAMES = {"roll": "x", "pitch": "y", "yaw": "z", "heading": "z", "bank": "x"}
_ROTVEC_NAMES = {"rx": "x", "ry": "y", "rz": "z"}
_COMPONENT_WORDS = ("x y z w qx qy qz qw tx ty tz px py pz roll pitch yaw heading bank rx ry rz")
_COMPONENTS = set(_COMPONENT_WORDS.split())

# runs of codes the reader takes in one step: numbers with optional commas and newlines between
# them, and a whole list of such numbers
_RUN = r"n(?:\n*+,?+\n*+n)*+"
_NUMBER_RUN = re.compile(_RUN)
_FLAT_LIST = re.compile(r"\[\n*+" + _RUN + r"\n*+(?:,\n*+)?+\]|\(\n*+" + _RUN + r"\n*+(?:,\n*+)?+\)")
_FLAT = r"(?:\[\n*+" + _RUN + r"\n*+(?:,\n*+)?+\]|\(\n*+" + _RUN + r"\n*+(?:,\n*+)?+\))"
#: sibling lists of numbers inside a list, and printed rows in brackets at the top
_FLAT_RUN = re.compile(_FLAT + r"(?:\n*+,?+\n*+" + _FLAT + r")*+")
_PRINTED_ROWS = re.compile(r"(?:" + _FLAT + r"[,;]?+\n*+)++")
#: rows of numbers split by ';' inside one bracket ("[1 2 3; 4 5 6]"), a ';' after the last allowed
_SEMICOLON_LIST = re.compile(r"\[\n*+" + _RUN + r"(?:\n*+,?+\n*+;\n*+" + _RUN + r")++\n*+,?+\n*+;?+\n*+\]")
#: bare numbers: rows of numbers with single commas between (and after), ended by newline or ';';
#: an empty row only before a newline
_BARE = re.compile(r"(?:n(?:,?+n)*+,?+(?:[\n;]|\Z)|\n)*+")
_ROW_END = re.compile(r"[\n;]")
_COUNT_N = methodcaller("count", "n")
_NAMED_CODES = re.compile(r"[s:={}]")
_NAMED_OR_WORD = re.compile(r"[ws:={}]")


class _Reader:
    """Reads the structure of tokens ``lo`` to ``hi`` of a :class:`_Tokens`; ``i`` is the next token."""

    def __init__(self, tokens: _Tokens, lo: int, hi: int):
        self.tokens = tokens
        self.toks = tokens.toks
        self.codes = tokens.codes
        self.i = lo
        self.lo = lo
        self.hi = hi

    def code(self, k: int | None = None) -> str:
        k = self.i if k is None else k
        return self.codes[k] if k < self.hi else ""

    def skip_newlines(self) -> None:
        codes, i, hi = self.codes, self.i, self.hi
        while i < hi and codes[i] == "\n":
            i += 1
        self.i = i

    def stop(self, reason: str, k: int | None = None):
        k = self.i if k is None else k
        if k >= self.hi:
            raise _Stop(reason, len(self.tokens.text))
        raise _Stop(reason, token=k)

    # nested lists ------------------------------------------------------------------
    def read_list(self, depth: int = 1) -> tuple[int, ...]:
        """'[' or '(' ... matching close -> its shape.  Each list is looked at once: its shape is
        made from its items' shapes, already known; a list of bare numbers is one regex match."""
        codes, hi = self.codes, self.hi
        open_at = self.i
        if depth > MAX_NESTING:  # the text-wide check ran first; this keeps the reader safe on its own
            raise _Stop(f"brackets nested more than {MAX_NESTING} deep", token=open_at, kind=NestingTooDeepError)
        m = _FLAT_LIST.match(codes, open_at, hi)
        if m:
            self.i = m.end()
            return (codes.count("n", open_at, m.end()),)
        m = _SEMICOLON_LIST.match(codes, open_at, hi)
        if m:
            counts = set(filter(None, map(_COUNT_N, codes[open_at:m.end()].split(";"))))
            if len(counts) == 1:
                self.i = m.end()
                rows = codes.count(";", open_at, m.end()) + (codes[open_at:m.end() - 1].rstrip("\n,")[-1] != ";")
                return (rows, counts.pop())
        opener = codes[open_at]
        close = ")" if opener == "(" else "]"
        i = open_at + 1
        count = 0                     # items in the current row
        rows: list[int] = []          # item counts of the rows ended by ';'
        child: tuple[int, ...] | None = None   # shape of the sub-lists; () once numbers were seen
        expect_item = True
        while True:
            if i >= hi:
                self.stop(f"'{opener}' opened here is never closed", open_at)
            c = codes[i]
            if c == "n":
                if child:
                    self.stop("a number where a list was expected (numbers and lists mixed)", i)
                child = ()
                end = _NUMBER_RUN.match(codes, i, hi).end()
                count += codes.count("n", i, end)
                i = end
                expect_item = False
            elif c == "\n":
                i += 1
            elif c == close:
                i += 1
                break
            elif c in ")]}":
                self.stop(f"'{c}' does not match the '{opener}' opened at offset {self.tokens.start(open_at)}", i)
            elif c == ",":
                if expect_item:
                    self.stop("a comma with no number before it", i)
                expect_item = True
                i += 1
            elif c == ";":
                if not count:
                    self.stop("an empty row before ';'", i)
                rows.append(count)
                count = 0
                expect_item = True
                i += 1
            elif c in "[(":
                if child == ():
                    self.stop("a list where a number was expected (numbers and lists mixed)", i)
                run = _FLAT_RUN.match(codes, i, hi) if depth < MAX_NESTING and (child is None or len(child) == 1) \
                    else None
                if run:
                    counts = list(map(_COUNT_N, _FLAT_LIST.findall(codes, i, run.end())))
                    if len(set(counts)) == 1 and child in (None, (counts[0],)):
                        child = (counts[0],)
                        count += len(counts)
                        i = run.end()
                        expect_item = False
                        continue
                self.i = i
                sub = self.read_list(depth + 1)
                if child is None:
                    child = sub
                elif sub != child:
                    self.stop(f"this row has shape {sub} but the first row has shape {child}", i)
                i = self.i
                count += 1
                expect_item = False
            else:
                self.stop(f"unexpected {self.tokens.what(i)} inside a list", i)
        self.i = i
        if rows:
            if count:
                rows.append(count)
            if len(set(rows)) > 1:
                other = next(r for r in rows if r != rows[0])
                self.stop(f"rows of unequal shape ({(rows[0],) + child} and {(other,) + child}); a matrix needs "
                          "equal rows", open_at)
            return (len(rows), rows[0]) + child
        if not count:
            self.stop("an empty list", open_at)
        return (count,) + child

    def read_numeric(self):
        """Numbers only (no names): nested lists or bare rows.  -> (flat list, shape, format, notes)."""
        self.skip_newlines()
        codes, hi, lo = self.codes, self.hi, self.i
        if self.code() in ("[", "(") and _PRINTED_ROWS.fullmatch(codes, lo, hi):
            counts = list(map(_COUNT_N, _FLAT_LIST.findall(codes, lo, hi)))
            if len(set(counts)) == 1:
                flat = self.tokens.numbers(lo, hi)
                if len(counts) == 1:
                    return flat, (counts[0],), "nested list", ()
                return flat, (len(counts), counts[0]), "printed rows in brackets", ()
        if self.code() in ("[", "("):
            blocks = []
            while True:
                self.skip_newlines()
                c = self.code()
                if not c:
                    break
                if c in "[(":
                    at = self.i
                    blocks.append((self.read_list(), at))
                    if self.code() in (",", ";"):  # printed rows may be separated by commas or semicolons too
                        self.i += 1
                    continue
                if c in ")]}":
                    self.stop(f"'{c}' closes nothing")
                self.stop(f"unexpected {self.tokens.what(self.i)} after a closed list")
            flat = self.tokens.numbers(lo, hi)
            if len(blocks) == 1:
                return flat, blocks[0][0], "nested list", ()
            first_shape = blocks[0][0]
            for shape, at in blocks:
                if shape != first_shape:
                    self.stop(f"this row has shape {shape} but the first row has shape {first_shape}", at)
            return flat, (len(blocks),) + first_shape, "printed rows in brackets", ()
        # bare numbers: rows end at newlines or semicolons
        if _BARE.fullmatch(codes, lo, hi):
            lengths = list(filter(None, map(_COUNT_N, _ROW_END.split(codes[lo:hi]))))
        else:
            lengths = self._bare_rows(lo, hi)
        flat = self.tokens.numbers(lo, hi)
        if not flat:
            raise _Stop("no numbers found", 0)
        kinds = set(lengths)
        notes: tuple[str, ...] = ()
        if len(lengths) > 1 and kinds == {1}:
            shape: tuple[int, ...] = (len(flat),)
        elif len(lengths) > 1 and len(kinds) == 1:
            shape = (len(lengths), lengths[0])
        elif len(lengths) > 1:
            shape = (len(flat),)
            shown = ", ".join(str(k) for k in lengths[:12]) + (", ..." if len(lengths) > 12 else "")
            notes = (f"the lines hold unequal counts ({shown}); they were read as one flat list of {len(flat)} "
                     "numbers",)
        else:
            shape = (len(flat),)
        return flat, shape, ("printed matrix" if len(shape) == 2 else "bare numbers"), notes

    def _bare_rows(self, lo: int, hi: int) -> list[int]:
        """Numbers per row of bare numbers, one token at a time (raises at the first token out of place)."""
        codes = self.codes
        lengths: list[int] = []
        count = 0
        expect_item = True
        for k, c in enumerate(codes[lo:hi], lo):
            if c == "n":
                count += 1
                expect_item = False
            elif c == ",":
                if expect_item:
                    self.stop("a comma with no number before it", k)
                expect_item = True
            elif c == "\n" or c == ";":
                if c == ";" and not count:
                    self.stop("an empty row before ';'", k)
                if count:
                    lengths.append(count)
                count = 0
                expect_item = True
            elif c in "])}":
                self.stop(f"'{c}' closes nothing", k)
            elif c in "[(":
                self.stop(f"'{c}' opens a list in the middle of bare numbers", k)
            else:
                self.stop(f"unexpected {self.tokens.what(k)} among numbers", k)
        if count:
            lengths.append(count)
        return lengths

    def read_named(self):
        """key: value text or JSON objects.  -> (flat values, names, format, units)."""
        toks = self.toks
        names: list[str] = []
        values: list[float] = []
        units: dict[str, str] = {}
        section: list[str | None] = [None]
        seen: set[str] = set()
        fmt = "named values"

        def add(key: str, at: int, value: float, sect: str | None, unit: str | None):
            full = (sect + "." + key) if sect else key
            if full in seen:
                self.stop(f"component '{full}' is given twice", at)
            seen.add(full)
            names.append(full)
            values.append(value)
            if unit:
                units[full] = unit

        def read_value_unit():
            if self.code() == "u":
                self.i += 1
                return toks[self.i - 1].lower()
            return None

        def key_text(k):
            return toks[k][1:-1] if self.codes[k] == "s" else toks[k]

        def read_object(sect: str | None, depth: int):
            open_at = self.i
            if depth > MAX_NESTING:
                raise _Stop(f"brackets nested more than {MAX_NESTING} deep", token=open_at, kind=NestingTooDeepError)
            self.i += 1
            while True:
                self.skip_newlines()
                c = self.code()
                if not c:
                    self.stop("'{' opened here is never closed", open_at)
                if c == "}":
                    self.i += 1
                    return
                if c == ",":
                    self.i += 1
                    continue
                read_entry(sect, depth, inside_object=True)

        def read_entry(sect: str | None, depth: int, inside_object: bool = False):
            k = self.i
            c = self.code()
            if c not in ("w", "s", "u"):
                self.stop(f"expected a component name, found {self.tokens.what(k) if c != 'n' else 'a number'}", k)
            name = key_text(k)
            self.i += 1
            if self.code() not in (":", "="):
                self.stop(f"expected ':' or '=' after {_q(name)}")
            self.i += 1
            v = self.i
            cv = self.code()
            key = name.lower()
            if not cv or cv in "\n,}":
                # a heading with nothing after it: the following names belong to it
                if key not in _SECTION_WORDS:
                    self.stop(f"{_q(name)} has no value", v)
                if inside_object and cv != "\n":
                    self.stop(f"{_q(name)} has no value", v)
                section[0] = _SECTION_WORDS[key] or None
                return
            if cv == "{":
                if key not in _SECTION_WORDS:
                    self.stop(f"{_q(name)} is not a heading posekit knows ({', '.join(sorted(_SECTION_WORDS))})", k)
                read_object(_SECTION_WORDS[key], depth + 1)
                return
            if cv in "[(":
                shape = self.read_list(depth + 1)
                if len(shape) != 1:
                    self.stop(f"a list under {_q(name)} must be flat; got shape {shape}", v)
                items = self.tokens.numbers(v, self.i)
                unit = read_value_unit()
                sect_name = _SECTION_WORDS.get(key, key)
                for j, value in enumerate(items):
                    add(f"{sect_name}[{j}]", k, value, None, unit)
                return
            if cv == "n":
                self.i += 1
                unit = read_value_unit()
                if key not in _COMPONENTS:
                    self.stop(f"{_q(name)} is not a pose component name; accepted: {_COMPONENT_WORDS}", k)
                add(key, k, float(toks[v]), section[0] if not inside_object else sect, unit)
                return
            self.stop(f"the value of {_q(name)} is not a number", v)

        while True:
            self.skip_newlines()
            c = self.code()
            if not c:
                break
            if c in ",;":
                self.i += 1
                continue
            if c == "{":
                fmt = "JSON object"
                read_object(None, 1)
                continue
            read_entry(section[0], 0)
        if not values:
            raise _Stop("no numbers found", 0)
        return values, names, fmt, units


# --------------------------------------------------------------------------------------
# interpretations
# --------------------------------------------------------------------------------------

def _closeness(err, scale):
    err = np.asarray(err, dtype=np.float64)
    return 1.0 / (1.0 + (err / scale) ** 2)


@dataclass(frozen=True, eq=False)
class Interpretation:
    """One plausible meaning of the numbers.

    ``kind``: one of ``matrix`` (3x3), ``transform`` (4x4 or 3x4), ``quaternion``,
    ``euler``, ``rotation-vector``, ``position``, ``position-quaternion``,
    ``position-euler``, ``position-rotation-vector``.  ``position_first`` is False when
    the rotation numbers come before the position.  ``convention`` holds the fields that
    matter for this kind (the rest at their defaults: active, parent-from-child).
    ``rotation`` ``(..., 3, 3)``: the 3x3 block exactly as read (a matrix is not
    projected; a non-unit quaternion is divided by its length);  ``translation``
    ``(..., 3)`` or None.  ``score`` in [0, 1] and ``reasons`` say how valid it looks.
    ``numbers``: for a single pose, the numbers in the order this reading hands them
    to posekit (named components are put in the reading's slot order), which is what
    :meth:`code` reads.
    """

    kind: str
    convention: Convention
    rotation: np.ndarray
    translation: np.ndarray | None
    score: float
    reasons: tuple[str, ...]
    position_first: bool = True
    count: int = 0
    numbers: tuple[float, ...] = ()

    @property
    def rotation_kind(self) -> str:
        """The posekit ``read_rotation`` kind of the rotation part."""
        for k in ("quaternion", "euler", "rotation-vector"):
            if self.kind.endswith(k):
                return k
        return "matrix"

    def fields(self) -> dict[str, str]:
        """The convention fields that give these numbers their meaning."""
        c = self.convention
        rk = self.rotation_kind
        if self.kind == "position":
            return {}
        if rk == "quaternion":
            return {"scalar": c.scalar, "algebra": c.algebra}
        if rk == "euler":
            return {"sequence": c.sequence, "axes": c.axes, "unit": c.unit}
        if rk == "rotation-vector":
            return {"unit": c.unit}
        return {"layout": c.layout}

    def convention_text(self) -> str:
        """The posekit convention text of :meth:`fields` (empty when all are defaults)."""
        defaults = Convention()
        return " ".join(f"{k}={v}" for k, v in self.fields().items() if getattr(defaults, k) != v)

    def describe(self) -> str:
        """The reading in words, e.g. 'a quaternion written (x, y, z, w), Hamilton algebra'."""
        return describe_numbers(self.kind, self.convention, count=self.count, position_first=self.position_first,
                                euler_detail=True)

    def code(self, name: str = "numbers") -> str:
        """A posekit call that reads ``name`` (the pasted numbers) this way.

        The matrix kinds flatten first so the layout applies; matrices off orthonormal
        by more than posekit's tolerance go through ``pk.nearest_rotation`` (stated).
        ``name`` goes into the code as written, so it must be a Python identifier that is
        not a keyword (:class:`CodeNameError` otherwise).
        """
        if not isinstance(name, str) or not name.isidentifier() or keyword.iskeyword(name):
            shown = excerpt(name, 40) if isinstance(name, str) else f"a {type(name).__name__}"
            raise CodeNameError(f"code(name): {shown} is not a name the code can use as written; accepted: a "
                                "Python identifier that is not a keyword, such as numbers, q or pose_1 "
                                "(letters, digits and underscores, not starting with a digit)")
        conv = self.convention_text()
        carg = f', "{conv}"' if conv else ""
        rk = self.rotation_kind
        off = self.reasons_flag("not orthonormal")
        if self.kind == "matrix":
            if off:
                order = "'F'" if self.convention.layout == "column-major" else "'C'"
                return (f"M = np.reshape(np.ravel({name}), (3, 3), order={order})\n"
                        f"R = pk.nearest_rotation(M).rotation  # the numbers are off orthonormal (printed digits)")
            return f"R = pk.read_rotation(np.ravel({name}), \"matrix\"{carg})"
        if self.kind == "transform":
            if off:
                rows = 4 if self.count == 16 else 3
                order = "'F'" if self.convention.layout == "column-major" else "'C'"
                return (f"M = np.reshape(np.ravel({name}), ({rows}, 4), order={order})\n"
                        f"R = pk.nearest_rotation(M[:3, :3]).rotation  # off orthonormal (printed digits)\n"
                        f"t = M[:3, 3]")
            return (f"T = pk.read_transform(np.ravel({name}), \"matrix\"{carg})\n"
                    f"R, t = T[:3, :3], T[:3, 3]")
        norm = ", normalise=True" if self.reasons_flag("divided by its length") and rk == "quaternion" else ""
        if self.kind == "position":
            return f"t = np.asarray({name}, dtype=float)"
        if self.kind.startswith("position-"):
            rot_idx = "[3:]" if self.position_first else f"[:{self.count - 3}]"
            pos_idx = "[:3]" if self.position_first else "[-3:]"
            return (f"R = pk.read_rotation(np.ravel({name}){rot_idx}, {rk!r}{carg}{norm})\n"
                    f"t = np.ravel({name}){pos_idx}").replace("'", '"')
        return f"R = pk.read_rotation(np.ravel({name}), {rk!r}{carg}{norm})".replace("'", '"')

    def reasons_flag(self, word: str) -> bool:
        return any(word in r for r in self.reasons)

    def as_dict(self) -> dict:
        out = {"kind": self.kind, "reading": self.describe(), "convention": self.convention_text(),
               "score": round(float(self.score), 6), "reasons": list(self.reasons)}
        if self.rotation.ndim == 2:
            out["rotation_matrix"] = np.round(self.rotation, 12).tolist()
            if self.translation is not None:
                out["translation"] = np.round(self.translation, 12).tolist()
        return out


def unit_judgement(angles) -> tuple[float, float, str]:
    """Plausibility of angles being radians vs degrees, from their magnitudes: ``(...,)`` -> scores.

    Returns ``(radians_score, degrees_score, sentence)``; both scores are in (0, 1],
    never 0, so both readings stay listed.  Rules (common practice: code keeps angles
    in (-pi, pi] radians, people type whole or half degrees):

    * largest magnitude ``m <= pi``: radians 1.0; degrees 0.5 if every value is a
      multiple of 0.5 (and not all zero), else 0.3;
    * ``pi < m <= 2 pi``: radians 0.6, degrees 0.6;
    * ``2 pi < m <= 360``: radians 0.05 (more than a full turn), degrees 1.0;
    * ``m > 360``: radians 0.02, degrees 0.3.

    >>> unit_judgement([10.0, -25.0, 90.0])[:2]
    (0.05, 1.0)
    """
    a = np.abs(np.asarray(angles, dtype=np.float64))
    m = float(np.max(a)) if a.size else 0.0
    if m <= math.pi + 1e-12:
        half = bool(np.all(np.abs(a * 2 - np.round(a * 2)) < 1e-9)) and m > 0
        deg = 0.5 if half else 0.3
        text = (f"largest magnitude {m:.6g} fits radians (within pi); as degrees it would be a small turn"
                + (" (the values are whole or half numbers, as degrees typed by hand often are)" if half else ""))
        return 1.0, deg, text
    if m <= 2 * math.pi:
        return 0.6, 0.6, f"largest magnitude {m:.6g} lies between pi and 2 pi: radians and degrees both plausible"
    if m <= 360.0:
        return 0.05, 1.0, (f"largest magnitude {m:.6g} is more than a full turn in radians, "
                           "so degrees are much more likely (radians still listed)")
    return 0.02, 0.3, f"largest magnitude {m:.6g} exceeds 360: neither unit is natural"


_CONV_CACHE: dict[tuple, Convention] = {}


def _conv(**kw) -> Convention:
    key = tuple(sorted(kw.items()))
    c = _CONV_CACHE.get(key)
    if c is None:
        c = _CONV_CACHE[key] = Convention(**kw)
    return c


def _matrix_candidates(flat: np.ndarray, shape: tuple) -> list[Interpretation]:
    n = flat.shape[-1]
    lead = flat.shape[:-1]
    out = []
    nested = len(shape) == 2
    for layout in ("row-major", "column-major"):
        if n == 9:
            m = flat.reshape(lead + (3, 3))
            if layout == "column-major":
                m = np.swapaxes(m, -1, -2)
            block, trans, bottom_err = m, None, None
            kind = "matrix"
        else:
            rows = n // 4
            if layout == "row-major":
                m = flat.reshape(lead + (rows, 4))
            else:
                m = np.swapaxes(flat.reshape(lead + (4, rows)), -1, -2)
            block, trans = m[..., :3, :3], m[..., :3, 3]
            bottom_err = (np.sqrt(np.sum((m[..., 3, :] - [0, 0, 0, 1.0]) ** 2, axis=-1)) if rows == 4 else None)
            kind = "transform"
        err = orthonormality_error(block)
        det = np.linalg.det(block)
        score = _closeness(err, 1e-3)
        reasons = []
        worst = float(np.max(err))
        if worst > 1e-6:
            reasons.append(f"the 3x3 block is not orthonormal (|M^T M - I| = {worst:.3g})")
        else:
            reasons.append("the 3x3 block is orthonormal")
        if np.any(det < 0):
            score = score * 0.5
            reasons.append("the 3x3 block has det -1: a reflection (handedness flip), not a rotation")
        if bottom_err is not None:
            score = score * _closeness(bottom_err, 1e-6)
            if float(np.max(bottom_err)) > 1e-6:
                reasons.append(f"the bottom row read this way is {np.round(m[..., 3, :].reshape(-1, 4)[0], 6).tolist()}, "
                               "not [0, 0, 0, 1]")
            else:
                reasons.append("the bottom row is [0, 0, 0, 1]")
        if nested and layout == "column-major":
            reasons.append("the printed rows are taken as columns")
        out.append(Interpretation(kind, _conv(layout=layout), np.ascontiguousarray(block),
                                  None if trans is None else np.ascontiguousarray(trans),
                                  float(np.min(score)), tuple(reasons), True, n))
    return out


def _quaternion_candidates(q4: np.ndarray, kind="quaternion", translation=None, position_first=True,
                           count=4, orders=("first", "last"), algebras=("hamilton", "jpl")):
    norm = np.sqrt(np.sum(q4 * q4, axis=-1))
    if np.any(norm < 1e-12):
        return [], ["the four numbers have zero length, so they are no quaternion"]
    off = float(np.max(np.abs(norm - 1.0)))
    score = float(np.min(_closeness(np.abs(norm - 1.0), 1e-3)))
    reason = (f"unit length (| |q| - 1 | = {off:.2g})" if off <= 1e-6
              else f"length {float(np.ravel(norm)[0]):.9g} is off 1 by {off:.3g}, divided by its length")
    out = []
    for scalar in orders:
        q = q4 if scalar == "first" else np.concatenate([q4[..., 3:], q4[..., :3]], axis=-1)
        q = q / norm[..., None]
        for algebra in algebras:
            qq = q if algebra == "hamilton" else rot.conjugate(q)
            out.append(Interpretation(kind, _conv(scalar=scalar, algebra=algebra), rot.matrix_of_quaternion(qq),
                                      translation, score, (reason,), position_first, count))
    return out, []


def _euler_matrices(angles: np.ndarray, seqs: tuple[str, ...], permute=None) -> np.ndarray:
    """Matrices of ``angles (..., 3)`` radians under every sequence, intrinsic and extrinsic at once.

    Intrinsic (a, b, c) about (p, q, r) is ``Rp(a) Rq(b) Rr(c)``; extrinsic is
    ``Rr(c) Rq(b) Rp(a)`` (Craig, Introduction to Robotics, 3rd ed., section 2.8, from
    memory) -- the same products posekit.core.rotation.quaternion_of_euler forms, stacked
    over the sequences so that four Hamilton products serve them all.  With
    ``permute`` the angles are named by axis (roll = x ...) and picked per sequence.
    ``-> (2, len(seqs), ..., 3, 3)``.
    """
    idx = np.array([[rot.AXIS_INDEX[c] for c in seq] for seq in seqs])         # (S, 3)
    if permute is None:
        vals = np.broadcast_to(angles[None], (len(seqs),) + angles.shape)        # (S, ..., 3)
    else:
        vals = np.moveaxis(angles[..., idx], -2, 0)                              # (S, ..., 3)
    half = 0.5 * vals
    lead = vals.shape[:-1]
    factors = []
    for slot in range(3):
        e = np.zeros(lead + (4,))
        e[..., 0] = np.cos(half[..., slot])
        axis = idx[:, slot].reshape((len(seqs),) + (1,) * (len(lead) - 1))
        np.put_along_axis(e, np.broadcast_to(1 + axis, lead)[..., None], np.sin(half[..., slot])[..., None],
                          axis=-1)
        factors.append(e)
    e1, e2, e3 = factors
    intrinsic = rot.hamilton_product(rot.hamilton_product(e1, e2), e3)
    extrinsic = rot.hamilton_product(rot.hamilton_product(e3, e2), e1)
    return rot.matrix_of_quaternion(np.stack([intrinsic, extrinsic]))


def _angle_candidates(a3: np.ndarray, kind_suffix: str, translation=None, position_first=True, count=3,
                      sequences=None, units=("radians", "degrees"), permute=None, rotvec=True, euler=True):
    rad_s, deg_s, sentence = unit_judgement(a3)
    scores = {"radians": rad_s, "degrees": deg_s}
    out = []
    prefix = "position-" if translation is not None else ""
    for unit in units:
        scale = math.pi / 180.0 if unit == "degrees" else 1.0
        if euler:
            seqs = tuple(sequences or rot.SEQUENCES)
            mats = _euler_matrices(a3 * scale, seqs, permute)   # (2, S, ..., 3, 3): intrinsic, extrinsic
            for si, seq in enumerate(seqs):
                nums: tuple[float, ...] = ()
                if permute is not None and a3.ndim == 1:
                    vals = a3[[permute[c] for c in seq]]
                    lead = [] if translation is None else [float(v) for v in translation]
                    nums = tuple(lead + [float(v) for v in vals])
                for ai, axes in enumerate(("intrinsic", "extrinsic")):
                    out.append(Interpretation(prefix + "euler", _conv(sequence="-".join(seq), axes=axes, unit=unit),
                                              mats[ai, si], translation, scores[unit], (sentence,), position_first,
                                              count, nums))
        if rotvec:
            r = rot.matrix_of_quaternion(rot.quaternion_of_rotvec(a3 * scale))
            nums = ()
            if permute is not None and a3.ndim == 1:
                lead = [] if translation is None else [float(v) for v in translation]
                nums = tuple(lead + [float(v) for v in a3])
            out.append(Interpretation(prefix + "rotation-vector", _conv(unit=unit), r, translation, scores[unit],
                                      (sentence,), position_first, count, nums))
    return out


def interpret_numbers(values, shape: tuple[int, ...] | None = None) -> tuple[Interpretation, ...]:
    """Every plausible interpretation of unnamed numbers ``(..., n)``, best score first.

    ``n`` is one of :data:`SUPPORTED_COUNTS`; leading axes are a batch (each
    interpretation then holds ``rotation (..., 3, 3)`` and the minimum score).
    ``shape`` is the printed shape, used only in the reasons.

    >>> [i.convention_text() for i in interpret_numbers([0, 0, 0, 1])]
    ['', 'algebra=jpl', 'scalar=last', 'scalar=last algebra=jpl']
    """
    arr = as_numbers(values, "numbers", None)
    if arr.ndim == 0:
        arr = arr[None]
    n = arr.shape[-1]
    shape = shape or arr.shape
    out: list[Interpretation] = []
    if n in (9, 12, 16):
        out = _matrix_candidates(arr, shape)
    elif n == 4:
        out, _ = _quaternion_candidates(arr)
    elif n == 3:
        out = _angle_candidates(arr, "")
    elif n == 7:
        a, _ = _quaternion_candidates(arr[..., 3:], "position-quaternion", arr[..., :3], True, 7)
        b, _ = _quaternion_candidates(arr[..., :4], "position-quaternion", arr[..., 4:], False, 7)
        out = a + b
    elif n == 6:
        out = (_angle_candidates(arr[..., 3:], "", arr[..., :3], True, 6)
               + _angle_candidates(arr[..., :3], "", arr[..., 3:], False, 6))
    else:
        raise NoInterpretationError(
            f"got {n} numbers; no pose representation has that many. Accepted counts: "
            + "; ".join(f"{k}: {v}" for k, v in SUPPORTED_COUNTS.items()))
    if arr.ndim == 1:
        flat = tuple(float(v) for v in arr)
        out = [replace(i, numbers=flat) for i in out]
    # stable sort: best score first, original order among equals
    return tuple(sorted(out, key=lambda i: -i.score))


def _interpret_named(values: np.ndarray, names: tuple[str, ...], units: dict[str, str], text: str):
    """Interpretations of named components; names fix the slots, the rest stays open."""
    pos: dict[str, float] = {}
    quat: dict[str, float] = {}
    ang: dict[str, float] = {}
    rvec: dict[str, float] = {}
    lists: dict[str, list[float]] = {}
    angle_units = set()
    length_scale = set()
    role: dict[str, str] = {}  # what each component was placed as: which unit words fit it
    for name, v in zip(names, values):
        sect, _, key = name.rpartition(".")
        m = re.fullmatch(r"(\w+)\[(\d+)\]", key)
        if m:
            lists.setdefault(m.group(1), []).append(v)
            role[name] = "length" if m.group(1) == "position" else "rotation list"
            continue
        if sect == "position" or key in _POSITION_NAMES:
            pos[_POSITION_NAMES.get(key, key)] = v
            role[name] = "length"
        elif key in _ANGLE_NAMES:
            ang[_ANGLE_NAMES[key]] = v
            role[name] = "angle"
        elif key in _ROTVEC_NAMES:
            rvec[_ROTVEC_NAMES[key]] = v
            role[name] = "angle"
        elif sect == "rotation" or key in _QUATERNION_NAMES:
            quat[_QUATERNION_NAMES.get(key, key)] = v
            role[name] = "quaternion"
        elif key in ("x", "y", "z"):
            pos[key] = v
            role[name] = "length"
        else:
            raise NoInterpretationError(f"component '{name}' is not one posekit can place")
    # a bare x y z w (no headings) is a quaternion
    if "w" in quat and not [n for n in names if n.startswith("rotation.")] and set(pos) == {"x", "y", "z"} \
            and set(quat) == {"w"}:
        quat.update(pos)
        pos = {}
        role = {n: "quaternion" for n in role}
    rot_count = len(lists.get("rotation", ()))
    for name, r in role.items():
        u = units.get(name)
        if u is None:
            continue
        if r == "rotation list":
            r = "angle" if rot_count == 3 else "quaternion"
        if r == "length" and u in _LENGTH_UNITS:
            length_scale.add(_LENGTH_UNITS[u])
        elif r == "angle" and u in _ANGLE_UNITS:
            angle_units.add(_ANGLE_UNITS[u])
        else:  # a unit word on a component it does not fit: said, never dropped or moved elsewhere
            fits = {"length": "a length unit (m, cm, mm)", "angle": "an angle unit (deg, rad)",
                    "quaternion": "no unit (quaternion components have none)"}[r]
            raise NoInterpretationError(f"component '{name}' was read as {'an' if r == 'angle' else 'a'} {r} but "
                                        f"carries the unit word '{u}'; accepted: {fits}")
    if len(length_scale) > 1:
        raise NoInterpretationError("the position components carry different length units; use one unit")
    scale = length_scale.pop() if length_scale else 1.0
    notes = []
    if scale != 1.0:
        notes.append(f"position values were scaled by {scale:g} to metres, as their unit words say")
    translation = None
    if pos:
        if set(pos) != {"x", "y", "z"}:
            raise NoInterpretationError(f"the position has components {sorted(pos)}; expected x, y and z")
        translation = np.array([pos["x"], pos["y"], pos["z"]]) * scale
    for lname, lvals in lists.items():
        if lname == "position" and len(lvals) == 3:
            translation = np.asarray(lvals, dtype=float) * scale
        elif lname in ("rotation",) and len(lvals) in (3, 4):
            pass
        else:
            raise NoInterpretationError(f"a list named '{lname}' with {len(lvals)} numbers is not one posekit "
                                        "can place (use position: [x, y, z] or orientation: [4 numbers])")
    rot_list = lists.get("rotation")
    count = len(values)
    out: list[Interpretation] = []
    if quat:
        if set(quat) != {"x", "y", "z", "w"}:
            raise NoInterpretationError(f"the quaternion has components {sorted(quat)}; expected x, y, z and w")
        q = np.array([quat["w"], quat["x"], quat["y"], quat["z"]])
        kind = "position-quaternion" if translation is not None else "quaternion"
        # the names fix the scalar slot; stated as scalar-first after reordering
        cands, rej = _quaternion_candidates(q, kind, translation, True, count, orders=("first",))
        if rej:
            raise NoInterpretationError(rej[0])
        keys = [n.rpartition(".")[2] for n in names]
        w_at = next(j for j, k in enumerate(keys) if k in ("w", "qw"))
        x_key = "qx" if "qx" in keys else "x"
        x_at = max(j for j, k in enumerate(keys) if k == x_key)
        scalar = "first" if w_at < x_at else "last"
        qn = [quat["w"], quat["x"], quat["y"], quat["z"]] if scalar == "first" else \
            [quat["x"], quat["y"], quat["z"], quat["w"]]
        lead = [] if translation is None else list(translation)
        out = [Interpretation(c.kind, c.convention.changed(scalar=scalar), c.rotation, c.translation, c.score,
                              c.reasons + ("the component names fix where w sits",), True, count,
                              tuple(lead + qn)) for c in cands]
    elif ang or rvec:
        comp = ang or rvec
        if set(comp) != {"x", "y", "z"}:
            raise NoInterpretationError(f"the angles have components {sorted(comp)}; expected all three "
                                        "(roll, pitch, yaw or rx, ry, rz)")
        a = np.array([comp["x"], comp["y"], comp["z"]])
        units_allowed = tuple(sorted(angle_units)) if len(angle_units) == 1 else ("radians", "degrees")
        if len(angle_units) > 1:
            raise NoInterpretationError("the angles carry different unit words; use one unit")
        out = _angle_candidates(a, "", translation, True, count, sequences=rot.TAIT_BRYAN, units=units_allowed,
                                permute={"x": 0, "y": 1, "z": 2}, rotvec=bool(rvec), euler=True)
        if angle_units:
            notes.append(f"the angles are stated in {units_allowed[0]}")
    elif rot_list is not None:
        r = np.asarray(rot_list, dtype=float)
        if r.size == 4:
            kind = "position-quaternion" if translation is not None else "quaternion"
            out, rej = _quaternion_candidates(r, kind, translation, True, count)
            if rej:
                raise NoInterpretationError(rej[0])
        else:
            out = _angle_candidates(r, "", translation, True, count,
                                    units=tuple(angle_units) if angle_units else ("radians", "degrees"))
            if angle_units:
                notes.append(f"the angles are stated in {next(iter(angle_units))}")
        lead = [] if translation is None else [float(v) for v in translation]
        out = [replace(i, numbers=tuple(lead + [float(v) for v in r])) for i in out]
    elif translation is not None:
        out = [Interpretation("position", _conv(), np.eye(3), translation, 1.0,
                              ("named x, y, z components: a position only, no rotation",), True, count,
                              tuple(float(v) for v in translation))]
    return tuple(sorted(out, key=lambda i: -i.score)), tuple(notes)


def _turn_words(m: np.ndarray) -> str:
    """One rotation block in words: the turn angle and axis (of the nearest rotation when off)."""
    m = np.asarray(m, dtype=np.float64)
    if m.ndim != 2:
        return f"a batch of {m.shape[0]} rotations"
    u, _, vt = np.linalg.svd(m)
    det = float(np.linalg.det(m))
    r = u @ vt
    if np.linalg.det(r) < 0:
        return f"a reflection (det {det:.3g}), no rotation"
    rv = rot.rotvec_of_quaternion(rot.quaternion_of_matrix(r))
    angle = float(np.linalg.norm(rv))
    if angle < 1e-12:
        return "no turn (the identity)"
    axis = rv / angle
    axis = np.round(axis, 4) + 0.0
    return (f"a turn of {math.degrees(angle):.6g} degrees about ({', '.join(f'{v:.4f}' for v in axis)})")


@dataclass(frozen=True, eq=False)
class ParsedNumbers:
    """The result of :func:`parse_numbers`.

    ``numbers`` ``(n,)`` read-only float64 in the order written; ``shape`` the
    structure as written (``(3, 3)`` for nested rows, ``(9,)`` for a flat list);
    ``names`` the component names (key-value text) or None; ``source_format`` in
    words; ``interpretations`` best score first; ``notes`` what the reader noticed.
    """

    text: str
    numbers: np.ndarray
    shape: tuple[int, ...]
    source_format: str
    interpretations: tuple[Interpretation, ...]
    names: tuple[str, ...] | None = None
    notes: tuple[str, ...] = field(default_factory=tuple)

    @property
    def count(self) -> int:
        return int(self.numbers.size)

    @property
    def ambiguous(self) -> bool:
        """True when more than one interpretation shares the best score."""
        if len(self.interpretations) < 2:
            return False
        best = self.interpretations[0].score
        return sum(1 for i in self.interpretations if abs(i.score - best) < 1e-12) > 1

    def require_interpretations(self) -> tuple[Interpretation, ...]:
        """The interpretations, or :class:`NoInterpretationError` when there are none."""
        if not self.interpretations:
            raise NoInterpretationError(
                f"read {self.count} numbers (shape {self.shape}), but no pose representation has that many. "
                "Accepted counts: " + "; ".join(f"{k}: {v}" for k, v in SUPPORTED_COUNTS.items()))
        return self.interpretations

    def summary(self) -> str:
        """A few lines in words: what was read and every interpretation with its score."""
        lines = [f"read {self.count} numbers as {self.source_format}, shape {self.shape}"]
        if self.names:
            lines.append("names: " + ", ".join(self.names))
        lines += [f"note: {n}" for n in self.notes]
        if not self.interpretations:
            lines.append("no pose representation has this many numbers")
        else:
            lines.append(plural(len(self.interpretations), "interpretation")
                         + (", several equally valid (none picked):" if self.ambiguous else ":"))
            for i in self.interpretations:
                lines.append(f"  [{i.score:.3f}] {i.describe()}" + (f"  -- {'; '.join(i.reasons)}" if i.reasons else ""))
                lines.append(f"          {_turn_words(i.rotation)}"
                             + ("" if i.translation is None else
                                f", origin at ({', '.join(f'{v:.6g}' for v in np.ravel(i.translation))})"))
        return "\n".join(lines)

    def as_dict(self) -> dict:
        return {"numbers": self.numbers.tolist(), "shape": list(self.shape), "format": self.source_format,
                "names": list(self.names) if self.names else None, "notes": list(self.notes),
                "ambiguous": self.ambiguous, "interpretations": [i.as_dict() for i in self.interpretations]}


def parse_numbers(text: str, *, limit: int = PASTE_LIMIT) -> ParsedNumbers:
    """Read pasted text into numbers and list every plausible interpretation.

    Raises :class:`PasteParseError` (a :class:`~posekit.core.errors.PoseInputError`)
    with the position where reading stopped: :class:`NestingTooDeepError` for brackets
    deeper than :data:`MAX_NESTING`, :class:`AmbiguousCommaError` for a comma that may
    be a decimal comma or a thousands separator.  Text longer than ``limit`` characters
    (default :data:`~posekit.io.limits.PASTE_LIMIT`) raises
    :class:`~posekit.io.limits.InputTooLargeError` before anything is read.  A count no
    pose has (e.g. 5 numbers) is read without error and has no interpretations; see
    :meth:`ParsedNumbers.require_interpretations`.

    >>> p = parse_numbers("array([0.0, 0.0, 0.0, 1.0])")
    >>> p.shape, len(p.interpretations), p.ambiguous
    ((4,), 4, True)
    >>> parse_numbers("x: 0.1\\ny: 0.2\\nz: 0.3").interpretations[0].kind
    'position'
    """
    return _parse(text, limit, standard_library=True)


#: numpy 2 prints scalars in lists as ``np.float64(0.5)``: the wrapper is blanked out (same length, so
#: positions in messages stay right) and the number inside is read.
_NUMPY_SCALAR = re.compile(r"\b(?:np|numpy)\.(?:float|int|uint|longdouble|double)\d{0,3}\(\s*"
                           r"([-+]?(?:\d[\d.]*(?:[eE][-+]?\d+)?|\.\d+(?:[eE][-+]?\d+)?|nan|inf))\s*\)")


def _unwrap_numpy_scalars(text: str) -> str:
    """``[np.float64(0.5), np.float64(-1e-3)]`` -> the same text with the wrappers blanked.

    >>> _unwrap_numpy_scalars("[np.float64(0.5), np.int64(2)]")
    '[           0.5 ,          2 ]'
    """
    if "np." not in text and "numpy." not in text:
        return text

    def blank(m):
        head = m.start(1) - m.start()
        tail = m.end() - m.end(1)
        return " " * head + m.group(1) + " " * tail
    return _NUMPY_SCALAR.sub(blank, text)


def _parse(text: str, limit: int, standard_library: bool) -> ParsedNumbers:
    """:func:`parse_numbers`; ``standard_library=False`` skips step 3 (the tests compare both ways)."""
    if not isinstance(text, str):
        raise PasteParseError(f"expected text, got {type(text).__name__}", "", 0,
                              "a string of pasted numbers; pass arrays to interpret_numbers")
    check_text_size(text, what="pasted text", limit=limit)
    shown, text = text, _unwrap_numpy_scalars(text)
    try:
        _check_nesting(text)
        _check_commas(text)
        found = _from_standard_library(text) if standard_library else None
        if found is not None:
            arr, shape = found
            fmt, notes, names, units = "nested list", (), None, None
        else:
            values, shape, fmt, notes, names, units = _read_own(text)
            arr = np.asarray(values, dtype=np.float64)
            if not np.all(np.isfinite(arr)):  # 1e999 overflows to inf
                tokens = _scan(text)
                bad = next(k for k, (c, s) in enumerate(zip(tokens.codes, tokens.toks))
                           if c == "n" and not math.isfinite(float(s)))
                raise _Stop(f"{_q(tokens.toks[bad])} is too large to be a finite number", tokens.start(bad),
                            accepted=f"numbers of magnitude below {np.finfo(np.float64).max:.4g}")
    except _Stop as stop:
        raise stop.kind(stop.reason, shown, stop.position, stop.accepted) from None
    text = shown
    arr.setflags(write=False)
    if names is not None:
        interps, named_notes = _interpret_named(arr, names, units, text)
        return ParsedNumbers(text, arr, (arr.size,), fmt, interps, names, named_notes)
    try:
        interps = interpret_numbers(arr, shape)
    except NoInterpretationError:
        interps = ()
    return ParsedNumbers(text, arr, tuple(shape), fmt, interps, None, tuple(notes))


def _read_own(text: str):
    """posekit's own scanner and reader.  -> (values, shape, format, notes, names or None, units or None)."""
    tokens = _scan(text)
    try:
        return _read_tokens(tokens)
    except _Stop as stop:
        if stop.token is not None:
            stop.position, stop.token = tokens.start(stop.token), None
        raise


def _read_tokens(tokens: _Tokens):
    toks, codes, text = tokens.toks, tokens.codes, tokens.text
    n = len(codes)
    j = len(codes) - len(codes.lstrip("\n"))
    if j == n:
        raise _Stop("no numbers found (the text is empty)", len(text))
    lo, hi = j, n
    fmt_prefix = ""
    label_notes: tuple[str, ...] = ()
    # a leading label such as "R =" or "T_world_camera:" before a list or array(...)
    if (j + 2 < n and codes[j] == "w" and codes[j + 1] in ":=" and toks[j].lower() not in _SECTION_WORDS
            and toks[j].lower() not in _COMPONENTS):
        k = j + 2
        while k < n and codes[k] == "\n":
            k += 1
        if k < n and (codes[k] in "[(" or (codes[k] == "w" and toks[k] in _WRAPPERS)):
            label_notes = (f"the label {_q(toks[j])} before the numbers was skipped",)
            lo = j = k
    # numpy-style wrapper: array( ... [, dtype=...] )
    if codes[j] == "w" and toks[j] in _WRAPPERS:
        name = toks[j]
        if j + 1 >= n or codes[j + 1] != "(":
            raise _Stop(f"expected '(' after '{name}'", token=j + 1)
        depth, close = 0, None
        for k in range(j + 1, n):
            c = codes[k]
            if c == "(" or c == "[":
                depth += 1
            elif c == ")" or c == "]":
                depth -= 1
                if depth == 0:
                    close = k
                    break
        if close is None:
            raise _Stop(f"'(' after '{name}' is never closed", token=j + 1)
        lo, hi = j + 2, close
        # trailing ", dtype=float64" inside the call
        d = codes.find("w", lo, hi)
        while d >= 0 and toks[d] != "dtype":
            d = codes.find("w", d + 1, hi)
        if d >= 0:
            if d == lo or codes[d - 1] != ",":
                raise _Stop("expected ',' before dtype", token=d)
            if not (hi - d - 1 >= 2 and codes[d + 1] == "=" and codes[d + 2] in "ws"):
                raise _Stop("expected dtype=<type name>", token=d)
            if hi - d - 1 > 2:
                raise _Stop("unexpected text after the dtype", token=d + 3)
            hi = d - 1
        rest = codes[close + 1:]
        blank = len(rest) - len(rest.lstrip("\n"))
        if blank < len(rest):
            after = close + 1 + blank
            raise _Stop(f"unexpected {tokens.what(after)} after the closing ')'", token=after)
        if hi <= lo:
            raise _Stop("an empty array", token=j + 1)
        fmt_prefix = "numpy repr, "
    reader = _Reader(tokens, lo, hi)
    if _NAMED_CODES.search(codes, lo, hi):
        if fmt_prefix:
            bad = _NAMED_OR_WORD.search(codes, lo, hi).start()
            raise _Stop(f"unexpected {tokens.what(bad)} inside array(...)", token=bad)
        values, names, fmt, units = reader.read_named()
        return values, (len(values),), fmt, (), tuple(names), units
    stray = codes.find("w", lo, hi)
    if stray >= 0:
        raise _Stop(f"unexpected word {_q(toks[stray])} among numbers", token=stray)
    unit = codes.find("u", lo, hi)
    if unit >= 0:
        raise _Stop(f"a unit word {_q(toks[unit])} among unnamed numbers; name the components "
                    "(e.g. roll: 10 deg) or leave the unit out", token=unit)
    flat, shape, fmt, notes = reader.read_numeric()
    return flat, shape, fmt_prefix + fmt, label_notes + tuple(notes), None, None
