"""The planar explorer in real JupyterLab: a heading typed into its box and a slider moved by
keyboard; the arrows plotly.js draws and the 3x3 matrix the page shows are checked against the
planar rotation written out here (common practice: R(h) = [[cos h, -sin h], [sin h, cos h]],
origin in the last column), not against posekit."""

from __future__ import annotations

import math

import numpy as np

SEL = ".posekit-planar"


def _cells():
    return ["from posekit.widgets import PlanarExplorer\n"
            "pe = PlanarExplorer(x=1.0, y=-0.5, heading=30.0)\n"
            "pe"]


def _expected_points(x, y, heading_degrees):
    h = math.radians(heading_degrees)
    c, s = math.cos(h), math.sin(h)
    xs = [x, x + c, None, x, x - s]
    ys = [y, y + s, None, y, y + c]
    return xs, ys


def _frame(lab, page):
    found = [t for t in lab.plot_data(page, SEL) if t["name"] == "frame"]
    assert len(found) == 1
    return found[0]


def _assert_points(trace, x, y, heading):
    xs, ys = _expected_points(x, y, heading)
    np.testing.assert_allclose(np.array(trace["x"], dtype=float), np.array(xs, dtype=float), atol=1e-9,
                               equal_nan=True)
    np.testing.assert_allclose(np.array(trace["y"], dtype=float), np.array(ys, dtype=float), atol=1e-9,
                               equal_nan=True)


def _wait_change(page, before_x):
    page.wait_for_function(
        "([sel, old]) => { const gd = document.querySelector(sel + ' .js-plotly-plot');"
        " const t = gd && gd.data && gd.data.find(d => d.name === 'frame');"
        " return !!t && JSON.stringify(Array.from(t.x)) !== old; }",
        arg=[SEL, __import__("json").dumps(before_x, separators=(",", ":"))], timeout=30_000)


def test_heading_typed_and_slid_by_keyboard_draws_the_rotated_frame(lab, artifacts):
    page = lab.open_notebook("planar_keys.ipynb", _cells())
    page.wait_for_function("(sel) => { const gd = document.querySelector(sel + ' .js-plotly-plot');"
                           " return gd && gd.data && gd.data.length > 1; }", arg=SEL, timeout=90_000)
    start = _frame(lab, page)
    _assert_points(start, 1.0, -0.5, 30.0)
    # axis titles carry the length unit, as rendered
    titles = page.evaluate(f"() => {{ const l = document.querySelector('{SEL} .js-plotly-plot')._fullLayout;"
                           " return [l.xaxis.title.text, l.yaxis.title.text]; }")
    assert all(t.endswith("(m)") for t in titles), titles

    box = page.locator(".posekit-number-planar-heading input")
    box.fill("120")
    box.press("Enter")
    _wait_change(page, start["x"])
    _assert_points(_frame(lab, page), 1.0, -0.5, 120.0)
    # the matrix readout shows cos and sin of 120 degrees
    page.wait_for_function("() => document.querySelector('.posekit-planar-readouts').textContent.includes('0.866')",
                           timeout=30_000)
    text = page.locator(".posekit-planar-readouts").inner_text()
    assert f"{math.cos(math.radians(120)):.4f}" in text and f"{math.sin(math.radians(120)):.4f}" in text

    before = _frame(lab, page)
    page.locator(".posekit-slider-planar-x .noUi-handle").first.focus()
    page.keyboard.press("ArrowRight")  # one step of 0.05 m
    _wait_change(page, before["x"])
    _assert_points(_frame(lab, page), 1.05, -0.5, 120.0)
    assert abs(float(page.locator(".posekit-number-planar-x input").input_value()) - 1.05) < 1e-9
    # every arrow still carries its letter after the moves (plotly.js dropped them once on restyle)
    letters = page.evaluate(f"() => [...document.querySelectorAll('{SEL} .textpoint text')]"
                            ".map(t => t.textContent.trim()).filter(t => t)")
    assert sorted(letters) == sorted(["x", "y", "x\u2080", "y\u2080"]), letters
    page.locator(SEL).screenshot(path=str(artifacts / "planar-after-keys.png"))
    page.close()
