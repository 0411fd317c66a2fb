"""The convention value: every choice that gives a list of pose numbers its meaning.

A :class:`Convention` is frozen and hashable.  It prints itself in words
(:meth:`Convention.describe`) and round-trips through a short text form of
posekit's own (:meth:`Convention.to_text` / :meth:`Convention.parse`).

Text form grammar (documented in DEVELOPERS.md as well)::

    convention := setting ( separator setting )*
    separator  := one or more of: space, comma, semicolon, newline
    setting    := key "=" value
    key        := sequence | axes | unit | wrap | scalar | algebra | action
                | direction | layout
    value      := lower-case words from the table below (hyphens allowed)

Every key may appear at most once; a key left out takes its default.  Letter case
carries no meaning in posekit, so upper-case text is refused rather than guessed.
The text is plain ASCII: a character outside it (a Cyrillic ``е`` that looks like ``e``,
the hyphen U+2010, a fullwidth ``＝``, a non-breaking space) is refused and named with
its code point, and text longer than :data:`TEXT_LIMIT` characters is refused before it
is read.  Messages quote at most a short excerpt of the text.

=========  ==============================================  =====================
key        values                                          default
=========  ==============================================  =====================
sequence   z-y-x, x-y-z, ... (12 sequences; "zyx" also ok)  z-y-x
axes       intrinsic (about the moving axes),               intrinsic
           extrinsic (about the fixed axes)
unit       radians, degrees                                 radians
wrap       signed (-180, 180], positive [0, 360)            signed
scalar     first (w, x, y, z), last (x, y, z, w)            first
algebra    hamilton (ij = k), jpl (ij = -k)                 hamilton
action     active (turns vectors), passive (re-expresses)   active
direction  parent-from-child, child-from-parent             parent-from-child
layout     row-major, column-major                          row-major
=========  ==============================================  =====================

Example: ``"sequence=z-y-x axes=intrinsic unit=degrees"``.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, fields, replace
from functools import lru_cache

from .errors import ConventionError, ConventionTextError, ConventionTextTooLongError, excerpt, odd_characters, summarise
import numpy as np

from .rotation import PROPER_EULER, SEQUENCES, TAIT_BRYAN, wrap_signed

__all__ = ["Convention", "CHOICES", "DEFAULT", "TOUCHES", "TEXT_LIMIT"]

#: The longest convention text read, in characters.  The full text form (every key written out)
#: is under 200 characters; posekit/core imports nothing above it, so this bound lives here, next
#: to the grammar it bounds.
TEXT_LIMIT = 1000
_SEPARATORS = re.compile(r"[ \t\r\n,;]+")

#: The accepted values of every field, in display order.
CHOICES: dict[str, tuple[str, ...]] = {
    "sequence": tuple("-".join(s) for s in SEQUENCES),
    "axes": ("intrinsic", "extrinsic"),
    "unit": ("radians", "degrees"),
    "wrap": ("signed", "positive"),
    "scalar": ("first", "last"),
    "algebra": ("hamilton", "jpl"),
    "action": ("active", "passive"),
    "direction": ("parent-from-child", "child-from-parent"),
    "layout": ("row-major", "column-major"),
}

#: Which kinds of numbers each field gives meaning to; every other kind ignores it.  The one
#: statement of it: the explanation engine derives the fields of each reading from here.  A
#: written-out matrix is already a map, so ``action`` does not touch it; ``wrap`` shapes only
#: the angles posekit writes back.
TOUCHES: dict[str, tuple[str, ...]] = {
    "sequence": ("euler",),
    "axes": ("euler",),
    "unit": ("euler", "rotation-vector", "axis-angle", "planar-angle"),
    "wrap": (),
    "scalar": ("quaternion",),
    "algebra": ("quaternion",),
    "action": ("quaternion", "euler", "rotation-vector", "axis-angle", "planar-angle"),
    "direction": ("matrix", "transform", "quaternion", "euler", "rotation-vector", "axis-angle", "planar-angle"),
    "layout": ("matrix", "transform"),
}

_FIELD_HELP = {
    "sequence": "the axes of the three Euler turns, in order",
    "axes": "intrinsic turns about the moving axes, extrinsic about the fixed axes",
    "unit": "angle unit of Euler angles, axis-angle and planar angles",
    "wrap": "range of the read-back outer angles",
    "scalar": "where the quaternion's scalar part w sits",
    "algebra": "quaternion multiplication rule",
    "action": "whether angles/quaternions build the matrix that turns vectors or its transpose",
    "direction": "which frame's coordinates go in and which come out",
    "layout": "order of a flat list of 9 or 16 matrix numbers",
}


@dataclass(frozen=True)
class Convention:
    """Every convention axis, fixed.  Frozen and hashable; build variants with :meth:`changed`.

    >>> c = Convention(sequence="z-y-x", unit="degrees")
    >>> Convention.parse(c.to_text()) == c
    True
    """

    sequence: str = "z-y-x"
    axes: str = "intrinsic"
    unit: str = "radians"
    wrap: str = "signed"
    scalar: str = "first"
    algebra: str = "hamilton"
    action: str = "active"
    direction: str = "parent-from-child"
    layout: str = "row-major"

    def __hash__(self) -> int:
        return hash_once(self)

    def __post_init__(self):
        seq = self.sequence
        if isinstance(seq, str) and re.fullmatch(r"[xyz]{3}", seq):
            object.__setattr__(self, "sequence", "-".join(seq))
        for f in fields(self):
            value = getattr(self, f.name)
            allowed = CHOICES[f.name]
            if not isinstance(value, str) or value not in allowed:
                shown = excerpt(value, 40) if isinstance(value, str) else summarise(value, 40)
                raise ConventionError(
                    f"convention field '{f.name}' ({_FIELD_HELP[f.name]}): got {shown}; "
                    f"accepted: {', '.join(allowed)}")

    # --- derived facts -------------------------------------------------------------
    @property
    def axes_letters(self) -> str:
        """The Euler sequence as three letters, e.g. ``'zyx'``."""
        return self.sequence.replace("-", "")

    @property
    def intrinsic(self) -> bool:
        return self.axes == "intrinsic"

    @property
    def degrees(self) -> bool:
        return self.unit == "degrees"

    @property
    def is_proper_euler(self) -> bool:
        """True for the six sequences whose first and last axes agree (e.g. z-x-z)."""
        return self.axes_letters in PROPER_EULER

    @property
    def is_tait_bryan(self) -> bool:
        return self.axes_letters in TAIT_BRYAN

    def wrapped(self, radians):
        """Angles ``(...)`` in radians wrapped to this convention's range: ``(-pi, pi]`` (signed) or
        ``[0, 2 pi)`` (positive).  The one place the ``wrap`` choice is applied.

        >>> Convention(wrap="positive").wrapped([-0.5]).round(6).tolist()
        [5.783185]
        """
        out = wrap_signed(radians)
        if self.wrap == "positive":
            out = np.remainder(out, 2.0 * np.pi)
            out = np.where(out >= 2.0 * np.pi, 0.0, out)
        return out

    def alternatives(self, fields=None) -> tuple["Convention", ...]:
        """Every convention one field away (each other value of each field in ``fields``, default all),
        in ``CHOICES`` order.

        >>> [c.to_text().split()[4] for c in Convention().alternatives(["scalar"])]
        ['scalar=last']
        """
        names = list(CHOICES) if fields is None else list(fields)
        unknown = set(names) - set(CHOICES)
        if unknown:
            raise ConventionError(f"unknown convention field(s) {sorted(unknown)}; known fields: {', '.join(CHOICES)}")
        return tuple(replace(self, **{f: v}) for f in names for v in CHOICES[f] if v != getattr(self, f))

    def changed(self, **settings) -> "Convention":
        """A copy with some fields changed: ``c.changed(unit="degrees")``."""
        unknown = set(settings) - set(CHOICES)
        if unknown:
            raise ConventionError(f"unknown convention field(s) {sorted(unknown)}; "
                                  f"known fields: {', '.join(CHOICES)}")
        return replace(self, **settings)

    # --- text form ------------------------------------------------------------------
    def to_text(self) -> str:
        """The full text form, every key written out (see the module docstring)."""
        return " ".join(f"{f.name}={getattr(self, f.name)}" for f in fields(self))

    @classmethod
    def parse(cls, text: str) -> "Convention":
        """Read the text form; unknown words raise :class:`ConventionTextError` naming them.

        >>> Convention.parse("sequence=x-y-z axes=extrinsic unit=degrees").describe().split(";")[0]
        'turn the first angle about the fixed x axis, then the second about the fixed y axis, then the third about the fixed z axis (the usual roll, pitch, yaw)'
        """
        if isinstance(text, Convention):
            return text
        if not isinstance(text, str):
            raise ConventionTextError(f"convention text: got {type(text).__name__} {summarise(text, 40)}; "
                                      "expected a string such as 'sequence=z-y-x unit=degrees'")
        if len(text) > TEXT_LIMIT:
            raise ConventionTextTooLongError(f"convention text: {excerpt(text, 40)} is longer than the limit of "
                                      f"{TEXT_LIMIT} characters, so it was not read; accepted: at most {TEXT_LIMIT} "
                                      "characters of key=value settings such as 'sequence=z-y-x unit=degrees'")
        odd = odd_characters(text)
        if odd:
            raise ConventionTextError(
                f"convention text: {excerpt(text, 40)} holds characters outside plain ASCII (some look like the "
                f"letters, '-', '=' or spaces posekit reads but are not them): {'; '.join(odd)}; accepted: plain ASCII "
                f"key=value settings separated by spaces, commas, semicolons or newlines (accepted keys: "
                f"{', '.join(CHOICES)})")
        if cls is Convention:
            return _parse_cached(text)  # conventions are frozen, so one parse per text serves every caller
        return cls._parse_text(text)

    @classmethod
    def _parse_text(cls, text: str) -> "Convention":
        settings: dict[str, str] = {}
        for word in [w for w in _SEPARATORS.split(text) if w]:
            if word != word.lower():
                raise ConventionTextError(
                    f"convention text: {excerpt(word, 40)} has upper-case letters; letter case carries no meaning "
                    "in posekit (write axes=intrinsic or axes=extrinsic explicitly), so use lower case")
            if "=" not in word:
                raise ConventionTextError(
                    f"convention text: {excerpt(word, 40)} is not of the form key=value; accepted keys: "
                    f"{', '.join(CHOICES)}")
            key, _, value = word.partition("=")
            if key not in CHOICES:
                raise ConventionTextError(
                    f"convention text: unknown key {excerpt(key, 40)} in {excerpt(word, 60)}; accepted keys: "
                    f"{', '.join(CHOICES)}")
            if key in settings:
                raise ConventionTextError(f"convention text: key '{key}' is given twice; accepted: each key at "
                                          "most once")
            if key == "sequence" and re.fullmatch(r"[xyz]{3}", value):
                value = "-".join(value)
            if value not in CHOICES[key]:
                raise ConventionTextError(
                    f"convention text: {excerpt(value, 40)} is not a known value for '{key}' "
                    f"({_FIELD_HELP[key]}); accepted: {', '.join(CHOICES[key])}")
            settings[key] = value
        if not settings:
            raise ConventionTextError("convention text is empty; write e.g. 'sequence=z-y-x unit=degrees' "
                                      f"(accepted keys: {', '.join(CHOICES)})")
        return cls(**settings)

    def __str__(self) -> str:
        return self.to_text()

    # --- words ----------------------------------------------------------------------
    def describe_euler(self) -> str:
        """The Euler part in words."""
        a, b, c = self.axes_letters
        if self.intrinsic:
            text = (f"turn the first angle about {a}, then the second about the new {b}, "
                    f"then the third about the new {c}")
        else:
            text = (f"turn the first angle about the fixed {a} axis, then the second about the fixed {b} axis, "
                    f"then the third about the fixed {c} axis")
        usual = {("zyx", True): "yaw, pitch, roll", ("xyz", False): "roll, pitch, yaw",
                 ("zxz", True): "classical precession, nutation, spin"}
        key = (self.axes_letters, self.intrinsic)
        if key in usual:
            text += f" (the usual {usual[key]})"
        return text

    def describe(self) -> str:
        """Every axis of the convention in plain words, separated by semicolons."""
        unit = "degrees" if self.degrees else "radians"
        full = "360" if self.degrees else "2 pi"
        half = "180" if self.degrees else "pi"
        wrap = f"(-{half}, {half}]" if self.wrap == "signed" else f"[0, {full})"
        order = "(w, x, y, z), scalar first" if self.scalar == "first" else "(x, y, z, w), scalar last"
        algebra = "Hamilton algebra (ij = k)" if self.algebra == "hamilton" else "JPL algebra (ij = -k)"
        action = ("angles and quaternions build the active matrix (it turns vectors)" if self.action == "active"
                  else "angles and quaternions build the passive matrix (it re-expresses a fixed vector in the "
                       "turned frame: the transpose of the active one)")
        direction = ("the transform maps child coordinates into the parent frame"
                     if self.direction == "parent-from-child"
                     else "the transform maps parent coordinates into the child frame")
        layout = ("flat matrix numbers are read row by row" if self.layout == "row-major"
                  else "flat matrix numbers are read column by column")
        return "; ".join([self.describe_euler(), f"angles in {unit}, outer angles read back in {wrap}",
                          f"quaternions written {order}, {algebra}", action, direction, layout])


def hash_once(value) -> int:
    """The hash of a frozen dataclass value, computed on first use and kept on the value.

    Conventions, readings and slips are hashed on every ranking of the explanation engine (its
    caches of the prior and the tie order); their fields never change, so neither does the hash.
    """
    h = value.__dict__.get("_hash")
    if h is None:
        h = hash(tuple(getattr(value, f.name) for f in fields(value)))
        object.__setattr__(value, "_hash", h)
    return h


DEFAULT = Convention()


@lru_cache(maxsize=512)
def _parse_cached(text: str) -> Convention:
    """``Convention.parse`` of one text, remembered (bad text raises every time: errors are not cached)."""
    return Convention._parse_text(text)
