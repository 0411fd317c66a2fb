"""Mismatch diagnosis: injected-bug scenarios from random true poses (fixed seed).

Every observation is produced *outside* posekit with scipy.spatial.transform.Rotation
(named beside each line) from a random true pose, one scenario per hypothesis family
and several combinations of two.  The injected error -- or an explanation that
posekit reports as exactly equivalent for this sample -- must rank first; the
corrected pose and the generated snippet must give back the truth (checked against
scipy's matrix).  Remap matrices for ENU/NED, FLU/FRD and the optical frame are the
common-practice ones listed in DEVELOPERS.md, "Outside sources".
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.spatial.transform import Rotation

from posekit.analysis.diagnose import (DescriptionError, axis_remaps, average_rotation, describe_remap, diagnose,
                                       diagnose_batch, expected_pose, pose_from_words)
from posekit.core.errors import PoseInputError

RNG = np.random.default_rng(20261201)
I3 = np.eye(3)
ENU_NED = np.array([[0, 1, 0], [1, 0, 0], [0, 0, -1.0]])   # common practice (conventions.md)
FLU_FRD = np.diag([1.0, -1.0, -1.0])                        # common practice (conventions.md)
OPTICAL = np.array([[0, -1, 0], [0, 0, -1], [1, 0, 0.0]])  # optical from FLU body, common practice
MIRROR_Z = np.diag([1.0, 1.0, -1.0])


def _truth(seed):
    rot = Rotation.random(random_state=seed)      # scipy: Rotation.random
    t = np.random.default_rng(seed).normal(size=3)
    return rot, t


def _text(values):
    return " ".join(f"{v:.9f}" for v in np.ravel(values))


def _q_first(rot):
    return rot.as_quat(scalar_first=True)         # scipy: as_quat(scalar_first=True), Hamilton


def _q_last(rot):
    return rot.as_quat()                          # scipy: as_quat(), scalar last, Hamilton


def _member(reading="", kind=None, position_first=True, relation="as-is", p=I3, q=I3, frame="parent", scale=1.0):
    out = {"reading": reading, "position_first": position_first, "relation": relation,
           "parent_remap": np.asarray(p).astype(int).tolist(), "child_remap": np.asarray(q).astype(int).tolist(),
           "translation_frame": frame, "length_scale": scale}
    if kind is not None:
        out["kind"] = kind
    return out


def _matches(member, want):
    return all(member.get(k) == v for k, v in want.items())


def _scenarios():
    """(name, seed, builder) -> builder(rot, t) gives (observed text, expected, want member, options)."""
    s = []

    def add(name, fn):
        s.append(pytest.param(name, fn, id=name))

    # --- one family each -------------------------------------------------------------------
    add("quaternion-scalar-last", lambda r, t: (_text([*t, *_q_last(r)]), "pose",
                                                _member("scalar=last"), {}))
    add("quaternion-jpl", lambda r, t: (_text(_q_first(r) * [1, -1, -1, -1]), "rotation",
                                        _member("algebra=jpl"), {}))  # JPL: transpose of Hamilton (Trawny 2005)
    add("euler-sequence", lambda r, t: (_text(r.as_euler("xyz")), "rotation",   # scipy: lower case = extrinsic
                                        _member("sequence=x-y-z axes=extrinsic", "euler"), {}))
    add("euler-intrinsic-vs-extrinsic", lambda r, t: (_text(r.as_euler("zyx")), "rotation",
                                                      _member("axes=extrinsic", "euler"), {}))
    add("degrees-read-as-radians", lambda r, t: (_text(r.as_euler("ZYX", degrees=True)), "rotation",
                                                 _member("unit=degrees", "euler"), {}))
    add("rotation-vector", lambda r, t: (_text(r.as_rotvec()), "rotation",      # scipy: as_rotvec
                                         _member("", "rotation-vector"), {}))
    add("matrix-column-major", lambda r, t: (_text(r.as_matrix().T), "rotation",
                                             _member("layout=column-major", "matrix"), {}))
    add("transform-column-major", lambda r, t: (_text(_h(r, t).T), "pose",
                                                _member("layout=column-major", "transform"), {}))
    add("inverse-transform", lambda r, t: (_text([*(-(r.inv().apply(t))), *_q_first(r.inv())]), "pose",
                                           _member(relation="inverse"), {}))         # scipy: inv, apply
    add("rotation-transposed", lambda r, t: (_text([*t, *_q_first(r.inv())]), "pose",
                                             _member(relation="rotation-transposed"), {}))
    add("parent-remap-enu-ned", lambda r, t: (_text([*(ENU_NED @ t), *_q_first(Rotation.from_matrix(ENU_NED) * r)]),
                                              "pose", _member(p=ENU_NED), {}))
    add("child-remap-flu-frd", lambda r, t: (_text([*t, *_q_first(r * Rotation.from_matrix(FLU_FRD))]), "pose",
                                             _member(q=FLU_FRD), {}))
    add("millimetres", lambda r, t: (_text([*(1000 * t), *_q_first(r)]), "pose", _member(scale=1e-3), {}))
    add("translation-in-child-axes", lambda r, t: (_text([*r.inv().apply(t), *_q_first(r)]), "pose",
                                                   _member(frame="child-axes"), {}))
    add("translation-of-inverse", lambda r, t: (_text([*(-r.inv().apply(t)), *_q_first(r)]), "pose",
                                                _member(frame="inverse-translation"), {}))
    add("quaternion-before-position", lambda r, t: (_text([*_q_first(r), *t]), "pose",
                                                    _member(position_first=False), {}))
    add("handedness-flip", lambda r, t: (_text(r.as_matrix() @ MIRROR_Z), "rotation",
                                         _member(q=MIRROR_Z, kind="matrix"), {"reflections": True}))
    # --- combinations of two -------------------------------------------------------------
    add("scalar-last+inverse", lambda r, t: (_text([*(-(r.inv().apply(t))), *_q_last(r.inv())]), "pose",
                                             _member("scalar=last", relation="inverse"), {}))
    add("degrees+sequence", lambda r, t: (_text(r.as_euler("xyz", degrees=True)), "rotation",
                                          _member("sequence=x-y-z axes=extrinsic unit=degrees", "euler"), {}))
    add("column-major+millimetres", lambda r, t: (_text(_h(r, 1000 * t).T), "pose",
                                                  _member("layout=column-major", "transform", scale=1e-3), {}))
    add("jpl+enu-ned", lambda r, t: (_text([*(ENU_NED @ t),
                                            *(_q_first(Rotation.from_matrix(ENU_NED) * r) * [1, -1, -1, -1])]),
                                     "pose", _member("algebra=jpl", p=ENU_NED), {}))
    add("optical-child+scalar-last", lambda r, t: (_text([*t, *_q_last(r * Rotation.from_matrix(OPTICAL.T))]),
                                                   "pose", _member("scalar=last", q=OPTICAL.T), {}))
    add("rotation-vector+degrees", lambda r, t: (_text(r.as_rotvec(degrees=True)), "rotation",
                                                 _member("unit=degrees", "rotation-vector"), {}))
    add("inverse+millimetres", lambda r, t: (_text([*(-1000 * r.inv().apply(t)), *_q_first(r.inv())]), "pose",
                                             _member(relation="inverse", scale=1e-3), {}))
    return s


def _h(rot, t):
    m = np.eye(4)
    m[:3, :3] = rot.as_matrix()                   # scipy: as_matrix
    m[:3, 3] = t
    return m


SCENARIOS = _scenarios()


@pytest.mark.parametrize("seed", range(12))
@pytest.mark.parametrize("name, build", SCENARIOS)
def test_injected_error_ranks_first(name, build, seed):
    rot, t = _truth(seed)
    observed, what, want, options = build(rot, t)
    expected = _h(rot, t) if what == "pose" else rot.as_matrix()
    d = diagnose(expected, observed, **options)
    best = d.best
    if not any(_matches(m, want) for m in best.members):
        # Only allowed when the data cannot separate them: a truth within a degree of a
        # half turn is nearly its own transpose, so "no error" fits within tolerance and
        # the prior puts it first -- then the near tie must be flagged and the injected
        # error must come second.
        assert d.near_tie, (name, seed, best.sentence)
        assert any(_matches(m, want) for m in d.explanations[1].members), (name, seed, best.sentence)
        assert best.rotation_residual < 2 * math.radians(0.5)
        assert abs(math.degrees(rot.magnitude()) - 180) < 1.0                  # scipy: Rotation.magnitude
        return
    assert best.rotation_residual < 1e-6
    if what == "pose":
        assert best.translation_residual < 1e-5
    if best.handedness_flip:
        assert options.get("reflections")
        return
    # the corrected pose is the truth (scipy: Rotation.as_matrix)
    assert np.allclose(best.corrected_rotation, rot.as_matrix(), atol=1e-6)
    if what == "pose":
        assert np.allclose(best.corrected_translation, t, atol=1e-5)
    # the snippet reads the numbers the corrected way
    scope = {}
    exec(best.code, scope)  # posekit's own generated code
    assert np.allclose(scope["R"], rot.as_matrix(), atol=1e-6), best.code
    if what == "pose":
        assert np.allclose(scope["t"], t, atol=1e-5), best.code
    assert best.sentence.endswith(".") and best.sentence[0].isupper()


def test_every_family_and_two_at_a_time_are_covered():
    names = [p.values[0] for p in SCENARIOS]
    assert sum("+" in n for n in names) >= 5 and len(names) - sum("+" in n for n in names) >= 15


def test_the_issue_example_sentence():
    rot, _ = _truth(3)
    d = diagnose(rot.as_matrix(), _text(_q_last(rot)))
    assert d.best.sentence == "The quaternion was written scalar-last but read scalar-first."
    assert d.best.deviations == 1
    # 4 readings of the four numbers x 4 relations (as stated, rotation transposed, inverse, both) x 48 x 48
    # remaps: reflections are always scored
    assert d.hypotheses_scored == 4 * 4 * 48 * 48


def test_jpl_and_transpose_are_reported_indistinguishable():
    rot, _ = _truth(5)
    d = diagnose(rot.as_matrix(), _text(_q_first(rot) * [1, -1, -1, -1]))
    members = d.best.members
    assert any(_matches(m, _member("algebra=jpl")) for m in members)
    assert any(_matches(m, _member(relation="rotation-transposed")) for m in members)
    assert d.best.indistinguishable and "the same mistake written another way" in d.summary()


def test_no_error_is_said_plainly():
    rot, t = _truth(8)
    d = diagnose(_h(rot, t), _text([*t, *_q_first(rot)]))
    assert d.best.sentence.startswith("The numbers match")
    assert d.best.deviations == 0


def test_near_tie_is_flagged():
    # a turn 0.2 degrees short of 180: its transpose is only 0.4 degrees away (geodesic), so
    # "read as is" and "transposed" nearly tie under the 0.5 degree tolerance
    rot = Rotation.from_rotvec([0, 0, math.pi - math.radians(0.2)])   # scipy: from_rotvec
    d = diagnose(rot.as_matrix(), _text(_q_first(rot.inv())))
    assert d.near_tie and d.best.near_tie and d.explanations[1].near_tie
    top_two = d.explanations[0].members + d.explanations[1].members
    assert any(_matches(m, _member(relation="rotation-transposed")) for m in top_two)
    assert "nearly tie" in d.summary()


def test_reflection_is_noted_without_the_option_and_counted_with_it():
    rot, _ = _truth(9)
    obs = _text(rot.as_matrix() @ MIRROR_Z)
    plain = diagnose(rot.as_matrix(), obs, reflections=False)
    assert any("reflection" in n for n in plain.notes)
    assert plain.best.rotation_residual > math.radians(30) and not plain.explained
    flip = diagnose(rot.as_matrix(), obs)          # reflections are scored by default
    assert flip.best.handedness_flip and "handedness flip" in flip.best.sentence.lower()
    assert flip.hypotheses_scored == 2 * 4 * 48 * 48


def test_assumed_convention_changes_the_sentence():
    rot, _ = _truth(4)
    d = diagnose(rot.as_matrix(), _text(_q_first(rot)), assumed="scalar=last")
    assert d.best.sentence == "The quaternion was written scalar-first but read scalar-last (stated)."


def test_description_parser_against_scipy():
    p = pose_from_words("pitched 25 degrees down, 0.3 m forward")
    # scipy: Rotation.from_euler("y", +25 deg); in FLU a positive turn about +y puts the nose down
    # (right-hand rule, common practice)
    assert np.allclose(p.rotation, Rotation.from_euler("y", 25, degrees=True).as_matrix())
    assert np.allclose(p.translation, [0.3, 0, 0])
    p = pose_from_words("yawed 30 deg left then pitched up 10 degrees; 20 cm left and 5 mm down")
    ref = Rotation.from_euler("ZY", [30, -10], degrees=True)                  # scipy: intrinsic z then y
    assert np.allclose(p.rotation, ref.as_matrix())
    assert np.allclose(p.translation, [0, 0.2, -0.005])
    p = pose_from_words("rolled 0.5 rad right, turned 90 degrees about -z")
    ref = Rotation.from_rotvec([0.5, 0, 0]) * Rotation.from_euler("z", -90, degrees=True)  # scipy: a * b = A @ B
    assert np.allclose(p.rotation, ref.as_matrix())
    assert np.allclose(pose_from_words("level").rotation, I3)


@pytest.mark.parametrize("text, offset", [("pitched 25 down", 11), ("flew 3 m forward", 0),
                                          ("pitched 25 degrees sideways", 0), ("0.3 forward", 4),
                                          ("turned 90 degrees around z", 18), ("", 0)])
def test_description_errors_are_typed_with_positions(text, offset):
    with pytest.raises(DescriptionError) as info:
        pose_from_words(text)
    assert isinstance(info.value, PoseInputError)
    assert f"offset {offset}" in str(info.value)


def test_expected_pose_reads_any_representation_under_its_convention():
    ref = Rotation.from_euler("ZYX", [30, -10, 5], degrees=True).as_matrix()   # scipy: intrinsic ZYX
    assert np.allclose(expected_pose([30, -10, 5], "euler", "unit=degrees").rotation, ref)
    assert np.allclose(expected_pose("30 -10 5", convention="unit=degrees").rotation, ref)
    q = Rotation.from_matrix(ref).as_quat()                                     # scipy: scalar last
    assert np.allclose(expected_pose(list(q), convention="scalar=last").rotation, ref)
    e = expected_pose([1, 2, 3, *q], convention="scalar=last")
    assert np.allclose(e.translation, [1, 2, 3]) and np.allclose(e.rotation, ref)
    with pytest.raises(PoseInputError):
        expected_pose([1, 2, 3, 4, 5])


def test_remaps_are_the_signed_permutations():
    r = axis_remaps(True)
    assert len({m.tobytes() for m in r}) == 48
    assert np.allclose(np.swapaxes(r, 1, 2) @ r, I3)
    d = np.linalg.det(r)
    assert np.all(d[:24] > 0) and np.all(d[24:] < 0) and np.array_equal(r[0], I3)
    assert describe_remap(ENU_NED).startswith("ENU <-> NED")
    assert "handedness" in describe_remap(MIRROR_Z)


# --- batch -----------------------------------------------------------------------------------

def _batch(n, seed):
    rots = Rotation.random(n, random_state=seed)                                # scipy: Rotation.random
    t = np.random.default_rng(seed).normal(size=(n, 3))
    m = np.zeros((n, 4, 4))
    m[:, :3, :3] = rots.as_matrix()
    m[:, :3, 3] = t
    m[:, 3, 3] = 1
    return rots, t, m


def test_batch_finds_the_single_error():
    rots, t, m = _batch(300, 1)
    noise = Rotation.from_rotvec(RNG.normal(scale=math.radians(0.05), size=(300, 3)))
    obs = np.hstack([t, (rots * noise).as_quat()])                              # scipy: scalar last
    b = diagnose_batch(m, obs)
    assert any(_matches(mm, _member("scalar=last")) for mm in b.best.members)
    assert b.consistent and b.offset is None
    assert b.rotation_residuals.shape == (300,)
    assert b.statistics["rotation_max_degrees"] < 0.3
    # per-pair residuals equal scipy's geodesic magnitude of the injected noise (scipy: Rotation.magnitude)
    assert np.allclose(b.rotation_residuals, noise.magnitude(), atol=1e-9)
    assert "consistent with every pair" in b.summary()


def test_batch_two_errors_at_once():
    rots, t, m = _batch(200, 2)
    inv = rots.inv()
    obs = np.hstack([-1000 * inv.apply(t), inv.as_quat(scalar_first=True)])
    b = diagnose_batch(m, obs)
    assert any(_matches(mm, _member(relation="inverse", scale=1e-3)) for mm in b.best.members)
    assert b.consistent and b.statistics["translation_max"] < 1e-9


def test_batch_left_offset_snaps_to_a_remap():
    rots, _, _ = _batch(400, 3)
    tilt = Rotation.from_rotvec([0.0, math.radians(0.7), 0.0])
    left = Rotation.from_matrix(ENU_NED) * tilt
    obs = (left * rots).as_quat(scalar_first=True)                             # scipy: composition, quat
    b = diagnose_batch(rots.as_matrix(), obs, rotation_tolerance=math.radians(0.1))
    assert not b.consistent and b.offset is not None
    assert b.offset.side == "left"
    assert np.allclose(b.offset.rotation, left.as_matrix(), atol=1e-9)
    assert np.array_equal(b.offset.snapped_remap, ENU_NED)
    assert abs(math.degrees(b.offset.snap_angle) - 0.7) < 1e-6
    # Wahba's SVD solution equals the Markley et al. 2007 quaternion average of M_i R_i^T
    per_pair = Rotation.from_quat(obs, scalar_first=True) * rots.inv()
    assert np.allclose(average_rotation(per_pair.as_matrix()), b.offset.rotation, atol=1e-9)


def test_batch_right_offset_is_a_mount_offset():
    rots, t, m = _batch(300, 4)
    mount = Rotation.from_euler("ZYX", [7, 3, -2], degrees=True)
    lever = np.array([0.1, -0.05, 0.2])
    obs_rot = rots * mount
    obs_t = t + rots.apply(lever)                                               # scipy: Rotation.apply
    b = diagnose_batch(m, np.hstack([obs_t, obs_rot.as_quat(scalar_first=True)]))
    assert not b.consistent
    o = b.offset
    assert o.side == "right" and o.snapped_remap is None
    assert np.allclose(o.rotation, mount.as_matrix(), atol=1e-9)
    assert np.allclose(o.translation, lever, atol=1e-9)
    assert np.max(o.residuals) < 1e-9 and np.max(o.translation_residuals) < 1e-9
    assert "mounting or calibration" in o.sentence


def test_batch_shapes_are_checked():
    rots, _, _ = _batch(5, 6)
    with pytest.raises(PoseInputError):
        diagnose_batch(rots.as_matrix(), np.zeros((4, 4)))


def test_observed_text_errors_propagate_typed():
    with pytest.raises(PoseInputError):
        diagnose(I3, "1 2 abc")
    with pytest.raises(PoseInputError):
        diagnose(I3, "1 2 3 4 5")


def test_batch_snippet_runs_over_the_logged_rows():
    rots, t, m = _batch(40, 7)
    obs = np.hstack([rots.inv().as_quat(), 1000 * t])          # scipy: scalar last; quaternion first, mm
    b = diagnose_batch(m, obs)
    scope = {"logged_numbers": obs}
    exec(b.best.code, scope)  # posekit's own generated code
    assert np.allclose(scope["R"], rots.as_matrix(), atol=1e-9)  # scipy: Rotation.as_matrix
    assert np.allclose(scope["t"], t, atol=1e-9)


def test_named_observed_components_are_diagnosed():
    rot, t = _truth(21)
    q = rot.inv().as_quat()                                                     # scipy: scalar last
    text = (f"position:\n  x: {t[0]:.9f}\n  y: {t[1]:.9f}\n  z: {t[2]:.9f}\norientation:\n"
            f"  x: {q[0]:.9f}\n  y: {q[1]:.9f}\n  z: {q[2]:.9f}\n  w: {q[3]:.9f}")
    d = diagnose(_h(rot, t), text)
    # the names fix which number is w (typed last here, so said back and corrected scalar-last): the
    # scalar position is no slip, only the transpose is
    assert "(x, y, z, w)" in d.assumed_reading
    assert any(_matches(m, _member("scalar=last", relation="rotation-transposed")) for m in d.best.members) or \
        any(_matches(m, _member("scalar=last algebra=jpl")) for m in d.best.members)
    assert "scalar" not in d.best.sentence  # the names fixed where w sits: not a mistake
    got = np.asarray(d.best.corrected_numbers)
    assert np.allclose(got[:3], t, atol=1e-8)
    assert min(np.abs(got[3:] - s * rot.as_quat()).max() for s in (1, -1)) < 1e-8   # scipy: x, y, z, w as typed
    scope = {}
    exec(d.best.code, scope)  # posekit's own generated code
    assert np.allclose(scope["R"], rot.as_matrix(), atol=1e-6) and np.allclose(scope["t"], t, atol=1e-6)


def test_batch_offset_is_fitted_under_the_right_reading():
    rots, _, _ = _batch(200, 9)
    mount = Rotation.from_euler("ZYX", [4, -2, 1], degrees=True)
    obs = (rots * mount).as_quat()                                              # scipy: scalar last
    b = diagnose_batch(rots.as_matrix(), obs, rotation_tolerance=math.radians(0.1))
    assert not b.consistent
    assert b.offset.side == "right" and "(x, y, z, w)" in b.offset.sentence
    assert np.allclose(b.offset.rotation, mount.as_matrix(), atol=1e-9)         # scipy: as_matrix


def test_small_constant_offset_is_not_snapped_to_the_identity():
    """A 2-degree mount offset is a calibration offset, not 'a 0-degree remap' (regression)."""
    import warnings

    from scipy.spatial.transform import Rotation as S  # reference conversions: scipy

    from posekit.analysis import describe_remap, diagnose_batch

    rng = np.random.default_rng(5)
    angles = rng.uniform(-60, 60, (12, 3))
    truth = S.from_euler("ZYX", angles, degrees=True)
    logged = (truth * S.from_euler("z", 2.0, degrees=True)).as_quat()  # scalar last
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        result = diagnose_batch(angles, logged, expected_kind="euler",
                                expected_convention="sequence=z-y-x unit=degrees")
        assert describe_remap(np.eye(3)).startswith("no remap")
    offset = result.offset
    assert offset is not None and offset.snapped_remap is None
    assert "no axis remap" in offset.sentence and "0-degree" not in offset.sentence


# --- the unit nobody stated, and the guess said back as values ---------------------------------------

def test_unstated_observed_angles_are_degrees_so_no_slip_comes_first():
    d = diagnose("yawed 90 degrees left", "90 0 0")
    assert d.explained and d.best.deviations == 0
    assert d.verdict == "The numbers match the expected pose as you read them: no convention error."
    assert "in degrees" in d.assumed_reading and "unit=degrees" in d.assumed_reading   # read so, not stated
    # radians typed without a unit: the slip is named, and a note says the magnitudes looked like radians
    rad = diagnose("yawed 90 degrees left", "1.5707963268 0 0")
    assert rad.best.sentence == "The angles were written in radians but read as degrees."
    assert any("look like radians" in n for n in rad.notes)
    np.testing.assert_allclose(rad.best.corrected_numbers, [90, 0, 0], atol=1e-8)   # degrees, as read


def test_unstated_expected_angles_are_degrees_and_the_other_unit_is_scored():
    ref = Rotation.from_euler("ZYX", [30, -10, 5], degrees=True).as_matrix()   # scipy: intrinsic ZYX
    e = expected_pose("30 -10 5")
    assert np.allclose(e.rotation, ref)
    (r2, _, dev, words), = e.alternatives
    assert np.allclose(r2, Rotation.from_euler("ZYX", [30, -10, 5]).as_matrix())   # scipy: radians
    assert dev == 3.0 and "radians" in words          # beyond 2 pi: radians is implausible, charged more
    small = expected_pose("0.5 0.2 0.1")
    assert np.allclose(small.rotation, Rotation.from_euler("ZYX", [0.5, 0.2, 0.1], degrees=True).as_matrix())
    assert small.alternatives[0][2] == 0.5          # fractions within 2 pi point to radians: charged less
    whole = expected_pose("5 0 0")
    assert whole.alternatives[0][2] == 1.0 and whole.guess.suggests is None
    # a stated unit is not second-guessed
    assert expected_pose("0.5 0.2 0.1", convention="unit=radians").alternatives == ()


@pytest.mark.parametrize("text, kind, count, alternatives", [
    ("30 -10 5", "euler", 3, [("kind", "rotation-vector"), ("unit", "radians")]),
    ("0 0 0 1", "quaternion", 4, [("scalar", "last")]),
    ("1 2 3 10 20 30", "position-euler", 6, [("kind", "position-rotation-vector"), ("unit", "radians")]),
    ("1 2 3 0 0 0 1", "position-quaternion", 7, [("scalar", "last")]),
    ("1 0 0 0 1 0 0 0 1", "matrix", 9, [("layout", "column-major")]),
    ("1 0 0 0 0 1 0 -1 0 0 1 0", "transform", 12, [("layout", "column-major")]),   # a rotation both ways
    (" ".join(map(str, np.eye(4).ravel())), "transform", 16, [("layout", "column-major")]),
])
def test_the_guess_names_kind_count_and_the_other_readings(text, kind, count, alternatives):
    g = expected_pose(text).guess
    assert (g.source, g.kind, g.count, g.kind_from) == ("numbers", kind, count, "count")
    assert [(c.field, c.value) for c in g.alternatives] == alternatives
    # every alternative, passed back as its kind and convention, reads the input that way
    for c in g.alternatives:
        again = expected_pose(text, c.kind, c.convention).guess
        assert again.kind == c.kind
        if c.field != "kind":
            assert getattr(pk_convention(c.convention), c.field) == c.value
            assert c.field in c.convention


def pk_convention(text):
    from posekit.core.convention import Convention

    return Convention.parse(text)


def test_the_guess_line_and_note_in_words():
    g = expected_pose("30 -10 90").guess
    assert g.line() == "read as: Euler angles z-y-x in degrees (from 3 numbers; magnitudes up to 90)"
    assert g.note() == "" and g.unit_from == "default" and g.largest == 90
    g = expected_pose("0.2 0.1 -0.3").guess
    assert g.suggests == "radians" and "look like radians" in g.note() and "no unit typed" in g.line()
    g = expected_pose("30 0 0", convention="unit=radians").guess
    assert g.suggests == "degrees" and g.unit_from == "stated" and "beyond 2 pi" in g.note()
    assert expected_pose("yaw=10 pitch=20 roll=30").guess.line().startswith(
        "read as: Euler angles z-y-x in degrees (from the names yaw, pitch, roll")
    assert expected_pose("pitched 10 degrees down").guess.source == "words"


def test_expected_rows_reads_every_row_as_one_pose():
    from posekit.analysis.diagnose import expected_rows

    angles = np.array([[30.0, -10.0, 5.0], [0.0, 0.0, 90.0], [5.0, 0.0, 0.0]])   # 3 x 3, yet no matrix
    e = expected_rows(angles)
    assert e.rotation.shape == (3, 3, 3) and e.guess.kind == "euler" and e.guess.count == 3
    assert np.allclose(e.rotation, Rotation.from_euler("ZYX", angles, degrees=True).as_matrix())  # scipy
    truth = Rotation.from_euler("ZYX", angles, degrees=True)
    b = diagnose_batch(angles, truth.as_quat())                                # scipy: scalar last
    assert b.best.sentence == "The quaternion was written scalar-last but read scalar-first."
