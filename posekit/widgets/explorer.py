"""The explorer: a slider per angle and per translation, every convention toggle, a live 3D frame.

State lives in traitlets only (``angles``, ``translation``, ``convention``, ``keep``,
``show_steps``, ``show_body``, ``palette``); the rotation shown is always recomputed
from them by posekit's core, never stored a second time.
"""

from __future__ import annotations

import asyncio
import math
from dataclasses import dataclass
from typing import ClassVar

import ipywidgets as w
import numpy as np
import traitlets as t

from ..core.convention import Convention
from ..core.errors import PoseInputError
from ..core.reading import as_convention, read_rotation, write_rotation
from ..analysis.singularity import pole_readout
from ..core.steps import euler_steps
from ..core.transforms import Pose, make_transform, write_transform
from ..view.frames import (DEFAULT_PALETTE, FRAME_UIDS, auto_scale, body_points, frame_figure, frame_points,
                           frame_key_html, frame_trace, palette_colours)
from ..view.readouts import (STYLE_SHEET, format_number, gauge_html, matrix_html, numbers_html, panel_html, row_html,
                             words_html)
from ..io.settings import Bool, Choice, ConventionText, Floats, WidgetSettings, register_settings, setting
from ..io.state import NamedPose, State, environment_versions
from .controls import ConventionBar, FigureSlot, KeyboardScope, NumberRow
from .sharing import SharePanel, python_call

__all__ = ["Explorer", "ExplorerSettings"]

_MOVING = (FRAME_UIDS["frame"], FRAME_UIDS["body"], FRAME_UIDS["step1"], FRAME_UIDS["step2"])
_ARROWS = (FRAME_UIDS["parent"], FRAME_UIDS["frame"], FRAME_UIDS["step1"], FRAME_UIDS["step2"])
EXTENT = 1.9  # scene range while the origin stays within the sliders' +-1 m: no rescale while a slider moves
SLIDER_REACH = 1.0  # the position sliders' range, metres
FIGURE_WIDTH = 500  # pixels; beside the 450-pixel controls, or below them in a narrow page
#: Seconds the readout panels trail the plot inside a running kernel: the plot is the live
#: feedback of a slider and reaches the page first; the numbers follow (at most this often).
READOUT_DELAY = 0.06
UNIT = "m"


def _scene_size(origin) -> tuple[float, float]:
    """(arrow length, scene half-range) for an origin: fixed within the sliders' reach, else fitted to it."""
    reach = float(np.max(np.abs(origin)))
    if reach <= SLIDER_REACH:
        return 1.0, EXTENT
    scale = max(1.0, auto_scale(origin))
    need = reach + 1.1 * scale
    step = 10.0 ** np.floor(np.log10(need)) / 2.0
    return scale, float(np.ceil(need / step) * step)


def _ranges(conv: Convention):
    if conv.degrees:
        return -180.0, 180.0, 1.0
    return -math.pi, math.pi, 0.01


@register_settings
@dataclass(frozen=True)
class ExplorerSettings(WidgetSettings):
    """What an :class:`Explorer` saves in a state file: the keyword arguments that rebuild it."""

    kind: ClassVar[str] = "explorer"
    angles: tuple = setting(Floats(3))
    translation: tuple = setting(Floats(3))
    convention: str = setting(ConventionText())
    keep: str = setting(Choice("numbers", "orientation"))
    show_steps: bool = setting(Bool())
    show_body: bool = setting(Bool())
    palette: str = setting(Choice("standard", "colour-blind"))


class Explorer(w.VBox):
    """Turn a frame with one slider per Euler angle under any convention and watch it move.

    >>> ex = Explorer(angles=(30, -10, 0), convention="sequence=z-y-x unit=degrees")
    >>> [round(float(v), 4) for v in ex.to_pose().rotation @ [1, 0, 0]]   # the nose: yawed 30 left, 10 up
    [0.8529, 0.4924, 0.1736]
    """

    angles = t.Tuple(t.Float(), t.Float(), t.Float(), default_value=(0.0, 0.0, 0.0))
    translation = t.Tuple(t.Float(), t.Float(), t.Float(), default_value=(0.0, 0.0, 0.0))
    convention = t.Unicode("sequence=z-y-x unit=degrees")
    keep = t.Unicode("numbers")
    show_steps = t.Bool(True)
    show_body = t.Bool(True)
    palette = t.Unicode(DEFAULT_PALETTE)

    def __init__(self, angles=(0.0, 0.0, 0.0), translation=(0.0, 0.0, 0.0),
                 convention="sequence=z-y-x unit=degrees", keep: str = "numbers", show_steps: bool = True,
                 show_body: bool = True, palette: str = DEFAULT_PALETTE):
        conv = as_convention(convention)
        palette_colours(palette)  # unknown names raise, naming the known ones
        if keep not in ("numbers", "orientation"):
            raise PoseInputError(f"keep: got {keep!r}; accepted: 'numbers' (same numbers, new meaning) or "
                                 "'orientation' (same orientation, new numbers)")
        a = read_rotation(angles, "euler", conv)  # validates the numbers before anything is built
        del a
        self._syncing = False
        self._synced_convention = None  # the convention the controls last showed
        self._readout_args = None  # what the readouts will show next
        self._readout_timer = None  # a pending readout update (inside a running kernel)
        lo, hi, step = _ranges(conv)
        angle_values = [float(v) for v in np.asarray(angles, dtype=float)]
        self.angle_rows = [NumberRow(self._angle_label(conv, i), angle_values[i], lo, hi, step, f"angle-{i + 1}")
                           for i in range(3)]
        tr = [float(v) for v in np.asarray(translation, dtype=float)]
        self.translation_rows = [NumberRow(f"along parent {c} <span style='color:#888'>{UNIT}</span>", tr[i],
                                           -SLIDER_REACH, SLIDER_REACH, 0.05, f"move-{c}")
                                 for i, c in enumerate("xyz")]
        self.bar = ConventionBar(initial={f: getattr(conv, f) for f in conv.__dataclass_fields__})
        self.keep_choice = w.RadioButtons(options=[("keep the numbers (see what they mean now)", "numbers"),
                                                   ("keep the orientation (see the new numbers)", "orientation")],
                                          value=keep, layout=w.Layout(width="auto"))
        self.keep_choice.add_class("posekit-keep")
        self.steps_box = w.Checkbox(value=show_steps, description="show the frame after each turn", indent=False)
        self.body_box = w.Checkbox(value=show_body, description="show the body (nose +x, fin +z)",
                                   indent=False)
        self.palette_choice = w.ToggleButtons(options=[("colour-blind safe", "colour-blind"),
                                                       ("standard colours", "standard")], value=palette,
                                              style=w.ToggleButtonsStyle(button_width="auto"))
        self.palette_choice.add_class("posekit-palette")
        self.words = w.HTML()
        self.readouts = w.HTML(layout=w.Layout(width="100%"))
        self.readouts.add_class("posekit-readouts")

        rot = read_rotation(angle_values, "euler", conv)
        steps = euler_steps(angle_values, conv).frames
        self._size = _scene_size(tr)
        fig = frame_figure(rot, tr, steps=steps, body=True, palette=palette, scale=self._size[0],
                           extent=self._size[1], height=480, unit=UNIT, legend=False)
        fig.update_layout(width=FIGURE_WIDTH)  # a fixed size: the page draws it whole, never clipped
        self._shown = {"body": True, "steps": True}  # as frame_figure draws them; _refresh applies the flags
        self.plot = FigureSlot(fig, classes=("posekit-figure",))
        self.key = w.HTML(frame_key_html(palette), layout=w.Layout(width=f"{FIGURE_WIDTH}px"))
        self.key.add_class("posekit-frame-key")

        left = w.VBox([w.HTML("<b>Angles</b> (as entered)")] + self.angle_rows +
                      [w.HTML("<b>Position</b> of the child origin, parent coordinates")] + self.translation_rows +
                      [w.HTML("<b>When a setting changes</b>"), self.keep_choice, self.steps_box, self.body_box,
                       self.palette_choice],
                      layout=w.Layout(width="450px", min_width="450px", padding="0 8px 0 0"))
        top = w.VBox([w.HTML("<b>Convention</b> — every choice that gives the numbers their meaning"), self.bar,
                      self.words])
        super().__init__([w.HTML(STYLE_SHEET), KeyboardScope(scope=".posekit-explorer"), top,
                          w.HBox([left, w.VBox([self.plot, self.key])],
                                 layout=w.Layout(width="100%", flex_flow="row wrap")),
                          self.readouts,
                          SharePanel(self, "explorer-state")])
        self.add_class("posekit-explorer")

        with self.hold_trait_notifications():
            self.convention = conv.to_text()
            self.angles = tuple(angle_values)
            self.translation = tuple(tr)
            self.keep = keep
            self.show_steps = show_steps
            self.show_body = show_body
            self.palette = palette

        for i, row in enumerate(self.angle_rows):
            row.observe_slider(lambda ch, i=i: self._set_angle(i, ch["new"], from_slider=True))
            row.observe_box(lambda v, i=i: self._set_angle(i, v, from_slider=False))
        for i, row in enumerate(self.translation_rows):
            row.observe_slider(lambda ch, i=i: self._set_move(i, ch["new"], True))
            row.observe_box(lambda v, i=i: self._set_move(i, v, False))
        for ctl in self.bar.controls.values():
            ctl.observe(self._on_setting, "value")
        self.keep_choice.observe(lambda ch: setattr(self, "keep", ch["new"]), "value")
        self.steps_box.observe(lambda ch: setattr(self, "show_steps", ch["new"]), "value")
        self.body_box.observe(lambda ch: setattr(self, "show_body", ch["new"]), "value")
        self.palette_choice.observe(lambda ch: setattr(self, "palette", ch["new"]), "value")
        self.observe(self._on_state, ["angles", "translation", "convention", "show_steps", "show_body"])
        self.observe(self._on_palette, ["palette"])
        self._refresh()

    @property
    def figure(self):
        """The live plotly figure widget (a retry in its :class:`FigureSlot` replaces it)."""
        return self.plot.figure

    # --- building from and exporting to posekit values ---------------------------------
    @classmethod
    def from_pose(cls, pose, convention="sequence=z-y-x unit=degrees", **options) -> "Explorer":
        """Build from a :class:`~posekit.Pose`, a 4x4 transform or a 3x3 rotation."""
        conv = as_convention(convention)
        m = pose.matrix if isinstance(pose, Pose) else np.asarray(pose, dtype=float)
        if m.shape == (3, 3):
            m = make_transform(m, np.zeros(3))
        pose = Pose(m)
        angles = write_rotation(pose.rotation, "euler", conv)
        return cls(angles=tuple(angles), translation=tuple(pose.translation), convention=conv, **options)

    def convention_value(self) -> Convention:
        return Convention.parse(self.convention)

    def rotation(self) -> np.ndarray:
        """The canonical rotation ``(3, 3)`` the controls describe."""
        return read_rotation(self.angles, "euler", self.convention_value())

    def to_pose(self) -> Pose:
        """The canonical parent-from-child :class:`~posekit.Pose` the controls describe."""
        return Pose(make_transform(self.rotation(), np.asarray(self.translation, dtype=float)))

    # --- sharing ------------------------------------------------------------------------
    def _settings(self) -> dict:
        return ExplorerSettings(angles=tuple(float(v) for v in self.angles),
                                translation=tuple(float(v) for v in self.translation),
                                convention=self.convention, keep=self.keep, show_steps=bool(self.show_steps),
                                show_body=bool(self.show_body), palette=self.palette).as_dict()

    def to_state(self, notes: str = "") -> State:
        """Everything this explorer shows, as a posekit :class:`~posekit.io.state.State`."""
        pose = NamedPose("explorer pose", self.to_pose().matrix, self.convention_value())
        return State("explorer", self._settings(), (pose,), (), notes)

    @classmethod
    def from_state(cls, state: State) -> "Explorer":
        """Rebuild an explorer from a state (e.g. ``load_state("bug.json")``).

        The settings are checked with :class:`ExplorerSettings` first, whatever checked them
        before; a bad one raises :class:`~posekit.io.state.StateFileError` naming ``settings.<field>``.
        """
        return cls(**ExplorerSettings.from_state(state).as_dict())

    def code_cell(self) -> str:
        """A notebook cell that rebuilds exactly this explorer."""
        return python_call("posekit.widgets", "Explorer", self._settings(), environment_versions())

    # --- observers ----------------------------------------------------------------------
    @staticmethod
    def _angle_label(conv: Convention, i: int) -> str:
        axis = conv.axes_letters[i]
        where = "new " if conv.intrinsic and i else ("fixed " if not conv.intrinsic else "")
        unit = "deg" if conv.degrees else "rad"
        return f"turn {i + 1} about {where}{axis} <span style='color:#888'>{unit}</span>"

    def _set_angle(self, i: int, value: float, from_slider: bool) -> None:
        if self._syncing:
            return
        a = list(self.angles)
        if from_slider and self._is_snap(self.angle_rows[i].slider, a[i], value):
            return
        a[i] = float(value)
        self.angles = tuple(a)

    def _set_move(self, i: int, value: float, from_slider: bool) -> None:
        if self._syncing:
            return
        m = list(self.translation)
        if from_slider and self._is_snap(self.translation_rows[i].slider, m[i], value):
            return
        m[i] = float(value)
        self.translation = tuple(m)

    @staticmethod
    def _is_snap(slider, current: float, value: float) -> bool:
        """True when the page's slider only rounded ``current`` to its step grid or range.

        The page snaps a slider to its step after the kernel sets an off-grid value
        and sends the snapped value back; that echo must not overwrite the exact number.
        """
        clamped = min(max(current, slider.min), slider.max)
        return abs(value - clamped) < 0.5 * slider.step + 1e-12

    def _on_setting(self, change) -> None:
        if self._syncing:
            return
        old = Convention.parse(self.convention)
        new = old.changed(**self.bar.settings())
        if new == old:
            return
        if self.keep == "orientation":
            rot = read_rotation(self.angles, "euler", old)
            angles = tuple(float(v) for v in write_rotation(rot, "euler", new, check=False))
            with self.hold_trait_notifications():
                self.convention = new.to_text()
                self.angles = angles
        else:
            self.convention = new.to_text()

    def _on_palette(self, change) -> None:
        per_point = list(frame_trace(np.eye(3), palette=self.palette).line.color)  # a colour per arrow point
        self.key.value = frame_key_html(self.palette)
        fig = self.figure
        with fig.batch_update():  # plotly's public batched update: the arrows of every frame, found by uid
            for uid in _ARROWS:
                trace = fig.trace(uid)
                trace.line.color = per_point
                trace.marker.color = per_point
                trace.textfont.color = per_point

    def _on_state(self, change) -> None:
        self._refresh()

    # --- drawing ------------------------------------------------------------------------
    def _sync_controls(self, conv: Convention) -> None:
        self._syncing = True
        try:
            if conv != self._synced_convention:  # ranges, labels and the bar change only with the convention
                lo, hi, step = _ranges(conv)
                for i, row in enumerate(self.angle_rows):
                    row.set_range(lo, hi, step, min(max(self.angles[i], lo), hi))
                    row.label.value = self._angle_label(conv, i)
                self.bar.set_settings({f: getattr(conv, f) for f in conv.__dataclass_fields__})
                self.words.value = words_html("In words: " + conv.describe() + ".")
                self._synced_convention = conv
            for i, row in enumerate(self.angle_rows):
                row.show(self.angles[i])
            for i, row in enumerate(self.translation_rows):
                row.show(self.translation[i])
        finally:
            self._syncing = False

    def _refresh(self) -> None:
        conv = self.convention_value()
        rot = read_rotation(self.angles, "euler", conv)
        origin = np.asarray(self.translation, dtype=float)
        steps = euler_steps(self.angles, conv)
        size = _scene_size(origin)
        if size != self._size:
            self._resize(size)
        scale = size[0]
        # rot and the steps come straight from the core: no second check of the rotations
        fx, fy, fz = frame_points(rot, origin, scale, check=False)
        body = body_points(rot, origin, scale, check=False)
        data = {FRAME_UIDS["frame"]: (fx, fy, fz), FRAME_UIDS["body"]: (body[:, 0].tolist(), body[:, 1].tolist(),
                                                                        body[:, 2].tolist())}
        for k in (1, 2):
            data[FRAME_UIDS[f"step{k}"]] = frame_points(steps.frames[k], origin, 0.8 * scale, check=False)
        # the plot first (one public plotly restyle, traces found by uid), then the controls and readouts
        self.figure.restyle({uid: {"x": p[0], "y": p[1], "z": p[2]} for uid, p in data.items()})
        shown = {"body": bool(self.show_body), "steps": bool(self.show_steps)}
        if shown != self._shown:
            self._shown = shown
            self.figure.restyle({FRAME_UIDS["body"]: {"visible": shown["body"]},
                                 FRAME_UIDS["step1"]: {"visible": shown["steps"]},
                                 FRAME_UIDS["step2"]: {"visible": shown["steps"]}})
        self._sync_controls(conv)
        self._readout_args = (conv, rot, origin, steps)
        try:
            loop = asyncio.get_running_loop()  # a kernel answering widget messages runs one
        except RuntimeError:
            loop = None
        if loop is None:
            self.flush_readouts()
        elif self._readout_timer is None:
            self._readout_timer = loop.call_later(READOUT_DELAY, self.flush_readouts)

    def flush_readouts(self) -> None:
        """Bring the readout panels up to date now (a pending delayed update is done here)."""
        if self._readout_timer is not None:
            self._readout_timer.cancel()
            self._readout_timer = None
        if self._readout_args is None:
            return
        html = self._readout_html(*self._readout_args)
        self._readout_args = None
        if html != self.readouts.value:
            self.readouts.value = html

    def _resize(self, size) -> None:
        """New arrow length and scene range (an origin beyond the sliders' reach, or back within it)."""
        self._size = size
        scale, extent = size
        fig = self.figure
        px, py, pz = frame_points(np.eye(3), None, scale, check=False)
        with fig.batch_update():
            parent = fig.trace(FRAME_UIDS["parent"])
            parent.x, parent.y, parent.z = px, py, pz
            for axis in (fig.layout.scene.xaxis, fig.layout.scene.yaxis, fig.layout.scene.zaxis):
                axis.range = [-extent, extent]

    def _readout_html(self, conv, rot, origin, steps) -> str:
        unit = "deg" if conv.degrees else "rad"
        transform = make_transform(rot, origin)
        flat = write_transform(transform, "matrix", conv, flat=True)
        written = flat.reshape(4, 4) if conv.layout == "row-major" else flat.reshape(4, 4).T
        maps = "child → parent" if conv.direction == "parent-from-child" else "parent → child"
        mat = panel_html(f"Homogeneous matrix as written ({maps})",
                         matrix_html(written) + words_html(f"flat, {conv.layout}: " +
                                                           ", ".join(format_number(v, 6, trim=True)
                                                                     for v in flat.tolist())))
        q = write_rotation(rot, "quaternion", conv, check=False)
        labels = ("w", "x", "y", "z") if conv.scalar == "first" else ("x", "y", "z", "w")
        quat = panel_html(f"Quaternion ({conv.algebra.upper() if conv.algebra == 'jpl' else 'Hamilton'}, "
                          f"scalar {conv.scalar})", numbers_html(labels, q, 6) +
                          words_html("−q names the same rotation"))
        solutions, gauge = pole_readout(rot, conv, check=False)  # one readback serves both
        back = solutions.angles  # the readback, exactly as write_rotation writes it
        same = max(abs(b - a) for b, a in zip(back.tolist(), self.angles)) <= 1e-9
        note = "read-back equals the entry" if same else "read-back differs from the entry, same orientation"
        letters = conv.axes_letters
        euler = panel_html(f"Euler angles ({unit})",
                           numbers_html([f"{i + 1}: {letters[i]}" for i in range(3)], self.angles, 4)
                           + numbers_html(["read back 1", "2", "3"], back, 4) + words_html(note))
        d = float(solutions.distance)
        if bool(solutions.at_pole):
            lock = "GIMBAL LOCK. " + solutions.words()
        elif d * (1.0 if conv.degrees else 180.0 / math.pi) < 10.0:
            lock = ("near the pole: small changes of the orientation move the outer angles a lot. "
                    + solutions.words())
        else:
            lock = "far from the pole"
        gauge_panel = panel_html("Gimbal-lock gauge", gauge_html(
            float(gauge.gauge), f"smallest singular value of the angle-rate Jacobian "
            f"(pole {format_number(d, 4, trim=True)} {unit} away)", note=lock))
        step_words = panel_html("Turn by turn", words_html("; ".join(steps.words)))
        return row_html(mat, quat, euler, gauge_panel, step_words)
