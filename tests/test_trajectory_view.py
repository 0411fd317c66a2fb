"""The trajectory figure and view draw exactly the report's numbers; picking a span shows its pose.

References: the report comes from posekit.analysis.trajectory.check_trajectory; the
pose of a row is checked against the *input* quaternion read by posekit's core
(read_rotation) and compared with angle_between, so the view's Euler-readback route
is checked against a different path.  Test data is built here (invented numbers).
"""

from __future__ import annotations

import numpy as np
import pytest
from plotly.callbacks import Points

import posekit as pk
from posekit.io.state import state_from_json, state_to_json
from posekit.analysis.trajectory import check_trajectory
from posekit.desk_scenarios import row_drive
from posekit.view.frames import FRAME_UIDS, frame_points, overlay_uid, trace_index
from posekit.view.trajectory import (FLAG_STYLES, HIGHLIGHT, flag_uid, flagged_spans, row_rotation, span_shape,
                                     trajectory_figure)
from posekit.widgets import TrajectoryView

CONV = "sequence=z-y-x unit=degrees"


def _tr(fig, uid):
    """The trace with this uid, looked up (never by position)."""
    return fig.data[trace_index(fig, uid)]


def _shape(fig, name):
    return next(fig.select_shapes(selector=dict(name=name)))


def _drive():
    n = 120
    t = np.arange(n) * 0.1
    t[80:] += 2.0                                      # a gap
    angles = np.column_stack([170 + 0.3 * np.arange(n), 10 * np.sin(t), np.zeros(n)])
    angles[60, 2] = 30.0                               # a fast bump
    q = pk.write_rotation(pk.read_rotation(angles, "euler", CONV), "quaternion")
    q[20:30] *= -1                                     # stored sign flips
    return t, q, check_trajectory(t, q, "quaternion", CONV, rate_limit=100.0)


@pytest.fixture(scope="module")
def drive():
    return _drive()


def test_every_flagged_span_is_listed_in_time_order(drive):
    _, _, report = drive
    spans, total = flagged_spans(report)
    want = sorted((s.first_row, name) for name, f in report.findings.items() if f.checked for s in f.spans)
    assert total == len(want) == len(spans)
    assert sorted((s.first_row, s.finding) for s in spans) == want
    assert [s.first_time for s in spans] == sorted(s.first_time for s in spans)
    kinds = {s.finding for s in spans}
    assert {"quaternion_sign_flips", "euler_wraps", "time_gaps", "rate_above_limit"} <= kinds


def test_figure_holds_the_report_numbers(drive):
    _, _, report = drive
    spans, _ = flagged_spans(report)
    fig = trajectory_figure(report, spans=spans)
    for k in range(3):
        np.testing.assert_array_equal(_tr(fig, f"euler-{k + 1}").y, report.euler_wrapped[:, k])
    for k in range(4):
        np.testing.assert_array_equal(_tr(fig, f"quaternion-{k + 1}").y, report.quaternion[:, k])
    np.testing.assert_array_equal(_tr(fig, "rate").y, report.rate)
    # one shaded box per span (covering its times, named after it) plus the hidden highlight box
    assert len(fig.layout.shapes) == len(spans) + 1
    for n, s in enumerate(spans):
        box = _shape(fig, span_shape(n))
        assert box.x0 <= s.first_time and box.x1 >= s.last_time
    assert _shape(fig, HIGHLIGHT).visible is False
    # the strip: each finding kind its own symbol and word, customdata pointing back at the span
    for name in FLAG_STYLES:
        trace = _tr(fig, flag_uid(name))
        assert trace.name == FLAG_STYLES[name][0]
        for idx in trace.customdata or ():
            assert spans[idx].finding == name
    # the rate limit from the report's settings is drawn
    assert _tr(fig, "rate-limit").name == "rate limit" and list(_tr(fig, "rate-limit").y) == [100.0, 100.0]
    # every axis carries its unit; ticks never use SI prefixes (a "600\u03bc" tick would change the unit)
    assert fig.layout.yaxis.title.text == "deg" and fig.layout.yaxis3.title.text == "deg per time unit"
    assert fig.layout.xaxis4.title.text == "time (time units)"
    assert trajectory_figure(report, spans=spans, time_unit="s").layout.xaxis4.title.text == "time (s)"
    for axis in ("xaxis", "yaxis", "xaxis3", "yaxis3", "xaxis4"):
        assert fig.layout[axis].exponentformat == "power", axis


def test_choosing_a_span_shows_that_pose(drive):
    _, q, report = drive
    view = TrajectoryView(report)
    assert view.shown_rows() == (None, None)
    assert not _tr(view.pose_figure, FRAME_UIDS["frame"]).visible
    flips = [k for k, s in enumerate(view.spans) if s.finding == "quaternion_sign_flips"]
    view.span_list.value = flips[0]         # keyboard choice in the list
    row, prev = view.shown_rows()
    assert row == view.spans[flips[0]].first_row == 20 and prev == 19
    want = pk.read_rotation(q[row], "quaternion")
    got = row_rotation(report, row)
    assert np.degrees(pk.angle_between(want, got)) < 1e-9
    xs, ys, zs = frame_points(got)
    frame = _tr(view.pose_figure, FRAME_UIDS["frame"])
    assert frame.name == "pose at the span" and list(frame.x) == xs and list(frame.z) == zs
    xs, ys, zs = frame_points(row_rotation(report, prev))
    before = _tr(view.pose_figure, overlay_uid(0))
    assert before.name == "one used row before" and list(before.y) == ys
    box = _shape(view.series, HIGHLIGHT)
    assert box.visible and box.x0 == _shape(view.series, span_shape(flips[0])).x0
    assert "row 20" in view.detail.value


def test_clicking_a_strip_marker_chooses_its_span(drive):
    _, _, report = drive
    view = TrajectoryView(report)
    trace = _tr(view.series, flag_uid("time_gaps"))
    assert trace.name == "time gap"
    view._on_click(trace, Points(point_inds=[0], xs=[trace.x[0]], ys=[trace.y[0]], trace_name=trace.name,
                                 trace_index=0), None)
    span = view.spans[view.chosen_span]
    assert span.finding == "time_gaps" and view.span_list.value == view.chosen_span
    assert view.shown_rows()[0] == span.first_row == 80


def test_euler_input_has_no_quaternion_to_follow():
    t = np.arange(30.0)
    heading = np.remainder(np.linspace(170, 200, 30) + 180, 360) - 180   # logged wrapped: jumps at 180
    angles = np.column_stack([heading, np.zeros(30), np.zeros(30)])
    report = check_trajectory(t, angles, "euler", CONV)
    fig = trajectory_figure(report)
    assert all(len(_tr(fig, f"quaternion-{k + 1}").x) == 0 for k in range(4))
    assert any("not quaternions" in (a.text or "") for a in fig.layout.annotations)
    view = TrajectoryView(report)
    wrap = next(k for k, s in enumerate(view.spans) if s.finding == "euler_wraps")
    view.chosen_span = wrap
    row = view.shown_rows()[0]
    assert np.degrees(pk.angle_between(row_rotation(report, row),
                                       pk.read_rotation(angles[row], "euler", CONV))) < 1e-9


def test_clicks_still_choose_a_span_after_the_plot_is_shown_again(drive):
    _, _, report = drive
    view = TrajectoryView(report)
    old = view.series
    view.series_plot.retry()                 # what the "show the plot again" button asks for
    assert view.series is not old and view.series_plot.attempts == 2
    assert [t.uid for t in view.series.data] == [t.uid for t in old.data]
    i = trace_index(view.series, flag_uid("time_gaps"))
    trace = view.series.data[i]
    # the click message as the page sends it to the new figure
    view.series.set_state({"_js2py_pointsCallback": {"event_type": "plotly_click", "points": {
        "trace_indexes": [i], "point_indexes": [0], "xs": [trace.x[0]], "ys": [trace.y[0]]}}})
    assert view.chosen_span >= 0 and view.spans[view.chosen_span].finding == "time_gaps"


def test_state_round_trip(drive):
    _, _, report = drive
    view = TrajectoryView(report, chosen_span=2)
    state = view.to_state()
    assert state_from_json(state_to_json(state)) == state
    assert state.settings["chosen_span"] == 2 and len(state.poses) == 2
    again = TrajectoryView.from_state(state, report)
    assert again.chosen_span == 2 and again.to_state() == state


def test_demo_drive_flags_what_it_says():
    report = row_drive().report()
    counts = report.counts()
    for name in ("quaternion_sign_flips", "euler_wraps", "near_gimbal_lock", "time_gaps", "rate_above_limit"):
        assert counts[name] > 0, name


def test_bad_input_is_refused(drive):
    _, _, report = drive
    with pytest.raises(pk.PoseInputError, match="TrajectoryReport"):
        TrajectoryView("not a report")
    view = TrajectoryView(report)
    with pytest.raises(pk.PoseInputError, match="chosen_span"):
        view.chosen_span = 10_000
    with pytest.raises(pk.PoseInputError, match="row"):
        row_rotation(report, report.rows)


def test_code_cell_reopens_the_view_on_the_rebuilt_report():
    from posekit.desk_scenarios import row_drive
    from posekit.widgets import TrajectoryView

    view = TrajectoryView(row_drive().report(), chosen_span=2)
    ns = {"report": row_drive().report()}  # rebuilt from the same (invented demo) log
    exec(view.code_cell(), ns)
    assert ns["widget"].to_state() == view.to_state()
