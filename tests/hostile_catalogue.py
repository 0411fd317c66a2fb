"""A catalogue of hostile inputs over every public entry point, and the judge of each outcome.

Run as a script it prints the count of cases per outcome (``--json`` for every case);
``tests/test_hostile_catalogue.py`` runs it in a child process with a memory and time
bound and asserts each case's outcome.

The cases are a generated grid: families of bad values (numbers, text, files, option
values, CLI arguments) crossed with the entry points that take that family, plus a few
good inputs per entry point whose right answer is known from outside posekit (scipy's
``Rotation`` or the numbers as typed), so that hardening cannot pass by refusing
everything.

Outcomes, from best to worst:

``typed``      a posekit error (``PoseInputError``) whose message says what is accepted;
``right``      a good input gave the right answer;
``unhelpful``  a posekit error whose message does not say what would be accepted;
``silent``     a bad input was accepted (a result came back), or a good one came back wrong;
``lost``       a failed write changed or emptied the file that was there before;
``bare``       an exception that is not a posekit error (a traceback for the user);
``runaway``    more than the time or memory bound.
"""

from __future__ import annotations

import json
import os
import re
import resource
import signal
import subprocess
import sys
import tempfile
from dataclasses import dataclass
from pathlib import Path
from typing import Callable

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
OUTCOMES = ("typed", "right", "unhelpful", "silent", "lost", "bare", "runaway")
GOOD = ("typed", "right")
#: Words by which a message says what would be accepted (common practice for a helpful error).
HELPFUL = re.compile(r"accept|expect|at most|at least|give |use |must|one of|pass |save it|remove|create|"
                     r"should|choose|write |need|only|allowed|between|in \[|>=|<=|type |fill|drop|split|raise",
                     re.IGNORECASE)
SECONDS = 20
MEMORY = 3 << 30


class Runaway(Exception):
    pass


class SilentlyAccepted(Exception):
    """Raised by a case's own check when the input was taken without a word (judged ``silent``)."""


@dataclass
class Case:
    entry: str          # the public entry point
    label: str          # what is hostile about the input
    run: Callable       # (workdir: Path) -> value; raises for a refusal
    check: Callable | None = None   # for good inputs: value -> bool (the outside reference)
    keep: str | None = None         # for writes: file whose earlier bytes must survive a failure

    @property
    def id(self) -> str:
        return f"{self.entry} | {self.label}"


def _posekit():
    import posekit
    import posekit.analysis as analysis
    return posekit, analysis


# --------------------------------------------------------------------------- value families

def _masked():
    m = np.ma.masked_array([1.0, 0.0, 0.0, 0.0], mask=[False, True, False, False])
    return m


BAD_NUMBERS = {
    "None": lambda: None,
    "text": lambda: "0 0 0 1",
    "dict": lambda: {"w": 1.0},
    "ragged list": lambda: [[1.0, 0.0], [0.0]],
    "empty list": lambda: [],
    "0-d number": lambda: np.float64(1.0),
    "NaN": lambda: [np.nan, 0.0, 0.0, 0.0],
    "infinity": lambda: [np.inf, 0.0, 0.0, 0.0],
    "complex": lambda: np.array([1 + 1j, 0, 0, 0]),
    "object array": lambda: np.array([1.0, "a", 0.0, 0.0], dtype=object),
    "masked entry": _masked,
    "booleans": lambda: np.array([True, False, False, False]),
    "wrong trailing size 5": lambda: np.ones(5),
    "strings in list": lambda: ["1", "0", "0", "0"],
}


def _numeric_entries(pk):
    q = np.array([1.0, 0.0, 0.0, 0.0])
    R = np.eye(3)
    T = np.eye(4)
    return {
        "read_rotation quaternion": lambda x: pk.read_rotation(x, "quaternion"),
        "read_rotation matrix": lambda x: pk.read_rotation(x, "matrix"),
        "read_rotation euler": lambda x: pk.read_rotation(x, "euler"),
        "convert quaternion->matrix": lambda x: pk.convert(x, "quaternion", "matrix"),
        "compose (second)": lambda x: pk.compose(R, x),
        "slerp (end)": lambda x: pk.slerp(q, x, 0.5),
        "quaternion_product (left)": lambda x: pk.quaternion_product(x, q),
        "turn_vectors (vectors)": lambda x: pk.turn_vectors(R, x),
        "transform_points (points)": lambda x: pk.transform_points(T, x),
        "invert_transform": lambda x: pk.invert_transform(x),
        "make_transform (translation)": lambda x: pk.make_transform(R, x),
        "checked_quaternion": lambda x: pk.checked_quaternion(x),
    }


def numeric_cases() -> list[Case]:
    cases = []
    entries = _numeric_entries(_StubNames())
    for entry in entries:
        for label, make in BAD_NUMBERS.items():
            cases.append(Case(f"core.{entry}", label, _numeric_runner(entry, make)))
    return cases


class _StubNames:
    """Lets the case table list entry names without importing posekit in the parent."""

    def __getattr__(self, name):
        return None


def _numeric_runner(entry, make):
    def run(_work):
        pk, _ = _posekit()
        return _numeric_entries(pk)[entry](make())
    return run


# Inputs that must be refused by value (shape and type are fine): arithmetic limits.
def limit_cases() -> list[Case]:
    def c(entry, label, fn, check=None):
        return Case(entry, label, fn, check)

    def pk():
        return _posekit()[0]

    q = np.array([1.0, 0.0, 0.0, 0.0])
    return [
        c("core.compose", "no arguments", lambda w: pk().compose()),
        c("core.compose", "batch shapes (2,3,3) with (3,3,3)",
          lambda w: pk().compose(np.tile(np.eye(3), (2, 1, 1)), np.tile(np.eye(3), (3, 1, 1)))),
        c("core.transform_points", "batch shapes (2,4,4) with (3,3)",
          lambda w: pk().transform_points(np.tile(np.eye(4), (2, 1, 1)), np.zeros((3, 3)))),
        c("core.turn_vectors", "batch shapes (2,3,3) with (3,3)",
          lambda w: pk().turn_vectors(np.tile(np.eye(3), (2, 1, 1)), np.zeros((3, 3)))),
        c("core.quaternion_product", "batch shapes (2,4) with (3,4)",
          lambda w: pk().quaternion_product(np.tile(q, (2, 1)), np.tile(q, (3, 1)))),
        c("core.slerp", "t is NaN", lambda w: pk().slerp(q, q, float("nan"))),
        c("core.slerp", "t is infinite", lambda w: pk().slerp(q, q, float("inf"))),
        c("core.slerp", "t is text", lambda w: pk().slerp(q, q, "half")),
        c("core.slerp", "t is None", lambda w: pk().slerp(q, q, None)),
        c("core.invert_transform", "translation 1e308",
          lambda w: pk().invert_transform(pk().make_transform(pk().read_rotation([0, 0, 1, 0], "quaternion"),
                                                             [1e308, 1e308, 0]))),
        c("core.read_rotation", "Euler angles of 1e17 degrees",
          lambda w: pk().read_rotation([1e17, 0, 0], "euler", "sequence=z-y-x unit=degrees")),
        c("core.read_rotation", "rotation vector of 1e17 radians",
          lambda w: pk().read_rotation([1e17, 0, 0], "rotation-vector")),
        c("core.read_rotation", "normalise a quaternion of 1e300 components",
          lambda w: pk().read_rotation([1e300, 0, 0, 1e300], "quaternion", normalise=True),
          check=lambda m: np.allclose(m, _scipy().from_quat([0, 0, 1, 1]).as_matrix())),
        # lengths below posekit's zero-length bound name no rotation, normalise or not
        c("core.read_rotation", "normalise a quaternion of 1e-300 components",
          lambda w: pk().read_rotation([1e-300, 0, 0, 1e-300], "quaternion", normalise=True)),
        c("core.read_rotation", "tolerance 0", lambda w: pk().read_rotation(q, "quaternion", tolerance=0.0)),
        c("core.read_rotation", "tolerance negative", lambda w: pk().read_rotation(q, "quaternion", tolerance=-1e-6)),
        c("core.read_rotation", "tolerance NaN", lambda w: pk().read_rotation(q, "quaternion", tolerance=float("nan"))),
        c("core.read_rotation", "tolerance text", lambda w: pk().read_rotation(q, "quaternion", tolerance="small")),
        c("core.checked_matrix", "tolerance NaN", lambda w: pk().checked_matrix(np.eye(3), tolerance=float("nan"))),
        c("core.checked_quaternion", "tolerance negative", lambda w: pk().checked_quaternion(q, tolerance=-1.0)),
        # good inputs, checked against scipy (the outside reference)
        Case("core.compose", "broadcast (1,3,3) with (5,3,3)",
             lambda w: pk().compose(np.eye(3)[None], _scipy().random(5, random_state=1).as_matrix()),
             check=lambda m: np.allclose(m, _scipy().random(5, random_state=1).as_matrix())),
        # posekit quaternions are scalar first, scipy's scalar last: (0, 0, 0, 1) is a half turn about z
        Case("core.read_rotation", "masked array with nothing masked",
             lambda w: pk().read_rotation(np.ma.masked_array([0.0, 0.0, 0.0, 1.0]), "quaternion"),
             check=lambda m: np.allclose(m, _scipy().from_quat([0, 0, 1, 0]).as_matrix())),
        Case("core.slerp", "halfway between identity and 90 deg about z",
             lambda w: pk().slerp(np.eye(3), _scipy().from_euler("z", 90, degrees=True).as_matrix(), 0.5),
             check=lambda m: np.allclose(m, _scipy().from_euler("z", 45, degrees=True).as_matrix())),
    ]


def _scipy():
    from scipy.spatial.transform import Rotation
    return Rotation


# --------------------------------------------------------------------------- text families

LONG = "1 " * 700_000  # 1.4 MB of numbers
BAD_TEXT = {
    "empty": "",
    "only spaces": "   \n\t ",
    "NUL byte": "1 0 0\x00 0",
    "decimal commas": "0,7071 0 0 0,7071",
    "thousands separators": "1,000.5 0 0",
    "500 nested brackets": "[" * 500 + "1" + "]" * 500,
    "NaN numbers": "nan nan nan",
    "overflowing number": "1e400 0 0",
    "lone surrogate": "1 0 \ud800 0",
    "bidi override": "1 0 \u202e0 1",
    "1.4 MB paste": LONG,
    "letters": "hello world",
    "unclosed bracket": "[1, 0, 0, 0",
}

BAD_WORDS = {
    "NaN angle": "yawed nan degrees left",
    "infinite angle": "yawed inf degrees left",
    "overflowing angle": "pitched 1e400 degrees up",
    "no number": "yawed degrees left",
    "unknown verb": "wobbled 10 degrees",
    "empty": "",
    "1.4 MB of words": "yawed 1 degrees left, " * 70_000,
    "bidi override": "yawed 10 degrees \u202eleft",
}

BAD_CONVENTION = {
    "Cyrillic e in degrees": "sequence=z-y-x unit=d\u0435grees",
    "U+2010 hyphen": "sequence=z\u2010y\u2010x",
    "fullwidth equals": "sequence\uff1dz-y-x",
    "non-breaking space": "sequence=z-y-x\u00a0unit=degrees",
    "unknown key": "wobble=3",
    "unknown value": "sequence=q-y-x",
    "10 MB of text": "sequence=z-y-x " + "x" * 10_000_000,
    "bidi override": "sequence=\u202ez-y-x",
}


def text_cases() -> list[Case]:
    cases = []

    def an():
        return _posekit()[1]

    for label, text in BAD_TEXT.items():
        cases.append(Case("paste.parse_numbers", label, lambda w, t=text: _parse_all(an().parse_numbers(t))))
        cases.append(Case("diagnose (observed text)", label,
                          lambda w, t=text: an().diagnose("yawed 90 degrees left", t)))
        cases.append(Case("expected_pose (text)", label, lambda w, t=text: an().expected_pose(t)))
    for label, text in BAD_WORDS.items():
        cases.append(Case("words.pose_from_words", label, lambda w, t=text: an().pose_from_words(t)))
    for label, text in BAD_CONVENTION.items():
        cases.append(Case("Convention.parse", label, lambda w, t=text: _posekit()[0].Convention.parse(t)))
        cases.append(Case("read_rotation (convention text)", label,
                          lambda w, t=text: _posekit()[0].read_rotation([10, 20, 30], "euler", t)))
    # good texts, checked against the numbers as typed and scipy
    good = {
        "commas as separators": ("0.5, 0.5, 0.5, 0.5", [0.5, 0.5, 0.5, 0.5]),
        "brackets and commas": ("[0.0, 0.0, 0.7071068, 0.7071068]", [0.0, 0.0, 0.7071068, 0.7071068]),
        "numpy repr": ("array([ 1.5e-01, -2.0e+00,  3.25e+00])", [0.15, -2.0, 3.25]),
        "spaces and newline": ("1 2 3\n4 5 6", [1, 2, 3, 4, 5, 6]),
        "comma list without spaces": ("1,2,3", [1, 2, 3]),
    }
    for label, (text, numbers) in good.items():
        cases.append(Case("paste.parse_numbers", f"good: {label}",
                          lambda w, t=text: np.asarray(an().parse_numbers(t).numbers, float).ravel(),
                          check=lambda v, n=numbers: v.shape == (len(n),) and np.allclose(v, n)))
    cases.append(Case("words.pose_from_words", "good: yawed 90 degrees left",
                      lambda w: an().pose_from_words("yawed 90 degrees left").rotation,
                      check=lambda m: np.allclose(m, _scipy().from_euler("z", 90, degrees=True).as_matrix())))
    return cases


def _parse_all(parsed):
    parsed.require_interpretations()
    return parsed


# --------------------------------------------------------------------------- option values

def option_cases() -> list[Case]:
    cases = []

    def an():
        return _posekit()[1]

    for name in ("rotation_tolerance", "translation_tolerance"):
        for label, value in (("0", 0.0), ("negative", -0.01), ("NaN", float("nan")), ("infinite", float("inf")),
                             ("text", "0.01"), ("True", True), ("None", None)):
            cases.append(Case(f"diagnose {name}", label,
                              lambda w, n=name, v=value: an().diagnose("yawed 90 degrees left", "0 0 90",
                                                                       **{n: v})))
    for label, value in (("0", 0), ("-1", -1), ("text", "3"), ("2.5", 2.5), ("None", None)):
        cases.append(Case("diagnose limit", label,
                          lambda w, v=value: an().diagnose("yawed 90 degrees left", "0 0 90", limit=v)))
        cases.append(Case("diagnose_batch limit", label,
                          lambda w, v=value: an().diagnose_batch([[0, 0, 90]] * 3, [[0, 0, 90]] * 3, limit=v)))
    for label, value in (("0", 0.0), ("NaN", float("nan")), ("text", "a")):
        cases.append(Case("FrameGraph angle_tolerance", label,
                          lambda w, v=value: an().FrameGraph(angle_tolerance=v)))
    return cases


# --------------------------------------------------------------------------- files

def _state_text(**change) -> str:
    data = {"schema": "posekit-state", "version": 1,
            "versions": {"posekit": "0.1.0", "numpy": "1", "scipy": "1", "python": "3"},
            "widget": "none", "settings": {}, "poses": [], "edges": [], "notes": ""}
    data.update(change)
    return json.dumps(data)


EDGE = {"parent": "world", "child": "base", "kind": "matrix",
        "numbers": [1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1], "convention": "sequence=z-y-x"}
BAD_FILES = {
    "missing file": None,
    "a folder": "folder",
    "/dev/zero": "/dev/zero",
    "binary bytes": b"\x89PNG\r\n\x1a\n\x00\x00\x00",
    "not UTF-8": "numbers \xe9".encode("latin-1"),
    "empty": b"",
    "9 MiB of spaces": b" " * (9 << 20),
    "duplicate key": ('{"schema": "posekit-state", ' + _state_text()[1:]).encode(),
    "nested 100000 deep": ("[" * 100_000 + "]" * 100_000).encode(),
    "5000-digit integer": _state_text(notes=0).replace('"notes": 0', '"notes": ' + "9" * 5000).encode(),
    "NaN in numbers": _state_text(edges=[{**EDGE, "numbers": [float("nan")] + EDGE["numbers"][1:]}]).encode(),
    "edge with 15 numbers": _state_text(edges=[{**EDGE, "numbers": EDGE["numbers"][:15]}]).encode(),
    "frame joined to itself": _state_text(edges=[{**EDGE, "child": "world"}]).encode(),
    "frame name with bidi override": _state_text(edges=[{**EDGE, "child": "base\u202e"}]).encode(),
}


def _make_file(work: Path, label: str, content) -> str:
    if content is None:
        return str(work / "no-such-file.json")
    if content == "folder":
        return str(work)
    if isinstance(content, str):
        return content
    path = work / (re.sub(r"\W+", "-", label) + ".in")
    path.write_bytes(content)
    return str(path)


BAD_CSV = {
    "extra field in a row": "t,qw,qx,qy,qz\n0,1,0,0,0\n1,1,0,0,0,7\n2,1,0,0,0\n",
    "duplicated column": "t,qw,qw,qy,qz\n0,1,0,0,0\n1,1,0,0,0\n",
    "all rows bad": "t,qw,qx,qy,qz\n0,a,b,c,d\n1,e,f,g,h\n",
    "header only": "t,qw,qx,qy,qz\n",
    "quoted field with comma": 't,qw,qx,qy,qz\n0,1,0,0,0\n1,"1,0",0,0,0\n2,1,0,0,0\n',
}


ROW_FAULTS = ("extra field in a row", "quoted field with comma")


def file_cases() -> list[Case]:
    cases = []

    def an():
        return _posekit()[1]

    readers = {
        "load_state": lambda p: an().load_state(p),
        "read_report_state": lambda p: an().read_report_state(p),
        "check_trajectory_csv": lambda p: an().check_trajectory_csv(p, kind="quaternion"),
    }
    for entry, reader in readers.items():
        for label, content in BAD_FILES.items():
            if entry == "check_trajectory_csv" and label in ("duplicate key", "5000-digit integer", "NaN in numbers",
                                                              "edge with 15 numbers", "frame joined to itself",
                                                              "frame name with bidi override"):
                continue
            cases.append(Case(entry, label, lambda w, r=reader, l=label, c=content: r(_make_file(w, l, c))))
    for label, text in BAD_CSV.items():
        # a log with a few bad rows is read, and the bad rows are listed with their line and reason
        # (the csv module is the reference for where the fields of a row end)
        check = (lambda r: _rows_accounted(r, 3)) if label in ROW_FAULTS else None
        cases.append(Case("check_trajectory_csv", label,
                          lambda w, l=label, t=text: an().check_trajectory_csv(
                              _make_file(w, l, t.encode()), kind="quaternion"), check=check))
    # writes that fail must leave the earlier file as it was
    for entry in ("save_state", "write_report"):
        cases.append(Case(entry, "note with a lone surrogate", _writer(entry, "keep.json", notes="x\ud800"),
                          keep="keep.json"))
        cases.append(Case(entry, "into a missing folder", _writer(entry, "missing/x.json", notes="ok")))
    return cases


def _rows_accounted(report, line: int) -> bool:
    """The row on ``line`` is rejected with a reason; a row cut or dropped silently is a wrong answer."""
    rejected = [r for r in report.rejected if r.line == line]
    if not rejected:
        raise SilentlyAccepted(f"line {line} not reported as rejected ({report.rows} rows kept)")
    return bool(rejected[0].reason)


def _writer(entry, name, notes):
    def run(work):
        _, an = _posekit()
        state = an.State(notes=notes)
        if entry == "save_state":
            return an.save_state(state, work / name)
        from posekit.view.report import write_report
        return write_report(state, work / name)
    return run


# --------------------------------------------------------------------------- command line

CLI_CASES = {
    "check: endless standard input": (["check", "-"], "endless"),
    "check: decimal commas": (["check", "0,7071 0 0 0,7071"], None),
    "check: 500 nested brackets": (["check", "[" * 500 + "1" + "]" * 500], None),
    "check: bidi override": (["check", "1 0 \u202e0 1"], None),
    "check: 120 kB argument": (["check", "x" * 120_000], None),
    "diagnose: tolerance text": (["diagnose", "--expected", "0 0 90", "--observed", "0 0 90",
                                  "--rotation-tolerance", "abc"], None),
    "diagnose: tolerance 0": (["diagnose", "--expected", "0 0 90", "--observed", "0 0 90",
                               "--rotation-tolerance", "0"], None),
    "diagnose: limit 0": (["diagnose", "--expected", "0 0 90", "--observed", "0 0 90", "--limit", "0"], None),
    "diagnose: expected file is /dev/zero": (["diagnose", "--expected-file", "/dev/zero", "--observed-file",
                                              "/dev/zero"], None),
    "diagnose: expected file missing": (["diagnose", "--expected-file", "/no/such/file", "--observed-file",
                                         "/no/such/file"], None),
    "convert: look-alike hyphen": (["convert", "10 20 30", "--from-kind", "euler", "--to-kind", "matrix",
                                    "--from", "sequence=z\u2010y\u2010x"], None),
    "convert: unknown kind": (["convert", "10 20 30", "--from-kind", "eulers", "--to-kind", "matrix"], None),
    "convert: bidi override in convention": (["convert", "10 20 30", "--from-kind", "euler", "--to-kind",
                                              "matrix", "--from", "sequence=\u202ez-y-x"], None),
    "convert: 120 kB convention": (["convert", "10 20 30", "--from-kind", "euler", "--to-kind", "matrix",
                                    "--from", "sequence=" + "x" * 120_000], None),
}


def cli_cases() -> list[Case]:
    return [Case("cli " + label.split(":")[0], label.split(": ", 1)[1], _cli_runner(args, stdin))
            for label, (args, stdin) in CLI_CASES.items()]


class CliResult(Exception):
    """How a CLI run ended: classified by :func:`judge` like an exception."""

    def __init__(self, code, err):
        self.code, self.err = code, err
        super().__init__(err)


def _cli_runner(args, stdin):
    def run(work):
        env = {**os.environ, "PYTHONPATH": str(ROOT)}
        cmd = [sys.executable, "-m", "posekit.cli", *args]
        if stdin == "endless":
            feeder = subprocess.Popen(["yes", "1 0 0 0"], stdout=subprocess.PIPE)
            try:
                proc = subprocess.run(cmd, stdin=feeder.stdout, capture_output=True, timeout=SECONDS, env=env,
                                      preexec_fn=_limit_memory)
            finally:
                feeder.kill()
        else:
            proc = subprocess.run(cmd, capture_output=True, timeout=SECONDS, env=env, preexec_fn=_limit_memory,
                                  stdin=subprocess.DEVNULL)
        err = proc.stderr.decode("utf-8", "replace")
        if proc.returncode == 0:
            return proc.stdout.decode("utf-8", "replace")
        raise CliResult(proc.returncode, err)
    return run


def _limit_memory():
    resource.setrlimit(resource.RLIMIT_AS, (MEMORY, MEMORY))


# --------------------------------------------------------------------------- the judge

def all_cases() -> list[Case]:
    return numeric_cases() + limit_cases() + text_cases() + option_cases() + file_cases() + cli_cases()


def judge(case: Case, work: Path) -> tuple[str, str]:
    """Run one case and say its outcome and a one-line detail."""
    kept = None
    if case.keep:
        kept_path = work / case.keep
        kept_path.write_bytes(b'{"earlier": "content"}\n')
        kept = kept_path.read_bytes()
    signal.alarm(SECONDS)
    try:
        value = case.run(work)
    except Runaway:
        return "runaway", f"more than {SECONDS} s"
    except MemoryError:
        return "runaway", "memory bound hit"
    except subprocess.TimeoutExpired:
        return "runaway", f"more than {SECONDS} s"
    except SilentlyAccepted as exc:
        return "silent", str(exc)
    except CliResult as exc:
        text = exc.err.strip()
        if "Traceback" in text or exc.code not in (1, 2):
            return "bare", f"exit {exc.code}: {text.splitlines()[-1][:120] if text else ''}"
        return ("typed" if HELPFUL.search(text) else "unhelpful"), f"exit {exc.code}: {text[:160]}"
    except Exception as exc:  # noqa: BLE001 - the judge classifies every exception
        from posekit.core.errors import PoseInputError

        detail = f"{type(exc).__name__}: {str(exc)[:200]}"
        if kept is not None and (work / case.keep).read_bytes() != kept:
            return "lost", detail
        if not isinstance(exc, PoseInputError):
            return "bare", detail
        if case.check is not None:
            return "silent", "a good input was refused: " + detail
        return ("typed" if HELPFUL.search(str(exc)) else "unhelpful"), detail
    finally:
        signal.alarm(0)
    if kept is not None and (work / case.keep).read_bytes() != kept:
        return "lost", "the earlier file changed"
    if case.check is None:
        return "silent", f"accepted: {type(value).__name__} {str(value)[:100]!r}"
    try:
        ok = bool(case.check(value))
    except Exception as exc:  # noqa: BLE001
        ok, value = False, f"{type(exc).__name__}: {exc}"
    return ("right", "") if ok else ("silent", f"wrong answer: {str(value)[:120]}")


def _alarm(signum, frame):
    raise Runaway()


def census() -> dict[str, tuple[str, str]]:
    signal.signal(signal.SIGALRM, _alarm)
    _limit_memory()
    sys.setrecursionlimit(3000)
    results = {}
    with tempfile.TemporaryDirectory() as tmp:
        for i, case in enumerate(all_cases()):
            work = Path(tmp) / f"c{i}"
            work.mkdir()
            results[case.id] = judge(case, work)
    return results


def main(argv=None) -> int:
    import argparse

    p = argparse.ArgumentParser(description="Run the hostile-input catalogue and count outcomes.")
    p.add_argument("--json", action="store_true", help="print every case's outcome as JSON")
    args = p.parse_args(argv)
    results = census()
    if args.json:
        print(json.dumps(results, ensure_ascii=True))
        return 0
    counts = {o: 0 for o in OUTCOMES}
    for outcome, _ in results.values():
        counts[outcome] += 1
    print(f"{len(results)} cases: " + ", ".join(f"{o} {n}" for o, n in counts.items()))
    for cid, (outcome, detail) in results.items():
        if outcome not in GOOD:
            print(f"  {outcome:9s} {cid}  -- {detail}")
    return 0


if __name__ == "__main__":
    sys.path.insert(0, str(ROOT))
    raise SystemExit(main())
