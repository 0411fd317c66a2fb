"""Side by side through the pole: Euler, matrix and quaternion of one orientation along a sweep.

One Euler angle is swept through a range (centred on the pole by default) with the
other two held; the sweep plot shows the Euler readback jumping where the quaternion
(sign kept continuous) and the matrix move smoothly, and a small plane shows the line
of equivalent triplets at the pole.  A "position along the sweep" slider picks one
step; three readout panels show that step's Euler angles (as read back), matrix and
quaternion, with the lock gauge and the solutions in words.

Glue only.  State lives in traitlets (``convention``, ``swept``, ``angles``,
``sweep_range``, ``steps``, ``position``).  The sweep and its Euler solutions are a
derived cache, recomputed by :func:`posekit.analysis.sweep_one_angle` and
:func:`posekit.analysis.euler_solutions` whenever a sweep-defining trait changes;
moving the position only indexes that cache and patches a few small traces.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import ipywidgets as w
import numpy as np
import traitlets as t

from ..analysis.singularity import EulerSolutions, euler_solutions
from ..analysis.sweeps import Sweep, sweep_one_angle
from ..core.checks import as_numbers, checked_matrix
from ..core.convention import Convention
from ..core.errors import PoseInputError
from ..core.reading import as_convention, read_rotation, write_rotation
from ..view.readouts import STYLE_SHEET, error_html, format_number, gauge_html, matrix_html, numbers_html, panel_html, \
    words_html
from ..view.sweep import (SWEEP_TRACES, angle_name, apply_patch, family_data, family_figure, step_marks, sweep_figure,
                          sweep_patch)
from ..io.settings import ConventionText, Floats, IntRange, WidgetSettings, fail, register_settings, setting
from ..io.state import NamedPose, State, environment_versions
from ..core.transforms import make_transform
from .controls import ConventionBar, FigureSlot, KeyboardScope, NumberBox, NumberRow
from .sharing import SharePanel, python_call

__all__ = ["SingularityView", "StepReadout", "SweepSetupError", "BAR_FIELDS", "MAX_STEPS", "SingularitySettings"]

#: The convention fields the view offers (the others are kept as given).
BAR_FIELDS = ("sequence", "axes", "unit", "wrap", "scalar", "algebra")
#: Most steps a sweep may have (keeps every update small).
MAX_STEPS = 2001
#: Width of the sweep figure, pixels.
SWEEP_WIDTH = 760
#: Default half-width of the sweep range around the pole, in degrees.
DEFAULT_HALF_WIDTH_DEGREES = 30.0


_LABEL_PATHS = ("yaxis.title.text", "yaxis.tickvals", "yaxis.ticktext", "xaxis4.title.text")
_LINE_TRACES = (*SWEEP_TRACES["euler"], *SWEEP_TRACES["quaternion"], *SWEEP_TRACES["matrix"], SWEEP_TRACES["gauge"])


class SweepSetupError(PoseInputError):
    """The sweep asked of the side-by-side view cannot be built (angle index, range, steps, position)."""


@dataclass(frozen=True)
class StepReadout:
    """What the readout panels show at one step (angles in the convention's unit).

    ``euler (3,)`` the readback, ``entered (3,)`` the triplet the sweep set,
    ``matrix (3, 3)`` as written, ``quaternion (4,)`` as written (scalar >= 0),
    ``quaternion_along (4,)`` the sign-continuous one of the sweep, ``gauge`` the lock
    gauge, ``words`` the Euler solutions in words.
    """

    step: int
    parameter: float
    entered: np.ndarray
    euler: np.ndarray
    matrix: np.ndarray
    quaternion: np.ndarray
    quaternion_along: np.ndarray
    gauge: float
    euler_jump: bool
    words: str


def _unit_scale(conv: Convention) -> float:
    return 1.0 if conv.degrees else math.pi / 180.0


def _check_swept(swept) -> int:
    if isinstance(swept, bool) or not isinstance(swept, (int, np.integer)) or not 0 <= swept <= 2:
        raise SweepSetupError(f"swept: got {swept!r}; expected 0, 1 or 2 (which Euler angle to sweep: "
                              "first, middle, third)")
    return int(swept)


def _check_steps(steps) -> int:
    if isinstance(steps, bool) or not isinstance(steps, (int, np.integer)) or not 2 <= steps <= MAX_STEPS:
        raise SweepSetupError(f"steps: got {steps!r}; expected an integer from 2 to {MAX_STEPS}")
    return int(steps)


def _check_range(sweep_range, conv: Convention) -> tuple[float, float]:
    try:
        r = as_numbers(sweep_range, "sweep range", (2,))
    except PoseInputError as exc:
        raise SweepSetupError(f"sweep range: {exc}; expected two finite numbers (from, to) in "
                              f"{conv.unit}") from None
    if r.ndim != 1 or r[0] == r[1]:
        raise SweepSetupError(f"sweep range: got {sweep_range!r}; expected two different finite numbers "
                              f"(from, to) in {conv.unit}")
    return float(r[0]), float(r[1])


def _check_position(position, steps: int) -> int:
    if isinstance(position, bool) or not isinstance(position, (int, np.integer)) or not 0 <= position < steps:
        raise SweepSetupError(f"position: got {position!r}; expected a step index from 0 to {steps - 1}")
    return int(position)


def _is_snap(slider, current: float, value: float) -> bool:
    """True when the page only rounded ``current`` to the slider's step grid or range (its echo)."""
    clamped = min(max(current, slider.min), slider.max)
    return abs(value - clamped) < 0.5 * slider.step + 1e-12


def _pole_centre(angles, conv: Convention) -> float:
    """Middle angle of the pole nearest the orientation ``angles`` (asked of the analysis layer)."""
    return float(euler_solutions(read_rotation(angles, "euler", conv), conv).pole_middle)


def _default_range(angles, swept: int, conv: Convention) -> tuple[float, float]:
    half = DEFAULT_HALF_WIDTH_DEGREES * _unit_scale(conv)
    if swept == 1:
        c = _pole_centre(angles, conv)
        return c - half, c + half
    turn = 180.0 * _unit_scale(conv)
    return float(angles[swept]) - turn, float(angles[swept]) + turn


@register_settings
@dataclass(frozen=True)
class SingularitySettings(WidgetSettings):
    """What a :class:`SingularityView` saves in a state file: the keyword arguments that rebuild it."""

    kind: ClassVar[str] = "singularity"
    angles: tuple = setting(Floats(3))
    swept: int = setting(IntRange(0, 2))
    sweep_range: tuple = setting(Floats(2))
    steps: int = setting(IntRange(2, MAX_STEPS))
    position: int = setting(IntRange(0, MAX_STEPS - 1))
    convention: str = setting(ConventionText())

    def check_together(self) -> None:
        if self.sweep_range[0] == self.sweep_range[1]:
            raise fail("settings.sweep_range", f"got two equal ends {list(self.sweep_range)}",
                       "two different finite numbers (from, to)")
        if self.position >= self.steps:
            raise fail("settings.position", f"got {self.position} with {self.steps} steps",
                       f"a step index from 0 to {self.steps - 1}")


class SingularityView(w.VBox):
    """Sweep one Euler angle through the pole and compare Euler, matrix and quaternion side by side.

    ``angles`` the held triplet (its ``swept`` entry is replaced along the sweep),
    ``swept`` 0, 1 or 2, ``sweep_range`` (from, to) in the convention's unit (default:
    30 degrees either side of the nearest pole for the middle angle, a full turn for an
    outer one), ``steps`` 2..2001, ``position`` the current step index (default 0).

    >>> view = SingularityView(angles=(30, 0, 20), swept=1, convention="sequence=z-y-x unit=degrees")
    >>> view.sweep_range, view.steps
    ((60.0, 120.0), 61)
    >>> view.position = 30   # pitch 90 degrees: the readback is the pole's documented member
    >>> view.current_readout().euler.round(9).tolist()
    [10.0, 90.0, 0.0]
    """

    convention = t.Unicode("sequence=z-y-x unit=degrees")
    swept = t.Int(1)
    angles = t.Tuple(t.Float(), t.Float(), t.Float(), default_value=(0.0, 0.0, 0.0))
    sweep_range = t.Tuple(t.Float(), t.Float(), default_value=(60.0, 120.0))
    steps = t.Int(61)
    position = t.Int(0)

    def __init__(self, angles=(30.0, 0.0, 20.0), swept: int = 1, sweep_range=None, steps: int = 61,
                 position: int | None = None, convention="sequence=z-y-x unit=degrees"):
        conv = as_convention(convention)
        swept = _check_swept(swept)
        steps = _check_steps(steps)
        read_rotation(angles, "euler", conv)  # validates the numbers before anything is built
        held = tuple(float(v) for v in as_numbers(angles, "Euler angles", (3,)))
        rng = _default_range(held, swept, conv) if sweep_range is None else _check_range(sweep_range, conv)
        pos = 0 if position is None else _check_position(position, steps)
        self._syncing = False
        self._busy = False

        # --- controls ---
        self.bar = ConventionBar(fields=BAR_FIELDS, initial={f: getattr(conv, f) for f in BAR_FIELDS})
        self.swept_choice = w.Dropdown(options=self._swept_options(conv), value=swept,
                                       layout=w.Layout(width="250px"))
        self.swept_choice.add_class("posekit-swept")
        self.range_from = NumberBox(rng[0], layout=w.Layout(width="150px"))
        self.range_to = NumberBox(rng[1], layout=w.Layout(width="150px"))
        self.range_from.add_class("posekit-range-from")
        self.range_to.add_class("posekit-range-to")
        self.steps_box = w.BoundedIntText(value=steps, min=2, max=MAX_STEPS, layout=w.Layout(width="76px"))
        self.steps_box.add_class("posekit-steps")
        self.centre_button = w.Button(description="centre on the pole",
                                      layout=w.Layout(width="auto", margin="0 0 0 16px"),
                                      tooltip="sweep the same width, centred on the pole nearest the range")
        self.centre_button.add_class("posekit-centre")
        self.angle_rows = self._new_rows(conv, held)
        self.position_slider = w.IntSlider(value=pos, min=0, max=steps - 1, step=1, readout=False,
                                           continuous_update=True, layout=w.Layout(width="430px"))
        self.position_slider.add_class("posekit-position")
        self.position_words = w.HTML()
        self.position_words.add_class("posekit-position-words")
        self.status = w.HTML()
        self.status.add_class("posekit-status")
        self.readouts = w.HTML(layout=w.Layout(width="100%"))
        self.readouts.add_class("posekit-step-readouts")
        self.family_words = w.HTML()
        self.family_words.add_class("posekit-family-words")
        self.summary_words = w.HTML()

        sweep = sweep_one_angle(held, swept, np.linspace(rng[0], rng[1], steps), conv)
        solutions = euler_solutions(sweep.rotation, conv)
        self._sweep, self._solutions = sweep, solutions
        self._drawn_labels = (conv, swept)
        sweep_fig = sweep_figure(sweep, pos, parameter_label=angle_name(conv, swept, unit=True), height=760)
        sweep_fig.update_layout(width=SWEEP_WIDTH)  # fixed: drawn whole beside the controls, or below them
        self.sweep_plot = FigureSlot(sweep_fig, classes=("posekit-sweep-figure",))
        self.family_plot = FigureSlot(family_figure(solutions, pos, height=430, width=430),
                                      classes=("posekit-family-figure",), layout=w.Layout(width="432px"))

        # plain boxes around the figures: stable page selectors for the plots inside
        self._sweep_box = w.Box([self.sweep_plot], layout=w.Layout(flex="0 0 auto"))
        self._sweep_box.add_class("posekit-sweep-plot")
        self._family_box = w.Box([self.family_plot])
        self._family_box.add_class("posekit-family-plot")
        range_row = w.HBox([w.Label("range from", layout=w.Layout(width="80px")), self.range_from, w.Label("to"),
                            self.range_to], layout=w.Layout(align_items="center"))
        steps_row = w.HBox([w.Label("steps", layout=w.Layout(width="80px")), self.steps_box, self.centre_button],
                           layout=w.Layout(align_items="center"))
        position_row = w.VBox([w.HTML("<b>Position along the sweep</b> "
                                      "<span style='color:#777'>(arrow keys: one step)</span>"), self.position_slider])
        self._rows_box = w.VBox(self.angle_rows)
        left = w.VBox([
            w.HTML("<b>Sweep</b>"),
            w.HBox([w.Label("sweep", layout=w.Layout(width="80px")), self.swept_choice],
                   layout=w.Layout(align_items="center")),
            range_row, steps_row,
            w.HTML("<b>Held angles</b> (the swept one is set by the sweep)"), self._rows_box,
            position_row, self.position_words, self.status,
            w.HTML("<b>Equivalent triplets</b>: first vs third angle"), self._family_box, self.family_words,
        ], layout=w.Layout(width="450px", min_width="450px", padding="0 10px 0 0"))
        self.bar.layout.grid_template_columns = "repeat(auto-fill, minmax(520px, 1fr))"  # two columns, no wrapping
        top = w.VBox([w.HTML("<b>Convention</b> (the fields that change what the sweep shows)"), self.bar])
        super().__init__([w.HTML(STYLE_SHEET), top, KeyboardScope(scope=".posekit-singularity"),
                          w.HBox([left, self._sweep_box], layout=w.Layout(width="100%", flex_flow="row wrap")),
                          self.readouts, self.summary_words, SharePanel(self, "singularity-state")])
        self.add_class("posekit-singularity")

        with self.hold_trait_notifications():
            self.convention = conv.to_text()
            self.swept = swept
            self.angles = held
            self.sweep_range = rng
            self.steps = steps
            self.position = pos

        # --- wiring: controls -> traits -> drawing ---
        for ctl in self.bar.controls.values():
            ctl.observe(self._on_setting, "value")
        self.swept_choice.observe(self._on_swept_choice, "value")
        self.range_from.observe(lambda ch: self._on_range_box(), "number")
        self.range_to.observe(lambda ch: self._on_range_box(), "number")
        self.steps_box.observe(self._on_steps_box, "value")
        self.centre_button.on_click(lambda b: self.centre_on_pole())
        self._wire_rows()
        self.position_slider.observe(self._on_position_slider, "value")
        self.observe(self._on_sweep_traits, ["convention", "swept", "angles", "sweep_range", "steps"])
        self.observe(self._on_position, ["position"])
        self._sync_controls()
        self._draw_step()

    @property
    def figure(self):
        """The live sweep figure widget (a retry in its :class:`FigureSlot` replaces it)."""
        return self.sweep_plot.figure

    @property
    def family(self):
        """The live first-vs-third-angle figure widget."""
        return self.family_plot.figure

    # --- sharing ----------------------------------------------------------------------------
    def _settings(self) -> dict:
        return SingularitySettings(angles=tuple(float(v) for v in self.angles), swept=int(self.swept),
                                   sweep_range=tuple(float(v) for v in self.sweep_range), steps=int(self.steps),
                                   position=int(self.position), convention=self.convention).as_dict()

    def to_state(self, notes: str = "") -> State:
        """The sweep set-up and the rotation at the current step, as a posekit State."""
        pose = NamedPose("rotation at the current step", make_transform(self.current_rotation(), np.zeros(3)),
                         self.convention_value())
        return State("singularity", self._settings(), (pose,), (), notes)

    @classmethod
    def from_state(cls, state: State) -> "SingularityView":
        """Rebuild from a state; its settings are checked with :class:`SingularitySettings` first."""
        return cls(**SingularitySettings.from_state(state).as_dict())

    def code_cell(self) -> str:
        """A notebook cell that rebuilds exactly this view."""
        return python_call("posekit.widgets", "SingularityView", self._settings(), environment_versions())

    # --- building from and exporting to posekit values --------------------------------
    @classmethod
    def from_rotation(cls, rotation, convention="sequence=z-y-x unit=degrees", swept: int = 1, sweep_range=None,
                      steps: int = 61) -> "SingularityView":
        """Build around a canonical rotation ``(3, 3)``: its readback is the held triplet.

        The range defaults as in the constructor; the position starts at the step
        nearest the rotation's own value of the swept angle.
        """
        conv = as_convention(convention)
        m = checked_matrix(rotation, "rotation")
        if m.shape != (3, 3):
            raise SweepSetupError(f"rotation: got shape {m.shape}; expected one rotation (3, 3)")
        angles = tuple(float(v) for v in write_rotation(m, "euler", conv))
        swept = _check_swept(swept)
        steps = _check_steps(steps)
        rng = _default_range(angles, swept, conv) if sweep_range is None else _check_range(sweep_range, conv)
        grid = np.linspace(rng[0], rng[1], steps)
        position = int(np.argmin(np.abs(grid - angles[swept])))
        return cls(angles=angles, swept=swept, sweep_range=rng, steps=steps, position=position, convention=conv)

    def convention_value(self) -> Convention:
        return Convention.parse(self.convention)

    def sweep(self) -> Sweep:
        """The current :class:`~posekit.analysis.Sweep` (from ``sweep_one_angle``)."""
        return self._sweep

    def solutions(self) -> EulerSolutions:
        """Every Euler solution along the sweep (``euler_solutions`` of its rotations, shape ``(N,)``)."""
        return self._solutions

    def current_rotation(self) -> np.ndarray:
        """The canonical rotation ``(3, 3)`` at the current step."""
        return self._sweep.rotation[self.position].copy()

    def current_readout(self) -> StepReadout:
        """The numbers the readout panels show at the current step."""
        s, k = self._sweep, self.position
        entered = np.array(self.angles, dtype=float)
        entered[self.swept] = s.parameter[k]
        return StepReadout(k, float(s.parameter[k]), entered, s.euler[k].copy(), s.matrix[k].copy(),
                           s.quaternion_written[k].copy(), s.quaternion[k].copy(), float(s.gauge[k]),
                           bool(s.euler_jumps[k]), self._solutions.words(k))

    def centre_on_pole(self) -> None:
        """Keep the range's width, centred on the pole nearest its centre (middle angle swept only)."""
        if self.swept != 1:
            self.status.value = error_html("Only a sweep of the middle angle crosses the pole; set the middle "
                                           "held angle to the pole to lock an outer-angle sweep.")
            return
        conv = self.convention_value()
        lo, hi = self.sweep_range
        probe = list(self.angles)
        probe[1] = 0.5 * (lo + hi)
        c = _pole_centre(probe, conv)
        half = 0.5 * abs(hi - lo)
        self.sweep_range = (c - half, c + half) if hi > lo else (c + half, c - half)

    # --- control -> trait --------------------------------------------------------------
    @staticmethod
    def _swept_options(conv: Convention):
        return [(angle_name(conv, i), i) for i in range(3)]

    @staticmethod
    def _row_label(conv: Convention, i: int) -> str:
        return f"{angle_name(conv, i)} <span style='color:#888'>{'deg' if conv.degrees else 'rad'}</span>"

    @staticmethod
    def _row_range(conv: Convention):
        return (-180.0, 180.0, 1.0) if conv.degrees else (-math.pi, math.pi, 0.01)

    def _on_setting(self, change) -> None:
        if self._syncing:
            return
        old = self.convention_value()
        new = old.changed(**self.bar.settings())
        if new == old:
            return
        angles, rng = self.angles, self.sweep_range
        if new.unit != old.unit:  # same meaning, new unit: the numbers are converted, not reinterpreted
            f = _unit_scale(new) / _unit_scale(old)
            angles = tuple(a * f for a in angles)
            rng = tuple(r * f for r in rng)
        if self.swept == 1 and new.axes_letters != old.axes_letters:
            # the pole of a Tait-Bryan and a proper Euler sequence differ: follow it, same width
            probe = list(angles)
            probe[1] = 0.5 * (rng[0] + rng[1])
            c = _pole_centre(probe, new)
            half = 0.5 * (rng[1] - rng[0])
            rng = (c - half, c + half)
        with self.hold_trait_notifications():
            self.convention = new.to_text()
            self.angles = tuple(angles)
            self.sweep_range = tuple(rng)

    def _on_swept_choice(self, change) -> None:
        if self._syncing:
            return
        swept = int(change["new"])
        with self.hold_trait_notifications():
            self.swept = swept
            self.sweep_range = _default_range(self.angles, swept, self.convention_value())

    def _on_range_box(self) -> None:
        if self._syncing:
            return
        try:
            rng = _check_range((self.range_from.number, self.range_to.number), self.convention_value())
        except SweepSetupError as exc:
            self.status.value = error_html(f"Not applied: {exc}")
            return
        self.sweep_range = rng

    def _on_steps_box(self, change) -> None:
        if self._syncing:
            return
        self.steps = _check_steps(int(change["new"]))  # the box is bounded to the accepted range

    def _new_rows(self, conv: Convention, values) -> list:
        rows = [NumberRow(self._row_label(conv, i), float(values[i]), *self._row_range(conv), f"held-{i + 1}")
                for i in range(3)]
        for row in rows:  # room for the longer labels ("turn 3 about new x (roll)")
            row.label.layout.width = "225px"
            row.slider.layout.width = "125px"
        return rows

    def _wire_rows(self) -> None:
        for i, row in enumerate(self.angle_rows):
            row.slider.observe(lambda ch, i=i, row=row: self._set_held(i, ch["new"], True, row), "value")
            row.observe_box(lambda v, i=i, row=row: self._set_held(i, v, False, row))

    def _set_held(self, i: int, value: float, from_slider: bool, row=None) -> None:
        if self._syncing or (row is not None and row is not self.angle_rows[i]):
            return  # a row replaced on a unit change may still hear from its old page view
        a = list(self.angles)
        if from_slider and _is_snap(self.angle_rows[i].slider, a[i], value):
            return
        a[i] = float(value)
        self.angles = tuple(a)

    def _on_position_slider(self, change) -> None:
        if self._syncing:
            return
        self.position = int(change["new"])

    # --- trait -> drawing --------------------------------------------------------------
    @t.validate("swept")
    def _valid_swept(self, proposal):
        return _check_swept(proposal["value"])

    @t.validate("steps")
    def _valid_steps(self, proposal):
        return _check_steps(proposal["value"])

    @t.validate("position")
    def _valid_position(self, proposal):
        return _check_position(proposal["value"], self.steps)

    @t.validate("convention")
    def _valid_convention(self, proposal):
        return as_convention(proposal["value"]).to_text()

    @t.validate("sweep_range")
    def _valid_range(self, proposal):
        return _check_range(proposal["value"], as_convention(self.convention))

    def _on_sweep_traits(self, change) -> None:
        conv = self.convention_value()
        lo, hi = self.sweep_range
        sweep = sweep_one_angle(self.angles, self.swept, np.linspace(lo, hi, self.steps), conv)
        same_x = np.array_equal(sweep.parameter, self._sweep.parameter)
        same_labels = (conv, self.swept) == self._drawn_labels
        self._sweep, self._solutions = sweep, euler_solutions(sweep.rotation, conv)
        self.status.value = ""
        if self.position >= self.steps:
            self.position = self.steps - 1  # fewer steps: the last one (drawn by _on_position)
        self._sync_controls()
        patch = sweep_patch(sweep, self.position, angle_name(conv, self.swept, unit=True))
        if same_x:  # only the curves moved: send their y values, not the unchanged swept values again
            for idx in _LINE_TRACES:
                del patch["traces"][idx]["x"]
        fam = family_data(self._solutions, self.position)
        if same_labels:  # same convention and swept angle: axis titles and ticks stand as drawn
            for key in _LABEL_PATHS:
                patch["layout"].pop(key, None)
            fam = {"traces": fam["traces"]}
        self._drawn_labels = (conv, self.swept)
        with self.figure.batch_update():
            apply_patch(self.figure, patch)
        with self.family.batch_update():
            apply_patch(self.family, fam)
        self._draw_words()

    def _on_position(self, change) -> None:
        self._sync_position()
        self._draw_step()

    def _sync_position(self) -> None:
        self._syncing = True
        try:
            s = self.position_slider
            with s.hold_sync():  # range and value in one message (see _sync_controls)
                if s.max != self.steps - 1:
                    if self.steps - 1 < s.value:
                        s.value = self.position
                    s.max = self.steps - 1
                if s.value != self.position:
                    s.value = self.position
        finally:
            self._syncing = False

    def _sync_controls(self) -> None:
        conv = self.convention_value()
        self._syncing = True
        try:
            self.bar.set_settings({f: getattr(conv, f) for f in BAR_FIELDS})
            options = self._swept_options(conv)
            if list(self.swept_choice.options) != options:
                self.swept_choice.options = options
            self.swept_choice.value = self.swept
            lo, hi, step = self._row_range(conv)
            s0 = self.angle_rows[0].slider
            if (s0.min, s0.max, s0.step) != (lo, hi, step):
                # new unit: fresh sliders built with their final range, step and value in one go.
                # Re-ranging a live slider lets the page snap the value to the old step grid and send
                # that back, where it cannot be told from a real move (seen in JupyterLab 4.6).
                for row in self.angle_rows:
                    for part in (*row.children, row):
                        part.close()
                self.angle_rows = self._new_rows(conv, self.angles)
                self._rows_box.children = self.angle_rows
                self._wire_rows()
            for i, row in enumerate(self.angle_rows):
                row.label.value = self._row_label(conv, i)
                row.layout.display = "none" if i == self.swept else None
                row.show(self.angles[i])
            if self.range_from.number != self.sweep_range[0]:
                self.range_from.number = self.sweep_range[0]
            if self.range_to.number != self.sweep_range[1]:
                self.range_to.number = self.sweep_range[1]
            if self.steps_box.value != self.steps:
                self.steps_box.value = self.steps
            self.centre_button.disabled = self.swept != 1
        finally:
            self._syncing = False
        self._sync_position()

    def _draw_step(self) -> None:
        """Move the current step: a few small traces in each figure, one batched update each."""
        k = self.position
        with self.figure.batch_update():
            apply_patch(self.figure, step_marks(self._sweep, k))
        fam = family_data(self._solutions, k)
        with self.family.batch_update():
            apply_patch(self.family, {"traces": fam["traces"]})
        self._draw_words(fam)

    def _draw_words(self, fam=None) -> None:
        conv = self.convention_value()
        r = self.current_readout()
        fam = fam or family_data(self._solutions, r.step)
        unit = "deg" if conv.degrees else "rad"
        self.position_words.value = words_html(
            f"step {r.step} (of 0\u2013{self._sweep.steps - 1}): {angle_name(conv, self.swept)} = "
            f"{format_number(r.parameter, 6, trim=True)} {unit}"
            + ("; the Euler readback jumped at this step" if r.euler_jump else ""))
        self.family_words.value = words_html(fam["note"])
        self.readouts.value = self._readout_html(conv, r)
        self.summary_words.value = words_html("Along the sweep: " + self._sweep.summary() + ".")

    def _readout_html(self, conv: Convention, r: StepReadout) -> str:
        unit = "deg" if conv.degrees else "rad"
        letters = conv.axes_letters
        same = bool(np.allclose(r.euler, r.entered, atol=1e-9))
        note = ("the readback equals the swept numbers" if same else
                "the readback differs from the swept numbers: same orientation, other triplet")
        names = [f"{i + 1}: {letters[i]}" for i in range(3)]
        euler = panel_html(f"Euler angles at this step ({unit})",
                           words_html("set by the sweep") + numbers_html(names, r.entered, 4)
                           + words_html("read back (write_rotation)") + numbers_html(names, r.euler, 4)
                           + words_html(note))
        maps = "child \u2192 parent" if conv.direction == "parent-from-child" else "parent \u2192 child"
        matrix = panel_html(f"Rotation matrix as written ({maps})", matrix_html(r.matrix, 4))
        labels = ("w", "x", "y", "z") if conv.scalar == "first" else ("x", "y", "z", "w")
        algebra = "JPL" if conv.algebra == "jpl" else "Hamilton"
        quat = panel_html(f"Quaternion ({algebra}, scalar {conv.scalar})",
                          numbers_html(labels, r.quaternion, 5) + words_html("as written (scalar part \u2265 0)")
                          + numbers_html(labels, r.quaternion_along, 5)
                          + words_html("along the sweep (sign kept continuous); \u2212q names the same turn"))
        gauge = panel_html("Gimbal-lock gauge", gauge_html(
            r.gauge, "lock gauge", note="smallest singular value of the angle-rate Jacobian; 0 at the pole")
            + words_html(r.words))
        return "<div style='display:flex;flex-wrap:wrap;gap:8px'>" + euler + matrix + quat + gauge + "</div>"
