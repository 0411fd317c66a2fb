"""The planar explorer: x, y and heading of an SE(2) frame with its 3x3 homogeneous matrix.

State lives in traitlets (``x``, ``y``, ``heading``, ``unit``, ``direction``); the
matrix is recomputed by posekit's core on every change.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import ipywidgets as w
import numpy as np
import traitlets as t

from ..core.errors import PoseInputError
from ..core.transforms import checked_transform, invert_transform, make_planar, planar_parts
from ..view.frames import DEFAULT_PALETTE, FRAME_UIDS, planar_figure
from ..view.readouts import STYLE_SHEET, matrix_html, panel_html, words_html
from ..io.settings import Choice, Float, WidgetSettings, register_settings, setting
from ..io.state import NamedPose, State, environment_versions
from .controls import FigureSlot, KeyboardScope, NumberRow
from .sharing import SharePanel, python_call

__all__ = ["PlanarExplorer", "PlanarSettings"]

_FRAME = FRAME_UIDS["frame"]
EXTENT = 4.2  # fixed plane range (the sliders reach +-3 m)
UNIT = "m"


@register_settings
@dataclass(frozen=True)
class PlanarSettings(WidgetSettings):
    """What a :class:`PlanarExplorer` saves in a state file: the keyword arguments that rebuild it."""

    kind: ClassVar[str] = "planar"
    x: float = setting(Float())
    y: float = setting(Float())
    heading: float = setting(Float())
    unit: str = setting(Choice("degrees", "radians"))
    direction: str = setting(Choice("parent-from-child", "child-from-parent"))


class PlanarExplorer(w.VBox):
    """Slide x, y and the heading of a frame in the plane; read its 3x3 transform both ways."""

    x = t.Float(0.0)
    y = t.Float(0.0)
    heading = t.Float(0.0)
    unit = t.Unicode("degrees")
    direction = t.Unicode("parent-from-child")

    def __init__(self, x: float = 0.0, y: float = 0.0, heading: float = 0.0, unit: str = "degrees",
                 direction: str = "parent-from-child"):
        if unit not in ("degrees", "radians"):
            raise PoseInputError(f"unit: got {unit!r}; accepted: 'degrees', 'radians'")
        if direction not in ("parent-from-child", "child-from-parent"):
            raise PoseInputError(f"direction: got {direction!r}; accepted: 'parent-from-child', 'child-from-parent'")
        make_planar(x, y, heading, degrees=unit == "degrees")  # validates the numbers
        self._syncing = False
        lim = 180.0 if unit == "degrees" else math.pi
        self.rows = {
            "x": NumberRow(f"x <span style='color:#888'>parent, {UNIT}</span>", float(x), -3.0, 3.0, 0.05,
                           "planar-x"),
            "y": NumberRow(f"y <span style='color:#888'>parent, {UNIT}</span>", float(y), -3.0, 3.0, 0.05,
                           "planar-y"),
            "heading": NumberRow(f"heading <span style='color:#888'>{'deg' if unit == 'degrees' else 'rad'}</span>",
                                 float(heading), -lim, lim, 1.0 if unit == "degrees" else 0.01, "planar-heading"),
        }
        self.unit_choice = w.ToggleButtons(options=[("degrees", "degrees"), ("radians", "radians")], value=unit,
                                           style=w.ToggleButtonsStyle(button_width="auto"))
        self.direction_choice = w.ToggleButtons(options=[("matrix maps child \u2192 parent", "parent-from-child"),
                                                         ("matrix maps parent \u2192 child", "child-from-parent")],
                                                value=direction, style=w.ToggleButtonsStyle(button_width="auto"))
        self.readouts = w.HTML()
        self.readouts.add_class("posekit-planar-readouts")
        self.plot = FigureSlot(planar_figure(make_planar(x, y, heading, degrees=unit == "degrees"),
                                             palette=DEFAULT_PALETTE, extent=EXTENT, height=430, unit=UNIT)
                               .update_layout(width=450),
                               classes=("posekit-planar-figure",))
        left = w.VBox([w.HTML("<b>Frame in the plane</b>")] + list(self.rows.values()) +
                      [w.HTML("<b>Heading unit</b>"), self.unit_choice, w.HTML("<b>Matrix direction</b>"),
                       self.direction_choice, self.readouts], layout=w.Layout(width="470px", min_width="470px"))
        super().__init__([w.HTML(STYLE_SHEET), KeyboardScope(scope=".posekit-planar"), w.HBox([left, self.plot], layout=w.Layout(width="100%", flex_flow="row wrap")),
                          SharePanel(self, "planar-state")])
        self.add_class("posekit-planar")
        with self.hold_trait_notifications():
            self.x, self.y, self.heading, self.unit, self.direction = float(x), float(y), float(heading), unit, direction
        for name, row in self.rows.items():
            row.observe_slider(lambda ch, n=name: self._set(n, ch["new"], True))
            row.observe_box(lambda v, n=name: self._set(n, v, False))
        self.unit_choice.observe(self._on_unit, "value")
        self.direction_choice.observe(lambda ch: setattr(self, "direction", ch["new"]), "value")
        self.observe(lambda ch: self._refresh(), ["x", "y", "heading", "direction"])
        self._refresh()

    @property
    def figure(self):
        """The live plotly figure widget (a retry in its :class:`FigureSlot` replaces it)."""
        return self.plot.figure

    @classmethod
    def from_transform(cls, transform, **options) -> "PlanarExplorer":
        """Build from a canonical (parent-from-child) SE(2) matrix ``(3, 3)``."""
        px, py, a = planar_parts(checked_transform(transform, size=3), degrees=options.get("unit", "degrees") == "degrees")
        return cls(x=float(px), y=float(py), heading=float(a), **options)

    def transform(self) -> np.ndarray:
        """The canonical parent-from-child SE(2) matrix ``(3, 3)``."""
        return make_planar(self.x, self.y, self.heading, degrees=self.unit == "degrees")

    def _settings(self) -> dict:
        return PlanarSettings(x=float(self.x), y=float(self.y), heading=float(self.heading), unit=self.unit,
                              direction=self.direction).as_dict()

    def to_state(self, notes: str = "") -> State:
        """The frame as a posekit State (its SE(2) pose stored as the equivalent 4x4)."""
        m = self.transform()
        full = np.eye(4)
        full[:2, :2] = m[:2, :2]
        full[:2, 3] = m[:2, 2]
        return State("planar", self._settings(), (NamedPose("planar pose", full),), (), notes)

    @classmethod
    def from_state(cls, state: State) -> "PlanarExplorer":
        """Rebuild from a state; its settings are checked with :class:`PlanarSettings` first."""
        return cls(**PlanarSettings.from_state(state).as_dict())

    def code_cell(self) -> str:
        """A notebook cell that rebuilds exactly this planar explorer."""
        return python_call("posekit.widgets", "PlanarExplorer", self._settings(), environment_versions())

    def _set(self, name: str, value: float, from_slider: bool) -> None:
        if self._syncing:
            return
        slider = self.rows[name].slider
        current = getattr(self, name)
        if from_slider and abs(value - min(max(current, slider.min), slider.max)) < 0.5 * slider.step + 1e-12:
            return  # the page only snapped the slider to its step grid
        setattr(self, name, float(value))

    def _on_unit(self, change) -> None:
        # the heading keeps its meaning: the number is converted, not reinterpreted
        factor = 180.0 / math.pi if change["new"] == "degrees" else math.pi / 180.0
        lim = 180.0 if change["new"] == "degrees" else math.pi
        row = self.rows["heading"]
        with self.hold_trait_notifications():
            self.unit = change["new"]
            self.heading = self.heading * factor
        self._syncing = True
        try:
            row.set_range(-lim, lim, 1.0 if change["new"] == "degrees" else 0.01, min(max(self.heading, -lim), lim))
            row.label.value = f"heading <span style='color:#888'>{'deg' if change['new'] == 'degrees' else 'rad'}</span>"
        finally:
            self._syncing = False
        self._refresh()

    def _refresh(self) -> None:
        self._syncing = True
        try:
            for name, row in self.rows.items():
                row.show(getattr(self, name))
        finally:
            self._syncing = False
        m = self.transform()
        drawn = planar_figure(m, extent=EXTENT, reference=False).data[0]  # the frame's arrows, as the figure draws them
        self.figure.restyle({_FRAME: {"x": list(drawn.x), "y": list(drawn.y)}})
        shown = m if self.direction == "parent-from-child" else invert_transform(m)
        maps = "child \u2192 parent" if self.direction == "parent-from-child" else "parent \u2192 child"
        self.readouts.value = panel_html(f"Homogeneous matrix ({maps})", matrix_html(shown) + words_html(
            "points carry a homogeneous 1 (moved and turned), directions a 0 (only turned)"))
