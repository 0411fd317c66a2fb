"""Figures and HTML readouts of a frame graph: pure functions ``(graph, options) -> Figure / str``.

Two pictures of one graph, which the widget shows side by side:

- :func:`graph_diagram` draws the graph itself, flat: every frame a node, every stored
  transform an arrow from its parent to its child exactly as entered, labelled with its
  index, its kind of numbers and its measurement.  Nodes sit in layers by their number of
  edges from the first frame of their group (:func:`diagram_layout`); two measurements of
  the same pair bend apart.  The path a lookup composes is drawn wide under the arrows,
  every loop that does not close is drawn as a thick dashed ring with its residual
  written underneath (degrees and length units), and the edge the best single-edge fix
  changes carries a star.
- :func:`graph_figure` places every frame joined to the chosen frame in space
  (:meth:`posekit.analysis.FrameGraph.placement`): three axes in the palette's colours
  with their letters at the tips (:func:`posekit.view.frames.frame_trace`), the frame's
  name pushed out along the freest direction on a short dotted leader
  (:func:`label_points`), a faint dotted "second opinion" frame where each loop-closing
  edge alone would put its child, and one arrow from the origin of the frame the
  question is asked from to the origin of the frame asked about.  No line joins a frame
  to its parent: how frames are joined is the diagram's job.  SE(2) graphs are drawn
  top-down.

Callers find traces by name, never by position (a ``FigureWidget`` gives every trace a
fresh ``uid`` of its own, so names are the key that survives): in the scene, each
frame's axes carry the frame's name and the rest the names below; in the diagram every
name is unique by construction - ``frames``, ``edge <i>`` (:func:`edge_trace_name`),
``edge labels``, ``best fix``, ``lookup path`` and ``loop <ring> does not close``
(:func:`loop_trace_name`).

The arrow length follows the data (:func:`auto_scale`, a round 1-2-5 number from the
spacing of the frames), so a rig measured in millimetres looks like the same rig in
metres.  No math here beyond arranging numbers for plotly: placements, lookups and loop
checks come from :mod:`posekit.analysis.frames_graph`.
"""

from __future__ import annotations

import html
import itertools
import math
import textwrap
from collections import deque
from dataclasses import dataclass

import numpy as np
import plotly.graph_objects as go

from ..analysis.frames_graph import FrameGraph, Lookup, LoopCheck, Readout, convention_words
from ..core.errors import PoseInputError, WrongTypeError, summarise
from .frames import DEFAULT_PALETTE, frame_trace, palette_colours, planar_frame_trace
from .readouts import matrix_html, numbers_html, panel_html, words_html

__all__ = [
    "graph_figure", "graph_traces", "graph_diagram", "diagram_layout", "DiagramLayout", "label_points",
    "auto_scale", "question_words", "point_words", "readout_html", "loop_check_html", "loop_words", "fix_words",
    "ghost_trace_name", "edge_trace_name", "loop_trace_name",
    "NAMES_TRACE", "LEADERS_TRACE", "LOOKUP_TRACE", "PATH_TRACE", "NODES_TRACE", "EDGE_LABELS_TRACE", "FIX_TRACE",
    "PATH_COLOUR", "LOOP_COLOUR", "FROM_COLOUR", "INTO_COLOUR",
]

PATH_COLOUR = "#E69F00"  # Okabe-Ito orange: apart from the axis colours of both palettes
LOOP_COLOUR = "#CC79A7"  # Okabe-Ito reddish purple
FROM_COLOUR = "#E69F00"  # the frame asked about ("where is ...")
INTO_COLOUR = "#56B4E9"  # Okabe-Ito sky blue: the frame the question is asked from ("... seen from")
FIX_COLOUR = "#b2182b"
CAMERA_EYE = (1.25, -1.55, 0.95)  # where the 3D view looks from at first; names are placed for it
INK = "#222222"

# trace names: the scene (besides one trace per frame, named after it)
NAMES_TRACE = "frame names"
LEADERS_TRACE = "name leaders"
LOOKUP_TRACE = "lookup arrow"
# trace names: the diagram
PATH_TRACE = "lookup path"
NODES_TRACE = "frames"
EDGE_LABELS_TRACE = "edge labels"
FIX_TRACE = "best fix"


def ghost_trace_name(graph: FrameGraph, edge: int) -> str:
    """The name of the second-opinion frame of loop-closing edge ``edge`` in the scene."""
    return f"{graph.edges[edge].child} by edge {edge}"


def edge_trace_name(edge: int) -> str:
    """The name of edge ``edge``'s arrow in the diagram."""
    return f"edge {edge}"


def loop_trace_name(loop) -> str:
    """The name of a failing loop's dashed ring in the diagram."""
    ring = " \u2192 ".join(loop.frames)
    return f"loop {ring} does not close"


#: Short names of the kinds of numbers, for the arrows' labels.
KIND_WORDS = {"position-quaternion": "quaternion", "position-euler": "Euler", "position-heading": "heading",
              "matrix": "matrix"}

#: What each kind of single-edge fix does to the edge, in a few words (posekit's own).
CHANGE_WORDS = {
    "direction": "read it the other way round",
    "action": "active and passive swapped",
    "layout": "rows and columns of the flat matrix swapped",
    "scalar": "quaternion w taken from the other end",
    "algebra": "the other quaternion algebra",
    "unit": "the other angle unit",
    "sequence": "another Euler order",
    "rotation-transpose": "rotation block transposed",
    "length-scale": "millimetres and metres mixed up",
    "translation-frame": "translation given in the other frame",
    "parent-remap": "parent axes relabelled",
    "child-remap": "child axes relabelled",
}


def _text(s: str) -> str:
    """User text for plotly (which reads a few HTML tags): escaped."""
    return html.escape(str(s), quote=False)


def _check_graph(graph, who: str) -> None:
    if not isinstance(graph, FrameGraph):
        raise WrongTypeError(f"{who}: got {type(graph).__name__}; expected a posekit FrameGraph")


def _check_lookup(lookup, who: str) -> None:
    if lookup is not None and not isinstance(lookup, Lookup):
        raise WrongTypeError(f"{who} lookup: got {type(lookup).__name__}; expected a Lookup from "
                             "FrameGraph.lookup or None")


# --- words -----------------------------------------------------------------------------------

def question_words(lookup: Lookup) -> str:
    """The question a lookup answers: "Where is camera seen from world?"."""
    return f"Where is {lookup.from_frame} seen from {lookup.into_frame}?"


def point_words(given: str, expressed: str) -> str:
    """What a matrix does to a point: "a point given in camera, expressed in world"."""
    return f"a point given in {given}, expressed in {expressed}"


def fix_words(change: str) -> str:
    """A single-edge fix's kind of change in a few words (the change's own name if posekit has none)."""
    return CHANGE_WORDS.get(change, change)


def loop_words(loop) -> str:
    """One loop and how far it misses, in posekit's words."""
    ring = " \u2192 ".join(loop.frames + (loop.frames[0],))
    miss = (f"a point at {loop.start}'s origin taken round lands {loop.distance:.3g} length units away, "
            f"turned {math.degrees(loop.angle):.3g}\u00b0")
    return f"{ring}: {'closes' if loop.consistent else 'does not close'} ({miss})"


def _residual_words(loop) -> str:
    ring = " \u2192 ".join(loop.frames + (loop.frames[0],))
    return (f"\u2717 {ring} misses by {math.degrees(loop.angle):.3g}\u00b0 and {loop.distance:.3g} "
            "length units")


# --- arrow length and name placement -----------------------------------------------------------

def _round_down(x: float) -> float:
    """The largest 1, 2 or 5 times a power of ten not above ``x`` (a drawing choice)."""
    if not np.isfinite(x) or x <= 0:
        return 1.0
    e = math.floor(math.log10(x))
    m = x / 10.0 ** e
    step = 5 if m >= 5 else (2 if m >= 2 else 1)
    return float(step * 10.0 ** e)


def auto_scale(origins) -> float:
    """Arrow length from the spacing of the origins ``(k, d)``: 0.6 of the lower quartile of the
    nearest-neighbour distances, kept within 5 % to 25 % of the whole span and rounded down to 1, 2 or 5 times a power
    of ten (a drawing choice, not math); 1 when there is nothing to measure."""
    origins = np.asarray(origins, dtype=np.float64)
    if len(origins) < 2:
        return 1.0
    d = np.linalg.norm(origins[:, None, :] - origins[None, :, :], axis=-1)
    span = float(d.max())
    if not np.isfinite(span) or span < 1e-12:
        return 1.0
    d[d < 1e-12 * span] = np.inf
    near = np.min(d, axis=1)
    near = near[np.isfinite(near)]
    s = 0.6 * float(np.quantile(near, 0.25)) if near.size else 0.2 * span
    return _round_down(float(np.clip(s, 0.05 * span, 0.25 * span)))


def _directions(dim: int) -> np.ndarray:
    if dim == 2:
        ang = np.radians(np.arange(16) * 22.5 - 90.0)  # straight below first
        return np.stack([np.cos(ang), np.sin(ang)], axis=1)
    raw = np.array([v for v in itertools.product((-1.0, 0.0, 1.0), repeat=3) if any(v)])
    raw = raw[np.lexsort((raw[:, 1], raw[:, 0], raw[:, 2]))]  # the lower directions first
    return raw / np.linalg.norm(raw, axis=1, keepdims=True)


def _screen(points: np.ndarray, view) -> np.ndarray:
    """Points ``(m, 3)`` seen along ``view`` (orthographic): ``(m, 2)``; flat points pass through."""
    if view is None or points.shape[1] == 2:
        return points
    v = np.asarray(view, dtype=np.float64)
    v = v / np.linalg.norm(v)
    side = np.cross([0.0, 0.0, 1.0], v)
    if np.linalg.norm(side) < 1e-9:
        side = np.array([1.0, 0.0, 0.0])
    side = side / np.linalg.norm(side)
    up = np.cross(v, side)
    return np.stack([points @ side, points @ up], axis=1)


def label_points(origins, axes, scale: float, view=None, names=None, px_per_unit: float | None = None) -> np.ndarray:
    """Where to write each frame's name: ``origins (k, d)``, axes ``(k, d, d)`` (columns) -> ``(k, d)``.

    Each name goes out from its origin along one of 26 directions (16 when flat) at 0.9 to
    5 arrow lengths.  Frame by frame, greedily, the spot is chosen whose text box - as seen
    along ``view`` (a 3-vector towards the camera; None: the scene's first camera, ignored
    when flat), ``names[k]`` long at about 8 px a character, with ``px_per_unit`` pixels to a
    unit of length (estimated from the spread of the frames when None) - covers the fewest
    points of any arrow (sampled along its length, the letters above the tips) or other
    origin and overlaps the boxes of the names placed before it least; a small charge keeps
    names near their frames.  Deterministic: the same frames give the same spots.  Seen
    orthographically: the scene's perspective moves things a little, so the boxes are
    generous.
    """
    origins = np.asarray(origins, dtype=np.float64)
    axes = np.asarray(axes, dtype=np.float64)
    k, dim = origins.shape
    if k == 0:
        return origins.copy()
    if dim == 3 and view is None:
        view = CAMERA_EYE
    names = ["frame"] * k if names is None else [str(n) for n in names]
    along = np.linspace(0.1, 1.15, 10)
    arrows = (origins[:, None, :, None] + scale * along[None, :, None, None] * axes[:, None, :, :])
    arrows = arrows.transpose(0, 1, 3, 2).reshape(-1, dim)  # every sampled point of every arrow
    flat_arrows = _screen(arrows, view)
    flat_origins = _screen(origins, view)
    if px_per_unit is None or not np.isfinite(px_per_unit) or px_per_unit <= 0:
        spread = np.ptp(np.concatenate([flat_origins, flat_arrows]), axis=0).max()
        px_per_unit = 300.0 / max(float(spread), 1e-12)
    # the letters sit just above their tips on screen (plotly's "top center"): about 11 px up
    tips = _screen((origins[:, :, None] + scale * axes).transpose(0, 2, 1).reshape(-1, dim), view)
    letters = tips + np.array([0.0, 11.0 / px_per_unit])
    flat_arrows = np.concatenate([flat_arrows, letters, 0.5 * (tips + letters)])
    dirs = _directions(dim)
    reaches = (0.9, 1.4, 2.0, 2.8, 3.8, 5.0)
    boxes: list[np.ndarray] = []
    out = np.empty_like(origins)
    for i in range(k):
        obstacles = np.concatenate([np.delete(flat_origins, i, axis=0), flat_arrows], axis=0)
        half = np.array([4.0 * len(names[i]) + 6.0, 11.0]) / px_per_unit  # half width, half height
        best, best_cost = None, np.inf
        for r in reaches:
            cand = origins[i] + r * scale * dirs  # (m, dim)
            flat = _screen(cand, view)
            # points under each candidate's text box
            rel = np.abs(obstacles[None, :, :] - flat[:, None, :])
            covered = np.count_nonzero((rel[..., 0] < half[0]) & (rel[..., 1] < half[1]), axis=1).astype(float)
            overlap = np.zeros(len(flat))
            for box in boxes:  # [cx, cy, hw, hh] of the names already placed
                ox = np.clip(half[0] + box[2] - np.abs(flat[:, 0] - box[0]), 0.0, None)
                oy = np.clip(half[1] + box[3] - np.abs(flat[:, 1] - box[1]), 0.0, None)
                overlap += ox * oy / (4 * half[0] * half[1])
            cost = 1.5 * covered + 12.0 * overlap + 0.3 * (r - reaches[0])
            j = int(np.argmin(cost))
            if cost[j] < best_cost - 1e-12:
                best, best_cost = cand[j], float(cost[j])
        out[i] = best
        c = _screen(best[None, :], view)[0]
        boxes.append(np.array([c[0], c[1], half[0], half[1]]))
    return out


# --- the scene: frames in space -----------------------------------------------------------------

def _leader_segments(origins: np.ndarray, labels: np.ndarray) -> list:
    return [(o + 0.12 * (p - o), o + 0.72 * (p - o)) for o, p in zip(origins, labels)]


def _polyline(segments, dim: int) -> tuple[list, ...]:
    """Segments (each a sequence of points) joined with None gaps -> ``dim`` coordinate lists."""
    cols: list[list] = [[] for _ in range(dim)]
    for k, seg in enumerate(segments):
        if k:
            for c in cols:
                c.append(None)
        for p in seg:
            for c, v in zip(cols, p):
                c.append(float(v))
    return tuple(cols)


def _checked_view(view) -> np.ndarray:
    """A camera eye as a finite, non-zero 3-vector (None: :data:`CAMERA_EYE`)."""
    if view is None:
        return np.asarray(CAMERA_EYE, dtype=np.float64)
    try:
        v = np.asarray(view, dtype=np.float64)
    except (TypeError, ValueError):
        v = np.full(1, np.nan)
    if v.shape != (3,) or not np.all(np.isfinite(v)) or not np.linalg.norm(v) > 1e-12:
        raise PoseInputError(f"graph_figure view: got {summarise(view, 60)}; expected the camera's eye as three "
                             "finite numbers, not all zero (e.g. (1.5, -1.6, 1.0)), or None for the first camera")
    return v


def graph_traces(graph: FrameGraph, *, root: str | None = None, lookup: Lookup | None = None,
                 palette: str = DEFAULT_PALETTE, scale: float | None = None, letters: bool = True,
                 size: tuple[int, int] = (520, 480), view=None) -> tuple[list, dict]:
    """The traces of :func:`graph_figure` and facts for its layout (``size``: the figure's pixels, for
    placing the names; ``view``: the camera's eye as a 3-vector, the names placed as seen from
    there -- None: the scene's first camera, :data:`CAMERA_EYE`).

    Facts: ``scale`` (arrow length), ``planar``, ``root``, ``unreached`` (frames not joined
    to ``root``), ``frames`` (placed, in placement order), ``labels`` (``(k, d)`` name
    spots, matching ``frames``), ``low`` / ``high`` (corners of everything drawn).
    """
    _check_graph(graph, "graph_figure")
    _check_lookup(lookup, "graph_figure")
    colours = palette_colours(palette)
    place = graph.placement(root)
    mats = np.asarray(place.matrices)
    n = mats.shape[-1]
    dim = n - 1
    origins = mats[:, :dim, dim]
    rots = mats[:, :dim, :dim]
    if scale is None:
        s = auto_scale(origins)
    else:
        try:
            s = float(scale)
        except (TypeError, ValueError):
            s = float("nan")
        if not np.isfinite(s) or s <= 0:
            raise PoseInputError(f"graph_figure scale: got {summarise(scale, 40)}; expected a positive finite number "
                                 "(the arrow length, in the numbers' length unit)")
    index = {f: k for k, f in enumerate(place.frames)}
    view = None if dim == 2 else _checked_view(view)
    flat = _screen(np.concatenate([origins, (origins[:, :, None] + s * rots).transpose(0, 2, 1).reshape(-1, dim)]),
                   view)
    # pixels to a unit of length: the drawing spans about 0.6 of the figure's smaller side (a drawing estimate)
    px = 0.6 * min(size) / max(float(np.ptp(flat, axis=0).max()), 1e-12)
    labels = label_points(origins, rots, s, view=view, names=place.frames, px_per_unit=px)
    picked = {}
    if lookup is not None:
        picked = {lookup.into_frame: "into", lookup.from_frame: "from"}
    name_text = [f"<b>{_text(f)}</b>" if f in picked else _text(f) for f in place.frames]
    name_colour = [{"from": "#9a6200", "into": "#1f6d99"}.get(picked.get(f, ""), INK) for f in place.frames]
    ghosts = []
    for i in place.loop_edges:
        e = graph.edges[i]
        ghosts.append((i, e, mats[index[e.parent]] @ np.asarray(e.transform)))
    arrow = []
    if lookup is not None and lookup.into_frame in index and lookup.from_frame in index \
            and lookup.into_frame != lookup.from_frame:
        arrow = [(origins[index[lookup.into_frame]], origins[index[lookup.from_frame]])]
    leaders = _leader_segments(origins, labels)
    traces: list = []
    if dim == 2:
        for k, f in enumerate(place.frames):
            traces.append(planar_frame_trace(mats[k], f, colours, s, width=2.6, letters=letters))
        for i, e, m in ghosts:
            traces.append(planar_frame_trace(m, ghost_trace_name(graph, i), colours, 0.8 * s, opacity=0.45,
                                             width=1.4, letters=False, dash="dot"))
        lx, ly = _polyline(leaders, 2)
        traces.append(go.Scatter(x=lx, y=ly, mode="lines", name=LEADERS_TRACE,
                                 line=dict(color="#8a8a8a", width=1), hoverinfo="skip"))
        ax, ay = _polyline(arrow, 2)
        traces.append(go.Scatter(x=ax, y=ay, mode="lines+markers", name=LOOKUP_TRACE,
                                 line=dict(color=PATH_COLOUR, width=3, dash="dash"),
                                 marker=dict(size=[0, 14][:len(ax)], symbol="arrow", angleref="previous",
                                             color=PATH_COLOUR), hoverinfo="skip"))
        traces.append(go.Scatter(x=labels[:, 0].tolist(), y=labels[:, 1].tolist(), mode="text", name=NAMES_TRACE,
                                 text=name_text, textposition="middle center",
                                 textfont=dict(size=13, color=name_colour), hoverinfo="skip", cliponaxis=False))
    else:
        for k, f in enumerate(place.frames):
            tr = frame_trace(rots[k], origins[k], name=f, palette=palette, scale=s, width=5, letters=letters)
            tr.update(textfont=dict(size=11))
            traces.append(tr)
        for i, e, m in ghosts:
            tr = frame_trace(m[:3, :3], m[:3, 3], name=ghost_trace_name(graph, i), palette=palette,
                             scale=0.8 * s, width=3, opacity=0.45, letters=False, dash="dot")
            traces.append(tr)
        lx, ly, lz = _polyline(leaders, 3)
        traces.append(go.Scatter3d(x=lx, y=ly, z=lz, mode="lines", name=LEADERS_TRACE,
                                   line=dict(color="#8a8a8a", width=2), hoverinfo="skip"))
        ax, ay, az = _polyline(arrow, 3)
        traces.append(go.Scatter3d(x=ax, y=ay, z=az, mode="lines+markers", name=LOOKUP_TRACE,
                                   line=dict(color=PATH_COLOUR, width=6),
                                   marker=dict(size=[0, 9][:len(ax)], symbol="circle-open", color=PATH_COLOUR),
                                   hoverinfo="skip"))
        traces.append(go.Scatter3d(x=labels[:, 0].tolist(), y=labels[:, 1].tolist(), z=labels[:, 2].tolist(),
                                   mode="text", name=NAMES_TRACE, text=name_text,
                                   textposition="middle center", textfont=dict(size=13, color=name_colour),
                                   hoverinfo="skip"))
    for tr in traces:
        tr.update(showlegend=False)
    points = [origins, labels, (origins[:, :, None] + s * rots).transpose(0, 2, 1).reshape(-1, dim)]
    points += [g[2][None, :dim, dim] for g in ghosts]
    every = np.concatenate(points, axis=0)
    facts = dict(scale=s, planar=dim == 2, root=place.root, unreached=place.unreached, frames=place.frames,
                 labels=labels, low=every.min(axis=0) - 0.7 * s, high=every.max(axis=0) + 0.7 * s)
    return traces, facts


def graph_figure(graph: FrameGraph, *, root: str | None = None, lookup: Lookup | None = None,
                 palette: str = DEFAULT_PALETTE, scale: float | None = None, letters: bool = True,
                 title: str | None = None, height: int = 480, width: int | None = None, view=None) -> go.Figure:
    """Every frame of ``graph`` joined to ``root`` (default: the first frame) placed in ``root``'s axes.

    ``scale`` is the arrow length (default: :func:`auto_scale` of the frames' spacing);
    ``lookup`` adds the arrow from its ``into_frame``'s origin to its ``from_frame``'s
    and writes both names in bold.  ``view`` (the camera's eye, a 3-vector; None: the first
    camera) is where the frame names are placed to be read from; the scene starts there too.
    See the module docstring for the traces.

    >>> from posekit.analysis.scenarios import orchard_rover
    >>> g = orchard_rover()
    >>> fig = graph_figure(g, root="base", lookup=g.lookup("world", "camera"))
    >>> [t.name for t in fig.data][:3]
    ['base', 'world', 'imu']
    """
    traces, facts = graph_traces(graph, root=root, lookup=lookup, palette=palette, scale=scale, letters=letters,
                                 size=(width or 520, height), view=view)
    if title is None:
        title = f"In {facts['root']}'s axes \u00b7 axis arrows {facts['scale']:g} long"
    if facts["unreached"]:
        title += f" (not joined to {facts['root']}: {', '.join(facts['unreached'])})"
    fig = go.Figure(data=traces)
    low, high = facts["low"], facts["high"]
    if facts["planar"]:
        # equal scales on both axes: widen the shorter span to the plot area's shape, so plotly
        # need not cut either range to keep the aspect (a drawing choice, not math)
        aspect = ((width or 600) - 80) / max(height - 100, 100)
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
                          uirevision="posekit-graph-planar", plot_bgcolor="#fbfbfb")
    else:
        axis = dict(zeroline=False, showbackground=True, backgroundcolor="#f7f7f7", gridcolor="#dddddd")
        fig.update_layout(scene=dict(
            xaxis=dict(axis, range=[float(low[0]), float(high[0])], title=dict(text=f"{facts['root']} x")),
            yaxis=dict(axis, range=[float(low[1]), float(high[1])], title=dict(text=f"{facts['root']} y")),
            zaxis=dict(axis, range=[float(low[2]), float(high[2])], title=dict(text=f"{facts['root']} z")),
            aspectmode="data", camera=dict(eye=dict(zip("xyz", (float(v) for v in _checked_view(view)))),
                                           up=dict(x=0, y=0, z=1))),
            uirevision="posekit-graph")
    fig.update_layout(height=height, width=width, margin=dict(l=10, r=10, t=36, b=10), showlegend=False,
                      title=dict(text=_text(title), font=dict(size=13), x=0.01))
    return fig


# --- the diagram: the graph itself -----------------------------------------------------------------

@dataclass(frozen=True)
class DiagramLayout:
    """Where :func:`graph_diagram` draws things, in pixels of the plot area (y up).

    ``nodes (k, 2)`` matches ``frames``; ``depth`` is each frame's number of edges from
    the first frame of its group; ``curves[i]`` is edge ``i``'s arrow, points from the
    rim of its parent's node to the rim of its child's; ``middles[i]`` is the point halfway
    along it.  ``labels[i]`` and ``label_positions[i]`` (a plotly ``textposition``) say
    where edge ``i``'s label goes, ``name_positions[k]`` where frame ``k``'s name goes.
    """

    width: int
    height: int
    plot: tuple[float, float]
    margin: tuple[int, int, int, int]
    frames: tuple[str, ...]
    nodes: np.ndarray
    depth: tuple[int, ...]
    curves: tuple[np.ndarray, ...]
    middles: np.ndarray
    labels: np.ndarray
    label_positions: tuple[str, ...]
    name_positions: tuple[str, ...]
    radius: float

    def node(self, frame: str) -> np.ndarray:
        if frame not in self.frames:
            raise PoseInputError(f"diagram node: got {summarise(frame, 40)}, not a frame of the graph; known: "
                                 + ", ".join(self.frames[:20]))
        return self.nodes[self.frames.index(frame)]


NODE_RADIUS = 9.0
_CHAR_PX = 6.4   # rough width of one character of 11 px text (a drawing choice)
_TEXT_LINE_PX = 13.0
_LINE_PX = 16    # one caption line


def _layers(graph: FrameGraph):
    """Per group (first frame first, in order of appearance): frame -> depth by breadth-first search."""
    adj: dict[str, list[str]] = {f: [] for f in graph.frames}
    for e in graph.edges:
        adj[e.parent].append(e.child)
        adj[e.child].append(e.parent)
    seen: set[str] = set()
    groups = []
    for f in graph.frames:
        if f in seen:
            continue
        depth = {f: 0}
        queue = deque([f])
        while queue:
            u = queue.popleft()
            for v in adj[u]:
                if v not in depth:
                    depth[v] = depth[u] + 1
                    queue.append(v)
        seen.update(depth)
        groups.append(depth)
    return groups, adj


def _bezier(a: np.ndarray, b: np.ndarray, bend: float, normal: np.ndarray, count: int = 41) -> np.ndarray:
    t = np.linspace(0.0, 1.0, count)[:, None]
    c = 0.5 * (a + b) + 2.0 * bend * normal  # the curve's apex is ``bend`` off the chord
    return (1 - t) ** 2 * a + 2 * (1 - t) * t * c + t ** 2 * b


def _clearance(curve: np.ndarray, others: np.ndarray) -> float:
    if not len(others):
        return np.inf
    return float(np.min(np.linalg.norm(curve[:, None, :] - others[None, :, :], axis=-1)))


def _trim(curve: np.ndarray, a: np.ndarray, b: np.ndarray, r_start: float, r_end: float) -> np.ndarray:
    """The part of ``curve`` outside both node rims."""
    da = np.linalg.norm(curve - a, axis=1)
    db = np.linalg.norm(curve - b, axis=1)
    idx = np.flatnonzero((da >= r_start) & (db >= r_end))
    if idx.size < 2:  # nodes touching: a short stub
        d = b - a
        n = float(np.linalg.norm(d)) or 1.0
        return np.stack([a + d / n * r_start, b - d / n * r_end])
    return curve[idx[0]: idx[-1] + 1]


_POSITIONS = ("middle right", "middle left", "top center", "bottom center")


def _box(p: np.ndarray, position: str, w: float, h: float, gap: float) -> np.ndarray:
    """The box ``[x0, y0, x1, y1]`` plotly fills with a ``w`` x ``h`` text at ``p`` and ``position``."""
    x, y = float(p[0]), float(p[1])
    if position == "middle right":
        return np.array([x + gap, y - h / 2, x + gap + w, y + h / 2])
    if position == "middle left":
        return np.array([x - gap - w, y - h / 2, x - gap, y + h / 2])
    if position == "top center":
        return np.array([x - w / 2, y + gap, x + w / 2, y + gap + h])
    return np.array([x - w / 2, y - gap - h, x + w / 2, y - gap])


class _Placer:
    """Greedy label placement: each box goes where it covers the fewest lines, nodes and earlier boxes."""

    def __init__(self, lines: np.ndarray, discs: np.ndarray, radii: np.ndarray, bounds: tuple[float, float]):
        self.lines = lines
        self.discs = discs
        self.radii = radii
        self.bounds = bounds
        self.boxes: list[np.ndarray] = []

    def cost(self, box: np.ndarray) -> float:
        x0, y0, x1, y1 = box
        pts = self.lines
        inside = int(np.count_nonzero((pts[:, 0] > x0) & (pts[:, 0] < x1) & (pts[:, 1] > y0) & (pts[:, 1] < y1))) \
            if len(pts) else 0
        r = self.radii
        d = self.discs
        hit = int(np.count_nonzero((d[:, 0] > x0 - r) & (d[:, 0] < x1 + r) & (d[:, 1] > y0 - r)
                                   & (d[:, 1] < y1 + r))) if len(d) else 0
        overlap = 0.0
        for b in self.boxes:
            ox = min(x1, b[2]) - max(x0, b[0])
            oy = min(y1, b[3]) - max(y0, b[1])
            if ox > 0 and oy > 0:
                overlap += ox * oy
        w, h = self.bounds
        out = max(0.0, -x0) + max(0.0, x1 - w) + max(0.0, -y0 + 2) + max(0.0, y1 - h)
        return inside + 40.0 * hit + overlap / 20.0 + 4.0 * out

    def place(self, candidates) -> int:
        """``candidates``: ``(box, preference)`` pairs; keeps and returns the index of the cheapest."""
        costs = [self.cost(box) + pref for box, pref in candidates]
        k = int(np.argmin(costs))
        self.boxes.append(candidates[k][0])
        return k


def _text_size(lines: list[str], char_px: float = _CHAR_PX) -> tuple[float, float]:
    return max(len(t) for t in lines) * char_px + 2, len(lines) * _TEXT_LINE_PX


def _edge_label_lines(graph: FrameGraph, i: int, changed) -> list[str]:
    e = graph.edges[i]
    lines = [f"{i}: {KIND_WORDS.get(e.kind, e.kind)}"]
    if e.source:
        lines.append(e.source)
    if i in changed:
        lines.append("changed")
    return lines


def diagram_layout(graph: FrameGraph, *, width: int = 420, height: int = 480, captions: int = 1,
                   changed=()) -> DiagramLayout:
    """Where each node, arrow and label of :func:`graph_diagram` goes (deterministic).

    Nodes: a group per set of joined frames, side by side in order of first appearance;
    inside a group, layer ``d`` holds the frames ``d`` edges from the group's first frame
    (top to bottom), ordered by the mean place of their neighbours one layer up (ties: order
    of appearance).  Arrows: quadratic curves; two edges between the same frames bend apart,
    and an arrow that would pass a third node bends round it.  Names and edge labels: each
    on the side of its node or arrow that covers the fewest lines, nodes and other labels
    (names first, then edge labels, in order).  ``changed`` edges get a third label line.
    """
    _check_graph(graph, "graph_diagram")
    for name, v, lo in (("width", width, 200), ("height", height, 200)):
        if isinstance(v, bool) or not isinstance(v, (int, np.integer)) or not lo <= v <= 4000:
            raise PoseInputError(f"graph_diagram {name}: got {summarise(v, 40)}; expected a whole number of pixels "
                                 f"from {lo} to 4000")
    if isinstance(captions, bool) or not isinstance(captions, (int, np.integer)) or not 0 <= captions <= 20:
        raise PoseInputError(f"graph_diagram captions: got {summarise(captions, 40)}; expected a whole number from 0 "
                             "to 20")
    if not graph.frames:
        raise PoseInputError("graph_diagram: got a graph with no frames; expected at least one edge")
    changed = {int(i) for i in changed}
    margin = (6, 6, 34, 10 + _LINE_PX * int(captions))  # left, right, top, bottom
    pw = float(width - margin[0] - margin[1])
    ph = float(max(height - margin[2] - margin[3], 60))
    r = NODE_RADIUS
    groups, adj = _layers(graph)
    order = {f: k for k, f in enumerate(graph.frames)}
    # columns: each group as wide as its widest layer
    col_of: dict[str, float] = {}
    depth_of: dict[str, int] = {}
    start = 0.0
    layers_max = 1
    for depth in groups:
        rows: dict[int, list[str]] = {}
        for f, d in depth.items():
            rows.setdefault(d, []).append(f)
        wide = max(len(v) for v in rows.values())
        layers_max = max(layers_max, len(rows))
        for d in sorted(rows):
            row = sorted(rows[d], key=order.get)
            if d:
                def bary(f, d=d):
                    up = [col_of[v] for v in adj[f] if depth_of.get(v) == d - 1]
                    return sum(up) / len(up) if up else 0.0
                row = sorted(row, key=lambda f: (round(bary(f), 9), order[f]))
            lead = start + 0.5 * (wide - len(row))
            for j, f in enumerate(row):
                col_of[f] = lead + j + 0.5
                depth_of[f] = d
        start += wide
    columns = start
    name_px = max(max(len(f) for f in graph.frames), 9) * _CHAR_PX  # 9: room for "seen from"
    left, right = 0.5 * name_px + 6, pw - 0.5 * name_px - 6
    if right <= left:
        left, right = r + 4, pw - r - 4
    top, bottom = ph - 2 * _TEXT_LINE_PX - r - 2, 2 * _TEXT_LINE_PX + r + 4
    x_gap = (right - left) / max(columns - 1, 1) if columns > 1 else 0.0
    y_gap = (top - bottom) / max(layers_max - 1, 1) if layers_max > 1 else 0.0
    nodes = np.zeros((len(graph.frames), 2))
    for f, k in order.items():
        x = left + (col_of[f] - 0.5) * x_gap if columns > 1 else 0.5 * (left + right)
        y = top - depth_of[f] * y_gap if layers_max > 1 else 0.5 * (top + bottom)
        nodes[k] = (x, y)
    # arrows
    pairs: dict[frozenset, list[int]] = {}
    for i, e in enumerate(graph.edges):
        pairs.setdefault(frozenset((e.parent, e.child)), []).append(i)
    curves, middles, full = [], [], []
    for i, e in enumerate(graph.edges):
        a, b = nodes[order[e.parent]], nodes[order[e.child]]
        lo_f, hi_f = sorted((e.parent, e.child), key=order.get)
        chord = nodes[order[hi_f]] - nodes[order[lo_f]]
        length = float(np.linalg.norm(chord)) or 1.0
        normal = np.array([-chord[1], chord[0]]) / length
        if normal[0] < 0 or (abs(normal[0]) < 1e-9 and normal[1] < 0):
            normal = -normal  # bends go right (or up) first
        group = pairs[frozenset((e.parent, e.child))]
        base = (group.index(i) - 0.5 * (len(group) - 1)) * 34.0
        others = np.delete(nodes, [order[e.parent], order[e.child]], axis=0)
        bend, curve, best = base, None, -np.inf
        for extra in (0.0, 30.0, -30.0, 60.0, -60.0, 95.0, -95.0):
            trial = _bezier(a, b, base + extra, normal)
            room = _clearance(trial, others)
            if room > best + 1e-9:
                bend, curve, best = base + extra, trial, room
            if room > r + 7:
                break
        full.append(curve)
        curves.append(_trim(curve, a, b, r + 1.5, r + 2.5))
        middles.append(_bezier(a, b, bend, normal, 3)[1])
    middles_arr = np.asarray(middles, dtype=np.float64).reshape(-1, 2)
    # labels: names first, then edge labels
    dense = [np.linspace(c[j], c[j + 1], 4, endpoint=False) for c in curves for j in range(len(c) - 1)]
    line_pts = np.concatenate(dense) if dense else np.zeros((0, 2))
    # discs: the nodes, and the middle of every arrow (where the best fix's star may sit)
    discs = np.concatenate([nodes, middles_arr])
    radii = np.concatenate([np.full(len(nodes), r), np.full(len(middles_arr), 10.0)])
    placer = _Placer(line_pts, discs, radii, (pw, ph))
    name_positions = []
    for k, f in enumerate(graph.frames):
        w, h = _text_size([f, "seen from"])
        cands = [(_box(nodes[k], pos, w, h, r + 3), 0.3 * j) for j, pos in enumerate(_POSITIONS)]
        placer.discs, placer.radii = np.delete(discs, k, axis=0), np.delete(radii, k)
        name_positions.append(_POSITIONS[placer.place(cands)])
    placer.discs, placer.radii = discs, radii
    labels, label_positions = [], []
    for i in range(len(graph.edges)):
        w, h = _text_size(_edge_label_lines(graph, i, changed), 5.9)
        c = full[i]
        spots, cands = [], []
        for t, pref in ((0.5, 0.0), (0.36, 0.6), (0.64, 0.6)):
            p = c[int(round(t * (len(c) - 1)))]
            for j, pos in enumerate(_POSITIONS):
                spots.append((p, pos))
                cands.append((_box(p, pos, w, h, 15.0), pref + 0.2 * j))
        k = placer.place(cands)
        labels.append(spots[k][0])
        label_positions.append(spots[k][1])
    # the label's anchor moves out by the gap plotly leaves beside a marker of ``gap`` px
    shifted = []
    for p, pos in zip(labels, label_positions):
        off = {"middle right": (14.0, 0.0), "middle left": (-14.0, 0.0), "top center": (0.0, 12.0),
               "bottom center": (0.0, -12.0)}[pos]
        shifted.append(np.asarray(p) + off)
    return DiagramLayout(int(width), int(height), (pw, ph), margin, tuple(graph.frames), nodes,
                         tuple(depth_of[f] for f in graph.frames), tuple(curves), middles_arr,
                         np.asarray(shifted, dtype=np.float64).reshape(-1, 2), tuple(label_positions),
                         tuple(name_positions), r)


def _edge_hover(graph: FrameGraph, i: int) -> str:
    e = graph.edges[i]
    src = f" ({e.source})" if e.source else ""
    if e.convention.direction == "parent-from-child":
        maps = point_words(e.child, e.parent)
    else:
        maps = point_words(e.parent, e.child)
    return _text(f"edge {i}{src}: {e.parent} \u2192 {e.child}, {e.kind} numbers read {convention_words(e.convention)}; "
                 f"they take {maps}")


def _caption_lines(check: LoopCheck | None, limit: int = 3) -> list[tuple[str, str]]:
    if check is None:
        return []
    lines = []
    bad = [lp for lp in check.loops if not lp.consistent]
    for lp in bad[:limit]:
        lines.append((_residual_words(lp), LOOP_COLOUR))
    if len(bad) > limit:
        lines.append((f"and {len(bad) - limit} more loops miss", LOOP_COLOUR))
    if bad and check.fixes:
        f = check.fixes[0]
        lines.append((f"\u2605 best single fix: edge {f.edge}, {fix_words(f.change)}", FIX_COLOUR))
    elif bad:
        lines.append(("no single edge closes every loop", FIX_COLOUR))
    elif check.loops:
        lines.append((f"\u2713 every loop closes (within {math.degrees(check.angle_tolerance):.3g}\u00b0 and "
                      f"{check.distance_tolerance:.3g} length units)", "#1b7837"))
    else:
        lines.append(("no loops: no pose is measured two ways", "#555555"))
    return lines


def graph_diagram(graph: FrameGraph, *, lookup: Lookup | None = None, check: LoopCheck | None | bool = True,
                  selected_edge: int | None = None, changed=(), width: int = 420, height: int = 480,
                  title: str | None = None) -> go.Figure:
    """The graph itself: frames as nodes, each stored transform an arrow parent -> child as entered.

    ``lookup`` picks two nodes (filled orange: the frame asked about; sky blue: the frame
    it is seen from) and lays the path it composes wide under the arrows.  ``check``
    (a :class:`~posekit.analysis.frames_graph.LoopCheck`; ``True``, the default, runs
    ``graph.check_loops()``; ``None`` or ``False`` leaves loops out) draws every loop that
    does not close as a thick dashed ring, writes its residual underneath and stars the
    edge the best single-edge fix changes.  ``selected_edge`` is drawn darker and wider;
    edges in ``changed`` are labelled "changed".

    >>> from posekit.analysis.scenarios import orchard_rover
    >>> fig = graph_diagram(orchard_rover())
    >>> [t.name for t in fig.data if t.name.startswith("loop")]
    ['loop camera \u2192 lidar \u2192 base does not close']
    """
    _check_graph(graph, "graph_diagram")
    _check_lookup(lookup, "graph_diagram")
    if check is True:
        check = graph.check_loops()
    elif check is False:
        check = None
    if check is not None and not isinstance(check, LoopCheck):
        raise WrongTypeError(f"graph_diagram check: got {type(check).__name__}; expected a LoopCheck from "
                             "FrameGraph.check_loops, True or None")
    if check is not None and len(check.loops) and max(max(lp.edges) for lp in check.loops) >= len(graph.edges):
        raise PoseInputError("graph_diagram check: got a loop check naming edges this graph does not have; "
                             "expected the check of this graph")
    if selected_edge is not None and (isinstance(selected_edge, bool)
                                      or not isinstance(selected_edge, (int, np.integer))
                                      or not 0 <= selected_edge < len(graph.edges)):
        raise PoseInputError(f"graph_diagram selected_edge: got {summarise(selected_edge, 40)}; expected None or an "
                             f"edge index 0..{len(graph.edges) - 1}")
    changed = {int(i) for i in changed}
    # each caption wrapped to the figure's width (about 5.4 px a character of 11 px text: a drawing estimate)
    room = max(int((width - 16) / 5.4), 20) if isinstance(width, (int, np.integer)) else 60
    captions = [(textwrap.wrap(line, room) or [""], colour) for line, colour in _caption_lines(check)]
    lay = diagram_layout(graph, width=width, height=height, captions=sum(len(c) for c, _ in captions),
                         changed=changed)
    index = {f: k for k, f in enumerate(lay.frames)}
    traces: list = []

    def along(edges):
        return _polyline([lay.curves[i] for i in edges], 2)

    path_edges = [s.edge for s in lookup.steps] if lookup is not None else []
    px, py = along(path_edges)
    traces.append(go.Scatter(x=px, y=py, mode="lines", name=PATH_TRACE,
                             line=dict(color=PATH_COLOUR, width=11), opacity=0.4, hoverinfo="skip"))
    if check is not None:
        for k, lp in enumerate(check.loops):
            if lp.consistent:
                continue
            lx, ly = along(lp.edges)
            traces.append(go.Scatter(x=lx, y=ly, mode="lines", name=loop_trace_name(lp),
                                     line=dict(color=LOOP_COLOUR, width=7, dash="dash"), opacity=0.85,
                                     hoverinfo="skip"))
    for i, e in enumerate(graph.edges):
        c = lay.curves[i]
        sel = i == selected_edge
        colour = INK if sel else "#5a5a5a"
        sizes = [0] * (len(c) - 1) + [13 if sel else 11]
        hover = _edge_hover(graph, i)
        traces.append(go.Scatter(x=c[:, 0].tolist(), y=c[:, 1].tolist(), mode="lines+markers", name=edge_trace_name(i),
                                 line=dict(color=colour, width=3.2 if sel else 1.7),
                                 marker=dict(size=sizes, symbol="arrow", angleref="previous", color=colour,
                                             line=dict(width=0)),
                                 customdata=[i] * len(c), hovertext=[hover] * len(c), hoverinfo="text"))
    text, colours = [], []
    fix_edge = check.fixes[0].edge if check is not None and check.fixes and not check.consistent else None
    for i in range(len(graph.edges)):
        lines = [_text(t) for t in _edge_label_lines(graph, i, changed)]
        if i in changed:
            lines[-1] = f"<i>{lines[-1]}</i>"
        text.append("<br>".join(lines))
        colours.append(FIX_COLOUR if i == fix_edge else "#444444")
    positions = list(lay.label_positions)
    traces.append(go.Scatter(x=lay.labels[:, 0].tolist(), y=lay.labels[:, 1].tolist(), mode="text",
                             name=EDGE_LABELS_TRACE, text=text, textposition=positions,
                             textfont=dict(size=10, color=colours), customdata=list(range(len(graph.edges))),
                             hovertext=[_edge_hover(graph, i) for i in range(len(graph.edges))], hoverinfo="text",
                             cliponaxis=False))
    fx, fy = ([float(lay.middles[fix_edge, 0])], [float(lay.middles[fix_edge, 1])]) if fix_edge is not None \
        else ([], [])
    traces.append(go.Scatter(x=fx, y=fy, mode="markers", name=FIX_TRACE,
                             marker=dict(size=17, symbol="star", color=FIX_COLOUR, line=dict(color="white", width=1)),
                             customdata=[fix_edge] if fix_edge is not None else [],
                             hovertext=[_text(f"best single fix: edge {fix_edge}, {fix_words(check.fixes[0].change)}")]
                             if fix_edge is not None else [], hoverinfo="text", cliponaxis=False))
    roles = {}
    if lookup is not None:
        roles = {lookup.into_frame: "seen from", lookup.from_frame: "where is"}
        if lookup.into_frame == lookup.from_frame:
            roles = {lookup.into_frame: "where is, seen from"}
    fills = [FROM_COLOUR if roles.get(f, "").startswith("where") else (INTO_COLOUR if f in roles else "white")
             for f in lay.frames]
    names = [f"<b>{_text(f)}</b><br><i>{roles[f]}</i>" if f in roles else _text(f) for f in lay.frames]
    traces.append(go.Scatter(x=lay.nodes[:, 0].tolist(), y=lay.nodes[:, 1].tolist(), mode="markers+text",
                             name=NODES_TRACE, text=names, textposition=list(lay.name_positions),
                             textfont=dict(size=11, color=INK), customdata=list(lay.frames),
                             hovertext=[_text(f"{f}: click to pick it") for f in lay.frames], hoverinfo="text",
                             marker=dict(size=2 * lay.radius, color=fills, line=dict(color=INK, width=1.5)),
                             cliponaxis=False))
    for tr in traces:
        tr.update(showlegend=False)
    fig = go.Figure(data=traces)
    pw, ph = lay.plot
    hidden = dict(visible=False, fixedrange=True, showgrid=False, zeroline=False)
    if title is None:
        title = "Stored transforms, each an arrow parent \u2192 child as entered"
    l_, r_, t_, b_ = lay.margin
    annotations = []
    row = 0
    for k, (lines, colour) in enumerate(captions):
        annotations.append(dict(name=f"caption {k}", text="<br>".join(_text(t) for t in lines), xref="paper",
                                yref="paper", x=0.0, y=0.0, xanchor="left", yanchor="top", yshift=-4 - _LINE_PX * row,
                                showarrow=False, font=dict(size=11, color=colour), align="left"))
        row += len(lines)
    fig.update_layout(width=width, height=height, margin=dict(l=l_, r=r_, t=t_, b=b_), showlegend=False,
                      xaxis=dict(hidden, range=[0.0, pw]), yaxis=dict(hidden, range=[0.0, ph]),
                      plot_bgcolor="white", hovermode="closest", dragmode=False, annotations=annotations,
                      title=dict(text=_text(title), font=dict(size=13), x=0.01), uirevision="posekit-graph-diagram")
    return fig


# --- HTML readouts (pure functions -> str) -------------------------------------------------

def _fmt(values, digits: int = 4) -> str:
    return ", ".join(f"{0.0 if abs(v) < 0.5 * 10 ** -digits else v:.{digits}f}" for v in values)


def readout_html(readout: Readout, lookup: Lookup | None = None) -> str:
    """The answer to a lookup in numbers, under the readout's convention, with what each number means.

    With ``lookup``, the question and its answer in words come first: where the frame's
    origin sits in the other frame's axes and how far its axes are turned, then which edges
    were composed.  Then panels: the matrix as the convention writes it, its translation,
    and the quaternion, Euler angles and rotation vector (SE(3)) or the heading (SE(2)).
    """
    if not isinstance(readout, Readout):
        raise WrongTypeError(f"readout_html: got {type(readout).__name__}; expected a Readout")
    _check_lookup(lookup, "readout_html")
    conv = readout.convention
    n = readout.matrix.shape[0]
    head = ""
    given, expressed = "the first frame", "the second"
    if lookup is not None:
        seen, viewpoint = lookup.from_frame, lookup.into_frame
        given, expressed = (seen, viewpoint) if conv.direction == "parent-from-child" else (viewpoint, seen)
        m = np.asarray(lookup.matrix)
        origin = m[: n - 1, n - 1]
        head += (f"<div class='posekit-graph-question' style='font-weight:600;font-size:13px'>"
                 f"{html.escape(question_words(lookup))}</div>")
        if seen == viewpoint:
            head += words_html("The same frame: nothing to move, nothing to turn.")
        else:
            head += words_html(f"{seen}'s origin sits at ({_fmt(origin)}) in {viewpoint}'s axes, "
                               f"{float(np.linalg.norm(origin)):.4g} length units away; its axes are turned "
                               f"{readout.angle:.4g} {readout.unit} from {viewpoint}'s.")
            hops = "; then ".join(f"edge {s.edge} ({s.from_frame} \u2192 {s.into_frame}, "
                                  f"{'stored the other way, so inverted' if s.inverted else 'as stored'})"
                                  for s in reversed(lookup.steps))
            head += words_html(f"Composed from {hops}.")
    head += words_html(f"Written under the convention {convention_words(conv)}: the matrix takes "
                       f"{point_words(given, expressed)}.")
    mat = panel_html(f"Matrix ({given} \u2192 {expressed})",
                     matrix_html(readout.matrix) + words_html(f"flat, {conv.layout}: " +
                                                              ", ".join(f"{v:.6g}" for v in readout.flat)))
    labels = ("x", "y", "z")[: n - 1]
    pos = panel_html(f"Translation ({given}'s origin in {expressed}'s axes)" if lookup is not None else "Translation",
                     numbers_html(labels, readout.translation, 4) +
                     words_html(f"length {readout.distance:.6g}; rotation angle {readout.angle:.6g} {readout.unit}"))
    # the matrix needs its full width (four columns of numbers): a box that wraps rather than shrinks it
    mat = f"<div style='display:flex;flex:1 1 {70 * n + 20}px;min-width:{70 * n + 20}px;max-width:440px'>{mat}</div>"
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
    for lp in check.loops:
        mark = "\u2713" if lp.consistent else "\u2717"
        colour = "#1b7837" if lp.consistent else "#b2182b"
        items.append(f"<li style='color:{colour}'>{mark} {html.escape(loop_words(lp))}</li>")
    if not check.loops:
        items.append("<li>no loops: no pose is measured two ways, so none can be checked</li>")
    body = "<ul style='margin:2px 0 4px 16px;padding:0'>" + "".join(items) + "</ul>"
    if check.loops and not check.consistent:
        if check.fixes:
            rows = []
            for f in check.fixes[:limit]:
                e = graph.edges[f.edge] if graph is not None else f.corrected
                rows.append(f"<li><b>edge {f.edge}</b> ({html.escape(e.parent)} \u2192 {html.escape(e.child)}"
                            f"{', ' + html.escape(e.source) if e.source else ''}): {html.escape(f.words)}</li>")
            body += ("<div>Single-edge fixes that close every loop, best first:</div>"
                     "<ol class='posekit-graph-fixes' style='margin:2px 0 2px 18px;padding:0'>" + "".join(rows)
                     + "</ol>")
            if len(check.fixes) > limit:
                body += words_html(f"and {len(check.fixes) - limit} more")
        else:
            body += words_html("No single-edge fix closes every loop: more than one edge may be wrong.")
    if check.unchecked_edges:
        body += words_html("Edges on no loop (nothing to check them against): "
                           + ", ".join(map(str, check.unchecked_edges)))
    return panel_html("Loops", f"<div class='posekit-graph-loops' style='font-size:12.5px'>{body}</div>")
