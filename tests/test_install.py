"""posekit installed the way practitioners install it: a wheel and an sdist, each into a clean venv.

``python -m build`` makes both; the wheel goes into one fresh environment with the notebook
extra, the sdist into another with the C compiler disabled (``CC=false``: the compiled
loops cannot build, the install must still succeed and posekit must run on numpy).  In each:
the CLI diagnoses a slip, every widget builds, and the shipped tour, copied out with
``posekit tour`` into a folder of the user's, executes under nbclient from there.  Needs the
package registry (marked ``network`` and ``slow``; skip offline with ``-m "not network"``).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import venv
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]

pytestmark = [pytest.mark.slow, pytest.mark.network]

CHECK = r"""
import json, sys
import posekit
from posekit.core import compiled
from posekit.desk_scenarios import row_drive
from posekit.analysis import orchard_rover
from posekit.widgets import (DebugDesk, Explorer, GraphExplorer, PlanarExplorer, SingularityView,
                             TrajectoryView)
widgets = [Explorer(angles=(30, -10, 0), convention="sequence=z-y-x unit=degrees"), PlanarExplorer(),
           SingularityView(angles=(30, 0, 20), swept=1, convention="sequence=z-y-x unit=degrees"),
           GraphExplorer(orchard_rover(), from_frame="camera", into_frame="world", root="base"),
           DebugDesk(pasted="0.0343 0.1060 0.9819 -0.1534", expected="yawed 20 degrees left, pitched 10 degrees down"),
           TrajectoryView(row_drive().report())]
print(json.dumps({"file": posekit.__file__, "compiled": compiled.available(),
                  "widgets": [type(w).__name__ for w in widgets]}))
"""

RUN = r"""
import sys, nbformat
from nbclient import NotebookClient
nb = nbformat.read(sys.argv[1], as_version=4)
NotebookClient(nb, timeout=300, kernel_name="python3", resources={"metadata": {"path": sys.argv[2]}}).execute()
text = "".join(o.get("text", "") for c in nb.cells for o in c.get("outputs", []))
assert "written scalar-last but read scalar-first" in text, text[-2000:]
"""


def _env(env_dir: Path, tmp: Path, **extra) -> dict:
    env = {k: v for k, v in os.environ.items() if k not in ("PYTHONPATH", "VIRTUAL_ENV")}
    env["PATH"] = f"{env_dir / 'bin'}{os.pathsep}{env['PATH']}"
    env["JUPYTER_CONFIG_DIR"] = str(tmp / "jupyter-config")
    env["JUPYTER_DATA_DIR"] = str(tmp / "jupyter-data")
    env.update(extra)
    return env


@pytest.fixture(scope="module")
def dist(tmp_path_factory):
    out = tmp_path_factory.mktemp("dist")
    proc = subprocess.run([sys.executable, "-m", "build", "--outdir", str(out), str(ROOT)], capture_output=True,
                          text=True, timeout=900)
    assert proc.returncode == 0, proc.stdout[-3000:] + proc.stderr[-3000:]
    assert "experimental" not in (proc.stdout + proc.stderr).lower()   # a stable build configuration
    return {"wheel": next(out.glob("*.whl")), "sdist": next(out.glob("*.tar.gz"))}


@pytest.mark.parametrize("what", ["wheel", "sdist-without-compiler"])
def test_installed_package_runs_the_cli_widgets_and_the_shipped_tour(dist, tmp_path, what):
    env_dir = tmp_path / "env"
    venv.EnvBuilder(with_pip=True).create(env_dir)
    py = str(env_dir / "bin" / "python")
    artefact = dist["wheel"] if what == "wheel" else dist["sdist"]
    env = _env(env_dir, tmp_path, **({} if what == "wheel" else {"CC": "false"}))
    install = subprocess.run([py, "-m", "pip", "install", "--quiet", f"{artefact}[notebook]", "nbclient", "nbformat",
                              "ipykernel"], env=env, capture_output=True, text=True, timeout=1500)
    assert install.returncode == 0, install.stdout[-3000:] + install.stderr[-3000:]
    work = tmp_path / "my project"                                   # a user's folder, with a space in it
    work.mkdir()

    diag = subprocess.run([str(env_dir / "bin" / "posekit"), "diagnose", "--expected", "10 20 30",
                           "--observed", "0.2393 0.18931 0.03813 0.95155", "--json"], env=env, cwd=work,
                          capture_output=True, text=True, timeout=300)
    assert diag.returncode == 0, diag.stderr
    assert json.loads(diag.stdout)["explanations"][0]["sentence"] == \
        "The quaternion was written scalar-last but read scalar-first."

    check = subprocess.run([py, "-c", CHECK], env=env, cwd=work, capture_output=True, text=True, timeout=600)
    assert check.returncode == 0, check.stdout[-3000:] + check.stderr[-3000:]
    facts = json.loads(check.stdout.strip().splitlines()[-1])
    assert str(env_dir) in facts["file"]                             # the installed posekit, not this checkout
    assert facts["compiled"] is (what == "wheel")                    # no compiler: the numpy route
    assert len(facts["widgets"]) == 6

    tour = subprocess.run([str(env_dir / "bin" / "posekit"), "tour", "--folder", str(work), "--print-command"],
                          env=env, cwd=work, capture_output=True, text=True, timeout=120)
    assert tour.returncode == 0, tour.stderr
    copied = work / "posekit-tour.ipynb"
    assert copied.exists() and str(copied) in tour.stdout
    shipped = next((env_dir / "lib").glob("python*/site-packages/posekit/notebooks/tour.ipynb"))
    before = shipped.read_bytes()
    run = subprocess.run([py, "-c", RUN, str(copied), str(work)], env=env, cwd=work, capture_output=True, text=True,
                         timeout=900)
    assert run.returncode == 0, run.stdout[-3000:] + run.stderr[-3000:]
    assert shipped.read_bytes() == before                            # the shipped notebook is never edited
