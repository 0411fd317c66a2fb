"""Figures and HTML readouts of a frame graph: pure functions ``(graph, options) -> Figure / str``.

Every frame joined to the chosen root is drawn where the graph's spanning tree places
it (:meth:`posekit.analysis.FrameGraph.placement`), as three arrows with letters and tip
shapes (:func:`posekit.view.frames.frame_trace`) and its name.  Edges are grey lines
between origins; edges that close a loop are dashed, and beside each one a faint
"second opinion" frame shows where that edge alone would put its child, so a loop that
does not close is visible as two frames that should coincide.  The selected lookup's
path is drawn thick in orange.  SE(2) graphs are drawn top-down.

Trace order (stable for a given graph, so widgets can update traces by index):

0. ``edges`` - tree edges; 1. ``loop edges``; 2. ``lookup path``; 3. ``frame names``;
4 ... 4 + k - 1. one trace per placed frame, named after it (in placement order);
then one ``<child> by edge <i>`` trace per loop-closing edge.

No math here beyond arranging numbers for plotly: placements, lookups and loop checks
come from :mod:`posekit.analysis.frames_graph`.
"""

from __future__ import annotations

import html

import numpy as np
import plotly.graph_objects as go

from ..analysis.frames_graph import FrameGraph, Lookup, LoopCheck, Readout
from ..core.errors import PoseInputError, WrongTypeError
from .frames import frame_trace, palette_colours, planar_frame_trace
from .readouts import matrix_html, numbers_html, panel_html, words_html

__all__ = ["graph_figure", "graph_traces", "readout_html", "loop_check_html", "PATH_COLOUR", "FIRST_FRAME_TRACE"]

PATH_COLOUR = "#E69F00"  # Okabe-Ito orange: apart from the axis colours of both palettes
EDGE_COLOUR = "#8c8c8c"
LOOP_COLOUR = "#CC79A7"  # Okabe-Ito reddish purple
FIRST_FRAME_TRACE = 4


def _origins(mats: np.ndarray) -> np.ndarray:
    n = mats.shape[-1]
    return mats[:, : n - 1, n - 1]


def _auto_scale(origins: np.ndarray) -> float:
    """Arrow length from the spacing of the origins (a drawing choice, not math)."""
    if len(origins) < 2:
        return 1.0
    d = np.linalg.norm(origins[:, None, :] - origins[None, :, :], axis=-1)
    span = float(d.max())
    if span < 1e-9:
        return 1.0
    d[d < 1e-9] = np.inf
    near = np.min(d, axis=1)
    near = near[np.isfinite(near)]
    s = 0.6 * float(np.median(near)) if near.size else 0.2 * span
    return float(np.clip(s, 0.05 * span, 0.25 * span))


def _polyline(points_list, dim: int) -> tuple[list, ...]:
    """Segments joined with None gaps: ``[(p, q), ...]`` of ``dim``-vectors -> ``dim`` coordinate lists."""
    cols: list[list] = [[] for _ in range(dim)]
    for k, seg in enumerate(points_list):
        if k:
            for c in cols:
                c.append(None)
        for p in seg:
            for c, v in zip(cols, p):
                c.append(float(v))
    return tuple(cols)


def _planar_frame_trace(m: np.ndarray, name: str, colours, scale: float, opacity: float = 1.0,
                        width: float = 4.0, letters: bool = True, dash: str | None = None) -> go.Scatter:
    return planar_frame_trace(m, name, colours, scale, opacity=opacity, width=width * 0.6, letters=letters,
                              dash=dash)


def graph_traces(graph: FrameGraph, *, root: str | None = None, lookup: Lookup | None = None,
                 palette: str = "standard", scale: float | None = None, letters: bool = True) -> tuple[list, dict]:
    """The traces of :func:`graph_figure` (in the documented order) and facts for the layout."""
    if not isinstance(graph, FrameGraph):
        raise WrongTypeError(f"graph_figure: got {type(graph).__name__}; expected a posekit FrameGraph")
    if lookup is not None and not isinstance(lookup, Lookup):
        raise WrongTypeError(f"graph_figure lookup: got {type(lookup).__name__}; expected a Lookup from "
                             "FrameGraph.lookup or None")
    colours = palette_colours(palette)
    place = graph.placement(root)
    mats = np.asarray(place.matrices)
    origins = _origins(mats)
    s = _auto_scale(origins) if scale is None else float(scale)
    if not np.isfinite(s) or s <= 0:
        raise PoseInputError(f"graph_figure scale: got {scale!r}; expected a positive number (arrow length)")
    index = {f: k for k, f in enumerate(place.frames)}
    planar = graph.planar
    dim = 2 if planar else 3

    def seg(a, b):
        return (origins[index[a]], origins[index[b]])

    tree_segs = [seg(graph.edges[i].parent, graph.edges[i].child) for i in place.tree_edges]
    loop_segs = [seg(graph.edges[i].parent, graph.edges[i].child) for i in place.loop_edges]
    path_segs = []
    if lookup is not None:
        path_segs = [seg(st.into_frame, st.from_frame) for st in lookup.steps
                     if st.into_frame in index and st.from_frame in index]
    lift = np.zeros(origins.shape[1])
    lift[-1] = -0.35 * s  # names just below each origin, clear of the arrow letters
    name_points = origins + lift
    ghosts = []
    for i in place.loop_edges:
        e = graph.edges[i]
        ghosts.append((i, e, mats[index[e.parent]] @ np.asarray(e.transform)))

    traces: list = []
    if planar:
        Line = go.Scatter
        tx, ty = _polyline(tree_segs, dim)
        traces.append(Line(x=tx, y=ty, mode="lines", name="edges", line=dict(color=EDGE_COLOUR, width=2),
                           hoverinfo="skip", showlegend=False))
        lx, ly = _polyline(loop_segs, dim)
        traces.append(Line(x=lx, y=ly, mode="lines", name="loop edges",
                           line=dict(color=LOOP_COLOUR, width=2, dash="dash"), hoverinfo="skip", showlegend=False))
        px, py = _polyline(path_segs, dim)
        traces.append(Line(x=px, y=py, mode="lines", name="lookup path", line=dict(color=PATH_COLOUR, width=9),
                           opacity=0.55, hoverinfo="skip", showlegend=False))
        traces.append(Line(x=name_points[:, 0].tolist(), y=name_points[:, 1].tolist(), mode="text",
                           text=list(place.frames), name="frame names", textposition="bottom center",
                           textfont=dict(size=13, color="#222222"), hoverinfo="skip", showlegend=False))
        for k, f in enumerate(place.frames):
            traces.append(_planar_frame_trace(mats[k], f, colours, s, letters=letters))
        for i, e, m in ghosts:
            traces.append(_planar_frame_trace(m, f"{e.child} by edge {i}", colours, 0.8 * s, opacity=0.45, width=2,
                                              letters=False, dash="dot"))
    else:
        Line = go.Scatter3d
        tx, ty, tz = _polyline(tree_segs, dim)
        traces.append(Line(x=tx, y=ty, z=tz, mode="lines", name="edges", line=dict(color=EDGE_COLOUR, width=3),
                           hoverinfo="skip", showlegend=False))
        lx, ly, lz = _polyline(loop_segs, dim)
        traces.append(Line(x=lx, y=ly, z=lz, mode="lines", name="loop edges",
                           line=dict(color=LOOP_COLOUR, width=3, dash="dash"), hoverinfo="skip", showlegend=False))
        px, py, pz = _polyline(path_segs, dim)
        traces.append(Line(x=px, y=py, z=pz, mode="lines", name="lookup path", line=dict(color=PATH_COLOUR, width=12),
                           opacity=0.6, hoverinfo="skip", showlegend=False))
        traces.append(Line(x=name_points[:, 0].tolist(), y=name_points[:, 1].tolist(), z=name_points[:, 2].tolist(),
                           mode="text", text=list(place.frames), name="frame names", textposition="middle center",
                           textfont=dict(size=13, color="#222222"), hoverinfo="skip", showlegend=False))
        for k, f in enumerate(place.frames):
            m = mats[k]
            tr = frame_trace(m[:3, :3], m[:3, 3], name=f, palette=palette, scale=s, width=5, letters=letters)
            tr.update(showlegend=False, textfont=dict(size=11))
            traces.append(tr)
        for i, e, m in ghosts:
            tr = frame_trace(m[:3, :3], m[:3, 3], name=f"{e.child} by edge {i}", palette=palette, scale=0.8 * s,
                             width=3, opacity=0.45, letters=False, dash="dot")
            tr.update(showlegend=False)
            traces.append(tr)
    all_points = np.concatenate([origins] + [g[2][None, : origins.shape[1], -1] for g in ghosts], axis=0) \
        if ghosts else origins
    facts = dict(scale=s, planar=planar, root=place.root, unreached=place.unreached,
                 low=all_points.min(axis=0) - 1.3 * s, high=all_points.max(axis=0) + 1.3 * s)
    return traces, facts


def graph_figure(graph: FrameGraph, *, root: str | None = None, lookup: Lookup | None = None,
                 palette: str = "standard", scale: float | None = None, letters: bool = True,
                 title: str | None = None, height: int = 560, width: int | None = None) -> go.Figure:
    """Every frame of ``graph`` joined to ``root`` (default: the first frame), edges, and ``lookup``'s path.

    ``scale`` is the arrow length (default: from the spacing of the frames).  The
    title defaults to the lookup in words.  See the module docstring for the trace order.

    >>> from posekit.analysis.scenarios import orchard_rover
    >>> g = orchard_rover()
    >>> fig = graph_figure(g, root="base", lookup=g.lookup("world", "camera"))
    >>> [t.name for t in fig.data][:5]
    ['edges', 'loop edges', 'lookup path', 'frame names', 'base']
    """
    traces, facts = graph_traces(graph, root=root, lookup=lookup, palette=palette, scale=scale, letters=letters)
    if title is None:
        title = lookup.words if lookup is not None else f"frames placed from {facts['root']}"
    if facts["unreached"]:
        title += f" (not joined to {facts['root']}: {', '.join(facts['unreached'])})"
    fig = go.Figure(data=traces)
    low, high = facts["low"], facts["high"]
    if facts["planar"]:
        # equal scales on both axes: widen the shorter span to the plot area's shape, so plotly
        # need not cut either range to keep the aspect (a drawing choice, not math)
        aspect = ((width or 860) - 80) / max(height - 100, 100)
        low, high = low.copy(), high.copy()
        span = high - low
        for k, want in ((0, aspect * span[1]), (1, span[0] / aspect)):
            if span[k] < want:
                mid = 0.5 * (low[k] + high[k])
                low[k], high[k] = mid - 0.5 * want, mid + 0.5 * want
        fig.update_layout(xaxis=dict(range=[float(low[0]), float(high[0])], title=f"{facts['root']} x",
                                     zeroline=False),
                          yaxis=dict(range=[float(low[1]), float(high[1])], title=f"{facts['root']} y",
                                     scaleanchor="x", scaleratio=1, zeroline=False),
                          uirevision="posekit-graph-planar")
    else:
        axis = dict(zeroline=False, showbackground=True, backgroundcolor="#f7f7f7", gridcolor="#dddddd")
        fig.update_layout(scene=dict(
            xaxis=dict(axis, range=[float(low[0]), float(high[0])], title=dict(text=f"{facts['root']} x")),
            yaxis=dict(axis, range=[float(low[1]), float(high[1])], title=dict(text=f"{facts['root']} y")),
            zaxis=dict(axis, range=[float(low[2]), float(high[2])], title=dict(text=f"{facts['root']} z")),
            aspectmode="data", camera=dict(eye=dict(x=0.95, y=-1.3, z=0.75), up=dict(x=0, y=0, z=1))),
            uirevision="posekit-graph")
    fig.update_layout(height=height, width=width, margin=dict(l=10, r=10, t=40, b=10), showlegend=False,
                      title=dict(text=html.escape(title), font=dict(size=14), x=0.01))
    return fig


# --- HTML readouts (pure functions -> str) -------------------------------------------------

def readout_html(readout: Readout, lookup: Lookup | None = None) -> str:
    """Panels for one :class:`~posekit.analysis.frames_graph.Readout`: matrix, quaternion, Euler, vector."""
    if not isinstance(readout, Readout):
        raise WrongTypeError(f"readout_html: got {type(readout).__name__}; expected a Readout")
    conv = readout.convention
    head = words_html(f"The numbers below map {readout.words}.")
    if lookup is not None:
        head += words_html("Path: " + lookup.describe())
    n = readout.matrix.shape[0]
    mat = panel_html(f"Homogeneous matrix ({readout.words.replace('coordinates in ', '')})",
                     matrix_html(readout.matrix) + words_html(f"flat, {conv.layout}: " +
                                                              ", ".join(f"{v:.6g}" for v in readout.flat)))
    labels = ("x", "y", "z")[: n - 1]
    pos = panel_html("Translation", numbers_html(labels, readout.translation, 4) +
                     words_html(f"length {readout.distance:.6g}; rotation angle {readout.angle:.6g} {readout.unit}"))
    panels = [mat, pos]
    if readout.quaternion is not None:
        algebra = "JPL" if conv.algebra == "jpl" else "Hamilton"
        panels.append(panel_html(f"Quaternion ({algebra}, scalar {conv.scalar}, {conv.action})",
                                 numbers_html(readout.quaternion_labels, readout.quaternion, 6) +
                                 words_html("\u2212q names the same rotation")))
        where = "moving" if conv.intrinsic else "fixed"
        panels.append(panel_html(f"Euler angles ({conv.sequence}, {where} axes, {readout.unit})",
                                 numbers_html(readout.euler_labels, readout.euler, 4)))
        panels.append(panel_html(f"Rotation vector ({readout.unit})",
                                 numbers_html(("x", "y", "z"), readout.rotation_vector, 5)))
    else:
        panels.append(panel_html(f"Heading ({readout.unit})", numbers_html(("heading",), (readout.heading,), 4)))
    return head + "<div style='display:flex;flex-wrap:wrap;gap:8px;margin-top:4px'>" + "".join(panels) + "</div>"


def loop_check_html(check: LoopCheck, graph: FrameGraph | None = None, limit: int = 4) -> str:
    """The loops and the best single-edge fixes in words (escaped)."""
    if not isinstance(check, LoopCheck):
        raise WrongTypeError(f"loop_check_html: got {type(check).__name__}; expected a LoopCheck")
    items = []
    for i, lp in enumerate(check.loops):
        mark = "\u2713" if lp.consistent else "\u2717"
        colour = "#1b7837" if lp.consistent else "#b2182b"
        items.append(f"<li style='color:{colour}'>{mark} {html.escape(lp.words)}</li>")
    if not check.loops:
        items.append("<li>no loops: no edge is measured two ways, so none can be checked</li>")
    body = "<ul style='margin:2px 0 4px 16px;padding:0'>" + "".join(items) + "</ul>"
    if check.loops and not check.consistent:
        if check.fixes:
            rows = []
            for f in check.fixes[:limit]:
                e = graph.edges[f.edge] if graph is not None else f.corrected
                rows.append(f"<li><b>edge {f.edge}</b> ({html.escape(e.parent)} \u2013 {html.escape(e.child)}"
                            f"{', ' + html.escape(e.source) if e.source else ''}): {html.escape(f.words)}</li>")
            body += ("<div>Single-edge fixes that close every loop, best first:</div>"
                     "<ol class='posekit-graph-fixes' style='margin:2px 0 2px 18px;padding:0'>" + "".join(rows) + "</ol>")
            if len(check.fixes) > limit:
                body += words_html(f"and {len(check.fixes) - limit} more")
        else:
            body += words_html("No single-edge fix closes every loop: more than one edge may be wrong.")
    if check.unchecked_edges:
        body += words_html("Edges on no loop (nothing to check them against): "
                           + ", ".join(map(str, check.unchecked_edges)))
    return panel_html("Loops", f"<div class='posekit-graph-loops' style='font-size:12.5px'>{body}</div>")
