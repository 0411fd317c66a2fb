"""Small HTML readouts (pure functions -> str): matrices, quaternions, angles, the lock gauge.

Every user-provided string goes through :func:`html.escape`.
"""

from __future__ import annotations

import html

import numpy as np

__all__ = ["matrix_html", "numbers_html", "gauge_html", "panel_html", "words_html"]

_STYLE = ("font-family: ui-monospace, SFMono-Regular, Menlo, Consolas, monospace; font-size: 12.5px; "
          "border-collapse: collapse;")


def _num(v: float, digits: int) -> str:
    if abs(v) < 0.5 * 10 ** (-digits):
        v = 0.0
    return f"{v: .{digits}f}"


def matrix_html(m, digits: int = 4, css_class: str = "posekit-matrix") -> str:
    """A matrix ``(n, k)`` as an HTML table with right-aligned fixed-point numbers."""
    m = np.asarray(m, dtype=np.float64)
    rows = "".join("<tr>" + "".join(f"<td style='padding:1px 6px;text-align:right'>{_num(v, digits)}</td>"
                                     for v in row) + "</tr>" for row in m)
    return f"<table class='{css_class}' style='{_STYLE} border-left:2px solid #888; border-right:2px solid #888'>{rows}</table>"


def numbers_html(labels, values, digits: int = 4, css_class: str = "posekit-numbers") -> str:
    """Labelled numbers as a two-row table: ``labels`` over ``values``."""
    head = "".join(f"<th style='padding:1px 6px;font-weight:normal;color:#666'>{html.escape(str(l))}</th>"
                   for l in labels)
    body = "".join(f"<td style='padding:1px 6px;text-align:right'>{_num(float(v), digits)}</td>" for v in values)
    return f"<table class='{css_class}' style='{_STYLE}'><tr>{head}</tr><tr>{body}</tr></table>"


def gauge_html(value: float, label: str, worst: float = 0.0, best: float = 1.0, note: str = "") -> str:
    """A horizontal bar for a 0..1 gauge (0 = locked), with its number and a note in words."""
    frac = float(np.clip((value - worst) / (best - worst), 0.0, 1.0))
    colour = "#b2182b" if frac < 0.05 else ("#ef8a62" if frac < 0.25 else "#4d9221")
    return (f"<div class='posekit-gauge' style='font-size:12.5px'>{html.escape(label)}: <b>{value:.4f}</b>"
            f"<div style='width:180px;height:9px;background:#eee;border:1px solid #bbb;margin:3px 0'>"
            f"<div style='width:{100 * frac:.1f}%;height:100%;background:{colour}'></div></div>"
            f"<span style='color:#555'>{html.escape(note)}</span></div>")


def panel_html(title: str, body_html: str, css_class: str = "posekit-panel") -> str:
    """A titled box; ``title`` is escaped, ``body_html`` is trusted HTML built by this module."""
    return (f"<div class='{css_class}' style='padding:4px 8px;border:1px solid #ddd;border-radius:4px;"
            f"flex:1 1 200px;max-width:420px'><div style='font-weight:600;font-size:12.5px;margin-bottom:3px'>"
            f"{html.escape(title)}</div>{body_html}</div>")


def words_html(text: str, css_class: str = "posekit-words") -> str:
    """Escaped running text in a small grey font."""
    return f"<div class='{css_class}' style='font-size:12px;color:#444;line-height:1.35'>{html.escape(text)}</div>"
