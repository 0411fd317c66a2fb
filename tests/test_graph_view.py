"""The frame-graph figure, HTML readouts and widget glue, without a browser.

The figure must show what posekit's graph computes: each frame's arrows where
``FrameGraph.lookup(root, frame)`` puts it (drawn by view.frames.frame_points), the
lookup path through the placed origins, and one "second opinion" frame per loop edge.
The widget must hold no math state of its own: after each action its figure equals a
fresh figure of its ``graph`` traitlet.
"""

from __future__ import annotations

import numpy as np
import pytest

from posekit import PoseInputError
from posekit.analysis.frames_graph import FrameGraph
from posekit.analysis.scenarios import ROVER_BACKWARDS_EDGE, ROVER_FRAMES, orchard_rover, orchard_rover_planar
from posekit.core.errors import WrongTypeError
from posekit.view.frames import frame_points
from posekit.view.graph import FIRST_FRAME_TRACE, graph_figure, graph_traces, loop_check_html, readout_html


def _arr(values):
    return np.array([np.nan if v is None else v for v in values], dtype=float)


@pytest.mark.parametrize("root", ["world", "base"])
def test_spatial_figure_draws_every_frame_where_the_graph_places_it(root):
    g = orchard_rover()
    look = g.lookup("world", "camera")
    fig = graph_figure(g, root=root, lookup=look, scale=0.2)
    names = [t.name for t in fig.data]
    assert names[:FIRST_FRAME_TRACE] == ["edges", "loop edges", "lookup path", "frame names"]
    assert set(names[FIRST_FRAME_TRACE:FIRST_FRAME_TRACE + 6]) == set(ROVER_FRAMES)
    for tr in fig.data[FIRST_FRAME_TRACE:FIRST_FRAME_TRACE + 6]:
        m = g.lookup(root, tr.name).matrix
        for got, want in zip((tr.x, tr.y, tr.z), frame_points(m[:3, :3], m[:3, 3], 0.2)):
            np.testing.assert_allclose(_arr(got), _arr(want), atol=1e-12, equal_nan=True)
    # the path runs through the placed origins of the lookup's frames
    origins = [g.lookup(root, f).matrix[:3, 3] for f in look.path]
    path = fig.data[2]
    pts = np.stack([_arr(path.x), _arr(path.y), _arr(path.z)], axis=1)
    pts = pts[~np.isnan(pts[:, 0])]
    for k, o in enumerate(origins[:-1]):
        np.testing.assert_allclose(pts[2 * k], o, atol=1e-12)
        np.testing.assert_allclose(pts[2 * k + 1], origins[k + 1], atol=1e-12)
    assert fig.layout.title.text == "coordinates in camera -&gt; coordinates in world"
    assert list(fig.data[3].text) == [t.name for t in fig.data[FIRST_FRAME_TRACE:FIRST_FRAME_TRACE + 6]]


def test_second_opinion_frames_show_where_loop_edges_put_their_child():
    g = orchard_rover()
    traces, facts = graph_traces(g, root="base", scale=0.2)
    place = g.placement("base")
    ghosts = traces[FIRST_FRAME_TRACE + len(place.frames):]
    assert len(ghosts) == len(place.loop_edges) == 2
    for tr, i in zip(ghosts, place.loop_edges):
        e = g.edges[i]
        assert tr.name == f"{e.child} by edge {i}"
        m = g.lookup("base", e.parent).matrix @ e.transform
        np.testing.assert_allclose(_arr(tr.x)[0], m[0, 3], atol=1e-12)
    # after the fix both opinions of the lidar coincide
    fixed = g.flipped(ROVER_BACKWARDS_EDGE)
    traces, _ = graph_traces(fixed, root="base", scale=0.2)
    lidar = [t for t in traces if t.name == "lidar"][0]
    ghost = [t for t in traces if t.name.startswith("lidar by edge")][0]
    assert abs(_arr(lidar.x)[0] - _arr(ghost.x)[0]) < 0.01


def test_planar_figure_is_top_down():
    g = orchard_rover_planar()
    for look in (None, g.lookup("world", "lidar")):
        fig = graph_figure(g, root="world", lookup=look)
        assert all(t.type == "scatter" for t in fig.data)
        assert fig.layout.yaxis.scaleanchor == "x"
    s = graph_traces(g, root="world")[1]["scale"]
    tr = [t for t in fig.data if t.name == "camera"][0]
    m = g.lookup("world", "camera").matrix
    np.testing.assert_allclose(_arr(tr.x), _arr([m[0, 2], m[0, 2] + s * m[0, 0], None, m[0, 2],
                                                 m[0, 2] + s * m[0, 1]]), atol=1e-12, equal_nan=True)


def test_unreached_frames_are_named_in_the_title():
    g = orchard_rover().with_edge("dock", "charger", np.eye(4))
    fig = graph_figure(g, root="world")
    assert "not joined to world: dock, charger" in fig.layout.title.text


def test_view_bad_input():
    with pytest.raises(WrongTypeError):
        graph_figure("not a graph")
    with pytest.raises(WrongTypeError):
        graph_figure(orchard_rover(), lookup="world")
    with pytest.raises(PoseInputError, match="scale"):
        graph_figure(orchard_rover(), scale=-1)
    with pytest.raises(PoseInputError, match="palette"):
        graph_figure(orchard_rover(), palette="rainbow")


def test_html_readouts_escape_and_show_the_numbers():
    g = FrameGraph().with_edge("<a>", "b&c", [1, 2, 3, 1, 0, 0, 0], "position-quaternion")
    look = g.lookup("<a>", "b&c")
    text = readout_html(look.readout("scalar=last"), look)
    assert "&lt;a&gt;" in text and "<a>" not in text and "b&amp;c" in text
    assert " 2.0000" in text and "x</th>" in text
    rover = orchard_rover()
    html_text = loop_check_html(rover.check_loops(), rover)
    assert "edge 3" in html_text and "\u2717" in html_text and "\u2713" in html_text
    with pytest.raises(WrongTypeError):
        readout_html(look)


def test_widget_glue_follows_its_graph():
    from posekit.widgets import GraphExplorer

    g = orchard_rover()
    ex = GraphExplorer(g, from_frame="camera", into_frame="world", root="base")

    def assert_figure_matches():
        fresh = graph_figure(ex.graph, root=ex.root, lookup=ex.graph.lookup(ex.into_frame, ex.from_frame),
                             scale=ex._scale)
        assert [t.name for t in ex.figure.data] == [t.name for t in fresh.data]
        for got, want in zip(ex.figure.data, fresh.data):
            np.testing.assert_allclose(_arr(got.x), _arr(want.x), atol=1e-12, equal_nan=True)

    assert_figure_matches()
    ex.edge = ROVER_BACKWARDS_EDGE
    ex.flip()
    assert ex.graph == g.flipped(ROVER_BACKWARDS_EDGE)
    assert_figure_matches()
    assert "\u2717" not in ex.loops_html.value
    ex.reset()
    assert ex.graph == g
    ex.apply_best_fix()
    assert ex.graph == g.flipped(ROVER_BACKWARDS_EDGE) and ex.edge == ROVER_BACKWARDS_EDGE
    ex.swap()
    assert (ex.from_frame, ex.into_frame) == ("world", "camera")
    assert "coordinates in world -&gt; coordinates in camera" in ex.readouts.value
    assert_figure_matches()
    # an edge convention that cannot read the numbers is refused, with the reason shown
    ex.edge = 0
    before = ex.graph
    ex.edge_bar.controls["scalar"].value = "first"
    assert ex.graph.edges[0].convention.scalar == "first"
    ex.readout_bar.controls["scalar"].value = "last"
    assert "scalar=last" in ex.readout_convention
    assert before != ex.graph
    with pytest.raises(PoseInputError):
        GraphExplorer(g, from_frame="nowhere")
    with pytest.raises(WrongTypeError):
        GraphExplorer("graph")
