"""Analysis layer (numpy + scipy): bridges, singularity, diagnosis, trajectories, frame graphs."""

from .scipy_bridge import from_scipy_rotation, from_scipy_transform, to_scipy_rotation, to_scipy_transform

__all__ = ["to_scipy_rotation", "from_scipy_rotation", "to_scipy_transform", "from_scipy_transform"]
