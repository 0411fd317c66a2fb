"""The debugging desk and the trajectory view in real JupyterLab (headless Chromium, Playwright).

Every expected value is computed here by posekit's own analysis (parse_numbers,
expected_pose, diagnose) and core (read_rotation, write_rotation), then compared with
what the page shows and with the data plotly.js holds in the page.
"""

from __future__ import annotations

import re
import time
from dataclasses import dataclass

import numpy as np
from scipy.spatial.transform import Rotation

import posekit as pk
from posekit.analysis.diagnose import diagnose, expected_pose
from posekit.io.paste import parse_numbers
from posekit.desk_scenarios import row_drive
from posekit.view.frames import frame_points
from posekit.view.trajectory import flagged_spans, row_rotation

from harness import write_notebook

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
    # the desk reads the expected numbers with the bar's fields off posekit's defaults, never the unit
    # (typed angles without one are degrees, radians scored too): posekit's analysis called the same way
    ref = diagnose(expected_pose(EXPECTED, "euler", None), parse_numbers(text), expected_convention=CONV)
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


# --- time to answer: from an empty notebook to the right corrected code, in the fewest actions --------

DESK_LINE = "from posekit.widgets import DebugDesk; DebugDesk()"


def _q_text(values):
    return " ".join(f"{v:.9f}" for v in values)


@dataclass(frozen=True)
class Bug:
    """An invented bug: what the engineer expected, what the system gave, how their code read it."""

    name: str
    expected: str           # typed into the 'pose you expected' box
    got: str                # pasted into the 'numbers you got' box
    setting: tuple | None   # (field, value): the reading their code used, set in the convention bar
    sentence: str           # what the desk must name first
    reference: object       # () -> the corrected numbers, by scipy.spatial.transform.Rotation
    quaternion: bool = False


BUGS = (
    Bug("degrees read as radians", "40 -15 8", "40 -15 8", ("unit", "radians"),
        "The angles were written in degrees but read as radians.",
        # scipy: intrinsic ZYX written in degrees, read back in radians (the reading the code uses)
        lambda: Rotation.from_euler("ZYX", [40, -15, 8], degrees=True).as_euler("ZYX")),
    Bug("quaternion scalar-last read as scalar-first", "30 -10 5",
        _q_text(Rotation.from_euler("ZYX", [30, -10, 5], degrees=True).as_quat()),   # scipy: scalar last
        None, "The quaternion was written scalar-last but read scalar-first.",
        lambda: Rotation.from_euler("ZYX", [30, -10, 5], degrees=True).as_quat(scalar_first=True), True),
    Bug("z-y-x sequence read as x-y-z", "yawed 25 degrees left, pitched 10 degrees up, rolled 5 degrees right",
        # scipy: the pose in words is intrinsic z 25, y -10 (nose up), x 5; the system wrote it z-y-x
        _q_text(Rotation.from_euler("ZYX", [25, -10, 5], degrees=True).as_euler("ZYX", degrees=True)),
        ("sequence", "x-y-z"), "The Euler sequence is z-y-x but was read as x-y-z.",
        # scipy: upper case = intrinsic; the same pose written x-y-z, as the code reads it
        lambda: Rotation.from_euler("ZYX", [25, -10, 5], degrees=True).as_euler("XYZ", degrees=True)),
)


def _open_empty_notebook(lab, name: str):
    """A new notebook with one empty cell, open in the page, its kernel idle (the harness's way of opening,
    without running the cells: an empty cell never gets an execution count)."""
    write_notebook(lab.root / name, [""])
    page = lab.context.new_page()
    page.set_default_timeout(90_000)
    lab._pages = getattr(lab, "_pages", 0) + 1
    page.goto(f"http://127.0.0.1:{lab.port}/lab/workspaces/posekit-{lab._pages}/tree/{name}?reset&token={lab.token}")
    page.wait_for_selector(".jp-NotebookPanel .jp-Cell .cm-content", state="attached")
    page.wait_for_function(
        "() => { const w = window.jupyterapp && window.jupyterapp.shell.currentWidget; return !!(w && "
        "w.sessionContext && w.sessionContext.session && w.sessionContext.session.kernel && "
        "w.sessionContext.session.kernel.status === 'idle'); }", timeout=120_000)
    return page


def answer_from_empty_notebook(lab, bug: Bug, name: str):
    """Drive the desk the shortest way from an empty notebook to the corrected code.

    -> (page, actions, seconds, code).  An action is one thing a person does: type a line, run it, type or
    paste into a box, click or choose one control.  The clock starts at the first action (the notebook is
    open and its kernel idle) and stops when the corrected code is in the page.
    """
    page = _open_empty_notebook(lab, name)
    actions = []
    start = time.perf_counter()
    page.locator(".jp-NotebookPanel .jp-Cell .cm-content").first.click()
    page.keyboard.insert_text(DESK_LINE)
    actions.append("type the cell")
    page.keyboard.press("Shift+Enter")
    actions.append("run it")
    page.wait_for_selector(".posekit-desk-expected textarea", timeout=120_000)
    page.locator(".posekit-desk-expected textarea").fill(bug.expected)
    actions.append("type the pose expected")
    page.locator(".posekit-desk-paste textarea").fill(bug.got)
    actions.append("paste the numbers got")
    if bug.setting is not None:
        field, value = bug.setting
        if field == "sequence":
            page.locator(".posekit-setting-sequence select").select_option(value)
        else:
            page.locator(f".posekit-setting-{field} button").filter(has_text=re.compile(f"^{value}")).click()
        actions.append(f"choose {field} {value}")
    # the list and the code box are separate widgets whose updates reach the page one after the other:
    # wait for the code written back in the reading just chosen, not the one before it
    reading = bug.setting[1] if bug.setting is not None else ""
    page.wait_for_function(
        "([want, reading]) => { const l = document.querySelector('.posekit-desk-list .widget-radio-box label');"
        " const c = document.querySelector('.posekit-desk-code textarea');"
        " const back = c ? c.value.split('written back in your reading')[1] : undefined;"
        " return l && l.textContent.trim().startsWith(want) && c && c.value.includes('corrected =')"
        " && back !== undefined && back.includes(reading); }",
        arg=["1. " + bug.sentence, reading], timeout=120_000)
    seconds = time.perf_counter() - start
    return page, actions, seconds, page.locator(".posekit-desk-code textarea").input_value()


def _run_code(code: str) -> np.ndarray:
    scope = {}
    exec(code, scope)  # the corrected code as the page shows it (posekit's generated snippet)
    return np.asarray(scope["corrected"], dtype=float)


def _check_corrected(bug: Bug, got: np.ndarray) -> None:
    want = np.asarray(bug.reference(), dtype=float)
    if bug.quaternion:  # q and -q are the same turn
        assert min(np.max(np.abs(got - want)), np.max(np.abs(got + want))) < 1e-6, (got, want)
    else:
        np.testing.assert_allclose(got, want, atol=1e-6)


def _copy_and_check(lab, page, selector: str, text: str) -> str:
    """Click a copy button; the text reaches the clipboard, or is shown selected in a read-only box."""
    page.locator(f"{selector} button.pk-copy-button").click()
    page.wait_for_function("(sel) => { const s = document.querySelector(sel + ' .pk-copy-status');"
                           " return s && s.textContent.length > 0; }", arg=selector)
    status = page.locator(f"{selector} .pk-copy-status").inner_text()
    if status == "copied":
        assert page.evaluate("() => navigator.clipboard.readText()") == text
        return "clipboard"
    assert "selected below" in status
    box = page.locator(f"{selector} textarea.pk-copy-box")
    assert box.is_visible() and box.input_value() == text
    start, end = page.evaluate("(sel) => { const b = document.querySelector(sel + ' textarea.pk-copy-box');"
                               " return [b.selectionStart, b.selectionEnd]; }", selector)
    assert (start, end) == (0, len(text))
    return "selected box"


def test_three_invented_bugs_answered_from_an_empty_notebook(lab, artifacts):
    lab.context.grant_permissions(["clipboard-read", "clipboard-write"], origin=f"http://127.0.0.1:{lab.port}")
    for k, bug in enumerate(BUGS):
        page, actions, seconds, code = answer_from_empty_notebook(lab, bug, f"answer_{k}.ipynb")
        print(f"{bug.name}: {len(actions)} actions, {seconds:.1f} s ({'; '.join(actions)})")
        assert len(actions) <= 5, actions
        # the time it took is a target of benchmarks/bench_time_to_answer.py, not asserted here
        _check_corrected(bug, _run_code(code))
        # the corrected numbers the page shows are the same ones
        shown = page.locator(".posekit-desk-detail code.posekit-desk-corrected").inner_text()
        _check_corrected(bug, np.array([float(v) for v in shown.split(",")]))
        # how the expected input was read is said in one line
        line = expected_pose(bug.expected).guess.line()   # posekit's analysis, directly
        assert page.locator(".posekit-desk-read-as").inner_text().strip().startswith(line)
        how = _copy_and_check(lab, page, ".posekit-desk-copy-code", code)
        print(f"  copy code: {how}")
        if k == 0:
            # where the page may not write the clipboard, the numbers are shown selected in a read-only box
            page.evaluate("() => { navigator.clipboard.writeText = () => Promise.reject(new Error('refused')); }")
            assert _copy_and_check(lab, page, ".posekit-desk-copy-numbers", shown) == "selected box"
            # the expected numbers re-read with one click: the read-as line follows
            page.locator(".posekit-desk-choice-unit").click()
            page.wait_for_function("() => document.querySelector('.posekit-desk-read-as').textContent"
                                   ".includes('in radians')")
            page.locator(".posekit-desk-choice-unit").click()
            page.wait_for_function("() => document.querySelector('.posekit-desk-read-as').textContent"
                                   ".includes('in degrees')")
            # a bad paste clears what came from the last one: no list, no code, words say why
            page.locator(".posekit-desk-paste textarea").fill("40 -15 banana")
            page.wait_for_function("() => document.querySelector('.posekit-desk-code textarea').value === '' &&"
                                   " document.querySelector('.posekit-desk-detail').textContent"
                                   ".includes('nothing from an earlier input is kept on show')")
            assert page.locator(".posekit-desk-list .widget-radio-box label").count() == 0
        if k == 1:
            # apply the fix, then undo it: the list says 'no error', then the first answer again
            page.locator(".posekit-desk-apply").click()
            page.wait_for_function("() => { const l = document.querySelector('.posekit-desk-list .widget-radio-box label');"
                                   " return l && l.textContent.includes('no convention error'); }")
            page.locator(".posekit-desk-undo").click()
            page.wait_for_function("(want) => { const l = document.querySelector('.posekit-desk-list .widget-radio-box label');"
                                   " return l && l.textContent.trim().startsWith(want); }", arg="1. " + bug.sentence)
            assert page.locator(".posekit-desk-paste textarea").input_value() == bug.got
            page.set_viewport_size({"width": 1400, "height": 1900})
            page.wait_for_timeout(400)
            page.locator(".posekit-desk").first.screenshot(path=str(artifacts / "desk-answer.png"))
            page.set_viewport_size({"width": 1400, "height": 1000})
        page.close()
