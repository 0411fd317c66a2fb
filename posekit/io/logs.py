"""Logs (CSV text or Parquet) read into a table of columns: the reading half of the trajectory checks.

:func:`read_log` reads a path, ``"-"`` (standard input) or an open file through
:func:`~posekit.io.limits.read_bounded` (at most ``limit`` bytes, :data:`LOG_LIMIT` = 1 GiB
by default, plus one byte to tell that there is more), decodes it as UTF-8, drops blank
lines and comment lines, finds the delimiter and the header, and returns a
:class:`LogTable`.  :meth:`LogTable.numbers` then reads chosen columns as numbers and
lists every row it cannot read as a :class:`RejectedRow` with its reason and file line.

Fields are split as Python's :mod:`csv` module splits them (double-quoted fields may hold
the delimiter; a ``"`` inside one is written ``""``); lines without a ``"`` are split on
the delimiter directly, which is what the csv module does for them, and read with
``numpy.loadtxt`` in one call, so a clean log is read at numpy's speed.  Every data row
must have as many fields as the header (or, without a header, as the first row): a row
with more or fewer fields is rejected, never cut or padded.  Numbers are ASCII decimal
numbers as Python's ``float`` reads them (``nan`` and ``inf`` too; the caller decides what
those rows mean); digits that only look like digits (full-width, other scripts) are
refused and named.

Two readers give the same table (``reader=``; the table's ``reader`` says which one ran):

- ``"pyarrow"`` (the default when the optional package pyarrow is installed: ``pip install
  "posekit[logs]"``): lines are found with numpy on the bytes, and the rows that hold no
  ``"`` are read as numbers by ``pyarrow.csv``, one call per 16 MiB of rows (quoting off,
  so fields end at the delimiter exactly as above).  A piece pyarrow refuses (a row with
  another field count, a field it cannot read) is split and read again, down to small
  parts read row by row with the reasons above, so one bad row costs a few small reads,
  not a pass per row; quoted rows go to the csv module as in the Python reader.  Rows
  pyarrow reads as NaN from a ``nan(...)`` field (C's form, which Python's float refuses)
  are read again row by row.  Whitespace-separated logs and delimiters outside ASCII are
  read by the Python reader.
- ``"python"`` (no pyarrow needed): the text is split into lines and read with
  ``numpy.loadtxt`` and the csv module as described above.

Parquet files (recognised by their ``PAR1`` signature, whatever the name) need pyarrow;
their columns keep their names, numeric columns are read as float64, timestamp and
duration columns as seconds, text columns with the same number rules as CSV, and a
null value rejects its row with the column named.  A column of another type (true/false,
lists, structs, bytes) raises :class:`LogColumnTypeError` naming the column, its type and
its first row.

Imports numpy, the standard library, :mod:`posekit.core` and :mod:`posekit.io.limits`, and
pyarrow only inside the functions that use it (``import posekit.io`` works without it).

>>> table = read_log(io.StringIO('time,qw,note\\n0,1,"a, b"\\n1,x,c\\n2,1,d,e\\n'))
>>> table.names, table.delimiter, table.lines.tolist()
(('time', 'qw', 'note'), ',', [2, 3, 4])
>>> values, rejected = table.numbers([0, 1])
>>> values[0].tolist()
[0.0, 1.0]
>>> for r in rejected:
...     print(r.words().split("; accepted")[0])
row 1 (line 3): text 'x' in numeric column qw
row 2 (line 4): has 4 fields, expected 3 (as many as the header on line 1)
"""

from __future__ import annotations

import bisect
import codecs
import contextlib
import csv
import io
import os
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from ..core.errors import PoseInputError, WrongTypeError, excerpt, isolate_controls, odd_characters, summarise
from .limits import LOG_LIMIT, FileReadError, InputTooLargeError, read_bounded, size_words

__all__ = [
    "TrajectoryInputError", "MissingColumnError", "DuplicateColumnError", "EmptyTrajectoryError",
    "LogReadError", "LogTooLargeError", "LogColumnTypeError", "MissingPackageError", "RejectedRow", "LogTable",
    "read_log", "split_fields", "names_words", "have_pyarrow", "LOG_CHUNK", "ACCEPTED_NUMBER", "READERS",
]


class TrajectoryInputError(PoseInputError):
    """A trajectory (arrays or CSV file) cannot be read as given."""


class MissingColumnError(TrajectoryInputError):
    """A CSV column that was asked for, or that is needed, is not there."""


class DuplicateColumnError(MissingColumnError):
    """A column that is needed is named twice (or two columns claim one role), so which one is meant is unclear."""


class EmptyTrajectoryError(TrajectoryInputError):
    """There are no data rows at all (empty file, header only, zero-length arrays)."""


class LogReadError(TrajectoryInputError, FileReadError):
    """A log file cannot be read at all: missing, a folder, not UTF-8 text, a binary file."""


class LogTooLargeError(TrajectoryInputError, InputTooLargeError):
    """A log is larger than the limit; nothing past the limit was read."""


class LogColumnTypeError(TrajectoryInputError, WrongTypeError):
    """A Parquet column that is needed holds values that are no numbers (true/false, lists, structs, bytes)."""


class MissingPackageError(PoseInputError):
    """An optional package this input or this way of working needs is not installed (the message names the extra)."""


#: The readers :func:`read_log` can use: ``"auto"`` (pyarrow when installed, else Python), or one of them by name.
READERS = ("auto", "pyarrow", "python")


def have_pyarrow() -> bool:
    """True when pyarrow (with its CSV and Parquet readers) can be imported."""
    return _pyarrow() is not None


def _pyarrow():
    """The pyarrow module with ``pyarrow.csv`` loaded, or None when it is not installed (imported on first use)."""
    try:
        import pyarrow
        import pyarrow.csv  # noqa: F401 - loads the submodule
    except ImportError:
        return None
    return pyarrow


#: Whether pyarrow reads on its own thread pool (True) or on the calling thread (see :func:`reads_on_caller`).
_arrow_pool = True


@contextlib.contextmanager
def reads_on_caller():
    """Within the block, pyarrow reads each CSV or Parquet log on the thread that asks (process-wide).

    For callers that read several logs side by side on threads: pyarrow's pool is one per
    process, so with the pool each read would wait for the others' (``benchmarks/bench_fleet.py``
    measures both).  pyarrow's own settings are not touched.

    >>> from posekit.io import logs
    >>> with reads_on_caller():
    ...     logs._arrow_pool
    False
    >>> logs._arrow_pool
    True
    """
    global _arrow_pool
    before = _arrow_pool
    _arrow_pool = False
    try:
        yield
    finally:
        _arrow_pool = before


def _missing_pyarrow(what: str) -> MissingPackageError:
    return MissingPackageError(f"{what} needs the optional package pyarrow, which is not installed here; accepted: "
                               "install it with pip install \"posekit[logs]\"" +
                               ("" if "Parquet" in what else ", or pass reader='python' (CSV only)"))


#: Rows read by one ``numpy.loadtxt`` call when a log has unreadable rows: a block that
#: reads cleanly costs one call, only a failing block is read field by field.
LOG_CHUNK = 1 << 14

_DELIMITERS = (",", ";", "\t")
#: What a numeric field may hold, as said in messages.
ACCEPTED_NUMBER = "an ASCII decimal number such as 0.25, -3 or 1e-3 (nan and inf are read, then rejected)"


@dataclass(frozen=True)
class RejectedRow:
    """One row left out: ``row`` is the 0-based data row, ``line`` the 1-based file line (CSV only).

    ``cause`` names the kind of reason without the values (``"text in a numeric column"``),
    so rows can be counted per cause; it is not part of equality.
    """

    row: int
    reason: str
    line: int | None = None
    cause: str = field(default="", compare=False)

    def words(self) -> str:
        where = f"row {self.row}" + (f" (line {self.line})" if self.line is not None else "")
        return f"{where}: {self.reason}"


def _column(name: str, limit: int = 40) -> str:
    """A column name inside a sentence: control and bidi characters shown as <U+XXXX>, long names cut."""
    return isolate_controls(name[:limit]) + ("..." if len(name) > limit else "")


def names_words(names, limit: int = 12) -> str:
    """Header names for a message: the first ``limit``, each quoted safely, and how many more."""
    shown = ", ".join(excerpt(str(n), 30) for n in names[:limit])
    more = f", ... and {len(names) - limit} more" if len(names) > limit else ""
    return f"[{shown}{more}]"


def split_fields(line: str, delimiter: str | None) -> list[str]:
    """The fields of one line, as Python's :mod:`csv` module splits them, each stripped of spaces.

    ``delimiter`` None splits on runs of white space (no quoting).  Raises
    :class:`csv.Error` for quoting the csv module cannot read (strict mode).

    >>> split_fields('1, "2,5" ,x', ",")
    Traceback (most recent call last):
    ...
    _csv.Error: ',' expected after '"'
    >>> split_fields('1, "2,5",x', ",")
    ['1', '2,5', 'x']
    """
    if delimiter is None:
        return line.split()
    if '"' not in line:
        return [f.strip() for f in line.split(delimiter)]
    reader = csv.reader((line,), delimiter=delimiter, quotechar='"', strict=True, skipinitialspace=True)
    fields = next(reader, [])
    return [f.strip() for f in fields]


def _number(text: str):
    """``float(text)`` for ASCII decimal numbers, else None."""
    s = text.strip()
    if not s.isascii() or "_" in s:
        return None
    try:
        return float(s)
    except ValueError:
        return None


def _where(text: str, offset: int) -> str:
    line = text.count("\n", 0, offset) + 1
    column = offset - (text.rfind("\n", 0, offset) + 1) + 1
    return f"line {line}, column {column}"


def _decode(data: bytes, name: str) -> str:
    if data[:2] in (b"\xff\xfe", b"\xfe\xff"):
        raise LogReadError(f"CSV file {name} is UTF-16 text (it starts with a UTF-16 byte-order mark); "
                           "accepted: UTF-8 text; save it as UTF-8")
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        head = data[:exc.start].decode("utf-8", "replace")
        raise LogReadError(f"CSV file {name} is not UTF-8 text: byte 0x{data[exc.start]:02x} at "
                           f"{_where(head, len(head))} (byte offset {exc.start}); accepted: UTF-8 text; "
                           "save it as UTF-8") from None
    nul = text.find("\x00")
    if nul >= 0:
        raise LogReadError(f"CSV file {name} holds a NUL character at {_where(text, nul)}: it looks like a binary "
                           "file, not CSV text; accepted: UTF-8 text with one row per line")
    return text


def _source_name(source) -> str:
    if isinstance(source, (str, os.PathLike)) and not (isinstance(source, str) and source == "-"):
        return excerpt(os.fspath(source), 80)
    if isinstance(source, str) and source == "-":
        return "on standard input"
    name = getattr(source, "name", None)
    return excerpt(str(name), 80) if isinstance(name, (str, os.PathLike)) else "'<text>'"


def _check_limit(limit) -> int:
    if isinstance(limit, bool) or not isinstance(limit, (int, np.integer)) or limit <= 0:
        raise TrajectoryInputError(f"limit: got {summarise(limit, 40)}; expected a whole number of bytes > 0 "
                                   f"(default LOG_LIMIT = {size_words(LOG_LIMIT)})")
    return int(limit)


@dataclass(frozen=True)
class LogTable:
    """A log split into lines and fields (or a Parquet file's columns), not yet read as numbers.

    ``names``: the header's column names (``"column 0"``, ``"column 1"``, ... without a
    header); ``header_line``: its 1-based line (None without a header, and for Parquet);
    ``delimiter`` (None: white space); ``width``: the number of fields every data row must
    have; ``lines (N,)``: the 1-based file line of each data row (None for Parquet);
    ``rows``: the data rows' text (a sequence of str; empty for Parquet); ``reader``:
    ``"pyarrow"`` or ``"python"``, the reader that read it; ``format``: ``"csv"`` or
    ``"parquet"``.
    """

    source: str
    names: tuple[str, ...]
    header_line: int | None
    delimiter: str | None
    width: int
    lines: np.ndarray | None
    rows: Sequence = field(repr=False)
    reader: str = "python"
    format: str = "csv"
    _parquet: object = field(default=None, repr=False, compare=False)

    @property
    def header(self) -> bool:
        """True when the columns have names (a CSV header line, or any Parquet file)."""
        return self.header_line is not None or self.format == "parquet"

    @property
    def row_count(self) -> int:
        """The number of data rows."""
        return self._parquet.rows if self.format == "parquet" else len(self.rows)

    def duplicates(self) -> dict[str, tuple[int, ...]]:
        """Header names that occur more than once -> their 0-based column numbers."""
        where: dict[str, list[int]] = {}
        for i, n in enumerate(self.names):
            where.setdefault(n, []).append(i)
        return {n: tuple(ix) for n, ix in where.items() if len(ix) > 1} if self.header else {}

    def _width_words(self) -> str:
        if self.header:
            return f"as many as the header on line {self.header_line}"
        return f"as many as the first row, line {int(self.lines[0])}"

    def numbers(self, columns) -> tuple[np.ndarray, list[RejectedRow]]:
        """Columns ``columns`` (0-based numbers) of every data row as floats ``(N, len(columns))``.

        A row that cannot be read is NaN in every column and listed (with its reason, its
        row and its file line); ``nan`` and ``inf`` written in a field are read as such and
        not listed here.  Both readers give the same numbers and the same list.
        """
        cols = [int(c) for c in columns]
        if self.format == "parquet":
            return self._parquet.numbers(cols, self.names)
        if isinstance(self.rows, _ByteRows):
            return self._numbers_arrow(cols)
        n = len(self.rows)
        d = self.delimiter
        special = self._special_rows()
        if not special:
            try:
                return self._loadtxt(self.rows, cols), []
            except ValueError:
                pass
        out = np.full((n, len(cols)), np.nan)
        rejected: list[RejectedRow] = []
        for lo in range(0, n, LOG_CHUNK):
            hi = min(lo + LOG_CHUNK, n)
            if bisect.bisect_left(special, hi) == bisect.bisect_left(special, lo):   # no special row in the block
                try:
                    out[lo:hi] = self._loadtxt(self.rows[lo:hi], cols)
                    continue
                except ValueError:
                    pass
            else:
                block = self._csv_rows(self.rows[lo:hi], cols)
                if block is not None:
                    out[lo:hi] = block
                    continue
            self._row_by_row(range(lo, hi), cols, out, rejected)
        return out, rejected

    def _row_by_row(self, rows, cols, out, rejected) -> None:
        """Read ``rows`` one by one into their rows of ``out`` (NaN when refused), listing each refused row."""
        d = self.delimiter
        for r in rows:
            r = int(r)
            values, reason, cause = self._read_row(self.rows[r], cols, d)
            if reason is None:
                out[r] = values
            else:
                out[r] = np.nan
                rejected.append(RejectedRow(r, reason, int(self.lines[r]), cause))

    def _csv_rows(self, block, cols):
        """Rows ``block`` (text) split by one csv reader and read by one numpy call; None when a row needs a reason.

        None when the csv module (strict) refuses a row, a quoted field runs past its line, a
        row has another field count, or a chosen field is not a number; the rows are then
        read one by one, so each gets its own reason.
        """
        d = self.delimiter
        if d is None:
            return None
        reader = csv.reader(block, delimiter=d, quotechar='"', strict=True, skipinitialspace=True)
        try:
            records = list(reader)
        except csv.Error:
            return None
        if len(records) != len(block) or reader.line_num != len(block) or \
                any(len(rec) != self.width for rec in records):
            return None
        picked = [d.join([rec[c] for c in cols]) for rec in records]
        try:
            values = np.loadtxt(picked, delimiter=d, ndmin=2, dtype=np.float64, comments=None, quotechar=None)
        except ValueError:
            return None
        return values if values.shape == (len(block), len(cols)) else None

    def _special_rows(self) -> list[int]:
        """Rows the one-call numpy reading would misread: quoted fields, or a field count other than ``width``."""
        rows, d, w = self.rows, self.delimiter, self.width
        if d is None:
            counts = [len(ln.split()) for ln in rows]
            return [] if counts.count(w) == len(counts) else [i for i, c in enumerate(counts) if c != w]
        counts = [ln.count(d) for ln in rows]
        special = [] if counts.count(w - 1) == len(counts) else [i for i, c in enumerate(counts) if c != w - 1]
        if any('"' in ln for ln in rows):
            special = sorted(set(special) | {i for i, ln in enumerate(rows) if '"' in ln})
        return special

    def _loadtxt(self, rows, cols):
        return np.loadtxt(rows, delimiter=self.delimiter, usecols=cols, ndmin=2, dtype=np.float64, comments=None,
                          quotechar=None)

    def _read_row(self, line, cols, d):
        try:
            f = split_fields(line, d)
        except csv.Error as exc:
            return None, (f"the quoting cannot be read as CSV ({exc}); accepted: a field in double quotes, "
                          'with a " inside it written "", and nothing after the closing quote'), "unreadable quoting"
        if len(f) != self.width:
            return None, f"has {len(f)} fields, expected {self.width} ({self._width_words()})", \
                ("too many fields" if len(f) > self.width else "too few fields")
        values = []
        for c in cols:
            s = f[c]
            if s == "":
                return None, f"column {_column(self.names[c])} is empty; accepted: a number", "an empty field"
            v = _number(s)
            if v is None:
                odd = odd_characters(s)
                hint = f" ({'; '.join(odd[:2])}: not an ASCII digit or sign)" if odd else ""
                return None, (f"text {excerpt(s, 40)} in numeric column {_column(self.names[c])}{hint}; "
                              f"accepted: {ACCEPTED_NUMBER}"), "text in a numeric column"
            values.append(v)
        return values, None, ""

    # --- the pyarrow route ------------------------------------------------------------------------

    def _numbers_arrow(self, cols):
        """:meth:`numbers` for a table read from bytes: pyarrow for the plain rows, the per-row reasons for the rest.

        Rows holding a ``"`` go to the csv module in blocks (one per :data:`LOG_CHUNK` rows),
        as in the Python reader.  The others are read by pyarrow, one call per
        :data:`_ARROW_PIECE` bytes of rows (each call reads its blocks in parallel, and only
        one piece's table is held besides the result); when it refuses a piece (another
        field count, a field that is no number), that piece is split into :data:`_SPLIT`
        parts, and a part refused again likewise, until each part reads or is at most
        :data:`_LEAF` rows, which are read row by row with their reasons: one bad row costs
        about two more passes over one piece, not a pass per row.  (Many bad rows spread
        over the file end up row by row, at the Python reader's speed.)
        """
        rows: _ByteRows = self.rows
        n, k = len(rows), len(cols)
        quoted = rows.holding(b'"')
        out = np.full((n, k), np.nan)
        rejected: list[RejectedRow] = []
        if quoted.size:
            plain = np.ones(n, dtype=bool)
            plain[quoted] = False
            todo = np.flatnonzero(plain)
        else:
            todo = np.arange(n)
        size = int(rows.ends[-1] - rows.starts[0])
        parts = np.array_split(todo, max(1, -(-size // _ARROW_PIECE)))[::-1]
        while parts:
            picked = parts.pop()
            if not picked.size:
                continue
            if self._arrow_read(picked, cols, out):
                continue
            if picked.size <= _LEAF:
                self._row_by_row(picked, cols, out, rejected)
                continue
            parts += np.array_split(picked, min(_SPLIT, -(-picked.size // _LEAF)))[::-1]
        self._recheck_nan(out, quoted, cols, rejected)
        for lo in range(0, quoted.size, LOG_CHUNK):
            marked = quoted[lo:lo + LOG_CHUNK]
            block = self._csv_rows([rows[int(r)] for r in marked], cols)
            if block is None:
                self._row_by_row(marked, cols, out, rejected)
            else:
                out[marked] = block
        rejected.sort(key=lambda r: r.row)
        return out, rejected

    def _arrow_read(self, picked, cols, out) -> bool:
        """Rows ``picked`` (sorted row numbers) read by one ``pyarrow.csv`` call into their rows of ``out``.

        False when pyarrow refuses any of them (another field count, a field it does not
        read as a number), so that the caller can find the row and its reason.
        """
        pa = _pyarrow()
        names = [f"f{i}" for i in range(self.width)]
        use = sorted(set(cols))
        try:
            table = pa.csv.read_csv(
                pa.py_buffer(self.rows.joined(picked)),
                read_options=pa.csv.ReadOptions(column_names=names, use_threads=_arrow_pool),
                parse_options=pa.csv.ParseOptions(delimiter=self.delimiter, quote_char=False, escape_char=False,
                                                  double_quote=False, newlines_in_values=False,
                                                  ignore_empty_lines=False),
                convert_options=pa.csv.ConvertOptions(column_types={names[c]: pa.float64() for c in use},
                                                      include_columns=[names[c] for c in use], null_values=[],
                                                      strings_can_be_null=False, quoted_strings_can_be_null=False,
                                                      check_utf8=False))
        except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
            return False
        if table.num_rows != picked.size:
            return False
        at = slice(int(picked[0]), int(picked[-1]) + 1) if picked[-1] - picked[0] + 1 == picked.size else picked
        for j, c in enumerate(cols):
            out[at, j] = _float_column(table.column(names[c]))
        return True

    def _recheck_nan(self, values, quoted, cols, rejected) -> None:
        """Rows pyarrow read as NaN whose text holds ``(`` are read again by Python's rules (not the ``quoted`` ones).

        pyarrow's number reader takes C's ``nan(...)`` form, which Python's float refuses
        (it is text in a numeric column here, as in the Python reader).
        """
        paren = self.rows.holding(b"(")
        if not paren.size:
            return
        nan_rows = np.flatnonzero(np.isnan(values[paren]).any(axis=1))
        done = {r.row for r in rejected}
        again = np.setdiff1d(paren[nan_rows], quoted)
        self._row_by_row([r for r in again if int(r) not in done], cols, values, rejected)


#: A part of a log that pyarrow refuses is split into this many parts (see ``LogTable._numbers_arrow``) ...
_SPLIT = 16
#: ... down to parts of at most this many rows, which are read row by row.
_LEAF = 256

#: Bytes of CSV rows per pyarrow call (see ``LogTable._numbers_arrow``).
_ARROW_PIECE = 16 << 20


class _ByteRows(Sequence):
    """The data rows of a log as byte ranges of its (UTF-8) bytes; each item is the row's text."""

    __slots__ = ("data", "starts", "ends")

    def __init__(self, data: bytes, starts: np.ndarray, ends: np.ndarray):
        self.data, self.starts, self.ends = data, starts, ends

    def __len__(self) -> int:
        return int(self.starts.size)

    def __getitem__(self, i):
        if isinstance(i, slice):
            return [self[j] for j in range(*i.indices(len(self)))]
        return self.data[int(self.starts[i]):int(self.ends[i])].decode("utf-8")

    def joined(self, picked):
        """The bytes of rows ``picked`` (sorted), one per line; no copy when they lie side by side in the file."""
        if picked[-1] - picked[0] + 1 == picked.size:
            lo, hi = int(picked[0]), int(picked[-1]) + 1
            s, e = self.starts[lo:hi], self.ends[lo:hi]
        else:
            s, e = self.starts[picked], self.ends[picked]
        view = memoryview(self.data)
        breaks = np.flatnonzero(s[1:] != e[:-1] + 1)
        if not breaks.size:
            return view[int(s[0]):int(e[-1])]
        first = np.concatenate(([0], breaks + 1))
        last = np.concatenate((breaks, [s.size - 1]))
        return b"\n".join([view[int(s[a]):int(e[b])] for a, b in zip(first, last)])

    def _rows_at(self, at: np.ndarray) -> np.ndarray:
        """The row holding each byte offset ``at`` (sorted), or -1 for bytes outside the rows (skipped lines)."""
        row = np.searchsorted(self.ends, at)                   # the first row ending at or after the byte
        inside = (row < self.starts.size) & (self.starts[np.minimum(row, self.starts.size - 1)] <= at)
        return np.where(inside, row, -1)

    def _scan(self, code: int):
        """The rows of each occurrence of byte ``code``, piece by piece (bounded temporary arrays)."""
        lo, hi = int(self.starts[0]), int(self.ends[-1])
        view = np.frombuffer(self.data, dtype=np.uint8, count=hi - lo, offset=lo)
        for p in range(0, hi - lo, _SCAN):
            at = np.flatnonzero(view[p:p + _SCAN] == code) + (p + lo)
            if at.size:
                yield self._rows_at(at)

    def holding(self, byte: bytes) -> np.ndarray:
        """Sorted numbers of the rows whose text holds ``byte`` (one ASCII byte)."""
        if self.data.find(byte, int(self.starts[0]), int(self.ends[-1])) < 0:
            return np.zeros(0, dtype=np.int64)
        found = np.unique(np.concatenate(list(self._scan(byte[0]))))
        return found[found >= 0]


def _float_column(column, dtype=np.float64) -> np.ndarray:
    """A float64 (or int64) pyarrow column without nulls as one numpy array (from its buffers: no pandas import)."""
    chunks = column.chunks
    out = np.empty(sum(len(c) for c in chunks), dtype=dtype)
    start = 0
    for c in chunks:
        out[start:start + len(c)] = np.frombuffer(c.buffers()[1], dtype=dtype, count=len(c), offset=c.offset * 8)
        start += len(c)
    return out


#: Bytes looked at per numpy pass when scanning a log's bytes (bounds the temporary arrays).
_SCAN = 1 << 23

#: First bytes of lines that may be blank or start with white space (str.isspace): ASCII ones, and any
#: byte of a character outside ASCII (decoded and checked exactly).
_MAYBE_SPACE = np.zeros(256, dtype=bool)
_MAYBE_SPACE[[9, 10, 11, 12, 13, 28, 29, 30, 31, 32]] = True
_MAYBE_SPACE[128:] = True


def _check_reader(reader) -> str:
    if not isinstance(reader, str) or reader not in READERS:
        raise TrajectoryInputError(f"reader: got {summarise(reader, 40)}; accepted: {', '.join(map(repr, READERS))}")
    return reader


def read_log(source, *, limit: int = LOG_LIMIT, delimiter: str | None = None, comment: str | None = "#",
             what: str = "CSV file", reader: str = "auto") -> LogTable:
    """Read a log into a :class:`LogTable`: at most ``limit`` bytes from a path, ``"-"`` or an open file.

    The delimiter (comma, semicolon, tab, else white space) is taken from the first line
    that is not blank or a comment unless given.  That line is the header unless every
    field in it is a number.  A Parquet file (``PAR1`` signature) is read by pyarrow
    instead (``delimiter`` and ``comment`` do not apply).  ``reader``: ``"auto"``
    (pyarrow when installed, else Python), ``"pyarrow"`` or ``"python"``; both give the
    same table.  Raises :class:`LogReadError` (missing file, folder, not UTF-8, NUL
    bytes, a damaged Parquet file), :class:`LogTooLargeError` (past ``limit``; pass a
    larger ``limit=``), :class:`EmptyTrajectoryError` (no data rows),
    :class:`MissingPackageError` (Parquet, or ``reader="pyarrow"``, without pyarrow) or
    :class:`TrajectoryInputError` (a header whose quoting cannot be read, a bad argument).
    """
    limit = _check_limit(limit)
    if delimiter is not None and not (isinstance(delimiter, str) and len(delimiter) == 1
                                      and delimiter not in '"\r\n' and not delimiter.isalnum()):
        raise TrajectoryInputError(f"delimiter: got {summarise(delimiter, 40)}; accepted: one character that is "
                                   "not a letter, digit, quote or line break (',' ';' or a tab), or None to detect it")
    if comment is not None and not (isinstance(comment, str) and comment and not comment.isspace()):
        raise TrajectoryInputError(f"comment: got {summarise(comment, 40)}; accepted: a non-blank text such as '#', "
                                   "or None for no comment lines")
    reader = _check_reader(reader)
    name = _source_name(source)
    says_parquet = isinstance(source, (str, os.PathLike)) and os.fspath(source).lower().endswith((".parquet", ".pq"))
    if says_parquet and what == "CSV file":
        what = "Parquet file"
    try:
        data = read_bounded(source, limit=limit, what=what if isinstance(source, (str, os.PathLike)) else
                            f"{what} {name}")
    except InputTooLargeError as exc:
        raise LogTooLargeError(f"{exc} Accepted: at most limit={limit} bytes (the default is LOG_LIMIT = "
                               f"{size_words(LOG_LIMIT)}).") from None
    except FileReadError as exc:
        raise LogReadError(str(exc)) from None
    except TypeError:
        raise WrongTypeError(f"CSV source: got {type(source).__name__} {summarise(source, 40)}; expected a path, "
                             "'-' (standard input) or an open file") from None
    if data[:4] == b"PAR1":
        return _read_parquet(data, name)
    if says_parquet:
        raise LogReadError(f"Parquet file {name} does not start with the Parquet signature PAR1 (it starts with "
                           f"{excerpt(repr(data[:8]), 30)}); accepted: a Parquet file, or CSV text under another name")
    if reader != "python":
        if _pyarrow() is None:
            if reader == "pyarrow":
                raise _missing_pyarrow("reader='pyarrow'")
        else:
            table = _read_csv_bytes(data, name, delimiter, comment)
            if table is not None:
                return table
    return _read_csv_text(data, name, delimiter, comment)


def _layout(first_text: str, first: int, data_idx, name, delimiter):
    """(delimiter, first line's fields, header?, data line indices) from the first kept line; shared by both readers."""
    if delimiter is None:
        delimiter = next((d for d in _DELIMITERS if d in first_text), None)
    try:
        fields0 = split_fields(first_text, delimiter)
    except csv.Error as exc:
        raise TrajectoryInputError(f"CSV file {name}, line {first + 1}: the quoting cannot be read as CSV ({exc}); "
                                   'accepted: a field in double quotes, with a " inside it written ""') from None
    header = not all(_number(f) is not None for f in fields0)
    if header:
        data_idx = data_idx[1:]
    if not data_idx.size:
        raise EmptyTrajectoryError(f"CSV file {name} has a header line (line {first + 1}) but no data rows; "
                                   "accepted: one row per timestamp after the header")
    return delimiter, fields0, header, data_idx


def _table(name, fields0, header, first, delimiter, data_idx, rows, reader) -> LogTable:
    names = tuple(fields0) if header else tuple(f"column {i}" for i in range(len(fields0)))
    return LogTable(str(name), names, first + 1 if header else None, delimiter, len(fields0), data_idx + 1, rows,
                    reader)


def _empty(name) -> EmptyTrajectoryError:
    return EmptyTrajectoryError(f"CSV file {name} is empty (no lines besides blanks and comments); accepted: a "
                                "header line and one row per timestamp")


def _read_csv_text(data: bytes, name, delimiter, comment) -> LogTable:
    """The Python reader: the text split into lines (a list of str)."""
    text = _decode(data, name)
    del data
    if "\r" in text:
        text = text.replace("\r\n", "\n").replace("\r", "\n")
    lines = text.split("\n")
    del text
    skip = _skipped(lines, comment)
    if len(skip) == len(lines):
        raise _empty(name)
    keep = np.ones(len(lines), dtype=bool)
    keep[skip] = False
    idx = np.flatnonzero(keep)
    first = int(idx[0])
    delimiter, fields0, header, data_idx = _layout(lines[first], first, idx, name, delimiter)
    if data_idx[-1] - data_idx[0] + 1 == data_idx.size:
        rows = lines[int(data_idx[0]):int(data_idx[-1]) + 1]
    else:
        rows = [lines[i] for i in data_idx]
    del lines
    return _table(name, fields0, header, first, delimiter, data_idx, rows, "python")


def _valid_utf8(data: bytes) -> bool:
    """Whether ``data`` is UTF-8 (decoded in pieces, so no second copy of a large log is made)."""
    if data.isascii():
        return True
    check = codecs.getincrementaldecoder("utf-8")()
    view = memoryview(data)
    try:
        for p in range(0, len(data), _SCAN):
            check.decode(view[p:p + _SCAN], final=p + _SCAN >= len(data))
    except UnicodeDecodeError:
        return False
    return True


def _read_csv_bytes(data: bytes, name, delimiter, comment) -> LogTable | None:
    """The pyarrow reader's table: lines found with numpy on the bytes; None when the Python reader must read it.

    (White-space separated logs and a delimiter outside ASCII go to the Python reader.)
    """
    if data[:2] in (b"\xff\xfe", b"\xfe\xff") or data.find(b"\x00") >= 0 or not _valid_utf8(data):
        _decode(data, name)       # raises the Python reader's message (UTF-16, NUL with its place, not UTF-8)
    start = 3 if data[:3] == b"\xef\xbb\xbf" else 0
    if data.find(b"\r", start) >= 0:
        data = data[start:].replace(b"\r\n", b"\n").replace(b"\r", b"\n")
        start = 0
    size = len(data)
    buf = np.frombuffer(data, dtype=np.uint8)
    newlines = np.concatenate([np.flatnonzero(buf[p:p + _SCAN] == 10) + p for p in range(start, size, _SCAN)]
                              or [np.zeros(0, dtype=np.int64)])
    starts = np.empty(newlines.size + 1, dtype=np.int64)
    starts[0] = start
    np.add(newlines, 1, out=starts[1:])
    ends = np.empty_like(starts)
    ends[:-1] = newlines
    ends[-1] = size
    del newlines
    # blank and comment lines: the same rule as the Python reader, applied to the lines that may match it
    lead = comment.encode("utf-8")[0] if comment else -1
    first_bytes = buf[np.minimum(starts, max(size - 1, 0))] if size else np.zeros(starts.size, dtype=np.uint8)
    maybe = (ends == starts) | _MAYBE_SPACE[first_bytes] | (first_bytes == lead)
    keep = np.ones(starts.size, dtype=bool)
    for i in np.flatnonzero(maybe):
        text = data[starts[i]:ends[i]].decode("utf-8").strip()
        if not text or (comment and text.startswith(comment)):
            keep[i] = False
    idx = np.flatnonzero(keep)
    if not idx.size:
        raise _empty(name)
    first = int(idx[0])
    first_text = data[starts[first]:ends[first]].decode("utf-8")
    if delimiter is None:
        delimiter = next((d for d in _DELIMITERS if d in first_text), None)
    if delimiter is None or not delimiter.isascii():
        return None
    delimiter, fields0, header, data_idx = _layout(first_text, first, idx, name, delimiter)
    a, b = int(data_idx[0]), int(data_idx[-1]) + 1
    if b - a == data_idx.size:                               # no skipped line among the rows: views, no copies
        rows = _ByteRows(data, starts[a:b], ends[a:b])
    else:
        rows = _ByteRows(data, starts[data_idx], ends[data_idx])
    return _table(name, fields0, header, first, delimiter, data_idx, rows, "pyarrow")


def _skipped(lines, comment) -> list[int]:
    """Indices of blank lines and comment lines (first non-blank characters are ``comment``)."""
    lead = comment[0] if comment else None
    cand = [i for i, ln in enumerate(lines) if not ln or ln[0] == lead or ln[0].isspace()]
    out = []
    for i in cand:
        s = lines[i].strip()
        if not s or (comment and s.startswith(comment)):
            out.append(i)
    return out


# --------------------------------------------------------------------------------------------- Parquet

_PARQUET_ACCEPTS = ("accepted: one number per row in each pose column (integer, floating point or decimal "
                    "columns, or text holding numbers), and for the time also timestamps or durations; "
                    "split list columns into one column per component")


def _read_parquet(data: bytes, name) -> LogTable:
    pa = _pyarrow()
    if pa is None:
        raise _missing_pyarrow(f"Parquet file {name}")
    import pyarrow.parquet as pq

    try:
        pfile = pq.ParquetFile(pa.BufferReader(data))
        schema = pfile.schema_arrow
        rows = pfile.metadata.num_rows
    except (pa.ArrowException, OSError, ValueError) as exc:
        raise LogReadError(f"Parquet file {name} cannot be read: {excerpt(str(exc), 200)}; accepted: a complete, "
                           "undamaged Parquet file") from None
    names = tuple(str(n) for n in schema.names)
    if not names:
        raise EmptyTrajectoryError(f"Parquet file {name} has no columns; accepted: a time column and pose columns")
    if rows == 0:
        raise EmptyTrajectoryError(f"Parquet file {name} has columns {names_words(names)} but no rows; accepted: "
                                   "one row per timestamp")
    return LogTable(str(name), names, None, None, len(names), None, (), "pyarrow", "parquet",
                    _ParquetColumns(pfile, schema, rows, str(name)))


class _ParquetColumns:
    """The columns of a Parquet file, read on demand (only the ones asked for)."""

    def __init__(self, pfile, schema, rows: int, source: str):
        self.pfile, self.schema, self.rows, self.source = pfile, schema, rows, source

    def _columns(self, cols, names):
        pa = _pyarrow()
        wanted = [names[c] for c in sorted(set(cols))]
        unique = len(set(names)) == len(names) and all("." not in w for w in wanted)
        try:
            table = (self.pfile.read(columns=wanted, use_threads=_arrow_pool) if unique
                     else self.pfile.read(use_threads=_arrow_pool))
        except (pa.ArrowException, OSError, ValueError) as exc:
            raise LogReadError(f"Parquet file {self.source}: columns {names_words(wanted)} cannot be read: "
                               f"{excerpt(str(exc), 200)}; accepted: an undamaged Parquet file") from None
        return {c: table.column(wanted.index(names[c]) if unique else c) for c in set(cols)}

    def numbers(self, cols, names):
        columns = self._columns(cols, names)
        n, k = self.rows, len(cols)
        out = np.empty((n, k))
        problems: dict[int, tuple[str, str]] = {}                 # row -> (reason, cause) of its first bad column
        for j, c in enumerate(cols):
            values, bad = _parquet_numbers(columns[c], names[c], c, self.source)
            out[:, j] = values
            for row, reason, cause in bad:
                problems.setdefault(row, (reason, cause))
        rejected = [RejectedRow(r, reason, None, cause) for r, (reason, cause) in sorted(problems.items())]
        if rejected:
            out[[r.row for r in rejected]] = np.nan
        return out, rejected


def _parquet_numbers(column, name: str, index: int, source: str):
    """One Parquet column ``(N,)`` as float64 and its refused rows ``[(row, reason, cause)]``."""
    pa = _pyarrow()
    t = column.type
    if pa.types.is_dictionary(t):
        column = column.cast(t.value_type)
        t = column.type
    where = f"column {_column(name)} (column {index})"
    bad = []
    nulls = np.flatnonzero(_filled(column.is_null().cast(pa.float64()))) if column.null_count else ()
    for r in nulls:
        bad.append((int(r), f"column {_column(name)} is empty (a null value); accepted: a number", "an empty field"))
    if pa.types.is_integer(t) or pa.types.is_floating(t) or pa.types.is_decimal(t):
        values = column.cast(pa.float64(), safe=False)
    elif pa.types.is_timestamp(t) or pa.types.is_duration(t):
        per_second = {"s": 1, "ms": 10 ** 3, "us": 10 ** 6, "ns": 10 ** 9}[t.unit]
        ticks = _float_column(column.cast(pa.int64()).fill_null(0), np.int64)
        whole, part = np.divmod(ticks, per_second)                      # exact; one rounding when added
        return whole.astype(np.float64) + part / per_second, bad
    elif pa.types.is_string(t) or pa.types.is_large_string(t) or getattr(pa.types, "is_string_view", bool)(t):
        return _parquet_text(column, name, bad)
    else:
        first = next((i for i in range(len(column)) if column[i].is_valid), 0)
        shown = excerpt(str(column[first].as_py()), 40) if len(column) else "nothing"
        raise LogColumnTypeError(f"Parquet file {source}, {where} holds values of type {t} (row {first}: {shown}), "
                                 f"not numbers; {_PARQUET_ACCEPTS}")
    return _filled(values), bad


def _filled(values) -> np.ndarray:
    """A float64 ChunkedArray as numpy, nulls as NaN."""
    pa = _pyarrow()
    return _float_column(values.fill_null(pa.scalar(np.nan, pa.float64())) if values.null_count else values)


def _parquet_text(column, name, bad):
    """A text column read with the CSV number rules: each value that is no number rejects its row."""
    pa = _pyarrow()
    try:
        values = _filled(column.cast(pa.float64()))
        recheck = np.flatnonzero(np.isnan(values))            # pyarrow reads C's nan(...); Python's float does not
    except pa.ArrowInvalid:
        values = np.full(len(column), np.nan)
        recheck = np.arange(len(column))
    null_rows = {r for r, _, _ in bad}
    for r in recheck:
        r = int(r)
        if r in null_rows:
            continue
        text = column[r].as_py()
        v = _number(text) if text.strip() else None
        if v is not None:
            values[r] = v
            continue
        if not text.strip():
            bad.append((r, f"column {_column(name)} is empty; accepted: a number", "an empty field"))
            continue
        odd = odd_characters(text)
        hint = f" ({'; '.join(odd[:2])}: not an ASCII digit or sign)" if odd else ""
        bad.append((r, f"text {excerpt(text, 40)} in numeric column {_column(name)}{hint}; accepted: {ACCEPTED_NUMBER}",
                    "text in a numeric column"))
    bad.sort()
    return values, bad
