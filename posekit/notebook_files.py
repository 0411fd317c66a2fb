"""The notebooks posekit ships, and fresh copies of them for the user.

An installed wheel carries them in ``posekit/notebooks/``; a source checkout has them in
``notebooks/`` beside the package.  Nothing here edits a shipped notebook: every use starts
from a fresh copy written into a folder of the user's, under a name that is not taken yet.

>>> sorted(shipped_notebooks())
['bug-report-template', 'convention-walkthrough', 'tour']
"""

from __future__ import annotations

import shutil
from pathlib import Path

from .core.errors import PoseInputError

__all__ = ["NotebookNameError", "notebooks_folder", "shipped_notebooks", "copy_notebook"]


class NotebookNameError(PoseInputError):
    """The notebook asked for is not one posekit ships; the message lists the ones it does."""


def notebooks_folder() -> Path:
    """The folder holding the shipped notebooks (inside the installed package, else the checkout's)."""
    package = Path(__file__).resolve().parent
    for folder in (package / "notebooks", package.parent / "notebooks"):
        if any(folder.glob("*.ipynb")):
            return folder
    raise FileNotFoundError(f"posekit's notebooks are missing: neither {package / 'notebooks'} nor "
                            f"{package.parent / 'notebooks'} holds any; reinstall posekit")


def shipped_notebooks() -> dict[str, Path]:
    """``{name: path}`` of every shipped notebook, the name without ``.ipynb``."""
    return {p.stem: p for p in sorted(notebooks_folder().glob("*.ipynb"))}


def _fresh_path(folder: Path, stem: str) -> Path:
    path = folder / f"{stem}.ipynb"
    n = 2
    while path.exists():
        path = folder / f"{stem}-{n}.ipynb"
        n += 1
    return path


def copy_notebook(name: str, folder=".", prefix: str = "posekit-") -> Path:
    """Write a fresh copy of shipped notebook ``name`` into ``folder`` and return its path.

    The copy is named ``<prefix><name>.ipynb``, or ``...-2.ipynb``, ``-3`` ... when that is
    taken: an existing file is never overwritten.  ``folder`` is created if missing.
    """
    wanted = str(name).removesuffix(".ipynb")
    found = shipped_notebooks()
    if wanted not in found:
        raise NotebookNameError(f"no shipped notebook is called {str(name)[:80]!r}; posekit ships: "
                                f"{', '.join(found)}")
    target = Path(folder).expanduser()
    if target.exists() and not target.is_dir():
        raise NotebookNameError(f"{str(target)!r} is a file, not a folder; give a folder to copy the notebook into")
    target.mkdir(parents=True, exist_ok=True)
    path = _fresh_path(target, prefix + wanted)
    shutil.copyfile(found[wanted], path)
    return path
