"""View layer: plotly figures and HTML readouts built by pure functions. No ipywidgets."""

from .frames import PALETTES, body_trace, frame_figure, frame_points, frame_trace, planar_figure

__all__ = ["PALETTES", "body_trace", "frame_figure", "frame_points", "frame_trace", "planar_figure"]
