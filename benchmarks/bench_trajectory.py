"""Benchmark: scan a 1e6-pose quaternion trajectory (target <= 2 s, peak memory <= 3x the input arrays).

Prints posekit's time and traced peak memory, and two reference figures measured in
this process on the same arrays: scipy.spatial.transform.Rotation.from_quat(...).as_euler
(the Euler readback alone, no checks) and a plain numpy pass (norms, neighbour dot
products, time steps).  The data is an invented delivery-robot log with a few faults
injected so every check has something to find.
"""

from __future__ import annotations

import time
import tracemalloc

import numpy as np
from scipy.spatial.transform import Rotation

import posekit as pk
from posekit.analysis import check_trajectory, sign_continuous

N = 1_000_000


def make_log(n=N):
    t = np.arange(n) * 0.01
    yaw = 1.2 * np.sin(0.04 * t) + 0.003 * t            # turns dominate, as for a road vehicle
    a = np.stack([yaw, 0.01 * np.sin(0.5 * t), 0.01 * np.cos(0.3 * t)], axis=-1)
    q = sign_continuous(pk.write_rotation(pk.read_rotation(a, "euler", None), "quaternion", None))
    q[200_000:300_000] *= -1          # a run with the other sign
    q[400_000] *= 1.01                # norm drift
    t[600_000:] += 1.0                # a one-second gap
    return np.ascontiguousarray(t), np.ascontiguousarray(q)


def timed(fn, repeat=3):
    best = np.inf
    for _ in range(repeat):
        start = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - start)
    return best, out


def main():
    t, q = make_log()
    input_bytes = t.nbytes + q.nbytes
    scan = lambda: check_trajectory(t, q, "quaternion", "sequence=z-y-x", rate_limit=5.0)  # noqa: E731
    scan()  # warm up
    seconds, rep = timed(scan)
    tracemalloc.start()
    scan()
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()

    prior_scan = lambda: check_trajectory(t, q, "quaternion", "sequence=z-y-x", rate_limit=5.0,  # noqa: E731
                                          ground_vehicle=True)
    prior_seconds, prior_rep = timed(prior_scan, repeat=1)
    tracemalloc.start()
    prior_scan()
    _, prior_peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()

    scipy_seconds, _ = timed(lambda: Rotation.from_quat(q, scalar_first=True).as_euler("ZYX"))
    tracemalloc.start()
    Rotation.from_quat(q, scalar_first=True).as_euler("ZYX")
    _, scipy_peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()

    def plain():
        n = np.sqrt(np.einsum("ij,ij->i", q, q))
        d = np.einsum("ij,ij->i", q[1:], q[:-1]) < 0
        dt = np.diff(t)
        return n, d, dt

    numpy_seconds, _ = timed(plain)

    print(f"trajectory scan of {N:,} quaternion rows (posekit.analysis.check_trajectory)")
    print(f"  findings: {rep.counts()}")
    print(f"  posekit time:           {seconds:8.3f} s   (target <= 2 s: {'met' if seconds <= 2 else 'NOT met'})")
    print(f"  scipy as_euler time:    {scipy_seconds:8.3f} s   ratio posekit/scipy = {seconds / scipy_seconds:.2f}")
    print(f"  plain numpy pass time:  {numpy_seconds:8.3f} s   ratio posekit/numpy = {seconds / numpy_seconds:.2f}")
    print(f"  input arrays:           {input_bytes / 1e6:8.1f} MB")
    print(f"  posekit peak (traced):  {peak / 1e6:8.1f} MB   = {peak / input_bytes:.2f} x input "
          f"(target <= 3x: {'met' if peak <= 3 * input_bytes else 'NOT met'})")
    print(f"  with the ground-vehicle prior: {prior_seconds:.3f} s, peak {prior_peak / 1e6:.1f} MB "
          f"= {prior_peak / input_bytes:.2f} x input; prior {'passed' if prior_rep.prior.passed else 'failed'}")
    print(f"  scipy peak (traced):    {scipy_peak / 1e6:8.1f} MB   ratio posekit/scipy = {peak / scipy_peak:.2f}")


if __name__ == "__main__":
    main()
