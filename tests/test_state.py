"""State files: bit-identical round trips, strict loading, code cells that rebuild exactly."""

from __future__ import annotations

import json
import string

import numpy as np
import pytest
from fresh_kernel import state_rebuilt_in_fresh_kernel
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import posekit as pk
import posekit.widgets  # noqa: F401 - importing the widgets registers each widget's settings class
from posekit.io.limits import FileReadError, InputTooLargeError
from posekit.io.settings import (Bool, Choice, ConventionText, Float, Floats, IntRange, Text, Texts,
                                 settings_class)
from posekit.io.state import (EDGE_COUNTS, MAX_BYTES, MAX_ITEMS, WIDGET_KINDS, Edge, NamedPose, State, StateFileError,
                              load_state, read_report_state, save_state, state_from_json, state_to_json)


def _random_pose(rng, name="p"):
    q = rng.normal(size=4)
    rot = pk.read_rotation(q / np.linalg.norm(q), "quaternion")
    t = rng.normal(size=3) * 10.0 ** rng.integers(-8, 8)
    return NamedPose(name, pk.make_transform(rot, t))


def _state(rng, n=3):
    conv = pk.Convention(sequence="z-x-z", unit="degrees", scalar="last", algebra="jpl")
    poses = tuple(_random_pose(rng, f"pose {i}") for i in range(n))
    angles = tuple(float(v) for v in rng.uniform(-180, 180, 3))
    settings = {"angles": angles, "translation": (-0.0, 1e-300, 123456.789), "convention": conv.to_text(),
                "keep": "orientation", "show_steps": False, "show_body": True, "palette": "colour-blind"}
    edges = (Edge("world", "base", "position-quaternion", (1.0, 2.0, 3.0, 0.0, 0.0, 0.0, 1.0), conv),)
    return State("explorer", settings, poses, edges, "notes with <b>markup</b> & unicode: ±°")


@pytest.mark.parametrize("seed", range(20))
def test_round_trip_is_bit_identical(seed):
    rng = np.random.default_rng(seed)
    s = _state(rng)
    back = state_from_json(state_to_json(s))
    assert back == s
    for a, b in zip(s.poses, back.poses):
        assert a.matrix.tobytes() == b.matrix.tobytes()
    assert back.settings["translation"][0] == 0.0 and np.signbit(back.settings["translation"][0])
    assert state_to_json(back) == state_to_json(s)


def test_save_and_load_file(tmp_path):
    s = _state(np.random.default_rng(1))
    path = save_state(s, tmp_path / "bug.json")
    assert load_state(path) == s
    assert path.read_bytes() == state_to_json(s).encode("utf-8")  # what is saved is exactly the JSON text


def _plain(seed=0):
    return json.loads(state_to_json(_state(np.random.default_rng(seed))))


def _mutate(fn):
    d = _plain()
    fn(d)
    return json.dumps(d)


# (name, change, path named, words of the message)
BAD = [
    ("unknown top-level key", lambda d: d.update(extra=1), "top level", "unknown key"),
    ("missing key", lambda d: d.pop("notes"), "top level", "missing key"),
    ("wrong schema", lambda d: d.update(schema="something-else"), "schema", "'posekit-state'"),
    ("future version", lambda d: d.update(version=2), "version", "reads version 1"),
    ("boolean version", lambda d: d.update(version=True), "version", "reads version 1"),
    ("float version", lambda d: d.update(version=1.0), "version", "reads version 1"),
    ("unknown widget", lambda d: d.update(widget="spinner"), "widget", "'explorer'"),
    ("unknown settings key", lambda d: d["settings"].update(zoom=3), "settings", "unknown key"),
    ("missing settings key", lambda d: d["settings"].pop("keep"), "settings", "missing key"),
    ("text angle", lambda d: d["settings"].update(angles=["30", 0, 0]), "settings.angles[0]", "a finite number"),
    ("two angles", lambda d: d["settings"].update(angles=[30, 0]), "settings.angles", "a list of 3 finite numbers"),
    ("bad choice", lambda d: d["settings"].update(keep="both"), "settings.keep", "one of 'numbers', 'orientation'"),
    ("bool as number", lambda d: d["settings"].update(angles=[True, 0, 0]), "settings.angles[0]", "a finite number"),
    ("number as bool", lambda d: d["settings"].update(show_steps=1), "settings.show_steps", "true or false"),
    ("bad convention word", lambda d: d["settings"].update(convention="sequence=q-r-s"), "settings.convention",
     "sequence"),
    ("upper-case convention", lambda d: d["poses"][0].update(convention="sequence=ZYX"), "poses[0].convention",
     "upper-case"),
    ("pose not orthonormal", lambda d: d["poses"][0]["matrix"][0].__setitem__(0, 2.0), "poses[0].matrix",
     "orthonormal"),
    ("pose bottom row", lambda d: d["poses"][0]["matrix"][3].__setitem__(0, 0.5), "poses[0].matrix", "last row"),
    ("pose 3 rows", lambda d: d["poses"][0].update(matrix=d["poses"][0]["matrix"][:3]), "poses[0].matrix", "4 rows"),
    ("pose extra key", lambda d: d["poses"][0].update(colour="red"), "poses[0]", "unknown key"),
    ("pose name not text", lambda d: d["poses"][0].update(name=5), "poses[0].name", "a name of 1 to 200"),
    ("edge bad kind", lambda d: d["edges"][0].update(kind="dual-quaternion"), "edges[0].kind", "'position-euler'"),
    ("edge too many numbers", lambda d: d["edges"][0].update(numbers=[0.0] * 17), "edges[0].numbers",
     "7 finite numbers for kind 'position-quaternion'"),
    ("versions extra", lambda d: d["versions"].update(gpu="x"), "versions", "unknown key"),
    ("notes not text", lambda d: d.update(notes=["x"]), "notes", "expected text"),
    ("too many poses", lambda d: d.update(poses=[d["poses"][0]] * (MAX_ITEMS + 1)), "poses", "at most 10000"),
    ("poses not a list", lambda d: d.update(poses={"a": 1}), "poses", "a list"),
    ("settings not an object", lambda d: d.update(settings=[1, 2]), "settings", "an object"),
]


@pytest.mark.parametrize("name, change, path, words", BAD, ids=[b[0] for b in BAD])
def test_tampered_states_are_refused_with_the_path(name, change, path, words):
    with pytest.raises(StateFileError) as err:
        state_from_json(_mutate(change))
    assert f"state {path}:" in str(err.value)
    assert (err.value.path or "top level") == path
    assert words in str(err.value)


@pytest.mark.parametrize("text, words", [
    ("", "not valid JSON"),
    ("{", "not valid JSON"),
    ('{"schema": NaN}', "not a JSON number"),
    ('{"schema": Infinity}', "not a JSON number"),
    ("[1, 2]", "an object with the keys schema"),
    (b"\xff\xfe{}", "not UTF-8"),
    (None, "JSON text"),
])
def test_malformed_text_is_refused(text, words):
    with pytest.raises(StateFileError) as err:
        state_from_json(text)
    assert words in str(err.value)


def test_nan_inside_the_settings_is_refused_with_its_path():
    text = state_to_json(_state(np.random.default_rng(0))).replace('"keep": "orientation"', '"keep": NaN', 1)
    with pytest.raises(StateFileError, match=r"state settings\.keep: got NaN") as err:
        state_from_json(text)
    assert err.value.path == "settings.keep"


def test_oversized_file_is_refused_before_parsing(tmp_path):
    path = tmp_path / "huge.json"
    with open(path, "wb") as f:
        f.write(b" " * (MAX_BYTES + 1))
    with pytest.raises(InputTooLargeError, match="8 MiB") as err:
        load_state(path)
    assert "limit=" in str(err.value)
    with pytest.raises(FileReadError, match="cannot be read"):
        load_state(tmp_path / "missing.json")


def test_code_cell_rebuilds_identical_state_in_a_fresh_kernel():
    from posekit.analysis import orchard_rover, orchard_rover_planar
    from posekit.widgets import Explorer, GraphExplorer, PlanarExplorer, SingularityView

    widgets = [
        Explorer(angles=(31.123456789012345, -89.99999999, 1e-17), translation=(0.1, -0.2, 0.3),
                 convention="sequence=x-y-x axes=extrinsic unit=radians scalar=last algebra=jpl action=passive "
                            "direction=child-from-parent layout=column-major wrap=positive",
                 keep="orientation", show_steps=False, palette="colour-blind"),
        PlanarExplorer(x=0.1 + 0.2, y=-1e-9, heading=-179.99999999999997, direction="child-from-parent"),
        SingularityView(angles=(30.1, 0.0, -20.000000000000004), swept=2, steps=33, position=7,
                        convention="sequence=z-x-z unit=degrees scalar=last"),
        GraphExplorer(orchard_rover(), readout_convention="sequence=x-y-z axes=extrinsic unit=degrees"),
        GraphExplorer(orchard_rover_planar(), palette="colour-blind"),
    ]
    for widget in widgets:
        rebuilt = state_rebuilt_in_fresh_kernel(widget.code_cell(), "widget")
        assert rebuilt == widget.to_state()
        for a, b in zip(rebuilt.poses, widget.to_state().poses):
            assert a.matrix.tobytes() == b.matrix.tobytes()


def test_report_embeds_a_state_that_loads_back(tmp_path):
    from posekit.view.report import write_report

    s = _state(np.random.default_rng(3))
    path = write_report(s, tmp_path / "report.html", diagnosis=["the quaternion was written scalar-last"])
    assert read_report_state(path) == s
    text = path.read_text()
    assert "<b>markup</b>" not in text  # user text is escaped
    assert "&lt;b&gt;markup&lt;/b&gt;" in text
    (tmp_path / "not-a-report.html").write_text("<html></html>")
    with pytest.raises(StateFileError, match="found 0 embedded"):
        read_report_state(tmp_path / "not-a-report.html")


def test_graph_state_keeps_edges_that_read_back_identically():
    """Nested numbers under a column-major convention are stored flat in the order that reads back the same."""
    from posekit.analysis import FrameGraph
    from posekit.widgets import GraphExplorer

    rot = pk.read_rotation([0.3, -0.2, 0.1], "euler")
    nested = pk.make_transform(rot, [1.0, 2.0, 3.0]).tolist()
    graph = (FrameGraph().with_edge("world", "base", nested, "matrix", "layout=column-major", "survey")
             .with_edge("base", "camera", [0.1, 0.0, 0.5, 0.0, 0.0, 0.0, 1.0], "position-quaternion", "scalar=last"))
    widget = GraphExplorer(graph)
    back = GraphExplorer.from_state(state_from_json(state_to_json(widget.to_state())))
    for a, b in zip(graph.edges, back.graph.edges):
        assert a.transform.tobytes() == b.transform.tobytes() and a.source == b.source
    bad = json.loads(state_to_json(widget.to_state()))
    bad["settings"]["sources"] = ["only one"]
    with pytest.raises(StateFileError, match="sources") as err:
        GraphExplorer.from_state(state_from_json(json.dumps(bad)))
    assert err.value.path == "settings.sources"


# --- every valid state saves and loads to an equal State (hypothesis) -----------------------------------------

#: Characters a name may hold: anything but control, format, surrogate and line/paragraph-separator characters.
NAME_CHARS = st.characters(blacklist_categories=("Cc", "Cf", "Cs", "Zl", "Zp"))
#: Characters free text may hold: anything but control characters (newline and tab allowed) and surrogates.
TEXT_CHARS = st.one_of(st.characters(blacklist_categories=("Cc", "Cs")), st.sampled_from("\n\t\r"))
FINITE = st.floats(allow_nan=False, allow_infinity=False)
CONVENTIONS = st.sampled_from(["sequence=z-y-x unit=degrees", "sequence=x-y-z axes=extrinsic unit=radians",
                               "sequence=z-x-z scalar=last algebra=jpl", "direction=child-from-parent",
                               "layout=column-major action=passive wrap=positive", "unit=radians"])


def names(strip=False, empty=False, max_size=40):
    found = st.text(NAME_CHARS, min_size=0 if empty else 1, max_size=max_size)
    return found.filter(lambda s: s == s.strip() and (empty or s.strip())) if strip else found


def _kind_strategy(kind):
    """Values a settings field of this kind accepts, drawn from the kind's own declaration."""
    if isinstance(kind, Floats):
        return st.tuples(*[FINITE] * kind.n)
    if isinstance(kind, Float):
        return FINITE
    if isinstance(kind, Bool):
        return st.booleans()
    if isinstance(kind, Choice):
        return st.sampled_from(kind.options)
    if isinstance(kind, ConventionText):
        return CONVENTIONS.map(lambda t: pk.Convention.parse(t).to_text())
    if isinstance(kind, Text):
        size = min(kind.limit, 60)
        if kind.name:
            return names(strip=kind.strip, empty=kind.empty, max_size=size)
        chars = TEXT_CHARS if kind.lines else st.characters(blacklist_categories=("Cc", "Cs"))
        return st.text(chars, min_size=0 if kind.empty else 1, max_size=size)
    if isinstance(kind, Texts):
        return st.lists(_kind_strategy(kind.each), max_size=4).map(tuple)
    if isinstance(kind, IntRange):
        return st.integers(kind.lo, kind.hi)
    raise AssertionError(f"no strategy for {kind!r}")  # a new field kind needs one here


@st.composite
def widget_settings(draw, widget):
    cls = settings_class(widget)
    values = {name: draw(_kind_strategy(kind)) for name, kind in cls.field_kinds().items()}
    try:
        return cls(**values).as_dict()
    except StateFileError:  # a cross-field check refused this combination: draw again
        from hypothesis import reject

        reject()


@st.composite
def poses(draw):
    q = np.array(draw(st.tuples(*[st.floats(-1, 1)] * 4)))
    if np.linalg.norm(q) < 0.1:
        q = np.array([1.0, 0.0, 0.0, 0.0])
    rot = pk.read_rotation(q / np.linalg.norm(q), "quaternion")
    t = draw(st.tuples(*[st.floats(-1e12, 1e12)] * 3))
    return NamedPose(draw(names()), pk.make_transform(rot, t), pk.Convention.parse(draw(CONVENTIONS)))


@st.composite
def edges(draw):
    kind = draw(st.sampled_from(sorted(EDGE_COUNTS)))
    count = draw(st.sampled_from(EDGE_COUNTS[kind]))
    parent = draw(names(strip=True))
    child = draw(names(strip=True).filter(lambda c: c != parent))
    numbers = tuple(draw(st.lists(FINITE, min_size=count, max_size=count)))
    return Edge(parent, child, kind, numbers, pk.Convention.parse(draw(CONVENTIONS)))


@st.composite
def valid_states(draw):
    widget = draw(st.sampled_from(WIDGET_KINDS))
    return State(widget, draw(widget_settings(widget)), tuple(draw(st.lists(poses(), max_size=3))),
                 tuple(draw(st.lists(edges(), max_size=3))), draw(st.text(TEXT_CHARS, max_size=80)))


ROUND_TRIP = settings(max_examples=150, deadline=2000, derandomize=True, database=None,
                      suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])


@ROUND_TRIP
@given(valid_states())
def test_every_valid_state_saves_and_loads_to_an_equal_state(tmp_path, state):
    path = save_state(state, tmp_path / "state.json")
    back = load_state(path)
    assert back == state
    assert state_to_json(back) == state_to_json(state)
    for a, b in zip(state.poses, back.poses):
        assert a.matrix.tobytes() == b.matrix.tobytes() and a.name == b.name
    for a, b in zip(state.edges, back.edges):
        assert np.array(a.numbers).tobytes() == np.array(b.numbers).tobytes()
    assert dict(back.settings) == dict(state.settings)


def test_the_round_trip_strategy_covers_every_widget_kind_and_edge_kind():
    """The generator above is not vacuous: it reaches every widget kind and every edge kind."""
    seen_widgets, seen_kinds = set(), set()

    @settings(max_examples=600, deadline=None, derandomize=True, database=None,
              suppress_health_check=[HealthCheck.too_slow])
    @given(valid_states())
    def collect(state):
        seen_widgets.add(state.widget)
        seen_kinds.update(e.kind for e in state.edges)

    collect()
    assert seen_widgets == set(WIDGET_KINDS)
    assert seen_kinds == set(EDGE_COUNTS)


def test_names_and_text_characters_match_what_the_checks_accept():
    """Each character class the generator avoids is refused by the loader, and a sample it uses is accepted."""
    base = _plain()
    for ch in ("\x00", "\x1b", "\x7f", "\x85", "\u202e", "\u2066", "\u200b", "\u2028", "\ufeff"):
        d = json.loads(json.dumps(base))
        d["poses"][0]["name"] = "a" + ch + "b"
        with pytest.raises(StateFileError, match=r"state poses\[0\]\.name"):
            state_from_json(json.dumps(d))
    for text in ("x" + string.punctuation, "ünïcödé ±°", "日本語の名前", "مرحبا"):
        d = json.loads(json.dumps(base))
        d["poses"][0]["name"] = text
        assert state_from_json(json.dumps(d)).poses[0].name == text
