"""View layer: plotly figures and HTML readouts built by pure functions. No ipywidgets."""

from .alignment import correlation_figure, pair_residual_figure, speed_figure
from .diagnosis import error_html, parsed_html, residual_figure
from .frames import PALETTES, body_trace, frame_figure, frame_points, frame_trace, planar_figure
from .graph import graph_diagram, graph_figure, loop_check_html, readout_html
from .sweep import angle_name, family_figure, sweep_figure
from .trajectory import FLAG_STYLES, FlaggedSpan, flagged_spans, row_rotation, trajectory_figure

__all__ = [
    "PALETTES", "body_trace", "frame_figure", "frame_points", "frame_trace", "planar_figure",
    "graph_figure", "graph_diagram", "readout_html", "loop_check_html",
    "error_html", "parsed_html", "residual_figure",
    "FLAG_STYLES", "FlaggedSpan", "flagged_spans", "row_rotation", "trajectory_figure",
    "angle_name", "family_figure", "sweep_figure",
    "correlation_figure", "pair_residual_figure", "speed_figure",
]
