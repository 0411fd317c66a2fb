"""Plotly figures of frames: pure functions ``(poses, options) -> Figure`` or trace.

A frame is drawn as three arrows from its origin along its x, y and z axes (the
columns of its canonical rotation matrix).  Every arrow ends in a marker of its own
shape (x diamond, y square, z circle) and carries its letter at the tip, so colour is
never the only cue.  Two palettes: ``"standard"`` (x red, y green, z blue, a habit
of the trade) and ``"colour-blind"`` (vermillion, bluish green, blue, from the
Okabe-Ito set that stays distinct under the common colour-vision deficiencies).

Only drawing lives here: rotations arrive already computed by posekit's core.
"""

from __future__ import annotations

import numpy as np
import plotly.graph_objects as go

from ..core.checks import as_numbers, checked_matrix
from ..core.errors import PoseInputError

__all__ = [
    "PALETTES",
    "frame_points",
    "frame_trace",
    "body_points",
    "body_trace",
    "frame_figure",
    "planar_figure",
    "planar_frame_trace",
    "palette_colours",
]

PALETTES = {
    "standard": ("#d62728", "#2ca02c", "#1f77b4"),
    "colour-blind": ("#D55E00", "#009E73", "#0072B2"),
}
TIP_SYMBOLS = ("diamond", "square", "circle")
LETTERS = ("x", "y", "z")
SCENE_RANGE = 1.6


def palette_colours(palette: str) -> tuple[str, str, str]:
    """The three axis colours of a palette name; unknown names raise with the known ones."""
    if palette not in PALETTES:
        raise PoseInputError(f"unknown palette {palette!r}; accepted: {', '.join(PALETTES)}")
    return PALETTES[palette]


def frame_points(rotation, origin=None, scale: float = 1.0, *, check: bool = True):
    """Arrow polyline of one frame: ``rotation (3, 3)``, ``origin (3,)`` -> ``x, y, z`` lists of 8.

    Points are origin, x tip, gap, origin, y tip, gap, origin, z tip (gaps are None).
    ``check=False`` skips validating a rotation that posekit's core has just computed
    (as in ``write_rotation``); the origin is always checked.
    """
    r = checked_matrix(rotation) if check else np.asarray(rotation, dtype=np.float64)
    o = np.zeros(3) if origin is None else as_numbers(origin, "origin", (3,))
    tips = o[:, None] + scale * r  # column k is the tip of axis k
    xs, ys, zs = [], [], []
    for k in range(3):
        if k:
            xs.append(None), ys.append(None), zs.append(None)
        xs += [float(o[0]), float(tips[0, k])]
        ys += [float(o[1]), float(tips[1, k])]
        zs += [float(o[2]), float(tips[2, k])]
    return xs, ys, zs


def frame_trace(rotation, origin=None, *, name: str = "frame", palette: str = "standard",
                scale: float = 1.0, opacity: float = 1.0, width: float = 7.0, letters: bool = True,
                suffix: str = "", dash: str | None = None) -> go.Scatter3d:
    """One ``Scatter3d`` trace holding a frame's three arrows, letters and tip markers."""
    colours = palette_colours(palette)
    xs, ys, zs = frame_points(rotation, origin, scale)
    point_colours, sizes, symbols, text = [], [], [], []
    for k in range(3):
        if k:
            point_colours.append(colours[k])
            sizes.append(0)
            symbols.append("circle")
            text.append("")
        point_colours += [colours[k], colours[k]]
        sizes += [0, 7]
        symbols += [TIP_SYMBOLS[k], TIP_SYMBOLS[k]]
        text += ["", (LETTERS[k] + suffix) if letters else ""]
    line = dict(color=point_colours, width=width)
    if dash:
        line["dash"] = dash
    return go.Scatter3d(
        x=xs, y=ys, z=zs, name=name, mode="lines+markers+text" if letters else "lines+markers",
        line=line, marker=dict(size=sizes, color=point_colours, symbol=symbols), text=text,
        textposition="top center", textfont=dict(size=14, color=point_colours), opacity=opacity,
        hoverinfo="name+text", showlegend=True)


# A small dart of our own design: points along +x (forward), a fin along +z (up) and a
# notch on the +y (left) side, so forward, up and handedness can be read from its shape.
_BODY_VERTICES = np.array([
    [0.55, 0.00, 0.00],    # 0 nose
    [-0.25, 0.22, 0.00],   # 1 left wing tip
    [-0.25, -0.22, 0.00],  # 2 right wing tip
    [-0.15, 0.00, 0.00],   # 3 tail centre
    [-0.20, 0.00, 0.22],   # 4 fin top
    [0.05, 0.00, 0.00],    # 5 fin front
    [-0.05, 0.30, 0.00],   # 6 left-side notch tip
    [-0.15, 0.20, 0.00],   # 7 notch base
    [0.05, 0.15, 0.00],    # 8 notch base front
])
_BODY_FACES = np.array([[0, 1, 3], [0, 3, 2], [5, 4, 3], [6, 7, 8]])


def body_points(rotation, origin=None, scale: float = 1.0, *, check: bool = True) -> np.ndarray:
    """Vertices ``(9, 3)`` of the dart body placed by ``rotation (3, 3)`` and ``origin (3,)``.

    ``check`` as in :func:`frame_points`.
    """
    r = checked_matrix(rotation) if check else np.asarray(rotation, dtype=np.float64)
    o = np.zeros(3) if origin is None else as_numbers(origin, "origin", (3,))
    return (scale * _BODY_VERTICES) @ r.T + o


def body_trace(rotation, origin=None, *, scale: float = 1.0, colour: str = "#7f7f7f",
               name: str = "body", opacity: float = 0.55) -> go.Mesh3d:
    """A dart-shaped body attached to a frame (forward +x, fin up +z, notch on the left +y)."""
    v = body_points(rotation, origin, scale)
    i, j, k = _BODY_FACES.T
    return go.Mesh3d(x=v[:, 0], y=v[:, 1], z=v[:, 2], i=i, j=j, k=k, color=colour, opacity=opacity,
                     name=name, flatshading=True, hoverinfo="name", showlegend=True)


def _scene(title: str | None, extent: float) -> dict:
    axis = dict(range=[-extent, extent], zeroline=False, showbackground=True,
                backgroundcolor="#f7f7f7", gridcolor="#dddddd", title=dict(text=""))
    return dict(
        xaxis=dict(axis, title=dict(text="parent x")), yaxis=dict(axis, title=dict(text="parent y")),
        zaxis=dict(axis, title=dict(text="parent z")), aspectmode="cube",
        camera=dict(eye=dict(x=1.3, y=1.05, z=0.75), up=dict(x=0, y=0, z=1)))


def frame_figure(rotation, origin=None, *, reference: bool = True, body: bool = True, steps=None,
                 overlays=(), palette: str = "standard", scale: float = 1.0, title: str | None = None,
                 extent: float | None = None, height: int = 460) -> go.Figure:
    """Figure of one frame over the faint parent frame.

    ``rotation (3, 3)`` and ``origin (3,)`` place the frame; ``steps (4, 3, 3)`` (from
    :func:`posekit.core.steps.euler_steps`) adds the frames after turns 1 and 2 as thin
    dashed arrows; ``overlays`` is a sequence of ``(label, rotation, origin)`` drawn
    dashed, their arrow tips marked with primes and their legend entries named
    ``label (prime)`` (e.g. expected vs observed).

    Trace order (stable, so widgets can update traces by index): parent frame (if
    ``reference``), the frame, its body (if ``body``), step 1, step 2 (if ``steps``),
    then overlays.
    """
    traces = []
    if reference:
        traces.append(frame_trace(np.eye(3), name="parent frame", palette=palette, scale=scale,
                                  opacity=0.35, width=3, suffix="\u2080"))
    traces.append(frame_trace(rotation, origin, name="frame", palette=palette, scale=scale))
    if body:
        traces.append(body_trace(rotation, origin, scale=scale))
    if steps is not None:
        s = np.asarray(steps)
        for k in (1, 2):
            traces.append(frame_trace(s[k], origin, name=f"after turn {k}", palette=palette, scale=0.8 * scale,
                                      opacity=0.6, width=3, dash="dash", suffix=str(k)))
    marks = ("\u2032", "\u2033", "\u2034")  # primes tell the overlays apart at the arrow tips
    for n, (label, rot, org) in enumerate(overlays):
        mark = marks[n % 3] * (1 + n // 3)
        traces.append(frame_trace(rot, org, name=f"{label} ({mark})", palette=palette, scale=scale, width=4,
                                  dash="dot", suffix=mark))
    if extent is None:
        extent = SCENE_RANGE * scale
        if origin is not None:
            extent = max(extent, float(np.max(np.abs(as_numbers(origin, "origin", (3,))))) + scale * 1.1)
    fig = go.Figure(data=traces)
    fig.update_layout(scene=_scene(title, extent), height=height, margin=dict(l=0, r=0, t=30 if title else 5, b=0),
                      title=dict(text=title) if title else None, uirevision="posekit-frame",
                      legend=dict(orientation="h", y=0.02, x=0.0))
    return fig


def planar_frame_trace(m, name: str, colours, scale: float = 1.0, *, opacity: float = 1.0, width: float = 4.0,
                       letters: bool = True, suffix: str = "", dash: str | None = None, tip_size: int = 9,
                       font_size: int = 12) -> go.Scatter:
    """Top-down arrows of one SE(2) frame ``m (3, 3)``: x and y with letters and tip shapes."""
    o = m[:2, 2]
    xs, ys, text, cols, sizes, syms = [], [], [], [], [], []
    for k in range(2):
        if k:
            xs.append(None), ys.append(None), text.append(""), cols.append(colours[k])
            sizes.append(0), syms.append("circle")
        tip = o + scale * m[:2, k]
        xs += [float(o[0]), float(tip[0])]
        ys += [float(o[1]), float(tip[1])]
        text += ["", (LETTERS[k] + suffix) if letters else ""]
        cols += [colours[k], colours[k]]
        sizes += [0, tip_size]
        syms += [TIP_SYMBOLS[k], TIP_SYMBOLS[k]]
    line = dict(color="#555555", width=width)
    if dash:
        line["dash"] = dash
    return go.Scatter(x=xs, y=ys, mode="lines+markers+text", name=name, text=text, textposition="top center",
                      line=line, marker=dict(color=cols, size=sizes, symbol=syms),
                      textfont=dict(color=cols, size=font_size), opacity=opacity, hoverinfo="name")


def planar_figure(transform, *, reference: bool = True, palette: str = "standard", scale: float = 1.0,
                  title: str | None = None, extent: float | None = None, height: int = 420) -> go.Figure:
    """Top-down view of an SE(2) frame ``transform (3, 3)``: x and y arrows with letters.

    Trace order: parent frame (if ``reference``), then the frame.
    """
    from ..core.transforms import checked_transform

    t = checked_transform(transform, size=3)
    colours = palette_colours(palette)

    traces = []
    if reference:
        traces.append(planar_frame_trace(np.eye(3), "parent frame", colours, scale, opacity=0.35, width=2,
                                         suffix="\u2080", tip_size=11, font_size=14))
    traces.append(planar_frame_trace(t, "frame", colours, scale, width=4, tip_size=11, font_size=14))
    if extent is None:
        extent = max(SCENE_RANGE * scale, float(np.max(np.abs(t[:2, 2]))) + 1.2 * scale)
    fig = go.Figure(data=traces)
    fig.update_layout(height=height, margin=dict(l=40, r=10, t=30 if title else 10, b=40),
                      title=dict(text=title) if title else None, uirevision="posekit-planar",
                      xaxis=dict(range=[-extent, extent], title="parent x", zeroline=True),
                      yaxis=dict(range=[-extent, extent], title="parent y", scaleanchor="x", scaleratio=1),
                      showlegend=False)
    return fig
