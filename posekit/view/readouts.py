"""Small HTML readouts (pure functions -> str): matrices, quaternions, angles, the lock gauge.

The markup carries class names only; :data:`STYLE_SHEET` styles them and is sent
once per widget (or embedded once in a report), which keeps every update small.
Every user-provided string goes through :func:`html.escape`.

Every number a posekit widget shows (readout tables and the number boxes beside the
sliders) is written by :func:`format_number`: fixed-point in the usual range, an
explicit exponent outside it, and ``0`` for float noise below
:data:`DISPLAY_TOLERANCE` (the raw value stays readable on hover, in the cell's
``title``).
"""

from __future__ import annotations

import html
import math

import numpy as np

__all__ = ["STYLE_SHEET", "DISPLAY_TOLERANCE", "format_number", "raw_number", "number_cell", "matrix_html",
           "numbers_html", "gauge_html", "panel_html", "words_html", "row_html", "error_html"]

#: Magnitudes below this read ``0`` (float noise such as 4.4e-16 from a rotation product).
DISPLAY_TOLERANCE = 1e-12
#: At or above this magnitude a number is written with an exponent.
FIXED_HIGH = 1e6

STYLE_SHEET = """<style>
.pk-mono { line-height: 1.3; font-family: ui-monospace, SFMono-Regular, Menlo, Consolas, monospace; font-size: 12.5px;
           border-collapse: collapse; }
.pk-mono td { padding: 1px 6px; text-align: right; white-space: nowrap; }
.pk-mono th { padding: 1px 6px; font-weight: normal; color: #666; }
.pk-mono td[title] { cursor: help; }
.pk-matrix { border-left: 2px solid #888; border-right: 2px solid #888; }
.pk-panel { line-height: 1.35; padding: 4px 8px; border: 1px solid #ddd; border-radius: 4px; flex: 1 1 auto;
            max-width: 460px; min-width: min-content; overflow-wrap: anywhere; box-sizing: border-box; }
.pk-panel-title { font-weight: 600; font-size: 12.5px; margin-bottom: 3px; }
.pk-words { font-size: 12px; color: #444; line-height: 1.35; overflow-wrap: anywhere; word-break: break-word;
            white-space: normal; max-width: 100%; }
.pk-row { display: flex; flex-wrap: wrap; gap: 8px; max-width: 100%; }
.pk-gauge { font-size: 12.5px; overflow-wrap: anywhere; }
.pk-bar { width: 180px; max-width: 100%; height: 9px; background: #eee; border: 1px solid #bbb; margin: 3px 0; }
.pk-bar > div { height: 100%; }
.pk-error { color: #8a1c1c; background: #fdf1f1; border: 1px solid #e3b4b4; border-radius: 4px; padding: 3px 6px;
            font-size: 12px; line-height: 1.35; overflow-wrap: anywhere; word-break: break-word; white-space: normal;
            max-width: 100%; box-sizing: border-box; }
</style>"""


def format_number(value, digits: int = 4, *, trim: bool = False, tolerance: float = DISPLAY_TOLERANCE) -> str:
    """One number as people read it: the magnitude decides the form.

    * ``|value| < tolerance``: ``"0"`` (float noise; show the raw value elsewhere, e.g.
      :func:`number_cell` puts it in the cell's hover title);
    * ``10**(1 - digits) <= |value| < 1e6``: fixed point with ``digits`` decimals;
    * anything else: an explicit exponent with ``digits`` decimals in the mantissa
      (``4.3733e-15``), so an exponent is never hidden by a narrow box;
    * ``trim=True`` drops trailing zeros (``31.0000`` -> ``31``, ``1.5000e-07`` -> ``1.5e-07``);
    * nan and infinities as ``nan``, ``inf``, ``-inf``.

    The digits come from numpy's correctly rounded formatting (not from ``repr``).

    >>> format_number(4.3732626e-15), format_number(0.1 + 0.2), format_number(-0.00012345)
    ('0', '0.3000', '-1.2345e-04')
    >>> format_number(31.0, 6, trim=True), format_number(1234567.0, 2)
    ('31', '1.23e+06')
    """
    v = float(value)
    if not isinstance(digits, (int, np.integer)) or isinstance(digits, bool) or not 0 <= digits <= 17:
        raise ValueError(f"digits: got {digits!r}; expected an integer from 0 to 17")
    if math.isnan(v):
        return "nan"
    if math.isinf(v):
        return "inf" if v > 0 else "-inf"
    a = abs(v)
    if a < tolerance:
        return "0"
    if 10.0 ** (1 - digits) <= a < FIXED_HIGH:
        text = np.format_float_positional(v, precision=digits, unique=False, fractional=True, trim="k")
        if trim and "." in text:
            text = text.rstrip("0").rstrip(".")
        return text
    text = np.format_float_scientific(v, precision=digits, unique=False, trim="k", exp_digits=2)
    if trim:
        mantissa, _, exponent = text.partition("e")
        if "." in mantissa:
            mantissa = mantissa.rstrip("0").rstrip(".")
        text = f"{mantissa}e{exponent}"
    return text


def raw_number(value) -> str:
    """The shortest text that reads back as exactly ``value`` (Python's ``repr`` of the float)."""
    return repr(float(value))


def number_cell(value, digits: int = 4) -> str:
    """A table cell ``<td>`` holding :func:`format_number`; rounded values keep the raw one in ``title``."""
    text = format_number(value, digits)
    raw = raw_number(value)
    title = "" if _same(text, raw) else f" title='{html.escape(raw)}'"
    return f"<td{title}>{html.escape(text)}</td>"


def _same(text: str, raw: str) -> bool:
    try:
        return float(text) == float(raw)
    except ValueError:
        return text == raw


def matrix_html(m, digits: int = 4) -> str:
    """A matrix ``(n, k)`` as an HTML table of right-aligned :func:`format_number` numbers."""
    m = np.asarray(m, dtype=np.float64)
    rows = "".join("<tr>" + "".join(number_cell(v, digits) for v in row) + "</tr>" for row in m.tolist())
    return f"<table class='pk-mono pk-matrix'>{rows}</table>"


def numbers_html(labels, values, digits: int = 4) -> str:
    """Labelled numbers as a two-row table: ``labels`` over ``values`` (:func:`format_number`)."""
    head = "".join(f"<th>{html.escape(str(label))}</th>" for label in labels)
    body = "".join(number_cell(float(v), digits) for v in values)
    return f"<table class='pk-mono'><tr>{head}</tr><tr>{body}</tr></table>"


def gauge_html(value: float, label: str, worst: float = 0.0, best: float = 1.0, note: str = "") -> str:
    """A horizontal bar for a 0..1 gauge (0 = locked), with its number and a note in words."""
    frac = float(np.clip((value - worst) / (best - worst), 0.0, 1.0))
    colour = "#b2182b" if frac < 0.05 else ("#ef8a62" if frac < 0.25 else "#4d9221")
    shown = format_number(value, 4)
    raw = raw_number(value)
    title = "" if _same(shown, raw) else f" title='{html.escape(raw)}'"
    return (f"<div class='pk-gauge'>{html.escape(label)}: <b{title}>{html.escape(shown)}</b>"
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


def error_html(text: str) -> str:
    """An escaped error or warning message that wraps inside its widget (no overflow)."""
    return f"<div class='pk-error'>{html.escape(text)}</div>"
