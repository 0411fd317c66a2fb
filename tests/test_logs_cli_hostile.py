"""Hostile logs and command lines: every bad input is a typed error or a listed row, said in one clear line.

Three parts:

- a generated catalogue of hostile CSV logs (field counts, text and look-alike digits in numeric columns,
  quoting, encodings, empty files, headers with doubled or odd names, bad arguments, size limits), each
  asserting the error class (or the rejected row, its line and its reason) and that the message says
  what is accepted;
- a generated catalogue of hostile command lines over every verb, each asserting exit code 2, nothing on
  standard output and one line on standard error that names what is accepted, with long values cut to
  an excerpt and control or bidirectional characters shown as <U+XXXX>;
- a trajectory log of more than 1e5 rows with quaternion sign flips placed exactly on the scanner's
  chunk boundaries (``posekit.analysis.trajectory._CHUNK``) and bad rows on the reader's block boundaries
  (``posekit.io.logs.LOG_CHUNK``), and round trips of CSV text against Python's csv module.

Outside references: Python's csv module (how fields are split and quoted, and which quoting is bad),
Python's float (the numbers written with repr read back exactly), scipy.spatial.transform.Rotation (the
quaternions of the invented trajectory), and q and -q naming one rotation (double cover, common practice).
All logs here are invented test data; the expected lines are where the faults were put.
"""

from __future__ import annotations

import contextlib
import csv
import io
import os
import re
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from scipy.spatial.transform import Rotation

from posekit.analysis import (EmptyTrajectoryError, MissingColumnError, TrajectoryInputError, check_trajectory,
                              check_trajectory_csv, read_trajectory_csv)
from posekit.analysis import trajectory as trajectory_module
from posekit.core.errors import PoseInputError, WrongShapeError, WrongTypeError
from posekit.io.limits import PASTE_LIMIT, FileReadError, InputTooLargeError
from posekit.io.logs import LOG_CHUNK, DuplicateColumnError, LogReadError, LogTooLargeError, read_log

ROOT = Path(__file__).resolve().parents[1]
#: A message "says what is accepted" when it names it: accepted ..., expected ..., or the list of what exists.
ACCEPTS = re.compile(r"accepted|expected|ships:|use lower case|give a folder", re.IGNORECASE)
HEADER = "time,qw,qx,qy,qz"


def clean_rows(n: int = 8) -> list[str]:
    """Rows of a slow yaw turn, quaternions from scipy (as_quat scalar last, reordered to w, x, y, z)."""
    q = Rotation.from_euler("z", np.linspace(0.0, 0.7, n)[:, None]).as_quat()   # scipy: scalar last
    return [",".join(repr(float(v)) for v in (0.1 * i, q[i, 3], q[i, 0], q[i, 1], q[i, 2])) for i in range(n)]


def log_with(row_index: int, new_row: str, n: int = 8) -> str:
    rows = clean_rows(n)
    rows[row_index] = new_row
    return HEADER + "\n" + "\n".join(rows) + "\n"


def field_replaced(row_index: int, column: int, value: str, n: int = 8) -> str:
    fields = clean_rows(n)[row_index].split(",")
    fields[column] = value
    return log_with(row_index, ",".join(fields), n)


# --------------------------------------------------------------------------------------------- CSV catalogue
# Each case: (id, content (str or bytes), keyword arguments, expectation).  Expectations:
#   ("raises", ErrorClass, [words])           the read or the check raises that class, message with the words
#   ("rejects", line, [words])                the row on that file line is rejected, reason with the words,
#                                             every other row is used

CSV_CASES: list[tuple] = []


def case(cid, content, kwargs, expect):
    CSV_CASES.append(pytest.param(content, kwargs, expect, id=cid))


# field counts: extra fields are never cut, missing ones never padded
for k in (0, 3, 7):
    row = clean_rows()[k]
    case(f"extra-field-row{k}", log_with(k, row + ",9"), {}, ("rejects", k + 2, ["has 6 fields, expected 5"]))
    case(f"extra-empty-field-row{k}", log_with(k, row + ","), {}, ("rejects", k + 2, ["has 6 fields"]))
    case(f"missing-field-row{k}", log_with(k, row.rsplit(",", 1)[0]), {}, ("rejects", k + 2, ["has 4 fields"]))
    case(f"time-only-row{k}", log_with(k, row.split(",")[0]), {}, ("rejects", k + 2, ["has 1 fields"]))
    case(f"quoted-comma-extra-row{k}", log_with(k, row + ',"a, b"'), {}, ("rejects", k + 2, ["has 6 fields"]))

# text and look-alike digits in a numeric column (the reason names a non-ASCII character by its code point)
for cid, value, words in [
    ("word", "abc", ["'abc'"]), ("fullwidth-one", "\uff11", ["U+FF11"]), ("arabic-indic-one", "\u0661", ["U+0661"]),
    ("devanagari-three", "\u0969", ["U+0969"]), ("vulgar-half", "\u00bd", ["U+00BD"]),
    ("superscript-four", "\u2074", ["U+2074"]), ("underscore-digits", "1_0", ["'1_0'"]),
    ("hex", "0x1", ["'0x1'"]), ("double-sign", "--1", ["'--1'"]), ("bare-exponent", "1e", ["'1e'"]),
    ("two-points", "1.0.0", ["'1.0.0'"]), ("nan-payload", "nan(1)", ["'nan(1)'"]),
    ("quoted-decimal-comma", '"0,5"', ["'0,5'"]), ("bidi-inside", "0\u202e1", ["<U+202E>"]),
]:
    case(f"text-{cid}", field_replaced(3, 2, value), {}, ("rejects", 5, ["numeric column qx", "accepted"] + words))
case("empty-qw", field_replaced(2, 1, ""), {}, ("rejects", 4, ["column qw is empty"]))
case("empty-time", field_replaced(5, 0, "  "), {}, ("rejects", 7, ["column time is empty"]))
case("nan-row", field_replaced(4, 1, "nan"), {}, ("rejects", 6, ["NaN or infinity in column qw"]))

# quoting: what Python's csv module (strict) refuses is a row rejected with the quoting reason
for cid, value in [("text-after-quote", '"1"x'), ("unclosed-quote", '"1'), ("space-after-quote", '"1" ')]:
    bad = field_replaced(4, 3, value)
    line = bad.splitlines()[5]
    with contextlib.suppress(csv.Error):
        list(csv.reader([line], strict=True, skipinitialspace=True))
        raise AssertionError(f"the csv module reads {line!r}; this case needs a line it refuses")
    case(f"quoting-{cid}", bad, {}, ("rejects", 6, ["quoting cannot be read as CSV"]))

# encodings and binary content
case("latin1-row", (log_with(2, clean_rows()[2].replace("0.2", "0.2\xe9", 1))).encode("latin-1"), {},
     ("raises", LogReadError, ["not UTF-8", "0xe9", "line 4"]))
case("latin1-header", ("time,q\xe9w,qx,qy,qz\n" + "\n".join(clean_rows())).encode("latin-1"), {},
     ("raises", LogReadError, ["0xe9", "line 1, column 7"]))
case("utf16-le", b"\xff\xfe" + log_with(0, clean_rows()[0]).encode("utf-16-le"), {},
     ("raises", LogReadError, ["UTF-16"]))
case("utf16-be", b"\xfe\xff" + log_with(0, clean_rows()[0]).encode("utf-16-be"), {},
     ("raises", LogReadError, ["UTF-16"]))
case("nul-row", log_with(1, clean_rows()[1] + "\x00").encode(), {}, ("raises", LogReadError, ["NUL", "line 3"]))
case("nul-header", b"time,qw\x00,qx,qy,qz\n0,1,0,0,0\n", {}, ("raises", LogReadError, ["NUL", "line 1, column 8"]))

# nothing to read
for cid, text in [("empty", ""), ("newlines", "\n\n\n"), ("comments", "# a log\n# nothing else\n"),
                  ("blanks", " \t\n\r\n  \n"), ("bom-only", "\ufeff")]:
    case(f"empty-{cid}", text, {}, ("raises", EmptyTrajectoryError, ["is empty"]))
case("header-only", HEADER + "\n", {}, ("raises", EmptyTrajectoryError, ["no data rows", "line 1"]))
case("header-and-comments", "# log\n" + HEADER + "\n# end\n\n", {}, ("raises", EmptyTrajectoryError, ["line 2"]))

# headers: no time, no pose, doubled names (said with their columns), odd characters shown safely
body = "\n".join(clean_rows()) + "\n"
case("no-time", "when,qw,qx,qy,qz\n" + body, {}, ("raises", MissingColumnError, ["no timestamp column"]))
case("no-pose", "time,a,b,c,d\n" + body, {}, ("raises", MissingColumnError, ["no pose columns"]))
case("qw-twice", "time,qw,qx,qy,qz,qw\n" + "\n".join(r + ",1" for r in clean_rows()), {},
     ("raises", DuplicateColumnError, ["'qw' (column 1)", "'qw' (column 5)", "line 1"]))
case("qw-and-q_w", "time,qw,qx,qy,qz,q_w\n" + "\n".join(r + ",1" for r in clean_rows()), {},
     ("raises", DuplicateColumnError, ["'q_w' (column 5)", "component w"]))
case("time-twice", "time,qw,qx,qy,qz,time\n" + "\n".join(r + ",0" for r in clean_rows()), {},
     ("raises", DuplicateColumnError, ["timestamp", "(column 0)", "(column 5)"]))
case("roll-twice", "time,roll,pitch,yaw,roll\n0,0,0,0,0\n", {}, ("raises", DuplicateColumnError, ["roll angle"]))
case("r11-twice", "time," + ",".join(f"r{i}{j}" for i in (1, 2, 3) for j in (1, 2, 3)) + ",r11\n"
     + "0,1,0,0,0,1,0,0,0,1,1\n", {}, ("raises", DuplicateColumnError, ["row 1 column 1"]))
case("doubled-x-no-pose", "time,x,x,z\n0,1,2,3\n", {},
     ("raises", MissingColumnError, ["no pose columns", "'x' is the name of columns 1, 2"]))
case("value-column-name-twice", "t,a,a,b,c\n0,1,0,0,0\n", {"time_column": "t", "value_columns": ["a", "a", "b", "c"]},
     ("raises", DuplicateColumnError, ["(column 1)", "(column 2)"]))
case("time-among-values", HEADER + "\n" + body, {"time_column": 0, "value_columns": [0, 1, 2, 3]},
     ("raises", TrajectoryInputError, ["read twice", "'time' (column 0)"]))
case("bidi-header-name", "time,q\u202ew,qx,qy,qz\n" + body, {}, ("raises", MissingColumnError, ["q<U+202E>w"]))
case("cyrillic-header-name", "time,q\u0445,qw,qy,qz\n" + body, {},
     ("raises", MissingColumnError, ["no pose", "U+0445 CYRILLIC SMALL LETTER HA"]))
case("proper-euler-rpy", "time,roll,pitch,yaw\n0,0,0,0\n", {"convention": "sequence=z-x-z"},
     ("raises", MissingColumnError, ["proper Euler"]))
case("unknown-column-name", HEADER + "\n" + body, {"time_column": "time", "value_columns": ["qw", "qx", "qy", "q"]},
     ("raises", MissingColumnError, ["'q' is not in the header"]))
case("column-number-out-of-range", HEADER + "\n" + body, {"time_column": 0, "value_columns": [1, 2, 3, 9]},
     ("raises", MissingColumnError, ["column number 9", "0 to 4"]))
case("three-values-for-quaternion", HEADER + "\n" + body,
     {"time_column": 0, "value_columns": [1, 2, 3], "kind": "quaternion"}, ("raises", WrongShapeError, ["3 columns"]))

# arguments
for bad in (0, -1, 1.5, True, "1", None):
    case(f"limit-{bad!r}", HEADER + "\n" + body, {"limit": bad}, ("raises", TrajectoryInputError, ["limit: got"]))
for bad in ("ab", '"', "\n", "1", 5):
    case(f"delimiter-{bad!r}", HEADER + "\n" + body, {"delimiter": bad},
         ("raises", TrajectoryInputError, ["delimiter"]))
for bad in ("", " ", 5):
    case(f"comment-{bad!r}", HEADER + "\n" + body, {"comment": bad}, ("raises", TrajectoryInputError, ["comment"]))
case("limit-one-short", HEADER + "\n" + body, {"limit": len(HEADER + "\n" + body) - 1},
     ("raises", LogTooLargeError, ["larger than the limit", "limit="]))

# every row rejected: the reasons are counted, with their lines
case("all-text", HEADER + "\n0,a,0,0,0\n1,b,0,0,0\n2,c,0,0,0\n3,d,0,0,0\n", {},
     ("raises", EmptyTrajectoryError, ["all 4 rows were rejected",
                                       "4 rows: text in a numeric column (lines 2, 3, 4, ...)"]))
case("all-mixed", HEADER + "\n0,a,0,0,0\n1,1,0,0\n2,0,0,0,0\n3,nan,0,0,0\n4,1,0,0,0,5\n", {},
     ("raises", EmptyTrajectoryError, ["1 row: too few fields (line 3)",
                                       "1 row: the quaternion has zero length (line 4)",
                                       "1 row: NaN or infinity (line 5)", "1 row: too many fields (line 6)"]))
case("all-zero", HEADER + "\n0,0,0,0,0\n1,0,0,0,0\n", {},
     ("raises", EmptyTrajectoryError, ["2 rows: the quaternion has zero length (lines 2, 3)"]))


@pytest.mark.parametrize("content, kwargs, expect", CSV_CASES)
def test_hostile_csv_log(content, kwargs, expect):
    source = io.BytesIO(content) if isinstance(content, bytes) else io.StringIO(content)
    if expect[0] == "raises":
        _, error, words = expect
        with pytest.raises(error) as info:
            check_trajectory_csv(source, **kwargs)
        message = str(info.value)
        assert isinstance(info.value, PoseInputError)
        assert ACCEPTS.search(message), message
        assert len(message) < 1500 and "\u202e" not in message and "\x00" not in message, message
    else:
        _, line, words = expect
        report = check_trajectory_csv(source, **kwargs)
        rejected = [r for r in report.rejected if r.line == line]
        assert len(rejected) == 1 and len(report.rejected) == 1, report.summary()
        message = rejected[0].reason
        assert ACCEPTS.search(message), message
        assert "\u202e" not in message and "\x00" not in message, message
        assert int(np.count_nonzero(report.used)) == report.rows - 1
        assert not report.used[rejected[0].row]
    for w in words:
        assert w in message, message


def test_the_catalogues_are_large_enough():
    assert len(CSV_CASES) + len(CLI_CASES) + len(STREAM_CASES) >= 80
    assert len(CSV_CASES) >= 60 and len(CLI_CASES) >= 40


def test_csv_read_stops_at_the_limit_on_an_endless_stream():
    stream = Endless(b"0,1,0,0,0\n", cap=(1 << 20) + 4096)
    with pytest.raises(LogTooLargeError, match="limit of 1 MiB") as info:
        check_trajectory_csv(stream, limit=1 << 20)
    assert isinstance(info.value, InputTooLargeError) and isinstance(info.value, TrajectoryInputError)
    assert stream.served == (1 << 20) + 1                      # the limit plus one byte, never more


def test_csv_files_on_disk_missing_folder_and_exact_limit(tmp_path):
    with pytest.raises(LogReadError, match="missing.csv' cannot be read") as info:
        read_trajectory_csv(tmp_path / "missing.csv")
    assert isinstance(info.value, FileReadError) and ACCEPTS.search(str(info.value))
    with pytest.raises(LogReadError, match="is a folder; expected a file"):
        read_trajectory_csv(tmp_path)
    path = tmp_path / "log.csv"
    text = HEADER + "\n" + "\n".join(clean_rows()) + "\n"
    path.write_text(text)
    assert read_trajectory_csv(path, limit=len(text)).times.size == 8          # exactly the limit: read
    with pytest.raises(LogTooLargeError, match=f"limit={len(text) - 1}"):
        read_trajectory_csv(path, limit=len(text) - 1)
    for bad in (5, 3.5, None, b"log.csv"):
        with pytest.raises(WrongTypeError, match="expected a"):
            read_trajectory_csv(bad)


def test_unused_doubled_names_are_a_note_not_an_error():
    text = "time,qw,qx,qy,qz,note,note\n" + "\n".join(r + ",a,b" for r in clean_rows()) + "\n"
    table = read_trajectory_csv(io.StringIO(text))
    assert table.rejected == () and any("columns 5, 6 all 'note'" in n for n in table.mapping.notes)


def test_line_numbers_count_comments_blanks_and_crlf():
    rows = clean_rows(6)
    text = "# a comment\r\n\r\n" + HEADER + "\r\n" + "\r\n".join(rows[:2]) + "\r\n# note\r\n  \r\n" \
        + "\r\n".join(rows[2:4]) + "\r\n0.4,x,0,0,0\r\n" + rows[5] + "\r\n"
    table = read_trajectory_csv(io.StringIO(text))
    assert table.lines.tolist() == [4, 5, 8, 9, 10, 11]
    assert [(r.row, r.line) for r in table.rejected] == [(4, 10)]
    # a line separator other than CR/LF (U+2028) is no line break in CSV (csv module); float() reads it as space
    odd = read_trajectory_csv(io.StringIO(HEADER + "\n" + rows[0] + "\u2028\n" + rows[1] + "\n"))
    assert odd.lines.tolist() == [2, 3] and odd.rejected == ()
    assert len(list(csv.reader(io.StringIO(HEADER + "\n" + rows[0] + "\u2028\n" + rows[1] + "\n")))) == 3


# --------------------------------------------------------------------------------------------- chunk boundaries

def test_sign_flips_on_the_scanner_chunk_boundaries_are_found():
    chunk = trajectory_module._CHUNK
    n = 7 * chunk + 123
    assert n > 100_000
    t = np.arange(n) * 0.01
    yaw = 0.8 * np.sin(0.001 * np.arange(n))
    q = Rotation.from_euler("z", yaw[:, None]).as_quat(scalar_first=True)       # scipy: scalar first
    q *= np.sign(q[:, :1])                                                       # w > 0 here: one sign throughout
    flips = [chunk - 1, chunk, 2 * chunk, 3 * chunk + 1, 5 * chunk - 1, 6 * chunk, n - 1]
    logged = q.copy()
    for row in flips:
        logged[row:] *= -1                                                       # the sign changes at each flip row
    report = check_trajectory(t, logged, "quaternion")
    assert report.findings["quaternion_sign_flips"].rows.tolist() == flips
    assert np.array_equal(report.quaternion, q) or np.array_equal(report.quaternion, -q)
    # through a CSV file, with a rejected row in front: the used rows' chunks then start one row later
    logged[0] = np.nan
    text = HEADER + "\n" + "\n".join(",".join(repr(float(v)) for v in (t[i], *logged[i])) for i in range(n)) + "\n"
    from_csv = check_trajectory_csv(io.StringIO(text))
    assert [(r.row, r.line) for r in from_csv.rejected] == [(0, 2)]
    assert from_csv.findings["quaternion_sign_flips"].rows.tolist() == flips
    shifted = [row + 1 for row in (chunk, 2 * chunk, 4 * chunk)]                 # flips on the used-row chunk edges
    again = q.copy()
    again[0] = np.nan
    for row in shifted:
        again[row:] *= -1
    assert check_trajectory(t, again, "quaternion").findings["quaternion_sign_flips"].rows.tolist() == shifted


def test_bad_rows_on_the_reader_block_boundaries_are_listed():
    n = 4 * LOG_CHUNK + 17
    rows = clean_rows(n)
    faults = {0: "extra", LOG_CHUNK - 1: "text", LOG_CHUNK: "short", 2 * LOG_CHUNK + 1: "extra",
              3 * LOG_CHUNK: "text", n - 1: "short"}                            # first and last rows of blocks
    for k, fault in faults.items():
        f = rows[k].split(",")
        rows[k] = {"extra": ",".join(f + ["9"]), "text": ",".join(f[:2] + ["x"] + f[3:]),
                   "short": ",".join(f[:-1])}[fault]
    table = read_trajectory_csv(io.StringIO(HEADER + "\n" + "\n".join(rows) + "\n"))
    assert [(r.row, r.line, r.cause) for r in table.rejected] == [
        (k, k + 2, {"extra": "too many fields", "text": "text in a numeric column", "short": "too few fields"}[f])
        for k, f in faults.items()]
    good = np.setdiff1d(np.arange(n), list(faults))
    assert np.isfinite(table.values[good]).all() and np.isnan(table.values[list(faults)]).all()
    assert np.array_equal(table.times[good], np.array([float(rows[k].split(",")[0]) for k in good]))


# --------------------------------------------------------------------------------------------- round trips

@pytest.mark.parametrize("delimiter", [",", ";", "\t"])
@pytest.mark.parametrize("quoting", [csv.QUOTE_MINIMAL, csv.QUOTE_ALL, csv.QUOTE_NONNUMERIC])
def test_csv_round_trip_against_the_csv_module(delimiter, quoting):
    rng = np.random.default_rng(11)
    n = 300
    q = Rotation.random(n, random_state=5).as_quat(scalar_first=True)            # scipy: scalar first
    t = np.cumsum(rng.uniform(0.001, 0.02, n))
    notes = [rng.choice(['plain', 'a, b', 'say "hi"', 'semi;colon', 'tab\there', '', ' padded ']) for _ in range(n)]
    buf = io.StringIO()
    writer = csv.writer(buf, delimiter=delimiter, quoting=quoting, lineterminator="\n")
    writer.writerow(["note", "time", "qw", "qx", "qy", "qz"])
    for i in range(n):
        writer.writerow([notes[i], float(t[i]), *(float(v) for v in q[i])])
    text = buf.getvalue()
    # the reference: Python's csv module reads the same text
    reference = list(csv.reader(io.StringIO(text), delimiter=delimiter))
    want = np.array([[float(f) for f in row[1:]] for row in reference[1:]])
    table = read_trajectory_csv(io.StringIO(text))
    assert table.rejected == () and table.mapping.time == "time"
    assert np.array_equal(table.times, want[:, 0]) and np.array_equal(table.values, want[:, 1:])
    assert np.array_equal(table.values, q)                                      # repr floats read back exactly
    log = read_log(io.StringIO(text))
    assert list(log.names) == reference[0]


def test_a_field_broken_over_two_lines_is_reported_not_merged():
    buf = io.StringIO()
    writer = csv.writer(buf, lineterminator="\n")
    writer.writerow(["time", "qw", "qx", "qy", "qz", "note"])
    for i, row in enumerate(clean_rows(5)):
        writer.writerow(row.split(",") + ["two\nlines" if i == 2 else "one"])
    text = buf.getvalue()
    assert len(list(csv.reader(io.StringIO(text)))) == 6                        # csv module: one record per row
    table = read_trajectory_csv(io.StringIO(text))
    assert [r.line for r in table.rejected] == [4, 5]                            # both halves, with their reasons
    assert all("quoting" in r.reason or "fields" in r.reason for r in table.rejected)


def test_the_csv_reading_matches_the_csv_module_row_by_row():
    """Mixed good and bad rows: each row is read exactly when Python's csv module gives 5 numeric fields."""
    lines = ['0,1,0,0,0', '1,"1",0,0,0', '2,"1,0",0,0,0', '3,1,0,0,0,', '4, 1 ,0,0,0', '5,1,0,"0"x,0',
             '6,"""1""",0,0,0', '7,1;0,0,0,0', '8,1,0,0', '9,1e0,0,0,0']
    table = read_trajectory_csv(io.StringIO(HEADER + "\n" + "\n".join(lines) + "\n"))
    rejected = {r.row for r in table.rejected}
    for k, line in enumerate(lines):
        try:
            fields = next(csv.reader([line], strict=True, skipinitialspace=True))
            numbers = [float(f) for f in fields] if len(fields) == 5 else None
        except (csv.Error, ValueError):
            numbers = None
        if numbers is None:
            assert k in rejected, line
        else:
            assert k not in rejected and table.times[k] == numbers[0] and table.values[k].tolist() == numbers[1:]


# --------------------------------------------------------------------------------------------- command lines

class Endless(io.RawIOBase):
    """A stream that never ends (like ``yes`` or /dev/zero); fails the test if read past ``cap`` bytes."""

    def __init__(self, pattern: bytes = b"y\n", cap: int = 64 << 20):
        self.pattern, self.cap, self.served = pattern, cap, 0

    def readable(self):
        return True

    def read(self, n=-1):
        if n is None or n < 0:
            raise AssertionError("an endless stream was read without a limit")
        self.served += n
        assert self.served <= self.cap, f"read {self.served} bytes from an endless stream"
        return (self.pattern * (n // len(self.pattern) + 1))[:n]


class FakeStdin:
    def __init__(self, stream):
        self.buffer = stream

    def read(self, *a):
        raise AssertionError("standard input was read as text without a limit")


def run_main(argv, stdin=None):
    from posekit.cli import main

    out, err = io.StringIO(), io.StringIO()
    saved = sys.stdin
    sys.stdin = FakeStdin(stdin if stdin is not None else io.BytesIO(b""))
    try:
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            try:
                code = main(argv)
            except SystemExit as exc:
                code = exc.code
    finally:
        sys.stdin = saved
    return code, out.getvalue(), err.getvalue()


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    d = tmp_path_factory.mktemp("cli-files")
    made = {"folder": d, "missing": d / "missing.txt"}
    for name, data in {"one": b"1 0 0 0\n", "three": b"1 0 0 0\n1 0 0 0\n1 0 0 0\n", "binary": b"\xff\xfe\x00\x01",
                       "latin1": "1 0 0 0\n0.5\xb0 0 0\n".encode("latin-1"), "empty": b"",
                       "comments": b"# only\n\n# comments\n", "big": b"1 0 0 0\n" * 400,
                       "widths": b"# poses\n1 0 0 0\n\n0 0 1\n", "badline": b"# header\n1 0 0 0\n1 0 0 0\n1 0 x 0\n",
                       "fullwidth": "1 0 0 0\n\uff11 0 0 0\n".encode(), "file": b"x"}.items():
        (d / name).write_bytes(data)
        made[name] = d / name
    return made


E, O = "--expected", "--observed"
GOOD = (E, "1 0 0 0", O, "1 0 0 0")
TEN_MB = "x" * 10_000_000
CLI_CASES = [
    # diagnose, batch files
    (["diagnose", "--expected-file", "{missing}", "--observed-file", "{one}"], ["missing.txt' cannot be read"]),
    (["diagnose", "--expected-file", "{folder}", "--observed-file", "{one}"], ["is a folder"]),
    (["diagnose", "--expected-file", "{binary}", "--observed-file", "{one}"], ["not UTF-8", "0xff"]),
    (["diagnose", "--expected-file", "{latin1}", "--observed-file", "{one}"], ["not UTF-8", "0xb0"]),
    (["diagnose", "--expected-file", "{empty}", "--observed-file", "{one}"], ["holds no poses"]),
    (["diagnose", "--expected-file", "{comments}", "--observed-file", "{one}"], ["holds no poses"]),
    (["diagnose", "--expected-file", "{big}", "--observed-file", "{one}", "--input-limit", "1KiB"],
     ["larger than the limit of 1 KiB", "--input-limit"]),
    (["diagnose", "--expected-file", "{widths}", "--observed-file", "{widths}"],
     ["line 4 holds 3 numbers but line 2 holds 4"]),
    (["diagnose", "--expected-file", "{one}", "--observed-file", "{three}"], ["1 expected poses but 3 observed"]),
    (["diagnose", "--expected-file", "{badline}", "--observed-file", "{three}"], ["line 4, column 5", "'x'"]),
    (["diagnose", "--expected-file", "{fullwidth}", "--observed-file", "{three}"], ["line 2", "U+FF11"]),
    (["diagnose", "--expected-file", "-", "--observed-file", "-"], ["both read standard input"]),
    (["diagnose", "--expected-file", "{one}"], ["needs both"]),
    (["diagnose", E, "1 0 0 0", "--expected-file", "{one}", "--observed-file", "{one}"], ["would ignore"]),
    # diagnose, one pose
    (["diagnose", E, "-", O, "-"], ["both read standard input"]),
    (["diagnose", O, "1 0 0 0"], ["--expected is missing"]),
    (["diagnose", E, TEN_MB, O, "1 0 0 0"], ["10000000 characters", "--input-limit"]),
    (["diagnose", E, "1 0 0 0", O, "1 0 0 \u202e0"], ["U+202E"]),
    (["diagnose", *GOOD, "--expected-convention", "sideways=up"], ["unknown key 'sideways'"]),
    (["diagnose", *GOOD, "--assumed", "scalar=l\u0430st"], ["U+0430"]),
    (["diagnose", *GOOD, "--expected-convention", "unit=degrees\u202e"], ["<U+202E>"]),
    (["diagnose", *GOOD, "--expected-kind", "eul\u0435r"], ["U+0435"]),
    (["diagnose", E], ["expected one argument"]),
    *[(["diagnose", *GOOD, "--rotation-tolerance", v], ["--rotation-tolerance", "degrees"])
      for v in ("abc", "0", "-1", "nan", "inf", "1e400", "", "190", "\uff11")],
    *[(["diagnose", *GOOD, "--translation-tolerance", v], ["--translation-tolerance", "metres"])
      for v in ("abc", "-0", "nan")],
    *[(["diagnose", *GOOD, "--limit", v], ["--limit", "whole number"]) for v in ("abc", "0", "-1", "1.5")],
    *[(["diagnose", *GOOD, "--input-limit", v], ["--input-limit", "bytes"]) for v in ("0", "-1", "abc", "5XB")],
    # convert
    (["convert", "1 0 0 0", "--to-kind", TEN_MB], ["is not a kind", "10000000 characters"]),
    (["convert", "1 0 0 0", "--to-kind", "sideways"], ["'sideways' is not a kind"]),
    (["convert", "1 0 0 0", "--from-kind", "quaterni\u0456n", "--to-kind", "euler"], ["U+0456"]),
    (["convert", "1 0 0 0", "--to-kind", "euler", "--from", "scalar=LAST"], ["upper-case"]),
    (["convert", "1 0 0 0", "--to-kind", "euler", "--from", "scalar=" + TEN_MB], ["(10000007 characters)", "limit of 1000 characters"]),
    (["convert", "1 2 3 4 5", "--to-kind", "euler"], ["5 numbers"]),
    (["convert", "1 0 0 0", "--to-kind", "euler", "--input-limit", "3"], ["limit of 3 bytes"]),
    # check
    (["check", ""], ["empty"]),
    (["check", "\uff11 0 0 0"], ["U+FF11", "line 1, column 1"]),
    (["check", "1 0 0 \u0660"], ["U+0660"]),
    (["check", "[" * 100_000], []),
    (["check", "1 0 0 \u202e0"], ["U+202E"]),
    (["check", TEN_MB], ["10000000 characters", "--input-limit"]),
    (["check", "1 2 abc"], ["line 1, column 5"]),
    # notebook, tour, the parser itself
    (["notebook", TEN_MB], ["no shipped notebook"]),
    (["notebook"], ["name the notebook"]),
    (["notebook", "tour", "--folder", "{file}"], ["is a file, not a folder"]),
    ([TEN_MB], ["invalid choice", "10000000 characters"]),
    (["check", "1 0 0 0", "--frobnicate"], ["unrecognized arguments"]),
]

STREAM_CASES = [
    (["check", "-"], lambda: Endless(b"y\n"), ["larger than the limit of 1 MiB", "--input-limit"]),
    (["check", "-"], lambda: Endless(b"\x00"), ["larger than the limit of 1 MiB"]),
    (["convert", "-", "--to-kind", "euler"], lambda: Endless(b"1 "), ["larger than the limit of 1 MiB"]),
    (["diagnose", E, "1 0 0 0", O, "-"], lambda: Endless(b"0 "), ["--observed from standard input"]),
    (["diagnose", "--expected-file", "-", "--observed-file", "{one}"], lambda: Endless(b"1 0 0 0\n"),
     ["limit of 16 MiB"]),
    (["check", "-"], lambda: io.BytesIO(b"\xff\xfe1 0 0 0"), ["not UTF-8", "accepted: UTF-8"]),
    (["check", "-"], lambda: io.BytesIO(b""), ["empty"]),
    (["check", "-"], lambda: io.BytesIO(b"\x00" * 100), ["U+0000"]),
    (["check", "-", "--input-limit", "4"], lambda: io.BytesIO(b"1 0 0 0"), ["limit of 4 bytes"]),
]


def _judge_one_line(code, out, err, words):
    assert code == 2, (code, err)
    assert out == ""
    assert err.endswith("\n") and err.count("\n") == 1, err                     # one line
    line = err[:-1]
    assert line.startswith("posekit") and ": error: " in line, line
    assert ACCEPTS.search(line), line
    assert len(line) < 2500, len(line)                                          # long values only as excerpts
    assert all(ch.isprintable() for ch in line), ascii(line)                   # no raw control or bidi characters
    assert "Traceback" not in err
    for w in words:
        assert w in line, line


@pytest.mark.parametrize("argv, words", CLI_CASES, ids=lambda v: ascii(v)[:60] if isinstance(v, list) else None)
def test_hostile_command_line(argv, words, files):
    argv = [a.format(**files) if "{" in a and len(a) < 100 else a for a in argv]
    _judge_one_line(*run_main(argv), words)


@pytest.mark.parametrize("argv, stream, words", STREAM_CASES,
                         ids=lambda v: ascii(v)[:50] if isinstance(v, list) else None)
def test_hostile_standard_input(argv, stream, words, files):
    argv = [a.format(**files) if "{" in a else a for a in argv]
    source = stream()
    _judge_one_line(*run_main(argv, source), words)
    if isinstance(source, Endless):
        limit = (16 << 20) if "--expected-file" in argv else PASTE_LIMIT
        assert source.served == limit + 1                                       # the limit plus one byte


def _cli(*args, **kw):
    env = dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    return subprocess.run([sys.executable, "-m", "posekit.cli", *args], capture_output=True, env=env, cwd=ROOT,
                          timeout=120, **kw)


def test_endless_standard_input_in_a_real_process():
    env = dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    proc = subprocess.run(["bash", "-c", f"yes | '{sys.executable}' -m posekit.cli check -"], capture_output=True,
                          env=env, cwd=ROOT, timeout=120, text=True)
    _judge_one_line(proc.returncode, proc.stdout, proc.stderr, ["larger than the limit of 1 MiB", "--input-limit"])
    with open("/dev/zero", "rb") as zero:
        proc = _cli("check", "-", stdin=zero)
    _judge_one_line(proc.returncode, proc.stdout.decode(), proc.stderr.decode(), ["larger than the limit of 1 MiB"])
    proc = _cli("diagnose", "--expected-file", "/dev/zero", "--observed-file", "/dev/zero", stdin=subprocess.DEVNULL)
    _judge_one_line(proc.returncode, proc.stdout.decode(), proc.stderr.decode(), ["limit of 16 MiB"])


def test_a_larger_input_limit_is_honoured():
    padded = "1 0 0 0" + " " * 2_000_000                                         # 2 MB: above the 1 MiB default
    code, out, err = run_main(["check", "-"], io.BytesIO(padded.encode()))
    assert code == 2 and "limit of 1 MiB" in err
    code, out, err = run_main(["check", "-", "--input-limit", "4MiB"], io.BytesIO(padded.encode()))
    assert code == 0 and err == "" and "quaternion" in out
    code, out, err = run_main(["diagnose", "--expected", "1 0 0 0", "--observed", padded, "--input-limit", "4MiB"])
    assert code == 2 and "one pose given as text is read up to 1 MiB" in err and "--observed-file" in err
