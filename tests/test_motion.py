"""Known motion and rate streams (posekit.analysis.motion, posekit.io.words.read_motion) against scipy.

Every log is generated here.  The body's motion: the described turns, each about one body axis
with a smooth (smoothstep) angle profile, composed by scipy ``Rotation`` products (intrinsic:
``b * turn``), with pauses between turns or none, and optionally a small smooth wobble from a
scipy ``RotationSpline`` through random key orientations (a hand is no gimbal).  The sensor's
orientation is ``world * body * mount`` (scipy products) with a random world frame and mount
(scipy ``Rotation.random``), noise of a few tenths of a degree on each sample, and the numbers
written *by scipy* under the true convention (``as_quat`` / ``as_euler`` / ``as_rotvec`` /
``as_matrix``; upper-case sequence letters are intrinsic in scipy), then read by posekit under
the slipped, stated one.  Rates come from ``RotationSpline(t, 1)`` (scipy: the angular rate in
the body frame) and ``Rotation.apply`` (world frame).

The checks: the log is explained, each turn's measured angle is the generated one, and the
injected slip leads -- or is listed among the ties, either as the same mistake written another
way, as indistinguishable by any motion (a constant turn of the world or the sensor), or with a
separating motion, which is then *checked*: the log regenerated with that motion appended names
the injected slip.
"""

from __future__ import annotations

import dataclasses
import json
import math

import numpy as np
import pytest
from scipy.spatial.transform import Rotation, RotationSpline

from posekit.analysis.motion import (KnownMotionError, MotionDiagnosis, RateReading, RateReadingError,
                                     RateStreamError, StillLogError, explain_known_motion, explain_rates, integrate_rates,
                                     turning_path)
from posekit.core.errors import NotOrthonormalError, PoseInputError, WrongShapeError
from posekit.explain import NAMED_REMAPS, REMAPS, Reading, Slip, sentence, stated_reading
from posekit.io.words import DescriptionError, read_description, read_motion, turn_words

RATE = 100.0
OPTICAL = NAMED_REMAPS["FLU body -> optical (x right, y down, z forward)"]
MIRROR_Z = np.diag([1.0, 1.0, -1.0])


def _remap_index(m) -> int:
    return int(np.flatnonzero(np.all(np.asarray(REMAPS) == np.asarray(m), axis=(1, 2)))[0])


# --------------------------------------------------------------------------------------
# generated motion (scipy)
# --------------------------------------------------------------------------------------

def _body(description, *, seed=0, pauses=True, wobble_deg=0.0, turn_time=2.5, pause=0.8):
    """Times (s) and the body's attitude (scipy Rotation) through the described turns, and each turn's
    generated signed angle (radians) -- the generator's own, built by scipy Rotation products."""
    turns = read_motion(description).turns
    times, rots, angles = [], [], []
    t = 0.0
    cur = Rotation.identity()
    n_pause = int(pause * RATE) if pauses else 0
    for _ in range(int(pause * RATE)):
        times.append(t)
        rots.append(cur)
        t += 1.0 / RATE
    rng = np.random.default_rng(seed)
    for k, turn in enumerate(turns):
        angle = turn.angle * (1.0 + (rng.uniform(-0.08, 0.08) if turn.approximate and turn.undoes is None else 0.0))
        if turn.undoes is not None:
            angle = -angles[turn.undoes]
        angles.append(angle)
        axis = np.eye(3)[turn.axis]
        n = int(turn_time * RATE)
        for i in range(1, n + 1):
            f = i / n
            times.append(t)
            rots.append(cur * Rotation.from_rotvec(axis * angle * f * f * (3 - 2 * f)))
            t += 1.0 / RATE
        cur = cur * Rotation.from_rotvec(axis * angle)
        for _ in range(n_pause if k < len(turns) - 1 else int(pause * RATE)):
            times.append(t)
            rots.append(cur)
            t += 1.0 / RATE
    times = np.array(times)
    body = Rotation.concatenate(rots)
    if wobble_deg:
        keys = np.linspace(times[0], times[-1], 12)
        wob = RotationSpline(keys, Rotation.from_rotvec(rng.normal(size=(12, 3)) * math.radians(wobble_deg)))
        body = body * wob(times)
    return times, body, np.array(angles)


def _log(description, writer, *, seed=0, noise_deg=0.0, mount=None, world=None, **kw):
    """Times, the logged numbers (written by scipy through ``writer``), the sensor's true orientations."""
    times, body, angles = _body(description, seed=seed, **kw)
    world = Rotation.random(random_state=seed + 100) if world is None else world
    mount = Rotation.random(random_state=seed + 200) if mount is None else mount
    sensor = world * body * mount
    if noise_deg:
        rng = np.random.default_rng(seed + 300)
        sensor = sensor * Rotation.from_rotvec(rng.normal(size=(len(sensor), 3)) * math.radians(noise_deg))
    return times, writer(sensor), sensor, angles


# slips of an orientation log: (stated text, kind, writer of the numbers (scipy), injected slip from the stated
# reading).  Trawny & Roumeliotis 2005: the JPL quaternion of R holds the Hamilton numbers of R^T; Diebel 2006:
# passive angles build the transpose of the active matrix of the same angles.
SLIPS = {
    "none": ("scalar=first", None, lambda r: r.as_quat(scalar_first=True), lambda s: Slip(s, s)),
    "scalar-last read scalar-first": ("scalar=first", None, lambda r: r.as_quat(),
                                      lambda s: Slip(s, s.with_fields(scalar="last"))),
    "JPL read as Hamilton": ("scalar=last", None, lambda r: r.inv().as_quat(),
                             lambda s: Slip(s, s.with_fields(algebra="jpl"))),
    "inverse read as parent-from-child": ("scalar=first", None, lambda r: r.inv().as_quat(scalar_first=True),
                                          lambda s: Slip(s, s.with_fields(direction="child-from-parent"))),
    "degrees read as radians": ("sequence=z-y-x", "euler", lambda r: r.as_euler("ZYX", degrees=True),
                                lambda s: Slip(s, s.with_fields(unit="degrees"))),
    "radians read as degrees": ("sequence=z-y-x unit=degrees", "euler", lambda r: r.as_euler("ZYX"),
                                lambda s: Slip(s, s.with_fields(unit="radians"))),
    "x-y-z read as z-y-x": ("sequence=z-y-x unit=degrees", "euler", lambda r: r.as_euler("XYZ", degrees=True),
                            lambda s: Slip(s, s.with_fields(sequence="x-y-z"))),
    "extrinsic read as intrinsic": ("sequence=z-y-x unit=degrees", "euler", lambda r: r.as_euler("zyx", degrees=True),
                                    lambda s: Slip(s, s.with_fields(axes="extrinsic"))),
    "passive read as active": ("sequence=z-y-x unit=degrees", "euler",
                               lambda r: r.inv().as_euler("ZYX", degrees=True),
                               lambda s: Slip(s, s.with_fields(action="passive"))),
    "rotation vector read as Euler angles": ("", "euler", lambda r: r.as_rotvec(),
                                             lambda s: Slip(s, Reading("rotation-vector", s.convention, s.stated))),
    "column-major read row-major": ("", "matrix", lambda r: r.as_matrix().transpose(0, 2, 1).reshape(-1, 9),
                                    lambda s: Slip(s, s.with_fields(layout="column-major"))),
    "rotation before position, read after": (
        "scalar=first", "position-quaternion",
        lambda r: np.concatenate([r.as_quat(scalar_first=True), np.tile([0.4, -0.2, 1.5], (len(r), 1))], axis=1),
        lambda s: Slip(s, dataclasses.replace(s, position_first=False))),
}

# slips only a known mount can name: the sensor's own axes (written R Q, R the true orientation)
MOUNT_SLIPS = {
    "sensor axes remapped (optical)": ("scalar=first", None,
                                       lambda r: (r * Rotation.from_matrix(OPTICAL)).as_quat(scalar_first=True),
                                       lambda s: Slip(s, s, False, 0, _remap_index(OPTICAL))),
    "one sensor axis mirrored (handedness)": ("", "matrix", lambda r: (r.as_matrix() @ MIRROR_Z).reshape(-1, 9),
                                              lambda s: Slip(s, s, False, 0, _remap_index(MIRROR_Z))),
}

MOTIONS = {
    "three axes": "rolled 90 degrees right, then pitched 90 degrees down, then yawed 90 degrees left",
    "two axes, and back": "tilted nose up about 90 degrees, then back, then turned left about 90 degrees",
    "one axis": "turned left in place a full turn",
}


def _stated(text, kind, width):
    return stated_reading(width, kind, text)


def _decodes_alike(a: Slip, b: Slip, numbers) -> bool:
    """The two slips read these numbers to the same rotations (the same mistake written two ways)."""
    ra, _ = a.decode(numbers)
    rb, _ = b.decode(numbers)
    return bool(np.max(np.abs(ra - rb)) <= 1e-9)


def _named(out: MotionDiagnosis, injected: Slip, numbers):
    """Where the injected slip stands: ("lead", None), ("same", None), or ("tie", the Tie); None if absent."""
    if _decodes_alike(out.slip, injected, numbers[:50]):
        return "lead", None
    if injected.is_none:
        words = None
    else:
        words = sentence(injected)
        if words in out.best.same:
            return "same", None
    for tie in out.ties:
        if (tie.slip is not None and _decodes_alike(tie.slip, injected, numbers[:50])) or tie.sentence == words:
            return "tie", tie
    return None


def _check_turns(out: MotionDiagnosis, angles, tol_deg):
    """Each measured turn is the generated one (the generator's angle, scipy Rotation products)."""
    assert len(out.turns) == len(angles)
    for m, a in zip(out.turns, angles):
        assert abs(m.turned_degrees - abs(math.degrees(a))) <= tol_deg, (m, math.degrees(a))
        assert m.within and m.start < m.end


def _run_grid(name, table, motion_name, noise, mount_given):
    stated_text, kind, writer, make = table[name]
    description = MOTIONS[motion_name]
    seed = 7 + len(name) + len(motion_name)
    mount = Rotation.identity() if mount_given else None
    t, numbers, _, angles = _log(description, writer, seed=seed, noise_deg=noise, mount=mount)
    out = explain_known_motion(t, numbers, stated_text, description, kind=kind,
                               mount="identity" if mount_given else None)
    stated = _stated(stated_text, kind, numbers.shape[1])
    injected = make(stated)
    assert out.explained, out.summary()
    _check_turns(out, angles, 1.0 + 3 * noise)
    where = _named(out, injected, numbers)
    assert where is not None, (name, out.summary())
    json.dumps(out.as_dict(), allow_nan=False)
    assert out.verdict in out.summary() and out.best.code in out.summary()
    if where[0] == "tie":
        tie = where[1]
        assert tie.how in ("unseen", "separable")
        if tie.how == "separable":
            # the claim is checked: with the separating motion appended, the injected slip is named
            assert tie.motion is not None, tie
            longer = description + ", then " + tie.motion
            t2, numbers2, _, angles2 = _log(longer, writer, seed=seed, noise_deg=noise, mount=mount)
            out2 = explain_known_motion(t2, numbers2, stated_text, longer, kind=kind,
                                        mount="identity" if mount_given else None)
            assert out2.explained
            where2 = _named(out2, injected, numbers2)
            assert where2 is not None and (where2[0] != "tie" or where2[1].how == "unseen"), (name, out2.summary())
    return out, where


@pytest.mark.parametrize("noise", [0.0, 0.3])
@pytest.mark.parametrize("motion_name", sorted(MOTIONS))
@pytest.mark.parametrize("name", sorted(SLIPS))
def test_every_slip_is_named_or_its_tie_is_stated(name, motion_name, noise):
    out, where = _run_grid(name, SLIPS, motion_name, noise, mount_given=False)
    if motion_name == "three axes" and where[0] == "tie":
        # three turns about three axes, none undone: only what relative motions cannot see is left open
        assert where[1].how == "unseen", (name, out.summary())


@pytest.mark.parametrize("noise", [0.0, 0.3])
@pytest.mark.parametrize("motion_name", ["three axes", "two axes, and back"])
@pytest.mark.parametrize("name", sorted(MOUNT_SLIPS))
def test_a_known_mount_names_remaps_of_the_sensor_axes(name, motion_name, noise):
    out, where = _run_grid(name, MOUNT_SLIPS, motion_name, noise, mount_given=True)
    assert out.mount_given and np.allclose(out.mount, np.eye(3))
    if name.startswith("sensor axes") and motion_name == "three axes":
        assert where[0] in ("lead", "same"), out.summary()
        assert np.array_equal(REMAPS[out.slip.child_remap], OPTICAL)
    if name.startswith("one sensor axis"):
        # a mirrored axis and the other two turned 180 degrees differ by -I, a constant relative motions cannot
        # see; the proper one leads by the prior (a reflection costs more), the mirror is stated as a tie
        assert where[0] in ("lead", "tie")
        if where[0] == "tie":
            assert where[1].how == "unseen" and "world frame" in where[1].words


def test_the_fix_code_gives_back_scipy_s_orientations():
    description = MOTIONS["three axes"]
    t, numbers, sensor, _ = _log(description, lambda r: r.as_euler("XYZ", degrees=True), seed=9)
    out = explain_known_motion(t, numbers, "sequence=z-y-x unit=degrees", description)
    assert out.sentence == "The Euler sequence is x-y-z but was read as z-y-x (stated)."
    scope = {"logged_numbers": numbers}
    exec(out.best.code, scope)                                    # the snippet the user would run
    import posekit as pk
    back = Rotation.from_matrix(pk.read_rotation(scope["corrected"], "euler", "sequence=z-y-x unit=degrees"))
    assert np.max((back.inv() * sensor).magnitude()) <= 1e-9      # scipy's true orientations, row by row


def test_the_fitted_mount_is_scipy_s_mount():
    description = MOTIONS["three axes"]
    mount = Rotation.random(random_state=5)                               # scipy: the true mount
    t, numbers, _, _ = _log(description, lambda r: r.as_quat(scalar_first=True), seed=3, mount=mount)
    out = explain_known_motion(t, numbers, "scalar=first", description)
    assert out.slip.is_none
    # p_body = M p_sensor: scipy's mount maps sensor vectors into the body frame (body * mount)
    assert float(np.degrees((Rotation.from_matrix(out.mount).inv() * mount).magnitude())) <= 0.1


def test_without_pauses_the_turns_are_still_found():
    description = "yawed 90 degrees left, pitched 45 degrees down, rolled 60 degrees right"
    t, numbers, _, angles = _log(description, lambda r: r.as_quat(scalar_first=True), seed=4, noise_deg=0.2,
                                 pauses=False)
    out = explain_known_motion(t, numbers, "scalar=first", description)
    assert out.explained and out.slip.is_none, out.summary()
    _check_turns(out, angles, 1.0)
    ends = [(m.start, m.end) for m in out.turns]
    assert all(a[1] <= b[0] + 0.05 for a, b in zip(ends, ends[1:]))           # in order, not overlapping
    assert not any("separate stretches" in n for n in out.notes)


def test_a_hand_held_wobble_is_still_the_described_motion():
    description = "yawed 90 degrees left, then pitched 45 degrees down"
    seed = 6
    t, body, _ = _body(description, seed=seed, wobble_deg=1.5)
    world, mount = Rotation.random(random_state=seed + 100), Rotation.random(random_state=seed + 200)
    sensor = world * body * mount
    out = explain_known_motion(t, sensor.as_euler("ZYX", degrees=True), "sequence=z-y-x unit=degrees", description)
    assert out.explained and out.slip.is_none, out.summary()
    # scipy: the body's own turn (wobble included) from the middle of one pause to the middle of the next; the
    # pieces end where the log's own cuts fall, inside the (wobbling) pauses, so a few degrees apart
    marks = [40, 80 + 250 + 40, len(t) - 40]
    for m, (a, b) in zip(out.turns, zip(marks, marks[1:])):
        truth = math.degrees((body[a].inv() * body[b]).magnitude())
        assert abs(m.turned_degrees - truth) <= 6.0, (m.turned_degrees, truth)


def test_one_axis_motion_states_the_ambiguity_and_the_motion_that_separates_it():
    description = MOTIONS["one axis"]
    t, numbers, _, _ = _log(description, lambda r: r.as_quat(), seed=11)            # scalar last ...
    out = explain_known_motion(t, numbers, "scalar=first", description)              # ... read scalar first
    # relative motions of one turn cannot tell a reading from its transpose turned by constants: the stated
    # reading leads by the prior, the injected slip is a stated tie with the motion that separates it
    assert out.explained and out.slip.is_none
    injected = Slip(out.stated, out.stated.with_fields(scalar="last"))
    where = _named(out, injected, numbers)
    assert where[0] == "tie" and where[1].how == "separable" and where[1].motion
    assert "axis" in where[1].words or "axes" in where[1].words
    assert "fit" in out.verdict and str(len(out.ties)) in out.verdict
    assert any("fits as well" in line for line in out.summary().splitlines())


def test_a_described_angle_the_log_does_not_show_is_not_explained():
    t, numbers, _, _ = _log("pitched 90 degrees down", lambda r: r.as_quat(scalar_first=True), seed=2)
    out = explain_known_motion(t, numbers, "scalar=first", "pitched 180 degrees down")
    assert not out.explained and out.verdict.startswith("No reading")
    assert not out.ties
    assert abs(out.turns[0].turned_degrees - 90.0) <= 1.0 and not out.turns[0].within
    out = explain_known_motion(t, numbers, "scalar=first", "pitched about 100 degrees down")      # "about": 20 %
    assert out.explained


def test_a_turn_the_description_leaves_out_is_noted():
    t, numbers, _, _ = _log("yawed 90 degrees left, then rolled 90 degrees right",
                            lambda r: r.as_quat(scalar_first=True), seed=5)
    out = explain_known_motion(t, numbers, "scalar=first", "yawed 90 degrees left")
    assert not out.explained
    assert any("2 separate stretches" in n for n in out.notes)


def test_more_turns_than_the_log_shows_are_not_explained():
    t, numbers, _, _ = _log("yawed 10 degrees left", lambda r: r.as_quat(scalar_first=True), seed=2, turn_time=0.1)
    described = ", ".join(["rolled 90 degrees right", "pitched 90 degrees down"] * 30)
    out = explain_known_motion(t, numbers, "scalar=first", described)
    assert not out.explained and out.verdict.startswith("No reading of the log follows the described motion")
    json.dumps(out.as_dict(), allow_nan=False)


def test_a_log_that_never_turns_is_refused():
    t = np.arange(100) / RATE
    q = np.tile(Rotation.random(random_state=1).as_quat(scalar_first=True), (100, 1))
    with pytest.raises(StillLogError, match="never turns"):
        explain_known_motion(t, q, "scalar=first", "turned left a full turn")


def test_turning_path_is_the_angle_turned_even_past_a_full_turn():
    # scipy: two and a half turns about a fixed axis at a constant rate, as rotations
    axis = np.array([1.0, 2.0, 2.0]) / 3.0
    angles = np.linspace(0.0, 5.0 * np.pi, 400)
    r = Rotation.random(random_state=2) * Rotation.from_rotvec(np.outer(angles, axis))
    path = turning_path(r.as_matrix())
    assert np.allclose(path[-1], 5.0 * np.pi * axis, atol=1e-9)
    # the path of the inverse stream runs about the world axis, the other way (common practice: R^T)
    path_t = turning_path(np.swapaxes(r.as_matrix(), -1, -2))
    assert math.isclose(np.linalg.norm(path_t[-1]), 5.0 * np.pi, rel_tol=1e-9)


# --------------------------------------------------------------------------------------
# the words of a motion
# --------------------------------------------------------------------------------------

def test_motion_words_against_scipy():
    m = read_motion("tilted nose up about 90 degrees, then back")
    assert [(t.axis, t.approximate, t.undoes) for t in m.turns] == [(1, True, None), (1, True, 0)]
    # FLU: nose up is a negative turn about +y (right-hand rule, common practice); scipy composes intrinsic turns
    assert np.allclose(m.turns[0].rotation_vector, [0, -np.pi / 2, 0])
    assert np.allclose(m.rotation(), np.eye(3))
    m = read_motion("turned left in place a full turn")
    assert m.turns[0].axis == 2 and math.isclose(m.turns[0].angle, 2 * np.pi) and not m.turns[0].approximate
    m = read_motion("tilted right 30 degrees, rotated half a turn right, pitched down by a quarter turn")
    ref = Rotation.from_euler("XZY", [30, -180, 90], degrees=True)               # scipy: intrinsic x, z, y
    assert np.allclose(m.rotation(), ref.as_matrix(), atol=1e-12)
    assert [round(math.degrees(t.angle)) for t in read_motion("yawed 2 full turns left").turns] == [720]


def test_pose_words_read_the_motion_vocabulary_too():
    p = read_description("pitched 30 degrees up then back, turned right about 90 degrees")
    assert np.allclose(p.rotation, Rotation.from_euler("z", -90, degrees=True).as_matrix())    # scipy
    assert np.allclose(read_description("turned left a full turn").rotation, np.eye(3), atol=1e-12)


@pytest.mark.parametrize("axis", [0, 1, 2])
@pytest.mark.parametrize("angle", [math.pi / 2, -math.pi / 3, 2 * math.pi, -3 * math.pi])
def test_turn_words_read_back(axis, angle):
    t = read_motion(turn_words(axis, angle)).turns[0]
    assert t.axis == axis and math.isclose(t.angle, angle, rel_tol=1e-3)


@pytest.mark.parametrize("text, offset, word", [
    ("tilted nose up 90 degrees, 0.3 m forward", 27, "is a move"),
    ("back", 4, "expected a distance"),
    ("turned left", 11, "expected an angle"),
    ("turned left a full", 18, "expected 'turn'"),
    ("level", 0, "no turn described"),
    ("tilted forward 20 degrees", 0, "not a direction for"),
    ("yawed left 11 turns", 11, "no pose is described that way"),
])
def test_motion_description_errors_are_typed_with_positions(text, offset, word):
    with pytest.raises(DescriptionError) as info:
        read_motion(text)
    assert isinstance(info.value, PoseInputError)
    assert f"offset {offset}" in str(info.value) and word in str(info.value), str(info.value)


# --------------------------------------------------------------------------------------
# rates
# --------------------------------------------------------------------------------------

def _rate_streams(seed, *, offset=0.0, n_keys=9, duration=40.0, single_axis=None):
    """Orientation at 100 Hz and body rates at 200 Hz on another clock (scipy RotationSpline and its first
    derivative: the body-frame angular rate)."""
    keys = np.linspace(0.0, duration, n_keys)
    if single_axis is None:
        spline = RotationSpline(keys, Rotation.random(n_keys, random_state=seed))
    else:
        steps = np.random.default_rng(seed).uniform(0.5, 1.5, n_keys) * np.random.default_rng(seed + 1).choice(
            [-1.0, 1.0], n_keys)
        spline = RotationSpline(keys, Rotation.random(random_state=seed)
                                * Rotation.from_rotvec(np.outer(np.cumsum(steps), single_axis)))
    t_o = np.arange(0.0, duration, 1.0 / RATE)
    t_r = np.arange(1.0, duration - 1.0, 0.005) - offset                 # the rate clock: offset behind
    tau = t_r + offset
    body = spline(tau, 1)
    return t_o, spline(t_o).as_quat(scalar_first=True), t_r, body, spline(tau)


# rate slips: (stated rate reading, writer of the logged rates from scipy's body rates w and orientations r)
RATE_SLIPS = {
    "none": ("", lambda w, r: w),
    "degrees per second": ("", lambda w, r: np.degrees(w)),
    "world frame": ("", lambda w, r: r.apply(w)),                      # scipy: world rate = R w_body
    "every sign flipped": ("", lambda w, r: -w),
    "z rate negated": ("", lambda w, r: w * [1, 1, -1]),
    "axes logged z, y, x": ("", lambda w, r: w[:, ::-1]),
    "FLU rates read by an FRD reader": ("", lambda w, r: w * [1, -1, -1]),
    "world, degrees, stated body": ("frame=body unit=radians", lambda w, r: np.degrees(r.apply(w))),
    "body rates stated world": ("frame=world", lambda w, r: w),
}


def _rate_truth(name, w, r):
    """The true RateReading of each slip: logged = S @ rates (S from the writer applied to the identity)."""
    s = np.stack([RATE_SLIPS[name][1](np.eye(3)[i][None], Rotation.identity())[0] for i in range(3)], axis=1)
    unit = "degrees" if "degrees" in name else "radians"
    if unit == "degrees":
        s = s * math.pi / 180.0
    frame = "world" if "world" in name and "stated world" not in name else "body"
    return frame, unit, _remap_index(np.round(s))


@pytest.mark.parametrize("seed", [3, 4])
@pytest.mark.parametrize("name", sorted(RATE_SLIPS))
def test_rate_slips_are_found(name, seed):
    stated_text, writer = RATE_SLIPS[name]
    off = 0.25 if seed == 3 else -0.4
    t_o, q_o, t_r, body, r = _rate_streams(seed, offset=off)
    rng = np.random.default_rng(seed)
    logged = writer(body + rng.normal(size=body.shape) * 0.002, r)
    out = explain_rates(t_r, logged, t_o, q_o, "scalar=first", rates_reading=stated_text or None)
    assert out.explained, out.summary()
    assert abs(out.offset - off) <= 1.0 / RATE, (out.offset, off)                 # within one sample period
    frame, unit, remap = _rate_truth(name, body, r)
    assert (out.reading.frame, out.reading.unit, out.reading.remap) == (frame, unit, remap), out.summary()
    # the fix undoes it: the logged rates decoded by the found reading are scipy's body rates
    assert np.max(np.abs(out.reading.decode(logged, r.as_matrix()) - body)) <= 0.01
    best_unit = min(out.speed_mismatch, key=out.speed_mismatch.get)
    assert best_unit == unit
    json.dumps(out.as_dict(), allow_nan=False)
    assert out.verdict in out.summary()


def test_the_rate_fix_code_gives_back_scipy_s_body_rates():
    t_o, q_o, t_r, body, r = _rate_streams(6, offset=0.1)
    logged = np.degrees(r.apply(body))[:, [1, 0, 2]] * [1, 1, -1]          # world frame, degrees, axes y, x, -z
    out = explain_rates(t_r, logged, t_o, q_o, "scalar=first")
    assert out.explained and out.reading.frame == "world" and out.reading.unit == "degrees"
    scope = {"logged_rates": logged, "R": r.as_matrix()}
    exec(out.best.code, scope)
    assert np.max(np.abs(scope["corrected"] - body)) <= 1e-9              # scipy's body-frame rates


def test_rates_about_one_axis_state_their_ties_and_the_turn_that_separates_them():
    t_o, q_o, t_r, body, r = _rate_streams(8, single_axis=np.array([0.0, 0.0, 1.0]))
    logged = body * [1, -1, -1]                                         # FLU rates, read as FRD would be
    out = explain_rates(t_r, logged, t_o, q_o, "scalar=first", offset=0.0)
    assert out.explained
    assert out.ties, out.summary()
    for tie in out.ties:
        assert tie.how == "separable" and tie.motion is not None
        # the separating turn is about another axis than z (the motion's own), and really separates them
        assert "z axis" not in tie.words
    truth = RateReading("body", "radians", _remap_index(np.diag([1.0, -1.0, -1.0])))
    assert truth == out.reading or any(t.slip == truth for t in out.ties)


def test_integrate_rates_agrees_with_scipy():
    t_o, q_o, t_r, body, r = _rate_streams(5, duration=10.0)
    t, w = t_r[:800], body[:800]
    # scipy: R_{i+1} = R_i exp(w dt) with the mean rate of each step, one product at a time
    ref = [Rotation.identity()]
    for i in range(len(t) - 1):
        ref.append(ref[-1] * Rotation.from_rotvec(0.5 * (w[i] + w[i + 1]) * (t[i + 1] - t[i])))
    ref = Rotation.concatenate(ref)
    ours = Rotation.from_matrix(integrate_rates(t, w))
    assert np.max((ours.inv() * ref).magnitude()) <= 1e-9
    # world frame: left products
    refw = [Rotation.identity()]
    for i in range(len(t) - 1):
        refw.append(Rotation.from_rotvec(0.5 * (w[i] + w[i + 1]) * (t[i + 1] - t[i])) * refw[-1])
    oursw = Rotation.from_matrix(integrate_rates(t, w, "world"))
    assert np.max((oursw.inv() * Rotation.concatenate(refw)).magnitude()) <= 1e-9
    # and the integrated body rates follow scipy's spline (its own orientations) to a small drift
    drift = (Rotation.from_matrix(r[0].as_matrix() @ integrate_rates(t, w)).inv() * r[:800]).magnitude()
    assert np.max(drift) <= math.radians(0.05)


# --------------------------------------------------------------------------------------
# bad input
# --------------------------------------------------------------------------------------

def _good():
    t, numbers, _, _ = _log("yawed 90 degrees left", lambda r: r.as_quat(scalar_first=True), seed=1)
    return t, numbers


@pytest.mark.parametrize("change, error, word", [
    (dict(values=np.zeros(30)), WrongShapeError, "expected (N, n)"),
    (dict(times="t_reversed"), PoseInputError, "strictly increasing"),
    (dict(description=3), DescriptionError, "expected text"),
    (dict(description="yawed 90 degrees left, 2 m forward"), DescriptionError, "is a move"),
    (dict(mount="upside down"), KnownMotionError, "accepted: 'identity'"),
    (dict(mount=np.eye(2)), WrongShapeError, "(3, 3)"),
    (dict(mount=np.eye(3) * 2), NotOrthonormalError, "mount"),
    (dict(angle_tolerance=0.0), PoseInputError, "angle_tolerance"),
    (dict(axis_tolerance=4.0), KnownMotionError, "axis_tolerance"),
    (dict(reading="scalar=sideways"), PoseInputError, "scalar"),
    (dict(limit=0), PoseInputError, "limit"),
])
def test_bad_known_motion_input_is_typed(change, error, word):
    t, numbers = _good()
    args = dict(times=t, values=numbers, reading="scalar=first", description="yawed 90 degrees left")
    args.update(change)
    if isinstance(args["times"], str):
        args["times"] = t[::-1]
    with pytest.raises(error) as info:
        explain_known_motion(args.pop("times"), args.pop("values"), args.pop("reading"), args.pop("description"),
                             **args)
    assert word in str(info.value), str(info.value)


@pytest.mark.parametrize("change, error, word", [
    (dict(rates="2d"), RateStreamError, "(N, 3)"),
    (dict(rates_reading="frame=sideways"), RateReadingError, "frame=body|world"),
    (dict(rates_reading="unit=degrees unit=radians"), RateReadingError, "given twice"),
    (dict(rates_reading=3), RateReadingError, "accepted"),
    (dict(times_rates="short"), PoseInputError, "time stamps"),
    (dict(offset=[0, 1]), WrongShapeError, "offset"),
    (dict(min_overlap=2.0), KnownMotionError, "min_overlap"),
    (dict(rates="nan"), PoseInputError, "rates"),
])
def test_bad_rate_input_is_typed(change, error, word):
    t_o, q_o, t_r, body, _ = _rate_streams(2, duration=12.0)
    args = dict(times_rates=t_r, rates=body, times_orientation=t_o, values=q_o, reading="scalar=first")
    args.update(change)
    if isinstance(args["rates"], str):
        args["rates"] = body[:, :2] if args["rates"] == "2d" else np.where(np.arange(len(body))[:, None] == 5,
                                                                             np.nan, body)
    if isinstance(args["times_rates"], str):
        args["times_rates"] = t_r[:-1]
    with pytest.raises(error) as info:
        explain_rates(args.pop("times_rates"), args.pop("rates"), args.pop("times_orientation"), args.pop("values"),
                      args.pop("reading"), **args)
    assert word in str(info.value), str(info.value)


def test_the_analysis_layer_exports_the_functions():
    import posekit.analysis as an
    assert an.explain_known_motion is explain_known_motion and an.explain_rates is explain_rates
