"""The side-by-side sweep view in real JupyterLab: pitch swept through 90 degrees under z-y-x.

The expected numbers come from posekit's analysis layer (sweep_one_angle, computed
here in the test process) and posekit's core (write_rotation); they are compared with
the data plotly.js holds in the page after the position slider moved by keyboard.
Fact used: z-y-x (yaw, pitch, roll) locks at pitch 90 degrees -- ISO 1151-2 /
ANSI/AIAA R-004-1992 (from memory, DEVELOPERS.md "Outside sources"); the sweep itself
says at which step the readback jumps.
"""

from __future__ import annotations

import json

import numpy as np

from posekit import write_rotation
from posekit.analysis import sweep_one_angle
from posekit.view.sweep import SWEEP_TRACES

CONV = "sequence=z-y-x unit=degrees"
HELD = (30.0, 0.0, 20.0)
VALUES = np.linspace(60.0, 120.0, 61)  # the view's default: 30 degrees either side of the pole
START = 29
SEL = ".posekit-singularity"
SWEEP_PLOT = ".posekit-sweep-plot"
FAMILY_PLOT = ".posekit-family-plot"
CELLS = [
    "from posekit.widgets import SingularityView\n"
    f"view = SingularityView(angles={HELD!r}, swept=1, convention={CONV!r}, position={START})\n"
    "view",
]


def _gd(page, selector, expression):
    return page.evaluate(
        "([sel, expr]) => { const gd = document.querySelector(sel + ' .js-plotly-plot');"
        " if (!gd || !gd.data) return null; return (new Function('gd', 'return ' + expr))(gd); }",
        [selector, expression])


def _numbers(values):
    return np.array([np.nan if v is None else v for v in values], dtype=float)


def _current_x(page):
    return _gd(page, SWEEP_PLOT, "gd.layout.shapes[0].x0")


def test_position_slider_by_keyboard_shows_the_jump_where_the_sweep_says(lab, artifacts):
    expected = sweep_one_angle(HELD, 1, VALUES, CONV)
    jumps = np.flatnonzero(expected.euler_jumps)
    assert jumps.size >= 1  # the sweep crosses the pole, so the readback must jump somewhere

    page = lab.open_notebook("side_by_side_keys.ipynb", CELLS)
    page.set_viewport_size({"width": 1500, "height": 1500})
    page.evaluate("() => { const a = window.jupyterapp; if (a.shell.leftCollapsed === false) "
                  "a.commands.execute('application:toggle-left-area'); }")
    page.wait_for_function(
        "(sel) => { const gd = document.querySelector(sel + ' .js-plotly-plot'); return gd && gd.data && "
        "gd.data.length === 21 && gd.layout.shapes && gd.layout.shapes.length > 0; }", arg=SWEEP_PLOT)
    assert _current_x(page) == VALUES[START]

    # the Euler panel in the page holds exactly the sweep's readback, and jumps where the sweep says
    data = lab.plot_data(page, SWEEP_PLOT)
    euler = np.stack([_numbers(data[i]["y"]) for i in SWEEP_TRACES["euler"]], axis=-1)
    np.testing.assert_allclose(_numbers(data[0]["x"]), VALUES, atol=1e-12)
    np.testing.assert_allclose(euler, expected.euler, atol=1e-9)
    page_jumps = np.flatnonzero(np.max(np.abs(np.diff(euler, axis=0)), axis=-1) > expected.threshold) + 1
    np.testing.assert_array_equal(page_jumps, jumps)
    quat = np.stack([_numbers(data[i]["y"]) for i in SWEEP_TRACES["quaternion"]], axis=-1)
    np.testing.assert_allclose(quat, expected.quaternion, atol=1e-9)
    matrix = np.stack([_numbers(data[i]["y"]) for i in SWEEP_TRACES["matrix"]], axis=-1)
    np.testing.assert_allclose(matrix, expected.matrix.reshape(-1, 9), atol=1e-9)
    # the shaded bands sit on the jump steps (shape 0 is the current-step line)
    bands = _gd(page, SWEEP_PLOT, "gd.layout.shapes.slice(1).filter(s => s.yref === 'paper')"
                                  ".map(s => [s.x0, s.x1])")
    np.testing.assert_allclose(bands, [[VALUES[k - 1], VALUES[k]] for k in jumps], atol=1e-12)

    # keyboard: focus the position slider's handle and press the right arrow once
    before = json.dumps(data[SWEEP_TRACES["euler_now"]]["x"])
    handle = page.locator(".posekit-position .noUi-handle").first
    handle.focus()
    page.keyboard.press("ArrowRight")
    page.wait_for_function(
        "([sel, want]) => { const gd = document.querySelector(sel + ' .js-plotly-plot');"
        " return gd.layout.shapes[0].x0 === want; }", arg=[SWEEP_PLOT, float(VALUES[START + 1])], timeout=30_000)
    step = START + 1
    moved = lab.plot_data(page, SWEEP_PLOT)
    now = moved[SWEEP_TRACES["euler_now"]]
    assert json.dumps(now["x"]) != before
    np.testing.assert_allclose(now["x"], [VALUES[step]] * 3, atol=1e-12)
    np.testing.assert_allclose(now["y"], expected.euler[step], atol=1e-9)
    # the readout panels show write_rotation of the sweep's rotation at that step
    page.wait_for_function("(t) => document.querySelector('.posekit-position-words').textContent.includes(t)",
                           arg=f"step {step} (of 0\u201360)")
    text = page.locator(".posekit-step-readouts").inner_text()
    for v in write_rotation(expected.rotation[step], "euler", CONV):
        assert f"{v: .4f}".strip() in text
    for v in write_rotation(expected.rotation[step], "matrix", CONV).reshape(9):
        assert f"{v: .4f}".strip().replace("-0.0000", "0.0000") in text
    # at the pole the family plane draws the whole line of equivalent triplets with the readback on it
    family = lab.plot_data(page, FAMILY_PLOT)
    assert family[0]["name"] == "every triplet at the pole"
    assert sum(v is not None for v in family[0]["x"]) > 10
    read = write_rotation(expected.rotation[step], "euler", CONV)
    np.testing.assert_allclose([family[2]["x"][0], family[2]["y"][0]], [read[0], read[2]], atol=1e-9)

    page.wait_for_timeout(400)
    page.locator(SEL).screenshot(path=str(artifacts / "side-by-side-at-pole.png"))

    # one more step: the first step the sweep marks as an Euler jump; the readback is now the other member
    assert expected.euler_jumps[step + 1]
    handle.focus()
    page.keyboard.press("ArrowRight")
    page.wait_for_function(
        "([sel, want]) => { const gd = document.querySelector(sel + ' .js-plotly-plot');"
        " return gd.layout.shapes[0].x0 === want; }", arg=[SWEEP_PLOT, float(VALUES[step + 1])], timeout=30_000)
    page.wait_for_function("() => document.querySelector('.posekit-position-words').textContent"
                           ".includes('readback jumped')")
    family = lab.plot_data(page, FAMILY_PLOT)
    np.testing.assert_allclose([family[2]["x"][0], family[2]["y"][0]], expected.euler[step + 1, [0, 2]], atol=1e-9)
    page.wait_for_timeout(400)
    page.locator(SEL).screenshot(path=str(artifacts / "side-by-side-after-jump.png"))
    # switch the unit in the page: the held angles keep their meaning (converted, not snapped to the
    # old slider grid and echoed back) and the plot redraws the same sweep in radians
    page.locator(".posekit-setting-unit button", has_text="radians").click()
    rad = sweep_one_angle(np.radians(HELD), 1, np.radians(VALUES), CONV.replace("degrees", "radians"))
    page.wait_for_function(
        "([sel, want]) => { const gd = document.querySelector(sel + ' .js-plotly-plot');"
        " return Math.abs(gd.data[0].x[0] - want) < 1e-12; }", arg=[SWEEP_PLOT, float(rad.parameter[0])],
        timeout=30_000)
    page.wait_for_timeout(1500)  # room for any late slider echo to arrive and (wrongly) apply
    held = [float(page.locator(f".posekit-number-held-{i} input").input_value()) for i in (1, 3)]
    np.testing.assert_allclose(held, np.radians([HELD[0], HELD[2]]), rtol=0, atol=1e-15)
    data = lab.plot_data(page, SWEEP_PLOT)
    euler = np.stack([_numbers(data[i]["y"]) for i in SWEEP_TRACES["euler"]], axis=-1)
    np.testing.assert_allclose(euler, rad.euler, atol=1e-12)
    # no observer raised on the way (an exception would show as error output in the cell)
    assert page.locator(".jp-OutputArea-output[data-mime-type='application/vnd.jupyter.stderr']").count() == 0
    page.close()
