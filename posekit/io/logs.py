"""Logs (CSV text) read into a table of columns: the reading half of the trajectory checks.

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

Imports numpy, the standard library, :mod:`posekit.core` and :mod:`posekit.io.limits` only.

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
import csv
import io
import os
from dataclasses import dataclass, field

import numpy as np

from ..core.errors import PoseInputError, WrongTypeError, excerpt, isolate_controls, odd_characters, summarise
from .limits import LOG_LIMIT, FileReadError, InputTooLargeError, read_bounded, size_words

__all__ = [
    "TrajectoryInputError", "MissingColumnError", "DuplicateColumnError", "EmptyTrajectoryError",
    "LogReadError", "LogTooLargeError", "RejectedRow", "LogTable", "read_log", "split_fields", "names_words",
    "LOG_CHUNK", "ACCEPTED_NUMBER",
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
    """A log split into lines and fields, not yet read as numbers.

    ``names``: the header's column names (``"column 0"``, ``"column 1"``, ... without a
    header); ``header_line``: its 1-based line (None without a header); ``delimiter``
    (None: white space); ``width``: the number of fields every data row must have;
    ``lines (N,)``: the 1-based file line of each data row; ``rows``: the data rows' text.
    """

    source: str
    names: tuple[str, ...]
    header_line: int | None
    delimiter: str | None
    width: int
    lines: np.ndarray
    rows: list = field(repr=False)

    @property
    def header(self) -> bool:
        return self.header_line is not None

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
        not listed here.
        """
        cols = [int(c) for c in columns]
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
                block = self._csv_block(lo, hi, cols)
                if block is not None:
                    out[lo:hi] = block
                    continue
            for r in range(lo, hi):
                values, reason, cause = self._read_row(self.rows[r], cols, d)
                if reason is None:
                    out[r] = values
                else:
                    rejected.append(RejectedRow(r, reason, int(self.lines[r]), cause))
        return out, rejected

    def _csv_block(self, lo: int, hi: int, cols):
        """Rows ``lo:hi`` split by one csv reader and read by one numpy call, or None when any row needs a reason.

        None when the csv module (strict) refuses a row, a quoted field runs past its line, a
        row has another field count, or a chosen field is not a number; the rows are then
        read one by one, so each gets its own reason.
        """
        block, d = self.rows[lo:hi], self.delimiter
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


def read_log(source, *, limit: int = LOG_LIMIT, delimiter: str | None = None, comment: str | None = "#",
             what: str = "CSV file") -> LogTable:
    """Read a log into a :class:`LogTable`: at most ``limit`` bytes from a path, ``"-"`` or an open file.

    The delimiter (comma, semicolon, tab, else white space) is taken from the first line
    that is not blank or a comment unless given.  That line is the header unless every
    field in it is a number.  Raises :class:`LogReadError` (missing file, folder, not
    UTF-8, NUL bytes), :class:`LogTooLargeError` (past ``limit``; pass a larger
    ``limit=``), :class:`EmptyTrajectoryError` (no data rows) or
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
    name = _source_name(source)
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
    text = _decode(data, name)
    del data
    if "\r" in text:
        text = text.replace("\r\n", "\n").replace("\r", "\n")
    lines = text.split("\n")
    del text
    skip = _skipped(lines, comment)
    if len(skip) == len(lines):
        raise EmptyTrajectoryError(f"CSV file {name} is empty (no lines besides blanks and comments); accepted: a "
                                   "header line and one row per timestamp")
    keep = np.ones(len(lines), dtype=bool)
    keep[skip] = False
    idx = np.flatnonzero(keep)
    first = int(idx[0])
    if delimiter is None:
        delimiter = next((d for d in _DELIMITERS if d in lines[first]), None)
    try:
        fields0 = split_fields(lines[first], delimiter)
    except csv.Error as exc:
        raise TrajectoryInputError(f"CSV file {name}, line {first + 1}: the quoting cannot be read as CSV ({exc}); "
                                   'accepted: a field in double quotes, with a " inside it written ""') from None
    header = not all(_number(f) is not None for f in fields0)
    data_idx = idx[1:] if header else idx
    if not data_idx.size:
        raise EmptyTrajectoryError(f"CSV file {name} has a header line (line {first + 1}) but no data rows; "
                                   "accepted: one row per timestamp after the header")
    if data_idx[-1] - data_idx[0] + 1 == data_idx.size:
        rows = lines[int(data_idx[0]):int(data_idx[-1]) + 1]
    else:
        rows = [lines[i] for i in data_idx]
    del lines
    names = tuple(fields0) if header else tuple(f"column {i}" for i in range(len(fields0)))
    return LogTable(str(name), names, first + 1 if header else None, delimiter, len(fields0),
                    data_idx + 1, rows)


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
