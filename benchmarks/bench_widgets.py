"""Slider-to-plot latency of the explorer vs a bare one-trace FigureWidget, in one real browser run.

Starts JupyterLab and headless Chromium (tests/browser/harness.py), opens a notebook
holding both an Explorer and a bare FigureWidget with one slider, then presses
ArrowRight on each slider many times.  For every press the page records the time
from the key event to the next animation frame after plotly.js finished the
restyle of that figure.  The kernel-side work of each explorer update (the time
spent in its refresh) is recorded inside the kernel and shown in the page.

Prints: median latency of both, their ratio (target <= 1.25) and the median
kernel-side work per explorer update (target <= 3 ms).
"""

from __future__ import annotations

import json
import statistics
import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests" / "browser"))

from harness import LabSession  # noqa: E402

PRESSES = 30

CELLS = [
    "import time, json, statistics, math\n"
    "import ipywidgets as w\n"
    "import plotly.graph_objects as go\n"
    "from posekit.widgets import Explorer\n"
    "ex = Explorer(angles=(0.0, 20.0, 0.0), convention='sequence=z-y-x unit=degrees')\n"
    "work = []\n"
    "stats = w.HTML('[]'); stats.add_class('bench-stats')\n"
    "_refresh = ex._refresh\n"
    "def timed_refresh():\n"
    "    t = time.perf_counter(); _refresh(); work.append(time.perf_counter() - t)\n"
    "    stats.value = json.dumps(work)\n"
    "ex._refresh = timed_refresh\n"
    "w.VBox([ex, stats])",
    "bare = go.FigureWidget([go.Scatter3d(x=[0, 1], y=[0, 0], z=[0, 0], mode='lines')])\n"
    "bare.update_layout(height=400)\n"
    "slider = w.FloatSlider(min=-180, max=180, step=1, value=0, readout=False)\n"
    "slider.add_class('bare-slider')\n"
    "def on_value(change):\n"
    "    a = math.radians(change['new'])\n"
    "    bare.data[0].x = [0, math.cos(a)]\n"
    "    bare.data[0].y = [0, math.sin(a)]\n"
    "slider.observe(on_value, 'value')\n"
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


def measure(lab, page, plot_sel: str, handle_sel: str) -> list[float]:
    out = []
    handle = page.locator(handle_sel).first
    handle.focus()
    for i in range(PRESSES):
        page.evaluate(ARM, [plot_sel])
        page.keyboard.press("ArrowRight")
        out.append(page.evaluate("() => window.__latency"))
        page.wait_for_timeout(120)
    return out


def main() -> None:
    with LabSession() as lab:
        page = lab.open_notebook("bench_widgets.ipynb", CELLS)
        page.wait_for_selector(".posekit-explorer .js-plotly-plot")
        page.wait_for_selector(".bare-widget .js-plotly-plot")
        page.wait_for_timeout(1500)
        # warm up both once
        measure_bare = measure(lab, page, ".bare-widget", ".bare-slider .noUi-handle")
        measure_explorer = measure(lab, page, ".posekit-explorer", ".posekit-slider-angle-1 .noUi-handle")
        measure_bare += measure(lab, page, ".bare-widget", ".bare-slider .noUi-handle")
        measure_explorer += measure(lab, page, ".posekit-explorer", ".posekit-slider-angle-1 .noUi-handle")
        page.wait_for_timeout(500)
        work = json.loads(page.locator(".bench-stats").inner_text())
    bare = statistics.median(measure_bare)
    explorer = statistics.median(measure_explorer)
    kernel = statistics.median(work) * 1e3
    print(f"slider-to-plot latency, median of {len(measure_explorer)} presses each (same browser run)")
    print(f"  bare one-trace FigureWidget : {bare:8.1f} ms")
    print(f"  posekit Explorer            : {explorer:8.1f} ms")
    print(f"  ratio explorer / bare       : {explorer / bare:8.2f}   (target <= 1.25)")
    print(f"kernel-side work per explorer update, median of {len(work)}: {kernel:.2f} ms   (target <= 3 ms)")


if __name__ == "__main__":
    main()
