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
from posekit.view.readouts import format_number
from posekit.view.sweep import FAMILY_TRACES, SWEEP_TRACES

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


def _traces(page, selector):
    """uid -> the trace plotly.js holds in the page (traces are found by uid, never by position)."""
    return page.evaluate(
        "(sel) => { const gd = document.querySelector(sel + ' .js-plotly-plot'); if (!gd || !gd.data) return null;"
        " return Object.fromEntries(gd.data.map(t => [t.uid, {name: t.name, x: t.x ? Array.from(t.x) : null,"
        " y: t.y ? Array.from(t.y) : null, visible: t.visible}])); }", selector)


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
    data = _traces(page, SWEEP_PLOT)
    assert set(data) == {u for v in SWEEP_TRACES.values() for u in ((v,) if isinstance(v, str) else v)}
    euler = np.stack([_numbers(data[i]["y"]) for i in SWEEP_TRACES["euler"]], axis=-1)
    np.testing.assert_allclose(_numbers(data[SWEEP_TRACES["euler"][0]]["x"]), VALUES, atol=1e-12)
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
    moved = _traces(page, SWEEP_PLOT)
    now = moved[SWEEP_TRACES["euler_now"]]
    assert json.dumps(now["x"]) != before
    np.testing.assert_allclose(now["x"], [VALUES[step]] * 3, atol=1e-12)
    np.testing.assert_allclose(now["y"], expected.euler[step], atol=1e-9)
    # the readout panels show write_rotation of the sweep's rotation at that step
    page.wait_for_function("(t) => document.querySelector('.posekit-position-words').textContent.includes(t)",
                           arg=f"step {step} (of 0\u201360)")
    text = page.locator(".posekit-step-readouts").inner_text()
    for v in write_rotation(expected.rotation[step], "euler", CONV):
        assert format_number(v, 4) in text
    for v in write_rotation(expected.rotation[step], "matrix", CONV).reshape(9):
        assert format_number(v, 4) in text
    # no panel spills out of the readout area (long words wrap inside their boxes)
    assert page.evaluate("() => { const r = document.querySelector('.posekit-step-readouts');"
                         " return [...r.querySelectorAll('.pk-panel')].every(p => p.scrollWidth <= p.clientWidth + 1)"
                         " && r.scrollWidth <= r.clientWidth + 1; }")
    # at the pole the family plane draws the whole line of equivalent triplets with the readback on it
    family = _traces(page, FAMILY_PLOT)
    line, back = family[FAMILY_TRACES["family"]], family[FAMILY_TRACES["readback"]]
    assert line["name"] == "every triplet at the pole"
    assert sum(v is not None for v in line["x"]) > 10
    read = write_rotation(expected.rotation[step], "euler", CONV)
    np.testing.assert_allclose([back["x"][0], back["y"][0]], [read[0], read[2]], atol=1e-9)

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
    back = _traces(page, FAMILY_PLOT)[FAMILY_TRACES["readback"]]
    np.testing.assert_allclose([back["x"][0], back["y"][0]], expected.euler[step + 1, [0, 2]], atol=1e-9)
    page.wait_for_timeout(400)
    page.locator(SEL).screenshot(path=str(artifacts / "side-by-side-after-jump.png"))
    # switch the unit in the page: the held angles keep their meaning (converted, not snapped to the
    # old slider grid and echoed back) and the plot redraws the same sweep in radians
    page.locator(".posekit-setting-unit button", has_text="radians").click()
    rad = sweep_one_angle(np.radians(HELD), 1, np.radians(VALUES), CONV.replace("degrees", "radians"))
    page.wait_for_function(
        "([sel, uid, want]) => { const gd = document.querySelector(sel + ' .js-plotly-plot');"
        " const t = gd.data.find(d => d.uid === uid); return Math.abs(t.x[0] - want) < 1e-12; }",
        arg=[SWEEP_PLOT, SWEEP_TRACES["euler"][0], float(rad.parameter[0])], timeout=30_000)
    page.wait_for_timeout(1500)  # room for any late slider echo to arrive and (wrongly) apply
    # the boxes show readable radians; the exact converted value is on hover (no snap to the old grid)
    want = np.radians([HELD[0], HELD[2]])
    shown = [float(page.locator(f".posekit-number-held-{i} input").input_value()) for i in (1, 3)]
    np.testing.assert_allclose(shown, want, rtol=0, atol=5e-7)
    exact = [page.evaluate("(sel) => { const b = document.querySelector(sel); const t = b.closest('[title]') ||"
                           " b.querySelector('[title]'); return t ? t.getAttribute('title') : null; }",
                           f".posekit-number-held-{i}") for i in (1, 3)]
    assert all(e and e.startswith("exact value: ") for e in exact), exact
    np.testing.assert_allclose([float(e.split(": ")[1]) for e in exact], want, rtol=0, atol=1e-15)
    data = _traces(page, SWEEP_PLOT)
    euler = np.stack([_numbers(data[i]["y"]) for i in SWEEP_TRACES["euler"]], axis=-1)
    np.testing.assert_allclose(euler, rad.euler, atol=1e-12)
    # a refused range typed into a box: the message says why, and wraps inside its column
    start = page.locator(".posekit-range-from input")
    start.fill("1")
    start.press("Enter")
    page.wait_for_function(
        "([sel, uid]) => { const gd = document.querySelector(sel + ' .js-plotly-plot');"
        " return gd.data.find(d => d.uid === uid).x[0] === 1; }", arg=[SWEEP_PLOT, SWEEP_TRACES["euler"][0]],
        timeout=30_000)
    box = page.locator(".posekit-range-to input")
    box.fill("1")  # the same as "from": refused
    box.press("Enter")
    page.wait_for_function("() => document.querySelector('.posekit-status').textContent.includes('Not applied')",
                           timeout=30_000)
    fits = page.evaluate("() => { const s = document.querySelector('.posekit-status');"
                         " const e = s.querySelector('.pk-error'); const col = s.parentElement;"
                         " return [e.scrollWidth, e.clientWidth, e.getBoundingClientRect().right,"
                         " col.getBoundingClientRect().right]; }")
    assert fits[0] <= fits[1] + 1 and fits[2] <= fits[3] + 1, fits
    # no observer raised on the way (an exception would show as error output in the cell)
    assert page.locator(".jp-OutputArea-output[data-mime-type='application/vnd.jupyter.stderr']").count() == 0
    page.close()
