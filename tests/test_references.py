"""Checks against sources outside posekit, each named beside the check.

Sources: scipy.spatial.transform (Rotation, RigidTransform, Slerp), transforms3d (an
independent implementation), sympy (symbolic elementary rotations and quaternions),
and the published examples and formulas of DEVELOPERS.md "Outside sources" (values from memory
where marked).
"""

from __future__ import annotations

import numpy as np
import pytest
import sympy as sp
import transforms3d as t3
from conventions import PAIRS, over_pairs, random_euler, random_matrices, random_quaternions, random_vectors
from scipy.spatial.transform import RigidTransform, Rotation, Slerp
from sympy.algebras.quaternion import Quaternion as SymQuaternion
from sympy.matrices import rot_axis1, rot_axis2, rot_axis3, rot_ccw_axis1, rot_ccw_axis2, rot_ccw_axis3

import posekit as pk
from posekit.analysis import scipy_bridge
from posekit.core import rotation as rot

#: every test here runs on each kernel route of large batches (compiled loops and numpy)
pytestmark = pytest.mark.usefixtures("kernel_route")

TOL = 1e-12


def conv_of(pair, **more):
    return pk.Convention(sequence=pair[0], axes=pair[1], **more)


def scipy_seq(conv):
    # scipy.spatial.transform.Rotation.from_euler: upper-case letters = intrinsic, lower = extrinsic
    return conv.axes_letters.upper() if conv.intrinsic else conv.axes_letters


def same_orientation(a, b, tol=TOL):
    return float(np.max(pk.angle_between(a, b))) <= tol


# --- scipy.spatial.transform.Rotation ------------------------------------------------------

@over_pairs
@pytest.mark.parametrize("unit", ["radians", "degrees"])
def test_scipy_from_euler_every_sequence(pair, unit):
    rng = np.random.default_rng(PAIRS.index(pair))
    degrees = unit == "degrees"
    angles = random_euler(rng, (50,), degrees)
    for action in ("active", "passive"):
        conv = conv_of(pair, unit=unit, action=action)
        ours = pk.read_rotation(angles, "euler", conv)
        ref = Rotation.from_euler(scipy_seq(conv), angles, degrees=degrees)  # scipy Rotation.from_euler
        if action == "passive":
            ref = ref.inv()  # scipy Rotation.inv: the passive matrix is the transpose
        assert np.allclose(ours, ref.as_matrix(), atol=1e-13, rtol=0)


@over_pairs
def test_scipy_as_euler_same_orientation(pair):
    rng = np.random.default_rng(100 + PAIRS.index(pair))
    m = random_matrices(rng, (50,))
    conv = conv_of(pair)
    ours = pk.write_rotation(m, "euler", conv)
    theirs = Rotation.from_matrix(m).as_euler(scipy_seq(conv))  # scipy Rotation.as_euler
    # compare orientations, not angles: each reads back the same rotation in the other library
    assert np.allclose(Rotation.from_euler(scipy_seq(conv), ours).as_matrix(), m, atol=1e-12, rtol=0)
    assert same_orientation(pk.read_rotation(theirs, "euler", conv), m)
    # away from the poles the angles themselves agree (both read back in the usual ranges)
    _, dist = rot.euler_of_matrix(m, conv.axes_letters, conv.intrinsic)
    far = dist > 1e-3
    assert np.allclose(ours[far], theirs[far], atol=1e-9, rtol=0)


@pytest.mark.parametrize("scalar", ["first", "last"])
def test_scipy_quaternion_both_orders(scalar):
    rng = np.random.default_rng(3)
    q = random_quaternions(rng, (200,))
    sf = scalar == "first"
    conv = pk.Convention(scalar=scalar)
    # scipy Rotation.from_quat(..., scalar_first=...) / as_quat(canonical=True, scalar_first=...)
    assert np.allclose(pk.read_rotation(q, "quaternion", conv), Rotation.from_quat(q, scalar_first=sf).as_matrix(),
                       atol=1e-14, rtol=0)
    m = random_matrices(rng, (200,))
    assert np.allclose(pk.write_rotation(m, "quaternion", conv),
                       Rotation.from_matrix(m).as_quat(canonical=True, scalar_first=sf), atol=1e-14, rtol=0)


def test_scipy_rotation_vector_and_products():
    rng = np.random.default_rng(4)
    v = random_vectors(rng, (100,), scale=3.0)
    # scipy Rotation.from_rotvec / as_rotvec (radians and degrees)
    assert np.allclose(pk.read_rotation(v, "rotation-vector"), Rotation.from_rotvec(v).as_matrix(), atol=1e-14)
    assert np.allclose(pk.read_rotation(np.degrees(v), "rotation-vector", "unit=degrees"),
                       Rotation.from_rotvec(np.degrees(v), degrees=True).as_matrix(), atol=1e-14)
    m = random_matrices(rng, (100,))
    assert np.allclose(pk.write_rotation(m, "rotation-vector"), Rotation.from_matrix(m).as_rotvec(), atol=1e-12)
    # scipy Rotation.__mul__ composes like the matrix product; Rotation.magnitude is the geodesic angle
    a, b = Rotation.from_matrix(m[:50]), Rotation.from_matrix(m[50:])
    assert np.allclose(pk.compose(m[:50], m[50:]), (a * b).as_matrix(), atol=1e-14)
    assert np.allclose(pk.angle_between(m[:50], m[50:]), (a.inv() * b).magnitude(), atol=1e-12)
    # scipy Rotation.apply
    p = random_vectors(rng, (50,))
    assert np.allclose(pk.turn_vectors(m[:50], p), a.apply(p), atol=1e-13)


def test_scipy_slerp():
    rng = np.random.default_rng(5)
    m = random_matrices(rng, (2,))
    t = np.linspace(0.0, 1.0, 11)
    ref = Slerp([0.0, 1.0], Rotation.from_matrix(m))(t).as_matrix()  # scipy Slerp
    assert np.allclose(pk.slerp(m[0], m[1], t), ref, atol=1e-13)


def test_scipy_rigid_transform():
    rng = np.random.default_rng(6)
    r = random_matrices(rng, (40,))
    t = random_vectors(rng, (40,))
    ours = pk.make_transform(r, t)
    # scipy RigidTransform.from_components(translation, rotation).as_matrix()
    ref = RigidTransform.from_components(t, Rotation.from_matrix(r))
    assert np.allclose(ours, ref.as_matrix(), atol=1e-14)
    p = random_vectors(rng, (40,))
    assert np.allclose(pk.transform_points(ours, p), ref.apply(p), atol=1e-12)  # RigidTransform.apply
    assert np.allclose(pk.invert_transform(ours), ref.inv().as_matrix(), atol=1e-12)  # RigidTransform.inv
    a, b = RigidTransform.from_matrix(ours[:20]), RigidTransform.from_matrix(ours[20:])
    assert np.allclose(pk.compose_transforms(ours[:20], ours[20:]), (a * b).as_matrix(), atol=1e-12)
    # the 7 numbers x, y, z, qx, qy, qz, qw: scipy RigidTransform.as_components + Rotation.as_quat
    tr, rr = ref.as_components()
    seven = np.concatenate([tr, rr.as_quat()], axis=-1)
    assert np.allclose(pk.read_transform(seven, "position-quaternion", "scalar=last"), ours, atol=1e-13)


def test_scipy_bridge_round_trips():
    rng = np.random.default_rng(7)
    m = random_matrices(rng, (30,))
    r = scipy_bridge.to_scipy_rotation(m)
    assert isinstance(r, Rotation)
    # the bridge is the canonical matrix itself: compare with scipy Rotation.as_matrix / apply
    assert np.allclose(r.as_matrix(), m, atol=1e-14)
    v = random_vectors(rng, (30,))
    assert np.allclose(r.apply(v), pk.turn_vectors(m, v), atol=1e-12)
    assert np.allclose(scipy_bridge.from_scipy_rotation(r), m, atol=1e-14)
    t = pk.make_transform(m, v)
    rt = scipy_bridge.to_scipy_transform(t)
    assert isinstance(rt, RigidTransform)
    assert np.allclose(rt.apply(v), pk.transform_points(t, v), atol=1e-12)  # scipy RigidTransform.apply
    assert np.allclose(scipy_bridge.from_scipy_transform(rt), t, atol=1e-14)
    with pytest.raises(pk.WrongTypeError, match="scipy Rotation"):
        scipy_bridge.from_scipy_rotation(m)
    with pytest.raises(pk.WrongTypeError, match="RigidTransform"):
        scipy_bridge.from_scipy_transform(t)
    with pytest.raises(pk.ReflectionError):
        scipy_bridge.to_scipy_rotation(np.diag([1.0, 1.0, -1.0]))


# --- transforms3d (independent implementation) ------------------------------------------

@over_pairs
def test_transforms3d_euler(pair):
    rng = np.random.default_rng(200 + PAIRS.index(pair))
    conv = conv_of(pair)
    # transforms3d.euler axes codes: 'r' + sequence = rotating (intrinsic), 's' + sequence = static (extrinsic)
    code = ("r" if conv.intrinsic else "s") + conv.axes_letters
    angles = random_euler(rng, (20,))
    for a, ours in zip(angles, pk.read_rotation(angles, "euler", conv)):
        assert np.allclose(ours, t3.euler.euler2mat(*a, axes=code), atol=1e-13)  # transforms3d.euler.euler2mat
    for m in random_matrices(rng, (10,)):
        theirs = t3.euler.mat2euler(m, axes=code)  # transforms3d.euler.mat2euler
        assert same_orientation(pk.read_rotation(theirs, "euler", conv), m, tol=1e-11)
        assert np.allclose(t3.euler.euler2mat(*pk.write_rotation(m, "euler", conv), axes=code), m, atol=1e-12)


def test_transforms3d_quaternions_and_axis_angle():
    rng = np.random.default_rng(8)
    for q, p, m in zip(random_quaternions(rng, (30,)), random_quaternions(rng, (30,)), random_matrices(rng, (30,))):
        # transforms3d.quaternions: w first, Hamilton
        assert np.allclose(pk.read_rotation(q, "quaternion"), t3.quaternions.quat2mat(q), atol=1e-14)
        theirs = t3.quaternions.mat2quat(m)
        ours = pk.write_rotation(m, "quaternion")
        assert np.allclose(ours, theirs * np.sign(theirs[0]), atol=1e-12)
        assert np.allclose(pk.quaternion_product(q, p), t3.quaternions.qmult(q, p), atol=1e-15)
        axis, angle = t3.quaternions.quat2axangle(q)
        assert np.allclose(pk.read_rotation([*axis, angle], "axis-angle"), t3.axangles.axangle2mat(axis, angle),
                           atol=1e-13)  # transforms3d.axangles.axangle2mat


# --- sympy: symbolic elementary rotations -----------------------------------------------

A, B, C = sp.symbols("a b c", real=True)
# sympy.matrices.rot_ccw_axis1/2/3: active (counter-clockwise) rotations about x, y, z
ACTIVE = {"x": rot_ccw_axis1, "y": rot_ccw_axis2, "z": rot_ccw_axis3}
# sympy.matrices.rot_axis1/2/3: the frame (passive) rotations, the transposes
PASSIVE = {"x": rot_axis1, "y": rot_axis2, "z": rot_axis3}


def symbolic_euler(letters: str, intrinsic: bool, table=ACTIVE):
    p, q, r = letters
    if intrinsic:  # R = Rp(a) Rq(b) Rr(c)
        return table[p](A) * table[q](B) * table[r](C)
    return table[r](C) * table[q](B) * table[p](A)  # extrinsic: R = Rr(c) Rq(b) Rp(a)


@over_pairs
def test_sympy_symbolic_products(pair):
    rng = np.random.default_rng(300 + PAIRS.index(pair))
    conv = conv_of(pair)
    f = sp.lambdify((A, B, C), symbolic_euler(conv.axes_letters, conv.intrinsic), "numpy")
    angles = random_euler(rng, (8,))
    ours = rot.matrix_of_euler(angles, conv.axes_letters, conv.intrinsic)
    for a, mine in zip(angles, ours):
        assert np.allclose(np.array(f(*a), dtype=float), mine, atol=1e-14)
    # passive: the transpose of the product, i.e. sympy's frame rotations (rot_axis1/2/3, which are
    # the transposes of the active ones) multiplied in the reverse order
    p, q, r = conv.axes_letters
    frames = PASSIVE[r](C) * PASSIVE[q](B) * PASSIVE[p](A) if conv.intrinsic else \
        PASSIVE[p](A) * PASSIVE[q](B) * PASSIVE[r](C)
    g = sp.lambdify((A, B, C), frames, "numpy")
    passive = pk.read_rotation(angles, "euler", conv.changed(action="passive"))
    for a, mine in zip(angles, passive):
        assert np.allclose(np.array(g(*a), dtype=float), mine, atol=1e-14)


def test_sympy_quaternion_matrix_and_product():
    rng = np.random.default_rng(9)
    for q, p in zip(random_quaternions(rng, (10,)), random_quaternions(rng, (10,))):
        sq, spp = SymQuaternion(*q), SymQuaternion(*p)
        # sympy Quaternion.to_rotation_matrix (active, Hamilton, w first)
        assert np.allclose(np.array(sq.to_rotation_matrix(), dtype=float), pk.read_rotation(q, "quaternion"),
                           atol=1e-14)
        prod = sq * spp  # sympy Quaternion.__mul__: the Hamilton product
        assert np.allclose([float(prod.a), float(prod.b), float(prod.c), float(prod.d)],
                           pk.quaternion_product(q, p), atol=1e-15)


# --- published worked examples and formulas (DEVELOPERS.md "Outside sources") -------------------------

def test_craig_example_2_1():
    # Craig, Introduction to Robotics, 3rd ed., Example 2.1 (from memory): B turned 30 degrees about
    # Z of A; the point (0, 2, 0) in B is (-1.000, 1.732, 0.000) in A.
    r = pk.read_rotation(30.0, "planar-angle", "unit=degrees")
    assert np.allclose(pk.turn_vectors(r, [0.0, 2.0, 0.0]), [-1.000, 1.732, 0.000], atol=5e-4)
    r2 = pk.read_rotation([30.0, 0.0, 0.0], "euler", "sequence=z-y-x unit=degrees")
    assert np.allclose(r, r2, atol=1e-15)


def test_craig_example_2_2():
    # Craig, 3rd ed., Example 2.2 (from memory): same rotation, B's origin at (10, 5, 0) in A;
    # the point (3, 7, 0) in B is (9.098, 12.562, 0.000) in A.
    t = pk.read_transform([10.0, 5.0, 0.0, 30.0, 0.0, 0.0], "position-euler", "sequence=z-y-x unit=degrees")
    assert np.allclose(pk.transform_points(t, [3.0, 7.0, 0.0]), [9.098, 12.562, 0.000], atol=5e-4)
    # and back: the child-from-parent reading of the same pose maps A's point into B
    tb = pk.read_transform([10.0, 5.0, 0.0, 30.0, 0.0, 0.0], "position-euler",
                           "sequence=z-y-x unit=degrees direction=child-from-parent")
    assert np.allclose(pk.transform_points(tb, [9.098, 12.562, 0.0]), [3.0, 7.0, 0.0], atol=1e-3)


def test_craig_fixed_angles_equal_reversed_euler_angles():
    # Craig, 3rd ed., §2.8 (from memory): X-Y-Z fixed angles (g, b, a) equal Z-Y-X Euler angles
    # (a, b, g): R = Rz(a) Ry(b) Rx(g).
    rng = np.random.default_rng(10)
    for alpha, beta, gamma in rng.uniform(-3, 3, (20, 3)):
        fixed = pk.read_rotation([gamma, beta, alpha], "euler", "sequence=x-y-z axes=extrinsic")
        euler = pk.read_rotation([alpha, beta, gamma], "euler", "sequence=z-y-x axes=intrinsic")
        explicit = rot.elementary_matrix("z", alpha) @ rot.elementary_matrix("y", beta) @ \
            rot.elementary_matrix("x", gamma)
        assert np.allclose(fixed, explicit, atol=1e-14) and np.allclose(euler, explicit, atol=1e-14)


UNITS = {"1": [1.0, 0, 0, 0], "i": [0, 1.0, 0, 0], "j": [0, 0, 1.0, 0], "k": [0, 0, 0, 1.0]}


def qp(a, b, conv="algebra=hamilton"):
    return pk.quaternion_product(UNITS[a], UNITS[b], conv)


def test_hamilton_relations():
    # Hamilton's defining relations, 1843: i^2 = j^2 = k^2 = ijk = -1, so ij = k, jk = i, ki = j.
    minus_one = [-1.0, 0, 0, 0]
    for u in "ijk":
        assert np.array_equal(qp(u, u), minus_one)
    assert np.array_equal(pk.quaternion_product(qp("i", "j"), UNITS["k"]), minus_one)
    assert np.array_equal(qp("i", "j"), UNITS["k"])
    assert np.array_equal(qp("j", "k"), UNITS["i"])
    assert np.array_equal(qp("k", "i"), UNITS["j"])
    assert np.array_equal(qp("j", "i"), -np.array(UNITS["k"]))
    # and the matrix of the product is the product of the matrices: R(p q) = R(p) R(q)
    rng = np.random.default_rng(11)
    p, q = random_quaternions(rng, (2, 20))
    assert np.allclose(pk.read_rotation(pk.quaternion_product(p, q), "quaternion"),
                       pk.read_rotation(p, "quaternion") @ pk.read_rotation(q, "quaternion"), atol=1e-14)


def skew(v):
    x, y, z = v
    return np.array([[0, -z, y], [z, 0, -x], [-y, x, 0]])


def test_jpl_trawny_roumeliotis():
    # Trawny & Roumeliotis, Univ. of Minnesota tech. report 2005-002 (from memory): JPL quaternion
    # q = (qv, q4), scalar last, ij = -k; C(q) = (2 q4^2 - 1) I - 2 q4 [qv x] + 2 qv qv^T, and
    # q (x) p = [q4 pv + p4 qv - qv x pv ; q4 p4 - qv . pv].
    jpl = "scalar=last algebra=jpl"
    i, j, k = [1.0, 0, 0, 0], [0, 1.0, 0, 0], [0, 0, 1.0, 0]
    assert np.array_equal(pk.quaternion_product(i, j, jpl), -np.array(k))  # ij = -k
    rng = np.random.default_rng(12)
    for q, p in zip(random_quaternions(rng, (20,)), random_quaternions(rng, (20,))):
        qv, q4, pv, p4 = q[:3], q[3], p[:3], p[3]
        c = (2 * q4 * q4 - 1) * np.eye(3) - 2 * q4 * skew(qv) + 2 * np.outer(qv, qv)
        assert np.allclose(pk.read_rotation(q, "quaternion", jpl), c, atol=1e-14)
        want = np.concatenate([q4 * pv + p4 * qv - np.cross(qv, pv), [q4 * p4 - qv @ pv]])
        assert np.allclose(pk.quaternion_product(q, p, jpl), want, atol=1e-15)
        # the JPL matrix is the transpose of the Hamilton one for the same numbers (same report)
        assert np.allclose(c, pk.read_rotation(q, "quaternion", "scalar=last").T, atol=1e-14)


def test_jpl_sommer_flipped_product():
    # Sommer et al., "Why and How to Avoid the Flipped Quaternion Multiplication", Aerospace 5(3):72,
    # 2018: the JPL product is the Hamilton product with the operands swapped.
    rng = np.random.default_rng(13)
    p, q = random_quaternions(rng, (2, 50))
    for order in ("first", "last"):
        assert np.allclose(pk.quaternion_product(p, q, f"algebra=jpl scalar={order}"),
                           pk.quaternion_product(q, p, f"algebra=hamilton scalar={order}"), atol=0)


def test_rodrigues_formula():
    # Rodrigues' rotation formula (1840): R = I + sin(t) K + (1 - cos(t)) K^2, K = [n x]
    rng = np.random.default_rng(14)
    axes = random_vectors(rng, (40,))
    axes /= np.linalg.norm(axes, axis=-1, keepdims=True)
    angles = rng.uniform(-np.pi, np.pi, 40)
    for n, t in zip(axes, angles):
        kx = skew(n)
        want = np.eye(3) + np.sin(t) * kx + (1 - np.cos(t)) * kx @ kx
        assert np.allclose(pk.read_rotation([*n, t], "axis-angle"), want, atol=1e-14)
        assert np.allclose(pk.read_rotation([*n, np.degrees(t)], "axis-angle", "unit=degrees"), want, atol=1e-14)
        assert np.allclose(pk.read_rotation(n * t, "rotation-vector"), want, atol=1e-14)


def test_slerp_shoemake():
    # Shoemake, SIGGRAPH 1985: the midpoint between identity and 90 degrees about z is 45 degrees
    # about z (derived); and slerp(q0, q1, t) = (sin((1-t) W) q0 + sin(t W) q1) / sin W, cos W = q0.q1.
    quarter = pk.read_rotation(90.0, "planar-angle", "unit=degrees")
    assert np.allclose(pk.slerp(np.eye(3), quarter, 0.5), pk.read_rotation(45.0, "planar-angle", "unit=degrees"),
                       atol=1e-15)
    rng = np.random.default_rng(15)
    q0, q1 = random_quaternions(rng, (2, 30))
    q1 = np.where(np.sum(q0 * q1, axis=-1, keepdims=True) < 0, -q1, q1)  # shortest arc
    big_w = np.arccos(np.clip(np.sum(q0 * q1, axis=-1), -1, 1))
    for t in (0.0, 0.25, 0.5, 0.9, 1.0):
        want = (np.sin((1 - t) * big_w)[:, None] * q0 + np.sin(t * big_w)[:, None] * q1) / np.sin(big_w)[:, None]
        got = pk.slerp(pk.read_rotation(q0, "quaternion"), pk.read_rotation(q1, "quaternion"), t)
        assert np.allclose(got, pk.read_rotation(want, "quaternion", normalise=True), atol=1e-12)


def test_iso_1151_yaw_pitch_roll():
    # ISO 1151-2 / ANSI/AIAA R-004-1992 (from memory): from north-east-down Earth axes to body axes
    # by yaw psi about z, pitch theta about the new y, roll phi about the new x.  The matrix that
    # re-expresses Earth-axes components in body axes is (from memory)
    #   [[cT cP, cT sP, -sT],
    #    [sF sT cP - cF sP, sF sT sP + cF cP, sF cT],
    #    [cF sT cP + sF sP, cF sT sP - sF cP, cF cT]]   (P = psi, T = theta, F = phi)
    rng = np.random.default_rng(16)
    for psi, theta, phi in np.column_stack([rng.uniform(-3, 3, 20), rng.uniform(-1.5, 1.5, 20),
                                            rng.uniform(-3, 3, 20)]):
        cP, sP, cT, sT, cF, sF = np.cos(psi), np.sin(psi), np.cos(theta), np.sin(theta), np.cos(phi), np.sin(phi)
        earth_to_body = np.array([[cT * cP, cT * sP, -sT],
                                  [sF * sT * cP - cF * sP, sF * sT * sP + cF * cP, sF * cT],
                                  [cF * sT * cP + sF * sP, cF * sT * sP - sF * cP, cF * cT]])
        passive = pk.read_rotation([psi, theta, phi], "euler", "sequence=z-y-x axes=intrinsic action=passive")
        assert np.allclose(passive, earth_to_body, atol=1e-14)
        # the canonical (active, body-to-Earth) matrix is its transpose
        assert np.allclose(pk.read_rotation([psi, theta, phi], "euler", "sequence=z-y-x"), earth_to_body.T,
                           atol=1e-14)
    # pitch +-90 degrees is the singular attitude (same standard)
    for pitch in (np.pi / 2, -np.pi / 2):
        q = rot.quaternion_of_euler([0.4, pitch, -0.2], "zyx", True)
        _, dist = rot.euler_of_quaternion(q, "zyx", True)
        assert dist < 1e-15
