"""posekit's own versioned JSON state: what a bug report needs to rebuild a widget exactly.

A state file holds the poses (canonical parent-from-child 4x4 matrices, each with
the convention it is shown under), frame-graph edges with their numbers as entered,
the widget's own settings, free notes, and the versions of posekit, numpy, scipy and
Python that wrote it.  Floats are written with Python's shortest round-trip ``repr``,
so ``state -> JSON -> state`` is bit-identical.

Loading is strict and never evaluates anything (plain :mod:`json`, no eval, no
pickle): unknown keys, wrong types, non-finite numbers, oversized inputs and bad
convention text are refused with :class:`StateFileError` naming the path of the
offending entry (e.g. ``poses[2].matrix``).

Top level (version 1)::

    {"schema": "posekit-state", "version": 1,
     "versions": {"posekit": str, "numpy": str, "scipy": str, "python": str},
     "widget": one of WIDGET_KINDS,
     "settings": {...fields of that widget kind, see WIDGET_FIELDS...},
     "poses": [{"name": str, "matrix": 4x4 numbers, "convention": convention text}],
     "edges": [{"parent": str, "child": str, "kind": str, "numbers": [numbers],
                "convention": convention text}],
     "notes": str}
"""

from __future__ import annotations

import json
import math
import platform
from dataclasses import dataclass, field
from pathlib import Path
from types import MappingProxyType
from typing import Any, Mapping

import numpy as np

from ..core.convention import Convention
from ..core.errors import ConventionError, PoseInputError
from ..core.transforms import TRANSFORM_KINDS, checked_transform

__all__ = [
    "SCHEMA", "VERSION", "MAX_BYTES", "MAX_ITEMS", "WIDGET_KINDS", "WIDGET_FIELDS",
    "StateFileError", "NamedPose", "Edge", "State", "state_to_json", "state_from_json",
    "save_state", "load_state", "environment_versions", "float_literal", "read_report_state",
]

SCHEMA = "posekit-state"
VERSION = 1
MAX_BYTES = 8 * 1024 * 1024
MAX_ITEMS = 10_000
MAX_TEXT = 20_000


class StateFileError(PoseInputError):
    """A state file (or state text) is malformed, tampered with, or too large."""


# Field specs: ("floats", n) | ("float",) | ("bool",) | ("choice", options) | ("convention",)
# | ("text",) | ("int", lo, hi)
WIDGET_FIELDS: dict[str, dict[str, tuple]] = {
    "none": {},
    "explorer": {
        "angles": ("floats", 3),
        "translation": ("floats", 3),
        "convention": ("convention",),
        "keep": ("choice", ("numbers", "orientation")),
        "show_steps": ("bool",),
        "show_body": ("bool",),
        "palette": ("choice", ("standard", "colour-blind")),
    },
    "planar": {
        "x": ("float",),
        "y": ("float",),
        "heading": ("float",),
        "unit": ("choice", ("degrees", "radians")),
        "direction": ("choice", ("parent-from-child", "child-from-parent")),
    },
    "singularity": {
        "angles": ("floats", 3),
        "swept": ("int", 0, 2),
        "sweep_range": ("floats", 2),
        "steps": ("int", 2, 2001),
        "position": ("int", 0, 2000),
        "convention": ("convention",),
    },
    "graph": {
        "planar": ("bool",),
        "angle_tolerance": ("float",),
        "distance_tolerance": ("float",),
        "sources": ("texts",),
        "from_frame": ("text",),
        "into_frame": ("text",),
        "root": ("text",),
        "readout_convention": ("convention",),
        "palette": ("choice", ("standard", "colour-blind")),
    },
    "desk": {
        "pasted": ("text",),
        "pairs": ("choice", ("one", "many")),
        "expected_source": ("choice", ("numbers", "words", "pose")),
        "expected_text": ("text",),
        "expected_kind": ("choice", ("by count", "euler", "quaternion", "rotation-vector", "matrix", "transform",
                                     "position-euler", "position-quaternion")),
        "expected_matrix": ("floats", 16),
        "convention": ("convention",),
        "chosen": ("int", 0, 99),
        "palette": ("choice", ("standard", "colour-blind")),
    },
    "trajectory": {
        "chosen_span": ("int", -1, 100_000),
        "summary": ("text",),
    },
}
WIDGET_KINDS = tuple(WIDGET_FIELDS)

#: Kinds of edge numbers: the SE(3) transform kinds and the planar position + heading.
EDGE_KINDS = tuple(TRANSFORM_KINDS) + ("position-heading",)

_TOP_KEYS = ("schema", "version", "versions", "widget", "settings", "poses", "edges", "notes")
_VERSION_KEYS = ("posekit", "numpy", "scipy", "python")


def environment_versions() -> dict[str, str]:
    """Versions of posekit, numpy, scipy and Python running now."""
    from .. import __version__

    try:
        import scipy

        sv = scipy.__version__
    except ImportError:  # pragma: no cover - scipy is a dependency
        sv = "not installed"
    return {"posekit": __version__, "numpy": np.__version__, "scipy": sv, "python": platform.python_version()}


def float_literal(x: float) -> str:
    """Python source for a float that reads back bit-identical (shortest round-trip repr)."""
    x = float(x)
    if not math.isfinite(x):
        raise StateFileError(f"cannot write the non-finite number {x!r}; states hold finite numbers only")
    return repr(x)


@dataclass(frozen=True, eq=False)
class NamedPose:
    """A canonical pose ``matrix (4, 4)`` with a name and the convention it is shown under."""

    name: str
    matrix: np.ndarray
    convention: Convention = field(default_factory=Convention)

    def __post_init__(self):
        if not isinstance(self.name, str) or len(self.name) > 200:
            raise StateFileError(f"pose name: got {self.name!r}; expected text of at most 200 characters")
        m = np.array(checked_transform(self.matrix, f"pose {self.name!r}", size=4), dtype=np.float64)
        if m.shape != (4, 4):
            raise StateFileError(f"pose {self.name!r}: got shape {m.shape}; expected one 4x4 matrix")
        m.setflags(write=False)
        object.__setattr__(self, "matrix", m)
        if not isinstance(self.convention, Convention):
            raise StateFileError(f"pose {self.name!r}: convention must be a posekit Convention")

    def __eq__(self, other) -> bool:
        return (isinstance(other, NamedPose) and self.name == other.name and self.convention == other.convention
                and self.matrix.tobytes() == other.matrix.tobytes())

    def __hash__(self) -> int:
        return hash((self.name, self.convention, self.matrix.tobytes()))


@dataclass(frozen=True)
class Edge:
    """One frame-graph edge as entered: the numbers, their kind and convention, kept verbatim."""

    parent: str
    child: str
    kind: str
    numbers: tuple[float, ...]
    convention: Convention = field(default_factory=Convention)


@dataclass(frozen=True)
class State:
    """Everything needed to rebuild one widget (or a plain set of poses) exactly."""

    widget: str = "none"
    settings: Mapping[str, Any] = field(default_factory=dict)
    poses: tuple[NamedPose, ...] = ()
    edges: tuple[Edge, ...] = ()
    notes: str = ""
    versions: Mapping[str, str] = field(default_factory=environment_versions)

    def __post_init__(self):
        if self.widget not in WIDGET_FIELDS:
            raise StateFileError(f"widget: got {self.widget!r}; accepted: {', '.join(WIDGET_KINDS)}")
        settings = _check_settings(dict(self.settings), self.widget, "settings")
        object.__setattr__(self, "settings", MappingProxyType(settings))
        object.__setattr__(self, "poses", tuple(self.poses))
        object.__setattr__(self, "edges", tuple(self.edges))
        object.__setattr__(self, "versions", MappingProxyType(dict(self.versions)))
        if not isinstance(self.notes, str) or len(self.notes) > MAX_TEXT:
            raise StateFileError(f"notes: expected text of at most {MAX_TEXT} characters")

    def __eq__(self, other) -> bool:
        return isinstance(other, State) and state_to_json(self) == state_to_json(other)

    def __hash__(self) -> int:
        return hash(state_to_json(self))


# --- checking -------------------------------------------------------------------------

def _fail(path: str, message: str) -> StateFileError:
    return StateFileError(f"state {path}: {message}")


def _is_number(v) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool)


def _finite(v, path: str) -> float:
    if not _is_number(v):
        raise _fail(path, f"got {type(v).__name__} {json.dumps(v)[:60]}; expected a number")
    v = float(v)
    if not math.isfinite(v):
        raise _fail(path, f"got {v}; expected a finite number")
    return v


def _text(v, path: str, limit: int = 200) -> str:
    if not isinstance(v, str):
        raise _fail(path, f"got {type(v).__name__}; expected text")
    if len(v) > limit:
        raise _fail(path, f"text of {len(v)} characters; at most {limit} accepted")
    return v


def _convention(v, path: str) -> Convention:
    if isinstance(v, Convention):
        return v
    try:
        return Convention.parse(_text(v, path, 1000))
    except ConventionError as exc:
        raise _fail(path, str(exc)) from None


def _check_settings(settings: dict, widget: str, path: str) -> dict:
    spec = WIDGET_FIELDS[widget]
    unknown = sorted(set(settings) - set(spec))
    if unknown:
        raise _fail(path, f"unknown key(s) {unknown} for widget {widget!r}; accepted: {', '.join(spec) or 'none'}")
    missing = sorted(set(spec) - set(settings))
    if missing:
        raise _fail(path, f"missing key(s) {missing} for widget {widget!r}")
    out = {}
    for key, kind in spec.items():
        v, p = settings[key], f"{path}.{key}"
        tag = kind[0]
        if tag == "floats":
            if not isinstance(v, (list, tuple)) or len(v) != kind[1]:
                raise _fail(p, f"expected a list of {kind[1]} numbers, got {json.dumps(v, default=str)[:60]}")
            out[key] = tuple(_finite(x, f"{p}[{i}]") for i, x in enumerate(v))
        elif tag == "float":
            out[key] = _finite(v, p)
        elif tag == "bool":
            if not isinstance(v, bool):
                raise _fail(p, f"got {json.dumps(v, default=str)[:60]}; expected true or false")
            out[key] = v
        elif tag == "choice":
            if v not in kind[1]:
                raise _fail(p, f"got {json.dumps(v, default=str)[:60]}; accepted: {', '.join(kind[1])}")
            out[key] = v
        elif tag == "convention":
            out[key] = _convention(v, p).to_text()
        elif tag == "text":
            out[key] = _text(v, p, MAX_TEXT)
        elif tag == "texts":
            out[key] = tuple(_text(x, f"{p}[{i}]") for i, x in enumerate(_list(list(v) if isinstance(v, tuple)
                                                                               else v, p)))
        elif tag == "int":
            if not isinstance(v, int) or isinstance(v, bool) or not kind[1] <= v <= kind[2]:
                raise _fail(p, f"got {json.dumps(v, default=str)[:60]}; expected a whole number from {kind[1]} "
                               f"to {kind[2]}")
            out[key] = v
        else:  # pragma: no cover - spec table is ours
            raise AssertionError(tag)
    return out


def _only_keys(d, keys, path: str) -> None:
    if not isinstance(d, dict):
        raise _fail(path, f"got {type(d).__name__}; expected an object")
    unknown = sorted(set(d) - set(keys))
    if unknown:
        raise _fail(path, f"unknown key(s) {unknown}; accepted: {', '.join(keys)}")
    missing = sorted(set(keys) - set(d))
    if missing:
        raise _fail(path, f"missing key(s) {missing}")


def _list(v, path: str) -> list:
    if not isinstance(v, list):
        raise _fail(path, f"got {type(v).__name__}; expected a list")
    if len(v) > MAX_ITEMS:
        raise _fail(path, f"{len(v)} entries; at most {MAX_ITEMS} accepted")
    return v


# --- JSON -----------------------------------------------------------------------------

def _to_plain(state: State) -> dict:
    settings = {}
    for k, v in state.settings.items():
        settings[k] = list(v) if isinstance(v, tuple) else v
    return {
        "schema": SCHEMA,
        "version": VERSION,
        "versions": dict(state.versions),
        "widget": state.widget,
        "settings": settings,
        "poses": [{"name": p.name, "matrix": p.matrix.tolist(), "convention": p.convention.to_text()}
                  for p in state.poses],
        "edges": [{"parent": e.parent, "child": e.child, "kind": e.kind, "numbers": list(e.numbers),
                   "convention": e.convention.to_text()} for e in state.edges],
        "notes": state.notes,
    }


def state_to_json(state: State, indent: int | None = 1) -> str:
    """Serialise a :class:`State`; floats keep every bit (shortest round-trip repr)."""
    if not isinstance(state, State):
        raise StateFileError(f"expected a posekit State, got {type(state).__name__}")
    return json.dumps(_to_plain(state), indent=indent, allow_nan=False, ensure_ascii=False)


def _reject_constant(name):
    raise StateFileError(f"state: the number {name} is not allowed; states hold finite numbers only")


def state_from_json(text) -> State:
    """Parse and strictly validate state JSON text -> :class:`State`."""
    if isinstance(text, bytes):
        if len(text) > MAX_BYTES:
            raise StateFileError(f"state: {len(text)} bytes; at most {MAX_BYTES} accepted")
        try:
            text = text.decode("utf-8")
        except UnicodeDecodeError as exc:
            raise StateFileError(f"state: not UTF-8 text ({exc.reason} at byte {exc.start})") from None
    if not isinstance(text, str):
        raise StateFileError(f"state: got {type(text).__name__}; expected JSON text")
    if len(text.encode("utf-8")) > MAX_BYTES:
        raise StateFileError(f"state: larger than {MAX_BYTES} bytes; refused before parsing")
    try:
        data = json.loads(text, parse_constant=_reject_constant)
    except json.JSONDecodeError as exc:
        raise StateFileError(f"state: not valid JSON at line {exc.lineno}, column {exc.colno}: {exc.msg}") from None
    _only_keys(data, _TOP_KEYS, "top level")
    if data["schema"] != SCHEMA:
        raise _fail("schema", f"got {json.dumps(data['schema'])[:60]}; expected {SCHEMA!r}")
    if data["version"] != VERSION or isinstance(data["version"], bool):
        raise _fail("version", f"got {json.dumps(data['version'])[:60]}; this posekit reads version {VERSION}")
    _only_keys(data["versions"], _VERSION_KEYS, "versions")
    versions = {k: _text(data["versions"][k], f"versions.{k}", 64) for k in _VERSION_KEYS}
    widget = data["widget"]
    if widget not in WIDGET_FIELDS:
        raise _fail("widget", f"got {json.dumps(widget)[:60]}; accepted: {', '.join(WIDGET_KINDS)}")
    if not isinstance(data["settings"], dict):
        raise _fail("settings", "expected an object")
    settings = _check_settings(data["settings"], widget, "settings")
    poses = []
    for i, p in enumerate(_list(data["poses"], "poses")):
        path = f"poses[{i}]"
        _only_keys(p, ("name", "matrix", "convention"), path)
        m = p["matrix"]
        if not (isinstance(m, list) and len(m) == 4 and all(isinstance(r, list) and len(r) == 4 for r in m)):
            raise _fail(f"{path}.matrix", "expected 4 rows of 4 numbers")
        rows = [[_finite(x, f"{path}.matrix[{r}][{c}]") for c, x in enumerate(row)] for r, row in enumerate(m)]
        try:
            poses.append(NamedPose(_text(p["name"], f"{path}.name"), np.array(rows),
                                   _convention(p["convention"], f"{path}.convention")))
        except StateFileError:
            raise
        except PoseInputError as exc:
            raise _fail(f"{path}.matrix", str(exc)) from None
    edges = []
    for i, e in enumerate(_list(data["edges"], "edges")):
        path = f"edges[{i}]"
        _only_keys(e, ("parent", "child", "kind", "numbers", "convention"), path)
        if e["kind"] not in EDGE_KINDS:
            raise _fail(f"{path}.kind", f"got {json.dumps(e['kind'])[:60]}; accepted: {', '.join(EDGE_KINDS)}")
        nums = _list(e["numbers"], f"{path}.numbers")
        if len(nums) > 16:
            raise _fail(f"{path}.numbers", f"{len(nums)} numbers; at most 16 accepted")
        edges.append(Edge(_text(e["parent"], f"{path}.parent"), _text(e["child"], f"{path}.child"), e["kind"],
                          tuple(_finite(x, f"{path}.numbers[{j}]") for j, x in enumerate(nums)),
                          _convention(e["convention"], f"{path}.convention")))
    notes = _text(data["notes"], "notes", MAX_TEXT)
    return State(widget, settings, tuple(poses), tuple(edges), notes, versions)


def save_state(state: State, path) -> Path:
    """Write ``state`` as JSON to ``path`` (UTF-8); returns the path."""
    path = Path(path)
    path.write_text(state_to_json(state), encoding="utf-8")
    return path


def load_state(path) -> State:
    """Read and strictly validate a state file; refuses files larger than :data:`MAX_BYTES`."""
    path = Path(path)
    try:
        size = path.stat().st_size
    except OSError as exc:
        raise StateFileError(f"state file {str(path)!r}: cannot be read ({exc.strerror})") from None
    if size > MAX_BYTES:
        raise StateFileError(f"state file {str(path)!r}: {size} bytes; at most {MAX_BYTES} accepted")
    return state_from_json(path.read_bytes())


_REPORT_OPEN = "<script type='application/json' id='posekit-state'>"


def read_report_state(path) -> State:
    """Load the state embedded in a posekit HTML report (strictly validated, nothing run).

    Looks for exactly one ``<script type='application/json' id='posekit-state'>`` block.
    """
    path = Path(path)
    try:
        size = path.stat().st_size
    except OSError as exc:
        raise StateFileError(f"report {str(path)!r}: cannot be read ({exc.strerror})") from None
    if size > 64 * MAX_BYTES:
        raise StateFileError(f"report {str(path)!r}: {size} bytes is too large for a posekit report")
    text = path.read_text(encoding="utf-8", errors="strict")
    count = text.count(_REPORT_OPEN)
    if count != 1:
        raise StateFileError(f"report {str(path)!r}: expected one embedded posekit state block, found {count}; "
                             "is this a posekit report?")
    start = text.index(_REPORT_OPEN) + len(_REPORT_OPEN)
    end = text.find("</script>", start)
    if end < 0:
        raise StateFileError(f"report {str(path)!r}: the embedded state block is not closed")
    return state_from_json(text[start:end])
