"""Widget layer: ipywidgets glue over posekit's analysis and view layers. No math of its own."""

from .explorer import Explorer
from .planar import PlanarExplorer

__all__ = ["Explorer", "PlanarExplorer"]

from .graph import GraphExplorer  # noqa: E402

__all__ += ["GraphExplorer"]
from .desk import DebugDesk  # noqa: E402

__all__ += ["DebugDesk"]
from .trajectory_view import TrajectoryView  # noqa: E402

__all__ += ["TrajectoryView"]

from .side_by_side import SingularityView  # noqa: E402

__all__ += ["SingularityView"]
