"""View layer: plotly figures and HTML readouts built by pure functions. No ipywidgets."""

from .frames import PALETTES, body_trace, frame_figure, frame_points, frame_trace, planar_figure

__all__ = ["PALETTES", "body_trace", "frame_figure", "frame_points", "frame_trace", "planar_figure"]
from .sweep import angle_name, family_figure, sweep_figure; __all__ += ["angle_name", "family_figure", "sweep_figure"]  # noqa: E402,E702
