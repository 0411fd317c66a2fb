"""Mutation testing of posekit with mutmut, and the share of mutants killed per module.

Run ``make mutation`` (every module; hours on two cores) or, for one module and the tests that
exercise it::

    .venv/bin/python scripts/mutation_report.py --module posekit/io/limits.py \\
        --tests tests/test_state_hostile.py tests/test_paste_hostile.py

What it does:

1. copies the project (without .venv, .git and build output) into a working folder outside the
   checkout (``--workdir``; by default ``<temp>/posekit-mutation``), so mutmut's ``mutants/``
   folder never lands in the tree and a second run resumes where the first stopped;
2. writes the ``[tool.mutmut]`` table of the copy's ``pyproject.toml``: the checkout's own table
   (source paths, pytest options: browser, slow and network tests left out), narrowed by
   ``--module`` (mutmut's ``only_mutate``) and ``--tests`` (mutmut's test selection);
3. runs ``python -m mutmut run`` there (``--max-children`` workers, 2 by default);
4. reads mutmut's results (``mutants/<file>.meta``) and prints, per module, the mutants checked,
   killed (timeouts count as killed), listed as equivalent, and surviving, with the share killed
   among the non-equivalent ones; every survivor is printed with its file, line and diff.

After tests are added for the survivors, ``--again`` (same ``--workdir``) runs only the last
run's survivors and the mutants no test reached, against the checkout's tests as they are now;
the other mutants keep their earlier results (mutmut itself would forget them), and so does a
rerun that is interrupted.

Equivalent mutants are listed in ``tests/equivalent_mutants.txt``, one per line::

    <mutant name> | <file>:<line> | <one-line reason it cannot change behaviour>

A listed mutant that survives is not counted against its module; a listed mutant that is killed,
or that no longer exists, is reported as stale.  ``--check`` exits 1 when a module is below its
target (95 % killed in posekit/core, 90 % elsewhere).  mutmut 3 mutates code inside functions
only: module-level constants (a factor in a table, a weight) are covered by the hand-injected
checks of tests/test_outside_values.py instead.
"""

from __future__ import annotations

import argparse
import ast
import json
import os
import re
import shutil
import subprocess
import sys
import tempfile
import tomllib
from dataclasses import dataclass, field
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
EQUIVALENT_FILE = ROOT / "tests" / "equivalent_mutants.txt"
#: Share of mutants to kill: in the core, and everywhere else (the project's targets).
CORE_TARGET, OTHER_TARGET = 0.95, 0.90
#: Not copied into the working folder.
SKIPPED = shutil.ignore_patterns(".venv", ".git", "mutants", "artifacts", "build", "dist", "*.egg-info",
                                 "__pycache__", ".pytest_cache", ".hypothesis", ".demo", ".mutation")
#: mutmut's exit codes (mutmut/stats.py) grouped the way the report counts them.
KILLED = {1, 3, 36, 24, -24, 152, 255, 37, -11, -9}     # failed test, timeout, type check, crash
SURVIVED = {0}
NO_TESTS = {5, 33}
NOT_RUN = {None, 2, 34}                                  # not checked, interrupted, skipped


class ReportError(Exception):
    """A problem with the run or the equivalent-mutant list, said in one line."""


@dataclass
class Equivalent:
    name: str
    where: str
    reason: str
    line: int


@dataclass
class ModuleScore:
    path: str
    killed: int = 0
    survived: list[str] = field(default_factory=list)
    no_tests: list[str] = field(default_factory=list)
    equivalent: list[str] = field(default_factory=list)
    other: list[str] = field(default_factory=list)

    @property
    def counted(self) -> int:
        return self.killed + len(self.survived) + len(self.no_tests)

    @property
    def share(self) -> float | None:
        return None if not self.counted else self.killed / self.counted

    @property
    def target(self) -> float:
        return CORE_TARGET if self.path.startswith("posekit/core/") else OTHER_TARGET


# --- the equivalent-mutant list ---------------------------------------------------------------------

def read_equivalents(path: Path) -> dict[str, Equivalent]:
    """``name -> Equivalent`` from the checked-in list; blank lines and ``#`` comments skipped."""
    out: dict[str, Equivalent] = {}
    if not path.exists():
        return out
    for number, raw in enumerate(path.read_text(encoding="utf-8").splitlines(), start=1):
        line = raw.strip()
        if not line or line.startswith("#"):
            continue
        parts = [p.strip() for p in line.split("|")]
        if len(parts) != 3 or not all(parts) or not re.fullmatch(r"[\w./-]+\.py:\d+", parts[1]):
            raise ReportError(f"{path.name}, line {number}: expected '<mutant name> | <file>:<line> | <reason>', "
                              f"got {raw[:120]!r}")
        if parts[0] in out:
            raise ReportError(f"{path.name}, line {number}: {parts[0]} is listed twice")
        out[parts[0]] = Equivalent(parts[0], parts[1], parts[2], number)
    return out


# --- running mutmut in a copy -------------------------------------------------------------------------

def _toml_value(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (int, float)):
        return repr(value)
    if isinstance(value, str):
        return json.dumps(value)
    return "[" + ", ".join(_toml_value(v) for v in value) + "]"


def mutmut_table(base: dict, modules: list[str], tests: list[str]) -> dict:
    """The checkout's ``[tool.mutmut]`` narrowed to ``modules`` and ``tests`` (either may be empty)."""
    table = dict(base)
    if modules:
        table["only_mutate"] = modules
    if tests:
        table["pytest_add_cli_args_test_selection"] = tests
    return table


def write_copy(workdir: Path, table: dict) -> None:
    """Refresh the working copy of the project and give its pyproject.toml the mutmut table."""
    workdir.mkdir(parents=True, exist_ok=True)
    for name in ("posekit", "tests", "notebooks", "benchmarks"):
        source, target = ROOT / name, workdir / name
        if target.exists():
            shutil.rmtree(target)
        if source.exists():
            shutil.copytree(source, target, ignore=SKIPPED)
    for name in ("setup.py", "MANIFEST.in", "README.md"):
        if (ROOT / name).exists():
            shutil.copy2(ROOT / name, workdir / name)
    text = (ROOT / "pyproject.toml").read_text(encoding="utf-8")
    text = re.sub(r"(?ms)^\[tool\.mutmut\]\n.*?(?=^\[|\Z)", "", text)
    text += "\n[tool.mutmut]\n" + "".join(f"{k} = {_toml_value(v)}\n" for k, v in table.items())
    (workdir / "pyproject.toml").write_text(text, encoding="utf-8")


def run_mutmut(workdir: Path, max_children: int, names: list[str] | None = None) -> int:
    """``mutmut run`` in the copy (only the mutants ``names`` when given); its progress goes to the terminal,
    or to ``mutmut-run.log`` when there is none."""
    env = dict(os.environ, PYTHONDONTWRITEBYTECODE="1")
    env.pop("PYTHONPATH", None)     # mutmut puts mutants/ first on the path; the checkout must not shadow it
    cmd = [sys.executable, "-m", "mutmut", "run", "--max-children", str(max_children), *(names or [])]
    print("running:", " ".join(cmd[:7]) + (f" and {len(names)} mutant names" if names else ""), f"(in {workdir})",
          flush=True)
    if sys.stdout.isatty():
        return subprocess.call(cmd, cwd=workdir, env=env)
    log = workdir / "mutmut-run.log"
    with open(log, "w", encoding="utf-8") as out:
        code = subprocess.call(cmd, cwd=workdir, env=env, stdout=out, stderr=subprocess.STDOUT)
    tail = re.split(r"[\r\n]", log.read_text(encoding="utf-8", errors="replace").strip())
    print(f"mutmut's output: {log}; last line: {tail[-1].strip() if tail else ''}", flush=True)
    return code


# --- reading the results ------------------------------------------------------------------------------

def read_results(workdir: Path) -> dict[str, dict[str, int | None]]:
    """``module file -> {mutant name: exit code}`` from mutmut's ``mutants/<file>.meta`` files."""
    out = {}
    base = workdir / "mutants"
    for meta in sorted(base.rglob("*.py.meta")):
        data = json.loads(meta.read_text(encoding="utf-8"))
        out[meta.relative_to(base).as_posix()[:-len(".meta")]] = data.get("exit_code_by_key", {})
    return out


def merge_results(last: dict, now: dict) -> dict:
    """The earlier run's codes with the rerun's put over them.  mutmut starts a file's results afresh
    on every run, so a rerun of the survivors alone would forget the mutants killed before; a mutant
    the rerun did not reach (interrupted) keeps its earlier code.  Tests are only ever added between
    the two runs, so a mutant killed before is still killed."""
    merged = {}
    for path in sorted(set(last) | set(now)):
        codes = dict(last.get(path, {}))
        codes.update({n: c for n, c in now.get(path, {}).items() if c is not None or n not in codes})
        merged[path] = codes
    return merged


def write_results(workdir: Path, results: dict) -> None:
    """Put merged codes back into mutmut's ``.meta`` files, so a later ``--again`` or ``--report-only``
    starts from them."""
    for path, codes in results.items():
        meta = workdir / "mutants" / (path + ".meta")
        if meta.exists():
            data = json.loads(meta.read_text(encoding="utf-8"))
            data["exit_code_by_key"] = codes
            meta.write_text(json.dumps(data, indent=4), encoding="utf-8")


def _function_of(mutant: str) -> tuple[str | None, str]:
    """``(class or None, function)`` from a mutant name such as ``pkg.mod.xǁCǁf__mutmut_3``."""
    tail = mutant.rpartition(".")[2]
    tail = re.sub(r"__mutmut_\d+$", "", tail)
    if tail.startswith("xǁ"):
        _, cls, func = tail.split("ǁ", 2)
        return cls, func
    return None, tail[2:] if tail.startswith("x_") else tail


def _span(source: str, cls: str | None, func: str) -> tuple[int, int] | None:
    tree = ast.parse(source)
    scope = tree.body
    if cls is not None:
        found = next((n for n in tree.body if isinstance(n, ast.ClassDef) and n.name == cls), None)
        if found is None:
            return None
        scope = found.body
    node = next((n for n in scope if isinstance(n, (ast.FunctionDef, ast.AsyncFunctionDef)) and n.name == func),
                None)
    return None if node is None else (node.lineno, node.end_lineno or node.lineno)


def locate(workdir: Path, module: str, mutant: str) -> tuple[int | None, str]:
    """The mutated line in the original file and mutmut's diff of the function."""
    env = dict(os.environ)
    env.pop("PYTHONPATH", None)
    proc = subprocess.run([sys.executable, "-m", "mutmut", "show", mutant], cwd=workdir, capture_output=True,
                          text=True, env=env, timeout=300)
    diff = proc.stdout.strip()
    removed = [ln[1:].strip() for ln in diff.splitlines() if ln.startswith("-") and not ln.startswith("---")]
    source = (workdir / module).read_text(encoding="utf-8")
    span = _span(source, *_function_of(mutant))
    if not removed or span is None:
        return (span[0] if span else None), diff
    lines = source.splitlines()
    for number in range(span[0], span[1] + 1):
        if lines[number - 1].strip() == removed[0]:
            return number, diff
    return span[0], diff


def score(results: dict[str, dict[str, int | None]], equivalents: dict[str, Equivalent]) -> list[ModuleScore]:
    scores = []
    for module, codes in sorted(results.items()):
        s = ModuleScore(module)
        for name, code in sorted(codes.items()):
            if code in KILLED:
                s.killed += 1
            elif code in SURVIVED and name in equivalents:
                s.equivalent.append(name)
            elif code in SURVIVED:
                s.survived.append(name)
            elif code in NO_TESTS:
                (s.equivalent if name in equivalents else s.no_tests).append(name)
            else:
                s.other.append(name)
        scores.append(s)
    return scores


def stale_equivalents(results, equivalents: dict[str, Equivalent]) -> list[str]:
    codes = {name: code for per_module in results.values() for name, code in per_module.items()}
    out = []
    for name, eq in equivalents.items():
        if name not in codes:
            out.append(f"{name} (line {eq.line}): no such mutant in this run (renamed or gone, or not mutated)")
        elif codes[name] in KILLED:
            out.append(f"{name} (line {eq.line}): killed now, so not equivalent; remove it from the list")
    return out


def print_report(workdir: Path, scores: list[ModuleScore], equivalents, modules_run: bool, show_diffs: bool) -> bool:
    """Print the table and the survivors; True when every module with mutants meets its target."""
    width = max([len(s.path) for s in scores] + [6])
    print(f"\n{'module':<{width}}  checked  killed  equivalent  survived  no-tests  not-run  killed %  target")
    met = True
    for s in scores:
        share = s.share
        shown = "   -   " if share is None else f"{100 * share:7.1f}"
        ok = share is None or share >= s.target
        met &= ok
        print(f"{s.path:<{width}}  {s.counted + len(s.equivalent):7d}  {s.killed:6d}  {len(s.equivalent):10d}  "
              f"{len(s.survived):8d}  {len(s.no_tests):8d}  {len(s.other):7d}  {shown}  {100 * s.target:5.0f}"
              + ("" if ok else "  BELOW"))
    for group, test in (("posekit/core", lambda p: p.startswith("posekit/core/")),
                        ("outside the core", lambda p: not p.startswith("posekit/core/"))):
        chosen = [s for s in scores if test(s.path)]
        counted = sum(s.counted for s in chosen)
        if counted:
            print(f"{group}: {sum(s.killed for s in chosen)} of {counted} killed "
                  f"({100 * sum(s.killed for s in chosen) / counted:.1f} %)")
    survivors = [(s.path, n) for s in scores for n in s.survived + s.no_tests]
    if survivors:
        print(f"\n{len(survivors)} surviving mutant(s): give each a test, or list it in "
              f"{EQUIVALENT_FILE.relative_to(ROOT)} with a one-line reason")
        for module, name in survivors:
            line, diff = locate(workdir, module, name)
            print(f"  {name} | {module}:{line if line is not None else '?'}")
            if show_diffs and diff:
                print("    " + "\n    ".join(diff.splitlines()[2:]))
    listed = [(s.path, n) for s in scores for n in s.equivalent]
    if listed:
        print(f"\n{len(listed)} equivalent mutant(s) listed and not counted:")
        for module, name in listed:
            print(f"  {name} | {equivalents[name].where} | {equivalents[name].reason}")
    return met


def main(argv=None) -> int:
    p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    p.add_argument("--module", action="append", default=[], metavar="FILE",
                   help="mutate only this file (glob patterns as mutmut's only_mutate; repeatable); default: "
                        "every module of the [tool.mutmut] source paths")
    p.add_argument("--tests", nargs="+", default=[], metavar="PATH",
                   help="pytest selection for the run (default: the [tool.mutmut] selection, tests/)")
    p.add_argument("--workdir", type=Path, default=Path(tempfile.gettempdir()) / "posekit-mutation",
                   help="working folder for the copy and mutmut's mutants/ (kept, so a rerun resumes)")
    p.add_argument("--fresh", action="store_true", help="start over: remove the working folder first")
    p.add_argument("--max-children", type=int, default=2, help="parallel mutmut workers (2)")
    p.add_argument("--report-only", action="store_true", help="do not run mutmut; report the last run")
    p.add_argument("--again", action="store_true",
                   help="run only the last run's survivors (and mutants no test reached) again, against the "
                        "checkout's tests as they are now: after adding tests for them")
    p.add_argument("--equivalents", type=Path, default=EQUIVALENT_FILE, help="the equivalent-mutant list")
    p.add_argument("--no-diffs", action="store_true", help="list survivors without their diffs")
    p.add_argument("--check", action="store_true", help="exit 1 when a module is below its target")
    args = p.parse_args(argv)
    try:
        equivalents = read_equivalents(args.equivalents)
        workdir = args.workdir.resolve()
        if ROOT in workdir.parents or workdir == ROOT:
            raise ReportError(f"--workdir {workdir} is inside the checkout; choose a folder outside it")
        last = {}
        # the results before a rerun, on disk while it runs: mutmut forgets them, and a rerun stopped by a
        # signal (not Ctrl-C) never reaches the merge below
        saved = workdir / "results-before-again.json"
        if not args.report_only:
            if args.fresh and workdir.exists():
                shutil.rmtree(workdir)
            base = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8")).get("tool", {}).get(
                "mutmut", {})
            names = None
            if args.again:
                last = read_results(workdir) if (workdir / "mutants").exists() else {}
                if saved.exists():  # an earlier rerun was stopped before it could merge: its start is here
                    last = merge_results(json.loads(saved.read_text(encoding="utf-8")), last)
                saved.write_text(json.dumps(last), encoding="utf-8")
                names = sorted(n for codes in last.values() for n, c in codes.items()
                               if c in SURVIVED | NO_TESTS and n not in equivalents)
                if not names:
                    raise ReportError(f"--again: no survivors of an earlier run under {workdir / 'mutants'}")
            elif args.module and (workdir / "mutants").exists():
                # mutmut keeps results per file; a narrower run must not report stale other files
                shutil.rmtree(workdir / "mutants")
            write_copy(workdir, mutmut_table(base, args.module, args.tests))
            code = run_mutmut(workdir, args.max_children, names)
            if code != 0:
                print(f"mutmut exited with status {code}", file=sys.stderr)
        results = read_results(workdir)
        if not last and saved.exists():  # --report-only after a rerun that was stopped
            last = json.loads(saved.read_text(encoding="utf-8"))
        if last:
            results = merge_results(last, results)
            if not args.report_only:
                write_results(workdir, results)
                saved.unlink(missing_ok=True)
        if not results:
            raise ReportError(f"no mutmut results under {workdir / 'mutants'}; run without --report-only first")
        scores = score(results, equivalents)
        met = print_report(workdir, scores, equivalents, bool(args.module), not args.no_diffs)
        stale = stale_equivalents(results, equivalents) if not args.module else \
            [s for s in stale_equivalents(results, equivalents) if "killed now" in s]
        for line in stale:
            print("stale equivalent entry:", line)
    except ReportError as exc:
        print(f"mutation_report: error: {exc}", file=sys.stderr)
        return 2
    return 1 if args.check and (not met or stale) else 0


if __name__ == "__main__":
    sys.exit(main())
