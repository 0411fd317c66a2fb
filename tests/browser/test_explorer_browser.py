"""The explorer in real JupyterLab: keyboard on a slider, convention toggles in both modes,
and a plot that failed to start in a busy page coming back with its retry button.

The expected numbers are computed here by posekit's core (read_rotation and the
view's frame_points) and compared with the data plotly.js holds in the page; traces
are found by uid.
"""

from __future__ import annotations

import numpy as np

from posekit import read_rotation, write_rotation
from posekit.view.frames import DEFAULT_PALETTE, FRAME_UIDS, PALETTES, frame_points

CONV = "sequence=z-y-x unit=degrees"
CELLS = [
    "from posekit.widgets import Explorer\n"
    f"ex = Explorer(angles=(30.0, -10.0, 0.0), convention={CONV!r})\n"
    "ex",
]
FRAME = FRAME_UIDS["frame"]
SEL = ".posekit-explorer"


def _page_frame(lab, page):
    t = page.evaluate(
        "([sel, uid]) => { const gd = document.querySelector(sel + ' .js-plotly-plot');"
        " const t = gd.data.find(d => d.uid === uid); return {name: t.name, x: Array.from(t.x), y: Array.from(t.y),"
        " z: Array.from(t.z), colours: Array.from(t.line.color)}; }", [SEL, FRAME])
    assert t["name"] == "frame"
    return t


def _changed(page, before):
    """Wait until the page's frame trace differs from ``before`` (compared number by number)."""
    page.wait_for_function(
        "([sel, uid, old]) => { const gd = document.querySelector(sel + ' .js-plotly-plot');"
        " const t = gd && gd.data && gd.data.find(d => d.uid === uid); if (!t) return false;"
        " const x = Array.from(t.x); return x.length !== old.length || x.some((v, i) => v !== old[i]); }",
        arg=[SEL, FRAME, before["x"]], timeout=30_000)


def _expected(rotation):
    xs, ys, zs = frame_points(rotation)
    return xs, ys, zs


def _assert_frame(trace, rotation):
    xs, ys, zs = _expected(rotation)
    for got, want in ((trace["x"], xs), (trace["y"], ys), (trace["z"], zs)):
        g = np.array([np.nan if v is None else v for v in got], dtype=float)
        w = np.array([np.nan if v is None else v for v in want], dtype=float)
        np.testing.assert_allclose(g, w, atol=1e-12, equal_nan=True)


def _open(lab, name):
    page = lab.open_notebook(name, CELLS)
    page.wait_for_selector(f"{SEL} .js-plotly-plot", timeout=90_000)
    page.wait_for_function(
        "(sel) => { const gd = document.querySelector(sel + ' .js-plotly-plot');"
        " return gd && gd.data && gd.data.length > 1; }",
        arg=SEL)
    return page


def _box_values(page):
    return [float(page.locator(f".posekit-number-angle-{i} input").input_value()) for i in (1, 2, 3)]


def test_slider_moves_with_keyboard_and_plot_matches_core(lab, artifacts):
    page = _open(lab, "explorer_keys.ipynb")
    start = _page_frame(lab, page)
    _assert_frame(start, read_rotation([30.0, -10.0, 0.0], "euler", CONV))
    # the default colours in the page: the colour-blind safe palette at the three arrow tips
    assert (start["colours"][1], start["colours"][4], start["colours"][7]) == PALETTES[DEFAULT_PALETTE]
    handle = page.locator(".posekit-slider-angle-1 .noUi-handle").first
    handle.focus()
    page.keyboard.press("ArrowRight")
    page.wait_for_function(
        "() => document.querySelector('.posekit-number-angle-1 input').value === '31'", timeout=30_000)
    _changed(page, start)
    moved = _page_frame(lab, page)
    # expected from posekit's core for the angles the page now shows
    _assert_frame(moved, read_rotation([31.0, -10.0, 0.0], "euler", CONV))
    # a convention setting by keyboard alone: the sequence list, next choice with ArrowDown
    page.locator(".posekit-setting-sequence select").focus()
    before = _page_frame(lab, page)
    page.keyboard.press("ArrowDown")
    _changed(page, before)
    assert page.locator(".posekit-setting-sequence select").input_value() == "x-y-x"
    _assert_frame(_page_frame(lab, page), read_rotation([31.0, -10.0, 0.0], "euler", "sequence=x-y-x unit=degrees"))
    page.screenshot(path=str(artifacts / "explorer-after-keyboard.png"), full_page=True)
    page.close()


def test_convention_toggle_keep_numbers_then_keep_orientation(lab, artifacts):
    page = _open(lab, "explorer_toggle.ipynb")
    start = _page_frame(lab, page)
    # keep the numbers: the same (30, -10, 0) now read about the fixed axes
    page.locator(".posekit-setting-axes button", has_text="extrinsic").click()
    _changed(page, start)
    extrinsic = read_rotation([30.0, -10.0, 0.0], "euler", CONV + " axes=extrinsic")
    _assert_frame(_page_frame(lab, page), extrinsic)
    assert _box_values(page) == [30.0, -10.0, 0.0]

    # keep the orientation: back to intrinsic, the frame stays, the numbers change
    page.locator(".posekit-keep label", has_text="keep the orientation").click()
    page.wait_for_timeout(300)
    page.locator(".posekit-setting-axes button", has_text="intrinsic").click()
    want = write_rotation(extrinsic, "euler", CONV)
    page.wait_for_function(
        "(want) => [1, 2, 3].every(i => Math.abs(parseFloat(document.querySelector("
        "'.posekit-number-angle-' + i + ' input').value) - want[i - 1]) < 1e-6)",
        arg=[float(v) for v in want], timeout=30_000)
    np.testing.assert_allclose(_box_values(page), want, atol=1e-6)
    _assert_frame(_page_frame(lab, page), extrinsic)
    assert not np.allclose(want, [30.0, -10.0, 0.0], atol=1e-3)  # the numbers really changed
    # keep the orientation across a unit change: the numbers become exact radians
    page.locator(".posekit-setting-unit button", has_text="radians").click()
    rad = np.radians(want)
    page.wait_for_function(
        "(want) => [1, 2, 3].every(i => Math.abs(parseFloat(document.querySelector("
        "'.posekit-number-angle-' + i + ' input').value) - want[i - 1]) < 1e-6)",
        arg=[float(v) for v in rad], timeout=30_000)
    page.wait_for_timeout(1500)  # let any slider echo from the page arrive
    np.testing.assert_allclose(_box_values(page), rad, atol=1e-6)
    # the boxes show readable numbers, never a hidden exponent or float noise
    for i in (1, 2, 3):
        text = page.locator(f".posekit-number-angle-{i} input").input_value()
        assert len(text) <= 12 and ("e" not in text or "e-" in text or "e+" in text), text
    _assert_frame(_page_frame(lab, page), extrinsic)
    page.screenshot(path=str(artifacts / "explorer-after-toggles.png"), full_page=True)
    page.close()


# Slow start of large widget front ends, as in a busy page: every script module of more than 1 MB
# (plotly's figure widget) waits ``delay`` ms before it loads, past the 2 s a widget front end is
# given to start.  Small modules (the plot watcher) load as usual.
SLOW_MODULES = """(() => {
  const create = URL.createObjectURL.bind(URL);
  window.__posekitSlow = { on: true, delay: 4000, delayed: 0 };
  URL.createObjectURL = (obj) => {
    const url = create(obj);
    const slow = window.__posekitSlow;
    if (slow.on && obj instanceof Blob && obj.type === "text/javascript" && obj.size > 1000000) {
      slow.delayed += 1;
      const shim = "await new Promise((r) => setTimeout(r, " + slow.delay + "));\\n" +
                   "const m = await import(" + JSON.stringify(url) + ");\\nexport default m.default;\\n";
      return create(new Blob([shim], { type: "text/javascript" }));
    }
    return url;
  };
})();"""
SLEEPY_CELLS = [
    "from posekit.widgets import Explorer\n"
    f"ex = Explorer(angles=(30.0, -10.0, 0.0), convention={CONV!r})\n"
    "display(ex)\n"
    "import time\n"
    "time.sleep(30)  # the kernel stays busy right after displaying",
]
DRAWN = ("(sel) => { const gd = document.querySelector(sel + ' .js-plotly-plot');"
         " return !!(gd && gd._fullLayout && gd.data && gd.data.length === 5); }")


def test_a_plot_that_failed_to_start_shows_a_message_and_comes_back_on_retry(lab, artifacts):
    from harness import write_notebook

    write_notebook(lab.root / "explorer_blank.ipynb", SLEEPY_CELLS)
    page = lab.context.new_page()
    page.set_default_timeout(90_000)
    page.add_init_script(SLOW_MODULES)
    errors = []
    page.on("console", lambda m: errors.append(m.text) if m.type == "error" else None)
    page.goto(f"http://127.0.0.1:{lab.port}/lab/workspaces/posekit-blank/tree/explorer_blank.ipynb"
              f"?reset&token={lab.token}")
    page.wait_for_function("() => !!window.jupyterapp")
    page.wait_for_function(
        "() => { const w = window.jupyterapp.shell.currentWidget; return !!(w && w.sessionContext && "
        "w.sessionContext.session && w.sessionContext.session.kernel && "
        "w.sessionContext.session.kernel.status === 'idle'); }")
    page.evaluate("() => { window.jupyterapp.commands.execute('notebook:run-all-cells'); }")

    # the figure's front end misses its start: the plot stays blank and the watcher says so, in words
    notice = page.locator(f"{SEL} .posekit-plot-notice")
    notice.wait_for(state="visible", timeout=40_000)
    assert page.evaluate("() => window.__posekitSlow.delayed") >= 1
    assert not page.evaluate(DRAWN, SEL)
    assert "did not appear" in notice.inner_text()
    running = "() => document.querySelector('.jp-CodeCell .jp-InputPrompt').textContent.includes('*')"
    assert page.evaluate(running)  # the cell still sleeps in the kernel
    page.locator(SEL).screenshot(path=str(artifacts / "explorer-blank-notice.png"))

    # the page is calm again; retry while the kernel still sleeps: the request waits, then the plot comes
    page.evaluate("() => { window.__posekitSlow.on = false; }")
    page.locator(f"{SEL} .posekit-plot-retry").click()
    assert "Asking the kernel" in notice.inner_text()
    assert page.evaluate(running)  # the retry waits for the kernel: the plot comes once the cell is done
    page.wait_for_function(DRAWN, arg=SEL, timeout=60_000)
    assert page.locator(f"{SEL} .posekit-plot-notice:visible").count() == 0
    _assert_frame(_page_frame(lab, page), read_rotation([30.0, -10.0, 0.0], "euler", CONV))
    # the fresh plot is live: a slider step moves it
    before = _page_frame(lab, page)
    handle = page.locator(".posekit-slider-angle-1 .noUi-handle").first
    handle.focus()
    page.keyboard.press("ArrowRight")
    _changed(page, before)
    _assert_frame(_page_frame(lab, page), read_rotation([31.0, -10.0, 0.0], "euler", CONV))
    page.locator(SEL).screenshot(path=str(artifacts / "explorer-after-retry.png"))
    page.close()
