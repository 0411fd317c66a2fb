"""The trajectory view: a trajectory check report as time series, flagged spans shaded and listed.

Click a marker in the flagged-spans strip, or choose a span in the list (arrow keys
work there), and the 3D view shows the pose at that span's first row beside the pose
one used row before it.  Glue only: the report comes from
:func:`posekit.analysis.trajectory.check_trajectory`, the figures from
:mod:`posekit.view.trajectory` and :mod:`posekit.view.frames`.  The one state is the
``chosen_span`` traitlet (-1: none).
"""

from __future__ import annotations

import html
from dataclasses import dataclass
from typing import ClassVar

import ipywidgets as w
import numpy as np
import traitlets as t

from ..io.settings import MAX_TEXT, IntRange, Text, WidgetSettings, fail, register_settings, setting
from ..io.state import NamedPose, State, environment_versions
from ..analysis.trajectory import TrajectoryReport
from ..core.errors import PoseInputError
from ..core.transforms import make_transform
from ..view.frames import DEFAULT_PALETTE, FRAME_UIDS, body_points, frame_figure, frame_points, overlay_uid
from ..view.readouts import STYLE_SHEET, format_number
from ..view.trajectory import (FLAG_STYLES, HIGHLIGHT, flag_uid, flagged_spans, row_rotation, span_shape,
                               trajectory_figure)
from .controls import FigureSlot, KeyboardScope
from .sharing import SharePanel

__all__ = ["TrajectoryView", "TrajectorySettings"]

_FRAME, _BODY, _PREVIOUS = FRAME_UIDS["frame"], FRAME_UIDS["body"], overlay_uid(0)
_FLAG_UIDS = tuple(flag_uid(k) for k in FLAG_STYLES)


@register_settings
@dataclass(frozen=True)
class TrajectorySettings(WidgetSettings):
    """What a :class:`TrajectoryView` saves: the chosen span and the report in words (not the data)."""

    kind: ClassVar[str] = "trajectory"
    chosen_span: int = setting(IntRange(-1, 100_000))
    summary: str = setting(Text(MAX_TEXT))


class TrajectoryView(w.VBox):
    """Show a :class:`~posekit.analysis.trajectory.TrajectoryReport`; pick a flagged span to see its pose.

    >>> from posekit.desk_scenarios import row_drive   # demo data: a logged drive with faults
    >>> view = TrajectoryView(row_drive().report())
    >>> len(view.spans) > 0                             # flagged spans to pick from
    True
    """

    chosen_span = t.Int(-1)

    def __init__(self, report: TrajectoryReport, *, chosen_span: int = -1, rate_limit: float | None = None,
                 width: int = 900, height: int = 760):
        if not isinstance(report, TrajectoryReport):
            raise PoseInputError(f"TrajectoryView needs a TrajectoryReport (from check_trajectory), got "
                                 f"{type(report).__name__}")
        self.report = report
        self.spans, self.total_spans = flagged_spans(report)
        self.series_plot = FigureSlot(trajectory_figure(report, spans=self.spans, rate_limit=rate_limit,
                                                        height=height, width=width),
                                      classes=("posekit-trajectory-series",))
        self.series_plot.on_figure(self._attach_clicks)  # again for a fresh figure after a retry
        options = [("(no span chosen)", -1)] + [(s.words(), k) for k, s in enumerate(self.spans)]
        self.span_list = w.Select(options=options, value=-1, rows=min(12, len(options)),
                                  layout=w.Layout(width="100%", height="auto"))
        self.span_list.add_class("posekit-trajectory-spans")
        self.detail = w.HTML()
        self.detail.add_class("posekit-trajectory-detail")
        fig = frame_figure(np.eye(3), np.zeros(3), body=True, overlays=[("prev", np.eye(3), np.zeros(3))],
                           palette=DEFAULT_PALETTE, height=420, unit=None)  # rotation only: no lengths
        fig.update_layout(width=440)
        fig.for_each_trace(lambda tr: tr.update(name="pose at the span"), selector=dict(uid=_FRAME))
        fig.for_each_trace(lambda tr: tr.update(name="one used row before", textposition="bottom center"),
                           selector=dict(uid=_PREVIOUS))  # letters apart from those of the pose itself
        self.pose_plot = FigureSlot(fig, classes=("posekit-trajectory-pose",))
        pose_box = w.Box([self.pose_plot], layout=w.Layout(width="450px"))
        pose_box.add_class("posekit-trajectory-pose-box")
        series_box = w.Box([self.series_plot], layout=w.Layout(width="100%", overflow="auto"))
        series_box.add_class("posekit-trajectory-series-box")
        more = (f" (showing the first {len(self.spans)} of {self.total_spans})"
                if self.total_spans > len(self.spans) else "")
        summary = w.HTML("<pre class='pk-words' style='white-space:pre-wrap;margin:0'>"
                         + html.escape(report.summary()) + "</pre>")
        counts = ", ".join(f"{FLAG_STYLES.get(k, (k,))[0]} {v}" for k, v in report.counts().items() if v)
        head = w.HTML(f"<b>Trajectory check</b> — {report.rows} rows; flagged: {html.escape(counts or 'nothing')}")
        side = w.VBox([w.HTML(f"<b>Flagged spans</b>{html.escape(more)} — click a marker in the bottom strip, "
                              "or choose here (arrow keys)"), self.span_list, self.detail],
                      layout=w.Layout(width="420px", min_width="380px", padding="0 14px 0 0"))
        details = w.Accordion(children=[summary])
        details.set_title(0, "the whole report in words")
        css = w.HTML("<style>.posekit-trajectory-view .widget-html-content { line-height: 1.35; }</style>")
        super().__init__([w.HTML(STYLE_SHEET), KeyboardScope(scope=".posekit-trajectory-view"), css, head,
                          series_box, w.HBox([side, pose_box]), details, SharePanel(self, "trajectory-state")])
        self.add_class("posekit-trajectory-view")
        self.span_list.observe(lambda ch: setattr(self, "chosen_span", int(ch["new"])), "value")
        self.observe(self._on_chosen, ["chosen_span"])
        if chosen_span != -1:
            self.chosen_span = int(chosen_span)
        else:
            self._show(-1)

    @property
    def series(self):
        """The live time-series figure widget (a retry in its :class:`FigureSlot` replaces it)."""
        return self.series_plot.figure

    @property
    def pose_figure(self):
        """The live 3D pose figure widget."""
        return self.pose_plot.figure

    def _attach_clicks(self, fig) -> None:
        fig.for_each_trace(lambda tr: tr.on_click(self._on_click),
                           selector=lambda tr: tr.uid in _FLAG_UIDS)

    def _on_click(self, trace, points, selector) -> None:
        if points.point_inds:
            self.chosen_span = int(trace.customdata[points.point_inds[0]])

    def _on_chosen(self, change) -> None:
        k = int(change["new"])
        if not -1 <= k < len(self.spans):
            raise PoseInputError(f"chosen_span: got {k}; accepted -1 (none) to {len(self.spans) - 1}")
        if self.span_list.value != k:
            self.span_list.value = k
        self._show(k)

    def shown_rows(self) -> tuple[int | None, int | None]:
        """(row drawn, previous used row drawn) for the chosen span; None where nothing is drawn."""
        if self.chosen_span < 0:
            return None, None
        row = self.spans[self.chosen_span].first_row
        used = np.flatnonzero(self.report.used[:row])
        return row, (int(used[-1]) if used.size else None)

    def _show(self, k: int) -> None:
        series = self.series
        box = next(series.select_shapes(selector=dict(name=HIGHLIGHT)))
        if k < 0:
            self.detail.value = "<div class='pk-words'>No span chosen.</div>"
            box.visible = False
            self._draw(None, None)
        else:
            s = self.spans[k]
            row, prev = self.shown_rows()
            rot = row_rotation(self.report, row)
            prev_rot = None if prev is None else row_rotation(self.report, prev)
            e = self.report.euler_wrapped[row]
            unit = "deg" if self.report.convention.degrees else "rad"
            words = [f"<b>{html.escape(s.words())}</b>",
                     html.escape(self.report.findings[s.finding].description)]
            if rot is None:
                words.append(f"row {row} was rejected: no pose to draw")
            else:
                words.append(f"row {row}: Euler readback "
                             + ", ".join(format_number(v, 4, trim=True) for v in e) + f" {unit}")
                if self.report.quaternion is not None:
                    words.append("stored quaternion (sign made continuous): "
                                 + ", ".join(format_number(v, 4, trim=True) for v in self.report.quaternion[row]))
                if prev is not None:
                    words.append(f"dotted: row {prev}, the used row before")
            self.detail.value = "<div class='pk-words'>" + "<br>".join(words) + "</div>"
            shaded = next(series.select_shapes(selector=dict(name=span_shape(k))))
            with series.batch_update():
                box.x0 = shaded.x0
                box.x1 = shaded.x1
                box.visible = True
            self._draw(rot, prev_rot)

    def _draw(self, rot, prev_rot) -> None:
        xs, ys, zs, vis = [], [], [], []
        for r in (rot, prev_rot):
            x, y, z = frame_points(np.eye(3) if r is None else r)
            xs.append(x), ys.append(y), zs.append(z), vis.append(r is not None)
        body = body_points(np.eye(3) if rot is None else rot)
        self.pose_figure.restyle({
            _FRAME: {"x": xs[0], "y": ys[0], "z": zs[0], "visible": vis[0]},
            _BODY: {"x": body[:, 0].tolist(), "y": body[:, 1].tolist(), "z": body[:, 2].tolist(), "visible": vis[0]},
            _PREVIOUS: {"x": xs[1], "y": ys[1], "z": zs[1], "visible": vis[1]}})

    # --- sharing ------------------------------------------------------------------------
    def to_state(self, notes: str = "") -> State:
        """The chosen span, the report in words and the poses drawn (the data itself is not stored)."""
        poses = []
        row, prev = self.shown_rows()
        for name, r in (("pose at the span", row), ("one used row before", prev)):
            if r is not None:
                rot = row_rotation(self.report, r)
                if rot is not None:
                    poses.append(NamedPose(f"{name} (row {r})", make_transform(rot, np.zeros(3)),
                                           self.report.convention))
        settings = TrajectorySettings(chosen_span=int(self.chosen_span), summary=self.report.summary()[:MAX_TEXT])
        return State("trajectory", settings.as_dict(), tuple(poses), (), notes)

    def code_cell(self) -> str:
        """A cell that reopens this view on the same report.

        The trajectory itself (up to millions of rows) is not written into the cell: the cell
        expects ``report`` to be rebuilt from the same log first, e.g. with
        ``posekit.analysis.check_trajectory_csv(path, ...)``, and checks that it matches.
        """
        versions = environment_versions()
        summary = self.report.summary().splitlines()[0] if self.report.summary() else ""
        return (f"# Reopens this posekit trajectory view (posekit {versions['posekit']}).\n"
                "# First rebuild `report` from the same log with the same settings, e.g.\n"
                "#   report = posekit.analysis.check_trajectory_csv(path, ...)\n"
                "from posekit.widgets import TrajectoryView\n\n"
                f"expected_summary = {summary!r}\n"
                "assert report.summary().splitlines()[0] == expected_summary, \"this is not the same trajectory report\"\n"
                f"widget = TrajectoryView(report, chosen_span={int(self.chosen_span)})\nwidget\n")

    @classmethod
    def from_state(cls, state: State, report: TrajectoryReport) -> "TrajectoryView":
        """Rebuild the view of ``report`` with the span chosen in ``state``.

        The settings are checked with :class:`TrajectorySettings`; the state must have been
        saved from this same report (its summary matches) and name one of its spans.
        """
        s = TrajectorySettings.from_state(state)
        if not isinstance(report, TrajectoryReport):
            raise PoseInputError(f"TrajectoryView.from_state needs the TrajectoryReport the state was saved from, "
                                 f"got {type(report).__name__}")
        if s.summary != report.summary()[:MAX_TEXT]:
            raise fail("settings.summary", "the report in words differs from this report's",
                       "the state of a view of this same report (rebuild the report from the same log with the "
                       "same settings)")
        spans, _ = flagged_spans(report)
        if s.chosen_span >= len(spans):
            raise fail("settings.chosen_span", f"got {s.chosen_span}; this report has {len(spans)} flagged spans",
                       f"-1 (none) to {len(spans) - 1}")
        return cls(report, chosen_span=s.chosen_span)
