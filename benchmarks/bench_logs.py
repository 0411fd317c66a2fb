"""Speed and memory of reading and checking a 1e6-row quaternion log (CSV and Parquet).

Targets: a clean 1e6-row log read and checked (``check_trajectory_csv``) in <= 1 s (required),
<= 0.5 s if reachable; one bad row not much slower.

Reference, measured in the same process on the same file: ``pyarrow.csv.read_csv(path)`` alone
(its defaults: type inference, threads), i.e. reading the numbers with no line numbers, no
reasons and no checks.  Also printed: the Python reader (``reader="python"``, what runs without
pyarrow), the read alone, the check alone on the arrays (``check_trajectory``), the Parquet file
of the same arrays, and each route's peak memory above the imports (maximum resident size of a
fresh process: its high-water mark, VmHWM in /proc/self/status).

The log: smooth motion through random keyframes (scipy RotationSpline), 100 Hz, written with
9 significant digits (``%.9g``, as loggers commonly do); the bad copy has text in one field of
row 500 000.  Run: ``PYTHONPATH=. python benchmarks/bench_logs.py``
"""

from __future__ import annotations

import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

N = 1_000_000
TARGET, STRETCH = 1.0, 0.5
BAD_ROW = 500_000


def make_logs(folder: Path) -> dict[str, Path]:
    from scipy.spatial.transform import Rotation, RotationSpline
    import pyarrow as pa
    import pyarrow.parquet as pq

    keys = np.linspace(0.0, N / 100.0, 200)
    spline = RotationSpline(keys, Rotation.random(keys.size, random_state=4))
    t = np.arange(N) / 100.0
    q = spline(t).as_quat(scalar_first=True)
    flips = np.einsum("ij,ij->i", q[1:], q[:-1]) < 0
    q[1:] *= np.cumprod(np.where(flips, -1.0, 1.0))[:, None]
    clean = folder / "clean.csv"
    with open(clean, "w") as fh:
        fh.write("time,qw,qx,qy,qz\n")
        np.savetxt(fh, np.column_stack([t, q]), delimiter=",", fmt="%.9g")
    lines = clean.read_bytes().split(b"\n")
    lines[BAD_ROW + 1] = lines[BAD_ROW + 1].replace(b",", b",x", 1)
    bad = folder / "bad.csv"
    bad.write_bytes(b"\n".join(lines))
    parquet = folder / "clean.parquet"
    pq.write_table(pa.table({"time": t, "qw": q[:, 0], "qx": q[:, 1], "qy": q[:, 2], "qz": q[:, 3]}), parquet)
    return {"clean": clean, "bad": bad, "parquet": parquet}


def best(fn, repeat=3):
    times = []
    for _ in range(repeat):
        start = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - start)
    return min(times), out


PEAK = """
import resource
def peak():  # KiB: the process's own high-water mark (ru_maxrss would carry the parent's across exec on Linux)
    try:
        with open("/proc/self/status") as fh:
            return next(int(line.split()[1]) for line in fh if line.startswith("VmHWM:"))
    except OSError:
        return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
"""


def peak_memory(path: Path, reader: str) -> float:
    """MiB of resident memory a fresh process adds while reading and checking ``path`` (after its imports)."""
    code = (PEAK + "import numpy, scipy, pyarrow, pyarrow.csv, pyarrow.parquet, pyarrow.compute\n"
            "from posekit.analysis import check_trajectory_csv\nimport posekit.io.logs\nbefore = peak()\n"
            f"check_trajectory_csv({str(path)!r}, reader={reader!r})\n"
            "print((peak() - before) / 1024)")
    env = {**os.environ, "PYTHONPATH": str(Path(__file__).resolve().parents[1])}
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env, check=True)
    return float(out.stdout.strip())


def main():
    import pyarrow.csv as pacsv
    import pyarrow.parquet as pq

    from posekit.analysis import check_trajectory, check_trajectory_csv, read_trajectory_csv

    with tempfile.TemporaryDirectory() as d:
        files = make_logs(Path(d))
        size = files["clean"].stat().st_size
        print(f"log of {N:,} quaternion rows: CSV {size / 2**20:.1f} MiB, Parquet "
              f"{files['parquet'].stat().st_size / 2**20:.1f} MiB")
        check_trajectory_csv(files["clean"])                                  # warm up (imports, page cache)
        ref, _ = best(lambda: pacsv.read_csv(files["clean"]), 5)
        ref_pq, _ = best(lambda: pq.read_table(files["parquet"]), 5)
        print(f"  reference pyarrow.csv.read_csv alone:        {ref:7.3f} s")
        print(f"  reference pyarrow.parquet.read_table alone:  {ref_pq:7.3f} s")
        rows = []
        for label, path, reader, repeat in [("clean CSV, pyarrow reader", files["clean"], "pyarrow", 5),
                                            ("bad-row CSV, pyarrow reader", files["bad"], "pyarrow", 5),
                                            ("Parquet", files["parquet"], "pyarrow", 5),
                                            ("clean CSV, Python reader", files["clean"], "python", 1),
                                            ("bad-row CSV, Python reader", files["bad"], "python", 1)]:
            read_s, table = best(lambda: read_trajectory_csv(path, reader=reader), repeat)
            check_s, _ = best(lambda: check_trajectory(table.times, table.values, table.kind), repeat)
            both_s, report = best(lambda: check_trajectory_csv(path, reader=reader), repeat)
            assert report.rows == N and len(report.rejected) == (1 if "bad" in label else 0)
            if "bad" in label:
                assert report.rejected[0].line == BAD_ROW + 2, report.rejected[0]
            rows.append((label, read_s, check_s, both_s, peak_memory(path, reader)))
        print(f"  {'':29s} {'read':>7s} {'check':>7s} {'read+check':>11s} {'ratio to ref':>13s} {'peak MiB':>9s}")
        for label, read_s, check_s, both_s, mib in rows:
            print(f"  {label:29s} {read_s:7.3f} {check_s:7.3f} {both_s:11.3f} {both_s / ref:13.2f} {mib:9.0f}")
        clean, bad = rows[0][3], rows[1][3]
        verdict = "met" if clean <= STRETCH else ("met (required 1 s; 0.5 s not reached)" if clean <= TARGET
                                                   else "NOT met")
        print(f"  clean CSV read and checked: {clean:.3f} s, target <= {TARGET:g} s (stretch {STRETCH:g} s): {verdict}")
        print(f"  one bad row: {bad:.3f} s = {bad / clean:.2f} x the clean log "
              f"({'met' if bad <= TARGET else 'NOT met'} against {TARGET:g} s)")
        print(f"  the scan alone (check_trajectory on the arrays) takes {rows[0][2]:.3f} s of it")


if __name__ == "__main__":
    main()
