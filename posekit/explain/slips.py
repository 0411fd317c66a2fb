"""Slips: one structured value for "the numbers were written one way and read another".

A :class:`Slip` holds the *true* reading of the numbers (the kind, the convention
fields, the position order the writer used) next to the *stated* reading (what the
user said), plus the slips no convention field names: the rotation block transposed
on its own (matrices; for angles and quaternions that is the ``action`` field), an
axis remap on the parent side and on the child side (one of the 24 proper or 24
improper signed permutations), a length scale, and the frame the translation was
expressed in.  It knows how many things it claims went wrong
(:meth:`Slip.deviations`) and how to undo itself on numbers (:meth:`Slip.decode`);
it knows no words (see :mod:`posekit.explain.render`).

Forward model of a slip (truth ``(R, t)`` -> numbers): ``t1 = f(R, t)`` (as is,
``R^T t`` in child axes, or ``-R^T t`` of the inverse), ``t2 = t1 / s``,
``(R2, t3) = (P R Q, P t2)``, ``R3 = R2^T`` if the rotation block is transposed (the
translation untouched), numbers = the true reading's writing of ``(R3, t3)``.
:meth:`Slip.decode` runs it backwards.

**The prior** (:data:`PRIOR_WEIGHT` per deviation, i.e. a prior probability
``exp(-PRIOR_WEIGHT k)`` for ``k`` deviations), written once here and nowhere else:

* a convention field that differs from a default nobody chose: 1;
* a convention field that differs from a field the user *stated*: :data:`STATED_COST`;
* a different kind of numbers (rotation vector vs Euler angles) or position order: 1;
* the rotation block transposed on its own, a length scale, a translation frame: 1 each;
* a remap: 1 for a named frame change (ENU/NED, FLU/FRD, optical), 2.5 for any other
  proper remap (rarer than contradicting a stated field), 3 for a single mirrored axis, 4 for
  any other reflection (so a proper explanation always wins a tie with an improper one).

Ties of equal cost are broken by :meth:`Slip.order_key`, a fixed order of the slip
families (:data:`FAMILY_ORDER`), so the same set of explanations always has the same lead.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from ..core import rotation as rot
from ..core.convention import hash_once
from .readings import FIELDS_OF_KIND, Reading, read_numbers

__all__ = ["PRIOR_WEIGHT", "STATED_COST", "FAMILY_ORDER", "REMAPS", "PROPER_REMAPS", "NAMED_REMAPS",
           "LENGTH_SCALES", "TRANSLATION_FRAMES", "remap_cost", "describe_remap", "Slip"]

#: Cost of one deviation from the stated reading (prior ``exp(-PRIOR_WEIGHT k)``).
PRIOR_WEIGHT = 3.0
#: Deviations charged for contradicting a field the user stated (a default counts 1).
STATED_COST = 2.0

#: Slip families in the order that breaks exact ties (earlier leads).
FAMILY_ORDER = ("direction", "action", "layout", "scalar", "algebra", "unit", "axes", "sequence", "kind", "order",
                "transposed", "length_scale", "translation_frame", "parent_remap", "child_remap")

#: Length factors: the true metres are ``s`` times the numbers read as metres.
LENGTH_SCALES = (1.0, 1e-3, 1e3)
TRANSLATION_FRAMES = ("parent", "child-axes", "inverse-translation")


def _signed_permutations() -> np.ndarray:
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


#: The 48 signed permutation matrices: identity first, then the 23 other proper ones, then the 24
#: improper ones (common practice: 24 proper signed axis permutations, 48 in all).
REMAPS = _signed_permutations()
REMAPS.setflags(write=False)
PROPER_REMAPS = REMAPS[:24]

#: Named frame changes (common practice; see DEVELOPERS.md "Axis remaps").
NAMED_REMAPS = {
    "ENU <-> NED": np.array([[0, 1, 0], [1, 0, 0], [0, 0, -1.0]]),
    "FLU <-> FRD": np.diag([1.0, -1.0, -1.0]),
    "FLU body -> optical (x right, y down, z forward)": np.array([[0, -1, 0], [0, 0, -1], [1, 0, 0.0]]),
    "optical (x right, y down, z forward) -> FLU body": np.array([[0, 0, 1], [-1, 0, 0], [0, -1, 0.0]]),
}


def _remap_costs(mats: np.ndarray) -> np.ndarray:
    ident = np.all(mats == np.eye(3), axis=(1, 2))
    improper = np.linalg.det(mats) < 0
    named = np.zeros(len(mats), dtype=bool)
    for ref in NAMED_REMAPS.values():
        named |= np.all(mats == ref, axis=(1, 2))
    diag = np.all(mats * (1 - np.eye(3)) == 0, axis=(1, 2))
    single_mirror = diag & improper & (np.sum(np.diagonal(mats, axis1=1, axis2=2) < 0, axis=1) == 1)
    cost = np.where(improper, 4.0, 2.5)
    cost = np.where(single_mirror, 3.0, cost)
    cost = np.where(named, 1.0, cost)
    return np.where(ident, 0.0, cost)


_REMAP_COSTS = _remap_costs(np.asarray(REMAPS))
_REMAP_COSTS.setflags(write=False)


def remap_cost(index) -> np.ndarray:
    """Deviations charged for remap ``index`` (into :data:`REMAPS`)."""
    return _REMAP_COSTS[index]


def describe_remap(matrix) -> str:
    """A signed permutation ``(3, 3)`` in words: its name if common, else the axis map.

    The matrix maps the frame's coordinates as expected to those as written
    (``p_written = P p_expected``).

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
    for name, ref in NAMED_REMAPS.items():
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


@dataclass(frozen=True)
class Slip:
    """How numbers written under ``true`` were read under ``stated``, plus the slips no field names.

    ``transposed``: the rotation block was transposed on its own (matrix kinds only;
    for angles and quaternions this is the ``action`` field of ``true``).
    ``parent_remap`` / ``child_remap``: indices into :data:`REMAPS` (0 = none).
    ``length_scale``: true metres per number read as metres.  ``translation_frame``:
    one of :data:`TRANSLATION_FRAMES`.
    """

    stated: Reading
    true: Reading
    transposed: bool = False
    parent_remap: int = 0
    child_remap: int = 0
    length_scale: float = 1.0
    translation_frame: str = "parent"

    def __hash__(self) -> int:
        return hash_once(self)

    # --- what it claims ----------------------------------------------------------------
    def field_changes(self) -> tuple[tuple[str, str, str], ...]:
        """``(field, stated value, true value)`` for every field that gives the numbers meaning and differs."""
        names = [f for f in FIELDS_OF_KIND[self.true.kind]]
        return tuple((f, getattr(self.stated.convention, f), getattr(self.true.convention, f)) for f in names
                     if getattr(self.stated.convention, f) != getattr(self.true.convention, f))

    @property
    def kind_changed(self) -> bool:
        return self.true.rotation_kind != self.stated.rotation_kind

    @property
    def order_changed(self) -> bool:
        return self.true.kind.startswith("position-") and self.true.position_first != self.stated.position_first

    @property
    def improper(self) -> bool:
        """True when exactly one remap is a reflection: the written frame has the other handedness."""
        return bool((self.parent_remap >= 24) != (self.child_remap >= 24))

    @property
    def is_none(self) -> bool:
        """True when the numbers are claimed to follow the stated reading exactly."""
        return self.deviations() == 0

    def families(self) -> tuple[str, ...]:
        """The slip families this slip uses, in :data:`FAMILY_ORDER`."""
        used = {f for f, _, _ in self.field_changes()}
        if self.kind_changed:
            used.add("kind")
        if self.order_changed:
            used.add("order")
        for name, on in (("transposed", self.transposed), ("length_scale", self.length_scale != 1.0),
                         ("translation_frame", self.translation_frame != "parent"),
                         ("parent_remap", self.parent_remap != 0), ("child_remap", self.child_remap != 0)):
            if on:
                used.add(name)
        return tuple(f for f in FAMILY_ORDER if f in used)

    def deviations(self) -> float:
        """How many things this slip claims went wrong (see the module's prior)."""
        return _deviations(self)

    def _count(self) -> float:
        n = 0.0
        for f, _, _ in self.field_changes():
            n += STATED_COST if f in self.stated.stated else 1.0
        n += float(self.kind_changed) + float(self.order_changed) + float(self.transposed)
        n += float(self.length_scale != 1.0) + float(self.translation_frame != "parent")
        n += float(remap_cost(self.parent_remap) + remap_cost(self.child_remap))
        return n

    def order_key(self) -> tuple:
        """Fixed tie order: fewer deviations, then earlier families, then remap indices."""
        return _order_key(self)

    def _key(self) -> tuple:
        fam = tuple(FAMILY_ORDER.index(f) for f in self.families())
        return (round(self.deviations(), 9), len(fam), fam, self.parent_remap, self.child_remap)

    # --- what it does --------------------------------------------------------------------
    def decode(self, numbers, *, read=None):
        """The pose the numbers ``(..., n)`` really denote: ``(rotation (..., 3, 3), translation (..., 3) or None)``.

        Reads under the true reading (``read``: ``read_numbers(true, numbers)``, when the
        caller has it already), then undoes the transpose, the transpose, the remaps, the length scale and the
        translation frame (the module's forward model, backwards).
        """
        r, t = read_numbers(self.true, numbers) if read is None else read
        if self.transposed:  # the rotation block as read is the transpose; the translation is not touched
            r = np.swapaxes(r, -1, -2)
        p, q = REMAPS[self.parent_remap], REMAPS[self.child_remap]
        r = p.T @ r @ q.T
        if t is not None:
            t = np.einsum("ba,...b->...a", p, t) * self.length_scale
            if self.translation_frame == "child-axes":
                t = np.einsum("...ab,...b->...a", r, t)
            elif self.translation_frame == "inverse-translation":
                t = -np.einsum("...ab,...b->...a", r, t)
        return r, t

    def as_dict(self) -> dict:
        """The slip as plain data (JSON-ready)."""
        return {"true_reading": self.true.as_dict(), "changes": [list(c) for c in self.field_changes()],
                "kind_changed": self.kind_changed, "order_changed": self.order_changed,
                "rotation_block_transposed": self.transposed,
                "parent_remap": REMAPS[self.parent_remap].astype(int).tolist(),
                "child_remap": REMAPS[self.child_remap].astype(int).tolist(),
                "length_scale": self.length_scale, "translation_frame": self.translation_frame,
                "deviations": self.deviations(), "handedness_flip": self.improper}


@lru_cache(maxsize=65536)
def _deviations(slip: Slip) -> float:
    return slip._count()


@lru_cache(maxsize=65536)
def _order_key(slip: Slip) -> tuple:
    return slip._key()
