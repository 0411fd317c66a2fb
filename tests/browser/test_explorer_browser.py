"""The explorer in real JupyterLab: keyboard on a slider, convention toggles in both modes.

The expected numbers are computed here by posekit's core (read_rotation and the
view's frame_points) and compared with the data plotly.js holds in the page.
"""

from __future__ import annotations

import numpy as np

from posekit import read_rotation, write_rotation
from posekit.view.frames import frame_points

CONV = "sequence=z-y-x unit=degrees"
CELLS = [
    "from posekit.widgets import Explorer\n"
    f"ex = Explorer(angles=(30.0, -10.0, 0.0), convention={CONV!r})\n"
    "ex",
]
FRAME_TRACE = 1
SEL = ".posekit-explorer"


def _page_frame(lab, page):
    data = lab.plot_data(page, SEL)
    t = data[FRAME_TRACE]
    assert t["name"] == "frame"
    return t


def _expected(rotation):
    xs, ys, zs = frame_points(rotation)
    return xs, ys, zs


def _assert_frame(trace, rotation):
    xs, ys, zs = _expected(rotation)
    for got, want in ((trace["x"], xs), (trace["y"], ys), (trace["z"], zs)):
        g = np.array([np.nan if v is None else v for v in got], dtype=float)
        w = np.array([np.nan if v is None else v for v in want], dtype=float)
        np.testing.assert_allclose(g, w, atol=1e-12, equal_nan=True)


def _wait_frame_change(page, before_x):
    page.wait_for_function(
        "([sel, old]) => { const gd = document.querySelector(sel + ' .js-plotly-plot');"
        " return gd && gd.data && JSON.stringify(Array.from(gd.data[1].x)) !== old; }",
        arg=[SEL, str(before_x).replace("None", "null").replace(" ", "")], timeout=30_000)


def _open(lab, name):
    page = lab.open_notebook(name, CELLS)
    page.wait_for_selector(f"{SEL} .js-plotly-plot", timeout=90_000)
    page.wait_for_function(
        "(sel) => { const gd = document.querySelector(sel + ' .js-plotly-plot'); return gd && gd.data && gd.data.length > 1; }",
        arg=SEL)
    return page


def _box_values(page):
    return [float(page.locator(f".posekit-number-angle-{i} input").input_value()) for i in (1, 2, 3)]


def _json_x(trace):
    import json

    return json.dumps(trace["x"], separators=(",", ":"))


def test_slider_moves_with_keyboard_and_plot_matches_core(lab, artifacts):
    page = _open(lab, "explorer_keys.ipynb")
    start = _page_frame(lab, page)
    _assert_frame(start, read_rotation([30.0, -10.0, 0.0], "euler", CONV))
    handle = page.locator(".posekit-slider-angle-1 .noUi-handle").first
    handle.focus()
    page.keyboard.press("ArrowRight")
    page.wait_for_function(
        "() => document.querySelector('.posekit-number-angle-1 input').value === '31'", timeout=30_000)
    page.wait_for_function(
        "([sel, old]) => { const gd = document.querySelector(sel + ' .js-plotly-plot');"
        " return JSON.stringify(Array.from(gd.data[1].x)) !== old; }", arg=[SEL, _json_x(start)])
    moved = _page_frame(lab, page)
    # expected from posekit's core for the angles the page now shows
    _assert_frame(moved, read_rotation([31.0, -10.0, 0.0], "euler", CONV))
    # a convention setting by keyboard alone: the sequence list, next choice with ArrowDown
    page.locator(".posekit-setting-sequence select").focus()
    before = _page_frame(lab, page)
    page.keyboard.press("ArrowDown")
    page.wait_for_function(
        "([sel, old]) => { const gd = document.querySelector(sel + ' .js-plotly-plot');"
        " return JSON.stringify(Array.from(gd.data[1].x)) !== old; }", arg=[SEL, _json_x(before)])
    assert page.locator(".posekit-setting-sequence select").input_value() == "x-y-x"
    _assert_frame(_page_frame(lab, page), read_rotation([31.0, -10.0, 0.0], "euler", "sequence=x-y-x unit=degrees"))
    page.screenshot(path=str(artifacts / "explorer-after-keyboard.png"), full_page=True)
    page.close()


def test_convention_toggle_keep_numbers_then_keep_orientation(lab, artifacts):
    page = _open(lab, "explorer_toggle.ipynb")
    start = _page_frame(lab, page)
    # keep the numbers: the same (30, -10, 0) now read about the fixed axes
    page.locator(".posekit-setting-axes button", has_text="extrinsic").click()
    page.wait_for_function(
        "([sel, old]) => { const gd = document.querySelector(sel + ' .js-plotly-plot');"
        " return JSON.stringify(Array.from(gd.data[1].x)) !== old; }", arg=[SEL, _json_x(start)])
    extrinsic = read_rotation([30.0, -10.0, 0.0], "euler", CONV + " axes=extrinsic")
    _assert_frame(_page_frame(lab, page), extrinsic)
    assert _box_values(page) == [30.0, -10.0, 0.0]

    # keep the orientation: back to intrinsic, the frame stays, the numbers change
    page.locator(".posekit-keep label", has_text="keep the orientation").click()
    page.wait_for_timeout(300)
    page.locator(".posekit-setting-axes button", has_text="intrinsic").click()
    want = write_rotation(extrinsic, "euler", CONV)
    page.wait_for_function(
        "(want) => [1, 2, 3].every(i => Math.abs(parseFloat(document.querySelector("
        "'.posekit-number-angle-' + i + ' input').value) - want[i - 1]) < 1e-6)",
        arg=[float(v) for v in want], timeout=30_000)
    np.testing.assert_allclose(_box_values(page), want, atol=1e-6)
    _assert_frame(_page_frame(lab, page), extrinsic)
    assert not np.allclose(want, [30.0, -10.0, 0.0], atol=1e-3)  # the numbers really changed
    # keep the orientation across a unit change: the numbers become exact radians
    page.locator(".posekit-setting-unit button", has_text="radians").click()
    rad = np.radians(want)
    page.wait_for_function(
        "(want) => [1, 2, 3].every(i => Math.abs(parseFloat(document.querySelector("
        "'.posekit-number-angle-' + i + ' input').value) - want[i - 1]) < 1e-6)",
        arg=[float(v) for v in rad], timeout=30_000)
    page.wait_for_timeout(1500)  # let any slider echo from the page arrive
    np.testing.assert_allclose(_box_values(page), rad, atol=1e-6)
    _assert_frame(_page_frame(lab, page), extrinsic)
    page.screenshot(path=str(artifacts / "explorer-after-toggles.png"), full_page=True)
    page.close()
