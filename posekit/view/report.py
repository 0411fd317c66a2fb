"""The offline bug report: one standalone HTML file that needs no kernel and no network.

It carries the figure (plotly.js embedded once), every pose in every representation
under its convention, the convention in words, the diagnosis if there is one, the
environment versions, the notes, and the state JSON itself (in a
``<script type='application/json' id='posekit-state'>`` block) so that
:func:`posekit.io.state.read_report_state` can load the report back into posekit.

Text shown to people: every piece of user text (the title, notes, pose and frame names,
measurement names, pasted text and other settings, diagnosis lines) goes through
:func:`shown_text`: control, bidirectional-override and isolate, and invisible characters
(:func:`posekit.core.errors.isolate_controls`) and the line and paragraph separators
U+2028 and U+2029 are shown as ``<U+XXXX>``, so a reader sees what was typed in the order
it was typed; then it is HTML-escaped (Python's
:func:`html.escape`, the characters the HTML standard gives meaning to).  Names are also
wrapped in ``<bdi>`` (the HTML standard's bidirectional isolate), so right-to-left text
cannot reorder what stands around it.  The embedded state JSON writes ``<``, ``>``, ``&``,
U+2028 and U+2029 as JSON ``\\uXXXX`` escapes, so nothing in it can close the script
element or open a comment, and JSON reads it back unchanged.  A Content-Security-Policy
forbids the page from loading anything.  The report is made in full first, then written
with :func:`posekit.io.limits.write_atomic`: a failed write leaves an earlier file as it was.
"""

from __future__ import annotations

import html
import os
import re
from datetime import datetime, timezone
from pathlib import Path

import numpy as np

from ..core.errors import PoseInputError, WrongTypeError, isolate_controls, summarise
from ..core.reading import write_rotation
from ..core.transforms import write_transform
from ..io.limits import NAME_LIMIT, check_text_size, write_atomic
from ..io.settings import MAX_ITEMS, MAX_TEXT
from ..io.state import REPORT_STATE_OPEN, State, state_from_json, state_to_json
from .frames import frame_figure
from .readouts import STYLE_SHEET, matrix_html, numbers_html, panel_html, row_html, words_html

__all__ = ["report_html", "write_report", "shown_text", "ReportInputError", "SAFETY_NOTE"]

SAFETY_NOTE = ("A transform that looks right here must still be checked on the real system at low speed with a "
               "stop within reach. Follow the machine-safety standards and site rules that apply and your "
               "organisation's qualified safety practice.")

_CSP = ("default-src 'none'; script-src 'unsafe-inline' 'unsafe-eval'; style-src 'unsafe-inline'; "
        "img-src data: blob:; font-src data:; worker-src blob:")

_PALETTES = ("standard", "colour-blind")


class ReportInputError(PoseInputError):
    """A report option (title, diagnosis lines, palette) that cannot go into a report."""


def shown_text(text, *, lines: bool = False, isolate: bool = False) -> str:
    """User text made safe to show in HTML (see the module docstring).

    ``lines`` keeps line breaks (tabs and the rest of each line are shown as on one line);
    ``isolate`` wraps the result in ``<bdi>``.

    >>> shown_text("<b>x</b>\\u202e")
    '&lt;b&gt;x&lt;/b&gt;&lt;U+202E&gt;'
    """
    text = text if isinstance(text, str) else str(text)
    if lines:
        safe = "\n".join(_visible(line) for line in text.replace("\r\n", "\n").split("\n"))
    else:
        safe = _visible(text)
    escaped = html.escape(safe, quote=True)
    return f"<bdi>{escaped}</bdi>" if isolate else escaped


def _visible(line: str) -> str:
    """isolate_controls, and the line and paragraph separators (U+2028, U+2029) shown the same way."""
    return isolate_controls(line).replace("\u2028", "<U+2028>").replace("\u2029", "<U+2029>")


#: Characters written as JSON escapes in the embedded state: those that could end the
#: element or open a comment, line terminators of older JavaScript (U+2028, U+2029), and
#: characters that hide or reorder text when the page source is read (C1 controls,
#: bidirectional controls, zero-width marks, the byte-order mark).
_SCRIPT_ESCAPED = re.compile("[<>&\u0080-\u009f\u061c\u200b-\u200f\u2028-\u202e\u2060-\u2069\ufeff]")


def _json_for_script(text: str) -> str:
    """JSON safe inside a <script> element: the characters above as ``\\uXXXX`` (JSON reads them back)."""
    return _SCRIPT_ESCAPED.sub(lambda m: f"\\u{ord(m.group()):04x}", text)


def _check_options(title, diagnosis, palette) -> list[str]:
    check_text_size(title, what="report title", limit=NAME_LIMIT)
    if not isinstance(palette, str) or palette not in _PALETTES:
        raise ReportInputError(f"report palette: got {summarise(palette, 40)}; expected one of "
                               + ", ".join(repr(p) for p in _PALETTES))
    if diagnosis is None:
        return []
    if isinstance(diagnosis, (str, bytes)) or not hasattr(diagnosis, "__iter__"):
        raise WrongTypeError(f"report diagnosis: got {type(diagnosis).__name__} {summarise(diagnosis, 40)}; "
                             "expected a list of lines of text")
    lines = list(diagnosis)
    if len(lines) > MAX_ITEMS:
        raise ReportInputError(f"report diagnosis: got {len(lines)} lines; expected at most {MAX_ITEMS} lines")
    for i, line in enumerate(lines):
        check_text_size(line, what=f"report diagnosis[{i}]", limit=MAX_TEXT)
    return lines


def _setting_text(v) -> str:
    if isinstance(v, tuple):
        return "[" + ", ".join(repr(x) for x in v) + "]"  # repr writes hidden characters as escapes
    return v if isinstance(v, str) else repr(v)


def _pose_section(pose) -> str:
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
    panels = row_html(
        panel_html(f"matrix as written ({maps})", matrix_html(written, 6)),
        panel_html("translation, child origin in parent", numbers_html(("x", "y", "z"), pose.matrix[:3, 3], 6)),
        panel_html(f"quaternion ({conv.algebra}, scalar {conv.scalar})", numbers_html(qlabels, quat, 8)),
        panel_html(f"Euler angles ({conv.sequence}, {conv.axes}, {unit})",
                   numbers_html(tuple(conv.axes_letters), euler, 6)),
        panel_html(f"axis-angle ({unit})", numbers_html(("x", "y", "z", "angle"), aa, 6)),
        panel_html(f"rotation vector ({unit})", numbers_html(("x", "y", "z"), rv, 6)),
    )
    return (f"<section class='pk-pose'><h3>{shown_text(pose.name, isolate=True)}</h3>"
            f"{words_html('Convention: ' + conv.describe() + '.')}"
            f"<p class='pk-words'>text form: <code>{shown_text(conv.to_text())}</code></p>{panels}</section>")


def report_html(state: State, *, title: str = "posekit report", diagnosis=None, palette: str = "standard") -> str:
    """The whole report as one HTML string (see the module docstring).

    ``title`` is text of at most 200 characters; ``diagnosis`` a list of lines of text
    (or None); ``palette`` ``'standard'`` or ``'colour-blind'``.
    """
    import plotly.offline

    if not isinstance(state, State):
        raise WrongTypeError(f"report_html: got {type(state).__name__}; expected a posekit State")
    lines = _check_options(title, diagnosis, palette)
    text = state_to_json(state)
    state_from_json(text)  # the embedded state must load back (names the entry if it cannot)
    state_json = _json_for_script(text)
    poses = list(state.poses)
    overlays = [(shown_text(p.name), p.matrix[:3, :3], p.matrix[:3, 3]) for p in poses[1:]]
    if poses:
        first = poses[0]
        extent = 1.6 + float(np.max([np.abs(p.matrix[:3, 3]).max() for p in poses]))
        fig = frame_figure(first.matrix[:3, :3], first.matrix[:3, 3], overlays=overlays, body=True,
                           palette=palette, extent=extent, height=520)
        fig.data[1].name = shown_text(first.name)
        figure_html = fig.to_html(full_html=False, include_plotlyjs=False, div_id="posekit-figure",
                                  config={"displaylogo": False, "responsive": True})
    else:
        figure_html = "<p>No poses in this state.</p>"
    diag = ""
    if lines:
        items = "".join(f"<li>{shown_text(line, lines=True)}</li>" for line in lines)
        diag = f"<section><h2>Diagnosis</h2><ol class='pk-diagnosis'>{items}</ol></section>"
    edges = ""
    if state.edges:
        rows = "".join(
            f"<tr><td>{shown_text(e.parent, isolate=True)}</td><td>{shown_text(e.child, isolate=True)}</td>"
            f"<td>{shown_text(e.kind)}</td><td>{', '.join(repr(x) for x in e.numbers)}</td>"
            f"<td><code>{shown_text(e.convention.to_text())}</code></td></tr>" for e in state.edges)
        edges = ("<section><h2>Frame edges as entered</h2><table class='pk-table'><tr><th>parent</th><th>child</th>"
                 f"<th>kind</th><th>numbers</th><th>convention</th></tr>{rows}</table></section>")
    versions = "".join(f"<tr><td>{shown_text(k)}</td><td>{shown_text(v, isolate=True)}</td></tr>"
                       for k, v in state.versions.items())
    settings = "".join(f"<tr><td>{shown_text(k)}</td><td class='pk-setting'>"
                       f"{shown_text(_setting_text(v), lines=True, isolate=True)}</td></tr>"
                       for k, v in state.settings.items())
    notes = (f"<section><h2>Notes</h2><div class='pk-notes'>{shown_text(state.notes, lines=True)}</div></section>"
             if state.notes else "")
    created = datetime.now(timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    body = (
        f"<h1>{shown_text(title, isolate=True)}</h1>"
        f"<p class='pk-words'>Written {created} by posekit for a bug report; open it in any browser, no network "
        f"or kernel needed. Load it back with <code>posekit.analysis.read_report_state(path)</code>.</p>"
        f"<p class='pk-safety'><b>Caution.</b> {html.escape(SAFETY_NOTE)}</p>"
        f"{diag}<section><h2>Poses</h2>{figure_html}{''.join(_pose_section(p) for p in poses)}</section>{edges}"
        f"<section><h2>Widget settings ({shown_text(state.widget)})</h2><table class='pk-table'>{settings}</table>"
        f"</section>{notes}<section><h2>Environment</h2><table class='pk-table'>{versions}</table></section>"
    )
    page_css = ("<style>body{font-family:system-ui,-apple-system,Segoe UI,Roboto,sans-serif;max-width:1100px;"
                "margin:1.5em auto;padding:0 1em;color:#222}h1{font-size:1.5em}h2{font-size:1.2em;border-bottom:"
                "1px solid #ddd;padding-bottom:2px}h3{font-size:1.05em}.pk-table td,.pk-table th{padding:2px 8px;"
                "text-align:left;border-bottom:1px solid #eee}.pk-notes,.pk-setting{white-space:pre-wrap}"
                ".pk-safety{background:#fff4e5;border:1px solid #f0c36d;padding:6px 10px;border-radius:4px}</style>")
    return (
        "<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'>"
        f"<meta http-equiv='Content-Security-Policy' content=\"{_CSP}\">"
        f"<title>{shown_text(title)}</title>{STYLE_SHEET}{page_css}"
        f"<script type='text/javascript'>{plotly.offline.get_plotlyjs()}</script></head><body>{body}"
        f"{REPORT_STATE_OPEN}{state_json}</script></body></html>"
    )


def write_report(state: State, path, **options) -> Path:
    """Write :func:`report_html` to ``path`` in one step; returns the path.

    The whole page is made first; then :func:`~posekit.io.limits.write_atomic` writes it,
    so on any failure (a missing folder, a full disk) an earlier file is untouched.
    """
    if not isinstance(path, (str, os.PathLike)) or (isinstance(path, str) and not path):
        raise WrongTypeError(f"report path: got {summarise(path, 40)}; expected a file path")
    page = report_html(state, **options)
    return write_atomic(path, page, what="report")
