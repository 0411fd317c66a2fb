"""Rules of the paste reader that the broader parser tests leave loose, each pinned exactly.

What is pinned, rule by rule:

* the unit judgement of a set of angles: the four magnitude bands with their exact edges
  (pi, 2 pi, 360), the half-step rule for hand-typed degrees, and the sentence the user reads;
* which angle readings are offered for three or six numbers, named or not, single or a batch:
  their rotations, their slots (``numbers``), ``count`` and ``position_first``;
* how bare rows of numbers are refused when a separator or bracket is out of place, and what
  every refusal says (word for word, and where it points);
* how a character or token is put into words in a message;
* which nested Python lists the standard-library shortcut takes as they are;
* the turn words of the summary (angle and axis of a rotation block);
* the posekit code each reading hands back, run and compared with the rotation.

Outside references: the pasted text itself (offsets are found with ``str.index``, numbers
with ``float()``), Python's ``math`` (pi, ``math.degrees``), ``unicodedata.name`` for
character names, ``abs()`` and ``round()``/``format`` for printed magnitudes and axes, and
``scipy.spatial.transform.Rotation`` for every rotation (named beside each check).
"""

from __future__ import annotations

import math
import unicodedata

import numpy as np
import pytest
from scipy.spatial.transform import Rotation

import posekit as pk
from posekit.io import paste
from posekit.io.paste import (MAX_NESTING, CodeNameError, NoInterpretationError, PasteParseError, parse_numbers,
                              unit_judgement)

_ACCEPTED_TEXT = ("numbers separated by spaces, commas, semicolons or newlines; nested [ ] lists; array([...]); "
                  "JSON; or named components such as x: 1 y: 2 z: 3")


def _refusal(text: str) -> PasteParseError:
    with pytest.raises(PasteParseError) as info:
        parse_numbers(text)
    return info.value


def _scipy_euler(interp, angles) -> np.ndarray:
    """The rotation scipy gives for an Euler reading of ``angles`` (one row or a batch)."""
    letters = interp.convention.axes_letters
    seq = letters.upper() if interp.convention.intrinsic else letters
    degrees = interp.convention.unit == "degrees"
    return Rotation.from_euler(seq, angles, degrees=degrees).as_matrix()  # scipy: Rotation.from_euler


def _scipy_rotvec(interp, vectors) -> np.ndarray:
    vectors = np.asarray(vectors, dtype=float)
    if interp.convention.unit == "degrees":
        vectors = np.radians(vectors)  # numpy's radians, the same factor as math.radians
    return Rotation.from_rotvec(vectors).as_matrix()  # scipy: Rotation.from_rotvec


# --------------------------------------------------------------------------------------
# unit judgement: four bands of the largest magnitude, exact at their edges
# --------------------------------------------------------------------------------------

_SMALL = "fits radians (within pi); as degrees it would be a small turn"
_HALF = " (the values are whole or half numbers, as degrees typed by hand often are)"
_BETWEEN = "lies between pi and 2 pi: radians and degrees both plausible"
_FULL = "is more than a full turn in radians, so degrees are much more likely (radians still listed)"
_BEYOND = "exceeds 360: neither unit is natural"

BANDS = [
    # (angles, radians score, degrees score, sentence after "largest magnitude <m> ")
    ([0.1, -0.2, 0.3], 1.0, 0.3, _SMALL),
    ([math.pi, 0.0, 0.0], 1.0, 0.3, _SMALL),                  # pi itself is still within pi
    ([0.0, -(math.pi + 1e-12), 0.0], 1.0, 0.3, _SMALL),       # the edge allows printed digits of pi
    ([4.0, 1.25, 0.0], 0.6, 0.6, _BETWEEN),
    ([0.0, 0.0, 2 * math.pi], 0.6, 0.6, _BETWEEN),            # 2 pi itself: one full turn, both units
    ([7.0, 0.0, 0.0], 0.05, 1.0, _FULL),                      # past 2 pi = 6.283...
    ([10.0, -25.0, 90.0], 0.05, 1.0, _FULL),
    ([-360.0, 0.0, 0.0], 0.05, 1.0, _FULL),                   # 360 itself is still a degree value
    ([360.5, 0.0, 0.0], 0.02, 0.3, _BEYOND),
    ([1000.0, -5.0, 2.0], 0.02, 0.3, _BEYOND),
]


@pytest.mark.parametrize("angles, rad, deg, words", BANDS)
def test_unit_bands_and_their_sentence(angles, rad, deg, words):
    got = unit_judgement(angles)
    largest = max(abs(float(v)) for v in angles)  # Python's abs/float: the magnitude the sentence names
    assert got == (rad, deg, f"largest magnitude {largest:.6g} {words}")


def test_the_band_edges_are_pi_and_two_pi_from_math():
    # math.pi: the first edge is pi (plus 1e-12 for printed digits), the second exactly 2 pi
    assert unit_judgement([math.pi])[:2] == (1.0, 0.3)
    assert unit_judgement([math.pi + 1e-12])[:2] == (1.0, 0.3)
    assert unit_judgement([math.nextafter(math.pi + 1e-12, 4.0)])[:2] == (0.6, 0.6)
    assert unit_judgement([2 * math.pi])[:2] == (0.6, 0.6)
    assert unit_judgement([math.nextafter(2 * math.pi, 7.0)])[:2] == (0.05, 1.0)
    assert unit_judgement([360.0])[:2] == (0.05, 1.0)
    assert unit_judgement([math.nextafter(360.0, 361.0)])[:2] == (0.02, 0.3)


@pytest.mark.parametrize("angles, half", [
    ([0.5, -1.5, 1.0], True),      # whole and half numbers
    ([0.5, 0.0, -0.5], True),      # all within 1: still half steps
    ([90.0, 45.5, -30.0], None),   # a degree band: the rule is told only within pi
    ([0.1, 0.2, 0.3], False),
    ([0.0, 0.0, 0.0], False),      # all zero: no sign of hand-typed degrees
    ([5e-10, 0.0, 0.0], False),    # 1e-9 away from a half step is not a half step
    ([0.25, 0.5, 1.0], False),
])
def test_half_steps_raise_the_degree_reading_only_within_pi(angles, half):
    rad, deg, sentence = unit_judgement(angles)
    if half is None:
        assert (rad, deg) == (0.05, 1.0) and _HALF not in sentence
        return
    largest = max(abs(float(v)) for v in angles)  # Python's abs/float
    assert rad == 1.0
    assert deg == (0.5 if half else 0.3)
    assert sentence == f"largest magnitude {largest:.6g} {_SMALL}" + (_HALF if half else "")


def test_no_angles_at_all_are_judged_as_zero():
    assert unit_judgement([]) == (1.0, 0.3, f"largest magnitude 0 {_SMALL}")


def test_small_integer_types_are_judged_by_their_true_magnitude():
    # int8 holds -128, whose magnitude 128 (Python's abs) does not fit in int8 itself
    angles = np.array([-128, 5, 0], dtype=np.int8)
    assert abs(int(angles[0])) == 128
    assert unit_judgement(angles) == (0.05, 1.0, f"largest magnitude 128 {_FULL}")
    assert unit_judgement(np.array([-4, 1, 2], dtype=np.int8))[:2] == (0.6, 0.6)


def test_parsed_angles_carry_the_judgement_as_their_score_and_reason():
    p = parse_numbers("0.5 -1 1.5")
    sentence = f"largest magnitude 1.5 {_SMALL}{_HALF}"
    for i in p.interpretations:
        assert i.reasons == (sentence,)
        assert i.score == (1.0 if i.convention.unit == "radians" else 0.5)
    p = parse_numbers("0.1 0.2 0.3")
    assert {(i.convention.unit, i.score) for i in p.interpretations} == {("radians", 1.0), ("degrees", 0.3)}


# --------------------------------------------------------------------------------------
# angle readings: what is offered, in which slots
# --------------------------------------------------------------------------------------

def test_three_bare_angles_offer_every_euler_reading_and_the_rotation_vector():
    text = "0.3 -0.4 0.5"
    written = tuple(float(w) for w in text.split())  # float(): the numbers as written
    p = parse_numbers(text)
    assert len(p.interpretations) == 50  # 12 sequences x intrinsic/extrinsic x 2 units + 2 rotation vectors
    for i in p.interpretations:
        assert i.translation is None
        assert i.count == 3
        assert i.position_first is True
        assert i.numbers == written
        if i.kind == "euler":
            assert np.allclose(i.rotation, _scipy_euler(i, written), atol=1e-12), i.describe()
        else:
            assert i.kind == "rotation-vector"
            assert np.allclose(i.rotation, _scipy_rotvec(i, written), atol=1e-12)


def test_a_batch_of_angle_rows_reads_each_row_under_every_sequence():
    rows = [[0.1, 0.2, 0.3], [0.4, -0.5, 0.6]]
    batch = paste.interpret_numbers(np.array(rows))
    assert len(batch) == 50
    for i in batch:
        assert i.rotation.shape == (2, 3, 3)
        assert i.numbers == ()  # a batch hands no single list of numbers
        assert i.count == 3 and i.position_first is True and i.translation is None
        if i.kind == "euler":
            assert np.allclose(i.rotation, _scipy_euler(i, rows), atol=1e-12), i.describe()
        else:
            assert np.allclose(i.rotation, _scipy_rotvec(i, rows), atol=1e-12)


def test_a_batch_of_positions_with_angles_keeps_both_halves():
    rows = np.array([[1.0, 2.0, 3.0, 0.1, 0.2, 0.3], [-1.0, 0.0, 4.0, 0.3, -0.2, 0.1]])
    readings = paste.interpret_numbers(rows)
    assert len(readings) == 100
    for i in readings:
        lead = rows[:, :3] if i.position_first else rows[:, 3:]
        angles = rows[:, 3:] if i.position_first else rows[:, :3]
        assert np.array_equal(i.translation, lead)
        assert i.numbers == () and i.count == 6
        if i.kind == "position-euler":
            assert np.allclose(i.rotation, _scipy_euler(i, angles), atol=1e-12), i.describe()
        else:
            assert np.allclose(i.rotation, _scipy_rotvec(i, angles), atol=1e-12)
    assert {i.position_first for i in readings} == {True, False}


def test_six_bare_numbers_are_read_position_first_and_position_last():
    text = "1 2 3 0.1 0.2 0.3"
    written = [float(w) for w in text.split()]  # float(): the numbers as written
    p = parse_numbers(text)
    assert len(p.interpretations) == 100
    for i in p.interpretations:
        assert i.count == 6
        assert i.numbers == tuple(written)
        first, last = written[:3], written[3:]
        t, angles = (first, last) if i.position_first else (last, first)
        assert np.array_equal(i.translation, t)
        if i.kind == "position-euler":
            assert np.allclose(i.rotation, _scipy_euler(i, angles), atol=1e-12), i.describe()
        else:
            assert np.allclose(i.rotation, _scipy_rotvec(i, angles), atol=1e-12)


def test_named_rotation_vector_with_a_position_hands_position_then_vector():
    text = "tx: 1 ty: 2 tz: 3\nrz: 0.3 ry: -0.2 rx: 0.1"
    p = parse_numbers(text)
    vectors = [i for i in p.interpretations if i.kind == "position-rotation-vector"]
    assert {i.convention.unit for i in vectors} == {"radians", "degrees"}
    for i in vectors:
        # the slots follow the names: x, y, z of the position, then rx, ry, rz
        assert i.numbers == (1.0, 2.0, 3.0, 0.1, -0.2, 0.3)
        assert i.count == 6 and i.position_first is True
        assert np.array_equal(i.translation, [1.0, 2.0, 3.0])
        assert np.allclose(i.rotation, _scipy_rotvec(i, [0.1, -0.2, 0.3]), atol=1e-12)
    # run the code each reading hands back on its own numbers: the same rotation and position
    for i in vectors:
        scope = {"np": np, "pk": pk, "numbers": list(i.numbers)}
        exec(i.code(), scope)  # our own generated code
        assert np.allclose(scope["R"], i.rotation, atol=1e-12)
        assert np.array_equal(scope["t"], [1.0, 2.0, 3.0])


def test_named_rotation_vector_alone_hands_the_vector():
    p = parse_numbers("rx: 0.1, ry: -0.2, rz: 0.3")
    vectors = [i for i in p.interpretations if i.kind == "rotation-vector"]
    assert len(vectors) == 2
    for i in vectors:
        assert i.numbers == (0.1, -0.2, 0.3)
        assert i.translation is None and i.count == 3 and i.position_first is True
        assert np.allclose(i.rotation, _scipy_rotvec(i, [0.1, -0.2, 0.3]), atol=1e-12)


def test_named_angles_with_a_position_hand_the_position_then_the_sequence_order():
    text = "tx: 1 ty: 2 tz: 3\nroll: 10 deg\npitch: 20 deg\nyaw: 30 deg"
    p = parse_numbers(text)
    by_axes = {(i.convention.sequence, i.convention.axes): i for i in p.interpretations}
    assert len(by_axes) == 12  # six Tait-Bryan sequences x intrinsic/extrinsic, degrees only
    named = {"x": 10.0, "y": 20.0, "z": 30.0}
    for (sequence, _), i in by_axes.items():
        assert i.kind == "position-euler" and i.convention.unit == "degrees"
        assert i.numbers == (1.0, 2.0, 3.0) + tuple(named[a] for a in sequence.split("-"))
        assert i.count == 6 and i.position_first is True
        assert np.array_equal(i.translation, [1.0, 2.0, 3.0])
        angles = [named[a] for a in sequence.split("-")]
        assert np.allclose(i.rotation, _scipy_euler(i, angles), atol=1e-12), i.describe()


# --------------------------------------------------------------------------------------
# bare rows: every token out of place is refused where it stands, with its own words
# --------------------------------------------------------------------------------------

BARE_REFUSALS = [
    # (pasted text, reason, the piece of text the refusal points at, which occurrence of it)
    (",1 2 3", "a comma with no number before it", ",", 0),
    ("1,,2 3", "a comma with no number before it", ",", 1),
    ("1 2\n,3 4", "a comma with no number before it", ",", 0),
    ("\n\n1 2, , 3", "a comma with no number before it", ",", 1),
    ("array(1 2, , 3)", "a comma with no number before it", ",", 1),
    (";1 2 3", "an empty row before ';'", ";", 0),
    ("1 2;;3", "an empty row before ';'", ";", 1),
    ("\n1 2\n;3", "an empty row before ';'", ";", 0),
    ("1 2 [3]", "'[' opens a list in the middle of bare numbers", "[", 0),
    ("\n1 2 (3)", "'(' opens a list in the middle of bare numbers", "(", 0),
    ("1 2 ] 3", "']' closes nothing", "]", 0),
]


def _nth(text: str, piece: str, n: int) -> int:
    at = text.index(piece)
    for _ in range(n):
        at = text.index(piece, at + 1)
    return at


@pytest.mark.parametrize("text, reason, piece, nth", BARE_REFUSALS)
def test_bare_rows_refuse_a_token_out_of_place_where_it_stands(text, reason, piece, nth):
    err = _refusal(text)
    at = _nth(text, piece, nth)  # str.index: the offending character in the pasted text
    assert (err.reason, err.position) == (reason, at)
    line = text.count("\n", 0, at) + 1
    column = at - (text.rfind("\n", 0, at) + 1) + 1
    assert (err.line, err.column) == (line, column)


def test_a_bare_row_refusal_reads_word_for_word():
    err = _refusal("1,,2 3")
    assert str(err) == ("could not read the pasted numbers: a comma with no number before it at line 1, column 3 "
                        "(offset 2):\n1,,2 3\n  ^\naccepted: " + _ACCEPTED_TEXT)


def test_a_refusal_past_the_last_token_points_at_the_end_of_the_text():
    text = "x: 1\ny: 2\nz:"
    err = _refusal(text)
    assert (err.reason, err.position, err.line, err.column) == ("'z' has no value", len(text), 3, 3)
    assert str(err) == ("could not read the pasted numbers: 'z' has no value at line 3, column 3 (offset 12):\n"
                        "z:\n  ^\naccepted: " + _ACCEPTED_TEXT)


# --------------------------------------------------------------------------------------
# tokens in words: what a message calls the thing it stopped at
# --------------------------------------------------------------------------------------

TOKEN_WORDS = [
    ("array([1, 2]) 5", "unexpected number '5' after the closing ')'", "5"),
    ("array([1, 2]) -0.5e3", "unexpected number '-0.5e3' after the closing ')'", "-"),
    ("array([1, 2]) foo", "unexpected word 'foo' after the closing ')'", "foo"),
    ("array([1, 2]) deg", "unexpected word 'deg' after the closing ')'", "deg"),
    ("array([1, 2]) 'abc'", "unexpected text 'abc' after the closing ')'", "'"),
    ('array([1, 2])\n"a b c"', "unexpected text 'a b c' after the closing ')'", '"'),
    ("array([1, 2]) :", "unexpected ':' after the closing ')'", ":"),
    ("array([1, 2]) =", "unexpected '=' after the closing ')'", "="),
    ("array([1, x: 2])", "unexpected word 'x' inside array(...)", "x"),
    ("array([1, 'q', 2])", "unexpected text 'q' inside array(...)", "'"),
    ("[1 2]\n; 3", "unexpected ';' after a closed list", ";"),
    ("[1,2] :", "expected a component name, found '['", "["),
    ("x: 1, 5", "expected a component name, found a number", "5"),
]


@pytest.mark.parametrize("text, reason, piece", TOKEN_WORDS)
def test_a_message_names_the_token_it_stopped_at(text, reason, piece):
    err = _refusal(text)
    assert (err.reason, err.position) == (reason, text.index(piece))  # str.index: where the token starts


# --------------------------------------------------------------------------------------
# characters in words: not-finite numbers, malformed numbers, stray characters
# --------------------------------------------------------------------------------------

def _named(ch: str) -> str:
    return f"U+{ord(ch):04X} {unicodedata.name(ch, 'unnamed character')}"  # unicodedata: the character's name


CHARACTER_WORDS = [
    ("1 nan 2", "'nan' is not a finite number", "nan"),
    ("1 2 Infinity", "'Infinity' is not a finite number", "Inf"),
    ("1 +nan", "'+nan' is not a finite number", "+"),
    ("0.5 -inf 1", "'-inf' is not a finite number", "-"),
    ("1.2.3 4", "malformed number '1.2.3'", "1.2"),
    ("4 12abc", "malformed number '12abc'", "12"),
    ("1 12\u00e9\u00e8 3", f"malformed number '12\u00e9\u00e8' (it holds '\u00e9' {_named(chr(0xE9))}; "
                           f"'\u00e8' {_named(chr(0xE8))})", "12"),
    ("1 7\u00b2 3", f"malformed number '7\u00b2' (it holds '\u00b2' {_named(chr(0xB2))})", "7"),
    ("1 ! 2", f"unexpected character {'!'!r}", "!"),            # repr(): printable ASCII is quoted
    ("1 ~ 2", f"unexpected character {'~'!r}", "~"),
    ("1 \x7f 2", f"unexpected character {_named(chr(0x7F))}", "\x7f"),   # DEL: not printable
    ("1 \u00e9 2", f"unexpected character '\u00e9' {_named(chr(0xE9))}", "\u00e9"),
    ("1 \u200b 2", f"unexpected character {_named(chr(0x200B))}", "\u200b"),
]


@pytest.mark.parametrize("text, reason, piece", CHARACTER_WORDS)
def test_a_message_names_the_character_it_stopped_at(text, reason, piece):
    err = _refusal(text)
    assert (err.reason, err.position) == (reason, text.index(piece))  # str.index: where it stands


# --------------------------------------------------------------------------------------
# the standard-library shortcut: regular nested lists only, as float64
# --------------------------------------------------------------------------------------

def _nested(depth: int, leaf=1.0):
    value = leaf
    for _ in range(depth):
        value = [value]
    return value


def test_python_literals_are_read_as_float64():
    for text in ("(1, 2, 3)", "[(1, 0), (0, 1.5)]", "[1, 2, 3, 4]"):
        p = parse_numbers(text)
        assert p.numbers.dtype == np.float64
        assert p.source_format == "nested list"
    p = parse_numbers("(1, 2, 3)")
    assert p.numbers.tolist() == [float("1"), float("2"), float("3")]  # float(): the numbers written


def test_the_shortcut_takes_regular_lists_whatever_mixes_them():
    arr, shape = paste._regular([[1.0, 2.0], (3.0, 4.0)], None)   # list and tuple rows: regular
    assert shape == (2, 2) and arr.tolist() == [1.0, 2.0, 3.0, 4.0]
    arr, shape = paste._regular([1, 2.5, 3], None)               # ints and floats side by side
    assert shape == (3,) and arr.tolist() == [1.0, 2.5, 3.0]
    arr, shape = paste._regular((1, 2, 3), None)
    assert arr.dtype == np.float64 and shape == (3,)
    arr, shape = paste._regular(_nested(MAX_NESTING), None)       # as deep as the reader allows
    assert shape == (1,) * MAX_NESTING and arr.tolist() == [1.0]


def test_the_shortcut_leaves_to_the_reader_what_the_reader_would_refuse():
    assert paste._regular(_nested(MAX_NESTING + 1), None) is None   # deeper than MAX_NESTING
    assert paste._regular([[], []], None) is None
    assert paste._regular([[1.0], []], None) is None
    assert paste._regular([True, 1.0], None) is None                # a boolean is no number
    assert paste._regular([1.0, 2.0], 2) is None                    # brackets Python did not count


# --------------------------------------------------------------------------------------
# the reading in posekit's words: no interpretations, fields of a position
# --------------------------------------------------------------------------------------

def test_a_count_no_pose_has_is_refused_on_request_word_for_word():
    p = parse_numbers("1 2 3 4 5")
    with pytest.raises(NoInterpretationError) as info:
        p.require_interpretations()
    assert str(info.value) == (
        "read 5 numbers (shape (5,)), but no pose representation has that many. Accepted counts: "
        "3: Euler angles (every sequence, intrinsic or extrinsic, degrees or radians) or a rotation vector; "
        "4: a quaternion (scalar first or last, Hamilton or JPL); "
        "6: a position and Euler angles or a rotation vector, in either order; "
        "7: a position and a quaternion, in either order; "
        "9: a 3x3 rotation matrix (row- or column-major); "
        "12: a 3x4 [R | t] matrix (row- or column-major); "
        "16: a 4x4 homogeneous transform (row- or column-major)")


def test_a_named_position_has_no_convention_fields():
    (only,) = parse_numbers("x: 1 y: 2 z: 3").interpretations
    assert only.kind == "position"
    assert only.fields() == {}
    assert only.convention_text() == ""
    assert only.code() == "t = np.asarray(numbers, dtype=float)"
    scope = {"np": np, "numbers": list(only.numbers)}
    exec(only.code(), scope)  # our own generated code
    assert np.array_equal(scope["t"], [1.0, 2.0, 3.0])


# --------------------------------------------------------------------------------------
# turn words: the angle and axis of each rotation block, as the summary prints them
# --------------------------------------------------------------------------------------

def _turn_text(angle_rad: float, axis) -> str:
    axis = np.asarray(axis, dtype=float)
    shown = ", ".join(f"{round(float(v), 4) + 0.0:.4f}" for v in axis)  # round()/format: four decimals, no -0
    return f"a turn of {math.degrees(angle_rad):.6g} degrees about ({shown})"  # math.degrees


@pytest.mark.parametrize("degrees, axis", [
    (30.0, [0.0, 0.0, 1.0]),
    (90.0, [1.0, 0.0, 0.0]),
    (120.0, [1.0, 1.0, 1.0]),
    (45.6448, [0.2894, -0.7439, 0.6024]),
    (50.0, [0.123449, 0.0, math.sqrt(1 - 0.123449 ** 2)]),      # rounds to 0.1234, not 0.1235
    (170.0, [-1e-6, 0.6, 0.8]),                                 # a tiny negative part prints as 0.0000
    (1e-4, [0.0, -1.0, 0.0]),                                   # a very small turn is still a turn
])
def test_a_rotation_is_told_as_its_turn_angle_and_axis(degrees, axis):
    axis = np.asarray(axis, dtype=float) / np.linalg.norm(axis)
    rotation = Rotation.from_rotvec(np.radians(degrees) * axis)  # scipy: Rotation.from_rotvec
    m = rotation.as_matrix()
    angle = rotation.magnitude()  # scipy: Rotation.magnitude
    assert paste._turn_words(m) == _turn_text(angle, rotation.as_rotvec() / angle)


def test_many_rotations_are_all_told_as_turns():
    for rotation in Rotation.random(40, random_state=11):  # scipy: Rotation.random
        angle = rotation.magnitude()
        assert paste._turn_words(rotation.as_matrix()) == _turn_text(angle, rotation.as_rotvec() / angle)


def test_a_matrix_off_orthonormal_is_told_by_its_nearest_rotation():
    rotation = Rotation.from_euler("ZYX", [30, -10, 5], degrees=True)  # scipy: Rotation.from_euler
    m = rotation.as_matrix() * 1.002  # printed digits slightly off: the nearest rotation is the same
    angle = rotation.magnitude()
    assert paste._turn_words(m) == _turn_text(angle, rotation.as_rotvec() / angle)


def test_a_turn_of_exactly_1e_12_radians_is_still_a_turn():
    # only turns below 1e-12 rad are called the identity; cos(1e-12) is 1.0 in float64 (math.cos)
    angle = 1e-12
    assert math.cos(angle) == 1.0
    m = np.eye(3)
    m[1, 2], m[2, 1] = -math.sin(angle), math.sin(angle)
    assert Rotation.from_matrix(m).magnitude() == pytest.approx(angle, rel=1e-6)  # scipy: Rotation.magnitude
    assert paste._turn_words(m) == _turn_text(angle, [1.0, 0.0, 0.0])
    m[1, 2], m[2, 1] = -math.sin(angle / 4), math.sin(angle / 4)
    assert paste._turn_words(m) == "no turn (the identity)"


def test_a_half_precision_block_is_widened_before_it_is_told():
    # numpy's linear algebra has no float16 routines; the words are those of the same matrix in float64
    for rotation in Rotation.random(5, random_state=23):  # scipy: Rotation.random
        m16 = rotation.as_matrix().astype(np.float16)
        nearest = Rotation.from_matrix(m16.astype(np.float64))  # scipy: orthogonalises the widened matrix
        angle = nearest.magnitude()
        assert paste._turn_words(m16) == _turn_text(angle, nearest.as_rotvec() / angle)


def test_identity_reflection_and_batch_words():
    assert paste._turn_words(np.eye(3)) == "no turn (the identity)"
    assert paste._turn_words(np.diag([-1.0, 1.0, 1.0])) == "a reflection (det -1), no rotation"
    assert paste._turn_words(np.diag([1.0, 1.0, -2.0])) == "a reflection (det -2), no rotation"
    batch = Rotation.random(2, random_state=5).as_matrix()  # scipy: Rotation.random
    assert paste._turn_words(batch) == "a batch of 2 rotations"
    assert paste._turn_words(np.stack([np.eye(3)] * 7)) == "a batch of 7 rotations"


def test_the_summary_prints_the_turn_under_each_reading():
    p = parse_numbers("1 0 0\n0 0 -1\n0 1 0")
    assert p.summary() == (
        "read 9 numbers as printed matrix, shape (3, 3)\n"
        "2 interpretations, several equally valid (none picked):\n"
        f"  [1.000] {p.interpretations[0].describe()}  -- the 3x3 block is orthonormal\n"
        f"          {_turn_text(math.pi / 2, [1, 0, 0])}\n"
        f"  [1.000] {p.interpretations[1].describe()}  -- the 3x3 block is orthonormal; "
        "the printed rows are taken as columns\n"
        f"          {_turn_text(math.pi / 2, [-1, 0, 0])}")
    # scipy: the row-major reading is a quarter turn about +x, the column-major one about -x
    assert np.allclose(p.interpretations[0].rotation, Rotation.from_rotvec([math.pi / 2, 0, 0]).as_matrix())
    identity = parse_numbers("1 0 0 0 1 0 0 0 1").summary().splitlines()
    assert identity[3] == identity[5] == "          no turn (the identity)"


# --------------------------------------------------------------------------------------
# code handed back: exact text, and running it gives the reading's rotation
# --------------------------------------------------------------------------------------

def _run(code: str, numbers) -> dict:
    scope = {"np": np, "pk": pk, "numbers": list(numbers)}
    exec(code, scope)  # our own generated code, not pasted text
    return scope


_OFF = "# the numbers are off orthonormal (printed digits)"


def test_a_matrix_off_orthonormal_is_handed_to_nearest_rotation_in_its_layout():
    rotation = Rotation.from_euler("ZYX", [30, -10, 5], degrees=True)  # scipy: Rotation.from_euler
    m = np.round(rotation.as_matrix(), 3)  # three printed digits: off orthonormal
    p = parse_numbers("\n".join(" ".join(f"{v:.3f}" for v in row) for row in m))
    by = {i.convention.layout: i for i in p.interpretations}
    assert by["row-major"].code() == ("M = np.reshape(np.ravel(numbers), (3, 3), order='C')\n"
                                      f"R = pk.nearest_rotation(M).rotation  {_OFF}")
    assert by["column-major"].code("q") == ("M = np.reshape(np.ravel(q), (3, 3), order='F')\n"
                                            f"R = pk.nearest_rotation(M).rotation  {_OFF}")
    # scipy: Rotation.from_matrix orthogonalises a matrix that is off; both give the rotation written
    assert np.allclose(_run(by["row-major"].code(), p.numbers)["R"], rotation.as_matrix(), atol=2e-3)
    assert np.allclose(_run(by["row-major"].code(), p.numbers)["R"], Rotation.from_matrix(m).as_matrix(),
                       atol=1e-9)
    assert np.allclose(_run(by["column-major"].code(), p.numbers)["R"], Rotation.from_matrix(m.T).as_matrix(),
                       atol=1e-9)


def test_an_orthonormal_matrix_is_read_as_it_is():
    m = Rotation.from_euler("xyz", [10, 20, 30], degrees=True).as_matrix()  # scipy: Rotation.from_euler
    p = parse_numbers(repr(m.tolist()))
    by = {i.convention.layout: i for i in p.interpretations}
    assert by["row-major"].code() == 'R = pk.read_rotation(np.ravel(numbers), "matrix")'
    assert by["column-major"].code() == 'R = pk.read_rotation(np.ravel(numbers), "matrix", "layout=column-major")'
    assert np.allclose(_run(by["row-major"].code(), p.numbers)["R"], m, atol=1e-12)
    assert np.allclose(_run(by["column-major"].code(), p.numbers)["R"], m.T, atol=1e-12)


@pytest.mark.parametrize("rows", [4, 3])
def test_a_transform_off_orthonormal_keeps_its_rows_and_its_position(rows):
    rotation = Rotation.from_euler("ZYX", [30, -10, 5], degrees=True)  # scipy: Rotation.from_euler
    t = np.eye(4)
    t[:3, :3] = np.round(rotation.as_matrix(), 3)
    t[:3, 3] = [1.5, -2.0, 3.25]
    written = t[:rows]
    p = parse_numbers("\n".join(" ".join(f"{v:.3f}" for v in row) for row in written))
    by = {i.convention.layout: i for i in p.interpretations}
    for layout, order in (("row-major", "C"), ("column-major", "F")):
        assert by[layout].code() == (f"M = np.reshape(np.ravel(numbers), ({rows}, 4), order='{order}')\n"
                                     "R = pk.nearest_rotation(M[:3, :3]).rotation  # off orthonormal (printed digits)\n"
                                     "t = M[:3, 3]")
    scope = _run(by["row-major"].code(), p.numbers)
    assert np.allclose(scope["R"], Rotation.from_matrix(t[:3, :3]).as_matrix(), atol=1e-9)  # scipy: from_matrix
    assert np.array_equal(scope["t"], [1.5, -2.0, 3.25])


def test_quaternion_code_quotes_with_double_quotes_and_slices_by_order():
    assert parse_numbers("0 0 0 2").interpretations[0].code() == \
        'R = pk.read_rotation(np.ravel(numbers), "quaternion", normalise=True)'
    p = parse_numbers("0.1 0.2 0.3 0 0 0 1")
    codes = {(i.position_first, i.convention_text()): i.code() for i in p.interpretations}
    assert codes[(True, "")] == 'R = pk.read_rotation(np.ravel(numbers)[3:], "quaternion")\nt = np.ravel(numbers)[:3]'
    assert codes[(False, "scalar=last")] == ('R = pk.read_rotation(np.ravel(numbers)[:4], "quaternion", "scalar=last", '
                                             'normalise=True)\nt = np.ravel(numbers)[-3:]')
    for i in p.interpretations:
        scope = _run(i.code(), p.numbers)
        assert np.allclose(scope["R"], i.rotation, atol=1e-12)
        assert np.array_equal(scope["t"], [0.1, 0.2, 0.3] if i.position_first else [0.0, 0.0, 1.0])
    # scipy: Rotation.from_quat reads scalar-last Hamilton; (0, 0, 0, 1) is no turn
    last = [i for i in p.interpretations if i.position_first and i.convention_text() == "scalar=last"]
    assert np.allclose(last[0].rotation, Rotation.from_quat([0, 0, 0, 1]).as_matrix())


def test_angle_code_after_the_position_or_before_it():
    p = parse_numbers("1 2 3 0.1 0.2 0.3")
    for i in p.interpretations:
        head = "[3:]" if i.position_first else "[:3]"
        tail = "[:3]" if i.position_first else "[-3:]"
        conv = i.convention_text()
        carg = f', "{conv}"' if conv else ""
        assert i.code() == (f'R = pk.read_rotation(np.ravel(numbers){head}, "{i.rotation_kind}"{carg})\n'
                            f"t = np.ravel(numbers){tail}")
        scope = _run(i.code(), p.numbers)
        assert np.allclose(scope["R"], i.rotation, atol=1e-12)
        assert np.array_equal(scope["t"], i.translation)


@pytest.mark.parametrize("name, shown", [
    ("1x", "'1x'"),
    ("class", "'class'"),
    ("2" + "x" * 45, "'2" + "x" * 39 + "'... (46 characters)"),   # quoted and cut at 40 characters
    (3, "a int"),
    (None, "a NoneType"),
    (b"q", "a bytes"),
])
def test_a_name_the_code_cannot_use_is_refused_word_for_word(name, shown):
    interp = parse_numbers("0 0 0 1").interpretations[0]
    with pytest.raises(CodeNameError) as info:
        interp.code(name)
    assert str(info.value) == (f"code(name): {shown} is not a name the code can use as written; accepted: a "
                               "Python identifier that is not a keyword, such as numbers, q or pose_1 "
                               "(letters, digits and underscores, not starting with a digit)")


def test_the_plain_data_of_a_named_paste_is_the_text_and_scipy():
    import json
    text = "x: 1.5\ny: -2\nz: 0.25\nqx: 0\nqy: 0\nqz: 0.6\nqw: 0.8"
    parsed = parse_numbers(text)
    data = json.loads(json.dumps(parsed.as_dict()))                 # plain JSON, nothing lost on the way
    assert data["numbers"] == [float(v.split(":")[1]) for v in text.splitlines()]   # float() of the text
    assert data["names"] == [v.split(":")[0] for v in text.splitlines()]
    assert (data["shape"], data["format"], data["notes"], data["ambiguous"]) == ([7], "named values", [], True)
    hamilton = Rotation.from_quat([0.0, 0.0, 0.6, 0.8]).as_matrix()   # scipy: scalar last, Hamilton
    want = {"scalar=last": hamilton, "scalar=last algebra=jpl": hamilton.T}   # JPL: the transpose
    assert [i["convention"] for i in data["interpretations"]] == list(want)
    for interp, d in zip(parsed.interpretations, data["interpretations"]):
        assert set(d) == {"kind", "reading", "convention", "score", "reasons", "rotation_matrix", "translation"}
        assert d["kind"] == "position-quaternion"
        assert d["reading"] == interp.describe() and d["reasons"] == list(interp.reasons)
        assert d["score"] == round(float(interp.score), 6) == 1.0
        np.testing.assert_allclose(d["rotation_matrix"], want[d["convention"]], atol=1e-12)
        assert d["translation"] == [1.5, -2.0, 0.25]


def test_the_plain_data_of_a_batch_holds_no_single_matrix():
    import json
    batch = paste.interpret_numbers(np.array([[0.1, 0.2, 0.3], [0.4, -0.5, 0.6]]))
    for interp in batch:
        d = json.loads(json.dumps(interp.as_dict()))
        assert set(d) == {"kind", "reading", "convention", "score", "reasons"}     # no one matrix to show
        assert d["convention"] == interp.convention_text() and d["kind"] == interp.kind
