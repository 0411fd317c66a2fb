"""Hand rotations and rigid transforms to scipy and take them back.

scipy's ``Rotation`` is active and maps the rotated (child) frame's coordinates into
the original (parent) frame, which is posekit's canonical form, so the bridge is a
plain copy of the matrix; conventions are applied by posekit's reading functions.
``RigidTransform`` (scipy >= 1.16) likewise holds ``T`` with ``p_parent = T p_child``.
"""

from __future__ import annotations

import numpy as np

from ..core.checks import checked_matrix
from ..core.errors import WrongTypeError
from ..core.transforms import checked_transform

__all__ = ["to_scipy_rotation", "from_scipy_rotation", "to_scipy_transform", "from_scipy_transform"]


def to_scipy_rotation(matrix):
    """Canonical ``(..., 3, 3)`` -> ``scipy.spatial.transform.Rotation`` (1-D batches only in scipy < 1.15)."""
    from scipy.spatial.transform import Rotation

    return Rotation.from_matrix(checked_matrix(matrix))


def from_scipy_rotation(rotation) -> np.ndarray:
    """``scipy.spatial.transform.Rotation`` -> canonical ``(..., 3, 3)``."""
    from scipy.spatial.transform import Rotation

    if not isinstance(rotation, Rotation):
        raise WrongTypeError(f"expected a scipy Rotation, got {type(rotation).__name__}")
    return np.asarray(rotation.as_matrix(), dtype=np.float64)


def to_scipy_transform(transform):
    """Canonical ``(..., 4, 4)`` -> ``scipy.spatial.transform.RigidTransform``."""
    from scipy.spatial.transform import RigidTransform

    return RigidTransform.from_matrix(checked_transform(transform, size=4))


def from_scipy_transform(transform) -> np.ndarray:
    """``scipy.spatial.transform.RigidTransform`` -> canonical ``(..., 4, 4)``."""
    from scipy.spatial.transform import RigidTransform

    if not isinstance(transform, RigidTransform):
        raise WrongTypeError(f"expected a scipy RigidTransform, got {type(transform).__name__}")
    return np.asarray(transform.as_matrix(), dtype=np.float64)
