"""The ``posekit motion`` verb: a described motion or a rate log against an orientation log, text and JSON,
exit 0 (explained), 1 (nothing explains it), 2 (bad input).

Logs are generated here with scipy (``Rotation`` products through the described turns, ``RotationSpline``
and its first derivative for rates: scipy's angular rate in the body frame) and written as CSV files.
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from scipy.spatial.transform import Rotation, RotationSpline

from posekit.cli import main
from posekit.io.words import read_motion

RATE = 100.0


def _body(description, turn_time=2.0, pause=0.6):
    """The body's attitude through the described turns (scipy Rotation products, smoothstep profiles)."""
    rots, cur = [], Rotation.identity()
    rots += [cur] * int(pause * RATE)
    for turn in read_motion(description).turns:
        n = int(turn_time * RATE)
        axis = np.eye(3)[turn.axis]
        for i in range(1, n + 1):
            f = i / n
            rots.append(cur * Rotation.from_rotvec(axis * turn.angle * f * f * (3 - 2 * f)))
        cur = cur * Rotation.from_rotvec(axis * turn.angle)
        rots += [cur] * int(pause * RATE)
    return np.arange(len(rots)) / RATE, Rotation.concatenate(rots)


def _write(path, times, values, names):
    lines = [",".join(["time", *names])]
    lines += [",".join([f"{t:.4f}", *(f"{v:.10g}" for v in row)]) for t, row in zip(times, values)]
    path.write_text("\n".join(lines) + "\n")
    return str(path)


DESCRIPTION = "tilted nose up about 90 degrees, then back, then turned left about 90 degrees"


@pytest.fixture
def quaternion_log(tmp_path):
    t, body = _body(DESCRIPTION)
    sensor = Rotation.from_euler("z", 40, degrees=True) * body               # world turned, mount identity
    return _write(tmp_path / "imu.csv", t, sensor.as_quat(), ["qx", "qy", "qz", "qw"])   # scipy: x, y, z, w


def _run(capsys, argv):
    try:
        code = main(argv)
    except SystemExit as exc:          # argparse's own usage errors
        code = exc.code
    out = capsys.readouterr()
    return code, out.out, out.err


def test_a_described_motion_names_the_slip(capsys, quaternion_log):
    code, out, err = _run(capsys, ["motion", quaternion_log, "--described", DESCRIPTION, "--reading", "scalar=first",
                                   "--mount", "identity"])
    assert code == 0, err
    first = out.splitlines()[0]
    assert first.startswith("The quaternion was written scalar-last but read scalar-first (stated).")
    assert "LOG" in out and "time column time" in out and "fix for the log's numbers" in out
    code, out, err = _run(capsys, ["motion", quaternion_log, "--described", DESCRIPTION, "--reading", "scalar=first",
                                   "--mount", "identity", "--json"])
    data = json.loads(out)
    assert code == 0 and data["explained"] and data["mount_given"]
    assert data["slip"]["changes"] == [["scalar", "first", "last"]]
    # the generator's angles (scipy Rotation products): up 90, back 90, left 90
    assert [round(abs(m["turned_degrees"])) for m in data["turns"]] == [90, 90, 90]
    assert data["logs"]["LOG"]["value_columns"] == ["qx", "qy", "qz", "qw"]


def test_value_columns_in_another_order_read_as_stated(capsys, quaternion_log):
    code, out, _ = _run(capsys, ["motion", quaternion_log, "--described", DESCRIPTION, "--reading", "scalar=first",
                                 "--values", "qw,qx,qy,qz", "--mount", "identity", "--json"])
    data = json.loads(out)
    assert code == 0 and data["slip"]["deviations"] == 0 and data["explained"]


def test_a_motion_the_log_did_not_make_exits_1(capsys, quaternion_log):
    code, out, _ = _run(capsys, ["motion", quaternion_log, "--described", "yawed 180 degrees left",
                                 "--reading", "scalar=last"])
    assert code == 1 and out.startswith("No reading of the log follows the described motion")


def test_rates_name_their_unit_and_frame(capsys, tmp_path):
    keys = np.linspace(0.0, 30.0, 7)
    spline = RotationSpline(keys, Rotation.random(7, random_state=3))      # ground truth (scipy)
    t = np.arange(0.0, 30.0, 0.01)
    orientation = _write(tmp_path / "att.csv", t, spline(t).as_quat(scalar_first=True), ["qw", "qx", "qy", "qz"])
    tr = np.arange(1.0, 29.0, 0.005)
    world_deg = np.degrees(spline(tr).apply(spline(tr, 1)))                 # world-frame rates, degrees per second
    rates = _write(tmp_path / "gyro.csv", tr, world_deg, ["gx", "gy", "gz"])
    code, out, err = _run(capsys, ["motion", orientation, "--rates", rates, "--reading", "scalar=first",
                                   "--offset", "0", "--json"])
    assert code == 0, err
    data = json.loads(out)
    assert data["reading"]["frame"] == "world" and data["reading"]["unit"] == "degrees"
    assert data["offset_given"] and data["logs"]["RATE_LOG"]["value_columns"] == ["gx", "gy", "gz"]
    code, out, _ = _run(capsys, ["motion", orientation, "--rates", rates, "--reading", "scalar=first",
                                 "--rate-reading", "frame=world unit=degrees"])
    assert code == 0 and out.startswith("The rates, read as stated, match the orientation stream")
    assert "RATE_LOG" in out and "time offset: add" in out                   # found from the angular speeds


@pytest.mark.parametrize("extra, words", [
    ([], "exactly one of the two"),
    (["--described", DESCRIPTION, "--rates", "x.csv"], "exactly one of the two"),
    (["--described", DESCRIPTION, "--offset", "0"], "only apply with --rates"),
    (["--described", DESCRIPTION, "--mount", "1 2 3"], "--mount: got 3 numbers"),
    (["--described", DESCRIPTION, "--mount", "2 0 0 0 1 0 0 0 1"], "mount"),
    (["--described", "   "], "--described is blank"),
    (["--described", "flew up 3 m"], "unknown word 'flew'"),
    (["--described", DESCRIPTION, "--reading", "scalar=middle"], "scalar"),
    (["--described", DESCRIPTION, "--values", "qx,nope"], "no column 'nope'"),
    (["--described", DESCRIPTION, "--angle-tolerance", "0"], "--angle-tolerance"),
    (["--rates", "missing-rates.csv"], "RATE_LOG"),
])
def test_bad_input_exits_2_with_one_line(capsys, quaternion_log, extra, words):
    code, out, err = _run(capsys, ["motion", quaternion_log, *extra])
    assert code == 2 and out == ""
    assert err.startswith("posekit motion: error:") and err.count("\n") == 1, err
    assert words in err, err


def test_bad_rate_reading_exits_2(capsys, tmp_path, quaternion_log):
    t = np.arange(0.0, 5.0, 0.01)
    rates = _write(tmp_path / "g.csv", t, np.zeros((len(t), 3)), ["gx", "gy", "gz"])
    code, _, err = _run(capsys, ["motion", quaternion_log, "--rates", rates, "--rate-reading", "frame=upside"])
    assert code == 2 and "frame=body|world" in err
