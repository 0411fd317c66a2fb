"""Pole analysis laws, over conventions built from posekit.core.convention.CHOICES.

Facts used: gimbal lock at middle angle ±90 degrees (Tait-Bryan) and 0 / 180 degrees
(proper Euler) -- common practice; ISO 1151-2 aircraft yaw-pitch-roll singular at
pitch ±90 degrees -- from memory; scipy.spatial.transform.Rotation.as_euler as an
outside implementation of the regular readback.
"""

import itertools

import numpy as np
import pytest
from scipy.spatial.transform import Rotation

import posekit as pk
from posekit.analysis import (DEFAULT_POLE_TOLERANCE, EulerSolutions, analyse_pole, euler_rate_jacobian,
                              euler_solutions, lock_gauge, pole_distance, pole_readout, readback_sensitivity)
from posekit.core.convention import CHOICES
from posekit.core.errors import NotOrthonormalError, PoseInputError

BASE = [pk.Convention(sequence=s, axes=a) for s, a in itertools.product(CHOICES["sequence"], CHOICES["axes"])]
# The other axes that change how Euler numbers read: unit, wrap, action, direction.
OTHER = [c.changed(unit="degrees", wrap="positive", action="passive") for c in BASE] + \
        [c.changed(unit="degrees", direction="child-from-parent") for c in BASE]
CONVENTIONS = BASE + OTHER
IDS = [c.to_text().replace(" ", ",") for c in CONVENTIONS]


def unit(conv):
    return 180.0 / np.pi if conv.degrees else 1.0


def poles(conv):
    """Middle-angle poles in radians (common practice)."""
    return (0.5 * np.pi, -0.5 * np.pi) if conv.is_tait_bryan else (0.0, np.pi)


def rotation_of(conv, a, b, c):
    return pk.read_rotation(np.array([a, b, c]) * unit(conv), "euler", conv)


def wrapped_difference(x, y, turn):
    d = np.remainder(np.asarray(x) - np.asarray(y) + turn / 2, turn) - turn / 2
    return np.abs(d)


# --- law: every member of a pole family is the same orientation ---------------------------------------

@pytest.mark.parametrize("conv", CONVENTIONS, ids=IDS)
def test_every_pole_family_member_reproduces_the_rotation(conv):
    for b0 in poles(conv):
        R = rotation_of(conv, 0.7, b0, -1.1)  # nonzero outer angles on both poles
        sol = euler_solutions(R, conv, samples=37)
        assert bool(sol.at_pole)
        fam = sol.family
        assert fam.shape == (37, 3) and np.all(np.isfinite(fam))
        back = pk.read_rotation(fam, "euler", conv)
        assert np.max(pk.angle_between(back, R)) < 1e-12
        # only first + s * third is fixed, and it is the stated value
        turn = 360.0 if conv.degrees else 2 * np.pi
        combo = fam[:, 0] + int(sol.fixed_sign) * fam[:, 2]
        assert np.max(wrapped_difference(combo, sol.fixed_value, turn)) < 1e-9
        # the free first angle really takes many values (a one-parameter family)
        assert np.ptp(fam[:, 0]) > 0.9 * turn
        words = sol.words()
        assert ("only first + third is fixed" in words) == (sol.fixed_sign > 0)
        assert ("only first - third is fixed" in words) == (sol.fixed_sign < 0)
        assert f"{float(sol.fixed_value):.6g}" in words


@pytest.mark.parametrize("conv", BASE, ids=[c.to_text().replace(" ", ",") for c in BASE])
def test_away_from_the_pole_two_regular_triplets_one_of_them_scipys(conv):
    rng = np.random.default_rng(7)
    R = Rotation.random(20, random_state=rng).as_matrix()
    sol = euler_solutions(R, conv)
    assert not sol.at_pole.any()
    assert np.all(np.isnan(sol.family)) and np.all(np.isnan(sol.fixed_value))
    for k in range(2):
        back = pk.read_rotation(sol.regular[:, k], "euler", conv)
        assert np.max(pk.angle_between(back, R)) < 1e-12
    # the two triplets are different numbers
    assert np.all(np.max(wrapped_difference(sol.regular[:, 0], sol.regular[:, 1], 2 * np.pi), axis=-1) > 1e-3)
    # scipy.spatial.transform.Rotation.as_euler (upper case = intrinsic) returns one of the two
    seq = conv.axes_letters.upper() if conv.intrinsic else conv.axes_letters
    ref = Rotation.from_matrix(R).as_euler(seq)
    d0 = np.max(wrapped_difference(sol.regular[:, 0], ref, 2 * np.pi), axis=-1)
    d1 = np.max(wrapped_difference(sol.regular[:, 1], ref, 2 * np.pi), axis=-1)
    assert np.all(np.minimum(d0, d1) < 1e-9)


@pytest.mark.parametrize("conv", BASE[:4] + BASE[12:16], ids=lambda c: c.to_text().split()[0] + c.axes)
def test_within_the_tolerance_the_family_reproduces_to_the_distance(conv):
    off = 1e-7
    b0 = poles(conv)[0]
    b = b0 - off if conv.is_tait_bryan else b0 + off
    R = rotation_of(conv, 0.4, b, 0.9)
    assert not euler_solutions(R, conv).at_pole  # default tolerance 1e-9 rad
    sol = euler_solutions(R, conv, tolerance=1e-6)
    assert bool(sol.at_pole)
    assert abs(float(sol.distance) - off) < 1e-9
    err = pk.angle_between(pk.read_rotation(sol.family, "euler", conv), R)
    assert np.max(err) < 3 * off


# --- pole distance ------------------------------------------------------------------------------------

@pytest.mark.parametrize("conv", CONVENTIONS, ids=IDS)
def test_pole_distance_is_the_distance_to_the_nearest_locked_rotation(conv):
    for b0 in poles(conv):
        for d in (0.3, 0.05):
            b = b0 - d if b0 > 0 or (not conv.is_tait_bryan and b0 == np.pi) else b0 + d
            R = rotation_of(conv, 0.6, b, -0.8)
            dist = float(pole_distance(R, conv))
            assert abs(dist - d * unit(conv)) < 1e-9
            # the locked rotation with the same outer angles is exactly d away ...
            locked = rotation_of(conv, 0.6, b0, -0.8)
            assert abs(float(pk.angle_between(R, locked)) - d) < 1e-12
            # ... and no member of the nearest pole's family is closer
            fam = euler_solutions(locked, conv, samples=720).family
            near = pk.angle_between(pk.read_rotation(fam, "euler", conv), R)
            assert np.min(near) > d - 1e-9


# --- lock gauge -----------------------------------------------------------------------------------------

@pytest.mark.parametrize("conv", CONVENTIONS, ids=IDS)
def test_gauge_is_zero_at_the_pole_and_positive_away(conv):
    for b0 in poles(conv):
        at = lock_gauge(rotation_of(conv, 0.7, b0, -1.1), conv)
        assert float(at.gauge) < 1e-9
        assert float(at.condition) > 1e8
        near = lock_gauge(rotation_of(conv, 0.7, b0 + (1e-3 if b0 <= 0 else -1e-3), -1.1), conv)
        # smallest singular value ~ distance / sqrt(2) close to the pole (derived: sqrt(1 - cos d))
        assert abs(float(near.gauge) - np.sqrt(1 - np.cos(1e-3))) < 1e-9
    far = lock_gauge(rotation_of(conv, 0.7, 0.0 if conv.is_tait_bryan else 0.5 * np.pi, -1.1), conv)
    assert abs(float(far.gauge) - 1.0) < 1e-12 and abs(float(far.condition) - 1.0) < 1e-12


def test_gauge_singular_values_do_not_depend_on_the_frame():
    rng = np.random.default_rng(3)
    R = Rotation.random(50, random_state=rng).as_matrix()
    for conv in BASE:
        body = lock_gauge(R, conv, "body").singular_values
        space = lock_gauge(R, conv, "space").singular_values
        assert np.allclose(body, space, atol=1e-12)


def test_iso_1151_2_aircraft_attitude_locks_at_pitch_90():
    # ISO 1151-2 / ANSI/AIAA R-004-1992 (from memory): yaw about z, pitch about the new y,
    # roll about the new x, from north-east-down Earth axes; pitch +-90 degrees is singular.
    conv = pk.Convention(sequence="z-y-x", axes="intrinsic", unit="degrees")
    R = pk.read_rotation([[35.0, 90.0, 10.0], [35.0, -90.0, 10.0], [35.0, 89.0, 10.0], [35.0, 0.0, 10.0]],
                         "euler", conv)
    g = lock_gauge(R, conv).gauge
    assert g[0] < 1e-9 and g[1] < 1e-9 and g[2] > 1e-3 and abs(g[3] - 1) < 1e-12
    sol = euler_solutions(R, conv)
    assert sol.at_pole.tolist() == [True, True, False, False]
    # nose straight up: only yaw - roll is seen; straight down: only yaw + roll (derived from Ry(+-90) x = -+z)
    assert "only first - third is fixed, first - third = 25 degrees" in sol.words(0)
    assert "only first + third is fixed, first + third = 45 degrees" in sol.words(1)
    assert np.allclose(pole_distance(R, conv), [0, 0, 1, 90], atol=1e-9)


# --- Jacobian -------------------------------------------------------------------------------------------

def _vee(m):
    return np.stack([m[..., 2, 1] - m[..., 1, 2], m[..., 0, 2] - m[..., 2, 0], m[..., 1, 0] - m[..., 0, 1]], -1) / 2


@pytest.mark.parametrize("conv", CONVENTIONS, ids=IDS)
def test_analytic_jacobian_matches_central_differences(conv):
    rng = np.random.default_rng(11)
    angles = rng.uniform(-1.2, 1.2, size=(6, 3))
    if conv.is_proper_euler:
        angles[:, 1] = rng.uniform(0.3, 2.8, size=6)
    angles = angles * unit(conv)
    h = 1e-5 * unit(conv)
    R = pk.read_rotation(angles, "euler", conv)
    for frame in ("body", "space"):
        J = euler_rate_jacobian(angles, conv, frame)
        for i in range(3):
            step = np.zeros(3)
            step[i] = h
            dR = (pk.read_rotation(angles + step, "euler", conv) - pk.read_rotation(angles - step, "euler", conv)) / (2 * h)
            omega = _vee(np.swapaxes(R, -1, -2) @ dR) if frame == "body" else _vee(dR @ np.swapaxes(R, -1, -2))
            assert np.max(np.abs(omega - J[..., :, i])) < 1e-8 * unit(conv) ** -1 + 1e-9
    default = "body" if conv.intrinsic else "space"
    assert np.array_equal(euler_rate_jacobian(angles, conv), euler_rate_jacobian(angles, conv, default))


def test_jacobian_columns_are_the_turn_axes_in_the_stated_frame():
    # intrinsic: in the body frame the last turn's axis is the body's own third axis;
    # extrinsic: in the space frame the last turn's axis is the fixed third axis (common practice).
    for conv in BASE:
        J = euler_rate_jacobian([0.3, 0.4, 0.5], conv)
        e = np.eye(3)["xyz".index(conv.axes_letters[2])]
        assert np.allclose(J[:, 2], e, atol=1e-15)


# --- sensitivity ----------------------------------------------------------------------------------------

@pytest.mark.parametrize("conv", CONVENTIONS, ids=IDS)
def test_sensitivity_measured_matches_predicted_away_and_jumps_at_the_pole(conv):
    mid = 0.6 if conv.is_tait_bryan else 1.0
    s = readback_sensitivity(rotation_of(conv, 0.4, mid, -0.9), conv)
    assert abs(float(s.measured) - float(s.predicted)) < 1e-3 * float(s.predicted)
    for b0 in poles(conv):
        s = readback_sensitivity(rotation_of(conv, 0.4, b0, -0.9), conv)
        assert not np.isfinite(s.predicted) or s.predicted > 1e8
        assert float(s.measured) * s.step > 0.1  # the readback jumps by a visible angle
        assert "jumps" in s.summary()


# --- results and bad input ------------------------------------------------------------------------------

def test_batches_broadcast_and_results_are_frozen():
    conv = pk.Convention(unit="degrees")
    R = pk.read_rotation(np.array([[[10, 90, 5], [10, 20, 5]], [[0, -90, 0], [1, 2, 3]]], float), "euler", conv)
    a = analyse_pole(R, conv)
    assert a.distance.shape == (2, 2) and a.gauge.jacobian.shape == (2, 2, 3, 3)
    assert a.solutions.family.shape == (2, 2, 73, 3) and a.solutions.regular.shape == (2, 2, 2, 3)
    assert a.solutions.at_pole.tolist() == [[True, False], [True, False]]
    assert "2 at the pole" in a.solutions.summary()
    assert isinstance(a.solutions, EulerSolutions)
    with pytest.raises(AttributeError):
        a.solutions.tolerance = 3.0
    text = a.summary()
    shown = float(text.split("nearest pole ")[1].split(" degrees away")[0])
    assert abs(shown) < 1e-9


def test_bad_input_raises_typed_errors():
    with pytest.raises(PoseInputError, match="frame"):
        lock_gauge(np.eye(3), None, "world")
    with pytest.raises(PoseInputError, match="tolerance"):
        euler_solutions(np.eye(3), None, tolerance=-1.0)
    with pytest.raises(PoseInputError, match="samples"):
        euler_solutions(np.eye(3), None, samples=1)
    with pytest.raises(NotOrthonormalError):
        pole_distance(2 * np.eye(3))
    with pytest.raises(PoseInputError, match="step"):
        readback_sensitivity(np.eye(3), None, step=0.5)


# --- pole_readout: the two results of one readback ------------------------------------------------------

def _same(a, b):
    for name in a.__dataclass_fields__:
        x, y = getattr(a, name), getattr(b, name)
        if isinstance(x, np.ndarray) or isinstance(y, np.ndarray):
            np.testing.assert_array_equal(np.asarray(x), np.asarray(y), err_msg=name)
        else:
            assert x == y, name


@pytest.mark.parametrize("conv", CONVENTIONS, ids=IDS)
def test_pole_readout_equals_separate_calls(conv):
    rng = np.random.default_rng(5)
    pole = poles(conv)[0]
    cases = [rotation_of(conv, *rng.uniform(-3, 3, 3)) for _ in range(4)]
    cases += [rotation_of(conv, 0.4, pole, -0.3), rotation_of(conv, 0.4, pole + 1e-6, -0.3),
              pk.read_rotation(rng.normal(size=(3, 4)), "quaternion", None, normalise=True)]
    for R in cases:
        for frame in (None, "body", "space"):
            sol, gauge = pole_readout(R, conv, frame)
            _same(sol, euler_solutions(R, conv))
            _same(gauge, lock_gauge(R, conv, frame))
        if R.ndim == 2:  # the text form of the convention gives the same words
            assert pole_readout(R, conv.to_text())[0].words() == euler_solutions(R, conv).words()


def test_pole_readout_bad_input_raises_like_the_separate_calls():
    with pytest.raises(PoseInputError, match="frame"):
        pole_readout(np.eye(3), None, "world")
    with pytest.raises(PoseInputError, match="samples"):
        pole_readout(np.eye(3), None, samples=1)
    with pytest.raises(NotOrthonormalError):
        pole_readout(2 * np.eye(3))


@pytest.mark.parametrize("conv", CONVENTIONS, ids=IDS)
def test_single_rotation_route_gives_the_batch_routes_numbers_and_types(conv):
    # one rotation takes a route on floats (fewer numpy calls per widget update); it must
    # agree bit for bit, type for type, with the array route, at and off the pole
    from posekit.analysis.singularity import _readback, _scale, _solutions_of_batch, _solutions_of_one

    rng = np.random.default_rng(11)
    tol = DEFAULT_POLE_TOLERANCE / _scale(conv)
    cases = [rotation_of(conv, *rng.uniform(-4, 4, 3)) for _ in range(20)]
    cases += [rotation_of(conv, x, p + d, z) for p in poles(conv) for d in (0.0, 1e-12, -1e-7, 0.3)
              for x, z in ((0.4, -0.3), (np.pi, 0.0), (-2.0, 3.0))]
    for R in cases:
        _, angles, rad = _readback(R, conv)
        for samples in (2, 73):
            one = _solutions_of_one(conv, angles, rad, tol, samples)
            batch = _solutions_of_batch(conv, angles, rad, tol, samples)
            for name in one.__dataclass_fields__:
                x, y = getattr(one, name), getattr(batch, name)
                assert type(x) is type(y) and np.shape(x) == np.shape(y), name
                if isinstance(x, np.ndarray):
                    assert x.dtype == y.dtype, name
                    np.testing.assert_array_equal(x, y, err_msg=name)
                else:
                    assert x == y, name
            assert one.words() == batch.words()
