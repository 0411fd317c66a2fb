"""Readings: what a list of pose numbers was taken to mean, and which of it the user said.

A :class:`Reading` is a kind of numbers (quaternion, Euler angles, 3x3, 4x4, ...), a
:class:`~posekit.core.Convention`, the order of position and rotation, and
``stated``: the convention fields the user actually chose.  The rest are defaults
nobody chose; the engine may contradict a stated field only as a named deviation
that costs more than contradicting a default.

The facts of every field for every kind live in :data:`FIELDS_OF_KIND` (which fields
give a kind its meaning) and in :func:`read_numbers` / :func:`write_numbers` (what a
field does to the numbers).  ``read_numbers`` is deliberately tolerant: it reads
reflections and off-orthonormal matrices as they are (the engine must be able to
score a handedness flip); ``write_numbers`` goes through posekit's checked writers,
so corrected numbers always read back through :func:`posekit.read_rotation` /
:func:`posekit.read_transform`.
"""

from __future__ import annotations

import itertools
import re
from dataclasses import dataclass, field, replace
from functools import lru_cache

import numpy as np

from ..core import rotation as rot
from ..core.convention import CHOICES, DEFAULT, TOUCHES, Convention, hash_once
from ..core.errors import ConventionError, PoseInputError
from ..core.reading import as_convention, describe_numbers, write_rotation
from ..core.transforms import make_transform, write_transform

__all__ = ["KINDS", "FIELDS_OF_KIND", "COUNTS", "Reading", "stated_reading", "read_numbers", "split_numbers", "write_numbers",
           "readings_of", "stated_fields"]

#: Every kind of numbers the engine reads, with the number counts each may have.
COUNTS = {"quaternion": (4,), "euler": (3,), "rotation-vector": (3,), "matrix": (9,), "transform": (12, 16),
          "position-quaternion": (7,), "position-euler": (6,), "position-rotation-vector": (6,)}
KINDS = tuple(COUNTS)

#: The convention fields that give each kind of numbers its meaning, in ``CHOICES`` order, derived
#: from ``posekit.core.convention.TOUCHES`` (a position kind has its rotation part's fields).
FIELDS_OF_KIND = {kind: tuple(f for f in CHOICES if kind.replace("position-", "") in TOUCHES[f]) for kind in COUNTS}

#: Fields that the numbers themselves can be read under in several ways (the engine
#: enumerates their values); ``action`` and ``direction`` are scored as relations instead.
_ENUMERATED = {"scalar", "algebra", "sequence", "axes", "unit", "layout"}

_DEFAULT_KIND = {3: "euler", 4: "quaternion", 6: "position-euler", 7: "position-quaternion", 9: "matrix",
                 12: "transform", 16: "transform"}


def stated_fields(convention) -> frozenset[str]:
    """The fields a convention value *states*: the keys written in its text, or, for a
    :class:`Convention` object, the fields that differ from the default (None: nothing).

    >>> sorted(stated_fields("scalar=first direction=child-from-parent"))
    ['direction', 'scalar']
    """
    if convention is None:
        return frozenset()
    if isinstance(convention, Convention):
        return frozenset(f for f in CHOICES if getattr(convention, f) != getattr(DEFAULT, f))
    if isinstance(convention, str):
        as_convention(convention)  # raises the typed error on bad text
        return frozenset(w.partition("=")[0] for w in re.split(r"[\s,;]+", convention.strip()) if "=" in w)
    raise ConventionError(f"convention: got {type(convention).__name__}; expected text such as "
                          "'scalar=last unit=degrees' or a posekit Convention")


@dataclass(frozen=True)
class Reading:
    """How numbers were (or should be) read: ``kind``, ``convention``, position order, ``stated`` fields.

    >>> r = Reading("quaternion", Convention(scalar="last"), frozenset({"scalar"}))
    >>> r.text()
    'scalar=last algebra=hamilton action=active direction=parent-from-child'
    """

    kind: str
    convention: Convention = DEFAULT
    stated: frozenset = field(default_factory=frozenset)
    position_first: bool = True
    count: int = 0

    def __hash__(self) -> int:
        return hash_once(self)

    def __post_init__(self):
        if self.kind not in COUNTS:
            raise PoseInputError(f"reading: unknown kind {self.kind!r}; accepted: {', '.join(KINDS)}")
        if not self.count:
            object.__setattr__(self, "count", COUNTS[self.kind][-1])
        if self.count not in COUNTS[self.kind]:
            raise PoseInputError(f"reading: a {self.kind} has {' or '.join(map(str, COUNTS[self.kind]))} numbers, "
                                 f"not {self.count}")
        object.__setattr__(self, "stated", frozenset(self.stated))

    # --- facts ------------------------------------------------------------------------
    @property
    def rotation_kind(self) -> str:
        return self.kind.replace("position-", "") if self.kind != "transform" else "matrix"

    @property
    def has_translation(self) -> bool:
        return self.kind.startswith("position-") or self.kind == "transform"

    @property
    def parameterised(self) -> bool:
        """True for angles, quaternions and rotation vectors (``action`` applies); False for matrices."""
        return self.rotation_kind != "matrix"

    def fields(self) -> dict[str, str]:
        """The convention fields that give these numbers their meaning, in a fixed order."""
        return {f: getattr(self.convention, f) for f in FIELDS_OF_KIND[self.kind]}

    def text(self) -> str:
        """The reading's fields in posekit's convention text, every one written out (never empty)."""
        return " ".join(f"{k}={v}" for k, v in self.fields().items())

    def code_text(self) -> str:
        """The shortest convention text that gives these numbers this meaning (only non-default fields)."""
        return " ".join(f"{k}={v}" for k, v in self.fields().items() if getattr(DEFAULT, k) != v)

    def alternatives(self) -> tuple["Reading", ...]:
        """Every other reading of the same numbers (:func:`readings_of` without this one)."""
        return readings_of(self)[1:]

    def with_fields(self, **settings) -> "Reading":
        return replace(self, convention=self.convention.changed(**settings))

    # --- words ------------------------------------------------------------------------
    def describe(self) -> str:
        """The reading in words, e.g. 'a quaternion written (x, y, z, w), Hamilton algebra, active, ...'."""
        return describe_numbers(self.kind, self.convention, count=self.count, position_first=self.position_first,
                                action=self.parameterised, direction=True)

    def said_back(self) -> str:
        """One line: the reading, which fields were stated and which were taken as defaults."""
        f = self.fields()
        stated = [f"{k}={v}" for k, v in f.items() if k in self.stated]
        free = [f"{k}={v}" for k, v in f.items() if k not in self.stated]
        parts = [f"read as {self.describe()}"]
        parts.append("you stated " + (" ".join(stated) if stated else "no field"))
        if free:
            parts.append("not stated, so free to be wrong: " + " ".join(free))
        return "; ".join(parts)

    def as_dict(self) -> dict:
        return {"kind": self.kind, "count": self.count, "position_first": self.position_first,
                "convention": self.text(), "stated": sorted(self.stated & set(self.fields())),
                "words": self.describe()}


def stated_reading(count: int, kind: str | None = None, convention=None, stated=None,
                   position_first: bool = True) -> Reading:
    """The reading the user stated for ``count`` numbers (kind by count unless given).

    ``convention``: text (its keys are the stated fields; blank text states nothing), a
    Convention (fields off the default are stated), a :class:`Reading` (returned as is) or None.  ``stated``
    overrides the stated field set.

    >>> stated_reading(4, convention="scalar=last").said_back().split(";")[1]
    ' you stated scalar=last'
    """
    if isinstance(convention, Reading):
        return convention
    if isinstance(convention, str) and not convention.strip():
        convention = None  # blank text states nothing (and, in diagnose, keeps the expected side's from applying)
    kind = kind or _DEFAULT_KIND.get(count)
    if kind is None:
        raise PoseInputError(f"reading: no pose kind has {count} numbers; accepted counts: "
                             f"{', '.join(str(c) for c in sorted(_DEFAULT_KIND))}")
    if kind == "position-transform":
        kind = "transform"
    conv = as_convention(convention)
    fields = stated_fields(convention) if stated is None else frozenset(stated)
    return Reading(kind, conv, fields, position_first, count)


@lru_cache(maxsize=256)
def readings_of(stated: Reading) -> tuple[Reading, ...]:
    """Every reading of the same numbers one or more enumerated fields (or the kind, or the
    position order) away from ``stated``, the stated one first; ``action`` and ``direction``
    stay as stated (the scorer tries their flips as relations).

    >>> len(readings_of(stated_reading(4)))
    4
    """
    kinds = [stated.kind]
    if stated.rotation_kind in ("euler", "rotation-vector"):
        other = "rotation-vector" if stated.rotation_kind == "euler" else "euler"
        kinds.append(stated.kind.replace(stated.rotation_kind, other))
    orders = [stated.position_first, not stated.position_first] if stated.kind.startswith("position-") \
        else [stated.position_first]
    out = []
    for position_first in orders:
        for kind in kinds:
            names = [f for f in FIELDS_OF_KIND[kind] if f in _ENUMERATED]
            # the stated value first, then the others in CHOICES order
            values = [[getattr(stated.convention, f)] + [v for v in CHOICES[f] if v != getattr(stated.convention, f)]
                      for f in names]
            for combo in itertools.product(*values):
                conv = stated.convention.changed(**dict(zip(names, combo)))
                out.append(Reading(kind, conv, stated.stated, position_first, stated.count))
    return tuple(out)


# --------------------------------------------------------------------------------------
# numbers <-> poses
# --------------------------------------------------------------------------------------

def split_numbers(reading: Reading, numbers: np.ndarray):
    """Numbers ``(..., n)`` -> (rotation numbers, translation numbers or None) in the reading's slot order."""
    if not reading.kind.startswith("position-"):
        return numbers, None
    if reading.position_first:
        return numbers[..., 3:], numbers[..., :3]
    return numbers[..., :-3], numbers[..., -3:]


def read_numbers(reading: Reading, numbers, *, action=None, direction=None):
    """Numbers ``(..., n)`` read under ``reading`` -> ``(rotation (..., 3, 3), translation (..., 3) or None)``.

    Tolerant on purpose: a reflected or off-orthonormal matrix is read as it stands
    (no check, no projection) and a quaternion is divided by its length; the caller
    judges the result.  ``action`` / ``direction`` override the reading's fields (the
    scorer's relations).  Steps as in :mod:`posekit.core.reading`: the kind's own rule,
    then ``action`` (passive parameters give the transpose), then ``direction``
    (child-from-parent gives the inverse transform).
    """
    c = reading.convention
    action = c.action if action is None else action
    direction = c.direction if direction is None else direction
    y = np.asarray(numbers, dtype=np.float64)
    rk = reading.rotation_kind
    t = None
    if reading.kind == "transform":
        rows = 4 if reading.count == 16 else 3
        if c.layout == "row-major":
            m = y.reshape(y.shape[:-1] + (rows, 4))
        else:
            m = np.swapaxes(y.reshape(y.shape[:-1] + (4, rows)), -1, -2)
        r, t = m[..., :3, :3], m[..., :3, 3]
    elif rk == "matrix":
        r = y.reshape(y.shape[:-1] + (3, 3))
        if c.layout == "column-major":
            r = np.swapaxes(r, -1, -2)
    else:
        rot_nums, t = split_numbers(reading, y)
        scale = np.pi / 180.0 if c.unit == "degrees" else 1.0
        if rk == "quaternion":
            q = rot_nums if c.scalar == "first" else np.concatenate([rot_nums[..., 3:], rot_nums[..., :3]], -1)
            n = np.sqrt(np.sum(q * q, axis=-1, keepdims=True))
            q = q / np.where(n == 0, 1.0, n)
            if c.algebra == "jpl":  # the same four numbers give the transposed matrix (Trawny & Roumeliotis 2005)
                q = rot.conjugate(q)
            r = rot.matrix_of_quaternion(q)
        elif rk == "euler":
            r = rot.matrix_of_euler(rot_nums * scale, c.axes_letters, c.intrinsic)
        else:
            r = rot.matrix_of_quaternion(rot.quaternion_of_rotvec(rot_nums * scale))
        if action == "passive":
            r = np.swapaxes(r, -1, -2)
    r = np.array(r, dtype=np.float64)
    t = None if t is None else np.array(t, dtype=np.float64)
    if direction == "child-from-parent":
        r = np.swapaxes(r, -1, -2).copy()
        if t is not None:
            t = -np.einsum("...ab,...b->...a", r, t)
    return r, t


def write_numbers(reading: Reading, rotation, translation=None) -> np.ndarray:
    """Canonical ``rotation (..., 3, 3)`` (and ``translation (..., 3)``) written under ``reading``
    -> ``(..., count)``: the same kind, count, layout and order the reading names.

    Goes through posekit's checked writers (a reflection or non-rotation raises), so
    what comes out reads back with :func:`posekit.read_rotation` /
    :func:`posekit.read_transform` under ``reading.code_text()``.
    """
    c = reading.convention
    r = np.asarray(rotation, dtype=np.float64)
    rk = reading.rotation_kind
    if reading.has_translation:
        t = np.zeros(r.shape[:-2] + (3,)) if translation is None else np.asarray(translation, dtype=np.float64)
        if reading.kind == "transform":
            m = write_transform(make_transform(r, t), "matrix", c)
            if reading.count == 12:
                m = m[..., :3, :]
                return (np.swapaxes(m, -1, -2) if c.layout == "column-major" else m).reshape(r.shape[:-2] + (12,))
            return write_transform(make_transform(r, t), "matrix", c, flat=True)
        inner = c.changed(direction="parent-from-child")
        if c.direction == "child-from-parent":
            r, t = np.swapaxes(r, -1, -2), -np.einsum("...ba,...b->...a", r, t)
        rot_nums = write_rotation(r, rk, inner)
        parts = [t, rot_nums] if reading.position_first else [rot_nums, t]
        return np.concatenate(parts, axis=-1)
    return write_rotation(r, rk, c, flat=True) if rk == "matrix" else write_rotation(r, rk, c)
