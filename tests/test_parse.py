"""The paste-anything parser: a table of pasted strings, a table of malformed ones.

Reference values: the rotations of the readings are checked against
scipy.spatial.transform.Rotation (named beside each check); the pasted texts are
written the way numpy, Python, JSON, semicolon-row matrix text and YAML-style logs print (common practice).
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from scipy.spatial.transform import Rotation

from posekit.io.paste import (NoInterpretationError, PasteParseError, interpret_numbers, parse_numbers,
                              unit_judgement)
from posekit.core.errors import PoseInputError

_R = Rotation.from_euler("ZYX", [30, -10, 5], degrees=True)  # scipy: upper case = intrinsic
_M = _R.as_matrix()
_Q_LAST = _R.as_quat()  # scipy: scalar-last (x, y, z, w)


def _fmt(v):
    return f"{v:.12f}"


_NP_REPR = np.array2string(_M, separator=", ", precision=12, floatmode="fixed")
_NP_PRINT = np.array2string(_M, precision=12, floatmode="fixed")

# (pasted text, expected shape, expected number of interpretations, expected kinds (set), format word)
CASES = [
    ("1 0 0 0", (4,), 4, {"quaternion"}, "bare"),
    ("1, 0, 0, 0", (4,), 4, {"quaternion"}, "bare"),
    ("1;0;0;0", (4,), 4, {"quaternion"}, "bare"),
    ("1\n0\n0\n0", (4,), 4, {"quaternion"}, "bare"),
    ("[1, 0, 0, 0]", (4,), 4, {"quaternion"}, "nested"),
    ("(0.0, 0.0, 0.0, 1.0)", (4,), 4, {"quaternion"}, "nested"),
    ("array([0., 0., 0., 1.])", (4,), 4, {"quaternion"}, "numpy"),
    ("np.array([0.0, 0.0, 0.0, 1.0], dtype=float32)", (4,), 4, {"quaternion"}, "numpy"),
    ("0.1 0.2 0.3", (3,), 50, {"euler", "rotation-vector"}, "bare"),
    ("10, -25, 90", (3,), 50, {"euler", "rotation-vector"}, "bare"),
    ("[0.1, -0.2, 0.3]", (3,), 50, {"euler", "rotation-vector"}, "nested"),
    ("1 0 0 0 1 0 0 0 1", (9,), 2, {"matrix"}, "bare"),
    ("1 0 0\n0 1 0\n0 0 1", (3, 3), 2, {"matrix"}, "printed"),
    ("1, 0, 0\n0, 1, 0\n0, 0, 1\n", (3, 3), 2, {"matrix"}, "printed"),
    ("[[1, 0, 0], [0, 1, 0], [0, 0, 1]]", (3, 3), 2, {"matrix"}, "nested"),
    ("[[1. 0. 0.]\n [0. 1. 0.]\n [0. 0. 1.]]", (3, 3), 2, {"matrix"}, "nested"),
    ("[1 0 0]\n[0 1 0]\n[0 0 1]", (3, 3), 2, {"matrix"}, "printed rows"),
    ("[1 0 0; 0 1 0; 0 0 1]", (3, 3), 2, {"matrix"}, "nested"),
    ("1 0 0 0; 0 1 0 0; 0 0 1 0; 0 0 0 1", (4, 4), 2, {"transform"}, "printed"),
    ("[[1,0,0,1],[0,1,0,2],[0,0,1,3],[0,0,0,1]]", (4, 4), 2, {"transform"}, "nested"),
    ("1 0 0 1 0 1 0 2 0 0 1 3", (12,), 2, {"transform"}, "bare"),
    ("1 2 3 0 0 0 1", (7,), 8, {"position-quaternion"}, "bare"),
    ("1 2 3 10 20 30", (6,), 100, {"position-euler", "position-rotation-vector"}, "bare"),
    ("x: 1\ny: 2\nz: 3", (3,), 1, {"position"}, "named"),
    ("x: 0\ny: 0\nz: 0\nw: 1", (4,), 2, {"quaternion"}, "named"),
    ("qx=0 qy=0 qz=0 qw=1", (4,), 2, {"quaternion"}, "named"),
    ("roll: 10, pitch: 20, yaw: 30", (3,), 24, {"euler"}, "named"),
    ("roll: 10 deg, pitch: 20 deg, yaw: 30 deg", (3,), 12, {"euler"}, "named"),
    ("rx: 0.1 ry: 0.2 rz: 0.3", (3,), 26, {"euler", "rotation-vector"}, "named"),
    ('{"x": 1, "y": 2, "z": 3, "qx": 0, "qy": 0, "qz": 0, "qw": 1}', (7,), 2, {"position-quaternion"}, "JSON"),
    ("position:\n  x: 1\n  y: 2\n  z: 3\norientation:\n  x: 0\n  y: 0\n  z: 0\n  w: 1", (7,), 2,
     {"position-quaternion"}, "named"),
    ('{"position": [1, 2, 3], "orientation": [0, 0, 0, 1]}', (7,), 4, {"position-quaternion"}, "JSON"),
    ("tx=1 ty=2 tz=3 roll=0.1 pitch=0.2 yaw=0.3", (6,), 24, {"position-euler"}, "named"),
    ("x: 1000 mm\ny: 0 mm\nz: 0 mm", (3,), 1, {"position"}, "named"),
    ("1e-3 -2.5E+1 .5 5.", (4,), 4, {"quaternion"}, "bare"),
    ("# a logged mount\n0 0 0 1  # x y z w", (4,), 4, {"quaternion"}, "bare"),
    (_NP_REPR, (3, 3), 2, {"matrix"}, "nested"),
    (_NP_PRINT, (3, 3), 2, {"matrix"}, "nested"),
    ("array(" + _NP_REPR + ")", (3, 3), 2, {"matrix"}, "numpy"),
    (json.dumps(_M.tolist()), (3, 3), 2, {"matrix"}, "nested"),
    ("1 2 3 4 5", (5,), 0, set(), "bare"),
    ("R = [[1, 0, 0], [0, 1, 0], [0, 0, 1]]", (3, 3), 2, {"matrix"}, "nested"),
    ("T_world_camera:\narray([[1., 0., 0., 0.5],\n       [0., 1., 0., 0.],\n       [0., 0., 1., 0.],\n"
     "       [0., 0., 0., 1.]])", (4, 4), 2, {"transform"}, "numpy"),
    ("1\t0\t0\r\n0\t1\t0\r\n0\t0\t1\r\n", (3, 3), 2, {"matrix"}, "printed"),
]


@pytest.mark.parametrize("text, shape, count, kinds, fmt", CASES, ids=[repr(c[0])[:40] for c in CASES])
def test_table_of_pasted_strings(text, shape, count, kinds, fmt):
    p = parse_numbers(text)
    assert p.shape == shape
    assert p.numbers.size == int(np.prod(shape))
    assert len(p.interpretations) == count
    assert {i.kind for i in p.interpretations} == kinds
    assert fmt.lower().split()[0] in p.source_format.lower()
    assert not p.numbers.flags.writeable  # frozen result
    if count > 1:
        assert p.ambiguous or p.interpretations[0].score > p.interpretations[1].score


def test_table_has_enough_rows():
    assert len(CASES) >= 30
    assert len(MALFORMED) >= 15


def test_every_quaternion_reading_is_listed_and_none_is_picked():
    p = parse_numbers(" ".join(_fmt(v) for v in _Q_LAST))
    readings = {(i.convention.scalar, i.convention.algebra) for i in p.interpretations}
    assert readings == {("first", "hamilton"), ("first", "jpl"), ("last", "hamilton"), ("last", "jpl")}
    assert p.ambiguous
    # scipy: Rotation.from_quat reads scalar-last Hamilton
    right = [i for i in p.interpretations if i.convention.scalar == "last" and i.convention.algebra == "hamilton"][0]
    assert np.allclose(right.rotation, _M, atol=1e-10)
    # JPL gives the transpose of the Hamilton matrix for the same numbers (Trawny & Roumeliotis 2005)
    jpl = [i for i in p.interpretations if i.convention.scalar == "last" and i.convention.algebra == "jpl"][0]
    assert np.allclose(jpl.rotation, _M.T, atol=1e-10)


def test_matrix_layouts_are_both_listed_and_match_scipy():
    p = parse_numbers(" ".join(_fmt(v) for v in _M.ravel()))
    by = {i.convention.layout: i for i in p.interpretations}
    assert np.allclose(by["row-major"].rotation, _M)  # scipy: Rotation.as_matrix
    assert np.allclose(by["column-major"].rotation, _M.T)
    assert by["row-major"].score == pytest.approx(by["column-major"].score)


def test_column_major_4x4_is_told_apart_by_the_bottom_row():
    t = np.eye(4)
    t[:3, :3] = _M
    t[:3, 3] = [1, 2, 3]
    p = parse_numbers(" ".join(_fmt(v) for v in t.T.ravel()))  # written column by column
    best = p.interpretations[0]
    assert best.convention.layout == "column-major"
    assert best.score > 0.99 and p.interpretations[1].score < 1e-3
    assert np.allclose(best.rotation, _M) and np.allclose(best.translation, [1, 2, 3])


def test_euler_readings_match_scipy_for_every_sequence():
    angles = [0.3, -0.4, 0.5]
    p = parse_numbers("0.3 -0.4 0.5")
    for i in p.interpretations:
        if i.kind != "euler" or i.convention.unit != "radians":
            continue
        seq = i.convention.axes_letters
        # scipy: Rotation.from_euler, upper-case letters = intrinsic, lower-case = extrinsic
        ref = Rotation.from_euler(seq.upper() if i.convention.intrinsic else seq, angles).as_matrix()
        assert np.allclose(i.rotation, ref, atol=1e-12), i.describe()
    rv = [i for i in p.interpretations if i.kind == "rotation-vector" and i.convention.unit == "radians"][0]
    assert np.allclose(rv.rotation, Rotation.from_rotvec(angles).as_matrix())  # scipy: Rotation.from_rotvec


def test_named_roll_pitch_yaw_go_to_their_axes():
    p = parse_numbers("roll: 5 deg\npitch: -10 deg\nyaw: 30 deg")
    zyx = [i for i in p.interpretations if i.convention.sequence == "z-y-x" and i.convention.intrinsic][0]
    assert np.allclose(zyx.rotation, _M, atol=1e-12)  # scipy: Rotation.from_euler("ZYX", [30, -10, 5])
    assert zyx.numbers == (30.0, -10.0, 5.0)  # handed to posekit in the sequence's order
    assert all(i.convention.unit == "degrees" for i in p.interpretations)


def test_named_quaternion_keeps_the_written_order():
    p = parse_numbers("w: 1, x: 0, y: 0, z: 0")
    assert {i.convention.scalar for i in p.interpretations} == {"first"}
    p = parse_numbers("x: 0, y: 0, z: 0, w: 1")
    assert {i.convention.scalar for i in p.interpretations} == {"last"}


def test_unit_judgement_never_decides_silently():
    for values in ([0.1, 0.2, 0.3], [10, 20, 30], [4.0, 1.0, 0.0], [400, 0, 0]):
        rad, deg, sentence = unit_judgement(values)
        assert rad > 0 and deg > 0 and sentence
    assert unit_judgement([10, 20, 30])[1] > unit_judgement([10, 20, 30])[0]
    assert unit_judgement([0.1, 0.2, 0.3])[0] > unit_judgement([0.1, 0.2, 0.3])[1]
    p = parse_numbers("10 20 30")
    assert {i.convention.unit for i in p.interpretations} == {"radians", "degrees"}


def test_non_unit_quaternion_scores_lower_and_snippet_normalises():
    good = parse_numbers("1 0 0 0").interpretations[0]
    off = parse_numbers("1.1 0 0 0").interpretations[0]
    assert off.score < 0.01 < good.score
    assert "normalise=True" in off.code() and "normalise=True" not in good.code()


def test_snippets_read_the_same_rotation():
    import posekit as pk

    for text in ("0.1 0.2 0.3", " ".join(_fmt(v) for v in _Q_LAST), " ".join(_fmt(v) for v in _M.ravel()),
                 "1 2 3 " + " ".join(_fmt(v) for v in _Q_LAST), "roll: 5 deg pitch: -10 deg yaw: 30 deg"):
        for interp in parse_numbers(text).interpretations:
            scope = {"np": np, "pk": pk, "numbers": list(interp.numbers)}
            exec(interp.code(), scope)  # our own generated code, not pasted text
            assert np.allclose(scope["R"], interp.rotation, atol=1e-9), interp.describe()


def test_batch_interpretation_broadcasts():
    q = Rotation.random(5, random_state=3).as_quat()  # scipy: scalar-last
    interps = interpret_numbers(q)
    right = [i for i in interps if i.convention.scalar == "last" and i.convention.algebra == "hamilton"][0]
    assert right.rotation.shape == (5, 3, 3)
    assert np.allclose(right.rotation, Rotation.from_quat(q).as_matrix())  # scipy: Rotation.from_quat


def test_wrong_count_is_a_typed_error_on_request():
    p = parse_numbers("1 2 3 4 5")
    with pytest.raises(NoInterpretationError, match="5 numbers"):
        p.require_interpretations()
    with pytest.raises(NoInterpretationError):
        interpret_numbers([1, 2, 3, 4, 5])


def test_a_skipped_label_is_said():
    p = parse_numbers("R = [[1, 0, 0], [0, 1, 0], [0, 0, 1]]")
    assert any("label 'R'" in n for n in p.notes)


def test_ragged_lines_are_read_flat_and_said_so():
    p = parse_numbers("1 2 3\n4 5 6 7")
    assert p.shape == (7,) and p.notes and "unequal" in p.notes[0]


# (text, position where reading stopped, a word of the reason)
MALFORMED = [
    ("1 2 abc", 4, "word"),
    ("[1, 2, 3", 0, "never closed"),
    ("[1, 2], 3]", 8, "after a closed list"),
    ("[[1,2],[3]]", 7, "shape"),
    ("1 2 nan", 4, "finite"),
    ("", 0, "no numbers"),
    ("1..2", 0, "malformed number"),
    ("1e", 0, "malformed number"),
    ("--1", 0, "unexpected character"),
    ("[1,,2]", 3, "comma"),
    ("{x: 1, y:}", 9, "no value"),
    ("x: 1 x: 2", 5, "twice"),
    ("1 2 inf", 4, "finite"),
    ("[]", 0, "empty"),
    ("1 2 3 ]", 6, "closes nothing"),
    ("secs: 12", 0, "component name"),
    ("1;;2", 2, "empty row"),
    ("1 2 $", 4, "unexpected character"),
    ("[1, [2, 3]]", 4, "mixed"),
    ("1 2 3 deg", 6, "unit word"),
    ("array([1, 2, 3], dtype)", 17, "dtype"),
    ("array([1, 2, 3]) 4", 17, "after the closing"),
    ("1 2\n3 4 x", 8, "word"),
    ("x: one", 3, "not a number"),
    ("   \n  ", 6, "no numbers"),
]


@pytest.mark.parametrize("text, position, reason", MALFORMED, ids=[repr(m[0]) for m in MALFORMED])
def test_malformed_strings_say_where_reading_stopped(text, position, reason):
    with pytest.raises(PasteParseError) as info:
        parse_numbers(text)
    err = info.value
    assert isinstance(err, PoseInputError)
    assert err.position == position, str(err)
    assert reason in err.reason
    caret_line = err.excerpt.split("\n")[1]
    assert caret_line.endswith("^")
    assert f"offset {position}" in str(err) and "accepted" in str(err)


def test_error_line_and_column_on_later_lines():
    with pytest.raises(PasteParseError) as info:
        parse_numbers("1 0 0\n0 1 0\n0 0 q")
    assert (info.value.line, info.value.column) == (3, 5)
    assert info.value.excerpt == "0 0 q\n    ^"


def test_not_text_is_a_typed_error():
    with pytest.raises(PasteParseError):
        parse_numbers([1, 2, 3])  # type: ignore[arg-type]


def test_typographic_minus_and_wrappers():
    p = parse_numbers("\u22120.5, 0.5, \u22120.5, 0.5")
    assert p.numbers.tolist() == [-0.5, 0.5, -0.5, 0.5]
    assert parse_numbers("quaternion(1, 0, 0, 0)").shape == (4,)
    with pytest.raises(PasteParseError) as info:
        parse_numbers("1 \u22120.5x")
    assert info.value.position == 2


@pytest.mark.parametrize("seed", range(6))
def test_numpy_scalar_lists_read_as_the_numbers_numpy_printed(seed):
    # numpy 2 prints a list of its scalars as [np.float64(0.1), ...]; the reference is numpy's own repr
    # of the generated values, read back by Python's float (the numbers must come back bit for bit)
    rng = np.random.default_rng(seed)
    count = (3, 4, 6, 7, 9, 16)[seed]
    values = rng.normal(size=count) * 10.0 ** rng.integers(-6, 6, size=count)
    kinds = (np.float64, np.float32, np.float64)
    scalars = [kinds[i % 3](v) for i, v in enumerate(values)]
    text = repr(scalars) if np.lib.NumpyVersion(np.__version__) >= "2.0.0" else \
        "[" + ", ".join(f"np.{type(x).__name__}({x!r})" for x in scalars) + "]"
    parsed = parse_numbers(text)
    assert parsed.text == text
    np.testing.assert_array_equal(parsed.numbers, [float(str(x)) for x in scalars])  # the digits numpy printed


def test_numpy_scalar_wrapper_around_a_word_is_still_refused_with_its_position():
    with pytest.raises(PasteParseError, match=r"column 19"):
        parse_numbers("[np.float64(0.5), np.float64(x)]")
