"""Laws of the explanation engine that no single scenario shows: a deterministic lead, equal
explanations told apart from separable ones truthfully, readings that parse, the expected side
said back, and the prior charging stated fields more.

Outside reference: scipy.spatial.transform.Rotation (named beside each use).  The JPL facts are
Trawny & Roumeliotis 2005 (DEVELOPERS.md, "Outside sources").
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.spatial.transform import Rotation

import posekit as pk
from posekit.analysis import diagnose
from posekit.explain import (STATED_COST, Candidate, ExpectedSide, Slip, angles_between, readings_of, score,
                             stated_reading)

TOL = math.radians(0.5)


def _text(values):
    return " ".join(f"{v:.12f}" for v in np.ravel(values))


def test_the_lead_of_identical_explanations_does_not_depend_on_the_sample():
    # JPL algebra, passive action and child-from-parent direction give the same matrix for every
    # quaternion (the transpose): whichever sample comes in, the same one must speak for them
    leads = set()
    for seed in range(25):
        rot = Rotation.random(random_state=seed)                        # scipy: Rotation.random
        q_jpl = rot.inv().as_quat(scalar_first=True)                    # scipy: JPL numbers = Hamilton of R^T
        d = diagnose(rot.as_matrix(), _text(q_jpl), expected_kind="matrix")
        assert d.explained and d.best.rotation_residual < 1e-9
        leads.add(d.best.sentence)
        assert len(d.best.equivalents) >= 2                               # the other two ways are listed
    assert len(leads) == 1, leads


def _ranking(seed, stated_text=None):
    rot = Rotation.random(random_state=seed)                            # scipy: Rotation.random
    stated = stated_reading(4, "quaternion", stated_text)
    numbers = rot.as_quat()[None]                                       # scipy: scalar last
    cands = [Candidate(r, numbers) for r in readings_of(stated)]
    side = ExpectedSide(rot.as_matrix()[None], None, 0.0, "scipy truth")
    return score(stated, cands, [side], rotation_tolerance=TOL, translation_tolerance=0.005, limit=5), numbers


@pytest.mark.parametrize("seed", range(6))
def test_same_means_same_for_every_input_and_separable_means_a_sample_separates(seed):
    ranking, numbers = _ranking(seed)
    rng = np.random.default_rng(1000 + seed)
    fresh = rng.normal(size=(7, 4))                                      # inputs the probe never saw
    fresh /= np.linalg.norm(fresh, axis=1, keepdims=True)
    for g in ranking.groups:
        r0, _ = g.lead.slip.decode(numbers)
        for h in g.same:
            ra, _ = g.lead.slip.decode(fresh)
            rb, _ = h.slip.decode(fresh)
            assert np.max(angles_between(ra, rb)) < 1e-9, "listed as the same mistake but differs on a new input"
        for h, sample in g.separable:
            r1, _ = h.slip.decode(numbers)
            assert angles_between(r0, r1)[0] < 1e-6                      # they agree on these numbers ...
            if sample is not None:                                       # ... and the sample shown separates them
                ra, _ = g.lead.slip.decode(sample[None])
                rb, _ = h.slip.decode(sample[None])
                assert angles_between(ra, rb)[0] > 1e-6


def test_every_reading_said_is_convention_text_posekit_reads():
    rot = Rotation.random(random_state=3)                               # scipy: Rotation.random
    d = diagnose(rot.as_matrix(), _text(rot.as_quat()), expected_kind="matrix")
    assert d.assumed_reading and "you stated no field" in d.assumed_reading
    data = d.as_dict()
    for e in data["explanations"]:
        pk.Convention.parse(e["reading_convention"])                    # never empty, always valid
    assert data["stated_reading"]["convention"] and data["expected_reading"].startswith("expected")


# one default unit everywhere: typed angles without a unit read as degrees (small fractions get a note)
@pytest.mark.parametrize("text, unit", [("10 20 30", "degrees"), ("0.1 0.2 -0.3", "degrees"),
                                        ("yaw=10 pitch=20 roll=30", "degrees"), ("[10, 20, 30]", "degrees")])
def test_the_expected_unit_is_said_back_and_both_are_scored(text, unit):
    rot = Rotation.from_quat([0.1, 0.2, 0.3, 0.9])                      # scipy: any turn, scalar last
    d = diagnose(text, _text(rot.as_quat()))
    assert f"read as {unit}" in d.expected_reading and "scored too" in d.expected_reading
    if text.startswith("0.1"):
        assert "look like radians" in d.expected_reading
    stated = diagnose(text + ("" if "=" in text else f" {unit}"), _text(rot.as_quat()),
                      expected_convention=None if "=" not in text else f"unit={unit}")
    assert stated.hypotheses_scored * 2 == d.hypotheses_scored           # a stated unit is not second-guessed
    assert "scored too" not in stated.expected_reading


def test_expected_unit_mix_up_is_named_with_the_expected_reading():
    # the classic: yaw-pitch-roll typed in degrees without a unit, the quaternion logged scalar-last
    truth = Rotation.from_euler("ZYX", [10, 20, 30], degrees=True)      # scipy: intrinsic z-y-x
    d = diagnose("10 20 30", _text(truth.as_quat()))                     # scipy: scalar last
    assert d.explained and d.best.sentence == "The quaternion was written scalar-last but read scalar-first."
    assert np.allclose(d.best.corrected_numbers, truth.as_quat(scalar_first=True), atol=1e-9)


def test_contradicting_a_stated_field_costs_more_than_a_default():
    stated = stated_reading(4, "quaternion", "scalar=first")
    free = stated_reading(4, "quaternion", None)
    assert Slip(stated, stated.with_fields(scalar="last")).deviations() == STATED_COST
    assert Slip(free, free.with_fields(scalar="last")).deviations() == 1.0
    # so with scalar stated and algebra free, an exact tie between "scalar" and "algebra" goes to algebra
    rot = Rotation.from_rotvec([0, 0, math.pi])                         # scipy: a half turn about z
    q = rot.as_quat(scalar_first=True)                                  # (0, 0, 0, 1): scalar-last identity
    d = diagnose(np.eye(3), _text(q), assumed="scalar=first", expected_kind="matrix")
    assert "scalar" not in d.best.sentence or d.best.deviations <= STATED_COST


def test_a_stated_direction_is_honoured_on_a_transform():
    rot = Rotation.random(random_state=11)                              # scipy: Rotation.random
    t = np.array([0.3, -0.1, 0.2])
    truth = pk.make_transform(rot.as_matrix(), t)
    inverse = np.linalg.inv(truth)                                      # numpy: the child-from-parent matrix
    d = diagnose(pk.Pose(truth), _text(inverse), assumed="direction=child-from-parent")
    assert d.explained and d.best.deviations == 0 and "no convention error" in d.verdict
    plain = diagnose(pk.Pose(truth), _text(inverse))
    assert plain.best.sentence.startswith("The numbers are child-from-parent")
    back = pk.read_transform(plain.best.corrected_numbers, "matrix")
    assert np.allclose(back, truth, atol=1e-9)


# --- cases a user found wrong (each reproduced from outside posekit, with scipy) -------------------

def test_a_scaled_matrix_is_refused_not_called_correct():
    # a rotation scaled by 0.5 (a similarity, not a rotation): no convention explains it
    r = Rotation.from_euler("z", 30, degrees=True).as_matrix()             # scipy
    with pytest.raises(pk.NotOrthonormalError, match="no convention explains"):
        diagnose("yawed 30 degrees left", _text(0.5 * r))
    with pytest.raises(pk.NotOrthonormalError):
        diagnose("level", "1 2 3 4 5 6 7 8 9")


@pytest.mark.parametrize("observed", ["0 0 0 0", "1e-300 0 0 0", "0 0 0 0 0 0 0"])
def test_a_zero_quaternion_is_a_typed_error(observed):
    with pytest.raises(pk.ZeroQuaternionError, match="zero length"):
        diagnose("level", observed)


def test_degrees_read_as_radians_is_named_even_against_a_stated_unit():
    # yaw-pitch-roll typed by name in degrees; the same numbers pasted as the observed Euler angles,
    # read as radians because the user said so: the stated unit is the slip
    d = diagnose("yaw=70 pitch=51 roll=-153", "70 51 -153", assumed="unit=radians")
    assert d.explained and d.best.sentence == "The angles were written in degrees but read as radians (stated)."
    truth = Rotation.from_euler("ZYX", [70, 51, -153], degrees=True).as_matrix()   # scipy: intrinsic z-y-x
    assert np.allclose(pk.read_rotation(d.best.corrected_numbers, "euler", "unit=radians"), truth, atol=1e-9)


def test_a_verdict_never_hides_a_deviation_of_the_expected_side():
    # the observed quaternion is the turn of yaw-pitch-roll (70, 51, -153) in radians: the only way to
    # match is to read the expected angles as radians, which their size makes unlikely -- the verdict says so
    q = Rotation.from_euler("ZYX", [70, 51, -153]).as_quat(scalar_first=True)  # scipy: radians, intrinsic
    d = diagnose("yaw=70 pitch=51 roll=-153", _text(q))
    assert d.explained and "no convention error" not in d.verdict
    assert "meant in radians" in d.verdict


def test_two_explanations_that_both_fit_are_a_near_tie():
    # identity expected, (0 0 0 1) observed with scalar=first stated: scalar-last fits, and so does a
    # 180-degree turn of the parent axes read as stated -- the prior decides, and says so
    d = diagnose("level", "0 0 0 1", assumed="scalar=first")
    assert d.explained and d.near_tie and d.as_dict()["near_tie"]
    assert d.best.sentence == "The quaternion was written scalar-last but read scalar-first (stated)."
    assert any("remapped" in s for s, _ in d.best.separable)   # listed: fits these numbers, another sample tells


def test_named_quaternion_components_are_said_back_and_corrected_in_the_order_typed():
    rot = Rotation.from_euler("z", -90, degrees=True)                          # scipy
    q = rot.as_quat()                                                            # x, y, z, w
    text = (f"position:\n  x: -2.0\n  y: 1.0\n  z: 0.5\norientation:\n  x: {q[0]:.9f}\n  y: {q[1]:.9f}\n"
            f"  z: {q[2]:.9f}\n  w: {q[3]:.9f}")
    truth = pk.make_transform(rot.as_matrix(), [-2.0, 1.0, 0.5])
    d = diagnose(pk.Pose(truth), text)
    assert "(x, y, z, w)" in d.assumed_reading and d.best.deviations == 0
    got = np.asarray(d.best.corrected_numbers)
    assert min(np.abs(got - np.r_[-2.0, 1.0, 0.5, s * q]).max() for s in (1, -1)) < 1e-8


def test_an_expected_matrix_printed_with_six_digits_is_read_not_refused():
    truth = Rotation.from_euler("ZYX", [-139.3, -28.1, -17.0], degrees=True)  # scipy
    t = np.array([-0.35, -1.06, -1.33])
    m = pk.make_transform(truth.as_matrix(), t)
    printed = " ".join(f"{v:.6f}" for v in m.ravel())
    d = diagnose(printed, _text([*t, *truth.as_quat()]))                    # scipy: logged scalar-last
    assert d.explained and "scalar-last" in d.best.sentence
    assert "nearest rotation" in d.expected_reading


def test_the_expected_kind_is_honoured_for_named_values():
    rv = np.array([1.2, -0.3, 0.5])
    q = Rotation.from_rotvec(rv).as_quat(scalar_first=True)                     # scipy: rotation vector
    d = diagnose("rx=1.2 ry=-0.3 rz=0.5", _text(q), expected_kind="rotation-vector",
                 expected_convention="unit=radians")
    assert d.explained and d.best.deviations == 0 and "rotation vector" in d.expected_reading


def test_the_expected_side_convention_is_used_but_not_stated_for_the_observed_numbers():
    rot = Rotation.random(random_state=8)                                      # scipy
    d = diagnose(_text(rot.as_quat()), _text(rot.as_quat()), expected_convention="scalar=last")
    assert d.best.deviations == 0 and "stating nothing" in d.assumed_reading
    assert "you stated no field" in d.assumed_reading
