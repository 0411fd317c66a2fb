"""Every case of the hostile-input catalogue (tests/hostile_catalogue.py) ends well.

The catalogue runs once, in a child process bounded in memory and time, so a case that
would read without limit cannot take the test run down with it.  Each case is then one
test: a bad input must get a posekit error that says what is accepted (``typed``), a
good input the answer an outside reference gives (``right``).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).parent))
import hostile_catalogue as catalogue  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]
CASES = catalogue.all_cases()


@pytest.fixture(scope="module")
def outcomes():
    proc = subprocess.run([sys.executable, "-W", "ignore", str(Path(catalogue.__file__)), "--json"],
                          capture_output=True, text=True, timeout=1800, cwd=ROOT,
                          env={**os.environ, "PYTHONPATH": str(ROOT)})
    assert proc.returncode == 0, proc.stderr[-2000:]
    return json.loads(proc.stdout)


def test_the_catalogue_is_large_and_covers_every_entry_family():
    assert len(CASES) >= 300
    families = {c.entry.split(" ")[0].split(".")[0] for c in CASES}
    assert {"core", "paste", "words", "Convention", "diagnose", "load_state", "read_report_state",
            "check_trajectory_csv", "save_state", "write_report", "cli"} <= families
    assert len({c.id for c in CASES}) == len(CASES), "case names must be unique"
    assert sum(c.check is not None for c in CASES) >= 10, "good inputs keep hardening from refusing everything"


@pytest.mark.parametrize("case_id", [c.id for c in CASES])
def test_case_ends_well(outcomes, case_id):
    outcome, detail = outcomes[case_id]
    assert outcome in catalogue.GOOD, f"{outcome}: {detail}"
