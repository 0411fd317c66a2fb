"""The debugging desk at Python level: it shows exactly what posekit's analysis says.

References: every expected value here comes from posekit's own analysis functions
(parse_numbers, expected_pose, pose_from_words, diagnose, diagnose_batch) or its core
(read_rotation, read_transform, write_rotation) called directly, never from the
widget; the test data is built in the tests with posekit's core (invented numbers).
"""

from __future__ import annotations

import html
import math

import numpy as np
import pytest
from fresh_kernel import state_rebuilt_in_fresh_kernel

import posekit as pk
from posekit.analysis.diagnose import diagnose, diagnose_batch, expected_pose, expected_rows, pose_from_words
from posekit.io.paste import parse_numbers
from posekit.io.state import State, state_from_json, state_to_json
from posekit.view.frames import frame_points, trace_index
from posekit.view.report import report_html
from posekit.widgets import DebugDesk, Explorer

CONV = "sequence=z-y-x unit=degrees"
EULER = [30.0, -10.0, 5.0]


def _scalar_last_text(angles=EULER, digits=6):
    q = pk.write_rotation(pk.read_rotation(angles, "euler", CONV), "quaternion", "scalar=last")
    return ", ".join(f"{v:.{digits}f}" for v in q)


def _points(trace):
    return [np.array([np.nan if v is None else v for v in getattr(trace, c)], dtype=float) for c in "xyz"]


def _assert_trace(trace, rotation, origin):
    for got, want in zip(_points(trace), frame_points(rotation, origin)):
        np.testing.assert_allclose(got, np.array([np.nan if v is None else v for v in want], dtype=float),
                                   atol=1e-12, equal_nan=True)


@pytest.fixture
def desk():
    return DebugDesk(pasted=_scalar_last_text(), expected=" ".join(map(str, EULER)), expected_kind="euler",
                     convention=CONV)


def _reference(pasted, expected_text, kind="euler", conv=CONV, expected_conv=None):
    """posekit's analysis called directly: the expected numbers read with the fields the desk states for
    them (the bar's fields off posekit's defaults, never the unit: typed angles are guessed, degrees first),
    the numbers you got read with the bar's convention."""
    return diagnose(expected_pose(expected_text, kind, expected_conv), parse_numbers(pasted),
                    expected_convention=conv)


def test_explanation_list_equals_diagnose(desk):
    ref = _reference(desk.pasted, desk.expected_text)
    got = desk.diagnosis
    assert [e.sentence for e in got.explanations] == [e.sentence for e in ref.explanations]
    assert [e.rotation_residual for e in got.explanations] == [e.rotation_residual for e in ref.explanations]
    labels = [label for label, _ in desk.explanation_list.options]
    assert len(labels) == len(ref.explanations)
    for label, e in zip(labels, ref.explanations):
        assert label.startswith(f"{e.rank}. {e.sentence}")
        assert f"{math.degrees(e.rotation_residual):.3g}°" in label
        assert ("the same mistake written" in label) == bool(e.equivalents)
        assert ("near tie" in label) == e.near_tie
    assert ref.best.sentence == "The quaternion was written scalar-last but read scalar-first."
    assert desk.code_box.value == ref.best.code


@pytest.mark.parametrize("pick", [0, 1, 3])
def test_choosing_an_explanation_draws_its_overlays(desk, pick):
    ref = _reference(desk.pasted, desk.expected_text)
    desk.explanation_list.value = pick  # what a click or an arrow key in the page does
    assert desk.chosen == pick
    e = ref.explanations[pick]
    fig = desk.figure
    assert [fig.data[trace_index(fig, u)].name for u in ("frame", "overlay-1", "overlay-2")] == \
        ["expected", "observed as read", "observed corrected"]
    _assert_trace(fig.trace("frame"), pk.read_rotation(EULER, "euler", CONV), np.zeros(3))
    # observed as read: the pasted numbers read the way the convention says (scalar first), by the core
    as_read = pk.read_rotation(parse_numbers(desk.pasted).numbers, "quaternion", CONV, normalise=True)
    _assert_trace(fig.trace("overlay-1"), as_read, np.zeros(3))
    _assert_trace(fig.trace("overlay-2"), e.corrected_rotation, np.zeros(3))
    assert all(fig.trace(u).visible for u in ("frame", "overlay-1", "overlay-2"))
    assert desk.code_box.value == e.code
    shown = ", ".join(f"{v:.9g}" for v in e.corrected_numbers)
    assert html.escape(shown) in desk.detail.value
    assert html.escape(e.sentence) in desk.detail.value


def test_transform_paste_draws_translations():
    rot = pk.read_rotation([40.0, 15.0, -5.0], "euler", CONV)
    t = np.array([0.4, -0.2, 0.9])
    # logged as the inverse transform, row-major 4x4, by posekit's core
    logged = pk.invert_transform(pk.make_transform(rot, t))
    text = "\n".join(" ".join(f"{v:.9f}" for v in row) for row in logged)
    truth = pk.make_transform(rot, t)
    desk = DebugDesk(pasted=text, expected=pk.Pose(truth), convention=CONV)
    ref = diagnose(expected_pose(pk.Pose(truth)), parse_numbers(text), expected_convention=CONV)
    assert desk.expected_source == "pose"
    assert [e.sentence for e in desk.diagnosis.explanations] == [e.sentence for e in ref.explanations]
    e = ref.best
    _assert_trace(desk.figure.trace("frame"), rot, t)
    _assert_trace(desk.figure.trace("overlay-1"), logged[:3, :3], logged[:3, 3])
    _assert_trace(desk.figure.trace("overlay-2"), e.corrected_rotation, e.corrected_translation)
    np.testing.assert_allclose(e.corrected_translation, t, atol=1e-6)
    # the scene grows to hold the farthest origin
    assert desk.figure.layout.scene.xaxis.range[1] >= np.max(np.abs(logged[:3, 3]))


def test_description_as_expected_pose():
    words = "pitched 25 degrees down, 0.3 m forward"
    exp = pose_from_words(words)
    q = pk.write_rotation(exp.rotation, "quaternion", "scalar=last")
    pasted = " ".join(f"{v:.5f}" for v in (*exp.translation, *q))
    desk = DebugDesk(pasted=pasted, expected=words, convention=CONV)
    assert desk.expected_source == "words"
    ref = diagnose(exp, parse_numbers(pasted), expected_convention=CONV)
    assert [e.sentence for e in desk.diagnosis.explanations] == [e.sentence for e in ref.explanations]
    assert "scalar-last" in desk.diagnosis.best.sentence


def test_expected_pose_follows_an_explorer():
    ex = Explorer(angles=(10.0, 20.0, 0.0), convention=CONV)
    pasted = _scalar_last_text([10.0, 20.0, 0.0])
    desk = DebugDesk(pasted=pasted, expected=ex, convention=CONV)
    assert desk.expected_source == "pose"
    np.testing.assert_array_equal(np.reshape(desk.expected_matrix, (4, 4)), ex.to_pose().matrix)
    first = desk.diagnosis.best.rotation_residual
    ex.angles = (50.0, 20.0, 0.0)  # the explorer's controls move the expected pose
    np.testing.assert_array_equal(np.reshape(desk.expected_matrix, (4, 4)), ex.to_pose().matrix)
    ref = diagnose(expected_pose(ex.to_pose()), parse_numbers(pasted), expected_convention=CONV)
    assert desk.diagnosis.best.sentence == ref.best.sentence
    assert desk.diagnosis.best.rotation_residual == ref.best.rotation_residual != first


def test_garbage_shows_where_parsing_stopped_escaped(desk):
    desk.paste_box.value = "0.1, 0.2, <b>0.3</b>"
    with pytest.raises(pk.PoseInputError) as err:
        parse_numbers("0.1, 0.2, <b>0.3</b>")
    shown = desk.understood.value
    assert html.escape(err.value.excerpt) in shown
    assert html.escape(err.value.reason) in shown
    assert "<b>0.3" not in shown
    assert desk.diagnosis is None
    assert desk.explanation_list.options == ()
    assert desk.figure.trace("frame").visible  # the expected pose is still known and drawn
    assert not desk.figure.trace("overlay-1").visible and not desk.figure.trace("overlay-2").visible


def test_bad_description_and_unknown_count_are_shown():
    desk = DebugDesk(pasted="1 2 3 4 5", expected="pitched 25 furlongs down", convention=CONV)
    with pytest.raises(pk.PoseInputError) as err:
        pose_from_words("pitched 25 furlongs down")
    assert html.escape(str(err.value)) in desk.expected_words.value
    assert "no pose representation has this many numbers" in desk.understood.value
    assert desk.diagnosis is None


def test_understood_panel_lists_the_parser_readings(desk):
    parsed = parse_numbers(desk.pasted)
    shown = desk.understood.value
    assert f"read <b>{parsed.count}</b> numbers" in shown
    for i in parsed.interpretations:
        assert html.escape(i.describe()) in shown


def test_convention_bar_changes_the_assumed_reading(desk):
    desk.bar.controls["scalar"].value = "last"
    assert "scalar=last" in desk.convention
    ref = diagnose(expected_pose(desk.expected_text, "euler", "scalar=last"), parse_numbers(desk.pasted),
                   expected_convention=desk.convention)
    assert desk.diagnosis.best.sentence == ref.best.sentence
    assert desk.diagnosis.best.rotation_residual < math.radians(0.01)


def test_batch_of_pairs_equals_diagnose_batch():
    rng = np.random.default_rng(11)
    angles = np.column_stack([rng.uniform(-60, 60, 8), rng.uniform(-20, 20, 8), rng.uniform(-10, 10, 8)])
    truth = pk.read_rotation(angles, "euler", CONV)
    offset = pk.read_rotation([0.0, 0.0, 4.0], "euler", CONV)  # a mount turned 4 degrees about x
    logged = pk.write_rotation(truth @ offset, "quaternion", "scalar=last")
    desk = DebugDesk(observed=logged, expected=angles, expected_kind="euler", convention=CONV)
    assert desk.pairs == "many"
    ref = diagnose_batch(expected_rows(angles, "euler"), logged, expected_convention=CONV)
    got = desk.diagnosis
    assert [e.sentence for e in got.explanations] == [e.sentence for e in ref.explanations]
    assert not ref.consistent and ref.offset is not None
    np.testing.assert_allclose(got.offset.rotation, ref.offset.rotation, atol=1e-12)
    assert html.escape(ref.offset.sentence) in desk.detail.value
    fig = desk.residual_figure
    np.testing.assert_allclose(fig.data[0].y, np.degrees(ref.rotation_residuals), rtol=1e-12)
    np.testing.assert_allclose(fig.data[1].y, np.degrees(ref.offset.residuals), rtol=1e-12)
    assert desk.figure_box.layout.display == "none" and desk.residual_box.layout.display is None


def test_batch_line_with_bad_text_names_the_line():
    desk = DebugDesk(pasted="0 0 0 1\n0 0 0 1\n0 0 x 1", pairs="many", expected="0 0 0", convention=CONV)
    assert "in the 'numbers you got' box, line 3" in desk.understood.value
    assert desk.diagnosis is None


def test_state_round_trip_and_from_state(desk):
    desk.chosen = 2
    state = desk.to_state()
    assert isinstance(state, State) and state.widget == "desk"
    back = state_from_json(state_to_json(state))
    assert back == state
    rebuilt = DebugDesk.from_state(back)
    assert rebuilt.to_state() == state
    assert rebuilt.chosen == 2 and rebuilt.pasted == desk.pasted and rebuilt.expected_text == desk.expected_text
    assert [p.name for p in state.poses] == ["expected", "observed as read", "observed corrected"]
    np.testing.assert_allclose(state.poses[2].matrix[:3, :3], desk.diagnosis.explanations[2].corrected_rotation,
                               atol=1e-12)


def test_report_carries_the_diagnosis_lines(desk, tmp_path, monkeypatch):
    text = report_html(desk.to_state(), diagnosis=desk.diagnosis_lines())
    assert html.escape(desk.diagnosis.best.sentence) in text
    monkeypatch.chdir(tmp_path)
    desk.share.name_box.value = "bug"
    desk.share.report_button.click()
    written = (tmp_path / "bug.html").read_text()
    assert html.escape(desk.diagnosis.best.sentence) in written
    chosen = desk.diagnosis.explanations[desk.chosen]
    assert chosen.code in html.unescape(written)  # the report carries the corrected code of the chosen explanation


def test_code_cell_rebuilds_the_same_desk_in_a_fresh_kernel():
    desk = DebugDesk(pasted="position: {x: 0.3, y: 0, z: 0}\norientation: [0, 0.21644, 0, 0.97630]",
                     expected="pitched 25 degrees down, 0.3 m forward",
                     convention="sequence=x-y-z axes=extrinsic unit=radians algebra=jpl", chosen=1,
                     palette="colour-blind")
    rebuilt = state_rebuilt_in_fresh_kernel(desk.code_cell(), "desk")
    assert rebuilt == desk.to_state()
    for a, b in zip(rebuilt.poses, desk.to_state().poses):
        assert a.matrix.tobytes() == b.matrix.tobytes()


@pytest.mark.parametrize("options, words", [
    ({"pairs": "three"}, "pairs"),
    ({"palette": "neon"}, "palette"),
    ({"expected_kind": "dual-quaternion"}, "expected_kind"),
    ({"expected_matrix": [1.0, 0.0]}, "16"),
    ({"convention": "sequence=q-r-s"}, "sequence"),
])
def test_bad_settings_raise_typed_errors(options, words):
    with pytest.raises(pk.PoseInputError, match=words):
        DebugDesk(**options)


def test_observed_may_be_text_and_bad_observed_numbers_raise_typed_errors():
    from posekit.core.errors import PoseInputError
    from posekit.widgets import DebugDesk

    text = "0.0 0.0 0.7071068 0.7071068"
    assert DebugDesk(observed=text).pasted == DebugDesk(pasted=text).pasted == text
    with pytest.raises(PoseInputError, match="ragged|unequal|rectangular"):
        DebugDesk(observed=[[1, 2], [3]])


# --- what was typed as expected: guessed, said in one line, other readings one click away -------------

def test_the_expected_input_is_said_back_in_one_line_with_one_button_per_other_reading():
    text = "0.2 0.1 -0.3"   # small numbers with fractions: read as degrees (no unit typed), radians suggested
    q = pk.write_rotation(pk.read_rotation([0.2, 0.1, -0.3], "euler", "unit=radians"), "quaternion")
    pasted = " ".join(f"{v:.9f}" for v in q)
    desk = DebugDesk(pasted=pasted, expected=text, convention=CONV)
    guess = expected_pose(text).guess   # posekit's analysis, called directly
    assert guess.kind == "euler" and guess.unit == "degrees" and guess.unit_from == "default"
    assert html.escape(guess.line()) in desk.read_as.value
    assert "pk-unit-note" in desk.read_as.value and "look like radians" in desk.read_as.value
    buttons = [b for b in desk.choice_row.children if isinstance(b, type(desk.apply_button))]
    from posekit.view.diagnosis import choice_words
    assert [b.description for b in buttons] == [choice_words(c) for c in guess.alternatives]
    assert [(c.field, c.value) for c in guess.alternatives] == [("kind", "rotation-vector"), ("unit", "radians")]
    # one click re-reads the expected numbers in radians; the answer is then posekit's for that reading
    next(b for b in buttons if b.description == "angles in radians").click()
    assert desk.expected_override == "unit=radians"
    ref = _reference(pasted, text, kind=None, expected_conv="unit=radians")
    assert [e.sentence for e in desk.diagnosis.explanations] == [e.sentence for e in ref.explanations]
    assert ref.best.deviations == 0 and "in radians" in desk.read_as.value
    # and one click back (the guess itself: no field chosen for the expected numbers)
    back = next(b for b in desk.choice_row.children if getattr(b, "description", "") == "angles in degrees")
    back.click()
    assert desk.expected_override == "none"


def test_a_kind_button_chooses_the_kind_and_the_count_kind_goes_back_to_guessing():
    desk = DebugDesk(pasted="0 0 0 1", expected="10 0 0", convention=CONV)
    rv = next(b for b in desk.choice_row.children if getattr(b, "description", "") == "a rotation vector")
    rv.click()
    assert desk.expected_kind == "rotation-vector"
    want = pk.read_rotation([10.0, 0.0, 0.0], "rotation-vector", "unit=degrees")   # posekit's core
    np.testing.assert_allclose(desk.expected().rotation, want, atol=1e-12)
    euler = next(b for b in desk.choice_row.children if getattr(b, "description", "") == "Euler angles")
    euler.click()
    assert desk.expected_kind == "by count"


def test_degrees_read_as_radians_is_named_and_corrected_like_scipy():
    from scipy.spatial.transform import Rotation   # the reference for the corrected numbers: scipy

    desk = DebugDesk(pasted="30 -10 5", expected="30 -10 5", convention="sequence=z-y-x unit=radians")
    assert desk.diagnosis.best.sentence == "The angles were written in degrees but read as radians."
    want = Rotation.from_euler("ZYX", [30, -10, 5], degrees=True).as_euler("ZYX")   # scipy: intrinsic, radians
    np.testing.assert_allclose(desk.diagnosis.best.corrected_numbers, want, atol=1e-12)
    assert desk.copy_numbers.text == ", ".join(f"{v:.9g}" for v in desk.diagnosis.best.corrected_numbers)
    assert desk.copy_code.text == desk.code_box.value == desk.diagnosis.best.code


def test_the_desk_reads_unstated_typed_angles_in_degrees_like_diagnose():
    desk = DebugDesk(pasted="90 0 0", expected="yawed 90 degrees left")
    ref = diagnose("yawed 90 degrees left", "90 0 0")
    assert ref.best.deviations == 0 and ref.explained
    assert desk.diagnosis.best.sentence == ref.best.sentence
    assert desk.diagnosis.best.deviations == 0


# --- apply fix, undo, copy ---------------------------------------------------------------------------

def test_apply_fix_pastes_the_corrected_numbers_and_undo_restores_everything(desk):
    desk.chosen = 0
    before = desk._settings()
    sentences = [e.sentence for e in desk.diagnosis.explanations]
    best = desk.diagnosis.best
    assert not desk.apply_button.disabled and desk.undo_button.disabled
    desk.apply_button.click()
    np.testing.assert_array_equal(parse_numbers(desk.pasted).numbers, best.corrected_numbers)
    ref = _reference(desk.pasted, desk.expected_text)
    assert desk.diagnosis.best.sentence == ref.best.sentence and ref.best.deviations == 0
    assert not desk.undo_button.disabled and "undo" in desk.action_status.value
    desk.undo_button.click()
    assert desk._settings() == before
    assert [e.sentence for e in desk.diagnosis.explanations] == sentences
    assert desk.undo_button.disabled


def test_apply_fix_also_takes_the_expected_unit_the_explanation_used():
    # expected angles typed in radians without a unit; the numbers you got are that pose as a quaternion
    text = "0.5 0.2 0.1"
    q = pk.write_rotation(pk.read_rotation([0.5, 0.2, 0.1], "euler", "unit=radians"), "quaternion")
    desk = DebugDesk(pasted=" ".join(f"{v:.12f}" for v in q), expected=text, convention=CONV)
    assert "meant in radians" in desk.diagnosis.best.sentence
    desk.apply_fix()
    assert desk.expected_override == "unit=radians" and desk.diagnosis.best.deviations == 0
    desk.undo()
    assert desk.expected_override == "none" and "meant in radians" in desk.diagnosis.best.sentence


def test_copy_buttons_are_empty_and_apply_is_off_while_nothing_is_explained(desk):
    assert desk.copy_code.text and desk.copy_numbers.text
    desk.paste_box.value = "0.5, banana"
    assert desk.copy_code.text == "" and desk.copy_numbers.text == "" and desk.apply_button.disabled
    desk.apply_fix()   # nothing to apply: said, nothing changed
    assert desk.pasted == "0.5, banana" and "Nothing to apply" in desk.action_status.value


# --- nothing stale; words of the desk; pairs from 1 --------------------------------------------------

def _pairs_desk():
    rng = np.random.default_rng(3)
    angles = np.column_stack([rng.uniform(-60, 60, 5), rng.uniform(-20, 20, 5), rng.uniform(-10, 10, 5)])
    logged = pk.write_rotation(pk.read_rotation(angles, "euler", CONV), "quaternion", "scalar=last")
    return DebugDesk(observed=logged, expected=angles, expected_kind="euler", convention=CONV), logged


def test_a_bad_paste_clears_the_chart_and_says_so():
    desk, logged = _pairs_desk()
    assert desk.residual_figure is not None and desk.residual_box.layout.display is None
    assert [int(v) for v in desk.residual_figure.data[0].x] == [1, 2, 3, 4, 5]   # pairs numbered from 1
    good = desk.pasted
    desk.paste_box.value = good + "\n0.1 0.2 banana 0.4"
    assert desk.diagnosis is None
    assert desk.residual_figure is None and desk.residual_box.children == ()
    assert desk.residual_box.layout.display == "none"
    assert desk.explanation_list.options == () and desk.code_box.value == ""
    assert "nothing from an earlier input is kept on show" in desk.detail.value
    assert "the &#x27;numbers you got&#x27; box, line 6" in desk.understood.value.replace("'", "&#x27;")
    desk.paste_box.value = good
    assert desk.residual_figure is not None and desk.diagnosis is not None


def test_messages_name_the_desk_boxes_not_python_functions():
    desk, logged = _pairs_desk()
    desk.expected_box.value = "\n".join(desk.expected_text.splitlines()[:2])   # 2 expected poses, 5 lines got
    assert desk.diagnosis is None
    shown = html.unescape(desk.detail.value)
    assert "the 'numbers you got' box has 5 lines but the 'pose you expected' box has 2 poses" in shown
    assert "diagnose" not in shown
    one = DebugDesk(pasted="0 0 0 1", expected="0 0 0\n10 0 0", convention=CONV)
    shown = html.unescape(one.detail.value)
    assert "holds 2 poses but 'one pose' is chosen" in shown and "diagnose" not in shown
    uneven = DebugDesk(pasted="0 0 0 1\n0 0 0", pairs="many", expected="0 0 0", convention=CONV)
    shown = html.unescape(uneven.understood.value)
    assert "the 'numbers you got' box: line 2 holds 3 numbers but line 1 holds 4" in shown


def test_one_pair_is_said_in_the_singular():
    desk = DebugDesk(pasted="0 0 0 1", pairs="many", expected="0 0 0", convention=CONV)
    assert "1 pair: 1 line of 4 numbers each" in desk.understood.value


def test_a_state_written_before_the_expected_reading_field_still_loads(desk):
    state = desk.to_state()
    old = dict(state.settings)
    old.pop("expected_override")
    rebuilt = DebugDesk.from_state(State(state.widget, old, state.poses, state.edges, state.notes))
    assert rebuilt.expected_override == "none" and rebuilt.pasted == desk.pasted
    with pytest.raises(pk.PoseInputError, match="expected_override"):
        DebugDesk(expected_override="unit=furlongs")
