"""Which kernels serve large batches: the compiled loops, or numpy.

posekit's conversions, checks, products and turns of more than ``MIN_ROWS`` rows run in
compiled loops (``posekit/core/_loops.c``) when that module was built at install time, and
in the blocked numpy kernels of :mod:`posekit.core.rotation`, :mod:`~posekit.core.checks`
and :mod:`~posekit.core.ops` otherwise.  The module is optional: setup.py builds it with the
flags the C compiler at hand accepts, and an install without a C compiler (or whose compile
fails) still succeeds; :func:`available` then says False and every batch takes the numpy
route, with the same results and errors.

What "the same" means, and what the tests (``tests/test_kernel_routes.py``,
``tests/test_kernel_special_values.py``, every law of ``tests/test_laws.py`` on both routes)
hold the loops to:

- The loops run the numpy kernels' formulas in the same order of operations (no fused
  multiply-add, no reordering; the structural zeros of elementary quaternions are skipped
  as the numpy kernels skip them).  Sines, cosines, arctangents and square roots come from
  the C library (``sin``, ``cos``, ``atan2``, ``sqrt`` of ``<math.h>``); the numpy kernels use
  numpy's functions, which may round differently in the last bits.  So on exact inputs
  (entries 0, -0, +-1, ...) both routes give the same bits, signs of zero included, and
  elsewhere they agree to a few units in the last place.
- NaN and infinity fail every fused check, so both routes refuse them with the same typed
  error (:class:`~posekit.core.errors.NotFiniteError`).  Entries so large that products
  overflow fail the orthonormality check on both routes.
- Quaternions whose squared length would overflow or underflow (components beyond about
  1e150, or all below about 1e-150) are scaled by a power of two before the length is divided
  out, in both routes alike (``rotation.NORM2_RANGE``).

The loops fuse the input check (orthonormality, determinant, unit length) into the
conversion, so a batch is read once.  When a loop counts failing rows, the caller runs the
numpy check, which raises the typed error with its message; should the numpy check pass a
row the loop failed (a value on the tolerance's edge, rounded differently), the numpy
check's verdict stands and the loop's result is used.

Choose the route:

- the environment variable ``POSEKIT_KERNELS=numpy`` (or ``compiled``) before import;
- :func:`use` as a context manager, e.g. ``with posekit.core.compiled.use("numpy"): ...``;
- :func:`route` tells which route is in force, :func:`available` whether the loops were built.

The compiled loops release the GIL, so a batch of at least ``PARALLEL_ROWS`` rows is split
into contiguous parts that run on up to ``POSEKIT_THREADS`` threads (default: the number
of processors, at most 4; ``POSEKIT_THREADS=1`` keeps everything on the calling thread).
Every row is computed by the same loop whichever part it falls in, so results do not
depend on the number of threads.
"""

from __future__ import annotations

import contextlib
import os
import threading

from .errors import PoseInputError

try:  # built from _loops.c by the package install; optional
    from . import _loops
except ImportError:  # pragma: no cover - depends on the install
    _loops = None

ROUTES = ("compiled", "numpy")
#: Batches longer than this use the compiled loops (shorter ones take the plain numpy route).
MIN_ROWS = 64
#: Batches of at least this many rows are split across threads.
PARALLEL_ROWS = 1 << 15


def _thread_count() -> int:
    text = os.environ.get("POSEKIT_THREADS", "").strip()
    if not text:
        return max(1, min(os.cpu_count() or 1, 4))
    if not text.isdigit() or int(text) < 1:
        raise PoseInputError(f"POSEKIT_THREADS: got {text!r}; accepted: a whole number >= 1 (or unset)")
    return int(text)


_threads = _thread_count()
_pool = None
_pool_lock = threading.Lock()


def _executor():
    global _pool
    with _pool_lock:
        if _pool is None:
            from concurrent.futures import ThreadPoolExecutor
            _pool = ThreadPoolExecutor(max_workers=_threads - 1, thread_name_prefix="posekit-loops")
        return _pool


@contextlib.contextmanager
def threads(count: int):
    """Within the block, large batches are split over ``count`` threads at most (process-wide).

    For callers that are parallel themselves (several files checked side by side on threads):
    the loops then stay on the calling thread instead of each call splitting again.

    >>> with threads(1):
    ...     thread_count()
    1
    """
    global _threads
    if isinstance(count, bool) or not isinstance(count, int) or count < 1:
        raise PoseInputError(f"threads: got {count!r}; accepted: a whole number >= 1")
    before = _threads
    _threads = count
    try:
        yield
    finally:
        _threads = before


def thread_count() -> int:
    """How many threads a large batch is split over now (``POSEKIT_THREADS``, or :func:`threads`)."""
    return _threads


def _forget_pool_in_child() -> None:
    """A forked child has none of the parent's threads: start a fresh pool there when needed."""
    global _pool, _pool_lock
    _pool, _pool_lock = None, threading.Lock()


if hasattr(os, "register_at_fork"):
    os.register_at_fork(after_in_child=_forget_pool_in_child)


def over_rows(loop, arrays, *args) -> list:
    """``loop(*row_slices, *args)`` over parts of the rows of ``arrays`` (inputs and outputs,
    all with the same rows; None passes through), as :func:`in_parts` splits them."""
    return in_parts(len(arrays[0]), lambda a, b: loop(*(None if x is None else x[a:b] for x in arrays), *args))


def in_parts(rows: int, work) -> list:
    """Run ``work(start, stop)`` over contiguous parts of ``range(rows)``, in parallel for
    large batches; returns the parts' results in order."""
    parts = _threads if rows >= PARALLEL_ROWS else 1
    if parts == 1:
        return [work(0, rows)]
    bounds = [rows * k // parts for k in range(parts + 1)]
    pool = _executor()
    later = [pool.submit(work, a, b) for a, b in zip(bounds[1:-1], bounds[2:])]
    first = work(bounds[0], bounds[1])
    return [first] + [f.result() for f in later]


def _initial_route() -> str:
    wanted = os.environ.get("POSEKIT_KERNELS", "").strip()
    if wanted and wanted not in ROUTES:
        raise PoseInputError(f"POSEKIT_KERNELS: got {wanted!r}; accepted: {', '.join(ROUTES)} (or unset)")
    if wanted == "numpy" or _loops is None:
        return "numpy"
    return "compiled"


_route = _initial_route()


def available() -> bool:
    """True when the compiled loops were built and import."""
    return _loops is not None


def route() -> str:
    """The route in force for large batches: ``"compiled"`` or ``"numpy"``."""
    return _route


@contextlib.contextmanager
def use(name: str):
    """Run a block with large batches on one route (``"compiled"`` or ``"numpy"``)."""
    global _route
    if name not in ROUTES:
        raise PoseInputError(f"kernel route: got {name!r}; accepted: {', '.join(ROUTES)}")
    if name == "compiled" and _loops is None:
        raise PoseInputError("kernel route 'compiled': the compiled loops were not built (no C compiler at "
                             "install time?); reinstall posekit with a C compiler, or use 'numpy'")
    before, _route = _route, name
    try:
        yield
    finally:
        _route = before


def loops_for(rows: int):
    """The compiled loops module when ``rows`` rows should use it, else None."""
    if _route == "compiled" and rows > MIN_ROWS:
        return _loops
    return None
