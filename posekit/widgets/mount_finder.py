"""The mount finder: two logs from sensors on one rigid body -> clock offset, mount, and the slip in B.

One widget, opened with one call (``MountFinder()``): give each stream's log file, which
columns hold the time and the pose numbers, and how you read those numbers (posekit's
convention text); optionally the mount you expect from the drawing.  "Find the mount"
reads both logs (:func:`~posekit.analysis.alignment.read_stream_log`) and runs
:func:`~posekit.analysis.alignment.align_streams`; the view layer
(:mod:`posekit.view.alignment`) draws the result: both angular speed curves before and
after B's stamps are shifted, the speed correlation per trial offset, the residual per
pair, the offset with its uncertainty, the mount as numbers in your reading of B, the
named slip with its sentence and the corrected code (with a copy button), and the
readings the data cannot tell apart with the motion (or mount) that would.

Glue only: the settings live in traitlets; the result shown is always what one press of
the button computed from them.  When an input is edited afterwards the results are marked
stale; when an input can no longer be read at all they are cleared and the message names
the box at fault.
"""

from __future__ import annotations

import html
import math
import os
from dataclasses import dataclass
from typing import ClassVar

import ipywidgets as w
import numpy as np
import traitlets as t

from ..analysis.alignment import StreamAlignment, StreamLogError, align_streams, column_entries, read_stream_log
from ..analysis.diagnose import expected_pose
from ..core.errors import PoseInputError
from ..explain import stated_fields
from ..io.settings import Bool, Choice, Text, WidgetSettings, register_settings, setting
from ..io.state import NamedPose, State, environment_versions
from ..view.alignment import (correlation_figure, diagnosis_html, empty_correlation_figure, empty_residual_figure,
                              empty_speed_figure, mount_html, offset_html, pair_residual_figure, speed_figure)
from ..view.readouts import STYLE_SHEET, format_number
from .controls import FigureSlot, KeyboardScope
from .desk import CopyButton
from .sharing import SharePanel, python_call

__all__ = ["MountFinder", "MountFinderSettings", "STREAM_KINDS"]

#: What a stream's numbers are ("by count" lets the number of value columns decide).
STREAM_KINDS = ("by count", "quaternion", "euler", "rotation-vector", "matrix", "transform", "position-quaternion",
                "position-euler", "position-rotation-vector")
_ROLE = {"a": "stream A (the reference)", "b": "stream B (the sensor under suspicion)"}
_NOMINAL_BOX = "the 'nominal mount' box"
_TOLERANCE_BOX = "the 'rotation tolerance' box"
_POSITION_BOX = "the 'position tolerance' box"
_OFFSET_BOX = "the 'largest clock offset' box"
_SPEED_WIDTH, _SIDE_WIDTH = 940, 460

MOUNT_CSS = """<style>
.posekit-mount-finder .widget-html-content { line-height: 1.35; }
.posekit-mount-finder .pk-title { font-size: 15px; font-weight: 600; margin: 2px 0 0 0; }
.posekit-mount-finder .pk-section { font-weight: 600; font-size: 13px; margin: 8px 0 3px 0; }
.posekit-mount-finder .pk-card { border: 1px solid #d6d6d6; border-radius: 5px; padding: 6px 10px 8px 10px;
  width: 458px; box-sizing: border-box; }
.posekit-mount-finder .pk-ok { font-size: 12.5px; color: #1b4d1b; }
.posekit-mount-finder .pk-bad { font-size: 13px; color: #a50f15; font-weight: 600; }
.posekit-mount-finder .pk-verdict { font-size: 14px; font-weight: 600; margin: 2px 0 3px 0; }
.posekit-mount-finder .pk-sentence { font-size: 13px; font-weight: 600; margin: 2px 0 4px 0; }
.posekit-mount-finder .pk-tie { font-size: 12px; display: inline-block; padding: 0 6px; border-radius: 3px;
  border: 1px solid #c51b7d; color: #8e0152; background: #fde0ef; margin: 2px 0; }
.posekit-mount-finder ul.pk-ties { margin: 2px 0 5px 0; padding: 0 10px 0 18px; font-size: 12px; color: #333; }
.posekit-mount-finder .pk-how { color: #555; }
.posekit-mount-finder .pk-offset { font-size: 14px; margin: 2px 0; }
.posekit-mount-finder .pk-offset-uncertainty { color: #444; }
.posekit-mount-finder .pk-stale { font-size: 12.5px; color: #444; background: #f3f3f3; border: 1px dashed #999;
  padding: 4px 8px; margin: 4px 0; }
.posekit-mount-finder .posekit-mount-results-stale { opacity: 0.45; }
.posekit-mount-finder textarea { font-family: ui-monospace, SFMono-Regular, Menlo, Consolas, monospace;
  font-size: 12.5px; }
.posekit-mount-finder .posekit-mount-code textarea { white-space: pre; overflow-wrap: normal; overflow-x: auto; }
.posekit-mount-finder .pk-copy { display: inline-flex; flex-direction: column; gap: 2px; }
.posekit-mount-finder .pk-copy-button { height: 26px; font-size: 12px; padding: 0 10px; cursor: pointer; }
.posekit-mount-finder .pk-copy-status { font-size: 11.5px; color: #555; }
.posekit-mount-finder .widget-label { font-size: 12.5px; }
.posekit-mount-finder .posekit-mount-streams { gap: 12px; margin-bottom: 8px; }
.posekit-mount-finder .posekit-mount-pair { gap: 12px; align-items: flex-start; }
.posekit-mount-finder .posekit-mount-run-row { gap: 10px; margin: 6px 0 2px 0; }
</style>"""


@register_settings
@dataclass(frozen=True)
class MountFinderSettings(WidgetSettings):
    """What a :class:`MountFinder` saves in a state file: the keyword arguments that rebuild it (the logs
    themselves stay where they are: the paths are saved, not the data)."""

    kind: ClassVar[str] = "mount-finder"
    path_a: str = setting(Text(4096, lines=False))
    time_a: str = setting(Text(200, lines=False))
    values_a: str = setting(Text(2000, lines=False))
    kind_a: str = setting(Choice(*STREAM_KINDS))
    reading_a: str = setting(Text(1000, lines=False))
    path_b: str = setting(Text(4096, lines=False))
    time_b: str = setting(Text(200, lines=False))
    values_b: str = setting(Text(2000, lines=False))
    kind_b: str = setting(Choice(*STREAM_KINDS))
    reading_b: str = setting(Text(1000, lines=False))
    nominal_mount: str = setting(Text(2000, lines=False))
    rotation_tolerance: str = setting(Text(40, lines=False))
    translation_tolerance: str = setting(Text(40, lines=False))
    max_offset: str = setting(Text(40, lines=False))
    run: bool = setting(Bool())


def _labels(s: str) -> dict:
    """How align_streams names stream ``s``'s inputs in messages: this widget's boxes."""
    return {f"times_{s}": f"stream {s.upper()}'s time column", f"values_{s}": f"stream {s.upper()}'s value columns",
            f"reading_{s}": f"stream {s.upper()}'s 'reading' box"}


_ALIGN_LABELS = {**_labels("a"), **_labels("b"), "nominal_mount": _NOMINAL_BOX, "max_offset": _OFFSET_BOX,
                 "min_overlap": "the overlap needed (half the shorter stream)"}


class _StreamBox(w.VBox):
    """The controls of one stream: log file, time column, value columns, kind, reading, and a status line."""

    def __init__(self, s: str, path: str, time: str, values: str, kind: str, reading: str):
        self.s = s
        css = f"posekit-mount-{s}"
        style = {"description_width": "118px"}
        wide = w.Layout(width="432px")
        self.path = w.Text(value=path, description="log file", placeholder="path to a CSV log, e.g. logs/imu.csv",
                           style=style, layout=wide, continuous_update=False)
        self.time = w.Text(value=time, description="time column", style=style, layout=wide, continuous_update=False,
                           placeholder="blank: the column named time, t or timestamp")
        self.values = w.Text(value=values, description="value columns", style=style, layout=wide,
                             continuous_update=False, placeholder="e.g. qw, qx, qy, qz (blank: every other column)")
        self.kind = w.Dropdown(options=list(STREAM_KINDS), value=kind, description="numbers are", style=style,
                               layout=w.Layout(width="300px"))
        self.reading = w.Text(value=reading, description="reading", style=style, layout=wide, continuous_update=False,
                              placeholder="posekit convention text, e.g. scalar=last or sequence=z-y-x unit=degrees")
        self.status = w.HTML(layout=w.Layout(width="432px"))
        for ctl, name in ((self.path, "path"), (self.time, "time"), (self.values, "values"), (self.kind, "kind"),
                          (self.reading, "reading"), (self.status, "status")):
            ctl.add_class(f"{css}-{name}")
        title = w.HTML(f"<div class='pk-section'>{html.escape(_ROLE[s][0].upper() + _ROLE[s][1:])}</div>")
        super().__init__([title, self.path, self.time, self.values, self.kind, self.reading, self.status],
                         layout=w.Layout(width="458px"))
        self.add_class("pk-card")
        self.add_class(css)


class MountFinder(w.VBox):
    """Two logs of sensors on one rigid body: find the clock offset, the mount, and the convention slip in B.

    Stream A is the reference (its numbers are read as you state); the slip is sought in stream
    B.  ``path_a`` / ``path_b``: log files (CSV, as :func:`posekit.io.logs.read_log` reads them);
    ``time_a`` / ``values_a`` (and B's): the time column and the value columns (names or 0-based
    numbers separated by commas; blank: the column named like a time, and every other column);
    ``kind_a`` / ``kind_b``: what the numbers are (``"by count"`` lets the count decide);
    ``reading_a`` / ``reading_b``: posekit convention text (``"scalar=last"``); ``nominal_mount``:
    the mount you expect, B's frame in A's body frame, typed as numbers under B's reading (angles
    without a unit are degrees) or in words; ``rotation_tolerance`` (degrees),
    ``translation_tolerance`` (metres) and ``max_offset`` (seconds, blank for any) as text.
    ``run=True`` finds the mount at once.

    >>> finder = MountFinder()
    >>> finder.result is None and "log file" in finder.message.value
    True
    """

    path_a = t.Unicode("")
    time_a = t.Unicode("")
    values_a = t.Unicode("")
    kind_a = t.Unicode("by count")
    reading_a = t.Unicode("")
    path_b = t.Unicode("")
    time_b = t.Unicode("")
    values_b = t.Unicode("")
    kind_b = t.Unicode("by count")
    reading_b = t.Unicode("")
    nominal_mount = t.Unicode("")
    rotation_tolerance = t.Unicode("0.5")
    translation_tolerance = t.Unicode("0.005")
    max_offset = t.Unicode("")

    def __init__(self, path_a: str = "", path_b: str = "", *, time_a: str = "", values_a: str = "",
                 kind_a: str = "by count", reading_a: str = "", time_b: str = "", values_b: str = "",
                 kind_b: str = "by count", reading_b: str = "", nominal_mount: str = "",
                 rotation_tolerance: str = "0.5", translation_tolerance: str = "0.005", max_offset: str = "",
                 run: bool = False):
        settings = MountFinderSettings(path_a=os.fspath(path_a), time_a=str(time_a), values_a=str(values_a),
                                       kind_a=kind_a, reading_a=reading_a, path_b=os.fspath(path_b),
                                       time_b=str(time_b), values_b=str(values_b), kind_b=kind_b,
                                       reading_b=reading_b, nominal_mount=nominal_mount,
                                       rotation_tolerance=str(rotation_tolerance),
                                       translation_tolerance=str(translation_tolerance), max_offset=str(max_offset),
                                       run=bool(run))
        self._result: StreamAlignment | None = None
        self._logs = (None, None)
        self._tolerances = (math.radians(0.5), 0.005)
        self._runs = 0
        self._syncing = False

        self.box_a = _StreamBox("a", settings.path_a, settings.time_a, settings.values_a, settings.kind_a,
                                settings.reading_a)
        self.box_b = _StreamBox("b", settings.path_b, settings.time_b, settings.values_b, settings.kind_b,
                                settings.reading_b)
        style = {"description_width": "118px"}
        self.nominal_box = w.Text(value=nominal_mount, description="nominal mount", style=style,
                                  layout=w.Layout(width="760px"), continuous_update=False,
                                  placeholder="optional: B in A's body frame, as numbers in B's reading, or in words")
        self.nominal_box.add_class("posekit-mount-nominal")
        self.nominal_status = w.HTML(layout=w.Layout(width="100%"))
        self.nominal_status.add_class("posekit-mount-nominal-status")
        small = w.Layout(width="250px")
        self.rotation_box = w.Text(value=settings.rotation_tolerance, description="rotation tolerance (deg)",
                                   style={"description_width": "150px"}, layout=small, continuous_update=False)
        self.position_box = w.Text(value=settings.translation_tolerance, description="position tolerance (m)",
                                   style={"description_width": "150px"}, layout=small, continuous_update=False)
        self.offset_box = w.Text(value=settings.max_offset, description="largest clock offset (s)",
                                 style={"description_width": "150px"}, layout=small, continuous_update=False,
                                 placeholder="blank: any")
        for ctl, name in ((self.rotation_box, "rotation-tolerance"), (self.position_box, "position-tolerance"),
                          (self.offset_box, "max-offset")):
            ctl.add_class(f"posekit-mount-{name}")
        self.run_button = w.Button(description="Find the mount", button_style="primary", icon="search",
                                   tooltip="read both logs and find the clock offset, the mount and the slip in B",
                                   layout=w.Layout(width="170px", min_width="170px"))
        self.run_button.add_class("posekit-mount-run")
        self.message = w.HTML(layout=w.Layout(width="100%"))
        self.message.add_class("posekit-mount-message")

        # --- results ------------------------------------------------------------------------
        self.stale = w.HTML(layout=w.Layout(width="100%"))
        self.stale.add_class("posekit-mount-stale")
        self.verdict = w.HTML(layout=w.Layout(width="100%"))
        self.verdict.add_class("posekit-mount-verdict")
        self.code_box = w.Textarea(layout=w.Layout(width="100%", height="210px"),
                                   placeholder="the corrected code appears here after a run")
        self.code_box.add_class("posekit-mount-code")
        self.copy_code = CopyButton(label="copy code")
        self.copy_code.add_class("posekit-mount-copy-code")
        self.offset_readout = w.HTML(layout=w.Layout(width="100%"))
        self.offset_readout.add_class("posekit-mount-offset")
        self.mount_readout = w.HTML(layout=w.Layout(width="100%"))
        self.mount_readout.add_class("posekit-mount-mount")
        self.speed_plot = _classed(FigureSlot(empty_speed_figure(width=_SPEED_WIDTH)), "posekit-mount-speeds")
        self.correlation_plot = _classed(FigureSlot(empty_correlation_figure(width=_SIDE_WIDTH, height=270)),
                                         "posekit-mount-correlation")
        self.residual_plot = _classed(FigureSlot(empty_residual_figure(width=_SIDE_WIDTH, height=400)),
                                      "posekit-mount-residuals")
        column = w.Layout(width=f"{_SIDE_WIDTH + 10}px", min_width=f"{_SIDE_WIDTH + 10}px")
        slip_col = w.VBox([w.HTML("<div class='pk-section'>The slip in B</div>"), self.verdict], layout=column)
        code_col = w.VBox([w.HTML("<div class='pk-section'>Corrected reading of B: code</div>"), self.code_box,
                           self.copy_code], layout=column)
        offset_col = w.VBox([w.HTML("<div class='pk-section'>Clock offset</div>"), self.offset_readout,
                             self.correlation_plot], layout=column)
        mount_col = w.VBox([w.HTML("<div class='pk-section'>Mount found, and how well it fits each pair</div>"),
                            self.mount_readout, self.residual_plot], layout=column)
        self.results = w.VBox([_classed(w.HBox([slip_col, code_col]), "posekit-mount-pair"),
                               w.HTML("<div class='pk-section'>Angular speeds of both sensors</div>"),
                               self.speed_plot,
                               _classed(w.HBox([offset_col, mount_col]), "posekit-mount-pair")],
                              layout=w.Layout(width="100%", display="none"))
        self.results.add_class("posekit-mount-results")
        options = w.HBox([self.rotation_box, self.position_box, self.offset_box],
                         layout=w.Layout(flex_flow="row wrap", width="100%"))
        optional = _classed(w.VBox([w.HTML("<div class='pk-section'>Optional</div>"), self.nominal_box,
                                    self.nominal_status, options], layout=w.Layout(width="928px")), "pk-card")
        head = w.HTML("<div class='pk-title'>Mount finder</div><div class='pk-words'>Two sensors bolted to one "
                      "rigid body, each logged in its own conventions and on its own clock. Stream A is trusted; "
                      "the slip is sought in how B's numbers are read.</div>")
        self.share = _MountShare(self, "mount-finder-state")
        super().__init__([w.HTML(STYLE_SHEET + MOUNT_CSS), KeyboardScope(scope=".posekit-mount-finder"), head,
                          _classed(w.HBox([self.box_a, self.box_b], layout=w.Layout(flex_flow="row wrap")),
                                   "posekit-mount-streams"),
                          optional,
                          _classed(w.HBox([self.run_button, self.message], layout=w.Layout(align_items="center")),
                                   "posekit-mount-run-row"),
                          self.stale, self.results, self.share])
        self.add_class("posekit-mount-finder")

        with self.hold_trait_notifications():
            for name in ("path_a", "time_a", "values_a", "kind_a", "reading_a", "path_b", "time_b", "values_b",
                         "kind_b", "reading_b", "nominal_mount", "rotation_tolerance", "translation_tolerance",
                         "max_offset"):
                setattr(self, name, getattr(settings, name))
        for box in (self.box_a, self.box_b):
            for field, ctl in (("path", box.path), ("time", box.time), ("values", box.values), ("kind", box.kind),
                               ("reading", box.reading)):
                ctl.observe(lambda ch, n=f"{field}_{box.s}": setattr(self, n, ch["new"]), "value")
        for ctl, name in ((self.nominal_box, "nominal_mount"), (self.rotation_box, "rotation_tolerance"),
                          (self.position_box, "translation_tolerance"), (self.offset_box, "max_offset")):
            ctl.observe(lambda ch, n=name: setattr(self, n, ch["new"]), "value")
        self.observe(self._on_inputs, list(self._input_names()))
        self.run_button.on_click(lambda _: self.find())
        self._clear("")
        self._check_inputs()
        if settings.run:
            self.find()

    # --- inputs ---------------------------------------------------------------------------
    @staticmethod
    def _input_names():
        return ("path_a", "time_a", "values_a", "kind_a", "reading_a", "path_b", "time_b", "values_b", "kind_b",
                "reading_b", "nominal_mount", "rotation_tolerance", "translation_tolerance", "max_offset")

    def _sync_controls(self) -> None:
        for box in (self.box_a, self.box_b):
            s = box.s
            for ctl, name in ((box.path, "path"), (box.time, "time"), (box.values, "values"), (box.kind, "kind"),
                              (box.reading, "reading")):
                value = getattr(self, f"{name}_{s}")
                if ctl.value != value:
                    ctl.value = value
        for ctl, name in ((self.nominal_box, "nominal_mount"), (self.rotation_box, "rotation_tolerance"),
                          (self.position_box, "translation_tolerance"), (self.offset_box, "max_offset")):
            if ctl.value != getattr(self, name):
                ctl.value = getattr(self, name)

    def _on_inputs(self, change) -> None:
        self._sync_controls()
        problem = self._check_inputs()
        if self._result is None:
            return
        if problem is not None:
            self._clear(problem)
        else:
            self.stale.value = ("<div class='pk-stale'>The inputs changed since these results were found: press "
                                "'Find the mount' to update them. Until then they belong to the earlier inputs.</div>")
            self.results.add_class("posekit-mount-results-stale")

    def _check_inputs(self) -> str | None:
        """Read what can be read without opening the logs; each box's status says what it understood or what
        is wrong.  Returns the first problem (naming its box) or None."""
        problems = []
        for box in (self.box_a, self.box_b):
            s = box.s
            words = []
            try:
                path = getattr(self, f"path_{s}").strip()
                if not path:
                    raise PoseInputError(f"stream {s.upper()}'s 'log file' box is empty; accepted: the path of a "
                                         "log file")
                if not os.path.isfile(path):
                    raise PoseInputError(f"stream {s.upper()}'s 'log file' box: no file {path[:200]!r} "
                                         f"(looked in {os.getcwd()[:200]!r}); accepted: the path of a readable "
                                         "log file")
                for text, name in ((getattr(self, f"time_{s}"), "time column"),
                                   (getattr(self, f"values_{s}"), "value columns")):
                    if text.strip():
                        entries = column_entries(text, f"stream {s.upper()}'s '{name}' box")
                        if name == "time column" and len(entries) != 1:
                            raise PoseInputError(f"stream {s.upper()}'s 'time column' box names {len(entries)} "
                                                 "columns; accepted: one column name or 0-based number")
                reading = getattr(self, f"reading_{s}")
                try:
                    fields = sorted(stated_fields(reading)) if reading.strip() else []
                except PoseInputError as exc:
                    raise PoseInputError(f"stream {s.upper()}'s 'reading' box: {exc}") from None
                words.append("reading: " + (", ".join(f"{k} stated" for k in fields) if fields else
                                            "nothing stated (posekit's defaults, each free to be wrong)"))
                box.status.value = f"<div class='pk-words'>{html.escape('; '.join(words))}</div>"
            except PoseInputError as exc:
                box.status.value = f"<div class='pk-error'>{html.escape(str(exc))}</div>"
                problems.append(str(exc))
        try:
            self._nominal()
        except PoseInputError as exc:
            self.nominal_status.value = f"<div class='pk-error'>{html.escape(str(exc))}</div>"
            problems.append(str(exc))
        try:
            self._options()
        except PoseInputError as exc:
            problems.append(str(exc))
        problem = problems[0] if problems else None
        self.run_button.disabled = problem is not None
        if problem is not None:
            self.message.value = (f"<div class='pk-error'>{html.escape(problem)}</div>"
                                  + (f"<div class='pk-words'>and {len(problems) - 1} more problem(s) shown beside "
                                     "their boxes</div>" if len(problems) > 1 else ""))
        else:
            self.message.value = "<div class='pk-words'>Ready: press 'Find the mount'.</div>"
        return problem

    def _nominal(self):
        """The nominal mount typed (canonical 3x3, or None), read under B's reading; said back below its box."""
        text = self.nominal_mount.strip()
        if not text:
            self.nominal_status.value = ("<div class='pk-words'>no nominal mount: readings that differ only by an "
                                         "axis relabelling of B are listed as ties</div>")
            return None
        try:
            pose = expected_pose(text, None, self.reading_b if self.reading_b.strip() else None)
        except PoseInputError as exc:
            raise PoseInputError(f"{_NOMINAL_BOX}: {exc}") from None
        if pose.rotation.ndim != 2:
            raise PoseInputError(f"{_NOMINAL_BOX}: holds {pose.rotation.shape[0]} poses; accepted: one mount")
        said = pose.guess.line() if pose.guess is not None else pose.reading
        self.nominal_status.value = f"<div class='pk-ok'>nominal mount {html.escape(said)}</div>"
        return pose.rotation

    def _options(self):
        """(rotation tolerance radians, translation tolerance, max offset or None) from their boxes."""
        out = []
        for text, box, unit, blank_ok in ((self.rotation_tolerance, _TOLERANCE_BOX, "degrees", False),
                                          (self.translation_tolerance, _POSITION_BOX, "metres", False),
                                          (self.max_offset, _OFFSET_BOX, "seconds", True)):
            s = text.strip()
            if not s and blank_ok:
                out.append(None)
                continue
            try:
                v = float(s) if s.isascii() else math.nan
            except ValueError:
                v = math.nan
            if not (math.isfinite(v) and v > 0):
                raise PoseInputError(f"{box}: got {s[:40]!r}; accepted: a number of {unit} greater than 0"
                                     + (" (or blank for any)" if blank_ok else ""))
            out.append(v)
        return math.radians(out[0]), out[1], out[2]

    # --- running --------------------------------------------------------------------------
    def _read(self, s: str):
        box = f"stream {s.upper()}'s"
        labels = {"source": f"{box} log", "time_column": f"{box} 'time column' box",
                  "value_columns": f"{box} 'value columns' box"}
        path = getattr(self, f"path_{s}").strip()
        try:
            return read_stream_log(path, getattr(self, f"time_{s}"), getattr(self, f"values_{s}"), labels=labels)
        except StreamLogError:
            raise
        except PoseInputError as exc:
            raise PoseInputError(f"{box} 'log file' box: {exc}") from None

    def find(self) -> StreamAlignment | None:
        """Read both logs and find the offset, mount and slip (what the button does); the result, or None
        when an input cannot be used (the message says which box and why)."""
        problem = self._check_inputs()
        if problem is not None:
            self._clear(problem)
            return None
        self.message.value = "<div class='pk-words'>Reading the logs and searching\u2026</div>"
        try:
            nominal = self._nominal()
            tol_r, tol_t, max_offset = self._options()
            log_a, log_b = self._read("a"), self._read("b")
            kinds = [None if k == "by count" else k for k in (self.kind_a, self.kind_b)]
            result = align_streams(log_a.times, log_a.values, self.reading_a.strip() or None, log_b.times,
                                   log_b.values, self.reading_b.strip() or None, kind_a=kinds[0], kind_b=kinds[1],
                                   nominal_mount=nominal, max_offset=max_offset, rotation_tolerance=tol_r, translation_tolerance=tol_t,
                                   labels=_ALIGN_LABELS)
        except PoseInputError as exc:
            self._clear(str(exc))
            return None
        self._result = result
        self._logs = (log_a, log_b)
        self._tolerances = (tol_r, tol_t)
        self._runs += 1
        self._show()
        return result

    @property
    def result(self) -> StreamAlignment | None:
        """The alignment shown now (None before a run, or after an input stopped being readable)."""
        return self._result

    # --- showing --------------------------------------------------------------------------
    def _show(self) -> None:
        r = self._result
        log_a, log_b = self._logs
        for box, log in ((self.box_a, log_a), (self.box_b, log_b)):
            box.status.value = f"<div class='pk-ok'>{html.escape(log.words())}</div>"
        self.message.value = (f"<div class='pk-ok'>Found with {len(r.residuals.rotation_degrees)} pairs of key "
                              f"samples over {format_number(r.time_offset.overlap, 4, trim=True)} s of overlap."
                              "</div>")
        self.stale.value = ""
        self.results.remove_class("posekit-mount-results-stale")
        self.results.layout.display = None
        self.verdict.value = diagnosis_html(r)
        code = _code_for(r, log_b, self.path_b)
        self.code_box.value = code
        self.copy_code.text = code
        self.offset_readout.value = offset_html(r)
        self.mount_readout.value = mount_html(r)
        tol_r, tol_t = self._tolerances
        self._draw(self.speed_plot, speed_figure(r, width=_SPEED_WIDTH), ())
        self._draw(self.correlation_plot, correlation_figure(r, width=_SIDE_WIDTH, height=270), ("error_x",))
        self._draw(self.residual_plot, pair_residual_figure(r, rotation_tolerance=tol_r, translation_tolerance=tol_t,
                                                            width=_SIDE_WIDTH, height=400), ("customdata",))

    def _clear(self, why: str) -> None:
        """No result: every output computed from the inputs is emptied, and the reason shown."""
        self._result = None
        self._logs = (None, None)
        if why:
            self.message.value = f"<div class='pk-error'>{html.escape(why)}</div>"
        self.stale.value = ("<div class='pk-stale'>No result shown: the offset, mount, slip, code and plots appear "
                            "after 'Find the mount' succeeds; nothing from earlier inputs is kept on show.</div>")
        self.results.remove_class("posekit-mount-results-stale")
        self.results.layout.display = "none"
        self.verdict.value = ""
        self.code_box.value = ""
        self.copy_code.text = ""
        self.offset_readout.value = ""
        self.mount_readout.value = ""
        self._draw(self.speed_plot, empty_speed_figure(width=_SPEED_WIDTH), ())
        self._draw(self.correlation_plot, empty_correlation_figure(width=_SIDE_WIDTH, height=270), ())
        self._draw(self.residual_plot, empty_residual_figure(width=_SIDE_WIDTH, height=400), ())

    def _draw(self, slot: FigureSlot, fig, extra=()) -> None:
        """Put ``fig``'s trace data into the live figure by uid (one restyle per group of properties) and its
        subplot titles into the layout; a new run resets the zoom (``uirevision``)."""
        live = slot.figure
        live.restyle({tr.uid: {"x": _plain(tr.x), "y": _plain(tr.y)} for tr in fig.data})
        for prop in extra:
            changes = {tr.uid: {prop: _property(tr, prop)} for tr in fig.data if _property(tr, prop) is not None}
            if changes:
                live.restyle(changes)
        with live.batch_update():
            live.layout.annotations = fig.layout.annotations
            for axis in ("xaxis", "yaxis", "xaxis2", "yaxis2"):
                new = getattr(fig.layout, axis, None)
                if new is not None and new.domain is not None:
                    live.layout[axis].domain = new.domain
                    live.layout[axis].visible = new.visible
            live.layout.height = fig.layout.height
            live.layout.uirevision = f"posekit-mount-run-{self._runs}"

    # --- sharing --------------------------------------------------------------------------
    def _settings(self) -> dict:
        return MountFinderSettings(path_a=self.path_a, time_a=self.time_a, values_a=self.values_a, kind_a=self.kind_a,
                                   reading_a=self.reading_a, path_b=self.path_b, time_b=self.time_b,
                                   values_b=self.values_b, kind_b=self.kind_b, reading_b=self.reading_b,
                                   nominal_mount=self.nominal_mount, rotation_tolerance=self.rotation_tolerance,
                                   translation_tolerance=self.translation_tolerance, max_offset=self.max_offset,
                                   run=self._result is not None).as_dict()

    def to_state(self, notes: str = "") -> State:
        """The settings (paths, columns, readings) and, after a run, the mount found as a pose."""
        poses = ()
        r = self._result
        if r is not None:
            m = np.eye(4)
            m[:3, :3] = r.mount_rotation
            if r.mount_translation is not None:
                m[:3, 3] = r.mount_translation
            poses = (NamedPose("mount found: B in A's body frame", m),)
        return State("mount-finder", self._settings(), poses, (), notes)

    @classmethod
    def from_state(cls, state: State) -> "MountFinder":
        """Rebuild a mount finder from a state (e.g. ``load_state("mount.json")``); the logs must still be at
        the paths saved.  The settings are checked with :class:`MountFinderSettings` first."""
        return cls(**MountFinderSettings.from_state(state).as_dict())

    def code_cell(self) -> str:
        """A notebook cell that rebuilds exactly this mount finder (and runs it, if it has been run)."""
        return python_call("posekit.widgets", "MountFinder", self._settings(), environment_versions(), "finder")

    def summary_lines(self) -> list[str]:
        """The result in plain lines (for the HTML report)."""
        if self._result is None:
            return ["no result: the mount finder has not run on the current inputs"]
        return self._result.summary().splitlines()


class _MountShare(SharePanel):
    """The share panel, with the result (offset, mount, slip, ties, code) written into the HTML report."""

    def _report(self) -> None:
        from ..view.report import write_report

        path = self._stem().with_suffix(".html")
        write_report(self.owner.to_state(), path, diagnosis=self.owner.summary_lines(),
                     title="posekit mount finder report")
        self.message.value = f"report written to <code>{html.escape(str(path.resolve()))}</code>"


def _code_for(result: StreamAlignment, log_b, path: str) -> str:
    """The best explanation's fix code, after one comment line saying where ``logged_numbers`` come from."""
    columns = ", ".join(log_b.value_columns)
    source = path.strip()
    head = (f"# logged_numbers: stream B's rows ({columns}) from {source[:200]!r}, "
            f"shape ({len(log_b.times)}, {len(log_b.value_columns)})")
    return head + "\n" + result.best.code


def _classed(widget, css: str):
    widget.add_class(css)
    return widget


def _plain(values):
    return [] if values is None else np.asarray(values).tolist()


def _property(trace, prop):
    """A trace property as plain data, or None when the trace does not set it."""
    value = getattr(trace, prop, None)
    if value is None:
        return None
    plain = value.to_plotly_json() if hasattr(value, "to_plotly_json") else np.asarray(value).tolist()
    return plain if len(plain) else None
