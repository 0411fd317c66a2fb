"""Build steps pyproject.toml cannot state: the optional compiled loops and the shipped notebooks.

* ``posekit.core._loops`` (Python's C API only) is an ``optional`` extension: without a C
  compiler, or when the compile fails, the build goes on and posekit runs on its numpy kernels.
  Its flags are chosen for the compiler at hand (:class:`BuildLoops`): no flag is tied to one
  compiler or one instruction set, and none changes a result (no fast-math).
* The notebooks in ``notebooks/`` (the source of truth in a checkout) are copied into the
  package as ``posekit/notebooks/*.ipynb``, so a wheel carries the tour and the bug-report
  template; ``posekit tour`` and ``posekit notebook`` copy them out for the user.
"""

import shutil
from pathlib import Path

from setuptools import Extension, setup
from setuptools.command.build_ext import build_ext
from setuptools.command.build_py import build_py

HERE = Path(__file__).resolve().parent

#: Flags for compilers with the gcc/clang command line, each added only when the compiler
#: accepts it: optimise; math functions need not set errno (so sqrt can be one instruction;
#: values are unchanged, C99 7.12.1); no floating-point traps are assumed (IEEE 754's default
#: non-stop mode, which Python runs in); and no contraction of a * b + c into a fused
#: multiply-add, so products and sums round apart as in the numpy kernels (the same bits).
UNIX_FLAGS = ["-O3", "-fno-math-errno", "-fno-trapping-math", "-ffp-contract=off"]
#: The same intent for MSVC: optimise; precise floating point (no contraction, no reordering).
MSVC_FLAGS = ["/O2", "/fp:precise"]


class BuildLoops(build_ext):
    """The usual build_ext, with the flags of the compiler at hand: MSVC's own, otherwise each of
    ``UNIX_FLAGS`` that a test compile accepts (common practice for portable builds).  A failing
    test compile only drops the flag; a failing build of the optional extension is reported by
    setuptools and the install goes on without it."""

    def build_extension(self, ext):
        if self.compiler.compiler_type == "msvc":
            ext.extra_compile_args = list(MSVC_FLAGS)
        else:
            ext.extra_compile_args = [flag for flag in UNIX_FLAGS if self._accepts(flag)]
        super().build_extension(ext)

    def _accepts(self, flag: str) -> bool:
        import tempfile

        with tempfile.TemporaryDirectory() as tmp:
            source = Path(tmp) / "flag.c"
            source.write_text("int main(void) { return 0; }\n")
            try:
                self.compiler.compile([str(source)], output_dir=tmp, extra_postargs=[flag])
            except Exception:  # CompileError, or no compiler at all: the flag is not used
                return False
        return True


class BuildWithNotebooks(build_py):
    """The usual build, plus the notebooks copied into ``posekit/notebooks`` of the build tree."""

    def run(self):
        super().run()
        target = Path(self.build_lib) / "posekit" / "notebooks"
        target.mkdir(parents=True, exist_ok=True)
        for notebook in sorted((HERE / "notebooks").glob("*.ipynb")):
            shutil.copy2(notebook, target / notebook.name)


setup(
    cmdclass={"build_py": BuildWithNotebooks, "build_ext": BuildLoops},
    ext_modules=[Extension("posekit.core._loops", sources=["posekit/core/_loops.c"], optional=True)],
)
