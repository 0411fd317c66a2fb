"""The debugging desk: paste the numbers you got, say what you expected, read the ranked explanations.

One widget, opened with one call (``DebugDesk()``).  Glue only: the parser
(:func:`~posekit.analysis.parse.parse_numbers`), the expected pose
(:func:`~posekit.analysis.diagnose.expected_pose`,
:func:`~posekit.analysis.diagnose.pose_from_words`) and the ranking
(:func:`~posekit.analysis.diagnose.diagnose`,
:func:`~posekit.analysis.diagnose.diagnose_batch`) do all the work; the view layer
draws.  State lives in traitlets only (``pasted``, ``pairs``, ``expected_source``,
``expected_text``, ``expected_kind``, ``expected_override``, ``expected_matrix``,
``convention``, ``chosen``, ``palette``); the diagnosis shown is always recomputed
from them.

What was typed as the expected pose is guessed (words, or numbers by their count;
angles without a unit are degrees, as everywhere in posekit) and said back in one
line; each other reading of it is one button away.  The corrected numbers and code
have copy buttons (the browser's clipboard, or the text selected in a read-only box
where the page may not write the clipboard); "apply fix" pastes the corrected numbers
in place of the ones you got and "undo" takes that back.  Whenever an input cannot be
read, everything computed from it is cleared, not left showing the last result.
"""

from __future__ import annotations

import html
import math
import re
from collections.abc import Mapping
from dataclasses import dataclass, replace
from typing import ClassVar

import anywidget
import ipywidgets as w
import numpy as np
import plotly.graph_objects as go
import traitlets as t

from ..analysis.diagnose import (TYPED_UNIT, BatchDiagnosis, Diagnosis, ExpectedPose, ReadingChoice, diagnose,
                                 diagnose_batch, expected_pose, expected_rows, pose_from_words)
from ..io.paste import ParsedNumbers, parse_numbers
from ..io.limits import PASTE_LIMIT
from ..io.settings import Choice, ConventionText, Floats, IntRange, Text, WidgetSettings, register_settings, setting
from ..io.state import NamedPose, State, environment_versions
from ..core.convention import CHOICES, DEFAULT, Convention
from ..core.checks import as_numbers
from ..core.errors import PoseInputError
from ..core.reading import as_convention, write_rotation
from ..core.transforms import Pose, make_transform, write_transform
from ..view.diagnosis import choice_words, error_html, guess_html, parsed_html, plural, residual_figure
from ..view.frames import FRAME_UIDS, body_points, frame_figure, frame_points, overlay_uid, trace_index
from ..view.readouts import STYLE_SHEET, matrix_html, panel_html
from .controls import ConventionBar, KeyboardScope, LiveFigure
from .sharing import SharePanel, python_call

__all__ = ["DebugDesk", "EXPECTED_KINDS", "EXPECTED_OVERRIDES", "DESK_FIELDS", "DeskSettings", "CopyButton"]

#: what the typed expected numbers are ("by count" lets the count decide, as expected_pose does)
EXPECTED_KINDS = ("by count", "euler", "quaternion", "rotation-vector", "matrix", "transform", "position-euler",
                  "position-quaternion", "position-rotation-vector")
#: one convention field set for the expected numbers only ("none": the bar's fields, the unit guessed)
EXPECTED_OVERRIDES = ("none", "unit=degrees", "unit=radians", "scalar=first", "scalar=last", "layout=row-major",
                      "layout=column-major")
#: the kind a count of numbers gives when no kind is chosen (as expected_pose reads them)
_KIND_OF_COUNT = {3: "euler", 4: "quaternion", 6: "position-euler", 7: "position-quaternion", 9: "matrix",
                  12: "transform", 16: "transform"}
#: the desk's boxes, as messages name them
_GOT_BOX = "the 'numbers you got' box"
_EXPECTED_BOX = "the 'pose you expected' box"
#: the convention fields the desk offers (the rest stay at posekit's defaults)
DESK_FIELDS = ("sequence", "axes", "unit", "scalar", "algebra", "layout", "direction")
_IDENTITY16 = tuple(float(v) for v in np.eye(4).ravel())
#: the 3D view's traces, found by uid (frame_figure's stable uids), never by position
_EXPECTED, _BODY, _AS_READ, _CORRECTED = FRAME_UIDS["frame"], FRAME_UIDS["body"], overlay_uid(0), overlay_uid(1)
_SOURCES = (("typed: numbers or words", "numbers"), ("a description in words", "words"),
            ("a pose passed in", "pose"))

DESK_CSS = """<style>
.posekit-desk .widget-html-content { line-height: 1.35; }
.posekit-desk .pk-ok { font-size: 12.5px; color: #1b4d1b; }
.posekit-desk .pk-bad { font-size: 12.5px; color: #a50f15; font-weight: 600; }
.posekit-desk pre.pk-caret { font-size: 12px; background: #fbf3f3; border: 1px solid #e6caca; padding: 4px 6px;
  margin: 3px 0; white-space: pre; overflow-x: auto; }
.posekit-desk table.pk-readings { font-size: 12px; border-collapse: collapse; margin-top: 2px; }
.posekit-desk table.pk-readings td, .posekit-desk table.pk-readings th { padding: 1px 6px; text-align: left;
  border-bottom: 1px solid #eee; }
.posekit-desk table.pk-readings th { color: #666; font-weight: normal; }
.posekit-desk-list .widget-radio-box { gap: 2px; }
.posekit-desk-list .widget-radio-box label { white-space: normal !important; line-height: 1.35; height: auto;
  padding: 4px 6px; border-radius: 3px; font-size: 12.5px; display: flex; flex-direction: row-reverse;
  justify-content: flex-end; align-items: flex-start; gap: 6px; }
.posekit-desk-list .widget-radio-box label:has(input:checked) { background: #eaf2fb; outline: 1px solid #9ec3e6; }
.posekit-desk-list .widget-radio-box input { margin-top: 3px; flex: none; }
.posekit-desk .pk-section { font-weight: 600; font-size: 13px; margin: 6px 0 2px 0; }
.posekit-desk .pk-sentence { font-size: 13px; font-weight: 600; margin: 2px 0 4px 0; }
.posekit-desk .pk-mark { display: inline-block; font-size: 11px; padding: 0 5px; border-radius: 3px;
  margin-right: 4px; border: 1px solid #999; color: #333; background: #f4f4f4; }
.posekit-desk .pk-mark-tie { border-color: #c51b7d; color: #8e0152; background: #fde0ef; }
.posekit-desk ul.pk-same { margin: 2px 0 4px 0; padding: 0 10px 0 18px; font-size: 12px; color: #444; }
.posekit-desk-detail .widget-html-content { overflow-wrap: anywhere; padding-right: 10px; }
.posekit-desk textarea { font-family: ui-monospace, SFMono-Regular, Menlo, Consolas, monospace; font-size: 12.5px; }
.posekit-desk .pk-read-as { font-size: 12.5px; color: #1b4d1b; margin: 2px 0; }
.posekit-desk .pk-unit-note { font-size: 12.5px; color: #7a4a00; background: #fff4e0; border: 1px solid #f0d3a0;
  padding: 2px 6px; margin: 2px 0; border-radius: 3px; }
.posekit-desk .pk-stale { font-size: 12.5px; color: #555; background: #f3f3f3; border: 1px dashed #aaa;
  padding: 4px 6px; margin: 4px 0; }
.posekit-desk-choices { flex-wrap: wrap; gap: 4px; align-items: center; }
.posekit-desk-choices .widget-button { height: 24px; font-size: 12px; padding: 0 8px; width: auto; }
.posekit-desk-actions { flex-wrap: wrap; gap: 6px; align-items: flex-start; }
.posekit-desk-actions .widget-button { height: 26px; font-size: 12px; width: auto; }
.posekit-desk .pk-copy { display: inline-flex; flex-direction: column; gap: 2px; }
.posekit-desk .pk-copy-button { height: 26px; font-size: 12px; padding: 0 10px; cursor: pointer; }
.posekit-desk .pk-copy-status { font-size: 11.5px; color: #555; }
.posekit-desk textarea.pk-copy-box { width: 420px; font-size: 12px; }
</style>"""


def _lines(text: str) -> list[tuple[int, str]]:
    return [(i + 1, ln) for i, ln in enumerate(text.splitlines()) if ln.strip()]


def _numbers_text(arr) -> str:
    """Numbers written back as text, one pose per line, shortest round-trip reprs."""
    a = np.asarray(arr, dtype=float)
    rows = a.reshape(1, -1) if a.ndim <= 1 else a.reshape(a.shape[0], -1)
    return "\n".join(" ".join(repr(float(v)) for v in row) for row in rows)


def _marks(e, batch: bool) -> str:
    out = []
    if e.equivalents:
        n = len(e.equivalents)
        out.append(f"the same mistake written {n} other way{'s' if n > 1 else ''}")
    if e.separable:
        out.append("another sample would separate it from " + (f"{len(e.separable)} others" if len(e.separable) > 1
                                                               else "one other"))
    if e.near_tie:
        out.append("near tie")
    return "".join(f"  [{m}]" for m in out)


def _residual_words(e, batch: bool) -> str:
    rms = "rms " if batch else ""
    text = f"rotation off {rms}{math.degrees(e.rotation_residual):.3g}°"
    if e.translation_residual is not None:
        text += f", position off {rms}{1000 * e.translation_residual:.3g} mm"
    return text


class CopyButton(anywidget.AnyWidget):
    """A small button that copies ``text`` to the clipboard, in the browser (no round trip to the kernel).

    Where the page may not write the clipboard (a page that is no secure context, a browser
    that refuses the permission), the text is shown in a read-only box beside it, selected,
    so Ctrl+C copies it; the line under the button says which happened.  Disabled while
    ``text`` is empty.
    """

    _esm = """
    export default {
      render({ model, el }) {
        const wrap = document.createElement("div");
        wrap.className = "pk-copy";
        const button = document.createElement("button");
        button.type = "button";
        button.className = "pk-copy-button jupyter-button";
        const status = document.createElement("span");
        status.className = "pk-copy-status";
        const box = document.createElement("textarea");
        box.readOnly = true;
        box.className = "pk-copy-box";
        box.style.display = "none";
        const show = () => {
          const text = model.get("text");
          button.textContent = model.get("label");
          button.disabled = !text;
          button.title = text ? "copy to the clipboard" : "nothing to copy yet";
          box.value = text;
          box.style.display = "none";
          status.textContent = "";
        };
        const selectInBox = (why) => {
          box.value = model.get("text");
          box.rows = Math.min(10, box.value.split("\\n").length + 1);
          box.style.display = "";
          box.focus();
          box.select();
          status.textContent = "the clipboard is not available here (" + why + "): the text is selected below, "
            + "press Ctrl+C (Cmd+C) to copy it";
        };
        button.addEventListener("click", async () => {
          const text = model.get("text");
          if (!text) return;
          try {
            if (!window.isSecureContext || !navigator.clipboard || !navigator.clipboard.writeText)
              throw new Error("this page may not write the clipboard");
            await navigator.clipboard.writeText(text);
            box.style.display = "none";
            status.textContent = "copied";
          } catch (err) {
            selectInBox(String((err && err.message) || err));
          }
        });
        model.on("change:text", show);
        model.on("change:label", show);
        show();
        wrap.append(button, status, box);
        el.append(wrap);
      }
    };
    """
    text = t.Unicode("").tag(sync=True)
    label = t.Unicode("copy").tag(sync=True)


class _DeskShare(SharePanel):
    """The share panel, with the diagnosis (ranked, corrected numbers and code) written into the HTML report."""

    def _report(self) -> None:
        from ..view.report import write_report

        path = self._stem().with_suffix(".html")
        d = self.owner.diagnosis
        if d is not None:  # the whole diagnosis: the report shows the chosen explanation's numbers and code
            chosen = min(int(self.owner.chosen), len(d.explanations) - 1)
            write_report(self.owner.to_state(), path, diagnosis=d, chosen=chosen,
                         title="posekit debugging desk report")
        else:
            write_report(self.owner.to_state(), path, diagnosis=self.owner.diagnosis_lines(),
                         title="posekit debugging desk report")
        self.message.value = f"report written to <code>{html.escape(str(path.resolve()))}</code>"


@register_settings
@dataclass(frozen=True)
class DeskSettings(WidgetSettings):
    """What a :class:`DebugDesk` saves in a state file: the keyword arguments that rebuild it."""

    kind: ClassVar[str] = "desk"
    pasted: str = setting(Text(PASTE_LIMIT))
    pairs: str = setting(Choice("one", "many"))
    expected_source: str = setting(Choice(*(v for _, v in _SOURCES)))
    expected_text: str = setting(Text())
    expected_kind: str = setting(Choice(*EXPECTED_KINDS))
    expected_matrix: tuple = setting(Floats(16))
    convention: str = setting(ConventionText())
    chosen: int = setting(IntRange(0, 99))
    palette: str = setting(Choice("standard", "colour-blind"))
    expected_override: str = setting(Choice(*EXPECTED_OVERRIDES))

    @classmethod
    def from_mapping(cls, mapping, path: str = "settings") -> "DeskSettings":
        """As every widget's, except that a state written before ``expected_override`` existed reads as
        ``"none"`` (what every desk did then); every other key is checked as usual."""
        if isinstance(mapping, Mapping) and "expected_override" not in mapping:
            mapping = {**mapping, "expected_override": "none"}
        return super().from_mapping(mapping, path)


class DebugDesk(w.VBox):
    """Paste wrong numbers, state the pose you expected, read what went wrong and how to fix it.

    ``observed``: numbers to paste for you (an array: one pose, or ``(N, n)`` for N
    pairs); ``pasted``: the text itself.  ``expected``: a description in words
    (``"pitched 25 degrees down, 0.3 m forward"``), numbers read under
    ``convention`` as ``expected_kind``, a :class:`~posekit.Pose` / 4x4 matrix, or an
    :class:`~posekit.widgets.Explorer` (its pose is followed live).  The same
    ``convention`` is the reading you assumed for the pasted numbers.

    >>> desk = DebugDesk(pasted="-0.0151 0.0858 0.1730 0.9811",
    ...                  expected="yawed 20 degrees left, pitched 10 degrees down")
    >>> desk.diagnosis.best.sentence
    'The quaternion was written scalar-last but read scalar-first.'
    """

    pasted = t.Unicode("")
    pairs = t.Unicode("one")
    expected_source = t.Unicode("numbers")
    expected_text = t.Unicode("")
    expected_kind = t.Unicode("by count")
    expected_matrix = t.Tuple(*[t.Float() for _ in range(16)], default_value=_IDENTITY16)
    convention = t.Unicode("sequence=z-y-x unit=degrees")
    chosen = t.Int(0)
    palette = t.Unicode("colour-blind")
    expected_override = t.Unicode("none")

    def __init__(self, observed=None, expected=None, *, pasted: str = "", pairs: str | None = None,
                 expected_source: str | None = None, expected_text: str = "", expected_kind: str = "by count",
                 expected_matrix=None, convention="sequence=z-y-x unit=degrees", chosen: int = 0,
                 palette: str = "colour-blind", expected_override: str = "none"):
        conv = as_convention(convention)
        self._explorer = None
        self._diagnosis = None
        self._as_read = None
        self._building = True
        self._undo: list[dict] = []
        self._choices_shown = None
        matrix = _IDENTITY16 if expected_matrix is None else tuple(float(v) for v in np.ravel(expected_matrix))
        if len(matrix) != 16:
            raise PoseInputError(f"expected_matrix: got {len(matrix)} numbers; expected the 16 of a 4x4 transform")
        # --- what was passed in becomes the text and settings the desk shows --------------
        if isinstance(observed, str):  # text as printed somewhere: it goes into the paste box as is
            if pasted:
                raise PoseInputError("pass either observed numbers or pasted text, not both")
            pasted, observed = observed, None
        if observed is not None:
            if pasted:
                raise PoseInputError("pass either observed numbers or pasted text, not both")
            arr = as_numbers(observed, "observed numbers", None)
            many = arr.ndim >= 2 and not (arr.ndim == 2 and arr.shape in ((3, 3), (4, 4), (3, 4)))
            pasted = _numbers_text(arr if many else arr.reshape(-1))
            pairs = pairs or ("many" if many else "one")
        if expected is not None:
            expected_source, expected_text, matrix, expected_kind = self._expected_from(expected, conv, expected_kind,
                                                                                         matrix)
        pairs = pairs or "one"
        expected_source = expected_source or ("numbers" if expected_text or expected is None else "words")
        if expected_source == "numbers" and not expected_text and expected is None:
            expected_text = "0 0 0"
        for name, value, ok in (("pairs", pairs, ("one", "many")),
                                ("expected_source", expected_source, tuple(v for _, v in _SOURCES)),
                                ("expected_kind", expected_kind, EXPECTED_KINDS),
                                ("expected_override", expected_override, EXPECTED_OVERRIDES),
                                ("palette", palette, ("standard", "colour-blind"))):
            if value not in ok:
                raise PoseInputError(f"{name}: got {value!r}; accepted: {', '.join(ok)}")
        if not isinstance(pasted, str) or not isinstance(expected_text, str):
            raise PoseInputError("pasted and expected_text must be text")

        # --- controls ------------------------------------------------------------------
        self.paste_box = w.Textarea(value=pasted, placeholder="paste the numbers you got: a quaternion, Euler angles, "
                                    "a matrix, array([...]), key: value text ...", continuous_update=True,
                                    layout=w.Layout(width="100%", height="96px"))
        self.paste_box.add_class("posekit-desk-paste")
        self.pairs_choice = w.ToggleButtons(options=[("one pose", "one"), ("several pairs, one per line", "many")],
                                            value=pairs, style=w.ToggleButtonsStyle(button_width="auto"))
        self.pairs_choice.add_class("posekit-desk-pairs")
        self.understood = w.HTML(layout=w.Layout(width="100%"))
        self.understood.add_class("posekit-desk-understood")
        self.source_choice = w.ToggleButtons(options=list(_SOURCES), value=expected_source,
                                             style=w.ToggleButtonsStyle(button_width="auto"))
        self.source_choice.add_class("posekit-desk-source")
        self.kind_choice = w.Dropdown(options=list(EXPECTED_KINDS), value=expected_kind, description="numbers are",
                                      style={"description_width": "92px"}, layout=w.Layout(width="310px"))
        self.kind_choice.add_class("posekit-desk-kind")
        self.expected_box = w.Textarea(value=expected_text, continuous_update=True,
                                       placeholder="e.g. 30 -10 0, or: pitched 25 degrees down, 0.3 m forward",
                                       layout=w.Layout(width="100%", height="58px"))
        self.expected_box.add_class("posekit-desk-expected")
        self.expected_words = w.HTML(layout=w.Layout(width="100%"))
        self.expected_words.add_class("posekit-desk-expected-words")
        self.read_as = w.HTML(layout=w.Layout(width="100%"))
        self.read_as.add_class("posekit-desk-read-as")
        self.choice_row = w.HBox([], layout=w.Layout(width="100%"))
        self.choice_row.add_class("posekit-desk-choices")
        self.bar = ConventionBar(fields=DESK_FIELDS, initial={f: getattr(conv, f) for f in DESK_FIELDS})
        self.explanation_list = w.RadioButtons(options=[], layout=w.Layout(width="100%"))
        self.explanation_list.add_class("posekit-desk-list")
        self.detail = w.HTML(layout=w.Layout(width="100%"))
        self.detail.add_class("posekit-desk-detail")
        self.code_box = w.Textarea(layout=w.Layout(width="100%", height="130px"))
        self.code_box.add_class("posekit-desk-code")
        self.copy_numbers = CopyButton(label="copy corrected numbers")
        self.copy_numbers.add_class("posekit-desk-copy-numbers")
        self.copy_code = CopyButton(label="copy code")
        self.copy_code.add_class("posekit-desk-copy-code")
        self.apply_button = w.Button(description="apply fix", disabled=True,
                                     tooltip="paste the corrected numbers in place of the numbers you got")
        self.apply_button.add_class("posekit-desk-apply")
        self.undo_button = w.Button(description="undo", disabled=True,
                                    tooltip="one step back: the numbers and settings before the last fix")
        self.undo_button.add_class("posekit-desk-undo")
        self.action_status = w.HTML(layout=w.Layout(width="100%"))
        self.action_status.add_class("posekit-desk-action-status")
        self.actions = w.HBox([self.copy_numbers, self.copy_code, self.apply_button, self.undo_button],
                              layout=w.Layout(width="100%"))
        self.actions.add_class("posekit-desk-actions")
        self.palette_choice = w.ToggleButtons(options=[("standard colours", "standard"),
                                                       ("colour-blind safe", "colour-blind")], value=palette,
                                              style=w.ToggleButtonsStyle(button_width="auto"))
        fig = frame_figure(np.eye(3), np.zeros(3), overlays=[("read", np.eye(3), np.zeros(3)),
                                                              ("fixed", np.eye(3), np.zeros(3))],
                           palette=palette, height=470)
        self.figure = LiveFigure(self._style_figure(fig))
        self.figure.add_class("posekit-desk-figure")
        self.figure_box = w.Box([self.figure], layout=w.Layout(width="100%"))
        self.figure_box.add_class("posekit-desk-3d")
        self.residual_box = w.Box([], layout=w.Layout(width="100%", display="none"))
        self.residual_box.add_class("posekit-desk-residuals")

        left = w.VBox([w.HTML("<div class='pk-section'>1. The numbers you got</div>"), self.pairs_choice,
                       self.paste_box, self.understood,
                       w.HTML("<div class='pk-section'>2. The pose you expected</div>"), self.source_choice,
                       self.kind_choice, self.expected_box, self.read_as, self.choice_row, self.expected_words],
                      layout=w.Layout(width="440px", min_width="440px", padding="0 14px 0 0"))
        right = w.VBox([w.HTML("<div class='pk-section'>3. Explanations, most likely first "
                               "<span style='font-weight:normal;color:#666'>(keyboard: Tab to one, Space chooses it)</span></div>"),
                        self.explanation_list, self.detail, self.figure_box, self.residual_box,
                        w.HTML("<div class='pk-section'>Corrected reading — copy into your code</div>"),
                        self.code_box, self.actions, self.action_status, self.palette_choice],
                       layout=w.Layout(flex="1 1 0", min_width="0", overflow="hidden", padding="0 6px 0 0"))
        top = w.VBox([w.HTML("<div class='pk-section'>Your convention — how you read the numbers you got, and "
                             "how the expected numbers were written (their unit is guessed: see the 'read as' "
                             "line)</div>"), self.bar])
        self.share = _DeskShare(self, "desk-state")
        super().__init__([w.HTML(STYLE_SHEET + DESK_CSS), KeyboardScope(scope=".posekit-desk"), top,
                          w.HBox([left, right]), self.share])
        self.add_class("posekit-desk")

        with self.hold_trait_notifications():
            self.convention = conv.to_text()
            self.pasted = pasted
            self.pairs = pairs
            self.expected_source = expected_source
            self.expected_text = expected_text
            self.expected_kind = expected_kind
            self.expected_matrix = matrix
            self.chosen = int(chosen)
            self.palette = palette
            self.expected_override = expected_override

        self.paste_box.observe(lambda ch: setattr(self, "pasted", ch["new"]), "value")
        self.expected_box.observe(lambda ch: setattr(self, "expected_text", ch["new"]), "value")
        self.pairs_choice.observe(lambda ch: setattr(self, "pairs", ch["new"]), "value")
        self.source_choice.observe(lambda ch: setattr(self, "expected_source", ch["new"]), "value")
        self.kind_choice.observe(lambda ch: setattr(self, "expected_kind", ch["new"]), "value")
        self.palette_choice.observe(lambda ch: setattr(self, "palette", ch["new"]), "value")
        self.explanation_list.observe(self._on_pick, "value")
        self.apply_button.on_click(lambda _: self.apply_fix())
        self.undo_button.on_click(lambda _: self.undo())
        for ctl in self.bar.controls.values():
            ctl.observe(self._on_setting, "value")
        self.observe(self._on_inputs, ["pasted", "pairs", "expected_source", "expected_text", "expected_kind",
                                       "expected_override", "expected_matrix", "convention"])
        self.observe(self._on_chosen, ["chosen"])
        self.observe(self._on_palette, ["palette"])
        if isinstance(expected, _explorer_type()):
            self.follow(expected)
        self._building = False
        self._recompute(keep_choice=True)

    # --- the expected pose passed in ----------------------------------------------------
    @staticmethod
    def _expected_from(expected, conv: Convention, kind: str, matrix):
        explorer = _explorer_type()
        if isinstance(expected, explorer):
            return "pose", "", tuple(float(v) for v in expected.to_pose().matrix.ravel()), kind
        if isinstance(expected, Pose):
            return "pose", "", tuple(float(v) for v in expected.matrix.ravel()), kind
        if isinstance(expected, ExpectedPose):
            if expected.rotation.ndim != 2:
                mats = expected.matrix
                return "numbers", _numbers_text(write_transform(mats, "matrix", conv, flat=True)), matrix, "transform"
            return "pose", "", tuple(float(v) for v in expected.matrix.ravel()), kind
        if isinstance(expected, str):
            looks_like_words = any(c.isalpha() for c in expected) and not any(c in expected for c in "[:={")
            return ("words" if looks_like_words else "numbers"), expected, matrix, kind
        arr = np.asarray(expected, dtype=float)
        if arr.shape == (4, 4):
            return "pose", "", tuple(float(v) for v in Pose(arr).matrix.ravel()), kind
        if arr.ndim == 3 and arr.shape[1:] in ((4, 4), (3, 3)):
            # canonical matrices, as diagnose_batch reads them: written out under the convention
            if arr.shape[1:] == (3, 3):
                return "numbers", _numbers_text(write_rotation(arr, "matrix", conv, flat=True)), matrix, "matrix"
            return "numbers", _numbers_text(write_transform(arr, "matrix", conv, flat=True)), matrix, "transform"
        return "numbers", _numbers_text(arr if arr.ndim >= 2 and arr.shape != (3, 3) else arr.reshape(-1)), \
            matrix, kind

    def follow(self, explorer) -> None:
        """Take the expected pose from an :class:`~posekit.widgets.Explorer`, live, from now on."""
        if self._explorer is not None:
            self._explorer.unobserve(self._on_explorer, ["angles", "translation", "convention"])
        self._explorer = explorer
        explorer.observe(self._on_explorer, ["angles", "translation", "convention"])
        with self.hold_trait_notifications():
            self.expected_source = "pose"
            self.expected_matrix = tuple(float(v) for v in explorer.to_pose().matrix.ravel())

    def _on_explorer(self, change) -> None:
        self.expected_matrix = tuple(float(v) for v in self._explorer.to_pose().matrix.ravel())

    # --- results ------------------------------------------------------------------------
    @property
    def diagnosis(self) -> Diagnosis | BatchDiagnosis | None:
        """The diagnosis shown now (None while the inputs cannot be read)."""
        return self._diagnosis

    def chosen_explanation(self):
        d = self._diagnosis
        if d is None or not d.explanations:
            return None
        return d.explanations[min(self.chosen, len(d.explanations) - 1)]

    def convention_value(self) -> Convention:
        return Convention.parse(self.convention)

    def expected_convention(self) -> str | None:
        """The convention text the expected numbers are read with: the bar's fields that differ from
        posekit's defaults except the unit (angles typed without one are degrees, the other unit scored
        too), plus the one field chosen for the expected numbers only (``expected_override``)."""
        conv = self.convention_value()
        pairs = {f: getattr(conv, f) for f in CHOICES if f != "unit" and getattr(conv, f) != getattr(DEFAULT, f)}
        if self.expected_override != "none":
            field, _, value = self.expected_override.partition("=")
            pairs[field] = value
        return " ".join(f"{k}={v}" for k, v in pairs.items()) or None

    def expected(self) -> ExpectedPose:
        """The expected pose (one, or a batch in the several-pairs mode) the inputs describe."""
        conv = self.expected_convention()
        kind = None if self.expected_kind == "by count" else self.expected_kind
        if self.expected_source == "pose":
            return expected_pose(Pose(np.asarray(self.expected_matrix, dtype=float).reshape(4, 4)))
        if self.pairs == "one":
            if self.expected_source == "words":
                return pose_from_words(self.expected_text)
            return expected_pose(self.expected_text, kind, conv)
        lines = _lines(self.expected_text)
        if not lines:
            raise PoseInputError(f"{_EXPECTED_BOX} is empty; accepted: one pose per line, or one pose for every "
                                 "pair")
        if self.expected_source == "numbers":
            rows = _plain_rows(lines)
            if rows is not None:  # plain numbers on every line: one reading for all of them
                return expected_rows(rows, kind, conv)
        poses = []
        for number, line in lines:
            try:
                poses.append(pose_from_words(line) if self.expected_source == "words"
                             else expected_pose(line, kind, conv))
            except PoseInputError as exc:
                raise _retyped(exc, f"{_EXPECTED_BOX}, line {number}: {exc}") from None
        rot = np.stack([p.rotation for p in poses])
        tr = None if any(p.translation is None for p in poses) else np.stack([p.translation for p in poses])
        return ExpectedPose(rot, tr, f"{plural(len(poses), 'expected pose')} typed as lines",
                            guess=poses[0].guess)

    def _observed_lines(self):
        rows = []
        for number, line in _lines(self.pasted):
            try:
                rows.append((number, parse_numbers(line)))
            except PoseInputError as exc:
                raise _LineError(exc, number) from None
        if not rows:
            raise PoseInputError(f"{_GOT_BOX} is empty; accepted: one pose per line")
        first_line, first = rows[0]
        odd = next(((n, p) for n, p in rows if p.count != first.count), None)
        if odd is not None:
            raise PoseInputError(f"{_GOT_BOX}: line {odd[0]} holds {plural(odd[1].count, 'number')} but line "
                                 f"{first_line} holds {first.count}; accepted: every line one pose written the "
                                 "same way")
        return [p for _, p in rows]

    # --- one click: another reading of the expected input, the fix, and back -------------
    def choose_reading(self, choice: ReadingChoice) -> None:
        """Read the expected input as ``choice`` (one of ``expected().guess.alternatives``): a kind, or one
        field for the expected numbers only.  Choosing what the guess would pick anyway goes back to it."""
        if choice.field == "kind":
            count = None
            try:
                guess = self.expected().guess
                count = None if guess is None else guess.count
            except PoseInputError:
                pass
            self.expected_kind = "by count" if _KIND_OF_COUNT.get(count) == choice.value else choice.value
            return
        plain = TYPED_UNIT if choice.field == "unit" else getattr(self.convention_value(), choice.field)
        override = f"{choice.field}={choice.value}"
        if override not in EXPECTED_OVERRIDES:
            raise PoseInputError(f"reading of the expected numbers: got {override!r}; accepted: "
                                 + ", ".join(EXPECTED_OVERRIDES[1:]))
        self.expected_override = "none" if choice.value == plain else override

    def apply_fix(self) -> None:
        """Paste the chosen explanation's corrected numbers in place of the numbers you got (and read the
        expected angles in the unit that explanation took); :meth:`undo` restores what was there before."""
        d, e = self._diagnosis, self.chosen_explanation()
        if d is None or e is None:
            self.action_status.value = "<div class='pk-words'>Nothing to apply: no explanation is shown.</div>"
            return
        before = self._settings()
        changes = {"pasted": _numbers_text(np.asarray(e.corrected_numbers, dtype=float)
                                           if isinstance(d, BatchDiagnosis) else e.corrected_numbers)}
        exp = getattr(self, "_expected_value", None)
        guess = None if exp is None else exp.guess
        if exp is not None and e.expected_reading and e.expected_reading != exp.reading and guess is not None:
            unit = next((c for c in guess.alternatives if c.field == "unit"), None)
            if unit is not None:  # the explanation read the expected angles in the other unit
                plain = TYPED_UNIT
                changes["expected_override"] = "none" if unit.value == plain else f"unit={unit.value}"
        self._undo.append(before)
        self._set_all(changes)
        self.undo_button.disabled = False
        self.action_status.value = ("<div class='pk-words'>Fix applied: the corrected numbers replaced the numbers "
                                    "you got" + (", and the expected angles are read in "
                                                 + html.escape(changes["expected_override"].partition("=")[2])
                                                 if changes.get("expected_override", "none") != "none" else "")
                                    + ". 'undo' puts back what was there before.</div>")

    def undo(self) -> None:
        """One step back: the numbers and settings from before the last 'apply fix'."""
        if not self._undo:
            self.action_status.value = "<div class='pk-words'>Nothing to undo.</div>"
            return
        self._set_all(self._undo.pop())
        self.undo_button.disabled = not self._undo
        self.action_status.value = "<div class='pk-words'>Undone: the numbers and settings before the fix are " \
                                   "back.</div>"

    def _set_all(self, values: dict) -> None:
        """Set several settings at once and recompute once (the explanation chosen is kept)."""
        chosen = values.get("chosen")
        self._building = True
        try:
            with self.hold_trait_notifications():
                for name, value in values.items():
                    if name != "chosen":
                        setattr(self, name, tuple(value) if name == "expected_matrix" else value)
        finally:
            self._building = False
        self._recompute(keep_choice=chosen is None)
        if chosen is not None:
            self.chosen = min(int(chosen), max(len(self.explanation_list.options) - 1, 0))
            self._show_choice()

    # --- sharing ------------------------------------------------------------------------
    def _settings(self) -> dict:
        return DeskSettings(pasted=self.pasted, pairs=self.pairs, expected_source=self.expected_source,
                            expected_text=self.expected_text, expected_kind=self.expected_kind,
                            expected_matrix=tuple(float(v) for v in self.expected_matrix),
                            convention=self.convention, chosen=int(self.chosen), palette=self.palette,
                            expected_override=self.expected_override).as_dict()

    def to_state(self, notes: str = "") -> State:
        """The pasted text, expected pose and chosen explanation (plus the poses drawn) as a State."""
        poses = []
        conv = self.convention_value()
        for name, rot, tr in self._drawn():
            try:
                poses.append(NamedPose(name, make_transform(rot, tr), conv))
            except PoseInputError:
                continue  # a reflection or a non-orthonormal block cannot be a state pose; the text keeps it
        return State("desk", self._settings(), tuple(poses), (), notes)

    @classmethod
    def from_state(cls, state: State) -> "DebugDesk":
        """Rebuild a desk from a state (e.g. ``load_state("bug.json")``).

        The settings are checked with :class:`DeskSettings` first; a bad one raises
        :class:`~posekit.io.state.StateFileError` naming ``settings.<field>``.
        """
        return cls(**DeskSettings.from_state(state).as_dict())

    def code_cell(self) -> str:
        """A notebook cell that rebuilds exactly this desk."""
        return python_call("posekit.widgets", "DebugDesk", self._settings(), environment_versions(), "desk")

    def diagnosis_lines(self) -> list[str]:
        """The diagnosis in plain lines, for the HTML report."""
        d = self._diagnosis
        if d is None:
            return ["no diagnosis: the inputs could not be read"]
        lines = [d.verdict, f"observed: {d.assumed_reading}", d.expected_reading]
        exp = getattr(self, "_expected_value", None)
        if exp is not None and exp.guess is not None:
            lines.append("expected " + exp.guess.line() + (f" (note: {exp.guess.note()})" if exp.guess.note() else ""))
        if isinstance(d, BatchDiagnosis):
            lines.append(f"{d.pairs} pairs; " + ("one explanation fits every pair" if d.consistent
                                                 else "no single convention error fits every pair"))
        for e in d.explanations:
            lines.append(f"{e.rank}. {e.sentence} ({_residual_words(e, isinstance(d, BatchDiagnosis))})"
                         + _marks(e, isinstance(d, BatchDiagnosis)) + ("  <- chosen" if e is self.chosen_explanation()
                                                                       else ""))
        if isinstance(d, BatchDiagnosis) and d.offset is not None:
            lines.append("constant offset: " + d.offset.sentence)
        e = self.chosen_explanation()
        if e is not None and not isinstance(d, BatchDiagnosis):
            lines.append("corrected numbers (in the reading assumed): " + ", ".join(f"{v:.9g}" for v in
                                                                                  e.corrected_numbers))
        return lines

    # --- observers ----------------------------------------------------------------------
    def _on_setting(self, change) -> None:
        new = self.convention_value().changed(**self.bar.settings())
        if new.to_text() != self.convention:
            self.convention = new.to_text()

    def _on_inputs(self, change) -> None:
        if not self._building:
            self._recompute(keep_choice=False)

    def _on_pick(self, change) -> None:
        if change["new"] is not None and change["new"] != self.chosen:
            self.chosen = int(change["new"])

    def _on_chosen(self, change) -> None:
        if self.explanation_list.value != self.chosen and self.chosen < len(self.explanation_list.options):
            self.explanation_list.value = self.chosen
        self._show_choice()

    def _on_palette(self, change) -> None:
        fig = self._style_figure(frame_figure(np.eye(3), overlays=[("read", np.eye(3), None),
                                                                   ("fixed", np.eye(3), None)],
                                              palette=self.palette, height=470))
        with self.figure.batch_update():
            for trace in fig.data:
                if trace.uid == _BODY:
                    continue
                shown = self.figure.trace(trace.uid)
                shown.line = trace.line
                shown.marker = trace.marker
                shown.textfont = trace.textfont

    # --- computing and showing ----------------------------------------------------------
    def _sync_controls(self) -> None:
        conv = self.convention_value()
        self.bar.set_settings({f: getattr(conv, f) for f in DESK_FIELDS})
        for box, value in ((self.paste_box, self.pasted), (self.expected_box, self.expected_text),
                           (self.pairs_choice, self.pairs), (self.source_choice, self.expected_source),
                           (self.kind_choice, self.expected_kind)):
            if box.value != value:
                box.value = value
        self.expected_box.layout.display = "none" if self.expected_source == "pose" else None
        self.kind_choice.layout.display = None if self.expected_source == "numbers" else "none"

    def _recompute(self, keep_choice: bool) -> None:
        self._sync_controls()
        self._diagnosis = None
        self._as_read = None
        many = self.pairs == "many"
        observed = None
        unreadable = []   # which inputs cannot be read now: everything computed from them is cleared
        try:
            if many:
                rows = self._observed_lines()
                n = len(rows)
                self.understood.value = (f"<div class='pk-ok'>{plural(n, 'pair')}: {plural(n, 'line')} of "
                                         f"{plural(rows[0].count, 'number')} each</div>") + parsed_html(rows[0],
                                                                                                       limit=4)
                observed = np.stack([p.numbers for p in rows])
            elif not self.pasted.strip():
                self.understood.value = ("<div class='pk-words'>Nothing pasted yet: paste or type the numbers "
                                         "above.</div>")
                unreadable.append(f"{_GOT_BOX} is empty")
            else:
                observed = parse_numbers(self.pasted)
                self.understood.value = parsed_html(observed)
        except PoseInputError as exc:
            self.understood.value = error_html(exc.inner if isinstance(exc, _LineError) else exc) + \
                (f"<div class='pk-words'>in {_GOT_BOX}, line {exc.line_number}</div>" if isinstance(exc, _LineError)
                 else "")
            observed = None
            unreadable.append(f"{_GOT_BOX} cannot be read")
        try:
            exp = self.expected()
            self.expected_words.value = self._expected_html(exp)
        except PoseInputError as exc:
            self.expected_words.value = error_html(exc)
            exp = None
            unreadable.append(f"{_EXPECTED_BOX} cannot be read")
        self._show_guess(exp)
        problem = None
        if observed is not None and exp is not None:
            try:
                if many:
                    n = observed.shape[0]
                    k = 1 if exp.rotation.ndim == 2 else exp.rotation.shape[0]
                    if k not in (1, n):
                        raise PoseInputError(f"{_GOT_BOX} has {plural(n, 'line')} but {_EXPECTED_BOX} has "
                                             f"{plural(k, 'pose')}; accepted: one expected pose per line you got, or "
                                             "one expected pose for all of them")
                    if k == 1:
                        rot = exp.rotation if exp.rotation.ndim == 3 else exp.rotation[None]
                        tr = None if exp.translation is None else np.reshape(exp.translation, (1, 3))
                        exp = replace(exp, rotation=np.repeat(rot, n, 0),
                                      translation=None if tr is None else np.repeat(tr, n, 0))
                    self._diagnosis = diagnose_batch(exp, observed, expected_convention=self.convention_value())
                else:
                    if exp.rotation.ndim != 2:
                        raise PoseInputError(f"{_EXPECTED_BOX} holds {plural(exp.rotation.shape[0], 'pose')} but "
                                             "'one pose' is chosen above; accepted: one expected pose, or choose "
                                             "'several pairs, one per line'")
                    self._diagnosis = diagnose(exp, observed, expected_convention=self.convention_value())
            except PoseInputError as exc:
                problem = exc
        self._expected_value = exp
        d = self._diagnosis
        if d is None:
            self._clear_results(unreadable, problem)
            return
        self.apply_button.disabled = False
        if isinstance(d, Diagnosis):
            self._as_read = d.as_read
        batch = isinstance(d, BatchDiagnosis)
        options = [(f"{e.rank}. {e.sentence}  — {_residual_words(e, batch)}{_marks(e, batch)}", k)
                   for k, e in enumerate(d.explanations)]
        pick = min(self.chosen, len(options) - 1) if keep_choice else 0
        self.explanation_list.options = options
        self.explanation_list.value = pick
        if self.chosen != pick:
            self.chosen = pick  # shows the choice through _on_chosen
        else:
            self._show_choice()
        self.figure_box.layout.display = "none" if batch else None
        self.residual_box.layout.display = None if batch else "none"
        if batch:
            off = d.offset
            fig = residual_figure(d.rotation_residuals, d.translation_residuals,
                                  offset_rotation_residuals=None if off is None else off.residuals,
                                  offset_translation_residuals=None if off is None else off.translation_residuals,
                                  rotation_tolerance=math.radians(0.5), width=470)
            self.residual_figure = go.FigureWidget(fig)
            self.residual_box.children = [self.residual_figure]
        else:
            self.residual_figure = None
            self.residual_box.children = []

    def _clear_results(self, unreadable: list[str], problem) -> None:
        """No diagnosis: clear every output computed from the inputs (list, detail, code, copy texts, chart,
        overlays) and say in words why, so nothing from an earlier input stays on show."""
        self.explanation_list.options = []
        self.code_box.value = ""
        self.copy_numbers.text = ""
        self.copy_code.text = ""
        self.apply_button.disabled = True
        self.residual_figure = None
        self.residual_box.children = []
        self.residual_box.layout.display = "none"
        self.figure_box.layout.display = "none" if self.pairs == "many" else None
        if problem is not None:
            why = error_html(_in_desk_words(problem))
        elif unreadable:
            why = f"<div class='pk-words'>{html.escape(' and '.join(unreadable))}.</div>"
        else:
            why = ""
        self.detail.value = why + ("<div class='pk-stale'>No explanation shown: the explanations, the corrected "
                                   "numbers and code, and the chart appear as soon as both the numbers you got and "
                                   "the pose you expected can be read; nothing from an earlier input is kept on "
                                   "show.</div>")
        self._show_figure(None)

    def _show_guess(self, exp: ExpectedPose | None) -> None:
        """The one 'read as' line of the expected input, a note when its magnitudes point to the other unit,
        and one button per other reading."""
        guess = None if exp is None else exp.guess
        if guess is None or self.expected_source == "pose":
            self.read_as.value = ""
            choices = ()
        else:
            unit = next((c for c in guess.alternatives if c.field == "unit"), None)
            action = "" if unit is None else f"; if they are {unit.value}, click '{choice_words(unit)}' below"
            self.read_as.value = guess_html(guess, action)
            choices = guess.alternatives
        key = tuple((c.field, c.value, c.kind) for c in choices)
        if key == self._choices_shown:
            return
        self._choices_shown = key
        buttons = []
        for c in choices:
            b = w.Button(description=choice_words(c), tooltip=f"read the expected input as {choice_words(c)}",
                         layout=w.Layout(width="auto"))
            b.add_class("posekit-desk-choice")
            b.add_class(f"posekit-desk-choice-{c.field}")
            b.on_click(lambda _, c=c: self.choose_reading(c))
            buttons.append(b)
        old = self.choice_row.children
        self.choice_row.children = ([w.HTML("<span class='pk-words'>or read it as:</span>")] + buttons) if buttons \
            else []
        for child in old:
            child.close()

    def _expected_html(self, exp: ExpectedPose) -> str:
        if exp.rotation.ndim != 2:
            return f"<div class='pk-ok'>{plural(exp.rotation.shape[0], 'expected pose')}, one per line</div>"
        return ("<div class='pk-ok'>understood: " + html.escape(exp.source) + "</div>"
                + panel_html("expected pose, canonical 4x4 (child → parent)", matrix_html(exp.matrix, 4)))

    def _drawn(self):
        """(name, rotation, origin) of expected, observed as read and observed corrected (one-pose mode)."""
        d = self._diagnosis
        out = []
        exp = getattr(self, "_expected_value", None)
        if exp is None or exp.rotation.ndim != 2:
            return out
        out.append(("expected", exp.rotation, np.zeros(3) if exp.translation is None else exp.translation))
        if isinstance(d, Diagnosis):
            if self._as_read is not None and np.linalg.det(self._as_read[0]) > 0:
                r_read, tr = self._as_read
                out.append(("observed as read", r_read, np.zeros(3) if tr is None else tr))
            e = self.chosen_explanation()
            if e is not None:
                ct = e.corrected_translation
                out.append(("observed corrected", e.corrected_rotation, np.zeros(3) if ct is None else ct))
        return out

    def _show_choice(self) -> None:
        d = self._diagnosis
        e = self.chosen_explanation()
        if d is None or e is None:
            return
        batch = isinstance(d, BatchDiagnosis)
        marks = ""
        if e.equivalents:
            marks += (f"<span class='pk-mark'>the same mistake can be written {len(e.equivalents)} other "
                      f"way{'s' if len(e.equivalents) > 1 else ''}</span>")
        if e.separable:
            marks += (f"<span class='pk-mark'>{len(e.separable)} other explanation"
                      f"{'s fit' if len(e.separable) > 1 else ' fits'} these numbers equally: another sample "
                      "would separate them</span>")
        if e.near_tie:
            marks += "<span class='pk-mark pk-mark-tie'>near tie: the prior, not the data, decided the order</span>"
        verdict = "pk-ok" if d.explained else "pk-bad"
        said = e.rank == 1 and d.verdict != e.sentence  # an explained slip's verdict is its sentence, shown below
        parts = [f"<div class='{verdict}'>{html.escape(d.verdict)}</div>" if said else "",
                 f"<div class='pk-words'>observed {html.escape(d.assumed_reading)}</div>",
                 f"<div class='pk-words'>{html.escape(d.expected_reading)}</div>",
                 f"<div class='pk-sentence'>{html.escape(e.sentence)}</div>",
                 f"<div class='pk-words'>{html.escape(_residual_words(e, batch))}; {e.deviations:g} "
                 f"deviation{'' if e.deviations == 1 else 's'} "
                 f"from your reading; cost {e.cost:.3g}</div>", f"<div>{marks}</div>" if marks else ""]
        if e.equivalents:
            shown = "".join(f"<li>{html.escape(s)}</li>" for s in e.equivalents[:3])
            more = f"<li>and {len(e.equivalents) - 3} more</li>" if len(e.equivalents) > 3 else ""
            parts.append("<div class='pk-words'>the same mistake written another way (no sample can tell "
                         f"them apart):</div><ul class='pk-same'>{shown}{more}</ul>")
        if e.separable:
            shown = "".join(f"<li>{html.escape(s)}" + ("" if n is None else " — told apart by the numbers "
                                                          + html.escape(", ".join(f"{v:.6g}" for v in n)))
                            + "</li>" for s, n in e.separable[:3])
            parts.append("<div class='pk-words'>fit these numbers equally; another sample would separate them:"
                         f"</div><ul class='pk-same'>{shown}</ul>")
        if batch:
            s = d.statistics
            parts.append(f"<div class='pk-words'>best explanation per pair: rotation median "
                         f"{s['rotation_median_degrees']:.3g}°, max {s['rotation_max_degrees']:.3g}°"
                         + (f"; translation median {1000 * s['translation_median']:.3g} mm, max "
                            f"{1000 * s['translation_max']:.3g} mm" if 'translation_median' in s else "")
                         + ("; fits every pair" if d.consistent else "; does not fit every pair") + "</div>")
            if d.offset is not None:
                parts.append(f"<div class='pk-words'><b>Constant offset:</b> {html.escape(d.offset.sentence)}</div>")
        else:
            parts.append(f"<div class='pk-words'><b>Corrected numbers</b>, in your stated reading "
                         f"({html.escape(d.stated.text())}): <code class='posekit-desk-corrected'>"
                         + html.escape(", ".join(f"{v:.9g}" for v in e.corrected_numbers)) + "</code></div>")
            if self._as_read is not None and np.linalg.det(self._as_read[0]) < 0:
                parts.append("<div class='pk-words'>Read your way the numbers are a reflection, not a rotation, "
                             "so 'observed as read' is not drawn.</div>")
        self.detail.value = "".join(parts)
        if self.code_box.value != e.code:
            self.code_box.value = e.code
        self.copy_code.text = e.code
        self.copy_numbers.text = _corrected_text(e.corrected_numbers)
        if not batch:
            self._show_figure(e)

    @staticmethod
    def _style_figure(fig: go.Figure) -> go.Figure:
        def trace(uid):
            return fig.data[trace_index(fig, uid)]

        trace(_EXPECTED).name = "expected"
        trace(_AS_READ).name = "observed as read"
        trace(_CORRECTED).name = "observed corrected"
        trace(_AS_READ).line.dash = "dash"
        trace(_CORRECTED).textposition = "bottom center"
        trace(_BODY).name = "body (expected)"
        fig.update_layout(width=470, height=430, margin=dict(l=0, r=0, t=5, b=0),
                          legend=dict(orientation="h", y=0.0, x=0.0, font=dict(size=11)))
        return fig

    def _show_figure(self, e) -> None:
        drawn = {name: (rot, org) for name, rot, org in self._drawn()}
        xs, ys, zs, vis = [], [], [], []
        for name in ("expected", "observed as read", "observed corrected"):
            if name in drawn:
                x, y, z = frame_points(*drawn[name])
                vis.append(True)
            else:
                x, y, z = frame_points(np.eye(3))
                vis.append(False)
            xs.append(x), ys.append(y), zs.append(z)
        if "expected" in drawn:
            body = body_points(*drawn["expected"])
        else:
            body = body_points(np.eye(3))
        reach = max([1.0] + [float(np.max(np.abs(o))) for _, o in drawn.values()])
        extent = max(1.6, reach + 1.2)
        self.figure.restyle({
            _EXPECTED: {"x": xs[0], "y": ys[0], "z": zs[0], "visible": vis[0]},
            _BODY: {"x": body[:, 0].tolist(), "y": body[:, 1].tolist(), "z": body[:, 2].tolist(), "visible": vis[0]},
            _AS_READ: {"x": xs[1], "y": ys[1], "z": zs[1], "visible": vis[1]},
            _CORRECTED: {"x": xs[2], "y": ys[2], "z": zs[2], "visible": vis[2]}})
        scene = self.figure.layout.scene
        if scene.xaxis.range is None or abs(scene.xaxis.range[1] - extent) > 1e-9:
            with self.figure.batch_update():
                for ax in (scene.xaxis, scene.yaxis, scene.zaxis):
                    ax.range = [-extent, extent]


class _LineError(PoseInputError):
    """A parse error on one pasted line (several-pairs mode): keeps the line number and the inner error."""

    def __init__(self, inner, line_number: int):
        self.inner = inner
        self.line_number = line_number
        super().__init__(f"{_GOT_BOX}, line {line_number}: {inner}")


def _corrected_text(numbers) -> str:
    """Corrected numbers as copied: as shown (9 significant digits), comma-separated, one pose per line."""
    rows = numbers if numbers and isinstance(numbers[0], tuple) else (numbers,)
    return "\n".join(", ".join(f"{v:.9g}" for v in row) for row in rows)


def _plain_rows(lines) -> np.ndarray | None:
    """The typed lines as an (N, n) array when every line is plain numbers of the same count, else None
    (words, named values, a unit word or a bad line: read line by line, so errors name their line)."""
    rows = []
    for _, line in lines:
        try:
            parsed = parse_numbers(line)
        except PoseInputError:
            return None
        if parsed.names:
            return None
        rows.append(np.asarray(parsed.numbers, dtype=float).reshape(-1))
    if len({r.size for r in rows}) != 1:
        return None
    return np.stack(rows)


def _retyped(exc: PoseInputError, message: str) -> PoseInputError:
    """The same kind of error with a message that names where in the desk it happened."""
    try:
        return type(exc)(message)
    except TypeError:  # an error type that needs more than a message
        return PoseInputError(message)


_FUNCTION_PREFIX = re.compile(r"^(?:diagnose_batch|diagnose|expected pose|reading): ")


def _in_desk_words(exc: PoseInputError) -> PoseInputError:
    """An analysis error as the desk says it: no Python function names, the desk's boxes instead."""
    text = str(exc)
    new = _FUNCTION_PREFIX.sub("", text)
    new = new.replace("observed numbers", "the numbers you got").replace("observed quaternion",
                                                                          "the quaternion you got")
    new = re.sub(r"\bdiagnose_batch\b|\bdiagnose\(\)|\bdiagnose\b", "the desk", new)
    return exc if new == text else _retyped(exc, new)


def _explorer_type():
    from .explorer import Explorer

    return Explorer
