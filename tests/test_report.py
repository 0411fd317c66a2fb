"""The offline HTML report as a page: rendered from its template with autoescape on, the diagnosis
shown in full and numbered once, the corrected code runnable, user text shown as text.

The page is read back with Python's own HTML parser (html.parser: character references
decoded as the HTML standard says), so each check sees what a browser shows, not the
escaped source.  The corrected code is run in a fresh Python process, as a reader who
pastes it would run it, and its numbers are compared with scipy.spatial.transform.Rotation
(the reference named in each test; scipy's upper-case Euler sequences are intrinsic,
scipy's documentation of ``Rotation.from_euler``).
"""

from __future__ import annotations

import fnmatch
import json
import re
import subprocess
import sys
import tomllib
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pytest
from scipy.spatial.transform import Rotation

import posekit as pk
from posekit.analysis import diagnose, diagnose_batch
from posekit.core.errors import isolate_controls
from posekit.io.state import REPORT_STATE_OPEN, Edge, NamedPose, State, read_report_state
from posekit.view.report import SAFETY_NOTE, ReportInputError, _template, report_html, write_report

ROOT = Path(__file__).resolve().parents[1]
SCRIPT = "<script>alert(1)</script>"
BIDI = "\u202e"


class Page(HTMLParser):
    """Elements (tag, attributes, text inside) and the text a reader sees, outside scripts and styles."""

    def __init__(self, text: str):
        super().__init__(convert_charrefs=True)
        self.elements: list[dict] = []
        self._open: list[dict] = []
        self.shown: list[str] = []
        self.feed(text)
        self.close()

    def handle_starttag(self, tag, attrs):
        element = {"tag": tag, "attrs": dict(attrs), "text": [], "parents": [e["tag"] for e in self._open]}
        self.elements.append(element)
        if tag not in ("meta", "br", "link", "img", "input"):
            self._open.append(element)

    def handle_endtag(self, tag):
        for i in range(len(self._open) - 1, -1, -1):
            if self._open[i]["tag"] == tag:
                del self._open[i:]
                break

    def handle_data(self, data):
        for element in self._open:
            element["text"].append(data)
        if not any(e["tag"] in ("script", "style", "title") for e in self._open):
            self.shown.append(data)

    @property
    def text(self) -> str:
        return "".join(self.shown)

    def find(self, tag: str, cls: str | None = None) -> list[dict]:
        return [e for e in self.elements if e["tag"] == tag
                and (cls is None or cls in e["attrs"].get("class", "").split())]

    @staticmethod
    def inner(element) -> str:
        return "".join(element["text"])


def run_pasted_code(code: str, prelude: str = "") -> np.ndarray:
    """Run the code as pasted into a fresh Python process; return its ``corrected`` numbers."""
    program = prelude + code + "\nimport json as _json\nprint(_json.dumps(np.asarray(corrected).tolist()))\n"
    out = subprocess.run([sys.executable, "-c", program], capture_output=True, text=True, timeout=300, cwd=ROOT)
    assert out.returncode == 0, out.stderr[-2000:]
    return np.array(json.loads(out.stdout.strip().splitlines()[-1]))


def scalar_order_case(angles=(10.0, 20.0, 30.0)):
    """Observed: scipy's quaternion of z-y-x intrinsic angles, written scalar-last and read scalar-first."""
    reference = Rotation.from_euler("ZYX", angles, degrees=True)
    observed = " ".join(repr(float(v)) for v in reference.as_quat())  # scipy writes (x, y, z, w) by default
    d = diagnose(" ".join(map(str, angles)), observed, assumed="scalar=first unit=degrees",
                 expected_kind="euler", expected_convention="unit=degrees")
    return reference, d


def _state(notes="seen on the survey boat", names=("expected mount", "observed as read")) -> State:
    rot = pk.read_rotation([30, -10, 5], "euler", "unit=degrees")
    poses = tuple(NamedPose(n, pk.make_transform(rot if i == 0 else rot.T, [0.2, 0.0, 0.5]))
                  for i, n in enumerate(names))
    return State("none", {}, poses, (), notes=notes)


def _li_sentences(page: Page) -> list[str]:
    return [page.inner(p) for p in page.find("p", "pk-sentence")]


# --- the diagnosis in full --------------------------------------------------------------------

def test_explanations_are_numbered_once_by_the_list_and_the_readings_are_said_back():
    reference, d = scalar_order_case()
    page = Page(report_html(_state(), diagnosis=d))
    lists = page.find("ol")
    assert len(lists) == 1 and "pk-explanations" in lists[0]["attrs"]["class"]
    items = [e for e in page.find("li", "pk-explanation") if "ol" in e["parents"]]
    assert len(items) == len(d.explanations) >= 2
    sentences = _li_sentences(page)
    assert sentences == [e.sentence for e in d.explanations]
    assert not any(re.match(r"\s*\d+[.)]", s) for s in sentences)   # the list numbers them, nothing else
    assert not re.search(r"\b\d+\.\s+\d+\.\s", page.text)             # no "2. 1." anywhere on the page
    text = page.text
    assert d.verdict in text and d.assumed_reading in text and d.expected_reading in text
    assert "scalar-last but read scalar-first" in page.inner(page.find("p", "pk-verdict")[0])


def test_corrected_numbers_and_code_reproduce_what_scipy_says():
    reference, d = scalar_order_case((-35.0, 12.5, 160.0))
    page = Page(report_html(_state(), diagnosis=d))
    code = page.inner(page.find("pre", "pk-code")[0])
    assert code == d.best.code                                       # the code survives escaping unchanged
    shown = np.array([float(v) for v in page.inner(page.find("pre", "pk-corrected")[0]).split(",")])
    assert shown.tolist() == list(d.best.corrected_numbers)          # shortest repr: the same floats
    corrected = run_pasted_code(code)
    assert corrected.tolist() == shown.tolist()                      # the code prints the numbers shown
    # scipy: the corrected numbers, read scalar-first as the user reads them, are the expected rotation
    back = Rotation.from_quat(corrected, scalar_first=True)
    assert (reference.inv() * back).magnitude() < 1e-9
    assert "written in your reading: a quaternion written (w, x, y, z)" in page.text


def test_an_inverse_transform_is_corrected_to_the_matrix_scipy_builds():
    angles, t = (25.0, -10.0, 40.0), np.array([0.3, -0.1, 0.5])
    r = Rotation.from_euler("ZYX", angles, degrees=True).as_matrix()   # scipy: intrinsic z-y-x
    inverse = np.eye(4)
    inverse[:3, :3], inverse[:3, 3] = r.T, -r.T @ t                     # the calibration handed over backwards
    expected = " ".join(map(str, [*t, *angles]))
    d = diagnose(expected, " ".join(repr(float(v)) for v in inverse.ravel()),
                 expected_kind="position-euler", expected_convention="unit=degrees")
    assert d.explained
    page = Page(report_html(_state(), diagnosis=d))
    corrected = run_pasted_code(page.inner(page.find("pre", "pk-code")[0])).reshape(4, 4)  # row by row, as read
    np.testing.assert_allclose(corrected[:3, :3], r, atol=1e-12)
    np.testing.assert_allclose(corrected[:3, 3], t, atol=1e-12)
    np.testing.assert_allclose(corrected[3], [0, 0, 0, 1], atol=0)


def test_a_batch_diagnosis_shows_every_pair_and_code_for_the_whole_log():
    rng = np.random.default_rng(7)
    angles = rng.uniform(-80, 80, (6, 3))
    reference = Rotation.from_euler("ZYX", angles, degrees=True)
    logged = reference.as_quat()                                        # scipy: (x, y, z, w)
    d = diagnose_batch(angles, logged, assumed="scalar=first", expected_kind="euler",
                       expected_convention="unit=degrees")
    page = Page(report_html(_state(), diagnosis=d))
    assert "6 pairs; one explanation fits every pair." in page.text
    rows = page.inner(page.find("pre", "pk-corrected")[0]).splitlines()
    assert len(rows) == 6
    code = page.inner(page.find("pre", "pk-code")[0])
    assert "logged_numbers" in code and "logged_numbers stands for your (N, n) array" in page.text
    corrected = run_pasted_code(code, prelude=f"logged_numbers = {json.dumps(logged.tolist())}\n")
    shown = np.array([[float(v) for v in row.split(",")] for row in rows])
    np.testing.assert_allclose(corrected, shown, rtol=0, atol=4e-16)   # the rows shown, to the last bits
    back = Rotation.from_quat(corrected, scalar_first=True)
    assert np.max((reference.inv() * back).magnitude()) < 1e-9


def test_chosen_picks_the_explanation_whose_numbers_and_code_are_shown():
    _, d = scalar_order_case()
    page = Page(report_html(_state(), diagnosis=d, chosen=1))
    assert page.inner(page.find("pre", "pk-code")[0]) == d.explanations[1].code
    chosen = [e for e in page.find("li", "pk-chosen")]
    assert len(chosen) == 1 and d.explanations[1].sentence in page.inner(chosen[0])
    for bad in (len(d.explanations), -1, True, 1.0, "1"):
        with pytest.raises(pk.PoseInputError, match="report chosen"):
            report_html(_state(), diagnosis=d, chosen=bad)


def test_labelled_diagnoses_each_get_their_own_section_with_the_label_escaped():
    _, d1 = scalar_order_case()
    _, d2 = scalar_order_case((5.0, -40.0, 100.0))
    labels = {f"IMU {SCRIPT}": d1, f"camera & {BIDI}mount": d2}
    page = Page(report_html(_state(), diagnosis=labels))
    headings = [page.inner(h) for h in page.find("h3") if "article" in h["parents"]]
    assert headings == [isolate_controls(k) for k in labels]
    assert len(page.find("ol", "pk-explanations")) == 2 and len(page.find("pre", "pk-code")) == 2
    assert [page.inner(p) for p in page.find("pre", "pk-code")] == [d1.best.code, d2.best.code]


def test_plain_lines_are_shown_as_written_without_a_second_numbering():
    lines = ["The quaternion was written scalar-last but read scalar-first.",
             "1. The quaternion was written scalar-last but read scalar-first. (rotation off 0°)  <- chosen",
             "2. The rotation is child-from-parent (its inverse) but was read as parent-from-child."]
    page = Page(report_html(_state(), diagnosis=lines))
    assert page.find("ol") == [] and page.find("li") == []
    assert [page.inner(p) for p in page.find("p", "pk-line")] == lines


# --- user text stays text ------------------------------------------------------------------------

def test_every_user_string_is_shown_as_typed_and_parses_as_text():
    _, d = scalar_order_case()
    title = f"mount {SCRIPT} & {BIDI}flip"
    notes = f"seen on the boat {SCRIPT} & {BIDI}then\nline two"
    names = (f"camera {SCRIPT} & co", "عربي <b>mount</b>")
    edge = Edge("world & <i>", f"base {SCRIPT}", "position-heading", (1.0, 2.0, 3.0))
    state = State("none", {}, _state(names=names).poses, (edge,), notes=notes)
    source = report_html(state, title=title, diagnosis={f"label {SCRIPT}": d})
    page = Page(source)
    text = page.text
    for typed in (title, *names, "world & <i>", f"base {SCRIPT}", f"label {SCRIPT}", *notes.split("\n")):
        assert isolate_controls(typed) in text, typed
    assert BIDI not in source[source.index("</head>"):]                 # shown as <U+202E>, never raw
    assert page.find("i") == [] and page.find("img") == []             # the typed tags are text
    assert [page.inner(e) for e in page.find("b")] == ["Caution."]     # the only <b> is the page's own
    assert [e["attrs"].get("id") for e in page.find("script")].count("posekit-state") == 1
    assert len(page.find("script")) == 3                               # plotly.js, the figure, the state
    assert page.find("title")[0]["text"] == [isolate_controls(title)]
    assert [page.inner(h) for h in page.find("h3") if "section" in h["parents"] and "article" not in h["parents"]] \
        == list(names)


def test_the_caution_the_policy_and_the_state_block_are_kept(tmp_path):
    state = _state(notes=f"notes {SCRIPT} </script><!-- {BIDI}")
    path = write_report(state, tmp_path / "r.html", diagnosis=scalar_order_case()[1])
    source = path.read_text(encoding="utf-8")
    page = Page(source)
    assert SAFETY_NOTE in page.text
    policy = [e["attrs"]["content"] for e in page.find("meta") if e["attrs"].get("http-equiv") ==
              "Content-Security-Policy"]
    assert len(policy) == 1 and policy[0].startswith("default-src 'none';") and "http" not in policy[0]
    assert not [e for e in page.elements if re.match(r"(https?:)?//", e["attrs"].get("src") or e["attrs"].get("href")
                                                     or "")]
    assert source.count(REPORT_STATE_OPEN) == 1 and source.endswith("</script></body></html>")
    assert read_report_state(path) == state


def test_the_template_environment_escapes_by_default():
    env = _template().environment
    assert env.from_string("{{ x }}").render(x="<b>&") == "&lt;b&gt;&amp;"
    assert env.autoescape("report.html") is True


def test_bad_diagnosis_arguments_are_refused_with_typed_errors():
    _, d = scalar_order_case()
    for bad, words in ((5, "a list of lines"), ({"x": "not a diagnosis"}, "diagnosis['x']"),
                       ([d], "pass one diagnosis"), ({3: d}, "report diagnosis label"),
                       (["line"], None)):
        if words is None:
            with pytest.raises(ReportInputError, match="pass the Diagnosis itself"):
                report_html(_state(), diagnosis=bad, chosen=1)
            continue
        with pytest.raises(pk.PoseInputError) as err:
            report_html(_state(), diagnosis=bad)
        assert words in str(err.value)


# --- the template ships ------------------------------------------------------------------------------

def test_the_template_ships_in_the_wheel_and_the_sdist_and_jinja2_comes_with_the_notebook_extra():
    config = tomllib.loads((ROOT / "pyproject.toml").read_text())
    patterns = config["tool"]["setuptools"]["package-data"]["posekit.view"]
    manifest = (ROOT / "MANIFEST.in").read_text().splitlines()
    templates = sorted((ROOT / "posekit" / "view" / "templates").iterdir())
    assert templates
    for path in templates:
        relative = path.relative_to(ROOT / "posekit" / "view").as_posix()
        assert any(fnmatch.fnmatch(relative, p) for p in patterns), relative
        assert any(line.split()[:2] == ["recursive-include", "posekit/view/templates"]
                   and any(fnmatch.fnmatch(path.name, p) for p in line.split()[2:]) for line in manifest), path.name
    assert any(re.match(r"jinja2\b", r, re.I) for r in config["project"]["optional-dependencies"]["notebook"])
