"""Widget layer: ipywidgets glue over posekit's analysis and view layers. No math of its own."""

from .desk import DebugDesk
from .explorer import Explorer
from .graph import GraphExplorer
from .mount_finder import MountFinder
from .planar import PlanarExplorer
from .side_by_side import SingularityView
from .trajectory_view import TrajectoryView

__all__ = ["DebugDesk", "Explorer", "GraphExplorer", "MountFinder", "PlanarExplorer", "SingularityView",
           "TrajectoryView"]
