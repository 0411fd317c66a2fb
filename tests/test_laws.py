"""Laws of rotations and transforms, each checked under every convention.

Tests are parametrised over the 24 (sequence, axes) pairs of ``tests/conventions.py``
and loop inside over every combination of the remaining convention fields, each check
vectorised over a batch.  Orientations are compared with :func:`posekit.angle_between`
(geodesic angle), never by comparing angles.

The algebraic laws themselves (closure, identity, inverse, associativity, length
preservation, R^-1 = R^T, q and -q the same rotation) are facts of the trade (common
practice); the convention laws come from DEVELOPERS.md ("Outside sources") and the sources
named beside them.
"""

from __future__ import annotations

import numpy as np
import pytest
from conventions import (BATCH_SHAPES, HYPOTHESIS, HYPOTHESIS_BATCH, KERNEL_SIZES, PAIRS, all_conventions,
                         conventions_for, is_proper, over_pairs, pole_values, random_euler, random_matrices,
                         random_numbers, random_quaternions, random_vectors, shape_for)
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp

import posekit as pk
from posekit.core import rotation as rot
from posekit.core.reading import KINDS
from posekit.core.transforms import TRANSFORM_KINDS

#: every test here runs on each kernel route of large batches (compiled loops and numpy)
pytestmark = pytest.mark.usefixtures("kernel_route")

ORIENTATION_TOL = 1e-12  # radians, the round-trip target of the core
TIGHT = 1e-13  # elementwise tolerance for matrices that should agree to float precision
PARAMETERISED = tuple(k for k in KINDS if k != "matrix")  # kinds that ``action`` applies to


def seed_of(pair, salt: int) -> int:
    return PAIRS.index(tuple(pair)) * 1000 + salt


def close(a, b, atol=1e-8, rtol=0.0):
    """``np.allclose`` without its overhead (the loops below call it ~1e5 times): |a - b| <= atol + rtol |b|."""
    a, b = np.asarray(a, dtype=float), np.asarray(b, dtype=float)
    return bool(np.all(np.abs(a - b) <= atol + rtol * np.abs(b)))


def T(m):
    return np.swapaxes(m, -1, -2)


def orientation_error(a, b):
    return float(np.max(pk.angle_between(a, b)))


class Orientations:
    """Collects pairs of rotation batches that must be the same orientation and checks them all
    with one :func:`posekit.angle_between` call, naming the convention of any failure."""

    def __init__(self, tol=ORIENTATION_TOL):
        self.tol, self.a, self.b, self.labels = tol, [], [], []

    def add(self, a, b, label):
        a, b = np.broadcast_arrays(np.asarray(a, dtype=float), np.asarray(b, dtype=float))
        a, b = a.reshape(-1, 3, 3), b.reshape(-1, 3, 3)
        self.a.append(a)
        self.b.append(b)
        self.labels.extend([label] * len(a))

    def check(self):
        if not self.a:
            return
        err = pk.angle_between(np.concatenate(self.a), np.concatenate(self.b))
        bad = np.flatnonzero(err > self.tol)
        assert bad.size == 0, f"{bad.size} orientations off by up to {err.max():.3g} rad, first: {self.labels[bad[0]]}"
        self.a, self.b, self.labels = [], [], []


def quaternion_numbers(q_wxyz, conv):
    """Four numbers in the convention's scalar position from a scalar-first array."""
    return q_wxyz if conv.scalar == "first" else np.concatenate([q_wxyz[..., 1:], q_wxyz[..., :1]], axis=-1)


def user_conjugate(q, conv):
    """Negate the vector part of user-layout quaternions."""
    out = -np.asarray(q, dtype=float)
    if conv.scalar == "first":
        out[..., 0] *= -1
    else:
        out[..., 3] *= -1
    return out


def assert_rotation(m, tol=1e-12):
    assert np.max(pk.orthonormality_error(m)) < tol
    assert close(np.linalg.det(m), 1.0, atol=tol, rtol=0)


def read_random(rng, conv, kind, shape):
    return pk.read_rotation(random_numbers(rng, kind, conv, shape), kind, conv)


# --- closure, identity, inverse, associativity, length ---------------------------------

@over_pairs
def test_closure_product_of_rotations_is_a_rotation(pair):
    rng = np.random.default_rng(seed_of(pair, 1))
    for i, conv in enumerate(conventions_for(pair)):
        shape = shape_for(i)
        a = read_random(rng, conv, "euler", shape)
        b = read_random(rng, conv, "quaternion", shape)
        c = read_random(rng, conv, PARAMETERISED[i % len(PARAMETERISED)], shape)
        for m in (a, b, c, pk.compose(a, b), pk.compose(a, b, c), pk.compose(c, pk.invert(a))):
            assert m.shape == shape + (3, 3)
            assert_rotation(m)


@over_pairs
def test_identity(pair):
    rng = np.random.default_rng(seed_of(pair, 2))
    eye = np.eye(3)
    for i, conv in enumerate(conventions_for(pair)):
        shape = shape_for(i)
        zeros3 = np.zeros(shape + (3,))
        one = quaternion_numbers(np.broadcast_to([1.0, 0, 0, 0], shape + (4,)), conv)
        axis_angle = np.broadcast_to([0.0, 0.0, 1.0, 0.0], shape + (4,))
        for numbers, kind in ((zeros3, "euler"), (one, "quaternion"), (zeros3, "rotation-vector"),
                              (axis_angle, "axis-angle"), (np.zeros(shape), "planar-angle"),
                              (np.broadcast_to(eye, shape + (3, 3)), "matrix")):
            got = pk.read_rotation(numbers, kind, conv)
            assert np.array_equal(got, np.broadcast_to(eye, shape + (3, 3))), (conv, kind)
        r = read_random(rng, conv, "euler", shape)
        assert close(pk.compose(eye, r), r, atol=0, rtol=0)
        assert close(pk.compose(r, eye), r, atol=0, rtol=0)
        assert np.max(pk.angle_between(r, r)) <= 1e-15
        assert np.array_equal(pk.write_rotation(np.broadcast_to(eye, shape + (3, 3)), "euler", conv), zeros3)
        assert np.array_equal(pk.write_rotation(np.broadcast_to(eye, shape + (3, 3)), "quaternion", conv), one)


@over_pairs
def test_inverse(pair):
    rng = np.random.default_rng(seed_of(pair, 3))
    eye = np.eye(3)
    for i, conv in enumerate(conventions_for(pair)):
        shape = shape_for(i)
        # R R^-1 = R^-1 R = I and R^-1 = R^T (common practice)
        r = read_random(rng, conv, "euler", shape)
        inv = pk.invert(r)
        assert np.array_equal(inv, T(r))
        assert close(pk.compose(r, inv), eye, atol=TIGHT, rtol=0)
        assert close(pk.compose(inv, r), eye, atol=TIGHT, rtol=0)
        # inverse of a unit quaternion is its conjugate, in every layout/algebra (common practice)
        q = random_quaternions(rng, shape)
        rq = pk.read_rotation(q, "quaternion", conv)
        assert close(pk.read_rotation(user_conjugate(q, conv), "quaternion", conv), T(rq), atol=TIGHT, rtol=0)
        # inverse of intrinsic (a, b, c) about (p, q, r) is intrinsic (-c, -b, -a) about (r, q, p);
        # likewise for extrinsic: R^-1 = Rp(-a) Rq(-b) Rr(-c) reversed (common practice)
        angles = random_euler(rng, shape, conv.degrees)
        back = conv.changed(sequence=conv.sequence[::-1])
        assert close(pk.read_rotation(-angles[..., ::-1], "euler", back),
                           T(pk.read_rotation(angles, "euler", conv)), atol=TIGHT, rtol=0)
        # a rotation vector turned around is the inverse
        v = random_numbers(rng, "rotation-vector", conv, shape)
        assert close(pk.read_rotation(-v, "rotation-vector", conv),
                           T(pk.read_rotation(v, "rotation-vector", conv)), atol=TIGHT, rtol=0)


@over_pairs
def test_associativity(pair):
    rng = np.random.default_rng(seed_of(pair, 4))
    for i, conv in enumerate(conventions_for(pair)):
        shape = shape_for(i)
        a, b, c = (read_random(rng, conv, k, shape) for k in ("euler", "quaternion", "rotation-vector"))
        left = pk.compose(pk.compose(a, b), c)
        right = pk.compose(a, pk.compose(b, c))
        assert close(left, right, atol=TIGHT, rtol=0)
        assert close(pk.compose(a, b, c), left, atol=TIGHT, rtol=0)
        # the quaternion product is associative in both algebras and both layouts
        p, q, s = (random_quaternions(rng, shape) for _ in range(3))
        p, q, s = (quaternion_numbers(x, conv) for x in (p, q, s))
        qp = pk.quaternion_product
        assert close(qp(qp(p, q, conv), s, conv), qp(p, qp(q, s, conv), conv), atol=TIGHT, rtol=0)


@over_pairs
def test_length_and_angle_preservation(pair):
    rng = np.random.default_rng(seed_of(pair, 5))
    for i, conv in enumerate(conventions_for(pair)):
        shape = shape_for(i)
        r = read_random(rng, conv, PARAMETERISED[i % len(PARAMETERISED)], shape)
        u, v = random_vectors(rng, shape), random_vectors(rng, shape)
        ru, rv = pk.turn_vectors(r, u), pk.turn_vectors(r, v)
        assert close(np.linalg.norm(ru, axis=-1), np.linalg.norm(u, axis=-1), rtol=1e-14, atol=1e-13)
        assert close(np.sum(ru * rv, axis=-1), np.sum(u * v, axis=-1), rtol=1e-13, atol=1e-12)
        # handedness kept: R(u x v) = Ru x Rv (det +1; common practice)
        assert close(pk.turn_vectors(r, np.cross(u, v)), np.cross(ru, rv), atol=1e-11, rtol=0)


# --- round trip -------------------------------------------------------------------------

def special_rotations():
    """180-degree turns (trace -1) about axes and random directions, and turns just off them."""
    rng = np.random.default_rng(7)
    axes = np.concatenate([np.eye(3), -np.eye(3), [[1, 1, 0], [0, 1, -1], [1, 1, 1]], rng.standard_normal((8, 3))])
    axes /= np.linalg.norm(axes, axis=-1, keepdims=True)
    angles = np.array([np.pi, np.pi - 1e-12, np.pi - 1e-9, np.pi - 1e-6, np.pi + 1e-9, 1e-12, 0.0])
    rv = (axes[:, None, :] * angles[None, :, None]).reshape(-1, 3)
    return pk.read_rotation(rv, "rotation-vector")


@over_pairs
def test_round_trip_write_then_read_every_kind(pair):
    rng = np.random.default_rng(seed_of(pair, 6))
    specials = special_rotations()
    same = Orientations()
    for i, conv in enumerate(conventions_for(pair)):
        shape = shape_for(i)
        for kind in KINDS:
            if kind == "planar-angle":
                m = pk.read_rotation(random_numbers(rng, "planar-angle", conv, shape), "planar-angle")
            elif kind in ("matrix", "quaternion", "euler"):  # plus 180-degree turns and near them
                m = np.concatenate([random_matrices(rng, shape).reshape(-1, 3, 3), specials])
            else:
                m = random_matrices(rng, shape)
            x = pk.write_rotation(m, kind, conv)
            back = pk.read_rotation(x, kind, conv)
            assert back.shape == m.shape
            same.add(m, back, (conv, kind))
            if kind == "matrix":
                flat = pk.write_rotation(m, kind, conv, flat=True)
                assert flat.shape == m.shape[:-2] + (9,)
                same.add(m, pk.read_rotation(flat, kind, conv), (conv, kind, "flat"))
            if kind == "quaternion":  # scalar part comes out >= 0 in its slot
                assert np.all(x[..., 0 if conv.scalar == "first" else 3] >= 0)
    same.check()


@over_pairs
def test_round_trip_read_then_write_then_read(pair):
    """Numbers (in any range) -> rotation -> numbers -> the same rotation; read-back ranges hold."""
    rng = np.random.default_rng(seed_of(pair, 7))
    same = Orientations()
    for i, conv in enumerate(conventions_for(pair)):
        shape = shape_for(i)
        full = 360.0 if conv.degrees else 2 * np.pi
        for kind in PARAMETERISED:
            x = random_numbers(rng, kind, conv, shape)
            m = pk.read_rotation(x, kind, conv)
            y = pk.write_rotation(m, kind, conv)
            same.add(m, pk.read_rotation(y, kind, conv), (conv, kind))
            if kind == "euler":
                outer = y[..., [0, 2]]
                if conv.wrap == "signed":
                    assert np.all((outer > -full / 2) & (outer <= full / 2))
                else:
                    assert np.all((outer >= 0) & (outer < full))
                mid = y[..., 1] * (1 if not conv.degrees else np.pi / 180)
                if is_proper(conv):
                    assert np.all((mid >= 0) & (mid <= np.pi))
                else:
                    assert np.all(np.abs(mid) <= np.pi / 2)
        # convert() is write(read()) across two conventions
        other = conv.changed(sequence=conv.sequence[::-1], unit="degrees")
        a = random_euler(rng, shape, conv.degrees)
        c = pk.convert(a, "euler", "quaternion", conv, other)
        same.add(pk.read_rotation(c, "quaternion", other), pk.read_rotation(a, "euler", conv), (conv, "convert"))
    same.check()


# --- double cover, passive/active, intrinsic/extrinsic, JPL ----------------------------

@over_pairs
def test_double_cover(pair):
    rng = np.random.default_rng(seed_of(pair, 8))
    for i, conv in enumerate(conventions_for(pair)):
        q = random_quaternions(rng, shape_for(i))
        a = pk.read_rotation(q, "quaternion", conv)
        b = pk.read_rotation(-q, "quaternion", conv)
        # every entry of R(q) is a product of two components, so -q gives bit-identical numbers
        assert np.array_equal(a, b)
        # and writing either gives the same four numbers (w >= 0 representative)
        assert close(pk.write_rotation(a, "quaternion", conv), pk.write_rotation(b, "quaternion", conv),
                           atol=1e-15, rtol=0)


@over_pairs
def test_passive_is_transpose_of_active(pair):
    """conventions.md: the passive matrix for the same angles is the transpose of the active one,
    v_B = R_active^T v_A (Diebel 2006 writes all 12 sequences in the passive form)."""
    rng = np.random.default_rng(seed_of(pair, 9))
    same = Orientations()
    for i, active in enumerate(conventions_for(pair, action="active")):
        passive = active.changed(action="passive")
        shape = shape_for(i)
        for kind in PARAMETERISED:
            x = random_numbers(rng, kind, active, shape)
            ra = pk.read_rotation(x, kind, active)
            rp = pk.read_rotation(x, kind, passive)
            assert close(rp, T(ra), atol=TIGHT, rtol=0), (active, kind)
            # the passive matrix re-expresses a fixed vector in the turned frame
            v = random_vectors(rng, shape)
            assert close(pk.turn_vectors(rp, pk.turn_vectors(ra, v)), v, atol=1e-12, rtol=0)
        # writing: passive numbers of R are the active numbers of R^T
        m = random_matrices(rng, shape)
        for kind in ("quaternion", "euler", "rotation-vector", "axis-angle"):
            same.add(pk.read_rotation(pk.write_rotation(m, kind, passive), kind, active), T(m), (active, kind))
        # a written-out matrix is already a map: action does not apply to it (DEVELOPERS.md)
        assert np.array_equal(pk.read_rotation(m, "matrix", passive), pk.read_rotation(m, "matrix", active))
    same.check()


@over_pairs
def test_intrinsic_reversed_equals_extrinsic(pair):
    """Intrinsic (a, b, c) about (p, q, r) == extrinsic (c, b, a) about (r, q, p)
    (conventions.md; Craig, Introduction to Robotics, 3rd ed., §2.8, from memory)."""
    rng = np.random.default_rng(seed_of(pair, 10))
    same = Orientations()
    for i, conv in enumerate(conventions_for(pair)):
        other = conv.changed(sequence=conv.sequence[::-1],
                             axes="extrinsic" if conv.axes == "intrinsic" else "intrinsic")
        a = random_euler(rng, shape_for(i), conv.degrees)
        assert close(pk.read_rotation(a, "euler", conv), pk.read_rotation(a[..., ::-1], "euler", other),
                           atol=TIGHT, rtol=0)
        # and the written angles agree up to the same reversal (both are the same orientation)
        m = random_matrices(rng, shape_for(i))
        w1 = pk.write_rotation(m, "euler", conv)
        w2 = pk.write_rotation(m, "euler", other)
        same.add(pk.read_rotation(w1, "euler", conv), pk.read_rotation(w2[..., ::-1], "euler", conv), conv)
    same.check()


@over_pairs
def test_jpl_matrix_is_transpose_of_hamilton(pair):
    """Trawny & Roumeliotis 2005: the JPL matrix of four numbers is the transpose of the Hamilton one."""
    rng = np.random.default_rng(seed_of(pair, 11))
    for i, ham in enumerate(conventions_for(pair, algebra="hamilton")):
        jpl = ham.changed(algebra="jpl")
        q = random_quaternions(rng, shape_for(i))
        assert close(pk.read_rotation(q, "quaternion", jpl), T(pk.read_rotation(q, "quaternion", ham)),
                           atol=TIGHT, rtol=0)
        m = random_matrices(rng, shape_for(i))
        assert close(pk.write_rotation(m, "quaternion", jpl), pk.write_rotation(T(m), "quaternion", ham),
                           atol=1e-14, rtol=0)


@over_pairs
def test_jpl_product_is_swapped_hamilton_product(pair):
    """Sommer et al., Aerospace 5(3):72, 2018: JPL p ⊗ q equals Hamilton q ⊗ p."""
    rng = np.random.default_rng(seed_of(pair, 12))
    for i, ham in enumerate(conventions_for(pair, algebra="hamilton")):
        jpl = ham.changed(algebra="jpl")
        shape = shape_for(i)
        p = quaternion_numbers(random_quaternions(rng, shape), ham)
        q = quaternion_numbers(random_quaternions(rng, shape), ham)
        assert close(pk.quaternion_product(p, q, jpl), pk.quaternion_product(q, p, ham), atol=1e-15, rtol=0)
        # the product maps to the matrix product: in the order p, q when passive and
        # child-from-parent agree, swapped otherwise (each flips the matrix once)
        for conv in (ham, jpl):
            swapped = (conv.action == "passive") != (conv.direction == "child-from-parent")
            rp, rq = pk.read_rotation(p, "quaternion", conv), pk.read_rotation(q, "quaternion", conv)
            want = pk.compose(rq, rp) if swapped else pk.compose(rp, rq)
            got = pk.read_rotation(pk.quaternion_product(p, q, conv), "quaternion", conv)
            assert close(got, want, atol=TIGHT, rtol=0), conv


@over_pairs
def test_child_from_parent_is_the_inverse(pair):
    rng = np.random.default_rng(seed_of(pair, 13))
    for i, pfc in enumerate(conventions_for(pair, direction="parent-from-child")):
        cfp = pfc.changed(direction="child-from-parent")
        for kind in KINDS:
            x = random_numbers(rng, kind, pfc, shape_for(i))
            assert close(pk.read_rotation(x, kind, cfp), T(pk.read_rotation(x, kind, pfc)), atol=TIGHT,
                               rtol=0), (pfc, kind)


@over_pairs
def test_unit_degrees_is_radians_scaled(pair):
    rng = np.random.default_rng(seed_of(pair, 14))
    for i, rad in enumerate(conventions_for(pair, unit="radians")):
        deg = rad.changed(unit="degrees")
        for kind in ("euler", "rotation-vector", "planar-angle"):
            x = random_numbers(rng, kind, rad, shape_for(i))
            assert close(pk.read_rotation(np.degrees(x), kind, deg), pk.read_rotation(x, kind, rad),
                               atol=TIGHT, rtol=0)


# --- pole behaviour -------------------------------------------------------------------

def _outer_angles(rng, n):
    """Nonzero outer angles: magnitude in [0.05, 3.1] rad with random sign."""
    return rng.uniform(0.05, 3.1, (n, 2)) * rng.choice([-1.0, 1.0], (n, 2))


@over_pairs
def test_pole_round_trip_near_both_poles(pair):
    """Middle angle within 1e-9 rad of each pole, outer angles nonzero: orientation error <= 1e-12 rad
    (conventions.md, gimbal lock; shipped pole branches with wrong signs are what this catches)."""
    rng = np.random.default_rng(seed_of(pair, 15))
    same = Orientations()
    for i, conv in enumerate(conventions_for(pair)):
        n = KERNEL_SIZES[i % 2]
        offsets = np.concatenate([rng.uniform(-1e-9, 1e-9, n - 6), [1e-9, -1e-9, 1e-12, -1e-15, 3e-14, 0.0]])
        unit = 180.0 / np.pi if conv.degrees else 1.0
        for pole in pole_values(conv):
            outer = _outer_angles(rng, n)
            angles = np.stack([outer[:, 0], pole + offsets, outer[:, 1]], axis=-1) * unit
            m = pk.read_rotation(angles, "euler", conv)
            back = pk.write_rotation(m, "euler", conv)
            same.add(m, pk.read_rotation(back, "euler", conv), (conv, pole))
    same.check()


@over_pairs
def test_exactly_at_pole_reads_back_documented_member(pair):
    """At the pole the readback is the family member with the third listed angle 0, the
    middle angle is the pole value, and euler_of_quaternion reports pole distance ~0."""
    rng = np.random.default_rng(seed_of(pair, 16))
    same = Orientations()
    for i, conv in enumerate(conventions_for(pair)):
        n = KERNEL_SIZES[i % 2]
        unit = 180.0 / np.pi if conv.degrees else 1.0
        for pole in pole_values(conv):
            outer = _outer_angles(rng, n)
            pole_in_unit = 180.0 * pole / np.pi if conv.degrees else pole
            angles = np.stack([outer[:, 0] * unit, np.full(n, pole_in_unit), outer[:, 1] * unit], axis=-1)
            m = pk.read_rotation(angles, "euler", conv)
            back = pk.write_rotation(m, "euler", conv)
            assert np.all(back[:, 2] == 0.0), (conv, pole, back[:3])
            assert close(back[:, 1], pole_in_unit, atol=1e-12 * unit, rtol=0), (conv, pole)
            same.add(m, pk.read_rotation(back, "euler", conv), (conv, pole))
    same.check()
    # the pole distance, on the canonical functions (radians, active angles of the sequence)
    n = KERNEL_SIZES[1]
    seq, axes = pair[0].replace("-", ""), pair[1] == "intrinsic"
    for pole in pole_values(pk.Convention(sequence=pair[0])):
        outer = _outer_angles(rng, n)
        delta = np.concatenate([np.zeros(n // 2), rng.uniform(-1e-9, 1e-9, n - n // 2)])
        angles = np.stack([outer[:, 0], pole + delta, outer[:, 1]], axis=-1)
        q = rot.quaternion_of_euler(angles, seq, axes)
        got, dist = rot.euler_of_quaternion(q, seq, axes)
        assert np.all(dist[: n // 2] <= 1e-15), (pair, pole, dist[: n // 2].max())
        assert close(dist[n // 2:], np.abs(delta[n // 2:]), atol=1e-15, rtol=0)
        assert np.all(got[: n // 2, 2] == 0.0)
        assert orientation_error(rot.matrix_of_quaternion(q), rot.matrix_of_euler(got, seq, axes)) <= ORIENTATION_TOL
    # away from the pole the distance is how far the middle angle is from it
    mids = rng.uniform(0.1, 1.4, n) if not is_proper(pk.Convention(sequence=pair[0])) else rng.uniform(0.1, 3.0, n)
    angles = np.stack([rng.uniform(-3, 3, n), mids, rng.uniform(-3, 3, n)], axis=-1)
    _, dist = rot.euler_of_matrix(rot.matrix_of_euler(angles, seq, axes), seq, axes)
    want = np.pi / 2 - mids if not is_proper(pk.Convention(sequence=pair[0])) else np.minimum(mids, np.pi - mids)
    assert close(dist, want, atol=1e-12, rtol=0)


def test_tiny_rotation_vectors_round_trip_to_relative_precision():
    """Rotation vectors of 1e-15 .. 1e-5 rad come back with their own relative precision (series branches)."""
    rng = np.random.default_rng(23)
    axes = random_vectors(rng, (40,))
    axes /= np.linalg.norm(axes, axis=-1, keepdims=True)
    lengths = np.logspace(-15, -5, 40)
    v = axes * lengths[:, None]
    back = pk.write_rotation(pk.read_rotation(v, "rotation-vector"), "rotation-vector")
    assert np.all(np.linalg.norm(back - v, axis=-1) <= 1e-14 * lengths + 1e-300)


# --- quaternion <-> matrix near 180 degrees ---------------------------------------------

def test_quaternion_matrix_round_trip_at_and_near_180_degrees():
    """Shepperd 1978 / Markley 2008: trace -1 (180-degree turns) and just off them stay exact."""
    rng = np.random.default_rng(17)
    axes = np.concatenate([np.eye(3), [[1, 1, 0], [1, 0, -1], [0, 1, 1], [1, 1, 1]], rng.standard_normal((200, 3))])
    axes /= np.linalg.norm(axes, axis=-1, keepdims=True)
    for angle in (np.pi, np.pi - 1e-15, np.pi - 1e-12, np.pi - 1e-9, np.pi - 1e-6, np.pi - 1e-3, np.pi + 1e-9):
        q = np.concatenate([np.full((len(axes), 1), np.cos(angle / 2)), axes * np.sin(angle / 2)], axis=-1)
        m = rot.matrix_of_quaternion(q)
        if angle == np.pi:
            assert close(np.trace(m, axis1=-2, axis2=-1), -1.0, atol=1e-14, rtol=0)
            # a 180-degree turn is symmetric and squares to the identity (common practice)
            assert close(m, T(m), atol=1e-15, rtol=0)
        back = rot.quaternion_of_matrix(m)
        sign_free = np.minimum(np.linalg.norm(back - q, axis=-1), np.linalg.norm(back + q, axis=-1))
        assert np.max(sign_free) < 1e-15 * 8, angle
        assert np.all(back[:, 0] >= 0)
        assert close(rot.matrix_of_quaternion(back), m, atol=1e-15 * 4, rtol=0)
    # matrices built without quaternions: diag(1, -1, -1) etc. and Rodrigues 180s, R = 2 n n^T - I
    # (Rodrigues' formula at theta = pi)
    m = 2 * axes[:, :, None] * axes[:, None, :] - np.eye(3)
    q = rot.quaternion_of_matrix(m)
    assert close(q[:, 0], 0.0, atol=1e-15)
    assert close(np.abs(np.sum(q[:, 1:] * axes, axis=-1)), 1.0, atol=1e-15, rtol=0)
    assert close(rot.matrix_of_quaternion(q), m, atol=1e-15 * 4, rtol=0)


# --- transforms -----------------------------------------------------------------------

def random_transforms(rng, shape):
    return pk.make_transform(random_matrices(rng, shape), random_vectors(rng, shape))


def test_transform_laws_inverse_composition_points_directions():
    rng = np.random.default_rng(18)
    for shape in BATCH_SHAPES:
        a, b, c = (random_transforms(rng, shape) for _ in range(3))
        eye = np.broadcast_to(np.eye(4), shape + (4, 4))
        ia = pk.invert_transform(a)
        # T T^-1 = I and T^-1 = [[R^T, -R^T t], [0, 1]] (common practice)
        assert close(pk.compose_transforms(a, ia), eye, atol=1e-13, rtol=0)
        assert close(pk.compose_transforms(ia, a), eye, atol=1e-13, rtol=0)
        assert close(ia, np.linalg.inv(a), atol=1e-12, rtol=0)
        assert close(pk.invert_transform(ia), a, atol=1e-13, rtol=0)
        # composition and associativity, and (AB)^-1 = B^-1 A^-1
        ab = pk.compose_transforms(a, b)
        assert close(pk.compose_transforms(ab, c), pk.compose_transforms(a, pk.compose_transforms(b, c)),
                           atol=1e-12, rtol=0)
        assert close(pk.invert_transform(ab), pk.compose_transforms(pk.invert_transform(b), ia),
                           atol=1e-12, rtol=0)
        # points carry a homogeneous 1, directions a 0
        p = random_vectors(rng, shape)
        hom1 = np.concatenate([p, np.ones(shape + (1,))], axis=-1)
        hom0 = np.concatenate([p, np.zeros(shape + (1,))], axis=-1)
        tp = pk.transform_points(a, p)
        td = pk.transform_directions(a, p)
        assert close(tp, (a @ hom1[..., None])[..., :3, 0], atol=1e-12, rtol=0)
        assert close(td, (a @ hom0[..., None])[..., :3, 0], atol=1e-12, rtol=0)
        assert close(tp - td, a[..., :3, 3], atol=1e-12, rtol=0)
        assert close(pk.transform_points(ab, p), pk.transform_points(a, pk.transform_points(b, p)),
                           atol=1e-11, rtol=0)
        assert close(pk.transform_points(ia, tp), p, atol=1e-11, rtol=0)
        # a difference of points is a direction
        q = random_vectors(rng, shape)
        assert close(pk.transform_points(a, p) - pk.transform_points(a, q), pk.transform_directions(a, p - q),
                           atol=1e-11, rtol=0)
        # parts
        r, t = pk.split_transform(a)
        assert np.array_equal(pk.make_transform(r, t), a)
        # interpolation hits both ends
        assert close(pk.interpolate_transforms(a, b, np.zeros(shape)), a, atol=1e-12, rtol=0)
        assert close(pk.interpolate_transforms(a, b, np.ones(shape)), b, atol=1e-12, rtol=0)


@over_pairs
def test_transform_read_write_round_trip_every_convention(pair):
    rng = np.random.default_rng(seed_of(pair, 19))
    same = Orientations()
    for i, conv in enumerate(conventions_for(pair)):
        shape = shape_for(i)
        t = random_transforms(rng, shape)
        for kind in TRANSFORM_KINDS:
            for flat in ((False, True) if kind == "matrix" else (False,)):
                x = pk.write_transform(t, kind, conv, flat=flat)
                back = pk.read_transform(x, kind, conv)
                assert back.shape == shape + (4, 4)
                same.add(back[..., :3, :3], t[..., :3, :3], (conv, kind, flat))
                assert close(back[..., :3, 3], t[..., :3, 3], atol=1e-12, rtol=0), (conv, kind, flat)
                assert np.array_equal(back[..., 3, :], np.broadcast_to([0.0, 0, 0, 1], shape + (4,)))
        # child-from-parent numbers describe the inverse map
        if conv.direction == "child-from-parent":
            pfc = conv.changed(direction="parent-from-child")
            for kind in TRANSFORM_KINDS:
                x = pk.write_transform(t, kind, pfc)
                assert close(pk.read_transform(x, kind, conv), pk.invert_transform(t), atol=1e-12, rtol=0)
        # position-euler / position-quaternion carry the same rotation as read_rotation
        inner = conv.changed(direction="parent-from-child")
        v = np.concatenate([random_vectors(rng, shape), random_euler(rng, shape, conv.degrees)], axis=-1)
        got = pk.read_transform(v, "position-euler", inner)
        assert close(got[..., :3, :3], pk.read_rotation(v[..., 3:], "euler", inner), atol=0, rtol=0)
        assert np.array_equal(got[..., :3, 3], v[..., :3])
    same.check()


def test_column_major_flat_16_puts_translation_in_the_last_four():
    """conventions.md: a column-major 4x4 flattened holds the translation in slots 12-14."""
    rng = np.random.default_rng(20)
    t = random_transforms(rng, (6,))
    for conv in all_conventions(sequence="z-y-x", axes="intrinsic"):
        flat = pk.write_transform(t, "matrix", conv, flat=True)
        canon = t if conv.direction == "parent-from-child" else pk.invert_transform(t)
        if conv.layout == "column-major":
            assert np.array_equal(flat[..., 12:15], canon[..., :3, 3])
            assert np.array_equal(flat, T(canon).reshape(-1, 16))
            # the same 16 numbers read row-major put the translation in the bottom row: refused
            with pytest.raises(pk.WrongShapeError, match="bottom row"):
                pk.read_transform(flat[0].reshape(4, 4), "matrix")
        else:
            assert np.array_equal(flat, canon.reshape(-1, 16))
        # 12 numbers (3x4) read per layout
        rows = canon[..., :3, :]
        twelve = rows.reshape(-1, 12) if conv.layout == "row-major" else T(rows).reshape(-1, 12)
        assert close(pk.read_transform(twelve, "matrix", conv), t, atol=1e-12, rtol=0)


def test_planar_laws():
    rng = np.random.default_rng(21)
    for shape in BATCH_SHAPES:
        x, y, h = (rng.uniform(-5, 5, shape) for _ in range(3))
        x2, y2, h2 = (rng.uniform(-5, 5, shape) for _ in range(3))
        a = pk.make_planar(x, y, h)
        b = pk.make_planar(x2, y2, h2)
        # T = [[c, -s, x], [s, c, y], [0, 0, 1]] (conventions.md)
        assert close(a[..., 0, 0], np.cos(h)) and close(a[..., 1, 0], np.sin(h))
        px, py, ph = pk.planar_parts(a)
        assert close(px, x) and close(py, y)
        assert close(np.cos(ph - h), 1.0, atol=1e-14) and np.all((ph > -np.pi) & (ph <= np.pi))
        assert close(pk.make_planar(x, y, np.degrees(h), degrees=True), a, atol=1e-14)
        assert close(pk.planar_parts(a, degrees=True)[2], np.degrees(ph))
        # headings add under composition; the position is x1 + R1 p2
        ab = pk.compose_transforms(a, b)
        cx, cy, ch = pk.planar_parts(ab)
        assert close(np.cos(ch - (h + h2)), 1.0, atol=1e-13)
        assert close(cx, x + np.cos(h) * x2 - np.sin(h) * y2, atol=1e-12)
        assert close(cy, y + np.sin(h) * x2 + np.cos(h) * y2, atol=1e-12)
        eye = np.broadcast_to(np.eye(3), shape + (3, 3))
        assert close(pk.compose_transforms(a, pk.invert_transform(a)), eye, atol=1e-13)
        p = rng.uniform(-3, 3, shape + (2,))
        assert close(pk.transform_points(a, p) - pk.transform_directions(a, p), a[..., :2, 2])
        # SE(2) is SE(3) restricted to turns about z and moves in the plane
        a3 = pk.make_transform(pk.read_rotation(h, "planar-angle"), np.stack([x, y, np.zeros(shape)], axis=-1))
        b3 = pk.make_transform(pk.read_rotation(h2, "planar-angle"), np.stack([x2, y2, np.zeros(shape)], axis=-1))
        ab3 = pk.compose_transforms(a3, b3)
        assert close(ab3[..., :2, :2], ab[..., :2, :2], atol=1e-13)
        assert close(ab3[..., :2, 3], ab[..., :2, 2], atol=1e-12)
        # interpolation: ends, and the heading goes the short way
        assert close(pk.interpolate_planar(a, b, np.zeros(shape)), a, atol=1e-12)
        assert close(pk.interpolate_planar(a, b, np.ones(shape)), b, atol=1e-12)
    mid = pk.interpolate_planar(pk.make_planar(0, 0, 170, degrees=True), pk.make_planar(2, 0, -170, degrees=True), 0.5)
    assert close(pk.planar_parts(mid, degrees=True), (1.0, 0.0, 180.0), atol=1e-9)


def test_compose_and_slerp_broadcast_over_batches():
    rng = np.random.default_rng(22)
    a = random_matrices(rng, (4, 1))
    b = random_matrices(rng, (1, 5))
    assert pk.compose(a, b).shape == (4, 5, 3, 3)
    assert pk.turn_vectors(a, random_vectors(rng, (4, 7))).shape == (4, 7, 3)
    s = pk.slerp(a, b, np.full((4, 5), 0.25))
    # slerp moves a fraction t of the geodesic angle (Shoemake 1985)
    assert close(pk.angle_between(a, s), 0.25 * pk.angle_between(a, b), atol=1e-12)
    assert close(pk.angle_between(s, b), 0.75 * pk.angle_between(a, b), atol=1e-12)


# --- hypothesis: >= 1e5 generated rotations per run -------------------------------------
# volumes: round trip 60 x 1000, algebra 30 x 1000, poles 20 x 1000, elementwise 60 x 100
# -> 116 000 rotations per run.

CONVENTIONS = tuple(all_conventions())
conventions_st = st.sampled_from(CONVENTIONS)
seeds = st.integers(0, 2 ** 32 - 1)


@settings(HYPOTHESIS, max_examples=60)
@given(conv=conventions_st, kind=st.sampled_from(KINDS), seed=seeds)
def test_hypothesis_round_trip(conv, kind, seed):
    rng = np.random.default_rng(seed)
    if kind == "planar-angle":
        m = pk.read_rotation(random_numbers(rng, kind, conv, (HYPOTHESIS_BATCH,)), kind)
    else:
        m = random_matrices(rng, (HYPOTHESIS_BATCH,))
    back = pk.read_rotation(pk.write_rotation(m, kind, conv), kind, conv)
    assert orientation_error(m, back) <= ORIENTATION_TOL



@settings(HYPOTHESIS, max_examples=30)
@given(conv=conventions_st, seed=seeds)
def test_hypothesis_algebra(conv, seed):
    rng = np.random.default_rng(seed)
    n = HYPOTHESIS_BATCH // 2
    a = pk.read_rotation(random_euler(rng, (n,), conv.degrees), "euler", conv)
    b = pk.read_rotation(random_quaternions(rng, (n,)), "quaternion", conv)
    ab = pk.compose(a, b)
    assert_rotation(ab)
    assert close(pk.compose(ab, pk.invert(b)), a, atol=TIGHT, rtol=0)
    v = random_vectors(rng, (n,))
    assert close(np.linalg.norm(pk.turn_vectors(ab, v), axis=-1), np.linalg.norm(v, axis=-1), rtol=1e-14)
    # the geodesic angle is invariant under composing both sides (common practice)
    assert close(pk.angle_between(pk.compose(b, a), pk.compose(b, ab)), pk.angle_between(a, ab), atol=1e-12)



@settings(HYPOTHESIS, max_examples=20)
@given(conv=conventions_st, seed=seeds, which=st.integers(0, 1), width=st.sampled_from([0.0, 1e-15, 1e-12, 1e-9]))
def test_hypothesis_near_poles(conv, seed, which, width):
    rng = np.random.default_rng(seed)
    n = HYPOTHESIS_BATCH
    unit = 180.0 / np.pi if conv.degrees else 1.0
    outer = _outer_angles(rng, n)
    pole = pole_values(conv)[which]
    angles = np.stack([outer[:, 0], pole + rng.uniform(-width, width, n), outer[:, 1]], axis=-1) * unit
    m = pk.read_rotation(angles, "euler", conv)
    assert orientation_error(m, pk.read_rotation(pk.write_rotation(m, "euler", conv), "euler", conv)) <= ORIENTATION_TOL


special_angles = st.sampled_from([0.0, np.pi / 2, -np.pi / 2, np.pi, -np.pi, 2 * np.pi, 1e-300, 5e-324])
angle_values = st.one_of(st.floats(-10.0, 10.0, allow_nan=False, allow_infinity=False), special_angles)


@settings(HYPOTHESIS, max_examples=60)
@given(conv=conventions_st, angles=hnp.arrays(np.float64, (100, 3), elements=angle_values))
def test_hypothesis_euler_angle_values(conv, angles):
    """Hypothesis-chosen angle values (incl. exact poles, +-pi, subnormals) round-trip."""
    if conv.degrees:
        angles = np.degrees(angles)
    m = pk.read_rotation(angles, "euler", conv)
    assert_rotation(m)
    assert orientation_error(m, pk.read_rotation(pk.write_rotation(m, "euler", conv), "euler", conv)) <= ORIENTATION_TOL

