"""Invented demo data for the docs and notebooks - never the reference of a check.

**The orchard rover** is a vehicle of our own invention (no real product): a small
four-wheeled rover that drives between tree rows.  Its frames:

- ``world``: the site map (east, north, up);
- ``base``: the rover body (x forward, y left, z up), on the ground between the wheels;
- ``imu``: mounted upside down under the deck (turned 180 degrees about x);
- ``camera``: on a mast at the front, tilted 12 degrees nose-down;
- ``lidar``: on the roof, left of centre, turned 3 degrees to the right;
- ``antenna``: a GNSS antenna on a short pole at the back left.

Two poses are known two ways, so the graph has two loops:

- camera - lidar: from the mechanical drawing (base - camera, base - lidar) and from a
  target calibration (camera - lidar, a little noise: about 0.1 degree and 2 mm);
- world - antenna: from the localiser (world - base) plus the drawing (base - antenna),
  and from a dual-antenna GNSS fix (world - antenna; about 0.2 degree and 4 mm noise).

**One edge is entered backwards** (:data:`ROVER_BACKWARDS_EDGE`, base - lidar from the
drawing): its 16 numbers really map base coordinates into lidar coordinates, but it is
entered as parent-from-child.  ``orchard_rover().check_loops()`` points at it; the
world - antenna loop closes within the noise.

The numbers are written from the invented true poses with posekit's own writers, in
several representations and conventions, as a real mix of sources would arrive.
"""

from __future__ import annotations

import numpy as np

from ..core.reading import read_rotation
from ..core.transforms import invert_transform, make_planar, make_transform, write_transform
from .frames_graph import FrameGraph, write_planar

__all__ = ["ROVER_BACKWARDS_EDGE", "ROVER_FRAMES", "orchard_rover", "orchard_rover_planar"]

#: Index of the edge entered backwards in both rover graphs (base - lidar, from the drawing).
ROVER_BACKWARDS_EDGE = 3
ROVER_FRAMES = ("world", "base", "imu", "camera", "lidar", "antenna")

_DEG = "sequence=z-y-x unit=degrees"


def _pose(x, y, z, yaw, pitch, roll) -> np.ndarray:
    return make_transform(read_rotation([yaw, pitch, roll], "euler", _DEG), [x, y, z])


def orchard_rover() -> FrameGraph:
    """The invented orchard rover as an SE(3) :class:`FrameGraph` (7 edges, 2 loops, edge 3 backwards).

    >>> g = orchard_rover()
    >>> g.check_loops().suspects[0]
    3
    """
    world_base = _pose(1.6, 0.9, 0.0, 35.0, 0.0, 0.0)
    base_imu = _pose(-0.10, -0.20, 0.30, 0.0, 0.0, 180.0)
    base_camera = _pose(0.60, 0.0, 0.60, 0.0, 12.0, 0.0)
    base_lidar = _pose(0.20, 0.25, 0.95, -3.0, 0.0, 0.0)
    base_antenna = _pose(-0.35, 0.30, 1.10, 0.0, 0.0, 0.0)
    # calibration noise (invented): a 0.1 degree turn and a 2 mm shift
    noise_cal = _pose(0.002, -0.001, 0.0, 0.1, 0.0, 0.0)
    camera_lidar = invert_transform(base_camera) @ base_lidar @ noise_cal
    noise_gnss = _pose(0.004, 0.0, 0.0, 0.2, 0.0, 0.0)
    world_antenna = world_base @ base_antenna @ noise_gnss

    g = FrameGraph()
    g = g.with_edge("world", "base", write_transform(world_base, "position-quaternion", "scalar=last"),
                    "position-quaternion", "scalar=last", source="localiser")
    g = g.with_edge("base", "imu", write_transform(base_imu, "position-euler", _DEG), "position-euler", _DEG,
                    source="drawing")
    g = g.with_edge("base", "camera", write_transform(base_camera, "position-euler", _DEG), "position-euler",
                    _DEG, source="drawing")
    # the slip: the drawing's table gives lidar-from-base, typed in as base-from-lidar
    backwards = write_transform(invert_transform(base_lidar), "matrix", flat=True)
    g = g.with_edge("base", "lidar", np.round(backwards, 9), "matrix", None, source="drawing")
    g = g.with_edge("camera", "lidar", write_transform(camera_lidar, "position-quaternion"), "position-quaternion",
                    None, source="calibration")
    g = g.with_edge("base", "antenna", write_transform(base_antenna, "position-euler", _DEG), "position-euler",
                    _DEG, source="drawing")
    g = g.with_edge("world", "antenna", write_transform(world_antenna, "position-euler", _DEG), "position-euler",
                    _DEG, source="gnss")
    return g


def orchard_rover_planar() -> FrameGraph:
    """The same invented rover seen from above: an SE(2) :class:`FrameGraph` with edge 3 backwards.

    >>> orchard_rover_planar().check_loops().suspects[0]
    3
    """
    deg = "unit=degrees"
    world_base = make_planar(1.6, 0.9, 35.0, degrees=True)
    base_imu = make_planar(-0.10, -0.20, 0.0, degrees=True)
    base_camera = make_planar(0.60, 0.0, 0.0, degrees=True)
    base_lidar = make_planar(0.20, 0.25, -3.0, degrees=True)
    base_antenna = make_planar(-0.35, 0.30, 0.0, degrees=True)
    camera_lidar = invert_transform(base_camera) @ base_lidar @ make_planar(0.002, -0.001, 0.1, degrees=True)
    world_antenna = world_base @ base_antenna @ make_planar(0.004, 0.0, 0.2, degrees=True)

    g = FrameGraph(planar=True)
    g = g.with_edge("world", "base", write_planar(world_base, "position-heading", deg), "position-heading", deg,
                    source="localiser")
    g = g.with_edge("base", "imu", write_planar(base_imu, "position-heading", deg), "position-heading", deg,
                    source="drawing")
    g = g.with_edge("base", "camera", write_planar(base_camera, "position-heading", deg), "position-heading", deg,
                    source="drawing")
    backwards = write_planar(invert_transform(base_lidar), "position-heading", deg)
    g = g.with_edge("base", "lidar", np.round(backwards, 9), "position-heading", deg, source="drawing")
    g = g.with_edge("camera", "lidar", write_planar(camera_lidar, "matrix"), "matrix", None, source="calibration")
    g = g.with_edge("base", "antenna", write_planar(base_antenna, "position-heading", deg), "position-heading", deg,
                    source="drawing")
    g = g.with_edge("world", "antenna", write_planar(world_antenna, "position-heading", deg), "position-heading",
                    deg, source="gnss")
    return g
