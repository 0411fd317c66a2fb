"""The frame-graph widget: ask where one frame is, seen from another; check the loops; fix an edge.

Glue only.  The state is a handful of traitlets - ``graph`` (an immutable
:class:`~posekit.analysis.FrameGraph`), ``from_frame`` (the frame asked about: "where is
...?"), ``into_frame`` (the frame it is seen from), ``root`` (whose axes the 3D view
uses), ``edge`` (the stored transform being edited), ``readout_convention``, ``palette``
and ``click_sets`` - and everything shown is recomputed from them by posekit's analysis
(lookups, readouts, loop checks) and view (the diagram of the graph, the 3D view, HTML).

Two drawings side by side: the graph itself (:func:`posekit.view.graph.graph_diagram`,
every stored transform an arrow parent -> child, the failing loop dashed, the best fix
starred) and the frames in space (:func:`posekit.view.graph.graph_figure`).  A click on a
node of the diagram picks a frame of the question (which one: ``click_sets``, then it
moves on to the other); a click on an arrow picks that transform for editing.  Every
control is also a native select, button or toggle, so the widget works from the keyboard
(Tab to a control; arrow keys in a list; Space or Enter on a button).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import ipywidgets as w
import numpy as np
import plotly.graph_objects as go
import traitlets as t

from ..analysis.frames_graph import FrameGraph, FrameGraphError, UnknownFrameError, convention_words
from ..core.convention import Convention
from ..core.errors import PoseInputError, WrongTypeError, isolate_controls, summarise
from ..core.reading import as_convention
from ..view.frames import trace_index
from ..view.graph import (EDGE_LABELS_TRACE, FIX_TRACE, LEADERS_TRACE, NAMES_TRACE, NODES_TRACE, auto_scale,
                          edge_trace_name, graph_diagram, graph_figure, graph_traces, loop_check_html, point_words,
                          readout_html)
from ..view.readouts import STYLE_SHEET, words_html
from ..io.settings import (Bool, Choice, ConventionText, Float, Text, Texts, WidgetSettings, fail, register_settings,
                           setting, shown)
from ..io.state import Edge as StateEdge
from ..io.state import NamedPose, State, environment_versions, float_literal
from .controls import ConventionBar, KeyboardScope
from .sharing import SharePanel

__all__ = ["GraphExplorer", "EDGE_FIELDS", "KeyboardScope", "GraphSettings"]

#: The convention settings that change how an edge of each kind is read.
EDGE_FIELDS = {
    "position-quaternion": ("direction", "scalar", "algebra", "action"),
    "position-euler": ("direction", "sequence", "axes", "unit", "action"),
    "position-heading": ("direction", "unit", "action"),
    "matrix": ("direction", "layout"),
}
READOUT_FIELDS = ("direction", "sequence", "axes", "unit", "scalar", "algebra", "action", "layout")
PLANAR_READOUT_FIELDS = ("direction", "unit", "action", "layout")


def _edge_label(graph: FrameGraph, i: int) -> str:
    e = graph.edges[i]
    src = f" ({e.source})" if e.source else ""
    return f"{i}: {e.parent} \u2192 {e.child}{src}"


_FRAME_NAME = Text(200, lines=False, empty=False, name=True, strip=True)


@register_settings
@dataclass(frozen=True)
class GraphSettings(WidgetSettings):
    """What a :class:`GraphExplorer` saves in a state file besides the edges (which go in the state's ``edges``)."""

    kind: ClassVar[str] = "graph"
    planar: bool = setting(Bool())
    angle_tolerance: float = setting(Float())
    distance_tolerance: float = setting(Float())
    sources: tuple = setting(Texts(Text(200, lines=False, name=True)))
    from_frame: str = setting(_FRAME_NAME)
    into_frame: str = setting(_FRAME_NAME)
    root: str = setting(_FRAME_NAME)
    readout_convention: str = setting(ConventionText())
    palette: str = setting(Choice("standard", "colour-blind"))


def _reason(exc: Exception) -> str:
    """A refusal's own words, safe and short, to quote inside a state error."""
    text = isolate_controls(str(exc))
    return text if len(text) <= 300 else text[:300] + "..."


class GraphExplorer(w.VBox):
    """Ask where one frame is, seen from another, in a graph of stored transforms; check loops; fix edges.

    >>> from posekit.analysis.scenarios import orchard_rover   # demo data
    >>> view = GraphExplorer(orchard_rover(), from_frame="camera", into_frame="world", root="base")
    >>> view.from_frame, view.into_frame
    ('camera', 'world')
    >>> view.pick("lidar"); view.pick("base")   # as two clicks on the diagram's nodes
    >>> view.from_frame, view.into_frame
    ('lidar', 'base')
    """

    graph = t.Instance(FrameGraph)
    from_frame = t.Unicode()
    into_frame = t.Unicode()
    root = t.Unicode()
    edge = t.Int(0)
    readout_convention = t.Unicode("sequence=z-y-x unit=degrees")
    palette = t.Unicode("colour-blind")
    click_sets = t.Enum(("from", "into"), default_value="from")

    def __init__(self, graph: FrameGraph, from_frame: str | None = None, into_frame: str | None = None,
                 root: str | None = None, readout_convention="sequence=z-y-x unit=degrees",
                 palette: str = "colour-blind", height: int = 480, width: int = 520, scale: float | None = None,
                 diagram_width: int = 400):
        if not isinstance(graph, FrameGraph):
            raise WrongTypeError(f"GraphExplorer: got {type(graph).__name__}; expected a posekit FrameGraph")
        if len(graph.frames) < 2:
            raise PoseInputError(f"GraphExplorer: the graph has {len(graph.frames)} frame(s); it needs at least one "
                                 "edge (two frames)")
        frames = graph.frames
        from_frame = frames[-1] if from_frame is None else from_frame
        into_frame = frames[0] if into_frame is None else into_frame
        root = frames[0] if root is None else root
        look = graph.lookup(into_frame, from_frame)  # validates the names (typed errors) before building
        graph.placement(root)
        conv = as_convention(readout_convention)
        self._original = graph
        self._height = height
        self._width = width
        self._diagram_width = diagram_width
        self._fixed_scale = scale
        self._scale: float | None = None
        self._syncing = False
        self._bar_edge: int | None = None

        options = list(frames)
        wide = {"description_width": "initial"}
        self.from_choice = w.Dropdown(options=options, value=from_frame, description="where is", style=wide,
                                      layout=w.Layout(width="200px"))
        self.from_choice.add_class("posekit-graph-from")
        self.into_choice = w.Dropdown(options=options, value=into_frame, description="seen from", style=wide,
                                      layout=w.Layout(width="210px"))
        self.into_choice.add_class("posekit-graph-into")
        self.swap_button = w.Button(description="turn it round", icon="exchange",
                                    tooltip="ask where the second frame is, seen from the first",
                                    layout=w.Layout(width="130px"))
        self.swap_button.add_class("posekit-graph-swap")
        self.click_choice = w.ToggleButtons(options=[("where is", "from"), ("seen from", "into")], value="from",
                                            tooltips=["the next click on a frame in the drawing sets 'where is'",
                                                      "the next click on a frame in the drawing sets 'seen from'"],
                                            style=w.ToggleButtonsStyle(button_width="auto"))
        self.click_choice.add_class("posekit-graph-click-sets")
        self.root_choice = w.Dropdown(options=options, value=root, description="3D in the axes of", style=wide,
                                      layout=w.Layout(width="250px"))
        self.root_choice.add_class("posekit-graph-root")
        self.palette_choice = w.ToggleButtons(options=[("standard colours", "standard"),
                                                       ("colour-blind safe", "colour-blind")], value=palette,
                                              style=w.ToggleButtonsStyle(button_width="auto"))
        self.palette_choice.add_class("posekit-graph-palette")

        self.edge_choice = w.Dropdown(options=[(_edge_label(graph, i), i) for i in range(len(graph.edges))], value=0,
                                      description="transform", style=wide, layout=w.Layout(width="360px"))
        self.edge_choice.add_class("posekit-graph-edge")
        self.flip_button = w.Button(description="read it the other way round", icon="exchange",
                                    tooltip="the same numbers, taken as the inverse transform",
                                    layout=w.Layout(width="220px"))
        self.flip_button.add_class("posekit-graph-flip")
        self.fix_button = w.Button(description="apply the best fix", tooltip="apply the first single-edge fix listed",
                                   layout=w.Layout(width="150px"))
        self.fix_button.add_class("posekit-graph-apply-fix")
        self.reset_button = w.Button(description="back to the numbers as entered", layout=w.Layout(width="230px"))
        self.reset_button.add_class("posekit-graph-reset")
        self.edge_words = w.HTML()
        self.edge_words.add_class("posekit-graph-edge-words")
        self.edge_box = w.Box(layout=w.Layout(width="100%"))
        self.edge_bar: ConventionBar | None = None
        self.status = w.HTML()
        self.status.add_class("posekit-graph-status")

        fields = PLANAR_READOUT_FIELDS if graph.planar else READOUT_FIELDS
        self.readout_bar = ConventionBar(fields=fields, initial={f: getattr(conv, f) for f in fields})
        self.readout_bar.add_class("posekit-graph-readout-convention")
        self.readouts = w.HTML()
        self.readouts.add_class("posekit-graph-readouts")
        self.loops_html = w.HTML()
        self.loops_html.add_class("posekit-graph-loops-box")

        check = graph.check_loops()
        self.diagram = go.FigureWidget(graph_diagram(graph, lookup=look, check=check, selected_edge=0,
                                                     width=diagram_width, height=height))
        self.diagram.add_class("posekit-graph-diagram")
        self._view = None  # the camera's eye the frame names are placed for (None: the first camera)
        self.figure = go.FigureWidget(graph_figure(graph, root=root, lookup=look, palette=palette, height=height,
                                                   width=width, scale=self._scale_for(graph, root)))
        self.figure.add_class("posekit-graph-figure")
        # names are placed to be read from the camera: when the user turns the scene, they move with it
        self.figure.layout.on_change(self._on_camera, "scene.camera")

        ask = w.VBox([w.HTML("<b>Ask</b> where one frame is, seen from another \u2014 pick both here, or click "
                             "two frames in the drawing"),
                      w.HBox([self.from_choice, self.into_choice]),
                      w.HBox([self.swap_button, w.Label("a click on a frame sets"), self.click_choice],
                             layout=w.Layout(align_items="center", grid_gap="0 6px")),
                      self.root_choice, self.palette_choice],
                     layout=w.Layout(flex="1 1 430px", min_width="430px"))
        edit = w.VBox([w.HTML("<b>Stored transforms</b> \u2014 change how one is read (or click its arrow) and "
                              "watch both drawings"),
                       self.edge_choice, self.edge_words, self.edge_box,
                       w.HBox([self.flip_button, self.fix_button, self.reset_button],
                              layout=w.Layout(flex_flow="row wrap")), self.status],
                      layout=w.Layout(flex="1 1 440px", min_width="420px"))
        controls = w.HBox([ask, edit], layout=w.Layout(flex_flow="row wrap", grid_gap="4px 16px", width="100%"))
        diagram_box, scene_box = w.Box([self.diagram]), w.Box([self.figure])
        diagram_box.add_class("posekit-graph-diagram-box")
        scene_box.add_class("posekit-graph-scene-box")
        drawings = w.HBox([diagram_box, scene_box],
                          layout=w.Layout(flex_flow="row wrap", grid_gap="4px 8px", width="100%"))
        below = w.VBox([self.loops_html, w.HTML("<b>The answer in numbers</b>, written under this convention"),
                        self.readout_bar, self.readouts])
        self.keyboard_scope = KeyboardScope(scope=".posekit-graph-explorer")
        super().__init__([w.HTML(STYLE_SHEET), controls, drawings, below, SharePanel(self, "frame-graph-state"),
                          self.keyboard_scope])
        self.add_class("posekit-graph-explorer")

        with self.hold_trait_notifications():
            self.graph = graph
            self.from_frame = from_frame
            self.into_frame = into_frame
            self.root = root
            self.edge = 0
            self.readout_convention = conv.to_text()
            self.palette = palette

        self.from_choice.observe(lambda ch: self._set("from_frame", ch["new"]), "value")
        self.into_choice.observe(lambda ch: self._set("into_frame", ch["new"]), "value")
        self.root_choice.observe(lambda ch: self._set("root", ch["new"]), "value")
        self.palette_choice.observe(lambda ch: self._set("palette", ch["new"]), "value")
        self.click_choice.observe(lambda ch: self._set("click_sets", ch["new"]), "value")
        self.edge_choice.observe(lambda ch: self._set("edge", ch["new"]), "value")
        self.swap_button.on_click(lambda _: self.swap())
        self.flip_button.on_click(lambda _: self.flip())
        self.fix_button.on_click(lambda _: self.apply_best_fix())
        self.reset_button.on_click(lambda _: self.reset())
        for ctl in self.readout_bar.controls.values():
            ctl.observe(self._on_readout_setting, "value")
        self.observe(self._on_view, ["from_frame", "into_frame", "root", "palette", "readout_convention"])
        self.observe(self._on_graph, ["graph"])
        self.observe(self._on_edge, ["edge"])
        self.observe(lambda _: self._sync_controls(), ["click_sets"])
        self._sync_edge_bar()
        self._refresh()

    def _on_camera(self, layout, camera) -> None:
        """The user turned the 3D scene: place the frame names again, as seen from the new eye."""
        eye = getattr(camera, "eye", None)
        if self.graph.planar or eye is None or None in (eye.x, eye.y, eye.z):
            return
        view = (float(eye.x), float(eye.y), float(eye.z))
        if not all(math.isfinite(v) for v in view) or math.hypot(*view) < 1e-9:
            return
        if self._view is not None and max(abs(a - b) for a, b in zip(view, self._view)) < 1e-6:
            return
        self._view = view
        self.place_names()

    def place_names(self) -> None:
        """Move the frame names (and their leader lines) to where they read best from the current camera."""
        try:
            look = self.graph.lookup(self.into_frame, self.from_frame)
        except FrameGraphError:
            look = None
        traces, _ = graph_traces(self.graph, root=self.root, lookup=look, palette=self.palette,
                                 scale=self._scale_for(self.graph, self.root), view=self._view,
                                 size=(self._width or 520, self._height))
        fresh = {tr.name: tr for tr in traces if tr.name in (NAMES_TRACE, LEADERS_TRACE)}
        with self.figure.batch_update():
            for name, tr in fresh.items():
                shown = self.figure.data[trace_index(self.figure, name)]
                shown.x, shown.y = tr.x, tr.y
                if not self.graph.planar:
                    shown.z = tr.z

    # --- actions (also callable from code) ------------------------------------------------
    # --- sharing ----------------------------------------------------------------------------
    @staticmethod
    def _flat_numbers(edge) -> tuple[float, ...]:
        """Edge numbers as a flat list that reads back to the same transform under its convention."""
        arr = np.asarray(edge.numbers, dtype=np.float64)
        if arr.ndim == 2 and edge.convention.layout == "column-major":
            return tuple(float(v) for v in arr.ravel(order="F"))  # a flat column-major list of the same matrix
        return tuple(float(v) for v in arr.ravel())

    def _settings(self) -> dict:
        g = self.graph
        return GraphSettings(planar=bool(g.planar), angle_tolerance=float(g.angle_tolerance),
                             distance_tolerance=float(g.distance_tolerance), sources=tuple(e.source for e in g.edges),
                             from_frame=self.from_frame, into_frame=self.into_frame, root=self.root,
                             readout_convention=self.readout_convention, palette=self.palette).as_dict()

    def to_state(self, notes: str = "") -> State:
        """The graph's edges as entered (numbers, kind, convention), the chosen lookup and view settings."""
        edges = tuple(StateEdge(e.parent, e.child, e.kind, self._flat_numbers(e), e.convention)
                      for e in self.graph.edges)
        look = self.graph.lookup(self.into_frame, self.from_frame).matrix
        if look.shape == (3, 3):
            full = np.eye(4)
            full[:2, :2], full[:2, 3] = look[:2, :2], look[:2, 2]
            look = full
        pose = NamedPose(f"{self.from_frame} seen from {self.into_frame}", look, as_convention(self.readout_convention))
        return State("graph", self._settings(), (pose,), edges, notes)

    @classmethod
    def from_state(cls, state: State) -> "GraphExplorer":
        """Rebuild the graph edge by edge from a state and open the explorer on it.

        The settings are checked with :class:`GraphSettings` first; an edge the graph cannot
        take raises :class:`~posekit.io.state.StateFileError` naming ``edges[i]``, and a frame
        name the graph does not hold names ``settings.<field>``.
        """
        s = GraphSettings.from_state(state)
        if len(s.sources) != len(state.edges):
            raise fail("settings.sources", f"got {len(s.sources)} names for {len(state.edges)} edges",
                       "one measurement name per edge")
        options = {"planar": s.planar}
        for name in ("angle_tolerance", "distance_tolerance"):  # one at a time, to name the one refused
            options[name] = getattr(s, name)
            try:
                graph = FrameGraph(**options)
            except PoseInputError as exc:
                raise fail(f"settings.{name}", _reason(exc), "a tolerance a frame graph accepts") from None
        for i, (e, source) in enumerate(zip(state.edges, s.sources)):
            try:
                graph = graph.with_edge(e.parent, e.child, list(e.numbers), e.kind, e.convention, source)
            except PoseInputError as exc:
                kind = "planar" if s.planar else "spatial"
                raise fail(f"edges[{i}]", _reason(exc), f"an edge a {kind} frame graph accepts") from None
        for name in ("from_frame", "into_frame", "root"):
            if getattr(s, name) not in graph.frames:
                raise fail(f"settings.{name}", f"got {shown(getattr(s, name))}, not a frame of the graph",
                           "one of the frames: " + ", ".join(repr(f) for f in graph.frames[:20]))
        return cls(graph, from_frame=s.from_frame, into_frame=s.into_frame, root=s.root,
                   readout_convention=s.readout_convention, palette=s.palette)

    def code_cell(self) -> str:
        """A notebook cell that rebuilds exactly this graph and explorer."""
        s = self._settings()
        lines = [f"# Rebuilds this posekit frame graph exactly as it was shared "
                 f"(posekit {environment_versions()['posekit']}).",
                 "from posekit.analysis import FrameGraph", "from posekit.widgets import GraphExplorer", "",
                 f"graph = FrameGraph(planar={s['planar']!r}, angle_tolerance={float_literal(s['angle_tolerance'])}, "
                 f"distance_tolerance={float_literal(s['distance_tolerance'])})"]
        for e in self.graph.edges:
            nums = ", ".join(float_literal(v) for v in self._flat_numbers(e))
            lines.append(f"graph = graph.with_edge({e.parent!r}, {e.child!r}, [{nums}], {e.kind!r},\n"
                         f"                        {e.convention.to_text()!r}, {e.source!r})")
        rest = {k: s[k] for k in ("from_frame", "into_frame", "root", "readout_convention", "palette")}
        lines.append("widget = GraphExplorer(graph, " + ", ".join(f"{k}={v!r}" for k, v in rest.items()) + ")")
        lines.append("widget")
        return "\n".join(lines) + "\n"

    def swap(self) -> None:
        """Ask the other way round: where is the second frame, seen from the first."""
        with self.hold_trait_notifications():
            self.from_frame, self.into_frame = self.into_frame, self.from_frame

    def pick(self, frame: str) -> None:
        """What a click on a frame in the diagram does: set the frame ``click_sets`` names, then move on.

        With ``click_sets == "from"`` the frame becomes the one asked about ("where is ...")
        and the next pick sets the frame it is seen from; and the other way round.
        """
        if not isinstance(frame, str) or frame not in self.graph.frames:
            raise UnknownFrameError(f"pick: got {summarise(frame, 40)}, not a frame of the graph; expected one of: "
                                    + ", ".join(repr(f) for f in self.graph.frames[:20]))
        with self.hold_trait_notifications():
            if self.click_sets == "from":
                self.from_frame, self.click_sets = frame, "into"
            else:
                self.into_frame, self.click_sets = frame, "from"

    def flip(self, index: int | None = None) -> None:
        """Read edge ``index`` (default: the selected one) the other way round."""
        self.status.value = ""
        self.graph = self.graph.flipped(self.edge if index is None else index)

    def apply_best_fix(self) -> None:
        check = self.graph.check_loops()
        if not check.fixes:
            self.status.value = words_html("No single-edge fix to apply: "
                                           + ("every loop closes." if check.consistent else
                                              "no single edge closes every loop."))
            return
        best = check.fixes[0]
        # one notification round: the edge list, its selection and the edge's own controls are synced
        # together (each observer syncs every control from the traitlets, options before values)
        with self.hold_trait_notifications():
            self.graph = self.graph.replaced(best.edge, best.corrected)
            self.edge = best.edge
        self.status.value = words_html(f"Applied to edge {best.edge}: {best.words} As code: {best.code}")

    def reset(self) -> None:
        self.graph = self._original
        self.status.value = words_html("Every edge is back as first entered.")

    def lookup(self):
        """The :class:`~posekit.analysis.frames_graph.Lookup` the controls describe."""
        return self.graph.lookup(self.into_frame, self.from_frame)

    def changed_edges(self) -> tuple[int, ...]:
        """The edges that differ from how they were first entered."""
        return tuple(i for i, (a, b) in enumerate(zip(self.graph.edges, self._original.edges)) if a != b)

    # --- observers --------------------------------------------------------------------------
    def _set(self, name: str, value) -> None:
        if not self._syncing and getattr(self, name) != value:
            setattr(self, name, value)

    def _on_readout_setting(self, change) -> None:
        if self._syncing:
            return
        conv = Convention.parse(self.readout_convention).changed(**self.readout_bar.settings())
        self.readout_convention = conv.to_text()

    def _on_edge_setting(self, change) -> None:
        if self._syncing or self.edge_bar is None:
            return
        e = self.graph.edges[self.edge]
        new = e.convention.changed(**self.edge_bar.settings())
        if new == e.convention:
            return
        try:
            self.status.value = ""
            self.graph = self.graph.with_convention(self.edge, new)
        except PoseInputError as exc:
            self.status.value = words_html(f"Edge {self.edge} cannot be read that way: {exc}")
            self._sync_edge_bar()

    def _on_view(self, change) -> None:
        self._refresh(diagram=change["name"] in ("from_frame", "into_frame"))

    def _on_graph(self, change) -> None:
        self._sync_edge_bar()
        self._refresh()

    def _on_edge(self, change) -> None:
        self._sync_edge_bar()
        self._refresh(scene=False)

    def _on_node_click(self, trace, points, state) -> None:
        # plotly calls every trace's handler on each click; only the clicked trace has points
        if points.point_inds:
            self.pick(str(trace.customdata[points.point_inds[0]]))

    def _on_edge_click(self, trace, points, state) -> None:
        if points.point_inds:
            self.edge = int(trace.customdata[points.point_inds[0]])

    # --- syncing controls --------------------------------------------------------------------
    def _build_edge_bar(self) -> None:
        e = self.graph.edges[self.edge]
        fields = list(EDGE_FIELDS[e.kind])
        if e.kind == "matrix" and len(e.numbers) and isinstance(e.numbers[0], tuple):
            fields.remove("layout")  # nested rows: the flat order plays no part
        self.edge_bar = ConventionBar(fields=tuple(fields), initial={f: getattr(e.convention, f) for f in fields})
        self.edge_bar.add_class("posekit-graph-edge-convention")
        for ctl in self.edge_bar.controls.values():
            ctl.observe(self._on_edge_setting, "value")
        self.edge_box.children = (self.edge_bar,)
        self._bar_edge = self.edge

    def _sync_edge_bar(self) -> None:
        """The edge's own controls: rebuilt for another edge, else set from its convention; then the rest."""
        if self._bar_edge != self.edge or self.edge_bar is None:
            self._build_edge_bar()
        self._syncing = True
        try:
            e = self.graph.edges[self.edge]
            self.edge_bar.set_settings({f: getattr(e.convention, f) for f in self.edge_bar.controls})
        finally:
            self._syncing = False
        self._sync_controls()
        self._refresh_edge_words()

    def _refresh_edge_words(self) -> None:
        e = self.graph.edges[self.edge]
        changed = e != self._original.edges[self.edge]
        note = " (changed from how it was first entered)" if changed else ""
        flat = [v for row in e.numbers for v in (row if isinstance(row, tuple) else (row,))]
        numbers = ", ".join(f"{v:.6g}" for v in flat)
        given, expressed = (e.child, e.parent) if e.convention.direction == "parent-from-child" else (e.parent, e.child)
        self.edge_words.value = words_html(f"{len(flat)} {e.kind} numbers ({numbers}) under "
                                           f"{convention_words(e.convention)}: they take "
                                           f"{point_words(given, expressed)}{note}.")

    def _sync_controls(self) -> None:
        """Every control from the traitlets.  A list's options are set before its value: setting
        options resets a dropdown's value to the first option."""
        self._syncing = True
        try:
            labels = tuple((_edge_label(self.graph, i), i) for i in range(len(self.graph.edges)))
            if tuple(tuple(o) for o in self.edge_choice.options) != labels:
                self.edge_choice.options = labels
            for ctl, value in ((self.from_choice, self.from_frame), (self.into_choice, self.into_frame),
                               (self.root_choice, self.root), (self.palette_choice, self.palette),
                               (self.edge_choice, self.edge), (self.click_choice, self.click_sets)):
                if ctl.value != value:
                    ctl.value = value
            conv = Convention.parse(self.readout_convention)
            self.readout_bar.set_settings({f: getattr(conv, f) for f in self.readout_bar.controls})
        finally:
            self._syncing = False

    # --- drawing ------------------------------------------------------------------------------
    def _scale_for(self, graph: FrameGraph, root: str) -> float:
        """The arrow length: as given, else from the data; kept while the data's own length stays
        within a factor of 3 of it, so reading one edge another way does not rescale the scene,
        while a fix that turns millimetres into metres does."""
        if self._fixed_scale is not None:
            return self._fixed_scale
        place = graph.placement(root)
        n = place.matrices.shape[-1]
        fresh = auto_scale(np.asarray(place.matrices)[:, : n - 1, n - 1])
        if self._scale is None or not 1 / 3 <= fresh / self._scale <= 3:
            self._scale = fresh
        return self._scale

    def _connect_diagram(self) -> None:
        """Click handlers on the diagram's traces, found by name (traces are replaced on each redraw)."""
        for tr in self.diagram.select_traces(selector=dict(name=NODES_TRACE)):
            tr.on_click(self._on_node_click)
        edges = {edge_trace_name(i) for i in range(len(self.graph.edges))} | {EDGE_LABELS_TRACE, FIX_TRACE}
        for tr in self.diagram.select_traces(selector=lambda tr: tr.name in edges):
            tr.on_click(self._on_edge_click)

    def _refresh(self, scene: bool = True, diagram: bool = True) -> None:
        self._sync_controls()
        try:
            look = self.lookup()
            problem = ""
        except FrameGraphError as exc:  # e.g. two frames no chain of edges joins
            look, problem = None, str(exc)
        check = self.graph.check_loops()
        if diagram:
            fresh = graph_diagram(self.graph, lookup=look, check=check, selected_edge=self.edge,
                                  changed=self.changed_edges(), width=self._diagram_width, height=self._height)
            fig = self.diagram
            # whole traces are replaced (the figure is small), so names, labels and colours can
            # never go stale; the click handlers go onto the new traces by name
            fig.data = ()
            fig.add_traces(list(fresh.data))
            with fig.batch_update():
                fig.layout.annotations = fresh.layout.annotations
                fig.layout.margin = fresh.layout.margin
                fig.layout.xaxis.range = fresh.layout.xaxis.range
                fig.layout.yaxis.range = fresh.layout.yaxis.range
            self._connect_diagram()
        if scene:
            fresh = graph_figure(self.graph, root=self.root, lookup=look, palette=self.palette, height=self._height,
                                 width=self._width, scale=self._scale_for(self.graph, self.root),
                                 view=None if self.graph.planar else self._view)
            fig = self.figure
            fig.data = ()
            fig.add_traces(list(fresh.data))
            with fig.batch_update():
                fig.layout.title.text = fresh.layout.title.text
                if self.graph.planar:
                    fig.layout.xaxis.range = fresh.layout.xaxis.range
                    fig.layout.yaxis.range = fresh.layout.yaxis.range
                    fig.layout.xaxis.title.text = fresh.layout.xaxis.title.text
                    fig.layout.yaxis.title.text = fresh.layout.yaxis.title.text
                else:
                    for ax in ("xaxis", "yaxis", "zaxis"):
                        fig.layout.scene[ax].range = fresh.layout.scene[ax].range
                        fig.layout.scene[ax].title.text = fresh.layout.scene[ax].title.text
            conv = Convention.parse(self.readout_convention)
            if look is not None:
                self.readouts.value = readout_html(look.readout(conv), look)
            else:
                self.readouts.value = words_html(f"No answer: {problem}")
            self.loops_html.value = loop_check_html(check, self.graph)
        self._refresh_edge_words()
