"""Hostile inputs to the public functions of posekit's core (and the settings of diagnose/score).

Every hostile input must end in a typed posekit error whose message says what was seen and
what is accepted; nothing is repaired silently and nothing fails inside numpy or Python.

The catalogue is generated: each argument slot of a public function (a callable taking the
one hostile value) is crossed with the hostile values that fit it; hand-written rows add
broadcasting, overflow, angle precision, kinds and operators.  Each row states the exact
error class and a pattern the message must contain naming the offending value or shape;
every message must also say what is accepted (the word "accepted" or "expected").

The inputs that must keep working (broadcasting a batch of one, masked arrays without masked
entries, the largest accepted angles) are checked against scipy.spatial.transform.Rotation
as the reference (scipy).
"""

from __future__ import annotations

import math
import re
from decimal import Decimal
from fractions import Fraction
from typing import Callable, NamedTuple

import numpy as np
import pytest
from scipy.spatial.transform import Rotation, Slerp

import posekit as pk
from posekit.analysis import diagnose, diagnose_batch
from posekit.core import errors as E
from posekit.core.checks import ANGLE_TOLERANCE, LARGEST_COORDINATE
from posekit.core.rotation import elementary_matrix
from posekit.explain import score

NAN, INF = float("nan"), float("inf")
EYE3, EYE4 = np.eye(3), np.eye(4)
TILTED = elementary_matrix("x", 0.5) @ elementary_matrix("z", 0.25)
Q = np.array([math.cos(0.3), math.sin(0.3), 0.0, 0.0])
ANGLES = np.array([0.1, -0.2, 0.3])
AXIS_ANGLE = np.array([0.0, 0.0, 1.0, 0.4])
T4 = pk.make_transform(TILTED, [1.0, -2.0, 3.0])
PQ7 = np.array([1.0, 2.0, 3.0, *Q])
PE6 = np.array([1.0, 2.0, 3.0, *ANGLES])
T3 = pk.make_planar(1.0, 2.0, 0.3)
MESSAGE_SAYS_ACCEPTED = re.compile(r"\b(accepted|expected)\b", re.I)


class Case(NamedTuple):
    id: str
    call: Callable[[], object]
    error: type
    names: str  # pattern: the message names the offending value or shape


def shape_text(shape) -> str:
    return re.escape(str(tuple(shape)))


# --- generated: array arguments x hostile arrays -------------------------------------------

# (slot, call taking the one value, a valid value of the slot)
ARRAY_SLOTS = [
    ("read_rotation-matrix", lambda v: pk.read_rotation(v, "matrix"), EYE3),
    ("read_rotation-quaternion", lambda v: pk.read_rotation(v, "quaternion"), Q),
    ("read_rotation-euler", lambda v: pk.read_rotation(v, "euler"), ANGLES),
    ("read_rotation-rotvec", lambda v: pk.read_rotation(v, "rotation-vector"), ANGLES),
    ("read_rotation-axis-angle", lambda v: pk.read_rotation(v, "axis-angle"), AXIS_ANGLE),
    ("convert-euler", lambda v: pk.convert(v, "euler", "quaternion"), ANGLES),
    ("compose-first", lambda v: pk.compose(v, EYE3), TILTED),
    ("compose-second", lambda v: pk.compose(EYE3, v), TILTED),
    ("invert", pk.invert, TILTED),
    ("turn_vectors-rotation", lambda v: pk.turn_vectors(v, [1.0, 0.0, 0.0]), TILTED),
    ("turn_vectors-vectors", lambda v: pk.turn_vectors(TILTED, v), ANGLES),
    ("angle_between", lambda v: pk.angle_between(EYE3, v), TILTED),
    ("slerp-a", lambda v: pk.slerp(v, EYE3, 0.5), TILTED),
    ("quaternion_product-p", lambda v: pk.quaternion_product(v, Q), Q),
    ("write_rotation", lambda v: pk.write_rotation(v, "euler"), TILTED),
    ("make_transform-rotation", lambda v: pk.make_transform(v, [0.0, 0.0, 0.0]), TILTED),
    ("make_transform-translation", lambda v: pk.make_transform(TILTED, v), ANGLES),
    ("transform_points-points", lambda v: pk.transform_points(T4, v), ANGLES),
    ("transform_directions", lambda v: pk.transform_directions(T4, v), ANGLES),
    ("invert_transform", pk.invert_transform, T4),
    ("compose_transforms-second", lambda v: pk.compose_transforms(T4, v), T4),
    ("read_transform-position-quaternion", lambda v: pk.read_transform(v, "position-quaternion"), PQ7),
    ("read_transform-position-euler", lambda v: pk.read_transform(v, "position-euler"), PE6),
    ("Pose", pk.Pose, T4),
    ("nearest_rotation", pk.nearest_rotation, TILTED),
    ("checked_matrix", pk.checked_matrix, TILTED),
    ("as_numbers", lambda v: pk.as_numbers(v, "numbers", (3,)), ANGLES),
]


def _with_first(base: np.ndarray, value: float) -> np.ndarray:
    out = np.array(base, dtype=np.float64)
    out.flat[0] = value
    return out


def _masked(base: np.ndarray):
    mask = np.zeros(base.shape, dtype=bool)
    mask.flat[-1] = True
    return np.ma.masked_array(base, mask=mask)


def _wider(base: np.ndarray) -> np.ndarray:
    return np.zeros(base.shape[:-1] + (base.shape[-1] + 1,))


# (value id, build from the slot's valid value, error, pattern naming it built from the value)
HOSTILE_ARRAYS = [
    ("none", lambda b: None, E.WrongTypeError, lambda b: r"got None"),
    ("text", lambda b: "1 0 0", E.WrongTypeError, lambda b: r"'1 0 0'"),
    ("dict", lambda b: {"w": 1.0}, E.WrongTypeError, lambda b: r"dict \{'w': 1\.0\}"),
    ("set", lambda b: {1.0, 2.0}, E.WrongTypeError, lambda b: r"set \{1\.0, 2\.0\}"),
    ("bool", lambda b: True, E.WrongTypeError, lambda b: r"boolean True"),
    ("complex", lambda b: b + 1j, E.WrongTypeError, lambda b: r"complex numbers array of shape " + shape_text(b.shape)),
    ("ragged", lambda b: [[1.0, 0.0, 0.0], [0.0, 1.0]], E.WrongTypeError,
     lambda b: r"unequal lengths \(\[\[1\.0, 0\.0, 0\.0\], \[0\.0, 1\.0\]\]\)"),
    ("objects", lambda b: np.array([1.0, None, 0.0], dtype=object), E.WrongTypeError,
     lambda b: r"dtype object: \[1\.0, None, 0\.0\]"),
    ("booleans", lambda b: b > 0, E.WrongTypeError, lambda b: r"booleans array of shape " + shape_text(b.shape)),
    ("text-items", lambda b: b.astype(str), E.WrongTypeError, lambda b: r"text items array of shape " + shape_text(b.shape)),
    ("empty", lambda b: np.zeros((0,) + b.shape), E.WrongShapeError, lambda b: shape_text((0,) + b.shape)),
    ("zero-d", lambda b: np.float64(0.5), E.WrongShapeError, lambda b: r"shape \(\)"),
    ("wider", _wider, E.WrongShapeError, lambda b: shape_text(b.shape[:-1] + (b.shape[-1] + 1,))),
    ("nan", lambda b: _with_first(b, NAN), E.NotFiniteError, lambda b: r"index \(0,( 0)?\), value nan"),
    ("minus-inf", lambda b: _with_first(b, -INF), E.NotFiniteError, lambda b: r"index \(0,( 0)?\), value -inf"),
    ("masked", _masked, E.MaskedEntriesError,
     lambda b: r"masked array of shape " + shape_text(b.shape) + r" with 1 masked entry"),
]

GENERATED_ARRAYS = [
    Case(f"{slot}/{vid}", (lambda f=f, v=build(base): f(v)), err, names(base))
    for slot, f, base in ARRAY_SLOTS
    for vid, build, err, names in HOSTILE_ARRAYS
]


# --- generated: tolerances, counts, flags and kinds ----------------------------------------

OBSERVED_Q = [0.0, 0.0, 0.0, 1.0]
BATCH = np.stack([EYE3, TILTED, EYE3])
BATCH_OBSERVED = pk.write_rotation(BATCH, "quaternion")

# (slot, call taking the tolerance, None means "the default" there)
TOLERANCE_SLOTS = [
    ("read_rotation-matrix", lambda t: pk.read_rotation(EYE3, "matrix", tolerance=t), True),
    ("read_rotation-quaternion", lambda t: pk.read_rotation(Q, "quaternion", tolerance=t), True),
    ("read_rotation-axis-angle", lambda t: pk.read_rotation(AXIS_ANGLE, "axis-angle", tolerance=t), True),
    ("convert", lambda t: pk.convert(Q, "quaternion", "euler", tolerance=t), True),
    ("checked_matrix", lambda t: pk.checked_matrix(EYE3, tolerance=t), False),
    ("checked_quaternion", lambda t: pk.checked_quaternion(Q, tolerance=t), False),
    ("checked_transform", lambda t: pk.checked_transform(T4, tolerance=t), False),
    ("diagnose-rotation", lambda t: diagnose(EYE3, OBSERVED_Q, rotation_tolerance=t), False),
    ("diagnose-translation", lambda t: diagnose(EYE3, OBSERVED_Q, translation_tolerance=t), False),
    ("diagnose_batch-rotation", lambda t: diagnose_batch(BATCH, BATCH_OBSERVED, rotation_tolerance=t), False),
    ("diagnose_batch-snap", lambda t: diagnose_batch(BATCH, BATCH_OBSERVED, snap_tolerance=t), False),
    # the settings are checked before the (here absent) readings are looked at
    ("score-rotation", lambda t: score(None, [], [], rotation_tolerance=t, translation_tolerance=0.01), False),
    ("score-translation", lambda t: score(None, [], [], rotation_tolerance=0.01, translation_tolerance=t), False),
]
HOSTILE_TOLERANCES = [
    ("zero", 0, E.BadToleranceError, r"got 0 \(a tolerance must be > 0\)"),
    ("negative", -1e-6, E.BadToleranceError, r"got -1e-06"),
    ("nan", NAN, E.BadToleranceError, r"got nan"),
    ("inf", INF, E.BadToleranceError, r"got inf"),
    ("subnormal-square", 1e-200, E.BadToleranceError, r"got 1e-200"),
    ("huge", 1e200, E.BadToleranceError, r"got 1e\+200"),
    ("huge-int", 10 ** 400, E.BadToleranceError, r"got 1000000"),
    ("text", "1e-6", E.ToleranceTypeError, r"text '1e-6'"),
    ("bool", True, E.ToleranceTypeError, r"boolean True"),
    ("list", [1e-6], E.ToleranceTypeError, r"\[1e-06\]"),
    ("complex", 1e-6j, E.ToleranceTypeError, r"1e-06j"),
    ("array", np.array([1e-6, 1e-6]), E.ToleranceTypeError, r"array of shape \(2,\)"),
    ("none", None, E.ToleranceTypeError, r"None"),
]
GENERATED_TOLERANCES = [
    Case(f"{slot}/tolerance-{vid}", (lambda f=f, v=v: f(v)), err, names)
    for slot, f, none_is_default in TOLERANCE_SLOTS
    for vid, v, err, names in HOSTILE_TOLERANCES
    if not (vid == "none" and none_is_default)
]

COUNT_SLOTS = [
    ("diagnose-limit", lambda n: diagnose(EYE3, OBSERVED_Q, limit=n)),
    ("diagnose_batch-limit", lambda n: diagnose_batch(BATCH, BATCH_OBSERVED, limit=n)),
    ("score-limit", lambda n: score(None, [], [], rotation_tolerance=0.01, translation_tolerance=0.01, limit=n)),
    ("score-keep", lambda n: score(None, [], [], rotation_tolerance=0.01, translation_tolerance=0.01, keep=n)),
]
HOSTILE_COUNTS = [
    ("zero", 0, E.BadCountError, r"got 0\b"),
    ("negative", -1, E.BadCountError, r"got -1\b"),
    ("text", "3", E.CountTypeError, r"got '3' of type str"),
    ("float", 2.0, E.CountTypeError, r"got 2\.0 of type float"),
    ("bool", True, E.CountTypeError, r"got True of type bool"),
    ("none", None, E.CountTypeError, r"got None"),
    ("nan", NAN, E.CountTypeError, r"got nan"),
]
GENERATED_COUNTS = [
    Case(f"{slot}/{vid}", (lambda f=f, v=v: f(v)), err, names)
    for slot, f in COUNT_SLOTS
    for vid, v, err, names in HOSTILE_COUNTS
]

FLAG_SLOTS = [
    ("read_rotation-normalise", lambda x: pk.read_rotation(Q, "quaternion", normalise=x)),
    ("write_rotation-flat", lambda x: pk.write_rotation(TILTED, "matrix", flat=x)),
    ("write_rotation-check", lambda x: pk.write_rotation(TILTED, "quaternion", check=x)),
    ("make_planar-degrees", lambda x: pk.make_planar(0.0, 0.0, 30.0, degrees=x)),
    ("planar_parts-degrees", lambda x: pk.planar_parts(T3, degrees=x)),
    ("read_transform-normalise", lambda x: pk.read_transform(PQ7, "position-quaternion", normalise=x)),
    ("write_transform-flat", lambda x: pk.write_transform(T4, flat=x)),
    ("score-reflections", lambda x: score(None, [], [], rotation_tolerance=0.01, translation_tolerance=0.01,
                                          reflections=x)),
]
HOSTILE_FLAGS = [
    ("int", 1, r"got 1 of type int"),
    ("text", "no", r"got 'no' of type str"),
    ("none", None, r"got None of type NoneType"),
    ("array", np.array([True]), r"array of shape \(1,\)"),
]
GENERATED_FLAGS = [
    Case(f"{slot}/{vid}", (lambda f=f, v=v: f(v)), E.WrongTypeError, names)
    for slot, f in FLAG_SLOTS
    for vid, v, names in HOSTILE_FLAGS
]

KIND_SLOTS = [
    ("read_rotation", lambda k: pk.read_rotation(ANGLES, k), r"unknown kind of numbers"),
    ("write_rotation", lambda k: pk.write_rotation(TILTED, k), r"unknown kind of numbers"),
    ("convert-source", lambda k: pk.convert(ANGLES, k, "quaternion"), r"unknown kind of numbers"),
    ("convert-target", lambda k: pk.convert(ANGLES, "euler", k), r"unknown kind of numbers"),
    ("read_transform", lambda k: pk.read_transform(T4, k), r"unknown kind of transform numbers"),
    ("write_transform", lambda k: pk.write_transform(T4, k), r"unknown kind of transform numbers"),
]
GENERATED_KINDS = [
    Case(f"{slot}/kind-{vid}", (lambda f=f, v=v: f(v)), err, names if vid != "word" else unknown + r" 'Euler'")
    for slot, f, unknown in KIND_SLOTS
    for vid, v, err, names in [
        ("int", 5, E.WrongTypeError, r"got 5 of type int"),
        ("none", None, E.WrongTypeError, r"got None of type NoneType"),
        ("array", np.array(["euler"]), E.WrongTypeError, r"array of shape \(1,\)"),
        ("word", "Euler", E.PoseInputError, None),
    ]
]


# --- hand-written: broadcasting, overflow, angle precision, operators ---------------------

B2, B3 = np.stack([TILTED] * 2), np.stack([TILTED] * 3)
T2, T3B = np.stack([T4] * 2), np.stack([T4] * 3)
HUGE_T = pk.make_transform(EYE3, [0.0, 0.0, 0.0])
HUGE_T[:3, 3] = [1e308, 1e308, 0.0]  # a 45-degree turn of this overflowed to inf when inverted
BIG = 10.0 * LARGEST_COORDINATE

HAND_WRITTEN = [
    # broadcasting: the batch shapes are named, and numpy's rule
    Case("compose-2-with-3", lambda: pk.compose(B2, B3), E.BroadcastError, r"\(2, 3, 3\).*\(3, 3, 3\)"),
    Case("compose-third-factor", lambda: pk.compose(B2, B2, B3), E.BroadcastError, r"rotation 3 of shape \(3, 3, 3\)"),
    Case("turn_vectors-2-with-3", lambda: pk.turn_vectors(B2, np.ones((3, 3))), E.BroadcastError,
         r"\(2, 3, 3\).*vectors of shape \(3, 3\)"),
    Case("quaternion_product-2-with-3", lambda: pk.quaternion_product(np.stack([Q] * 2), np.stack([Q] * 3)),
         E.BroadcastError, r"\(2, 4\).*\(3, 4\)"),
    Case("angle_between-2-with-3", lambda: pk.angle_between(B2, B3), E.BroadcastError, r"\(2, 3, 3\).*\(3, 3, 3\)"),
    Case("slerp-2-with-3", lambda: pk.slerp(B2, B3, 0.5), E.BroadcastError, r"\(2, 3, 3\).*\(3, 3, 3\)"),
    Case("slerp-t-wrong-shape", lambda: pk.slerp(B3, B3, [0.1, 0.2]), E.BroadcastError, r"t of shape \(2,\)"),
    Case("make_transform-2-with-3", lambda: pk.make_transform(B2, np.ones((3, 3))), E.BroadcastError,
         r"\(2, 3, 3\).*translation of shape \(3, 3\)"),
    Case("transform_points-2-with-3", lambda: pk.transform_points(T2, np.ones((3, 3))), E.BroadcastError,
         r"\(2, 4, 4\).*points of shape \(3, 3\)"),
    Case("transform_directions-2-with-3", lambda: pk.transform_directions(T2, np.ones((3, 3))), E.BroadcastError,
         r"directions of shape \(3, 3\)"),
    Case("compose_transforms-2-with-3", lambda: pk.compose_transforms(T2, T3B), E.BroadcastError,
         r"\(2, 4, 4\).*\(3, 4, 4\)"),
    Case("interpolate_transforms-t", lambda: pk.interpolate_transforms(T3B, T3B, [0.5, 0.5]), E.BroadcastError,
         r"t of shape \(2,\)"),
    Case("make_planar-x-with-y", lambda: pk.make_planar([1.0, 2.0], [1.0, 2.0, 3.0], 0.0), E.BroadcastError,
         r"x of shape \(2,\).*y of shape \(3,\)"),
    Case("interpolate_planar-t", lambda: pk.interpolate_planar(np.stack([T3] * 3), T3, [0.5, 0.5]), E.BroadcastError,
         r"t of shape \(2,\)"),
    Case("pose-matmul-2-with-3", lambda: pk.Pose(T2) @ pk.Pose(T3B), E.BroadcastError, r"\(2, 4, 4\).*\(3, 4, 4\)"),
    # nothing to compose
    Case("compose-nothing", lambda: pk.compose(), E.WrongTypeError, r"got no rotations"),
    Case("compose_transforms-nothing", lambda: pk.compose_transforms(), E.WrongTypeError, r"got no transforms"),
    # the slerp parameter
    Case("slerp-t-nan", lambda: pk.slerp(EYE3, TILTED, NAN), E.NotFiniteError, r"value nan"),
    Case("slerp-t-inf", lambda: pk.slerp(EYE3, TILTED, INF), E.NotFiniteError, r"value inf"),
    Case("slerp-t-text", lambda: pk.slerp(EYE3, TILTED, "half"), E.WrongTypeError, r"'half'"),
    Case("slerp-t-complex", lambda: pk.slerp(EYE3, TILTED, 0.5j), E.WrongTypeError, r"complex"),
    Case("slerp-t-bool", lambda: pk.slerp(EYE3, TILTED, True), E.WrongTypeError, r"boolean True"),
    Case("slerp-t-none", lambda: pk.slerp(EYE3, TILTED, None), E.WrongTypeError, r"got None"),
    Case("slerp-t-masked", lambda: pk.slerp(EYE3, TILTED, np.ma.masked_array([0.5, 0.6], mask=[0, 1])),
         E.MaskedEntriesError, r"1 masked entry \(first at index \(1,\)\)"),
    Case("slerp-t-far", lambda: pk.slerp(EYE3, TILTED, 1e9), E.MagnitudeError, r"magnitude 1e\+09"),
    Case("interpolate_transforms-t-text", lambda: pk.interpolate_transforms(T4, T4, "half"), E.WrongTypeError,
         r"'half'"),
    Case("interpolate_planar-t-nan", lambda: pk.interpolate_planar(T3, T3, NAN), E.NotFiniteError, r"value nan"),
    # results that would overflow
    Case("invert_transform-1e308", lambda: pk.invert_transform(HUGE_T), E.MagnitudeError,
         r"transform translation: magnitude 1e\+308"),
    Case("make_transform-1e308", lambda: pk.make_transform(TILTED, [1e308, 0.0, 0.0]), E.MagnitudeError,
         r"translation: magnitude 1e\+308"),
    Case("compose_transforms-1e308", lambda: pk.compose_transforms(T4, HUGE_T), E.MagnitudeError, r"1e\+308"),
    Case("transform_points-points-1e308", lambda: pk.transform_points(T4, [1e308, 1e308, 0.0]), E.MagnitudeError,
         r"points: magnitude 1e\+308 at index \(0,\)"),
    Case("transform_points-transform-1e308", lambda: pk.transform_points(HUGE_T, [0.0, 0.0, 0.0]), E.MagnitudeError,
         r"1e\+308"),
    Case("transform_directions-1e308", lambda: pk.transform_directions(T4, [0.0, -1e308, 0.0]), E.MagnitudeError,
         r"directions: magnitude -1e\+308 at index \(1,\)"),
    Case("turn_vectors-1e308", lambda: pk.turn_vectors(TILTED, [1e308, 1e308, 1e308]), E.MagnitudeError,
         r"vectors: magnitude 1e\+308"),
    Case("just-over-the-coordinate-limit", lambda: pk.make_transform(EYE3, [BIG, 0.0, 0.0]), E.MagnitudeError,
         re.escape(f"{BIG:.6g}")),
    Case("make_planar-x-1e308", lambda: pk.make_planar(1e308, 0.0, 0.0), E.MagnitudeError, r"x: magnitude 1e\+308"),
    Case("quaternion_product-1e200", lambda: pk.quaternion_product([1e200, 0, 0, 0], [1e200, 0, 0, 0]),
         E.MagnitudeError, r"quaternion p: magnitude 1e\+200"),
    Case("nearest_rotation-1e300", lambda: pk.nearest_rotation(np.full((3, 3), 1e300)), E.MagnitudeError,
         r"matrix: magnitude 1e\+300"),
    Case("pose-1e308", lambda: pk.Pose(HUGE_T), E.MagnitudeError, r"pose translation: magnitude 1e\+308"),
    Case("read_transform-position-1e308", lambda: pk.read_transform([1e308, 0, 0, *Q], "position-quaternion"),
         E.MagnitudeError, r"1e\+308"),
    Case("python-int-beyond-float64", lambda: pk.make_transform(EYE3, [10 ** 400, 0, 0]), E.MagnitudeError,
         r"integer too large for float64"),
    # angles too large to name a rotation to ANGLE_TOLERANCE
    Case("euler-1e17-degrees", lambda: pk.read_rotation([1e17, 0, 0], "euler", "unit=degrees"), E.MagnitudeError,
         r"magnitude 1e\+17 degrees at index \(0,\).*below 4\.80\d+e\+08 degrees"),
    Case("euler-1e17-radians", lambda: pk.read_rotation([0, 0, 1e17], "euler"), E.MagnitudeError,
         r"magnitude 1e\+17 radians at index \(2,\).*below 8388608 radians"),
    Case("convert-euler-1e17-degrees", lambda: pk.convert([0, 1e17, 0], "euler", "quaternion", "unit=degrees"),
         E.MagnitudeError, r"1e\+17 degrees at index \(1,\)"),
    Case("euler-batch-row", lambda: pk.read_rotation([[0, 0, 0], [0, 0, -3e9]], "euler"), E.MagnitudeError,
         r"-3e\+09 radians at index \(1, 2\)"),
    Case("euler-python-int", lambda: pk.read_rotation([10 ** 20, 0, 0], "euler"), E.MagnitudeError, r"1e\+20"),
    Case("rotation-vector-long", lambda: pk.read_rotation([6e6, 6e6, 0], "rotation-vector"), E.MagnitudeError,
         r"rotation vector: length 8\.48528e\+06 radians"),
    Case("rotation-vector-overflowing-length", lambda: pk.read_rotation([1e200, 1e200, 0], "rotation-vector"),
         E.MagnitudeError, r"length 1\.41421e\+200"),
    Case("axis-angle-angle", lambda: pk.read_rotation([0, 0, 1, 1e12], "axis-angle", "unit=degrees"),
         E.MagnitudeError, r"axis-angle angle: magnitude 1e\+12 degrees"),
    Case("planar-angle", lambda: pk.read_rotation(1e10, "planar-angle"), E.MagnitudeError, r"planar angle: magnitude 1e\+10"),
    Case("position-euler", lambda: pk.read_transform([0, 0, 0, 1e17, 0, 0], "position-euler"), E.MagnitudeError,
         r"Euler angles: magnitude 1e\+17"),
    Case("make_planar-angle-degrees", lambda: pk.make_planar(0.0, 0.0, 1e17, degrees=True), E.MagnitudeError,
         r"angle: magnitude 1e\+17 degrees"),
    # other arguments
    Case("checked_transform-size-5", lambda: pk.checked_transform(T4, size=5), E.WrongTypeError, r"size: got 5"),
    Case("checked_transform-size-bool", lambda: pk.checked_transform(T4, size=True), E.WrongTypeError, r"got True"),
    Case("checked_transform-size-array", lambda: pk.checked_transform(T4, size=np.array([4, 4])), E.WrongTypeError,
         r"array of shape \(2,\)"),
    Case("convert-unknown-option", lambda: pk.convert(ANGLES, "euler", "quaternion", normalize=True), E.WrongTypeError,
         r"unknown option 'normalize'"),
    Case("pose-matmul-list", lambda: pk.Pose(T4) @ [1.0, 2.0, 3.0], E.WrongTypeError, r"Pose @ \[1\.0, 2\.0, 3\.0\]"),
    Case("array-matmul-pose", lambda: EYE4 @ pk.Pose(T4), E.WrongTypeError, r"array of shape \(4, 4\).* @ Pose"),
    Case("orthonormality_error-vector", lambda: pk.orthonormality_error([1.0, 2.0, 3.0]), E.WrongShapeError,
         r"got shape \(3,\)"),
    Case("orthonormality_error-text", lambda: pk.orthonormality_error("eye"), E.WrongTypeError, r"'eye'"),
    Case("self-containing-list", lambda: pk.as_numbers(_self_containing(), "numbers"), E.WrongTypeError,
         r"\(\[\[\.\.\.\]\]\)"),
    Case("masked-constant-in-a-list", lambda: pk.read_rotation([np.ma.masked, 0.0, 0.0], "euler"),
         E.MaskedEntriesError, r"masked constant \(\[masked, 0\.0, 0\.0\]\)"),
    Case("decimal-items", lambda: pk.turn_vectors(EYE3, [Decimal("0.1")] * 3), E.WrongTypeError,
         r"items of type Decimal"),
    Case("diagnose-expected-kind-array", lambda: diagnose(ANGLES, OBSERVED_Q, expected_kind=np.array(["euler"])),
         E.WrongTypeError, r"array of shape \(1,\)"),
    Case("score-no-candidates", lambda: score(None, [], [], rotation_tolerance=0.01, translation_tolerance=0.01),
         E.WrongShapeError, r"got 0 candidate reading"),
]


def _self_containing():
    a = []
    a.append(a)
    return a


CATALOGUE = (GENERATED_ARRAYS + GENERATED_TOLERANCES + GENERATED_COUNTS + GENERATED_FLAGS + GENERATED_KINDS
             + HAND_WRITTEN)


def test_catalogue_is_large_and_unique():
    ids = [c.id for c in CATALOGUE]
    assert len(ids) >= 120
    assert len(set(ids)) == len(ids)


@pytest.mark.parametrize("case", CATALOGUE, ids=[c.id for c in CATALOGUE])
def test_hostile_input(case: Case):
    with pytest.raises(E.PoseInputError) as info:
        case.call()
    message = str(info.value)
    assert type(info.value) is case.error, f"{type(info.value).__name__}: {message}"
    assert MESSAGE_SAYS_ACCEPTED.search(message), message
    assert re.search(case.names, message, flags=re.S), message
    assert "\n" not in message


# --- large batches: the same refusals on every kernel route ---------------------------------

def _batch_with(row_value, index, width, count=100):
    out = np.tile(np.linspace(0.1, 0.3, width), (count, 1))
    out[index] = row_value
    return out


@pytest.mark.parametrize("kind,width,bad,error,names", [
    ("quaternion", 4, [NAN, 0, 0, 1], E.NotFiniteError, r"index \(70, 0\)"),
    ("euler", 3, [0, 3e9, 0], E.MagnitudeError, r"index \(70, 1\)"),
    ("rotation-vector", 3, [1e7, 0, 0], E.MagnitudeError, r"index \(70,\)"),
    ("matrix", 9, [2, 0, 0, 0, 1, 0, 0, 0, 1], E.NotOrthonormalError, r"index \(70,\)"),
])
def test_large_batches_on_every_route(kernel_route, kind, width, bad, error, names):
    numbers = _batch_with(bad, 70, width)
    if kind == "quaternion":
        numbers[np.arange(100) != 70] = Q
    if kind == "matrix":
        numbers[np.arange(100) != 70] = EYE3.ravel()
    with pytest.raises(error, match=names):
        pk.read_rotation(numbers, kind, normalise=kind == "quaternion")
    masked = np.ma.masked_array(numbers, mask=np.zeros(numbers.shape, dtype=bool))
    masked.mask[3, 0] = True
    with pytest.raises(E.MaskedEntriesError, match=r"index \(3, 0\)"):
        pk.read_rotation(masked, kind)
    rotations = np.stack([TILTED] * 100)
    with pytest.raises(E.BroadcastError, match=r"\(100, 3, 3\).*\(99, 3, 3\)"):
        pk.compose(rotations, rotations[:99])
    with pytest.raises(E.BroadcastError, match=r"vectors of shape \(99, 3\)"):
        pk.turn_vectors(rotations, np.ones((99, 3)))


# --- what must keep working, against scipy.spatial.transform.Rotation (the reference) -------

def _random_rotations(n, seed):
    return Rotation.random(n, random_state=seed)


def test_broadcast_batch_of_one_matches_scipy(kernel_route):
    a, b = _random_rotations(1, 1), _random_rotations(100, 2)
    assert a.as_matrix().shape == (1, 3, 3)
    got = pk.compose(a.as_matrix(), b.as_matrix())  # (1, 3, 3) with (100, 3, 3)
    assert got.shape == (100, 3, 3)
    np.testing.assert_allclose(got, (a * b).as_matrix(), atol=1e-12)
    got = pk.compose(b.as_matrix(), a.as_matrix())  # (100, 3, 3) with (1, 3, 3)
    np.testing.assert_allclose(got, (b * a).as_matrix(), atol=1e-12)
    # (5, 1, 3, 3) with (4, 3, 3) -> (5, 4, 3, 3)
    c, d = _random_rotations(5, 3), _random_rotations(4, 4)
    got = pk.compose(c.as_matrix()[:, None], d.as_matrix())
    assert got.shape == (5, 4, 3, 3)
    for i in range(5):
        np.testing.assert_allclose(got[i], (c[i] * d).as_matrix(), atol=1e-12)
    vectors = np.random.default_rng(5).normal(size=(100, 3))
    np.testing.assert_allclose(pk.turn_vectors(a.as_matrix(), vectors), a.apply(vectors), atol=1e-12)
    np.testing.assert_allclose(pk.turn_vectors(a.as_matrix()[0], vectors), a.apply(vectors), atol=1e-12)
    np.testing.assert_allclose(pk.angle_between(a.as_matrix(), b.as_matrix()), (a.inv() * b).magnitude(),
                               atol=1e-12)


def test_broadcast_quaternions_and_transforms_match_scipy(kernel_route):
    a, b = _random_rotations(1, 6), _random_rotations(100, 7)
    p = a.as_quat(scalar_first=True)  # (1, 4)
    q = b.as_quat(scalar_first=True)  # (100, 4)
    product = pk.quaternion_product(p, q)
    assert product.shape == (100, 4)
    np.testing.assert_allclose(pk.read_rotation(product, "quaternion"), (a * b).as_matrix(), atol=1e-12)
    t = np.array([[1.0, -2.0, 0.5]])
    transform = pk.make_transform(a.as_matrix(), t)  # (1, 3, 3) with (1, 3) -> (1, 4, 4)
    points = np.random.default_rng(8).normal(size=(100, 3))
    np.testing.assert_allclose(pk.transform_points(transform, points), a.apply(points) + t, atol=1e-12)
    np.testing.assert_allclose(pk.transform_directions(transform, points), a.apply(points), atol=1e-12)
    many = pk.make_transform(a.as_matrix(), np.tile(t, (5, 1)))  # (1, 3, 3) with (5, 3) -> (5, 4, 4)
    assert many.shape == (5, 4, 4)
    np.testing.assert_allclose(many[:, :3, :3], np.broadcast_to(a.as_matrix(), (5, 3, 3)), atol=0)


@pytest.mark.parametrize("scale", [1e100, 1e200, 1e308])  # below a length of 1e-12: no rotation
def test_normalising_huge_quaternions_matches_scipy(kernel_route, scale):
    # normalise=True divides the length out whatever it is: components are scaled by a power of two
    # first, so their squares neither overflow nor underflow (scipy normalises (x, y, z, w) rows itself)
    rows = np.array([[1.0, 1.0, 0.0, 0.0], [0.5, -0.1, 0.3, 0.9]] * 40) * scale
    got = pk.read_rotation(rows, "quaternion", normalise=True)
    reference = Rotation.from_quat(rows[:, [1, 2, 3, 0]] / scale).as_matrix()
    np.testing.assert_allclose(got, reference, atol=1e-12)


def test_slerp_parameter_batch_matches_scipy():
    a, b = _random_rotations(1, 9)[0], _random_rotations(1, 10)[0]
    t = np.linspace(0.0, 1.0, 5)
    reference = Slerp([0.0, 1.0], Rotation.concatenate([a, b]))(t).as_matrix()
    np.testing.assert_allclose(pk.slerp(a.as_matrix(), b.as_matrix(), t), reference, atol=1e-12)
    # a batch of one on the rotations, five on t
    np.testing.assert_allclose(pk.slerp(a.as_matrix()[None], b.as_matrix(), t), reference, atol=1e-12)


def test_masked_arrays_without_masked_entries_are_read_as_their_data(kernel_route):
    angles = np.random.default_rng(11).uniform(-3, 3, size=(100, 3))
    reference = Rotation.from_euler("ZYX", angles).as_matrix()  # posekit's default: z-y-x intrinsic, radians
    for mask in (np.ma.nomask, np.zeros(angles.shape, dtype=bool)):
        masked = np.ma.masked_array(angles, mask=mask)
        np.testing.assert_allclose(pk.read_rotation(masked, "euler"), reference, atol=1e-12)
    quats = Rotation.from_euler("ZYX", angles).as_quat(scalar_first=True)
    masked = np.ma.masked_array(quats, mask=np.zeros(quats.shape, dtype=bool))
    np.testing.assert_allclose(pk.read_rotation(masked, "quaternion"), reference, atol=1e-12)
    np.testing.assert_allclose(pk.turn_vectors(np.ma.masked_array(reference), np.ma.masked_array(angles)),
                               Rotation.from_matrix(reference).apply(angles), atol=1e-12)


LONG_DOUBLE_IS_WIDER = bool(np.finfo(np.longdouble).max > np.finfo(np.float64).max)


@pytest.mark.skipif(not LONG_DOUBLE_IS_WIDER, reason="numpy's long double is float64 on this platform")
def test_long_double_beyond_float64_is_refused_not_read_as_infinity():
    huge = np.array([1.0, 0.0, 0.0], dtype=np.longdouble) * np.longdouble(10) ** 400
    with pytest.raises(E.MagnitudeError, match=r"numbers: the finite number 1e\+400 at index \(0,\) is too large"):
        pk.as_numbers(huge, "numbers")
    ordinary = np.array([0.25, -1.5, 3.0], dtype=np.longdouble)
    np.testing.assert_array_equal(pk.as_numbers(ordinary, "numbers"), [0.25, -1.5, 3.0])


def _first_magnitude_too_coarse(tolerance: float) -> float:
    """Found by walking powers of two with np.spacing (numpy), independently of posekit."""
    x = 1.0
    while np.spacing(x) <= tolerance:
        x *= 2.0
    return x


def test_largest_accepted_angles_match_scipy():
    limit = _first_magnitude_too_coarse(ANGLE_TOLERANCE)
    below = np.nextafter(limit, 0.0)
    got = pk.read_rotation([below, 0.25, -0.5], "euler")
    np.testing.assert_allclose(got, Rotation.from_euler("ZYX", [below, 0.25, -0.5]).as_matrix(), atol=1e-8)
    with pytest.raises(E.MagnitudeError, match=re.escape(f"below {limit:.7g} radians")):
        pk.read_rotation([limit, 0.25, -0.5], "euler")
    limit_degrees = limit * 180.0 / np.pi
    inside = math.floor(limit_degrees) - 1.0
    got = pk.read_rotation([0.0, 10.0, inside], "euler", "unit=degrees")
    reference = Rotation.from_euler("ZYX", [0.0, 10.0, inside], degrees=True).as_matrix()
    np.testing.assert_allclose(got, reference, atol=1e-8)
    with pytest.raises(E.MagnitudeError, match=r"degrees"):
        pk.read_rotation([0.0, 10.0, math.ceil(limit_degrees) + 1.0], "euler", "unit=degrees")
    # a rotation vector just inside: its length decides
    v = np.array([below, 0.0, 0.0]) / 1.0000001
    np.testing.assert_allclose(pk.read_rotation(v, "rotation-vector"), Rotation.from_rotvec(v).as_matrix(), atol=1e-8)


def test_largest_accepted_translation_inverts_finitely():
    turn = Rotation.from_euler("z", 45, degrees=True)
    t = np.array([LARGEST_COORDINATE, LARGEST_COORDINATE, -LARGEST_COORDINATE])
    inverse = pk.invert_transform(pk.make_transform(turn.as_matrix(), t))
    assert np.all(np.isfinite(inverse))
    # rounding is relative to the largest entry (one cancels to about 0): compare at that scale
    np.testing.assert_allclose(inverse[:3, 3], -turn.inv().apply(t), rtol=0, atol=1e-14 * LARGEST_COORDINATE)
    chain = pk.compose_transforms(*[pk.make_transform(turn.as_matrix(), t)] * 50)
    assert np.all(np.isfinite(chain))
    # Python ints longer than int64 are numbers too
    assert pk.make_transform(EYE3, [2 ** 70, 0, 0])[0, 3] == float(2 ** 70)


def test_accepted_tolerances_are_used_as_given():
    noisy = EYE3 + np.diag([2e-4, 0.0, 0.0])  # |M^T M - I| = 4.0004e-4
    for tolerance in (1e-3, np.float32(1e-3), Fraction(1, 1000), 1):
        np.testing.assert_array_equal(pk.read_rotation(noisy, "matrix", tolerance=tolerance), noisy)
    for tolerance in (1e-4, Fraction(1, 10000), np.float64(3e-4)):
        with pytest.raises(E.NotOrthonormalError, match="not orthonormal"):
            pk.read_rotation(noisy, "matrix", tolerance=tolerance)


def test_whole_number_limits_are_accepted():
    a = Rotation.from_euler("ZYX", [0.3, 0.2, 0.1])
    observed = a.as_quat()  # scalar-last (scipy), read by diagnose with the default scalar-first
    for limit in (1, np.int64(2), 3):
        d = diagnose(a.as_matrix(), observed, limit=limit)
        assert 1 <= len(d.explanations) <= int(limit)
    assert diagnose(a.as_matrix(), observed, limit=np.int64(2)).best.sentence == \
        diagnose(a.as_matrix(), observed, limit=5).best.sentence
