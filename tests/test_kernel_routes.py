"""The kernel routes of large batches (posekit.core.compiled): the compiled loops agree with the
numpy kernels row for row, fuse the same input checks (a bad row anywhere in a large batch raises
the same typed error, naming its index), and give the same numbers on any number of threads.

The numpy kernels are the reference here; they are checked against scipy, transforms3d, sympy and
published examples in test_references.py and by every law in test_laws.py (on both routes).
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from conventions import PAIRS, ROUTES, conventions_for, over_pairs, random_euler, random_quaternions

import posekit as pk
from posekit.core import compiled
from posekit.core import errors as E
from posekit.core import rotation as rot

ROOT = Path(__file__).resolve().parents[1]
N = 3 * rot.BLOCK + 37  # several blocks and a short last one; far above compiled.MIN_ROWS
needs_loops = pytest.mark.skipif(not compiled.available(), reason="compiled loops not built")


def test_loops_are_built_where_a_c_compiler_is():
    """The package build compiles the loops wherever a C compiler exists (CI machines have gcc)."""
    if shutil.which("cc") is None and shutil.which("gcc") is None:
        pytest.skip("no C compiler on this machine: posekit runs on its numpy kernels")
    assert compiled.available(), "posekit/core/_loops.c was not built; reinstall with `make install`"


def both(fn):
    """``fn()`` on the compiled route and on the numpy route."""
    with compiled.use("compiled"):
        fast = fn()
    with compiled.use("numpy"):
        slow = fn()
    return fast, slow


def agree(a, b, tol=1e-13):
    a, b = np.asarray(a), np.asarray(b)
    assert a.shape == b.shape
    assert np.max(np.abs(a - b)) <= tol, np.max(np.abs(a - b))


@needs_loops
@over_pairs
def test_routes_agree_for_every_convention(pair):
    rng = np.random.default_rng(PAIRS.index(pair))
    for i, conv in enumerate(conventions_for(pair)):
        if i % 8:  # every field value still appears: 16 of the 128 combinations per pair, spread evenly
            continue
        unit = 180.0 / np.pi if conv.degrees else 1.0
        angles = random_euler(rng, (N,)) * unit
        m_fast, m_slow = both(lambda: pk.read_rotation(angles, "euler", conv))
        agree(m_fast, m_slow)
        e_fast, e_slow = both(lambda: pk.write_rotation(m_slow, "euler", conv))
        # angles agree except where both routes sit on the (-pi, pi] seam or at a pole; compare orientations
        assert np.max(pk.angle_between(pk.read_rotation(e_fast, "euler", conv),
                                       pk.read_rotation(e_slow, "euler", conv))) <= 1e-12
        q_fast, q_slow = both(lambda: pk.write_rotation(m_slow, "quaternion", conv))
        agree(q_fast, q_slow)
        r_fast, r_slow = both(lambda: pk.read_rotation(q_slow, "quaternion", conv))
        agree(r_fast, r_slow)


@needs_loops
def test_routes_agree_on_canonical_kernels_and_products():
    rng = np.random.default_rng(7)
    q = random_quaternions(rng, (N,))
    q[:5] = [[0, 1, 0, 0], [0, 0, 1, 0], [0, 0, 0, 1], [0, 0.6, 0.8, 0], [1, 0, 0, 0]]  # 180-degree turns, identity
    m_fast, m_slow = both(lambda: rot.matrix_of_quaternion(q))
    agree(m_fast, m_slow)
    agree(*both(lambda: rot.quaternion_of_matrix(m_slow)))
    for seq, intrinsic in (("zyz", False), ("zyx", True), ("xzy", False), ("yxy", True)):
        a_fast, a_slow = both(lambda: rot.euler_of_matrix(m_slow, seq, intrinsic))
        agree(a_fast[1], a_slow[1])  # pole distances
        # the angles themselves (the C library's atan2 against numpy's arctan2), across the (-pi, pi] seam too
        agree(np.remainder(a_fast[0] - a_slow[0] + np.pi, 2 * np.pi) - np.pi, np.zeros_like(a_fast[0]), 1e-12)
    m2 = np.roll(m_slow, 1, axis=0)
    agree(*both(lambda: pk.compose(m_slow, m2, m_slow)))
    v = rng.standard_normal((N, 3))
    agree(*both(lambda: pk.turn_vectors(m_slow, v)))


BAD_ROW = N - 5  # in the last, short block


def batch_with(bad, good):
    out = np.repeat(np.asarray(good, dtype=float)[None], N, axis=0)
    out[BAD_ROW] = bad
    return out


EYE = np.eye(3)
SCALED = 1.01 * np.eye(3)
MIRROR = np.diag([1.0, -1.0, 1.0])
LARGE = np.full((3, 3), 1e200)  # products overflow: must fail, never pass as NaN
# (id, call on a batch with one bad row, error type, words the message must hold)
BAD_BATCHES = [
    ("read-matrix-scaled", lambda: pk.read_rotation(batch_with(SCALED, EYE)), E.NotOrthonormalError, "not orthonormal"),
    ("read-matrix-mirror", lambda: pk.read_rotation(batch_with(MIRROR, EYE)), E.ReflectionError, "reflection"),
    ("read-matrix-overflow", lambda: pk.read_rotation(batch_with(LARGE, EYE)), E.NotOrthonormalError, "not orthonormal"),
    ("write-quaternion-mirror", lambda: pk.write_rotation(batch_with(MIRROR, EYE), "quaternion"), E.ReflectionError,
     "reflection"),
    ("write-euler-scaled", lambda: pk.write_rotation(batch_with(SCALED, EYE), "euler", "unit=degrees"),
     E.NotOrthonormalError, "not orthonormal"),
    ("write-euler-mirror", lambda: pk.write_rotation(batch_with(MIRROR, EYE), "euler", "axes=extrinsic"),
     E.ReflectionError, "reflection"),
    ("compose-second-mirror", lambda: pk.compose(batch_with(EYE, EYE), batch_with(MIRROR, EYE)), E.ReflectionError,
     "reflection"),
    ("compose-first-scaled", lambda: pk.compose(batch_with(SCALED, EYE), batch_with(EYE, EYE)),
     E.NotOrthonormalError, "not orthonormal"),
    ("turn-scaled", lambda: pk.turn_vectors(batch_with(SCALED, EYE), np.ones((N, 3))), E.NotOrthonormalError,
     "not orthonormal"),
    ("read-matrix-nan", lambda: pk.read_rotation(batch_with(np.full((3, 3), np.nan), EYE)), E.NotFiniteError, "NaN"),
    ("write-euler-inf", lambda: pk.write_rotation(batch_with(np.diag([np.inf, 1, 1]), EYE), "euler"),
     E.NotFiniteError, "infinity"),
    ("write-quaternion-nan", lambda: pk.write_rotation(batch_with(np.full((3, 3), np.nan), EYE), "quaternion"),
     E.NotFiniteError, "NaN"),
    ("compose-inf", lambda: pk.compose(batch_with(EYE, EYE), batch_with(np.diag([1, -np.inf, 1]), EYE)),
     E.NotFiniteError, "infinity"),
    ("turn-nan-matrix", lambda: pk.turn_vectors(batch_with(np.full((3, 3), np.nan), EYE), np.ones((N, 3))),
     E.NotFiniteError, "NaN"),
    ("read-quaternion-inf-normalised", lambda: pk.read_rotation(batch_with([np.inf, 0, 0, 0], [1, 0, 0, 0]),
                                                                "quaternion", normalise=True), E.NotFiniteError,
     "infinity"),
    ("read-quaternion-nan", lambda: pk.read_rotation(batch_with([np.nan, 0, 0, 0], [1, 0, 0, 0]), "quaternion"),
     E.NotFiniteError, "NaN"),
    ("read-quaternion-long", lambda: pk.read_rotation(batch_with([1.1, 0, 0, 0], [1, 0, 0, 0]), "quaternion"),
     E.NotUnitQuaternionError, "length"),
    ("read-quaternion-zero", lambda: pk.read_rotation(batch_with([0, 0, 0, 0], [0, 0, 0, 1]), "quaternion",
                                                      "scalar=last", normalise=True), E.ZeroQuaternionError, "zero"),
]


@pytest.mark.usefixtures("kernel_route")
@pytest.mark.parametrize("name, call, error, words", BAD_BATCHES, ids=[b[0] for b in BAD_BATCHES])
def test_bad_row_in_large_batch(name, call, error, words):
    with pytest.raises(error) as info:
        call()
    assert words in str(info.value)
    assert str(BAD_ROW) in str(info.value), "the message names the index of the bad row"


@needs_loops
def test_normalise_reads_long_quaternions_on_purpose():
    q = batch_with([2.0, 0, 0, 0], [0, 0, 0, 3.0])
    fast, slow = both(lambda: pk.read_rotation(q, "quaternion", normalise=True))
    agree(fast, slow)


@needs_loops
def test_threads_do_not_change_results(monkeypatch):
    rng = np.random.default_rng(3)
    angles = random_euler(rng, (N,))
    one = [pk.read_rotation(angles, "euler"), pk.write_rotation(pk.read_rotation(angles, "euler"), "euler")]
    monkeypatch.setattr(compiled, "_threads", 3)
    monkeypatch.setattr(compiled, "PARALLEL_ROWS", 100)
    three = [pk.read_rotation(angles, "euler"), pk.write_rotation(one[0], "euler")]
    assert all(np.array_equal(a, b) for a, b in zip(one, three))
    assert compiled.in_parts(10_000, lambda a, b: (a, b)) == [(0, 3333), (3333, 6666), (6666, 10_000)]


def test_route_names_are_checked():
    with pytest.raises(E.PoseInputError, match="accepted: compiled, numpy"):
        with compiled.use("fast"):
            pass


@pytest.mark.parametrize("variable, value, words", [("POSEKIT_KERNELS", "quick", "accepted: compiled, numpy"),
                                                     ("POSEKIT_THREADS", "two", "whole number")])
def test_bad_environment_settings_say_what_is_accepted(variable, value, words):
    code = "import posekit"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT,
                         env={**os.environ, "PYTHONPATH": str(ROOT), variable: value})
    assert out.returncode != 0 and words in out.stderr and "PoseInputError" in out.stderr


def test_numpy_route_from_the_environment():
    code = "import posekit.core.compiled as c; print(c.route())"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT, check=True,
                         env={**os.environ, "PYTHONPATH": str(ROOT), "POSEKIT_KERNELS": "numpy"})
    assert out.stdout.strip() == "numpy"


@needs_loops
@pytest.mark.skipif(not hasattr(os, "fork"), reason="no fork on this platform")
def test_forked_child_gets_its_own_threads(monkeypatch):
    """A process forked after the thread pool started must not wait for the parent's threads."""
    import multiprocessing

    monkeypatch.setattr(compiled, "_threads", 2)
    angles = random_euler(np.random.default_rng(5), (compiled.PARALLEL_ROWS + 10,))
    expected = pk.read_rotation(angles, "euler")  # starts the pool in this process
    with multiprocessing.get_context("fork").Pool(1) as pool:
        got = pool.apply_async(pk.read_rotation, (angles, "euler")).get(timeout=60)
    assert np.array_equal(got, expected)


def test_without_the_compiled_loops_posekit_runs_on_numpy():
    """As on a machine where the install found no C compiler: the import of _loops fails."""
    code = ("import sys, importlib.abc\n"
            "class NoLoops(importlib.abc.MetaPathFinder):\n"
            "    def find_spec(self, name, path, target=None):\n"
            "        if name == 'posekit.core._loops':\n"
            "            raise ImportError('not built')\n"
            "sys.meta_path.insert(0, NoLoops())\n"
            "import numpy as np, posekit as pk\n"
            "from posekit.core import compiled\n"
            "m = pk.read_rotation(np.zeros((1000, 3)), 'euler')\n"
            "print(compiled.available(), compiled.route(), float(abs(m - np.eye(3)).max()))\n")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT, check=True,
                         env={**os.environ, "PYTHONPATH": str(ROOT)})
    assert out.stdout.split() == ["False", "numpy", "0.0"]


def _c_constant(name: str) -> float:
    text = (ROOT / "posekit" / "core" / "_loops.c").read_text()
    import re
    return float(re.search(rf"#define {name} (\S+)", text).group(1))


def test_constants_shared_by_the_loops_and_the_numpy_kernels():
    """The C loops and the numpy kernels snap to the pole and rescale long quaternions at the same
    values, so the two routes take the same branch for every row."""
    assert _c_constant("POLE_SNAP") == rot.POLE_SNAP
    assert (_c_constant("NORM2_LOW"), _c_constant("NORM2_HIGH")) == rot.NORM2_RANGE
    assert _c_constant("PI") == np.pi


@pytest.mark.parametrize("seq, intrinsic", [("zyx", True), ("xzx", False)], ids=["z-y-x-intrinsic", "x-z-x-extrinsic"])
def test_euler_kernel_for_large_and_edge_angles(seq, intrinsic):
    """Angles on multiples of pi/2, far outside one turn and up to 1e15 give, on both routes, the product
    of the elementary matrices built with numpy's sin/cos (the reference).  The kernel is called directly:
    read_rotation may refuse angles too large to name a rotation precisely, the kernel takes any finite one."""
    edges = np.array([k * np.pi / 2 for k in range(-12, 13)] + [np.pi / 4, -np.pi / 4, 1e-300, -0.0, 0.0])
    far = np.array([1e3, -2.5e4, 1.999e5, 2.001e5, -7.3e5, 1e9, 3.3e12, -1e15])
    values = np.concatenate([edges, np.nextafter(edges, np.inf), far])
    rng = np.random.default_rng(11)
    angles = rng.choice(values, size=(3 * len(values), 3))
    e = [rot.elementary_matrix(seq[i], angles[:, i]) for i in range(3)]
    want = e[0] @ e[1] @ e[2] if intrinsic else e[2] @ e[1] @ e[0]
    # within a few ulp: the C library and numpy reduce large arguments exactly, so the error does not grow
    # with the angle; measured: at most 6.7e-16 on the compiled route (libm), 1.1e-15 on the numpy route
    for route in ROUTES:
        with compiled.use(route):
            got = rot.matrix_of_euler(angles, seq, intrinsic)
        assert np.max(np.abs(got - want)) <= 4e-15, route


def test_thread_split_can_be_narrowed_for_a_block_and_is_restored():
    """compiled.threads(n): the split of large batches within a block (callers that are parallel
    themselves); the results do not depend on it (the same bits as the default split)."""
    rng = np.random.default_rng(7)
    q = rng.normal(size=(compiled.PARALLEL_ROWS * 2 + 5, 4))
    q /= np.linalg.norm(q, axis=1, keepdims=True)
    before = compiled.thread_count()
    whole = pk.read_rotation(q, "quaternion")
    with compiled.threads(1):
        assert compiled.thread_count() == 1
        one = pk.read_rotation(q, "quaternion")
    assert compiled.thread_count() == before
    np.testing.assert_array_equal(one, whole)
    for bad in (0, -1, 1.5, True, "2"):
        with pytest.raises(E.PoseInputError, match="whole number"):
            with compiled.threads(bad):
                pass
    assert compiled.thread_count() == before
