"""A fresh virtual environment built only from binder/'s files executes the tour notebook."""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import venv
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]

RUN_TOUR = """
import sys, nbformat
from nbclient import NotebookClient
nb = nbformat.read(sys.argv[1], as_version=4)
NotebookClient(nb, timeout=300, kernel_name="python3").execute()
text = "".join(o.get("text", "") for c in nb.cells for o in c.get("outputs", []))
assert "written scalar-last but read scalar-first" in text, text[-2000:]
import posekit
print("tour ran with posekit from", posekit.__file__)
"""


@pytest.mark.slow
def test_binder_environment_runs_the_tour(tmp_path):
    env_dir = tmp_path / "binder-env"
    venv.EnvBuilder(with_pip=True).create(env_dir)
    py = env_dir / "bin" / "python"
    env = {k: v for k, v in os.environ.items() if k not in ("PYTHONPATH", "VIRTUAL_ENV")}
    env["PATH"] = f"{env_dir / 'bin'}{os.pathsep}{env['PATH']}"
    env["JUPYTER_CONFIG_DIR"] = str(tmp_path / "jupyter-config")
    src = tmp_path / "repo"
    shutil.copytree(ROOT, src, ignore=shutil.ignore_patterns(".venv", ".git", "artifacts", "build", "*.egg-info",
                                                              "__pycache__", ".pytest_cache", ".hypothesis"))
    subprocess.run([str(py), "-m", "pip", "install", "--quiet", "-r", str(src / "binder" / "requirements.txt")],
                   check=True, env=env, cwd=src, timeout=1500)
    subprocess.run(["bash", str(src / "binder" / "postBuild")], check=True, env=env, cwd=src, timeout=600)
    config = (tmp_path / "jupyter-config" / "jupyter_server_config.py").read_text()
    assert "/lab/tree/notebooks/tour.ipynb" in config
    work = tmp_path / "run"
    work.mkdir()
    out = subprocess.run([str(py), "-c", RUN_TOUR, str(src / "notebooks" / "tour.ipynb")], env=env, cwd=work,
                         capture_output=True, text=True, timeout=900)
    assert out.returncode == 0, out.stdout[-3000:] + out.stderr[-3000:]
    assert str(env_dir) in out.stdout  # posekit came from the binder environment, not from this checkout
