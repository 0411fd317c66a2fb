"""Every piece of user text in the offline HTML report, as headless Chromium renders it.

Each user-supplied string (the title, the notes, pose names, the frames of every edge of a
frame graph, the pasted text, diagnosis labels and plain diagnosis lines, the recorded versions)
carries markup of its own: an element with a unique id, an image whose error handler and a script
that would each leave a mark on the page, an entity, a script end tag and a comment opener.  The
reference is the browser's own DOM: each string must show literally in the page's text (hidden
characters as ``<U+XXXX>``, :func:`posekit.core.errors.isolate_controls`), and none of the
injected elements, handlers or scripts may exist or run.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from scipy.spatial.transform import Rotation

import posekit as pk
from posekit.core.errors import isolate_controls
from posekit.io.state import Edge, NamedPose, State, environment_versions, read_report_state, state_to_json
from posekit.view.report import write_report
from posekit.widgets import DebugDesk

BIDI = "\u202e"


def hostile(key: str, hidden: bool = False) -> str:
    """Text that is also markup: an element ``#x-<key>``, an image and a script that mark the page if run."""
    return (f'<b id="x-{key}" class="injected">{key}</b><img src=x onerror="window.pkRan=\'{key}\'">'
            f"<script>window.pkRan='{key}'</script>&amp; </script><!-- ]]>" + (f" {BIDI}end" if hidden else ""))


TITLE = hostile("title", hidden=True)[:200]
NOTES = f"first line {hostile('notes1', hidden=True)}\nsecond line {hostile('notes2')}"
POSE_NAMES = (hostile("pose1"), hostile("pose2"))
#: a frame graph with a loop: every frame name is hostile
FRAMES = {k: hostile(f"frame-{k}") for k in ("world", "base", "arm", "tool")}
ANGLES = (10.0, 20.0, 30.0)
#: scipy's rotation of the expected angles ("ZYX": intrinsic z-y-x, scipy's documentation)
REFERENCE = Rotation.from_euler("ZYX", ANGLES, degrees=True)
PASTED = f"# from the log {hostile('pasted', hidden=True)}\n" + " ".join(repr(float(v)) for v in REFERENCE.as_quat())
LABEL = hostile("label")
LINES = [f"line one {hostile('line1', hidden=True)}", f"line two {hostile('line2')}\nand its second row"]
VERSION = '<b id="x-ver">1</b>&amp;'


def _edges() -> tuple[Edge, ...]:
    f = FRAMES
    m = pk.make_transform(REFERENCE.as_matrix(), [0.1, 0.2, 0.3])
    return (Edge(f["world"], f["base"], "matrix", tuple(m.ravel())),
            Edge(f["base"], f["arm"], "position-quaternion", (0.0, 0.5, 0.0, 1.0, 0.0, 0.0, 0.0)),
            Edge(f["arm"], f["tool"], "position-euler", (0.0, 0.0, 0.2, 0.0, 0.0, 90.0), pk.Convention.parse(
                "unit=degrees")),
            Edge(f["world"], f["tool"], "position-heading", (1.0, 2.0, 0.5)))


@pytest.fixture(scope="module")
def reports(tmp_path_factory):
    folder = tmp_path_factory.mktemp("escaping")
    desk = DebugDesk(pasted=PASTED, expected=" ".join(map(str, ANGLES)), expected_kind="euler",
                     convention="unit=degrees scalar=first")
    d = desk.diagnosis
    rot = pk.read_rotation(list(ANGLES), "euler", "unit=degrees")
    poses = tuple(NamedPose(n, pk.make_transform(r, [0.2, 0.0, 0.5])) for n, r in zip(POSE_NAMES, (rot, rot.T)))
    versions = dict(environment_versions(), posekit=VERSION)
    full = State("desk", desk.to_state().settings, poses, _edges(), notes=NOTES, versions=versions)
    lines = State("none", {}, poses[:1], _edges(), notes=NOTES)
    return {
        "labelled": (write_report(full, folder / "labelled.html", title=TITLE, diagnosis={LABEL: d}), full,
                     [TITLE, NOTES, *POSE_NAMES, *FRAMES.values(), *PASTED.split("\n"), LABEL, VERSION]),
        "lines": (write_report(lines, folder / "lines.html", title=TITLE, diagnosis=LINES), lines,
                  [TITLE, NOTES, POSE_NAMES[0], *FRAMES.values(), *LINES]),
    }


def _shown(typed: str) -> list[str]:
    """What a reader should see: each line as typed, hidden characters as <U+XXXX>."""
    return [isolate_controls(line) for line in typed.split("\n")]


@pytest.mark.parametrize("which", ["labelled", "lines"])
def test_every_user_string_shows_literally_and_injects_nothing(lab, reports, artifacts, which):
    path, state, typed = reports[which]
    dialogs, errors, requests = [], [], []
    page = lab.context.new_page()
    page.on("dialog", lambda dlg: (dialogs.append(dlg.message), dlg.dismiss()))
    page.on("pageerror", lambda e: errors.append(str(e)))
    page.on("request", lambda r: requests.append(r.url))
    page.goto(Path(path).as_uri())
    page.wait_for_function("() => { const gd = document.getElementById('posekit-figure');"
                           " return gd && gd._fullLayout && gd.data && gd.data.length >= 3; }", timeout=60_000)
    page.wait_for_timeout(300)
    dom = page.evaluate("""() => ({
        injected: document.querySelectorAll('[id^="x-"], .injected').length,
        images: document.querySelectorAll('img').length,
        scripts: [...document.querySelectorAll('script')].map(s => s.id || s.type || 'inline'),
        ran: window.pkRan === undefined ? null : String(window.pkRan),
        title: document.title,
        text: document.body.innerText,
        edgeCells: [...[...document.querySelectorAll('h2')].find(h => h.textContent.startsWith('Frame edges'))
                   .nextElementSibling.querySelectorAll('tr')].slice(1)
                   .map(tr => [...tr.querySelectorAll('td')].slice(0, 2).map(td => td.innerText)),
        legend: [...document.querySelectorAll('#posekit-figure .legendtext')].map(e => e.textContent),
        comments: (() => { const w = document.createTreeWalker(document.body, NodeFilter.SHOW_COMMENT);
                           let n = 0; while (w.nextNode()) n++; return n; })(),
    })""")
    page.screenshot(path=str(artifacts / f"report-escaping-{which}.png"), full_page=False)
    page.close()

    # nothing the user typed became an element, a handler, a script or a comment
    assert dom["injected"] == 0 and dom["images"] == 0 and dom["ran"] is None and dom["comments"] == 0
    assert len(dom["scripts"]) == 3 and dom["scripts"].count("posekit-state") == 1, dom["scripts"]  # plotly.js,
    # the figure, the state
    assert dialogs == [] and errors == []
    assert [u for u in requests if not u.startswith(("file:", "data:", "blob:"))] == []
    # every string shows as typed
    assert dom["title"] == isolate_controls(TITLE)
    for text in typed:
        for line in _shown(text):
            assert line in dom["text"], (line, which)
    assert BIDI not in dom["text"]
    # the frame graph's edges: parent and child cells hold the frame names literally
    want = [[e.parent, e.child] for e in state.edges]
    assert dom["edgeCells"] == want
    for name in state.poses:  # plotly's legend shows the trace names literally
        assert any(name.name in t for t in dom["legend"]), (name.name, dom["legend"])
    # the embedded state survived its own script end tags and reads back unchanged
    assert state_to_json(read_report_state(path)) == state_to_json(state)
    assert np.allclose(read_report_state(path).edges[0].numbers, state.edges[0].numbers, rtol=0, atol=0)
