"""Two sensors on one rigid body (posekit.analysis.alignment) against scipy ground truth.

Every stream is generated here: the body's orientation from scipy.spatial.transform.RotationSpline
through random key orientations (scipy Rotation.random), its position from
scipy.interpolate.CubicSpline through random key positions, a known mount X (scipy Rotation.random),
a known world frame for B, a known clock offset, and B's numbers written *by scipy* under the true
convention (scipy's ``as_quat`` / ``as_euler`` / ``as_rotvec`` / ``as_matrix``; upper-case sequence
letters are intrinsic in scipy), then read by posekit under the slipped, stated one.  The checks:
the offset within one sample period, the mount within 0.1 degree, the diagnosed slip decoding B's
numbers to scipy's true orientations, its sentence naming the injected slip, over a generated
grid of slips x seeds.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy.interpolate import CubicSpline
from scipy.spatial.transform import Rotation, RotationSpline

from posekit.analysis.alignment import (DegenerateMotionError, NoOverlapError, ReferenceStreamError,
                                        StreamAlignment, StreamTimesError, align_streams, park_martin_rotation,
                                        relative_angles, solve_mount)
from posekit.analysis.streams import encode_slip
from posekit.core.errors import PoseInputError, WrongShapeError
from posekit.explain import NAMED_REMAPS, REMAPS, Slip, read_numbers, stated_reading

A_RATE = 100.0      # stream A: samples per second
B_RATE = 30.0       # stream B: samples per second
DURATION = 40.0     # seconds of motion
OPTICAL = NAMED_REMAPS["FLU body -> optical (x right, y down, z forward)"]


# --------------------------------------------------------------------------------------
# ground truth (scipy) and the writers of B's numbers (scipy)
# --------------------------------------------------------------------------------------

def _truth(seed, *, single_axis=None, amplitude=None, n_keys=9, constant_rate=None):
    """A smooth motion through random key orientations and positions (scipy), a mount, B's world, an offset."""
    rng = np.random.default_rng(seed)
    key_t = np.linspace(0.0, DURATION, n_keys)
    if constant_rate is not None:
        r0 = Rotation.random(random_state=seed)
        spline = (lambda t: r0 * Rotation.from_rotvec(np.outer(constant_rate * np.asarray(t), single_axis)))
    else:
        if single_axis is not None:
            steps = rng.uniform(0.6, 1.6, n_keys) * rng.choice([-1.0, 1.0], n_keys)
            key_r = Rotation.random(random_state=seed) * Rotation.from_rotvec(np.outer(np.cumsum(steps),
                                                                                       single_axis))
        elif amplitude is not None:
            key_r = Rotation.from_rotvec(rng.normal(size=(n_keys, 3)) * amplitude)
        else:
            key_r = Rotation.random(n_keys, random_state=seed)
        spline = RotationSpline(key_t, key_r)          # scipy: smooth orientation through the keys
    pos = CubicSpline(key_t, rng.normal(size=(n_keys, 3)))  # scipy: smooth position through the keys
    return {"spline": spline, "pos": pos, "mount": Rotation.random(random_state=seed + 1000),
            "mount_t": rng.normal(size=3) * 0.2, "world": Rotation.random(random_state=seed + 2000),
            "world_t": rng.normal(size=3), "offset": float(rng.uniform(-1.5, 1.5))}


def _streams(truth, *, b_rate=B_RATE, a_rate=A_RATE):
    """A sampled on its clock; B sampled at true times tau and stamped tau - offset on its own clock.

    B's pose is T_W T_A(tau) T_X (scipy Rotation products and apply)."""
    ta = np.arange(0.0, DURATION, 1.0 / a_rate)
    tau = np.arange(2.0, DURATION - 2.0, 1.0 / b_rate)
    ra = truth["spline"](ta)
    pa = truth["pos"](ta)
    rb = truth["world"] * truth["spline"](tau) * truth["mount"]
    pb = truth["world"].apply(truth["spline"](tau).apply(truth["mount_t"]) + truth["pos"](tau)) + truth["world_t"]
    return ta, ra, pa, tau - truth["offset"], rb, pb


def _matrix4(r: Rotation, p):
    m = np.tile(np.eye(4), (len(p), 1, 1))
    m[:, :3, :3] = r.as_matrix()
    m[:, :3, 3] = p
    return m


# Rotation streams: (stated text for B, writer of B's numbers (scipy), the words the diagnosis must use,
# whether the slip changes B's angular speeds, whether only a nominal mount can name it).
ROTATION_SLIPS = {
    "none": ("scalar=first", lambda r: r.as_quat(scalar_first=True), "no convention error", False, False),
    "scalar-last read scalar-first": ("scalar=first", lambda r: r.as_quat(),
                                      "written scalar-last but read scalar-first", False, True),
    # Trawny & Roumeliotis 2005: the JPL quaternion of R has the Hamilton quaternion numbers of R^T
    "JPL read as Hamilton": ("scalar=last", lambda r: r.inv().as_quat(), "JPL (ij = -k) algebra", False, False),
    "degrees read as radians": ("sequence=z-y-x", lambda r: r.as_euler("ZYX", degrees=True),
                                "written in degrees but read as radians", True, False),
    "radians read as degrees": ("sequence=z-y-x unit=degrees", lambda r: r.as_euler("ZYX"),
                                "written in radians but read as degrees", True, False),
    "x-y-z read as z-y-x": ("sequence=z-y-x", lambda r: r.as_euler("XYZ"), "sequence is x-y-z but was read as z-y-x",
                            True, True),
    "extrinsic read as intrinsic": ("sequence=z-y-x axes=intrinsic", lambda r: r.as_euler("zyx"),
                                    "extrinsic (about the fixed axes) but were read as intrinsic", True, False),
    # Diebel 2006: the passive matrix of the same angles is the transpose of the active one
    "passive read as active": ("sequence=z-y-x", lambda r: r.inv().as_euler("ZYX"), "build the passive matrix",
                               False, False),
    "rotation vector read as Euler angles": ("", lambda r: r.as_rotvec(),
                                             "are a rotation vector but were read as Euler", True, False),
    "column-major read row-major": ("", lambda r: r.as_matrix().transpose(0, 2, 1).reshape(-1, 9),
                                    "written column by column", False, False),
    "B's axes remapped (optical)": ("scalar=first", lambda r: (r * Rotation.from_matrix(OPTICAL)).as_quat(
        scalar_first=True), "child frame's axes are remapped: optical", False, True),
}

# Pose streams (A: position + scalar-first quaternion; B: 4x4 transforms, 16 numbers).
POSE_SLIPS = {
    "none": ("", lambda m: m.reshape(-1, 16), "no convention error"),
    "inverse transforms": ("direction=parent-from-child", lambda m: np.linalg.inv(m).reshape(-1, 16),
                           "child-from-parent (the inverse transform)"),
    "millimetres read as metres": ("", lambda m: _millimetres(m), "written in millimetres but read as metres"),
    "column-major read row-major": ("layout=row-major", lambda m: m.transpose(0, 2, 1).reshape(-1, 16),
                                    "written column by column"),
}


def _millimetres(m):
    out = m.copy()
    out[:, :3, 3] *= 1000.0
    return out.reshape(-1, 16)


def _nominal(truth, seed):
    """The mount as a drawing would give it: the true one off by about 2 degrees (scipy)."""
    wobble = np.random.default_rng(seed + 7).normal(size=3)
    return (truth["mount"] * Rotation.from_rotvec(wobble / np.linalg.norm(wobble) * math.radians(2.0))).as_matrix()


def _angle_deg(a, b):
    """Angle between two rotation matrices, by scipy (magnitude of a^-1 b)."""
    return float(np.degrees((Rotation.from_matrix(a).inv() * Rotation.from_matrix(b)).magnitude()))


def _named(out: StreamAlignment, words: str) -> bool:
    """The words name the lead explanation or a slip it calls the same mistake written another way."""
    return any(words in s for s in (out.sentence, *out.best.same))


def _check_common(out: StreamAlignment, truth, values_b, rb: Rotation):
    assert abs(out.offset - truth["offset"]) <= 1.0 / A_RATE, (out.offset, truth["offset"])
    assert np.isfinite(out.offset_uncertainty) and out.offset_uncertainty > 0
    assert _angle_deg(out.mount_rotation, truth["mount"].as_matrix()) <= 0.1
    # the diagnosed slip, undone, gives scipy's true orientations of B (row by row)
    decoded, _ = out.slip.decode(values_b)
    worst = np.max((Rotation.from_matrix(decoded).inv() * rb).magnitude())
    assert worst <= 1e-6, np.degrees(worst)
    assert out.explained and out.residuals.rotation_rms <= 0.5
    json.dumps(out.as_dict())
    assert out.verdict in out.summary() and out.best.code in out.summary()


GRID_SEEDS = (11, 12, 13)


@pytest.mark.parametrize("seed", GRID_SEEDS)
@pytest.mark.parametrize("name", sorted(ROTATION_SLIPS))
def test_rotation_slip_grid(name, seed):
    stated, writer, words, changes_speeds, needs_nominal = ROTATION_SLIPS[name]
    truth = _truth(seed)
    ta, ra, _, tb, rb, _ = _streams(truth)
    values_b = writer(rb)
    nominal = _nominal(truth, seed) if needs_nominal else None
    out = align_streams(ta, ra.as_quat(scalar_first=True), "scalar=first", tb, values_b, stated,
                        nominal_mount=nominal)
    _check_common(out, truth, values_b, rb)
    assert _named(out, words), (out.sentence, out.best.same)
    assert out.best.speed_rank == 1          # step 1's best speed match is the reading diagnosed in step 3
    if changes_speeds:                       # step 1 alone already says the stated reading is not the one
        assert out.speed_matches[0].reading != out.stated_b
        stated_match = [m for m in out.speed_matches if out.stated_b in m.readings]
        assert not stated_match or stated_match[0].time_offset.mismatch > 10 * out.time_offset.mismatch
    if name == "B's axes remapped (optical)":
        assert np.array_equal(REMAPS[out.slip.child_remap], OPTICAL)


@pytest.mark.parametrize("seed", GRID_SEEDS[:2])
@pytest.mark.parametrize("name", sorted(POSE_SLIPS))
def test_pose_slip_grid(name, seed):
    stated, writer, words = POSE_SLIPS[name]
    truth = _truth(seed)
    ta, ra, pa, tb, rb, pb = _streams(truth)
    values_a = np.concatenate([pa, ra.as_quat(scalar_first=True)], axis=1)   # position first, scalar first
    values_b = writer(_matrix4(rb, pb))
    out = align_streams(ta, values_a, "scalar=first", tb, values_b, stated, kind_b="transform")
    _check_common(out, truth, values_b, rb)
    assert _named(out, words), (out.sentence, out.best.same)
    assert out.mount.shape == (4, 4)
    assert np.max(np.abs(out.mount_translation - truth["mount_t"])) <= 1e-3
    assert out.residuals.translation is not None and out.residuals.translation_rms <= 1e-3
    # the mount written in B's stated reading reads back (posekit's reader) as the mount
    back = stated_reading(16, "transform", stated)
    r_back, t_back = read_numbers(back, np.array(out.mount_numbers))
    assert np.allclose(r_back, out.mount_rotation, atol=1e-9) and np.allclose(t_back, out.mount_translation)


def test_the_analysis_layer_exports_the_function():
    import posekit
    assert posekit.analysis.align_streams is align_streams and "align_streams" in posekit.analysis.__all__


def test_noisy_streams_still_give_offset_mount_and_slip():
    """0.05 degree of orientation noise on B (random rotation vectors, numpy), 0.5 mm on its positions."""
    for seed in (21, 22):
        truth = _truth(seed)
        ta, ra, pa, tb, rb, pb = _streams(truth)
        rng = np.random.default_rng(seed)
        noisy = rb * Rotation.from_rotvec(rng.normal(size=(len(rb), 3)) * math.radians(0.05) / math.sqrt(3))
        values_b = np.concatenate([pb + rng.normal(size=pb.shape) * 5e-4, noisy.as_euler("ZYX", degrees=True)], 1)
        values_a = np.concatenate([pa, ra.as_quat(scalar_first=True)], axis=1)
        out = align_streams(ta, values_a, "scalar=first", tb, values_b, "sequence=z-y-x")
        assert abs(out.offset - truth["offset"]) <= 1.0 / A_RATE
        assert _angle_deg(out.mount_rotation, truth["mount"].as_matrix()) <= 0.1
        assert np.max(np.abs(out.mount_translation - truth["mount_t"])) <= 5e-3
        assert "written in degrees but read as radians" in out.sentence


def test_offset_uncertainty_is_honest_over_seeds():
    """The offset error stays within 3 stated uncertainties (plus float noise) on clean and noisy data."""
    errs, uncs = [], []
    for seed in (31, 32, 33, 34):
        truth = _truth(seed)
        ta, ra, _, tb, rb, _ = _streams(truth)
        rng = np.random.default_rng(seed)
        noisy = rb * Rotation.from_rotvec(rng.normal(size=(len(rb), 3)) * math.radians(0.1) * (seed % 2))
        out = align_streams(ta, ra.as_quat(scalar_first=True), "scalar=first", tb, noisy.as_quat(), "scalar=last")
        errs.append(abs(out.offset - truth["offset"]))
        uncs.append(out.offset_uncertainty)
    errs, uncs = np.array(errs), np.array(uncs)
    assert np.all(errs <= 3 * uncs + 1e-6), (errs, uncs)
    assert np.all(uncs < 1.0 / A_RATE), uncs


def test_without_a_nominal_mount_scalar_order_is_a_tie_the_mount_alone_can_break():
    """Any reordering of a quaternion's numbers is R or R^T turned by constants on both sides:
    relative motions cannot see it.  Without nominal_mount the true reading is listed as fitting
    exactly as well with another mount, and the notes ask for the nominal mount."""
    truth = _truth(41)
    ta, ra, _, tb, rb, _ = _streams(truth)
    out = align_streams(ta, ra.as_quat(scalar_first=True), "scalar=first", tb, rb.as_quat(), "scalar=first")
    found = [s for s, _ in out.best.mount_only] + [out.sentence]
    assert any("written scalar-last but read scalar-first" in s for s in found), found
    assert out.best.near_tie
    assert any("nominal_mount" in n for n in out.notes)
    # the speeds cannot tell the four readings apart either: one class holds them all
    assert len(out.speed_matches[0].readings) == 4


def test_nominal_mount_names_the_sequence_among_its_relabelled_twins():
    truth = _truth(42)
    ta, ra, _, tb, rb, _ = _streams(truth)
    values_b = rb.as_euler("YZX")
    plain = align_streams(ta, ra.as_quat(scalar_first=True), "scalar=first", tb, values_b, "sequence=z-y-x")
    twins = [plain.sentence] + [s for s, _ in plain.best.mount_only]
    assert any("sequence is y-z-x" in s for s in twins), twins
    told = align_streams(ta, ra.as_quat(scalar_first=True), "scalar=first", tb, values_b, "sequence=z-y-x",
                         nominal_mount=_nominal(truth, 42))
    assert "sequence is y-z-x but was read as z-y-x" in told.sentence
    assert told.best.nominal_angle_degrees is not None and told.best.nominal_angle_degrees < 3.0


# --------------------------------------------------------------------------------------
# degenerate motions
# --------------------------------------------------------------------------------------

def test_single_axis_motion_says_which_second_motion_to_add():
    truth = _truth(51, single_axis=np.array([0.0, 0.0, 1.0]))
    ta, ra, _, tb, rb, _ = _streams(truth)
    with pytest.raises(DegenerateMotionError) as err:
        align_streams(ta, ra.as_quat(scalar_first=True), "scalar=first", tb, rb.as_quat(), "scalar=last")
    text = str(err.value)
    assert "turn about a second axis, at least 15 degrees away from the first" in text
    assert "A's body z axis" in text
    assert isinstance(err.value, PoseInputError)


def test_too_little_rotation_says_how_much_more():
    truth = _truth(52, amplitude=math.radians(0.5))
    ta, ra, _, tb, rb, _ = _streams(truth)
    with pytest.raises(DegenerateMotionError, match=r"turned only .* degrees in all.*at least 30 degrees"):
        align_streams(ta, ra.as_quat(scalar_first=True), "scalar=first", tb, rb.as_quat(), "scalar=last")


def test_constant_speed_cannot_give_the_clock_offset():
    truth = _truth(53, single_axis=np.array([0.6, 0.0, 0.8]), constant_rate=0.7)
    ta, ra, _, tb, rb, _ = _streams(truth)
    with pytest.raises(DegenerateMotionError, match="angular speed hardly varies"):
        align_streams(ta, ra.as_quat(scalar_first=True), "scalar=first", tb, rb.as_quat(), "scalar=last")


def test_mostly_one_axis_motion_states_the_near_tie_and_the_separating_turn():
    """Turning mostly about A's z axis, with a small excursion about x, barely separates the transposed
    reading (world-frame increments) from the true one (body-frame increments): the result says so,
    and names the turn that would separate them."""
    rng = np.random.default_rng(61)
    key_t = np.linspace(0.0, DURATION, 9)
    yaw = np.cumsum(rng.uniform(0.6, 1.4, 9) * rng.choice([-1.0, 1.0], 9))
    roll = rng.uniform(-1, 1, 9) * math.radians(3.0)
    key_r = Rotation.from_euler("ZX", np.stack([yaw, roll], 1))            # scipy: intrinsic z then x
    truth = _truth(61)
    truth["spline"] = RotationSpline(key_t, key_r)
    ta, ra, _, tb, rb, _ = _streams(truth)
    out = align_streams(ta, ra.as_quat(scalar_first=True), "scalar=first", tb, rb.as_quat(), "scalar=last",
                        min_axis_spread=math.radians(2.0), rotation_tolerance=math.radians(2.0))
    assert _angle_deg(out.mount_rotation, truth["mount"].as_matrix()) <= 0.1
    assert out.slip.is_none
    tied = [e for e in out.explanations[1:] if e.near_tie]
    assert tied, [(e.sentence, e.residuals.rotation_rms) for e in out.explanations]
    assert out.best.near_tie
    motion = tied[0].separable[0][1]
    assert "turn about" in motion and "would separate them" in motion, motion


# --------------------------------------------------------------------------------------
# the hand-eye solvers against Tsai & Lenz 1989 and scipy's align_vectors
# --------------------------------------------------------------------------------------

def _skew(v):
    return np.array([[0.0, -v[2], v[1]], [v[2], 0.0, -v[0]], [-v[1], v[0], 0.0]])


def _tsai_lenz_rotation(a, b):
    """Tsai & Lenz 1989 ("A new technique for fully autonomous and efficient 3D robotics hand/eye
    calibration", IEEE Trans. Robotics and Automation 5(3)), rotation part, for A_i X = X B_i (their
    gripper motion A, camera motion B): P = 2 sin(theta / 2) n of each motion; solve
    skew(P_A + P_B) P' = P_B - P_A by least squares; P_X = 2 P' / sqrt(1 + |P'|^2);
    R_X = (1 - |P_X|^2 / 2) I + (P_X P_X^T + sqrt(4 - |P_X|^2) skew(P_X)) / 2.
    Axes and angles by scipy (as_rotvec)."""
    def rodrigues_p(r):
        rv = Rotation.from_matrix(r).as_rotvec()
        th = np.linalg.norm(rv, axis=1, keepdims=True)
        return 2.0 * np.sin(th / 2.0) * rv / th

    pa, pb = rodrigues_p(a), rodrigues_p(b)
    m = np.concatenate([_skew(x + y) for x, y in zip(pa, pb)])
    p_prime = np.linalg.lstsq(m, (pb - pa).reshape(-1), rcond=None)[0]
    px = 2.0 * p_prime / math.sqrt(1.0 + p_prime @ p_prime)
    n2 = px @ px
    return (1.0 - n2 / 2.0) * np.eye(3) + 0.5 * (np.outer(px, px) + math.sqrt(4.0 - n2) * _skew(px))


def _tsai_lenz_translation(a, ta, rx, tb):
    """Tsai & Lenz 1989, translation: (R_A - I) t_X = R_X t_B - t_A, least squares (numpy lstsq)."""
    c = np.concatenate([r - np.eye(3) for r in a])
    d = np.concatenate([rx @ y - x for x, y in zip(ta, tb)])
    return np.linalg.lstsq(c, d, rcond=None)[0]


@pytest.mark.parametrize("noise_deg", [0.0, 0.2])
@pytest.mark.parametrize("seed", [71, 72, 73])
def test_park_martin_agrees_with_tsai_lenz_and_align_vectors(seed, noise_deg):
    rng = np.random.default_rng(seed)
    x = Rotation.random(random_state=seed)
    tx = rng.normal(size=3)
    b = Rotation.from_rotvec(rng.normal(size=(40, 3)) * 0.8)                 # B's relative motions
    tb = rng.normal(size=(40, 3))
    noise = Rotation.from_rotvec(rng.normal(size=(40, 3)) * math.radians(noise_deg) / math.sqrt(3))
    a = noise * x * b * x.inv()                                             # A_i = X B_i X^-1 (scipy products)
    ta = x.apply(tb) + tx - a.apply(tx)                                     # t_A = R_X t_B + t_X - R_A t_X
    alpha, beta = a.as_rotvec(), b.as_rotvec()
    pm = park_martin_rotation(alpha, beta)
    tl = _tsai_lenz_rotation(a.as_matrix(), b.as_matrix())
    av = Rotation.align_vectors(alpha, beta)[0].as_matrix()                # scipy: Wahba's problem, same objective
    assert _angle_deg(pm, av) <= 1e-7
    limit = 1e-7 if noise_deg == 0 else 0.1
    assert _angle_deg(pm, tl) <= limit and _angle_deg(pm, x.as_matrix()) <= limit
    # solve_mount on 4x4 motions: the rotation above and the Tsai & Lenz translation
    ma, mb = _matrix4(a, ta), _matrix4(b, tb)
    rx, t_found = solve_mount(ma, mb)
    assert _angle_deg(rx, pm) <= 1e-9
    t_tl = _tsai_lenz_translation(a.as_matrix(), ta, rx, tb)
    assert np.allclose(t_found, t_tl, atol=1e-9)
    assert np.max(np.abs(t_found - tx)) <= (1e-7 if noise_deg == 0 else 0.05)


def test_park_martin_keeps_a_proper_rotation_when_axes_span_a_plane():
    """Two turn axes only (rank-2 M): the SVD form still gives the rotation (Park & Martin's
    (M^T M)^(-1/2) M^T is undefined there)."""
    x = Rotation.random(random_state=5)
    b = Rotation.from_rotvec([[0.7, 0, 0], [0, 0.5, 0], [0.3, 0.2, 0]])       # axes in B's x-y plane
    a = x * b * x.inv()
    r = park_martin_rotation(a.as_rotvec(), b.as_rotvec())
    assert np.linalg.det(r) > 0 and _angle_deg(r, x.as_matrix()) <= 1e-7


def test_relative_angles_match_scipy_including_tiny_and_near_half_turns():
    rng = np.random.default_rng(3)
    r0 = Rotation.random(200, random_state=4)
    steps = rng.normal(size=(200, 3))
    steps /= np.linalg.norm(steps, axis=1, keepdims=True)
    sizes = np.concatenate([np.full(50, 1e-9), rng.uniform(0, math.pi, 100), math.pi - np.full(50, 1e-7)])
    r1 = r0 * Rotation.from_rotvec(steps * sizes[:, None])
    ours = relative_angles(r0.as_matrix(), r1.as_matrix())
    ref = (r0.inv() * r1).magnitude()                                         # scipy
    assert np.max(np.abs(ours - ref)) <= 1e-9


# --------------------------------------------------------------------------------------
# the slips' forward model and bad inputs
# --------------------------------------------------------------------------------------

@pytest.mark.parametrize("count,text", [(4, "scalar=last algebra=jpl"),
                                        (3, "sequence=x-y-z unit=degrees action=passive"),
                                        (16, "direction=child-from-parent layout=column-major"),
                                        (7, "direction=child-from-parent")])
def test_encode_is_undone_by_slip_decode(count, text):
    stated = stated_reading(count, convention="")
    true = stated_reading(count, convention=text)
    r = Rotation.random(6, random_state=9).as_matrix()
    t = np.random.default_rng(9).normal(size=(6, 3)) if true.has_translation else None
    for q in (0, 5, 17):
        for scale, frame in ((1.0, "parent"), (1e-3, "child-axes"), (1e3, "inverse-translation")):
            slip = Slip(stated, true, False, 0, q, scale if t is not None else 1.0,
                        frame if t is not None else "parent")
            r2, t2 = slip.decode(encode_slip(slip, r, t))
            assert np.allclose(r2, r, atol=1e-12)
            assert t is None or np.allclose(t2, t, atol=1e-9)


def _simple():
    truth = _truth(81)
    ta, ra, _, tb, rb, _ = _streams(truth)
    return ta, ra.as_quat(scalar_first=True), tb, rb.as_quat()


def test_bad_times_are_typed_and_say_what_is_accepted():
    ta, qa, tb, qb = _simple()
    shuffled = tb.copy()
    shuffled[10], shuffled[11] = shuffled[11], shuffled[10]
    with pytest.raises(StreamTimesError, match="not strictly increasing at sample 11"):
        align_streams(ta, qa, "scalar=first", shuffled, qb, "scalar=last")
    with pytest.raises(StreamTimesError, match="time stamps for"):
        align_streams(ta[:-1], qa, "scalar=first", tb, qb, "scalar=last")
    with pytest.raises(StreamTimesError, match="at least 20"):
        align_streams(ta[:5], qa[:5], "scalar=first", tb, qb, "scalar=last")
    with pytest.raises(WrongShapeError, match="rows of 4 numbers"):
        align_streams(ta, qa, "scalar=first", tb, qb, "", kind_b="euler")


def test_no_overlap_and_a_reference_that_is_no_rotation():
    ta, qa, tb, qb = _simple()
    with pytest.raises(NoOverlapError, match="max_offset"):
        align_streams(ta, qa, "scalar=first", tb + 1000.0, qb, "scalar=last", max_offset=5.0)
    bad = qa.copy()
    bad[3] = 0.0
    with pytest.raises(ReferenceStreamError, match="row 3"):
        align_streams(ta, bad, "scalar=first", tb, qb, "scalar=last")
    with pytest.raises(PoseInputError, match="min_axis_spread"):
        align_streams(ta, qa, "scalar=first", tb, qb, "scalar=last", min_axis_spread=4.0)
    with pytest.raises(WrongShapeError, match="nominal_mount"):
        align_streams(ta, qa, "scalar=first", tb, qb, "scalar=last", nominal_mount=np.eye(2))


# --------------------------------------------------------------------------------------
# the curves a view draws: correlation per trial offset, speeds before and after the shift
# --------------------------------------------------------------------------------------

def _rms(x):
    return float(np.sqrt(np.mean(np.square(x))))


@pytest.mark.parametrize("seed", GRID_SEEDS)
def test_the_correlation_curve_peaks_at_the_reported_offset(seed):
    truth = _truth(seed)
    ta, ra, _, tb, rb, _ = _streams(truth)
    out = align_streams(ta, ra.as_quat(scalar_first=True), "scalar=first", tb, rb.as_euler("ZYX", degrees=True),
                        "sequence=z-y-x")
    c = out.correlation
    assert c.offset == out.offset
    assert c.offsets.shape == c.correlation.shape and c.offsets.size > 100
    assert np.all(np.diff(c.offsets) > 0) and np.allclose(np.diff(c.offsets), c.step)
    # the best lag searched is within one grid step of the reported (sub-sample) offset ...
    assert abs(c.best_searched - out.offset) <= c.step + 1e-9
    # ... and the best of the lags next to the peak within half a step of it (the parabola's shift)
    best_near = c.peak_offsets[int(np.nanargmax(c.peak_correlation))]
    assert abs(best_near - out.offset) <= 0.5 * c.peak_step + 1e-9
    assert np.nanmax(c.correlation) == pytest.approx(np.nanmax(c.peak_correlation), abs=1e-9)
    assert np.nanmax(c.peak_correlation) == pytest.approx(out.time_offset.correlation, abs=1e-12)
    # ground truth (the generated clock offset) within one sample period of A
    assert abs(out.offset - truth["offset"]) <= 1.0 / A_RATE
    # far from the peak the speeds do not line up: the curve is no flat line
    far = np.abs(c.offsets - out.offset) > 3.0
    assert np.nanmax(c.correlation[far]) < np.nanmax(c.correlation) - 0.1


def test_a_long_stream_keeps_the_coarse_curve_and_the_fine_lags_near_its_peak():
    """Longer than COARSE_SAMPLES: the whole range is searched on block means, the peak on the full grid."""
    from posekit.analysis.streams import COARSE_SAMPLES

    rng = np.random.default_rng(91)
    duration = 200.0
    keys = np.linspace(0.0, duration, 41)
    spline = RotationSpline(keys, Rotation.random(41, random_state=91))            # scipy ground truth
    offset = float(rng.uniform(-2, 2))
    ta = np.arange(0.0, duration, 1.0 / A_RATE)
    tau = np.arange(3.0, duration - 3.0, 1.0 / A_RATE) + 0.0037
    mount = Rotation.random(random_state=92)
    rb = spline(tau) * mount
    assert len(ta) > COARSE_SAMPLES
    out = align_streams(ta, spline(ta).as_quat(scalar_first=True), "scalar=first", tau - offset, rb.as_quat(),
                        "scalar=last")
    c = out.correlation
    assert c.step > c.peak_step * 1.5                                              # coarse whole range, fine peak
    assert abs(c.best_searched - out.offset) <= c.step + 1e-9
    assert abs(c.peak_offsets[int(np.nanargmax(c.peak_correlation))] - out.offset) <= 0.5 * c.peak_step + 1e-9
    assert abs(out.offset - offset) <= 1.0 / A_RATE


@pytest.mark.parametrize("name", ["none", "degrees read as radians", "x-y-z read as z-y-x"])
def test_shifted_speeds_of_b_match_a_and_scipy_angular_rate(name):
    """B's speed curve under the diagnosed reading, put on A's clock by the offset, is the body's angular
    speed: scipy's RotationSpline first derivative (the angular rate vector), and A's own speed curve."""
    stated, writer, _, _, needs_nominal = ROTATION_SLIPS[name]
    truth = _truth(12)
    ta, ra, _, tb, rb, _ = _streams(truth)
    out = align_streams(ta, ra.as_quat(scalar_first=True), "scalar=first", tb, writer(rb), stated,
                        nominal_mount=_nominal(truth, 12) if needs_nominal else None)
    s = out.speeds
    assert s.offset == out.offset and s.reading == out.slip.true
    assert s.times_a.shape == s.speed_a.shape and s.times_b.shape == s.speed_b.shape
    assert len(s.speed_b) >= len(tb) - 2                                           # every row, not a thinned set
    truth_b = np.linalg.norm(truth["spline"](s.times_b_aligned, 1), axis=1)       # scipy: |omega| on A's clock
    truth_a = np.linalg.norm(truth["spline"](s.times_a, 1), axis=1)
    assert _rms(s.speed_b - truth_b) <= 1e-3 * _rms(truth_b)
    assert _rms(s.speed_a - truth_a) <= 1e-3 * _rms(truth_a)
    inside = (s.times_b_aligned >= s.times_a[0]) & (s.times_b_aligned <= s.times_a[-1])
    on_a = np.interp(s.times_b_aligned[inside], s.times_a, s.speed_a)
    assert _rms(s.speed_b[inside] - on_a) <= 1e-3 * _rms(on_a)
    # before the shift (B's own clock) the same comparison is far off: the offset matters
    before = np.interp(s.times_b[inside], s.times_a, s.speed_a)
    assert _rms(s.speed_b[inside] - before) > 20 * _rms(s.speed_b[inside] - on_a)


def test_noisy_speeds_match_scipy_within_the_noise():
    """0.05 degree rms orientation noise on B (numpy normal rotation vectors): the speed noise of one
    sample is about sqrt(2/3) sigma / dt (two noisy samples, the noise's share along the turn);
    B's shifted speeds stay within 1.5 times that of scipy's angular speed."""
    truth = _truth(22)
    ta, ra, _, tb, rb, _ = _streams(truth)
    rng = np.random.default_rng(22)
    sigma = math.radians(0.05)
    noisy = rb * Rotation.from_rotvec(rng.normal(size=(len(rb), 3)) * sigma / math.sqrt(3))
    out = align_streams(ta, ra.as_quat(scalar_first=True), "scalar=first", tb, noisy.as_quat(), "scalar=last")
    s = out.speeds
    truth_b = np.linalg.norm(truth["spline"](s.times_b_aligned, 1), axis=1)       # scipy
    expected = math.sqrt(2.0 / 3.0) * sigma / float(np.median(np.diff(s.times_b)))
    assert _rms(s.speed_b - truth_b) <= 1.5 * expected
    unshifted = np.linalg.norm(truth["spline"](np.clip(s.times_b, 0.0, DURATION), 1), axis=1)
    assert _rms(s.speed_b - unshifted) > 3 * expected


def test_the_curves_travel_as_plain_data_only_when_asked():
    truth = _truth(13)
    ta, ra, _, tb, rb, _ = _streams(truth)
    out = align_streams(ta, ra.as_quat(scalar_first=True), "scalar=first", tb, rb.as_quat(), "scalar=last")
    assert "correlation_curve" not in out.as_dict()
    data = json.loads(json.dumps(out.as_dict(curves=True)))
    curve = data["correlation_curve"]
    assert np.allclose(curve["offsets_seconds"], out.correlation.offsets)
    finite = np.isfinite(out.correlation.correlation)
    assert [v is None for v in curve["correlation"]] == (~finite).tolist()
    assert np.allclose(np.array(curve["correlation"], dtype=float)[finite], out.correlation.correlation[finite])
    sp = data["speed_curves"]
    assert sp["unit"] == "radians per second" and sp["offset_seconds"] == out.offset
    assert np.allclose(sp["speed_b"], out.speeds.speed_b) and np.allclose(sp["times_b_seconds"], out.speeds.times_b)


# --------------------------------------------------------------------------------------
# labels: messages in the caller's words
# --------------------------------------------------------------------------------------

def test_labels_name_the_callers_inputs_in_messages_and_notes():
    ta, qa, tb, qb = _simple()
    shuffled = tb.copy()
    shuffled[10], shuffled[11] = shuffled[11], shuffled[10]
    with pytest.raises(StreamTimesError, match=r"^stream B's time column: not strictly increasing at sample 11"):
        align_streams(ta, qa, "scalar=first", shuffled, qb, "scalar=last",
                      labels={"times_b": "stream B's time column"})
    with pytest.raises(PoseInputError, match=r"^the reading box of B: .*scalar"):
        align_streams(ta, qa, "scalar=first", tb, qb, "scalar=sideways", labels={"reading_b": "the reading box of B"})
    with pytest.raises(NoOverlapError, match="raise the largest offset box"):
        align_streams(ta, qa, "scalar=first", tb + 1000.0, qb, "scalar=last", max_offset=5.0,
                      labels={"max_offset": "the largest offset box"})
    out = align_streams(ta, qa, "scalar=first", tb, qb, "scalar=last", labels={"nominal_mount": "the mount box"})
    assert any("give the mount box" in n for n in out.notes) and not any("nominal_mount" in n for n in out.notes)
    for bad in ({"values_c": "x"}, {"values_a": " "}, ["values_a"]):
        with pytest.raises(PoseInputError, match="labels"):
            align_streams(ta, qa, "scalar=first", tb, qb, "scalar=last", labels=bad)


# --------------------------------------------------------------------------------------
# one stream from a log file
# --------------------------------------------------------------------------------------

def _write_log(path, header, rows):
    path.write_text(",".join(header) + "\n" + "\n".join(",".join(repr(float(v)) if not isinstance(v, str) else v
                                                                  for v in row) for row in rows) + "\n")
    return path


def test_read_stream_log_reads_named_numbered_and_inferred_columns(tmp_path):
    from posekit.analysis.alignment import read_stream_log

    truth = _truth(81)
    ta, ra, _, _, _, _ = _streams(truth)
    q = ra.as_quat()                                                             # scipy: x, y, z, w
    rows = np.column_stack([q, ta])
    path = _write_log(tmp_path / "a.csv", ["qx", "qy", "qz", "qw", "time"], rows)
    log = read_stream_log(path)
    assert log.time_column == "time" and log.value_columns == ("qx", "qy", "qz", "qw")
    assert log.inferred == ("time", "values")
    assert np.array_equal(log.times, ta) and np.array_equal(log.values, q)
    named = read_stream_log(path, "time", "qw, qx, qy, qz")
    assert np.array_equal(named.values, q[:, [3, 0, 1, 2]]) and named.inferred == ()
    numbered = read_stream_log(path, 4, [3, 0, 1, 2])
    assert np.array_equal(numbered.values, named.values)
    assert np.array_equal(read_stream_log(path, "4", "3,0,1,2").values, named.values)
    assert read_stream_log(path, " Time ", "QW,qx,qy,qz").time_column == "time"     # names matched loosely


def test_read_stream_log_refuses_what_it_cannot_read_naming_the_input(tmp_path):
    from posekit.analysis.alignment import StreamLogError, read_stream_log

    labels = {"source": "stream A's file", "time_column": "stream A's time box",
              "value_columns": "stream A's columns box"}
    good = [[0.1 * k, 1, 0, 0, 0] for k in range(30)]
    path = _write_log(tmp_path / "a.csv", ["t", "qw", "qx", "qy", "qz"], good)
    with pytest.raises(StreamLogError, match=r"^stream A's columns box: no column 'qq' in the header"):
        read_stream_log(path, None, "qw, qq", labels=labels)
    with pytest.raises(StreamLogError, match=r"^stream A's columns box: column number 9 does not exist"):
        read_stream_log(path, None, "9", labels=labels)
    with pytest.raises(StreamLogError, match="with an empty entry"):
        read_stream_log(path, None, "qw,,qx", labels=labels)
    with pytest.raises(StreamLogError, match="is the time column too"):
        read_stream_log(path, "t", "t, qx", labels=labels)
    with pytest.raises(StreamLogError, match="listed 2 times"):
        read_stream_log(path, "t", "qx, qx", labels=labels)
    bad_rows = [row[:] for row in good]
    bad_rows[4][2] = "oops"
    bad_rows[7][3] = "nan"
    bad = _write_log(tmp_path / "b.csv", ["t", "qw", "qx", "qy", "qz"], bad_rows)
    with pytest.raises(StreamLogError, match=r"^stream A's file: 2 rows .*row 4 \(line 6\).*oops.*row 7 "
                                              r"\(line 9\): NaN or infinity.*none is skipped"):
        read_stream_log(bad, labels=labels)
    no_time = _write_log(tmp_path / "c.csv", ["when", "qw", "qx", "qy", "qz"], good)
    with pytest.raises(StreamLogError, match=r"^stream A's time box: no column is named like a time"):
        read_stream_log(no_time, labels=labels)
    twice = _write_log(tmp_path / "d.csv", ["t", "qw", "qw", "qy", "qz"], good)
    with pytest.raises(StreamLogError, match="names 2 columns 'qw'"):
        read_stream_log(twice, "t", "qw", labels=labels)
    headless = tmp_path / "e.csv"
    headless.write_text("\n".join(",".join(map(str, r)) for r in good) + "\n")
    with pytest.raises(StreamLogError, match="no header line"):
        read_stream_log(headless, labels=labels)
    assert read_stream_log(headless, 0).value_columns == ("column 1", "column 2", "column 3", "column 4")
    with pytest.raises(PoseInputError, match="missing.csv"):
        read_stream_log(tmp_path / "missing.csv", labels=labels)
    assert issubclass(StreamLogError, PoseInputError)
