"""Analysis layer (numpy + scipy): bridges, singularity, diagnosis, trajectories, frame graphs."""

from .scipy_bridge import from_scipy_rotation, from_scipy_transform, to_scipy_rotation, to_scipy_transform

__all__ = ["to_scipy_rotation", "from_scipy_rotation", "to_scipy_transform", "from_scipy_transform"]

from .frames_graph import (DisagreeingEdgeError, DisconnectedFramesError, Edge, EdgeFix, FrameGraph,  # noqa: E402
                           FrameGraphError, FrameNameError, FrameTree, Lookup, Loop, LoopCheck, LoopInTreeError,
                           Placement, Readout, Step, UnknownFrameError, read_planar, write_planar)
from .scenarios import orchard_rover, orchard_rover_planar  # noqa: E402

__all__ += ["FrameGraph", "Edge", "Step", "Lookup", "Readout", "Placement", "FrameTree", "Loop", "EdgeFix",
            "LoopCheck", "FrameGraphError", "UnknownFrameError", "FrameNameError", "DisconnectedFramesError",
            "DisagreeingEdgeError", "LoopInTreeError", "read_planar", "write_planar", "orchard_rover",
            "orchard_rover_planar"]
