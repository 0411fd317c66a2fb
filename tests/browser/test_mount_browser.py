"""The mount finder in real JupyterLab (headless Chromium, Playwright).

Two CSV logs are generated here (scipy RotationSpline through random key orientations, a known
mount, world frame and clock offset; B written by scipy as Z-Y-X Euler angles in degrees, stated
as radians), the widget is built from them in a notebook, the button is clicked, and what the page
shows -- the offset, the slip's sentence, the code, the plotted speed curves -- is compared with the
generated ground truth (scipy, named beside each check) and with posekit's own API.
"""

from __future__ import annotations

import re

import numpy as np
from scipy.spatial.transform import Rotation, RotationSpline

from posekit.analysis.alignment import align_streams, read_stream_log
from posekit.view.readouts import format_number

WIDGET = ".posekit-mount-finder"
A_RATE, B_RATE, DURATION = 100.0, 30.0, 40.0


def _write(path, header, times, values):
    rows = np.column_stack([times, values])
    path.write_text(",".join(header) + "\n" + "\n".join(",".join(repr(float(v)) for v in r) for r in rows) + "\n")


def _generate(folder):
    """Ground truth (scipy): smooth motion through 9 random key orientations, a random mount and world, an offset."""
    rng = np.random.default_rng(7)
    keys = np.linspace(0.0, DURATION, 9)
    spline = RotationSpline(keys, Rotation.random(9, random_state=7))
    mount, world = Rotation.random(random_state=1007), Rotation.random(random_state=2007)
    offset = float(rng.uniform(-1.5, 1.5))
    ta = np.arange(0.0, DURATION, 1.0 / A_RATE)
    tau = np.arange(2.0, DURATION - 2.0, 1.0 / B_RATE)                     # true times of B's samples
    folder.mkdir(exist_ok=True)
    _write(folder / "imu.csv", ["time", "qw", "qx", "qy", "qz"], ta, spline(ta).as_quat(scalar_first=True))
    rb = world * spline(tau) * mount
    _write(folder / "camera.csv", ["stamp", "yaw", "pitch", "roll"], tau - offset,
           rb.as_euler("ZYX", degrees=True))                                # scipy: upper case = intrinsic
    return spline, mount, offset


def test_find_the_mount_from_two_logs_in_the_page(lab, artifacts):
    spline, mount, offset = _generate(lab.root / "mount-logs")
    cell = ("from posekit.widgets import MountFinder\n"
            "finder = MountFinder('mount-logs/imu.csv', 'mount-logs/camera.csv', reading_a='scalar=first',\n"
            "                     reading_b='sequence=z-y-x')\n"
            "finder")
    page = lab.open_notebook("mount_finder.ipynb", [cell])
    page.wait_for_selector(f"{WIDGET} .posekit-mount-speeds .js-plotly-plot", state="attached", timeout=90_000)
    page.wait_for_function("() => { const b = document.querySelector('button.posekit-mount-run');"
                           " return b && !b.disabled; }", timeout=60_000)
    page.locator("button.posekit-mount-run").click()
    page.wait_for_function("() => { const e = document.querySelector('.posekit-mount-offset');"
                           " return e && e.textContent.includes('add'); }", timeout=90_000)

    # posekit's API on the same logs, for what the page must show exactly
    la = read_stream_log(lab.root / "mount-logs" / "imu.csv")
    lb = read_stream_log(lab.root / "mount-logs" / "camera.csv")
    ref = align_streams(la.times, la.values, "scalar=first", lb.times, lb.values, "sequence=z-y-x")

    offset_text = page.locator(".posekit-mount-offset").inner_text()
    shown = float(re.search(r"add ([+-][0-9.]+) s", offset_text).group(1))
    assert abs(shown - offset) <= 1.0 / A_RATE                                 # the generated clock offset
    assert f"add {'+' if ref.offset > 0 else ''}{format_number(ref.offset, 4, trim=True)} s" in offset_text
    verdict = page.locator(".posekit-mount-verdict").inner_text()
    assert "The angles were written in degrees but read as radians." in verdict
    code = page.locator(".posekit-mount-code textarea").input_value()
    assert code.endswith(ref.best.code)

    # the plot data plotly.js holds: B's speeds shifted onto A's clock are scipy's angular speed there
    page.wait_for_function("() => { const gd = document.querySelector('.posekit-mount-speeds .js-plotly-plot');"
                           " return gd && gd.data && gd.data.every(t => t.x && t.x.length > 0); }", timeout=30_000)
    data = {t["name"]: t for t in lab.plot_data(page, ".posekit-mount-speeds")}
    after = data["stream B, shifted onto A's clock"]
    x, y = np.array(after["x"], dtype=float), np.array(after["y"], dtype=float)
    omega = np.degrees(np.linalg.norm(spline(x, 1), axis=1))                 # scipy RotationSpline: rate vector
    assert len(x) > 500 and np.sqrt(np.mean((y - omega) ** 2)) <= 1e-3 * np.sqrt(np.mean(omega ** 2))
    before = np.array(data["stream B, its own clock"]["x"], dtype=float)
    assert abs(float(np.median(x - before)) - offset) <= 1.0 / A_RATE
    # the mount numbers shown in the user's reading (z-y-x intrinsic radians) read back to scipy's mount
    cells = page.locator(".posekit-mount-mount table").first.locator("td").all()
    angles = [float(c.get_attribute("title") or c.inner_text()) for c in cells[:3]]
    err = np.degrees((Rotation.from_euler("ZYX", angles).inv() * mount).magnitude())          # scipy
    assert err <= 0.1

    page.set_viewport_size({"width": 1400, "height": 2300})
    page.wait_for_timeout(800)
    page.locator(WIDGET).first.screenshot(path=str(artifacts / "mount-finder.png"))
    page.set_viewport_size({"width": 1400, "height": 1000})

    # an unreadable reading clears what was shown, and the message names the box
    box = page.locator(".posekit-mount-b-reading input")
    box.fill("sequence=z-y-q")
    box.press("Enter")
    page.wait_for_function("() => { const e = document.querySelector('.posekit-mount-offset');"
                           " return e && !e.textContent.includes('add'); }", timeout=30_000)
    message = page.locator(".posekit-mount-message").inner_text()
    assert "stream B's 'reading' box" in message
    assert page.locator(".posekit-mount-code textarea").input_value() == ""
    page.close()
