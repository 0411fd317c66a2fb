"""The debugging desk and the trajectory view in real JupyterLab (headless Chromium, Playwright).

Every expected value is computed here by posekit's own analysis (parse_numbers,
expected_pose, diagnose) and core (read_rotation, write_rotation), then compared with
what the page shows and with the data plotly.js holds in the page.
"""

from __future__ import annotations

import numpy as np

import posekit as pk
from posekit.analysis.diagnose import diagnose, expected_pose
from posekit.io.paste import parse_numbers
from posekit.desk_scenarios import row_drive
from posekit.view.frames import frame_points
from posekit.view.trajectory import flagged_spans, row_rotation

CONV = "sequence=z-y-x unit=degrees"
EXPECTED = "30 -10 5"
DESK_CELL = ("from posekit.widgets import DebugDesk\n"
             f"desk = DebugDesk(expected={EXPECTED!r}, expected_kind='euler', convention={CONV!r})\n"
             "desk")
FIG = ".posekit-desk-3d"


def _flat(points):
    return [None if v is None else float(v) for v in points]


def _wait_trace(page, selector, index, points, timeout=30_000):
    """Wait until trace ``index`` of the plot under ``selector`` holds ``points`` (x, y, z) to 1e-9."""
    page.wait_for_function(
        "([sel, k, want]) => { const gd = document.querySelector(sel + ' .js-plotly-plot');"
        " if (!gd || !gd.data || !gd.data[k]) return false; const t = gd.data[k];"
        " return ['x', 'y', 'z'].every((c, j) => { const got = Array.from(t[c]); const w = want[j];"
        " return got.length === w.length && got.every((v, i) => (v === null || w[i] === null) ? v === w[i] :"
        " Math.abs(v - w[i]) < 1e-9); }); }",
        arg=[selector, index, [_flat(p) for p in points]], timeout=timeout)


def _assert_trace(trace, points):
    for c, want in zip("xyz", points):
        got = np.array([np.nan if v is None else v for v in trace[c]], dtype=float)
        w = np.array([np.nan if v is None else v for v in want], dtype=float)
        np.testing.assert_allclose(got, w, atol=1e-12, equal_nan=True)


def test_paste_scalar_last_where_scalar_first_was_expected(lab, artifacts):
    page = lab.open_notebook("desk_paste.ipynb", [DESK_CELL])
    page.wait_for_selector(f"{FIG} .js-plotly-plot", timeout=90_000)
    # the engineer's numbers: the expected pose logged as a scalar-last quaternion (posekit's core)
    q = pk.write_rotation(pk.read_rotation([30.0, -10.0, 5.0], "euler", CONV), "quaternion", "scalar=last")
    text = ", ".join(f"{v:.6f}" for v in q)
    box = page.locator(".posekit-desk-paste textarea")
    box.click()
    box.press_sequentially(text, delay=15)
    ref = diagnose(expected_pose(EXPECTED, "euler", CONV), parse_numbers(text), expected_convention=CONV)
    first = ref.best.sentence
    assert first == "The quaternion was written scalar-last but read scalar-first."
    # the last message of the handler for the whole text is the overlay restyle: wait for it, then read the list
    as_read = pk.read_rotation(parse_numbers(text).numbers, "quaternion", CONV, normalise=True)
    _wait_trace(page, FIG, 3, frame_points(as_read))
    _wait_trace(page, FIG, 4, frame_points(ref.best.corrected_rotation))
    page.wait_for_function(
        "(want) => { const l = document.querySelector('.posekit-desk-list .widget-radio-box label');"
        " return l && l.textContent.trim().startsWith(want); }", arg="1. " + first, timeout=30_000)
    labels = page.locator(".posekit-desk-list .widget-radio-box label").all_text_contents()
    assert len(labels) == len(ref.explanations)
    for label, e in zip(labels, ref.explanations):
        assert label.strip().startswith(f"{e.rank}. {e.sentence}")
    # the overlays plotly.js holds: expected, observed as read (scalar first), observed corrected
    data = lab.plot_data(page, FIG)
    assert [data[k]["name"] for k in (1, 3, 4)] == ["expected", "observed as read", "observed corrected"]
    _assert_trace(data[1], frame_points(pk.read_rotation([30.0, -10.0, 5.0], "euler", CONV)))
    _assert_trace(data[3], frame_points(as_read))
    _assert_trace(data[4], frame_points(ref.best.corrected_rotation))
    code = page.locator(".posekit-desk-code textarea").input_value()
    assert code == ref.best.code
    page.set_viewport_size({"width": 1400, "height": 1900})
    page.wait_for_timeout(500)
    page.locator(".posekit-desk").first.screenshot(path=str(artifacts / "desk-after-paste.png"))
    page.set_viewport_size({"width": 1400, "height": 1000})

    # keyboard: Tab from the first explanation to the second, Space chooses it; its correction is drawn
    page.locator(".posekit-desk-list input").first.focus()
    page.keyboard.press("Tab")
    page.keyboard.press("Space")
    _wait_trace(page, FIG, 4, frame_points(ref.explanations[1].corrected_rotation))
    page.wait_for_function("(want) => document.querySelector('.posekit-desk-code textarea').value === want",
                           arg=ref.explanations[1].code)
    page.close()


def test_garbage_shows_the_error_and_a_span_click_shows_its_pose(lab, artifacts):
    drive = row_drive()
    cells = [DESK_CELL,
             "from posekit.widgets import TrajectoryView\nfrom posekit.desk_scenarios import row_drive\n"
             "view = TrajectoryView(row_drive().report())\nview"]
    page = lab.open_notebook("desk_errors.ipynb", cells)
    page.wait_for_selector(f"{FIG} .js-plotly-plot", timeout=90_000)
    garbage = "0.5, 0.5, banana, <b>0.5</b>"
    page.locator(".posekit-desk-paste textarea").fill(garbage)
    try:
        parse_numbers(garbage)
        raise AssertionError("posekit read the garbage")
    except pk.PoseInputError as exc:
        err = exc
    page.wait_for_function(
        "(want) => { const e = document.querySelector('.posekit-desk-understood'); return e && "
        "e.textContent.includes(want); }", arg=err.reason, timeout=30_000)
    shown = page.locator(".posekit-desk-understood pre").inner_text()
    assert shown.rstrip() == err.excerpt.rstrip()  # the caret line, the markup shown as text
    assert page.locator(".posekit-desk-understood b").count() == 0
    assert f"line {err.line}, column {err.column}" in page.locator(".posekit-desk-understood").inner_text()
    page.locator(".posekit-desk-understood").scroll_into_view_if_needed()
    page.screenshot(path=str(artifacts / "desk-garbage.png"), full_page=False)

    # the trajectory view: click the time-gap marker in the flagged-spans strip
    report = drive.report()
    spans, _ = flagged_spans(report)
    k = next(i for i, s in enumerate(spans) if s.finding == "time_gaps")
    sel = ".posekit-trajectory-series-box"
    page.wait_for_selector(f"{sel} .js-plotly-plot", timeout=90_000)
    page.wait_for_function("(sel) => { const gd = document.querySelector(sel + ' .js-plotly-plot');"
                           " return gd && gd.data && gd.data.some(t => t.name === 'time gap') && gd._fullLayout; }",
                           arg=sel)
    page.locator(sel).scroll_into_view_if_needed()
    page.wait_for_timeout(500)
    point = page.evaluate(
        "([sel, name]) => { const gd = document.querySelector(sel + ' .js-plotly-plot');"
        " const ti = gd.data.findIndex(t => t.name === name); const t = gd.data[ti];"
        " const xa = gd._fullLayout[t.xaxis.replace('x', 'xaxis')], ya = gd._fullLayout[t.yaxis.replace('y', 'yaxis')];"
        " const r = gd.getBoundingClientRect();"
        " return {x: r.left + xa._offset + xa.d2p(t.x[0]), y: r.top + ya._offset + ya.d2p(t.y[0])}; }",
        [sel, "time gap"])
    page.mouse.move(point["x"], point["y"])
    page.wait_for_timeout(300)
    page.mouse.click(point["x"], point["y"])
    row = spans[k].first_row
    prev = row - 1
    _wait_trace(page, ".posekit-trajectory-pose-box", 1, frame_points(row_rotation(report, row)))
    # the pose drawn is the logged quaternion of that row (read by posekit's core, another route)
    want = pk.read_rotation(drive.quaternions[row], "quaternion")
    data = lab.plot_data(page, ".posekit-trajectory-pose-box")
    _assert_trace(data[1], frame_points(row_rotation(report, row)))
    assert np.degrees(pk.angle_between(want, row_rotation(report, row))) < 1e-9
    _assert_trace(data[3], frame_points(row_rotation(report, prev)))
    listed = page.locator(".posekit-trajectory-spans select").input_value()
    assert listed == spans[k].words()  # the list follows the click
    page.set_viewport_size({"width": 1400, "height": 2000})
    page.wait_for_timeout(500)
    page.locator(".posekit-trajectory-view").scroll_into_view_if_needed()
    page.locator(".posekit-trajectory-view").screenshot(path=str(artifacts / "trajectory-view.png"))
    page.close()
