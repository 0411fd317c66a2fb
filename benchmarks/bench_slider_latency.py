"""Slider -> plot latency of the Explorer against a bare one-trace FigureWidget, in the same run.

Both figures are updated the same way: plotly's public ``plotly_restyle`` (the Explorer
finds its traces by uid; the bare figure restyles its one trace), driven by a
``FloatSlider`` whose value arrives as the page would send it.

Kernel side (always): the time from the slider's value message to the moment the
figure's restyle message leaves the widget (a hook on the widget's comm records the
send), per update, interleaved Explorer / bare so both see the same machine load.
The Explorer's readouts are built after its plot message and do not count toward the
plot's latency (they are reported separately as the whole update).

Browser side (``--browser``, needs Chromium; tests/browser/harness.py starts JupyterLab):
ArrowRight on each slider, time from the key event to the next animation frame after
plotly.js finished the restyle of that figure.

Target: Explorer / bare <= 1.25 (median).  Prints both figures and the ratio.

    .venv/bin/python benchmarks/bench_slider_latency.py [--updates 400] [--browser] [--presses 30]
"""

from __future__ import annotations

import argparse
import gc
import math
import statistics
import sys
import time
from pathlib import Path

TARGET = 1.25


class _SendClock:
    """Notes when a widget's comm sends a message holding a plotly restyle (hook on the comm's publish)."""

    def __init__(self, widget):
        self.at = None
        comm = widget.comm
        original = comm.publish_msg

        def publish(msg_type, data=None, metadata=None, buffers=None, **keys):
            state = (data or {}).get("state") or {}
            if self.at is None and state.get("_py2js_restyle"):
                self.at = time.perf_counter()
            return original(msg_type, data=data, metadata=metadata, buffers=buffers, **keys)

        comm.publish_msg = publish


def _bare():
    """A bare FigureWidget holding one frame-like trace, and its slider (angle about z, degrees)."""
    import ipywidgets as w
    import plotly.graph_objects as go

    fig = go.FigureWidget([go.Scatter3d(x=[0, 1, None, 0, 0, None, 0, 0], y=[0, 0, None, 0, 1, None, 0, 0],
                                        z=[0, 0, None, 0, 0, None, 0, 1], mode="lines")])
    slider = w.FloatSlider(min=-180, max=180, step=1, value=0, readout=False)

    def on_value(change):
        a = math.radians(change["new"])
        c, s = math.cos(a), math.sin(a)
        fig.plotly_restyle({"x": [[0, c, None, 0, -s, None, 0, 0]], "y": [[0, s, None, 0, c, None, 0, 0]],
                            "z": [[0, 0, None, 0, 0, None, 0, 1]]}, trace_indexes=[0])

    slider.observe(on_value, "value")
    return fig, slider


def kernel_side(updates: int) -> dict:
    from posekit.widgets import Explorer

    ex = Explorer(angles=(0.0, 20.0, 0.0), convention="sequence=z-y-x unit=degrees")
    bare, bare_slider = _bare()
    ex_clock, bare_clock = _SendClock(ex.figure), _SendClock(bare)
    ex_slider = ex.angle_rows[0].slider
    plot_ex, whole_ex, plot_bare = [], [], []
    gc.disable()
    try:
        for k in range(updates + 20):  # 20 warm-up updates, not kept
            value = float(-170 + (k % 340))
            ex_clock.at = None
            t0 = time.perf_counter()
            ex_slider.set_state({"value": value})  # as the page sends a slider move
            t1 = time.perf_counter()
            bare_clock.at = None
            t2 = time.perf_counter()
            bare_slider.set_state({"value": value})
            if k >= 20:
                plot_ex.append(ex_clock.at - t0)
                whole_ex.append(t1 - t0)
                plot_bare.append(bare_clock.at - t2)
    finally:
        gc.enable()
    return {"explorer_plot": plot_ex, "explorer_whole": whole_ex, "bare_plot": plot_bare}


PAGE_CELLS = [
    "from posekit.widgets import Explorer\n"
    "ex = Explorer(angles=(0.0, 20.0, 0.0), convention='sequence=z-y-x unit=degrees')\n"
    "ex",
    "import sys\n"
    f"sys.path.insert(0, {str(Path(__file__).resolve().parent)!r})\n"
    "import ipywidgets as w\n"
    "from bench_slider_latency import _bare\n"
    "bare, slider = _bare()\n"
    "bare.update_layout(height=400, width=500)\n"
    "slider.add_class('bare-slider')\n"
    "box = w.VBox([slider, bare]); box.add_class('bare-widget'); box",
]

ARM = """([plotSel]) => {
  const gd = document.querySelector(plotSel + ' .js-plotly-plot');
  window.__latency = new Promise((resolve) => {
    let t0 = null;
    document.addEventListener('keydown', () => { t0 = performance.now(); }, {once: true, capture: true});
    const done = () => {
      gd.removeListener('plotly_restyle', done);
      requestAnimationFrame(() => resolve(performance.now() - t0));
    };
    gd.on('plotly_restyle', done);
  });
}"""


def browser_side(presses: int) -> dict:
    sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests" / "browser"))
    from harness import LabSession

    out = {"explorer": [], "bare": []}
    with LabSession() as lab:
        page = lab.open_notebook("bench_slider_latency.ipynb", PAGE_CELLS)
        page.set_viewport_size({"width": 1500, "height": 1400})
        for sel in (".posekit-explorer", ".bare-widget"):
            page.wait_for_function("(s) => { const gd = document.querySelector(s + ' .js-plotly-plot');"
                                   " return gd && gd._fullLayout && gd.data && gd.data.length > 0; }", arg=sel)
        handles = {"explorer": (".posekit-explorer", ".posekit-slider-angle-1 .noUi-handle"),
                   "bare": (".bare-widget", ".bare-slider .noUi-handle")}
        for i in range(presses + 3):  # interleaved; 3 warm-up presses each, not kept
            for key, (plot_sel, handle_sel) in handles.items():
                handle = page.locator(handle_sel).first
                handle.scroll_into_view_if_needed()
                handle.focus()
                page.evaluate(ARM, [plot_sel])
                page.keyboard.press("ArrowRight")
                ms = page.evaluate("() => window.__latency")
                if i >= 3:
                    out[key].append(ms)
                page.wait_for_timeout(150)
        page.close()
    return out


def _ms(values) -> str:
    return f"median {statistics.median(values):.3f} ms (p90 {sorted(values)[int(0.9 * len(values))]:.3f} ms)"


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--updates", type=int, default=400)
    parser.add_argument("--browser", action="store_true")
    parser.add_argument("--presses", type=int, default=30)
    args = parser.parse_args()

    k = kernel_side(args.updates)
    ex = [1e3 * v for v in k["explorer_plot"]]
    bare = [1e3 * v for v in k["bare_plot"]]
    ratio = statistics.median(ex) / statistics.median(bare)
    print(f"kernel side, {args.updates} updates each, slider message -> plot restyle message sent:")
    print(f"  explorer: {_ms(ex)}")
    print(f"  bare one-trace FigureWidget: {_ms(bare)}")
    print(f"  ratio explorer / bare: {ratio:.2f} (target <= {TARGET}): {'met' if ratio <= TARGET else 'MISSED'}")
    print(f"  explorer whole update (plot, controls and readouts): {_ms([1e3 * v for v in k['explorer_whole']])}")
    met = ratio <= TARGET
    if args.browser:
        b = browser_side(args.presses)
        bratio = statistics.median(b["explorer"]) / statistics.median(b["bare"])
        print(f"browser side, {args.presses} key presses each, key -> plotly.js restyle drawn:")
        print(f"  explorer: {_ms(b['explorer'])}")
        print(f"  bare one-trace FigureWidget: {_ms(b['bare'])}")
        print(f"  ratio explorer / bare: {bratio:.2f} (target <= {TARGET}): {'met' if bratio <= TARGET else 'MISSED'}")
        met = met and bratio <= TARGET
    return 0 if met else 1


if __name__ == "__main__":
    sys.exit(main())
