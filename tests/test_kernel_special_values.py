"""Special values on both kernel routes: signed zeros, infinities, NaN, huge and tiny magnitudes.

Every large-batch operation with a compiled loop (posekit.core.compiled) -- conversions (reading
and writing matrices, quaternions, Euler angles), the matrix check, products (compose) and turns
(turn_vectors), and the canonical kernels of posekit.core.rotation they call -- runs on each
available kernel route over generated grids of special values, and each result is compared with

* the other route: on exact inputs (entries 0, -0, +-1, +-1/2) the same bits, signs of zero
  included; NaN and infinity in the same places; the same typed error for what is refused;
* the reference, numpy's own math: elementary matrices built with numpy.sin / numpy.cos and their
  products (numpy.matmul), numpy.arctan2, numpy.linalg.norm, numpy.isfinite for what must be
  refused.  Their formulas (right-hand rule elementary rotations, Hamilton quaternion to matrix,
  intrinsic = product in the listed order, extrinsic = reversed, passive = transpose) are common
  practice, as in test_laws.py.

The sign of a zero result is fixed by IEEE 754 for each operation (and by C99 Annex F for atan2,
which numpy.arctan2 follows); the routes must produce the same signs, and the tests check that
their grids do produce negative zeros, so the comparison is not vacuous.

The last tests run a part of the law tests where the compiled loops are not used (the environment
chooses the numpy route) or cannot be imported (as on a machine without a C compiler), and build
the extension with no C compiler: the install must go on without it.
"""

from __future__ import annotations

import itertools
import os
import re
import shutil
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from conventions import ROUTES, conventions_for, over_pairs

import posekit as pk
from posekit.core import compiled
from posekit.core import errors as E
from posekit.core import rotation as rot
from posekit.core.checks import checked_matrix, checked_quaternion

ROOT = Path(__file__).resolve().parents[1]
#: The smallest batch that takes the compiled loops when they are built.
ROWS = compiled.MIN_ROWS + 1


# --- helpers -------------------------------------------------------------------------------

def on_routes(fn) -> dict:
    """``{route: fn()}`` with large batches on each available route (compiled loops, numpy)."""
    out = {}
    for route in ROUTES:
        with compiled.use(route):
            out[route] = fn()
    return out


def outcome(fn):
    """``("value", result)`` or ``("error", error type, message)`` of ``fn()``."""
    try:
        return ("value", fn())
    except E.PoseInputError as exc:
        return ("error", type(exc), str(exc))


def bits(a) -> np.ndarray:
    return np.ascontiguousarray(a, dtype=np.float64).view(np.uint64)


def assert_same_bits(results: dict, what: str = "") -> None:
    """Every route's array has the same bits as the first route's (signs of zero and of infinity included),
    and NaN in the same places (IEEE 754 leaves the sign and payload of most NaN results open)."""
    (first, a), *rest = results.items()
    for route, b in rest:
        assert np.shape(a) == np.shape(b), (what, first, route)
        nan_a, nan_b = np.isnan(a), np.isnan(b)
        differ = (nan_a != nan_b) | (~nan_a & (bits(a) != bits(b)))
        if differ.any():
            i = tuple(int(k) for k in np.argwhere(differ)[0])
            raise AssertionError(f"{what}: {first} gives {np.asarray(a)[i]!r}, {route} gives {np.asarray(b)[i]!r} "
                                 f"at {i}")


def negative_zeros(a) -> int:
    a = np.asarray(a)
    return int(np.count_nonzero((a == 0) & np.signbit(a)))


def tiled(rows, at_least: int = ROWS) -> np.ndarray:
    rows = np.asarray(rows, dtype=np.float64)
    return np.concatenate([rows] * -(-at_least // len(rows)))


def elementary(axis: int, a) -> np.ndarray:
    """Reference: the active elementary rotation about x, y or z by ``a`` (right-hand rule), numpy.sin/cos."""
    a = np.asarray(a, dtype=np.float64)
    c, s = np.cos(a), np.sin(a)
    j, k = (axis + 1) % 3, (axis + 2) % 3
    out = np.zeros(a.shape + (3, 3))
    out[..., axis, axis] = 1.0
    out[..., j, j], out[..., k, k] = c, c
    out[..., k, j], out[..., j, k] = s, -s
    return out


def reference_matrix_of_euler(angles, sequence: str, intrinsic: bool) -> np.ndarray:
    """Reference: intrinsic R = E1(a1) E2(a2) E3(a3), extrinsic R = E3(a3) E2(a2) E1(a1) (numpy.matmul)."""
    e = [elementary("xyz".index(sequence[i]), angles[..., i]) for i in range(3)]
    return e[0] @ e[1] @ e[2] if intrinsic else e[2] @ e[1] @ e[0]


def reference_matrix_of_quaternion(q) -> np.ndarray:
    """Reference: the active matrix of a Hamilton quaternion (w, x, y, z) of any nonzero length, from
    q divided by its largest |component| and then by numpy.linalg.norm (so nothing overflows)."""
    q = np.asarray(q, dtype=np.float64)
    q = q / np.max(np.abs(q), axis=-1, keepdims=True)
    w, x, y, z = np.moveaxis(q / np.linalg.norm(q, axis=-1, keepdims=True), -1, 0)
    return np.stack([np.stack([1 - 2 * (y * y + z * z), 2 * (x * y - w * z), 2 * (x * z + w * y)], -1),
                     np.stack([2 * (x * y + w * z), 1 - 2 * (x * x + z * z), 2 * (y * z - w * x)], -1),
                     np.stack([2 * (x * z - w * y), 2 * (y * z + w * x), 1 - 2 * (x * x + y * y)], -1)], -2)


def canonical_of(matrices, conv: pk.Convention) -> np.ndarray:
    """What reading numbers under ``conv`` must give, from the parameterised (active, as written) matrix:
    passive parameters name the transpose, child-from-parent numbers the inverse (posekit.core.reading)."""
    flips = (conv.action == "passive") + (conv.direction == "child-from-parent")
    return np.swapaxes(matrices, -1, -2) if flips % 2 else matrices


def signed_permutation_rotations() -> np.ndarray:
    """The 24 rotations whose matrices hold only 0 and +-1 (signed permutation matrices of det +1),
    each written with every one of the 64 choices of +0.0 / -0.0 for its six zeros: (1536, 3, 3)."""
    out = []
    for perm in itertools.permutations(range(3)):
        for signs in itertools.product((1.0, -1.0), repeat=3):
            m = np.zeros((3, 3))
            m[range(3), perm] = signs
            if np.linalg.det(m) < 0:
                continue
            zeros = np.argwhere(m == 0)
            for pattern in itertools.product((0.0, -0.0), repeat=len(zeros)):
                x = m.copy()
                x[tuple(zeros.T)] = pattern
                out.append(x)
    return np.array(out)


def exact_unit_quaternions() -> np.ndarray:
    """Unit quaternions with components 0, -0, +-1 and +-1/2 only: one +-1 and three zeros of either sign
    in every slot, and all sign choices of (1/2, 1/2, 1/2, 1/2): (8 * 4 * 8 + 16 = 272, 4)."""
    out = []
    for slot in range(4):
        for one in (1.0, -1.0):
            for zeros in itertools.product((0.0, -0.0), repeat=3):
                q = list(zeros)
                q.insert(slot, one)
                out.append(q)
    out += [list(s) for s in itertools.product((0.5, -0.5), repeat=4)]
    return np.array(out)


MATS = signed_permutation_rotations()
QUATS = exact_unit_quaternions()


def spread_conventions(pair, step: int = 4):
    """Every ``step``-th convention of a (sequence, axes) pair: every value of every field still appears."""
    return [c for i, c in enumerate(conventions_for(pair)) if i % step == 0]


# --- signed zeros: exact inputs give the same bits on both routes ----------------------------

@over_pairs
def test_writing_exact_rotations(pair):
    """Euler angles and quaternions written from the 1536 signed-zero matrices: the same bits on both routes,
    and the angles read back with numpy's sin/cos (the reference) give the matrices again."""
    found_negative_zero = 0
    for conv in spread_conventions(pair):
        angles = on_routes(lambda: pk.write_rotation(MATS, "euler", conv))
        assert_same_bits(angles, f"euler {conv}")
        a = next(iter(angles.values()))
        found_negative_zero += negative_zeros(a)
        radians = np.radians(a) if conv.degrees else a
        want = canonical_of(reference_matrix_of_euler(radians, conv.axes_letters, conv.intrinsic), conv)
        assert np.max(np.abs(want - MATS)) <= 1e-15, conv

        quats = on_routes(lambda: pk.write_rotation(MATS, "quaternion", conv))
        assert_same_bits(quats, f"quaternion {conv}")
        q = next(iter(quats.values()))
        assert np.all(q[..., 3 if conv.scalar == "last" else 0] >= 0.0), conv  # scalar part >= 0
        hamilton = q[..., [3, 0, 1, 2]] if conv.scalar == "last" else q
        m = reference_matrix_of_quaternion(hamilton)
        if conv.algebra == "jpl":  # the JPL matrix of four numbers is the transpose of Hamilton's
            m = np.swapaxes(m, -1, -2)
        assert np.max(np.abs(canonical_of(m, conv) - MATS)) <= 1e-15, conv
    assert found_negative_zero > 0, "the grid gave no -0.0 angle: the sign comparison was vacuous"


def test_canonical_kernels_on_exact_inputs():
    """The kernels of posekit.core.rotation on the signed-zero grids: the same bits on both routes."""
    found = 0
    for name, fn in [("quaternion_of_matrix", lambda: rot.quaternion_of_matrix(MATS)),
                     ("matrix_of_quaternion", lambda: rot.matrix_of_quaternion(tiled(QUATS))),
                     ("matrix_of_euler", lambda: rot.matrix_of_euler(
                         tiled(list(itertools.product((0.0, -0.0), repeat=3))), "zxz", False))]:
        results = on_routes(fn)
        assert_same_bits(results, name)
        found += negative_zeros(next(iter(results.values())))
    for seq, intrinsic in itertools.product(rot.SEQUENCES, (True, False)):
        results = on_routes(lambda: rot.euler_of_matrix(MATS, seq, intrinsic))
        assert_same_bits({r: v[0] for r, v in results.items()}, f"euler_of_matrix {seq} angles")
        assert_same_bits({r: v[1] for r, v in results.items()}, f"euler_of_matrix {seq} pole distance")
    # the reference, numpy's own arithmetic: Shuster's matrix of each exact quaternion, entry for entry
    got = rot.matrix_of_quaternion(tiled(QUATS))
    assert np.array_equal(got, reference_matrix_of_quaternion(tiled(QUATS)))
    assert found > 0


@pytest.mark.parametrize("normalise", [False, True])
@over_pairs
def test_reading_exact_inputs(pair, normalise):
    """Quaternions with signed zeros and Euler angles of +0 / -0, read under many conventions: the same bits
    on both routes, and the reference's values (Shuster's matrix; the identity)."""
    zero_angles = tiled(list(itertools.product((0.0, -0.0), repeat=3)))
    q_rows = tiled(QUATS)
    found = 0
    for conv in spread_conventions(pair, step=8):
        m = on_routes(lambda: pk.read_rotation(q_rows, "quaternion", conv, normalise=normalise))
        assert_same_bits(m, f"read quaternion {conv}")
        got = next(iter(m.values()))
        found += negative_zeros(got)
        hamilton = q_rows[..., [3, 0, 1, 2]] if conv.scalar == "last" else q_rows
        want = reference_matrix_of_quaternion(hamilton)
        if conv.algebra == "jpl":
            want = np.swapaxes(want, -1, -2)
        assert np.array_equal(got, canonical_of(want, conv)), conv  # == ignores the sign of zero
        if not normalise:
            e = on_routes(lambda: pk.read_rotation(zero_angles, "euler", conv))
            assert_same_bits(e, f"read euler {conv}")
            assert np.array_equal(next(iter(e.values())), np.broadcast_to(np.eye(3), (len(zero_angles), 3, 3)))
    assert found > 0


def test_products_and_turns_of_exact_rotations():
    """compose and turn_vectors on the signed-zero grid: the same bits on both routes; values as numpy.matmul."""
    other = np.roll(MATS, 7, axis=0)
    products = on_routes(lambda: pk.compose(MATS, other))
    assert_same_bits(products, "compose")
    assert np.array_equal(next(iter(products.values())), np.matmul(MATS, other))
    vectors = np.random.default_rng(5).choice([0.0, -0.0, 1.0, -1.0, 0.5, -2.0], size=(len(MATS), 3))
    turned = on_routes(lambda: pk.turn_vectors(MATS, vectors))
    assert_same_bits(turned, "turn_vectors")
    assert np.array_equal(next(iter(turned.values())), np.matmul(MATS, vectors[:, :, None])[:, :, 0])
    assert negative_zeros(next(iter(turned.values()))) > 0


# --- NaN and infinity: refused with the same typed error on both routes ---------------------

GOOD_MATS = np.repeat(np.eye(3)[None], 3 * ROWS, axis=0)
GOOD_QUATS = np.repeat(np.array([[0.5, 0.5, -0.5, 0.5]]), 3 * ROWS, axis=0)
GOOD_ANGLES = np.zeros((3 * ROWS, 3))
GOOD_VECTORS = np.ones((3 * ROWS, 3))

# (id, the argument that holds the bad value, the call)
NON_FINITE_CALLS = [
    ("read-matrix", GOOD_MATS, lambda m: pk.read_rotation(m)),
    ("check-matrix", GOOD_MATS, lambda m: checked_matrix(m)),
    ("write-quaternion", GOOD_MATS, lambda m: pk.write_rotation(m, "quaternion", "scalar=last")),
    ("write-euler", GOOD_MATS, lambda m: pk.write_rotation(m, "euler", "unit=degrees")),
    ("compose-first", GOOD_MATS, lambda m: pk.compose(m, GOOD_MATS)),
    ("compose-second", GOOD_MATS, lambda m: pk.compose(GOOD_MATS, m)),
    ("turn-matrix", GOOD_MATS, lambda m: pk.turn_vectors(m, GOOD_VECTORS)),
    ("turn-vectors", GOOD_VECTORS, lambda v: pk.turn_vectors(GOOD_MATS, v)),
    ("read-quaternion", GOOD_QUATS, lambda q: pk.read_rotation(q, "quaternion")),
    ("read-quaternion-normalised", GOOD_QUATS, lambda q: pk.read_rotation(q, "quaternion", normalise=True)),
    ("read-euler", GOOD_ANGLES, lambda a: pk.read_rotation(a, "euler", "sequence=z-x-z axes=extrinsic")),
]


@pytest.mark.parametrize("value", [np.nan, np.inf, -np.inf], ids=["nan", "inf", "-inf"])
@pytest.mark.parametrize("name, good, call", NON_FINITE_CALLS, ids=[c[0] for c in NON_FINITE_CALLS])
def test_nan_and_infinity_are_refused_alike(name, good, call, value):
    """A NaN or infinity in any entry of a row in the middle or at the end of a large batch: NotFiniteError
    on every route, naming the index numpy.isfinite finds first (the reference)."""
    entries = list(np.ndindex(good.shape[1:]))
    for row in (ROWS + 3, len(good) - 1):
        for entry in entries:
            bad = good.copy()
            bad[(row,) + entry] = value
            first = tuple(int(i) for i in np.argwhere(~np.isfinite(bad))[0])
            seen = on_routes(lambda: outcome(lambda: call(bad)))
            for route, result in seen.items():
                assert result[0] == "error" and result[1] is E.NotFiniteError, (route, row, entry, result[:2])
                assert str(first) in result[2], (route, result[2])
            assert len({r[2] for r in seen.values()}) == 1, "the routes' messages differ"


def test_kernels_put_nan_and_infinity_in_the_same_places():
    """The unchecked kernels given NaN, infinities, zeros and extreme magnitudes in every mix: NaN and
    infinities land in the same entries on both routes, and every other number has the same bits."""
    rng = np.random.default_rng(13)
    values = [np.nan, np.inf, -np.inf, 0.0, -0.0, 1.0, -0.5, 1e300, -1e-300, 5e-324]
    q = rng.choice(values, size=(4000, 4))
    m = rng.choice(values, size=(4000, 3, 3))
    with np.errstate(all="ignore"):  # the invalid operations are the point here
        assert_same_bits(on_routes(lambda: rot.matrix_of_quaternion(q)), "matrix_of_quaternion")
        assert_same_bits(on_routes(lambda: rot.quaternion_of_matrix(m)), "quaternion_of_matrix")
        angles = on_routes(lambda: rot.euler_of_matrix(m, "yxz", False)[0])
    # arctangents of inexact numbers may round apart (the C library's atan2, numpy's arctan2): NaN and
    # infinities in the same places, the other angles within rounding
    first = next(iter(angles.values()))
    for got in angles.values():
        assert np.array_equal(np.isnan(got), np.isnan(first)) and np.array_equal(got[np.isinf(got)],
                                                                                 first[np.isinf(first)])
        finite = np.isfinite(first)
        assert np.max(np.abs(got[finite] - first[finite])) <= 1e-15  # a few ulp of pi
    assert np.isnan(first).any() and np.isfinite(first).any()  # the grid reached both kinds of path


# --- huge and tiny magnitudes ----------------------------------------------------------------

SCALES = [5e-324, 1e-310, 1e-300, 1e-200, 1e-160, 1e-150, 1e-100, 1e-13, 1e-11, 1.0, 1e100, 1e150, 1e154, 1e155,
          1e200, 1e300, 1e308, np.finfo(np.float64).max / 2]


def directions(rng, n: int) -> np.ndarray:
    """Unit quaternions: random ones, and the exact ones above (components of either sign, zeros)."""
    q = rng.standard_normal((n, 4))
    q /= np.linalg.norm(q, axis=-1, keepdims=True)
    return np.concatenate([q, QUATS])


def test_quaternion_kernel_at_any_magnitude():
    """matrix_of_quaternion divides any finite nonzero length out, whatever the magnitude of the
    components (subnormal to the largest float64): the same bits on both routes, the reference's matrix."""
    rng = np.random.default_rng(17)
    d = directions(rng, 200)
    q = np.concatenate([d * s for s in SCALES])
    q = q[np.max(np.abs(q), axis=-1) > 0]  # subnormal scales round some rows to zero
    results = on_routes(lambda: rot.matrix_of_quaternion(q))
    assert_same_bits(results, "matrix_of_quaternion")
    got = next(iter(results.values()))
    assert np.max(np.abs(got - reference_matrix_of_quaternion(q))) <= 2e-15
    worst = np.max(np.abs(np.swapaxes(got, -1, -2) @ got - np.eye(3)))
    assert worst <= 2e-15


def test_normalising_long_and_short_quaternions():
    """checked_quaternion(normalise=True) scales by a power of two first: (1e300, 0, 0, 1e300) -> (0.7071..,
    0, 0, 0.7071..) and every length from 1e-12 to beyond the float64 range gives a unit quaternion
    pointing as the reference (divided by its largest |component|, then by numpy.linalg.norm); a
    shorter one is a zero quaternion."""
    half = np.sqrt(0.5)
    for big in (1e200, 1e300, 1e308, np.finfo(np.float64).max):
        got = checked_quaternion([big, 0.0, 0.0, big], normalise=True)
        assert np.max(np.abs(got - [half, 0, 0, half])) <= np.spacing(half), (big, got)
    rng = np.random.default_rng(19)
    d = directions(rng, 100)
    for s in SCALES:
        q = d * s
        long_enough = np.max(np.abs(q), axis=-1) >= 1e-12
        if long_enough.all():
            got = checked_quaternion(q, normalise=True)
            ref = q / np.max(np.abs(q), axis=-1, keepdims=True)
            ref /= np.linalg.norm(ref, axis=-1, keepdims=True)
            assert np.max(np.abs(got - ref)) <= 4e-16, s
            assert np.array_equal(np.signbit(got), np.signbit(ref)), s
        elif not long_enough.any():
            with pytest.raises(E.ZeroQuaternionError, match="zero length"):
                checked_quaternion(q, normalise=True)


@pytest.mark.parametrize("scale", [1e-6, 1e3, 1e100, 1e154, 1e200, 1e300, 1e308])
def test_reading_long_quaternions_on_purpose(scale):
    """read_rotation(normalise=True) of long quaternions: the same outcome on both routes (the same typed
    error, or matrices within rounding of each other and of the reference)."""
    q = directions(np.random.default_rng(23), ROWS) * scale
    seen = on_routes(lambda: outcome(lambda: pk.read_rotation(q, "quaternion", normalise=True)))
    kinds = {(r[0], r[1] if r[0] == "error" else None) for r in seen.values()}
    assert len(kinds) == 1, seen
    first = next(iter(seen.values()))
    if first[0] == "value":
        for got in (r[1] for r in seen.values()):
            assert np.max(np.abs(got - reference_matrix_of_quaternion(q))) <= 2e-15


@pytest.mark.parametrize("scale", [1e-300, 1e-200, 1e-8, 1.0 + 1e-3, 1e8, 1e154, 1e155, 1e200, 1e300])
def test_matrix_checks_at_huge_and_tiny_scales(scale):
    """Rotations scaled far from length 1 (products that underflow or overflow included): not orthonormal on
    every route, in checks, conversions, products and turns alike.  Reference: numpy's |M^T M - I|, taken on
    the matrix divided by its largest entry and scaled back, is far beyond the tolerance."""
    m = MATS[::7] * scale
    unit = m / scale
    with np.errstate(over="ignore"):  # the square of 1e200 is beyond float64: inf, far beyond the tolerance
        gram_error = np.linalg.norm(np.swapaxes(unit, -1, -2) @ unit * scale * scale - np.eye(3), axis=(-2, -1))
    assert np.all(~(gram_error <= 1e-6))
    calls = [lambda: checked_matrix(m), lambda: pk.read_rotation(m), lambda: pk.write_rotation(m, "euler"),
             lambda: pk.write_rotation(m, "quaternion"), lambda: pk.compose(MATS[::7], m),
             lambda: pk.turn_vectors(m, np.ones((len(m), 3)))]
    for call in calls:
        for route, result in on_routes(lambda: outcome(call)).items():
            assert result[0] == "error" and issubclass(result[1], E.NotOrthonormalError), (route, result[:2])


ANGLES = np.array([0.0, -0.0, 5e-324, -1e-310, 1e-300, -1e-150, 1e-8, 1.0, -np.pi, np.pi / 2, 1e8, -1e15, 1e100,
                   -1e300, np.finfo(np.float64).max])


@pytest.mark.parametrize("seq, intrinsic", [("zyx", True), ("xzx", False), ("yxz", False)])
def test_euler_kernel_at_any_magnitude(seq, intrinsic):
    """matrix_of_euler over every mix of +-0, subnormal, tiny, ordinary and huge angles: within 4e-15 of the
    reference on each route (the sines and cosines of huge angles are reduced exactly by the C library and
    by numpy alike), a tiny turn about one axis to relative precision, and where every angle is +-0 the
    same bits.  (Two tiny angles can cancel in an entry: there only the absolute error is small.)"""
    a = np.array(list(itertools.product(ANGLES, repeat=3)))
    want = reference_matrix_of_euler(a, seq, intrinsic)
    results = on_routes(lambda: rot.matrix_of_euler(a, seq, intrinsic))
    tiny = np.all(np.abs(a) <= 1e-100, axis=-1) & (np.count_nonzero(a, axis=-1) <= 1)
    for route, got in results.items():
        assert np.max(np.abs(got - want)) <= 4e-15, route
        rel = np.abs(got[tiny] - want[tiny]) <= 1e-15 * np.abs(want[tiny]) + 1e-322
        assert rel.all(), (route, a[tiny][np.argwhere(~rel)[0][0]])
    zeros = np.all(a == 0, axis=-1)
    assert_same_bits({r: v[zeros] for r, v in results.items()}, "matrix_of_euler of +-0")


@pytest.mark.parametrize("angle", [1e-300, -1e-300, 2.5e-200, -1e-20, 1e-310, -5e-324])
def test_writing_tiny_rotations_keeps_their_digits(angle):
    """A turn about z by a tiny angle (matrix from numpy.sin / numpy.cos) is written back as that angle to
    relative precision on every route: the reference is numpy.arctan2(R10, R00), the z-y-x yaw (common
    practice)."""
    r = np.repeat(elementary(2, angle)[None], ROWS, axis=0)
    want = np.arctan2(r[0, 1, 0], r[0, 0, 0])
    assert want == angle or abs(angle) < 1e-307  # numpy's own arctan2 of a tiny turn is the angle
    results = on_routes(lambda: pk.write_rotation(r, "euler", "sequence=z-y-x"))
    for route, got in results.items():
        assert np.all(np.abs(got[:, 0] - want) <= 1e-15 * abs(want) + 1e-322), (route, got[0])
        assert np.all(got[:, 1:] == 0.0), (route, got[0])
    assert_same_bits(results, "tiny yaw")


@pytest.mark.parametrize("scale", [5e-324, 1e-300, 1e100, 1e300, np.finfo(np.float64).max])
def test_turning_huge_and_tiny_vectors(scale):
    """Exact rotations turn vectors of any magnitude exactly (their products are exact): the same outcome on
    both routes and, where turned, the same bits as each other and the values of numpy.matmul."""
    v = np.random.default_rng(29).choice([1.0, -1.0, 0.0, -0.0, 0.5], size=(len(MATS), 3)) * scale
    seen = on_routes(lambda: outcome(lambda: pk.turn_vectors(MATS, v)))
    kinds = {(r[0], r[1] if r[0] == "error" else None) for r in seen.values()}
    assert len(kinds) == 1, seen
    if next(iter(seen.values()))[0] == "value":
        assert_same_bits({route: r[1] for route, r in seen.items()}, "turn_vectors")
        assert np.array_equal(next(iter(seen.values()))[1], np.matmul(MATS, v[:, :, None])[:, :, 0])


# --- without the compiled loops --------------------------------------------------------------

#: A representative part of the law tests: identity, inverse, closure, associativity, round trips of every
#: kind, double cover, passive = transpose, both poles, 180-degree turns, tiny rotation vectors, transforms
#: and broadcasting, for a Tait-Bryan and a proper Euler sequence.
LAW_SUBSET = ["tests/test_laws.py", "-k",
              "numpy and (z-y-x-intrinsic or x-z-x-extrinsic or not -) and (identity or inverse or closure or "
              "associativity or round_trip_write_then_read or double_cover or passive_is_transpose or "
              "pole_round_trip or quaternion_matrix_round_trip or tiny_rotation or transform_laws or "
              "compose_and_slerp)"]

BLOCK_LOOPS = ("import importlib.abc, sys\n"
               "class NoLoops(importlib.abc.MetaPathFinder):\n"
               "    def find_spec(self, name, path, target=None):\n"
               "        if name == 'posekit.core._loops':\n"
               "            raise ImportError('posekit.core._loops is not built here')\n"
               "sys.meta_path.insert(0, NoLoops())\n")


def run_law_subset(prelude: str, env_extra: dict) -> tuple[str, str]:
    """Run LAW_SUBSET with pytest in a fresh interpreter after ``prelude``; returns (first line printed, pytest's
    summary).  The first line is ``available() route()`` of posekit.core.compiled at that point."""
    code = (prelude + "import sys, pytest\nfrom posekit.core import compiled\n"
            "print(compiled.available(), compiled.route(), flush=True)\n"
            f"sys.exit(pytest.main({LAW_SUBSET!r} + ['-q', '-p', 'no:cacheprovider', '-o', 'addopts=']))\n")
    env = {**os.environ, "PYTHONPATH": str(ROOT), **env_extra}
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT, env=env,
                         timeout=600)
    assert out.returncode == 0, out.stdout[-3000:] + out.stderr[-3000:]
    lines = out.stdout.strip().splitlines()
    return lines[0], lines[-1]


def passed_count(summary: str) -> int:
    found = re.search(r"(\d+) passed", summary)
    assert found and "failed" not in summary and "error" not in summary, summary
    return int(found.group(1))


def test_laws_hold_with_posekit_kernels_numpy():
    """POSEKIT_KERNELS=numpy: the route is numpy from the start, and the law subset passes."""
    first, summary = run_law_subset("", {"POSEKIT_KERNELS": "numpy"})
    assert first.split()[1] == "numpy", first
    assert passed_count(summary) >= 20


def test_laws_hold_without_the_compiled_module():
    """As on a machine where the install found no C compiler: importing posekit.core._loops fails, posekit
    says so (available() False), runs on route numpy, refuses the compiled route with a typed error, and
    the law subset passes."""
    check = ("import posekit as pk, numpy as np\nfrom posekit.core import compiled\n"
             "assert (compiled.available(), compiled.route()) == (False, 'numpy')\n"
             "try:\n"
             "    with compiled.use('compiled'):\n"
             "        pass\n"
             "except pk.PoseInputError as exc:\n"
             "    assert 'not built' in str(exc)\n"
             "else:\n"
             "    raise AssertionError('use(\"compiled\") was accepted without the loops')\n"
             "m = pk.read_rotation(np.zeros((1000, 3)), 'euler')\n"
             "assert float(np.abs(m - np.eye(3)).max()) == 0.0\n")
    first, summary = run_law_subset(BLOCK_LOOPS + check, {})
    assert first.split() == ["False", "numpy"], first
    assert passed_count(summary) >= 20


@pytest.mark.skipif(shutil.which("false") is None, reason="no `false` command to stand in for a missing compiler")
def test_the_build_goes_on_without_a_c_compiler(tmp_path):
    """setup.py's build of the optional loops with CC=false (every compile fails, as without a compiler):
    the build succeeds, says the extension failed, and leaves no module behind."""
    (tmp_path / "posekit" / "core").mkdir(parents=True)
    shutil.copy2(ROOT / "setup.py", tmp_path / "setup.py")
    shutil.copy2(ROOT / "posekit" / "core" / "_loops.c", tmp_path / "posekit" / "core" / "_loops.c")
    out = subprocess.run([sys.executable, "setup.py", "build_ext", "--build-lib", "out", "--build-temp", "tmp"],
                         capture_output=True, text=True, cwd=tmp_path, env={**os.environ, "CC": "false"},
                         timeout=300)
    assert out.returncode == 0, out.stdout[-2000:] + out.stderr[-2000:]
    assert "posekit.core._loops" in out.stderr and "failed" in out.stderr, out.stderr[-2000:]
    assert not list((tmp_path / "out").rglob("_loops*")), "a module was left behind"
