"""The frame-graph drawings, HTML readouts and widget glue, without a browser.

The drawings must show what posekit's graph holds and computes:

- the diagram: one node per frame, one arrow per stored edge running from the parent it
  was entered with to its child, a dashed ring for exactly the loops
  ``FrameGraph.check_loops`` reports as not closing, a star on the edge of its best fix;
- the scene: each frame's arrows where ``FrameGraph.lookup(root, frame)`` puts them
  (drawn by view.frames.frame_points), no line joining two frames except the one lookup
  arrow, names placed clear of every arrow, an arrow length that follows the data;
- the readouts: the numbers of the answer under the chosen convention, checked against
  compositions computed here with scipy.spatial.transform.Rotation (the reference).

Graphs are generated here: random trees of true poses (scipy Rotation.random) with one
or two extra measurements that close loops, and sometimes one edge measured wrong.
The widget must hold no math state of its own: after each action its drawings equal
fresh drawings of its ``graph`` traitlet.
"""

from __future__ import annotations

import html
import re

import numpy as np
import pytest
from plotly.callbacks import InputDeviceState, Points
from scipy.spatial.transform import Rotation

from posekit import PoseInputError
from posekit.analysis.frames_graph import FrameGraph, UnknownFrameError
from posekit.analysis.scenarios import ROVER_BACKWARDS_EDGE, ROVER_FRAMES, orchard_rover, orchard_rover_planar
from posekit.core.errors import WrongTypeError
from posekit.view.frames import frame_points, trace_index
from posekit.view.graph import (EDGE_LABELS_TRACE, FIX_TRACE, LEADERS_TRACE, LOOKUP_TRACE, NAMES_TRACE, NODES_TRACE,
                                PATH_TRACE, auto_scale, diagram_layout, edge_trace_name, graph_diagram, graph_figure,
                                graph_traces, label_points, loop_check_html, loop_trace_name, readout_html)


def _arr(values):
    return np.array([np.nan if v is None else v for v in values], dtype=float)


def _trace(fig, name):
    found = [t for t in fig.data if t.name == name]
    assert len(found) == 1, (name, [t.name for t in fig.data])
    return found[0]


def _layout_of(fig, g, **options):
    """The layout a diagram was drawn with: as many caption lines as the figure shows."""
    lines = sum(str(a.text).count("<br>") + 1 for a in fig.layout.annotations)
    return diagram_layout(g, captions=lines, **options)


def _segments(tr, dim):
    """Consecutive point pairs of a trace's polyline (gaps at None)."""
    cols = [_arr(getattr(tr, a)) for a in "xyz"[:dim]]
    pts = np.stack(cols, axis=1)
    return [(pts[k], pts[k + 1]) for k in range(len(pts) - 1)
            if not (np.isnan(pts[k]).any() or np.isnan(pts[k + 1]).any())]


# --- generated rigs: true poses with scipy Rotation -----------------------------------------

def _pose(rot: Rotation, t) -> np.ndarray:
    m = np.eye(4)
    m[:3, :3] = rot.as_matrix()  # scipy Rotation.as_matrix: active, child axes as columns
    m[:3, 3] = t
    return m


def _entry(rot: Rotation, t, style: int):
    """Numbers, kind and convention text of the parent-from-child pose ``(rot, t)``, written by scipy."""
    if style == 0:  # scipy Rotation.as_quat: scalar last
        return np.concatenate([t, rot.as_quat()]), "position-quaternion", "scalar=last"
    if style == 1:  # scipy Rotation.as_euler("ZYX"): intrinsic z-y-x
        return np.concatenate([t, rot.as_euler("ZYX", degrees=True)]), "position-euler", "sequence=z-y-x unit=degrees"
    return _pose(rot, t), "matrix", None


def _rig(seed: int, *, slip: bool | None = None):
    """A random tree of true poses plus one or two extra measurements (loops); with ``slip`` one edge
    is measured 9 degrees off.  Returns the graph and the true poses ``{frame: (Rotation, t)}`` in the
    first frame."""
    rng = np.random.default_rng(seed)
    n = int(rng.integers(4, 8))
    names = [f"frame{k}" for k in range(n)]
    true = {names[0]: (Rotation.identity(), np.zeros(3))}
    for k in range(1, n):
        true[names[k]] = (Rotation.random(rng=rng), rng.uniform(-2.0, 2.0, 3))
    pairs = []
    for k in range(1, n):
        p = names[int(rng.integers(0, k))]
        pairs.append((p, names[k]) if rng.random() < 0.5 else (names[k], p))
    joined = {frozenset(p) for p in pairs}
    for _ in range(int(rng.integers(1, 3))):
        free = [(a, b) for a in names for b in names if a < b and frozenset((a, b)) not in joined]
        a, b = free[int(rng.integers(0, len(free)))]
        joined.add(frozenset((a, b)))
        pairs.append((a, b) if rng.random() < 0.5 else (b, a))
    broken = int(rng.integers(0, len(pairs))) if (slip if slip is not None else rng.random() < 0.7) else None
    g = FrameGraph()
    for i, (p, c) in enumerate(pairs):
        rp, tp = true[p]
        rc, tc = true[c]
        rot, t = rp.inv() * rc, rp.inv().apply(tc - tp)  # scipy Rotation: p-from-c
        if i == broken:
            rot = Rotation.from_rotvec(np.radians(9.0) * np.array([0.0, 0.6, 0.8])) * rot
        numbers, kind, conv = _entry(rot, t, int(rng.integers(0, 3)))
        g = g.with_edge(p, c, numbers, kind, conv, source=f"m{i}")
    return g, true


SEEDS = range(10)


# --- the diagram ------------------------------------------------------------------------------

@pytest.mark.parametrize("seed", SEEDS)
def test_diagram_draws_every_edge_as_an_arrow_from_its_parent_to_its_child(seed):
    g, _ = _rig(seed)
    fig = graph_diagram(g)
    lay = _layout_of(fig, g)
    nodes = _trace(fig, NODES_TRACE)
    assert list(nodes.customdata) == list(g.frames)
    np.testing.assert_allclose(np.stack([nodes.x, nodes.y], axis=1), lay.nodes)
    assert min(np.linalg.norm(lay.nodes[i] - lay.nodes[j]) for i in range(len(g.frames))
               for j in range(i)) > 2 * lay.radius + 4  # no two nodes touch
    # one arrow per stored edge, and nothing else named like one
    assert sorted(t.name for t in fig.data if t.name.startswith("edge ") and t.name != EDGE_LABELS_TRACE) == \
        sorted(edge_trace_name(i) for i in range(len(g.edges)))
    for i, e in enumerate(g.edges):
        tr = _trace(fig, edge_trace_name(i))
        pts = np.stack([_arr(tr.x), _arr(tr.y)], axis=1)
        to_nodes = lambda p: np.linalg.norm(lay.nodes - p, axis=1)  # noqa: E731
        start, end = to_nodes(pts[0]), to_nodes(pts[-1])
        # the arrow leaves its parent's rim and ends at its child's rim, the head at the child's end
        assert g.frames[int(np.argmin(start))] == e.parent and start.min() < lay.radius + 12
        assert g.frames[int(np.argmin(end))] == e.child and end.min() < lay.radius + 12
        sizes = list(tr.marker.size)
        assert sizes[-1] > 0 and not any(sizes[:-1]) and tr.marker.symbol == "arrow"
        assert set(tr.customdata) == {i}
        assert f"{e.parent} \u2192 {e.child}" in tr.hovertext[0]
    # depth: the fewest edges from the first frame of the node's group
    for f, d in zip(g.frames, lay.depth):
        assert d == len(g.path(g.frames[0], f))
    labels = _trace(fig, EDGE_LABELS_TRACE)
    kinds = {"position-quaternion": "quaternion", "position-euler": "Euler", "matrix": "matrix"}
    for i, e in enumerate(g.edges):
        assert labels.text[i].startswith(f"{i}: {kinds[e.kind]}<br>{e.source}")


@pytest.mark.parametrize("seed", SEEDS)
def test_diagram_rings_exactly_the_loops_the_check_reports_open(seed):
    g, _ = _rig(seed)
    check = g.check_loops()
    fig = graph_diagram(g, check=check)
    lay = _layout_of(fig, g)
    rings = [t for t in fig.data if t.name.startswith("loop ")]
    failing = [lp for lp in check.loops if not lp.consistent]
    assert [t.name for t in rings] == [loop_trace_name(lp) for lp in failing]
    for tr, lp in zip(rings, failing):
        assert tr.line.dash == "dash" and tr.line.width >= 5
        got = np.stack([_arr(tr.x), _arr(tr.y)], axis=1)
        want = np.concatenate([np.vstack([lay.curves[i], [[np.nan, np.nan]]]) for i in lp.edges])[:-1]
        np.testing.assert_allclose(got, want, equal_nan=True)
    captions = [a.text.replace("<br>", " ") for a in fig.layout.annotations]
    for lp in failing[:3]:
        assert any(f"{np.degrees(lp.angle):.3g}\u00b0" in c and f"{lp.distance:.3g} length units" in c
                   for c in captions)
    star = _trace(fig, FIX_TRACE)
    if failing and check.fixes:
        assert list(star.customdata) == [check.fixes[0].edge]
        np.testing.assert_allclose([star.x[0], star.y[0]], lay.middles[check.fixes[0].edge])
        assert any(f"edge {check.fixes[0].edge}" in c for c in captions)
    else:
        assert len(star.x) == 0
    if not failing:
        assert any("\u2713" in c or "no loops" in c for c in captions)


def test_rover_diagram_rings_the_backwards_loop_and_stars_the_backwards_edge():
    g = orchard_rover()
    fig = graph_diagram(g, lookup=g.lookup("world", "camera"), selected_edge=ROVER_BACKWARDS_EDGE)
    rings = [t.name for t in fig.data if t.name.startswith("loop ")]
    assert rings == ["loop camera \u2192 lidar \u2192 base does not close"]
    assert list(_trace(fig, FIX_TRACE).customdata) == [ROVER_BACKWARDS_EDGE]
    assert _trace(fig, edge_trace_name(ROVER_BACKWARDS_EDGE)).line.width > _trace(fig, edge_trace_name(0)).line.width
    nodes = _trace(fig, NODES_TRACE)
    k_from, k_into = g.frames.index("camera"), g.frames.index("world")
    assert "where is" in nodes.text[k_from] and "seen from" in nodes.text[k_into]
    # the lookup path runs along the arrows of the edges it composes (world <- base <- camera)
    lay = _layout_of(fig, g)
    path = _trace(fig, PATH_TRACE)
    got = np.stack([_arr(path.x), _arr(path.y)], axis=1)
    look = g.lookup("world", "camera")
    want = np.concatenate([np.vstack([lay.curves[s.edge], [[np.nan, np.nan]]]) for s in look.steps])[:-1]
    np.testing.assert_allclose(got, want, equal_nan=True)
    fixed = graph_diagram(g.flipped(ROVER_BACKWARDS_EDGE), changed=(ROVER_BACKWARDS_EDGE,))
    assert not [t for t in fixed.data if t.name.startswith("loop ")]
    assert len(_trace(fixed, FIX_TRACE).x) == 0
    assert "changed" in _trace(fixed, EDGE_LABELS_TRACE).text[ROVER_BACKWARDS_EDGE]


def test_two_measurements_of_one_pair_bend_apart():
    g = orchard_rover()
    pose = g.lookup("base", "camera").matrix
    g = g.with_edge("camera", "base", np.linalg.inv(pose), "matrix", None, source="second survey")
    lay = diagram_layout(g)
    i, j = 2, len(g.edges) - 1
    assert {g.edges[i].parent, g.edges[i].child} == {g.edges[j].parent, g.edges[j].child}
    assert np.linalg.norm(lay.middles[i] - lay.middles[j]) > 25


def test_diagram_layout_is_deterministic_and_keeps_labels_inside():
    g = orchard_rover()
    a, b = diagram_layout(g), diagram_layout(g)
    np.testing.assert_array_equal(a.nodes, b.nodes)
    assert a.label_positions == b.label_positions and a.name_positions == b.name_positions
    pw, ph = a.plot
    assert (a.nodes > 0).all() and (a.nodes[:, 0] < pw).all() and (a.nodes[:, 1] < ph).all()
    assert (a.labels[:, 0] > 0).all() and (a.labels[:, 0] < pw).all()


# --- the scene ----------------------------------------------------------------------------------

@pytest.mark.parametrize("root", ["world", "base"])
def test_scene_draws_every_frame_where_the_graph_places_it_and_joins_none(root):
    g = orchard_rover()
    look = g.lookup("world", "camera")
    fig = graph_figure(g, root=root, lookup=look, scale=0.2)
    for f in ROVER_FRAMES:
        tr = _trace(fig, f)
        m = g.lookup(root, f).matrix
        for got, want in zip((tr.x, tr.y, tr.z), frame_points(m[:3, :3], m[:3, 3], 0.2)):
            np.testing.assert_allclose(_arr(got), _arr(want), atol=1e-12, equal_nan=True)
        assert [t for t in tr.text if t] == ["x", "y", "z"]  # letters at the tips
    origins = {f: g.lookup(root, f).matrix[:3, 3] for f in ROVER_FRAMES}

    def frame_at(p):
        return [f for f, o in origins.items() if np.linalg.norm(p - o) < 1e-9]

    # no line runs from one frame's origin to another's, except the one lookup arrow
    for tr in fig.data:
        if "lines" not in (tr.mode or "") or tr.name == LOOKUP_TRACE:
            continue
        for p, q in _segments(tr, 3):
            assert not (frame_at(p) and frame_at(q) and frame_at(p) != frame_at(q)), tr.name
    (p, q), = _segments(_trace(fig, LOOKUP_TRACE), 3)
    np.testing.assert_allclose(p, origins["world"], atol=1e-12)
    np.testing.assert_allclose(q, origins["camera"], atol=1e-12)
    names = _trace(fig, NAMES_TRACE)
    assert [re.sub("<[^>]+>", "", t) for t in names.text] == list(g.placement(root).frames)
    assert names.text[g.placement(root).frames.index("camera")] == "<b>camera</b>"


def test_names_sit_clear_of_every_arrow_and_each_other():
    g = orchard_rover()
    traces, facts = graph_traces(g, root="base")
    s = facts["scale"]
    labels = facts["labels"]
    tips = []
    for f in facts["frames"]:
        tr = next(t for t in traces if t.name == f)
        pts = np.stack([_arr(tr.x), _arr(tr.y), _arr(tr.z)], axis=1)
        tips.append(pts[~np.isnan(pts[:, 0])])
    tips = np.concatenate(tips)
    for k, p in enumerate(labels):
        assert np.min(np.linalg.norm(tips - p, axis=1)) > 0.3 * s
        for j in range(k):
            assert np.linalg.norm(labels[j] - p) > 0.3 * s
    # each leader runs from its frame's origin towards its name
    leaders = _segments(next(t for t in traces if t.name == LEADERS_TRACE), 3)
    for (a, b), f, p in zip(leaders, facts["frames"], labels):
        o = g.lookup("base", f).matrix[:3, 3]
        for q in (a, b):
            np.testing.assert_allclose(np.cross(q - o, p - o), 0.0, atol=1e-9)
    # the axis ranges hold every name, so none is cut off
    fig = graph_figure(g, root="base")
    for k, ax in enumerate(("xaxis", "yaxis", "zaxis")):
        lo, hi = fig.layout.scene[ax].range
        assert (labels[:, k] > lo).all() and (labels[:, k] < hi).all()
    np.testing.assert_array_equal(label_points(np.zeros((1, 3)), np.eye(3)[None], 1.0),
                                  label_points(np.zeros((1, 3)), np.eye(3)[None], 1.0))


def test_arrow_length_follows_the_data_from_millimetres_to_metres():
    g, _ = _rig(3, slip=False)
    mm = FrameGraph()
    for e in g.edges:
        m = e.transform.copy()
        m[:3, 3] *= 1000.0
        mm = mm.with_edge(e.parent, e.child, m, "matrix", None, e.source)
    s_m = graph_traces(g)[1]["scale"]
    s_mm = graph_traces(mm)[1]["scale"]
    assert s_mm == pytest.approx(1000.0 * s_m, rel=1e-9)
    assert f"{s_mm:g}" in graph_figure(mm).layout.title.text
    assert auto_scale(np.zeros((1, 3))) == 1.0 and auto_scale(np.zeros((3, 3))) == 1.0
    lead = float(f"{s_m:.0e}".split("e")[0])
    assert lead in (1.0, 2.0, 5.0)  # a round length to read off


def test_planar_scene_is_top_down():
    g = orchard_rover_planar()
    for look in (None, g.lookup("world", "lidar")):
        fig = graph_figure(g, root="world", lookup=look)
        assert all(t.type == "scatter" for t in fig.data)
        assert fig.layout.yaxis.scaleanchor == "x"
    s = graph_traces(g, root="world")[1]["scale"]
    tr = _trace(fig, "camera")
    m = g.lookup("world", "camera").matrix
    np.testing.assert_allclose(_arr(tr.x), _arr([m[0, 2], m[0, 2] + s * m[0, 0], None, m[0, 2],
                                                 m[0, 2] + s * m[0, 1]]), atol=1e-12, equal_nan=True)
    d = graph_diagram(g)
    assert [t.name for t in d.data if t.name.startswith("loop ")] == \
        [loop_trace_name(lp) for lp in g.check_loops().loops if not lp.consistent]


def test_unreached_frames_are_named_in_the_title():
    g = orchard_rover().with_edge("dock", "charger", np.eye(4))
    fig = graph_figure(g, root="world")
    assert "not joined to world: dock, charger" in fig.layout.title.text
    lay = diagram_layout(g)
    # a second group sits beside the first, with its own first frame on top
    assert lay.depth[g.frames.index("dock")] == 0 and lay.depth[g.frames.index("charger")] == 1


def test_view_bad_input():
    g = orchard_rover()
    with pytest.raises(WrongTypeError):
        graph_figure("not a graph")
    with pytest.raises(WrongTypeError):
        graph_figure(g, lookup="world")
    with pytest.raises(PoseInputError, match="scale: got -1;"):
        graph_figure(g, scale=-1)
    with pytest.raises(PoseInputError, match="palette"):
        graph_figure(g, palette="rainbow")
    with pytest.raises(WrongTypeError, match="expected a posekit FrameGraph"):
        graph_diagram([1, 2])
    with pytest.raises(PoseInputError, match="width: got 50; expected a whole number of pixels from 200"):
        graph_diagram(g, width=50)
    with pytest.raises(PoseInputError, match="selected_edge: got 99; expected None or an edge index 0..6"):
        graph_diagram(g, selected_edge=99)
    with pytest.raises(WrongTypeError, match="check: got str"):
        graph_diagram(g, check="yes")
    with pytest.raises(PoseInputError, match="naming edges this graph does not have"):
        graph_diagram(FrameGraph().with_edge("a", "b", np.eye(4)).with_edge("b", "c", np.eye(4)), check=g.check_loops())


# --- readouts: the answer in numbers, against scipy Rotation ------------------------------------

def _panel(text: str, title_start: str) -> np.ndarray:
    m = re.search(re.escape(title_start) + r".*?</div><table[^>]*>(.*?)</table>", text)
    assert m, title_start
    return np.array([float(v) for v in re.findall(r"<td[^>]*>\s*([-0-9.e]+)</td>", m.group(1))])


READINGS = [
    ("sequence=z-y-x unit=degrees", "ZYX", True),          # scipy upper case: intrinsic
    ("sequence=x-y-z axes=extrinsic unit=radians scalar=last", "xyz", False),  # scipy lower case: extrinsic
    ("sequence=z-y-x unit=degrees direction=child-from-parent", "ZYX", True),
]


@pytest.mark.parametrize("seed", range(6))
def test_widget_answer_matches_scipy_rotation_composition(seed):
    from posekit.widgets import GraphExplorer

    g, true = _rig(seed, slip=False)
    rng = np.random.default_rng(100 + seed)
    a, b = (str(f) for f in rng.choice(g.frames, 2, replace=False))
    text_conv, seq, degrees = READINGS[seed % len(READINGS)]
    ex = GraphExplorer(g, from_frame=b, into_frame=a, readout_convention=text_conv)
    # reference: scipy Rotation composition of the true poses, a-from-b = (first-from-a)^-1 (first-from-b)
    ra, ta = true[a]
    rb, tb = true[b]
    rot, t = ra.inv() * rb, ra.inv().apply(tb - ta)
    text = html.unescape(ex.readouts.value)
    assert f"Where is {b} seen from {a}?" in text
    sentence = re.search(r"origin sits at \(([^)]*)\)", text).group(1)
    np.testing.assert_allclose([float(v) for v in sentence.split(",")], t, atol=2e-4)
    if "child-from-parent" in text_conv:  # the numbers are written the other way round
        rot, t = rot.inv(), -rot.inv().apply(t)
        assert f"takes a point given in {a}, expressed in {b}" in text
    else:
        assert f"takes a point given in {b}, expressed in {a}" in text
    np.testing.assert_allclose(_panel(text, "Translation"), t, atol=2e-4)
    q = _panel(text, "Quaternion")
    want_q = rot.as_quat(scalar_first="scalar=last" not in text_conv)  # scipy Rotation.as_quat
    assert min(np.abs(q - want_q).max(), np.abs(q + want_q).max()) < 2e-6
    angles = _panel(text, "Euler angles")
    back = Rotation.from_euler(seq, angles, degrees=degrees)  # scipy reads the shown angles back
    assert (back * rot.inv()).magnitude() < 1e-3
    m = _panel(text, "Matrix").reshape(4, 4)
    np.testing.assert_allclose(m[:3, :3], rot.as_matrix(), atol=2e-4)


def test_html_readouts_escape_and_use_posekit_words():
    g = FrameGraph().with_edge("<a>", "b&c", [1, 2, 3, 1, 0, 0, 0], "position-quaternion")
    look = g.lookup("<a>", "b&c")
    text = readout_html(look.readout("scalar=last"), look)
    assert "&lt;a&gt;" in text and "<a>" not in text and "b&amp;c" in text
    assert " 2.0000" in text and "x</th>" in text
    assert "coordinates in" not in text and "Where is b&amp;c seen from &lt;a&gt;?" in text
    rover = orchard_rover()
    html_text = loop_check_html(rover.check_loops(), rover)
    assert "edge 3" in html_text and "\u2717" in html_text and "\u2713" in html_text
    assert "coordinates in" not in html_text
    with pytest.raises(WrongTypeError):
        readout_html(look)


# --- the widget ---------------------------------------------------------------------------------

def _visible_words(ex) -> str:
    """Every label, option, button and HTML text the widget shows."""
    import ipywidgets as w

    out = []
    stack = [ex]
    while stack:
        x = stack.pop()
        stack.extend(getattr(x, "children", ()))
        for attr in ("description", "value", "tooltip"):
            v = getattr(x, attr, None)
            if isinstance(v, str) and not isinstance(x, w.Text):
                out.append(v)
        if isinstance(x, (w.Dropdown, w.ToggleButtons)):
            out.extend(str(o[0] if isinstance(o, tuple) else o) for o in x.options)
    for fig in (ex.diagram, ex.figure):
        out.append(str(fig.layout.title.text))
        out.extend(str(a.text) for a in fig.layout.annotations)
    return "\n".join(out)


def test_widget_words_are_posekit_own():
    from posekit.widgets import GraphExplorer

    ex = GraphExplorer(orchard_rover(), from_frame="camera", into_frame="world", root="base")
    words = _visible_words(ex)
    for phrase in ("coordinates in", "from frame", "to frame", "\u2192 into", "draw in", "Look up"):
        assert phrase not in words, phrase
    assert "where is" in words and "seen from" in words and "Where is camera seen from world?" in words
    ex.edge = ROVER_BACKWARDS_EDGE
    assert "they take a point given in lidar, expressed in base" in ex.edge_words.value


def test_applying_the_best_fix_shows_the_fixed_edge_in_the_list_at_once():
    from posekit.widgets import GraphExplorer

    g = orchard_rover()
    ex = GraphExplorer(g, from_frame="camera", into_frame="world", root="base")
    ex.edge_choice.value = 1  # the user looks at another edge first
    assert ex.edge == 1
    best = g.check_loops().fixes[0]
    ex.apply_best_fix()
    assert ex.edge == best.edge == ROVER_BACKWARDS_EDGE
    assert ex.edge_choice.value == best.edge  # the visible list, not one step behind
    assert ex.edge_choice.label.startswith(f"{best.edge}: base \u2192 lidar")
    assert ex.edge_bar.settings()["direction"] == best.corrected.convention.direction
    assert "changed" in _trace(ex.diagram, EDGE_LABELS_TRACE).text[best.edge]
    assert _trace(ex.diagram, edge_trace_name(best.edge)).line.width > _trace(ex.diagram, edge_trace_name(0)).line.width
    ex.reset()
    assert ex.graph == g and ex.edge_choice.value == ex.edge == best.edge
    # the frame lists follow the traitlets too
    ex.from_frame = "lidar"
    assert ex.from_choice.value == "lidar"


def test_clicking_two_frames_in_the_diagram_asks_the_question():
    from posekit.widgets import GraphExplorer

    ex = GraphExplorer(orchard_rover(), from_frame="camera", into_frame="world", root="base")
    nodes = _trace(ex.diagram, NODES_TRACE)
    k = list(nodes.customdata).index("lidar")
    # a click reaches every trace's handler; only the clicked one holds points
    ex._on_node_click(nodes, Points(point_inds=[], xs=[], ys=[], trace_name=NODES_TRACE, trace_index=0),
                      InputDeviceState())
    assert ex.from_frame == "camera"
    ex._on_node_click(nodes, Points(point_inds=[k], xs=[nodes.x[k]], ys=[nodes.y[k]], trace_name=NODES_TRACE,
                                    trace_index=0), InputDeviceState())
    assert (ex.from_frame, ex.click_sets, ex.click_choice.value) == ("lidar", "into", "into")
    assert ex.from_choice.value == "lidar"
    ex.pick("imu")
    assert (ex.from_frame, ex.into_frame, ex.click_sets) == ("lidar", "imu", "from")
    assert ex.into_choice.value == "imu"
    assert "Where is lidar seen from imu?" in html.unescape(ex.readouts.value)
    nodes = _trace(ex.diagram, NODES_TRACE)  # the redrawn trace: the picks are marked
    assert "where is" in nodes.text[list(nodes.customdata).index("lidar")]
    labels = _trace(ex.diagram, EDGE_LABELS_TRACE)
    ex._on_edge_click(labels, Points(point_inds=[4], xs=[0], ys=[0], trace_name=EDGE_LABELS_TRACE, trace_index=0),
                      InputDeviceState())
    assert ex.edge == 4 and ex.edge_choice.value == 4
    with pytest.raises(UnknownFrameError, match="pick: got 'nowhere'"):
        ex.pick("nowhere")


def test_widget_glue_follows_its_graph():
    from posekit.widgets import GraphExplorer

    g = orchard_rover()
    ex = GraphExplorer(g, from_frame="camera", into_frame="world", root="base")
    scale = graph_traces(g, root="base")[1]["scale"]

    def assert_drawings_match():
        look = ex.graph.lookup(ex.into_frame, ex.from_frame)
        fresh = graph_figure(ex.graph, root=ex.root, lookup=look, scale=scale)
        assert [t.name for t in ex.figure.data] == [t.name for t in fresh.data]
        for got, want in zip(ex.figure.data, fresh.data):
            np.testing.assert_allclose(_arr(got.x), _arr(want.x), atol=1e-12, equal_nan=True)
        diagram = graph_diagram(ex.graph, lookup=look, selected_edge=ex.edge, changed=ex.changed_edges(),
                                width=400, height=480)
        assert [t.name for t in ex.diagram.data] == [t.name for t in diagram.data]
        for got, want in zip(ex.diagram.data, diagram.data):
            np.testing.assert_allclose(_arr(got.x), _arr(want.x), atol=1e-12, equal_nan=True)

    assert_drawings_match()
    ex.edge = ROVER_BACKWARDS_EDGE
    ex.flip()
    assert ex.graph == g.flipped(ROVER_BACKWARDS_EDGE)
    assert_drawings_match()  # the arrow length is kept: reading one edge the other way does not rescale
    assert "\u2717" not in ex.loops_html.value
    ex.reset()
    assert ex.graph == g
    ex.swap()
    assert (ex.from_frame, ex.into_frame) == ("world", "camera")
    assert "Where is world seen from camera?" in html.unescape(ex.readouts.value)
    assert_drawings_match()
    # an edge convention that cannot read the numbers is refused, with the reason shown
    ex.edge = 0
    before = ex.graph
    ex.edge_bar.controls["scalar"].value = "first"
    assert ex.graph.edges[0].convention.scalar == "first"
    ex.readout_bar.controls["scalar"].value = "last"
    assert "scalar=last" in ex.readout_convention
    assert before != ex.graph
    # two frames no edge joins: the answer says why instead of failing
    lonely = g.with_edge("dock", "charger", np.eye(4))
    ex2 = GraphExplorer(lonely, from_frame="camera", into_frame="world", root="base")
    ex2.from_frame = "dock"
    assert "No answer" in ex2.readouts.value and "no chain of edges" in ex2.readouts.value
    with pytest.raises(PoseInputError):
        GraphExplorer(g, from_frame="nowhere")
    with pytest.raises(WrongTypeError):
        GraphExplorer("graph")


def test_widget_rescales_when_the_data_changes_by_a_factor_of_a_thousand():
    from posekit.widgets import GraphExplorer

    g, _ = _rig(5, slip=False)
    ex = GraphExplorer(g)
    before = graph_traces(g, root=ex.root)[1]["scale"]
    assert f"{before:g} long" in ex.figure.layout.title.text
    mm = FrameGraph()
    for e in g.edges:
        m = e.transform.copy()
        m[:3, 3] *= 1000.0
        mm = mm.with_edge(e.parent, e.child, m, "matrix", None, e.source)
    ex.graph = mm
    assert f"{1000 * before:g} long" in ex.figure.layout.title.text


def _seen_from(points, eye):
    """Orthographic screen coordinates of ``points`` seen from ``eye`` (z up), written out here
    independently of posekit's own projection (common practice: project onto the plane
    normal to the viewing direction)."""
    v = np.asarray(eye, float) / np.linalg.norm(eye)
    side = np.cross([0.0, 0.0, 1.0], v)
    side = side / np.linalg.norm(side) if np.linalg.norm(side) > 1e-9 else np.array([1.0, 0.0, 0.0])
    up = np.cross(v, side)
    return np.stack([points @ side, points @ up], axis=1)


@pytest.mark.parametrize("eye", [(-1.5, 1.6, 0.3), (0.3, 0.2, 2.5), (2.2, 0.1, 0.4), (-0.4, -2.0, -0.8)])
def test_turning_the_scene_moves_the_names_to_read_from_the_new_camera(eye):
    from posekit.widgets.graph import GraphExplorer

    g = orchard_rover()
    view = GraphExplorer(g, from_frame="camera", into_frame="world", root="base")
    fig = view.figure
    first = np.array([fig.data[trace_index(fig, NAMES_TRACE)][c] for c in "xyz"], float).T
    fig.layout.scene.camera.eye = dict(zip("xyz", eye))  # what plotly's front end sends when the user drags
    names = np.array([fig.data[trace_index(fig, NAMES_TRACE)][c] for c in "xyz"], float).T
    assert not np.allclose(first, names)
    _, facts = graph_traces(g, root="base")
    s = facts["scale"]
    tips = []
    for f in facts["frames"]:
        o = g.lookup("base", f).matrix[:3, 3]
        r = g.lookup("base", f).matrix[:3, :3]
        tips.extend(o + s * r[:, k] for k in range(3))
    flat_tips, flat_names = _seen_from(np.array(tips), eye), _seen_from(names, eye)
    for k, p in enumerate(flat_names):  # as seen from the new camera, no name sits on an arrow tip or a name
        assert np.min(np.linalg.norm(flat_tips - p, axis=1)) > 0.25 * s
        for j in range(k):
            assert np.linalg.norm(flat_names[j] - p) > 0.25 * s
    # leaders run from each frame's origin to its new name
    leaders = _segments(fig.data[trace_index(fig, LEADERS_TRACE)], 3)
    for (a, b), f, p in zip(leaders, facts["frames"], names):
        o = g.lookup("base", f).matrix[:3, 3]
        np.testing.assert_allclose(np.cross(b - o, p - o), 0.0, atol=1e-9)
    # a redraw (another question) keeps the names placed for the turned camera
    view.swap()
    again = np.array([fig.data[trace_index(fig, NAMES_TRACE)][c] for c in "xyz"], float).T
    np.testing.assert_allclose(again, names)
    with pytest.raises(PoseInputError, match="camera's eye"):
        graph_figure(g, view=(0, 0, 0))
