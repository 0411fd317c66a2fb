"""posekit on the command line: name the broken convention, convert, check, open the tour.

Verbs::

    posekit diagnose --expected TEXT --observed TEXT [options]
    posekit diagnose --expected-file FILE --observed-file FILE [options]   # one pose per line
    posekit convert NUMBERS --to-kind KIND [--from-kind KIND] [--from CONV] [--to CONV]
    posekit check NUMBERS
    posekit tour [--folder DIR] [--print-command]
    posekit notebook NAME [--folder DIR]        # or: posekit notebook --list

Every NUMBERS / TEXT argument is pasted text as :func:`posekit.analysis.parse_numbers`
reads it, or ``-`` to read standard input.  Convention arguments use posekit's text
form (``Convention.parse``), e.g. ``"scalar=last"`` or ``"sequence=x-y-z axes=extrinsic
unit=degrees"``.  ``--json`` prints one JSON object instead of text.  Exit status: 0 on
success, 1 when ``diagnose`` finds no single slip that explains the numbers within the
tolerances, 2 for bad input (the message goes to standard error), 3 when the tour cannot
start (JupyterLab is not installed: the message names the extra to install).
"""

from __future__ import annotations

import argparse
import json
import math
import os
import shutil
import subprocess
import sys

import numpy as np

from .core.errors import PoseInputError

__all__ = ["main", "build_parser"]

_ROTATION_KINDS = ("matrix", "quaternion", "euler", "rotation-vector", "axis-angle")
_TRANSFORM_KINDS = ("transform", "position-quaternion", "position-euler")


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(prog="posekit", description="Find the convention that broke a pose.")
    sub = p.add_subparsers(dest="verb", metavar="VERB")
    sub.required = True

    d = sub.add_parser("diagnose", help="rank explanations of how the observed numbers came from the expected pose")
    d.add_argument("--expected", help="expected pose: numbers, or words such as 'pitched 25 degrees down, 0.3 m "
                                      "forward' (forward=+x, left=+y, up=+z)")
    d.add_argument("--expected-kind", help="kind of the expected numbers (default: by count)")
    d.add_argument("--expected-convention", help="convention of the expected numbers (posekit text form)")
    d.add_argument("--observed", help="observed numbers as pasted")
    d.add_argument("--assumed", help="convention you read the observed numbers with (default: the expected one)")
    d.add_argument("--assumed-kind", help="kind you read the observed numbers as (default: by count)")
    d.add_argument("--expected-file", help="batch: file with one expected pose per line")
    d.add_argument("--observed-file", help="batch: file with one observed pose per line")
    d.add_argument("--reflections", action="store_true", default=True,
                   help="score the 24 remaps with a handedness flip too (the default)")
    d.add_argument("--no-reflections", dest="reflections", action="store_false",
                   help="leave handedness flips out (faster; a reflected input then stays unexplained)")
    d.add_argument("--rotation-tolerance", type=float, default=0.5, help="rotation noise scale in degrees (0.5)")
    d.add_argument("--translation-tolerance", type=float, default=0.005, help="translation noise scale in metres")
    d.add_argument("--limit", type=int, default=5, help="how many explanations to show (5)")
    d.add_argument("--json", action="store_true", help="print JSON")

    c = sub.add_parser("convert", help="convert numbers between representations and conventions")
    c.add_argument("numbers", help="numbers as pasted, or - for standard input")
    c.add_argument("--from-kind", help="kind of the input (default: by count; 3 numbers are Euler angles)")
    c.add_argument("--from", dest="source", default=None, help="convention of the input (posekit text form)")
    c.add_argument("--to-kind", required=True, help="kind to write: " + ", ".join(_ROTATION_KINDS + _TRANSFORM_KINDS))
    c.add_argument("--to", dest="target", default=None, help="convention to write (posekit text form)")
    c.add_argument("--normalise", action="store_true", help="divide a quaternion by its length on purpose")
    c.add_argument("--json", action="store_true", help="print JSON")

    k = sub.add_parser("check", help="validate one input and list every way it can be read")
    k.add_argument("numbers", help="numbers as pasted, or - for standard input")
    k.add_argument("--json", action="store_true", help="print JSON")

    tour = sub.add_parser("tour", help="copy the notebook tour into a folder of yours and open it in JupyterLab")
    tour.add_argument("--folder", default=".", help="where the fresh copy goes (default: the working folder)")
    tour.add_argument("--print-command", action="store_true",
                      help="copy the tour, print the command that would open it, and do not run it")
    nb = sub.add_parser("notebook", help="copy a notebook posekit ships (e.g. the bug-report template) into a folder")
    nb.add_argument("name", nargs="?", help="which notebook: tour, bug-report-template, convention-walkthrough")
    nb.add_argument("--folder", default=".", help="where the fresh copy goes (default: the working folder)")
    nb.add_argument("--list", action="store_true", help="list the notebooks posekit ships")
    return p


def _text(value: str | None, what: str) -> str:
    if value is None:
        raise PoseInputError(f"{what} is missing; give it as text (or - for standard input)")
    if value == "-":
        return sys.stdin.read()
    return value


def _read_lines(path: str, what: str) -> np.ndarray:
    from .analysis.parse import parse_numbers

    try:
        with open(path, encoding="utf-8") as fh:
            lines = [ln for ln in fh.read().splitlines() if ln.strip() and not ln.lstrip().startswith("#")]
    except OSError as exc:
        raise PoseInputError(f"{what}: cannot read file {path!r} ({exc.strerror}); expected a text file with one "
                             "pose per line") from None
    except UnicodeDecodeError as exc:
        raise PoseInputError(f"{what}: file {path!r} is not UTF-8 text (byte 0x{exc.object[exc.start]:02x} at offset "
                             f"{exc.start}); save it as UTF-8, one pose per line") from None
    if not lines:
        raise PoseInputError(f"{what}: file {path!r} holds no poses; expected one pose per line")
    rows = []
    for n, line in enumerate(lines, start=1):
        try:
            rows.append(parse_numbers(line).numbers)
        except PoseInputError as exc:
            raise PoseInputError(f"{what}: line {n} of {path!r}: {exc}") from None
    widths = {len(r) for r in rows}
    if len(widths) != 1:
        raise PoseInputError(f"{what}: the lines of {path!r} hold different counts of numbers {sorted(widths)}; "
                             "expected the same count on every line")
    return np.array(rows)


def _diagnose(args) -> tuple[dict, str]:
    from .analysis.diagnose import diagnose, diagnose_batch, expected_pose

    tol_r = math.radians(args.rotation_tolerance)
    if args.expected_file or args.observed_file:
        if not (args.expected_file and args.observed_file):
            raise PoseInputError("batch mode needs both --expected-file and --observed-file")
        exp = _read_lines(args.expected_file, "expected poses")
        obs = _read_lines(args.observed_file, "observed poses")
        if len(exp) != len(obs):
            raise PoseInputError(f"batch mode: {len(exp)} expected poses but {len(obs)} observed ones; expected "
                                 "one observed line per expected line")
        exp_pose = expected_pose(exp, args.expected_kind, args.expected_convention)
        result = diagnose_batch(exp_pose, obs, assumed=args.assumed, assumed_kind=args.assumed_kind,
                                   expected_convention=args.expected_convention, reflections=args.reflections,
                                   rotation_tolerance=tol_r, translation_tolerance=args.translation_tolerance,
                                   limit=args.limit)
        return result.as_dict(), result.summary(), result.explained
    expected = _text(args.expected, "--expected")
    observed = _text(args.observed, "--observed")
    result = diagnose(expected, observed, assumed=args.assumed, assumed_kind=args.assumed_kind,
                         expected_kind=args.expected_kind, expected_convention=args.expected_convention,
                         reflections=args.reflections, rotation_tolerance=tol_r,
                         translation_tolerance=args.translation_tolerance, limit=args.limit)
    return result.as_dict(), result.summary(args.limit), result.explained


def _kind_by_count(n: int) -> str:
    kinds = {3: "euler", 4: "quaternion", 9: "matrix", 6: "position-euler", 7: "position-quaternion",
             12: "transform", 16: "transform"}
    if n not in kinds:
        raise PoseInputError(f"convert: got {n} numbers; expected 3, 4, 6, 7, 9, 12 or 16 (or give --from-kind)")
    return kinds[n]


def _convert(args) -> tuple[dict, str]:
    import posekit as pk
    from .analysis.parse import parse_numbers

    parsed = parse_numbers(_text(args.numbers, "numbers"))
    nums = np.asarray(parsed.numbers)
    kind = args.from_kind or _kind_by_count(nums.size)
    allowed = _ROTATION_KINDS + _TRANSFORM_KINDS
    for k, flag in ((kind, "--from-kind"), (args.to_kind, "--to-kind")):
        if k not in allowed:
            raise PoseInputError(f"convert: {flag} {k!r} is not a kind posekit knows; accepted: {', '.join(allowed)}")
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
            raise PoseInputError(f"convert: a {kind} has no translation, so it cannot be written as {args.to_kind}; "
                                 f"accepted targets: {', '.join(_ROTATION_KINDS)}")
        out = pk.write_rotation(r, args.to_kind, target, flat=args.to_kind == "matrix")
    out = np.round(np.asarray(out, dtype=float), 12) + 0.0
    data = {"from_kind": kind, "from": source.to_text(), "to_kind": args.to_kind, "to": target.to_text(),
            "numbers": out.reshape(-1).tolist()}
    text = (f"read as {kind} under: {source.to_text()}\nwritten as {args.to_kind} under: {target.to_text()}\n"
            + " ".join(f"{v:.12g}" for v in out.reshape(-1)))
    return data, text


def _check(args) -> tuple[dict, str]:
    from .analysis.parse import parse_numbers

    parsed = parse_numbers(_text(args.numbers, "numbers"))
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
            raise PoseInputError("notebook: name the notebook to copy; posekit ships: " + ", ".join(names))
        return {"notebooks": names}, "\n".join(names)
    path = copy_notebook(args.name, args.folder)
    return ({"copied": str(path)},
            f"wrote a fresh copy to {path}\nopen it with: {sys.executable} -m jupyter lab {path}")


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
        handler = {"diagnose": _diagnose, "convert": _convert, "check": _check, "notebook": _notebook}[args.verb]
        data, text, *found = handler(args)
    except PoseInputError as exc:
        print(f"posekit {args.verb}: error: {exc}", file=sys.stderr)
        return 2
    except OSError as exc:  # a folder that cannot be written: say which, no traceback
        print(f"posekit {args.verb}: error: could not write the copy: {exc.strerror or exc} "
              f"({exc.filename or 'the folder given'}); choose a folder you can write with --folder", file=sys.stderr)
        return 2
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
