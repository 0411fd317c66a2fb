"""Speed of posekit's core conversions for 1e6 rotations, against scipy in the same process.

For each operation it prints posekit's best time, scipy.spatial.transform's best time
(the reference, measured here), the speed-up ``scipy s / posekit s`` and whether it meets
the target, and the memory-traffic floor: the bytes the operation must read and write
divided by the copy bandwidth of this machine (measured with one big numpy copy), with
posekit's ratio to that floor.

Targets: every operation at least 2x as fast as scipy (speed-up >= 2), each within 5x of
the memory floor, ``import posekit`` <= 0.3 s.  Run: ``PYTHONPATH=. python benchmarks/bench_core.py``.
The script reports figures and says met or missed for each target; it never fails a test run.

posekit's column is the route in force (compiled loops when built, see posekit.core.compiled)
on its default threads; ``1 thread`` repeats it on the calling thread alone and ``numpy`` on
the numpy kernels, for comparison (``np x`` is the numpy route's speed-up over scipy).  The
floor counts only the bytes read and written; a new output array also costs the kernel's
zeroing of fresh pages, which no route avoids.
"""

from __future__ import annotations

import subprocess
import sys
import time

import numpy as np
from scipy.spatial.transform import Rotation

import posekit as pk
from posekit.core import compiled
from posekit.core import rotation as rot

N = 1_000_000
REPEATS = 5
#: every operation at least this many times as fast as scipy's
SCIPY_TARGET = 2.0
#: and within this factor of the memory-traffic floor
FLOOR_TARGET = 5.0


def best(fn, repeats=REPEATS):
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def copy_bandwidth() -> float:
    """Bytes per second moved (read + write) by one big numpy copy, best of a few."""
    src = np.random.default_rng(0).standard_normal(64_000_000 // 8 * 4)  # 256 MB
    dst = np.empty_like(src)
    t = best(lambda: np.copyto(dst, src), 5)
    return 2 * src.nbytes / t


def import_time() -> float:
    code = "import time; t = time.perf_counter(); import posekit; print(time.perf_counter() - t)"
    runs = []
    for _ in range(3):
        out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
        runs.append(float(out.stdout.strip()))
    return min(runs)


def main() -> None:
    rng = np.random.default_rng(1)
    angles = rng.uniform(-np.pi, np.pi, (N, 3))
    quats = rng.standard_normal((N, 4))
    quats /= np.linalg.norm(quats, axis=-1, keepdims=True)
    mats = pk.read_rotation(quats, "quaternion")
    mats2 = pk.read_rotation(np.roll(quats, 1, axis=0), "quaternion")
    points = rng.standard_normal((N, 3))
    conv = pk.Convention.parse("sequence=z-y-x axes=intrinsic")
    r_sp = Rotation.from_quat(quats, scalar_first=True)
    r_sp2 = Rotation.from_quat(np.roll(quats, 1, axis=0), scalar_first=True)

    f8 = 8
    cases = [
        # name, posekit call, scipy call (scipy's equivalent API), bytes read + written
        ("euler -> matrix", lambda: pk.read_rotation(angles, "euler", conv),
         lambda: Rotation.from_euler("ZYX", angles).as_matrix(), N * f8 * (3 + 9)),
        ("matrix -> euler", lambda: pk.write_rotation(mats, "euler", conv),
         lambda: Rotation.from_matrix(mats).as_euler("ZYX"), N * f8 * (9 + 3)),
        ("quaternion -> matrix", lambda: pk.read_rotation(quats, "quaternion"),
         lambda: Rotation.from_quat(quats, scalar_first=True).as_matrix(), N * f8 * (4 + 9)),
        ("matrix -> quaternion", lambda: pk.write_rotation(mats, "quaternion"),
         lambda: Rotation.from_matrix(mats).as_quat(scalar_first=True), N * f8 * (9 + 4)),
        ("compose", lambda: pk.compose(mats, mats2), lambda: r_sp * r_sp2, N * f8 * (9 + 9 + 9)),
        ("apply to points", lambda: pk.turn_vectors(mats, points), lambda: r_sp.apply(points),
         N * f8 * (9 + 3 + 3)),
        # the same conversions without input checks (posekit.core.rotation kernels), to show what
        # the validation of every input (finite, orthonormal, det +1, unit length) costs
        ("  kernel e -> m", lambda: rot.matrix_of_euler(angles, "zyx", True),
         lambda: Rotation.from_euler("ZYX", angles).as_matrix(), N * f8 * (3 + 9)),
        ("  kernel m -> e", lambda: rot.euler_of_matrix(mats, "zyx", True),
         lambda: Rotation.from_matrix(mats).as_euler("ZYX"), N * f8 * (9 + 3)),
        ("  kernel q -> m", lambda: rot.matrix_of_quaternion(quats),
         lambda: Rotation.from_quat(quats, scalar_first=True).as_matrix(), N * f8 * (4 + 9)),
        ("  kernel m -> q", lambda: rot.quaternion_of_matrix(mats),
         lambda: Rotation.from_matrix(mats).as_quat(scalar_first=True), N * f8 * (9 + 4)),
    ]
    bw = copy_bandwidth()
    print(f"posekit core benchmark, {N:.0e} rotations, best of {REPEATS}; numpy {np.__version__}, "
          f"scipy {__import__('scipy').__version__}")
    print(f"copy bandwidth (read + write, one big numpy copy): {bw / 1e9:.2f} GB/s")
    print(f"kernel route: {compiled.route()} on {compiled._threads} thread(s) "
          f"(compiled loops {'built' if compiled.available() else 'NOT built'})")
    print(f"{'operation':<22}{'posekit s':>11}{'1 thread':>10}{'numpy':>10}{'scipy s':>10}{'x scipy':>9}"
          f"{'np x':>7}{'floor s':>9}{'pk/floor':>9}  targets (>= 2x scipy; <= 5x floor)")
    misses = []
    for name, ours, theirs, nbytes in cases:
        t_pk = best(ours)
        threads, compiled._threads = compiled._threads, 1
        try:
            t_one = best(ours)
        finally:
            compiled._threads = threads
        with compiled.use("numpy"):
            t_np = best(ours, 3)
        t_sp = best(theirs)
        floor = nbytes / bw
        speedup = t_sp / t_pk
        fast, near_floor = speedup >= SCIPY_TARGET, t_pk <= FLOOR_TARGET * floor
        status = [">= 2x scipy met" if fast else f">= 2x scipy MISSED ({speedup:.2f}x)",
                  "floor met" if near_floor else "floor MISSED"]
        if not (fast and near_floor):
            misses.append(name)
        print(f"{name:<22}{t_pk:>11.4f}{t_one:>10.4f}{t_np:>10.4f}{t_sp:>10.4f}{speedup:>9.1f}{t_sp / t_np:>7.1f}"
              f"{floor:>9.4f}{t_pk / floor:>9.1f}  {', '.join(status)}")
    t_imp = import_time()
    print(f"{'import posekit':<22}{t_imp:>11.4f}  {'met' if t_imp <= 0.3 else 'MISSED'} (target <= 0.3 s; "
          "fresh subprocess, best of 3)")
    print("all targets met" if not misses and t_imp <= 0.3 else
          f"targets missed: {', '.join(misses + ([] if t_imp <= 0.3 else ['import']))}")
    print("Each posekit call validates its input (finite, orthonormal within tolerance, det +1 or unit length);")
    print("the scipy column times scipy's own call for the same job (compose/apply on prebuilt Rotation objects).")


if __name__ == "__main__":
    main()
