"""Plotly figures of frames: pure functions ``(poses, options) -> Figure`` or trace.

A frame is drawn as three arrows from its origin along its x, y and z axes (the
columns of its canonical rotation matrix).  Every arrow ends in a marker of its own
shape (x diamond, y square, z circle) and carries its letter at the tip, so colour is
never the only cue.  Two palettes:

* ``"colour-blind"`` (the default, :data:`DEFAULT_PALETTE`): vermillion, bluish green
  and blue from the palette of M. Okabe and K. Ito, "Color Universal Design (CUD):
  how to make figures and presentations that are friendly to colorblind people"
  (2008), also recommended by B. Wong, "Points of view: Color blindness", Nature
  Methods 8, 441 (2011).  Red against green is the most common confusion; these
  three stay apart under the common colour-vision deficiencies.
* ``"standard"``: x red, y green, z blue (common practice in robotics viewers).

Every widget and figure takes its default from :data:`DEFAULT_PALETTE`.  Traces carry
a stable ``uid`` (see :data:`FRAME_UIDS`), so widgets find them by uid, never by
position.  Axis titles carry the length unit (``unit``, metres by default).

Only drawing lives here: rotations arrive already computed by posekit's core.
"""

from __future__ import annotations

import numpy as np
import plotly.graph_objects as go

from ..core.checks import as_numbers, checked_matrix
from ..core.errors import PoseInputError

__all__ = [
    "PALETTES",
    "DEFAULT_PALETTE",
    "FRAME_UIDS",
    "overlay_uid",
    "trace_index",
    "auto_scale",
    "frame_points",
    "frame_trace",
    "body_points",
    "body_trace",
    "frame_figure",
    "planar_figure",
    "planar_frame_trace",
    "palette_colours",
    "axis_title",
    "frame_key_html",
]

PALETTES = {
    "standard": ("#d62728", "#2ca02c", "#1f77b4"),
    "colour-blind": ("#D55E00", "#009E73", "#0072B2"),
}
#: The palette every posekit widget and figure starts with (colour-blind safe, see above).
DEFAULT_PALETTE = "colour-blind"
#: ``uid`` of each trace :func:`frame_figure` draws (overlays: :func:`overlay_uid`).
FRAME_UIDS = {"parent": "parent", "frame": "frame", "body": "body", "step1": "step-1", "step2": "step-2"}
TIP_SYMBOLS = ("diamond", "square", "circle")
LETTERS = ("x", "y", "z")
#: Text of a point that carries no letter in a 2D trace: a space, not "".  plotly.js (4.1, the
#: version plotly.py ships here) drops the letters of a trace whose other points have empty text
#: when the trace is restyled: the planar explorer's tips lost their x after every move
#: (tests/browser/test_planar_browser.py checks every letter after moves).
BLANK = " "
SCENE_RANGE = 1.6


def overlay_uid(n: int) -> str:
    """``uid`` of overlay ``n`` (0-based) in :func:`frame_figure`."""
    return f"overlay-{int(n) + 1}"


def trace_index(fig, uid: str) -> int:
    """Position of the trace whose ``uid`` (or, failing that, ``name``) is ``uid``; KeyError if none.

    Positions are looked up, never assumed, so a figure can gain or reorder traces.
    """
    for i, trace in enumerate(fig.data):
        if trace.uid == uid:
            return i
    for i, trace in enumerate(fig.data):
        if trace.name == uid:
            return i
    raise KeyError(f"no trace with uid or name {uid!r}; traces: {[t.uid or t.name for t in fig.data]}")


def auto_scale(*origins) -> float:
    """Arrow length for frames placed at ``origins``: 1 near the origin, else a round share of the reach.

    Keeps a frame readable when positions are large numbers (millimetres, say): the
    arrows grow with the data instead of shrinking to dots.

    >>> auto_scale([0.2, 0, 0]), auto_scale([200.0, 0, 0]), auto_scale([0, 0, -3500.0])
    (1.0, 50.0, 1000.0)
    """
    reach = 0.0
    for o in origins:
        if o is not None:
            a = np.abs(np.asarray(o, dtype=float))
            if a.size and np.all(np.isfinite(a)):
                reach = max(reach, float(a.max()))
    if reach <= 2.0:
        return 1.0
    raw = reach / 3.0
    power = 10.0 ** np.floor(np.log10(raw))
    for step in (1.0, 2.0, 5.0, 10.0):
        if raw <= step * power * 1.5:
            return float(step * power)
    return float(10.0 * power)


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


def frame_trace(rotation, origin=None, *, name: str = "frame", palette: str = DEFAULT_PALETTE,
                scale: float = 1.0, opacity: float = 1.0, width: float = 7.0, letters: bool = True,
                suffix: str = "", dash: str | None = None, uid: str | None = None,
                textposition: str = "top center") -> go.Scatter3d:
    """One ``Scatter3d`` trace holding a frame's three arrows, letters and tip markers.

    ``textposition`` places the tip letters (plotly's positions, e.g. ``"bottom center"``)
    so frames drawn on top of each other keep their letters apart.
    """
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
        textposition=textposition, textfont=dict(size=14, color=point_colours), opacity=opacity,
        hoverinfo="name+text", showlegend=True, uid=uid)


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
               name: str = "body", opacity: float = 0.55, uid: str | None = None) -> go.Mesh3d:
    """A dart-shaped body attached to a frame (forward +x, fin up +z, notch on the left +y)."""
    v = body_points(rotation, origin, scale)
    i, j, k = _BODY_FACES.T
    return go.Mesh3d(x=v[:, 0], y=v[:, 1], z=v[:, 2], i=i, j=j, k=k, color=colour, opacity=opacity,
                     name=name, flatshading=True, hoverinfo="name", showlegend=True, uid=uid)


def axis_title(letter: str, unit: str | None) -> str:
    """``"parent x (m)"``: the axis of the parent frame and its length unit."""
    return f"parent {letter}" + (f" ({unit})" if unit else "")


def _scene(extent: float, unit: str | None, legend: bool = True) -> dict:
    axis = dict(range=[-extent, extent], zeroline=False, showbackground=True, backgroundcolor="#f7f7f7",
                gridcolor="#dddddd", exponentformat="power", tickfont=dict(size=10))
    return dict(
        xaxis=dict(axis, title=dict(text=axis_title("x", unit), font=dict(size=12))),
        yaxis=dict(axis, title=dict(text=axis_title("y", unit), font=dict(size=12))),
        zaxis=dict(axis, title=dict(text=axis_title("z", unit), font=dict(size=12))),
        aspectmode="cube",
        # far enough out that the cube, its tick labels and axis titles stay inside the plot
        camera=dict(eye=dict(x=1.75, y=1.45, z=1.05), up=dict(x=0, y=0, z=1)),
        domain=dict(x=[0.0, 1.0], y=[0.08 if legend else 0.0, 1.0]))  # room for a legend below, if any


def frame_figure(rotation, origin=None, *, reference: bool = True, body: bool = True, steps=None,
                 overlays=(), palette: str = DEFAULT_PALETTE, scale: float | None = None, title: str | None = None,
                 extent: float | None = None, height: int = 460, unit: str | None = "m",
                 legend: bool = True) -> go.Figure:
    """Figure of one frame over the faint parent frame.

    ``rotation (3, 3)`` and ``origin (3,)`` place the frame; ``steps (4, 3, 3)`` (from
    :func:`posekit.core.steps.euler_steps`) adds the frames after turns 1 and 2 as thin
    dashed arrows; ``overlays`` is a sequence of ``(label, rotation, origin)`` drawn
    dashed, their arrow tips marked with primes and their legend entries named
    ``label (prime)`` (e.g. expected vs observed).

    ``unit`` names the length unit of the origins (axis titles read ``parent x (m)``);
    ``scale=None`` sizes the arrows to the data (:func:`auto_scale`), and the scene
    range follows the origins unless ``extent`` is given.  ``legend=False`` leaves the
    legend out (a live widget shows :func:`frame_key_html` beside the plot instead: a
    plotly legend is redrawn on every update, which costs the page time per slider step).

    Traces carry stable uids (:data:`FRAME_UIDS`, overlays :func:`overlay_uid`): the
    parent frame (if ``reference``), the frame, its body (if ``body``), step 1, step 2
    (if ``steps``), then the overlays.  Look them up with :func:`trace_index`.
    """
    overlays = list(overlays)
    if scale is None:
        scale = auto_scale(origin, *[org for _, _, org in overlays])
    u = FRAME_UIDS
    traces = []
    if reference:
        # letters below the tips: apart from the frame's own letters when the two coincide
        traces.append(frame_trace(np.eye(3), name="parent frame", palette=palette, scale=scale,
                                  opacity=0.35, width=3, suffix="\u2080", uid=u["parent"],
                                  textposition="bottom center"))
    traces.append(frame_trace(rotation, origin, name="frame", palette=palette, scale=scale, uid=u["frame"]))
    if body:
        traces.append(body_trace(rotation, origin, scale=scale, uid=u["body"]))
    if steps is not None:
        s = np.asarray(steps)
        for k, where in ((1, "middle left"), (2, "middle right")):
            traces.append(frame_trace(s[k], origin, name=f"after turn {k}", palette=palette, scale=0.8 * scale,
                                      opacity=0.6, width=3, dash="dash", suffix=str(k), uid=u[f"step{k}"],
                                      textposition=where))
    marks = ("\u2032", "\u2033", "\u2034")  # primes tell the overlays apart at the arrow tips
    for n, (label, rot, org) in enumerate(overlays):
        mark = marks[n % 3] * (1 + n // 3)
        traces.append(frame_trace(rot, org, name=f"{label} ({mark})", palette=palette, scale=scale, width=4,
                                  dash="dot", suffix=mark, uid=overlay_uid(n),
                                  textposition=("top right", "bottom left", "top left")[n % 3]))
    if extent is None:
        extent = SCENE_RANGE * scale
        for org in [origin] + [o for _, _, o in overlays]:
            if org is not None:
                extent = max(extent, float(np.max(np.abs(as_numbers(org, "origin", (3,))))) + scale * 1.1)
    fig = go.Figure(data=traces)
    fig.update_layout(scene=_scene(extent, unit, legend), height=height,
                      margin=dict(l=10, r=10, t=34 if title else 10, b=10),
                      title=dict(text=title) if title else None, uirevision="posekit-frame",
                      legend=dict(orientation="h", y=0.0, yanchor="bottom", x=0.0, font=dict(size=11)),
                      showlegend=bool(legend))
    return fig


def frame_key_html(palette: str = DEFAULT_PALETTE, *, steps: bool = True, body: bool = True) -> str:
    """A static key to :func:`frame_figure` in HTML: which letters, lines and colours mean what."""
    import html

    c = palette_colours(palette)

    def letters(suffix: str, weight: str = "600", opacity: str = "1") -> str:
        return "".join(f"<span style='color:{c[k]};font-weight:{weight};opacity:{opacity}'>{LETTERS[k]}{suffix}</span> "
                       for k in range(3))

    items = [letters("") + "the frame (solid arrows, tips ◆ x, ■ y, ● z)",
             letters("₀", "400", "0.55") + "the parent frame (faint)"]
    if steps:
        items.append(letters("1", "400") + "/ " + letters("2", "400") + "after turn 1 / turn 2 (dashed)")
    if body:
        items.append("<span style='color:#7f7f7f'>▲</span> the body: nose +x, fin +z, notch on the left (+y)")
    name = html.escape("colour-blind safe colours" if palette == "colour-blind" else "standard colours")
    return ("<div class='pk-words pk-frame-key'>" + "<br>".join(items)
            + f"<br><span style='color:#777'>{name}; the letters name each axis, so colour is never the only cue"
            + "</span></div>")


def planar_frame_trace(m, name: str, colours, scale: float = 1.0, *, opacity: float = 1.0, width: float = 4.0,
                       letters: bool = True, suffix: str = "", dash: str | None = None, tip_size: int = 9,
                       font_size: int = 12, uid: str | None = None, textposition: str = "top center") -> go.Scatter:
    """Top-down arrows of one SE(2) frame ``m (3, 3)``: x and y with letters and tip shapes."""
    o = m[:2, 2]
    xs, ys, text, cols, sizes, syms = [], [], [], [], [], []
    for k in range(2):
        if k:
            xs.append(None), ys.append(None), text.append(BLANK), cols.append(colours[k])
            sizes.append(0), syms.append("circle")
        tip = o + scale * m[:2, k]
        xs += [float(o[0]), float(tip[0])]
        ys += [float(o[1]), float(tip[1])]
        text += [BLANK, (LETTERS[k] + suffix) if letters else BLANK]
        cols += [colours[k], colours[k]]
        sizes += [0, tip_size]
        syms += [TIP_SYMBOLS[k], TIP_SYMBOLS[k]]
    line = dict(color="#555555", width=width)
    if dash:
        line["dash"] = dash
    return go.Scatter(x=xs, y=ys, mode="lines+markers+text", name=name, text=text, textposition=textposition,
                      line=line, marker=dict(color=cols, size=sizes, symbol=syms),
                      textfont=dict(color=cols, size=font_size), opacity=opacity, hoverinfo="name", uid=uid)


def planar_figure(transform, *, reference: bool = True, palette: str = DEFAULT_PALETTE, scale: float = 1.0,
                  title: str | None = None, extent: float | None = None, height: int = 420,
                  unit: str | None = "m") -> go.Figure:
    """Top-down view of an SE(2) frame ``transform (3, 3)``: x and y arrows with letters.

    Traces (uids ``"parent"`` if ``reference``, then ``"frame"``); axis titles carry ``unit``.
    """
    from ..core.transforms import checked_transform

    t = checked_transform(transform, size=3)
    colours = palette_colours(palette)

    traces = []
    if reference:
        traces.append(planar_frame_trace(np.eye(3), "parent frame", colours, scale, opacity=0.35, width=2,
                                         suffix="\u2080", tip_size=11, font_size=14, uid=FRAME_UIDS["parent"],
                                         textposition="bottom right"))
    traces.append(planar_frame_trace(t, "frame", colours, scale, width=4, tip_size=11, font_size=14,
                                     uid=FRAME_UIDS["frame"]))
    if extent is None:
        extent = max(SCENE_RANGE * scale, float(np.max(np.abs(t[:2, 2]))) + 1.2 * scale)
    fig = go.Figure(data=traces)
    axis = dict(range=[-extent, extent], zeroline=True, exponentformat="power", title_font=dict(size=12))
    fig.update_layout(height=height, margin=dict(l=56, r=12, t=30 if title else 12, b=48),
                      title=dict(text=title) if title else None, uirevision="posekit-planar",
                      xaxis=dict(axis, title=axis_title("x", unit)),
                      yaxis=dict(axis, title=axis_title("y", unit), scaleanchor="x", scaleratio=1),
                      showlegend=False)
    return fig
