"""posekit's own versioned JSON state: what a bug report needs to rebuild a widget exactly.

A state file holds the poses (canonical parent-from-child 4x4 matrices, each with
the convention it is shown under), frame-graph edges with their numbers as entered,
the widget's own settings, free notes, and the versions of posekit, numpy, scipy and
Python that wrote it.  Floats are written with Python's shortest round-trip ``repr``
(what Python's :mod:`json` module writes), so ``state -> JSON -> state`` is
bit-identical.

Top level (version 1)::

    {"schema": "posekit-state", "version": 1,
     "versions": {"posekit": str, "numpy": str, "scipy": str, "python": str},
     "widget": one of WIDGET_KINDS,
     "settings": {...fields of that widget's settings class, see posekit.io.settings...},
     "poses": [{"name": str, "matrix": 4x4 numbers, "convention": convention text}],
     "edges": [{"parent": str, "child": str, "kind": str, "numbers": [numbers],
                "convention": convention text}],
     "notes": str}

**Reading** is bounded and strict, and never evaluates anything (Python's :mod:`json`
module, no eval, no pickle):

* a file is read through :func:`~posekit.io.limits.read_bounded`: at most ``limit + 1``
  bytes whatever the file says its size is (``/dev/zero`` says 0); past the limit,
  :class:`~posekit.io.limits.InputTooLargeError` names the limit and the ``limit=``
  keyword that raises it;
* the bracket nesting is measured before :mod:`json` parses anything, so a deeply nested
  text is refused (more than :data:`MAX_DEPTH` levels) instead of exhausting recursion;
* every key may appear once per object; integers longer than :data:`MAX_INT_DIGITS`
  digits are refused unread (Python's own limit is 4300 digits), numbers beyond float64
  and the non-JSON words ``NaN`` and ``Infinity`` are refused, and so are lone surrogates
  in any text;
* then every entry is checked against the schema: names (one line, 1 to 200 visible
  characters), convention text, 4x4 matrices (orthonormal rotation, bottom row 0 0 0 1),
  edges (a known kind with the count of numbers it takes, two different frames), the
  widget's settings (by the widget's registered class, see :mod:`posekit.io.settings`)
  and the notes (at most :data:`MAX_TEXT` characters).

Every refusal is a :class:`StateFileError` (a :class:`~posekit.core.errors.PoseInputError`)
naming the path of the offending entry (e.g. ``edges[2].numbers``), a short excerpt of
what was there and what is accepted.  A :class:`State` built in Python is checked by the
same rules, so whatever loads, saves again, and whatever saves, loads again.

**Writing** serialises the whole state first, checks that the text reads back, then
writes it with :func:`~posekit.io.limits.write_atomic`: on any failure an earlier file at
the path is left byte for byte as it was.
"""

from __future__ import annotations

import importlib.metadata
import json
import math
import os
import platform
import re
import sys
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any, Mapping

import numpy as np

from ..core.convention import Convention
from ..core.errors import PoseInputError, WrongTypeError, excerpt, summarise
from ..core.transforms import TRANSFORM_KINDS, checked_transform
from .limits import REPORT_LIMIT, STATE_LIMIT, InputTooLargeError, read_bounded, read_bounded_text, size_words, \
    write_atomic
from .settings import (MAX_ITEMS, MAX_TEXT, StateFileError, check_convention, check_generic, check_keys, check_name,
                       check_number, check_text, fail, settings_class, shown)

__all__ = [
    "SCHEMA", "VERSION", "MAX_BYTES", "MAX_ITEMS", "MAX_TEXT", "MAX_DEPTH", "MAX_INT_DIGITS", "WIDGET_KINDS",
    "EDGE_KINDS", "EDGE_COUNTS", "REPORT_STATE_OPEN",
    "StateFileError", "NamedPose", "Edge", "State", "state_to_json", "state_from_json",
    "save_state", "load_state", "environment_versions", "float_literal", "read_report_state", "widget_kinds",
]

SCHEMA = "posekit-state"
VERSION = 1
#: The default size limit of a state file or state text (the same as ``posekit.io.limits.STATE_LIMIT``).
MAX_BYTES = STATE_LIMIT
#: Deepest bracket nesting read (a valid state nests 5 levels).
MAX_DEPTH = 32
#: Longest integer literal read, in digits (a float64 holds at most 309 digits before the point).
MAX_INT_DIGITS = 310

#: Widget kinds of the version-1 schema.  A widget module may register further kinds
#: (:func:`posekit.io.settings.register_settings`); see :func:`widget_kinds`.
WIDGET_KINDS = ("none", "explorer", "planar", "singularity", "graph", "desk", "trajectory")

#: Kinds of edge numbers: the SE(3) transform kinds and the planar position + heading.
EDGE_KINDS = tuple(TRANSFORM_KINDS) + ("position-heading",)
#: How many numbers an edge of each kind holds: a matrix flat as 16 (4x4), 12 (3x4) or
#: 9 (planar 3x3); x, y, z and a quaternion; x, y, z and three Euler angles; x, y, heading.
EDGE_COUNTS = {"matrix": (9, 12, 16), "position-quaternion": (7,), "position-euler": (6,), "position-heading": (3,)}
if set(EDGE_COUNTS) != set(EDGE_KINDS):  # pragma: no cover - a new core kind must say its counts here
    raise ImportError(f"posekit.io.state: EDGE_COUNTS {sorted(EDGE_COUNTS)} does not match {sorted(EDGE_KINDS)}")

#: The opening tag of the state block embedded in a posekit HTML report.
REPORT_STATE_OPEN = "<script type='application/json' id='posekit-state'>"

_TOP_KEYS = ("schema", "version", "versions", "widget", "settings", "poses", "edges", "notes")
_VERSION_KEYS = ("posekit", "numpy", "scipy", "python")
_VERSION_TEXT = 64


def widget_kinds() -> tuple[str, ...]:
    """Widget kinds a state may name now: the schema's, then any registered since."""
    from .settings import registered_kinds

    return WIDGET_KINDS + tuple(k for k in registered_kinds() if k not in WIDGET_KINDS)


_VERSIONS: dict[str, str] = {}


def environment_versions() -> dict[str, str]:
    """Versions of posekit, numpy, scipy and Python running now (a new dict each call).

    scipy's version is read from the loaded module, or from the installed package's
    metadata (:mod:`importlib.metadata`) when scipy is not loaded: this layer does not
    import scipy.
    """
    if not _VERSIONS:
        from .. import __version__

        loaded = sys.modules.get("scipy")
        try:
            sv = loaded.__version__ if loaded is not None else importlib.metadata.version("scipy")
        except importlib.metadata.PackageNotFoundError:  # pragma: no cover - scipy is a dependency
            sv = "not installed"
        _VERSIONS.update(posekit=__version__, numpy=np.__version__, scipy=sv, python=platform.python_version())
    return dict(_VERSIONS)


def float_literal(x: float) -> str:
    """Python source for a float that reads back bit-identical (shortest round-trip repr)."""
    x = float(x)
    if not math.isfinite(x):
        raise StateFileError(f"cannot write the non-finite number {x!r}; expected a finite number (states hold "
                             "finite numbers only)")
    return repr(x)


# --- the three records -----------------------------------------------------------------------

def _check_pose_matrix(matrix, path: str) -> np.ndarray:
    try:
        m = np.array(checked_transform(matrix, path, size=4), dtype=np.float64)
    except StateFileError:
        raise
    except PoseInputError as exc:
        raise fail(path, _short(str(exc)), "a 4x4 transform: orthonormal rotation, bottom row 0 0 0 1, finite "
                                           "numbers") from None
    if m.shape != (4, 4):
        raise fail(path, f"got shape {m.shape}", "one 4x4 transform")
    return m


def _short(text: str, limit: int = 300) -> str:
    from ..core.errors import isolate_controls

    text = isolate_controls(text)
    return text if len(text) <= limit else text[:limit] + "..."


@dataclass(frozen=True, eq=False)
class NamedPose:
    """A canonical pose ``matrix (4, 4)`` with a name and the convention it is shown under."""

    name: str
    matrix: np.ndarray
    convention: Convention = field(default_factory=Convention)

    def __post_init__(self):
        check_name(self.name, "pose.name")
        m = _check_pose_matrix(self.matrix, "pose.matrix")
        m.setflags(write=False)
        object.__setattr__(self, "matrix", m)
        if not isinstance(self.convention, Convention):
            raise fail("pose.convention", f"got {shown(self.convention)}", "a posekit Convention (parse convention "
                                                                            "text with Convention.parse)")

    def __eq__(self, other) -> bool:
        return (isinstance(other, NamedPose) and self.name == other.name and self.convention == other.convention
                and self.matrix.tobytes() == other.matrix.tobytes())

    def __hash__(self) -> int:
        return hash((self.name, self.convention, self.matrix.tobytes()))


def _edge_numbers(numbers, kind: str, path: str) -> tuple[float, ...]:
    counts = EDGE_COUNTS[kind]
    words = " or ".join(str(c) for c in counts)
    accepted = f"a flat list of {words} finite numbers for kind {kind!r}"
    if not isinstance(numbers, (list, tuple)):
        raise fail(path, f"got {shown(numbers)}", accepted)
    if len(numbers) not in counts:
        raise fail(path, f"got {len(numbers)} numbers", accepted)
    return tuple(check_number(x, f"{path}[{j}]") for j, x in enumerate(numbers))


def _check_edge(parent, child, kind, numbers, convention, path: str):
    parent = check_name(parent, f"{path}.parent", strip=True)
    child = check_name(child, f"{path}.child", strip=True)
    if parent == child:
        raise fail(f"{path}.child", f"got {excerpt(child, 40)}, the same frame as the parent",
                   "an edge between two different frames")
    if not isinstance(kind, str) or kind not in EDGE_KINDS:
        raise fail(f"{path}.kind", f"got {shown(kind)}", "one of " + ", ".join(repr(k) for k in EDGE_KINDS))
    nums = _edge_numbers(numbers, kind, f"{path}.numbers")
    conv = check_convention(convention, f"{path}.convention")
    return parent, child, kind, nums, conv


@dataclass(frozen=True)
class Edge:
    """One frame-graph edge as entered: the numbers, their kind and convention, kept verbatim.

    ``numbers`` is flat, with the count its ``kind`` takes (:data:`EDGE_COUNTS`).
    """

    parent: str
    child: str
    kind: str
    numbers: tuple[float, ...]
    convention: Convention = field(default_factory=Convention)

    def __post_init__(self):
        parts = _check_edge(self.parent, self.child, self.kind, self.numbers, self.convention, "edge")
        for name, value in zip(("parent", "child", "kind", "numbers", "convention"), parts):
            object.__setattr__(self, name, value)


def _check_settings(widget, settings, path: str = "settings") -> dict:
    cls = settings_class(widget)
    if cls is not None:
        return cls.from_mapping(settings, path).as_dict()
    return check_generic(settings, path)


def _check_widget(widget) -> str:
    kinds = widget_kinds()
    if not isinstance(widget, str) or widget not in kinds:
        raise fail("widget", f"got {shown(widget)}", "one of " + ", ".join(repr(k) for k in kinds))
    return widget


def _check_versions(versions, path: str = "versions") -> dict:
    accepted = "an object of " + ", ".join(_VERSION_KEYS) + f", each text of at most {_VERSION_TEXT} characters"
    if not isinstance(versions, Mapping):
        raise fail(path, f"got {shown(versions)}", accepted)
    _only_keys(versions, _VERSION_KEYS, path)
    return {k: check_name(versions[k], f"{path}.{k}", empty=True, limit=_VERSION_TEXT) for k in _VERSION_KEYS}


@dataclass(frozen=True)
class State:
    """Everything needed to rebuild one widget (or a plain set of poses) exactly.

    Checked as a state file is checked when it loads (see the module docstring), so a
    :class:`StateFileError` names the entry at fault.
    """

    widget: str = "none"
    settings: Mapping[str, Any] = field(default_factory=dict)
    poses: tuple[NamedPose, ...] = ()
    edges: tuple[Edge, ...] = ()
    notes: str = ""
    versions: Mapping[str, str] = field(default_factory=environment_versions)

    def __post_init__(self):
        widget = _check_widget(self.widget)
        object.__setattr__(self, "settings", MappingProxyType(_check_settings(widget, self.settings)))
        for name, kind in (("poses", NamedPose), ("edges", Edge)):
            items = getattr(self, name)
            if isinstance(items, (str, bytes, Mapping)) or not hasattr(items, "__iter__"):
                raise fail(name, f"got {shown(items)}", f"a sequence of {kind.__name__}")
            items = tuple(items)
            if len(items) > MAX_ITEMS:
                raise fail(name, f"got {len(items)} entries", f"at most {MAX_ITEMS} entries")
            for i, item in enumerate(items):
                if not isinstance(item, kind):
                    raise fail(f"{name}[{i}]", f"got {shown(item)}", f"a posekit {kind.__name__}")
            object.__setattr__(self, name, items)
        check_text(self.notes, "notes", limit=MAX_TEXT, lines=True)
        object.__setattr__(self, "versions", MappingProxyType(_check_versions(self.versions)))

    def __eq__(self, other) -> bool:
        return isinstance(other, State) and state_to_json(self) == state_to_json(other)

    def __hash__(self) -> int:
        return hash(state_to_json(self))


# --- checking parsed JSON --------------------------------------------------------------------

def _only_keys(d, keys, path: str) -> None:
    check_keys(d, keys, path, "an object with the keys " + ", ".join(keys))


def _list(v, path: str) -> list:
    if not isinstance(v, list):
        raise fail(path, f"got {shown(v)}", f"a list of at most {MAX_ITEMS} entries")
    if len(v) > MAX_ITEMS:
        raise fail(path, f"got a list of {len(v)} entries", f"a list of at most {MAX_ITEMS} entries")
    return v


class _Refused:
    """A number the parser would not read (kept as this marker so the check can name its path)."""

    def __init__(self, text: str, why: str, accepted: str):
        self.text, self.why, self.accepted = text, why, accepted

    def describe(self) -> str:
        return self.why


class _Duplicated(dict):
    """An object in which a key appeared more than once (``key`` is the first such key)."""

    key: str = ""


def _refuse_int(text: str):
    digits = len(text.lstrip("-"))
    if digits > MAX_INT_DIGITS:
        return _Refused(text, f"got an integer of {digits} digits",
                        f"a finite number (integers of at most {MAX_INT_DIGITS} digits)")
    return int(text)


def _refuse_float(text: str):
    v = float(text)
    if not math.isfinite(v):
        return _Refused(text, f"got {excerpt(text, 30)}, beyond the range of float64 numbers",
                        "a finite number no larger in size than 1.8e308")
    return v


def _refuse_constant(name: str):
    return _Refused(name, f"got {name}, which is not a JSON number", "a finite number (JSON has no NaN or Infinity)")


#: Text that may hold an integer too long to read, or a float beyond float64: only then are
#: numbers read through the checking hooks (Python's json reads the rest at C speed).
_LONG_DIGITS = re.compile(r"\d{%d}" % (MAX_INT_DIGITS + 1))
_BIG_FLOAT = re.compile(r"[eE]\+?0*[1-9]\d{2}|\d{200}")


_IDENT = re.compile(r"[A-Za-z_][A-Za-z0-9_]{0,63}")


def _key_path(path: str, key: str) -> str:
    if _IDENT.fullmatch(key):
        return f"{path}.{key}" if path else key
    return f"{path}[{excerpt(key, 30)}]"


def _walk(node, path: str) -> None:
    """Refuse, with its path, anything the parser marked (numbers it would not read, repeated keys).

    Text is checked where the schema says what it holds (names, notes, settings), each check
    refusing lone surrogates and control characters with the words of that entry.
    """
    if isinstance(node, _Refused):
        raise fail(path, node.why, node.accepted)
    if isinstance(node, dict):
        if isinstance(node, _Duplicated):
            raise fail(path, f"the key {excerpt(node.key, 30)} appears more than once",
                       "each key at most once in an object")
        for k, v in node.items():
            _walk(v, _key_path(path, k))
    elif isinstance(node, list):
        for i, v in enumerate(node):
            _walk(v, f"{path}[{i}]")


def _check_depth(text: str) -> str:
    """Refuse more than MAX_DEPTH levels of brackets, measured before any parser recurses.

    Linear in the length of the text whatever it holds, and vectorised: escaped backslashes
    and escaped quotes are blanked first (pairs taken left to right, as JSON reads them), so
    every quote left opens or closes a string; brackets after an odd count of quotes are
    inside a string and do not count.  When too deep, the containers open at that point give
    the path of the entry.  Returns the blanked text (same length, same indices).
    """
    neutral = text.replace("\\\\", "__").replace('\\"', "__")
    codes = np.frombuffer(neutral.encode("utf-32-le", "surrogatepass"), dtype=np.uint32)
    quote = codes == ord('"')
    outside = (np.cumsum(quote, dtype=np.uint8) & 1) == 0  # parity only (wrapping at 256 keeps it); an
    opens = ((codes == ord("[")) | (codes == ord("{"))) & outside  # opening quote counts as inside
    step = opens.view(np.int8) - (((codes == ord("]")) | (codes == ord("}"))) & outside).view(np.int8)
    depth = np.cumsum(step, dtype=np.int32)  # depth after each character
    del step
    if not depth.size or int(depth.max()) <= MAX_DEPTH:
        return neutral
    too_deep = int(np.argmax(depth > MAX_DEPTH))  # the opening bracket one level too many
    open_at = np.flatnonzero(opens[:too_deep])
    open_depth = depth[open_at]
    holders = [int(open_at[open_depth == level][-1]) for level in range(1, MAX_DEPTH + 1)] + [too_deep]
    commas = (codes == ord(",")) & outside
    key_quotes = quote & ~outside
    where = ""
    for level, (start, child) in enumerate(zip(holders, holders[1:]), start=1):
        at_level = depth[start:child] == level
        if codes[start] == ord("["):
            where = f"{where}[{int(np.count_nonzero(commas[start:child] & at_level))}]"
            continue
        found = np.flatnonzero(key_quotes[start:child] & at_level)
        if not found.size:
            where = _key_path(where, "")
            continue
        first = start + int(found[-1])
        raw = text[first:neutral.find('"', first + 1) + 1]
        try:
            key = json.loads(raw)
        except ValueError:
            key = raw[1:-1]
        where = _key_path(where, key if isinstance(key, str) else raw[1:-1])
    line = text.count("\n", 0, too_deep) + 1
    col = too_deep - text.rfind("\n", 0, too_deep)
    raise fail(where, f"brackets nested more than {MAX_DEPTH} levels deep (line {line}, column {col})",
               f"at most {MAX_DEPTH} levels of nesting (a posekit state uses 5)")


def _too_large(what: str, size: int, limit: int, keyword: str = "limit") -> InputTooLargeError:
    return InputTooLargeError(f"{what} ({size_words(size)}) is larger than the limit of {size_words(limit)}. "
                              f"Pass a larger {keyword}= if it really is this large.")


def _check_limit(limit, keyword: str = "limit") -> int:
    if isinstance(limit, bool) or not isinstance(limit, int) or limit < 1:
        raise WrongTypeError(f"{keyword}: got {summarise(limit, 40)}; expected a whole number of bytes >= 1")
    return limit


def _decode(text, limit: int) -> str:
    if isinstance(text, (bytes, bytearray, memoryview)):
        data = bytes(text)
        if len(data) > limit:
            raise _too_large("state text", len(data), limit)
        try:
            return data.decode("utf-8")
        except UnicodeDecodeError as exc:
            raise fail(None, f"not UTF-8 text (byte 0x{data[exc.start]:02x} at offset {exc.start}: {exc.reason})",
                       "JSON text encoded as UTF-8") from None
    if not isinstance(text, str):
        raise fail(None, f"got {type(text).__name__}", "JSON text (str or UTF-8 bytes)")
    if len(text) > limit:
        raise _too_large("state text", len(text), limit)
    size = len(text.encode("utf-8", "surrogatepass"))
    if size > limit:
        raise _too_large("state text", size, limit)
    return text


def _parse(text: str):
    neutral = _check_depth(text)
    marked = []  # set when a hook kept a marker: only then is the tree walked for its path

    def pairs(items):
        out = {}
        repeated = None
        for k, v in items:
            if k in out and repeated is None:
                repeated = k
            out[k] = v
        if repeated is None:
            return out
        flagged = _Duplicated(out)
        flagged.key = repeated
        marked.append(flagged)
        return flagged

    def hooked(hook):
        def read(token):
            value = hook(token)
            if isinstance(value, _Refused):
                marked.append(value)
            return value
        return read

    options = {"object_pairs_hook": pairs, "parse_constant": hooked(_refuse_constant)}
    if _LONG_DIGITS.search(neutral):
        options["parse_int"] = hooked(_refuse_int)
    if _BIG_FLOAT.search(neutral):
        options["parse_float"] = hooked(_refuse_float)
    try:
        data = json.loads(text, **options)
    except json.JSONDecodeError as exc:
        raise fail(None, f"not valid JSON at line {exc.lineno}, column {exc.colno}: {exc.msg}",
                   "JSON text as posekit writes it") from None
    except RecursionError:  # pragma: no cover - the depth check comes first
        raise fail(None, "nested too deeply to read", f"at most {MAX_DEPTH} levels of nesting") from None
    if marked:
        _walk(data, "")
    return data


def state_from_json(text, *, limit: int = STATE_LIMIT) -> State:
    """Parse and strictly check state JSON text (str or UTF-8 bytes) -> :class:`State`.

    Text larger than ``limit`` bytes raises :class:`~posekit.io.limits.InputTooLargeError`;
    anything else wrong raises :class:`StateFileError` naming the path of the entry.
    """
    text = _decode(text, _check_limit(limit))
    data = _parse(text)
    _only_keys(data, _TOP_KEYS, "")
    if data["schema"] != SCHEMA:
        raise fail("schema", f"got {shown(data['schema'])}", repr(SCHEMA))
    if type(data["version"]) is not int or data["version"] != VERSION:
        raise fail("version", f"got {shown(data['version'])}", f"{VERSION} (this posekit reads version {VERSION})")
    versions = _check_versions(data["versions"])
    widget = _check_widget(data["widget"])
    settings = _check_settings(widget, data["settings"])
    poses = []
    for i, p in enumerate(_list(data["poses"], "poses")):
        path = f"poses[{i}]"
        _only_keys(p, ("name", "matrix", "convention"), path)
        name = check_name(p["name"], f"{path}.name")
        m = p["matrix"]
        if not (isinstance(m, list) and len(m) == 4 and all(isinstance(r, list) and len(r) == 4 for r in m)):
            raise fail(f"{path}.matrix", f"got {shown(m)}", "4 rows of 4 numbers")
        rows = [[check_number(x, f"{path}.matrix[{r}][{c}]") for c, x in enumerate(row)] for r, row in enumerate(m)]
        matrix = _check_pose_matrix(np.array(rows), f"{path}.matrix")
        conv = check_convention(p["convention"], f"{path}.convention")
        poses.append(NamedPose(name, matrix, conv))
    edges = []
    for i, e in enumerate(_list(data["edges"], "edges")):
        path = f"edges[{i}]"
        _only_keys(e, ("parent", "child", "kind", "numbers", "convention"), path)
        edges.append(Edge(*_check_edge(e["parent"], e["child"], e["kind"], e["numbers"], e["convention"], path)))
    notes = check_text(data["notes"], "notes", limit=MAX_TEXT, lines=True)
    return State(widget, settings, tuple(poses), tuple(edges), notes, versions)


# --- writing ----------------------------------------------------------------------------------

def _to_plain(state: State) -> dict:
    return {
        "schema": SCHEMA,
        "version": VERSION,
        "versions": dict(state.versions),
        "widget": state.widget,
        "settings": {k: list(v) if isinstance(v, tuple) else v for k, v in state.settings.items()},
        "poses": [{"name": p.name, "matrix": p.matrix.tolist(), "convention": p.convention.to_text()}
                  for p in state.poses],
        "edges": [{"parent": e.parent, "child": e.child, "kind": e.kind, "numbers": list(e.numbers),
                   "convention": e.convention.to_text()} for e in state.edges],
        "notes": state.notes,
    }


def state_to_json(state: State, indent: int | None = 1) -> str:
    """Serialise a :class:`State`; floats keep every bit (shortest round-trip repr)."""
    if not isinstance(state, State):
        raise StateFileError(f"state: got {type(state).__name__}; expected a posekit State")
    try:
        return json.dumps(_to_plain(state), indent=indent, allow_nan=False, ensure_ascii=False)
    except (ValueError, TypeError) as exc:  # only reachable by changing a frozen State behind its back
        raise StateFileError(f"state: cannot be written as JSON ({_short(str(exc), 120)}); expected a State "
                             "whose entries passed its checks") from None


def _check_path(path, what: str):
    if not isinstance(path, (str, os.PathLike)) or (isinstance(path, str) and not path):
        raise WrongTypeError(f"{what}: got {summarise(path, 40)}; expected a file path")
    return path


def save_state(state: State, path, *, limit: int = STATE_LIMIT):
    """Write ``state`` as JSON (UTF-8) to ``path`` in one step; returns the path.

    The JSON is made in full and read back (it must load as an equal state) before the
    file is touched; then :func:`~posekit.io.limits.write_atomic` writes it, so on any
    failure an earlier file is untouched.  A state larger than ``limit`` bytes is refused
    (``load_state`` reads at most that many by default).
    """
    _check_path(path, "state file")
    text = state_to_json(state)
    size = len(text.encode("utf-8", "surrogatepass"))
    if size > _check_limit(limit):
        raise InputTooLargeError(f"state not saved to {excerpt(str(path), 80)}: it is {size_words(size)}, larger "
                                 f"than the limit of {size_words(limit)} that load_state reads. Pass a larger "
                                 "limit= to save_state and to load_state if it really is this large.")
    if state_from_json(text, limit=limit) != state:  # pragma: no cover - the checks of State make this hold
        raise StateFileError("state: does not read back as written; expected a State whose entries passed its "
                             "checks")
    return write_atomic(path, text, what="state file")


def _in_file(exc: StateFileError, what: str, source) -> StateFileError:
    name = "standard input" if source == "-" else (excerpt(os.fspath(source), 80)
                                                    if isinstance(source, (str, os.PathLike)) else "the stream")
    return StateFileError(f"{exc} (in {what} {name})", exc.path)


def load_state(path, *, limit: int = STATE_LIMIT) -> State:
    """Read and strictly check a state file (a path, ``"-"`` or an open binary file).

    At most ``limit + 1`` bytes are read whatever the file reports as its size; past
    ``limit`` raises :class:`~posekit.io.limits.InputTooLargeError`.  A file that cannot
    be read raises :class:`~posekit.io.limits.FileReadError`; bad contents raise
    :class:`StateFileError` naming the entry and the file.
    """
    data = read_bounded(path, limit=_check_limit(limit), what="state file")
    try:
        return state_from_json(data, limit=limit)
    except StateFileError as exc:
        raise _in_file(exc, "state file", path) from None


def read_report_state(path, *, limit: int = REPORT_LIMIT) -> State:
    """Load the state embedded in a posekit HTML report (strictly checked, nothing run).

    Reads at most ``limit + 1`` bytes of the report (past ``limit``:
    :class:`~posekit.io.limits.InputTooLargeError`) and looks for exactly one
    ``<script type='application/json' id='posekit-state'>`` block.
    """
    text = read_bounded_text(path, limit=_check_limit(limit), what="report")
    name = excerpt(os.fspath(path), 80) if isinstance(path, (str, os.PathLike)) else "the stream"
    count = text.count(REPORT_STATE_OPEN)
    if count != 1:
        raise StateFileError(f"report {name}: found {count} embedded posekit state blocks; expected one "
                             f"{REPORT_STATE_OPEN} block, as a posekit report holds (is this a posekit report?)")
    start = text.index(REPORT_STATE_OPEN) + len(REPORT_STATE_OPEN)
    end = text.find("</script>", start)
    if end < 0:
        raise StateFileError(f"report {name}: the embedded state block is not closed; expected it to end with "
                             "</script>")
    try:
        return state_from_json(text[start:end], limit=limit)
    except StateFileError as exc:
        raise _in_file(exc, "the state block of report", path) from None
