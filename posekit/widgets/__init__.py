"""Widget layer: ipywidgets glue over posekit's analysis and view layers. No math of its own."""

from .explorer import Explorer

__all__ = ["Explorer"]
from .side_by_side import SingularityView; __all__ += ["SingularityView"]  # noqa: E402,E702
