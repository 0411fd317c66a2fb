"""posekit on the command line: name the broken convention, convert, check, open the tour.

Verbs::

    posekit diagnose --expected TEXT --observed TEXT [options]
    posekit diagnose --expected-file FILE --observed-file FILE [options]   # one pose per line
    posekit convert NUMBERS --to-kind KIND [--from-kind KIND] [--from CONV] [--to CONV]
    posekit check NUMBERS
    posekit tour [--folder DIR] [--print-command]
    posekit notebook NAME [--folder DIR]        # or: posekit notebook --list
    posekit mount LOG_A LOG_B [--reading-a CONV] [--reading-b CONV] [options]   # two sensors, one rigid body
    posekit scan LOG [LOG ...] [--reading CONV] [options]   # one log, a folder or a glob: findings per file
    posekit motion LOG --described TEXT [--reading CONV] [--mount M]   # the log's reading from a known motion
    posekit motion LOG --rates RATE_LOG [--rate-reading TEXT]          # ... or from a rate log of the same body

Every NUMBERS / TEXT argument is pasted text as :func:`posekit.analysis.parse_numbers`
reads it, or ``-`` to read standard input.  Convention arguments use posekit's text
form (``Convention.parse``), e.g. ``"scalar=last"`` or ``"sequence=x-y-z axes=extrinsic
unit=degrees"``.  Angles given without a unit (no ``unit=`` key, no unit word) are read
in degrees on both sides of ``diagnose``, as in the desk and in ``diagnose()``; the
other unit is scored too.  ``diagnose`` says in one line what it took the expected
input to be and prints the exact flag for each other reading (``--expected-kind
rotation-vector``, ``--expected-convention unit=radians``).  ``--json`` prints one JSON
object instead of text.  Exit status: 0 on
success, 1 when ``diagnose`` finds no single slip that explains the numbers within the
tolerances, 2 for bad input (one line on standard error: what was wrong, where, a short
excerpt of the value, what is accepted; no traceback), 3 when the tour cannot start
(JupyterLab is not installed: the message names the extra to install).

Sizes: an argument or standard input is read up to 1 MiB (``PASTE_LIMIT``), a file of
poses up to 16 MiB (``TEXT_FILE_LIMIT``), never more (``yes | posekit check -`` stops
there); ``--input-limit BYTES`` (e.g. ``64MiB``) raises or lowers both.
"""

from __future__ import annotations

import argparse
import json
import math
import os
import re
import shlex
import shutil
import subprocess
import sys
import warnings

import numpy as np

from .core.errors import PoseInputError, excerpt, isolate_controls, odd_characters
from .io.limits import PASTE_LIMIT, TEXT_FILE_LIMIT, FileReadError, InputTooLargeError, read_bounded_text, size_words

__all__ = ["main", "build_parser"]

_ROTATION_KINDS = ("matrix", "quaternion", "euler", "rotation-vector", "axis-angle")
_TRANSFORM_KINDS = ("transform", "position-quaternion", "position-euler")


class CliInputError(PoseInputError):
    """A command-line option has a value the command cannot use (a tolerance that is no number, a size of 0...)."""


class _Parser(argparse.ArgumentParser):
    """argparse, but a usage error is one line on standard error (values quoted as short excerpts), exit 2."""

    def _check_value(self, action, value):  # argparse's hook: its own message would quote the value whole
        if action.choices is not None and value not in action.choices:
            choices = ", ".join(map(str, action.choices))
            raise argparse.ArgumentError(action, f"invalid choice: {excerpt(value, 40)}; accepted: {choices}")

    def error(self, message):  # noqa: D401 - argparse's hook
        line = _one_line(message)
        tail = "" if "accepted:" in line else f"; accepted: what '{self.prog} --help' lists"
        self.exit(2, f"{self.prog}: error: {line}{tail}\n")


def _real(flag: str, unit: str, example: str, low: float, high: float):
    """An argparse type: a number from ``low`` to ``high``, or a message naming the flag and what is accepted."""
    def parse(text: str) -> float:
        try:
            value = float(text) if text.strip().isascii() else None
        except ValueError:
            value = None
        if value is None or not low <= value <= high:  # NaN fails too
            raise argparse.ArgumentTypeError(f"got {excerpt(text, 40)}; accepted: a number of {unit} from {low:g} "
                                             f"to {high:g}, e.g. {flag} {example}")
        return value
    return parse


def _whole(flag: str, what: str, example: str, sizes: bool = False):
    """An argparse type: a whole number >= 1 (with ``sizes``, also 64KiB, 16MiB, 1GiB)."""
    def parse(text: str) -> int:
        t = text.strip()
        scale = 1
        if sizes:
            for suffix, shift in (("KiB", 10), ("MiB", 20), ("GiB", 30)):
                if t.endswith(suffix):
                    t, scale = t[:-len(suffix)].strip(), 1 << shift
                    break
        if not (t.isascii() and t.isdigit()) or int(t) < 1:
            more = " (or with KiB, MiB, GiB)" if sizes else ""
            raise argparse.ArgumentTypeError(f"got {excerpt(text, 40)}; accepted: a whole number of {what} >= 1"
                                             f"{more}, e.g. {flag} {example}")
        return int(t) * scale
    return parse


def _add_input_limit(parser) -> None:
    parser.add_argument("--input-limit", type=_whole("--input-limit", "bytes", "64MiB", sizes=True), default=None,
                        metavar="BYTES", help=f"the most bytes read from an argument or standard input (default "
                                              f"{size_words(PASTE_LIMIT)}) or from a file of poses (default "
                                              f"{size_words(TEXT_FILE_LIMIT)}); e.g. 64MiB")


def build_parser() -> argparse.ArgumentParser:
    p = _Parser(prog="posekit", description="Find the convention that broke a pose.")
    sub = p.add_subparsers(dest="verb", metavar="VERB")
    sub.required = True

    d = sub.add_parser("diagnose", help="rank explanations of how the observed numbers came from the expected pose")
    d.add_argument("--expected", help="expected pose: numbers, or words such as 'pitched 25 degrees down, 0.3 m "
                                      "forward' (forward=+x, left=+y, up=+z)")
    d.add_argument("--expected-kind", help="kind of the expected numbers (default: guessed from the count; the "
                                           "output says what was assumed and the flag for each other reading)")
    d.add_argument("--expected-convention", help="convention of the expected numbers (posekit text form); angles "
                                                 "without a unit are read in degrees")
    d.add_argument("--observed", help="observed numbers as pasted")
    d.add_argument("--assumed", help="convention you read the observed numbers with (default: the expected one)")
    d.add_argument("--assumed-kind", help="kind you read the observed numbers as (default: by count)")
    d.add_argument("--expected-file", help="batch: file with one expected pose per line")
    d.add_argument("--observed-file", help="batch: file with one observed pose per line")
    d.add_argument("--reflections", action="store_true", default=True,
                   help="score the 24 remaps with a handedness flip too (the default)")
    d.add_argument("--no-reflections", dest="reflections", action="store_false",
                   help="leave handedness flips out (faster; a reflected input then stays unexplained)")
    d.add_argument("--rotation-tolerance", type=_real("--rotation-tolerance", "degrees", "0.5", 1e-148, 180.0),
                   default=0.5, help="rotation noise scale in degrees (0.5)")
    d.add_argument("--translation-tolerance", type=_real("--translation-tolerance", "metres", "0.005", 1e-150, 1e150),
                   default=0.005, help="translation noise scale in metres")
    d.add_argument("--limit", type=_whole("--limit", "explanations", "5"), default=5,
                   help="how many explanations to show (5)")
    d.add_argument("--json", action="store_true", help="print JSON")
    _add_input_limit(d)

    c = sub.add_parser("convert", help="convert numbers between representations and conventions")
    c.add_argument("numbers", help="numbers as pasted, or - for standard input")
    c.add_argument("--from-kind", help="kind of the input (default: by count; 3 numbers are Euler angles)")
    c.add_argument("--from", dest="source", default=None, help="convention of the input (posekit text form)")
    c.add_argument("--to-kind", required=True, help="kind to write: " + ", ".join(_ROTATION_KINDS + _TRANSFORM_KINDS))
    c.add_argument("--to", dest="target", default=None, help="convention to write (posekit text form)")
    c.add_argument("--normalise", action="store_true", help="divide a quaternion by its length on purpose")
    c.add_argument("--json", action="store_true", help="print JSON")
    _add_input_limit(c)

    k = sub.add_parser("check", help="validate one input and list every way it can be read")
    k.add_argument("numbers", help="numbers as pasted, or - for standard input")
    k.add_argument("--json", action="store_true", help="print JSON")
    _add_input_limit(k)

    tour = sub.add_parser("tour", help="copy the notebook tour into a folder of yours and open it in JupyterLab")
    tour.add_argument("--folder", default=".", help="where the fresh copy goes (default: the working folder)")
    tour.add_argument("--print-command", action="store_true",
                      help="copy the tour, print the command that would open it, and do not run it")
    nb = sub.add_parser("notebook", help="copy a notebook posekit ships (e.g. the bug-report template) into a folder")
    nb.add_argument("name", nargs="?", help="which notebook: tour, bug-report-template, convention-walkthrough")
    nb.add_argument("--folder", default=".", help="where the fresh copy goes (default: the working folder)")
    nb.add_argument("--list", action="store_true", help="list the notebooks posekit ships")
    _add_mount_parser(sub)
    _add_motion_parser(sub)
    _add_scan_parser(sub)
    return p


def _too_large(what: str, limit: int) -> CliInputError:
    return CliInputError(f"{what} is larger than the limit of {size_words(limit)}; nothing past the limit was read; "
                         f"accepted: at most {size_words(limit)}: pass --input-limit BYTES (e.g. --input-limit "
                         "64MiB) to read more, or split the input")


def _text(value: str | None, what: str, input_limit: int | None = None) -> str:
    """An argument's text, or standard input's for ``-``: at most ``--input-limit`` (default 1 MiB)."""
    limit = input_limit or PASTE_LIMIT
    if value is None:
        raise CliInputError(f"{what} is missing; accepted: the numbers as text, or - to read standard input")
    try:
        if value == "-":
            text = read_bounded_text("-", limit=limit, what=f"{what} from")
        elif len(value) > limit or len(value.encode("utf-8", "surrogatepass")) > limit:
            raise InputTooLargeError(what)
        else:
            text = value
        _refuse_other_digits(text, what)
        return text
    except InputTooLargeError:
        size = len(value.encode("utf-8", "surrogatepass")) if value != "-" else 0
        where = f"{what} from standard input (-)" if value == "-" else f"{what} ({len(value)} characters, {size} bytes)"
        raise _too_large(where, limit) from None
    except FileReadError as exc:
        raise CliInputError(f"{exc}; accepted: UTF-8 text") from None


_NOT_ASCII = re.compile(r"[^\x00-\x7f]")


def _refuse_other_digits(text: str, what: str) -> None:
    """Digits of other scripts (full-width '１', Arabic-Indic '١') look like ASCII digits: refused, named."""
    if not _NOT_ASCII.search(text):
        return
    for m in _NOT_ASCII.finditer(text):
        ch = m.group(0)
        if ch.isdecimal():
            at = m.start()
            line = text.count("\n", 0, at) + 1
            column = at - (text.rfind("\n", 0, at) + 1) + 1
            raise CliInputError(f"{what}: line {line}, column {column}: {odd_characters(ch)[0].split(' at ')[0]} "
                                "is a digit of another script that looks like an ASCII digit; accepted: the ASCII "
                                "digits 0-9")


def _read_lines(path: str, what: str, input_limit: int | None = None) -> np.ndarray:
    """One pose per line of a file (``-``: standard input), at most ``--input-limit`` bytes (default 16 MiB).

    Blank lines and lines starting with ``#`` are skipped; messages give the file's own line numbers.
    """
    from .io.paste import parse_numbers

    limit = input_limit or TEXT_FILE_LIMIT
    shown = "standard input" if path == "-" else excerpt(path, 80)
    try:
        text = read_bounded_text(path, limit=limit, what=f"{what} file")
    except InputTooLargeError:
        raise _too_large(f"{what}: file {shown}", limit) from None
    except FileReadError as exc:
        raise CliInputError(f"{exc}; accepted: a readable UTF-8 text file with one pose per line") from None
    numbered = [(i, ln) for i, ln in enumerate(text.replace("\r\n", "\n").replace("\r", "\n").split("\n"),
                                                start=1)
                if ln.strip() and not ln.lstrip().startswith("#")]
    if not numbered:
        raise CliInputError(f"{what}: file {shown} holds no poses (only blank or # lines); accepted: one pose per "
                            "line, e.g. 0.1 0.2 0.3 or 1 0 0 0")
    rows = []
    for n, line in numbered:
        try:
            _refuse_other_digits(line, f"{what}: file {shown}, line {n}")
            rows.append(parse_numbers(line, limit=max(PASTE_LIMIT, len(line))).numbers)  # the file is bounded
        except PoseInputError as exc:
            reason, column = getattr(exc, "reason", None), getattr(exc, "column", None)
            if reason is not None and column is not None:
                raise CliInputError(f"{what}: file {shown}, line {n}, column {column}: {reason}; accepted: one pose "
                                    "per line as numbers separated by spaces, commas or semicolons") from None
            raise CliInputError(f"{what}: file {shown}, line {n}: {exc}") from None
    first = len(rows[0])
    odd = next((k for k, r in enumerate(rows) if len(r) != first), None)
    if odd is not None:
        raise CliInputError(f"{what}: file {shown}, line {numbered[odd][0]} holds {len(rows[odd])} numbers but line "
                            f"{numbered[0][0]} holds {first}; accepted: the same count of numbers on every line")
    return np.array(rows)


def _flag(choice) -> str:
    """The exact flag that reads the expected input as ``choice`` (a ReadingChoice)."""
    if choice.field == "kind":
        return f"--expected-kind {choice.value}"
    return f"--expected-convention {shlex.quote(choice.convention)}"


def _guess_lines(guess) -> list[str]:
    """What the expected input was taken to be (one line), a note when its magnitudes point to the other
    unit, and the flag to add for each other reading."""
    from .view.diagnosis import choice_words

    if guess is None:
        return []
    lines = ["expected " + guess.line()]
    note = guess.note()
    if note:
        to = next((c for c in guess.alternatives if c.field == "unit"), None)
        lines.append("note: " + note + ("" if to is None else f"; if they are {to.value}, add {_flag(to)}"))
    if guess.alternatives:
        lines.append("  to read the expected input otherwise, add one of: "
                     + "; ".join(f"{_flag(c)} ({choice_words(c)})" for c in guess.alternatives))
    return lines


def _with_guess(data: dict, text: str, guess) -> tuple[dict, str]:
    """The diagnosis text with the guess lines after its verdict; the JSON with ``expected_guess``."""
    if guess is None:
        return data, text
    data["expected_guess"] = dict(guess.as_dict(), alternatives=[dict(c.as_dict(), flag=_flag(c))
                                                                  for c in guess.alternatives])
    head, _, rest = text.partition("\n")
    return data, "\n".join([head, *_guess_lines(guess), rest])


def _diagnose(args) -> tuple[dict, str]:
    from .analysis.diagnose import diagnose, diagnose_batch, expected_rows

    tol_r = math.radians(args.rotation_tolerance)
    for a, b in (("expected", "observed"), ("expected_file", "observed_file")):
        if getattr(args, a) == "-" and getattr(args, b) == "-":
            raise CliInputError(f"--{a.replace('_', '-')} and --{b.replace('_', '-')} both read standard input (-); "
                                "accepted: - for at most one of them, the other as text or a file")
    if args.expected_file or args.observed_file:
        if not (args.expected_file and args.observed_file):
            raise CliInputError("batch mode needs both --expected-file and --observed-file; accepted: both files, "
                                "or --expected and --observed for one pose")
        given = [f for f, v in (("--expected", args.expected), ("--observed", args.observed)) if v is not None]
        if given:
            raise CliInputError(f"{' and '.join(given)} given with --expected-file/--observed-file, and batch mode "
                                "would ignore it; accepted: either the two files or --expected and --observed")
        exp = _read_lines(args.expected_file, "expected poses", args.input_limit)
        obs = _read_lines(args.observed_file, "observed poses", args.input_limit)
        if len(exp) != len(obs):
            raise CliInputError(f"batch mode: {len(exp)} expected poses but {len(obs)} observed ones; accepted: "
                                "one observed line per expected line")
        exp_pose = expected_rows(exp, args.expected_kind, args.expected_convention)
        result = diagnose_batch(exp_pose, obs, assumed=args.assumed, assumed_kind=args.assumed_kind,
                                expected_convention=args.expected_convention, reflections=args.reflections,
                                rotation_tolerance=tol_r, translation_tolerance=args.translation_tolerance,
                                limit=args.limit)
        return (*_with_guess(result.as_dict(), result.summary(), exp_pose.guess), result.explained)
    expected = _text(args.expected, "--expected", args.input_limit)
    observed = _text(args.observed, "--observed", args.input_limit)
    for flag, text in (("--expected", expected), ("--observed", observed)):
        if len(text) > PASTE_LIMIT:  # one pose as text: the paste reader's own limit applies
            raise CliInputError(f"{flag} holds {len(text)} characters; one pose given as text is read up to "
                                f"{size_words(PASTE_LIMIT)}; accepted: at most {PASTE_LIMIT} characters, or many "
                                "poses one per line in --expected-file and --observed-file")
    result = diagnose(expected, observed, assumed=args.assumed, assumed_kind=args.assumed_kind,
                         expected_kind=args.expected_kind, expected_convention=args.expected_convention,
                         reflections=args.reflections, rotation_tolerance=tol_r,
                         translation_tolerance=args.translation_tolerance, limit=args.limit)
    return (*_with_guess(result.as_dict(), result.summary(args.limit), result.expected.guess), result.explained)


def _kind_by_count(n: int) -> str:
    kinds = {3: "euler", 4: "quaternion", 9: "matrix", 6: "position-euler", 7: "position-quaternion",
             12: "transform", 16: "transform"}
    if n not in kinds:
        raise CliInputError(f"convert: got {n} numbers; accepted: 3, 4, 6, 7, 9, 12 or 16 numbers (or give "
                            "--from-kind)")
    return kinds[n]


def _convert(args) -> tuple[dict, str]:
    import posekit as pk
    from .io.paste import parse_numbers

    text = _text(args.numbers, "numbers", args.input_limit)
    parsed = parse_numbers(text, limit=max(PASTE_LIMIT, len(text)))                # bounded by --input-limit
    nums = np.asarray(parsed.numbers)
    kind = args.from_kind or _kind_by_count(nums.size)
    allowed = _ROTATION_KINDS + _TRANSFORM_KINDS
    for k, flag in ((kind, "--from-kind"), (args.to_kind, "--to-kind")):
        if k not in allowed:
            raise CliInputError(f"convert: {flag} {excerpt(k, 40)} is not a kind posekit knows; accepted: "
                                f"{', '.join(allowed)}")
    source = pk.as_convention(args.source)
    target = pk.as_convention(args.target)
    if kind in _TRANSFORM_KINDS:
        t = pk.read_transform(nums, "matrix" if kind == "transform" else kind, source, normalise=args.normalise)
        if args.to_kind in _TRANSFORM_KINDS:
            out = pk.write_transform(t, "matrix" if args.to_kind == "transform" else args.to_kind, target,
                                     flat=args.to_kind == "transform")
        else:
            out = pk.write_rotation(t[:3, :3], args.to_kind, target, flat=args.to_kind == "matrix")
    else:
        r = pk.read_rotation(nums, kind, source, normalise=args.normalise)
        if args.to_kind in _TRANSFORM_KINDS:
            raise CliInputError(f"convert: a {kind} has no translation, so it cannot be written as {args.to_kind}; "
                                 f"accepted targets: {', '.join(_ROTATION_KINDS)}")
        out = pk.write_rotation(r, args.to_kind, target, flat=args.to_kind == "matrix")
    out = np.round(np.asarray(out, dtype=float), 12) + 0.0
    data = {"from_kind": kind, "from": source.to_text(), "to_kind": args.to_kind, "to": target.to_text(),
            "numbers": out.reshape(-1).tolist()}
    text = (f"read as {kind} under: {source.to_text()}\nwritten as {args.to_kind} under: {target.to_text()}\n"
            + " ".join(f"{v:.12g}" for v in out.reshape(-1)))
    return data, text


def _check(args) -> tuple[dict, str]:
    from .io.paste import parse_numbers

    text = _text(args.numbers, "numbers", args.input_limit)
    parsed = parse_numbers(text, limit=max(PASTE_LIMIT, len(text)))                # bounded by --input-limit
    parsed.require_interpretations()
    return parsed.as_dict(), parsed.summary()


def _tour(folder: str, print_only: bool = False) -> int:
    """Copy the tour into ``folder`` (never editing the shipped one) and open it in JupyterLab."""
    from .notebook_files import copy_notebook

    if shutil.which("jupyter") is None and not _has_module("jupyterlab"):
        print("posekit tour: error: the notebook tour needs JupyterLab, which is not installed here; install it "
              "with: pip install \"posekit[notebook]\" (or run 'python -m posekit.demo' for a terminal demo)",
              file=sys.stderr)
        return 3
    notebook = copy_notebook("tour", folder)
    cmd = [sys.executable, "-m", "jupyter", "lab", str(notebook)]
    if hasattr(os, "geteuid") and os.geteuid() == 0:
        cmd.append("--allow-root")
    if print_only:
        print(" ".join(cmd))
        return 0
    print(f"posekit tour: wrote a fresh copy of the tour to {notebook}; opening JupyterLab", file=sys.stderr)
    return subprocess.call(cmd)


def _notebook(args) -> tuple[dict, str]:
    from .notebook_files import copy_notebook, shipped_notebooks

    if args.list or not args.name:
        names = list(shipped_notebooks())
        if not args.list:
            raise CliInputError("notebook: name the notebook to copy; accepted: " + ", ".join(names))
        return {"notebooks": names}, "\n".join(names)
    path = copy_notebook(args.name, args.folder)
    return ({"copied": str(path)},
            f"wrote a fresh copy to {path}\nopen it with: {sys.executable} -m jupyter lab {path}")


_MOUNT_KINDS = ("quaternion", "euler", "rotation-vector", "matrix", "transform", "position-quaternion",
                "position-euler", "position-rotation-vector")


def _add_mount_parser(sub) -> None:
    """The ``mount`` verb: two logs of sensors on one rigid body -> clock offset, mount, the slip in B."""
    m = sub.add_parser("mount", help="time offset, rigid mount and the slip in stream B from two logs of one rigid "
                                     "body",
                       description="Two logs of sensors bolted to one rigid body, each in its own conventions and "
                                   "clock: the time offset (from angular speeds), the rigid mount (A X = X B) and "
                                   "the convention slip in how stream B's numbers are read. Stream A is the "
                                   "reference. Exit status 0: one explanation explains the data within the "
                                   "tolerances; 1: none does; 2: bad input.")
    m.add_argument("log_a", metavar="LOG_A", help="log of stream A, the reference (its numbers read as stated)")
    m.add_argument("log_b", metavar="LOG_B", help="log of stream B, the sensor whose reading is in doubt")
    for s, big in (("a", "A"), ("b", "B")):
        m.add_argument(f"--time-{s}", metavar="COLUMN", default=None,
                       help=f"LOG_{big}'s time column (seconds): a header name or 0-based number (default: the "
                            "column named time, t, timestamp, ...)")
        m.add_argument(f"--values-{s}", metavar="COLUMNS", default=None,
                       help=f"LOG_{big}'s value columns, names or 0-based numbers separated by commas, in the order "
                            "the reading takes them (default: every other column, in file order)")
        m.add_argument(f"--kind-{s}", choices=_MOUNT_KINDS, default=None,
                       help=f"what LOG_{big}'s numbers are (default: decided by their count)")
        m.add_argument(f"--reading-{s}", metavar="CONV", default=None,
                       help=f"how you read LOG_{big}'s numbers, posekit convention text, e.g. scalar=last or "
                            "'sequence=z-y-x unit=degrees' (default: posekit's defaults, none of them stated)")
    m.add_argument("--nominal-mount", metavar="TEXT", default=None,
                   help="the mount you expect, B's frame in A's body frame (e.g. from the drawing): numbers under "
                        "--reading-b (angles without a unit in degrees) or words; lets an axis remap of B be named")
    m.add_argument("--rotation-tolerance", type=_real("--rotation-tolerance", "degrees", "0.5", 1e-148, 180.0),
                   default=0.5, help="rotation residual accepted per pair, degrees (0.5)")
    m.add_argument("--translation-tolerance", type=_real("--translation-tolerance", "metres", "0.005", 1e-150,
                                                         1e150),
                   default=0.005, help="position residual accepted per pair, in A's length unit (0.005)")
    m.add_argument("--max-offset", type=_real("--max-offset", "seconds", "5", 1e-9, 1e12), default=None,
                   help="largest clock offset searched, seconds (default: any that leaves half the shorter "
                        "stream overlapping)")
    m.add_argument("--limit", type=_whole("--limit", "explanations", "5"), default=5,
                   help="how many explanations to list (5)")
    m.add_argument("--json", action="store_true", help="print JSON")
    m.add_argument("--curves", action="store_true",
                   help="with --json: add both angular speed curves and the speed correlation per trial offset")


def _mount(args) -> tuple[dict, str, bool]:
    from .analysis.alignment import StreamLogError, align_streams, read_stream_log
    from .analysis.diagnose import expected_pose

    if args.curves and not args.json:
        raise CliInputError("--curves adds the curves to the JSON output only; accepted: --curves together with "
                            "--json")
    if args.log_a == "-" and args.log_b == "-":
        raise CliInputError("LOG_A and LOG_B both read standard input (-); accepted: - for at most one of them")
    logs = []
    for s, big, path in (("a", "A", args.log_a), ("b", "B", args.log_b)):
        labels = {"source": f"LOG_{big} ({excerpt(path, 80)})", "time_column": f"--time-{s}",
                  "value_columns": f"--values-{s}"}
        try:
            logs.append(read_stream_log(path, getattr(args, f"time_{s}"), getattr(args, f"values_{s}"),
                                        labels=labels))
        except StreamLogError:
            raise
        except PoseInputError as exc:       # the file itself: say which of the two it is
            raise CliInputError(f"LOG_{big}: {exc}") from None
    nominal, nominal_words = None, None
    if args.nominal_mount is not None:
        try:
            pose = expected_pose(args.nominal_mount, None, args.reading_b)
        except PoseInputError as exc:
            raise CliInputError(f"--nominal-mount: {exc}") from None
        if pose.rotation.ndim != 2:
            raise CliInputError(f"--nominal-mount: holds {pose.rotation.shape[0]} poses; accepted: one mount")
        nominal = pose.rotation
        nominal_words = pose.guess.line() if pose.guess is not None else pose.reading
    labels = {"min_overlap": "the overlap needed (half the shorter stream)", "nominal_mount": "--nominal-mount",
              "max_offset": "--max-offset"}
    for s, big in (("a", "A"), ("b", "B")):
        labels.update({f"times_{s}": f"LOG_{big}'s time column (--time-{s})",
                       f"values_{s}": f"LOG_{big}'s value columns (--values-{s})", f"reading_{s}": f"--reading-{s}"})
    a, b = logs
    result = align_streams(a.times, a.values, args.reading_a, b.times, b.values, args.reading_b, kind_a=args.kind_a,
                           kind_b=args.kind_b, nominal_mount=nominal, max_offset=args.max_offset,
                           rotation_tolerance=math.radians(args.rotation_tolerance),
                           translation_tolerance=args.translation_tolerance, limit=args.limit, labels=labels)
    data = result.as_dict(curves=args.curves)
    data["logs"] = {big: {"source": log.source, "rows": int(len(log.times)), "time_column": log.time_column,
                          "value_columns": list(log.value_columns), "found_by_posekit": list(log.inferred)}
                    for big, log in (("A", a), ("B", b))}
    data["nominal_mount"] = None if nominal is None else {"text": args.nominal_mount, "read_as": nominal_words,
                                                          "rotation": nominal.tolist()}
    head, _, rest = result.summary().partition("\n")
    lines = [head, f"LOG_A {excerpt(args.log_a, 80)}: {a.words()}", f"LOG_B {excerpt(args.log_b, 80)}: {b.words()}"]
    if nominal_words is not None:
        lines.append(f"nominal mount {nominal_words}")
    return data, "\n".join(lines + [rest]), result.explained


def _add_motion_parser(sub) -> None:
    """The ``motion`` verb: one orientation log and a described motion (or a rate log) -> the log's reading."""
    m = sub.add_parser("motion", help="name the reading of a logged orientation stream from a described motion, or "
                                      "from a rate stream",
                       description="Name how a logged orientation stream's numbers were written, with no trusted "
                                   "pose: from what physically happened (--described 'tilted nose up about 90 "
                                   "degrees, then back', in forward-left-up body axes), or from a rate stream of "
                                   "the same body (--rates: body or world frame, degrees or radians per second, "
                                   "sign and axis order of the rates). Exit status 0: a reading explains the log "
                                   "within the tolerances; 1: none does; 2: bad input.")
    m.add_argument("log", metavar="LOG", help="the orientation log (CSV: a time column and the numbers), or -")
    m.add_argument("--described", metavar="TEXT", default=None,
                   help="what physically happened, e.g. 'turned left in place a full turn' or 'rolled 90 degrees "
                        "right, then pitched 90 degrees down'")
    m.add_argument("--rates", metavar="RATE_LOG", default=None,
                   help="a rate log of the same body (CSV: a time column and three rates) instead of a description")
    m.add_argument("--time", metavar="COLUMN", default=None,
                   help="LOG's time column (seconds): a header name or 0-based number (default: the column named "
                        "time, t, timestamp, ...)")
    m.add_argument("--values", metavar="COLUMNS", default=None,
                   help="LOG's value columns, names or 0-based numbers separated by commas (default: every other "
                        "column, in file order)")
    m.add_argument("--kind", choices=_MOUNT_KINDS, default=None,
                   help="what LOG's numbers are (default: decided by their count)")
    m.add_argument("--reading", metavar="CONV", default=None,
                   help="how you read LOG's numbers, posekit convention text, e.g. scalar=last or "
                        "'sequence=z-y-x unit=degrees'")
    m.add_argument("--mount", metavar="MOUNT", default=None,
                   help="with --described: the sensor's frame in the body frame, 'identity' or 9 numbers of the "
                        "rotation matrix row by row (default: unknown, fitted; remaps of the sensor's axes are then "
                        "not tested)")
    m.add_argument("--angle-tolerance", type=_real("--angle-tolerance", "degrees", "10", 1e-6, 180.0), default=10.0,
                   help="with --described: how far a measured angle may be from the described one, degrees (10; "
                        "'about' angles get a fifth of themselves when that is more)")
    m.add_argument("--axis-tolerance", type=_real("--axis-tolerance", "degrees", "10", 1e-6, 180.0), default=10.0,
                   help="with --described: how far a turn's axis may stray, degrees (10)")
    m.add_argument("--rate-time", metavar="COLUMN", default=None, help="RATE_LOG's time column (as --time)")
    m.add_argument("--rate-values", metavar="COLUMNS", default=None,
                   help="RATE_LOG's three rate columns (default: every other column, in file order)")
    m.add_argument("--rate-reading", metavar="TEXT", default=None,
                   help="how you read the rates: frame=body|world unit=radians|degrees (per second)")
    m.add_argument("--offset", type=_real("--offset", "seconds", "0", -1e12, 1e12), default=None,
                   help="with --rates: seconds to add to the rate stamps (0 when both share one clock; default: "
                        "found from the angular speeds)")
    m.add_argument("--max-offset", type=_real("--max-offset", "seconds", "5", 1e-9, 1e12), default=None,
                   help="with --rates: largest clock offset searched, seconds")
    m.add_argument("--rotation-tolerance", type=_real("--rotation-tolerance", "degrees", "1", 1e-6, 180.0),
                   default=1.0, help="with --rates: rms residual accepted per interval, degrees (1)")
    m.add_argument("--limit", type=_whole("--limit", "explanations", "5"), default=5,
                   help="how many explanations to list (5)")
    m.add_argument("--json", action="store_true", help="print JSON")


def _motion_mount(text):
    """--mount: None, 'identity', or nine numbers of a rotation matrix, row by row."""
    from .io.paste import parse_numbers

    if text is None or text.strip().lower() == "identity":
        return None if text is None else "identity"
    try:
        nums = np.asarray(parse_numbers(text).numbers, dtype=float).reshape(-1)
    except PoseInputError as exc:
        raise CliInputError(f"--mount: {exc}") from None
    if nums.size != 9:
        raise CliInputError(f"--mount: got {nums.size} numbers; accepted: 'identity' or the 9 numbers of the sensor "
                            "frame's rotation in the body frame, row by row")
    return nums.reshape(3, 3)


def _motion(args) -> tuple[dict, str, bool]:
    from .analysis.alignment import StreamLogError, read_stream_log
    from .analysis.motion import explain_known_motion, explain_rates

    if (args.described is None) == (args.rates is None):
        raise CliInputError("motion: give --described TEXT (what physically happened) or --rates RATE_LOG (a rate "
                            "log of the same body); accepted: exactly one of the two")
    if args.rates is None:
        given = [f for f, v in (("--rate-time", args.rate_time), ("--rate-values", args.rate_values),
                                ("--rate-reading", args.rate_reading), ("--offset", args.offset),
                                ("--max-offset", args.max_offset)) if v is not None]
    else:
        given = [f for f, v in (("--mount", args.mount),) if v is not None]
    if given:
        other = "--rates" if args.rates is None else "--described"
        raise CliInputError(f"motion: {', '.join(given)} only apply with {other}, and would be ignored; accepted: "
                            f"those options together with {other}")
    if args.log == "-" and args.rates == "-":
        raise CliInputError("LOG and RATE_LOG both read standard input (-); accepted: - for at most one of them")
    sources = [("LOG", args.log, args.time, args.values, "--time", "--values")]
    if args.rates is not None:
        sources.append(("RATE_LOG", args.rates, args.rate_time, args.rate_values, "--rate-time", "--rate-values"))
    logs = []
    for name, path, time_col, value_cols, time_flag, values_flag in sources:
        labels = {"source": f"{name} ({excerpt(path, 80)})", "time_column": time_flag, "value_columns": values_flag}
        try:
            logs.append(read_stream_log(path, time_col, value_cols, labels=labels))
        except StreamLogError:
            raise
        except PoseInputError as exc:
            raise CliInputError(f"{name}: {exc}") from None
    log = logs[0]
    lines_in = [f"LOG {excerpt(args.log, 80)}: {log.words()}"]
    if args.rates is None:
        if not args.described.strip():
            raise CliInputError("--described is blank; accepted: what physically happened, e.g. 'turned left in "
                                "place a full turn'")
        result = explain_known_motion(log.times, log.values, args.reading, args.described, kind=args.kind,
                                      mount=_motion_mount(args.mount),
                                      angle_tolerance=math.radians(args.angle_tolerance),
                                      axis_tolerance=math.radians(args.axis_tolerance), limit=args.limit)
    else:
        rates = logs[1]
        lines_in.append(f"RATE_LOG {excerpt(args.rates, 80)}: {rates.words()}")
        result = explain_rates(rates.times, rates.values, log.times, log.values, args.reading,
                               rates_reading=args.rate_reading, kind=args.kind, offset=args.offset,
                               max_offset=args.max_offset, rotation_tolerance=math.radians(args.rotation_tolerance),
                               limit=args.limit)
    data = result.as_dict()
    data["logs"] = {name: {"source": lg.source, "rows": int(len(lg.times)), "time_column": lg.time_column,
                           "value_columns": list(lg.value_columns), "found_by_posekit": list(lg.inferred)}
                    for name, lg in zip(("LOG", "RATE_LOG"), logs)}
    head, _, rest = result.summary().partition("\n")
    return data, "\n".join([head, *lines_in, rest]), result.explained


#: ``scan``'s choices, written out so that building the parser imports no analysis code (tests check they match).
_SCAN_KINDS = ("quaternion", "euler", "matrix")
_SCAN_READERS = ("auto", "pyarrow", "python")
_SCAN_SCHEDULERS = ("auto", "threads", "processes", "serial")
_SCAN_CHECKS = ("rate_limit", "gap_limit", "gap_factor", "lock_margin", "norm_tolerance", "matrix_tolerance")


def _add_scan_parser(sub) -> None:
    """The ``scan`` verb: one log, or a folder or glob of logs -> trajectory findings per file."""
    s = sub.add_parser("scan", help="check one log, or a folder or glob of logs, for trajectory findings",
                       description="Check one CSV or Parquet log, or a folder or glob of them (in parallel on Dask "
                                   "when it is installed), for quaternion sign flips, Euler wraps, gimbal lock, "
                                   "norm drift, time faults and turn rates; one block of findings per file. Exit "
                                   "status 0: every file checked and nothing found; 1: something found (a finding, "
                                   "a rejected row) or a file that could not be checked (named with its error); 2: "
                                   "bad arguments, or no file could be checked at all.")
    s.add_argument("sources", nargs="+", metavar="LOG",
                   help="a CSV or Parquet log, a folder (the .csv .tsv .txt .parquet .pq files directly inside), or a "
                        "glob such as 'logs/**/*.csv' (quoted, so that posekit expands it)")
    s.add_argument("--kind", choices=_SCAN_KINDS, default=None,
                   help="what the pose columns hold (default: found from the header names)")
    s.add_argument("--reading", dest="convention", metavar="CONV", default=None,
                   help="how the numbers are read, posekit convention text, e.g. scalar=last or "
                        "'sequence=z-y-x unit=degrees' (default: posekit's defaults)")
    s.add_argument("--time", dest="time_column", metavar="COLUMN", default=None,
                   help="the time column: a header name or a 0-based number (default: found from the header)")
    s.add_argument("--values", dest="value_columns", metavar="COLUMNS", default=None,
                   help="the pose columns, names or 0-based numbers separated by commas, in the order the convention "
                        "reads them (needs --time)")
    s.add_argument("--delimiter", metavar="CHAR", default=None,
                   help="the field delimiter of CSV logs: one character, or 'tab' (default: found from the first line)")
    s.add_argument("--comment", metavar="TEXT", default="#", help="lines starting with this are skipped ('#')")
    s.add_argument("--no-comments", action="store_true", help="no line is a comment")
    for flag, unit, example in (("--rate-limit", "degrees or radians (the convention's unit) per time unit", "90"),
                                ("--gap-limit", "time units", "0.5"),
                                ("--gap-factor", "times the median time step", "5"),
                                ("--lock-margin", "degrees or radians (the convention's unit)", "5"),
                                ("--norm-tolerance", "quaternion length", "0.001"),
                                ("--matrix-tolerance", "|M^T M - I|", "1e-6")):
        s.add_argument(flag, type=_real(flag, unit, example, 1e-300, 1e300), default=None,
                       help=f"in {unit} (default: that of check_trajectory)")
    s.add_argument("--reader", choices=_SCAN_READERS, default="auto",
                   help="CSV reader: pyarrow when installed (auto), or the pure-Python one")
    s.add_argument("--scheduler", choices=_SCAN_SCHEDULERS, default="auto",
                   help="where the files are checked: Dask threads when dask is installed (auto), Dask processes, or "
                        "one after another (serial)")
    s.add_argument("--workers", type=_whole("--workers", "workers", "2"), default=None,
                   help="how many files at a time (default: the number of processors)")
    s.add_argument("--cluster", metavar="ADDRESS", default=None,
                   help="run on a running Dask cluster, e.g. tcp://10.0.0.5:8786 (needs the package distributed)")
    s.add_argument("--no-progress", action="store_true",
                   help="no progress bar (shown on standard error when it is a terminal and the work takes long)")
    s.add_argument("--input-limit", type=_whole("--input-limit", "bytes", "4GiB", sizes=True), default=None,
                   metavar="BYTES", help="the most bytes read from each log (default 1 GiB); e.g. 4GiB")
    s.add_argument("--json", action="store_true", help="print JSON")


def _scan_column(text: str):
    """A column given on the command line: 0-based number when all digits, else a header name."""
    text = text.strip()
    return int(text) if text.isascii() and text.isdigit() else text


def _plain(value):
    """A table value for JSON: NaN and missing as None, numpy numbers as Python ones."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return None
    if hasattr(value, "item"):
        value = value.item()
    try:
        if value != value:     # pandas' missing value (NA) is not equal to itself, nor anything else
            return None
    except TypeError:          # comparing NA raises in a boolean context: missing
        return None
    return value


#: keyword arguments of check_logs named in its messages, and the scan flags that set them
_SCAN_FLAGS = (("time_column= and value_columns=", "--time and --values"), ("value_columns=", "--values"),
               ("time_column=", "--time"), ("convention=", "--reading"))
#: numbers per row of each kind scan reads
_SCAN_COUNTS = {"quaternion": 4, "euler": 3, "matrix": 9}


def _scan(args) -> tuple[dict, str, bool]:
    from .analysis.fleet import check_logs
    from .explain import stated_reading
    from .core.reading import as_convention
    from .io.limits import LOG_LIMIT

    if args.cluster is not None and args.scheduler != "auto":
        raise CliInputError(f"--cluster and --scheduler {args.scheduler} both given; accepted: one of them (a "
                            "cluster runs the work itself)")
    if args.value_columns is not None and args.time_column is None:
        raise CliInputError("--values given without --time; accepted: both, or neither to find them "
                            "from the header")
    as_convention(args.convention)                              # a bad convention is said once, not per file
    delimiter = "\t" if args.delimiter in ("tab", "\\t") else args.delimiter
    checks = {k: getattr(args, k) for k in _SCAN_CHECKS if getattr(args, k) is not None}
    df = check_logs(args.sources if len(args.sources) > 1 else args.sources[0], kind=args.kind,
                    convention=args.convention,
                    time_column=None if args.time_column is None else _scan_column(args.time_column),
                    value_columns=None if args.value_columns is None else
                    [_scan_column(c) for c in args.value_columns.split(",")],
                    delimiter=delimiter, comment=None if args.no_comments else args.comment,
                    limit=args.input_limit or LOG_LIMIT, reader=args.reader, scheduler=args.scheduler,
                    workers=args.workers, address=args.cluster, progress=False if args.no_progress else None, **checks)
    files = []
    for path, rows in df.groupby("file", sort=False):
        first = rows.iloc[0]
        entry = {"file": path, "status": first["status"], "rows": _plain(first["log_rows"]),
                 "used": _plain(first["used"]), "kind": _plain(first["kind"]),
                 "error_type": _plain(first["error_type"]), "error": _plain(first["error"]), "findings": {}}
        if entry["error"]:  # the API's keyword names, said as this command's flags
            for keyword, flag in _SCAN_FLAGS:
                entry["error"] = entry["error"].replace(keyword, flag)
        if entry["kind"] in _SCAN_COUNTS:  # how the file's numbers were read: stated fields and defaults
            entry["reading"] = stated_reading(_SCAN_COUNTS[entry["kind"]], entry["kind"], args.convention).said_back()
        if first["status"] != "failed":
            for _, row in rows.iterrows():
                entry["findings"][row["finding"]] = {k: _plain(row[k]) for k in (
                    "checked", "rows", "spans", "first_row", "first_time", "last_row", "last_time", "detail")}
        files.append(entry)
    counts = {status: sum(f["status"] == status for f in files) for status in ("clean", "findings", "failed")}
    failed = [f for f in files if f["status"] == "failed"]
    if len(failed) == len(files):
        if len(files) == 1:
            raise CliInputError(failed[0]["error"])
        raise CliInputError(f"none of the {len(files)} logs could be checked; the first, "
                            f"{excerpt(failed[0]['file'], 80)}: {failed[0]['error']}")
    lines = [f"scanned {len(files)} log{'s' if len(files) > 1 else ''} ({counts['clean']} clean, {counts['findings']} "
             f"with findings, {counts['failed']} failed) on {df.attrs['scheduler']}"]
    for f in files:
        if f["status"] == "failed":
            lines.append(f"{f['file']}: failed: {f['error_type']}: {f['error']}")
            continue
        lines.append(f"{f['file']}: {f['status']}: {f['rows']} rows, {f['used']} used; {f['reading']}")
        lines.extend(f"  {v['detail']}" for v in f["findings"].values() if v["rows"])
    data = {"scheduler": df.attrs["scheduler"], "counts": counts, "files": files}
    return data, "\n".join(lines), counts["clean"] == len(files)


_CARET = re.compile(r"\s*\^\s*")
_ESCAPED = re.compile(r"\\(?:u([0-9a-fA-F]{4})|x([0-9a-fA-F]{2}))")


def _one_line(message: str, cap: int = 2000) -> str:
    """A message as one line for standard error.

    The echoed input line and the caret under it (which a one-line message cannot
    align) are dropped; line, column and offset stay in the words.  (Values are already
    short excerpts: every posekit message quotes them with ``core.errors.excerpt``.)  Control, bidirectional and
    invisible characters (typed, or escaped as ``\\u202e`` by repr) are shown as
    ``<U+XXXX>``, and a line longer than ``cap`` keeps its head and its tail (where
    "accepted: ..." is).

    >>> _one_line("bad at line 1, column 3 (offset 2):\\n1 x\\n  ^\\naccepted: numbers")
    'bad at line 1, column 3 (offset 2); accepted: numbers'
    """
    kept: list[str] = []
    previous_kept = False
    for part in message.split("\n"):
        if _CARET.fullmatch(part):
            if previous_kept:  # the echoed input line the caret points into
                kept.pop()
            previous_kept = False
            continue
        previous_kept = bool(part.strip())
        if previous_kept:
            kept.append(part.strip())
    text = "; ".join(k[:-1] if k.endswith(":") and i < len(kept) - 1 else k for i, k in enumerate(kept))
    text = _ESCAPED.sub(lambda m: isolate_controls(chr(int(m.group(1) or m.group(2), 16)))
                        if not chr(int(m.group(1) or m.group(2), 16)).isprintable() else m.group(0), text)
    text = isolate_controls(text)
    if len(text) > cap:
        text = f"{text[:cap - 500]} ... ({len(text) - cap + 3} characters left out) ... {text[-497:]}"
    return text


#: Options whose values are words posekit knows (conventions, kinds): only ASCII is meaningful there.
_WORD_OPTIONS = ("source", "target", "from_kind", "to_kind", "expected_convention", "assumed", "expected_kind",
                 "assumed_kind", "name", "reading", "reading_a", "reading_b", "kind", "kind_a", "kind_b",
                 "rate_reading", "convention")


def _look_alike_words(args, message: str) -> str:
    """Name the non-ASCII characters of a word option (a Cyrillic 'а' looks like 'a'), unless the message does."""
    found = []
    for option in _WORD_OPTIONS:
        value = getattr(args, option, None)
        if isinstance(value, str) and not value.isascii():
            odd = [o for o in odd_characters(value[:200]) if re.search(r"U\+[0-9A-F]{4,}", o).group(0) not in message]
            if odd:
                flag = {"source": "--from", "target": "--to", "name": "NAME", "convention": "--reading"}.get(option,
                                                                                 "--" + option.replace("_", "-"))
                found.append(f"{flag} holds {'; '.join(odd[:3])}")
    if not found:
        return ""
    return ("; note: " + "; ".join(isolate_controls(f) for f in found)
            + " (characters outside printable ASCII; some look like ASCII ones)")


def _has_module(name: str) -> bool:
    import importlib.util

    return importlib.util.find_spec(name) is not None


def main(argv=None) -> int:
    """Run the command line; returns the exit status (0 ok, 1 diagnose: no single slip explains the numbers
    within the tolerances, 2 bad input, 3 tour cannot start)."""
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        if args.verb == "tour":
            return _tour(args.folder, args.print_command)
        handler = {"diagnose": _diagnose, "convert": _convert, "check": _check, "notebook": _notebook,
                   "mount": _mount, "motion": _motion, "scan": _scan}[args.verb]
        with warnings.catch_warnings(record=True) as caught:  # numpy's overflow notes: said once, on one line
            warnings.simplefilter("default")
            data, text, *found = handler(args)
    except PoseInputError as exc:
        print(f"posekit {args.verb}: error: {_one_line(str(exc))}{_look_alike_words(args, str(exc))}",
              file=sys.stderr)
        return 2
    except RecursionError:  # brackets nested deeper than Python's stack: refused, no traceback
        print(f"posekit {args.verb}: error: the input is nested too deeply to read (brackets inside brackets "
              f"beyond {sys.getrecursionlimit() // 4} levels or so); accepted: numbers in at most a few levels of "
              "brackets, e.g. [[1, 0, 0], [0, 1, 0], [0, 0, 1]]", file=sys.stderr)
        return 2
    except OSError as exc:  # a folder that cannot be written: say which, no traceback
        where = excerpt(str(exc.filename), 80) if exc.filename else "the folder given"
        print(f"posekit {args.verb}: error: could not write the copy: {_one_line(str(exc.strerror or exc))} "
              f"({where}); accepted: a folder you can write, given with --folder", file=sys.stderr)
        return 2
    for note in dict.fromkeys(_one_line(str(w.message)) for w in caught):
        print(f"posekit {args.verb}: warning: {note}", file=sys.stderr)
    try:
        print(json.dumps(data, indent=2) if getattr(args, "json", False) else text)
        sys.stdout.flush()
    except BrokenPipeError:
        # the reader (e.g. `| head`) closed the pipe early: not an error of ours, and no traceback
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    return 0 if not found or found[0] else 1


if __name__ == "__main__":  # pragma: no cover - exercised through subprocess in the tests
    sys.exit(main())
