"""Speed of checking a folder of 20 logs on Dask against the serial loop (target: within 1.3x the ideal).

The ideal is the serial time divided by the workers (this machine's processors).  Printed:
the serial run (``check_logs(..., scheduler="serial")``: one file after another, each read by
pyarrow and scanned), Dask's local scheduler with threads and with processes, each one's
ratio to the ideal, and that every run's table equals the serial one.

The logs: 20 files of smooth motion through random keyframes (scipy RotationSpline) at
100 Hz, 200 000 rows each, quaternions written with 9 significant digits; one file has
a bad row and one is not a log at all, so the table also carries a failed file.
Run: ``PYTHONPATH=. python benchmarks/bench_fleet.py``
"""

from __future__ import annotations

import os
import tempfile
import time
from pathlib import Path

import numpy as np

FILES = 20
ROWS = 200_000
TARGET = 1.3


def make_folder(folder: Path) -> None:
    from scipy.spatial.transform import Rotation, RotationSpline

    t = np.arange(ROWS) / 100.0
    keys = np.linspace(0.0, t[-1], 60)
    for i in range(FILES):
        q = RotationSpline(keys, Rotation.random(keys.size, random_state=i))(t).as_quat(scalar_first=True)
        q[1:] *= np.cumprod(np.where(np.einsum("ij,ij->i", q[1:], q[:-1]) < 0, -1.0, 1.0))[:, None]
        path = folder / f"log{i:02d}.csv"
        with open(path, "w") as fh:
            fh.write("time,qw,qx,qy,qz\n")
            np.savetxt(fh, np.column_stack([t, q]), delimiter=",", fmt="%.9g")
        if i == 7:
            lines = path.read_bytes().split(b"\n")
            lines[12_345] = lines[12_345].replace(b",", b",bad", 1)
            path.write_bytes(b"\n".join(lines))
    (folder / "notes.txt").write_text("not a log\n")


def timed(fn, repeat=3):
    """Best wall time of ``repeat`` runs, the processor time of that run, and the result."""
    best, cpu, out = np.inf, np.nan, None
    for _ in range(repeat):
        start, start_cpu = time.perf_counter(), time.process_time()
        out = fn()
        wall = time.perf_counter() - start
        if wall < best:
            best, cpu = wall, time.process_time() - start_cpu
    return best, cpu, out


def main():
    from posekit.analysis.fleet import check_logs

    workers = os.cpu_count() or 1
    with tempfile.TemporaryDirectory() as d:
        folder = Path(d)
        make_folder(folder)
        check_logs(folder, scheduler="serial", rate_limit=10.0)               # warm up: imports, page cache
        serial, serial_cpu, reference = timed(lambda: check_logs(folder, scheduler="serial", rate_limit=10.0))
        ideal = serial / workers
        print(f"{FILES + 1} files ({FILES} logs of {ROWS:,} rows, one with a bad row, and one text file), "
              f"{workers} processors; load average before the runs {os.getloadavg()[0]:.2f} (other programs' "
              "work leaves fewer processors than counted)")
        print(f"  serial:               {serial:7.3f} s   (processor time {serial_cpu:.3f} s)")
        print(f"  ideal (serial / {workers}):   {ideal:7.3f} s")
        for scheduler in ("threads", "processes"):
            seconds, cpu, df = timed(lambda: check_logs(folder, scheduler=scheduler, workers=workers,
                                                        rate_limit=10.0), repeat=3 if scheduler == "threads" else 2)
            same = df.equals(reference)
            busy = f"processor time {cpu:.3f} s, {cpu / seconds:.2f} processors busy" if scheduler == "threads" else \
                "its worker processes' time is not counted here"
            print(f"  dask {scheduler:10s}:    {seconds:7.3f} s   ratio to ideal {seconds / ideal:5.2f}   "
                  f"(target <= {TARGET}: {'met' if seconds <= TARGET * ideal else 'NOT met'}); "
                  f"table equals the serial one: {same}; {busy}")
        print(f"  statuses: {reference.groupby('file', sort=False)['status'].first().value_counts().to_dict()}")


if __name__ == "__main__":
    main()
