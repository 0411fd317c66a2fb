"""View layer: plotly figures and HTML readouts built by pure functions. No ipywidgets."""

from .frames import PALETTES, body_trace, frame_figure, frame_points, frame_trace, planar_figure

__all__ = ["PALETTES", "body_trace", "frame_figure", "frame_points", "frame_trace", "planar_figure"]

from .graph import graph_figure, loop_check_html, readout_html  # noqa: E402

__all__ += ["graph_figure", "readout_html", "loop_check_html"]
from .diagnosis import error_html, parsed_html, residual_figure  # noqa: E402
from .trajectory import FLAG_STYLES, FlaggedSpan, flagged_spans, row_rotation, trajectory_figure  # noqa: E402

__all__ += ["error_html", "parsed_html", "residual_figure", "FLAG_STYLES", "FlaggedSpan", "flagged_spans",
            "row_rotation", "trajectory_figure"]

from .sweep import angle_name, family_figure, sweep_figure  # noqa: E402

__all__ += ["angle_name", "family_figure", "sweep_figure"]
