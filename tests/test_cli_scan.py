"""``posekit scan``: the command line says what the Python API says, value for value.

Each case runs the verb in-process (and once in a real process) and compares its JSON and text
with :func:`posekit.analysis.check_logs` and :func:`posekit.analysis.check_trajectory_csv` on the
same files.  Test data: smooth motion through random keyframes (scipy RotationSpline; scipy is the
reference for the quaternions written) with sign flips and a time gap injected at known rows
(q and -q are one rotation: double cover, common practice).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from scipy.spatial.transform import Rotation, RotationSpline

from test_logs_cli_hostile import _judge_one_line, run_main

from posekit import cli
from posekit.analysis import check_trajectory_csv
from posekit.analysis.fleet import SCHEDULERS, check_logs
from posekit.analysis.trajectory import _CHECK_OPTIONS
from posekit.io.logs import READERS

pytest.importorskip("pandas")

ROOT = Path(__file__).resolve().parents[1]
N = 1500


def motion(seed: int):
    """Times and scalar-first quaternions of small smooth turns (keyframes within about 0.3 rad of identity,
    so no Euler angle wraps and none comes near gimbal lock)."""
    t = np.arange(N) * 0.01
    keys = np.linspace(0.0, t[-1], 6)
    turns = Rotation.from_rotvec(np.random.default_rng(seed).normal(scale=0.2, size=(keys.size, 3)))
    q = RotationSpline(keys, turns)(t).as_quat(scalar_first=True)
    q[1:] *= np.cumprod(np.where(np.einsum("ij,ij->i", q[1:], q[:-1]) < 0, -1.0, 1.0))[:, None]
    return t, q


def write(path: Path, t, columns: dict, delimiter=","):
    names = ["time", *columns]
    values = np.column_stack([t, *columns.values()])
    path.write_text(delimiter.join(names) + "\n" + "".join(delimiter.join(repr(float(v)) for v in row) + "\n"
                                                            for row in values))
    return path


@pytest.fixture(scope="module")
def folder(tmp_path_factory):
    d = tmp_path_factory.mktemp("scan")
    for seed in range(4):
        t, q = motion(seed)
        if seed:                                   # seed 0 stays clean
            q[300 * seed:] *= -1                   # a sign flip at row 300 * seed
            t[700:] += 0.5                          # a gap at row 700
        write(d / f"log{seed}.csv", t, {"qw": q[:, 0], "qx": q[:, 1], "qy": q[:, 2], "qz": q[:, 3]})
    (d / "broken.csv").write_text("time,qw,qx\n0,1,0\n")
    return d


def scan_json(*argv):
    code, out, err = run_main(["scan", *map(str, argv), "--json", "--no-progress"])
    return code, (json.loads(out) if out else None), err


def test_a_folder_gives_the_apis_values_file_by_file(folder):
    code, data, err = scan_json(folder, "--scheduler", "threads", "--workers", "2", "--rate-limit", "50")
    assert code == 1 and err == ""                                  # findings and a failed file: exit 1
    table = check_logs(folder, scheduler="serial", rate_limit=50.0)
    assert data["counts"] == {"clean": 1, "findings": 3, "failed": 1}
    assert [f["file"] for f in data["files"]] == table["file"].unique().tolist()
    for entry in data["files"]:
        rows = table[table["file"] == entry["file"]]
        if entry["status"] == "failed":
            assert entry["error_type"] == "MissingColumnError" == rows["error_type"].iloc[0]
            # the API's keyword names said as the command's flags (value_columns= -> --values)
            want = rows["error"].iloc[0]
            for keyword, flag in cli._SCAN_FLAGS:
                want = want.replace(keyword, flag)
            assert entry["error"] == want and entry["findings"] == {}
            continue
        report = check_trajectory_csv(entry["file"], rate_limit=50.0)
        assert entry["rows"] == report.rows == N and entry["used"] == int(report.used.sum())
        for name, finding in report.findings.items():
            got = entry["findings"][name]
            assert got["rows"] == finding.count and got["spans"] == finding.span_first.size
            assert got["detail"] == finding.words() and got["checked"] == finding.checked
            assert got["first_row"] == (int(finding.rows[0]) if finding.count else None)
            assert got["first_time"] == (float(report.times[finding.rows[0]]) if finding.count else None)
        seed = int(Path(entry["file"]).stem[3:])
        flips = entry["findings"]["quaternion_sign_flips"]
        assert (flips["rows"], flips["first_row"]) == ((1, 300 * seed) if seed else (0, None))
        assert entry["status"] == ("findings" if seed else "clean")


def test_the_text_names_each_file_and_its_findings(folder):
    code, out, err = run_main(["scan", str(folder), "--no-progress", "--scheduler", "serial"])
    assert code == 1 and err == ""
    lines = out.splitlines()
    assert lines[0] == "scanned 5 logs (1 clean, 3 with findings, 1 failed) on serial"
    report = check_trajectory_csv(folder / "log2.csv")
    # how the numbers were read is said back, the unstated fields named (explain.Reading.said_back)
    said = ("read as a quaternion written (w, x, y, z), Hamilton algebra, active, parent-from-child; you stated no "
            "field; not stated, so free to be wrong: scalar=first algebra=hamilton action=active "
            "direction=parent-from-child")
    at = lines.index(f"{folder / 'log2.csv'}: findings: {N} rows, {N} used; {said}")
    shown = [f"  {f.words()}" for f in report.findings.values() if f.count]
    assert lines[at + 1:at + 1 + len(shown)] == shown
    assert f"{folder / 'log0.csv'}: clean: {N} rows, {N} used; {said}" in lines
    assert any(ln.startswith(f"{folder / 'broken.csv'}: failed: MissingColumnError: CSV header (line 1): no pose")
               for ln in lines)


def test_one_clean_file_exits_0_and_one_bad_file_exits_2(folder):
    code, data, err = scan_json(folder / "log0.csv")
    assert code == 0 and data["counts"] == {"clean": 1, "findings": 0, "failed": 0}
    code, out, err = run_main(["scan", str(folder / "broken.csv")])
    _judge_one_line(code, out, err, ["no pose columns recognised", "accepted"])
    with pytest.raises(Exception) as info:
        check_trajectory_csv(folder / "broken.csv")
    want = str(info.value)
    for keyword, flag in cli._SCAN_FLAGS:  # said as the command's flags
        want = want.replace(keyword, flag)
    assert "value_columns=" in str(info.value) and "--values" in want
    assert err == f"posekit scan: error: {cli._one_line(want)}\n"


def test_column_mapping_flags_match_the_api(tmp_path):
    t, q = motion(9)
    q[500:] *= -1
    xyzw = write(tmp_path / "xyzw.tsv", t, {"a": q[:, 1], "b": q[:, 2], "c": q[:, 3], "d": q[:, 0]}, delimiter="\t")
    api = check_trajectory_csv(xyzw, time_column="time", value_columns=["a", "b", "c", "d"],
                               convention="scalar=last", delimiter="\t")
    assert api.findings["quaternion_sign_flips"].rows.tolist() == [500]
    for columns in (["--time", "time", "--values", "a,b,c,d"],
                    ["--time", "0", "--values", "1, 2, 3, 4"]):
        code, data, err = scan_json(xyzw, *columns, "--reading", "scalar=last", "--delimiter", "tab",
                                    "--kind", "quaternion", "--reader", "python")
        assert code == 1 and err == "", err
        got = data["files"][0]["findings"]
        assert {k: v["rows"] for k, v in got.items() if k != "rejected"} == \
            {k: f.count for k, f in api.findings.items()}
        assert got["quaternion_sign_flips"]["first_row"] == 500
    # without --reading the same columns are read scalar first: other findings, as the API says
    code, data, _ = scan_json(xyzw, "--time", "time", "--values", "a,b,c,d", "--delimiter", "tab")
    wrong = check_trajectory_csv(xyzw, time_column="time", value_columns=["a", "b", "c", "d"], delimiter="\t")
    assert wrong.counts() != api.counts()                          # the flag changes the answer ...
    got = data["files"][0]["findings"]
    assert {k: v["rows"] for k, v in got.items()} == wrong.counts()  # ... and the command line follows it


def test_glob_and_several_sources(folder):
    code, data, _ = scan_json(str(folder / "log[12].csv"), folder / "log3.csv")
    assert [Path(f["file"]).name for f in data["files"]] == ["log1.csv", "log2.csv", "log3.csv"]
    assert code == 1 and data["counts"]["findings"] == 3


@pytest.mark.parametrize("argv, words", [
    (["{folder}", "--reading", "sideways=up"], ["unknown key 'sideways'"]),
    (["{folder}", "--values", "a,b,c,d"], ["--values given without --time"]),
    (["{folder}", "--cluster", "tcp://127.0.0.1:1", "--scheduler", "threads"], ["--cluster and --scheduler"]),
    (["{folder}/nothing-*.csv"], ["no file matches"]),
    (["{folder}", "--workers", "0"], ["--workers", "whole number"]),
    (["{folder}", "--rate-limit", "nan"], ["--rate-limit"]),
    (["{folder}", "--reader", "fast"], ["invalid choice: 'fast'"]),
    (["{folder}/broken.csv", "{folder}/broken.csv"], ["no pose columns"]),          # one file, named twice
    (["{folder}/missing.csv", "{folder}/broken.csv"], ["none of the 2 logs could be checked", "missing.csv"]),
    (["{folder}", "--input-limit", "10"], ["none of the 5 logs could be checked", "larger than the limit of 10 bytes"]),
])
def test_bad_command_lines_exit_2_with_one_line(folder, argv, words):
    argv = [a.replace("{folder}", str(folder)) for a in argv]
    _judge_one_line(*run_main(["scan", *argv, "--no-progress"]), words)


def test_a_cluster_address_without_distributed_is_exit_2(folder, monkeypatch):
    monkeypatch.setitem(sys.modules, "dask.distributed", None)             # as if distributed were not installed
    _judge_one_line(*run_main(["scan", str(folder / "log0.csv"), "--cluster", "tcp://127.0.0.1:8786"]),
                    ["needs the optional package distributed", "pip install distributed"])


def test_the_choices_written_in_the_cli_are_the_modules_ones():
    assert cli._SCAN_READERS == READERS and cli._SCAN_SCHEDULERS == SCHEDULERS
    assert set(cli._SCAN_CHECKS) <= _CHECK_OPTIONS


def test_scan_in_a_real_process(folder):
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    proc = subprocess.run([sys.executable, "-m", "posekit.cli", "scan", str(folder / "log1.csv"), "--json"],
                          capture_output=True, text=True, env=env, cwd=ROOT, timeout=120)
    assert proc.returncode == 1 and proc.stderr == ""
    data = json.loads(proc.stdout)
    assert data["files"][0]["findings"]["quaternion_sign_flips"]["first_row"] == 300
    assert data["files"][0]["findings"]["time_gaps"]["first_row"] == 700
