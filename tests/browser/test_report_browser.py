"""The offline HTML report in headless Chromium: figures render, no network, user text stays text,
the diagnosis is numbered once and its corrected code, copied from the page, reproduces what
scipy.spatial.transform.Rotation computes (the named reference)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from scipy.spatial.transform import Rotation
from test_report import run_pasted_code  # tests/ is on the path (tests/conftest.py lives there)

import posekit as pk
from posekit.core.errors import isolate_controls
from posekit.io.state import Edge, NamedPose, State
from posekit.view.report import SAFETY_NOTE, write_report
from posekit.widgets import DebugDesk

HOSTILE = "<img src=x onerror=alert(1)>"
SCRIPT = "<script>alert(2)</script>"
BIDI = "\u202e"
ANGLES = (10.0, 20.0, 30.0)
#: scipy's rotation of the expected angles: upper-case "ZYX" is intrinsic z-y-x (scipy's documentation)
REFERENCE = Rotation.from_euler("ZYX", ANGLES, degrees=True)
#: pasted as a log line would be: a comment holding markup, & and a bidi override, then scipy's
#: quaternion as it writes it by default, (x, y, z, w)
PASTED = (f"# from the driver log {SCRIPT} & {BIDI}reversed\n"
          + " ".join(repr(float(v)) for v in REFERENCE.as_quat()))
TITLE = f"IMU mount {SCRIPT} & {BIDI}flipped"
NOTES = f"seen on the survey boat; {HOSTILE} & {BIDI}then"
NAMES = (f"expected mount {SCRIPT}", HOSTILE, "عربي & camera")
EDGE = Edge(f"world {SCRIPT}", "base & <b>mast</b>", "position-heading", (1.0, 2.0, 3.0))


@pytest.fixture(scope="module")
def made(tmp_path_factory):
    # a desk as a user fills it in: the paste (read scalar-first, as stated) and the expected angles
    desk = DebugDesk(pasted=PASTED, expected=" ".join(map(str, ANGLES)), expected_kind="euler",
                     convention="unit=degrees scalar=first")
    d = desk.diagnosis
    rot = pk.read_rotation(list(ANGLES), "euler", "unit=degrees")
    poses = tuple(NamedPose(n, pk.make_transform(m, [0.2, 0.0, 0.5]))
                  for n, m in zip(NAMES, (rot, rot.T, d.best.corrected_rotation)))
    state = State("desk", desk.to_state().settings, poses, (EDGE,), notes=NOTES)
    path = tmp_path_factory.mktemp("report") / "report.html"
    return write_report(state, path, title=TITLE, diagnosis=d, chosen=desk.chosen), d


def test_report_renders_offline_shows_the_diagnosis_and_escapes_user_text(lab, made, artifacts):
    report, d = made
    # the session's Chromium (one Playwright per process); a new page with its own listeners
    requests, dialogs, errors = [], [], []
    page = lab.context.new_page()
    page.on("request", lambda r: requests.append(r.url))
    page.on("dialog", lambda dlg: (dialogs.append(dlg.message), dlg.dismiss()))
    page.on("pageerror", lambda e: errors.append(str(e)))
    page.goto(Path(report).as_uri())
    page.wait_for_function("() => { const gd = document.getElementById('posekit-figure');"
                           " return gd && gd._fullLayout && gd.data && gd.data.length >= 3; }", timeout=60_000)
    page.wait_for_timeout(500)
    names = page.evaluate("() => document.getElementById('posekit-figure').data.map(t => t.name)")
    body_text = page.inner_text("body")
    title = page.title()
    images = page.evaluate("() => document.querySelectorAll('img').length")
    scripts = page.evaluate("() => [...document.querySelectorAll('script')].map(s => s.id || s.type)")
    legend = page.evaluate("() => [...document.querySelectorAll('#posekit-figure .legendtext')]"
                           ".map(e => e.textContent)")
    lists = page.evaluate("""() => [...document.querySelectorAll('ol')].map(ol => ({
        cls: ol.className, nested: !!ol.closest('li'),
        style: getComputedStyle(ol.querySelector('li')).listStyleType,
        items: [...ol.children].map(li => li.querySelector('.pk-sentence').innerText)}))""")
    code = page.inner_text("pre.pk-code")
    shown_numbers = page.inner_text("pre.pk-corrected")
    setting = page.evaluate("() => [...document.querySelectorAll('td.pk-setting')].map(e => e.innerText)")
    page.screenshot(path=str(artifacts / "report.png"), full_page=False)
    page.close()

    # offline: nothing but the file itself, no script ran from user text
    assert [u for u in requests if not u.startswith(("file:", "data:", "blob:"))] == []
    assert dialogs == [] and errors == []
    assert images == 0
    assert scripts.count("posekit-state") == 1 and len(scripts) == 3  # plotly.js, the figure, the state
    # every user string shown as typed, hidden characters as <U+XXXX>
    assert title == isolate_controls(TITLE)
    for typed in (TITLE, NOTES, *NAMES, f"world {SCRIPT}", "base & <b>mast</b>", *PASTED.split("\n")):
        assert isolate_controls(typed) in body_text, typed
    assert BIDI not in body_text
    assert any(isolate_controls(PASTED.split("\n")[0]) in s for s in setting)  # the paste, in the settings
    assert body_text.count(HOSTILE) >= 2  # the pose heading and the notes
    assert "parent frame" in names and len(names) >= 5
    for name in NAMES:  # plotly shows the escaped trace names as plain text in its legend
        assert any(name in t for t in legend), (name, legend)
    # the explanations, numbered once: one list, its own markers, no number in the sentences
    assert len(lists) == 1 and lists[0]["cls"] == "pk-explanations" and not lists[0]["nested"]
    assert lists[0]["style"] == "decimal"
    assert lists[0]["items"] == [e.sentence for e in d.explanations]
    assert d.verdict in body_text and d.assumed_reading in body_text and d.expected_reading in body_text
    assert SAFETY_NOTE in body_text
    # the corrected code, copied from the page and run, prints the numbers shown; scipy agrees with them
    assert code == d.best.code
    corrected = run_pasted_code(code)
    assert corrected.tolist() == [float(v) for v in shown_numbers.split(",")]
    assert (REFERENCE.inv() * Rotation.from_quat(corrected, scalar_first=True)).magnitude() < 1e-9
    np.testing.assert_allclose(Rotation.from_quat(corrected, scalar_first=True).as_euler("ZYX", degrees=True),
                               ANGLES, atol=1e-9)
