"""A graph of named frames joined by transforms, with lookups and loop checks.

Real systems chain transforms (world -> vehicle base -> sensor mount -> sensor) and the
wrong one is usually one edge among many, often entered in the wrong direction or the
wrong convention.  A :class:`FrameGraph` keeps every edge exactly as it was entered -
the numbers, their kind, the :class:`~posekit.Convention` they were written in (whose
``direction`` says which way they map) and which measurement they came from - and
reads the canonical parent-from-child transform from them with posekit's core.

- :meth:`FrameGraph.lookup` composes along the path between any two frames and says
  the result in words ("coordinates in camera -> coordinates in world").
- :meth:`FrameGraph.check_loops` finds every loop (a pose known two ways, e.g. from a
  drawing and from a calibration), reports how far each fails to close (rotation angle
  and translation distance), and searches every single-edge fix for the ones that
  close every loop.  The fixes are the explanation engine's slips
  (:class:`posekit.explain.Slip`): the edge's numbers written under one reading and read
  under the edge's stated one - the direction flipped, passive instead of active,
  another quaternion order or algebra, another Euler sequence or axes, another angle
  unit, another flat layout, a rotation block transposed on its own, a translation in
  millimetres read as metres (or the other way).  The engine's prior
  (:meth:`~posekit.explain.Slip.deviations`: contradicting a field the edge's convention
  text stated costs more than a default nobody chose), its tie order
  (:meth:`~posekit.explain.Slip.order_key`) and its words (:func:`posekit.explain.sentence`)
  are used as they are; SE(2) edges are read by the engine as SE(3) numbers about z.
- SE(3) graphs hold ``(4, 4)`` transforms, SE(2) graphs (``planar=True``) ``(3, 3)``.

The graph and every result are immutable: ``with_edge``, ``flipped``,
``with_convention`` and ``replaced`` return new graphs.

Formulas: composition ``T_a_c = T_a_b T_b_c`` and inverse ``[[R^T, -R^T t], [0, 1]]``
(Craig, Introduction to Robotics, 3rd ed., §2.3-2.5, from memory); a loop
``T_1 T_2 ... T_k`` of consistent transforms is the identity (common practice); its
rotation angle is the geodesic angle to the identity (:func:`posekit.angle_between`).

>>> g = (FrameGraph()
...      .with_edge("world", "base", [1, 0, 0, 1, 0, 0, 0], "position-quaternion")
...      .with_edge("base", "camera", [0, 0, 0.5, 90, 0, 0], "position-euler", "unit=degrees"))
>>> look = g.lookup("world", "camera")
>>> look.words
'coordinates in camera -> coordinates in world'
>>> np.round(look.matrix[:3, 3], 12).tolist()
[1.0, 0.0, 0.5]
"""

from __future__ import annotations

import difflib
from collections import deque
from dataclasses import dataclass, field, replace

import numpy as np

from ..core.checks import checked_tolerance, as_numbers
from ..core.convention import CHOICES, DEFAULT, Convention
from ..core.errors import PoseInputError, WrongShapeError, WrongTypeError
from ..core.ops import angle_between
from ..core.reading import as_convention, write_rotation
from ..core.transforms import (TRANSFORM_KINDS, checked_transform, invert_transform, make_planar,
                               read_transform, write_transform)
from ..explain import (Candidate, ExpectedSide, Reading, Slip, readings_of, score, sentence,
                       stated_fields, write_numbers)

__all__ = [
    "SPATIAL_KINDS", "PLANAR_KINDS", "CHANGES",
    "FrameGraphError", "UnknownFrameError", "FrameNameError", "DisconnectedFramesError",
    "DisagreeingEdgeError", "LoopInTreeError",
    "read_planar", "write_planar", "readout", "convention_words",
    "Edge", "Step", "Lookup", "Readout", "Placement", "FrameTree", "Loop", "EdgeFix", "LoopCheck",
    "FrameGraph",
]

SPATIAL_KINDS = TRANSFORM_KINDS
#: SE(2) kinds: a ``(3, 3)`` homogeneous matrix (or 9 flat numbers per ``layout``), or
#: ``x, y, heading`` (heading in the convention's ``unit``).
PLANAR_KINDS = ("matrix", "position-heading")

#: The names an :class:`EdgeFix`'s ``change`` can take: the first family of its slip
#: (:meth:`posekit.explain.Slip.families`), in the engine's family order, with ``axes`` and
#: ``sequence`` both called "sequence".  Ties between fixes are not broken by this tuple but
#: by the engine's prior and tie order (:meth:`~posekit.explain.Slip.deviations`,
#: :meth:`~posekit.explain.Slip.order_key`).
CHANGES = ("direction", "action", "layout", "scalar", "algebra", "unit", "sequence", "rotation-transpose",
           "length-scale", "translation-frame", "parent-remap", "child-remap")

#: Family of a slip -> the fix's ``change`` name (families not listed keep their own name).
_CHANGE_OF_FAMILY = {"axes": "sequence", "transposed": "rotation-transpose", "length_scale": "length-scale",
                     "translation_frame": "translation-frame", "parent_remap": "parent-remap",
                     "child_remap": "child-remap"}

DEFAULT_ANGLE_TOLERANCE = float(np.radians(0.5))
DEFAULT_DISTANCE_TOLERANCE = 0.01


# --- errors --------------------------------------------------------------------------

class FrameGraphError(PoseInputError):
    """Base class for frame-graph input errors."""


class UnknownFrameError(FrameGraphError):
    """A frame name that is not in the graph; the message lists the known ones."""


class FrameNameError(FrameGraphError):
    """A frame name that cannot be used (not text, empty, or both ends of an edge)."""


class DisconnectedFramesError(FrameGraphError):
    """No chain of edges joins the frames asked about; the message lists the groups."""


class DisagreeingEdgeError(FrameGraphError):
    """The same measurement between two frames entered twice with different numbers."""


class LoopInTreeError(FrameGraphError):
    """A tree was asked for but the edges close a loop."""


def convention_words(convention) -> str:
    """The convention's text form with only the settings that differ from the defaults ("defaults" if none)."""
    conv = as_convention(convention)
    default = Convention()
    parts = [f"{k}={getattr(conv, k)}" for k in CHOICES if getattr(conv, k) != getattr(default, k)]
    return " ".join(parts) if parts else "defaults"


def _readonly(a) -> np.ndarray:
    a = np.array(a, dtype=np.float64, copy=True)
    a.setflags(write=False)
    return a


def _nested_tuple(a: np.ndarray):
    return tuple(_nested_tuple(x) for x in a) if a.ndim > 1 else tuple(float(v) for v in a)


# --- SE(2) reading -------------------------------------------------------------------

def _check_planar_kind(kind: str) -> None:
    if kind not in PLANAR_KINDS:
        raise PoseInputError(f"unknown kind of planar transform numbers {kind!r}; accepted: "
                             f"{', '.join(PLANAR_KINDS)}")


def read_planar(numbers, kind: str = "matrix", convention=None) -> np.ndarray:
    """Read SE(2) numbers under ``convention`` -> canonical parent-from-child ``(..., 3, 3)``.

    Kinds: ``matrix`` ``(..., 3, 3)`` or flat ``(..., 9)`` per ``layout``;
    ``position-heading`` ``(..., 3)``: x, y, heading in ``unit``.  ``action=passive``
    negates the heading (the transposed rotation); ``direction=child-from-parent``
    inverts the whole transform.  ``T = [[c, -s, x], [s, c, y], [0, 0, 1]]``
    (common practice).

    >>> np.round(read_planar([1, 2, 90], "position-heading", "unit=degrees"), 12).tolist()
    [[0.0, -1.0, 1.0], [1.0, 0.0, 2.0], [0.0, 0.0, 1.0]]
    """
    conv = as_convention(convention)
    _check_planar_kind(kind)
    if kind == "matrix":
        m = as_numbers(numbers, "planar transform", None)
        if m.shape[-1:] == (9,) and not (m.ndim >= 2 and m.shape[-2:] == (3, 3)):
            m = m.reshape(m.shape[:-1] + (3, 3))
            if conv.layout == "column-major":
                m = np.swapaxes(m, -1, -2)
        if m.ndim < 2 or m.shape[-2:] != (3, 3):
            raise WrongShapeError(f"planar transform: got shape {np.shape(numbers)}; expected (..., 3, 3) or "
                                  "flat 9 numbers")
        m = checked_transform(m, "planar transform", size=3)
    else:
        v = as_numbers(numbers, "position-heading", (3,))
        heading = -v[..., 2] if conv.action == "passive" else v[..., 2]
        m = make_planar(v[..., 0], v[..., 1], heading, degrees=conv.degrees)
    if conv.direction == "child-from-parent":
        m = invert_transform(m)
    return m


def write_planar(transform, kind: str = "matrix", convention=None, *, flat: bool = False) -> np.ndarray:
    """Write canonical SE(2) ``(..., 3, 3)`` under ``convention``; the inverse of :func:`read_planar`.

    >>> write_planar(read_planar([1, 2, 30], "position-heading", "unit=degrees"), "position-heading",
    ...              "unit=degrees").round(9).tolist()
    [1.0, 2.0, 30.0]
    """
    conv = as_convention(convention)
    _check_planar_kind(kind)
    m = checked_transform(transform, "planar transform", size=3)
    if conv.direction == "child-from-parent":
        m = invert_transform(m)
    if kind == "matrix":
        if flat:
            if conv.layout == "column-major":
                m = np.swapaxes(m, -1, -2)
            return np.ascontiguousarray(m).reshape(m.shape[:-2] + (9,))
        return m
    heading = np.arctan2(m[..., 1, 0], m[..., 0, 0])
    if conv.action == "passive":
        heading = -heading
    if conv.wrap == "positive":
        heading = np.remainder(heading, 2.0 * np.pi)
    if conv.degrees:
        heading = np.degrees(heading)
    return np.stack([m[..., 0, 2], m[..., 1, 2], heading], axis=-1)


# --- edges ---------------------------------------------------------------------------

def _check_name(name, role: str) -> str:
    if not isinstance(name, str):
        raise FrameNameError(f"{role} frame name: got {type(name).__name__} {name!r}; expected a non-empty string "
                             "such as 'base' or 'camera'")
    if not name.strip() or name != name.strip():
        raise FrameNameError(f"{role} frame name: got {name!r}; expected a non-empty name without leading or "
                             "trailing spaces")
    return name


@dataclass(frozen=True)
class Edge:
    """One transform between two named frames, exactly as it was entered.

    ``numbers`` (nested tuples of floats) are kept as given; ``kind`` and ``convention``
    say how to read them; ``convention.direction`` says whether they map ``child``
    coordinates into ``parent`` (parent-from-child) or the other way.  ``source`` names
    the measurement (e.g. ``"drawing"``, ``"calibration"``) so two measurements of the
    same pose can sit side by side.  ``transform`` is the canonical parent-from-child
    matrix, ``(4, 4)`` or ``(3, 3)`` when ``planar``, read by posekit's core.

    ``stated`` is the set of convention fields the edge's convention *stated*
    (:func:`posekit.explain.stated_fields`): the keys written in the convention text, or,
    for a :class:`~posekit.Convention` value, the fields off the default.  Left out
    (None), it is worked out from ``convention``; the loop-fix search charges more for
    contradicting a stated field than a default nobody chose.  It takes no part in
    equality: two edges that read the same numbers the same way are equal.

    >>> e = Edge("base", "imu", (0.1, 0, 0.2, 0, 0, 0), "position-euler", "unit=radians")
    >>> e.transform[:3, 3].tolist(), sorted(e.stated)
    ([0.1, 0.0, 0.2], ['unit'])
    """

    parent: str
    child: str
    numbers: tuple
    kind: str = "matrix"
    convention: Convention = field(default_factory=Convention)
    source: str = ""
    planar: bool = False
    stated: frozenset | None = field(default=None, compare=False, hash=False, repr=False)
    transform: np.ndarray = field(init=False, compare=False, hash=False, repr=False)

    def __post_init__(self):
        _check_name(self.parent, "parent")
        _check_name(self.child, "child")
        if self.parent == self.child:
            raise FrameNameError(f"an edge joins two different frames; got {self.parent!r} at both ends")
        if not isinstance(self.source, str):
            raise WrongTypeError(f"edge source: got {type(self.source).__name__} {self.source!r}; expected a "
                                 "string naming the measurement, e.g. 'drawing' or 'calibration'")
        raw = self.convention
        conv = as_convention(raw)
        if self.stated is None:
            stated = stated_fields(raw if raw is None or isinstance(raw, (str, Convention)) else conv)
        elif isinstance(self.stated, (set, frozenset, tuple, list)) and set(self.stated) <= set(CHOICES):
            stated = frozenset(self.stated)
        else:
            raise WrongTypeError(f"edge {self.parent} - {self.child} stated: got {self.stated!r}; expected a set "
                                 f"of convention field names ({', '.join(CHOICES)}) or None")
        object.__setattr__(self, "convention", conv)
        object.__setattr__(self, "stated", stated)
        kinds = PLANAR_KINDS if self.planar else SPATIAL_KINDS
        if self.kind not in kinds:
            space = "SE(2) (planar)" if self.planar else "SE(3)"
            raise PoseInputError(f"edge {self.parent} - {self.child}: kind {self.kind!r} is not an {space} kind; "
                                 f"accepted: {', '.join(kinds)}")
        arr = as_numbers(self.numbers, f"edge {self.parent} - {self.child} numbers", None)
        if self.planar:
            m = read_planar(arr, self.kind, self.convention)
        else:
            m = read_transform(arr, self.kind, self.convention)
        n = 3 if self.planar else 4
        if m.shape != (n, n):
            raise WrongShapeError(f"edge {self.parent} - {self.child}: the numbers of shape {arr.shape} hold "
                                  f"{int(np.prod(m.shape[:-2]))} transforms; one edge holds exactly one")
        object.__setattr__(self, "numbers", _nested_tuple(np.atleast_1d(arr)))
        object.__setattr__(self, "transform", _readonly(m))

    def changed(self, **settings) -> "Edge":
        """A copy with other fields (``numbers``, ``kind``, ``convention``, ``source``...); re-read and re-checked.

        A new ``convention`` brings its own stated fields unless ``stated`` is given too.
        """
        unknown = set(settings) - {"parent", "child", "numbers", "kind", "convention", "source", "stated"}
        if unknown:
            raise PoseInputError(f"Edge.changed: unknown field(s) {sorted(unknown)}; accepted: parent, child, "
                                 "numbers, kind, convention, source, stated")
        if "convention" in settings and "stated" not in settings:
            settings["stated"] = None
        return replace(self, **settings)

    def flipped(self) -> "Edge":
        """The same numbers read the other way round (``direction`` toggled, and now stated): the inverse."""
        other = "child-from-parent" if self.convention.direction == "parent-from-child" else "parent-from-child"
        return replace(self, convention=self.convention.changed(direction=other),
                       stated=self.stated | {"direction"})

    def convention_text(self) -> str | None:
        """Convention text that re-enters this edge with the same stated fields (None: nothing to state)."""
        conv = self.convention
        words = [f"{k}={getattr(conv, k)}" for k in CHOICES
                 if k in self.stated or getattr(conv, k) != getattr(DEFAULT, k)]
        return " ".join(words) or None

    @property
    def entered_words(self) -> str:
        """Which coordinates the numbers as entered take in and give out."""
        if self.convention.direction == "parent-from-child":
            return f"coordinates in {self.child} -> coordinates in {self.parent}"
        return f"coordinates in {self.parent} -> coordinates in {self.child}"

    def describe(self) -> str:
        src = f" ({self.source})" if self.source else ""
        return (f"{self.parent} - {self.child}{src}: {self.kind} numbers mapping {self.entered_words}; "
                f"convention {convention_words(self.convention)}")

    def entry_code(self) -> str:
        """A ``with_edge(...)`` call that re-enters this edge, as text."""
        src = f", source={self.source!r}" if self.source else ""
        nums = repr(np.asarray(self.numbers, dtype=float).tolist())
        return f".with_edge({self.parent!r}, {self.child!r}, {nums}, {self.kind!r}, {self.convention_text()!r}{src})"

    def code(self) -> str:
        """An ``Edge(...)`` expression that rebuilds this edge, as text."""
        extra = (f", source={self.source!r}" if self.source else "") + (", planar=True" if self.planar else "")
        nums = repr(np.asarray(self.numbers, dtype=float).tolist())
        return f"Edge({self.parent!r}, {self.child!r}, {nums}, {self.kind!r}, {self.convention_text()!r}{extra})"


# --- result values -------------------------------------------------------------------

@dataclass(frozen=True)
class Step:
    """One edge used on a path: it gives ``T(into_frame <- from_frame)``; ``inverted`` when walked child to parent."""

    edge: int
    into_frame: str
    from_frame: str
    inverted: bool

    @property
    def words(self) -> str:
        how = "inverse of the entered edge" if self.inverted else "as entered"
        return f"{self.from_frame} -> {self.into_frame} by edge {self.edge} ({how})"


@dataclass(frozen=True)
class Readout:
    """A transform written out in every representation under one convention.

    SE(3): ``matrix (4, 4)`` as written (per ``direction``), ``flat (16,)`` per ``layout``,
    ``translation (3,)``, ``quaternion (4,)`` per ``scalar``/``algebra``/``action``,
    ``quaternion_labels``, ``euler (3,)`` per ``sequence``/``axes``/``unit``,
    ``euler_labels``, ``rotation_vector (3,)`` in ``unit``.  SE(2): ``matrix (3, 3)``,
    ``flat (9,)``, ``translation (2,)``, ``heading`` in ``unit``; the SE(3)-only fields are None.
    ``angle`` is the rotation angle and ``distance`` the translation length.
    """

    convention: Convention
    words: str
    matrix: np.ndarray = field(compare=False)
    flat: np.ndarray = field(compare=False)
    translation: np.ndarray = field(compare=False)
    angle: float
    distance: float
    unit: str
    quaternion: np.ndarray | None = field(default=None, compare=False)
    quaternion_labels: tuple[str, ...] = ()
    euler: np.ndarray | None = field(default=None, compare=False)
    euler_labels: tuple[str, ...] = ()
    rotation_vector: np.ndarray | None = field(default=None, compare=False)
    heading: float | None = None


def readout(transform, into_frame: str, from_frame: str, convention=None) -> Readout:
    """Write a canonical ``into_frame``-from-``from_frame`` transform ``(4, 4)`` or ``(3, 3)`` every way."""
    conv = as_convention(convention)
    t = checked_transform(transform)
    planar = t.shape[-1] == 3
    if conv.direction == "parent-from-child":
        words = f"coordinates in {from_frame} -> coordinates in {into_frame}"
    else:
        words = f"coordinates in {into_frame} -> coordinates in {from_frame}"
    unit = "deg" if conv.degrees else "rad"
    scale = 180.0 / np.pi if conv.degrees else 1.0
    written = invert_transform(t) if conv.direction == "child-from-parent" else t
    n = t.shape[-1]
    dist = float(np.linalg.norm(t[: n - 1, n - 1]))
    if planar:
        angle = float(abs(np.arctan2(t[1, 0], t[0, 0])))
        flat = write_planar(t, "matrix", conv, flat=True)
        heading = float(write_planar(t, "position-heading", conv)[2])
        return Readout(conv, words, _readonly(written), _readonly(flat), _readonly(written[:2, 2]), angle * scale,
                       dist, unit, heading=heading)
    angle = float(angle_between(np.eye(3), t[:3, :3]))
    inner = conv.changed(direction="parent-from-child")
    flat = write_transform(t, "matrix", conv, flat=True)
    q = write_rotation(written[:3, :3], "quaternion", inner, check=False)
    e = write_rotation(written[:3, :3], "euler", inner, check=False)
    rv = write_rotation(written[:3, :3], "rotation-vector", inner, check=False)
    ql = ("w", "x", "y", "z") if conv.scalar == "first" else ("x", "y", "z", "w")
    el = tuple(f"{i + 1}: {a}" for i, a in enumerate(conv.axes_letters))
    return Readout(conv, words, _readonly(written), _readonly(flat), _readonly(written[:3, 3]), angle * scale, dist,
                   unit, _readonly(q), ql, _readonly(e), el, _readonly(rv))


@dataclass(frozen=True)
class Lookup:
    """The transform between two frames, composed along ``path``.

    ``matrix`` ``(4, 4)`` or ``(3, 3)`` maps ``from_frame`` coordinates into
    ``into_frame`` coordinates (``p_into = matrix @ p_from``); ``path`` lists the frames
    from ``into_frame`` to ``from_frame``; ``steps`` the edges used, in product order.
    """

    into_frame: str
    from_frame: str
    path: tuple[str, ...]
    steps: tuple[Step, ...]
    matrix: np.ndarray = field(compare=False)

    @property
    def words(self) -> str:
        return f"coordinates in {self.from_frame} -> coordinates in {self.into_frame}"

    def describe(self) -> str:
        if not self.steps:
            return f"{self.words}: the same frame, the identity"
        return f"{self.words}: " + "; then ".join(s.words for s in reversed(self.steps))

    def readout(self, convention=None) -> Readout:
        """Every representation of this transform under ``convention`` (see :class:`Readout`)."""
        return readout(self.matrix, self.into_frame, self.from_frame, convention)


@dataclass(frozen=True)
class Placement:
    """Every frame of ``root``'s group placed in ``root`` coordinates along a spanning tree.

    ``frames`` and ``matrices (k, n, n)`` (root-from-frame) match by position;
    ``tree_edges`` are the edges the placement used, ``loop_edges`` the ones that close
    loops (drawn separately); ``unreached`` are frames with no chain to ``root``.
    """

    root: str
    frames: tuple[str, ...]
    matrices: np.ndarray = field(compare=False)
    tree_edges: tuple[int, ...] = ()
    loop_edges: tuple[int, ...] = ()
    unreached: tuple[str, ...] = ()

    def of(self, frame: str) -> np.ndarray:
        """The root-from-``frame`` transform ``(n, n)``."""
        if frame not in self.frames:
            raise UnknownFrameError(f"frame {frame!r} is not placed from {self.root!r}; placed frames: "
                                    f"{', '.join(self.frames)}")
        return self.matrices[self.frames.index(frame)]


@dataclass(frozen=True)
class FrameTree:
    """A graph with no loops seen from ``root``: ``parent_of`` pairs each other frame with its parent and edge."""

    root: str
    parent_of: tuple[tuple[str, str, int], ...]

    def parent(self, frame: str) -> str | None:
        for child, parent, _ in self.parent_of:
            if child == frame:
                return parent
        if frame == self.root:
            return None
        raise UnknownFrameError(f"unknown frame {frame!r}; known frames: {self.root}, "
                                f"{', '.join(c for c, _, _ in self.parent_of)}")


@dataclass(frozen=True)
class Loop:
    """One loop: ``steps`` walk from ``start`` around and back; ``closure`` should be the identity.

    ``angle`` (radians) is the rotation angle of ``closure`` and ``distance`` its
    translation length, in the numbers' length unit: a point at ``start``'s origin,
    carried around the loop, lands that far away.  ``closing_edge`` is the edge
    that made the loop (it is not on the spanning tree).
    """

    start: str
    frames: tuple[str, ...]
    steps: tuple[Step, ...]
    closing_edge: int
    closure: np.ndarray = field(compare=False)
    angle: float
    distance: float
    consistent: bool

    @property
    def edges(self) -> tuple[int, ...]:
        return tuple(s.edge for s in self.steps)

    @property
    def words(self) -> str:
        ring = " -> ".join(self.frames + (self.frames[0],))
        verdict = "closes" if self.consistent else "does not close"
        return (f"loop {ring}: {verdict} (off by {np.degrees(self.angle):.4g} degrees and {self.distance:.4g} in "
                f"length units, seen from {self.start})")


@dataclass(frozen=True)
class EdgeFix:
    """One change to one edge, and how well the loops close after it.

    ``slip`` is the explanation engine's :class:`~posekit.explain.Slip`: the edge's
    numbers written under ``slip.true`` and read under the edge's own reading
    ``slip.stated``.  ``change`` is one of :data:`CHANGES` (the slip's first family);
    ``words`` is :func:`posekit.explain.sentence` of the slip; ``corrected`` is the edge as
    it should have been entered (the same numbers with another convention when the slip
    is a field slip, else the decoded transform written under the edge's own
    convention), and it reads back to the transform the slip decodes;
    ``angle_after``/``distance_after`` are the worst residuals over every loop after the
    change; ``closes_all`` is True when every loop then closes within tolerance.
    """

    edge: int
    change: str
    words: str
    corrected: Edge
    angle_after: float
    distance_after: float
    closes_all: bool
    loops_closed: tuple[int, ...]
    score: float
    slip: Slip | None = None

    @property
    def deviations(self) -> float:
        """How many things the fix claims went wrong (the engine's prior, :meth:`Slip.deviations`)."""
        return self.slip.deviations()

    @property
    def code(self) -> str:
        """The line that applies this fix to a graph named ``graph``."""
        return f"graph = graph.replaced({self.edge}, {self.corrected.code()})"


@dataclass(frozen=True)
class LoopCheck:
    """Every loop of a graph and the single-edge fixes that close them.

    ``fixes`` holds the fixes that close *every* loop, best first: by how well the loops
    close, then by the engine's prior (fewest claimed mistakes; a field the edge's
    convention stated costs more than a default), then by its fixed tie order - several
    fixes may explain the same numbers equally well;
    ``partial`` holds fixes that close some inconsistent loops but not all (a sign of
    more than one wrong edge); ``unchecked_edges`` are edges on no loop, which no loop
    can confirm or blame.
    """

    loops: tuple[Loop, ...]
    fixes: tuple[EdgeFix, ...]
    partial: tuple[EdgeFix, ...]
    unchecked_edges: tuple[int, ...]
    angle_tolerance: float
    distance_tolerance: float

    @property
    def consistent(self) -> bool:
        return all(lp.consistent for lp in self.loops)

    @property
    def suspects(self) -> tuple[int, ...]:
        """Edges with at least one fix that closes every loop, in rank order."""
        out: list[int] = []
        for f in self.fixes:
            if f.edge not in out:
                out.append(f.edge)
        return tuple(out)

    def summary(self) -> str:
        lines = []
        if not self.loops:
            lines.append("no loops: nothing is measured two ways, so no edge can be checked against another")
        for i, lp in enumerate(self.loops):
            lines.append(f"[{i}] {lp.words}")
        if self.loops and self.consistent:
            lines.append("every loop closes within tolerance")
        elif self.fixes:
            lines.append("single-edge fixes that close every loop (best first):")
            lines += [f"  edge {f.edge}: {f.words}" for f in self.fixes]
        elif self.loops:
            lines.append("no single-edge fix closes every loop: more than one edge may be wrong, or the error is "
                         "not a convention slip")
            lines += [f"  partly: edge {f.edge}: {f.words} (closes loops {list(f.loops_closed)})"
                      for f in self.partial[:5]]
        if self.unchecked_edges:
            lines.append(f"edges on no loop (cannot be checked): {', '.join(map(str, self.unchecked_edges))}")
        return "\n".join(lines)


# --- the graph -----------------------------------------------------------------------

def _residuals(closure: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Rotation angle (radians) and translation length of transforms ``(..., n, n)``."""
    n = closure.shape[-1]
    if n == 4:
        ang = angle_between(np.eye(3), closure[..., :3, :3])
    else:
        ang = np.abs(np.arctan2(closure[..., 1, 0], closure[..., 0, 0]))
    dist = np.linalg.norm(closure[..., : n - 1, n - 1], axis=-1)
    return np.asarray(ang, dtype=float), np.asarray(dist, dtype=float)


class FrameGraph:
    """Named frames joined by edges; immutable (every change returns a new graph).

    ``planar=True`` makes an SE(2) graph (``(3, 3)`` transforms, kinds
    :data:`PLANAR_KINDS`); otherwise SE(3) (``(4, 4)``, kinds :data:`SPATIAL_KINDS`).
    ``angle_tolerance`` (radians) and ``distance_tolerance`` (length units) decide when
    a loop closes and when two entries of the same measurement agree; set them to your
    measurement accuracy.
    """

    def __init__(self, edges=(), *, planar: bool = False, angle_tolerance: float = DEFAULT_ANGLE_TOLERANCE,
                 distance_tolerance: float = DEFAULT_DISTANCE_TOLERANCE):
        if not isinstance(planar, (bool, np.bool_)):
            raise WrongTypeError(f"planar: got {planar!r}; expected True (SE(2)) or False (SE(3))")
        self._planar = bool(planar)
        self._atol = checked_tolerance(angle_tolerance, "angle_tolerance", " radians")
        self._dtol = checked_tolerance(distance_tolerance, "distance_tolerance", " length units")
        checked: list[Edge] = []
        for e in edges:
            if not isinstance(e, Edge):
                raise WrongTypeError(f"FrameGraph edges: got {type(e).__name__}; expected Edge values (or build the "
                                     "graph with with_edge)")
            if e.planar != self._planar:
                raise WrongShapeError(f"edge {e.parent} - {e.child} is {'SE(2)' if e.planar else 'SE(3)'} but the "
                                      f"graph is {'SE(2)' if self._planar else 'SE(3)'}; all edges must agree")
            self._check_duplicate(checked, e)
            checked.append(e)
        self._edges = tuple(checked)
        frames: list[str] = []
        for e in self._edges:
            for f in (e.parent, e.child):
                if f not in frames:
                    frames.append(f)
        self._frames = tuple(frames)
        self._adj: dict[str, list[tuple[int, str]]] = {f: [] for f in frames}
        for i, e in enumerate(self._edges):
            self._adj[e.parent].append((i, e.child))
            self._adj[e.child].append((i, e.parent))

    # --- basic facts -------------------------------------------------------------------
    @property
    def edges(self) -> tuple[Edge, ...]:
        return self._edges

    @property
    def frames(self) -> tuple[str, ...]:
        """Frame names in order of first appearance."""
        return self._frames

    @property
    def planar(self) -> bool:
        return self._planar

    @property
    def angle_tolerance(self) -> float:
        return self._atol

    @property
    def distance_tolerance(self) -> float:
        return self._dtol

    def __len__(self) -> int:
        return len(self._edges)

    def __eq__(self, other) -> bool:
        return (isinstance(other, FrameGraph) and self._edges == other._edges and self._planar == other._planar
                and self._atol == other._atol and self._dtol == other._dtol)

    def __hash__(self) -> int:
        return hash((self._edges, self._planar, self._atol, self._dtol))

    def __repr__(self) -> str:
        kind = "SE(2)" if self._planar else "SE(3)"
        return f"FrameGraph({kind}, {len(self._frames)} frames, {len(self._edges)} edges)"

    def describe(self) -> str:
        """Every edge in words, one a line, with its index."""
        return "\n".join(f"[{i}] {e.describe()}" for i, e in enumerate(self._edges))

    def _rebuilt(self, edges) -> "FrameGraph":
        return FrameGraph(edges, planar=self._planar, angle_tolerance=self._atol, distance_tolerance=self._dtol)

    def _check_duplicate(self, existing: list[Edge], e: Edge) -> None:
        for i, old in enumerate(existing):
            if {old.parent, old.child} != {e.parent, e.child} or old.source != e.source:
                continue
            mine = e.transform if old.parent == e.parent else invert_transform(e.transform)
            ang, dist = _residuals(invert_transform(old.transform) @ mine)
            if float(ang) > self._atol or float(dist) > self._dtol:
                src = f" from source {e.source!r}" if e.source else " with no source name"
                raise DisagreeingEdgeError(
                    f"edge {e.parent} - {e.child}{src} is entered twice and the two disagree by "
                    f"{np.degrees(float(ang)):.4g} degrees and {float(dist):.4g} length units (tolerance "
                    f"{np.degrees(self._atol):.4g} degrees, {self._dtol:.4g}); first: {old.describe()}; "
                    f"second: {e.describe()}. To keep both as two measurements of one pose, give them different "
                    "source names (e.g. 'drawing' and 'calibration'): the graph then checks them as a loop")

    # --- building ----------------------------------------------------------------------
    def with_edge(self, parent: str, child: str, numbers, kind: str = "matrix", convention=None,
                  source: str = "") -> "FrameGraph":
        """A new graph with one more edge (see :class:`Edge`).

        Entering the same measurement (same two frames, same ``source``) again is
        harmless when it agrees within tolerance (it is kept once) and raises
        :class:`DisagreeingEdgeError` when it does not.
        """
        e = Edge(parent, child, numbers, kind, convention if convention is not None else Convention(), source,
                 self._planar)
        for old in self._edges:
            if {old.parent, old.child} == {e.parent, e.child} and old.source == e.source:
                self._check_duplicate([old], e)
                return self
        return self._rebuilt(self._edges + (e,))

    def _index(self, index) -> int:
        if isinstance(index, bool) or not isinstance(index, (int, np.integer)):
            raise WrongTypeError(f"edge index: got {index!r}; expected an integer 0..{len(self._edges) - 1}")
        if not 0 <= int(index) < len(self._edges):
            raise PoseInputError(f"edge index: got {index}; the graph has edges 0..{len(self._edges) - 1}")
        return int(index)

    def replaced(self, index: int, edge: Edge) -> "FrameGraph":
        """A new graph with edge ``index`` replaced by ``edge``."""
        i = self._index(index)
        if not isinstance(edge, Edge):
            raise WrongTypeError(f"replaced: got {type(edge).__name__}; expected an Edge")
        return self._rebuilt(self._edges[:i] + (edge,) + self._edges[i + 1:])

    def flipped(self, index: int) -> "FrameGraph":
        """A new graph with edge ``index`` read the other way round (its ``direction`` toggled)."""
        i = self._index(index)
        return self.replaced(i, self._edges[i].flipped())

    def with_convention(self, index: int, convention) -> "FrameGraph":
        """A new graph with edge ``index``'s same numbers read under another convention."""
        i = self._index(index)
        return self.replaced(i, self._edges[i].changed(convention=convention))

    # --- traversal ---------------------------------------------------------------------
    def _known(self, frame) -> str:
        if not isinstance(frame, str):
            raise FrameNameError(f"frame name: got {type(frame).__name__} {frame!r}; expected one of: "
                                 f"{', '.join(self._frames) or '(the graph is empty)'}")
        if frame not in self._adj:
            close = difflib.get_close_matches(frame, self._frames, n=1)
            hint = f" (did you mean {close[0]!r}?)" if close else ""
            raise UnknownFrameError(f"unknown frame {frame!r}{hint}; known frames: "
                                    f"{', '.join(self._frames) or '(none: the graph is empty)'}")
        return frame

    def _search(self, start: str):
        """Breadth-first from ``start``: predecessor map frame -> (previous frame, edge), and visit order."""
        pred: dict[str, tuple[str, int] | None] = {start: None}
        order = [start]
        queue = deque([start])
        while queue:
            u = queue.popleft()
            for i, v in self._adj[u]:
                if v not in pred:
                    pred[v] = (u, i)
                    order.append(v)
                    queue.append(v)
        return pred, order

    def _step(self, edge: int, into_frame: str, from_frame: str) -> Step:
        e = self._edges[edge]
        return Step(edge, into_frame, from_frame, inverted=not (e.parent == into_frame and e.child == from_frame))

    def _step_matrix(self, s: Step) -> np.ndarray:
        t = self._edges[s.edge].transform
        return invert_transform(t) if s.inverted else t

    def _product(self, steps) -> np.ndarray:
        n = 3 if self._planar else 4
        out = np.eye(n)
        for s in steps:
            out = out @ self._step_matrix(s)
        return out

    def components(self) -> tuple[tuple[str, ...], ...]:
        """Groups of frames joined by chains of edges, in order of first appearance."""
        seen: set[str] = set()
        out = []
        for f in self._frames:
            if f in seen:
                continue
            _, order = self._search(f)
            seen.update(order)
            out.append(tuple(order))
        return tuple(out)

    def _disconnected(self, a: str, b: str) -> DisconnectedFramesError:
        groups = "; ".join("{" + ", ".join(c) + "}" for c in self.components())
        return DisconnectedFramesError(f"no chain of edges joins {a!r} and {b!r}; the frames fall into separate "
                                       f"groups: {groups}. Add an edge between the groups to look up across them")

    def path(self, into_frame: str, from_frame: str) -> tuple[Step, ...]:
        """The steps (fewest edges; ties go to the earlier-entered edge) from ``from_frame`` up to ``into_frame``."""
        a, b = self._known(into_frame), self._known(from_frame)
        pred, _ = self._search(a)
        if b not in pred:
            raise self._disconnected(a, b)
        steps = []
        v = b
        while pred[v] is not None:
            u, i = pred[v]
            steps.append(self._step(i, u, v))
            v = u
        return tuple(reversed(steps))

    def lookup(self, into_frame: str, from_frame: str) -> Lookup:
        """The transform taking ``from_frame`` coordinates into ``into_frame``: ``(4, 4)`` or ``(3, 3)``.

        ``lookup("world", "camera").matrix`` is world-from-camera, the product of the
        edges along the path (each inverted where the path walks it child to parent).
        """
        steps = self.path(into_frame, from_frame)
        frames = (into_frame,) + tuple(s.from_frame for s in steps)
        return Lookup(into_frame, from_frame, frames, steps, _readonly(self._product(steps)))

    def placement(self, root: str | None = None) -> Placement:
        """Every frame joined to ``root`` (default: the first frame) in ``root`` coordinates."""
        if not self._frames:
            raise UnknownFrameError("the graph is empty; add edges before placing frames")
        root = self._frames[0] if root is None else self._known(root)
        pred, order = self._search(root)
        n = 3 if self._planar else 4
        mats = {root: np.eye(n)}
        tree = []
        for v in order[1:]:
            u, i = pred[v]
            mats[v] = mats[u] @ self._step_matrix(self._step(i, u, v))
            tree.append(i)
        reached = set(order)
        loops = tuple(i for i, e in enumerate(self._edges) if i not in tree and e.parent in reached)
        return Placement(root, tuple(order), _readonly(np.stack([mats[f] for f in order])), tuple(sorted(tree)), loops,
                         tuple(f for f in self._frames if f not in reached))

    def tree(self, root: str | None = None) -> FrameTree:
        """The graph as a tree from ``root``; raises :class:`LoopInTreeError` if any edges close a loop."""
        if not self._frames:
            raise UnknownFrameError("the graph is empty; add edges before asking for a tree")
        root = self._frames[0] if root is None else self._known(root)
        pred, order = self._search(root)
        missing = [f for f in self._frames if f not in pred]
        if missing:
            raise self._disconnected(root, missing[0])
        used = {pred[v][1] for v in order[1:]}
        extra = [i for i in range(len(self._edges)) if i not in used]
        if extra:
            loops = self.loops()
            rings = "; ".join(" -> ".join(lp.frames + (lp.frames[0],)) for lp in loops)
            raise LoopInTreeError(f"a tree was asked for but {len(extra)} edge(s) close loops: edge(s) "
                                  f"{', '.join(map(str, extra))} ({rings}). A tree has exactly one chain between "
                                  "any two frames; use lookup/check_loops on the graph, or leave the extra "
                                  "measurements out")
        return FrameTree(root, tuple((v, pred[v][0], pred[v][1]) for v in order[1:]))

    # --- loops ---------------------------------------------------------------------------
    def _loop_steps(self) -> list[tuple[int, list[Step]]]:
        """One loop per edge off the breadth-first spanning forest (a cycle basis)."""
        out = []
        for comp in self.components():
            pred, order = self._search(comp[0])
            depth = {comp[0]: 0}
            for v in order[1:]:
                depth[v] = depth[pred[v][0]] + 1
            tree = {pred[v][1] for v in order[1:]}
            for i, e in enumerate(self._edges):
                if i in tree or e.parent not in pred:
                    continue
                # walk c up to p through the tree: steps c <- ... (T(c <- x) ...) then down to p
                p, c = e.parent, e.child
                up_c, up_p = [], []
                a, b = c, p
                while depth[a] > depth[b]:
                    u, k = pred[a]
                    up_c.append(self._step(k, a, u))  # T(a <- u): walking from a towards the root
                    a = u
                while depth[b] > depth[a]:
                    u, k = pred[b]
                    up_p.append(self._step(k, u, b))  # T(u <- b)
                    b = u
                while a != b:
                    u, k = pred[a]
                    up_c.append(self._step(k, a, u))
                    a = u
                    u2, k2 = pred[b]
                    up_p.append(self._step(k2, u2, b))
                    b = u2
                # T(p <- c) T(c <- lca) T(lca <- p)
                steps = [self._step(i, p, c)] + up_c + list(reversed(up_p))
                out.append((i, steps))
        return out

    def _make_loop(self, closing: int, steps: list[Step]) -> Loop:
        closure = self._product(steps)
        ang, dist = _residuals(closure)
        frames = tuple(s.into_frame for s in steps)
        ok = bool(ang <= self._atol and dist <= self._dtol)
        return Loop(frames[0], frames, tuple(steps), closing, _readonly(closure), float(ang), float(dist), ok)

    def loops(self) -> tuple[Loop, ...]:
        """A cycle basis: one :class:`Loop` per edge that closes a loop, with its inconsistency."""
        return tuple(self._make_loop(i, steps) for i, steps in self._loop_steps())

    def check_loops(self) -> LoopCheck:
        """Every loop's inconsistency and the single-edge fixes that would close them all.

        Each edge on a loop is tried with every single slip the engine knows for its kind
        (see :func:`_candidates`); the loops through it are re-closed for all candidates
        at once (one batched matrix product per loop).  A fix *closes* a loop when the
        rotation angle and the translation distance are both within the graph's
        tolerances.  Ranking: the loop score, then :meth:`Slip.deviations`, then
        :meth:`Slip.order_key`, then the edge index.
        """
        basis = self._loop_steps()
        loops = tuple(self._make_loop(i, steps) for i, steps in basis)
        on_loop = sorted({s.edge for _, steps in basis for s in steps})
        base_ang = np.array([lp.angle for lp in loops])
        base_dist = np.array([lp.distance for lp in loops])
        fixes: list[EdgeFix] = []
        partial: list[EdgeFix] = []
        if loops and not all(lp.consistent for lp in loops):
            bad = {k for k, lp in enumerate(loops) if not lp.consistent}
            for ei in on_loop:
                edge = self._edges[ei]
                # the transform this edge would need to close each loop through it: the engine's pairs
                targets = []
                for _, steps in basis:
                    pos = [j for j, s in enumerate(steps) if s.edge == ei]
                    if pos:
                        j = pos[0]
                        need = invert_transform(self._product(steps[:j])) @ invert_transform(
                            self._product(steps[j + 1:]))
                        targets.append(invert_transform(need) if steps[j].inverted else need)
                cands = _candidates(edge, np.stack(targets), self._atol, self._dtol)
                if not cands:
                    continue
                stack = np.stack([c.transform for c in cands])
                ang = np.broadcast_to(base_ang, (len(cands), len(loops))).copy()
                dist = np.broadcast_to(base_dist, (len(cands), len(loops))).copy()
                for k, (_, steps) in enumerate(basis):
                    pos = [j for j, s in enumerate(steps) if s.edge == ei]
                    if not pos:
                        continue
                    j = pos[0]
                    left = self._product(steps[:j])
                    right = self._product(steps[j + 1:])
                    x = invert_transform(stack) if steps[j].inverted else stack
                    a, d = _residuals(left @ x @ right)
                    ang[:, k], dist[:, k] = a, d
                atol = max(self._atol, 1e-12)
                dtol = max(self._dtol, 1e-12)
                score = np.maximum(ang / atol, dist / dtol)
                closed = score <= 1.0
                for c, cand in enumerate(cands):
                    now_closed = tuple(k for k in sorted(bad) if closed[c, k])
                    if not now_closed:
                        continue
                    corrected = _corrected_edge(edge, cand)
                    if corrected is None:
                        continue
                    fix = EdgeFix(ei, cand.change, sentence(cand.slip), corrected, float(ang[c].max()),
                                  float(dist[c].max()), bool(closed[c].all()), now_closed, float(score[c].max()),
                                  cand.slip)
                    (fixes if fix.closes_all else partial).append(fix)

        def rank(f: EdgeFix):
            return (round(f.score, 3), f.slip.deviations(), f.slip.order_key(), f.edge)

        fixes.sort(key=rank)
        partial.sort(key=lambda f: (-len(f.loops_closed), rank(f)))
        unchecked = tuple(i for i in range(len(self._edges)) if i not in on_loop)
        return LoopCheck(loops, tuple(fixes), tuple(partial), unchecked, self._atol, self._dtol)


# --- the candidate changes of one edge: the engine's slips ---------------------------

def _entered_matrix(edge: Edge) -> np.ndarray:
    """The homogeneous matrix as entered (rows as written, before ``direction``)."""
    n = 3 if edge.planar else 4
    arr = np.asarray(edge.numbers, dtype=float)
    m = np.eye(n)
    if arr.ndim == 2:
        m[: arr.shape[0]] = arr
        return m
    rows = n if arr.size == n * n else n - 1
    if edge.convention.layout == "row-major":
        m[:rows] = arr.reshape(rows, n)
    else:
        m[:rows] = arr.reshape(n, rows).T
    return m


#: The enumerated fields whose other values each kind of edge is tried with (``action`` and
#: ``direction`` are flipped separately); a nested matrix has no flat layout to get wrong.
_FIELDS_TRIED = {"position-quaternion": {"scalar", "algebra"}, "position-euler": {"sequence", "axes", "unit"},
                 "flat matrix": {"layout"}, "nested matrix": set(), "position-heading": {"unit"}}


def _engine_view(edge: Edge) -> tuple[Reading, np.ndarray, str]:
    """The edge as the explanation engine reads it: the stated reading, flat numbers, and a key into
    :data:`_FIELDS_TRIED`.

    SE(3): position-quaternion and position-euler are the engine's kinds of the same
    names; a matrix is a ``transform`` of 16 or 12 numbers (nested numbers are flattened
    row by row, so ``layout`` does not apply to them).  SE(2), which the engine has no kind
    for: ``x, y, heading`` is read as ``x, y, 0`` and the Euler angles ``heading, 0, 0``
    about z-y-x (a heading is a turn about z, common practice), and a ``(3, 3)`` matrix as
    the ``(4, 4)`` that turns about z, written with the same layout; the decoded ``(4, 4)``
    is cut back to ``(3, 3)``.
    """
    conv, stated = edge.convention, edge.stated
    arr = np.asarray(edge.numbers, dtype=float)
    if edge.planar and edge.kind == "position-heading":
        inner = conv.changed(sequence="z-y-x", axes="intrinsic")
        numbers = np.array([arr[0], arr[1], 0.0, arr[2], 0.0, 0.0])
        return Reading("position-euler", inner, stated - {"sequence", "axes"}, True, 6), numbers, edge.kind
    if edge.planar:
        m3 = _entered_matrix(edge)
        m4 = np.eye(4)
        m4[:2, :2], m4[:2, 3] = m3[:2, :2], m3[:2, 2]
        flat = arr.ndim == 1
        layout = conv.layout if flat else "row-major"
        numbers = (m4.T if layout == "column-major" else m4).reshape(-1)
        stated = stated if flat else stated - {"layout"}
        return (Reading("transform", conv.changed(layout=layout), stated, True, 16), numbers,
                "flat matrix" if flat else "nested matrix")
    if edge.kind == "matrix":
        if arr.ndim == 1:
            return Reading("transform", conv, stated, True, arr.size), arr, "flat matrix"
        return (Reading("transform", conv.changed(layout="row-major"), stated - {"layout"}, True, arr.size),
                arr.reshape(-1), "nested matrix")
    return Reading(edge.kind, conv, stated, True, arr.size), arr, edge.kind


@dataclass(frozen=True)
class _Candidate:
    """One slip of an edge, the fix's ``change`` name for it and the transform it decodes to."""

    slip: Slip
    change: str
    transform: np.ndarray


def _decoded(slip: Slip, numbers: np.ndarray, planar: bool) -> np.ndarray:
    """The canonical parent-from-child transform the slip says the numbers denote."""
    r, t = slip.decode(numbers)
    if planar:
        m = np.eye(3)
        m[:2, :2], m[:2, 2] = r[:2, :2], t[:2]
        return m
    m = np.eye(4)
    m[:3, :3], m[:3, 3] = r, t
    return m


def _corrected_edge(edge: Edge, cand: _Candidate) -> Edge | None:
    """The edge as it should have been entered, reading back to the decoded transform; None when no edge can.

    A field slip keeps the numbers and reads them with the true fields (now stated); any
    other slip writes the decoded transform under the edge's own convention
    (:func:`posekit.explain.write_numbers`; :func:`write_planar` for SE(2)).
    """
    slip, transform = cand.slip, cand.transform
    changes = {f: v for f, _, v in slip.field_changes()}
    try:
        if changes and not (slip.transposed or slip.length_scale != 1.0):
            corrected = edge.changed(convention=edge.convention.changed(**changes),
                                     stated=edge.stated | set(changes))
        else:
            arr = np.asarray(edge.numbers, dtype=float)
            if edge.planar:
                new = write_planar(transform, edge.kind, edge.convention, flat=arr.ndim == 1)
            else:
                new = write_numbers(slip.stated, transform[:3, :3], transform[:3, 3]).reshape(arr.shape)
            corrected = edge.changed(numbers=new)
    except PoseInputError:
        return None  # e.g. another layout of 16 numbers that hold a translation: no transform at all
    if not np.allclose(corrected.transform, transform, atol=1e-9, rtol=1e-9):
        return None  # the engine's tolerant reading and the core's checked one part ways: no sound fix
    return corrected


def _candidates(edge: Edge, targets: np.ndarray, atol: float, dtol: float) -> list[_Candidate]:
    """The engine's best slips of ``edge`` against the transforms that would close its loops.

    One call of :func:`posekit.explain.score`: the edge's stated reading (the fields its
    convention stated), every reading of its numbers the edge kind can hold (the enumerated
    fields of :data:`_FIELDS_TRIED`), and the scorer's own relations (direction, action, a
    transposed block), parent and child axis remaps, length scales and translation frames;
    each loop through the edge is one pair ``(targets[k], numbers)``, with the graph's
    tolerances.  Each group's lead and the slips that are the same mistake written another way
    come back with the transform they decode to; the caller re-closes the loops with it.
    """
    stated, numbers, key = _engine_view(edge)
    tried = _FIELDS_TRIED[key]
    readings = [r for r in readings_of(stated)
                if r.kind == stated.kind and r.position_first == stated.position_first
                and {f for f, _, _ in Slip(stated, r).field_changes()} <= tried]
    n = len(targets)
    if edge.planar:  # the engine reads SE(2) as SE(3) about z (see _engine_view)
        full = np.tile(np.eye(4), (n, 1, 1))
        full[:, :2, :2], full[:, :2, 3] = targets[:, :2, :2], targets[:, :2, 2]
        targets = full
    rows = np.repeat(numbers[None], n, axis=0)
    side = ExpectedSide(targets[:, :3, :3], targets[:, :3, 3], 0.0, "the transform that closes the loop")
    ranking = score(stated, [Candidate(r, rows) for r in readings], [side],
                    rotation_tolerance=max(atol, 1e-12), translation_tolerance=max(dtol, 1e-12), limit=12)
    out: list[_Candidate] = []
    for g in ranking.groups:
        members = (g.lead,) + g.same + tuple(x for x, _ in g.separable)
        for h in members:
            slip = h.slip
            if slip.is_none:
                continue
            t = _decoded(slip, numbers, edge.planar)
            if not np.all(np.isfinite(t)) or np.allclose(t, edge.transform, atol=1e-12, rtol=0):
                continue  # reads to the same transform: not a change at all
            fam = slip.families()[0]
            out.append(_Candidate(slip, _CHANGE_OF_FAMILY.get(fam, fam), t))
    # a slip that only adds, to another one giving the same transform, a part that changes nothing here
    # (a length scale of a zero translation, say) says more than the numbers show: drop it
    fams = [set(c.slip.families()) for c in out]
    return [c for i, c in enumerate(out)
            if not any(fams[j] < fams[i] and np.allclose(out[j].transform, c.transform, atol=1e-12, rtol=0)
                       for j in range(len(out)))]


