"""Every notebook executes headless in a fresh kernel, and is stored without outputs.

Beyond running, the notebooks' words are held to what their cells do: the reports the tour
and the bug-report template write carry the diagnosis with corrected code that, run as
pasted, gives the drawing's pose as scipy.spatial.transform.Rotation computes it (the named
reference; scipy's upper-case Euler sequences are intrinsic, scipy's documentation of
``Rotation.from_euler``), and the tour's explorer behaves as its markdown says.
"""

from __future__ import annotations

import re
from pathlib import Path

import nbformat
import numpy as np
import pytest
from nbclient import NotebookClient
from scipy.spatial.transform import Rotation
from test_report import Page, run_pasted_code  # tests/ is on the path (tests/conftest.py lives there)

NOTEBOOK_DIR = Path(__file__).resolve().parents[1] / "notebooks"
NOTEBOOKS = sorted(NOTEBOOK_DIR.glob("*.ipynb"))

# A phrase each notebook's own outputs must contain: the job it claims to do was done.
EXPECTED = {
    "tour.ipynb": ["written scalar-last but read scalar-first", "inverse transform", "report:"],
    "bug-report-template.ipynb": ["attach:"],
    "convention-walkthrough.ipynb": ["JPL matrix == transpose of Hamilton matrix: True", "only first + third"],
}


def _text(nb) -> str:
    parts = []
    for cell in nb.cells:
        for out in cell.get("outputs", []):
            parts.append(out.get("text", ""))
            data = out.get("data", {})
            parts.append(data.get("text/plain", ""))
    return "\n".join(parts)


@pytest.fixture(scope="module")
def executed(tmp_path_factory):
    """Run a notebook once per module (optionally with some cells' sources replaced, by cell id)."""
    done = {}

    def run(name: str, replace: dict[str, str] | None = None):
        key = (name, tuple(sorted((replace or {}).items())))
        if key not in done:
            nb = nbformat.read(NOTEBOOK_DIR / name, as_version=4)
            cells = {c.get("id"): c for c in nb.cells}
            for cell_id, source in (replace or {}).items():
                cells[cell_id].source = source
            folder = tmp_path_factory.mktemp(Path(name).stem)
            NotebookClient(nb, timeout=300, kernel_name="python3", resources={"metadata": {"path": str(folder)}}
                           ).execute()
            done[key] = nb
        return done[key]

    return run


def test_there_are_notebooks():
    assert {p.name for p in NOTEBOOKS} >= set(EXPECTED)


@pytest.mark.parametrize("path", NOTEBOOKS, ids=[p.name for p in NOTEBOOKS])
def test_stored_without_outputs(path):
    nb = nbformat.read(path, as_version=4)
    for cell in nb.cells:
        if cell.cell_type == "code":
            assert cell.outputs == [] and cell.execution_count is None, f"{path.name}: strip outputs before commit"


@pytest.mark.parametrize("path", NOTEBOOKS, ids=[p.name for p in NOTEBOOKS])
def test_notebook_executes(path, executed):
    text = _text(executed(path.name))
    for phrase in EXPECTED.get(path.name, []):
        assert phrase in text, f"{path.name}: expected {phrase!r} in the outputs"


# --- the reports the notebooks write -----------------------------------------------------------------

def _report(nb, pattern: str) -> Page:
    found = re.search(pattern, _text(nb))
    assert found, pattern
    return Page(Path(found.group(1)).read_text(encoding="utf-8"))


def _explanation_lists(page: Page) -> list[int]:
    return [sum(1 for e in page.elements if e["tag"] == "li" and "ol" in e["parents"]
                and "pk-explanation" in e["attrs"].get("class", "")) for _ in page.find("ol", "pk-explanations")]


def test_the_tours_report_carries_both_diagnoses_and_code_that_rebuilds_the_drawings(executed):
    page = _report(executed("tour.ipynb"), r"report: (\S+\.html) \(")
    labels = [page.inner(h) for h in page.find("h3") if "article" in h["parents"]]
    assert labels == ["IMU", "camera"]
    assert len(page.find("ol")) == 2 == len(page.find("ol", "pk-explanations"))
    items = [page.inner(p) for p in page.find("p", "pk-sentence")]
    assert items and not any(re.match(r"\s*\d+[.)]", s) for s in items)   # numbered once, by the lists
    imu_code, camera_code = (page.inner(p) for p in page.find("pre", "pk-code"))
    # the IMU drawing: 0.10 m forward, 0.05 m left, 0.20 m up; yaw 3, pitch 0, roll 180 degrees (z-y-x intrinsic)
    imu = run_pasted_code(imu_code)                          # position, then the quaternion scalar-first
    reference = Rotation.from_euler("ZYX", [3.0, 0.0, 180.0], degrees=True)
    np.testing.assert_allclose(imu[:3], [0.10, 0.05, 0.20], atol=1e-12)
    assert (reference.inv() * Rotation.from_quat(imu[3:], scalar_first=True)).magnitude() < 1e-6
    # the camera drawing: pitched 20 degrees down (a turn about +y, the left axis), 0.30 m forward, 0.12 m up;
    # the calibration was printed to 6 digits, so the numbers agree to about that
    camera = run_pasted_code(camera_code).reshape(4, 4)
    np.testing.assert_allclose(camera[:3, :3], Rotation.from_euler("ZYX", [0.0, 20.0, 0.0], degrees=True)
                               .as_matrix(), atol=2e-6)
    np.testing.assert_allclose(camera[:3, 3], [0.30, 0.0, 0.12], atol=2e-6)
    assert "machine-safety standards" in page.text


TEMPLATE = "bug-report-template.ipynb"


def _template_report_check(nb, reference: Rotation, position):
    page = _report(nb, r"and (\S+\.html)")
    assert len(page.find("ol", "pk-explanations")) == 1 and len(page.find("ol")) == 1
    corrected = run_pasted_code(page.inner(page.find("pre", "pk-code")[0]))
    shown = [float(v) for v in page.inner(page.find("pre", "pk-corrected")[0]).split(",")]
    np.testing.assert_allclose(corrected, shown, rtol=0, atol=4e-16)  # the numbers shown, to the last bits
    quaternion = corrected if position is None else corrected[3:]
    if position is not None:
        np.testing.assert_allclose(corrected[:3], position, atol=1e-12)
    assert (reference.inv() * Rotation.from_quat(quaternion, scalar_first=True)).magnitude() < 1e-6
    names = [page.inner(h) for h in page.find("h3") if "article" not in h["parents"]]
    assert names == ["expected", "observed, as our code reads it", "observed, corrected by the best explanation"]


def test_the_bug_report_templates_report_carries_the_fix(executed):
    # the invented example: yawed 90 degrees left, 0.5 m forward; the pose logged scalar-last, read scalar-first
    _template_report_check(executed(TEMPLATE), Rotation.from_euler("ZYX", [90.0, 0.0, 0.0], degrees=True),
                           [0.5, 0.0, 0.0])


def test_the_bug_report_template_takes_a_rotation_without_a_position(executed):
    """'Fill in each section with your own numbers': expected Euler angles and an observed quaternion only."""
    nb = executed(TEMPLATE, {
        "59e96802": ('expected_words = None\nexpected_numbers = [30, -10, 5]\nexpected_kind = "euler"\n'
                     'expected_convention = "sequence=z-y-x unit=degrees"'),
        "9bf1e21b": ("observed_text = " + repr(" ".join(repr(float(v)) for v in Rotation.from_euler(
                     "ZYX", [30, -10, 5], degrees=True).as_quat())) + "\nassumed_reading = \"scalar=first\"\n"
                     "print(parse_numbers(observed_text).summary())"),
    })
    assert "attach:" in _text(nb)
    _template_report_check(nb, Rotation.from_euler("ZYX", [30.0, -10.0, 5.0], degrees=True), None)


# --- the tour's explorer does what its markdown says ---------------------------------------------------

def test_the_tours_explorer_turns_the_camera_but_does_not_move_it():
    """Section 3 of the tour: with *keep the numbers*, flipping *transform maps* turns the camera to look
    20 degrees up and leaves it where it was; the calibration's reading is behind and below the base;
    flipped back, *keep the orientation* and another Euler sequence keep the same mount."""
    import posekit as pk
    from posekit.analysis import parse_numbers, pose_from_words
    from posekit.widgets import Explorer

    degrees = pk.Convention.parse("sequence=z-y-x axes=intrinsic unit=degrees")
    drawn = pose_from_words("pitched 20 degrees down, 0.30 m forward, 0.12 m up")
    explorer = Explorer.from_pose(pk.Pose(pk.make_transform(drawn.rotation, drawn.translation)), convention=degrees)
    before = explorer.to_pose().matrix
    assert before[2, 0] < 0                                        # the camera's forward axis points down
    explorer.bar.controls["direction"].value = "child-from-parent"  # keep the numbers is the default
    after = explorer.to_pose().matrix
    np.testing.assert_array_equal(after[:3, 3], before[:3, 3])      # it does not move
    np.testing.assert_allclose(after[2, 0], np.sin(np.radians(20)), atol=1e-12)  # it looks 20 degrees up
    assert "parent → child" in explorer.readouts.value
    calibration = [0.939693, 0, -0.34202, -0.240865, 0, 1, 0, 0, 0.34202, 0, 0.939693, -0.215369, 0, 0, 0, 1]
    as_read = pk.read_transform(parse_numbers(" ".join(map(str, calibration))).numbers, "matrix")
    assert as_read[0, 3] < 0 and as_read[2, 3] < 0                  # behind and below the base
    explorer.bar.controls["direction"].value = "parent-from-child"
    np.testing.assert_allclose(explorer.to_pose().matrix, before, atol=1e-12)
    explorer.keep = "orientation"
    explorer.bar.controls["sequence"].value = "x-y-z"
    np.testing.assert_allclose(explorer.to_pose().matrix, before, atol=1e-12)
