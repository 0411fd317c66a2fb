"""Small HTML readouts (pure functions -> str): matrices, quaternions, angles, the lock gauge.

The markup carries class names only; :data:`STYLE_SHEET` styles them and is sent
once per widget (or embedded once in a report), which keeps every update small.
Every user-provided string goes through :func:`html.escape`.
"""

from __future__ import annotations

import html

import numpy as np

__all__ = ["STYLE_SHEET", "matrix_html", "numbers_html", "gauge_html", "panel_html", "words_html", "row_html"]

STYLE_SHEET = """<style>
.pk-mono { line-height: 1.3; font-family: ui-monospace, SFMono-Regular, Menlo, Consolas, monospace; font-size: 12.5px;
           border-collapse: collapse; }
.pk-mono td { padding: 1px 6px; text-align: right; }
.pk-mono th { padding: 1px 6px; font-weight: normal; color: #666; }
.pk-matrix { border-left: 2px solid #888; border-right: 2px solid #888; }
.pk-panel { line-height: 1.35; padding: 4px 8px; border: 1px solid #ddd; border-radius: 4px; flex: 1 1 200px; max-width: 420px; }
.pk-panel-title { font-weight: 600; font-size: 12.5px; margin-bottom: 3px; }
.pk-words { font-size: 12px; color: #444; line-height: 1.35; }
.pk-row { display: flex; flex-wrap: wrap; gap: 8px; }
.pk-gauge { font-size: 12.5px; }
.pk-bar { width: 180px; height: 9px; background: #eee; border: 1px solid #bbb; margin: 3px 0; }
.pk-bar > div { height: 100%; }
</style>"""


def _num(v: float, digits: int) -> str:
    if abs(v) < 0.5 * 10 ** (-digits):
        v = 0.0
    return f"{v: .{digits}f}"


def matrix_html(m, digits: int = 4) -> str:
    """A matrix ``(n, k)`` as an HTML table with right-aligned fixed-point numbers."""
    m = np.asarray(m, dtype=np.float64)
    rows = "".join("<tr>" + "".join(f"<td>{_num(v, digits)}</td>" for v in row) + "</tr>" for row in m.tolist())
    return f"<table class='pk-mono pk-matrix'>{rows}</table>"


def numbers_html(labels, values, digits: int = 4) -> str:
    """Labelled numbers as a two-row table: ``labels`` over ``values``."""
    head = "".join(f"<th>{html.escape(str(label))}</th>" for label in labels)
    body = "".join(f"<td>{_num(float(v), digits)}</td>" for v in values)
    return f"<table class='pk-mono'><tr>{head}</tr><tr>{body}</tr></table>"


def gauge_html(value: float, label: str, worst: float = 0.0, best: float = 1.0, note: str = "") -> str:
    """A horizontal bar for a 0..1 gauge (0 = locked), with its number and a note in words."""
    frac = float(np.clip((value - worst) / (best - worst), 0.0, 1.0))
    colour = "#b2182b" if frac < 0.05 else ("#ef8a62" if frac < 0.25 else "#4d9221")
    return (f"<div class='pk-gauge'>{html.escape(label)}: <b>{value:.4f}</b>"
            f"<div class='pk-bar'><div style='width:{100 * frac:.1f}%;background:{colour}'></div></div>"
            f"<span class='pk-words'>{html.escape(note)}</span></div>")


def panel_html(title: str, body_html: str) -> str:
    """A titled box; ``title`` is escaped, ``body_html`` is trusted HTML built by this module."""
    return f"<div class='pk-panel'><div class='pk-panel-title'>{html.escape(title)}</div>{body_html}</div>"


def words_html(text: str) -> str:
    """Escaped running text in a small grey font."""
    return f"<div class='pk-words'>{html.escape(text)}</div>"


def row_html(*panels: str) -> str:
    """Panels side by side, wrapping on narrow screens."""
    return "<div class='pk-row'>" + "".join(panels) + "</div>"
