"""The state reader and writer at their exact limits, and what each refusal says.

A limit is checked at its edge: text, bytes, a file or a report exactly ``limit`` bytes long
is read, one byte more is refused, and the message gives both sizes and the keyword to
raise.  The sizes are counted here by Python (``len`` of the UTF-8 bytes, ``os.stat`` of the
file written), the byte and offset of bad UTF-8 by ``bytes.index``, and the saved text is
compared with Python's own ``json.dumps`` of what it holds.  Every message names the text,
file or report it is about, as a user who gave several files needs.
"""

from __future__ import annotations

import io
import json
import os

import numpy as np
import pytest
from test_state_hostile import plain

import posekit.widgets  # noqa: F401 - registers each widget's settings class (plain() uses them)
from posekit.core.convention import Convention
from posekit.core.errors import WrongTypeError
from posekit.io.limits import FileReadError, InputTooLargeError
from posekit.io.settings import StateFileError
from posekit.io.state import (REPORT_STATE_OPEN, State, load_state, read_report_state, save_state,
                              state_from_json, state_to_json)


def _state(name="camera mount"):
    data = plain("explorer")
    data["poses"][0]["name"] = name
    return state_from_json(json.dumps(data))


def _too_large_words(what, size, limit):
    # every size in these tests is under 1 KiB, so both are written in bytes
    assert size < 1024 and limit < 1024
    return (f"{what} ({size} bytes) is larger than the limit of {limit} bytes. "
            "Pass a larger limit= if it really is this large.")


# --- limits at the edge --------------------------------------------------------------------------------------

def _small_text(name="m"):
    """A valid state's text, made as small as the checks allow (under 1 KiB)."""
    data = plain("none")
    data["poses"][0]["name"] = name
    data["edges"], data["notes"] = [], ""
    return json.dumps(data, separators=(",", ":"), ensure_ascii=False)


@pytest.mark.parametrize("name", ["m", "kamera-\u03b1\u03b2"])    # ASCII, and characters of two bytes in UTF-8
def test_text_and_bytes_exactly_at_the_limit_load_and_one_byte_more_is_refused(name):
    text = _small_text(name)
    data = text.encode("utf-8")
    size = len(data)
    assert size < 1024
    assert state_from_json(text, limit=size).poses[0].name == name
    assert state_from_json(data, limit=size).poses[0].name == name
    for given in (text, data):
        with pytest.raises(InputTooLargeError) as err:
            state_from_json(given, limit=size - 1)
        assert str(err.value) == _too_large_words("state text", size, size - 1)


def test_text_longer_in_characters_than_the_limit_is_refused_before_encoding():
    text = _small_text()
    with pytest.raises(InputTooLargeError) as err:
        state_from_json(text, limit=len(text) - 5)
    assert str(err.value) == _too_large_words("state text", len(text), len(text) - 5)


def test_a_file_exactly_at_the_limit_loads_and_one_byte_more_is_refused(tmp_path):
    path = tmp_path / "s.json"
    path.write_bytes(_small_text().encode("utf-8"))
    size = os.stat(path).st_size
    assert load_state(path, limit=size).widget == "none"
    with pytest.raises(InputTooLargeError) as err:
        load_state(path, limit=size - 1)
    assert "state file" in str(err.value) and f"{size - 1} bytes" in str(err.value)


def test_save_state_writes_exactly_at_the_limit_and_refuses_one_byte_less(tmp_path):
    state = state_from_json(_small_text("kamera-\u03b1"))
    text = state_to_json(state)
    size = len(text.encode("utf-8"))
    assert size < 1024                                   # so both sizes are written in bytes
    path = tmp_path / "at-limit.json"
    assert save_state(state, path, limit=size) is not None
    assert os.stat(path).st_size == size and path.read_bytes() == text.encode("utf-8")
    refused = tmp_path / "over.json"
    with pytest.raises(InputTooLargeError) as err:
        save_state(state, refused, limit=size - 1)
    assert str(err.value) == (f"state not saved to '{refused}': it is {size} bytes, larger than the limit of "
                              f"{size - 1} bytes that load_state reads. Pass a larger limit= to save_state and to "
                              "load_state if it really is this large.")
    assert not refused.exists()
    assert load_state(path, limit=size) == state


def test_a_report_exactly_at_the_limit_is_read_and_one_byte_more_is_refused(tmp_path):
    page = (f"<html><body>{REPORT_STATE_OPEN}{_small_text()}</script></body></html>").encode("utf-8")
    path = tmp_path / "r.html"
    path.write_bytes(page)
    size = os.stat(path).st_size
    assert read_report_state(path, limit=size).widget == "none"
    with pytest.raises(InputTooLargeError) as err:
        read_report_state(path, limit=size - 1)
    assert "report" in str(err.value) and f"{size - 1} bytes" in str(err.value)


# --- what the saved text is ----------------------------------------------------------------------------------

@pytest.mark.parametrize("indent", [None, 0, 1, 2])
def test_saved_text_is_pythons_json_of_its_contents_with_names_as_written(indent):
    state = _state("kamera-\u03b1 \u2192 base")
    text = state_to_json(state) if indent == 1 else state_to_json(state, indent=indent)
    assert text == json.dumps(json.loads(text), indent=indent, ensure_ascii=False)  # the reference: Python's json
    assert "kamera-\u03b1 \u2192 base" in text                                # written as itself, not \u escapes
    assert state_from_json(text) == state


def test_a_state_changed_behind_its_checks_is_not_written(tmp_path):
    """Nothing silently repaired: a NaN put into a checked state's pose is refused, never written as NaN."""
    state = _state()
    matrix = state.poses[0].matrix
    if not matrix.flags.writeable:
        matrix = np.array(matrix)
        object.__setattr__(state.poses[0], "matrix", matrix)
    matrix[0, 3] = np.nan
    with pytest.raises(StateFileError) as err:
        state_to_json(state)
    assert str(err.value).startswith("state: cannot be written as JSON (") and \
        str(err.value).endswith("); expected a State whose entries passed its checks")
    with pytest.raises(StateFileError):
        save_state(state, tmp_path / "never.json")
    assert not (tmp_path / "never.json").exists()


# --- what each refusal says ----------------------------------------------------------------------------------

@pytest.mark.parametrize("given, kind", [(12, "int"), (None, "NoneType"), (["{}"], "list")])
def test_text_of_another_type_is_refused_naming_the_type(given, kind):
    with pytest.raises(StateFileError) as err:
        state_from_json(given)
    assert str(err.value) == f"state top level: got {kind}; expected JSON text (str or UTF-8 bytes)"
    assert err.value.path is None


def test_bytes_that_are_not_utf8_name_the_byte_and_its_offset():
    data = _small_text().encode("utf-8").replace(b'"m"', b'"\xff"')
    offset = data.index(b"\xff")
    with pytest.raises(StateFileError) as err:
        state_from_json(data)
    assert str(err.value) == (f"state top level: not UTF-8 text (byte 0xff at offset {offset}: invalid start byte); "
                              "expected JSON text encoded as UTF-8")


def test_bad_json_names_line_and_column_as_pythons_json_does():
    text = _small_text()[:-1] + ",}"
    try:
        json.loads(text)
    except json.JSONDecodeError as exc:
        expected = f"not valid JSON at line {exc.lineno}, column {exc.colno}: {exc.msg}"
    with pytest.raises(StateFileError) as err:
        state_from_json(text)
    assert str(err.value) == f"state top level: {expected}; expected JSON text as posekit writes it"


def test_a_bad_entry_in_a_file_names_the_entry_and_the_file(tmp_path):
    data = plain("explorer")
    data["schema"] = "other"
    path = tmp_path / "bad.json"
    path.write_text(json.dumps(data))
    with pytest.raises(StateFileError) as err:
        load_state(path)
    assert str(err.value) == f"state schema: got text 'other'; expected 'posekit-state' (in state file '{path}')"
    assert err.value.path == "schema"
    with open(path, "rb") as fh, pytest.raises(StateFileError) as err:
        load_state(fh)
    assert str(err.value).endswith("(in state file the stream)")


def test_a_bad_entry_in_a_report_names_the_entry_and_the_report(tmp_path):
    data = plain("explorer")
    data["version"] = 7
    path = tmp_path / "r.html"
    path.write_text(f"<p>{REPORT_STATE_OPEN}{json.dumps(data)}</script>")
    with pytest.raises(StateFileError) as err:
        read_report_state(path)
    assert str(err.value).endswith(f"(in the state block of report '{path}')") and err.value.path == "version"
    unclosed = tmp_path / "open.html"
    unclosed.write_text(f"<p>{REPORT_STATE_OPEN}{json.dumps(plain('explorer'))}")
    with pytest.raises(StateFileError) as err:
        read_report_state(unclosed)
    assert str(err.value) == (f"report '{unclosed}': the embedded state block is not closed; expected it to end "
                              "with </script>")
    with pytest.raises(StateFileError) as err:
        read_report_state(io.BytesIO(f"<p>{REPORT_STATE_OPEN}".encode()))
    assert str(err.value).startswith("report the stream: the embedded state block is not closed")


def test_the_state_block_ends_at_its_own_closing_tag(tmp_path):
    """A report has other scripts after the state (its plots); the state is read up to its own </script>."""
    path = tmp_path / "page.html"
    path.write_text(f"{REPORT_STATE_OPEN}{_small_text()}</script><script>var plots = [];</script>")
    assert read_report_state(path).widget == "none"


def test_paths_that_are_not_paths_are_typed_errors_naming_the_state_file(tmp_path):
    state = _state()
    for bad in ("", 12, None):
        with pytest.raises(WrongTypeError) as err:
            save_state(state, bad)
        assert str(err.value).startswith("state file: got ") and str(err.value).endswith("; expected a file path")
    with pytest.raises(FileReadError) as err:
        load_state(tmp_path / "missing.json")
    assert "state file" in str(err.value) and "missing.json" in str(err.value)
    with pytest.raises(StateFileError) as err:
        state_to_json({"widget": "explorer"})
    assert str(err.value) == "state: got dict; expected a posekit State"
    assert isinstance(_state(), State)


# --- refusals of single entries: the whole message, its numbers counted here ----------------------------------

def _refusal(text):
    with pytest.raises(StateFileError) as err:
        state_from_json(text)
    return err.value


def _with_notes(raw: str) -> str:
    """A valid state's text with ``raw`` (JSON source) in place of its notes."""
    return json.dumps(plain("explorer")).replace('"seen on the survey boat"', raw)


def _quoted(text: str, limit: int) -> str:
    """How messages quote user text (posekit.core.errors.excerpt's documented form), built here."""
    return f"'{text[:limit]}'" + (f"... ({len(text)} characters)" if len(text) > limit else "")


@pytest.mark.parametrize("length", [29, 30, 31, 40])
def test_a_repeated_key_is_named_in_its_first_30_characters(length):
    key = "".join(chr(ord("a") + i % 26) for i in range(length))
    err = _refusal(_with_notes(f'{{"{key}": 1, "{key}": 2}}'))
    assert str(err) == (f"state notes: the key {_quoted(key, 30)} appears more than once; expected each key at "
                        "most once in an object")
    assert err.path == "notes"


@pytest.mark.parametrize("length", [30, 31])
def test_a_path_through_a_key_that_is_no_name_quotes_it(length):
    key = ("a b-" * 10)[:length]                               # spaces and dashes: not a plain name
    err = _refusal(json.dumps({key: {"inner": 1}}).replace('{"inner": 1}', '{"inner": 1, "inner": 2}'))
    assert err.path == f"[{_quoted(key, 30)}]"
    assert str(err).startswith(f"state [{_quoted(key, 30)}]: the key 'inner' appears more than once")


@pytest.mark.parametrize("constant", ["NaN", "Infinity", "-Infinity"])
def test_json_constants_outside_the_standard_are_refused_by_name(constant):
    err = _refusal(_with_notes(constant))
    assert str(err) == (f"state notes: got {constant}, which is not a JSON number; expected a finite number (JSON "
                        "has no NaN or Infinity)")
    assert err.path == "notes"


@pytest.mark.parametrize("literal", ["1e999", "-2.5e400", "1.0000000000000000000000000000000000e999"])
def test_a_number_beyond_float64_is_quoted_as_written(literal):
    assert float(literal) in (float("inf"), float("-inf"))     # the reference: Python's float overflows too
    err = _refusal(_with_notes(literal))
    assert str(err) == (f"state notes: got {_quoted(literal, 30)}, beyond the range of float64 numbers; expected a "
                        "finite number no larger in size than 1.8e308")
    assert err.path == "notes"


def test_an_integer_of_more_digits_than_the_limit_says_how_many():
    digits = "7" * 311
    err = _refusal(_with_notes(digits))
    assert str(err) == (f"state notes: got an integer of {len(digits)} digits; expected a finite number (integers "
                        "of at most 310 digits)")
    at_limit = _refusal(_with_notes("7" * 310))          # read as a number; refused only as notes that are not text
    assert at_limit.path == "notes" and "integers of at most 310 digits" not in str(at_limit)


def test_lists_longer_than_the_limit_are_refused_by_their_length_only():
    data = plain("explorer")
    data["poses"] = [0] * 10_001
    err = _refusal(json.dumps(data))
    assert (str(err), err.path) == ("state poses: got a list of 10001 entries; expected a list of at most 10000 "
                                    "entries", "poses")
    data["poses"] = [0] * 10_000                          # at the limit, the length passes; the entry is refused
    err = _refusal(json.dumps(data))
    assert err.path == "poses[0]"
    data["poses"] = 5
    assert str(_refusal(json.dumps(data))) == "state poses: got 5; expected a list of at most 10000 entries"


def test_files_are_named_whole_up_to_80_characters_and_standard_input_by_name(tmp_path, monkeypatch):
    data = plain("explorer")
    data["schema"] = "other"
    for stem in ("s", "x" * 90):
        path = tmp_path / f"{stem}.json"
        path.write_text(json.dumps(data))
        with pytest.raises(StateFileError) as err:
            load_state(path)
        assert str(err.value).endswith(f"(in state file {_quoted(str(path), 80)})")
    monkeypatch.setattr("sys.stdin", io.TextIOWrapper(io.BytesIO(json.dumps(data).encode("utf-8"))))
    with pytest.raises(StateFileError) as err:
        load_state("-")
    assert str(err.value).endswith("(in state file standard input)")


def test_a_non_finite_number_is_not_written_as_source():
    from posekit.io.state import float_literal

    for x in (float("nan"), float("inf"), -float("inf")):
        with pytest.raises(StateFileError) as err:
            float_literal(x)
        assert str(err.value) == (f"cannot write the non-finite number {x!r}; expected a finite number (states hold "
                                  "finite numbers only)")
    assert float(float_literal(0.1 + 0.2)) == 0.1 + 0.2                 # bit-identical back (Python's repr)


# --- records built in Python (a notebook builds State, NamedPose and Edge directly) ----------------------------

def _built(make) -> StateFileError:
    with pytest.raises(StateFileError) as err:
        make()
    return err.value


def test_a_named_pose_is_a_read_only_float64_copy_of_the_numbers_given():
    from posekit.io.state import NamedPose

    given = [[0.0, -1.0, 0.0, 0.25], [1.0, 0.0, 0.0, -2.0], [0.0, 0.0, 1.0, 3.0], [0, 0, 0, 1]]  # 90 deg about z
    for numbers in (given, np.array(given, dtype=np.float32)):
        pose = NamedPose("turned", numbers)
        assert pose.matrix.dtype == np.float64 and pose.matrix.shape == (4, 4)
        assert not pose.matrix.flags.writeable
        assert pose.matrix.tolist() == [[float(x) for x in row] for row in given]
        with pytest.raises(ValueError):
            pose.matrix[0, 3] = 9.0
    source = np.array(given)
    pose = NamedPose("turned", source)
    source[0, 3] = 9.0                                   # the caller's array changes later: the pose does not
    assert pose.matrix[0, 3] == 0.25


def test_records_built_in_python_are_refused_word_for_word():
    from posekit.io.state import MAX_ITEMS, Edge, NamedPose

    eye = np.eye(4)
    cases = [
        (lambda: NamedPose("a", eye, convention="zyx"), "pose.convention",
         "state pose.convention: got text 'zyx'; expected a posekit Convention (parse convention text with "
         "Convention.parse)"),
        (lambda: NamedPose("a", np.stack([eye, eye])), "pose.matrix",
         "state pose.matrix: got shape (2, 4, 4); expected one 4x4 transform"),
        (lambda: State(poses="abc"), "poses", "state poses: got text 'abc'; expected a sequence of NamedPose"),
        (lambda: State(poses=3), "poses", "state poses: got 3; expected a sequence of NamedPose"),
        (lambda: State(edges={"a": 1}), "edges",
         "state edges: got an object with 1 keys; expected a sequence of Edge"),
        (lambda: State(poses=[NamedPose("a", eye), "x"]), "poses[1]",
         "state poses[1]: got text 'x'; expected a posekit NamedPose"),
        (lambda: State(edges=[1]), "edges[0]", "state edges[0]: got 1; expected a posekit Edge"),
        (lambda: State(poses=[NamedPose("a", eye)] * (MAX_ITEMS + 1)), "poses",
         f"state poses: got {MAX_ITEMS + 1} entries; expected at most {MAX_ITEMS} entries"),
        (lambda: State(versions=[1]), "versions",
         "state versions: got a list of 1 entries; expected an object of posekit, numpy, scipy, python, each text "
         "of at most 64 characters"),
    ]
    for make, path, words in cases:
        err = _built(make)
        assert (str(err), err.path) == (words, path)
    # a rotation block that is not a rotation: the core's reason, then what a pose matrix must be
    err = _built(lambda: NamedPose("a", np.diag([1.0, 1.0, 2.0, 1.0])))
    assert err.path == "pose.matrix"
    assert str(err).startswith("state pose.matrix: pose.matrix rotation block: not orthonormal")
    assert str(err).endswith("; expected a 4x4 transform: orthonormal rotation, bottom row 0 0 0 1, finite numbers")
    # the edges of the limits: exactly MAX_ITEMS entries, any iterable, notes with newlines and tabs
    assert len(State(poses=[NamedPose("a", eye)] * MAX_ITEMS).poses) == MAX_ITEMS
    assert State(poses=iter([NamedPose("a", eye)])).poses == (NamedPose("a", eye),)
    assert State(notes="a\n\tb").notes == "a\n\tb"
    edge = Edge("base", "cam", "position-quaternion", [0, 0, 0, 0, 0, 0, 1])
    assert (edge.parent, edge.child, edge.numbers) == ("base", "cam", (0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 1.0))
    assert all(type(x) is float for x in edge.numbers)


def test_a_built_state_cannot_be_changed_afterwards():
    state = _state()
    for name in ("settings", "versions"):
        with pytest.raises(TypeError):
            getattr(state, name)["posekit"] = "0"


def test_edges_widgets_and_paths_are_refused_word_for_word():
    from posekit.core.errors import WrongTypeError
    from posekit.io.limits import FileWriteError
    from posekit.io.state import Edge

    kinds = "'matrix', 'position-quaternion', 'position-euler', 'position-heading'"
    matrix_numbers = "a flat list of 9 or 12 or 16 finite numbers for kind 'matrix'"
    cases = [
        (lambda: Edge("arm", "arm", "position-heading", [0, 0, 0]), "edge.child",
         "state edge.child: got 'arm', the same frame as the parent; expected an edge between two different frames"),
        (lambda: Edge("a", "b", "x", [0, 0, 0]), "edge.kind", f"state edge.kind: got text 'x'; expected one of {kinds}"),
        (lambda: Edge("a", "b", "matrix", [0] * 5), "edge.numbers",
         f"state edge.numbers: got 5 numbers; expected {matrix_numbers}"),
        (lambda: Edge("a", "b", "matrix", "abc"), "edge.numbers",
         f"state edge.numbers: got text 'abc'; expected {matrix_numbers}"),
        (lambda: Edge("a", "b", "position-heading", [0, 0, 0], convention=5), "edge.convention",
         "state edge.convention: got 5; expected convention text in ASCII such as 'sequence=z-y-x unit=degrees'"),
        (lambda: State(widget="x"), "widget",
         "state widget: got text 'x'; expected one of 'none', 'explorer', 'planar', 'singularity', 'graph', 'desk', "
         "'trajectory', 'mount-finder'"),
    ]
    for make, path, words in cases:
        err = _built(make)
        assert (str(err), err.path) == (words, path)
    # the child named in the message is cut at 40 characters, like every name echoed
    long = "f" * 45
    err = _built(lambda: Edge(long, long, "position-heading", [0, 0, 0]))
    assert str(err).startswith(f"state edge.child: got {_quoted(long, 40)}, the same frame as the parent;")
    edge = Edge("a", "b", "position-heading", [0, 0, 0], convention="sequence=z-y-x unit=degrees")
    assert edge.convention == Convention.parse("sequence=z-y-x unit=degrees")
    for path, shown_as in (("", "''"), (5, "5")):
        with pytest.raises(WrongTypeError) as err:
            save_state(_state(), path)
        assert str(err.value) == f"state file: got {shown_as}; expected a file path"
    with pytest.raises(FileWriteError) as err:
        save_state(_state(), "/nonexistent-posekit-folder/s.json")
    assert str(err.value).startswith("state file '/nonexistent-posekit-folder/s.json' not written: ")


def test_a_long_core_reason_is_cut_at_300_characters_with_controls_shown():
    from posekit.io.state import _short

    assert _short("x" * 300) == "x" * 300
    assert _short("x" * 301) == "x" * 300 + "..."
    assert _short("a\x07b") == "a<U+0007>b"


def test_the_scipy_version_comes_from_the_module_the_metadata_or_says_not_installed(monkeypatch):
    import importlib.metadata
    import sys

    import scipy

    import posekit.io.state as state_module

    monkeypatch.setattr(state_module, "_VERSIONS", {})
    assert state_module.environment_versions()["scipy"] == scipy.__version__

    def missing(name):
        raise importlib.metadata.PackageNotFoundError(name)

    monkeypatch.setattr(state_module, "_VERSIONS", {})
    monkeypatch.delitem(sys.modules, "scipy")
    monkeypatch.setattr(importlib.metadata, "version", missing)
    assert state_module.environment_versions()["scipy"] == "not installed"


def test_a_state_larger_than_the_state_file_limit_is_read_from_a_report_and_saved_with_a_larger_limit(tmp_path):
    from posekit.io.limits import STATE_LIMIT
    from posekit.io.state import MAX_ITEMS, Edge, NamedPose

    name = "n" * 190
    big = State(poses=[NamedPose(f"{name}{i:06d}", np.eye(4)) for i in range(MAX_ITEMS)],
                edges=[Edge(f"{name}{i:06d}", f"{name}c{i:05d}", "matrix", np.eye(4).ravel().tolist())
                       for i in range(MAX_ITEMS)])
    text = state_to_json(big)
    assert len(text.encode("utf-8")) > STATE_LIMIT                  # larger than a state file may be by default
    report = tmp_path / "big.html"
    report.write_text(f"<html><body>{REPORT_STATE_OPEN}{text}</script></body></html>", encoding="utf-8")
    assert read_report_state(report) == big                         # a report's own, larger limit applies
    with pytest.raises(InputTooLargeError):
        save_state(big, tmp_path / "big.json")
    saved = save_state(big, tmp_path / "big.json", limit=2 * STATE_LIMIT)
    assert load_state(saved, limit=2 * STATE_LIMIT) == big


@pytest.mark.parametrize("text,path,line,column", [
    # an object level with no key yet, then arrays: the key is shown as empty
    ("{" + "[" * 40, "[''" + "]" + "[0]" * 31, 1, 33),
    # a newline first: line 2, and the column counts from just after it
    ("\n" + "[" * 40, "[0]" * 32, 2, 33),
    # a key JSON cannot read (a bad escape) is shown as written between its quotes
    ('[[{"a\\x": ' + "[" * 40, "[0][0]['a\\x']" + "[0]" * 29, 1, 40),
    # arrays before a key and a key that is no identifier: every level is named
    ('{"k": [1, [2, {"b c": ' + "[" * 40, "k[1][1]['b c']" + "[0]" * 28, 1, 51),
])
def test_too_deep_names_every_level_and_the_place(text, path, line, column):
    # path, line and column by hand count of the text's brackets (levels 1 to 32, the 33rd refused)
    with pytest.raises(StateFileError) as err:
        state_from_json(text)
    assert str(err.value) == (f"state {path}: brackets nested more than 32 levels deep (line {line}, column {column}); "
                              "expected at most 32 levels of nesting (a posekit state uses 5)")


def test_a_limit_of_one_byte_is_a_limit_and_a_long_wrong_limit_is_cut_in_the_message():
    with pytest.raises(InputTooLargeError) as err:             # 1 is a whole number of bytes >= 1: accepted
        state_from_json("{}", limit=1)
    assert str(err.value) == ("state text (2 bytes) is larger than the limit of 1 bytes. "
                              "Pass a larger limit= if it really is this large.")
    with pytest.raises(WrongTypeError) as err:
        state_from_json("{}", limit="x" * 100)
    # the value is shown in 40 characters: the opening quote, 39 letters, then the cut mark
    assert str(err.value) == "limit: got '" + "x" * 39 + "...; expected a whole number of bytes >= 1"
