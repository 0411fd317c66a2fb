"""Figures and HTML of a two-stream alignment: pure functions ``(StreamAlignment, options) -> Figure or str``.

What :func:`posekit.analysis.alignment.align_streams` found, drawn without recomputing
it: the two angular speed curves before and after B's time stamps are shifted by the
offset (:func:`speed_figure`), the speed correlation per trial offset
(:func:`correlation_figure`), the residual of one constant mount per pair of key samples
(:func:`pair_residual_figure`), and the readouts beside them (:func:`offset_html`,
:func:`mount_html`, :func:`diagnosis_html`).  Only *where to draw* is decided here:
curves longer than ``max_points`` keep, per bucket of samples, the lowest and the highest
one (:func:`envelope_indices`), so every point drawn is a sample of the result and peaks
survive.

Colours come from the palette's axis colours (:data:`~posekit.view.frames.DEFAULT_PALETTE`,
colour-blind safe by default): stream A in the palette's third colour as a solid line,
stream B in its first as a dashed line, so the line style tells them apart too.  Every
axis title carries its unit; numbers shown are written by
:func:`~posekit.view.readouts.format_number`.  Traces carry fixed ``uid``\\ s (:data:`SPEED_UIDS`,
:data:`CORRELATION_UIDS`, :data:`RESIDUAL_UIDS`): every figure has the same traces whatever
the result, so a widget updates them by uid.
"""

from __future__ import annotations

import html
import math

import numpy as np
import plotly.graph_objects as go
from plotly.subplots import make_subplots

from ..core.convention import Convention
from .frames import DEFAULT_PALETTE, palette_colours
from .readouts import format_number, matrix_html, numbers_html

__all__ = ["SPEED_UIDS", "CORRELATION_UIDS", "RESIDUAL_UIDS", "MAX_POINTS", "envelope_indices", "speed_figure",
           "correlation_figure", "pair_residual_figure", "number_labels", "offset_html", "mount_html",
           "diagnosis_html", "empty_speed_figure", "empty_correlation_figure", "empty_residual_figure"]

#: uids of :func:`speed_figure`'s traces: A and B before the shift (top), A and B after it (bottom).
SPEED_UIDS = ("speed-a-before", "speed-b-before", "speed-a-after", "speed-b-after")
#: uids of :func:`correlation_figure`'s traces: every lag searched, the lags next to the peak, the offset found.
CORRELATION_UIDS = ("correlation", "correlation-peak", "offset-found")
#: uids of :func:`pair_residual_figure`'s traces: rotation and its tolerance, translation and its tolerance.
RESIDUAL_UIDS = ("residual-rotation", "tolerance-rotation", "residual-translation", "tolerance-translation")
#: Most points drawn per curve (longer curves keep each bucket's lowest and highest sample).
MAX_POINTS = 4000
_GREY = "#555555"
_GRID = "#e8e8e8"


def envelope_indices(values, max_points: int = MAX_POINTS) -> np.ndarray:
    """Indices of the samples to draw from ``values (N,)``: all when ``N <= max_points``, else the lowest
    and the highest of each of ``max_points // 2`` consecutive buckets, in order.

    >>> envelope_indices(np.array([0.0, 5.0, 1.0, 2.0, 9.0, 3.0]), 4).tolist()
    [0, 1, 3, 4]
    """
    y = np.asarray(values, dtype=float).reshape(-1)
    n = y.size
    if n <= max_points:
        return np.arange(n)
    size = -(-n // max(1, max_points // 2))
    rows = -(-n // size)
    padded = np.full(rows * size, np.nan)
    padded[:n] = y
    block = padded.reshape(rows, size)
    start = np.arange(rows) * size
    low = start + np.where(np.isnan(block), np.inf, block).argmin(axis=1)
    high = start + np.where(np.isnan(block), -np.inf, block).argmax(axis=1)
    return np.unique(np.concatenate([low, high]))


def _thin(x, y, max_points):
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    k = envelope_indices(y, max_points)
    return x[k], y[k]


def _seconds(value, digits: int = 4) -> str:
    return format_number(value, digits, trim=True) + " s"


def _signed_seconds(value, digits: int = 4) -> str:
    text = format_number(value, digits, trim=True)
    return ("+" if not text.startswith("-") and text != "0" else "") + text + " s"


def _colours(palette: str):
    first, second, third = palette_colours(palette)
    return {"a": third, "b": first, "extra": second}


def _style(fig: go.Figure, height: int, width: int | None, revision: str) -> go.Figure:
    fig.update_layout(height=height, width=width, plot_bgcolor="#ffffff", paper_bgcolor="#ffffff",
                      margin=dict(l=64, r=16, t=36, b=48), uirevision=revision, hovermode="closest",
                      font=dict(size=11.5))
    fig.update_xaxes(gridcolor=_GRID, zerolinecolor="#c8c8c8", showline=True, linecolor="#bbbbbb",
                     exponentformat="power", title_font=dict(size=11.5))
    fig.update_yaxes(gridcolor=_GRID, zerolinecolor="#c8c8c8", showline=True, linecolor="#bbbbbb",
                     exponentformat="power", title_font=dict(size=11.5))
    for ann in fig.layout.annotations:
        ann.font = dict(size=12, color="#333333")
        ann.xanchor = "left"
        ann.x = 0.0
    return fig


# --------------------------------------------------------------------------------------
# angular speeds before and after the shift
# --------------------------------------------------------------------------------------

def _speed_titles(offset, uncertainty):
    if offset is None:
        return ("before alignment: each stream on its own clock", "after alignment: B shifted by the offset found")
    return ("before alignment: each stream on its own clock",
            f"after alignment: B's stamps shifted by {_signed_seconds(offset)} "
            f"(\u00b1 {_seconds(uncertainty, 2)}), both on A's clock")


def _speed_frame(curves, palette, height, width, max_points):
    c = _colours(palette)
    fig = make_subplots(rows=2, cols=1, vertical_spacing=0.24, subplot_titles=_speed_titles(None, None))
    empty = np.zeros(0)
    if curves is None:
        ta = sa = tb = sb = tb_after = empty
    else:
        ta, sa = _thin(curves.times_a, np.degrees(curves.speed_a), max_points)
        tb, sb = _thin(curves.times_b, np.degrees(curves.speed_b), max_points)
        tb_after = tb + curves.offset
    line_a = dict(color=c["a"], width=1.6)
    line_b = dict(color=c["b"], width=1.6, dash="dash")
    hover = "%{x:.4f} s: %{y:.4g} deg/s<extra>%{fullData.name}</extra>"
    fig.add_trace(go.Scatter(x=ta, y=sa, mode="lines", name="stream A (reference)", line=line_a, legendgroup="a",
                             uid=SPEED_UIDS[0], hovertemplate=hover), row=1, col=1)
    fig.add_trace(go.Scatter(x=tb, y=sb, mode="lines", name="stream B, its own clock", line=line_b,
                             legendgroup="b", uid=SPEED_UIDS[1], hovertemplate=hover), row=1, col=1)
    fig.add_trace(go.Scatter(x=ta, y=sa, mode="lines", name="stream A (reference)", line=line_a, legendgroup="a",
                             showlegend=False, uid=SPEED_UIDS[2], hovertemplate=hover), row=2, col=1)
    fig.add_trace(go.Scatter(x=tb_after, y=sb, mode="lines", name="stream B, shifted onto A's clock",
                             line=dict(line_b), legendgroup="b2", uid=SPEED_UIDS[3], hovertemplate=hover),
                  row=2, col=1)
    fig.update_yaxes(title_text="angular speed (deg/s)", rangemode="tozero")
    fig.update_xaxes(title_text="time, each stream on its own clock (s)", row=1, col=1)
    fig.update_xaxes(title_text="time on A's clock (s)", row=2, col=1)
    fig.update_layout(legend=dict(orientation="h", x=0.0, y=-0.16, yanchor="top", font=dict(size=11)))
    _style(fig, height, width, "posekit-alignment-speeds")
    fig.update_layout(margin=dict(b=70))
    return fig


def speed_figure(alignment, *, palette: str = DEFAULT_PALETTE, height: int = 540, width: int | None = None,
                 max_points: int = MAX_POINTS) -> go.Figure:
    """Both streams' angular speeds (deg/s), before (each on its own clock) and after B's stamps are shifted
    by the offset found (both on A's clock): two panels, the traces of :data:`SPEED_UIDS`.

    ``alignment``: a :class:`~posekit.analysis.alignment.StreamAlignment`; B's speeds are those of
    its diagnosed reading (:attr:`~posekit.analysis.alignment.StreamAlignment.speeds`).
    """
    curves = alignment.speeds
    fig = _speed_frame(curves, palette, height, width, max_points)
    for ann, text in zip(fig.layout.annotations, _speed_titles(alignment.offset, alignment.offset_uncertainty)):
        ann.text = text
    return fig


def empty_speed_figure(*, palette: str = DEFAULT_PALETTE, height: int = 540, width: int | None = None) -> go.Figure:
    """:func:`speed_figure`'s layout and traces with no data (before anything was aligned)."""
    return _speed_frame(None, palette, height, width, MAX_POINTS)


# --------------------------------------------------------------------------------------
# the correlation per trial offset
# --------------------------------------------------------------------------------------

def _correlation_frame(curve, uncertainty, palette, height, width, max_points):
    c = _colours(palette)
    fig = go.Figure()
    if curve is None:
        x = y = px = py = np.zeros(0)
        mark_x, mark_y = [], []
    else:
        finite = np.isfinite(curve.correlation)
        x, y = _thin(curve.offsets[finite], curve.correlation[finite], max_points)
        keep = np.isfinite(curve.peak_correlation)
        px, py = curve.peak_offsets[keep], curve.peak_correlation[keep]
        mark_x = [curve.offset]
        mark_y = [float(np.nanmax(curve.peak_correlation))] if keep.any() else [float("nan")]
    fig.add_trace(go.Scatter(x=x, y=y, mode="lines", name="every offset tried", line=dict(color=c["extra"],
                                                                                           width=1.4),
                             uid=CORRELATION_UIDS[0], hovertemplate="%{x:.4f} s: %{y:.4f}<extra></extra>"))
    fig.add_trace(go.Scatter(x=px, y=py, mode="markers", name="full resolution near the peak",
                             marker=dict(color=c["a"], size=6, symbol="circle-open", line=dict(width=1.5)),
                             uid=CORRELATION_UIDS[1], hovertemplate="%{x:.5f} s: %{y:.5f}<extra></extra>"))
    fig.add_trace(go.Scatter(x=mark_x, y=mark_y, mode="markers", name="offset found",
                             marker=dict(color=c["b"], size=11, symbol="diamond", line=dict(width=1, color="#222")),
                             uid=CORRELATION_UIDS[2],
                             error_x=dict(type="data", array=[0.0 if uncertainty is None else uncertainty],
                                          visible=True, color=c["b"], thickness=1.5, width=6),
                             hovertemplate="offset %{x:.5f} s<extra></extra>"))
    fig.update_xaxes(title_text="offset added to B's stamps (s)")
    fig.update_yaxes(title_text="correlation r (no unit)")
    fig.update_layout(showlegend=True, legend=dict(orientation="h", x=0.0, y=-0.3, yanchor="top", font=dict(size=11)))
    _style(fig, height, width, "posekit-alignment-correlation")
    fig.update_layout(margin=dict(t=12, b=84))
    return fig


def correlation_figure(alignment, *, palette: str = DEFAULT_PALETTE, height: int = 300, width: int | None = None,
                       max_points: int = MAX_POINTS) -> go.Figure:
    """The angular-speed correlation per trial offset of B's diagnosed reading (:data:`CORRELATION_UIDS`):
    every offset searched, the full-resolution lags next to the peak, and the offset found with its
    uncertainty (one standard deviation) as an error bar."""
    return _correlation_frame(alignment.correlation, alignment.offset_uncertainty, palette, height, width,
                              max_points)


def empty_correlation_figure(*, palette: str = DEFAULT_PALETTE, height: int = 300,
                             width: int | None = None) -> go.Figure:
    """:func:`correlation_figure`'s layout and traces with no data."""
    return _correlation_frame(None, None, palette, height, width, MAX_POINTS)


# --------------------------------------------------------------------------------------
# residual per pair
# --------------------------------------------------------------------------------------

_NO_POSITIONS = "no positions compared"


def _residual_frame(residuals, rotation_tolerance, translation_tolerance, palette, height, width):
    c = _colours(palette)
    fig = make_subplots(rows=2, cols=1, vertical_spacing=0.2, shared_xaxes=False,
                        subplot_titles=("rotation residual per pair (deg)", "position residual per pair (m)"))
    if residuals is None:
        mid = rot = np.zeros(0)
        tr = None
    else:
        mid = residuals.times.mean(axis=1)
        rot = np.asarray(residuals.rotation_degrees, dtype=float)
        tr = None if residuals.translation is None else np.asarray(residuals.translation, dtype=float)
    ends = [float(mid[0]), float(mid[-1])] if mid.size else []
    custom = residuals.times if residuals is not None else np.zeros((0, 2))
    hover = "pair %{customdata[2]}: %{customdata[0]:.3f} to %{customdata[1]:.3f} s<br>%{y:.4g} UNIT<extra></extra>"
    data = np.column_stack([custom, np.arange(1, len(mid) + 1)]) if mid.size else np.zeros((0, 3))
    marker = dict(color=c["a"], size=6, symbol="circle")
    fig.add_trace(go.Scatter(x=mid, y=rot, mode="markers+lines", name="rotation residual", marker=marker,
                             line=dict(color=c["a"], width=1), customdata=data, uid=RESIDUAL_UIDS[0],
                             hovertemplate=hover.replace("UNIT", "deg"), showlegend=False), row=1, col=1)
    tol_r = [] if rotation_tolerance is None else [rotation_tolerance] * len(ends)
    fig.add_trace(go.Scatter(x=ends if tol_r else [], y=tol_r, mode="lines", name="tolerance",
                             line=dict(color=_GREY, width=1, dash="dot"), uid=RESIDUAL_UIDS[1], hoverinfo="skip",
                             showlegend=False), row=1, col=1)
    fig.add_trace(go.Scatter(x=mid if tr is not None else [], y=tr if tr is not None else [], mode="markers+lines",
                             name="position residual", marker=dict(color=c["b"], size=6, symbol="square"),
                             line=dict(color=c["b"], width=1, dash="dash"), customdata=data if tr is not None
                             else np.zeros((0, 3)), uid=RESIDUAL_UIDS[2], hovertemplate=hover.replace("UNIT", "m"),
                             showlegend=False), row=2, col=1)
    tol_t = [] if (translation_tolerance is None or tr is None) else [translation_tolerance] * len(ends)
    fig.add_trace(go.Scatter(x=ends if tol_t else [], y=tol_t, mode="lines", name="tolerance",
                             line=dict(color=_GREY, width=1, dash="dot"), uid=RESIDUAL_UIDS[3], hoverinfo="skip",
                             showlegend=False), row=2, col=1)
    fig.update_yaxes(title_text="deg", rangemode="tozero", row=1, col=1)
    fig.update_yaxes(title_text="m", rangemode="tozero", row=2, col=1)
    fig.update_xaxes(title_text="time on A's clock (s), middle of each pair", row=1, col=1)
    fig.update_xaxes(title_text="time on A's clock (s), middle of each pair", row=2, col=1)
    _style(fig, height, width, "posekit-alignment-residuals")
    fig.update_layout(showlegend=False)
    both = tr is not None or residuals is None
    # rotation only: the position panel is hidden and the rotation panel takes the whole height
    # (the hidden panel keeps a sliver of height, since plotly.js reads an empty domain as the whole figure;
    # a transparent plot area, so that no panel's background covers another's traces)
    top, bottom = fig.layout.yaxis.domain, fig.layout.yaxis2.domain
    fig.update_layout(yaxis=dict(domain=list(top) if both else [0.0, 1.0]), plot_bgcolor="rgba(0,0,0,0)",
                      xaxis2=dict(visible=both),
                      yaxis2=dict(visible=both, domain=list(bottom) if both else [0.0, 0.001]))
    if not both:
        fig.update_layout(height=max(220, int(0.62 * height)))
        fig.layout.annotations[1].text = ""
        fig.layout.annotations[0].text = "rotation residual per pair (deg); " + _NO_POSITIONS
    fig.add_annotation(text="dotted: tolerance", xref="paper", yref="paper", x=1.0, y=1.0, yanchor="bottom",
                       xanchor="right", showarrow=False, font=dict(size=11, color=_GREY))
    return fig


def pair_residual_figure(alignment, *, rotation_tolerance: float | None = None,
                         translation_tolerance: float | None = None, palette: str = DEFAULT_PALETTE,
                         height: int = 420, width: int | None = None) -> go.Figure:
    """The diagnosed mount's residual per pair of key samples (:data:`RESIDUAL_UIDS`): rotation in degrees
    (top) and position in metres, A's length unit (bottom; empty, and said so, when either stream has no
    positions), against the middle of each pair on A's clock.  ``rotation_tolerance`` (radians) and
    ``translation_tolerance`` (metres) draw dotted tolerance lines."""
    tol_r = None if rotation_tolerance is None else math.degrees(rotation_tolerance)
    return _residual_frame(alignment.residuals, tol_r, translation_tolerance, palette, height, width)


def empty_residual_figure(*, palette: str = DEFAULT_PALETTE, height: int = 420,
                          width: int | None = None) -> go.Figure:
    """:func:`pair_residual_figure`'s layout and traces with no data."""
    return _residual_frame(None, None, None, palette, height, width)


# --------------------------------------------------------------------------------------
# readouts
# --------------------------------------------------------------------------------------

def _matrix_labels(rows: int, cols: int, layout: str, letter: str) -> tuple[str, ...]:
    cells = [(i, j) for i in range(rows) for j in range(cols)] if layout == "row-major" \
        else [(i, j) for j in range(cols) for i in range(rows)]
    return tuple(f"{letter}{i + 1}{j + 1}" for i, j in cells)


def number_labels(kind: str, convention, count: int, position_first: bool = True) -> tuple[str, ...]:
    """A short label per number of a row written as ``kind`` under ``convention`` (the order written).

    >>> number_labels("quaternion", "scalar=last", 4)
    ('x', 'y', 'z', 'w')
    >>> number_labels("position-euler", "sequence=z-y-x unit=degrees", 6)
    ('position x', 'position y', 'position z', 'about z (deg)', 'about y (deg)', 'about x (deg)')
    """
    c = Convention.parse(convention) if isinstance(convention, str) else convention
    unit = "deg" if c.unit == "degrees" else "rad"
    rk = kind[len("position-"):] if kind.startswith("position-") else kind
    if kind == "transform":
        return _matrix_labels(4 if count == 16 else 3, 4, c.layout, "m")
    if rk == "quaternion":
        rot = ("w", "x", "y", "z") if c.scalar == "first" else ("x", "y", "z", "w")
    elif rk == "euler":
        rot = tuple(f"about {a} ({unit})" for a in c.axes_letters)
    elif rk == "rotation-vector":
        rot = tuple(f"{a} ({unit})" for a in "xyz")
    else:
        rot = _matrix_labels(3, 3, c.layout, "r")
    if not kind.startswith("position-"):
        return rot
    pos = ("position x", "position y", "position z")
    return pos + rot if position_first else rot + pos


def offset_html(alignment) -> str:
    """The clock offset in words and numbers: what to add to B's stamps, its uncertainty, how well the speeds
    matched, and a warning when a periodic motion left a second peak."""
    t = alignment.time_offset
    warn = ""
    if t.ambiguous:
        warn = (f"<div class='pk-error'>A second offset correlates almost as well ({format_number(t.second_peak)} "
                f"against {format_number(t.correlation)}): a periodic motion leaves the offset ambiguous; record "
                "a motion that does not repeat (start, stop, turn by different amounts).</div>")
    return ("<div class='pk-offset'><span class='pk-offset-value'>add "
            f"<b>{html.escape(_signed_seconds(alignment.offset, 4))}</b> to B's time stamps</span> "
            f"<span class='pk-offset-uncertainty'>\u00b1 {html.escape(_seconds(alignment.offset_uncertainty, 2))} "
            "(one standard deviation)</span></div>"
            f"<div class='pk-words'>angular speeds correlate {html.escape(format_number(t.correlation))} there and "
            f"differ by {html.escape(format_number(100 * t.mismatch, 2, trim=True))} % rms; searched on a "
            f"{html.escape(_seconds(t.grid_step, 4))} grid over {html.escape(_seconds(t.overlap, 4))} of overlap"
            "</div>" + warn)


def mount_html(alignment) -> str:
    """The mount found: its numbers in the user's reading of B (labelled), and the canonical matrix."""
    stated = alignment.stated_b
    numbers = alignment.mount_numbers
    if len(numbers) == stated.count:
        kind, count = stated.kind, stated.count
    else:
        kind, count = stated.rotation_kind, len(numbers)
    labels = number_labels(kind, stated.convention, count, stated.position_first)
    reading = stated.text()
    nominal = alignment.best.nominal_angle_degrees
    near = ("" if nominal is None else
            f"<div class='pk-words'>{html.escape(format_number(nominal, 3))} deg from the nominal mount given</div>")
    what = ("4x4 transform" if alignment.mount.shape == (4, 4) else "3x3 rotation")
    return (f"<div class='pk-words'>B's frame in A's body frame, written in your reading of B "
            f"(<code>{html.escape(reading)}</code>, as {html.escape(kind)}):</div>"
            + _labelled_rows(labels, numbers, 4 if kind == "transform" else (3 if kind == "matrix" else len(labels)))
            + near
            + f"<div class='pk-words'>the same mount as a canonical {what} (parent-from-child, active):</div>"
            + matrix_html(alignment.mount, 6))


def _labelled_rows(labels, values, per_row: int) -> str:
    """Labelled numbers in written order, ``per_row`` to a row (a 16-number transform reads as four rows)."""
    return "".join(numbers_html(labels[k:k + per_row], values[k:k + per_row], 6)
                   for k in range(0, len(labels), max(1, per_row)))


def _items(rows) -> str:
    return "<ul class='pk-ties'>" + "".join(f"<li>{r}</li>" for r in rows) + "</ul>"


def diagnosis_html(alignment, *, limit: int = 4) -> str:
    """The verdict, the slip's sentence and how well one mount fits, then every tie and near tie with the
    motion (or the mount) that would tell them apart, the other explanations and the notes."""
    best = alignment.best
    r = best.residuals
    verdict_class = "pk-ok" if alignment.explained else "pk-bad"
    fit = f"rotation residual rms {format_number(r.rotation_rms, 3)} deg, max {format_number(r.rotation_max, 3)} deg"
    if r.translation is not None:
        fit += f"; position rms {format_number(r.translation_rms, 3)} m"
    parts = [f"<div class='{verdict_class} pk-verdict'>{html.escape(alignment.verdict)}</div>"]
    if alignment.verdict != best.sentence:
        parts.append(f"<div class='pk-sentence'>{html.escape(best.sentence)}</div>")
    parts.append(f"<div class='pk-words'>{html.escape(fit)} over {len(r.rotation_degrees)} pairs</div>")
    if best.near_tie:
        parts.append("<div class='pk-tie'>near tie: other readings fit these data (almost) as well; see below</div>")
    if best.same:
        parts.append("<div class='pk-words'>the same mistake written another way (no data can tell them apart, "
                     "the fix is the same):</div>" + _items(html.escape(s) for s in best.same[:limit]))
    if best.mount_only:
        parts.append("<div class='pk-words'>fit exactly as well with another mount: no motion separates these, "
                     "only the mount does (compare it with the drawing, or give the nominal mount):</div>"
                     + _items(f"{html.escape(s)} <span class='pk-how'>{html.escape(w)}</span>"
                              for s, w in best.mount_only[:limit]))
    if best.separable:
        parts.append("<div class='pk-words'>fit nearly as well; another motion would separate them:</div>"
                     + _items(f"{html.escape(s)} <span class='pk-how'>{html.escape(w)}</span>"
                              for s, w in best.separable[:limit]))
    others = [e for e in alignment.explanations[1:] if e.near_tie]
    if others:
        rows = []
        for e in others[:limit]:
            how = next((w for s, w in e.separable if s.startswith("this reading")), None)
            rows.append(f"{html.escape(e.sentence)} <span class='pk-how'>rms "
                        f"{html.escape(format_number(e.residuals.rotation_rms, 3))} deg"
                        + (f"; {html.escape(how)}" if how else "") + "</span>")
        parts.append("<div class='pk-words'>other explanations close behind:</div>" + _items(rows))
    if alignment.notes:
        parts.append("<div class='pk-words'>notes:</div>" + _items(html.escape(n) for n in alignment.notes))
    return "".join(parts)
