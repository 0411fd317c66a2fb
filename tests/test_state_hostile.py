"""Hostile state files and reports: a generated catalogue, failed writes, bounded reads, a fuzz.

Every refusal must be a typed posekit error whose message names the path of the bad
entry and says what is accepted; a failed write must leave an earlier file byte for
byte; reads are bounded whatever a file says its size is.
"""

from __future__ import annotations

import dataclasses
import errno
import io
import json
import os
import re
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from test_state import valid_states

import posekit as pk
import posekit.io.limits as limits
import posekit.io.settings as pks
import posekit.widgets  # noqa: F401 - registers each widget's settings class
from posekit.io.limits import FileReadError, FileWriteError, InputTooLargeError
from posekit.io.settings import (Bool, Choice, ConventionText, Float, Floats, IntRange, Text, Texts, StateFileError,
                                 settings_class)
from posekit.io.state import (EDGE_COUNTS, MAX_DEPTH, MAX_INT_DIGITS, MAX_TEXT, REPORT_STATE_OPEN, WIDGET_KINDS,
                              Edge, NamedPose, State, load_state, read_report_state, save_state, state_from_json,
                              state_to_json)
from posekit.view.report import report_html, write_report

# --- a valid plain state of every widget kind, built from the kinds the widgets declare -------------------

ROT = pk.read_rotation([0.3, -0.2, 0.1], "euler")
MATRIX = pk.make_transform(ROT, [1.0, 2.0, 3.0]).tolist()
EDGE_NUMBERS = {"matrix": [float(v) for v in np.ravel(MATRIX)], "position-quaternion": [0.1, 0.2, 0.3, 1, 0, 0, 0],
                "position-euler": [0.1, 0.2, 0.3, 10, 20, 30], "position-heading": [1.0, 2.0, 90.0]}


def _valid_value(kind):
    """One value each field kind accepts (distinct numbers, so cross-field checks pass)."""
    if isinstance(kind, Floats):
        return [0.5 + i for i in range(kind.n)]
    if isinstance(kind, Float):
        return 0.25
    if isinstance(kind, Bool):
        return True
    if isinstance(kind, Choice):
        return kind.options[0]
    if isinstance(kind, ConventionText):
        return "sequence=z-y-x unit=degrees"
    if isinstance(kind, Text):
        return "base"
    if isinstance(kind, Texts):
        return ["survey", ""]
    if isinstance(kind, IntRange):
        return kind.lo
    raise AssertionError(f"no valid value for {kind!r}")  # a new field kind needs one here


#: Each widget kind's settings class, taken while posekit.widgets is imported (tests below unregister them).
CLASSES = {kind: settings_class(kind) for kind in WIDGET_KINDS}


def plain(widget="explorer") -> dict:
    """A valid state of ``widget`` as JSON holds it (checked: it loads)."""
    cls = CLASSES[widget]
    data = {"schema": "posekit-state", "version": 1,
            "versions": {"posekit": "0.1.0", "numpy": "2.0", "scipy": "1.14", "python": "3.11.9"},
            "widget": widget, "settings": {k: _valid_value(v) for k, v in cls.field_kinds().items()},
            "poses": [{"name": "camera mount", "matrix": MATRIX, "convention": "sequence=z-y-x unit=degrees"}],
            "edges": [{"parent": "world", "child": "base", "kind": "position-quaternion",
                       "numbers": EDGE_NUMBERS["position-quaternion"], "convention": "scalar=first"}],
            "notes": "seen on the survey boat"}
    text = json.dumps(data)
    state_from_json(text)
    return json.loads(text)  # a fresh copy: changes made to it reach nothing shared


def _changed(widget, change):
    d = plain(widget)
    change(d)
    return json.dumps(d)


def _set(*path_and_value):
    *path, value = path_and_value

    def change(d):
        node = d
        for key in path[:-1]:
            node = node[key]
        node[path[-1]] = value
    return change


def _with_token(widget, change, token):
    """JSON text with ``token`` written raw where ``change`` put a placeholder (for what json.dumps won't write)."""
    text = _changed(widget, change)
    return text.replace('"@TOKEN@"', token)


@dataclasses.dataclass(frozen=True)
class Case:
    id: str
    run: str                  # "text": state_from_json; "file": load_state; "report": read_report_state
    payload: object           # str / bytes, or a callable (tmp_path) -> path for "file"/"report"
    error: type
    path: str | None          # path named in the message (None: the whole input)
    accepted: str             # words of what is accepted
    limit: int | None = None


def _field_cases() -> list[Case]:
    """Every settings field of every widget kind, refused with its own path and words."""
    cases = []
    for widget in WIDGET_KINDS:
        for name, kind in settings_class(widget).field_kinds().items():
            p = f"settings.{name}"
            bad: list[tuple[str, object, str, str]] = []
            if isinstance(kind, Floats):
                bad += [("one too many", [0.5] * (kind.n + 1), p, kind.accepted),
                        ("text entry", ["1"] + [0.5] * (kind.n - 1), f"{p}[0]", "a finite number")]
            elif isinstance(kind, Float):
                bad += [("text", "1.5", p, "a finite number"), ("boolean", True, p, "a finite number")]
            elif isinstance(kind, Bool):
                bad += [("one", 1, p, "true or false")]
            elif isinstance(kind, Choice):
                bad += [("unknown word", kind.options[0] + "\u202e", p, kind.accepted)]
            elif isinstance(kind, ConventionText):
                bad += [("unknown word", "sequence=q-r-s", p, "convention text"),
                        ("look-alike letter", "sequence=z-y-x unit=d\u0435grees", p, "convention text in ASCII")]
            elif isinstance(kind, Text):
                bad += [("control character", "a\x1bb", p, kind.accepted)]
                if kind.limit <= MAX_TEXT:
                    bad += [("too long", "x" * (kind.limit + 1), p, kind.accepted)]
                if kind.name:
                    bad += [("bidi override", "ab\u202ecd", p, kind.accepted)]
            elif isinstance(kind, Texts):
                bad += [("number entry", ["ok", 5], f"{p}[1]", kind.each.accepted)]
            elif isinstance(kind, IntRange):
                bad += [("above the range", kind.hi + 1, p, kind.accepted), ("as 2.0", float(kind.lo), p,
                                                                              kind.accepted)]
            for label, value, path, accepted in bad:
                cases.append(Case(f"{widget} {name}: {label}", "text",
                                  _changed(widget, _set("settings", name, value)), StateFileError, path, accepted))
    return cases


def _structure_cases() -> list[Case]:
    top = "an object with the keys schema"
    rows = [
        ("unknown top-level key", _set("colour", "red"), None, top),
        ("missing notes", lambda d: d.pop("notes"), None, top),
        ("schema of another program", _set("schema", "other-state"), "schema", "'posekit-state'"),
        ("version 2", _set("version", 2), "version", "this posekit reads version 1"),
        ("version as text", _set("version", "1"), "version", "this posekit reads version 1"),
        ("widget not a kind", _set("widget", "spinner"), "widget", "'explorer'"),
        ("widget as a list", _set("widget", ["explorer"]), "widget", "'explorer'"),
        ("settings as text", _set("settings", "angles=1"), "settings", "an object holding"),
        ("poses as an object", _set("poses", {"0": 1}), "poses", "a list of at most"),
        ("pose as a list", _set("poses", 0, [1, 2]), "poses[0]", "an object with the keys name"),
        ("pose matrix 3x3", _set("poses", 0, "matrix", [r[:3] for r in MATRIX[:3]]), "poses[0].matrix",
         "4 rows of 4 numbers"),
        ("pose matrix reflection", _set("poses", 0, "matrix", [[-1, 0, 0, 0], [0, 1, 0, 0], [0, 0, 1, 0],
                                                                [0, 0, 0, 1]]), "poses[0].matrix", "a 4x4 transform"),
        ("pose matrix text entry", _set("poses", 0, "matrix", 1, 2, "0"), "poses[0].matrix[1][2]", "a finite number"),
        ("pose convention number", _set("poses", 0, "convention", 7), "poses[0].convention", "convention text"),
        ("edges as text", _set("edges", "world-base"), "edges", "a list of at most"),
        ("edge missing kind", lambda d: d["edges"][0].pop("kind"), "edges[0]", "an object with the keys parent"),
        ("edge kind unknown", _set("edges", 0, "kind", "dual-quaternion"), "edges[0].kind", "'position-heading'"),
        ("edge kind not text", _set("edges", 0, "kind", 3), "edges[0].kind", "'matrix'"),
        ("edge numbers not a list", _set("edges", 0, "numbers", "1 2 3"), "edges[0].numbers", "a flat list of 7"),
        ("edge number text", _set("edges", 0, "numbers", 2, "0.3"), "edges[0].numbers[2]", "a finite number"),
        ("edge number nested", _set("edges", 0, "numbers", 2, [0.3]), "edges[0].numbers[2]", "a finite number"),
        ("edge frame joined to itself", _set("edges", 0, "child", "world"), "edges[0].child",
         "an edge between two different frames"),
        ("versions not an object", _set("versions", "1.0"), "versions", "an object of posekit, numpy"),
        ("versions missing python", lambda d: d["versions"].pop("python"), "versions", "an object with the keys"),
        ("version text too long", _set("versions", "numpy", "1" * 65), "versions.numpy", "a name of 0 to 64"),
        ("version text with escape", _set("versions", "posekit", "0.1\x1b[31m"), "versions.posekit",
         "without control"),
        ("notes a number", _set("notes", 5), "notes", "text of 0 to 20000 characters"),
        ("notes too long", _set("notes", "n" * (MAX_TEXT + 1)), "notes", "text of 0 to 20000 characters"),
        ("notes with a NUL", _set("notes", "a\x00b"), "notes", "without control characters other than newline"),
        ("notes with a C1 control", _set("notes", "a\x85b"), "notes", "without control characters other than"),
    ]
    cases = [Case(label, "text", _changed("explorer", change), StateFileError, path, accepted)
             for label, change, path, accepted in rows]
    for kind, counts in sorted(EDGE_COUNTS.items()):  # every edge kind, one number short and one too many
        for n in (min(counts) - 1, max(counts) + 1):
            cases.append(Case(f"edge {kind} with {n} numbers", "text",
                              _changed("explorer", lambda d, k=kind, n=n: d["edges"][0].update(
                                  kind=k, numbers=(EDGE_NUMBERS[k] * 2)[:n])),
                              StateFileError, "edges[0].numbers", f"finite numbers for kind {kind!r}"))
    for kind in sorted(EDGE_COUNTS):  # and each accepted once (the catalogue's refusals are not everything)
        state = state_from_json(_changed("explorer", lambda d, k=kind: d["edges"][0].update(
            kind=k, numbers=EDGE_NUMBERS[k])))
        assert state.edges[0].kind == kind
    return cases


def _name_cases() -> list[Case]:
    cases = []
    places = (("poses", 0, "name"), ("edges", 0, "parent"), ("edges", 0, "child"))
    values = (("empty", ""), ("201 characters", "n" * 201), ("NUL", "cam\x00era"), ("escape", "cam\x1bera"),
              ("bidi override", "cam\u202eera"), ("bidi isolate", "\u2066camera\u2069"),
              ("zero-width space", "cam\u200bera"), ("line separator", "cam\u2028era"), ("newline", "cam\nera"))
    for place in places:
        path = f"{place[0]}[0].{place[2]}"
        for label, value in values:
            cases.append(Case(f"{path}: {label}", "text", _changed("explorer", _set(*place, value)), StateFileError,
                              path, "a name of 1 to 200 characters"))
        cases.append(Case(f"{path}: lone surrogate", "text",
                          _with_token("explorer", _set(*place, "@TOKEN@"), '"cam\\ud800era"'), StateFileError, path,
                          "a name of 1 to 200 characters"))
        if place[0] == "edges":
            cases.append(Case(f"{path}: leading space", "text", _changed("explorer", _set(*place, " world")),
                              StateFileError, path, "without leading or trailing spaces"))
    return cases


def _number_cases() -> list[Case]:
    cases = []
    places = (("settings", "angles", 1), ("poses", 0, "matrix", 0, 3), ("edges", 0, "numbers", 3),
              ("settings", "show_steps"), ("notes",))
    tokens = (("5000-digit integer", "9" * 5000, f"integers of at most {MAX_INT_DIGITS} digits"),
              ("400-digit negative integer", "-" + "1" * 400, f"integers of at most {MAX_INT_DIGITS} digits"),
              ("1e999", "1e999", "no larger in size than 1.8e308"),
              ("NaN", "NaN", "JSON has no NaN or Infinity"),
              ("-Infinity", "-Infinity", "JSON has no NaN or Infinity"))
    for place in places:
        path = place[0] + "".join(f"[{k}]" if isinstance(k, int) else f".{k}" for k in place[1:])
        for label, token, accepted in tokens:
            cases.append(Case(f"{path}: {label}", "text", _with_token("explorer", _set(*place, "@TOKEN@"), token),
                              StateFileError, path, accepted))
    cases.append(Case("settings.angles[0]: 309-digit integer beyond float64", "text",
                      _with_token("explorer", _set("settings", "angles", 0, "@TOKEN@"), "9" * 309), StateFileError,
                      "settings.angles[0]", "no larger in size than 1.8e308"))
    return cases


def _duplicate_and_depth_cases() -> list[Case]:
    cases = []
    base = json.dumps(plain("explorer"))
    dupes = (("top level", None, '{"notes": "first", ', 1),
             ("settings", "settings", '"settings": {"keep": "numbers", ', 1),
             ("versions", "versions", '"versions": {"numpy": "0", ', 1),
             ("pose", "poses[0]", '"poses": [{"name": "first", ', 1),
             ("edge", "edges[0]", '"edges": [{"kind": "matrix", ', 1))
    for label, path, prefix, _ in dupes:
        opener = prefix.split("{", 1)[0] + "{"  # the text the duplicate key is written after
        text = base.replace(opener, prefix, 1) if label != "top level" else prefix + base[1:]
        cases.append(Case(f"duplicate key in {label}", "text", text, StateFileError, path,
                          "each key at most once in an object"))
    deep = MAX_DEPTH + 1
    cases += [
        Case("100000 nested lists", "text", "[" * 100_000 + "]" * 100_000, StateFileError, "[0]" * MAX_DEPTH,
             f"at most {MAX_DEPTH} levels of nesting"),
        Case("100000 unclosed lists", "text", "[" * 100_000, StateFileError, "[0]" * MAX_DEPTH,
             f"at most {MAX_DEPTH} levels of nesting"),
        Case(f"notes nested {deep} deep", "text",
             _with_token("explorer", _set("notes", "@TOKEN@"), "[" * deep + "]" * deep), StateFileError,
             "notes" + "[0]" * (MAX_DEPTH - 1), f"at most {MAX_DEPTH} levels of nesting"),
        Case("settings nested objects", "text",
             _with_token("explorer", _set("settings", "keep", "@TOKEN@"), '{"a": ' * deep + "1" + "}" * deep),
             StateFileError, "settings.keep" + ".a" * (MAX_DEPTH - 2), f"at most {MAX_DEPTH} levels of nesting"),
        Case("brackets inside text do not count", "text",
             _changed("explorer", _set("notes", "[" * 100)), None, None, ""),
    ]
    return cases


def _text_cases() -> list[Case]:
    good = json.dumps(plain("explorer"))
    return [
        Case("empty text", "text", "", StateFileError, None, "JSON text as posekit writes it"),
        Case("truncated", "text", good[:-10], StateFileError, None, "JSON text as posekit writes it"),
        Case("trailing data", "text", good + " {}", StateFileError, None, "JSON text as posekit writes it"),
        Case("byte-order mark", "text", "\ufeff" + good, StateFileError, None, "JSON text as posekit writes it"),
        Case("single quotes", "text", good.replace('"', "'"), StateFileError, None, "JSON text as posekit writes it"),
        Case("not UTF-8", "text", good.encode("utf-8").replace(b"survey", b"surv\xe9y"), StateFileError, None,
             "JSON text encoded as UTF-8"),
        Case("a number, not text", "text", 42, StateFileError, None, "JSON text (str or UTF-8 bytes)"),
        Case("a list at the top", "text", "[]", StateFileError, None, "an object with the keys schema"),
        Case("over the limit", "text", good, InputTooLargeError, None, "limit=", limit=len(good) - 1),
        Case("over the limit in bytes, not characters", "text", good.replace("survey", "s\u00fcrvey"),
             InputTooLargeError, None, "limit=", limit=len(good)),  # as many characters as the limit, 1 byte more
    ]


def _write(name, content):
    def make(tmp_path):
        path = tmp_path / name
        path.write_bytes(content)
        return path
    return make


def _report_page(block: str, opens: int = 1) -> bytes:
    return ("<html><body><p>posekit report</p>" + (REPORT_STATE_OPEN + block + "</script>") * opens
            + "</body></html>").encode("utf-8")


def _file_cases() -> list[Case]:
    good = json.dumps(plain("explorer"))
    bad_pose = _changed("explorer", _set("poses", 0, "name", "a\u202eb"))
    return [
        Case("/dev/zero as a state file", "file", lambda tmp: "/dev/zero", InputTooLargeError, None, "limit="),
        Case("/dev/zero under a small limit", "file", lambda tmp: "/dev/zero", InputTooLargeError, None, "limit=",
             limit=4096),
        Case("a folder", "file", lambda tmp: tmp, FileReadError, None, "expected a file"),
        Case("a missing file", "file", lambda tmp: tmp / "missing.json", FileReadError, None,
             "expected a readable file"),
        Case("a bad entry names the file", "file", _write("bad.json", bad_pose.encode()), StateFileError,
             "poses[0].name", "bad.json"),
        Case("a state file one byte over", "file", _write("big.json", good.encode()), InputTooLargeError, None,
             "limit=", limit=len(good.encode()) - 1),
        Case("report: /dev/zero", "report", lambda tmp: "/dev/zero", InputTooLargeError, None, "limit="),
        Case("report: no state block", "report", _write("r.html", b"<html></html>"), StateFileError, None,
             "expected one " + REPORT_STATE_OPEN),
        Case("report: two state blocks", "report", _write("r.html", _report_page(good, 2)), StateFileError, None,
             "expected one " + REPORT_STATE_OPEN),
        Case("report: block not closed", "report",
             _write("r.html", (REPORT_STATE_OPEN + good).encode()), StateFileError, None, "end with </script>"),
        Case("report: block holds a bad pose name", "report", _write("r.html", _report_page(bad_pose)),
             StateFileError, "poses[0].name", "a name of 1 to 200 characters"),
        Case("report: block nested deep", "report",
             _write("r.html", _report_page("[" * 5000 + "]" * 5000)), StateFileError, "[0]" * MAX_DEPTH,
             f"at most {MAX_DEPTH} levels"),
        Case("report: not UTF-8", "report", _write("r.html", _report_page(good).replace(b"posekit report",
                                                                                         b"rapport \xe9")),
             FileReadError, None, "save it as UTF-8"),
        Case("report: over the limit", "report", _write("r.html", _report_page(good)), InputTooLargeError, None,
             "limit=", limit=100),
    ]


CATALOGUE = (_field_cases() + _structure_cases() + _name_cases() + _number_cases() + _duplicate_and_depth_cases()
             + _text_cases() + _file_cases())


def test_the_catalogue_is_large_and_its_ids_are_unique():
    refusals = [c for c in CATALOGUE if c.error is not None]
    assert len(refusals) >= 80
    assert len({c.id for c in CATALOGUE}) == len(CATALOGUE)
    # every widget kind and every field of it appears
    for widget in WIDGET_KINDS:
        for name in settings_class(widget).field_kinds():
            assert any(c.id.startswith(f"{widget} {name}:") for c in CATALOGUE), (widget, name)


def _run(case: Case, tmp_path: Path):
    options = {} if case.limit is None else {"limit": case.limit}
    if case.run == "text":
        return state_from_json(case.payload, **options)
    source = case.payload(tmp_path)
    return (load_state if case.run == "file" else read_report_state)(source, **options)


@pytest.mark.parametrize("case", CATALOGUE, ids=[c.id for c in CATALOGUE])
def test_hostile_input_is_refused_with_path_and_what_is_accepted(case, tmp_path):
    if case.error is None:  # a look-alike of a hostile input that is fine
        assert isinstance(_run(case, tmp_path), State)
        return
    with pytest.raises(pk.PoseInputError) as err:
        _run(case, tmp_path)
    message = str(err.value)
    assert type(err.value) is case.error, message
    assert case.accepted in message
    if case.path is not None:
        assert err.value.path == case.path
        assert f"state {case.path}:" in message
    if case.error is InputTooLargeError:
        assert "MiB" in message or "KiB" in message or "bytes" in message
    assert len(message) <= 700, len(message)  # long bad text is echoed as a short excerpt only
    assert "\u202e" not in message and "\x00" not in message and "\x1b" not in message


def test_messages_quote_long_bad_text_as_an_excerpt():
    text = _changed("explorer", _set("poses", 0, "name", "\u202e" + "x" * 100_000))
    with pytest.raises(StateFileError) as err:
        state_from_json(text)
    message = str(err.value)
    assert "<U+202E>" in message and "(100001 characters)" in message and len(message) < 500


# --- reads are bounded whatever the file says --------------------------------------------------------------

class Endless(io.RawIOBase):
    """A stream of zeros that counts what it gave."""

    def __init__(self):
        self.given = 0

    def readable(self):
        return True

    def readinto(self, buffer):
        buffer[:] = b"0" * len(buffer)
        self.given += len(buffer)
        return len(buffer)


@pytest.mark.parametrize("reader", [load_state, read_report_state])
def test_an_endless_stream_is_read_to_the_limit_plus_one_byte_only(reader):
    stream = Endless()
    with pytest.raises(InputTooLargeError, match="limit=") as err:
        reader(stream, limit=5000)
    assert stream.given == 5001
    assert "5000" in str(err.value) or "4.9 KiB" in str(err.value)


def test_dev_zero_is_refused_at_the_default_limits():
    with pytest.raises(InputTooLargeError, match="8 MiB") as err:
        load_state("/dev/zero")
    assert "limit=" in str(err.value)
    with pytest.raises(InputTooLargeError, match="64 MiB"):
        read_report_state("/dev/zero")


# --- too deep: where, on which line and column, against a plain character loop and the structure built --------

def _first_too_deep(text: str) -> int:
    """Index of the first bracket that opens level MAX_DEPTH + 1, by reading the text character by
    character as JSON's grammar (RFC 8259) reads strings: a backslash escapes the next character."""
    depth, inside, escaped = 0, False, False
    for i, ch in enumerate(text):
        if inside:
            if escaped:
                escaped = False
            elif ch == "\\":
                escaped = True
            elif ch == '"':
                inside = False
        elif ch == '"':
            inside = True
        elif ch in "[{":
            depth += 1
            if depth > MAX_DEPTH:
                return i
        elif ch in "]}":
            depth -= 1
    return -1


KEY_CHARS = st.characters(codec="ascii", categories=["L", "N", "P", "S", "Zs"])
KEYS = st.one_of(st.from_regex(r"[a-z_][a-z0-9_]{0,8}", fullmatch=True), st.text(KEY_CHARS, min_size=0, max_size=12))
SCALARS = st.one_of(st.integers(-9, 9), st.text(st.sampled_from('ab[]{}"\\ ,:'), max_size=6), st.none())


@st.composite
def too_deep_documents(draw):
    """Notes holding a chain of containers deeper than MAX_DEPTH, with siblings before the chain's
    entry at every level (strings full of brackets, quotes and backslashes; shallow containers
    where they stay within the limit); returns (notes, the path to the container at level
    MAX_DEPTH + 1 of the state text, written as the state messages write paths)."""
    levels = MAX_DEPTH + draw(st.integers(1, 4))
    steps = []
    for level in range(2, levels + 2):               # the state's top-level object is level 1
        sibling = SCALARS if level > MAX_DEPTH - 2 else st.one_of(
            SCALARS, st.lists(SCALARS, max_size=2), st.dictionaries(KEYS, SCALARS, max_size=2))
        if draw(st.booleans()):
            steps.append(("list", draw(st.lists(sibling, max_size=3)), None))
        else:
            before = draw(st.dictionaries(KEYS, sibling, max_size=3))
            key = draw(KEYS.filter(lambda k, b=before: k not in b))
            steps.append(("dict", before, key))
    node = []
    for kind, before, key in reversed(steps):
        node = [*before, node] if kind == "list" else {**before, key: node}
    path = "notes"                                   # level 1 -> 2; then the chain's levels 2 .. MAX_DEPTH
    for kind, before, key in steps[:MAX_DEPTH - 1]:
        if kind == "list":
            path += f"[{len(before)}]"
        elif re.fullmatch(r"[A-Za-z_][A-Za-z0-9_]*", key):
            path += f".{key}"
        else:
            path += "['" + key.replace("'", "\\'") + "']"
    return node, path


@settings(max_examples=80, deadline=None, derandomize=True, database=None,
          suppress_health_check=[HealthCheck.too_slow])
@given(too_deep_documents(), st.sampled_from([None, 0, 1, 3]), st.booleans())
def test_too_deep_text_is_refused_at_the_container_the_structure_puts_there(document, indent, ascii_only):
    node, path = document
    text = json.dumps({"schema": "posekit-state", "notes": node}, indent=indent, ensure_ascii=ascii_only)
    at = _first_too_deep(text)
    assert at >= 0
    with pytest.raises(StateFileError) as err:
        state_from_json(text)
    line, column = text.count("\n", 0, at) + 1, at - text.rfind("\n", 0, at)
    assert err.value.path == path
    assert f"nested more than {MAX_DEPTH} levels deep (line {line}, column {column})" in str(err.value)


def test_text_exactly_as_deep_as_the_limit_passes_the_depth_check():
    """MAX_DEPTH levels are read (and refused for what they hold); one more level is refused as too deep."""
    for extra, too_deep in ((0, False), (1, True)):
        n = MAX_DEPTH - 1 + extra                      # under the top-level object, which is level 1
        text = '{"schema": "posekit-state", "x": ' + "[" * n + "]" * n + "}"
        with pytest.raises(StateFileError) as err:
            state_from_json(text)
        assert ("nested more than" in str(err.value)) == too_deep, str(err.value)


def test_the_limit_keyword_is_checked():
    for bad in (0, -1, 2.5, "8", True):
        with pytest.raises(pk.PoseInputError, match="limit"):
            state_from_json("{}", limit=bad)


# --- settings: the widget's own class, or generic checks when no class is registered ----------------------

@pytest.fixture
def unregistered(monkeypatch):
    """As if posekit.widgets had not been imported: no settings class for any widget kind but 'none'."""
    for kind in [k for k in pks.registered_kinds() if k != "none"]:
        monkeypatch.delitem(pks._REGISTRY, kind)
    yield


def test_without_the_widgets_settings_are_checked_generically(unregistered):
    assert settings_class("explorer") is None
    state = state_from_json(json.dumps(plain("explorer")))
    assert state.settings["angles"] == (0.5, 1.5, 2.5)
    for value, path, words in ((None, "settings.keep", "a number, true or false, text"),
                               ([[1, 2]], "settings.keep[0]", "a flat list"),
                               (2 ** 60, "settings.keep", "2**53"),
                               ("a\x00b", "settings.keep", "without control characters"),
                               ({"a": 1}, "settings.keep", "a number, true or false, text")):
        d = plain("explorer")
        d["settings"]["keep"] = value
        with pytest.raises(StateFileError) as err:
            state_from_json(json.dumps(d))
        assert err.value.path == path and words in str(err.value)
    d = plain("explorer")
    d["settings"]["Bad Key"] = 1
    with pytest.raises(StateFileError, match="setting names of lower-case letters"):
        state_from_json(json.dumps(d))


def _widget_class(widget):
    from posekit.widgets import (DebugDesk, Explorer, GraphExplorer, PlanarExplorer, SingularityView,
                                 TrajectoryView)

    return {"explorer": Explorer, "planar": PlanarExplorer, "singularity": SingularityView,
            "graph": GraphExplorer, "desk": DebugDesk, "trajectory": TrajectoryView}[widget]


def _generic_bad_value(kind):
    """A value generic checks let through but the field's own kind refuses."""
    if isinstance(kind, Floats):
        return [0.5] * 40
    if isinstance(kind, Texts):
        return "3"
    if isinstance(kind, (Float, IntRange)):
        return "3"
    if isinstance(kind, (Bool, Choice, ConventionText, Text)):
        return 12345
    raise AssertionError(kind)


REGISTERED = [(w, f) for w in WIDGET_KINDS if w != "none"
              for f in pks._REGISTRY[w].field_kinds()]


@pytest.mark.parametrize("widget, field", REGISTERED, ids=[f"{w}.{f}" for w, f in REGISTERED])
def test_from_state_checks_with_the_widgets_own_class(widget, field, monkeypatch):
    cls = settings_class(widget)
    kind = cls.field_kinds()[field]
    with monkeypatch.context() as m:  # loaded while the widget's class was not registered
        m.delitem(pks._REGISTRY, widget)
        d = plain(widget)
        d["settings"][field] = _generic_bad_value(kind)
        state = state_from_json(json.dumps(d))
    assert settings_class(widget) is cls
    with pytest.raises(StateFileError) as err:
        if widget == "trajectory":
            _widget_class(widget).from_state(state, None)
        else:
            _widget_class(widget).from_state(state)
    assert err.value.path == f"settings.{field}"
    assert kind.accepted in str(err.value) or "a finite number" in str(err.value)


def test_from_state_refuses_a_state_of_another_widget():
    from posekit.widgets import Explorer

    state = state_from_json(json.dumps(plain("planar")))
    with pytest.raises(StateFileError, match=r"state widget: got text 'planar'; expected 'explorer'") as err:
        Explorer.from_state(state)
    assert err.value.path == "widget"


def test_cross_field_checks_name_the_field():
    d = plain("singularity")
    d["settings"].update(steps=5, position=5)
    with pytest.raises(StateFileError, match="a step index from 0 to 4") as err:
        state_from_json(json.dumps(d))
    assert err.value.path == "settings.position"
    d = plain("singularity")
    d["settings"]["sweep_range"] = [10.0, 10.0]
    with pytest.raises(StateFileError) as err:
        state_from_json(json.dumps(d))
    assert err.value.path == "settings.sweep_range"


def test_graph_from_state_names_an_edge_or_frame_the_graph_refuses():
    from posekit.widgets import GraphExplorer

    d = plain("graph")
    d["settings"].update(planar=False, sources=[""], from_frame="base", into_frame="world", root="world")
    d["edges"][0].update(kind="position-quaternion", numbers=[0, 0, 0, 0, 0, 0, 0])  # a zero quaternion
    with pytest.raises(StateFileError) as err:
        GraphExplorer.from_state(state_from_json(json.dumps(d)))
    assert err.value.path == "edges[0]" and "spatial frame graph" in str(err.value)
    d["edges"][0]["numbers"] = EDGE_NUMBERS["position-quaternion"]
    d["settings"]["root"] = "moon"
    with pytest.raises(StateFileError, match="not a frame of the graph") as err:
        GraphExplorer.from_state(state_from_json(json.dumps(d)))
    assert err.value.path == "settings.root"
    d["settings"]["root"] = "world"
    assert GraphExplorer.from_state(state_from_json(json.dumps(d))).root == "world"


def test_trajectory_from_state_refuses_another_reports_state():
    from posekit.desk_scenarios import row_drive
    from posekit.widgets import TrajectoryView

    report = row_drive().report()
    d = plain("trajectory")
    with pytest.raises(StateFileError, match="differs from this report") as err:
        TrajectoryView.from_state(state_from_json(json.dumps(d)), report)
    assert err.value.path == "settings.summary"
    d["settings"].update(summary=report.summary()[:MAX_TEXT], chosen_span=99_999)
    with pytest.raises(StateFileError, match="flagged spans") as err:
        TrajectoryView.from_state(state_from_json(json.dumps(d)), report)
    assert err.value.path == "settings.chosen_span"


def test_a_state_built_in_python_is_checked_like_a_loaded_one():
    pose = NamedPose("p", np.eye(4))
    for make, path in ((lambda: State(notes="x\ud800"), "notes"),
                       (lambda: State(notes="x" * (MAX_TEXT + 1)), "notes"),
                       (lambda: State("explorer", {}), "settings"),
                       (lambda: State(poses=(pose, "not a pose")), "poses[1]"),
                       (lambda: State(versions={"posekit": "1"}), "versions"),
                       (lambda: NamedPose("", np.eye(4)), "pose.name"),
                       (lambda: NamedPose("p", np.full((4, 4), np.nan)), "pose.matrix"),
                       (lambda: Edge("a", "a", "matrix", tuple(np.eye(4).ravel())), "edge.child"),
                       (lambda: Edge("a", "b", "position-euler", (0.0,) * 7), "edge.numbers"),
                       (lambda: Edge("a", "b", "position-euler", (0.0,) * 5 + (float("inf"),)), "edge.numbers[5]")):
        with pytest.raises(StateFileError) as err:
            make()
        assert err.value.path == path, str(err.value)


# --- writes: serialise fully first, then write atomically ---------------------------------------------------

GOOD = State("none", {}, (NamedPose("camera", np.eye(4)),), (), "the good state")


class _HalfWriter:
    """A binary file whose write puts down half the data, then fails as a full disk does."""

    def __init__(self, raw):
        self.raw = raw

    def write(self, data):
        self.raw.write(bytes(data)[: len(data) // 2])
        self.raw.flush()
        raise OSError(errno.ENOSPC, "No space left on device")

    def __getattr__(self, name):
        return getattr(self.raw, name)

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.raw.close()
        return False


def _inject(monkeypatch, failure):
    if failure == "os.replace":
        def fail(*a, **k):
            raise OSError(errno.EXDEV, "Invalid cross-device link")
        monkeypatch.setattr(limits.os, "replace", fail)
    elif failure == "os.fsync":
        def fail(*a, **k):
            raise OSError(errno.EIO, "Input/output error")
        monkeypatch.setattr(limits.os, "fsync", fail)
    elif failure == "write":
        real_open = io.open

        def half_open(file, *a, **k):
            handle = real_open(file, *a, **k)
            return _HalfWriter(handle) if isinstance(file, int) else handle
        monkeypatch.setattr(limits.io, "open", half_open)
    elif failure == "interrupt":
        def fail(*a, **k):
            raise KeyboardInterrupt
        monkeypatch.setattr(limits.os, "fsync", fail)


def _writer(name):
    if name == "save_state":
        return lambda state, path: save_state(state, path)
    return lambda state, path: write_report(state, path)


@pytest.mark.parametrize("failure", ["os.replace", "os.fsync", "write", "interrupt"])
@pytest.mark.parametrize("writer", ["save_state", "write_report"])
def test_a_write_failing_midway_leaves_the_old_file_byte_for_byte(writer, failure, tmp_path, monkeypatch):
    write = _writer(writer)
    target = tmp_path / "keep.out"
    write(GOOD, target)
    before = target.read_bytes()
    new = State("none", {}, (NamedPose("camera", np.eye(4)),), (), "a newer state that never lands")
    with monkeypatch.context() as m:
        _inject(m, failure)
        expected = KeyboardInterrupt if failure == "interrupt" else FileWriteError
        with pytest.raises(expected) as err:
            write(new, target)
    assert target.read_bytes() == before
    assert sorted(os.listdir(tmp_path)) == ["keep.out"]  # no temporary file left behind
    if failure != "interrupt":
        assert "keep.out" in str(err.value) and "untouched" in str(err.value)
    write(new, target)  # and with the failure gone the write goes through
    assert target.read_bytes() != before


@pytest.mark.parametrize("writer", ["save_state", "write_report"])
def test_a_lone_surrogate_in_the_notes_is_refused_and_the_old_file_kept(writer, tmp_path):
    write = _writer(writer)
    target = tmp_path / "keep.out"
    write(GOOD, target)
    before = target.read_bytes()
    with pytest.raises(StateFileError, match="lone surrogate") as err:
        write(State(notes="x\ud800"), target)
    assert err.value.path == "notes"
    smuggled = State(notes="fine")
    object.__setattr__(smuggled, "notes", "x\ud800")  # past the checks of State, behind its back
    with pytest.raises(StateFileError, match="lone surrogate") as err:
        write(smuggled, target)
    assert err.value.path == "notes"
    assert target.read_bytes() == before and sorted(os.listdir(tmp_path)) == ["keep.out"]


@pytest.mark.parametrize("writer", ["save_state", "write_report"])
def test_writing_into_a_missing_folder_names_the_folder(writer, tmp_path):
    folder = tmp_path / "no-such-folder"
    with pytest.raises(FileWriteError) as err:
        _writer(writer)(GOOD, folder / "x.out")
    assert str(folder) in str(err.value) and "does not exist" in str(err.value)
    assert not folder.exists()


def test_a_state_too_large_to_load_again_is_not_saved(tmp_path):
    target = tmp_path / "keep.json"
    save_state(GOOD, target)
    before = target.read_bytes()
    with pytest.raises(InputTooLargeError, match="limit=") as err:
        save_state(State(notes="n" * 5000), target, limit=4096)
    assert "4 KiB" in str(err.value)
    assert target.read_bytes() == before


# --- the HTML report shows user text as text ------------------------------------------------------------------

BIDI = "\u202a\u202b\u202c\u202d\u202e\u2066\u2067\u2068\u2069\u200e\u200f"
SCRIPT_END = "</script><script>alert(1)</script>"


def _desk_settings(pasted):
    d = plain("desk")["settings"]
    d["pasted"] = pasted
    return d


def test_report_neutralises_bidi_controls_and_cannot_close_its_script(tmp_path):
    notes = "turn left \u202eright\u202c then " + SCRIPT_END + " line\u2028sep\u2029para"
    state = State("desk", _desk_settings("0 0 0 1\u2066 " + SCRIPT_END),
                  (NamedPose("mount " + SCRIPT_END, np.eye(4)), NamedPose("عربي camera", np.eye(4))),
                  (Edge("world", "base <b>", "position-heading", (1.0, 2.0, 3.0)),), notes)
    path = write_report(state, tmp_path / "r.html", title="bug \u202etitle" + SCRIPT_END,
                        diagnosis=["line with \u2067isolate", "<img src=x onerror=alert(1)>"])
    page = path.read_text(encoding="utf-8")
    body = page[page.index("</head>"):]
    for ch in BIDI + "\u2028\u2029":
        assert ch not in body, f"U+{ord(ch):04X} left raw in the report body"
    assert body.count("&lt;U+202E&gt;") >= 2 and "&lt;U+2066&gt;" in body and "&lt;U+2067&gt;" in body
    assert "<script>alert(1)" not in page and "<img src=x" not in page
    block = body[body.index(REPORT_STATE_OPEN) + len(REPORT_STATE_OPEN):]
    assert block.index("</script>") == len(block) - len("</script></body></html>")  # the block ends once, at the end
    assert read_report_state(path) == state  # and the state inside reads back exactly
    assert "<bdi>" in body  # names isolated from their surroundings


def test_report_refuses_bad_options_with_typed_errors():
    for options, words in (({"title": "t" * 201}, "report title"), ({"title": 5}, "report title"),
                           ({"diagnosis": "one string"}, "a list of lines"), ({"diagnosis": [3]}, "diagnosis[0]"),
                           ({"palette": "neon"}, "'colour-blind'")):
        with pytest.raises(pk.PoseInputError) as err:
            report_html(GOOD, **options)
        assert words in str(err.value)


# --- a fuzz of state_from_json: mutated valid states give a State or a typed error ----------------------------

JSON_LEAVES = st.one_of(st.none(), st.booleans(), st.integers(-10 ** 400, 10 ** 400), st.floats(),
                        st.text(max_size=30), st.text(st.characters(), max_size=5),
                        st.sampled_from(["\ud800", "\x00", "\u202e", "sequence=z-y-x", "matrix", "world"]))
JSON_VALUES = st.recursive(JSON_LEAVES, lambda inner: st.one_of(st.lists(inner, max_size=5),
                                                                st.dictionaries(st.text(max_size=8), inner,
                                                                                max_size=4)), max_leaves=12)


def _paths(node, here=()):
    yield here
    if isinstance(node, dict):
        for k, v in node.items():
            yield from _paths(v, here + (k,))
    elif isinstance(node, list):
        for i, v in enumerate(node):
            yield from _paths(v, here + (i,))


@st.composite
def mutated_texts(draw):
    data = json.loads(state_to_json(draw(valid_states())))
    # 0 edits too, so that states that load are always among the drawn ones: with 1-3 edits each,
    # a run of the whole file in the mutation tool's copy of the project drew 300 texts and not
    # one loaded (the examples drawn differ between runs there), and the test failed for no bug
    for _ in range(draw(st.integers(0, 3))):
        paths = [p for p in _paths(data) if p]
        target = draw(st.sampled_from(paths))
        parent = data
        for k in target[:-1]:
            parent = parent[k]
        action = draw(st.sampled_from(["replace", "delete", "insert", "numeric"]))
        if action == "replace":
            parent[target[-1]] = draw(JSON_VALUES)
        elif action == "delete":
            del parent[target[-1]]
        elif action == "insert" and isinstance(parent, dict):
            parent[draw(st.text(max_size=8))] = draw(JSON_VALUES)
        elif action == "insert":
            parent.insert(target[-1], draw(JSON_VALUES))
        else:
            parent[target[-1]] = draw(st.sampled_from([0, -0.0, 1e308, -1e-308, 5e-324, 2 ** 53 + 1, 10 ** 308]))
    text = json.dumps(data, allow_nan=True, ensure_ascii=draw(st.booleans()))
    cut = draw(st.one_of(st.none(), st.tuples(st.integers(0, len(text)), st.text(max_size=6))))
    if cut is not None:  # a text-level edit too: splice a few characters in
        at, piece = cut
        text = text[:at] + piece + text[at:]
    return text


def test_fuzzed_state_text_gives_a_state_or_a_typed_error():
    """Mutated valid states (values replaced, keys deleted or added, characters spliced in), each within a deadline."""
    outcomes: dict[str, int] = {}

    @settings(max_examples=300, deadline=1000, derandomize=True, database=None,
              suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much])
    @given(mutated_texts())
    def one(text):
        try:
            state = state_from_json(text)
        except pk.PoseInputError as exc:  # anything else (KeyError, RecursionError, OverflowError...) fails the test
            assert str(exc) and len(str(exc)) <= 700
            outcomes[type(exc).__name__] = outcomes.get(type(exc).__name__, 0) + 1
            return
        assert isinstance(state, State)
        assert state_from_json(state_to_json(state)) == state  # whatever loads, saves and loads again
        outcomes["loaded"] = outcomes.get("loaded", 0) + 1

    one()
    assert outcomes.get("loaded", 0) >= 3 and outcomes.get("StateFileError", 0) >= 50, outcomes


# --- the share panel: a typed refusal for a bad file name, and messages shown as text -------------------------

class _Owner:
    def to_state(self):
        return GOOD

    def code_cell(self):
        return "# nothing to rebuild\n"


def test_share_panel_refuses_hidden_characters_in_the_file_name(tmp_path, monkeypatch):
    from posekit.widgets.sharing import SharePanel, ShareNameError

    monkeypatch.chdir(tmp_path)
    panel = SharePanel(_Owner())
    for name, words in (("bug\u202ejson", "&lt;U+202E&gt;"), ("   ", "empty text"), ("x" * 201, "201 characters")):
        panel.name_box.value = name
        panel.save_button.click()
        assert panel.message.value.startswith("<span") and "Not done: file name box" in panel.message.value
        assert words in panel.message.value and "\u202e" not in panel.message.value
        with pytest.raises(ShareNameError):
            panel._stem()
    assert os.listdir(tmp_path) == []
    panel.name_box.value = "missing-folder/bug"
    panel.save_button.click()
    assert "Not done" in panel.message.value and "does not exist" in panel.message.value
    panel.name_box.value = "bug"
    panel.save_button.click()
    assert "state written to" in panel.message.value
    assert load_state(tmp_path / "bug.json") == GOOD


# --- the largest hostile texts are refused in bounded time (every step is linear in the text) ------------------

LARGE = (8 << 20) - 16
LARGE_TEXTS = {  # made when a test runs, not held for the whole session
    "escaped quotes": lambda: '"' + '\\"' * (LARGE // 2 - 1),
    "open brackets": lambda: "[" * LARGE,
    "commas, then too deep": lambda: "[" + "1," * (LARGE // 2 - 100) + "[" * 60,
    "a long list in the notes": lambda: '{"notes": [' + "0," * (LARGE // 2 - 20) + "0]}",
    "pasted text over its limit": lambda: json.dumps(
        {**plain("desk"), "settings": {**plain("desk")["settings"], "pasted": "x" * (LARGE // 2)}}),
    "pasted text at its limit, a control character last": lambda: json.dumps(
        {**plain("desk"), "settings": {**plain("desk")["settings"],
                                       "pasted": "x" * (limits.PASTE_LIMIT - 1) + "\x07"}}),
}


@pytest.mark.parametrize("label", sorted(LARGE_TEXTS))
def test_the_largest_hostile_texts_are_refused(label):
    # how long each takes is printed by benchmarks/bench_input_guards.py, against Python's json
    text = LARGE_TEXTS[label]()
    assert len(text.encode()) <= limits.STATE_LIMIT
    with pytest.raises(StateFileError):
        state_from_json(text)
