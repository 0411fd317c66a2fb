"""The layering rule (DEVELOPERS.md): posekit/core imports only numpy, the standard library and
posekit.core; ``import posekit`` loads no scipy, plotly or ipywidgets."""

from __future__ import annotations

import ast
import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
CORE = ROOT / "posekit" / "core"
FORBIDDEN_AT_IMPORT = ("scipy", "plotly", "ipywidgets")


def test_import_posekit_loads_no_scipy_plotly_or_ipywidgets():
    code = ("import json, sys; import posekit; "
            "print(json.dumps(sorted({m.split('.')[0] for m in sys.modules})))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT, check=True,
                         env={**os.environ, "PYTHONPATH": str(ROOT)})  # environment kept as is
    loaded = set(json.loads(out.stdout))
    assert "posekit" in loaded and "numpy" in loaded
    assert not loaded & set(FORBIDDEN_AT_IMPORT), sorted(loaded & set(FORBIDDEN_AT_IMPORT))


def _imports(path: Path):
    """Every (module, level) imported by a file, at any depth (function-level imports too)."""
    tree = ast.parse(path.read_text(), filename=str(path))
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            for alias in node.names:
                yield alias.name, 0
        elif isinstance(node, ast.ImportFrom):
            yield node.module or "", node.level


CORE_FILES = sorted(CORE.glob("*.py"))


def test_core_has_modules():
    assert {p.name for p in CORE_FILES} >= {"convention.py", "rotation.py", "reading.py", "checks.py"}


@pytest.mark.parametrize("path", CORE_FILES, ids=[p.name for p in CORE_FILES])
def test_core_imports_only_numpy_stdlib_and_core(path):
    stdlib = set(sys.stdlib_module_names)
    for module, level in _imports(path):
        top = module.split(".")[0]
        if level == 1:  # from .x import y: a sibling inside posekit/core
            continue
        if level > 1:
            pytest.fail(f"{path.name}: relative import reaching outside posekit/core (level {level}, {module!r})")
        ok = top in stdlib or top == "numpy" or module == "posekit.core" or module.startswith("posekit.core.")
        assert ok, f"{path.name} imports {module!r}; posekit/core may import only numpy, the standard library " \
                   "and posekit.core"


def test_the_ast_check_can_fail(tmp_path):
    bad = tmp_path / "bad.py"
    bad.write_text("import numpy\ndef f():\n"
                   "    from scipy.spatial.transform import Rotation\n    from ..view import x\n")
    found = list(_imports(bad))
    assert ("scipy.spatial.transform", 0) in found and ("view", 2) in found


# Every layer of the package and what it may import besides the standard library (DEVELOPERS.md
# "Layers"): imports go one way only, down the list.
LAYERS = {
    "core": ({"numpy"}, set()),
    "io": ({"numpy", "pyarrow"}, {"core"}),
    "explain": ({"numpy"}, {"core", "io"}),
    "analysis": ({"numpy", "scipy", "pyarrow", "dask", "pandas"}, {"core", "io", "explain"}),
    "view": ({"numpy", "scipy", "plotly", "jinja2"}, {"core", "io", "explain", "analysis"}),
    "widgets": ({"numpy", "scipy", "plotly", "jinja2", "ipywidgets", "anywidget", "traitlets", "IPython"},
                {"core", "io", "explain", "analysis", "view"}),
}


def _layer_of(module: str) -> str | None:
    parts = module.split(".")
    return parts[1] if len(parts) > 1 and parts[0] == "posekit" and parts[1] in LAYERS else None


@pytest.mark.parametrize("layer", sorted(LAYERS))
def test_every_layer_imports_only_downwards(layer):
    stdlib = set(sys.stdlib_module_names)
    outside, below = LAYERS[layer]
    files = sorted((ROOT / "posekit" / layer).glob("*.py"))
    assert files, layer
    for path in files:
        for module, level in _imports(path):
            if level == 1:
                continue  # a sibling inside the same layer
            if level == 2:  # from ..x import y: another part of posekit
                if not module:
                    continue  # from .. import __version__: the package root loads only posekit.core
                target = module.split(".")[0]
                assert target in below, f"{layer}/{path.name} imports posekit.{module}; {layer} may use {below}"
                continue
            top = module.split(".")[0]
            if top == "posekit":
                target = _layer_of(module)
                assert target in below or target == layer, f"{layer}/{path.name} imports {module}"
                continue
            assert top in stdlib or top in outside, f"{layer}/{path.name} imports {module}; allowed: {outside}"


# Optional packages (the "logs" extra): imported inside the functions that use them, never at import time,
# so posekit, posekit.io and posekit.analysis import and read CSV logs without them.
OPTIONAL = ("pyarrow", "dask", "pandas", "distributed")


def test_importing_the_layers_loads_no_optional_package():
    code = ("import json, sys; import posekit, posekit.io, posekit.analysis; "
            "print(json.dumps(sorted({m.split('.')[0] for m in sys.modules})))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT, check=True,
                         env={**os.environ, "PYTHONPATH": str(ROOT)})
    loaded = set(json.loads(out.stdout))
    assert not loaded & set(OPTIONAL), sorted(loaded & set(OPTIONAL))


def test_posekit_works_with_the_optional_packages_blocked(tmp_path):
    """A child process where importing pyarrow, dask, pandas or distributed fails, as on a plain install."""
    log = tmp_path / "log.csv"
    log.write_text("time,qw,qx,qy,qz\n0,1,0,0,0\n1,-1,0,0,0\n2,-1,0,0,0\n")
    code = f"""
import sys
class Block:
    def find_spec(self, name, path=None, target=None):
        if name.split('.')[0] in {OPTIONAL!r}:
            raise ImportError('blocked for the test: ' + name)
sys.meta_path.insert(0, Block())
import posekit, posekit.io, posekit.analysis
from posekit.analysis import check_trajectory_csv, check_logs
from posekit.io.logs import MissingPackageError
report = check_trajectory_csv({str(log)!r})
print(report.counts()["quaternion_sign_flips"], report.mapping.time)
try:
    check_logs({str(tmp_path)!r})
except MissingPackageError as exc:
    print("refused:", exc)
"""
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT,
                         env={**os.environ, "PYTHONPATH": str(ROOT)})
    assert out.returncode == 0, out.stderr
    first, second = out.stdout.strip().splitlines()
    assert first == "1 time"
    assert second.startswith("refused: the table of findings needs the optional package pandas")
    assert 'pip install "posekit[logs]"' in second
