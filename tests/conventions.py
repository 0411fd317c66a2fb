"""The one parametrising helper for every law test: conventions, batch shapes, random rotations.

Every convention under test is built from :data:`posekit.core.convention.CHOICES`, so a
choice added there is covered by every law without new test code.

Design (keeps pytest's test count small while covering every convention):

* :data:`PAIRS` holds the 24 (sequence, axes) pairs -- 12 sequences times intrinsic /
  extrinsic -- and is what tests parametrise over (:data:`over_pairs`);
* :func:`conventions_for` then yields, for one pair, every combination of all the
  *other* fields of ``CHOICES`` (128 today), and a test loops over them inside, each
  check vectorised over a batch.

Import from a test module as ``from conventions import ...`` (pytest puts ``tests/``
on ``sys.path``).
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from hypothesis import HealthCheck, settings

from posekit.core import compiled
from posekit.core.convention import CHOICES, Convention
from posekit.core.rotation import PROPER_EULER, SMALL_BATCH

#: The two fields tests are parametrised over; every other field is looped over inside.
PAIR_FIELDS = ("sequence", "axes")
#: Every other field of the convention, looped over inside each test.
OTHER_FIELDS = tuple(k for k in CHOICES if k not in PAIR_FIELDS)

#: All (sequence, axes) pairs, e.g. ("z-y-x", "intrinsic"); 24 today.
PAIRS = tuple(itertools.product(CHOICES["sequence"], CHOICES["axes"]))

#: Leading batch shapes every law is exercised with: a scalar, a vector of poses, a grid, and a
#: batch longer than the core's small-batch threshold (so the blocked kernels meet every law).
BATCH_SHAPES = ((), (5,), (2, 3), (SMALL_BATCH + 16,))


#: Batch lengths on both sides of the core's small-batch threshold, so both kernel routes
#: (plain whole-array calls, and the blocked tangent-half-angle formulas) meet every law that uses them.
KERNEL_SIZES = (SMALL_BATCH // 2, SMALL_BATCH + 16)


#: The kernel routes of large batches (posekit.core.compiled): the law, reference and bad-input
#: tests run once per route (fixture ``kernel_route`` in conftest.py), so the compiled loops and
#: the blocked numpy kernels both meet every law.
ROUTES = compiled.ROUTES if compiled.available() else ("numpy",)


def pair_id(pair) -> str:
    return f"{pair[0]}-{pair[1]}"


#: ``@over_pairs`` parametrises a test's ``pair`` argument over :data:`PAIRS`.
over_pairs = pytest.mark.parametrize("pair", PAIRS, ids=[pair_id(p) for p in PAIRS])


def conventions_for(pair, **fixed):
    """Every :class:`Convention` with the given (sequence, axes) pair, all other fields varied.

    ``fixed`` pins some of the other fields (only where a law is about one value of a
    field, e.g. ``action="active"`` for the active side of "passive = transpose").
    """
    sequence, axes = pair
    free = [k for k in OTHER_FIELDS if k not in fixed]
    for values in itertools.product(*(CHOICES[k] for k in free)):
        yield Convention(sequence=sequence, axes=axes, **fixed, **dict(zip(free, values)))


def all_conventions(**fixed):
    """Every convention of ``CHOICES`` (3072 today), optionally with some fields pinned."""
    for pair in PAIRS:
        if "sequence" in fixed and fixed["sequence"] != pair[0]:
            continue
        if "axes" in fixed and fixed["axes"] != pair[1]:
            continue
        rest = {k: v for k, v in fixed.items() if k not in PAIR_FIELDS}
        yield from conventions_for(pair, **rest)


def shape_for(i: int) -> tuple[int, ...]:
    """The batch shape used for the i-th convention of a loop: cycles through :data:`BATCH_SHAPES`."""
    return BATCH_SHAPES[i % len(BATCH_SHAPES)]


def is_proper(convention: Convention) -> bool:
    return convention.axes_letters in PROPER_EULER


# --- random rotations ----------------------------------------------------------------

def random_quaternions(rng: np.random.Generator, shape=()) -> np.ndarray:
    """Uniformly distributed unit quaternions ``shape + (4,)`` (normalised Gaussian 4-vectors;
    common practice), either sign of w."""
    q = rng.standard_normal(tuple(shape) + (4,))
    return q / np.linalg.norm(q, axis=-1, keepdims=True)


def random_matrices(rng: np.random.Generator, shape=()) -> np.ndarray:
    """Uniformly distributed rotation matrices ``shape + (3, 3)``, built independently of
    posekit's quaternion code: QR of a Gaussian matrix with the sign fix (Mezzadri,
    "How to generate random matrices from the classical compact groups", Notices AMS
    54(5), 2007, from memory) and det forced to +1 by negating one column."""
    a = rng.standard_normal(tuple(shape) + (3, 3))
    qm, r = np.linalg.qr(a)
    d = np.sign(np.diagonal(r, axis1=-2, axis2=-1))
    d = np.where(d == 0, 1.0, d)
    qm = qm * d[..., None, :]
    det = np.linalg.det(qm)
    qm[..., :, 2] *= np.sign(det)[..., None]
    return qm


def random_euler(rng: np.random.Generator, shape=(), degrees: bool = False) -> np.ndarray:
    """Random Euler angles ``shape + (3,)`` spread over (-2 pi, 2 pi) -- deliberately also
    outside the read-back ranges -- in radians or degrees."""
    a = rng.uniform(-2 * np.pi, 2 * np.pi, tuple(shape) + (3,))
    return np.degrees(a) if degrees else a


def random_vectors(rng: np.random.Generator, shape=(), scale: float = 10.0) -> np.ndarray:
    return rng.uniform(-scale, scale, tuple(shape) + (3,))


def random_numbers(rng: np.random.Generator, kind: str, convention: Convention, shape=()) -> np.ndarray:
    """Valid input numbers of one ``kind`` of :data:`posekit.core.reading.KINDS` under ``convention``."""
    unit = 180.0 / np.pi if convention.degrees else 1.0
    shape = tuple(shape)
    if kind == "matrix":
        return random_matrices(rng, shape)
    if kind == "quaternion":
        return random_quaternions(rng, shape)
    if kind == "euler":
        return random_euler(rng, shape, convention.degrees)
    if kind == "rotation-vector":
        axis = random_quaternions(rng, shape)[..., 1:]
        axis /= np.linalg.norm(axis, axis=-1, keepdims=True)
        return axis * (rng.uniform(0, np.pi, shape) * unit)[..., None]
    if kind == "axis-angle":
        axis = random_quaternions(rng, shape)[..., 1:]
        axis /= np.linalg.norm(axis, axis=-1, keepdims=True)
        return np.concatenate([axis, (rng.uniform(-2 * np.pi, 2 * np.pi, shape) * unit)[..., None]], axis=-1)
    if kind == "planar-angle":
        return rng.uniform(-2 * np.pi, 2 * np.pi, shape) * unit
    raise AssertionError(f"tests/conventions.py does not know how to draw kind {kind!r}; add it here")


def pole_values(convention: Convention) -> tuple[float, ...]:
    """The singular middle angles (radians): ±pi/2 Tait-Bryan, 0 and pi proper Euler."""
    return (0.0, np.pi) if is_proper(convention) else (np.pi / 2, -np.pi / 2)


# --- hypothesis ---------------------------------------------------------------------

#: The one hypothesis profile of the core tests: no deadline, derandomised, no example
#: database, so CI runs are stable and repeatable.
HYPOTHESIS = settings(deadline=None, derandomize=True, database=None, print_blob=True,
                      suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])
#: Rotations drawn per hypothesis example.
HYPOTHESIS_BATCH = 1000
