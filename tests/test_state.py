"""State files: bit-identical round trips, strict loading, code cells that rebuild exactly."""

from __future__ import annotations

import json

import numpy as np
import pytest
from fresh_kernel import state_rebuilt_in_fresh_kernel

import posekit as pk
from posekit.analysis.state import (MAX_BYTES, MAX_ITEMS, Edge, NamedPose, State, StateFileError, load_state,
                                    read_report_state, save_state, state_from_json, state_to_json)


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


def _plain(seed=0):
    return json.loads(state_to_json(_state(np.random.default_rng(seed))))


def _mutate(fn):
    d = _plain()
    fn(d)
    return json.dumps(d)


BAD = [
    ("unknown top-level key", lambda d: d.update(extra=1), "unknown key"),
    ("missing key", lambda d: d.pop("notes"), "missing key"),
    ("wrong schema", lambda d: d.update(schema="something-else"), "schema"),
    ("future version", lambda d: d.update(version=2), "version"),
    ("boolean version", lambda d: d.update(version=True), "version"),
    ("unknown widget", lambda d: d.update(widget="spinner"), "widget"),
    ("unknown settings key", lambda d: d["settings"].update(zoom=3), "unknown key"),
    ("missing settings key", lambda d: d["settings"].pop("keep"), "missing key"),
    ("text angle", lambda d: d["settings"].update(angles=["30", 0, 0]), "expected a number"),
    ("two angles", lambda d: d["settings"].update(angles=[30, 0]), "list of 3 numbers"),
    ("bad choice", lambda d: d["settings"].update(keep="both"), "accepted"),
    ("bool as number", lambda d: d["settings"].update(angles=[True, 0, 0]), "expected a number"),
    ("number as bool", lambda d: d["settings"].update(show_steps=1), "true or false"),
    ("bad convention word", lambda d: d["settings"].update(convention="sequence=q-r-s"), "sequence"),
    ("upper-case convention", lambda d: d["poses"][0].update(convention="sequence=ZYX"), "upper-case"),
    ("pose not orthonormal", lambda d: d["poses"][0]["matrix"][0].__setitem__(0, 2.0), "orthonormal"),
    ("pose bottom row", lambda d: d["poses"][0]["matrix"][3].__setitem__(0, 0.5), "last row"),
    ("pose 3 rows", lambda d: d["poses"][0].update(matrix=d["poses"][0]["matrix"][:3]), "4 rows"),
    ("pose extra key", lambda d: d["poses"][0].update(colour="red"), "unknown key"),
    ("pose name not text", lambda d: d["poses"][0].update(name=5), "expected text"),
    ("edge bad kind", lambda d: d["edges"][0].update(kind="dual-quaternion"), "accepted"),
    ("edge too many numbers", lambda d: d["edges"][0].update(numbers=[0.0] * 17), "at most 16"),
    ("versions extra", lambda d: d["versions"].update(gpu="x"), "unknown key"),
    ("notes not text", lambda d: d.update(notes=["x"]), "expected text"),
    ("too many poses", lambda d: d.update(poses=[d["poses"][0]] * (MAX_ITEMS + 1)), "at most"),
    ("poses not a list", lambda d: d.update(poses={"a": 1}), "expected a list"),
    ("settings not an object", lambda d: d.update(settings=[1, 2]), "expected an object"),
]


@pytest.mark.parametrize("name, change, words", BAD, ids=[b[0] for b in BAD])
def test_tampered_states_are_refused_with_the_path(name, change, words):
    with pytest.raises(StateFileError) as err:
        state_from_json(_mutate(change))
    assert words in str(err.value)


@pytest.mark.parametrize("text, words", [
    ("", "not valid JSON"),
    ("{", "not valid JSON"),
    ('{"schema": NaN}', "not allowed"),
    ('{"schema": Infinity}', "not allowed"),
    ("[1, 2]", "expected an object"),
    (b"\xff\xfe{}", "not UTF-8"),
    (None, "expected JSON text"),
])
def test_malformed_text_is_refused(text, words):
    with pytest.raises(StateFileError) as err:
        state_from_json(text)
    assert words in str(err.value)


def test_nan_inside_a_matrix_is_refused():
    text = state_to_json(_state(np.random.default_rng(0))).replace('"keep": "orientation"', '"keep": NaN', 1)
    with pytest.raises(StateFileError, match="not allowed"):
        state_from_json(text)


def test_oversized_file_is_refused_before_parsing(tmp_path):
    path = tmp_path / "huge.json"
    with open(path, "wb") as f:
        f.write(b" " * (MAX_BYTES + 1))
    with pytest.raises(StateFileError, match="at most"):
        load_state(path)
    with pytest.raises(StateFileError, match="cannot be read"):
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
    with pytest.raises(StateFileError, match="expected one embedded"):
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
    with pytest.raises(StateFileError, match="sources"):
        GraphExplorer.from_state(state_from_json(json.dumps(bad)))
