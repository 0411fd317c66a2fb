"""The offline bug report: one standalone HTML file that needs no kernel and no network.

It carries the figure (plotly.js embedded once), every pose in every representation
under its convention, the convention in words, the diagnosis if there is one, the
machine-safety caution, the environment versions, the notes, and the state JSON itself
(in a ``<script type='application/json' id='posekit-state'>`` block) so that
:func:`posekit.io.state.read_report_state` can load the report back into posekit.

The page is rendered from the Jinja template ``templates/report.html`` next to this
module, with autoescape on: every value the template prints is HTML-escaped unless it
is one of the fragments built here and marked ``safe`` in the template (plotly.js, the
figure, the readout panels of :mod:`posekit.view.readouts`, the style sheet, the state
JSON).  A diagnosis (:class:`~posekit.analysis.Diagnosis` or
:class:`~posekit.analysis.BatchDiagnosis`, or several under labels) is shown in full: the
verdict, how both sides were read, the ranked explanations (numbered once, by the list),
the corrected numbers written in the user's own reading and the corrected code.

Text shown to people: every piece of user text (the title, notes, pose and frame names,
measurement names, pasted text and other settings, diagnosis lines and labels) goes
through the template's ``visible`` filters: control, bidirectional-override and isolate,
and invisible characters (:func:`posekit.core.errors.isolate_controls`) and the line and
paragraph separators U+2028 and U+2029 are shown as ``<U+XXXX>``, so a reader sees what
was typed in the order it was typed; autoescape then escapes the characters the HTML
standard gives meaning to.  Names are also wrapped in ``<bdi>`` (the HTML standard's
bidirectional isolate), so right-to-left text cannot reorder what stands around it.
The embedded state JSON writes ``<``, ``>``, ``&``, U+2028 and U+2029 as JSON ``\\uXXXX``
escapes, so nothing in it can close the script element or open a comment, and JSON reads
it back unchanged.  A Content-Security-Policy forbids the page from loading anything.
The report is made in full first, then written with
:func:`posekit.io.limits.write_atomic`: a failed write leaves an earlier file as it was.
"""

from __future__ import annotations

import html
import math
import os
import re
from collections.abc import Mapping
from datetime import datetime, timezone
from functools import lru_cache
from pathlib import Path

import numpy as np

from ..analysis.diagnose import BatchDiagnosis, Diagnosis
from ..core.errors import PoseInputError, WrongTypeError, isolate_controls, summarise
from ..core.reading import write_rotation
from ..core.transforms import write_transform
from ..io.limits import NAME_LIMIT, check_text_size, write_atomic
from ..io.settings import MAX_ITEMS, MAX_TEXT
from ..io.state import REPORT_STATE_OPEN, State, state_from_json, state_to_json
from .frames import DEFAULT_PALETTE, FRAME_UIDS, frame_figure, trace_index
from .readouts import STYLE_SHEET, matrix_html, numbers_html, panel_html, row_html

__all__ = ["report_html", "write_report", "shown_text", "ReportInputError", "SAFETY_NOTE", "TEMPLATE"]

SAFETY_NOTE = ("A transform that looks right here must still be checked on the real system at low speed with a "
               "stop within reach. Follow the machine-safety standards and site rules that apply and your "
               "organisation's qualified safety practice.")

#: The template the report is rendered from (a package resource of ``posekit.view``).
TEMPLATE = "templates/report.html"

_CSP = ("default-src 'none'; script-src 'unsafe-inline' 'unsafe-eval'; style-src 'unsafe-inline'; "
        "img-src data: blob:; font-src data:; worker-src blob:")

_PALETTES = ("standard", "colour-blind")

#: The most corrected rows a batch diagnosis lists in the page (the code gives all of them).
SHOWN_ROWS = 50


class ReportInputError(PoseInputError):
    """A report option (title, diagnosis, chosen explanation, palette) that cannot go into a report."""


def shown_text(text, *, lines: bool = False, isolate: bool = False) -> str:
    """User text made safe to show in HTML outside the template (plotly trace names, messages).

    The same treatment as the template's filters: hidden characters shown as ``<U+XXXX>``,
    then escaped (Python's :func:`html.escape`), the double quote as the numeric ``&#34;``:
    plotly.js reads numeric entities in trace names but shows ``&quot;`` as typed.
    ``lines`` keeps line breaks; ``isolate`` wraps the result in ``<bdi>``.

    >>> shown_text("<b>x</b>\\u202e")
    '&lt;b&gt;x&lt;/b&gt;&lt;U+202E&gt;'
    >>> shown_text('say "hi"')
    'say &#34;hi&#34;'
    """
    escaped = html.escape(_visible_lines(text) if lines else _visible(text), quote=True).replace("&quot;", "&#34;")
    return f"<bdi>{escaped}</bdi>" if isolate else escaped


def _visible(text) -> str:
    """isolate_controls, and the line and paragraph separators (U+2028, U+2029) shown the same way."""
    text = text if isinstance(text, str) else str(text)
    return isolate_controls(text).replace("\u2028", "<U+2028>").replace("\u2029", "<U+2029>")


def _visible_lines(text) -> str:
    """:func:`_visible` line by line, the line breaks kept (tabs and the rest shown as on one line)."""
    text = text if isinstance(text, str) else str(text)
    return "\n".join(_visible(line) for line in text.replace("\r\n", "\n").split("\n"))


@lru_cache(maxsize=1)
def _template():
    """The report template, loaded once, autoescape on (for this template and any string template)."""
    try:
        import jinja2
    except ImportError as exc:  # the core install has no jinja2; the report belongs to the notebook extra
        raise ImportError('the posekit HTML report needs jinja2: pip install "posekit[notebook]"') from exc
    env = jinja2.Environment(loader=jinja2.PackageLoader("posekit.view", "templates"),
                             autoescape=jinja2.select_autoescape(enabled_extensions=("html",), default=True,
                                                                 default_for_string=True),
                             undefined=jinja2.StrictUndefined, trim_blocks=False, lstrip_blocks=False)
    env.filters["visible"] = _visible
    env.filters["visible_lines"] = _visible_lines
    return env.get_template(TEMPLATE.split("/", 1)[1])


#: Characters written as JSON escapes in the embedded state: those that could end the
#: element or open a comment, line terminators of older JavaScript (U+2028, U+2029), and
#: characters that hide or reorder text when the page source is read (C1 controls,
#: bidirectional controls, zero-width marks, the byte-order mark).
_SCRIPT_ESCAPED = re.compile("[<>&\u0080-\u009f\u061c\u200b-\u200f\u2028-\u202e\u2060-\u2069\ufeff]")


def _json_for_script(text: str) -> str:
    """JSON safe inside a <script> element: the characters above as ``\\uXXXX`` (JSON reads them back)."""
    return _SCRIPT_ESCAPED.sub(lambda m: f"\\u{ord(m.group()):04x}", text)


# --------------------------------------------------------------------------------------
# checking the options
# --------------------------------------------------------------------------------------

_DIAGNOSES = (Diagnosis, BatchDiagnosis)
_ACCEPTED = ("a posekit Diagnosis or BatchDiagnosis (posekit.analysis.diagnose / diagnose_batch), a mapping of "
             "labels to them, or a list of lines of text")


def _check_options(title, diagnosis, palette, chosen):
    """``(diagnoses, lines)``: labelled diagnoses ``[(label or None, d)]`` or plain lines; one of them is empty."""
    check_text_size(title, what="report title", limit=NAME_LIMIT)
    if not isinstance(palette, str) or palette not in _PALETTES:
        raise ReportInputError(f"report palette: got {summarise(palette, 40)}; expected one of "
                               + ", ".join(repr(p) for p in _PALETTES))
    if isinstance(chosen, bool) or not isinstance(chosen, (int, np.integer)) or chosen < 0:
        raise ReportInputError(f"report chosen: got {summarise(chosen, 40)}; expected a whole number >= 0 "
                               "(0 is the best explanation)")
    if diagnosis is None:
        return [], []
    if isinstance(diagnosis, _DIAGNOSES):
        diagnoses = [(None, diagnosis)]
    elif isinstance(diagnosis, Mapping):
        if len(diagnosis) > MAX_ITEMS:
            raise ReportInputError(f"report diagnosis: got {len(diagnosis)} labelled diagnoses; expected at most "
                                   f"{MAX_ITEMS}")
        diagnoses = []
        for label, d in diagnosis.items():
            check_text_size(label, what="report diagnosis label", limit=NAME_LIMIT)
            if not isinstance(d, _DIAGNOSES):
                raise WrongTypeError(f"report diagnosis[{summarise(label, 40)}]: got {type(d).__name__}; "
                                     f"expected {_ACCEPTED.split(', a mapping')[0]}")
            diagnoses.append((label, d))
    elif isinstance(diagnosis, (str, bytes)) or not hasattr(diagnosis, "__iter__"):
        raise WrongTypeError(f"report diagnosis: got {type(diagnosis).__name__} {summarise(diagnosis, 40)}; "
                             f"expected {_ACCEPTED}")
    else:
        lines = list(diagnosis)
        if len(lines) > MAX_ITEMS:
            raise ReportInputError(f"report diagnosis: got {len(lines)} lines; expected at most {MAX_ITEMS} lines")
        for i, line in enumerate(lines):
            if isinstance(line, _DIAGNOSES):
                raise WrongTypeError(f"report diagnosis[{i}]: got a {type(line).__name__} in a list; pass one "
                                     "diagnosis, or a mapping of labels to diagnoses")
            check_text_size(line, what=f"report diagnosis[{i}]", limit=MAX_TEXT)
        if chosen:
            raise ReportInputError(f"report chosen: got {chosen} with diagnosis lines; chosen picks an explanation "
                                   "of a Diagnosis, so pass the Diagnosis itself")
        return [], lines
    for label, d in diagnoses:
        if chosen >= len(d.explanations):
            where = "" if label is None else f" of {summarise(label, 40)}"
            raise ReportInputError(f"report chosen: got {chosen}; the diagnosis{where} has "
                                   f"{len(d.explanations)} explanations (0 to {len(d.explanations) - 1})")
    return diagnoses, []


# --------------------------------------------------------------------------------------
# what the template shows (plain data; the template escapes it)
# --------------------------------------------------------------------------------------

def _number(v) -> str:
    """The shortest text that reads back as the same float (Python's repr)."""
    return repr(float(v))


def _row(values) -> str:
    return ", ".join(_number(v) for v in values)


def _explanation_view(e, batch: bool, chosen: bool) -> dict:
    rms = "rms " if batch else ""
    residuals = f"rotation off by {rms}{math.degrees(e.rotation_residual):.4g} degrees"
    if e.translation_residual is not None:
        residuals += f", translation off by {rms}{e.translation_residual:.4g} m"
    deviations = f"{e.deviations:g} deviation{'' if e.deviations == 1 else 's'} from your reading, cost {e.cost:.3g}"
    return {"sentence": e.sentence, "residuals": residuals, "deviations": deviations, "near_tie": bool(e.near_tie),
            "equivalents": list(e.equivalents),
            "separable": [(s, None if n is None else ", ".join(f"{v:.6g}" for v in n)) for s, n in e.separable],
            "chosen": chosen}


def _diagnosis_view(label, d, chosen: int) -> dict:
    batch = isinstance(d, BatchDiagnosis)
    e = d.explanations[chosen]
    view = {"label": label, "verdict": d.verdict, "explained": bool(d.explained),
            "observed_reading": d.assumed_reading, "expected_reading": d.expected_reading or "expected: as given",
            "notes": list(d.notes), "hypotheses": d.hypotheses_scored,
            "explanations": [_explanation_view(x, batch, i == chosen) for i, x in enumerate(d.explanations)],
            "near_tie": bool(d.explanations[0].near_tie or (len(d.explanations) > 1 and d.explanations[1].near_tie)),
            "chosen_rank": e.rank, "prior": d.prior,
            "corrected_reading": d.stated.describe() if d.stated is not None else d.assumed_reading,
            "code": e.code, "batch": None, "rows_left": 0}
    if batch:
        rows = e.corrected_numbers
        view["corrected_numbers"] = "\n".join(_row(r) for r in rows[:SHOWN_ROWS])
        view["rows_left"] = max(0, len(rows) - SHOWN_ROWS)
        s = d.statistics
        stats = (f"best explanation, rotation residual per pair: median {s['rotation_median_degrees']:.4g}, rms "
                 f"{s['rotation_rms_degrees']:.4g}, max {s['rotation_max_degrees']:.4g} degrees")
        if d.translation_residuals is not None:
            stats += (f"; translation residual per pair: median {s['translation_median']:.4g}, rms "
                      f"{s['translation_rms']:.4g}, max {s['translation_max']:.4g} m")
        view["batch"] = {"pairs": d.pairs, "statistics": stats,
                         "consistency": ("one explanation fits every pair" if d.consistent
                                         else "no single convention error fits every pair"),
                         "offset": None if d.offset is None else d.offset.sentence}
        view["code_note"] = ("Python with posekit installed; logged_numbers stands for your (N, n) array of "
                             "observed numbers, one pose per row; corrected holds the rows above.")
    else:
        view["corrected_numbers"] = _row(e.corrected_numbers)
        view["code_note"] = ("Paste it into Python with posekit installed: corrected holds the numbers above, "
                             "written in your reading.")
    return view


def _setting_text(v) -> str:
    if isinstance(v, tuple):
        return "[" + ", ".join(repr(x) for x in v) + "]"  # repr writes hidden characters as escapes
    return v if isinstance(v, str) else repr(v)


def _pose_view(pose) -> dict:
    conv = pose.convention
    rot = pose.matrix[:3, :3]
    quat = write_rotation(rot, "quaternion", conv)
    euler = write_rotation(rot, "euler", conv)
    aa = write_rotation(rot, "axis-angle", conv)
    rv = write_rotation(rot, "rotation-vector", conv)
    written = write_transform(pose.matrix, "matrix", conv)
    unit = "deg" if conv.degrees else "rad"
    maps = "child → parent" if conv.direction == "parent-from-child" else "parent → child"
    qlabels = ("w", "x", "y", "z") if conv.scalar == "first" else ("x", "y", "z", "w")
    panels = row_html(  # trusted HTML: readouts escapes its titles and labels, the rest are numbers
        panel_html(f"matrix as written ({maps})", matrix_html(written, 6)),
        panel_html("translation, child origin in parent", numbers_html(("x", "y", "z"), pose.matrix[:3, 3], 6)),
        panel_html(f"quaternion ({conv.algebra}, scalar {conv.scalar})", numbers_html(qlabels, quat, 8)),
        panel_html(f"Euler angles ({conv.sequence}, {conv.axes}, {unit})",
                   numbers_html(tuple(conv.axes_letters), euler, 6)),
        panel_html(f"axis-angle ({unit})", numbers_html(("x", "y", "z", "angle"), aa, 6)),
        panel_html(f"rotation vector ({unit})", numbers_html(("x", "y", "z"), rv, 6)),
    )
    return {"name": pose.name, "words": conv.describe(), "text_form": conv.to_text(), "panels": panels}


def _figure_html(poses, palette: str) -> str:
    if not poses:
        return "<p>No poses in this state.</p>"
    # plotly shows trace names as its own small HTML: escaped here as in every posekit figure
    overlays = [(shown_text(p.name), p.matrix[:3, :3], p.matrix[:3, 3]) for p in poses[1:]]
    first = poses[0]
    extent = 1.6 + float(np.max([np.abs(p.matrix[:3, 3]).max() for p in poses]))
    fig = frame_figure(first.matrix[:3, :3], first.matrix[:3, 3], overlays=overlays, body=True,
                       palette=palette, extent=extent, height=520)
    fig.data[trace_index(fig, FRAME_UIDS["frame"])].name = shown_text(first.name)
    return fig.to_html(full_html=False, include_plotlyjs=False, div_id="posekit-figure",
                       config={"displaylogo": False, "responsive": True})


def report_html(state: State, *, title: str = "posekit report", diagnosis=None, palette: str = DEFAULT_PALETTE,
                chosen: int = 0) -> str:
    """The whole report as one HTML string (see the module docstring).

    ``title``: text of at most 200 characters.  ``diagnosis``: a
    :class:`~posekit.analysis.Diagnosis` or :class:`~posekit.analysis.BatchDiagnosis`
    (shown in full: verdict, both readings, ranked explanations, corrected numbers and
    code), a mapping of labels to them (e.g. ``{"IMU": d1, "camera": d2}``), a list of
    lines of text shown as written (no numbering added), or None.  ``chosen``: which
    explanation's corrected numbers and code are shown (0, the best, by default).
    ``palette``: ``'standard'`` or ``'colour-blind'``.
    """
    import plotly.offline

    if not isinstance(state, State):
        raise WrongTypeError(f"report_html: got {type(state).__name__}; expected a posekit State")
    diagnoses, lines = _check_options(title, diagnosis, palette, chosen)
    text = state_to_json(state)
    state_from_json(text)  # the embedded state must load back (names the entry if it cannot)
    poses = list(state.poses)
    page = _template().render(
        csp=_CSP, title=title, style_sheet=STYLE_SHEET, plotly_js=plotly.offline.get_plotlyjs(),
        created=datetime.now(timezone.utc).strftime("%Y-%m-%d %H:%M UTC"), safety=SAFETY_NOTE,
        diagnoses=[_diagnosis_view(label, d, int(chosen)) for label, d in diagnoses], lines=lines,
        figure_html=_figure_html(poses, palette), poses=[_pose_view(p) for p in poses],
        edges=[{"parent": e.parent, "child": e.child, "kind": e.kind, "numbers": ", ".join(repr(x) for x in e.numbers),
                "convention": e.convention.to_text()} for e in state.edges],
        widget=state.widget, settings=[(k, _setting_text(v)) for k, v in state.settings.items()],
        notes=state.notes, versions=list(state.versions.items()),
        state_open=REPORT_STATE_OPEN, state_json=_json_for_script(text))
    return page


def write_report(state: State, path, **options) -> Path:
    """Write :func:`report_html` to ``path`` in one step; returns the path.

    The whole page is made first; then :func:`~posekit.io.limits.write_atomic` writes it,
    so on any failure (a missing folder, a full disk) an earlier file is untouched.
    """
    if not isinstance(path, (str, os.PathLike)) or (isinstance(path, str) and not path):
        raise WrongTypeError(f"report path: got {summarise(path, 40)}; expected a file path")
    page = report_html(state, **options)
    return write_atomic(path, page, what="report")
