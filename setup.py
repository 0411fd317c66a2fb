"""Build steps pyproject.toml cannot state: the optional compiled loops and the shipped notebooks.

* ``posekit.core._loops`` (Python's C API only) is an ``optional`` extension: without a C
  compiler the build goes on and posekit runs on its numpy kernels.
* The notebooks in ``notebooks/`` (the source of truth in a checkout) are copied into the
  package as ``posekit/notebooks/*.ipynb``, so a wheel carries the tour and the bug-report
  template; ``posekit tour`` and ``posekit notebook`` copy them out for the user.
"""

import shutil
from pathlib import Path

from setuptools import Extension, setup
from setuptools.command.build_py import build_py

HERE = Path(__file__).resolve().parent


class BuildWithNotebooks(build_py):
    """The usual build, plus the notebooks copied into ``posekit/notebooks`` of the build tree."""

    def run(self):
        super().run()
        target = Path(self.build_lib) / "posekit" / "notebooks"
        target.mkdir(parents=True, exist_ok=True)
        for notebook in sorted((HERE / "notebooks").glob("*.ipynb")):
            shutil.copy2(notebook, target / notebook.name)


setup(
    cmdclass={"build_py": BuildWithNotebooks},
    ext_modules=[Extension("posekit.core._loops", sources=["posekit/core/_loops.c"],
                           extra_compile_args=["-O3", "-fno-math-errno", "-fno-trapping-math"], optional=True)],
)
