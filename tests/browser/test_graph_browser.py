"""The frame-graph widget in real JupyterLab: a question asked with the keyboard and by clicking
two frames in the diagram, the best fix applied, an edge read the other way round.

The expected numbers are computed here by posekit (the graph's lookups and placements,
and the view's frame_points / graph_traces) and compared with the data plotly.js holds
in the page; the visible dropdowns are read from the page itself.  The rover is invented
demo data; these tests check that the page shows what posekit computes for it, not the
rover's numbers themselves.
"""

from __future__ import annotations

import json

import numpy as np

from posekit.analysis.scenarios import ROVER_BACKWARDS_EDGE, orchard_rover, orchard_rover_planar
from posekit.view.frames import frame_points
from posekit.view.graph import LOOKUP_TRACE, NAMES_TRACE, NODES_TRACE, edge_trace_name, graph_traces

SEL = ".posekit-graph-explorer"
SCENE = ".posekit-graph-scene-box"
DIAGRAM = ".posekit-graph-diagram-box"


def _cells(planar: bool):
    make = "orchard_rover_planar" if planar else "orchard_rover"
    return [
        f"from posekit.analysis.scenarios import {make}\n"
        "from posekit.widgets import GraphExplorer\n"
        f"ex = GraphExplorer({make}(), from_frame='imu', into_frame='world', root='base')\n"
        "ex",
    ]


def _open(lab, name, planar):
    page = lab.open_notebook(name, _cells(planar))
    for sel in (SCENE, DIAGRAM):
        page.wait_for_selector(f"{sel} .js-plotly-plot", timeout=90_000)
        page.wait_for_function(
            "(sel) => { const gd = document.querySelector(sel + ' .js-plotly-plot'); return gd && gd.data && "
            "gd.data.length > 5; }", arg=sel)
    return page


def _trace(lab, page, name, sel=SCENE):
    data = lab.plot_data(page, sel)
    found = [t for t in data if t["name"] == name]
    assert len(found) == 1, [t["name"] for t in data]
    return found[0]


def _numbers(values):
    return np.array([np.nan if v is None else v for v in values], dtype=float)


def _assert_same(got, want_xyz):
    for axis, want in zip("xyz", want_xyz):
        np.testing.assert_allclose(_numbers(got[axis]), _numbers(want), atol=1e-9, equal_nan=True)


def _wait_change(page, sel, name, before):
    page.wait_for_function(
        "([sel, name, old]) => { const gd = document.querySelector(sel + ' .js-plotly-plot');"
        " if (!gd || !gd.data) return false; const t = gd.data.find(d => d.name === name);"
        " return !!(t && t.x) && JSON.stringify(Array.from(t.x)) !== old; }",
        arg=[sel, name, json.dumps(before, separators=(",", ":"))], timeout=30_000)


def _shown_option(page, css) -> str:
    """The text of the option a native select shows (ipywidgets writes its spaces as no-break spaces)."""
    text = page.locator(f"{css} select").evaluate("s => s.options[s.selectedIndex].textContent")
    return text.replace("\u00a0", " ")


def _click_node(page, frame):
    """Click the node of ``frame`` in the diagram where the browser drew it."""
    index, point = page.evaluate(
        "([sel, trace, frame]) => { const gd = document.querySelector(sel + ' .js-plotly-plot');"
        " const i = gd.data.findIndex(d => d.name === trace);"
        " return [i, Array.from(gd.data[i].customdata).indexOf(frame)]; }", [DIAGRAM, NODES_TRACE, frame])
    assert index >= 0 and point >= 0
    dot = page.locator(f"{DIAGRAM} .scatterlayer .trace").nth(index).locator(".points path.point").nth(point)
    dot.scroll_into_view_if_needed()
    box = dot.bounding_box()
    x, y = box["x"] + box["width"] / 2, box["y"] + box["height"] / 2
    page.mouse.move(x, y)
    page.wait_for_timeout(300)  # plotly finds the point under the mouse on hover, before the click
    page.mouse.click(x, y)


def test_question_by_keyboard_and_clicks_then_best_fix(lab, artifacts):
    g = orchard_rover()
    page = _open(lab, "graph_keys.ipynb", planar=False)
    _, facts = graph_traces(g, root="base")
    origins = {f: g.lookup("base", f).matrix[:3, 3] for f in g.frames}
    arrow = _trace(lab, page, LOOKUP_TRACE)
    _assert_same(arrow, [[origins["world"][k], origins["imu"][k]] for k in range(3)])

    # keyboard: focus the "where is" list and step from imu to camera
    select = page.locator(".posekit-graph-from select")
    select.focus()
    page.keyboard.press("ArrowDown")
    _wait_change(page, SCENE, LOOKUP_TRACE, arrow["x"])
    assert select.input_value() == "camera"
    _assert_same(_trace(lab, page, LOOKUP_TRACE), [[origins["world"][k], origins["camera"][k]] for k in range(3)])
    # every frame is drawn where posekit's lookup from the drawing root puts it, arrows as long as posekit says
    for frame in ("camera", "lidar", "world"):
        m = g.lookup("base", frame).matrix
        _assert_same(_trace(lab, page, frame), frame_points(m[:3, :3], m[:3, 3], facts["scale"]))
    page.wait_for_function("() => document.querySelector('.posekit-graph-readouts').textContent"
                           ".includes('Where is camera seen from world?')", timeout=30_000)
    readouts = page.locator(".posekit-graph-readouts").inner_text()
    t = g.lookup("world", "camera").readout("sequence=z-y-x unit=degrees").translation
    assert f"{t[0]:.4f}" in readouts and f"{t[2]:.4f}" in readouts
    assert page.locator(".posekit-graph-loops").inner_text().count("\u2717") == 1  # one loop does not close
    assert any(t["name"].startswith("loop ") for t in lab.plot_data(page, DIAGRAM))

    # mouse: click lidar, then base, in the diagram - "where is lidar seen from base?"
    _click_node(page, "lidar")
    page.wait_for_function("() => document.querySelector('.posekit-graph-from select').value === 'lidar'",
                           timeout=30_000)
    _click_node(page, "base")
    page.wait_for_function("() => document.querySelector('.posekit-graph-into select').value === 'base'",
                           timeout=30_000)
    page.wait_for_function("() => document.querySelector('.posekit-graph-readouts').textContent"
                           ".includes('Where is lidar seen from base?')", timeout=30_000)
    assert _shown_option(page, ".posekit-graph-from") == "lidar"

    # another edge chosen first, then the best fix: the list must show the fixed edge at once
    page.locator(".posekit-graph-edge select").select_option(index=1)
    page.wait_for_function("() => document.querySelector('.posekit-graph-edge-words').textContent"
                           ".includes('given in imu')", timeout=30_000)
    before = _trace(lab, page, "lidar")["x"]
    page.locator(".posekit-graph-apply-fix").click()
    _wait_change(page, SCENE, "lidar", before)
    page.wait_for_function("() => !document.querySelector('.posekit-graph-loops').textContent.includes('\u2717')",
                           timeout=30_000)
    page.wait_for_timeout(300)  # any late message would land here
    assert _shown_option(page, ".posekit-graph-edge").startswith(f"{ROVER_BACKWARDS_EDGE}: base \u2192 lidar")
    fixed = g.flipped(ROVER_BACKWARDS_EDGE)
    m = fixed.lookup("base", "lidar").matrix
    _assert_same(_trace(lab, page, "lidar"), frame_points(m[:3, :3], m[:3, 3], facts["scale"]))
    assert not any(t["name"].startswith("loop ") for t in lab.plot_data(page, DIAGRAM))
    assert page.locator(".posekit-graph-edge-convention .posekit-setting-direction button.mod-active") \
        .inner_text().strip() == "parent \u2192 child"
    page.set_viewport_size({"width": 1400, "height": 1900})  # tall enough for the whole widget
    page.wait_for_timeout(800)
    page.locator(SEL).screenshot(path=str(artifacts / "graph-after-fix.png"))
    page.close()


def test_planar_graph_edge_direction_by_keyboard(lab, artifacts):
    g = orchard_rover_planar()
    page = _open(lab, "graph_planar.ipynb", planar=True)
    before = _trace(lab, page, "lidar")
    m = g.lookup("base", "lidar").matrix
    _, facts = graph_traces(g, root="base", lookup=g.lookup("world", "imu"))
    s = facts["scale"]
    want_x = [m[0, 2], m[0, 2] + s * m[0, 0], None, m[0, 2], m[0, 2] + s * m[0, 1]]
    np.testing.assert_allclose(_numbers(before["x"]), _numbers(want_x), atol=1e-9, equal_nan=True)
    assert before["z"] is None  # a top-down (2D) plot

    # keyboard only: choose the edge in its list, then press Space on the direction toggle
    edge_select = page.locator(".posekit-graph-edge select")
    edge_select.focus()
    for _ in range(ROVER_BACKWARDS_EDGE):
        page.keyboard.press("ArrowDown")
    page.wait_for_function(
        "() => { const w = document.querySelector('.posekit-graph-edge-words'); return w && "
        "w.textContent.includes('they take a point given in lidar, expressed in base'); }", timeout=30_000)
    diagram_edge = _trace(lab, page, edge_trace_name(ROVER_BACKWARDS_EDGE), DIAGRAM)
    assert diagram_edge is not None
    button = page.locator(".posekit-graph-edge-convention .posekit-setting-direction button",
                          has_text="parent \u2192 child")
    button.focus()
    page.keyboard.press("Space")
    _wait_change(page, SCENE, "lidar", before["x"])
    fixed = g.flipped(ROVER_BACKWARDS_EDGE)
    m = fixed.lookup("base", "lidar").matrix
    want_x = [m[0, 2], m[0, 2] + s * m[0, 0], None, m[0, 2], m[0, 2] + s * m[0, 1]]
    want_y = [m[1, 2], m[1, 2] + s * m[1, 0], None, m[1, 2], m[1, 2] + s * m[1, 1]]
    got = _trace(lab, page, "lidar")
    np.testing.assert_allclose(_numbers(got["x"]), _numbers(want_x), atol=1e-9, equal_nan=True)
    np.testing.assert_allclose(_numbers(got["y"]), _numbers(want_y), atol=1e-9, equal_nan=True)
    page.set_viewport_size({"width": 1400, "height": 1900})
    page.wait_for_timeout(800)
    page.locator(SEL).screenshot(path=str(artifacts / "graph-planar-after-flip.png"))
    page.close()


def test_turning_the_scene_by_mouse_moves_the_names_for_the_new_camera(lab, artifacts):
    """Drag the 3D scene: plotly.js reports the camera to the kernel, and the names come back
    placed for the new eye -- the same spots posekit places for that eye (graph_traces)."""
    g = orchard_rover()
    page = _open(lab, "graph_turn.ipynb", planar=False)
    before = _trace(lab, page, NAMES_TRACE)
    box = page.locator(f"{SCENE} .gl-container, {SCENE} .svg-container").first.bounding_box()
    x0, y0 = box["x"] + box["width"] * 0.55, box["y"] + box["height"] * 0.55
    page.mouse.move(x0, y0)
    page.mouse.down()
    for k in range(1, 13):  # a slow drag to the left and up, as a hand does
        page.mouse.move(x0 - 18 * k, y0 - 6 * k)
        page.wait_for_timeout(30)
    page.mouse.up()
    _wait_change(page, SCENE, NAMES_TRACE, before["x"])
    eye = page.evaluate(f"() => document.querySelector('{SCENE} .js-plotly-plot')._fullLayout.scene.camera.eye")
    _, facts = graph_traces(g, root="base", lookup=g.lookup("world", "imu"), view=(eye["x"], eye["y"], eye["z"]))
    page.wait_for_timeout(500)  # the last camera of the drag may still be on its way
    got = _trace(lab, page, NAMES_TRACE)
    eye = page.evaluate(f"() => document.querySelector('{SCENE} .js-plotly-plot')._fullLayout.scene.camera.eye")
    _, facts = graph_traces(g, root="base", lookup=g.lookup("world", "imu"), view=(eye["x"], eye["y"], eye["z"]))
    _assert_same(got, facts["labels"].T)
    page.locator(SCENE).screenshot(path=str(artifacts / "graph-scene-turned.png"))
    page.close()
