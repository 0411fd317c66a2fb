"""Many logs checked at once (posekit.analysis.fleet): Dask equals the serial loop, bad files are named.

Test data: 20 logs of smooth motion through random keyframes (scipy RotationSpline; scipy is the
reference for the quaternions written), each with quaternion sign flips and a time gap injected at
known rows (q and -q are one rotation: double cover, common practice), some written as Parquet.
The expected rows are where the faults were put.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from scipy.spatial.transform import Rotation, RotationSpline

from posekit.analysis import check_trajectory_csv
from posekit.analysis.fleet import (FLEET_COLUMNS, NoLogsFoundError, check_logs, find_logs)
from posekit.analysis.trajectory import FINDINGS
from posekit.core import compiled
from posekit.io.logs import MissingPackageError, TrajectoryInputError

pd = pytest.importorskip("pandas")
pytest.importorskip("dask")
pa = pytest.importorskip("pyarrow")
pq = pytest.importorskip("pyarrow.parquet")

ROOT = Path(__file__).resolve().parents[1]


def faulty_log(seed: int, n: int = 2000):
    """Times, quaternions (scalar first) and the injected flip rows and gap row of one generated log."""
    rng = np.random.default_rng(seed)
    t = np.arange(n) * 0.01
    keys = np.linspace(0.0, t[-1], 8)
    q = RotationSpline(keys, Rotation.random(keys.size, random_state=seed))(t).as_quat(scalar_first=True)
    q[1:] *= np.cumprod(np.where(np.einsum("ij,ij->i", q[1:], q[:-1]) < 0, -1.0, 1.0))[:, None]
    flips = sorted(int(r) for r in rng.choice(np.arange(10, n - 10), size=3, replace=False))
    for r in flips:
        q[r:] *= -1
    gap = int(rng.integers(100, n - 100))
    t[gap:] += 1.0                                          # one second missing: 100 x the time step
    return t, q, flips, gap


def write_log(folder: Path, seed: int, parquet: bool = False) -> tuple[Path, list[int], int]:
    t, q, flips, gap = faulty_log(seed)
    if parquet:
        path = folder / f"log{seed:02d}.parquet"
        pq.write_table(pa.table({"time": t, "qw": q[:, 0], "qx": q[:, 1], "qy": q[:, 2], "qz": q[:, 3]}), path)
    else:
        path = folder / f"log{seed:02d}.csv"
        path.write_text("time,qw,qx,qy,qz\n" + "".join(",".join(repr(float(v)) for v in (t[i], *q[i])) + "\n"
                                                     for i in range(t.size)))
    return path, flips, gap


@pytest.fixture(scope="module")
def fleet(tmp_path_factory):
    folder = tmp_path_factory.mktemp("fleet")
    made = {}
    for seed in range(20):
        path, flips, gap = write_log(folder, seed, parquet=seed % 5 == 4)
        made[str(path)] = (flips, gap)
    return folder, made


def test_a_dask_run_over_20_files_equals_the_serial_run(fleet):
    folder, made = fleet
    serial = check_logs(folder, scheduler="serial", rate_limit=50.0)
    arrow_threads, loop_threads = pa.cpu_count(), compiled.thread_count()
    threads = check_logs(folder, scheduler="threads", workers=2, rate_limit=50.0)
    assert pa.cpu_count() == arrow_threads                 # pyarrow's pool is not touched (reads run on the workers)
    assert compiled.thread_count() == loop_threads         # and posekit's compiled loops' split
    assert serial.attrs["scheduler"] == "serial" and threads.attrs["scheduler"] == "dask threads, 2 workers"
    assert threads.equals(serial) and list(threads.columns) == list(FLEET_COLUMNS)
    assert serial["file"].unique().tolist() == sorted(made)             # every file, in order
    assert len(serial) == 20 * (len(FINDINGS) + 1)
    # the values are the injected faults, file by file
    for path, (flips, gap) in made.items():
        rows = serial[serial["file"] == path].set_index("finding")
        assert (rows["status"] == "findings").all()
        assert rows.loc["quaternion_sign_flips", "rows"] == 3
        assert rows.loc["quaternion_sign_flips", "first_row"] == flips[0]
        assert rows.loc["quaternion_sign_flips", "last_row"] == flips[-1]
        assert rows.loc["time_gaps", "first_row"] == gap and rows.loc["time_gaps", "rows"] == 1
        assert rows.loc["time_gaps", "first_time"] == pytest.approx(gap * 0.01 + 1.0)
        assert rows.loc["rejected", "rows"] == 0 and rows.loc["rejected", "log_rows"] == 2000
        assert not rows.loc["non_orthonormal", "checked"] and rows.loc["euler_wraps", "checked"]


def test_the_table_says_what_check_trajectory_csv_says_for_each_file(fleet):
    folder, made = fleet
    df = check_logs(sorted(made)[:6], scheduler="threads", workers=2, rate_limit=50.0)
    for path in sorted(made)[:6]:
        report = check_trajectory_csv(path, rate_limit=50.0)
        rows = df[df["file"] == path].set_index("finding")
        for name, finding in report.findings.items():
            assert rows.loc[name, "rows"] == finding.count and rows.loc[name, "spans"] == finding.span_first.size
            assert rows.loc[name, "detail"] == finding.words()
            if finding.count:
                assert rows.loc[name, "first_time"] == report.times[finding.rows[0]]
                assert rows.loc[name, "last_time"] == report.times[finding.rows[-1]]
            else:
                assert pd.isna(rows.loc[name, "first_row"]) and np.isnan(rows.loc[name, "first_time"])


def test_a_bad_file_is_named_with_its_error_and_the_others_finish(tmp_path):
    good = [write_log(tmp_path, seed)[0] for seed in (1, 2, 3)]
    (tmp_path / "broken.csv").write_bytes(b"time,qw,qx,qy,qz\n0,1,0,0,0\n\xff\xfe\n")
    (tmp_path / "words.txt").write_text("just some notes\n")
    bad_row = tmp_path / "one_bad_row.csv"
    lines = good[0].read_text().splitlines()
    lines[5] = lines[5].replace(",", ",oops", 1)
    bad_row.write_text("\n".join(lines) + "\n")
    missing = tmp_path / "missing.csv"
    for scheduler in ("serial", "threads"):
        df = check_logs([tmp_path, missing], scheduler=scheduler)
        status = df.groupby("file", sort=False)["status"].first()
        assert status[str(tmp_path / "broken.csv")] == "failed"
        assert status[str(tmp_path / "words.txt")] == "failed"
        assert status[str(missing)] == "failed"
        assert all(status[str(p)] == "findings" for p in good)
        assert status[str(bad_row)] == "findings"
        errors = df.set_index("file")[["error_type", "error"]]
        assert errors.loc[str(tmp_path / "broken.csv")].tolist() == [
            "LogReadError", f"CSV file '{tmp_path / 'broken.csv'}' is not UTF-8 text: byte 0xff at line 3, column 1 "
                            "(byte offset 27); accepted: UTF-8 text; save it as UTF-8"]
        assert errors.loc[str(tmp_path / "words.txt"), "error_type"] == "EmptyTrajectoryError"   # one line: a header
        assert errors.loc[str(missing), "error_type"] == "LogReadError"
        assert "missing.csv' cannot be read" in errors.loc[str(missing), "error"]
        rejected = df[(df["file"] == str(bad_row)) & (df["finding"] == "rejected")].iloc[0]
        assert rejected["rows"] == 1 and rejected["first_row"] == 4
        assert "row 4 (line 6): text 'oops" in rejected["detail"]
        assert df[df["status"] == "failed"]["finding"].isna().all()


def test_processes_give_the_same_table(fleet):
    folder, made = fleet
    files = sorted(made)[:3]
    assert check_logs(files, scheduler="processes", workers=2).equals(check_logs(files, scheduler="serial"))


def test_finding_files_folders_globs_and_lists(tmp_path):
    (tmp_path / "sub").mkdir()
    for name in ("b.csv", "a.PQ", "c.tsv", "skip.json", "sub/d.csv"):
        (tmp_path / name).write_text("x")
    assert find_logs(tmp_path) == [str(tmp_path / n) for n in ("a.PQ", "b.csv", "c.tsv")]
    assert find_logs(str(tmp_path / "**" / "*.csv")) == [str(tmp_path / "b.csv"), str(tmp_path / "sub" / "d.csv")]
    assert find_logs([tmp_path / "b.csv", tmp_path, tmp_path / "b.csv"]) == \
        [str(tmp_path / n) for n in ("b.csv", "a.PQ", "c.tsv")]                # each file once, first place kept
    with pytest.raises(NoLogsFoundError, match="holds no log files; accepted"):
        find_logs(_empty_folder(tmp_path))
    with pytest.raises(NoLogsFoundError, match="no file matches .*nothing-\\*.csv"):
        find_logs(str(tmp_path / "nothing-*.csv"))
    with pytest.raises(NoLogsFoundError, match="an empty list"):
        check_logs([])
    with pytest.raises(TrajectoryInputError, match="sources: got int"):
        find_logs(5)


def _empty_folder(tmp_path):
    empty = tmp_path / "empty"
    empty.mkdir()
    return empty


@pytest.mark.parametrize("kwargs, words", [
    ({"scheduler": "gpu"}, "scheduler: got 'gpu'"),
    ({"workers": 0}, "workers: got 0"),
    ({"workers": True}, "workers: got True"),
    ({"address": ""}, "address: got ''"),
    ({"address": "tcp://127.0.0.1:1", "scheduler": "threads"}, "both given"),
    ({"progress": "yes"}, "progress: got 'yes'"),
    ({"speed_limit": 3}, "unknown option"),
])
def test_bad_arguments_are_typed_errors(tmp_path, kwargs, words):
    path = write_log(tmp_path, 1)[0]
    with pytest.raises(TrajectoryInputError, match=words) as info:
        check_logs(path, **kwargs)
    assert "accepted" in str(info.value)


def test_a_cluster_address_without_distributed_names_the_package(tmp_path, monkeypatch):
    monkeypatch.setitem(sys.modules, "dask.distributed", None)             # as if distributed were not installed
    path = write_log(tmp_path, 1)[0]
    with pytest.raises(MissingPackageError, match="needs the optional package distributed.*pip install distributed"):
        check_logs(path, address="tcp://127.0.0.1:8786")


def test_no_progress_bar_unless_asked_or_on_a_terminal(tmp_path, capsys):
    path = write_log(tmp_path, 1)[0]
    check_logs(path, scheduler="threads")
    assert capsys.readouterr().err == ""


def test_without_dask_the_loop_runs_and_says_so(tmp_path):
    write_log(tmp_path, 1)
    code = f"""
import sys
class Block:
    def find_spec(self, name, path=None, target=None):
        if name.split('.')[0] == 'dask':
            raise ImportError('blocked for the test')
sys.meta_path.insert(0, Block())
from posekit.analysis.fleet import check_logs
from posekit.io.logs import MissingPackageError
df = check_logs({str(tmp_path)!r})
print(df.attrs["scheduler"], int(df["rows"].sum()) > 0)
try:
    check_logs({str(tmp_path)!r}, scheduler="threads")
except MissingPackageError as exc:
    print(exc)
"""
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT, timeout=120,
                         env={**os.environ, "PYTHONPATH": str(ROOT)})
    assert out.returncode == 0, out.stderr
    first, second = out.stdout.strip().splitlines()
    assert first == "serial (dask is not installed) True"
    assert "needs the optional package dask" in second and "scheduler='serial'" in second
