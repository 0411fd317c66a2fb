"""Shared ipywidgets building blocks: the convention bar, slider-plus-number rows and the figure slot.

Glue only: the values live in traitlets of the owning widget; nothing here computes.
Plots are updated through plotly's public API only (``plotly_restyle`` with traces
looked up by uid, ``batch_update``); a :class:`FigureSlot` watches that a plot really
appeared in the page and offers to show it again when it did not.
"""

from __future__ import annotations

import math

import anywidget
import ipywidgets as w
import plotly.graph_objects as go
import traitlets as t

from ..core.convention import CHOICES
from ..view.frames import trace_index
from ..view.readouts import format_number, raw_number

__all__ = ["ConventionBar", "NumberBox", "NumberRow", "KeyboardScope", "LiveFigure", "OneMessageFigure",
           "FigureSlot", "PlotWatch", "restyle_traces", "BOX_DIGITS"]

#: Decimals a number box shows (trailing zeros dropped; the exact value is kept and shown on hover).
BOX_DIGITS = 6

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


class NumberBox(w.Text):
    """A text box for one number, written by :func:`~posekit.view.readouts.format_number`.

    ``number`` (a float, kernel side only) is the value; the page shows it formatted
    (``4.3733e-15`` never reads as ``4.3732626`` in a narrow box, ``0.1 + 0.2`` reads
    ``0.3``) with the exact value in the hover title whenever the text is rounded.
    Typing a number and pressing Enter (or leaving the box) sets ``number``; text that
    is not a finite number is refused, the box shows the value again and says why on hover.
    Leaving the text as shown keeps the exact value.
    """

    number = t.Float(0.0)

    def __init__(self, number: float = 0.0, digits: int = BOX_DIGITS, **kwargs):
        self._digits = digits
        self._shown = None
        super().__init__(continuous_update=False, **kwargs)
        self.number = float(number)
        self._write()
        self.observe(self._on_text, "value")
        self.observe(lambda ch: self._write(), "number")

    def _write(self) -> None:
        text = format_number(self.number, self._digits, trim=True)
        raw = raw_number(self.number)
        self._shown = text
        tip = None if _reads_as(text, self.number) else f"exact value: {raw}"
        with self.hold_sync():
            if self.value != text:
                self.value = text
            if self.tooltip != tip:
                self.tooltip = tip

    def _on_text(self, change) -> None:
        text = str(change["new"]).strip()
        if text == self._shown:
            return  # the text as written by _write (or typed unchanged): keep the exact number
        try:
            v = float(text.replace("\u2212", "-").replace(" ", ""))
        except ValueError:
            v = math.nan
        if not math.isfinite(v):
            self._write()
            self.tooltip = f"not a finite number: {text[:60]!r}; kept {raw_number(self.number)}"
            return
        if v == self.number:
            self._write()
        else:
            self.number = v


def _reads_as(text: str, value: float) -> bool:
    try:
        return float(text) == value
    except ValueError:
        return False


class NumberRow(w.HBox):
    """A label, a slider and an unbounded number box for one value.

    The slider covers the usual range; the number box (:class:`NumberBox`) accepts any
    finite value (a value outside the slider range leaves the slider at its end, the
    number is kept as typed).
    """

    def __init__(self, label: str, value: float, lo: float, hi: float, step: float, css: str):
        self.label = w.HTML(label, layout=w.Layout(width="175px"))
        self._css = css
        self._slider_observers = []
        self.slider = self._make_slider(value, lo, hi, step)
        self.box = NumberBox(value, layout=w.Layout(width="104px"))
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
        if self.box.number != value:
            self.box.number = value

    def observe_box(self, callback) -> None:
        """Call ``callback(value)`` with the number typed into the box."""
        self.box.observe(lambda ch: callback(ch["new"]), "number")

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


def restyle_traces(fig, changes: dict, index=None) -> None:
    """Set trace properties by uid (or name): ``{uid: {property: value}}``, one plotly restyle.

    Uses plotly's public ``plotly_restyle``; the trace positions are looked up from the
    uids (``index``, by default :func:`posekit.view.frames.trace_index`), never assumed.
    Every trace must get the same property names (plotly's restyle takes one list per property).
    """
    if not changes:
        return
    uids = list(changes)
    keys = list(changes[uids[0]])
    if any(list(changes[u]) != keys for u in uids):
        raise ValueError("restyle_traces: every trace needs the same property names in one call")
    position = index if index is not None else (lambda uid: trace_index(fig, uid))
    fig.plotly_restyle({k: [changes[u][k] for u in uids] for k in keys},
                       trace_indexes=[position(u) for u in uids])


class LiveFigure(go.FigureWidget):
    """A plotly ``FigureWidget`` updated through plotly's public API only.

    :meth:`restyle` sets trace properties by uid (:func:`restyle_traces`); layout and
    mixed edits go through ``batch_update``.  Nothing of plotly or ipywidgets is overridden.

    A ``FigureWidget`` gives every trace a fresh random ``uid`` when it is built; the
    uids of the figure it is built from (posekit's figures name their traces by uid) are
    set back with one public ``plotly_restyle``, so traces keep their stable uids.
    """

    def __init__(self, data=None, layout=None, frames=None, skip_invalid=False, **kwargs):
        source = getattr(data, "data", None) if data is not None and not isinstance(data, (list, tuple, dict)) \
            else None
        uids = [getattr(tr, "uid", None) for tr in source] if source is not None else []
        super().__init__(data=data, layout=layout, frames=frames, skip_invalid=skip_invalid, **kwargs)
        if uids and all(isinstance(u, str) and u for u in uids) and len(set(uids)) == len(uids) \
                and [tr.uid for tr in self.data] != uids:
            self.plotly_restyle({"uid": uids}, trace_indexes=list(range(len(uids))))

    def restyle(self, changes: dict) -> None:
        """``{uid: {property: value}}`` as one plotly restyle (see :func:`restyle_traces`)."""
        restyle_traces(self, changes, self.index)

    def index(self, uid: str) -> int:
        """Position of the trace with this uid (or name), looked up once and remembered.

        The memory is dropped when the number of traces changes; a remembered position is
        used only while the trace there still has that uid.
        """
        n = len(self.data)
        if getattr(self, "_posekit_positions", (None, None))[0] != n:
            self._posekit_positions = (n, {})
        known = self._posekit_positions[1]
        i = known.get(uid)
        if i is None:
            i = known[uid] = trace_index(self, uid)
        return i

    def trace(self, uid: str):
        """The trace with this uid (or name)."""
        return self.data[self.index(uid)]


#: Former name of :class:`LiveFigure`, kept for callers that still import it.
OneMessageFigure = LiveFigure


class PlotWatch(anywidget.AnyWidget):
    """A tiny page-side watcher beside a plot: did the plot really appear?

    Large widget front ends can fail to start in a busy page (the figure's code has a
    few seconds to load; past that the plot stays blank and the browser console says
    "Failed to initialize model").  This watcher has a small front end of its own: it
    looks for the plotly graph in its :class:`FigureSlot` and, when no drawn plot shows
    up within ``timeout_ms``, shows a message with a button that asks the kernel for a
    fresh copy of the figure.  It reports ``status`` ("waiting", "shown", "blank") back
    to the kernel; a plot that turns up late hides the message again.
    """

    _esm = """
    export default {
      render({ model, el }) {
        el.classList.add("posekit-plot-watch");
        const box = document.createElement("div");
        box.className = "posekit-plot-notice";
        box.setAttribute("role", "alert");
        box.style.cssText = "display:none;margin:6px 0;padding:8px 10px;border:1px solid #d9a441;" +
          "background:#fff8e6;border-radius:4px;font-size:13px;line-height:1.4;color:#3d3000;" +
          "overflow-wrap:anywhere;max-width:100%;box-sizing:border-box;";
        const text = document.createElement("div");
        text.className = "posekit-plot-notice-text";
        text.textContent = model.get("message");
        const button = document.createElement("button");
        button.className = "posekit-plot-retry jupyter-button";
        button.textContent = "Show the plot again";
        button.style.cssText = "margin-top:6px;padding:2px 10px;cursor:pointer;";
        button.addEventListener("click", () => {
          button.disabled = true;
          text.textContent = "Asking the kernel for a fresh plot (it answers once any running cell has finished)\u2026";
          model.send({ event: "retry" });
        });
        box.append(text, button);
        el.append(box);
        const started = performance.now();
        let status = "waiting";
        const report = (s) => {
          if (s === status) return;
          status = s;
          try { model.set("status", s); model.save_changes(); } catch (e) { /* the message is shown anyway */ }
        };
        const drawn = () => {
          const slot = el.closest(".posekit-figure-slot");
          if (!slot) return false;
          const gd = slot.querySelector(".js-plotly-plot");
          const want = Math.min(1, model.get("traces"));
          return !!(gd && gd._fullLayout && gd.data && gd.data.length >= want);
        };
        const tick = () => {
          if (drawn()) {
            box.style.display = "none";
            report("shown");
            clearInterval(timer);
          } else if (performance.now() - started > model.get("timeout_ms")) {
            box.style.display = "block";
            report("blank");
          }
        };
        const timer = setInterval(tick, 250);
        tick();
        return () => clearInterval(timer);
      }
    };
    """
    #: What the page saw: "waiting" (not yet), "shown" (a drawn plot), "blank" (none in time).
    status = t.Unicode("waiting").tag(sync=True)
    #: How long the page waits for a drawn plot before it shows the message (milliseconds).
    timeout_ms = t.Int(5000).tag(sync=True)
    #: Traces the figure holds (a drawn plot with none of them counts as blank).
    traces = t.Int(1).tag(sync=True)
    message = t.Unicode("The plot did not appear: the page was too busy when it arrived. "
                        "Nothing is lost; press the button to show it again.").tag(sync=True)


class FigureSlot(w.VBox):
    """Holds a :class:`LiveFigure` and its :class:`PlotWatch`; ``retry()`` shows a fresh copy.

    ``figure`` is always the current figure widget (a retry replaces it with a copy of
    its data and layout, so owners must read ``slot.figure`` each time).  ``on_figure``
    callbacks run for every new figure (to attach click handlers again).  ``attempts``
    counts the figures shown, ``ready`` is True once the page reported a drawn plot.
    """

    def __init__(self, fig, *, classes=(), timeout_ms: int = 5000, layout=None):
        self._classes = tuple(classes)
        self._timeout_ms = int(timeout_ms)
        self._callbacks = []
        self.attempts = 0
        self.ready = False
        self.figure = None
        self.watch = None
        width = getattr(getattr(fig, "layout", None), "width", None)
        if layout is None:  # a figure of fixed width keeps it (never squeezed and clipped); else it follows the page
            layout = (w.Layout(flex="0 0 auto", min_width=f"{int(width)}px") if width
                      else w.Layout(flex="1 1 auto", min_width="0"))
        super().__init__([], layout=layout)
        self.add_class("posekit-figure-slot")
        self._show(fig)

    def _show(self, fig) -> None:
        old_fig, old_watch = self.figure, self.watch
        self.figure = fig if isinstance(fig, LiveFigure) and old_fig is None else LiveFigure(fig)
        for c in self._classes:
            self.figure.add_class(c)
        self.watch = PlotWatch(timeout_ms=self._timeout_ms, traces=len(self.figure.data))
        self.watch.observe(self._on_status, "status")
        self.watch.on_msg(self._on_msg)
        self.ready = False
        self.attempts += 1
        self.children = (self.figure, self.watch)
        for cb in self._callbacks:
            cb(self.figure)
        for old in (old_fig, old_watch):
            if old is not None:
                old.close()

    def on_figure(self, callback) -> None:
        """Call ``callback(figure)`` now and for every fresh figure a retry shows."""
        self._callbacks.append(callback)
        callback(self.figure)

    def retry(self) -> None:
        """Show a fresh figure widget holding the current figure's data and layout."""
        self._show(go.Figure(self.figure))

    def _on_status(self, change) -> None:
        self.ready = change["new"] == "shown"

    def _on_msg(self, widget, content, buffers) -> None:
        if isinstance(content, dict) and content.get("event") == "retry" and widget is self.watch:
            self.retry()
