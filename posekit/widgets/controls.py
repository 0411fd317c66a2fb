"""Shared ipywidgets building blocks: the convention bar and slider-plus-number rows.

Glue only: the values live in traitlets of the owning widget; nothing here computes.
"""

from __future__ import annotations

import anywidget
import ipywidgets as w
import plotly.graph_objects as go
import traitlets as t
from plotly.basedatatypes import BaseFigure, Undefined

from ..core.convention import CHOICES

__all__ = ["ConventionBar", "NumberRow", "KeyboardScope", "OneMessageFigure"]

_LABELS = {
    "sequence": "Euler sequence",
    "axes": "turn about",
    "unit": "angle unit",
    "wrap": "read-back range",
    "scalar": "quaternion w",
    "algebra": "quaternion algebra",
    "action": "angles build",
    "direction": "transform maps",
    "layout": "flat matrix order",
}
_WORDS = {
    "intrinsic": "moving axes (intrinsic)",
    "extrinsic": "fixed axes (extrinsic)",
    "signed": "signed",
    "positive": "positive",
    "first": "first (w x y z)",
    "last": "last (x y z w)",
    "hamilton": "Hamilton ij=k",
    "jpl": "JPL ij=-k",
    "active": "active",
    "passive": "passive",
    "parent-from-child": "child \u2192 parent",
    "child-from-parent": "parent \u2192 child",
    "row-major": "row by row",
    "column-major": "column by column",
}


class ConventionBar(w.GridBox):
    """One labelled control per convention field, laid out in a compact grid.

    ``value`` (a dict field -> word) is the only state; observers of the owner watch it.
    """

    def __init__(self, fields=tuple(CHOICES), initial=None, **kwargs):
        self.controls: dict[str, w.ValueWidget] = {}
        cells = []
        initial = initial or {}
        for name in fields:
            options = [(_WORDS.get(v, v), v) for v in CHOICES[name]]
            if name == "sequence":
                ctl = w.Dropdown(options=options, value=initial.get(name, CHOICES[name][-1]),
                                 layout=w.Layout(width="110px"))
            else:
                ctl = w.ToggleButtons(options=options, value=initial.get(name, CHOICES[name][0]),
                                      style=w.ToggleButtonsStyle(button_width="auto"))
            ctl.add_class(f"posekit-setting-{name}")
            ctl.description_allow_html = False
            self.controls[name] = ctl
            label = w.Label(_LABELS[name], layout=w.Layout(width="135px"))
            cells.append(w.HBox([label, ctl], layout=w.Layout(align_items="center")))
        super().__init__(cells, layout=w.Layout(grid_template_columns="repeat(auto-fill, minmax(380px, 1fr))",
                                                grid_gap="2px 14px"), **kwargs)
        self.add_class("posekit-convention-bar")

    def settings(self) -> dict[str, str]:
        return {k: c.value for k, c in self.controls.items()}

    def set_settings(self, settings: dict[str, str]) -> None:
        for k, v in settings.items():
            if k in self.controls and self.controls[k].value != v:
                self.controls[k].value = v


class NumberRow(w.HBox):
    """A label, a slider and an unbounded number box for one value.

    The slider covers the usual range; the number box accepts any finite value (a value
    outside the slider range leaves the slider at its end, the number is kept as typed).
    """

    def __init__(self, label: str, value: float, lo: float, hi: float, step: float, css: str):
        self.label = w.HTML(label, layout=w.Layout(width="175px"))
        self._css = css
        self._slider_observers = []
        self.slider = self._make_slider(value, lo, hi, step)
        self.box = w.FloatText(value=value, step=None, layout=w.Layout(width="86px"))  # step=None: no rounding in the page
        self.box.add_class(f"posekit-number-{css}")
        super().__init__([self.label, self.slider, self.box], layout=w.Layout(align_items="center"))

    def _make_slider(self, value: float, lo: float, hi: float, step: float) -> w.FloatSlider:
        slider = w.FloatSlider(value=min(max(value, lo), hi), min=lo, max=hi, step=step, readout=False,
                               continuous_update=True, layout=w.Layout(width="170px"))
        slider.add_class(f"posekit-slider-{self._css}")
        return slider

    def show(self, value: float) -> None:
        """Show ``value``: the number box exactly, the slider clamped to its range (no message if unchanged)."""
        clamped = min(max(value, self.slider.min), self.slider.max)
        if self.slider.value != clamped:
            self.slider.value = clamped
        if self.box.value != value:
            self.box.value = value

    def observe_slider(self, callback) -> None:
        """Call ``callback(change)`` on slider moves; kept across :meth:`set_range`."""
        self._slider_observers.append(callback)
        self.slider.observe(callback, "value")

    def set_range(self, lo: float, hi: float, step: float, value: float | None = None) -> None:
        """Give the slider a new range and step by building a fresh one.

        Re-ranging a live slider lets the page snap its value to the old step grid and send
        that back, which would look like a real move (seen when the angle unit changes).
        """
        s = self.slider
        if (s.min, s.max, s.step) == (lo, hi, step):
            return
        current = s.value if value is None else value
        for cb in self._slider_observers:
            s.unobserve(cb, "value")
        self.slider = self._make_slider(current, lo, hi, step)
        for cb in self._slider_observers:
            self.slider.observe(cb, "value")
        self.children = (self.label, self.slider, self.box)
        s.close()


class KeyboardScope(anywidget.AnyWidget):
    """An empty element that keeps JupyterLab's notebook shortcuts off the enclosing widget's controls.

    In JupyterLab's command mode ArrowUp/ArrowDown and many letters are notebook
    shortcuts, so a focused list box would not move its choice (ArrowDown jumps to the
    next cell instead).  Lumino skips shortcut matching from an element marked
    ``data-lm-suppress-shortcuts`` upwards; this marks every select, button and input
    inside the nearest ancestor matching ``scope`` (a CSS selector), now and as the
    controls are rebuilt.
    """

    _esm = """
    export default {
      render({ model, el }) {
        let inner = null;
        const markAll = (host) => host.querySelectorAll("select, button, input").forEach(
          (n) => { if (!n.hasAttribute("data-lm-suppress-shortcuts")) n.setAttribute("data-lm-suppress-shortcuts", "true"); });
        const start = () => {
          const host = el.closest(model.get("scope"));
          if (!host) return false;
          markAll(host);
          inner = new MutationObserver(() => markAll(host));
          inner.observe(host, { childList: true, subtree: true });
          return true;
        };
        if (start()) return () => inner.disconnect();
        const outer = new MutationObserver(() => { if (start()) outer.disconnect(); });
        outer.observe(document.body, { childList: true, subtree: true });
        return () => { outer.disconnect(); if (inner) inner.disconnect(); };
      }
    };
    """
    scope = t.Unicode(".posekit-graph-explorer").tag(sync=True)


class OneMessageFigure(go.FigureWidget):
    """A plotly ``FigureWidget`` whose restyles and batch updates reach the page as one comm message each.

    plotly sends every restyle (and every ``batch_update``) as four messages: each of
    the two edit counters, the restyle itself, then a reset of its trait to None (which
    the page ignores).
    Here the counters travel in the same update message as the restyle, and the reset
    stays in the kernel (a view built later reads the trait's None from the kernel, as
    before).  The Python-side figure data is updated by plotly exactly as before.
    Inside an enclosing ``hold_sync`` plotly's own route is kept.
    """

    def _perform_plotly_restyle(self, restyle_data, trace_indexes):
        """plotly's update of the kernel-side trace data, with a cheaper check of plain property names.

        plotly checks every (key, trace) pair by reading the property from the trace;
        a plain name (no ``.`` or ``[``) is valid exactly when it is one of the trace's
        properties, which is a set lookup.  Anything else takes plotly's own route.
        The changes returned and the data set are the same as plotly's.
        """
        traces = self.data
        plain = all(isinstance(key, str) and "." not in key and "[" not in key for key in restyle_data)
        if not (plain and all(0 <= i < len(traces) for i in trace_indexes)
                and all(key in traces[i]._valid_props for key in restyle_data for i in trace_indexes)):
            return super()._perform_plotly_restyle(restyle_data, trace_indexes)
        changes = {}
        for key, v in restyle_data.items():
            changed = False
            for n, i in enumerate(trace_indexes):
                value = v[n % len(v)] if isinstance(v, list) else v
                if value is not Undefined:
                    changed = BaseFigure._set_in(self._data[i], key, value) or changed
            if changed:
                changes[key] = v
        return changes

    def _send_restyle_msg(self, restyle_data, trace_indexes=None, source_view_id=None):
        if self._holding_sync:
            return super()._send_restyle_msg(restyle_data, trace_indexes, source_view_id)
        self._send_one("_py2js_restyle", lambda layout_id, trace_id: {
            "restyle_data": restyle_data, "restyle_traces": self._normalize_trace_indexes(trace_indexes),
            "trace_edit_id": trace_id, "layout_edit_id": layout_id, "source_view_id": source_view_id})

    def _send_update_msg(self, restyle_data, relayout_data, trace_indexes=None, source_view_id=None):
        """What ``batch_update`` sends: as one message, like the restyle above."""
        if self._holding_sync:
            return super()._send_update_msg(restyle_data, relayout_data, trace_indexes, source_view_id)
        self._send_one("_py2js_update", lambda layout_id, trace_id: {
            "style_data": restyle_data, "layout_data": relayout_data,
            "style_traces": self._normalize_trace_indexes(trace_indexes), "trace_edit_id": trace_id,
            "layout_edit_id": layout_id, "source_view_id": source_view_id})

    def _send_one(self, name: str, build) -> None:
        """Send plotly's message ``build(layout_edit_id, trace_edit_id)`` in trait ``name`` with both counters."""
        self._layout_edit_in_process = True
        self._trace_edit_in_process = True
        with self.hold_sync():  # one 'update' message: both counters and plotly's message
            self._last_layout_edit_id += 1
            self._last_trace_edit_id += 1
            setattr(self, name, build(self._last_layout_edit_id, self._last_trace_edit_id))
        locked = self._property_lock
        self._property_lock = {**locked, name: None}  # the page already holds the message
        try:
            setattr(self, name, None)
        finally:
            self._property_lock = locked
