"""The frame-graph widget in real JupyterLab: frames chosen with the keyboard, an edge flipped.

The expected numbers are computed here by posekit (the graph's lookups and placements,
and the view's frame_points / graph_traces) and compared with the data plotly.js holds
in the page.  The rover is invented demo data; these tests check that the page shows
what posekit computes for it, not the rover's numbers themselves.
"""

from __future__ import annotations

import json

import numpy as np

from posekit.analysis.scenarios import ROVER_BACKWARDS_EDGE, orchard_rover, orchard_rover_planar
from posekit.view.frames import frame_points
from posekit.view.graph import FIRST_FRAME_TRACE, graph_traces

SEL = ".posekit-graph-explorer"
PATH_TRACE = 2


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
    page.wait_for_selector(f"{SEL} .js-plotly-plot", timeout=90_000)
    page.wait_for_function(
        "(sel) => { const gd = document.querySelector(sel + ' .js-plotly-plot'); return gd && gd.data && "
        "gd.data.length > 5; }", arg=SEL)
    return page


def _trace(lab, page, name):
    data = lab.plot_data(page, SEL)
    found = [t for t in data if t["name"] == name]
    assert found, [t["name"] for t in data]
    return found[0]


def _numbers(values):
    return np.array([np.nan if v is None else v for v in values], dtype=float)


def _assert_same(got, want_xyz):
    for axis, want in zip("xyz", want_xyz):
        np.testing.assert_allclose(_numbers(got[axis]), _numbers(want), atol=1e-9, equal_nan=True)


def _wait_change(page, index, before):
    page.wait_for_function(
        "([sel, i, old]) => { const gd = document.querySelector(sel + ' .js-plotly-plot');"
        " return !!(gd && gd.data && gd.data[i] && gd.data[i].x) &&"
        " JSON.stringify(Array.from(gd.data[i].x)) !== old; }",
        arg=[SEL, index, json.dumps(before, separators=(",", ":"))], timeout=30_000)


def test_keyboard_lookup_and_flipped_edge_match_posekit(lab, artifacts):
    g = orchard_rover()
    page = _open(lab, "graph_keys.ipynb", planar=False)
    start_path = _trace(lab, page, "lookup path")
    want, facts = graph_traces(g, root="base", lookup=g.lookup("world", "imu"))
    _assert_same(start_path, (want[PATH_TRACE].x, want[PATH_TRACE].y, want[PATH_TRACE].z))

    # keyboard: focus the "coordinates in" list and step from imu to camera
    select = page.locator(".posekit-graph-from select")
    select.focus()
    page.keyboard.press("ArrowDown")
    _wait_change(page, PATH_TRACE, start_path["x"])
    assert select.input_value() == "camera"
    look = g.lookup("world", "camera")
    want, facts = graph_traces(g, root="base", lookup=look)
    _assert_same(_trace(lab, page, "lookup path"),
                 (want[PATH_TRACE].x, want[PATH_TRACE].y, want[PATH_TRACE].z))
    # every frame is drawn where posekit's lookup from the drawing root puts it
    for frame in ("camera", "lidar", "world"):
        m = g.lookup("base", frame).matrix
        _assert_same(_trace(lab, page, frame), frame_points(m[:3, :3], m[:3, 3], facts["scale"]))
    page.wait_for_function("() => document.querySelector('.posekit-graph-readouts').textContent"
                           ".includes('coordinates in camera -> coordinates in world')", timeout=30_000)
    readouts = page.locator(".posekit-graph-readouts").inner_text()
    t = look.readout("sequence=z-y-x unit=degrees").translation
    assert f"{t[0]: .4f}".strip() in readouts and f"{t[2]: .4f}".strip() in readouts
    assert page.locator(".posekit-graph-loops").inner_text().count("\u2717") == 1  # one loop does not close

    # click: choose the backwards edge and flip it
    lidar_index = [t["name"] for t in lab.plot_data(page, SEL)].index("lidar")
    before = _trace(lab, page, "lidar")["x"]
    page.locator(".posekit-graph-edge select").select_option(index=ROVER_BACKWARDS_EDGE)
    page.wait_for_function("() => !!document.querySelector('.posekit-graph-edge-convention')")
    page.locator(".posekit-graph-flip").click()
    _wait_change(page, lidar_index, before)
    fixed = g.flipped(ROVER_BACKWARDS_EDGE)
    m = fixed.lookup("base", "lidar").matrix
    # the widget keeps the arrow length it first drew (facts from the graph as entered)
    _assert_same(_trace(lab, page, "lidar"), frame_points(m[:3, :3], m[:3, 3], facts["scale"]))
    page.wait_for_function("() => !document.querySelector('.posekit-graph-loops').textContent.includes('\u2717')",
                           timeout=30_000)
    assert page.locator(".posekit-graph-edge-convention .posekit-setting-direction button.mod-active") \
        .inner_text().strip() == "parent \u2192 child"
    page.set_viewport_size({"width": 1400, "height": 1900})  # tall enough for the whole widget
    page.wait_for_timeout(500)
    page.locator(SEL).screenshot(path=str(artifacts / "graph-after-flip.png"))
    page.close()


def test_planar_graph_edge_direction_by_keyboard(lab, artifacts):
    g = orchard_rover_planar()
    page = _open(lab, "graph_planar.ipynb", planar=True)
    lidar_index = [t["name"] for t in lab.plot_data(page, SEL)].index("lidar")
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
        "w.textContent.includes('coordinates in lidar -> coordinates in base'); }", timeout=30_000)
    button = page.locator(".posekit-graph-edge-convention .posekit-setting-direction button",
                          has_text="parent \u2192 child")
    button.focus()
    page.keyboard.press("Space")
    _wait_change(page, lidar_index, before["x"])
    fixed = g.flipped(ROVER_BACKWARDS_EDGE)
    m = fixed.lookup("base", "lidar").matrix
    want_x = [m[0, 2], m[0, 2] + s * m[0, 0], None, m[0, 2], m[0, 2] + s * m[0, 1]]
    want_y = [m[1, 2], m[1, 2] + s * m[1, 0], None, m[1, 2], m[1, 2] + s * m[1, 1]]
    got = _trace(lab, page, "lidar")
    np.testing.assert_allclose(_numbers(got["x"]), _numbers(want_x), atol=1e-9, equal_nan=True)
    np.testing.assert_allclose(_numbers(got["y"]), _numbers(want_y), atol=1e-9, equal_nan=True)
    page.set_viewport_size({"width": 1400, "height": 1900})
    page.wait_for_timeout(500)
    page.locator(SEL).screenshot(path=str(artifacts / "graph-planar-after-flip.png"))
    page.close()
