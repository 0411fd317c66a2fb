"""Figures and HTML for a diagnosis: the per-pair residual plot and the reading panels.

Pure functions; the numbers come from :mod:`posekit.analysis.diagnose` as they are.
"""

from __future__ import annotations

import html
import math

import numpy as np
import plotly.graph_objects as go
from plotly.subplots import make_subplots

from ..core.errors import plural  # noqa: F401 - re-exported: widgets use view.diagnosis.plural

__all__ = ["residual_figure", "parsed_html", "error_html", "choice_words", "guess_html", "plural"]


def residual_figure(rotation_residuals, translation_residuals=None, *, offset_rotation_residuals=None,
                    offset_translation_residuals=None, rotation_tolerance: float | None = None,
                    height: int = 330, width: int | None = None) -> go.Figure:
    """Residual per pose pair of the best explanation (and of the fitted offset, if any).

    ``rotation_residuals (N,)`` radians (drawn in degrees), ``translation_residuals
    (N,)`` metres (drawn in millimetres) or None.  Trace order: rotation, offset
    rotation (if given), translation, offset translation (if given).  Pairs are
    numbered from 1, as the lines they were pasted on.

    >>> fig = residual_figure(np.zeros(4), np.zeros(4))
    >>> len(fig.data), [int(v) for v in fig.data[0].x]
    (2, [1, 2, 3, 4])
    """
    r = np.degrees(np.asarray(rotation_residuals, dtype=float).reshape(-1))
    n = r.size
    pair = np.arange(1, n + 1)
    has_t = translation_residuals is not None
    fig = make_subplots(rows=2 if has_t else 1, cols=1, shared_xaxes=True, vertical_spacing=0.12,
                        subplot_titles=("rotation residual per pair (degrees)",) +
                                       (("translation residual per pair (mm)",) if has_t else ()))
    fig.add_trace(go.Scatter(x=pair, y=r, mode="markers+lines", name="best explanation",
                             hovertemplate="pair %{x}: %{y:.3g}°<extra></extra>",
                             marker=dict(symbol="circle", size=7, color="#0072B2"),
                             line=dict(color="#0072B2", width=1)), row=1, col=1)
    if offset_rotation_residuals is not None:
        fig.add_trace(go.Scatter(x=pair, y=np.degrees(np.asarray(offset_rotation_residuals, dtype=float)),
                                 mode="markers+lines", name="after the constant offset",
                                 marker=dict(symbol="diamond", size=7, color="#D55E00"),
                                 line=dict(color="#D55E00", width=1, dash="dash")), row=1, col=1)
    if rotation_tolerance is not None:
        fig.add_hline(y=math.degrees(rotation_tolerance), line=dict(color="#777", dash="dot", width=1), row=1, col=1,
                      annotation_text="tolerance", annotation_position="top left")
    if has_t:
        fig.add_trace(go.Scatter(x=pair, y=1000 * np.asarray(translation_residuals, dtype=float), mode="markers+lines",
                                 name="best explanation, translation", showlegend=False,
                                 marker=dict(symbol="circle", size=7, color="#0072B2"),
                                 line=dict(color="#0072B2", width=1)), row=2, col=1)
        if offset_translation_residuals is not None:
            fig.add_trace(go.Scatter(x=pair, y=1000 * np.asarray(offset_translation_residuals, dtype=float),
                                     mode="markers+lines", name="after the constant offset, translation",
                                     showlegend=False, marker=dict(symbol="diamond", size=7, color="#D55E00"),
                                     line=dict(color="#D55E00", width=1, dash="dash")), row=2, col=1)
        fig.update_xaxes(title_text="pair", row=2, col=1)
    else:
        fig.update_xaxes(title_text="pair", row=1, col=1)
    fig.update_layout(height=height, width=width, margin=dict(l=55, r=15, t=35, b=40), plot_bgcolor="#ffffff",
                      legend=dict(orientation="h", y=-0.2 if has_t else -0.25, x=0.0), uirevision="posekit-residuals")
    fig.update_yaxes(gridcolor="#e5e5e5", zerolinecolor="#bbbbbb", rangemode="tozero")
    for ann in fig.layout.annotations:
        ann.font = dict(size=12, color="#333")
    return fig


def parsed_html(parsed, limit: int = 8) -> str:
    """What the parser understood: count, shape, format, notes and the readings (best score first)."""
    head = (f"<div class='pk-ok'>read <b>{parsed.count}</b> numbers as {html.escape(parsed.source_format)}, "
            f"shape {html.escape(str(parsed.shape))}</div>")
    notes = "".join(f"<div class='pk-words'>note: {html.escape(n)}</div>" for n in parsed.notes)
    if parsed.names:
        notes += f"<div class='pk-words'>names: {html.escape(', '.join(parsed.names))}</div>"
    interps = parsed.interpretations
    if not interps:
        return head + notes + "<div class='pk-bad'>no pose representation has this many numbers</div>"
    rows = "".join(f"<tr><td>{i.score:.3f}</td><td>{html.escape(i.describe())}</td></tr>" for i in interps[:limit])
    more = (f"<div class='pk-words'>and {plural(len(interps) - limit, 'more reading')}</div>"
            if len(interps) > limit else "")
    tie = (" — several equally valid, none picked" if parsed.ambiguous else "")
    return (head + notes + f"<div class='pk-words'>{plural(len(interps), 'possible reading')}{tie}:</div>"
            f"<table class='pk-readings'><tr><th>score</th><th>reading</th></tr>{rows}</table>{more}")


def error_html(exc) -> str:
    """A parse or input error: the reason, and (for pasted text) where reading stopped, escaped."""
    excerpt = getattr(exc, "excerpt", None)
    if excerpt is not None:
        return (f"<div class='pk-bad'>could not read this: {html.escape(exc.reason)} "
                f"(line {exc.line}, column {exc.column})</div><pre class='pk-caret'>{html.escape(excerpt)}</pre>")
    return f"<div class='pk-bad'>could not use this:</div><pre class='pk-caret'>{html.escape(str(exc))}</pre>"




_KIND_WORDS = {"euler": "Euler angles", "rotation-vector": "a rotation vector", "quaternion": "a quaternion",
               "matrix": "a 3x3 matrix", "transform": "a transform", "position-euler": "a position, then Euler angles",
               "position-rotation-vector": "a position, then a rotation vector",
               "position-quaternion": "a position, then a quaternion"}


def choice_words(choice) -> str:
    """A few words for another reading of the expected input (a ReadingChoice), e.g. 'angles in radians'.

    >>> from posekit.analysis.diagnose import ReadingChoice
    >>> choice_words(ReadingChoice("scalar", "last", "quaternion", "scalar=last"))
    'w last (x, y, z, w)'
    """
    if choice.field == "kind":
        return _KIND_WORDS.get(choice.value, choice.value)
    if choice.field == "unit":
        return f"angles in {choice.value}"
    if choice.field == "scalar":
        return "w first (w, x, y, z)" if choice.value == "first" else "w last (x, y, z, w)"
    if choice.field == "layout":
        return "row by row" if choice.value == "row-major" else "column by column"
    return f"{choice.field}={choice.value}"


def guess_html(guess, action: str = "") -> str:
    """The one 'read as' line of the expected input and, when the magnitudes point to the other unit, a
    visible note (``action``: what to do about it, in the words of the place it is shown)."""
    if guess is None:
        return ""
    out = f"<div class='pk-read-as'>{html.escape(guess.line())}</div>"
    note = guess.note()
    if note:
        out += f"<div class='pk-unit-note'>note: {html.escape(note)}{html.escape(action)}</div>"
    return out
