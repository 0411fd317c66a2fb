"""``posekit mount``: two logs of one rigid body on the command line, against the Python API and scipy.

The logs are generated here (test_alignment's ``_truth``: scipy RotationSpline through random key
orientations, a known mount, world frame and clock offset) and B's numbers written by scipy under
the true convention.  The CLI's JSON is compared with :func:`align_streams` on the same logs and
with the generated ground truth: the offset within one sample period, the mount within 0.1 degree
(scipy), the injected slip ranked first.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from scipy.spatial.transform import Rotation
from test_alignment import A_RATE, OPTICAL, _nominal, _streams, _truth

from posekit.analysis.alignment import align_streams, read_stream_log
from posekit.cli import main

ROOT = Path(__file__).resolve().parents[1]


def run(*args):
    env = dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    return subprocess.run([sys.executable, "-m", "posekit.cli", "mount", *map(str, args)], capture_output=True,
                          text=True, env=env, cwd=ROOT, timeout=300)


def _write(path, header, times, values):
    rows = np.column_stack([times, values])
    path.write_text(",".join(header) + "\n" + "\n".join(",".join(repr(float(v)) for v in r) for r in rows) + "\n")
    return path


def _angle_deg(a, b):
    return float(np.degrees((Rotation.from_matrix(a).inv() * Rotation.from_matrix(b)).magnitude()))   # scipy


@pytest.fixture(scope="module")
def logs(tmp_path_factory):
    """A: scalar-first quaternions after the time; B: the time last, then x-y-z Euler angles in degrees (scipy,
    lower case = extrinsic), which the user will state as intrinsic z-y-x in degrees."""
    folder = tmp_path_factory.mktemp("mount-logs")
    truth = _truth(12)
    ta, ra, _, tb, rb, _ = _streams(truth)
    a = _write(folder / "arm.csv", ["t", "qw", "qx", "qy", "qz"], ta, ra.as_quat(scalar_first=True))
    angles = rb.as_euler("zyx", degrees=True)                                   # scipy: extrinsic z-y-x
    b = folder / "camera.csv"
    b.write_text("a1,a2,a3,camera_time\n" + "\n".join(",".join(repr(float(v)) for v in [*row, t])
                                                     for row, t in zip(angles, tb)) + "\n")
    return truth, a, b, rb


def test_json_agrees_with_the_python_api_and_the_generated_truth(logs):
    truth, a, b, rb = logs
    proc = run(a, b, "--reading-a", "scalar=first", "--time-b", "camera_time", "--values-b", "a1, a2, a3",
               "--reading-b", "sequence=z-y-x axes=intrinsic unit=degrees", "--json")
    assert proc.returncode == 0, proc.stderr
    data = json.loads(proc.stdout)
    # the Python API on the same logs, called the same way
    la, lb = read_stream_log(a), read_stream_log(b, "camera_time", "a1, a2, a3")
    ref = align_streams(la.times, la.values, "scalar=first", lb.times, lb.values,
                        "sequence=z-y-x axes=intrinsic unit=degrees")
    assert data["offset_seconds"] == ref.offset and data["sentence"] == ref.sentence
    assert np.allclose(data["mount"], ref.mount, atol=1e-12)
    assert data["explanations"][0]["code"] == ref.best.code
    # the generated ground truth
    assert abs(data["offset_seconds"] - truth["offset"]) <= 1.0 / A_RATE
    assert _angle_deg(np.array(data["mount"]), truth["mount"].as_matrix()) <= 0.1
    first = data["explanations"][0]
    assert first["rank"] == 1 and "extrinsic (about the fixed axes) but were read as intrinsic" in first["sentence"]
    assert data["explained"] is True
    assert data["logs"]["B"]["value_columns"] == ["a1", "a2", "a3"] and data["logs"]["A"]["found_by_posekit"] == [
        "time", "values"]
    assert "correlation_curve" not in data


def test_text_output_and_the_curves_in_json(logs, capsys):
    truth, a, b, _ = logs
    args = ["mount", str(a), str(b), "--reading-a", "scalar=first", "--time-b", "3", "--values-b", "0,1,2",
            "--reading-b", "sequence=z-y-x axes=intrinsic unit=degrees"]
    assert main(args) == 0
    out = capsys.readouterr().out
    lines = out.splitlines()
    assert "extrinsic" in lines[0] and lines[1].startswith("LOG_A ") and lines[2].startswith("LOG_B ")
    assert "time offset: add " in out and "pk.read_rotation" in out
    assert main(args + ["--json", "--curves"]) == 0
    data = json.loads(capsys.readouterr().out)
    curve = data["correlation_curve"]
    peak = np.nanargmax(np.array(curve["correlation"], dtype=float))
    assert abs(curve["offsets_seconds"][peak] - data["offset_seconds"]) <= curve["step_seconds"] + 1e-9
    speeds = data["speed_curves"]
    t_on_a = np.array(speeds["times_b_seconds"]) + speeds["offset_seconds"]
    omega = np.linalg.norm(truth["spline"](t_on_a, 1), axis=1)                 # scipy RotationSpline: rate vector
    err = np.array(speeds["speed_b"]) - omega
    assert np.sqrt(np.mean(err ** 2)) <= 1e-3 * np.sqrt(np.mean(omega ** 2))


def test_nominal_mount_names_the_remap_of_bs_axes(tmp_path):
    """B's own axes relabelled optical (x right, y down, z forward; common practice): only a nominal mount
    tells that from another mount.  Given the drawing's mount as a scalar-first quaternion (scipy) under
    B's reading, the remap is named first and the mount found is the true one."""
    truth = _truth(13)
    ta, ra, _, tb, rb, _ = _streams(truth)
    a = _write(tmp_path / "a.csv", ["time", "qw", "qx", "qy", "qz"], ta, ra.as_quat(scalar_first=True))
    b_values = (rb * Rotation.from_matrix(OPTICAL)).as_quat(scalar_first=True)  # scipy products
    b = _write(tmp_path / "b.csv", ["time", "qw", "qx", "qy", "qz"], tb, b_values)
    drawing = Rotation.from_matrix(_nominal(truth, 13)).as_quat(scalar_first=True)
    proc = run(a, b, "--reading-a", "scalar=first", "--reading-b", "scalar=first", "--nominal-mount",
               " ".join(repr(float(v)) for v in drawing), "--json")
    assert proc.returncode == 0, proc.stderr
    data = json.loads(proc.stdout)
    assert "child frame's axes are remapped: optical" in data["explanations"][0]["sentence"]
    assert _angle_deg(np.array(data["mount"]), truth["mount"].as_matrix()) <= 0.1
    assert abs(data["offset_seconds"] - truth["offset"]) <= 1.0 / A_RATE
    assert "a quaternion (w, x, y, z)" in data["nominal_mount"]["read_as"]


def test_exit_1_when_no_reading_fits_within_the_tolerance(logs, capsys):
    _, a, b, _ = logs
    code = main(["mount", str(a), str(b), "--reading-a", "scalar=first", "--time-b", "camera_time",
                 "--reading-b", "sequence=z-y-x axes=extrinsic unit=degrees", "--rotation-tolerance", "1e-9",
                 "--json"])
    data = json.loads(capsys.readouterr().out)
    assert code == 1 and data["explained"] is False
    assert data["verdict"].startswith("No reading of B fits one constant mount")


def _error(capsys, *args):
    try:
        code = main(["mount", *map(str, args)])
    except SystemExit as exc:                      # argparse refuses the option before main's own checks
        code = exc.code
    captured = capsys.readouterr()
    err = captured.err.strip()
    return code, err


@pytest.mark.parametrize("extra,words", [
    (["--values-b", "a1, a9"], "--values-b: no column 'a9' in the header"),
    (["--time-b", "when"], "--time-b: no column 'when' in the header"),
    (["--values-b", "a1,,a3"], "--values-b"),
    (["--reading-b", "unit=furlongs"], "--reading-b: "),
    (["--kind-b", "quaternion"], "LOG_B's value columns (--values-b)"),
    (["--nominal-mount", "banana"], "--nominal-mount: "),
    (["--curves"], "--curves"),
    (["--rotation-tolerance", "-2"], "--rotation-tolerance"),
    (["--kind-b", "spinor"], "invalid choice: 'spinor'"),
])
def test_bad_inputs_give_exit_2_and_one_clear_line(logs, capsys, extra, words):
    _, a, b, _ = logs
    if "--time-b" not in extra:
        extra = extra + ["--time-b", "camera_time"]
    code, err = _error(capsys, a, b, "--reading-a", "scalar=first", *extra)
    assert code == 2
    assert len(err.splitlines()) == 1 and "Traceback" not in err
    assert words in err, err
    assert "accepted" in err or "expected" in err, err


def test_a_missing_file_a_bad_row_and_shuffled_times_are_named(logs, tmp_path, capsys):
    _, a, b, _ = logs
    code, err = _error(capsys, tmp_path / "nope.csv", b, "--time-b", "camera_time")
    assert code == 2 and err.startswith("posekit mount: error: LOG_A: ") and "nope.csv" in err
    lines = Path(a).read_text().splitlines()
    lines[5] = lines[5].replace(",", ",x", 1)
    bad = tmp_path / "bad.csv"
    bad.write_text("\n".join(lines) + "\n")
    code, err = _error(capsys, bad, b, "--time-b", "camera_time")
    assert code == 2 and "LOG_A" in err and "row 4 (line 6)" in err and "none is skipped" in err
    lines = Path(a).read_text().splitlines()
    lines[10], lines[11] = lines[11], lines[10]
    shuffled = tmp_path / "shuffled.csv"
    shuffled.write_text("\n".join(lines) + "\n")
    code, err = _error(capsys, shuffled, b, "--time-b", "camera_time")
    assert code == 2 and "LOG_A's time column (--time-a): not strictly increasing at sample 10" in err


def test_a_single_axis_motion_is_refused_with_the_motion_to_add(tmp_path):
    """Run as a user runs it (a subprocess): exit 2, one line, no traceback, the second axis asked for."""
    truth = _truth(51, single_axis=np.array([0.0, 0.0, 1.0]))
    ta, ra, _, tb, rb, _ = _streams(truth)
    a = _write(tmp_path / "a.csv", ["t", "qw", "qx", "qy", "qz"], ta, ra.as_quat(scalar_first=True))
    b = _write(tmp_path / "b.csv", ["t", "qx", "qy", "qz", "qw"], tb, rb.as_quat())
    proc = run(a, b, "--reading-a", "scalar=first", "--reading-b", "scalar=last")
    assert proc.returncode == 2 and proc.stdout == ""
    err = proc.stderr.strip()
    assert len(err.splitlines()) == 1 and "Traceback" not in err
    assert "turn about a second axis" in err


def test_help_describes_the_verb():
    proc = subprocess.run([sys.executable, "-m", "posekit.cli", "--help"], capture_output=True, text=True,
                          env=dict(os.environ, PYTHONPATH=str(ROOT)), cwd=ROOT, timeout=120)
    assert "time offset, rigid mount and the slip in stream B from two logs of one rigid body" in " ".join(
        proc.stdout.split())
