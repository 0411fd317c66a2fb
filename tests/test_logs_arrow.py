"""The two log readers (pyarrow and pure Python) and the Parquet reader give the same tables.

- Every case of the hostile CSV catalogue (tests/test_logs_cli_hostile.py) read by both readers:
  the same error class and message, or the same numbers, rejected rows, lines and reasons.
- Generated logs with faults at random places (delimiters, CRLF, a byte-order mark, comment
  and blank lines between rows, quoted notes, every kind of bad row), read by both readers,
  also with the pyarrow reader's split sizes made small so that every level of its search
  for bad rows runs.
- Numbers field by field: hypothesis draws number-like text; each field is read exactly when
  Python's float reads it (the reference: Python's float, with "_" and characters outside
  ASCII refused as documented), to the same float64, by both readers.
- Parquet and CSV written from the same arrays agree; bad rows, missing columns and wrong
  column types in Parquet give typed errors or rejected rows naming the column and row.
- Without pyarrow (its import blocked in a child process) the Python reader is used and
  Parquet asks for the extra by name.

Test data: smooth motion through random keyframes from scipy.spatial.transform.RotationSpline
(scipy is the reference for the quaternions written); faults are placed where the tests put
them, and the expected rows and lines are those places.
"""

from __future__ import annotations

import csv
import io
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from scipy.spatial.transform import Rotation, RotationSpline

from conventions import HYPOTHESIS
from posekit.analysis import (EmptyTrajectoryError, MissingColumnError, TrajectoryInputError, check_trajectory_csv,
                              read_trajectory_csv)
from posekit.core.errors import PoseInputError
from posekit.io import logs
from posekit.io.logs import LogColumnTypeError, LogReadError, read_log

pa = pytest.importorskip("pyarrow")
pq = pytest.importorskip("pyarrow.parquet")

ROOT = Path(__file__).resolve().parents[1]


def smooth_motion(n: int, seed: int):
    """Times (s) and scalar-first unit quaternions of smooth motion through random keyframes (scipy RotationSpline)."""
    rng = np.random.default_rng(seed)
    keys = np.linspace(0.0, 10.0, 9)
    spline = RotationSpline(keys, Rotation.random(keys.size, random_state=seed))
    t = np.sort(rng.uniform(0.0, 10.0, n))
    t[0], t[-1] = 0.0, 10.0
    q = spline(t).as_quat(scalar_first=True)                            # scipy: scalar first
    flips = np.einsum("ij,ij->i", q[1:], q[:-1]) < 0                     # q and -q: one rotation (common practice)
    q[1:] *= np.cumprod(np.where(flips, -1.0, 1.0))[:, None]             # one sign throughout: no flips in the data
    return t, q


def both(source_text, **kw):
    """(outcome of the Python reader, outcome of the pyarrow reader) for the same text or bytes."""
    out = []
    for reader in ("python", "pyarrow"):
        stream = io.BytesIO(source_text) if isinstance(source_text, bytes) else io.StringIO(source_text)
        try:
            out.append(("table", read_trajectory_csv(stream, reader=reader, **kw)))
        except PoseInputError as exc:
            out.append(("error", type(exc), str(exc)))
    return out


def assert_same_tables(a, b):
    assert a.reader == "python" and b.reader == "pyarrow"
    assert a.source == b.source and a.kind == b.kind and a.mapping == b.mapping
    assert np.array_equal(a.lines, b.lines)
    assert np.array_equal(a.times, b.times, equal_nan=True)
    assert np.array_equal(a.values, b.values, equal_nan=True)
    assert np.array_equal(np.signbit(a.values), np.signbit(b.values))       # signed zeros too
    assert [(r.row, r.line, r.reason, r.cause) for r in a.rejected] == \
           [(r.row, r.line, r.reason, r.cause) for r in b.rejected]


def assert_same_outcome(text, **kw):
    py, arrow = both(text, **kw)
    assert py[0] == arrow[0], (py, arrow)
    if py[0] == "error":
        assert py[1:] == arrow[1:]
    else:
        assert_same_tables(py[1], arrow[1])
    return py


# --------------------------------------------------------------------------------------------- the catalogue

def _catalogue():
    from test_logs_cli_hostile import CSV_CASES
    return CSV_CASES


@pytest.mark.parametrize("content, kwargs, expect", _catalogue())
def test_every_hostile_catalogue_case_reads_the_same_on_both_readers(content, kwargs, expect):
    kwargs = {k: v for k, v in kwargs.items() if k not in ("rate_limit",)}
    assert_same_outcome(content, **kwargs)
    if expect[0] == "rejects":                                    # the report itself, rows and lines, is the same
        reports = [check_trajectory_csv(io.BytesIO(content) if isinstance(content, bytes) else io.StringIO(content),
                                        reader=r, **kwargs) for r in ("python", "pyarrow")]
        assert reports[0].rejected == reports[1].rejected and reports[0].counts() == reports[1].counts()


# --------------------------------------------------------------------------------------------- generated logs

FAULTS = {
    "text": lambda f, rng: f[:1] + ["x" + f[1]] + f[2:],
    "empty": lambda f, rng: f[:2] + [""] + f[3:],
    "extra": lambda f, rng: f + ["7"],
    "short": lambda f, rng: f[:-1],
    "c-nan": lambda f, rng: f[:3] + ["nan(7)"] + f[4:],               # pyarrow reads it, Python's float does not
    "nan": lambda f, rng: f[:1] + ["nan"] + f[2:],
    "inf": lambda f, rng: f[:4] + ["-inf"] + f[5:],
    "spaces": lambda f, rng: [" " + v + "\t" for v in f],
    "odd-space": lambda f, rng: f[:2] + [f[2] + "\x0b"] + f[3:],     # Python strips it, pyarrow does not
    "unicode-space": lambda f, rng: f[:2] + ["\u2028" + f[2]] + f[3:],
    "quoted": lambda f, rng: f[:1] + ['"' + f[1] + '"'] + f[2:],
    "bad-quote": lambda f, rng: f[:1] + ['"' + f[1] + '"x'] + f[2:],
    "underscore": lambda f, rng: f[:1] + ["1_0"] + f[2:],
    "fullwidth": lambda f, rng: f[:1] + ["\uff11"] + f[2:],
    "signed-zero": lambda f, rng: f[:3] + ["-0.0"] + f[4:],
}


def generated_log(n, seed, faults=(), delimiter=",", crlf=False, bom=False, comments=False, note=False):
    """CSV text of a smooth log with ``faults`` ([(row, fault name)]), and what the writer chose."""
    rng = np.random.default_rng(seed)
    t, q = smooth_motion(n, seed)
    fault_at = dict(faults)
    header = ["time", "qw", "qx", "qy", "qz"] + (["note"] if note else [])
    lines = ["# generated log", delimiter.join(header)]
    for i in range(n):
        fields = [repr(float(v)) for v in (t[i], *q[i])]
        if note:
            fields.append(rng.choice(['"a, b"', "plain", '"say ""hi"""', ""]))
        if i in fault_at:
            fields = FAULTS[fault_at[i]](fields, rng)
        lines.append(delimiter.join(fields))
        if comments and rng.random() < 0.02:
            lines.append(rng.choice(["", "  ", "# note", "\t# indented note"]))
    text = ("\r\n" if crlf else "\n").join(lines) + "\n"
    return (b"\xef\xbb\xbf" + text.encode()) if bom else text


@pytest.mark.parametrize("seed", range(8))
def test_generated_logs_with_random_faults_read_the_same(seed):
    rng = np.random.default_rng(100 + seed)
    n = int(rng.integers(300, 3000))
    names = sorted(FAULTS)
    faults = [(int(r), names[int(rng.integers(len(names)))]) for r in rng.choice(n, size=int(rng.integers(0, 12)),
                                                                                 replace=False)]
    text = generated_log(n, seed, faults, delimiter=[",", ";", "\t"][seed % 3], crlf=seed % 2 == 1,
                         bom=seed % 4 == 2, comments=seed % 3 != 0, note=seed % 4 == 3)
    py = assert_same_outcome(text)
    table = py[1]
    assert table.times.size == n
    refused = {"text", "empty", "extra", "short", "c-nan", "bad-quote", "underscore", "fullwidth"}
    want = sorted(r for r, f in faults if f in refused or f in ("nan", "inf"))  # NaN and inf: rejected as such
    got = [r.row for r in table.rejected]
    if seed % 4 == 3:           # a quoted note after padded fields is refused by the csv module too
        assert set(want) <= set(got)
    else:
        assert got == want


@pytest.mark.parametrize("split, leaf, piece", [(2, 1, 1 << 24), (3, 4, 1000), (16, 256, 1 << 24), (16, 256, 5000)])
def test_the_search_for_bad_rows_finds_each_at_every_split_size(monkeypatch, split, leaf, piece):
    monkeypatch.setattr(logs, "_SPLIT", split)
    monkeypatch.setattr(logs, "_LEAF", leaf)
    monkeypatch.setattr(logs, "_ARROW_PIECE", piece)                # bytes of rows per pyarrow call
    n = 5000
    rows = [0, 1, 255, 256, 257, 1023, 1024, 2500, 2501, 4999]           # ends and neighbours of parts
    names = ["text", "extra", "short", "c-nan", "empty"]
    faults = [(r, names[i % len(names)]) for i, r in enumerate(rows)]
    text = generated_log(n, 7, faults, comments=True)
    table = assert_same_outcome(text)[1]
    assert [r.row for r in table.rejected] == rows
    t, _ = smooth_motion(n, 7)
    file_lines = text.splitlines()
    for r in table.rejected:                         # each line number points at the row's own line in the file
        assert file_lines[r.line - 1].split(",")[0] == repr(float(t[r.row]))


def test_one_bad_row_in_a_large_log_is_found_with_its_line():
    n = 120_000
    t, q = smooth_motion(n, 3)
    body = "\n".join(",".join(repr(float(v)) for v in (t[i], *q[i])) for i in range(n))
    lines = body.split("\n")
    lines[77_777] = lines[77_777].replace(",", ",oops", 1)
    text = "time,qw,qx,qy,qz\n" + "\n".join(lines) + "\n"
    table = read_trajectory_csv(io.StringIO(text), reader="pyarrow")
    assert table.reader == "pyarrow"
    assert [(r.row, r.line, r.cause) for r in table.rejected] == [(77_777, 77_779, "text in a numeric column")]
    keep = np.arange(n) != 77_777
    assert np.array_equal(table.values[keep], q[keep]) and np.array_equal(table.times[keep], t[keep])


# --------------------------------------------------------------------------------------------- field by field

NUMBERISH = st.text(alphabet=st.sampled_from(list("0123456789.eE+-_ infatyINFATYx()\t\x0b\u00a0\u2028\uff11")),
                    min_size=0, max_size=12)


#: Spellings where number readers are known to differ (C's nan(...) form, words, white space Python strips).
TRICKY = ["nan(1)", "-nan()", "+nan(abc)", "NaN(0x1)", "inf(1)", "nan(", "1e5)", "Infinity", "-INF", "+nan", "1.",
          ".5e-3", "1e400", "-0", "0x10", "1d5", "\x0c1", "1\x1c", "\u20001", "1\u3000", "١", "1__0"]


def python_reading(text: str):
    """The documented rule: Python's float of the stripped ASCII text without '_' (None: refused)."""
    s = text.strip()
    if not s or not s.isascii() or "_" in s:
        return None
    try:
        return float(s)
    except ValueError:
        return None


@HYPOTHESIS
@given(st.lists(st.one_of(NUMBERISH, st.floats(allow_nan=False).map(repr), st.sampled_from(TRICKY),
                          st.from_regex(r"[+-]?[0-9]{1,25}(\.[0-9]{0,25})?([eE][+-]?[0-9]{1,3})?", fullmatch=True)),
                min_size=1, max_size=60))
def test_each_field_reads_as_pythons_float_on_both_readers(fields):
    fields = [f.replace(",", "").replace('"', "").replace("\n", "").replace("\r", "") for f in fields]
    text = "time,qw\n" + "".join(f"{i},{f}\n" for i, f in enumerate(fields))
    for reader in ("python", "pyarrow"):
        log = read_log(io.StringIO(text), reader=reader)
        values, rejected = log.numbers([1])
        refused = {r.row for r in rejected}
        for i, f in enumerate(fields):
            want = python_reading(f)
            if want is None:
                assert i in refused, (reader, f)
            else:
                assert i not in refused, (reader, f)
                got = values[i, 0]
                assert (np.isnan(got) and np.isnan(want)) or (got == want and np.signbit(got) == np.signbit(want)), \
                    (reader, f, got, want)


def test_a_field_that_pyarrow_alone_reads_is_refused_as_text():
    """C's nan(...) form: pyarrow's number reader takes it, Python's float does not; the log says text."""
    text = "time,qw,qx,qy,qz\n0,1,0,0,0\n1,nan(5),0,0,0\n2,1,0,0,0\n"
    for reader in ("python", "pyarrow"):
        table = read_trajectory_csv(io.StringIO(text), reader=reader)
        assert [(r.line, r.cause) for r in table.rejected] == [(3, "text in a numeric column")]
        assert "'nan(5)'" in table.rejected[0].reason


# --------------------------------------------------------------------------------------------- arguments

def test_reader_argument_is_checked_and_reported():
    text = "time,qw,qx,qy,qz\n0,1,0,0,0\n"
    for bad in ("arrow", "", None, 3):
        with pytest.raises(TrajectoryInputError, match="reader: got .*accepted: 'auto', 'pyarrow', 'python'"):
            read_trajectory_csv(io.StringIO(text), reader=bad)
    assert read_trajectory_csv(io.StringIO(text)).reader == "pyarrow"                # auto: pyarrow when installed
    # white-space separated logs are read by the Python reader whatever was asked
    assert read_trajectory_csv(io.StringIO("time qw qx qy qz\n0 1 0 0 0\n"), reader="pyarrow").reader == "python"


# --------------------------------------------------------------------------------------------- Parquet

def write_parquet(path, columns: dict):
    pq.write_table(pa.table(columns), path)
    return path


def test_parquet_and_csv_readers_agree_on_generated_logs(tmp_path):
    for seed, n in [(1, 500), (2, 40_000)]:
        t, q = smooth_motion(n, seed)
        q[n // 3:] *= -1                                                  # a sign flip to find
        cols = {"time": t, "qw": q[:, 0], "qx": q[:, 1], "qy": q[:, 2], "qz": q[:, 3]}
        parquet = write_parquet(tmp_path / f"log{seed}.parquet", cols)
        text = "time,qw,qx,qy,qz\n" + "".join(",".join(repr(float(v)) for v in (t[i], *q[i])) + "\n"
                                             for i in range(n))
        from_csv = read_trajectory_csv(io.StringIO(text))
        from_parquet = read_trajectory_csv(parquet)
        assert from_parquet.format == "parquet" and from_parquet.lines is None
        assert np.array_equal(from_parquet.times, from_csv.times) and np.array_equal(from_parquet.values, q)
        assert np.array_equal(from_csv.values, q)                                # repr floats read back exactly
        assert from_parquet.mapping.values == from_csv.mapping.values
        a = check_trajectory_csv(parquet, rate_limit=100.0)
        b = check_trajectory_csv(io.StringIO(text), rate_limit=100.0)
        assert a.counts() == b.counts() and a.findings["quaternion_sign_flips"].rows.tolist() == [n // 3]
        for name in a.findings:
            assert np.array_equal(a.findings[name].rows, b.findings[name].rows)


def test_reads_on_the_calling_threads_give_the_same_tables(tmp_path):
    """Logs read side by side on two threads, pyarrow on each caller's thread (as the fleet check
    reads them), equal the Python reader's tables; pyarrow's own pool size is not touched."""
    from concurrent.futures import ThreadPoolExecutor

    texts = []
    names = sorted(FAULTS)
    for seed in range(6):
        rng = np.random.default_rng(300 + seed)
        n = int(rng.integers(2000, 6000))
        faults = [(int(r), names[int(rng.integers(len(names)))]) for r in rng.choice(n, size=5, replace=False)]
        texts.append(generated_log(n, seed, faults, comments=seed % 2 == 0))
    t, q = smooth_motion(30_000, 9)
    parquet = write_parquet(tmp_path / "side.parquet", {"time": t, "qw": q[:, 0], "qx": q[:, 1], "qy": q[:, 2],
                                                        "qz": q[:, 3]})
    pool_size = pa.cpu_count()
    python = [read_trajectory_csv(io.StringIO(text), reader="python") for text in texts]
    with logs.reads_on_caller(), ThreadPoolExecutor(2) as workers:
        assert logs._arrow_pool is False
        arrow = list(workers.map(lambda text: read_trajectory_csv(io.StringIO(text), reader="pyarrow"), texts * 2))
        from_parquet = list(workers.map(read_trajectory_csv, [parquet] * 4))
    assert logs._arrow_pool is True and pa.cpu_count() == pool_size
    for i, table in enumerate(arrow):
        assert_same_tables(python[i % len(texts)], table)
    for table in from_parquet:                                         # the numbers written, from scipy's spline
        assert np.array_equal(table.times, t) and np.array_equal(table.values, q)


def test_parquet_column_types_numbers_text_and_times(tmp_path):
    n = 50
    t, q = smooth_motion(n, 4)
    stamps = pa.array((t * 1e9).round().astype(np.int64) + 1_700_000_000 * 10 ** 9, pa.timestamp("ns"))
    path = write_parquet(tmp_path / "typed.pq", {
        "stamp": stamps, "qw": pa.array(q[:, 0], pa.float32()), "qx": pa.array([repr(float(v)) for v in q[:, 1]]),
        "qy": pa.array(q[:, 2]).dictionary_encode(), "qz": pa.array((q[:, 3] * 1e6).round().astype(np.int64))})
    table = read_trajectory_csv(path)
    assert table.mapping.time == "stamp" and table.rejected == ()
    assert np.allclose(table.times - 1_700_000_000, t, atol=1e-6)            # timestamps read as seconds
    assert np.array_equal(table.values[:, 0], q[:, 0].astype(np.float32).astype(np.float64))
    assert np.array_equal(table.values[:, 1], q[:, 1]) and np.array_equal(table.values[:, 2], q[:, 2])
    assert np.array_equal(table.values[:, 3], (q[:, 3] * 1e6).round())


def test_parquet_bad_rows_are_rejected_naming_column_and_row(tmp_path):
    n = 30
    t, q = smooth_motion(n, 5)
    qx = [repr(float(v)) for v in q[:, 1]]
    qx[4], qx[9], qx[12] = "abc", "nan(1)", " "
    qw = pa.array(q[:, 0], mask=np.isin(np.arange(n), [7, 20]))               # nulls in rows 7 and 20
    qy = q[:, 2].copy()
    qy[25] = np.nan
    path = write_parquet(tmp_path / "bad.parquet", {"time": t, "qw": qw, "qx": qx, "qy": qy, "qz": q[:, 3]})
    rep = check_trajectory_csv(path)
    got = [(r.row, r.line, r.reason.split("; accepted")[0]) for r in rep.rejected]
    assert got == [(4, None, "text 'abc' in numeric column qx"), (7, None, "column qw is empty (a null value)"),
                   (9, None, "text 'nan(1)' in numeric column qx"), (12, None, "column qx is empty"),
                   (20, None, "column qw is empty (a null value)"), (25, None, "NaN or infinity in column qy")]
    assert rep.used.sum() == n - 6 and "rejected row 4: text 'abc'" in rep.summary()
    assert all("accepted" in r.reason for r in rep.rejected)
    # the same rows written as CSV give the same rows and reasons (the null as an empty field)
    rows = [[repr(float(t[i])), "" if i in (7, 20) else repr(float(q[i, 0])), qx[i], repr(float(qy[i])),
             repr(float(q[i, 3]))] for i in range(n)]
    text = "time,qw,qx,qy,qz\n" + "\n".join(",".join(r) for r in rows) + "\n"
    from_csv = check_trajectory_csv(io.StringIO(text))
    assert [r.row for r in from_csv.rejected] == [r.row for r in rep.rejected]


def test_parquet_missing_columns_and_wrong_types_are_typed_errors(tmp_path):
    n = 10
    t, q = smooth_motion(n, 6)
    no_pose = write_parquet(tmp_path / "nopose.parquet", {"time": t, "a": q[:, 0], "b": q[:, 1]})
    with pytest.raises(MissingColumnError, match=r"Parquet file .*nopose.parquet.*no pose columns.*accepted"):
        read_trajectory_csv(no_pose)
    with pytest.raises(MissingColumnError, match=r"column 'q' is not in the columns of Parquet file"):
        read_trajectory_csv(no_pose, time_column="time", value_columns=["a", "b", "q"])
    flags = write_parquet(tmp_path / "flags.parquet", {"time": t, "qw": np.arange(n) > 3, "qx": q[:, 1],
                                                        "qy": q[:, 2], "qz": q[:, 3]})
    with pytest.raises(LogColumnTypeError, match=r"flags.parquet', column qw \(column 1\) holds values of type "
                                                 r"bool \(row 0: 'False'\), not numbers; accepted") as info:
        read_trajectory_csv(flags)
    assert isinstance(info.value, TrajectoryInputError) and isinstance(info.value, TypeError)
    nested = write_parquet(tmp_path / "nested.parquet", {"time": t, "qw": pa.array([[1.0, 0.0]] * n),
                                                          "qx": q[:, 1], "qy": q[:, 2], "qz": q[:, 3]})
    with pytest.raises(LogColumnTypeError,
                       match=r"type list<[a-z]+: double> \(row 0: .\[1.0, 0.0\].\).*one column per component"):
        read_trajectory_csv(nested)
    empty = write_parquet(tmp_path / "empty.parquet", {"time": pa.array([], pa.float64()),
                                                        "qw": pa.array([], pa.float64())})
    with pytest.raises(EmptyTrajectoryError, match="no rows"):
        read_trajectory_csv(empty)


def test_damaged_or_misnamed_parquet_files_are_read_errors(tmp_path):
    t, q = smooth_motion(20, 8)
    good = write_parquet(tmp_path / "good.parquet", {"time": t, "qw": q[:, 0], "qx": q[:, 1], "qy": q[:, 2],
                                                      "qz": q[:, 3]})
    data = good.read_bytes()
    cut = tmp_path / "cut.parquet"
    cut.write_bytes(data[: len(data) // 2])
    with pytest.raises(LogReadError, match=r"Parquet file .*cut.parquet' cannot be read.*accepted"):
        read_trajectory_csv(cut)
    renamed = tmp_path / "text.parquet"
    renamed.write_text("time,qw,qx,qy,qz\n0,1,0,0,0\n")
    with pytest.raises(LogReadError, match="does not start with the Parquet signature PAR1"):
        read_trajectory_csv(renamed)
    with pytest.raises(LogReadError, match=r"Parquet file '.*absent.parquet' cannot be read"):
        read_trajectory_csv(tmp_path / "absent.parquet")
    # a Parquet file under a CSV name is still Parquet (its signature decides)
    as_csv = tmp_path / "really.csv"
    as_csv.write_bytes(data)
    assert read_trajectory_csv(as_csv).format == "parquet"
    with pytest.raises(Exception) as info:
        read_trajectory_csv(good, limit=100)
    assert "larger than the limit" in str(info.value)


# --------------------------------------------------------------------------------------------- without pyarrow

BLOCK = """
import sys
class Block:
    def find_spec(self, name, path=None, target=None):
        if name.split('.')[0] in {names!r}:
            raise ImportError('blocked for the test: ' + name)
sys.meta_path.insert(0, Block())
"""


def run_without(names, code):
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    return subprocess.run([sys.executable, "-c", BLOCK.format(names=set(names)) + code], capture_output=True,
                          text=True, cwd=ROOT, env=env, timeout=120)


def test_without_pyarrow_the_python_reader_reads_and_parquet_names_the_extra(tmp_path):
    t, q = smooth_motion(40, 9)
    csv_path = tmp_path / "log.csv"
    with open(csv_path, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["time", "qw", "qx", "qy", "qz"])
        w.writerows([[repr(float(v)) for v in (t[i], *q[i])] for i in range(40)])
    parquet = write_parquet(tmp_path / "log.parquet", {"time": t, "qw": q[:, 0], "qx": q[:, 1], "qy": q[:, 2],
                                                       "qz": q[:, 3]})
    code = f"""
import numpy as np
from posekit.analysis import read_trajectory_csv
from posekit.io.logs import MissingPackageError, have_pyarrow
assert not have_pyarrow()
table = read_trajectory_csv({str(csv_path)!r})
print(table.reader, table.values.shape[0])
for source, kw in (({str(parquet)!r}, {{}}), ({str(csv_path)!r}, {{'reader': 'pyarrow'}})):
    try:
        read_trajectory_csv(source, **kw)
    except MissingPackageError as exc:
        print('refused:', exc)
"""
    out = run_without(["pyarrow"], code)
    assert out.returncode == 0, out.stderr
    first, second, third = out.stdout.strip().splitlines()
    assert first == "python 40"
    assert "Parquet file" in second and "pip install \"posekit[logs]\"" in second
    assert "reader='pyarrow'" in third and "reader='python'" in third
