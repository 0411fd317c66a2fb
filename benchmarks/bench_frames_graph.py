"""Frame-graph lookup speed: posekit's FrameGraph.lookup along a 200-edge chain against
composing the same transforms with scipy.spatial.transform.RigidTransform in the same process.

Prints posekit's time, the reference time and their ratio (no target is asserted anywhere).
"""

from __future__ import annotations

import time

import numpy as np
from scipy.spatial.transform import RigidTransform, Rotation

from posekit.analysis.frames_graph import FrameGraph


def _best(fn, repeat: int = 5) -> float:
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def main() -> None:
    rng = np.random.default_rng(0)
    n = 200
    poses = [RigidTransform.from_components(rng.uniform(-1, 1, 3), Rotation.random(rng=rng)) for _ in range(n)]
    g = FrameGraph()
    for i, p in enumerate(poses):
        g = g.with_edge(f"f{i}", f"f{i + 1}", p.as_matrix())

    def ours():
        return g.lookup("f0", f"f{n}").matrix

    def reference():
        out = RigidTransform.identity()
        for p in poses:
            out = out * p
        return out.as_matrix()

    assert np.allclose(ours(), reference(), atol=1e-9)
    a, b = _best(ours), _best(reference)
    print(f"lookup along {n} edges: posekit {a * 1e3:.3f} ms, scipy RigidTransform {b * 1e3:.3f} ms, "
          f"ratio {a / b:.2f}")

    loops = g
    for k in range(0, n - 10, 20):
        p = poses[k]
        for q in poses[k + 1:k + 5]:
            p = p * q
        loops = loops.with_edge(f"f{k}", f"f{k + 5}", p.as_matrix(), source="second")
    t_check = _best(loops.check_loops, repeat=3)
    t_ref = _best(lambda: [reference() for _ in range(len(loops.loops()))], repeat=3)
    print(f"check_loops with {len(loops.loops())} loops on {n + 1} frames: posekit {t_check * 1e3:.1f} ms; "
          f"scipy composing a {n}-edge chain once per loop {t_ref * 1e3:.1f} ms, ratio {t_check / t_ref:.2f}")


if __name__ == "__main__":
    main()
