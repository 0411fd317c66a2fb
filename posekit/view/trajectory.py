"""Time-series figure of a trajectory check: pure functions ``(report, options) -> Figure``.

Four stacked panels share one time axis: the Euler readback (wrapped, as a system
would print it), the sign-continuous quaternion (quaternion input only), the turn
rate from row to row, and a strip with one marker per flagged span.  Every flagged
span (sign flips, wraps, near-lock spans, gaps, rate violations, ...) is shaded
across the panels in its own colour *and* marked in the strip with its own symbol
and short word, so colour is never the only cue.  The colours come from the
Okabe-Ito set (distinct under the common colour-vision deficiencies).

The numbers drawn are exactly those of the
:class:`~posekit.analysis.trajectory.TrajectoryReport`; nothing is recomputed here
except where to draw (span edges, marker positions).
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np
import plotly.graph_objects as go
from plotly.subplots import make_subplots

from ..core.errors import PoseInputError
from ..core.reading import read_rotation
from .readouts import format_number

__all__ = ["FLAG_STYLES", "FlaggedSpan", "flagged_spans", "trajectory_figure", "row_rotation", "SPAN_LIMIT",
           "flag_uid", "span_shape", "HIGHLIGHT"]

#: finding name -> (short word, colour, marker symbol)
FLAG_STYLES = {
    "quaternion_sign_flips": ("sign flip", "#CC79A7", "diamond"),
    "euler_wraps": ("angle wrap", "#E69F00", "square"),
    "near_gimbal_lock": ("near lock", "#D55E00", "x"),
    "time_gaps": ("time gap", "#56B4E9", "triangle-right"),
    "rate_above_limit": ("fast turn", "#009E73", "star"),
    "time_backwards": ("time goes back", "#0072B2", "triangle-left"),
    "time_duplicates": ("repeated time", "#999999", "circle-open"),
    "quaternion_norm_drift": ("length drift", "#F0E442", "hexagon"),
    "non_orthonormal": ("not orthonormal", "#000000", "cross"),
}
#: at most this many spans are shaded and listed (the report keeps them all)
SPAN_LIMIT = 400
#: name of the layout shape that outlines the chosen span
HIGHLIGHT = "highlight"


def span_shape(n: int) -> str:
    """Name of the layout shape shading span ``n`` (its index into the spans drawn)."""
    return f"span-{int(n)}"


def flag_uid(finding: str) -> str:
    """``uid`` of the strip trace holding the markers of one finding kind."""
    return f"flag-{finding}"


@dataclass(frozen=True)
class FlaggedSpan:
    """One flagged span of one finding: rows ``first_row..last_row`` inclusive and their times."""

    finding: str
    word: str
    first_row: int
    last_row: int
    first_time: float
    last_time: float

    def words(self) -> str:
        rows = (f"row {self.first_row}" if self.first_row == self.last_row
                else f"rows {self.first_row}-{self.last_row}")
        first, last = format_number(self.first_time, 6, trim=True), format_number(self.last_time, 6, trim=True)
        times = f"t = {first}" if self.first_row == self.last_row else f"t = {first} to {last}"
        return f"{self.word}: {rows} ({times})"


def flagged_spans(report, limit: int = SPAN_LIMIT) -> tuple[tuple[FlaggedSpan, ...], int]:
    """Every flagged span of a report in time order, at most ``limit``: ``(spans, total)``.

    >>> from posekit.analysis.trajectory import check_trajectory
    >>> r = check_trajectory(np.arange(4.0), [[1, 0, 0, 0], [-1, 0, 0, 0], [-1, 0, 0, 0], [-1, 0, 0, 0.0]])
    >>> [s.words() for s in flagged_spans(r)[0]]
    ['sign flip: row 1 (t = 1)']
    """
    spans = []
    for name, finding in report.findings.items():
        if not finding.checked or not finding.count:
            continue
        word = FLAG_STYLES.get(name, (name.replace("_", " "),))[0]
        for s in finding.spans:
            spans.append(FlaggedSpan(name, word, s.first_row, s.last_row, s.first_time, s.last_time))
    spans.sort(key=lambda s: (s.first_time, s.first_row, s.finding))
    return tuple(spans[:limit]), len(spans)


def row_rotation(report, row: int):
    """The canonical rotation ``(3, 3)`` of a report row (from its Euler readback), or None if rejected."""
    row = int(row)
    if not 0 <= row < report.rows:
        raise PoseInputError(f"row: got {row}; the trajectory has rows 0 to {report.rows - 1}")
    if not bool(report.used[row]):
        return None
    return read_rotation(report.euler[row], "euler", report.convention)


def _rate_limit(report, rate_limit):
    if rate_limit is not None:
        return float(rate_limit)
    text = str(report.settings.get("rate_limit", ""))
    m = re.match(r"\s*([0-9.eE+-]+)\s", text)
    return float(m.group(1)) if m else None


def _half_step(times: np.ndarray) -> float:
    d = np.diff(times[np.isfinite(times)])
    d = d[d > 0]
    return 0.5 * float(np.median(d)) if d.size else 0.5


def trajectory_figure(report, *, spans=None, rate_limit: float | None = None, height: int = 780,
                      width: int | None = None, title: str | None = None, time_unit: str | None = None) -> go.Figure:
    """The four-panel time-series figure of a :class:`~posekit.analysis.trajectory.TrajectoryReport`.

    ``spans``: the :func:`flagged_spans` to shade (default: all, up to
    :data:`SPAN_LIMIT`).  ``time_unit`` names the unit of the log's times (axis titles;
    default "time units").  Traces and their uids: three Euler readback lines
    (``euler-1..3``), four quaternion lines (``quaternion-1..4``, empty when the input
    was not quaternions), the rate line (``rate``), the rate-limit line (``rate-limit``,
    empty without a limit), then one marker trace per finding kind in :data:`FLAG_STYLES`
    order (:func:`flag_uid`; ``customdata`` holds each marker's index into ``spans``).
    Span ``n`` is shaded by the layout shape named :func:`span_shape`; the shape named
    :data:`HIGHLIGHT` outlines the chosen span (hidden until one is).

    >>> from posekit.analysis.trajectory import check_trajectory
    >>> r = check_trajectory(np.arange(4.0), [[1, 0, 0, 0], [-1, 0, 0, 0], [-1, 0, 0, 0], [-1, 0, 0, 0.0]])
    >>> len(trajectory_figure(r).data)
    18
    """
    if spans is None:
        spans = flagged_spans(report)[0]
    conv = report.convention
    unit = "deg" if conv.degrees else "rad"
    tu = time_unit or "time units"
    per = f"{unit}/{time_unit}" if time_unit else f"{unit} per time unit"
    t = np.asarray(report.times, dtype=float)
    big = t.size > 5000
    line = go.Scattergl if big else go.Scatter
    fig = make_subplots(rows=4, cols=1, shared_xaxes=True, vertical_spacing=0.035,
                        row_heights=[0.3, 0.25, 0.22, 0.23],
                        subplot_titles=(f"Euler readback, {conv.sequence} {conv.axes} ({unit})",
                                        "quaternion, sign made continuous" if report.quaternion is not None
                                        else "quaternion (only for quaternion input)",
                                        f"turn rate ({per})", "flagged spans"))
    greys = ("#222222", "#0072B2", "#D55E00")
    dashes = ("solid", "dash", "dot")
    letters = conv.axes_letters
    euler = report.euler_wrapped
    for k in range(3):
        fig.add_trace(line(x=t, y=euler[:, k], mode="lines", name=f"angle {k + 1} (about {letters[k]})",
                           line=dict(color=greys[k], width=1.6, dash=dashes[k]), legendgroup="euler",
                           uid=f"euler-{k + 1}"), row=1, col=1)
    if report.quaternion is not None:
        labels = ("w", "x", "y", "z") if conv.scalar == "first" else ("x", "y", "z", "w")
        colours = {"w": "#222222", "x": "#D55E00", "y": "#009E73", "z": "#0072B2"}
        qd = {"w": "solid", "x": "dash", "y": "dot", "z": "dashdot"}
        for k in range(4):
            fig.add_trace(line(x=t, y=report.quaternion[:, k], mode="lines", name=f"q{labels[k]}",
                               line=dict(color=colours[labels[k]], width=1.4, dash=qd[labels[k]]),
                               legendgroup="quaternion", uid=f"quaternion-{k + 1}"), row=2, col=1)
    else:
        for k in range(4):
            fig.add_trace(line(x=[], y=[], mode="lines", name=f"q{k}", showlegend=False, uid=f"quaternion-{k + 1}"),
                          row=2, col=1)
        fig.add_annotation(text="the input was not quaternions: no stored sign to follow", showarrow=False,
                           xref="x2 domain", yref="y2 domain", x=0.5, y=0.5, font=dict(color="#666"))
    fig.add_trace(line(x=t, y=report.rate, mode="lines", name="turn rate", line=dict(color="#444444", width=1.3),
                       uid="rate"), row=3, col=1)
    limit = _rate_limit(report, rate_limit)
    finite = t[np.isfinite(t)]
    ends = [float(finite.min()), float(finite.max())] if (limit is not None and finite.size) else []
    fig.add_trace(go.Scatter(x=ends, y=[limit] * len(ends), mode="lines", name="rate limit",
                             line=dict(color="#009E73", dash="dash", width=1.2), showlegend=limit is not None,
                             hoverinfo="name+y", uid="rate-limit"), row=3, col=1)
    finite_t = t[np.isfinite(t)]
    whole = float(finite_t.max() - finite_t.min()) if finite_t.size else 1.0
    half = max(_half_step(t), 0.003 * whole)  # a one-row span stays visible at any zoom-out
    kinds = [k for k in FLAG_STYLES]
    present = [k for k in kinds if any(s.finding == k for s in spans)]
    shapes = []
    for n, s in enumerate(spans):
        word, colour, _ = FLAG_STYLES.get(s.finding, (s.finding, "#777777", "circle"))
        shapes.append(dict(type="rect", xref="x", yref="paper", x0=s.first_time - half, x1=s.last_time + half,
                           y0=0.0, y1=1.0, fillcolor=colour, opacity=0.22, line=dict(width=0), layer="below",
                           name=span_shape(n)))
    for name in kinds:
        word, colour, symbol = FLAG_STYLES[name]
        idx = [i for i, s in enumerate(spans) if s.finding == name]
        mid = [0.5 * (spans[i].first_time + spans[i].last_time) for i in idx]
        fig.add_trace(go.Scatter(x=mid, y=[word] * len(idx), mode="markers", name=word, customdata=idx,
                                 hovertext=[spans[i].words() for i in idx], hoverinfo="text",
                                 marker=dict(symbol=symbol, size=12, color=colour, line=dict(width=1, color="#333")),
                                 showlegend=False, visible=True if idx else False, uid=flag_uid(name)), row=4, col=1)
    shapes.append(dict(type="rect", xref="x", yref="paper", x0=0, x1=0, y0=0.0, y1=1.0, fillcolor="rgba(0,0,0,0)",
                       line=dict(width=2, color="#111111", dash="dot"), visible=False, name=HIGHLIGHT))
    fig.layout.shapes = shapes
    fig.update_layout(height=height, width=width, margin=dict(l=110, r=10, t=50 if title else 30, b=45),
                      title=dict(text=title) if title else None, hovermode="closest", uirevision="posekit-trajectory",
                      legend=dict(orientation="v", x=1.01, y=1.0, yanchor="top", font=dict(size=11),
                                  traceorder="grouped", tracegroupgap=24),
                      plot_bgcolor="#ffffff")
    # ticks read in the axis's own unit: plain numbers, an explicit power of ten if needed (no SI prefixes)
    fig.update_yaxes(gridcolor="#e5e5e5", zerolinecolor="#bbbbbb", exponentformat="power", title_font=dict(size=11))
    fig.update_xaxes(gridcolor="#eeeeee", showline=True, linecolor="#bbbbbb", exponentformat="power")
    fig.update_yaxes(title_text=unit, row=1, col=1)
    fig.update_yaxes(title_text="component", row=2, col=1)
    fig.update_yaxes(title_text=per, row=3, col=1)
    fig.update_yaxes(type="category", categoryorder="array", categoryarray=[FLAG_STYLES[k][0] for k in present],
                     row=4, col=1, gridcolor="#f2f2f2")
    fig.update_xaxes(title_text=f"time ({tu})", row=4, col=1)
    for ann in fig.layout.annotations:
        ann.font = dict(size=12, color="#333")
    return fig
