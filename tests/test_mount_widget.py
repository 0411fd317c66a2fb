"""The mount finder widget (posekit.widgets.MountFinder), in process, against scipy ground truth.

The two logs are generated here and written as CSV files: the body's orientation from
scipy.spatial.transform.RotationSpline through random key orientations (test_alignment's
``_truth``), a known mount, world frame and clock offset, and B's numbers written *by scipy*
under the true convention, then stated to the widget under a slipped one.  What the widget
shows (the offset in its readout, the mount's numbers, the sentence, the code, the data in its
plots) is checked against that ground truth (scipy, named beside each check) as well as
against posekit's own API.
"""

from __future__ import annotations

import html
import math
import re

import numpy as np
import pytest
from scipy.spatial.transform import Rotation
from test_alignment import A_RATE, DURATION, _nominal, _streams, _truth

from posekit.analysis.alignment import align_streams, read_stream_log
from posekit.io.state import load_state, save_state
from posekit.view.alignment import RESIDUAL_UIDS, SPEED_UIDS
from posekit.widgets import MountFinder

_BAD_WORDS = ("align_streams", "read_stream_log", "values_a", "values_b", "times_a", "times_b", "nominal_mount",
              "reading_b", "value_columns", "time_column")


def _write(path, header, times, values):
    rows = np.column_stack([times, values])
    path.write_text(",".join(header) + "\n" + "\n".join(",".join(repr(float(v)) for v in r) for r in rows) + "\n")
    return str(path)


@pytest.fixture(scope="module")
def euler_logs(tmp_path_factory):
    """A: scalar-first quaternions (scipy); B: Z-Y-X Euler angles written in degrees (scipy), to be read as radians."""
    folder = tmp_path_factory.mktemp("logs")
    truth = _truth(11)
    ta, ra, _, tb, rb, _ = _streams(truth)
    a = _write(folder / "imu.csv", ["time", "qw", "qx", "qy", "qz"], ta, ra.as_quat(scalar_first=True))
    b = _write(folder / "camera.csv", ["stamp", "yaw_deg", "pitch_deg", "roll_deg"], tb,
               rb.as_euler("ZYX", degrees=True))                               # scipy: upper case = intrinsic
    return truth, a, b, tb, rb


@pytest.fixture(scope="module")
def finder(euler_logs):
    _, a, b, _, _ = euler_logs
    return MountFinder(a, b, reading_a="scalar=first", reading_b="sequence=z-y-x", run=True)


def _shown_numbers(html_text):
    """The raw numbers of a readout table: each cell's hover title (exact value), else its text."""
    cells = re.findall(r"<td(?: title='([^']*)')?>([^<]*)</td>", html_text)
    return [float(html.unescape(title or text)) for title, text in cells]


def _angle_deg(a, b):
    return float(np.degrees((Rotation.from_matrix(a).inv() * Rotation.from_matrix(b)).magnitude()))   # scipy


def test_the_widget_shows_what_align_streams_finds(euler_logs, finder):
    _, a, b, _, _ = euler_logs
    la, lb = read_stream_log(a), read_stream_log(b)
    ref = align_streams(la.times, la.values, "scalar=first", lb.times, lb.values, "sequence=z-y-x")
    r = finder.result
    assert r is not None and r.offset == ref.offset and r.sentence == ref.sentence
    assert np.array_equal(r.mount, ref.mount)
    assert finder.code_box.value.endswith(ref.best.code) and finder.copy_code.text == finder.code_box.value
    assert finder.code_box.value.startswith("# logged_numbers: stream B's rows (yaw_deg, pitch_deg, roll_deg)")


def test_offset_mount_and_slip_shown_match_scipy_ground_truth(euler_logs, finder):
    truth, _, _, _, _ = euler_logs
    # the offset as the readout writes it (format_number, 4 decimals): within one sample period of the truth
    shown = re.search(r"add <b>([+-][0-9.]+) s</b>", finder.offset_readout.value)
    assert shown is not None, finder.offset_readout.value
    assert abs(float(shown.group(1)) - truth["offset"]) <= 1.0 / A_RATE
    assert "one standard deviation" in finder.offset_readout.value
    # the mount as numbers in the user's reading of B (z-y-x intrinsic, radians): scipy's as_euler("ZYX")
    numbers = _shown_numbers(finder.mount_readout.value)
    angles = numbers[:3]
    assert re.search(r"about z \(rad\).*about y \(rad\).*about x \(rad\)", finder.mount_readout.value)
    want = truth["mount"].as_matrix()
    got = Rotation.from_euler("ZYX", angles).as_matrix()                        # scipy reads them back
    assert _angle_deg(got, want) <= 0.1
    matrix = np.array(numbers[3:12]).reshape(3, 3)                               # the canonical matrix shown
    assert _angle_deg(matrix, want) <= 0.1
    # the injected slip, named first, with its sentence
    assert "The angles were written in degrees but read as radians." in finder.verdict.value
    assert "pk-ok" in finder.verdict.value


def test_plot_data_are_scipys_angular_speed_before_and_after_the_shift(euler_logs, finder):
    truth, _, _, tb, _ = euler_logs
    fig = finder.speed_plot.figure
    a_after = fig.data[fig.index(SPEED_UIDS[2])]
    b_before = fig.data[fig.index(SPEED_UIDS[1])]
    b_after = fig.data[fig.index(SPEED_UIDS[3])]
    xb, yb = np.array(b_after.x), np.array(b_after.y)
    assert len(xb) > 500
    omega = np.degrees(np.linalg.norm(truth["spline"](xb, 1), axis=1))        # scipy RotationSpline: rate vector
    assert np.sqrt(np.mean((yb - omega) ** 2)) <= 1e-3 * np.sqrt(np.mean(omega ** 2))
    xa, ya = np.array(a_after.x), np.array(a_after.y)
    omega_a = np.degrees(np.linalg.norm(truth["spline"](xa, 1), axis=1))     # scipy
    assert np.sqrt(np.mean((ya - omega_a) ** 2)) <= 1e-3 * np.sqrt(np.mean(omega_a ** 2))
    # before the shift B sits on its own clock: its stamps, offset by the generated clock offset
    xbb = np.array(b_before.x)
    assert np.allclose(xb - xbb, finder.result.offset) and xbb[0] >= tb[0] and xbb[-1] <= tb[-1]
    assert abs((xb - xbb)[0] - truth["offset"]) <= 1.0 / A_RATE
    off = np.degrees(np.linalg.norm(truth["spline"](np.clip(xbb, 0, DURATION), 1), axis=1))
    assert np.sqrt(np.mean((np.array(b_before.y) - off) ** 2)) > 0.05 * np.sqrt(np.mean(off ** 2))
    titles = [a.text for a in fig.layout.annotations]
    assert any("shifted by +" in t and " s (\u00b1 " in t for t in titles), titles
    assert fig.layout.yaxis.title.text == "angular speed (deg/s)"


def test_residual_plot_holds_the_residual_per_pair_in_degrees(finder):
    fig = finder.residual_plot.figure
    rot = fig.data[fig.index(RESIDUAL_UIDS[0])]
    r = finder.result.residuals
    assert np.allclose(rot.y, r.rotation_degrees) and np.allclose(rot.x, r.times.mean(axis=1))
    assert max(rot.y) < 0.5                                                   # the default tolerance, degrees
    tol = fig.data[fig.index(RESIDUAL_UIDS[1])]
    assert list(tol.y) == [0.5, 0.5]
    assert len(fig.data[fig.index(RESIDUAL_UIDS[2])].y) == 0                  # no positions in these logs
    assert "no positions compared" in fig.layout.annotations[0].text        # said, and the panel hidden
    assert fig.layout.yaxis2.visible is False and list(fig.layout.yaxis.domain) == [0.0, 1.0]
    assert fig.layout.yaxis.title.text == "deg" and fig.layout.yaxis2.title.text == "m"


def test_editing_marks_stale_and_an_unreadable_input_clears_everything(euler_logs):
    _, a, b, _, _ = euler_logs
    f = MountFinder(a, b, reading_a="scalar=first", reading_b="sequence=z-y-x", run=True)
    assert f.result is not None and f.stale.value == ""
    f.box_b.time.value = "stamp"                                               # still readable: stale
    assert "changed since these results" in f.stale.value and f.result is not None
    assert "posekit-mount-results-stale" in f.results._dom_classes
    f.box_b.reading.value = "sequence=z-y-q"                                   # no longer readable: cleared
    assert f.result is None
    assert f.verdict.value == "" and f.code_box.value == "" and f.copy_code.text == ""
    assert f.offset_readout.value == "" and f.mount_readout.value == ""
    fig = f.speed_plot.figure
    assert all(len(fig.data[fig.index(u)].x) == 0 for u in SPEED_UIDS)
    assert "stream B's 'reading' box" in html.unescape(f.message.value) and f.run_button.disabled
    assert "No result shown" in f.stale.value
    f.box_b.reading.value = "sequence=z-y-x"
    assert not f.run_button.disabled
    f.run_button.click()
    assert f.result is not None and "The angles were written in degrees" in f.verdict.value


@pytest.mark.parametrize("change,box", [
    ({"path_a": "no/such/file.csv"}, "stream A's 'log file' box"),
    ({"values_b": "yaw_deg, pitch, roll_deg"}, "stream B's 'value columns' box: no column 'pitch'"),
    ({"values_b": "yaw_deg,,roll_deg"}, "stream B's 'value columns' box"),
    ({"time_b": "stamp, yaw_deg"}, "stream B's 'time column' box"),
    ({"nominal_mount": "banana 3"}, "the 'nominal mount' box"),
    ({"rotation_tolerance": "-1"}, "the 'rotation tolerance' box"),
    ({"max_offset": "soon"}, "the 'largest clock offset' box"),
    ({"kind_b": "quaternion"}, "stream B's value columns"),
])
def test_messages_name_the_widgets_boxes_not_python_names(euler_logs, change, box):
    _, a, b, _, _ = euler_logs
    settings = dict(reading_a="scalar=first", reading_b="sequence=z-y-x")
    settings.update(change)
    f = MountFinder(settings.pop("path_a", a), b, **settings)
    f.find()
    assert f.result is None
    text = html.unescape(re.sub(r"<[^>]+>", " ", f.message.value))
    assert box in text, text
    assert not any(word in text for word in _BAD_WORDS), text


def test_times_out_of_order_name_the_streams_time_column(tmp_path):
    truth = _truth(12)
    ta, ra, _, tb, rb, _ = _streams(truth)
    tb = tb.copy()
    tb[40], tb[41] = tb[41], tb[40]
    a = _write(tmp_path / "a.csv", ["t", "qw", "qx", "qy", "qz"], ta, ra.as_quat(scalar_first=True))
    b = _write(tmp_path / "b.csv", ["t", "qx", "qy", "qz", "qw"], tb, rb.as_quat())
    f = MountFinder(a, b, reading_a="scalar=first", reading_b="scalar=last", run=True)
    text = html.unescape(f.message.value)
    assert f.result is None and "stream B's time column: not strictly increasing at sample 41" in text


def test_ties_are_shown_with_what_separates_them_and_the_nominal_mount_names_the_slip(tmp_path):
    """Scalar-last numbers read scalar-first: relative motions cannot see a reordering of the four numbers
    (test_alignment), so without a nominal mount the true reading is listed as fitting as well with another
    mount; with the mount from the drawing typed in (scipy's quaternion of a mount 2 degrees off the truth)
    the slip is named first."""
    truth = _truth(41)
    ta, ra, _, tb, rb, _ = _streams(truth)
    a = _write(tmp_path / "a.csv", ["time", "qw", "qx", "qy", "qz"], ta, ra.as_quat(scalar_first=True))
    b = _write(tmp_path / "b.csv", ["time", "q0", "q1", "q2", "q3"], tb, rb.as_quat())   # scipy: scalar last
    f = MountFinder(a, b, reading_a="scalar=first", reading_b="scalar=first", run=True)
    assert f.result.best.near_tie
    shown = html.unescape(f.verdict.value)
    assert "near tie" in shown and "only the mount does" in shown
    assert "written scalar-last but read scalar-first" in shown
    drawing = Rotation.from_matrix(_nominal(truth, 41)).as_quat(scalar_first=True)   # scipy, in B's reading
    f.nominal_mount = " ".join(repr(float(v)) for v in drawing)
    assert "quaternion" in f.nominal_status.value
    f.find()
    assert f.result.sentence == "The quaternion was written scalar-last but read scalar-first (stated)."
    assert _angle_deg(f.result.mount_rotation, truth["mount"].as_matrix()) <= 0.1
    assert "deg from the nominal mount given" in f.mount_readout.value
    q = np.array(_shown_numbers(f.mount_readout.value)[:4])                    # shown in B's reading: w, x, y, z
    want = truth["mount"].as_quat(scalar_first=True)                           # scipy
    assert min(np.max(np.abs(q - want)), np.max(np.abs(q + want))) <= math.radians(0.1)


def test_poses_with_positions_show_the_position_residual_in_metres(tmp_path):
    truth = _truth(13)
    ta, ra, pa, tb, rb, pb = _streams(truth)
    m = np.tile(np.eye(4), (len(pb), 1, 1))
    m[:, :3, :3], m[:, :3, 3] = rb.as_matrix(), pb                             # scipy: as_matrix
    a = _write(tmp_path / "a.csv", ["t", "x", "y", "z", "qw", "qx", "qy", "qz"], ta,
               np.column_stack([pa, ra.as_quat(scalar_first=True)]))
    b = _write(tmp_path / "b.csv", ["t"] + [f"m{i}{j}" for i in range(4) for j in range(4)], tb,
               np.linalg.inv(m).reshape(-1, 16))                                # written child-from-parent
    f = MountFinder(a, b, reading_a="scalar=first", reading_b="", run=True)
    assert "child-from-parent (the inverse transform)" in f.verdict.value
    assert np.max(np.abs(f.result.mount_translation - truth["mount_t"])) <= 1e-3      # the generated mount
    fig = f.residual_plot.figure
    tr = fig.data[fig.index(RESIDUAL_UIDS[2])]
    assert np.allclose(tr.y, f.result.residuals.translation) and max(tr.y) < 0.005
    assert fig.layout.yaxis2.visible is True and fig.layout.yaxis.domain[0] > 0.3    # both panels shown
    numbers = _shown_numbers(f.mount_readout.value)[:16]
    mount = np.array(numbers).reshape(4, 4)                                    # row by row, as stated
    assert _angle_deg(mount[:3, :3], truth["mount"].as_matrix()) <= 0.1
    assert np.allclose(mount[:3, 3], truth["mount_t"], atol=1e-3)


def test_state_code_cell_and_report_rebuild_the_same_result(euler_logs, finder, tmp_path, monkeypatch):
    state = finder.to_state()
    assert state.widget == "mount-finder" and state.settings["run"] is True
    assert len(state.poses) == 1
    assert _angle_deg(state.poses[0].matrix[:3, :3], finder.result.mount_rotation) < 1e-9
    save_state(state, tmp_path / "s.json")
    again = MountFinder.from_state(load_state(tmp_path / "s.json"))
    assert again.result.offset == finder.result.offset
    namespace: dict = {}
    exec(finder.code_cell(), namespace)                                       # the cell a notebook would run
    assert namespace["finder"].result.offset == finder.result.offset
    monkeypatch.chdir(tmp_path)
    finder.share.name_box.value = "mount-report"
    finder.share.report_button.click()
    page = (tmp_path / "mount-report.html").read_text()
    assert "The angles were written in degrees but read as radians." in page
    assert "time offset: add" in page


def test_bad_keyword_values_raise_typed_errors():
    from posekit.core.errors import PoseInputError

    with pytest.raises(PoseInputError, match="kind_a"):
        MountFinder(kind_a="banana")
    with pytest.raises(PoseInputError, match="path_b"):
        MountFinder(path_b="a\nb")


def test_the_view_puts_a_unit_on_every_axis_and_thins_long_curves_keeping_their_peaks(finder):
    from posekit.view.alignment import correlation_figure, envelope_indices, pair_residual_figure, speed_figure

    r = finder.result
    for fig in (speed_figure(r), correlation_figure(r), pair_residual_figure(r)):
        layout = fig.to_plotly_json()["layout"]
        axes = [k for k in layout if re.fullmatch(r"[xy]axis\d*", k)]
        assert axes
        for k in axes:
            title = layout[k].get("title", {}).get("text", "")
            assert re.search(r"\((s|deg/s|no unit)\)|^deg$|^m$|\(s\), middle", title), (k, title)
    rng = np.random.default_rng(5)
    y = np.cumsum(rng.normal(size=100_000))
    k = envelope_indices(y, 4000)
    assert len(k) <= 4000 and np.all(np.diff(k) > 0)
    assert y[k].max() == y.max() and y[k].min() == y.min()
    # every bucket's extremes survive: the drawn envelope equals the true one bucket by bucket
    size = -(-len(y) // 2000)
    for start in range(0, len(y), size * 97):
        part = k[(k >= start) & (k < start + size)]
        assert y[part].max() == y[start:start + size].max() and y[part].min() == y[start:start + size].min()
