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
from posekit.analysis.diagnose import diagnose, diagnose_batch, expected_pose, pose_from_words
from posekit.io.paste import parse_numbers
from posekit.io.state import State, state_from_json, state_to_json
from posekit.view.frames import frame_points
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


def _reference(pasted, expected_text, kind="euler", conv=CONV):
    return diagnose(expected_pose(expected_text, kind, conv), parse_numbers(pasted), expected_convention=conv)


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
    assert [fig.data[k].name for k in (1, 3, 4)] == ["expected", "observed as read", "observed corrected"]
    _assert_trace(fig.data[1], pk.read_rotation(EULER, "euler", CONV), np.zeros(3))
    # observed as read: the pasted numbers read the way the convention says (scalar first), by the core
    as_read = pk.read_rotation(parse_numbers(desk.pasted).numbers, "quaternion", CONV, normalise=True)
    _assert_trace(fig.data[3], as_read, np.zeros(3))
    _assert_trace(fig.data[4], e.corrected_rotation, np.zeros(3))
    assert all(fig.data[k].visible for k in (1, 3, 4))
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
    _assert_trace(desk.figure.data[1], rot, t)
    _assert_trace(desk.figure.data[3], logged[:3, :3], logged[:3, 3])
    _assert_trace(desk.figure.data[4], e.corrected_rotation, e.corrected_translation)
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
    assert desk.figure.data[1].visible  # the expected pose is still known and drawn
    assert not desk.figure.data[3].visible and not desk.figure.data[4].visible


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
    ref = diagnose(expected_pose(desk.expected_text, "euler", desk.convention), parse_numbers(desk.pasted),
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
    ref = diagnose_batch(angles, logged, expected_kind="euler", expected_convention=CONV)
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
    assert "on pasted line 3" in desk.understood.value
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
    assert html.escape(desk.diagnosis.best.sentence) in written and "&lt;- chosen" in written


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
