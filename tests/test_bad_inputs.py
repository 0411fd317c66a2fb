"""A catalogue of bad inputs across the public core functions.

Each entry asserts the error TYPE (from posekit.core.errors) and that the message names
the problem with a distinctive word.  Nothing may be silently repaired.
Also: every convention's text form round-trips, and describe() says every axis in words.
"""

from __future__ import annotations

import dataclasses
import re

import numpy as np
import pytest
from conventions import all_conventions

import posekit as pk
from posekit.core import errors as E
from posekit.core.checks import as_numbers
from posekit.core.rotation import elementary_matrix

#: every test here runs on each kernel route of large batches (compiled loops and numpy)
pytestmark = pytest.mark.usefixtures("kernel_route")

EYE3, EYE4 = np.eye(3), np.eye(4)
NAN, INF = float("nan"), float("inf")
REFLECTION = np.diag([1.0, 1.0, -1.0])
TILTED = elementary_matrix("x", 0.5)


def bottom_row_translation():
    t = pk.make_transform(elementary_matrix("z", 0.3), [1.0, 2.0, 3.0])
    return t.T  # a column-major 4x4 read row by row: translation in the bottom row


def noisy():
    return EYE3 + 1e-3 * np.arange(9.0).reshape(3, 3)


# (id, call, error type, regex the message must contain)
CATALOGUE = [
    # --- shapes -----------------------------------------------------------------------------
    ("euler-two-numbers", lambda: pk.read_rotation([1, 2], "euler"), E.WrongShapeError, r"shape \(2,\).*\(\.\.\., 3\)"),
    ("matrix-3x4", lambda: pk.read_rotation(np.zeros((3, 4)), "matrix"), E.WrongShapeError, r"\(\.\.\., 3, 3\)"),
    ("matrix-4x4-as-rotation", lambda: pk.read_rotation(EYE4, "matrix"), E.WrongShapeError, r"shape \(4, 4\)"),
    ("quaternion-three-numbers", lambda: pk.read_rotation([1, 0, 0], "quaternion"), E.WrongShapeError,
     r"\(\.\.\., 4\)"),
    ("flat-16-as-rotation", lambda: pk.read_rotation(np.arange(16.0), "matrix"), E.WrongShapeError, r"reshaped"),
    ("vectors-two-numbers", lambda: pk.turn_vectors(EYE3, [1, 2]), E.WrongShapeError, r"vectors"),
    ("translation-two-numbers", lambda: pk.make_transform(EYE3, [1, 2]), E.WrongShapeError, r"translation"),
    ("points-two-numbers", lambda: pk.transform_points(EYE4, [[1, 2]]), E.WrongShapeError, r"points"),
    ("pose-three-numbers", lambda: pk.read_transform([1, 2, 3], "position-quaternion"), E.WrongShapeError,
     r"\(\.\.\., 7\)"),
    ("transform-2x2", lambda: pk.checked_transform(np.eye(2)), E.WrongShapeError, r"SE\(3\)"),
    ("transform-5-numbers", lambda: pk.read_transform(np.arange(5.0), "matrix"), E.WrongShapeError,
     r"flat 16 or 12"),
    ("mixed-se3-se2", lambda: pk.compose_transforms(EYE4, EYE3), E.WrongShapeError,
     r"4x4 transform with a 3x3.*SE\(3\) or both SE\(2\)"),
    ("quaternion-product-shape", lambda: pk.quaternion_product([1, 0, 0], [1, 0, 0, 0]), E.WrongShapeError,
     r"quaternion p"),
    ("nearest-rotation-vector", lambda: pk.nearest_rotation([1, 2, 3]), E.WrongShapeError, r"\(\.\.\., 3, 3\)"),
    ("pose-of-3x3", lambda: pk.Pose(EYE3), E.WrongShapeError, r"\(\.\.\., 4, 4\)"),
    # --- NaN and infinity --------------------------------------------------------------------
    ("euler-nan", lambda: pk.read_rotation([NAN, 0, 0], "euler"), E.NotFiniteError, r"NaN or infinity.*index \(0,\)"),
    ("quaternion-inf", lambda: pk.read_rotation([1, 0, 0, INF], "quaternion"), E.NotFiniteError, r"index \(3,\)"),
    ("matrix-nan", lambda: pk.read_rotation(np.where(np.eye(3) > 0, NAN, 0.0), "matrix"), E.NotFiniteError,
     r"NaN"),
    ("vectors-nan", lambda: pk.turn_vectors(EYE3, [NAN, 0, 0]), E.NotFiniteError, r"vectors"),
    ("planar-nan", lambda: pk.make_planar(0, NAN, 0), E.NotFiniteError, r"\by\b.*NaN"),
    ("slerp-t-nan", lambda: pk.slerp(EYE3, TILTED, [NAN]), E.NotFiniteError, r"\bt\b"),
    ("translation-inf", lambda: pk.make_transform(EYE3, [0, -INF, 0]), E.NotFiniteError, r"translation"),
    # --- not numbers ---------------------------------------------------------------------------
    ("euler-string", lambda: pk.read_rotation("1 0 0", "euler"), E.WrongTypeError, r"text"),
    ("euler-string-items", lambda: pk.read_rotation(["a", "b", "c"], "euler"), E.WrongTypeError, r"text items"),
    ("compose-string", lambda: pk.compose("identity"), E.WrongTypeError, r"text"),
    ("euler-none", lambda: pk.read_rotation(None, "euler"), E.WrongTypeError, r"None"),
    ("points-transform-none", lambda: pk.transform_points(None, [0, 0, 0]), E.WrongTypeError, r"None"),
    ("quaternion-dict", lambda: pk.read_rotation({"w": 1}, "quaternion"), E.WrongTypeError, r"dict"),
    ("euler-set", lambda: pk.read_rotation({1.0, 2.0, 3.0}, "euler"), E.WrongTypeError, r"set"),
    ("planar-boolean", lambda: pk.read_rotation(True, "planar-angle"), E.WrongTypeError, r"boolean"),
    ("euler-booleans", lambda: pk.read_rotation([True, False, True], "euler"), E.WrongTypeError, r"booleans"),
    ("euler-complex", lambda: pk.read_rotation([1j, 0, 0], "euler"), E.WrongTypeError, r"complex"),
    ("euler-objects", lambda: pk.read_rotation([object(), 1, 2], "euler"), E.WrongTypeError, r"rectangular"),
    ("planar-string-x", lambda: pk.make_planar("1", 0, 0), E.WrongTypeError, r"text"),
    # --- empty and ragged ----------------------------------------------------------------------
    ("euler-empty-list", lambda: pk.read_rotation([], "euler"), E.WrongShapeError, r"empty"),
    ("euler-empty-batch", lambda: pk.read_rotation(np.zeros((0, 3)), "euler"), E.WrongShapeError, r"empty"),
    ("euler-ragged", lambda: pk.read_rotation([[1, 2, 3], [4, 5]], "euler"), E.WrongTypeError, r"unequal lengths"),
    ("matrix-ragged", lambda: pk.read_rotation([[1, 0, 0], [0, 1], [0, 0, 1]], "matrix"), E.WrongTypeError,
     r"unequal lengths"),
    # --- quaternions ----------------------------------------------------------------------------
    ("quaternion-zero", lambda: pk.read_rotation([0, 0, 0, 0], "quaternion"), E.ZeroQuaternionError, r"zero length"),
    ("quaternion-length-2", lambda: pk.read_rotation([2, 0, 0, 0], "quaternion"), E.NotUnitQuaternionError,
     r"length is 2\b.*normalise=True"),
    ("quaternion-batch-one-short", lambda: pk.read_rotation([[1, 0, 0, 0], [0.9, 0, 0, 0]], "quaternion"),
     E.NotUnitQuaternionError, r"0\.9.*index \(1,\)"),
    ("quaternion-zero-in-pose", lambda: pk.read_transform([1, 2, 3, 0, 0, 0, 0], "position-quaternion"),
     E.ZeroQuaternionError, r"zero length"),
    ("axis-angle-zero-axis", lambda: pk.read_rotation([0, 0, 0, 30], "axis-angle"), E.ZeroQuaternionError,
     r"axis has zero length"),
    ("axis-angle-long-axis", lambda: pk.read_rotation([0, 0, 2, 30], "axis-angle"), E.NotUnitQuaternionError,
     r"axis length is 2"),
    # --- reflections and scaled or noisy matrices --------------------------------------------------
    ("matrix-reflection", lambda: pk.read_rotation(REFLECTION, "matrix"), E.ReflectionError, r"reflection"),
    ("compose-reflection", lambda: pk.compose(EYE3, np.diag([-1.0, 1, 1])), E.ReflectionError, r"handedness"),
    ("batch-reflection-index", lambda: pk.read_rotation(np.stack([EYE3, np.diag([1.0, -1, 1])]), "matrix"),
     E.ReflectionError, r"index \(1,\)"),
    ("transform-reflection", lambda: pk.read_transform(pk.make_transform(EYE3, [0, 0, 0]) @ np.diag([1, 1, -1, 1.0])),
     E.ReflectionError, r"reflection"),
    ("matrix-scaled-2", lambda: pk.read_rotation(2 * EYE3, "matrix"), E.NotOrthonormalError, r"scaled by about 2\b"),
    ("turn-scaled-half", lambda: pk.turn_vectors(0.5 * EYE3, [1, 0, 0]), E.NotOrthonormalError, r"scaled"),
    ("matrix-noisy", lambda: pk.read_rotation(noisy(), "matrix"), E.NotOrthonormalError,
     r"not orthonormal.*\|M\^T M - I\| = .*nearest_rotation"),
    ("angle-between-zeros", lambda: pk.angle_between(EYE3, np.zeros((3, 3))), E.NotOrthonormalError,
     r"not orthonormal"),
    ("pose-scaled", lambda: pk.Pose(np.diag([3.0, 3, 3, 1])), E.NotOrthonormalError, r"rotation block"),
    # --- transform layout ---------------------------------------------------------------------------
    ("column-major-read-row-major", lambda: pk.read_transform(bottom_row_translation(), "matrix"), E.WrongShapeError,
     r"bottom row.*layout=column-major"),
    ("transform-bad-last-row", lambda: pk.checked_transform(np.diag([1.0, 1, 1, 2])), E.WrongShapeError,
     r"last row"),
    # --- convention text ------------------------------------------------------------------------------
    ("text-bad-sequence", lambda: pk.Convention.parse("sequence=q-y-x"), E.ConventionTextError,
     r"'q-y-x'.*accepted: x-y-z"),
    ("text-upper-case-key", lambda: pk.Convention.parse("Sequence=z-y-x"), E.ConventionTextError, r"upper-case"),
    ("text-upper-case-value", lambda: pk.Convention.parse("sequence=ZYX"), E.ConventionTextError, r"upper-case"),
    ("text-upper-case-unit", lambda: pk.Convention.parse("unit=Degrees"), E.ConventionTextError, r"upper-case"),
    ("text-unknown-key", lambda: pk.Convention.parse("order=zyx"), E.ConventionTextError,
     r"unknown key 'order'.*accepted keys: sequence"),
    ("text-duplicate-key", lambda: pk.Convention.parse("sequence=zyx unit=degrees sequence=xyz"),
     E.ConventionTextError, r"'sequence' is given twice"),
    ("text-no-equals", lambda: pk.Convention.parse("zyx degrees"), E.ConventionTextError, r"'zyx'.*key=value"),
    ("text-empty", lambda: pk.Convention.parse("  ,; "), E.ConventionTextError, r"empty"),
    ("text-not-a-string", lambda: pk.Convention.parse(42), E.ConventionTextError, r"int 42.*expected a string"),
    ("text-abbreviated-unit", lambda: pk.Convention.parse("unit=deg"), E.ConventionTextError,
     r"'deg'.*accepted: radians, degrees"),
    ("text-bad-axes-word", lambda: pk.Convention.parse("axes=body"), E.ConventionTextError,
     r"'body'.*intrinsic, extrinsic"),
    ("text-bad-algebra", lambda: pk.Convention.parse("algebra=jpl-ish"), E.ConventionTextError, r"hamilton, jpl"),
    ("text-in-read", lambda: pk.read_rotation([0, 0, 0], "euler", "unit=gradians"), E.ConventionTextError,
     r"'gradians'"),
    ("field-bad-sequence", lambda: pk.Convention(sequence="zzz"), E.ConventionError, r"'sequence'.*'z-z-z'.*accepted"),
    ("field-upper-case", lambda: pk.Convention(unit="Degrees"), E.ConventionError, r"'Degrees'.*radians, degrees"),
    ("field-not-text", lambda: pk.Convention(action=1), E.ConventionError, r"'action'"),
    ("changed-unknown-field", lambda: pk.Convention().changed(order="zyx"), E.ConventionError,
     r"unknown convention field"),
    # --- kinds --------------------------------------------------------------------------------------------
    ("kind-misspelt", lambda: pk.read_rotation([0, 0, 0], "eulers"), E.PoseInputError,
     r"unknown kind.*'eulers'.*euler"),
    ("kind-upper-case", lambda: pk.write_rotation(EYE3, "Quaternion"), E.PoseInputError, r"unknown kind"),
    ("kind-transform", lambda: pk.read_transform(EYE4, "pose"), E.PoseInputError,
     r"unknown kind of transform.*position-quaternion"),
    ("kind-convert-target", lambda: pk.convert([0, 0, 0], "euler", "rotvec"), E.PoseInputError, r"'rotvec'"),
    ("planar-of-tilted", lambda: pk.write_rotation(TILTED, "planar-angle"), E.WrongShapeError,
     r"not a turn about z.*28\.6"),
]


def test_catalogue_is_large_and_unique():
    ids = [c[0] for c in CATALOGUE]
    assert len(ids) >= 40
    assert len(set(ids)) == len(ids)


@pytest.mark.parametrize("name,call,error,pattern", CATALOGUE, ids=[c[0] for c in CATALOGUE])
def test_bad_input(name, call, error, pattern):
    with pytest.raises(error) as info:
        call()
    assert isinstance(info.value, E.PoseInputError)
    assert re.search(pattern, str(info.value), flags=re.S), str(info.value)


def test_errors_are_builtin_compatible():
    assert issubclass(E.WrongTypeError, TypeError)
    for cls in (E.WrongShapeError, E.NotFiniteError, E.ZeroQuaternionError, E.NotUnitQuaternionError,
                E.NotOrthonormalError, E.ReflectionError, E.ConventionError, E.ConventionTextError):
        assert issubclass(cls, E.PoseInputError) and issubclass(cls, ValueError)


def test_nothing_repaired_silently():
    q = np.array([2.0, 0, 0, 0])
    assert np.allclose(pk.read_rotation(q, "quaternion", normalise=True), EYE3)  # only when asked
    m = noisy()
    before = m.copy()
    with pytest.raises(E.NotOrthonormalError):
        pk.read_rotation(m, "matrix")
    assert np.array_equal(m, before)
    p = pk.nearest_rotation(m)  # the one place that changes numbers reports how far
    assert p.moved > 0 and p.orthonormality_error > 1e-3 and "moved by" in p.summary()
    assert np.array_equal(as_numbers([1, 2, 3], "x", (3,)), [1.0, 2.0, 3.0])
    r = pk.nearest_rotation(REFLECTION)
    assert bool(r.was_reflection) and np.isclose(np.linalg.det(r.rotation), 1.0) and "reflection" in r.summary()


# --- the convention's text form and its words ---------------------------------------------

def test_text_round_trip_every_convention():
    seen = set()
    for c in all_conventions():
        text = c.to_text()
        back = pk.Convention.parse(text)
        assert back == c and hash(back) == hash(c)
        assert str(c) == text
        seen.add(text)
    assert len(seen) == int(np.prod([len(v) for v in pk.CHOICES.values()]))


def test_text_forms_and_separators():
    a = pk.Convention.parse("sequence=zyx unit=degrees")
    assert a == pk.Convention.parse("sequence=z-y-x,unit=degrees") == pk.Convention.parse("unit=degrees;\nsequence=zyx")
    assert a == pk.Convention(sequence="zyx", unit="degrees")
    assert a.sequence == "z-y-x" and a.axes == "intrinsic"  # keys left out take their defaults
    with pytest.raises(dataclasses.FrozenInstanceError):
        a.unit = "radians"
    assert pk.Convention.parse(a) is a


def test_parse_remembers_texts_but_never_errors():
    # the parse of a text is remembered (conventions are frozen, so sharing one is safe) ...
    text = "sequence=x-z-x unit=degrees wrap=positive"
    first = pk.Convention.parse(text)
    assert pk.Convention.parse(text) is first and first == pk.Convention(sequence="xzx", unit="degrees",
                                                                          wrap="positive")
    # ... a bad text raises its typed error on every call, not only the first
    for _ in range(3):
        with pytest.raises(E.ConventionTextError, match="unknown key"):
            pk.Convention.parse("order=zyx")
    # a subclass still gets instances of its own class
    class Mine(pk.Convention):
        pass
    assert type(Mine.parse(text)) is Mine and Mine.parse(text).to_text() == first.to_text()


def test_describe_says_every_axis_in_words():
    for c in all_conventions():
        words = c.describe()
        p, q, r = c.axes_letters
        if c.intrinsic:
            assert f"about {p}, then the second about the new {q}, then the third about the new {r}" in words
        else:
            assert f"about the fixed {p} axis" in words and f"about the fixed {r} axis" in words
        assert f"angles in {c.unit}" in words
        half = "180" if c.degrees else "pi"
        assert (f"(-{half}, {half}]" in words) == (c.wrap == "signed")
        assert ("(w, x, y, z), scalar first" in words) == (c.scalar == "first")
        assert ("Hamilton algebra (ij = k)" in words) == (c.algebra == "hamilton")
        assert ("JPL algebra (ij = -k)" in words) == (c.algebra == "jpl")
        assert ("passive matrix" in words) == (c.action == "passive")
        assert ("maps child coordinates into the parent" in words) == (c.direction == "parent-from-child")
        assert ("column by column" in words) == (c.layout == "column-major")
    assert "the usual yaw, pitch, roll" in pk.Convention(sequence="z-y-x").describe()
    assert "the usual roll, pitch, yaw" in pk.Convention(sequence="x-y-z", axes="extrinsic").describe()
