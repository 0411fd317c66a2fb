"""posekit's math core: numpy only, no plotting, no widgets.

Canonical form everywhere: the active rotation / transform that maps child
coordinates into the parent frame; Hamilton scalar-first quaternions; radians.
"""

from .checks import (ORTHONORMAL_TOLERANCE, UNIT_TOLERANCE, Projection, as_numbers, checked_matrix,
                     checked_quaternion, nearest_rotation, orthonormality_error)
from .convention import CHOICES, DEFAULT, Convention
from .errors import (ConventionError, ConventionTextError, NotFiniteError, NotOrthonormalError,
                     NotUnitQuaternionError, PoseInputError, ReflectionError, WrongShapeError, WrongTypeError,
                     ZeroQuaternionError)
from .ops import angle_between, compose, invert, slerp, turn_vectors
from .reading import KINDS, as_convention, convert, quaternion_product, read_rotation, write_rotation
from .transforms import (TRANSFORM_KINDS, Pose, checked_transform, compose_transforms, interpolate_planar,
                         interpolate_transforms, invert_transform, make_planar, make_transform, planar_parts,
                         read_transform, split_transform, transform_directions, transform_points,
                         write_transform)

__all__ = [
    "ORTHONORMAL_TOLERANCE", "UNIT_TOLERANCE", "Projection", "as_numbers", "checked_matrix",
    "checked_quaternion", "nearest_rotation", "orthonormality_error",
    "CHOICES", "DEFAULT", "Convention",
    "ConventionError", "ConventionTextError", "NotFiniteError", "NotOrthonormalError",
    "NotUnitQuaternionError", "PoseInputError", "ReflectionError", "WrongShapeError", "WrongTypeError",
    "ZeroQuaternionError",
    "angle_between", "compose", "invert", "slerp", "turn_vectors",
    "KINDS", "as_convention", "convert", "quaternion_product", "read_rotation", "write_rotation",
    "TRANSFORM_KINDS", "Pose", "checked_transform", "compose_transforms", "interpolate_planar",
    "interpolate_transforms", "invert_transform", "make_planar", "make_transform", "planar_parts",
    "read_transform", "split_transform", "transform_directions", "transform_points", "write_transform",
]
