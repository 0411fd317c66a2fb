"""Plotly figures of a sweep through the pole: pure functions ``(Sweep, options) -> Figure``.

:func:`sweep_figure` stacks four panels on one shared x axis (the swept value):

1. the Euler readback (three angles, exactly as ``write_rotation`` writes them), which
   jumps near the pole;
2. the quaternion with its sign kept continuous along the path (q and -q are the same
   turn), which moves smoothly;
3. the nine matrix entries as written under the convention, which move smoothly;
4. a strip with the lock gauge (0 at the pole).

Steps where the Euler readback jumps are shaded across every panel and labelled, so
the reader sees at a glance that the quaternion and the matrix do not jump there.
Flips of the *written* quaternion (scalar kept >= 0) and jumps of the matrix are shaded
in their own panels.  A dashed vertical line with a label marks the current step and
hollow markers sit on every curve at that step.

:func:`family_figure` is the small first-angle vs third-angle plane: at the pole the
whole line of equivalent triplets (only their sum or difference is fixed), away from
it the two regular triplets; the readback is always marked.

Every line differs from its neighbours by dash and marker symbol as well as colour
(Okabe-Ito colours, which stay distinct under the common colour-vision
deficiencies), so colour is never the only cue.  Drawing only: every number comes
from the :class:`~posekit.analysis.Sweep` and
:class:`~posekit.analysis.EulerSolutions` passed in.

Every trace carries a stable ``uid`` (see :data:`SWEEP_TRACES`, :data:`FAMILY_TRACES`),
so a widget finds the traces it patches by uid, never by position, and can move the
current step by patching a handful of small traces (:func:`step_marks`,
:func:`family_data`) inside one batched update.  Axis ticks read in the axis's own
unit: plain numbers, an explicit power of ten where needed, never an SI prefix.
"""

from __future__ import annotations

import numpy as np
import plotly.graph_objects as go
from plotly.subplots import make_subplots

from ..analysis.singularity import EulerSolutions
from ..analysis.sweeps import Sweep
from ..core.convention import Convention
from ..core.errors import PoseInputError
from .frames import trace_index
from .readouts import format_number

__all__ = [
    "SWEEP_TRACES",
    "FAMILY_TRACES",
    "SweepViewError",
    "angle_name",
    "sweep_figure",
    "sweep_patch",
    "step_marks",
    "apply_patch",
    "family_figure",
    "family_data",
]


class SweepViewError(PoseInputError):
    """A sweep view was asked for something the sweep does not hold (a step, a shape, a label)."""


# Okabe-Ito colours (common practice for colour-blind safe plots).
_BLACK, _ORANGE, _SKY, _GREEN, _YELLOW, _BLUE, _VERMILLION, _PURPLE = (
    "#000000", "#E69F00", "#56B4E9", "#009E73", "#F0E442", "#0072B2", "#D55E00", "#CC79A7")
_EULER_STYLE = ((_BLUE, "solid", "circle"), (_VERMILLION, "dash", "square"), (_GREEN, "dot", "diamond"))
_QUAT_STYLE = {"w": (_BLACK, "solid", "circle"), "x": (_VERMILLION, "dash", "diamond"),
               "y": (_GREEN, "dot", "square"), "z": (_BLUE, "dashdot", "triangle-up")}
# matrix entries: colour and marker symbol by row, dash by column, so each of the nine
# lines has its own (dash, symbol) pair and colour is never the only cue
_ROW_COLOURS = (_VERMILLION, _GREEN, _BLUE)
_ROW_SYMBOLS = ("circle", "square", "diamond")
_COL_DASHES = ("solid", "dash", "dot")
_MARKS_SHOWN = 9  # marker symbols shown along each line (plotly thins them evenly)

#: Trace uids of :func:`sweep_figure` (quaternion ``k``: the k-th component in the convention's order).
SWEEP_TRACES = {
    "euler": ("euler-1", "euler-2", "euler-3"), "euler_now": "euler-now",
    "quaternion": ("quaternion-1", "quaternion-2", "quaternion-3", "quaternion-4"), "quaternion_now": "quaternion-now",
    "matrix": tuple(f"matrix-{r}{c}" for r in (1, 2, 3) for c in (1, 2, 3)), "matrix_now": "matrix-now",
    "gauge": "gauge", "gauge_now": "gauge-now",
}
#: Shape index of the current-step line, annotation index of its label (after the 4 panel titles).
CURRENT_SHAPE, CURRENT_LABEL = 0, 4

#: Trace uids of :func:`family_figure`.
FAMILY_TRACES = {"family": "family", "other": "other", "readback": "readback"}
#: Axis settings shared by every chart here: ticks in the axis's unit (no SI prefixes such as "600μ").
_TICKS = dict(exponentformat="power", separatethousands=False)

_USUAL = {("zyx", True): ("yaw", "pitch", "roll"), ("xyz", False): ("roll", "pitch", "yaw")}


def _unit(conv: Convention) -> str:
    return "degrees" if conv.degrees else "radians"


def _half_turn(conv: Convention) -> float:
    return 180.0 if conv.degrees else np.pi


def angle_name(convention: Convention, index: int, unit: bool = False) -> str:
    """Plain words for Euler angle ``index`` (0, 1, 2): e.g. ``'turn 2 about new y (pitch)'``.

    >>> angle_name(Convention(sequence="z-y-x", unit="degrees"), 1, unit=True)
    'turn 2 about new y (pitch), degrees'
    """
    if not (isinstance(index, (int, np.integer)) and 0 <= index <= 2):
        raise SweepViewError(f"angle index: got {index!r}; expected 0, 1 or 2 (first, middle, third angle)")
    conv = convention
    axis = conv.axes_letters[index]
    where = ("new " if index else "") if conv.intrinsic else "fixed "
    text = f"turn {index + 1} about {where}{axis}"
    usual = _USUAL.get((conv.axes_letters, conv.intrinsic))
    if usual:
        text += f" ({usual[index]})"
    return text + (f", {_unit(conv)}" if unit else "")


def _check_step(sweep_or_n, step) -> int:
    n = sweep_or_n if isinstance(sweep_or_n, int) else sweep_or_n.steps
    if not (isinstance(step, (int, np.integer)) and not isinstance(step, bool) and 0 <= step < n):
        raise SweepViewError(f"step: got {step!r}; expected an integer from 0 to {n - 1} (the sweep has {n} steps)")
    return int(step)


def _check_sweep(sweep) -> Sweep:
    if not isinstance(sweep, Sweep):
        raise SweepViewError(f"sweep: got {type(sweep).__name__}; expected a posekit.analysis.Sweep "
                             "(from sweep_one_angle, sweep_between or sweep_rotations)")
    if sweep.parameter.ndim != 1:
        raise SweepViewError(f"sweep: got a batch of sweeps, parameter shape {sweep.parameter.shape}; "
                             "expected one sweep (parameter shape (N,)); index the batch first")
    return sweep


def _labels(conv: Convention):
    letters = conv.axes_letters
    usual = _USUAL.get((letters, conv.intrinsic))
    euler = [f"{i + 1}: about {letters[i]}" + (f" ({usual[i]})" if usual else "") for i in range(3)]
    quat = ["w", "x", "y", "z"] if conv.scalar == "first" else ["x", "y", "z", "w"]
    matrix = [f"row {i + 1}, col {j + 1}" for i in range(3) for j in range(3)]
    return euler, quat, matrix


def _line(x, y, name, colour, dash, symbol, legend, uid, width=2.0):
    return go.Scatter(x=x, y=y, name=name, mode="lines+markers", legend=legend, uid=uid,
                      line=dict(color=colour, dash=dash, width=width),
                      marker=dict(symbol=symbol, size=7, color=colour, maxdisplayed=_MARKS_SHOWN),
                      hovertemplate="%{x:.6g}: %{y:.6g}<extra>%{fullData.name}</extra>")


def _now(x, y, symbols, colours, name, legend, uid):
    return go.Scatter(x=x, y=y, name=name, mode="markers", legend=legend, showlegend=False, uid=uid,
                      marker=dict(symbol=[s + "-open" for s in symbols], size=12, color=colours,
                                  line=dict(width=2.5, color=colours)),
                      hovertemplate="current step: %{y:.6g}<extra></extra>")


def step_marks(sweep: Sweep, step: int) -> dict:
    """The data that moves with the current step of :func:`sweep_figure`.

    Returns ``{"traces": {trace uid: {"x": [...], "y": [...]}}, "layout": {path: value}}``:
    the hollow markers on every curve and the current-step line and label (layout
    paths such as ``"shapes[0].x0"``, for ``Figure.update_layout``).

    >>> import numpy as np
    >>> from posekit.analysis import sweep_one_angle
    >>> s = sweep_one_angle([30, 0, 20], 1, np.linspace(60, 120, 61), "unit=degrees")
    >>> step_marks(s, 30)["layout"]["shapes[0].x0"]
    90.0
    """
    s = _check_sweep(sweep)
    k = _check_step(s, step)
    p = float(s.parameter[k])
    t = SWEEP_TRACES
    traces = {
        t["euler_now"]: {"x": [p] * 3, "y": [float(v) for v in s.euler[k]]},
        t["quaternion_now"]: {"x": [p] * 4, "y": [float(v) for v in s.quaternion[k]]},
        t["matrix_now"]: {"x": [p] * 9, "y": [float(v) for v in s.matrix[k].reshape(9)]},
        t["gauge_now"]: {"x": [p], "y": [float(s.gauge[k])]},
    }
    layout = {f"shapes[{CURRENT_SHAPE}].x0": p, f"shapes[{CURRENT_SHAPE}].x1": p,
              f"annotations[{CURRENT_LABEL}].x": p,
              f"annotations[{CURRENT_LABEL}].text": f"step {k} at {format_number(p, 6, trim=True)}"}
    return {"traces": traces, "layout": layout}


def _pi_text(v: float) -> str:
    """Tick text for a multiple of pi/2 in radians, e.g. -pi/2."""
    n = int(round(v / (0.5 * np.pi)))
    return {0: "0", 1: "\u03c0/2", -1: "\u2212\u03c0/2", 2: "\u03c0", -2: "\u2212\u03c0", 3: "3\u03c0/2",
            4: "2\u03c0"}.get(n, f"{v:.3g}")


def _bands(x, jumps, yref, colour, opacity):
    k = np.flatnonzero(jumps)
    return [dict(type="rect", xref="x", yref=yref, x0=float(x[i - 1]), x1=float(x[i]), y0=0, y1=1,
                 fillcolor=colour, opacity=opacity, line=dict(width=0), layer="below") for i in k]


_PANEL_TITLES = ("Euler angles as read back: they jump near the pole",
                 "Quaternion, sign kept continuous (q and \u2212q are the same turn): smooth",
                 "Rotation matrix, the nine entries as written: smooth",
                 "Lock gauge: 1 far from the pole, 0 at it")
_ROW_HEIGHTS = (0.31, 0.23, 0.33, 0.13)
_SPACING = 0.055


def _domains():
    """Vertical paper domains of the four panels, top first (same rule as plotly's make_subplots)."""
    usable = 1.0 - 3 * _SPACING
    tops, top = [], 1.0
    for h in _ROW_HEIGHTS:
        tops.append((top - h * usable, top))
        top -= h * usable + _SPACING
    return tops


def _notes(s: Sweep, x):
    notes = [dict(x=0.0, xref="paper", y=dom[1], yref="paper", xanchor="left", yanchor="bottom", showarrow=False,
                  text=_PANEL_TITLES[i], font=dict(size=12.5, color="#222222"), bgcolor="rgba(255,255,255,0.92)")
             for i, dom in enumerate(_domains())]  # the white ground keeps the step line out of the titles
    notes.append(dict(x=0.0, y=1.0, xref="x", yref="paper", yanchor="bottom", yshift=16, showarrow=False,
                      name="current step",
                      text="", font=dict(size=12, color="#333333"), bgcolor="rgba(255,255,255,0.85)"))
    lo, hi = float(np.min(x)), float(np.max(x))

    def beside(i):
        """Label position beside band i: to its right, or to its left near the right edge (legends)."""
        a, b = sorted((float(x[i - 1]), float(x[i])))
        if hi > lo and (0.5 * (a + b) - lo) / (hi - lo) > 0.7:
            return dict(x=a, xanchor="right")
        return dict(x=b, xanchor="left")

    for i in np.flatnonzero(s.euler_jumps):
        notes.append(dict(beside(i), y=0.97, xref="x", yref="y domain", yanchor="top", showarrow=False,
                          text="readback jumps", font=dict(size=11, color="#7a4b00"), bgcolor="rgba(255,255,255,0.8)"))
    for i in np.flatnonzero(s.quaternion_jumps):
        notes.append(dict(beside(i), y=0.03, xref="x", yref="y2 domain", yanchor="bottom", showarrow=False,
                          text="written q flips sign", font=dict(size=11, color="#1d5a80"),
                          bgcolor="rgba(255,255,255,0.8)"))
    for i in np.flatnonzero(s.matrix_jumps):
        notes.append(dict(beside(i), y=0.03, xref="x", yref="y3 domain", yanchor="bottom", showarrow=False,
                          text="matrix jumps", font=dict(size=11, color="#6b2d58"), bgcolor="rgba(255,255,255,0.8)"))
    return notes


def sweep_patch(sweep: Sweep, step: int = 0, parameter_label: str | None = None) -> dict:
    """Everything of :func:`sweep_figure` that depends on the sweep, as data for a batched update.

    Returns ``{"traces": {trace uid: {...}}, "layout": {path: value}}``: every trace's
    ``x``, ``y`` and ``name``, the bands, labels, axis ranges and titles, and the
    current-step marks of :func:`step_marks`.  ``sweep_figure`` is the fixed styling
    plus this patch, so a widget that applies it shows exactly what ``sweep_figure``
    would draw.

    >>> import numpy as np
    >>> from posekit.analysis import sweep_one_angle
    >>> s = sweep_one_angle([30, 0, 20], 1, np.linspace(60, 120, 61), "unit=degrees")
    >>> p = sweep_patch(s, 0)
    >>> bool(np.array_equal(p["traces"]["euler-2"]["y"], s.euler[:, 1]))
    True
    """
    s = _check_sweep(sweep)
    k = _check_step(s, step)
    conv = s.convention
    x = s.parameter.astype(float)
    xs = x.copy()
    e_names, q_names, m_names = _labels(conv)
    t = SWEEP_TRACES
    traces = {}
    for i, idx in enumerate(t["euler"]):
        traces[idx] = {"x": xs, "y": s.euler[:, i].copy(), "name": e_names[i]}
    for i, idx in enumerate(t["quaternion"]):
        c, d, m = _QUAT_STYLE[q_names[i]]
        traces[idx] = {"x": xs, "y": s.quaternion[:, i].copy(), "name": q_names[i],
                       "line": {"color": c, "dash": d}, "marker": {"symbol": m, "color": c}}
    flat = s.matrix.reshape(s.steps, 9)
    for e, idx in enumerate(t["matrix"]):
        traces[idx] = {"x": xs, "y": flat[:, e].copy(), "name": m_names[e]}
    traces[t["gauge"]] = {"x": xs, "y": s.gauge.copy()}
    symbols = [_QUAT_STYLE[n][2] + "-open" for n in q_names]
    colours = [_QUAT_STYLE[n][0] for n in q_names]
    traces[t["quaternion_now"]] = {"marker": {"symbol": symbols, "color": colours, "line": {"color": colours}}}

    half = _half_turn(conv)
    lo = 0.0 if conv.wrap == "positive" else -half
    pad = 0.08 * half
    shapes = [dict(type="line", xref="x", yref="paper", x0=0, x1=0, y0=0, y1=1.0, name="current step",
                   line=dict(color="#333333", width=1.5, dash="dash"))]
    shapes += _bands(x, s.euler_jumps, "paper", _ORANGE, 0.28)
    shapes += _bands(x, s.quaternion_jumps, "y2 domain", _SKY, 0.35)
    shapes += _bands(x, s.matrix_jumps, "y3 domain", _PURPLE, 0.3)
    layout = {
        "shapes": shapes, "annotations": _notes(s, x),
        "yaxis.range": [min(lo, float(np.min(s.euler))) - pad, max(lo + 2 * half, float(np.max(s.euler))) + pad],
        "yaxis.title.text": f"angle, {_unit(conv)}",
        "yaxis.tickvals": [lo + 0.5 * half * i for i in range(5)],
        "yaxis.ticktext": [f"{lo + 0.5 * half * i:.4g}" if conv.degrees else _pi_text(lo + 0.5 * half * i)
                           for i in range(5)],
        "xaxis4.title.text": parameter_label or "sweep parameter",
        "xaxis4.range": [float(x.min()), float(x.max())],
    }
    marks = step_marks(s, k)
    for idx, data in marks["traces"].items():
        traces.setdefault(idx, {}).update(data)
    # the current-step line and label go inside the whole lists: a later single-entry
    # edit equal to the old value would be dropped by plotly.py and the list would win
    for path, value in marks["layout"].items():
        _set_path(layout, path, value)
    return {"traces": traces, "layout": layout}


def _set_props(obj, props: dict) -> None:
    for key, value in props.items():
        if isinstance(value, dict):
            _set_props(obj[key], value)
        else:
            obj[key] = value


def _set_path(obj, path: str, value) -> None:
    """``obj`` at ``"shapes[0].x0"`` or ``"xaxis4.title.text"`` := value (one property set, no re-parsing)."""
    keys = []
    for part in path.split("."):
        name, _, index = part.partition("[")
        keys.append(name)
        if index:
            keys.append(int(index.rstrip("]")))
    for key in keys[:-1]:
        obj = obj[key]
    obj[keys[-1]] = value


def apply_patch(fig, patch: dict) -> None:
    """Apply a patch from :func:`sweep_patch`, :func:`step_marks` or :func:`family_data` to ``fig``.

    Mutates ``fig`` (a ``go.Figure`` or ``go.FigureWidget``); call it inside
    ``fig.batch_update()`` on a widget so the page gets one update.  Traces are found by
    uid (:data:`SWEEP_TRACES`, :data:`FAMILY_TRACES`).  Whole lists
    (``shapes``, ``annotations``) are set before single entries of them.  Properties
    are set one by one (much cheaper in plotly.py than ``update`` with nested dicts).
    """
    traces = patch.get("traces", {})
    if traces:
        where = {tr.uid: i for i, tr in enumerate(fig.data)}
        for uid, data in traces.items():
            _set_props(fig.data[where[uid] if uid in where else trace_index(fig, uid)], data)
    layout = patch.get("layout", {})
    for path in sorted(layout, key=lambda p: "[" in p):
        _set_path(fig.layout, path, layout[path])


def sweep_figure(sweep: Sweep, step: int = 0, *, parameter_label: str | None = None, height: int = 780,
                 title: str | None = None) -> go.Figure:
    """Four stacked panels of one sweep ``(N,)``: Euler readback, quaternion, matrix, lock gauge.

    ``sweep`` is one :class:`~posekit.analysis.Sweep` (parameter shape ``(N,)``); ``step``
    (0..N-1) places the current-step marker; ``parameter_label`` titles the shared x axis
    (default "sweep parameter"; use :func:`angle_name` for a swept Euler angle).

    Traces (uids in :data:`SWEEP_TRACES`): Euler angles 1-3, their current-step
    markers, quaternion components in the convention's order, markers, the nine matrix
    entries row by row, markers, the gauge, its marker.  Shape 0 is the current-step line;
    then one shaded band per Euler jump (all panels), per written-quaternion flip
    (quaternion panel) and per matrix jump (matrix panel).  Annotations: the four panel
    titles, the current-step label, then one label per band.

    >>> import numpy as np
    >>> from posekit.analysis import sweep_one_angle
    >>> s = sweep_one_angle([30, 0, 20], 1, np.linspace(60, 120, 61), "unit=degrees")
    >>> fig = sweep_figure(s, 30, parameter_label="pitch, degrees")
    >>> len(fig.data), np.allclose(fig.data[trace_index(fig, "euler-2")].y, s.euler[:, 1])
    (21, True)
    """
    s = _check_sweep(sweep)
    k = _check_step(s, step)
    if not (isinstance(height, (int, np.integer)) and height >= 300):
        raise SweepViewError(f"height: got {height!r}; expected an integer number of pixels >= 300")
    fig = make_subplots(rows=4, cols=1, shared_xaxes=True, vertical_spacing=_SPACING, row_heights=list(_ROW_HEIGHTS))
    t = SWEEP_TRACES
    for i in range(3):
        c, d, m = _EULER_STYLE[i]
        fig.add_trace(_line([], [], "", c, d, m, "legend", t["euler"][i]), row=1, col=1)
    fig.add_trace(_now([], [], [st[2] for st in _EULER_STYLE], [st[0] for st in _EULER_STYLE],
                       "current step", "legend", t["euler_now"]), row=1, col=1)
    for i, name in enumerate(("w", "x", "y", "z")):
        c, d, m = _QUAT_STYLE[name]
        fig.add_trace(_line([], [], name, c, d, m, "legend2", t["quaternion"][i]), row=2, col=1)
    fig.add_trace(_now([], [], ["circle"] * 4, [_BLACK] * 4, "current step", "legend2", t["quaternion_now"]),
                  row=2, col=1)
    for e in range(9):
        r, c = divmod(e, 3)
        fig.add_trace(_line([], [], "", _ROW_COLOURS[r], _COL_DASHES[c], _ROW_SYMBOLS[r], "legend3", t["matrix"][e],
                            1.6), row=3, col=1)
    fig.add_trace(_now([], [], [_ROW_SYMBOLS[e // 3] for e in range(9)], [_ROW_COLOURS[e // 3] for e in range(9)],
                       "current step", "legend3", t["matrix_now"]), row=3, col=1)
    fig.add_trace(go.Scatter(x=[], y=[], name="lock gauge", mode="lines", legend="legend4", uid=t["gauge"],
                             line=dict(color=_BLACK, width=2), fill="tozeroy", fillcolor="rgba(0,0,0,0.08)",
                             showlegend=False, hovertemplate="%{x:.6g}: gauge %{y:.4f}<extra></extra>"),
                  row=4, col=1)
    fig.add_trace(_now([], [], ["circle"], [_BLACK], "current step", "legend4", t["gauge_now"]), row=4, col=1)

    fig.update_yaxes(title_text="component", range=[-1.08, 1.08], row=2, col=1)
    fig.update_yaxes(title_text="entry", range=[-1.08, 1.08], row=3, col=1)
    fig.update_yaxes(title_text="gauge", range=[0, 1.05], tickvals=[0, 0.5, 1], row=4, col=1)
    fig.update_yaxes(gridcolor="#e6e6e6", zerolinecolor="#bbbbbb", title_font=dict(size=12), **_TICKS)
    fig.update_xaxes(gridcolor="#e6e6e6", showline=True, linecolor="#999999", **_TICKS)
    fig.update_xaxes(title_font=dict(size=12.5), row=4, col=1)
    legends = {}
    for n, dom in zip((1, 2, 3), _domains()):
        legends["legend" if n == 1 else f"legend{n}"] = dict(
            x=1.01, xanchor="left", y=dom[1], yanchor="top", font=dict(size=11), tracegroupgap=2,
            bgcolor="rgba(255,255,255,0)", title=dict(text=("Euler angle", "quaternion", "matrix entry")[n - 1],
                                                      font=dict(size=11.5)))
    fig.update_layout(**legends, legend4=dict(visible=False), height=int(height), template="plotly_white",
                      margin=dict(l=64, r=120, t=60 if title else 44, b=48), hovermode="closest",
                      uirevision="posekit-sweep", title=dict(text=title, x=0, font=dict(size=14)) if title else None)
    apply_patch(fig, sweep_patch(s, k, parameter_label))
    return fig


def _broken(first, third, half):
    """One polyline through (first, third) points, broken (None) where third wraps by a full turn."""
    first = np.asarray(first, dtype=float)
    third = np.asarray(third, dtype=float)
    if first.size == 0 or np.all(np.isnan(first)):
        return [], []
    cut = np.flatnonzero(np.abs(np.diff(third)) > half) + 1
    xs = np.insert(first, cut, np.nan)
    ys = np.insert(third, cut, np.nan)
    return ([None if np.isnan(v) else float(v) for v in xs], [None if np.isnan(v) else float(v) for v in ys])


def _check_solutions(solutions) -> EulerSolutions:
    if not isinstance(solutions, EulerSolutions):
        raise SweepViewError(f"solutions: got {type(solutions).__name__}; expected posekit.analysis.EulerSolutions "
                             "(from euler_solutions)")
    if np.asarray(solutions.at_pole).ndim != 1:
        raise SweepViewError(f"solutions: got shape {np.asarray(solutions.at_pole).shape}; expected one path of "
                             "rotations (N,), e.g. euler_solutions(sweep.rotation, sweep.convention)")
    return solutions


def family_data(solutions: EulerSolutions, step: int) -> dict:
    """The data :func:`family_figure` draws for one step of a path of solutions ``(N,)``.

    Returns ``{"traces": {uid: {...}}, "layout": {path: value}, "note": str,
    "family_step": int | None}``.  The family line is the current step's when it is at
    the pole, else that of the pole step of the path nearest to it (``family_step``),
    else empty.  ``note`` says in words what the plane shows at this step.

    >>> import numpy as np
    >>> from posekit.analysis import euler_solutions, sweep_one_angle
    >>> s = sweep_one_angle([30, 0, 20], 1, np.linspace(60, 120, 61), "unit=degrees")
    >>> d = family_data(euler_solutions(s.rotation, s.convention), 30)
    >>> d["family_step"], round(d["traces"]["readback"]["x"][0], 9)   # readback (10, 90, 0) at step 30
    (30, 10.0)
    """
    sol = _check_solutions(solutions)
    at = np.asarray(sol.at_pole)
    k = _check_step(int(at.size), step)
    conv = sol.convention
    unit = _unit(conv)
    half = _half_turn(conv)
    poles = np.flatnonzero(at)
    fam_k = k if at[k] else (int(poles[np.argmin(np.abs(poles - k))]) if poles.size else None)
    if fam_k is None:
        fx, fy, fname = [], [], "every triplet at the pole (this path never reaches it)"
    else:
        fam = np.asarray(sol.family)[fam_k]
        fx, fy = _broken(fam[:, 0], fam[:, 2], half)
        fname = "every triplet at the pole" + ("" if fam_k == k else f" (step {fam_k})")
    read = np.asarray(sol.angles)[k]
    if at[k]:
        ox, oy = [], []
        combo = "first + third" if int(np.asarray(sol.fixed_sign)[k]) > 0 else "first \u2212 third"
        fixed = format_number(float(np.asarray(sol.fixed_value)[k]), 6, trim=True)
        note = (f"At the pole only {combo} = {fixed} {unit} is fixed: "
                "every point on the line is the same orientation; the readback is one of them.")
    else:
        other = np.asarray(sol.regular)[k, 1]
        ox, oy = [float(other[0])], [float(other[2])]
        d = format_number(float(np.asarray(sol.distance)[k]), 4, trim=True)
        note = (f"{d} {unit[:-1] if d == '1' else unit} from the pole: exactly two triplets, the readback "
                f"and the other (middle angle {format_number(float(other[1]), 6, trim=True)} {unit}).")
    lo = 0.0 if conv.wrap == "positive" else -half
    rng = [lo - 0.04 * half, lo + 2 * half + 0.04 * half]
    ticks = [lo + half * i / 2 for i in range(5)]
    text = [f"{v:.4g}" if conv.degrees else _pi_text(v) for v in ticks]
    traces = {
        FAMILY_TRACES["family"]: {"x": fx, "y": fy, "name": fname},
        FAMILY_TRACES["other"]: {"x": ox, "y": oy},
        FAMILY_TRACES["readback"]: {"x": [float(read[0])], "y": [float(read[2])]},
    }
    layout = {"xaxis.title.text": angle_name(conv, 0, unit=True), "yaxis.title.text": angle_name(conv, 2, unit=True),
              "xaxis.range": rng, "yaxis.range": rng, "xaxis.tickvals": ticks, "yaxis.tickvals": ticks,
              "xaxis.ticktext": text, "yaxis.ticktext": text}
    return {"traces": traces, "layout": layout, "note": note, "family_step": fam_k}


def family_figure(solutions: EulerSolutions, step: int, *, height: int = 420, width: int | None = None,
                  title: str | None = None) -> go.Figure:
    """First vs third Euler angle of one step of a path of solutions ``(N,)``.

    ``solutions`` from :func:`posekit.analysis.euler_solutions` over the path's rotations
    ``(N, 3, 3)``.  Traces (uids in :data:`FAMILY_TRACES`): the line of equivalent
    triplets at the pole (see :func:`family_data`), the other regular triplet (away from
    the pole), the readback.  Axes span one full turn of the outer range, equal scale.
    ``height`` and ``width`` in pixels (``width=None`` follows the container).

    >>> import numpy as np
    >>> from posekit.analysis import euler_solutions, sweep_one_angle
    >>> s = sweep_one_angle([30, 0, 20], 1, np.linspace(60, 120, 61), "unit=degrees")
    >>> fig = family_figure(euler_solutions(s.rotation, s.convention), 30)
    >>> [t.name for t in fig.data]
    ['every triplet at the pole', 'the other triplet', 'read back']
    """
    d = family_data(solutions, step)
    if not (isinstance(height, (int, np.integer)) and height >= 200):
        raise SweepViewError(f"height: got {height!r}; expected an integer number of pixels >= 200")
    fig = go.Figure([
        go.Scatter(x=[], y=[], name="", mode="lines+markers", uid=FAMILY_TRACES["family"],
                   line=dict(color=_ORANGE, width=3), marker=dict(symbol="circle", size=4, color=_ORANGE),
                   hovertemplate="first %{x:.6g}, third %{y:.6g}<extra>same orientation</extra>"),
        go.Scatter(x=[], y=[], name="the other triplet", mode="markers", uid=FAMILY_TRACES["other"],
                   marker=dict(symbol="square-open", size=12, color=_BLUE, line=dict(width=2.5)),
                   hovertemplate="first %{x:.6g}, third %{y:.6g}<extra>other triplet</extra>"),
        go.Scatter(x=[], y=[], name="read back", mode="markers", uid=FAMILY_TRACES["readback"],
                   marker=dict(symbol="x", size=13, color=_VERMILLION, line=dict(width=1, color="#ffffff")),
                   hovertemplate="first %{x:.6g}, third %{y:.6g}<extra>read back</extra>"),
    ])
    axis = dict(gridcolor="#e6e6e6", zeroline=False, showline=True, linecolor="#999999", title_font=dict(size=12),
                **_TICKS)
    fig.update_layout(
        height=int(height), width=None if width is None else int(width), template="plotly_white",
        margin=dict(l=60, r=14, t=34 if title else 12, b=128),
        xaxis=axis, yaxis=dict(axis, scaleanchor="x", scaleratio=1),
        legend=dict(orientation="v", x=0, xanchor="left", y=-0.22, yanchor="top", font=dict(size=11)),
        uirevision="posekit-family", title=dict(text=title, x=0, font=dict(size=13)) if title else None)
    apply_patch(fig, d)
    return fig
