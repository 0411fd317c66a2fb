"""Doctests of the package run with the tests: every ``>>>`` line in posekit/ is collected.

(Only posekit's own modules: ``--doctest-modules`` would also import the two test-folder
conftest files under one module name, which pytest refuses.)
"""

from pathlib import Path

from _pytest.doctest import DoctestModule

PACKAGE = Path(__file__).resolve().parent / "posekit"


def pytest_collect_file(file_path, parent):
    if file_path.suffix == ".py" and PACKAGE in file_path.resolve().parents:
        return DoctestModule.from_parent(parent, path=file_path)
    return None
