"""The offline HTML report in headless Chromium: figures render, no network, user text stays text."""

from __future__ import annotations

from pathlib import Path

import pytest

import posekit as pk
from posekit.io.state import NamedPose, State
from posekit.view.report import write_report

HOSTILE = "<img src=x onerror=alert(1)>"


@pytest.fixture(scope="module")
def report(tmp_path_factory):
    rot = pk.read_rotation([30, -10, 5], "euler", "unit=degrees")
    poses = (NamedPose("expected mount", pk.make_transform(rot, [0.2, 0.0, 0.5])),
             NamedPose(HOSTILE, pk.make_transform(rot.T, [0.2, 0.0, 0.5])))
    state = State("none", {}, poses, (), notes=f"seen on the survey boat; {HOSTILE}")
    path = tmp_path_factory.mktemp("report") / "report.html"
    return write_report(state, path, diagnosis=[f"frame {HOSTILE} was entered backwards"])


def test_report_renders_offline_and_escapes_user_text(lab, report, artifacts):
    # the session's Chromium (one Playwright per process); a new page with its own listeners
    requests, dialogs, errors = [], [], []
    page = lab.context.new_page()
    page.on("request", lambda r: requests.append(r.url))
    page.on("dialog", lambda d: (dialogs.append(d.message), d.dismiss()))
    page.on("pageerror", lambda e: errors.append(str(e)))
    page.goto(Path(report).as_uri())
    page.wait_for_function("() => { const gd = document.getElementById('posekit-figure');"
                           " return gd && gd._fullLayout && gd.data && gd.data.length >= 3; }", timeout=60_000)
    page.wait_for_timeout(500)
    names = page.evaluate("() => document.getElementById('posekit-figure').data.map(t => t.name)")
    body_text = page.inner_text("body")
    images = page.evaluate("() => document.querySelectorAll('img').length")
    legend = page.evaluate("() => [...document.querySelectorAll('#posekit-figure .legendtext')]"
                           ".map(e => e.textContent)")
    page.screenshot(path=str(artifacts / "report.png"), full_page=False)
    page.close()
    assert [u for u in requests if not u.startswith(("file:", "data:", "blob:"))] == []
    assert dialogs == [] and errors == []
    assert images == 0
    assert HOSTILE in body_text  # shown as text, in the diagnosis, the pose heading and the notes
    assert body_text.count(HOSTILE) >= 3
    assert "expected mount" in names and "parent frame" in names
    assert any(HOSTILE in t for t in legend)  # plotly shows the escaped name as plain text in its legend
