"""The offline bug report: one standalone HTML file that needs no kernel and no network.

It carries the figure (plotly.js embedded once), every pose in every representation
under its convention, the convention in words, the diagnosis if there is one, the
environment versions, the notes, and the state JSON itself (in a
``<script type="application/json" id="posekit-state">`` block) so that
:func:`posekit.analysis.state.read_report_state` can load the report back into
posekit.  Every piece of user text (pose and frame names, notes, diagnosis lines) is
HTML-escaped; a Content-Security-Policy forbids the page from loading anything.
"""

from __future__ import annotations

import html
from datetime import datetime, timezone
from pathlib import Path

import numpy as np

from ..analysis.state import State, state_to_json
from ..core.reading import write_rotation
from ..core.transforms import write_transform
from .frames import frame_figure
from .readouts import STYLE_SHEET, matrix_html, numbers_html, panel_html, row_html, words_html

__all__ = ["report_html", "write_report", "SAFETY_NOTE"]

SAFETY_NOTE = ("A transform that looks right here must still be checked on the real system at low speed with a "
               "stop within reach. Follow the machine-safety standards and site rules that apply and your "
               "organisation's qualified safety practice.")

_CSP = ("default-src 'none'; script-src 'unsafe-inline' 'unsafe-eval'; style-src 'unsafe-inline'; "
        "img-src data: blob:; font-src data:; worker-src blob:")


def _json_for_script(text: str) -> str:
    """JSON safe inside a <script> element: no '<', '>' or '&' can end or open a tag."""
    return text.replace("&", "\\u0026").replace("<", "\\u003c").replace(">", "\\u003e")


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
    return (f"<section class='pk-pose'><h3>{html.escape(pose.name)}</h3>"
            f"{words_html('Convention: ' + conv.describe() + '.')}"
            f"<p class='pk-words'>text form: <code>{html.escape(conv.to_text())}</code></p>{panels}</section>")


def report_html(state: State, *, title: str = "posekit report", diagnosis=None, palette: str = "standard") -> str:
    """The whole report as one HTML string (see the module docstring)."""
    import plotly.offline

    if not isinstance(state, State):
        raise TypeError(f"report_html needs a posekit State, got {type(state).__name__}")
    poses = list(state.poses)
    overlays = [(html.escape(p.name), p.matrix[:3, :3], p.matrix[:3, 3]) for p in poses[1:]]
    if poses:
        first = poses[0]
        extent = 1.6 + float(np.max([np.abs(p.matrix[:3, 3]).max() for p in poses]))
        fig = frame_figure(first.matrix[:3, :3], first.matrix[:3, 3], overlays=overlays, body=True,
                           palette=palette, extent=extent, height=520)
        fig.data[1].name = html.escape(first.name)
        figure_html = fig.to_html(full_html=False, include_plotlyjs=False, div_id="posekit-figure",
                                  config={"displaylogo": False, "responsive": True})
    else:
        figure_html = "<p>No poses in this state.</p>"
    diag = ""
    if diagnosis:
        items = "".join(f"<li>{html.escape(str(line))}</li>" for line in diagnosis)
        diag = f"<section><h2>Diagnosis</h2><ol class='pk-diagnosis'>{items}</ol></section>"
    edges = ""
    if state.edges:
        rows = "".join(
            f"<tr><td>{html.escape(e.parent)}</td><td>{html.escape(e.child)}</td><td>{html.escape(e.kind)}</td>"
            f"<td>{', '.join(repr(x) for x in e.numbers)}</td><td><code>{html.escape(e.convention.to_text())}</code>"
            f"</td></tr>" for e in state.edges)
        edges = ("<section><h2>Frame edges as entered</h2><table class='pk-table'><tr><th>parent</th><th>child</th>"
                 f"<th>kind</th><th>numbers</th><th>convention</th></tr>{rows}</table></section>")
    versions = "".join(f"<tr><td>{html.escape(k)}</td><td>{html.escape(v)}</td></tr>" for k, v in state.versions.items())
    settings = "".join(f"<tr><td>{html.escape(k)}</td><td>{html.escape(str(v))}</td></tr>"
                       for k, v in state.settings.items())
    notes = (f"<section><h2>Notes</h2><div class='pk-notes'>{html.escape(state.notes)}</div></section>"
             if state.notes else "")
    created = datetime.now(timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    body = (
        f"<h1>{html.escape(title)}</h1>"
        f"<p class='pk-words'>Written {created} by posekit for a bug report; open it in any browser, no network "
        f"or kernel needed. Load it back with <code>posekit.analysis.read_report_state(path)</code>.</p>"
        f"<p class='pk-safety'><b>Caution.</b> {html.escape(SAFETY_NOTE)}</p>"
        f"{diag}<section><h2>Poses</h2>{figure_html}{''.join(_pose_section(p) for p in poses)}</section>{edges}"
        f"<section><h2>Widget settings ({html.escape(state.widget)})</h2><table class='pk-table'>{settings}</table>"
        f"</section>{notes}<section><h2>Environment</h2><table class='pk-table'>{versions}</table></section>"
    )
    page_css = ("<style>body{font-family:system-ui,-apple-system,Segoe UI,Roboto,sans-serif;max-width:1100px;"
                "margin:1.5em auto;padding:0 1em;color:#222}h1{font-size:1.5em}h2{font-size:1.2em;border-bottom:"
                "1px solid #ddd;padding-bottom:2px}h3{font-size:1.05em}.pk-table td,.pk-table th{padding:2px 8px;"
                "text-align:left;border-bottom:1px solid #eee}.pk-notes{white-space:pre-wrap}.pk-safety{background:"
                "#fff4e5;border:1px solid #f0c36d;padding:6px 10px;border-radius:4px}</style>")
    state_json = _json_for_script(state_to_json(state))
    return (
        "<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'>"
        f"<meta http-equiv='Content-Security-Policy' content=\"{_CSP}\">"
        f"<title>{html.escape(title)}</title>{STYLE_SHEET}{page_css}"
        f"<script type='text/javascript'>{plotly.offline.get_plotlyjs()}</script></head><body>{body}"
        f"<script type='application/json' id='posekit-state'>{state_json}</script></body></html>"
    )


def write_report(state: State, path, **options) -> Path:
    """Write :func:`report_html` to ``path``; returns the path."""
    path = Path(path)
    path.write_text(report_html(state, **options), encoding="utf-8")
    return path
