"""The command line, run as a user runs it: ``python -m posekit.cli`` in a subprocess.

Reference values come from scipy.spatial.transform.Rotation (named beside each check).
"""

from __future__ import annotations

import json
import os
import re
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from scipy.spatial.transform import Rotation

ROOT = Path(__file__).resolve().parents[1]


def run(*args, stdin: str | None = None):
    env = dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    return subprocess.run([sys.executable, "-m", "posekit.cli", *args], capture_output=True, text=True,
                          input=stdin, env=env, cwd=ROOT, timeout=120)


def _text(values):
    return " ".join(f"{v:.9f}" for v in np.ravel(values))


ROT = Rotation.from_euler("ZYX", [40, -15, 8], degrees=True)   # scipy: upper case = intrinsic


def test_diagnose_json_names_the_scalar_order():
    proc = run("diagnose", "--expected", "40 -15 8", "--expected-convention", "unit=degrees",
               "--observed", _text(ROT.as_quat()), "--json")                    # scipy: as_quat is scalar last
    assert proc.returncode == 0, proc.stderr
    data = json.loads(proc.stdout)
    best = data["explanations"][0]
    assert best["sentence"] == "The quaternion was written scalar-last but read scalar-first."
    assert best["rotation_residual_degrees"] < 1e-6
    assert data["hypotheses_scored"] == 4 * 4 * 48 * 48      # readings x relations x remaps (reflections too)
    assert np.allclose(best["corrected_rotation"], ROT.as_matrix(), atol=1e-8)  # scipy: as_matrix
    assert "prior" in data and data["near_tie"] is False


def test_diagnose_from_words_human_output():
    q = Rotation.from_euler("y", 25, degrees=True).as_quat()                    # scipy: scalar last
    proc = run("diagnose", "--expected", "pitched 25 degrees down, 0.3 m forward",
               "--observed", _text([300, 0, 0, *q]))
    assert proc.returncode == 0, proc.stderr
    first = [ln for ln in proc.stdout.splitlines() if ln.startswith("1. ")][0]
    assert "scalar-last" in first and "millimetres" in first
    assert "pk.read_rotation" in proc.stdout


def test_diagnose_batch_files(tmp_path):
    rots = Rotation.random(30, random_state=4)                                  # scipy: Rotation.random
    exp = tmp_path / "truth.txt"
    obs = tmp_path / "logged.txt"
    exp.write_text("\n".join(_text(r) for r in rots.as_matrix()))
    obs.write_text("# logged quaternions\n" + "\n".join(_text(q) for q in rots.inv().as_quat(scalar_first=True)))
    proc = run("diagnose", "--expected-file", str(exp), "--observed-file", str(obs), "--json")
    assert proc.returncode == 0, proc.stderr
    data = json.loads(proc.stdout)
    assert data["pairs"] == 30 and data["consistent"] is True
    assert any(m["relation"] == "rotation-transposed" for m in data["explanations"][0]["members"])
    assert len(data["rotation_residuals_degrees"]) == 30


def test_convert_quaternion_to_degrees_euler():
    proc = run("convert", _text(ROT.as_quat()), "--from", "scalar=last", "--to-kind", "euler",
               "--to", "unit=degrees", "--json")
    assert proc.returncode == 0, proc.stderr
    data = json.loads(proc.stdout)
    assert np.allclose(data["numbers"], ROT.as_euler("ZYX", degrees=True))       # scipy: as_euler intrinsic ZYX
    assert data["from_kind"] == "quaternion"


def test_convert_transform_from_stdin():
    m = np.eye(4)
    m[:3, :3] = ROT.as_matrix()
    m[:3, 3] = [1, 2, 3]
    proc = run("convert", "-", "--from", "layout=column-major", "--to-kind", "position-quaternion",
               stdin=_text(m.T))
    assert proc.returncode == 0, proc.stderr
    nums = [float(v) for v in proc.stdout.strip().splitlines()[-1].split()]
    q = ROT.as_quat(scalar_first=True)                                          # scipy: scalar first
    sign = np.sign(np.dot(nums[3:], q))                  # q and -q are one rotation; every component keeps its sign
    assert np.allclose(nums[:3], [1, 2, 3]) and sign != 0 and np.allclose(nums[3:], sign * q, atol=1e-9)


def test_check_lists_every_reading():
    proc = run("check", "[[1, 0, 0], [0, 0, -1], [0, 1, 0]]", "--json")
    assert proc.returncode == 0, proc.stderr
    data = json.loads(proc.stdout)
    assert data["shape"] == [3, 3] and data["ambiguous"] is True
    assert {i["convention"] for i in data["interpretations"]} == {"", "layout=column-major"}
    text = run("check", "0 0 0 1").stdout
    assert "4 interpretations" in text and "none picked" in text


@pytest.mark.parametrize("args, words", [
    (("check", "1 2 abc"), ["'abc'", "line 1, column 5 (offset 4)"]),
    (("check", "1 2 3 4 5"), ["5 numbers"]),
    (("convert", "1 0 0 0", "--to-kind", "euler", "--from", "scalar=LAST"), ["upper-case"]),
    (("convert", "1 0 0 0", "--to-kind", "sideways"), ["not a kind"]),
    (("convert", "1.5 0 0 0", "--to-kind", "euler"), ["length"]),
    (("diagnose", "--expected", "pitched 25 down", "--observed", "1 0 0 0"), ["angle unit"]),
    (("diagnose", "--expected", "1 0 0 0", "--observed", "[1, 2"), ["never closed"]),
    (("diagnose", "--observed", "1 0 0 0"), ["--expected is missing"]),
    (("diagnose", "--expected-file", "/nonexistent/x.txt", "--observed-file", "/nonexistent/y.txt"),
     ["expected poses file '/nonexistent/x.txt' cannot be read", "accepted"]),
])
def test_bad_input_exits_nonzero_with_a_message_and_no_traceback(args, words):
    proc = run(*args)
    assert proc.returncode == 2
    assert proc.stdout == ""
    assert "Traceback" not in proc.stderr
    for w in words:
        assert w in proc.stderr, proc.stderr
    assert proc.stderr.startswith("posekit ")
    assert proc.stderr.count("\n") == 1 and proc.stderr.endswith("\n"), proc.stderr     # one line
    assert re.search(r"accepted|expected|use lower case", proc.stderr, re.I), proc.stderr  # says what would do


def test_unknown_verb_is_a_usage_error():
    proc = run("frobnicate")
    assert proc.returncode == 2 and "invalid choice" in proc.stderr


def test_main_is_importable_and_returns_codes(capsys):
    from posekit.cli import main

    assert main(["check", "1 0 0 0"]) == 0
    assert main(["check", "1 0 0"]) == 0
    assert main(["check", "1 0"]) == 2
    assert "no pose representation" in capsys.readouterr().err


def test_tour_copies_the_tour_and_opens_jupyterlab_on_the_copy(tmp_path):
    import os

    shipped = ROOT / "notebooks" / "tour.ipynb"
    before = shipped.read_bytes()
    proc = run("tour", "--folder", str(tmp_path), "--print-command")
    assert proc.returncode == 0, proc.stderr
    copied = tmp_path / "posekit-tour.ipynb"
    assert copied.read_bytes() == before and proc.stdout.split()[4] == str(copied)
    assert "-m jupyter lab" in proc.stdout
    assert ("--allow-root" in proc.stdout) == (os.geteuid() == 0)  # JupyterLab refuses root without it
    again = run("tour", "--folder", str(tmp_path), "--print-command")   # a second copy never overwrites the first
    assert again.stdout.split()[4] == str(tmp_path / "posekit-tour-2.ipynb")
    assert shipped.read_bytes() == before


def test_tour_without_jupyterlab_names_the_extra(monkeypatch, capsys, tmp_path):
    from posekit import cli

    monkeypatch.setattr(cli.shutil, "which", lambda name: None)
    monkeypatch.setattr(cli, "_has_module", lambda name: False)
    assert cli.main(["tour", "--folder", str(tmp_path)]) == 3
    assert 'pip install "posekit[notebook]"' in capsys.readouterr().err
    assert not list(tmp_path.iterdir())                               # nothing written when it cannot open


def test_notebook_verb_copies_any_shipped_notebook(tmp_path, capsys):
    from posekit.cli import main

    assert main(["notebook", "--list"]) == 0
    listed = capsys.readouterr().out.split()
    assert listed == sorted(p.stem for p in (ROOT / "notebooks").glob("*.ipynb"))
    assert main(["notebook", "bug-report-template.ipynb", "--folder", str(tmp_path / "new")]) == 0
    copied = tmp_path / "new" / "posekit-bug-report-template.ipynb"
    assert copied.read_bytes() == (ROOT / "notebooks" / "bug-report-template.ipynb").read_bytes()
    assert main(["notebook", "bug report"]) == 2
    err = capsys.readouterr().err
    assert "no shipped notebook is called 'bug report'" in err and "bug-report-template" in err
    (tmp_path / "file").write_text("x")
    assert main(["notebook", "tour", "--folder", str(tmp_path / "file")]) == 2
    assert "is a file, not a folder" in capsys.readouterr().err


def test_terminal_demo_runs():
    import subprocess
    import sys

    proc = subprocess.run([sys.executable, "-m", "posekit.demo"], capture_output=True, text=True, timeout=60)
    assert proc.returncode == 0, proc.stderr
    assert "Traceback" not in proc.stderr
    assert "off by" in proc.stdout and "Caution" in proc.stdout


def test_reader_closing_the_pipe_early_gives_no_traceback():
    import subprocess
    import sys

    cmd = (f"{sys.executable} -m posekit.cli check 'array([[1., 0., 0.], [0., 0., -1.], [0., 1., 0.]])' "
           "| head -c 10 > /dev/null")
    out = subprocess.run(["bash", "-o", "pipefail", "-c", cmd], capture_output=True, text=True, timeout=60)
    assert "Traceback" not in out.stderr and out.stderr == ""


# --- flags are honoured: each answer changes with the flag, and agrees with the Python API and scipy -----------

def _signed_close(got, want, atol=1e-8):
    """Equal component by component, signs included, up to one overall sign (q and -q are one rotation)."""
    got, want = np.asarray(got, float), np.asarray(want, float)
    return bool(np.allclose(got, want, atol=atol) or np.allclose(got, -want, atol=atol))


def test_assumed_changes_the_single_pose_answer():
    from posekit.analysis.diagnose import diagnose

    observed = _text(ROT.as_quat())                                              # scipy: as_quat is scalar last
    base = ("diagnose", "--expected", "40 -15 8", "--expected-convention", "unit=degrees", "--observed", observed,
            "--json")
    plain = run(*base)
    assumed = run(*base, "--assumed", "scalar=last")
    assert plain.returncode == 0 and assumed.returncode == 0, plain.stderr + assumed.stderr
    p, a = json.loads(plain.stdout), json.loads(assumed.stdout)
    assert p["explanations"][0]["sentence"] == "The quaternion was written scalar-last but read scalar-first."
    assert a["explanations"][0]["sentence"] != p["explanations"][0]["sentence"]
    assert "scalar=last" in a["assumed"] and "scalar=first" in p["assumed"]
    # the corrected numbers are in the stated reading: scalar first without the flag, scalar last with it
    assert _signed_close(p["explanations"][0]["corrected_numbers"], ROT.as_quat(scalar_first=True))   # scipy
    assert _signed_close(a["explanations"][0]["corrected_numbers"], ROT.as_quat())                    # scipy
    assert not _signed_close(a["explanations"][0]["corrected_numbers"], ROT.as_quat(scalar_first=True))
    # the same answers as the Python API given the same settings
    for data, kw in ((p, {}), (a, {"assumed": "scalar=last"})):
        api = diagnose("40 -15 8", observed, expected_convention="unit=degrees", **kw).as_dict()
        assert data["explanations"][0]["sentence"] == api["explanations"][0]["sentence"]
        assert data["assumed"] == api["assumed"]
        assert np.allclose(data["explanations"][0]["corrected_numbers"], api["explanations"][0]["corrected_numbers"],
                           atol=1e-12)


def test_expected_convention_changes_the_batch_answer(tmp_path):
    import posekit as pk
    from posekit.analysis.diagnose import diagnose_batch, expected_pose

    rots = Rotation.random(12, random_state=7)                                  # scipy: Rotation.random
    angles = rots.as_euler("xyz", degrees=True)                                  # scipy: lower case = extrinsic
    conv = "sequence=x-y-z axes=extrinsic unit=degrees"
    # scipy as the outside reference: the flag names the rotations scipy made, the default reading does not
    assert np.allclose(pk.read_rotation(angles, "euler", conv), rots.as_matrix(), atol=1e-12)
    default = Rotation.from_euler("ZYX", angles, degrees=True)                    # posekit's default: z-y-x intrinsic
    assert np.degrees((default.inv() * rots).magnitude()).max() > 1.0
    exp, obs = tmp_path / "expected.txt", tmp_path / "observed.txt"
    exp.write_text("\n".join(_text(a) for a in angles))
    obs.write_text("\n".join(_text(q) for q in rots.as_quat(scalar_first=True)))  # scipy: scalar first
    base = ("diagnose", "--expected-file", str(exp), "--observed-file", str(obs), "--json")
    with_flag = run(*base, "--expected-convention", conv)
    without = run(*base)
    assert with_flag.returncode == 0, with_flag.stderr
    w = json.loads(with_flag.stdout)
    assert w["explanations"][0]["sentence"] == "The numbers match the expected pose as read: no convention error found."
    assert max(w["rotation_residuals_degrees"]) < 1e-5 and "x-y-z extrinsic" in w["expected_reading"]
    assert without.returncode in (0, 1), without.stderr
    wo = json.loads(without.stdout)
    assert wo["explanations"][0]["sentence"] != w["explanations"][0]["sentence"]
    assert "x-y-z extrinsic" not in wo["expected_reading"]
    # the same answers as the Python API
    obs_numbers = rots.as_quat(scalar_first=True)
    for data, ec in ((w, conv), (wo, None)):
        api = diagnose_batch(expected_pose(np.array([[float(f"{v:.9f}") for v in a] for a in angles]), None, ec),
                             np.array([[float(f"{v:.9f}") for v in q] for q in obs_numbers]),
                             expected_convention=ec).as_dict()
        assert data["explanations"][0]["sentence"] == api["explanations"][0]["sentence"]
        assert np.allclose(data["rotation_residuals_degrees"], api["rotation_residuals_degrees"], atol=1e-9)


# --- the expected input: guessed, said back in one line, each other reading one flag away ----------

def test_diagnose_says_how_it_read_the_expected_numbers_and_the_flag_for_each_other_reading():
    from posekit.analysis.diagnose import expected_pose

    proc = run("diagnose", "--expected", "30 -10 5", "--observed", "30 -10 5", "--assumed", "unit=radians")
    assert proc.returncode == 0, proc.stderr
    lines = proc.stdout.splitlines()
    assert lines[0] == "The angles were written in degrees but read as radians (stated)."
    assert lines[1] == "expected " + expected_pose("30 -10 5").guess.line()   # posekit's analysis, directly
    assert lines[1] == "expected read as: Euler angles z-y-x in degrees (from 3 numbers; magnitudes up to 30)"
    assert "--expected-kind rotation-vector (a rotation vector)" in lines[2]
    assert "--expected-convention unit=radians (angles in radians)" in lines[2]
    # the printed flag, added as printed, reads the expected numbers that way
    again = run("diagnose", "--expected", "30 -10 5", "--observed", "30 -10 5", "--assumed", "unit=radians",
                "--expected-convention", "unit=radians", "--json")
    data = json.loads(again.stdout)
    assert data["expected_guess"]["unit"] == "radians" and data["expected_guess"]["unit_from"] == "stated"
    assert data["explanations"][0]["deviations"] == 0
    # scipy: the expected pose read the printed way is Rotation.from_euler("ZYX", ..., degrees=False)
    assert np.allclose(data["explanations"][0]["corrected_rotation"],
                       Rotation.from_euler("ZYX", [30, -10, 5]).as_matrix(), atol=1e-9)


def test_the_json_lists_each_other_reading_with_its_flag():
    proc = run("diagnose", "--expected", "0 0 0.3826834 0.9238795", "--observed", "0 0 0.3826834 0.9238795",
               "--expected-convention", "sequence=x-y-z", "--json")
    guess = json.loads(proc.stdout)["expected_guess"]
    assert guess["kind"] == "quaternion" and guess["count"] == 4 and guess["kind_from"] == "count"
    assert guess["alternatives"] == [{"field": "scalar", "value": "last", "kind": "quaternion",
                                      "convention": "sequence=x-y-z scalar=last",
                                      "flag": "--expected-convention 'sequence=x-y-z scalar=last'"}]


def test_a_note_says_when_the_magnitudes_look_like_the_other_unit():
    proc = run("diagnose", "--expected", "0.5 0.2 0.1", "--observed", "0 0 0 1")
    note = next(ln for ln in proc.stdout.splitlines() if ln.startswith("note: the magnitudes"))
    assert "look like radians" in note and note.endswith("if they are radians, add --expected-convention unit=radians")


def test_unstated_typed_angles_are_degrees_on_both_sides():
    proc = run("diagnose", "--expected", "yawed 90 degrees left", "--observed", "90 0 0")
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.splitlines()[0] == "The numbers match the expected pose as you read them: no convention error."
    # and in radians once stated: then 90 is read as radians and the slip is named
    stated = run("diagnose", "--expected", "yawed 90 degrees left", "--observed", "90 0 0", "--assumed",
                 "unit=radians")
    assert stated.stdout.splitlines()[0] == "The angles were written in degrees but read as radians (stated)."


def test_batch_lines_of_three_numbers_are_three_poses_not_a_matrix(tmp_path):
    angles = np.array([[30.0, -10.0, 5.0], [0.0, 20.0, 0.0], [90.0, 0.0, -45.0]])
    q = Rotation.from_euler("ZYX", angles, degrees=True).as_quat()             # scipy: scalar last
    exp, obs = tmp_path / "e.txt", tmp_path / "o.txt"
    exp.write_text("\n".join(_text(a) for a in angles))
    obs.write_text("\n".join(_text(v) for v in q))
    proc = run("diagnose", "--expected-file", str(exp), "--observed-file", str(obs), "--json")
    assert proc.returncode == 0, proc.stderr
    data = json.loads(proc.stdout)
    assert data["pairs"] == 3 and data["expected_guess"]["kind"] == "euler"
    assert data["explanations"][0]["sentence"] == "The quaternion was written scalar-last but read scalar-first."
