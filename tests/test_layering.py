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
