"""Trajectory checks: injected faults are found at the right rows, clean data gives nothing.

Facts used: scipy.spatial.transform.Rotation (magnitude of relative rotations) for turn
rates; q and -q are one rotation (double cover; common practice); gimbal lock at
middle angle ±90 degrees Tait-Bryan (common practice); a ground vehicle turns mostly
about its vertical axis (common practice); ENU <-> NED remap and y-up frames as in
DEVELOPERS.md ("Outside sources").  All trajectories here are invented test data;
the expected rows are where the faults were injected.
"""

import io
import itertools

import numpy as np
import pytest
from scipy.spatial.transform import Rotation

import posekit as pk
from posekit.analysis import (EmptyTrajectoryError, MissingColumnError, TrajectoryInputError, check_trajectory,
                              check_trajectory_csv, read_trajectory_csv, sign_continuous)
from posekit.core.convention import CHOICES
from posekit.core.errors import PoseInputError, WrongShapeError, WrongTypeError

N = 3000
DT = 0.01
ZYX = pk.Convention(sequence="z-y-x", unit="radians")


def ground_angles(n=N):
    """Yaw, pitch, roll (radians) of an invented delivery robot: slow turns, small tilts."""
    t = np.arange(n) * DT
    yaw = 1.2 * np.sin(0.4 * t) + 0.03 * t      # stays inside (-pi, pi]: no wraps in clean data
    pitch = 0.03 * np.sin(1.3 * t)
    roll = 0.02 * np.cos(0.9 * t)
    return t, np.stack([yaw, pitch, roll], axis=-1)


def ground_quaternions(n=N, conv=ZYX):
    t, a = ground_angles(n)
    q = pk.write_rotation(pk.read_rotation(a, "euler", ZYX), "quaternion", conv)
    return t, sign_continuous(q)


def counts_without(report, *names):
    return {k: v for k, v in report.counts().items() if k not in names}


def test_clean_smooth_trajectory_has_no_findings():
    t, q = ground_quaternions()
    rep = check_trajectory(t, q, "quaternion", ZYX, rate_limit=5.0, ground_vehicle=True)
    assert all(v == 0 for v in rep.counts().values()), rep.summary()
    assert rep.prior.passed is True
    assert np.array_equal(rep.quaternion, q)
    assert np.all(rep.used) and rep.rejected == ()
    # rates agree with the known motion: |omega| from finite differences of the angles
    assert np.nanmax(rep.rate) < 1.0 and np.isnan(rep.rate[0])
    t2, a = ground_angles()
    rep_e = check_trajectory(t2, a, "euler", ZYX, rate_limit=5.0, ground_vehicle=True)
    assert all(v == 0 for v in rep_e.counts().values()), rep_e.summary()
    assert np.allclose(rep_e.rate[1:], rep.rate[1:], atol=1e-9)
    R = pk.read_rotation(a, "euler", ZYX)
    rep_m = check_trajectory(t2, R, "matrix", ZYX, rate_limit=5.0, ground_vehicle=True)
    assert all(v == 0 for v in rep_m.counts().values()), rep_m.summary()


def test_injected_sign_flips_are_found_and_undone():
    t, q = ground_quaternions()
    bad = q.copy()
    bad[100:200] *= -1       # a run logged with the other sign
    bad[500] *= -1           # a single flipped row
    rep = check_trajectory(t, bad, "quaternion", ZYX)
    f = rep.findings["quaternion_sign_flips"]
    assert f.rows.tolist() == [100, 200, 500, 501]
    assert [(s.first_row, s.last_row) for s in f.spans] == [(100, 100), (200, 200), (500, 501)]
    assert f.spans[0].first_time == t[100]
    assert np.allclose(rep.quaternion, q, atol=0)   # the sign-continuous copy is the clean stream
    assert counts_without(rep, "quaternion_sign_flips") == {k: 0 for k in counts_without(rep, "quaternion_sign_flips")}
    # a flip is not a jump in attitude: no rate spike
    assert np.nanmax(rep.rate) < 1.0


def test_injected_euler_wraps_are_found_and_unwrapped():
    t, a = ground_angles()
    a[:, 0] = 0.004 * np.arange(N)               # yaw turns steadily through several half turns
    logged = a.copy()
    logged[:, 0] = np.remainder(logged[:, 0] + np.pi, 2 * np.pi) - np.pi
    expected = np.flatnonzero(np.abs(np.diff(logged[:, 0])) > np.pi) + 1
    assert expected.size >= 2
    rep = check_trajectory(t, logged, "euler", ZYX, ground_vehicle=True)
    assert rep.findings["euler_wraps"].rows.tolist() == expected.tolist()
    assert np.allclose(rep.euler, a, atol=1e-12)
    assert rep.prior.passed
    # in degrees the same law holds with a 360 period
    deg = ZYX.changed(unit="degrees")
    rep_d = check_trajectory(t, np.degrees(logged), "euler", deg)
    assert rep_d.findings["euler_wraps"].rows.tolist() == expected.tolist()
    assert np.allclose(rep_d.euler, np.degrees(a), atol=1e-9)


def test_injected_time_faults_are_found_at_their_rows():
    t, q = ground_quaternions()
    t = t.copy()
    t[400] = t[399]                       # duplicate
    t[600] = t[599] - 0.5 * DT            # goes back
    t[1000:] += 0.2                       # a 0.2 s gap (20 steps) before row 1000
    rep = check_trajectory(t, q, "quaternion", ZYX)
    assert rep.findings["time_duplicates"].rows.tolist() == [400]
    assert rep.findings["time_backwards"].rows.tolist() == [600]
    assert rep.findings["time_gaps"].rows.tolist() == [1000]
    assert "time_gaps: 1 row in 1 span -- row 1000 (t = 10.2)" in rep.summary()
    assert "5 x the median" in rep.settings["gap_limit"]
    assert np.isnan(rep.rate[400]) and np.isnan(rep.rate[600])
    assert rep.findings["quaternion_sign_flips"].count == 0
    rep2 = check_trajectory(t, q, "quaternion", ZYX, gap_limit=0.5)
    assert rep2.findings["time_gaps"].count == 0


def test_injected_norm_drift_and_rate_spike():
    t, q = ground_quaternions()
    bad = q.copy()
    bad[700] *= 1.01
    bad[800:810] *= 0.99
    turn = pk.write_rotation(pk.read_rotation([0.5, 0, 0], "euler", ZYX), "quaternion", ZYX)
    bad[900] = pk.quaternion_product(turn, q[900], ZYX)     # one row 0.5 rad off
    rep = check_trajectory(t, bad, "quaternion", ZYX, rate_limit=5.0)
    drift = rep.findings["quaternion_norm_drift"]
    assert drift.rows.tolist() == [700] + list(range(800, 810))
    assert [(s.first_row, s.last_row) for s in drift.spans] == [(700, 700), (800, 809)]
    assert rep.findings["rate_above_limit"].rows.tolist() == [900, 901]
    assert abs(rep.rate[900] - 0.5 / DT) < 2.0
    assert any("q/|q|" in n for n in rep.notes)
    assert rep.findings["quaternion_sign_flips"].count == 0


def test_spans_near_gimbal_lock():
    t = np.arange(400) * DT
    pitch = np.radians(np.linspace(60, 120, 400))       # climbs through 90 degrees
    a = np.stack([0.3 + 0 * t, pitch, 0.2 + 0 * t], axis=-1)
    rep = check_trajectory(t, a, "euler", ZYX, lock_margin=np.radians(5))
    rows = rep.findings["near_gimbal_lock"].rows
    expected = np.flatnonzero(np.abs(np.degrees(pitch) - 90) < 5)
    assert rows.tolist() == expected.tolist()
    assert len(rep.findings["near_gimbal_lock"].spans) == 1
    assert np.allclose(rep.pole_distance, np.abs(np.pi / 2 - pitch), atol=1e-9)


def test_matrix_rows_that_are_not_rotations_are_rejected_and_listed():
    t, a = ground_angles(500)
    R = pk.read_rotation(a, "euler", ZYX).copy()
    R[50] *= 1.001                         # scaled: not orthonormal
    R[60] = R[60] @ np.diag([1, 1, -1])    # a reflection
    R[70, 0, 0] = np.nan
    rep = check_trajectory(t, R, "matrix", ZYX)
    assert rep.findings["non_orthonormal"].rows.tolist() == [50]
    assert [r.row for r in rep.rejected] == [50, 60, 70]
    reasons = [r.reason for r in rep.rejected]
    assert "not orthonormal" in reasons[0] and "reflection" in reasons[1] and "NaN" in reasons[2]
    assert rep.used.sum() == 497 and np.isnan(rep.euler[60]).all()
    assert rep.counts()["rejected"] == 3
    flat = check_trajectory(t, R.reshape(-1, 9), "matrix", ZYX)
    assert [r.row for r in flat.rejected] == [50, 60, 70]


def test_nan_rows_are_skipped_and_neighbours_compared_across_them():
    t, q = ground_quaternions(300)
    bad = q.copy()
    bad[150] = np.nan
    bad[151:] *= -1                          # a flip right after the NaN row
    tt = t.copy()
    tt[200] = np.nan
    bad[250] = 0.0
    rep = check_trajectory(tt, bad, "quaternion", ZYX)
    assert [(r.row, r.reason.split(":")[0]) for r in rep.rejected] == [
        (150, "a pose value is NaN or infinite"), (200, "the timestamp is NaN or infinite"),
        (250, "the quaternion has zero length")]
    assert rep.findings["quaternion_sign_flips"].rows.tolist() == [151]
    assert rep.findings["time_gaps"].count == 0   # a single skipped row is a 2-step gap, under 5x
    assert np.isnan(rep.quaternion[[150, 200, 250]]).all()
    keep = np.setdiff1d(np.arange(300), [150, 200, 250])
    assert np.allclose(rep.quaternion[keep], q[keep], atol=0)


def test_ground_vehicle_prior_names_the_axis_swap():
    t, a = ground_angles()
    R = pk.read_rotation(a, "euler", ZYX)
    # logged in a y-up world and body (x, y, z) -> (x, z, -y): P R P^T with P a proper remap
    P = np.array([[1.0, 0, 0], [0, 0, 1], [0, -1, 0]])
    rep = check_trajectory(t, P @ R @ P.T, "matrix", ZYX, ground_vehicle=True)
    assert rep.prior.passed is False
    assert rep.prior.world_share[1] > 0.9 and rep.prior.body_share[1] > 0.9
    text = " ".join(rep.prior.suggestions)
    assert "parent (world) frame turns about its y axis" in text and "child (body) frame" in text
    assert "swapping its y and z axes" in text


def test_ground_vehicle_prior_names_the_order_mix_up():
    t, a = ground_angles()
    R = pk.read_rotation(a, "euler", ZYX)
    xyz = pk.Convention(sequence="x-y-z", axes="extrinsic")
    logged = pk.write_rotation(R, "euler", xyz)          # (roll, pitch, yaw), read as z-y-x by mistake
    rep = check_trajectory(t, logged, "euler", ZYX, ground_vehicle=True)
    assert rep.prior.passed is False
    passing = [c[0] for c in rep.prior.candidates if min(c[1], c[2]) >= rep.prior.share_needed]
    assert "sequence=x-y-z axes=extrinsic" in passing
    assert "sequence=x-y-z axes=extrinsic" in " ".join(rep.prior.suggestions)
    q_last = pk.write_rotation(R, "quaternion", "scalar=last")
    rep_q = check_trajectory(t, sign_continuous(q_last), "quaternion", ZYX, ground_vehicle=True)
    assert rep_q.prior.passed is False
    assert "scalar=last" in " ".join(rep_q.prior.suggestions)


def test_too_little_turning_is_not_judged():
    t = np.arange(100) * DT
    q = np.tile([1.0, 0, 0, 0], (100, 1))
    rep = check_trajectory(t, q, "quaternion", ZYX, ground_vehicle=True)
    assert rep.prior.passed is None and "too little turning" in rep.prior.words()


def test_bad_arrays_raise_typed_errors():
    t, q = ground_quaternions(10)
    with pytest.raises(WrongShapeError, match="rows for 9 timestamps"):
        check_trajectory(t[:9], q)
    with pytest.raises(WrongShapeError, match="expected"):
        check_trajectory(t, q[:, :2])
    with pytest.raises(WrongShapeError, match="kind 'euler'"):
        check_trajectory(t, q, "euler")
    with pytest.raises(WrongTypeError):
        check_trajectory("t", q)
    with pytest.raises(EmptyTrajectoryError):
        check_trajectory(np.zeros(0), np.zeros((0, 4)))
    with pytest.raises(EmptyTrajectoryError, match="all 10 rows were rejected"):
        check_trajectory(t, np.full((10, 4), np.nan))
    with pytest.raises(TrajectoryInputError, match="rate_limit"):
        check_trajectory(t, q, rate_limit=-1)
    with pytest.raises(TrajectoryInputError, match="kind"):
        check_trajectory(t, q, "rotvec")
    with pytest.raises(TrajectoryInputError, match="vertical"):
        check_trajectory(t, q, vertical="up")


# --- CSV --------------------------------------------------------------------------------------------------

def csv_text(t, cols, names, fmt="{:.17g}"):
    rows = [",".join(names)]
    for i in range(len(t)):
        rows.append(",".join(fmt.format(v) for v in [t[i], *cols[i]]))
    return "\n".join(rows) + "\n"


def test_csv_header_inference_scalar_last_and_flip_rows(tmp_path):
    t, q = ground_quaternions(200)
    bad = q.copy()
    bad[50:] *= -1
    xyzw = np.concatenate([bad[:, 1:], bad[:, :1]], axis=1)
    path = tmp_path / "robot.csv"
    path.write_text(csv_text(t, xyzw, ["stamp", "orientation.x", "orientation.y", "orientation.z", "orientation.w"]))
    rep = check_trajectory_csv(path, convention=ZYX)
    assert rep.mapping.inferred and rep.mapping.time == "stamp"
    assert rep.mapping.values == ("orientation.w", "orientation.x", "orientation.y", "orientation.z")
    assert "inferred from the header" in rep.mapping.words
    assert rep.findings["quaternion_sign_flips"].rows.tolist() == [50]
    assert np.allclose(rep.quaternion, q, atol=1e-15)
    # the same file read with scalar=last keeps the file's order
    rep_last = check_trajectory_csv(path, convention=ZYX.changed(scalar="last"))
    assert rep_last.mapping.values[-1] == "orientation.w"
    assert "(x, y, z, w)" in rep_last.summary()


def test_csv_explicit_mapping_by_names_and_numbers():
    t, q = ground_quaternions(20)
    text = csv_text(t, q, ["when", "a", "b", "c", "d"])
    with pytest.raises(MissingColumnError, match="no timestamp column"):
        read_trajectory_csv(io.StringIO(text))
    tab = read_trajectory_csv(io.StringIO(text), time_column="when", value_columns=["a", "b", "c", "d"])
    assert tab.kind == "quaternion" and not tab.mapping.inferred and np.allclose(tab.values, q)
    tab2 = read_trajectory_csv(io.StringIO(text.split("\n", 1)[1]), time_column=0, value_columns=[1, 2, 3, 4])
    assert np.allclose(tab2.values, q) and tab2.lines[0] == 1
    with pytest.raises(MissingColumnError, match="'e' is not in the header"):
        read_trajectory_csv(io.StringIO(text), time_column="when", value_columns=["a", "b", "c", "e"])
    with pytest.raises(MissingColumnError, match="column number 7 does not exist"):
        read_trajectory_csv(io.StringIO(text), time_column=0, value_columns=[1, 2, 3, 7])
    with pytest.raises(MissingColumnError, match="no header line"):
        read_trajectory_csv(io.StringIO(text.split("\n", 1)[1]))
    with pytest.raises(WrongShapeError, match="2 columns"):
        read_trajectory_csv(io.StringIO(text), time_column="when", value_columns=["a", "b"])


def test_csv_roll_pitch_yaw_columns_go_to_the_sequence_slots():
    t, a = ground_angles(50)
    deg = np.degrees(a)
    text = csv_text(t, deg[:, ::-1], ["time", "roll_deg", "pitch_deg", "yaw_deg"])   # file order r, p, y
    conv = pk.Convention(sequence="z-y-x", unit="degrees")
    rep = check_trajectory_csv(io.StringIO(text), convention=conv)
    assert rep.mapping.values == ("yaw_deg", "pitch_deg", "roll_deg")
    assert np.allclose(rep.euler, deg)
    rep_rad = check_trajectory_csv(io.StringIO(text), convention=conv.changed(unit="radians"))
    assert any("mention degrees" in n for n in rep_rad.mapping.notes)
    with pytest.raises(MissingColumnError, match="proper Euler"):
        read_trajectory_csv(io.StringIO(text), convention="sequence=z-x-z")


def test_csv_bad_rows_are_listed_with_line_numbers():
    t, q = ground_quaternions(12)
    lines = csv_text(t, q, ["t", "qw", "qx", "qy", "qz"]).splitlines()
    lines[3] = lines[3].replace(lines[3].split(",")[2], "abc", 1)     # text in qx (data row 2)
    lines[5] = "0.04,nan,nan,nan,nan"                                 # NaN row (data row 4)
    lines[7] = "0.06,1,0"                                             # too few fields (data row 6)
    lines[9] = lines[9].replace(lines[9].split(",")[1], "", 1)        # empty qw (data row 8)
    text = "# invented test log\n" + "\n".join(lines) + "\n\n"
    rep = check_trajectory_csv(io.StringIO(text), convention=ZYX)
    got = [(r.row, r.line, r.reason.split("; accepted: ")[0]) for r in rep.rejected]
    assert all("accepted: " in r.reason or "expected" in r.reason for r in rep.rejected)
    assert got == [(2, 5, "text 'abc' in numeric column qx"),
                   (4, 7, "NaN or infinity in column qw, qx, qy, qz"),
                   (6, 9, "has 3 fields, expected 5 (as many as the header on line 2)"),
                   (8, 11, "column qw is empty")]
    assert rep.used.sum() == 8
    assert "rejected row 2 (line 5): text 'abc'" in rep.summary()


def test_csv_empty_and_header_only_files(tmp_path):
    empty = tmp_path / "empty.csv"
    empty.write_text("")
    with pytest.raises(EmptyTrajectoryError, match="is empty"):
        check_trajectory_csv(empty)
    only = tmp_path / "header.csv"
    only.write_text("time,qw,qx,qy,qz\n")
    with pytest.raises(EmptyTrajectoryError, match="no data rows"):
        check_trajectory_csv(only)
    with pytest.raises(TrajectoryInputError, match="missing.csv' cannot be read .No such file"):
        check_trajectory_csv(tmp_path / "missing.csv")
    nopose = tmp_path / "nopose.csv"
    nopose.write_text("time,x,y,z\n0,1,2,3\n")
    with pytest.raises(MissingColumnError, match="no pose columns"):
        check_trajectory_csv(nopose)
    allbad = tmp_path / "allbad.csv"
    allbad.write_text("time,qw,qx,qy,qz\n0,a,b,c,d\n1,nan,0,0,0\n")
    with pytest.raises(EmptyTrajectoryError, match="all 2 rows were rejected"):
        check_trajectory_csv(allbad)
    for err in (EmptyTrajectoryError, MissingColumnError):
        assert issubclass(err, PoseInputError)
    good = tmp_path / "good.csv"
    good.write_text("time,qw,qx,qy,qz\n0,1,0,0,0\n1,1,0,0,0\n")
    with pytest.raises(TrajectoryInputError, match="unknown option"):
        check_trajectory_csv(good, rate_limitt=3.0)


def test_csv_matrix_by_entry_names_and_semicolons():
    t, a = ground_angles(30)
    R = pk.read_rotation(a, "euler", ZYX)
    names = ["time"] + [f"r{i}{j}" for i in range(1, 4) for j in range(1, 4)]
    text = csv_text(t, R.reshape(-1, 9), names).replace(",", ";")
    rep = check_trajectory_csv(io.StringIO(text), convention=ZYX.changed(layout="column-major"))
    assert rep.kind == "matrix" and "layout setting does not apply" in rep.mapping.words
    assert np.allclose(rep.euler, a, atol=1e-12)


# --- every convention ------------------------------------------------------------------------------------

SEQ_AXES = [pk.Convention(sequence=s, axes=a, unit=u)
            for (s, a), u in zip(itertools.product(CHOICES["sequence"], CHOICES["axes"]),
                                 itertools.cycle(CHOICES["unit"]))]


@pytest.mark.parametrize("conv", SEQ_AXES, ids=lambda c: f"{c.sequence},{c.axes},{c.unit}")
def test_every_sequence_wraps_found_and_clean_data_silent(conv):
    n = 800
    t = np.arange(n) * DT
    mid = 0.0 if conv.is_tait_bryan else 1.0
    a = np.stack([0.01 * np.arange(n) - 3.0, mid + 0.05 * np.sin(t), 0.3 * np.cos(t)], axis=-1)  # first angle -3 .. 5 rad
    u = 180 / np.pi if conv.degrees else 1.0
    clean = check_trajectory(t, a * u, "euler", conv, rate_limit=20 * u)
    assert all(v == 0 for v in clean.counts().values()), clean.summary()
    logged = a.copy()
    logged[:, 0] = np.remainder(logged[:, 0] + np.pi, 2 * np.pi) - np.pi
    rep = check_trajectory(t, logged * u, "euler", conv)
    assert rep.findings["euler_wraps"].rows.tolist() == (np.flatnonzero(np.abs(np.diff(logged[:, 0])) > np.pi) + 1).tolist()
    assert np.allclose(rep.euler, a * u, atol=1e-9)
    # the turn rate agrees with scipy.spatial.transform.Rotation (magnitude of the relative rotation)
    seq = conv.axes_letters.upper() if conv.intrinsic else conv.axes_letters
    r = Rotation.from_euler(seq, a)
    ref = (r[:-1].inv() * r[1:]).magnitude() / DT
    assert np.allclose(rep.rate[1:], ref * u, rtol=1e-9, atol=1e-9)


@pytest.mark.parametrize("scalar,algebra", list(itertools.product(CHOICES["scalar"], CHOICES["algebra"])))
def test_quaternion_orders_and_algebras_flip_rows(scalar, algebra):
    conv = ZYX.changed(scalar=scalar, algebra=algebra)
    t, q = ground_quaternions(500, conv)
    clean = check_trajectory(t, q, "quaternion", conv, ground_vehicle=True)
    assert all(v == 0 for v in clean.counts().values()) and clean.prior.passed
    bad = q.copy()
    bad[123:321] *= -1
    rep = check_trajectory(t, bad, "quaternion", conv)
    assert rep.findings["quaternion_sign_flips"].rows.tolist() == [123, 321]
    assert np.array_equal(rep.quaternion, q)


def test_motion_prior_speaks_with_the_engine_and_its_prior():
    # the quaternions logged scalar-last (written by posekit from scipy-checked angles above) and read
    # scalar-first: every reading that makes the turn axis vertical is an engine slip, worded by the engine,
    # and among equally vertical readings the one claiming fewer mistakes leads
    from posekit.explain import Slip, sentence, stated_reading
    t, a = ground_angles()
    R = pk.read_rotation(a, "euler", ZYX)
    q_last = sign_continuous(pk.write_rotation(R, "quaternion", "scalar=last"))
    rep = check_trajectory(t, q_last, "quaternion", "scalar=first", ground_vehicle=True)
    assert rep.prior.passed is False
    lead = rep.prior.candidates[0]
    assert lead[0] == "scalar=last" and min(lead[1], lead[2]) > 0.9
    stated = stated_reading(4, "quaternion", "scalar=first")
    slip = Slip(stated, stated.with_fields(scalar="last"))
    assert sentence(slip)[:-1] in " ".join(rep.prior.suggestions)
    assert "(stated)" in sentence(slip)
