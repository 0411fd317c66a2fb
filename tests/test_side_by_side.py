"""The side-by-side sweep view, Python side: the figures draw exactly the sweep, the widget
reads out exactly what posekit's core writes, bad input raises typed errors.

Organised by law:

- *the figure is the sweep*: every plotted number equals the Sweep array it stands for,
  over every Euler sequence, both axis choices and the other convention fields;
- *the jump sits at the pole*: the shaded Euler-jump band lies within one step of the
  pole -- middle angle +-90 degrees for Tait-Bryan, 0 / 180 degrees for proper Euler
  (common practice; for z-y-x also ISO 1151-2 / ANSI/AIAA R-004-1992, from memory);
- *every point of the family is the same orientation*: rebuilding each drawn
  (first, pole, third) point with read_rotation gives the step's rotation
  (the pole family of Shuster 1993, section 5, as implemented by euler_solutions);
- *colour is never the only cue*: lines of one panel differ in dash or marker;
- *the readouts are the core's*: the widget's step readouts equal write_rotation of
  the sweep's rotation, and its sweep equals sweep_one_angle of its own traits.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest

import posekit as pk
from posekit.analysis import euler_solutions, sweep_between, sweep_one_angle, sweep_rotations
from posekit.core.convention import CHOICES
from posekit.core.errors import ConventionError, PoseInputError
from posekit.core.rotation import elementary_matrix
from posekit.view.frames import trace_index
from posekit.view.sweep import (FAMILY_TRACES, SWEEP_TRACES, SweepViewError, angle_name, family_data, family_figure,
                                step_marks, sweep_figure, sweep_patch)
from posekit.widgets import SingularityView
from posekit.view.readouts import format_number
from posekit.widgets.side_by_side import MAX_STEPS, SweepSetupError

BASE = [pk.Convention(sequence=s, axes=a, unit="degrees")
        for s, a in itertools.product(CHOICES["sequence"], CHOICES["axes"])]
OTHER = [BASE[0].changed(scalar="last", algebra="jpl", direction="child-from-parent"),
         BASE[7].changed(unit="radians", wrap="positive", action="passive"),
         BASE[14].changed(layout="column-major", scalar="last")]
CONVENTIONS = BASE + OTHER
IDS = [c.to_text().replace(" ", ",") for c in CONVENTIONS]


def _pole(conv) -> float:
    """Middle angle of a pole in the convention's unit (common practice: 90 degrees / 0 degrees)."""
    return (90.0 if conv.is_tait_bryan else 0.0) * (1.0 if conv.degrees else np.pi / 180.0)


def _through_pole(conv, steps=41):
    scale = 1.0 if conv.degrees else np.pi / 180.0
    c = _pole(conv)
    held = np.array([30.0, 0.0, 20.0]) * scale
    values = np.linspace(c - 20.0 * scale, c + 20.0 * scale, steps)
    return sweep_one_angle(held, 1, values, conv)


def _tr(fig, uid):
    """The trace with this uid, looked up (never by position)."""
    return fig.data[trace_index(fig, uid)]


def _y(fig, uid):
    return np.array([np.nan if v is None else v for v in _tr(fig, uid).y], dtype=float)


# --- the figure is the sweep -----------------------------------------------------------------
@pytest.mark.parametrize("conv", CONVENTIONS, ids=IDS)
def test_figure_data_equals_the_sweep_arrays(conv):
    s = _through_pole(conv)
    fig = sweep_figure(s, 7, parameter_label=angle_name(conv, 1, unit=True))
    t = SWEEP_TRACES
    for i, idx in enumerate(t["euler"]):
        np.testing.assert_array_equal(_tr(fig, idx).x, s.parameter)
        np.testing.assert_array_equal(_y(fig, idx), s.euler[:, i])
    for i, idx in enumerate(t["quaternion"]):
        np.testing.assert_array_equal(_y(fig, idx), s.quaternion[:, i])
    for e, idx in enumerate(t["matrix"]):
        np.testing.assert_array_equal(_y(fig, idx), s.matrix[:, e // 3, e % 3])
    np.testing.assert_array_equal(_y(fig, t["gauge"]), s.gauge)
    # legend names follow the convention: scalar order, axis letters
    order = ["w", "x", "y", "z"] if conv.scalar == "first" else ["x", "y", "z", "w"]
    assert [_tr(fig, i).name for i in t["quaternion"]] == order
    assert [_tr(fig, i).name[:10] for i in t["euler"]] == [f"{i + 1}: about {a}" for i, a in
                                                           enumerate(conv.axes_letters)]
    unit = "degrees" if conv.degrees else "radians"
    assert fig.layout.xaxis4.title.text.endswith(unit) and fig.layout.yaxis.title.text == f"angle, {unit}"


@pytest.mark.parametrize("conv", CONVENTIONS[::5], ids=IDS[::5])
def test_current_step_marks_sit_on_the_curves(conv):
    s = _through_pole(conv, 21)
    for k in (0, 9, 10, 20):
        fig = sweep_figure(s, k)
        p = s.parameter[k]
        assert fig.layout.shapes[0].x0 == fig.layout.shapes[0].x1 == p
        assert fig.layout.annotations[4].text == f"step {k} at {format(p, '.6f').rstrip('0').rstrip('.')}"
        np.testing.assert_array_equal(_tr(fig, SWEEP_TRACES["euler_now"]).y, s.euler[k])
        np.testing.assert_array_equal(_tr(fig, SWEEP_TRACES["quaternion_now"]).y, s.quaternion[k])
        np.testing.assert_array_equal(_tr(fig, SWEEP_TRACES["matrix_now"]).y, s.matrix[k].reshape(9))
        np.testing.assert_array_equal(_tr(fig, SWEEP_TRACES["gauge_now"]).y, [s.gauge[k]])
        assert set(_tr(fig, SWEEP_TRACES["euler_now"]).x) == {p}
    # the patch a widget applies is the figure's own data
    marks = step_marks(s, 9)
    patched = sweep_figure(s, 0)
    for uid, data in marks["traces"].items():
        patched.for_each_trace(lambda tr: tr.update(data), selector=dict(uid=uid))
    patched.update_layout(marks["layout"])
    ref = sweep_figure(s, 9)
    assert patched.layout.shapes[0].x0 == ref.layout.shapes[0].x0
    for uid in marks["traces"]:
        np.testing.assert_array_equal(_tr(patched, uid).y, _tr(ref, uid).y)


def _bands(fig, yref):
    return [(sh.x0, sh.x1) for sh in fig.layout.shapes[1:] if sh.yref == yref]


@pytest.mark.parametrize("conv", CONVENTIONS, ids=IDS)
def test_the_euler_jump_band_sits_at_the_pole(conv):
    s = _through_pole(conv)
    fig = sweep_figure(s)
    jumps = np.flatnonzero(s.euler_jumps)
    assert jumps.size >= 1  # the sweep crosses the pole with nonzero outer angles
    assert _bands(fig, "paper") == [(s.parameter[k - 1], s.parameter[k]) for k in jumps]
    spacing = abs(s.parameter[1] - s.parameter[0])
    for x0, x1 in _bands(fig, "paper"):
        assert min(abs(x0 - _pole(conv)), abs(x1 - _pole(conv))) <= spacing + 1e-9
    labels = [a.text for a in fig.layout.annotations]
    assert labels.count("readback jumps") == jumps.size
    # the quaternion (sign kept continuous) and the matrix never jump on this fine path
    assert not s.matrix_jumps.any() and _bands(fig, "y3 domain") == []


def test_written_quaternion_flips_and_matrix_jumps_get_their_own_bands():
    # yaw once round: the written quaternion (w >= 0) flips sign at 180 degrees (double cover, common practice)
    s = sweep_one_angle([0, 10, 0], 0, np.linspace(0, 360, 37), "unit=degrees")
    fig = sweep_figure(s)
    flips = np.flatnonzero(s.quaternion_jumps)
    assert flips.size == 1
    assert _bands(fig, "y2 domain") == [(s.parameter[k - 1], s.parameter[k]) for k in flips]
    # a coarse path of 120-degree turns: the matrix itself jumps at every step
    coarse = sweep_rotations(elementary_matrix("x", np.radians([0.0, 120.0, 240.0])), "unit=degrees")
    fig = sweep_figure(coarse)
    assert _bands(fig, "y3 domain") == [(0.0, 1.0), (1.0, 2.0)]
    assert [a.text for a in fig.layout.annotations].count("matrix jumps") == 2


def test_a_slerp_sweep_draws_too():
    s = sweep_between(np.eye(3), elementary_matrix("y", 3.0), 31, "sequence=z-y-x")
    fig = sweep_figure(s, 15, parameter_label="slerp fraction, 0 to 1")
    np.testing.assert_array_equal(_tr(fig, "euler-1").x, s.parameter)
    assert fig.layout.xaxis4.title.text == "slerp fraction, 0 to 1"


# --- colour is never the only cue -------------------------------------------------------------
def test_lines_of_one_panel_differ_in_dash_or_marker():
    fig = sweep_figure(_through_pole(BASE[0]))
    for key in ("euler", "quaternion", "matrix"):
        styles = [(_tr(fig, i).line.dash, _tr(fig, i).marker.symbol) for i in SWEEP_TRACES[key]]
        assert len(set(styles)) == len(styles), (key, styles)
    fam = family_figure(euler_solutions(_through_pole(BASE[0]).rotation, BASE[0]), 20)
    shapes = [(t.mode, t.marker.symbol) for t in fam.data]
    assert len(set(shapes)) == 3


# --- the pole family ---------------------------------------------------------------------------
@pytest.mark.parametrize("conv", CONVENTIONS, ids=IDS)
def test_every_drawn_family_point_is_the_same_orientation(conv):
    s = _through_pole(conv)
    sol = euler_solutions(s.rotation, conv)
    k = int(np.flatnonzero(sol.at_pole)[0])
    fig = family_figure(sol, k)
    fam = _tr(fig, FAMILY_TRACES["family"])
    pts = np.array([(a, b) for a, b in zip(fam.x, fam.y) if a is not None], dtype=float)
    assert len(pts) == sol.family.shape[-2]
    triplets = np.stack([pts[:, 0], np.full(len(pts), sol.pole_middle[k]), pts[:, 1]], axis=-1)
    assert np.max(pk.angle_between(pk.read_rotation(triplets, "euler", conv), s.rotation[k])) < 1e-9
    # no drawn segment crosses a wrap: consecutive points (no gap between) differ by less than half a turn
    half = 180.0 if conv.degrees else np.pi
    for (a, b), (c, d) in zip(zip(fam.x, fam.y), list(zip(fam.x, fam.y))[1:]):
        if None not in (a, b, c, d):
            assert abs(d - b) <= half
    read = _tr(fig, FAMILY_TRACES["readback"])
    assert (read.x[0], read.y[0]) == (s.euler[k, 0], s.euler[k, 2])
    assert _tr(fig, FAMILY_TRACES["other"]).x == ()
    assert "only first" in family_data(sol, k)["note"]


def test_away_from_the_pole_the_other_triplet_is_drawn_and_the_nearest_family_kept():
    conv = BASE[0]
    s = _through_pole(conv)
    sol = euler_solutions(s.rotation, conv)
    pole = int(np.flatnonzero(sol.at_pole)[0])
    d = family_data(sol, pole - 3)
    assert d["family_step"] == pole and d["traces"][FAMILY_TRACES["family"]]["name"].endswith(f"(step {pole})")
    other = d["traces"][FAMILY_TRACES["other"]]
    triplet = sol.regular[pole - 3, 1]
    assert (other["x"][0], other["y"][0]) == (triplet[0], triplet[2])
    assert float(pk.angle_between(pk.read_rotation(triplet, "euler", conv), s.rotation[pole - 3])) < 1e-9
    # a sweep that never reaches the pole draws no family line
    far = sweep_one_angle([0, 0, 0], 1, np.linspace(-30, 30, 7), "unit=degrees")
    d = family_data(euler_solutions(far.rotation, far.convention), 3)
    assert d["family_step"] is None and d["traces"][FAMILY_TRACES["family"]]["x"] == []


# --- bad input raises typed errors -------------------------------------------------------------
def test_bad_view_inputs_raise_typed_errors():
    s = _through_pole(BASE[0], 11)
    batch = sweep_one_angle([[0, 0, 0], [1, 2, 3]], 1, np.linspace(80, 100, 5), "unit=degrees")
    for call, word in [
        (lambda: sweep_figure("not a sweep"), "expected a posekit.analysis.Sweep"),
        (lambda: sweep_figure(s, 11), "from 0 to 10"),
        (lambda: sweep_figure(s, -1), "from 0 to 10"),
        (lambda: sweep_figure(s, True), "from 0 to 10"),
        (lambda: sweep_figure(s, height=50), "height"),
        (lambda: sweep_figure(batch), "batch"),
        (lambda: sweep_patch(s, 2.5), "step"),
        (lambda: family_figure(s, 0), "EulerSolutions"),
        (lambda: family_figure(euler_solutions(np.eye(3), "unit=degrees"), 0), "one path"),
        (lambda: angle_name(BASE[0], 3), "0, 1 or 2"),
    ]:
        with pytest.raises(SweepViewError) as err:
            call()
        assert isinstance(err.value, PoseInputError) and word in str(err.value)


# --- the widget ---------------------------------------------------------------------------------
WIDGET_CONVENTIONS = [BASE[0], BASE[13], OTHER[0], OTHER[1], BASE[20]]


@pytest.mark.parametrize("conv", WIDGET_CONVENTIONS, ids=[c.to_text().replace(" ", ",") for c in WIDGET_CONVENTIONS])
def test_widget_readouts_equal_write_rotation_of_the_sweep_rotation(conv):
    scale = 1.0 if conv.degrees else np.pi / 180.0
    held = (30.0 * scale, 0.0, 20.0 * scale)
    view = SingularityView(angles=held, swept=1, convention=conv)
    s = view.sweep()
    # the widget's sweep is sweep_one_angle of its own traits, centred on the pole
    lo, hi = view.sweep_range
    assert abs(0.5 * (lo + hi) - _pole(conv)) < 1e-12
    ref = sweep_one_angle(view.angles, 1, np.linspace(lo, hi, view.steps), conv)
    np.testing.assert_array_equal(s.rotation, ref.rotation)
    for k in (0, 29, 30, 31, 60):
        view.position = k
        r = view.current_readout()
        R = s.rotation[k]
        np.testing.assert_array_equal(r.euler, pk.write_rotation(R, "euler", conv))
        np.testing.assert_array_equal(r.matrix, pk.write_rotation(R, "matrix", conv))
        np.testing.assert_array_equal(r.quaternion, pk.write_rotation(R, "quaternion", conv))
        np.testing.assert_array_equal(r.quaternion_along, s.quaternion[k])
        assert r.gauge == s.gauge[k] and r.euler_jump == bool(s.euler_jumps[k])
        assert r.words == euler_solutions(R, conv).words()
        # the triplet the sweep set is the step's rotation; the current rotation is exported as is
        assert float(pk.angle_between(pk.read_rotation(r.entered, "euler", conv), R)) < 1e-12
        np.testing.assert_array_equal(view.current_rotation(), R)
        html = view.readouts.value
        for values, digits in ((r.euler, 4), (r.matrix.reshape(9), 4), (r.quaternion, 5)):
            for v in values:
                assert f">{format_number(v, digits)}</td>" in html
        # the figures show the same step
        assert view.figure.layout.shapes[0].x0 == s.parameter[k]
        np.testing.assert_array_equal(_tr(view.figure, SWEEP_TRACES["euler_now"]).y, s.euler[k])
        fam = _tr(view.family, FAMILY_TRACES["readback"])
        assert (fam.x[0], fam.y[0]) == (s.euler[k, 0], s.euler[k, 2])


def _check_figures(view):
    """The widget's figures, after any sequence of patches, equal freshly built ones."""
    conv = view.convention_value()
    s = view.sweep()
    ref = sweep_figure(s, view.position, parameter_label=angle_name(conv, view.swept, unit=True))
    assert [tr.uid for tr in view.figure.data] == [tr.uid for tr in ref.data]  # the widget keeps the uids
    for uid in (tr.uid for tr in ref.data):
        np.testing.assert_array_equal(_tr(view.figure, uid).x, _tr(ref, uid).x)
        np.testing.assert_array_equal(_tr(view.figure, uid).y, _tr(ref, uid).y)
        assert _tr(view.figure, uid).name == _tr(ref, uid).name
    assert [(sh.x0, sh.x1) for sh in view.figure.layout.shapes] == [(sh.x0, sh.x1) for sh in ref.layout.shapes]
    assert [a.text for a in view.figure.layout.annotations] == [a.text for a in ref.layout.annotations]
    for axis in ("yaxis", "xaxis4"):
        mine, theirs = view.figure.layout[axis], ref.layout[axis]
        assert (mine.title.text, mine.tickvals, mine.ticktext, mine.range) == \
            (theirs.title.text, theirs.tickvals, theirs.ticktext, theirs.range)
    fam = family_figure(view.solutions(), view.position)
    for uid in FAMILY_TRACES.values():
        assert _tr(view.family, uid).x == _tr(fam, uid).x and _tr(view.family, uid).y == _tr(fam, uid).y
    for axis in ("xaxis", "yaxis"):
        assert view.family.layout[axis].title.text == fam.layout[axis].title.text
        assert view.family.layout[axis].ticktext == fam.layout[axis].ticktext


def test_widget_figures_follow_every_sweep_change():
    view = SingularityView(angles=(30.0, 0.0, 20.0), position=10)
    check = lambda: _check_figures(view)  # noqa: E731
    check()
    view.angle_rows[0].box.value = "45"          # a held angle, typed (the box's text)
    assert view.angles == (45.0, 0.0, 20.0)
    check()
    view.range_to.value = "100"                  # the range, typed
    assert view.sweep_range == (60.0, 100.0)
    check()
    view.steps_box.value = 9                     # fewer steps: the position is kept in range
    assert view.steps == 9 and view.position == 8 and view.position_slider.max == 8
    check()
    view.bar.controls["scalar"].value = "last"   # quaternion order: same sweep, new names
    check()
    assert [_tr(view.figure, i).name for i in SWEEP_TRACES["quaternion"]] == ["x", "y", "z", "w"]


def test_unit_change_keeps_the_orientation_and_sequence_change_follows_the_pole():
    view = SingularityView(angles=(30.0, 0.0, 20.0), position=25)
    before = view.current_rotation()
    old_row = view.angle_rows[0]
    view.bar.controls["unit"].value = "radians"
    assert view.convention_value().unit == "radians"
    np.testing.assert_allclose(view.angles, np.radians([30.0, 0.0, 20.0]), atol=1e-15)
    # fresh sliders in the new unit; a late echo from the old degree slider changes nothing
    row = view.angle_rows[0]
    assert row is not old_row and (row.slider.step, row.box.number) == (0.01, view.angles[0])
    angles = view.angles
    old_row.slider.value = 1.0
    assert view.angles == angles
    np.testing.assert_allclose(view.sweep_range, np.radians([60.0, 120.0]), atol=1e-15)
    assert float(pk.angle_between(view.current_rotation(), before)) < 1e-12
    _check_figures(view)
    view.bar.controls["sequence"].value = "z-x-z"  # proper Euler: the pole moves to middle 0 or 180 degrees
    lo, hi = view.sweep_range
    assert abs(hi - lo - np.radians(60.0)) < 1e-12
    assert min(abs(0.5 * (lo + hi)), abs(0.5 * (lo + hi) - np.pi)) < 1e-12
    assert np.min(view.sweep().gauge) < 1e-9    # the recentred sweep reaches the pole
    _check_figures(view)
    view.swept_choice.value = 2                  # sweep the third angle: new axis title
    _check_figures(view)


def test_swept_choice_hides_its_row_and_resets_the_range():
    view = SingularityView(angles=(30.0, 0.0, 20.0))
    assert [r.layout.display for r in view.angle_rows] == [None, "none", None]
    view.swept_choice.value = 0
    assert view.swept == 0 and view.sweep_range == (-150.0, 210.0)   # a full turn about the held value
    assert [r.layout.display for r in view.angle_rows] == ["none", None, None]
    assert view.centre_button.disabled
    view.centre_on_pole()
    assert "Only a sweep of the middle angle" in view.status.value
    view.swept_choice.value = 1
    view.sweep_range = (50.0, 110.0)
    view.centre_on_pole()
    assert view.sweep_range == (60.0, 120.0)


def test_from_rotation_and_back():
    conv = "sequence=z-y-x unit=degrees"
    R = pk.read_rotation([40.0, 75.0, -15.0], "euler", conv)
    view = SingularityView.from_rotation(R, conv)
    assert view.sweep_range == (60.0, 120.0) and view.position == 15
    assert float(pk.angle_between(view.current_rotation(), R)) < 1e-12
    np.testing.assert_allclose(view.angles, [40.0, 75.0, -15.0], atol=1e-12)


def test_position_slider_and_snap_echo():
    view = SingularityView(angles=(30.0, 0.0, 20.0))
    view.position_slider.value = 12              # the page moved the slider
    assert view.position == 12
    view.angle_rows[0].box.value = "30.4"        # off the slider's 1-degree grid
    view.angle_rows[0].slider.value = 30.0       # the page snaps the slider and echoes it back
    assert view.angles[0] == 30.4
    view.angle_rows[0].slider.value = 33.0       # a real slider move
    assert view.angles[0] == 33.0


def test_moving_the_position_sends_one_message_per_figure():
    view = SingularityView(angles=(30.0, 0.0, 20.0))
    sent = {"sweep": 0, "family": 0}
    names = ["_py2js_update", "_py2js_restyle", "_py2js_relayout"]
    for key, fig in (("sweep", view.figure), ("family", view.family)):
        fig.observe(lambda ch, key=key: sent.__setitem__(key, sent[key] + (ch["new"] is not None)), names=names)
    view.position = 40   # past the jump: the readback is another member, so the family plane changes too
    assert sent == {"sweep": 1, "family": 1}
    view.position = 41   # same family members as step 40: nothing to send for the plane
    assert sent == {"sweep": 2, "family": 1}


def test_bad_widget_inputs_raise_typed_errors():
    for kwargs, word in [
        (dict(swept=3), "0, 1 or 2"),
        (dict(swept=True), "0, 1 or 2"),
        (dict(steps=1), f"from 2 to {MAX_STEPS}"),
        (dict(steps=MAX_STEPS + 1), f"from 2 to {MAX_STEPS}"),
        (dict(sweep_range=(90.0, 90.0)), "two different"),
        (dict(sweep_range=(0.0, float("nan"))), "sweep range"),
        (dict(sweep_range=(0.0, 1.0, 2.0)), "sweep range"),
        (dict(position=61), "from 0 to 60"),
    ]:
        with pytest.raises(SweepSetupError) as err:
            SingularityView(**kwargs)
        assert isinstance(err.value, PoseInputError) and word in str(err.value), (kwargs, str(err.value))
    with pytest.raises(PoseInputError):
        SingularityView(angles=(1.0, 2.0))
    with pytest.raises(ConventionError):
        SingularityView(convention="sequence=q-q-q")
    with pytest.raises(PoseInputError):
        SingularityView.from_rotation(np.diag([1.0, 1.0, -1.0]))   # a mirror is no rotation
    view = SingularityView()
    with pytest.raises(SweepSetupError):
        view.position = 61
    with pytest.raises(SweepSetupError):
        view.sweep_range = (1.0, 1.0)
    # a bad range typed into the boxes is refused in words, nothing applied
    view.range_to.value = "60"
    assert view.sweep_range == (60.0, 120.0) and "Not applied" in view.status.value
    assert "pk-error" in view.status.value   # a box that wraps its words inside the widget


def test_ticks_read_in_the_axis_unit_even_for_a_tiny_sweep():
    # a sweep a few thousandths of a degree wide: plotly's default tick labels would use SI prefixes
    # ("600\u03bc"), which change the unit an axis titled in degrees claims; powers of ten keep it
    s = sweep_one_angle([30, 0, 20], 1, np.linspace(89.999, 90.001, 21), "unit=degrees")
    fig = sweep_figure(s, 3)
    for axis in ("xaxis", "xaxis2", "xaxis3", "xaxis4", "yaxis", "yaxis2", "yaxis3", "yaxis4"):
        assert fig.layout[axis].exponentformat == "power", axis
    assert fig.layout.xaxis4.title.text == "sweep parameter"
    assert sweep_figure(s, 3, parameter_label=angle_name(s.convention, 1, unit=True)).layout.xaxis4.title.text \
        .endswith(", degrees")
    fam = family_figure(euler_solutions(s.rotation, s.convention), 3)
    assert fam.layout.xaxis.exponentformat == fam.layout.yaxis.exponentformat == "power"
