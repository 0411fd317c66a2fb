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

It never evaluates the text: a small scanner of posekit's own turns it into
tokens (numbers, words, brackets, separators), each with its position, and a
hand-written reader checks the structure.  When the text cannot be read a
:class:`PasteParseError` says where reading stopped (offset, line, column and a
caret under the excerpt).

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

import math
import re
from dataclasses import dataclass, field, replace

import numpy as np

from ..core import rotation as rot
from ..core.checks import as_numbers, orthonormality_error
from ..core.convention import Convention
from ..core.errors import PoseInputError

__all__ = ["PasteParseError", "NoInterpretationError", "Interpretation", "ParsedNumbers", "parse_numbers",
           "interpret_numbers", "unit_judgement", "SUPPORTED_COUNTS"]

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


class PasteParseError(PoseInputError):
    """Pasted text could not be read as numbers; carries where reading stopped.

    Attributes: ``position`` (0-based character offset), ``line`` and ``column``
    (1-based), ``excerpt`` (the line with a caret under the position).
    """

    def __init__(self, reason: str, text: str, position: int, accepted: str | None = None):
        self.reason = reason
        self.text = text
        self.position = int(position)
        line_start = text.rfind("\n", 0, self.position) + 1
        line_end = text.find("\n", self.position)
        if line_end < 0:
            line_end = len(text)
        self.line = text.count("\n", 0, self.position) + 1
        self.column = self.position - line_start + 1
        shown = text[line_start:line_end]
        offset = self.position - line_start
        if len(shown) > 70:
            lo = max(0, offset - 35)
            shown = ("..." if lo else "") + shown[lo:lo + 70] + ("..." if lo + 70 < len(shown) else "")
            offset = offset - lo + (3 if lo else 0)
        self.excerpt = shown + "\n" + " " * offset + "^"
        accepted = accepted or ("numbers separated by spaces, commas, semicolons or newlines; nested [ ] lists; "
                                "array([...]); JSON; or named components such as x: 1 y: 2 z: 3")
        super().__init__(f"could not read the pasted numbers: {reason} at line {self.line}, column {self.column} "
                         f"(offset {self.position}):\n{self.excerpt}\naccepted: {accepted}")


class NoInterpretationError(PoseInputError):
    """The numbers were read, but no pose representation has that many numbers."""


# --------------------------------------------------------------------------------------
# scanner
# --------------------------------------------------------------------------------------

_NUMBER = re.compile(r"[+-]?(?:\d+\.\d*|\.\d+|\d+)(?:[eE][+-]?\d+)?")
_WORD = re.compile(r"[A-Za-z_][A-Za-z_0-9]*(?:\.[A-Za-z_][A-Za-z_0-9]*)*")
_STRING = re.compile(r'"([^"\\\n]*)"|\'([^\'\\\n]*)\'')
_PUNCT = set("[](){},;:=\n")
_ANGLE_UNITS = {"deg": "degrees", "degs": "degrees", "degree": "degrees", "degrees": "degrees", "°": "degrees",
                "rad": "radians", "rads": "radians", "radian": "radians", "radians": "radians"}
_LENGTH_UNITS = {"m": 1.0, "metre": 1.0, "metres": 1.0, "meter": 1.0, "meters": 1.0, "cm": 0.01, "mm": 0.001}
_NOT_FINITE = {"nan", "inf", "infinity", "-inf", "+inf"}


@dataclass(frozen=True)
class _Tok:
    kind: str  # num, word, str, punct, unit
    text: str
    start: int
    end: int
    value: float = 0.0


def _scan(text: str) -> list[_Tok]:
    toks: list[_Tok] = []
    i, n = 0, len(text)
    while i < n:
        ch = text[i]
        if ch in " \t\r\f\v\u00a0":
            i += 1
            continue
        if ch == "\u2212":  # the typographic minus sign pasted from documents reads as '-'
            m = _NUMBER.match("-" + text[i + 1:i + 40])
            if m and m.end() > 1:
                end = i + m.end()
                if end < n and (text[end].isalnum() or text[end] in "._"):
                    raise _Stop("malformed number", i)
                toks.append(_Tok("num", "-" + text[i + 1:end], i, end, float(m.group(0))))
                i = end
                continue
        if ch == "#":  # a comment runs to the end of the line
            j = text.find("\n", i)
            i = n if j < 0 else j
            continue
        if ch in _PUNCT:
            toks.append(_Tok("punct", ch, i, i + 1))
            i += 1
            continue
        if ch == "°":
            toks.append(_Tok("unit", "°", i, i + 1))
            i += 1
            continue
        m = _NUMBER.match(text, i)
        if m and (ch not in "+-" or m.end() > i + 1):
            end = m.end()
            if end < n and (text[end].isalnum() or text[end] in "._"):
                # "1.2.3", "1e", "12abc", "3deg" (no space) -- a number must end at a separator
                tail = re.match(r"[A-Za-z_]+", text[end:])
                if tail and tail.group(0).lower() in _ANGLE_UNITS | _LENGTH_UNITS.keys():
                    toks.append(_Tok("num", m.group(0), i, end, float(m.group(0))))
                    toks.append(_Tok("unit", tail.group(0).lower(), end, end + len(tail.group(0))))
                    i = end + len(tail.group(0))
                    continue
                raise _Stop("malformed number", i)
            toks.append(_Tok("num", m.group(0), i, end, float(m.group(0))))
            i = end
            continue
        if ch in "+-" and text[i + 1:i + 4].lower() == "inf":
            raise _Stop("infinity is not a finite number", i)
        m = _WORD.match(text, i)
        if m:
            word = m.group(0)
            if word.lower() in _NOT_FINITE:
                raise _Stop(f"'{word}' is not a finite number", i)
            kind = "unit" if word.lower() in _ANGLE_UNITS or word.lower() in _LENGTH_UNITS else "word"
            toks.append(_Tok(kind, word, i, m.end()))
            i = m.end()
            continue
        m = _STRING.match(text, i)
        if m:
            toks.append(_Tok("str", m.group(1) if m.group(1) is not None else m.group(2), i, m.end()))
            i = m.end()
            continue
        raise _Stop(f"unexpected character {ch!r}", i)
    return toks


class _Stop(Exception):
    def __init__(self, reason: str, position: int):
        super().__init__(reason)
        self.reason = reason
        self.position = position


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


class _Reader:
    def __init__(self, text: str, toks: list[_Tok]):
        self.text = text
        self.toks = toks
        self.i = 0

    def peek(self, k: int = 0) -> _Tok | None:
        j = self.i + k
        return self.toks[j] if j < len(self.toks) else None

    def at_end(self) -> bool:
        return self.i >= len(self.toks)

    def pos(self) -> int:
        t = self.peek()
        return t.start if t else len(self.text)

    def skip_newlines(self) -> None:
        while (t := self.peek()) is not None and t.kind == "punct" and t.text == "\n":
            self.i += 1

    def stop(self, reason: str, tok: _Tok | None = None):
        raise _Stop(reason, tok.start if tok is not None else self.pos())

    # nested lists ------------------------------------------------------------------
    def read_list(self):
        """'[' or '(' ... matching close: returns (nested python lists of floats, opening token)."""
        open_tok = self.peek()
        close = {"[": "]", "(": ")"}[open_tok.text]
        self.i += 1
        items: list = []
        first_shape = None
        rows: list[list] = []  # rows split by ";" inside one bracket
        expect_item = True
        last_sep: _Tok | None = None
        while True:
            t = self.peek()
            if t is None:
                raise _Stop(f"'{open_tok.text}' opened here is never closed", open_tok.start)
            if t.kind == "punct" and t.text == "\n":
                self.i += 1
                continue
            if t.kind == "punct" and t.text == close:
                self.i += 1
                break
            if t.kind == "punct" and t.text in ")]}" :
                self.stop(f"'{t.text}' does not match the '{open_tok.text}' opened at offset {open_tok.start}", t)
            if t.kind == "punct" and t.text == ",":
                if expect_item:
                    self.stop("a comma with no number before it", t)
                expect_item = True
                last_sep = t
                self.i += 1
                continue
            if t.kind == "punct" and t.text == ";":
                if not items:
                    self.stop("an empty row before ';'", t)
                rows.append(items)
                items = []
                expect_item = True
                last_sep = t
                self.i += 1
                continue
            if t.kind == "num":
                if first_shape is not None:
                    self.stop("a number where a list was expected (numbers and lists mixed)", t)
                items.append(t.value)
                self.i += 1
                expect_item = False
                continue
            if t.kind == "punct" and t.text in "[(":
                sub, sub_open = self.read_list()
                sub_shape = _shape_of(sub, sub_open, self.text)
                if any(not isinstance(x, list) for x in items):
                    self.stop("a list where a number was expected (numbers and lists mixed)", sub_open)
                if first_shape is None:
                    first_shape = sub_shape
                elif sub_shape != first_shape:
                    self.stop(f"this row has shape {sub_shape} but the first row has shape {first_shape}", sub_open)
                items.append(sub)
                expect_item = False
                continue
            self.stop(f"unexpected {self._what(t)} inside a list", t)
        if rows:
            if items:
                rows.append(items)
            elif last_sep is not None and last_sep.text == ";":
                pass  # a trailing ';' before ']' is allowed
            items = rows
        elif expect_item and last_sep is not None and last_sep.text == ",":
            pass  # trailing comma before the close, as Python allows
        if not items:
            raise _Stop("an empty list", open_tok.start)
        return items, open_tok

    @staticmethod
    def _what(t: _Tok) -> str:
        if t.kind == "punct":
            return "newline" if t.text == "\n" else f"'{t.text}'"
        if t.kind == "num":
            return f"number '{t.text}'"
        return f"word '{t.text}'" if t.kind in ("word", "unit") else f"text '{t.text}'"


def _shape_of(items, open_tok: _Tok, text: str, starts: dict | None = None) -> tuple[int, ...]:
    """Shape of nested lists, raising at the first list whose length or depth disagrees."""
    if not isinstance(items, list):
        return ()
    kinds = {isinstance(x, list) for x in items}
    if len(kinds) > 1:
        raise _Stop("numbers and lists mixed at the same level", open_tok.start)
    if not isinstance(items[0], list):
        return (len(items),)
    shapes = [_shape_of(x, open_tok, text) for x in items]
    for s in shapes[1:]:
        if s != shapes[0]:
            raise _Stop(f"rows of unequal shape ({shapes[0]} and {s}); a matrix needs equal rows", open_tok.start)
    return (len(items),) + shapes[0]


def _flatten(items) -> list[float]:
    if not isinstance(items, list):
        return [items]
    out: list[float] = []
    for x in items:
        out.extend(_flatten(x))
    return out


def _read_numeric(reader: _Reader):
    """Numbers only (no names): nested lists or bare rows.  -> (flat list, shape, format, notes)."""
    reader.skip_newlines()
    first = reader.peek()
    if first.kind == "punct" and first.text in "[(":
        blocks = []
        while True:
            reader.skip_newlines()
            t = reader.peek()
            if t is None:
                break
            if t.kind == "punct" and t.text in "[(":
                start_tok = t
                items, open_tok = reader.read_list()
                blocks.append((items, open_tok, start_tok))
                # printed rows may be separated by commas or semicolons too
                t2 = reader.peek()
                if t2 is not None and t2.kind == "punct" and t2.text in ",;":
                    reader.i += 1
                continue
            if t.kind == "punct" and t.text in ")]}":
                reader.stop(f"'{t.text}' closes nothing", t)
            reader.stop(f"unexpected {reader._what(t)} after a closed list", t)
        if len(blocks) == 1:
            items, open_tok, _ = blocks[0]
            shape = _shape_of(items, open_tok, reader.text)
            return _flatten(items), shape, "nested list", ()
        shapes = [_shape_of(b[0], b[1], reader.text) for b in blocks]
        for (items, open_tok, _), s in zip(blocks, shapes):
            if s != shapes[0]:
                raise _Stop(f"this row has shape {s} but the first row has shape {shapes[0]}", open_tok.start)
        flat: list[float] = []
        for items, _, _ in blocks:
            flat.extend(_flatten(items))
        return flat, (len(blocks),) + shapes[0], "printed rows in brackets", ()
    # bare numbers: rows end at newlines or semicolons
    rows: list[list[float]] = []
    row: list[float] = []
    row_sep: set[str] = set()
    expect_item = True
    prev_comma: _Tok | None = None
    while not reader.at_end():
        t = reader.peek()
        reader.i += 1
        if t.kind == "num":
            row.append(t.value)
            expect_item = False
            prev_comma = None
            continue
        if t.kind == "punct" and t.text == ",":
            if expect_item:
                raise _Stop("a comma with no number before it", t.start)
            expect_item = True
            prev_comma = t
            continue
        if t.kind == "punct" and t.text in "\n;":
            if t.text == ";" and not row:
                raise _Stop("an empty row before ';'", t.start)
            if row:
                rows.append(row)
                row_sep.add(t.text)
            row = []
            expect_item = True
            prev_comma = None
            continue
        if t.kind == "punct" and t.text in "])}":
            raise _Stop(f"'{t.text}' closes nothing", t.start)
        if t.kind == "punct" and t.text in "[(":
            raise _Stop(f"'{t.text}' opens a list in the middle of bare numbers", t.start)
        raise _Stop(f"unexpected {reader._what(t)} among numbers", t.start)
    if row:
        rows.append(row)
    del prev_comma
    flat = [v for r in rows for v in r]
    if not flat:
        raise _Stop("no numbers found", 0)
    lengths = {len(r) for r in rows}
    notes: tuple[str, ...] = ()
    if len(rows) > 1 and lengths == {1}:
        shape: tuple[int, ...] = (len(flat),)
    elif len(rows) > 1 and len(lengths) == 1:
        shape = (len(rows), len(rows[0]))
    elif len(rows) > 1:
        shape = (len(flat),)
        notes = (f"the lines hold unequal counts ({', '.join(str(len(r)) for r in rows)}); they were read as "
                 f"one flat list of {len(flat)} numbers",)
    else:
        shape = (len(flat),)
    return flat, shape, ("printed matrix" if len(shape) == 2 else "bare numbers"), notes


def _read_named(reader: _Reader):
    """key: value text or JSON objects.  -> (flat values, names, format, units)."""
    names: list[str] = []
    values: list[float] = []
    units: dict[str, str] = {}
    section: list[str | None] = [None]
    seen: dict[str, int] = {}
    fmt = "named values"

    def add(key_tok: _Tok, value: float, sect: str | None, unit: str | None):
        key = key_tok.text.lower()
        full = (sect + "." + key) if sect else key
        if full in seen:
            raise _Stop(f"component '{full}' is given twice", key_tok.start)
        seen[full] = key_tok.start
        names.append(full)
        values.append(value)
        if unit:
            units[full] = unit

    def read_value_unit():
        t = reader.peek()
        unit = None
        if t is not None and t.kind == "unit":
            unit = t.text.lower()
            reader.i += 1
        return unit

    def read_object(sect: str | None):
        open_tok = reader.peek()
        reader.i += 1
        while True:
            reader.skip_newlines()
            t = reader.peek()
            if t is None:
                raise _Stop("'{' opened here is never closed", open_tok.start)
            if t.kind == "punct" and t.text == "}":
                reader.i += 1
                return
            if t.kind == "punct" and t.text == ",":
                reader.i += 1
                continue
            read_entry(sect, inside_object=True)

    def read_entry(sect: str | None, inside_object: bool = False):
        t = reader.peek()
        if t.kind not in ("word", "str", "unit"):
            reader.stop(f"expected a component name, found {reader._what(t) if t.kind != 'num' else 'a number'}", t)
        key_tok = t
        reader.i += 1
        sep = reader.peek()
        if sep is None or not (sep.kind == "punct" and sep.text in ":="):
            reader.stop(f"expected ':' or '=' after '{key_tok.text}'", sep)
        reader.i += 1
        val = reader.peek()
        key = key_tok.text.lower()
        if val is None or (val.kind == "punct" and val.text in "\n,}"):
            # a heading with nothing after it: the following names belong to it
            if key not in _SECTION_WORDS:
                reader.stop(f"'{key_tok.text}' has no value", val)
            if inside_object and (val is None or val.text != "\n"):
                reader.stop(f"'{key_tok.text}' has no value", val)
            section[0] = _SECTION_WORDS[key] or None
            return
        if val.kind == "punct" and val.text == "{":
            if key not in _SECTION_WORDS:
                reader.stop(f"'{key_tok.text}' is not a heading posekit knows "
                            f"({', '.join(sorted(_SECTION_WORDS))})", key_tok)
            read_object(_SECTION_WORDS[key])
            return
        if val.kind == "punct" and val.text in "[(":
            items, open_tok = reader.read_list()
            shape = _shape_of(items, open_tok, reader.text)
            if len(shape) != 1:
                raise _Stop(f"a list under '{key_tok.text}' must be flat; got shape {shape}", open_tok.start)
            unit = read_value_unit()
            sect_name = _SECTION_WORDS.get(key, key)
            for k, v in enumerate(_flatten(items)):
                add(_Tok("word", f"{sect_name}[{k}]", key_tok.start, key_tok.end), v, None, unit)
            return
        if val.kind == "num":
            reader.i += 1
            unit = read_value_unit()
            known = key in _COMPONENT_WORDS.split() or key in ("x", "y", "z", "w")
            if not known:
                reader.stop(f"'{key_tok.text}' is not a pose component name; accepted: {_COMPONENT_WORDS}", key_tok)
            add(key_tok, val.value, section[0] if not inside_object else sect, unit)
            return
        reader.stop(f"the value of '{key_tok.text}' is not a number", val)

    while True:
        reader.skip_newlines()
        t = reader.peek()
        if t is None:
            break
        if t.kind == "punct" and t.text in ",;":
            reader.i += 1
            continue
        if t.kind == "punct" and t.text == "{":
            fmt = "JSON object"
            read_object(None)
            continue
        read_entry(section[0])
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
        c = self.convention
        rk = self.rotation_kind
        if rk == "quaternion":
            order = "(w, x, y, z), scalar first" if c.scalar == "first" else "(x, y, z, w), scalar last"
            rtext = f"a quaternion written {order}, {'Hamilton' if c.algebra == 'hamilton' else 'JPL'} algebra"
        elif rk == "euler":
            rtext = (f"Euler angles in {c.unit}, sequence {c.sequence} {c.axes} "
                     f"({c.describe_euler()})")
        elif rk == "rotation-vector":
            rtext = f"a rotation vector (axis times angle) in {c.unit}"
        elif self.kind == "transform":
            size = "4x4 homogeneous transform" if self.count == 16 else "3x4 [R | t] matrix"
            rtext = f"a {size} read {'row by row' if c.layout == 'row-major' else 'column by column'}"
        elif self.kind == "position":
            return "a position (x, y, z) only"
        else:
            rtext = f"a 3x3 rotation matrix read {'row by row' if c.layout == 'row-major' else 'column by column'}"
        if self.kind.startswith("position-"):
            return (f"a position (x, y, z) then {rtext}" if self.position_first
                    else f"{rtext}, then a position (x, y, z)")
        return rtext

    def code(self, name: str = "numbers") -> str:
        """A posekit call that reads ``name`` (the pasted numbers) this way.

        The matrix kinds flatten first so the layout applies; matrices off orthonormal
        by more than posekit's tolerance go through ``pk.nearest_rotation`` (stated).
        """
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
    for name, v in zip(names, values):
        sect, _, key = name.rpartition(".")
        u = units.get(name)
        if u in _ANGLE_UNITS:
            angle_units.add(_ANGLE_UNITS[u])
        elif u in _LENGTH_UNITS:
            length_scale.add(_LENGTH_UNITS[u])
        m = re.fullmatch(r"(\w+)\[(\d+)\]", key)
        if m:
            lists.setdefault(m.group(1), []).append(v)
            continue
        if sect == "position" or key in _POSITION_NAMES:
            pos[_POSITION_NAMES.get(key, key)] = v
        elif key in _ANGLE_NAMES:
            ang[_ANGLE_NAMES[key]] = v
        elif key in _ROTVEC_NAMES:
            rvec[_ROTVEC_NAMES[key]] = v
        elif sect == "rotation" or key in _QUATERNION_NAMES:
            quat[_QUATERNION_NAMES.get(key, key)] = v
        elif key in ("x", "y", "z"):
            pos[key] = v
        else:
            raise NoInterpretationError(f"component '{name}' is not one posekit can place")
    # a bare x y z w (no headings) is a quaternion
    if "w" in quat and not [n for n in names if n.startswith("rotation.")] and set(pos) == {"x", "y", "z"} \
            and set(quat) == {"w"}:
        quat.update(pos)
        pos = {}
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
            out = _angle_candidates(r, "", translation, True, count)
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
            lines.append(f"{len(self.interpretations)} interpretation(s)"
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


def parse_numbers(text: str) -> ParsedNumbers:
    """Read pasted text into numbers and list every plausible interpretation.

    Raises :class:`PasteParseError` (a :class:`~posekit.core.errors.PoseInputError`)
    with the position where reading stopped.  A count no pose has (e.g. 5 numbers)
    is read without error and has no interpretations; see
    :meth:`ParsedNumbers.require_interpretations`.

    >>> p = parse_numbers("array([0.0, 0.0, 0.0, 1.0])")
    >>> p.shape, len(p.interpretations), p.ambiguous
    ((4,), 4, True)
    >>> parse_numbers("x: 0.1\\ny: 0.2\\nz: 0.3").interpretations[0].kind
    'position'
    """
    if not isinstance(text, str):
        raise PasteParseError(f"expected text, got {type(text).__name__}", "", 0,
                              "a string of pasted numbers; pass arrays to interpret_numbers")
    try:
        toks = _scan(text)
        if not toks or all(t.kind == "punct" and t.text == "\n" for t in toks):
            raise _Stop("no numbers found (the text is empty)", len(text))
        fmt_prefix = ""
        label_notes: tuple[str, ...] = ()
        j = 0
        while j < len(toks) and toks[j].kind == "punct" and toks[j].text == "\n":
            j += 1
        # a leading label such as "R =" or "T_world_camera:" before a list or array(...)
        if (j + 2 < len(toks) and toks[j].kind == "word" and toks[j + 1].kind == "punct"
                and toks[j + 1].text in ":=" and toks[j].text.lower() not in _SECTION_WORDS
                and toks[j].text.lower() not in _COMPONENT_WORDS.split()):
            k = j + 2
            while k < len(toks) and toks[k].kind == "punct" and toks[k].text == "\n":
                k += 1
            if k < len(toks) and (toks[k].text in "[(" or toks[k].text in _WRAPPERS):
                label_notes = (f"the label '{toks[j].text}' before the numbers was skipped",)
                toks = toks[k:]
                j = 0
        # numpy-style wrapper: array( ... [, dtype=...] )
        if j < len(toks) and toks[j].kind == "word" and toks[j].text in _WRAPPERS:
            if j + 1 >= len(toks) or toks[j + 1].text != "(":
                raise _Stop(f"expected '(' after '{toks[j].text}'", toks[j + 1].start if j + 1 < len(toks) else len(text))
            depth, k = 0, j + 1
            close = None
            while k < len(toks):
                if toks[k].kind == "punct" and toks[k].text in "([":
                    depth += 1
                elif toks[k].kind == "punct" and toks[k].text in ")]":
                    depth -= 1
                    if depth == 0:
                        close = k
                        break
                k += 1
            if close is None:
                raise _Stop(f"'(' after '{toks[j].text}' is never closed", toks[j + 1].start)
            inner = toks[j + 2:close]
            # trailing ", dtype=float64" inside the call
            for d in range(len(inner)):
                if inner[d].kind == "word" and inner[d].text == "dtype":
                    if d == 0 or inner[d - 1].text != ",":
                        raise _Stop("expected ',' before dtype", inner[d].start)
                    rest = inner[d + 1:]
                    if not (len(rest) >= 2 and rest[0].text == "=" and rest[1].kind in ("word", "str")):
                        raise _Stop("expected dtype=<type name>", inner[d].start)
                    if len(rest) > 2:
                        raise _Stop("unexpected text after the dtype", rest[2].start)
                    inner = inner[:d - 1]
                    break
            after = [t for t in toks[close + 1:] if not (t.kind == "punct" and t.text == "\n")]
            if after:
                raise _Stop(f"unexpected {_Reader._what(after[0])} after the closing ')'", after[0].start)
            if not inner:
                raise _Stop("an empty array", toks[j + 1].start)
            toks = inner
            fmt_prefix = "numpy repr, "
        named = any(t.kind == "str" or (t.kind == "punct" and t.text in ":={}") for t in toks)
        stray = next((t for t in toks if t.kind == "word"), None)
        if not named and stray is not None:
            raise _Stop(f"unexpected word '{stray.text}' among numbers", stray.start)
        units_only = [t for t in toks if t.kind == "unit"]
        reader = _Reader(text, toks)
        if named:
            if fmt_prefix:
                bad = next(t for t in toks if t.kind in ("word", "str") or t.text in ":={}")
                raise _Stop(f"unexpected {_Reader._what(bad)} inside array(...)", bad.start)
            values, names, fmt, units = _read_named(reader)
            arr = np.asarray(values, dtype=np.float64)
            interps, notes = _interpret_named(arr, tuple(names), units, text)
            arr.setflags(write=False)
            return ParsedNumbers(text, arr, (arr.size,), fmt, interps, tuple(names), notes)
        if units_only:
            raise _Stop(f"a unit word '{units_only[0].text}' among unnamed numbers; name the components "
                        "(e.g. roll: 10 deg) or leave the unit out", units_only[0].start)
        flat, shape, fmt, notes = _read_numeric(reader)
    except _Stop as stop:
        raise PasteParseError(stop.reason, text, stop.position) from None
    arr = np.asarray(flat, dtype=np.float64)
    if not np.all(np.isfinite(arr)):  # 1e999 overflows to inf
        raise PasteParseError("a number too large to be finite", text, 0)
    arr.setflags(write=False)
    try:
        interps = interpret_numbers(arr, shape)
    except NoInterpretationError:
        interps = ()
    return ParsedNumbers(text, arr, tuple(shape), fmt_prefix + fmt, interps, None, label_notes + tuple(notes))
