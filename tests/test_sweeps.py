"""Sweep laws: every representation along a path names the same rotation; only the Euler
readback and the written quaternion jump; the matrix never does on a continuous path.

Facts used: gimbal lock at middle angle ±90 degrees (Tait-Bryan) and 0 / 180 degrees
(proper Euler) -- common practice; q and -q are one rotation -- common practice;
slerp midpoint of identity and 90 degrees about z is 45 degrees about z -- Shoemake,
SIGGRAPH 1985 (derived); scipy.spatial.transform.Slerp as an outside slerp.
"""

import itertools

import numpy as np
import pytest
from scipy.spatial.transform import Rotation, Slerp

import posekit as pk
from posekit.analysis import Sweep, sign_continuous, sweep_between, sweep_one_angle, sweep_rotations
from posekit.core.convention import CHOICES
from posekit.core.errors import PoseInputError
from posekit.core.rotation import elementary_matrix

BASE = [pk.Convention(sequence=s, axes=a, unit="degrees")
        for s, a in itertools.product(CHOICES["sequence"], CHOICES["axes"])]
OTHER = [c.changed(scalar="last", algebra="jpl", direction="child-from-parent") for c in BASE[::3]] + \
        [c.changed(action="passive", wrap="positive", unit="radians") for c in BASE[1::3]]
CONVENTIONS = BASE + OTHER
IDS = [c.to_text().replace(" ", ",") for c in CONVENTIONS]


def check_same_rotation_everywhere(s: Sweep):
    conv = s.convention
    R = s.rotation
    assert np.max(pk.angle_between(pk.read_rotation(s.euler, "euler", conv), R)) < 1e-11
    assert np.max(pk.angle_between(pk.read_rotation(s.quaternion, "quaternion", conv), R)) < 1e-11
    assert np.max(pk.angle_between(pk.read_rotation(s.quaternion_written, "quaternion", conv), R)) < 1e-11
    assert np.max(pk.angle_between(pk.read_rotation(s.matrix, "matrix", conv), R)) < 1e-11
    # the sign-continuous quaternion never turns back on itself (double cover)
    dots = np.sum(s.quaternion[..., 1:, :] * s.quaternion[..., :-1, :], axis=-1)
    assert np.all(dots >= 0)


@pytest.mark.parametrize("conv", CONVENTIONS, ids=IDS)
def test_sweeping_the_middle_angle_through_the_pole(conv):
    u = 180.0 / np.pi if conv.degrees else 1.0
    pole = (90.0 if conv.is_tait_bryan else 0.0) / (180 / np.pi) * u
    step = 1.0 / (180 / np.pi) * u
    values = pole + step * np.arange(-10, 11)
    s = sweep_one_angle(np.array([30.0, 0.0, 20.0]) / (180 / np.pi) * u, 1, values, conv)
    assert s.parameter.tolist() == values.tolist()
    check_same_rotation_everywhere(s)
    assert int(np.argmin(s.gauge)) == 10 and s.gauge[10] < 1e-9 and np.all(s.gauge[np.arange(21) != 10] > 1e-3)
    # the matrix moves by one degree per step and never jumps
    assert not s.matrix_jumps.any()
    assert np.allclose(s.step_angle[1:], np.pi / 180, atol=1e-9)
    # the Euler readback jumps, right at the pole or the step after it, nowhere else
    jumps = np.flatnonzero(s.euler_jumps)
    assert 1 <= jumps.size <= 2 and set(jumps) <= {10, 11}


@pytest.mark.parametrize("conv", CONVENTIONS, ids=IDS)
def test_a_full_turn_wraps_the_readback_and_flips_the_written_quaternion(conv):
    u = 180.0 / np.pi if conv.degrees else 1.0
    values = (5.0 + 10.0 * np.arange(36)) / (180 / np.pi) * u   # first angle 5 .. 355 degrees
    mid = (0.0 if conv.is_tait_bryan else 40.0) / (180 / np.pi) * u
    s = sweep_one_angle([0.0, mid, 0.0], 0, values, conv)
    check_same_rotation_everywhere(s)
    # the turn passes 180 degrees between steps 17 and 18: w changes sign there
    assert np.flatnonzero(s.quaternion_jumps).tolist() == [18]
    if conv.wrap == "signed":
        assert np.flatnonzero(s.euler_jumps).tolist() == [18]        # 175 -> -175
    else:
        assert not s.euler_jumps.any()                               # [0, 360) wraps at 0, not crossed here
    assert not s.matrix_jumps.any()


def test_slerp_sweep_against_the_published_midpoint_and_scipy():
    a, b = np.eye(3), elementary_matrix("z", np.pi / 2)
    s = sweep_between(a, b, 3, "unit=degrees")
    # Shoemake 1985 (derived): the midpoint of identity and 90 degrees about z is 45 degrees about z
    assert np.allclose(s.rotation[1], elementary_matrix("z", np.pi / 4), atol=1e-15)
    assert s.parameter.tolist() == [0.0, 0.5, 1.0]
    rng = np.random.default_rng(5)
    ends = Rotation.random(2, random_state=rng)
    s = sweep_between(ends[0].as_matrix(), ends[1].as_matrix(), 25, "sequence=x-y-z axes=extrinsic")
    ref = Slerp([0, 1], ends)(np.linspace(0, 1, 25)).as_matrix()      # scipy.spatial.transform.Slerp
    assert np.max(pk.angle_between(s.rotation, ref)) < 1e-12
    assert np.allclose(s.step_angle[1:], s.step_angle[1], atol=1e-12)  # constant angular speed
    check_same_rotation_everywhere(s)
    assert not s.matrix_jumps.any()


def test_slerp_through_the_pole_shows_the_euler_jump_only():
    conv = pk.Convention(sequence="z-y-x", unit="degrees")
    a = pk.read_rotation([20, 60, 10], "euler", conv)
    b = pk.read_rotation([20, 120, 10], "euler", conv)  # reads back as pitch 60 on the other branch
    s = sweep_between(a, b, 61, conv)
    check_same_rotation_everywhere(s)
    assert s.euler_jumps.any() and not s.matrix_jumps.any() and not s.quaternion_jumps.any()
    assert s.gauge.min() < 1e-9
    assert "Euler readback jumps at 1 step" in s.summary()


def test_batches_of_paths_broadcast():
    rng = np.random.default_rng(9)
    a = Rotation.random(4, random_state=rng).as_matrix().reshape(2, 2, 3, 3)
    b = Rotation.random(4, random_state=rng).as_matrix().reshape(2, 2, 3, 3)
    s = sweep_between(a, b, 7, None)
    assert s.euler.shape == (2, 2, 7, 3) and s.quaternion.shape == (2, 2, 7, 4)
    assert s.matrix.shape == (2, 2, 7, 3, 3) and s.gauge.shape == (2, 2, 7) and s.euler_jumps.shape == (2, 2, 7)
    assert s.parameter.shape == (2, 2, 7)
    check_same_rotation_everywhere(s)
    one = sweep_between(a[1, 0], b[1, 0], 7, None)
    assert np.allclose(one.euler, s.euler[1, 0])
    path = sweep_one_angle(np.zeros((3, 3)), 2, np.linspace(0, 1, 5))
    assert path.euler.shape == (3, 5, 3)


def test_sign_continuous_keeps_every_rotation():
    rng = np.random.default_rng(2)
    q = Rotation.random(200, random_state=rng).as_quat(scalar_first=True)
    q = q * rng.choice([-1.0, 1.0], size=(200, 1))
    c = sign_continuous(q)
    assert np.all(np.abs(np.abs(c) - np.abs(q)) == 0)
    assert np.all(np.sum(c[1:] * c[:-1], axis=-1) >= 0)
    assert np.array_equal(c[0], q[0])


def test_a_random_path_has_no_false_jumps():
    # a smooth, slow path far from every pole of z-y-x: nothing jumps
    t = np.linspace(0, 1, 200)
    angles = np.stack([0.5 * np.sin(2 * np.pi * t), 0.3 * np.cos(2 * np.pi * t), 0.2 * t], axis=-1)
    R = pk.read_rotation(angles, "euler", None)
    s = sweep_rotations(R, None, t)
    assert not (s.euler_jumps.any() or s.quaternion_jumps.any() or s.matrix_jumps.any())


def test_bad_sweep_input_raises_typed_errors():
    with pytest.raises(PoseInputError, match="index"):
        sweep_one_angle([0, 0, 0], 3, [0, 1])
    with pytest.raises(PoseInputError, match="values"):
        sweep_one_angle([0, 0, 0], 1, [[0, 1], [2, 3]])
    with pytest.raises(PoseInputError, match="steps"):
        sweep_between(np.eye(3), np.eye(3), 1)
    with pytest.raises(PoseInputError, match="threshold"):
        sweep_between(np.eye(3), np.eye(3), 5, threshold=-1.0)
    with pytest.raises(PoseInputError, match="N >= 2"):
        sweep_rotations(np.eye(3)[None])
    with pytest.raises(PoseInputError, match="parameter"):
        sweep_rotations(np.stack([np.eye(3)] * 4), None, [1, 2])
