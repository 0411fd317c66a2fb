"""Bounded reads and atomic writes checked against the operating system and Python, not posekit.

These tests pin what ``posekit.io.limits`` does where mutation testing (``make mutation``)
found that nothing failed when the code was changed: the permission bits of a written file
(against ``os.stat`` of a file Python's own ``open`` makes under the same umask, POSIX
``open(2)`` semantics), the bytes and byte counts of what is read back (against the bytes the
test wrote), where the temporary file lives while a write is under way, that no file
descriptor is left open, and the message contract of every refusal: what was wrong, where
(the path, or "standard input", or "input" for an open stream) and what is accepted, with
limits in binary units (IEC 80000-13: 1 KiB = 1024 bytes, 1 MiB = 1024 KiB).
"""

from __future__ import annotations

import errno
import glob
import io
import os
import re
import stat
import sys
import tempfile
from pathlib import Path

import pytest

from posekit.core.errors import PoseInputError, WrongTypeError
from posekit.io.limits import (FileReadError, FileWriteError, InputTooLargeError, read_bounded, read_bounded_text,
                               write_atomic)


def says(message: str, phrase: str) -> bool:
    """``phrase`` appears in ``message`` as whole words, with the case given (no ``XXwordXX`` or ``WORD``)."""
    return re.search(r"(?<!\w)" + re.escape(phrase) + r"(?!\w)", message) is not None


def sentences_start_capitalised(message: str) -> bool:
    """Every sentence after the first begins with a capital letter (common practice in English prose)."""
    return all(m.group(1).isupper() for m in re.finditer(r"\. ([A-Za-z])", message))


def listing(folder: Path) -> list[str]:
    return sorted(os.listdir(folder))


# --- reading: what comes back is the bytes the test wrote ---------------------------------------------------


@pytest.mark.parametrize("size", [0, 1, 1000, (1 << 20) + 17, (5 << 20) // 2])
def test_a_file_reads_back_as_the_bytes_written(tmp_path, size):
    data = os.urandom(size)  # source: the operating system's random bytes, written by the test
    path = tmp_path / "poses.bin"
    path.write_bytes(data)
    assert os.stat(path).st_size == size  # source: os.stat
    got = read_bounded(path, limit=size)
    assert got == data and len(got) == size
    # one byte less than the file is refused
    if size:
        with pytest.raises(InputTooLargeError):
            read_bounded(path, limit=size - 1)


@pytest.mark.parametrize("size", [0, 5, (1 << 20) - 1, 1 << 20, (1 << 20) + 1, (5 << 20) // 2])
def test_a_byte_stream_reads_back_whole_across_chunks(size):
    data = os.urandom(size)
    got = read_bounded(io.BytesIO(data), limit=size)
    assert got == data and len(got) == size


def test_a_text_stream_is_read_as_its_utf8_bytes_and_a_lone_surrogate_is_a_typed_error():
    # Source of the expected bytes: Python's own UTF-8 codec ("surrogatepass" keeps a lone surrogate as
    # its 3-byte form, so the decoder below reports it at its position instead of the read crashing).
    text = "é 1 2 3"
    assert read_bounded(io.StringIO(text), limit=100) == text.encode("utf-8")
    bad = "ab\ud800cd"
    raw = read_bounded(io.StringIO(bad), limit=100)
    assert raw == bad.encode("utf-8", "surrogatepass") and len(raw) == 7
    with pytest.raises(FileReadError) as err:
        read_bounded_text(io.StringIO(bad), limit=100, what="pasted poses")
    msg = str(err.value)
    with pytest.raises(UnicodeDecodeError) as ref:  # source: Python's UTF-8 decoder
        raw.decode("utf-8")
    assert says(msg, "pasted poses") and says(msg, "input") and says(msg, "UTF-8")
    assert f"0x{raw[ref.value.start]:02x}" in msg and says(msg, f"offset {ref.value.start}")
    assert "object at 0x" not in msg  # an open stream is called "input", not its repr


@pytest.mark.parametrize("actual,reported", [(3000, 1000), ((3 << 20) + 5, 1 << 20), (100, 1000)])
def test_a_file_that_grew_or_shrank_after_it_was_measured_reads_whole(tmp_path, monkeypatch, actual, reported):
    # A file appended to between the size check and the read (a log still being written): what it
    # holds when read is what comes back, not what os.fstat said a moment earlier.
    data = os.urandom(actual)
    path = tmp_path / "growing.log"
    path.write_bytes(data)
    real_fstat = os.fstat

    def fstat(fd):
        st = real_fstat(fd)
        if stat.S_ISREG(st.st_mode) and st.st_size == actual:
            values = list(st)
            values[stat.ST_SIZE] = reported
            return os.stat_result(values)
        return st

    monkeypatch.setattr(os, "fstat", fstat)
    assert read_bounded(path, limit=actual) == data
    with pytest.raises(InputTooLargeError) as err:
        read_bounded(path, limit=actual - 1, what="trajectory log")
    assert says(err.value.args[0], "trajectory log") and repr(str(path)) in str(err.value)


# --- reading: refusals say what, where and what is accepted --------------------------------------------------


def test_a_file_past_its_limit_names_the_file_and_the_limit_in_binary_units(tmp_path):
    path = tmp_path / "big poses.txt"
    path.write_bytes(b"1" * 1025)
    with pytest.raises(InputTooLargeError) as err:
        read_bounded(path, limit=1024, what="pose list")
    msg = str(err.value)
    assert says(msg, "pose list") and repr(str(path)) in msg
    assert says(msg, "1 KiB")  # source: IEC 80000-13, 1024 bytes = 1 KiB
    assert "limit=" in msg  # what is accepted: a larger limit= (the documented way out)
    assert isinstance(err.value, PoseInputError)


def test_an_open_stream_past_its_limit_names_what_it_is(tmp_path):
    with pytest.raises(InputTooLargeError) as err:
        read_bounded(io.BytesIO(b"x" * ((3 << 20) + 1)), limit=3 << 20, what="pasted poses")
    msg = str(err.value)
    assert says(msg, "pasted poses") and says(msg, "3 MiB") and "limit=" in msg  # 3 MiB: IEC 80000-13
    assert not says(msg, "None")


class _Stdin:
    """Standard input as the interpreter sets it up: text on top of a byte buffer."""

    def __init__(self, data: bytes):
        self.buffer = io.BytesIO(data)

    def read(self, n=-1):  # pragma: no cover - the bytes must be read from .buffer
        raise AssertionError("read the text layer instead of the byte buffer")


def test_standard_input_is_read_from_its_byte_buffer(monkeypatch):
    data = "1 2 3\né\n".encode("utf-8")
    monkeypatch.setattr(sys, "stdin", _Stdin(data))
    assert read_bounded("-", limit=100) == data


def test_standard_input_without_a_byte_buffer_is_read_as_text(monkeypatch):
    # A notebook or test harness may replace sys.stdin with a text-only stream (io.StringIO has no .buffer).
    monkeypatch.setattr(sys, "stdin", io.StringIO("0.1 0.2 0.3"))
    assert read_bounded("-", limit=100) == b"0.1 0.2 0.3"


def test_standard_input_past_its_limit_says_standard_input(monkeypatch):
    monkeypatch.setattr(sys, "stdin", _Stdin(b"7" * 2049))
    with pytest.raises(InputTooLargeError) as err:
        read_bounded("-", limit=2048, what="pasted poses")
    msg = str(err.value)
    assert says(msg, "pasted poses") and says(msg, "standard input") and says(msg, "2 KiB")  # IEC 80000-13


def test_standard_input_that_is_not_utf8_says_standard_input(monkeypatch):
    data = b"1 2 \xff 4"
    monkeypatch.setattr(sys, "stdin", _Stdin(data))
    with pytest.raises(FileReadError) as err:
        read_bounded_text("-", limit=100, what="pasted poses")
    msg = str(err.value)
    with pytest.raises(UnicodeDecodeError) as ref:  # source: Python's UTF-8 decoder
        data.decode("utf-8")
    assert says(msg, "pasted poses") and says(msg, "standard input") and "'-'" not in msg
    assert "0xff" in msg and says(msg, f"offset {ref.value.start}") and says(msg, "save it as UTF-8")


def test_a_file_that_is_not_utf8_is_named_by_its_path(tmp_path):
    path = tmp_path / "latin1 poses.txt"
    data = "x 1 2 3\nwinkel 30°\n".encode("latin-1")
    path.write_bytes(data)
    with pytest.raises(UnicodeDecodeError) as ref:  # source: Python's UTF-8 decoder
        data.decode("utf-8")
    with pytest.raises(FileReadError) as err:
        read_bounded_text(path, limit=1000, what="pose list")
    msg = str(err.value)
    assert says(msg, "pose list") and repr(str(path)) in msg and not says(msg, "standard input")
    assert f"0x{data[ref.value.start]:02x}" in msg and says(msg, f"offset {ref.value.start}")


def test_read_bounded_text_passes_its_what_on_to_the_read(tmp_path):
    missing = tmp_path / "nowhere.txt"
    with pytest.raises(FileReadError) as err:
        read_bounded_text(missing, limit=10, what="expected-pose file")
    assert says(str(err.value), "expected-pose file") and repr(str(missing)) in str(err.value)


@pytest.mark.parametrize("reader", [read_bounded, read_bounded_text])
def test_without_what_a_path_is_called_a_file(tmp_path, reader):
    missing = tmp_path / "nowhere.txt"
    with pytest.raises(FileReadError) as err:
        reader(missing, limit=10)
    assert str(err.value).startswith(f"file {str(missing)!r} ")


def test_a_missing_file_says_the_system_reason_in_words(tmp_path):
    missing = tmp_path / "nowhere.txt"
    with pytest.raises(FileReadError) as err:
        read_bounded(missing, limit=10, what="pose list")
    msg = str(err.value)
    # source: the C library's text for ENOENT (os.strerror), without Python's "[Errno 2]" wrapping
    assert f"({os.strerror(errno.ENOENT)})" in msg and "[Errno" not in msg
    assert repr(str(missing)) in msg and says(msg, "expected a readable file")


def test_a_path_through_a_file_says_the_system_reason_in_words(tmp_path):
    (tmp_path / "plain.txt").write_text("1 2 3")
    bad = tmp_path / "plain.txt" / "inner.txt"
    with pytest.raises(FileReadError) as err:
        read_bounded(bad, limit=10)
    assert f"({os.strerror(errno.ENOTDIR)})" in str(err.value) and repr(str(bad)) in str(err.value)


def test_a_folder_given_as_a_file_names_the_folder(tmp_path):
    with pytest.raises(FileReadError) as err:
        read_bounded(tmp_path, limit=10, what="state file")
    msg = str(err.value)
    assert says(msg, "state file") and repr(str(tmp_path)) in msg and says(msg, "expected a file")


@pytest.mark.parametrize("value", [12345, 2.5, None, b"x" * 100, list(range(100))])
def test_a_source_that_is_not_a_path_or_stream_is_quoted_by_type_and_value(value):
    with pytest.raises(WrongTypeError) as err:
        read_bounded(value, limit=10, what="pose list")
    msg = str(err.value)
    text = repr(value)  # source: Python's repr; the message quotes 40 characters of it at most
    quoted = text[:40] + ("..." if len(text) > 40 else "")
    assert msg.startswith("pose list: ")
    assert says(msg, type(value).__name__) and msg.endswith(" " + quoted)
    assert "a file path, '-' or an open file" in msg


# --- writing: bytes, modes, where the temporary file lives ---------------------------------------------------


@pytest.mark.parametrize("kind", [bytes, bytearray, memoryview])
def test_byte_content_of_every_kind_is_written_as_given(tmp_path, kind):
    data = os.urandom(4099)
    path = tmp_path / "out.bin"
    assert write_atomic(path, kind(data)) == path
    assert os.stat(path).st_size == 4099 and path.read_bytes() == data  # source: os.stat and the bytes written


def test_text_content_is_written_as_utf8(tmp_path):
    text = "pose «A» → 30°\n"
    path = tmp_path / "out.txt"
    write_atomic(path, text)
    assert path.read_bytes() == text.encode("utf-8")  # source: Python's UTF-8 codec
    assert os.stat(path).st_size == len(text.encode("utf-8"))


@pytest.mark.parametrize("mask", [0o022, 0o027, 0o077, 0o002, 0o000])
def test_a_new_file_gets_the_mode_pythons_open_gives_under_the_umask(tmp_path, mask):
    old = os.umask(mask)
    try:
        with open(tmp_path / "reference.txt", "w") as fh:  # source: Python's open (POSIX open(2), mode 0o666)
            fh.write("r")
        write_atomic(tmp_path / "written.txt", "w")
    finally:
        os.umask(old)
    expected = stat.S_IMODE(os.stat(tmp_path / "reference.txt").st_mode)
    assert expected == 0o666 & ~mask  # the POSIX rule, stated by the test
    assert stat.S_IMODE(os.stat(tmp_path / "written.txt").st_mode) == expected


@pytest.mark.parametrize("mode", [0o600, 0o640, 0o604, 0o755, 0o444])
def test_an_existing_file_keeps_its_mode(tmp_path, mode):
    path = tmp_path / "kept.txt"
    path.write_text("old")
    os.chmod(path, mode)
    old = os.umask(0o077)  # a umask that would give another mode to a new file
    try:
        write_atomic(path, "new content")
    finally:
        os.umask(old)
    assert path.read_text() == "new content"
    assert stat.S_IMODE(os.stat(path).st_mode) == mode  # source: os.stat


def test_the_temporary_file_is_a_hidden_file_in_the_target_folder(tmp_path, monkeypatch):
    # While the content is being synced, the folder holds one extra entry: a dot file (so a glob such as
    # "*.json" or "*" does not pick up a half-written file; source: Python's glob skips dot files).
    (tmp_path / "other.json").write_text("{}")
    before = listing(tmp_path)
    seen = []
    real_fsync = os.fsync

    def fsync(fd):
        seen.append((listing(tmp_path), sorted(glob.glob(str(tmp_path / "*")))))
        return real_fsync(fd)

    monkeypatch.setattr(os, "fsync", fsync)
    write_atomic(tmp_path / "state.json", '{"a": 1}')
    names, globbed = seen[0]
    extra = [n for n in names if n not in before]
    assert len(extra) == 1 and extra[0].startswith(".state.json.")
    assert globbed == [str(tmp_path / "other.json")]
    assert listing(tmp_path) == sorted(before + ["state.json"])


def test_the_temporary_file_does_not_depend_on_pythons_temp_folder(tmp_path, monkeypatch):
    # The temporary file is made in the target's folder (the docstring's promise, so os.replace is one
    # step on one file system), not in Python's default temp folder; a missing default must not matter.
    monkeypatch.setattr(tempfile, "tempdir", str(tmp_path / "no such temp folder"))
    path = write_atomic(tmp_path / "out.txt", "content")
    assert path.read_text() == "content"


@pytest.mark.skipif(not os.path.isdir("/proc/self/fd"), reason="needs /proc/self/fd (Linux)")
def test_no_file_descriptor_is_left_open(tmp_path):
    before = len(os.listdir("/proc/self/fd"))  # source: the kernel's list of this process's open files
    for i in range(8):
        write_atomic(tmp_path / f"f{i}.txt", "x" * i)
        write_atomic(tmp_path / "same.txt", b"y" * i)
    assert len(os.listdir("/proc/self/fd")) == before


# --- writing: refusals say what, where and what is accepted --------------------------------------------------


def test_a_lone_surrogate_is_refused_with_its_code_point_and_position(tmp_path):
    path = tmp_path / "notes.txt"
    path.write_bytes(b"earlier content")
    text = "abc\udc80def"
    with pytest.raises(UnicodeEncodeError) as ref:  # source: Python's UTF-8 encoder
        text.encode("utf-8")
    with pytest.raises(FileWriteError) as err:
        write_atomic(path, text, what="notes file")
    msg = str(err.value)
    assert says(msg, "notes file") and repr(str(path)) in msg
    assert says(msg, f"U+{ord(text[ref.value.start]):04X}") and says(msg, "U+DC80")  # Unicode's U+ notation
    assert says(msg, f"position {ref.value.start}") and says(msg, "UTF-8")
    assert says(msg, "Any earlier file is untouched.") and sentences_start_capitalised(msg)
    assert path.read_bytes() == b"earlier content" and listing(tmp_path) == ["notes.txt"]


@pytest.mark.parametrize("content", [12, 1.5, None, ["a", "b"], {"a": 1}])
def test_content_that_is_not_text_or_bytes_is_refused_by_type(tmp_path, content):
    with pytest.raises(WrongTypeError) as err:
        write_atomic(tmp_path / "out.txt", content, what="report")
    msg = str(err.value)
    assert msg.startswith("report: ") and says(msg, "text or bytes") and msg.endswith(type(content).__name__)
    assert listing(tmp_path) == []


def test_a_missing_folder_is_named_with_the_way_out(tmp_path):
    folder = tmp_path / "not made yet"
    path = folder / "out.json"
    with pytest.raises(FileWriteError) as err:
        write_atomic(path, "{}", what="state file")
    msg = str(err.value)
    assert says(msg, "state file") and repr(str(path)) in msg and repr(str(folder)) in msg
    assert says(msg, "create it first")


def test_without_what_the_target_is_called_a_file(tmp_path):
    path = tmp_path / "missing folder" / "out.json"
    with pytest.raises(FileWriteError) as err:
        write_atomic(path, "{}")
    assert str(err.value).startswith(f"file {str(path)!r} ")


def test_a_folder_as_the_target_is_named(tmp_path):
    target = tmp_path / "a folder"
    target.mkdir()
    with pytest.raises(FileWriteError) as err:
        write_atomic(target, "{}", what="report")
    msg = str(err.value)
    assert says(msg, "report") and repr(str(target)) in msg and says(msg, "give a file name")
    assert target.is_dir() and listing(target) == []


def test_a_failed_sync_leaves_the_earlier_file_and_says_why(tmp_path, monkeypatch):
    # A disk error while syncing (simulated by making os.fsync fail as the kernel would, with EIO).
    path = tmp_path / "state.json"
    path.write_bytes(b'{"earlier": true}')
    os.chmod(path, 0o640)

    def fsync(fd):
        raise OSError(errno.EIO, os.strerror(errno.EIO))

    monkeypatch.setattr(os, "fsync", fsync)
    with pytest.raises(FileWriteError) as err:
        write_atomic(path, '{"later": true}', what="state file")
    msg = str(err.value)
    assert says(msg, "state file") and repr(str(path)) in msg
    assert f"({os.strerror(errno.EIO)})" in msg and "[Errno" not in msg  # source: os.strerror
    assert says(msg, "any earlier file is untouched") and isinstance(err.value, OSError)
    assert path.read_bytes() == b'{"earlier": true}' and stat.S_IMODE(os.stat(path).st_mode) == 0o640
    assert listing(tmp_path) == ["state.json"]  # the temporary file is gone


def test_a_long_but_valid_file_name_is_written(tmp_path):
    """The temporary file's name once added 15 characters to the target's, so a valid name of
    241-255 characters failed in tempfile.mkstemp with a bare OSError (ENAMETOOLONG)."""
    name = "a" * 250  # source: common practice, 255 bytes is the name limit of ext4, tmpfs and most Linux file systems
    if os.pathconf(tmp_path, "PC_NAME_MAX") < 250:
        pytest.skip("this file system has shorter names")
    write_atomic(tmp_path / name, "x")
    assert (tmp_path / name).read_text() == "x"
    assert sorted(p.name for p in tmp_path.iterdir()) == [name]  # no temporary left behind


def test_a_folder_that_cannot_take_a_new_file_is_a_typed_error(tmp_path, monkeypatch):
    """Any failure to make the temporary file is a FileWriteError naming the target (simulated: the
    tests run as root, whom permissions do not stop)."""
    import errno
    import tempfile

    def refuse(*args, **kwargs):
        raise PermissionError(errno.EACCES, os.strerror(errno.EACCES))

    monkeypatch.setattr(tempfile, "mkstemp", refuse)
    with pytest.raises(FileWriteError, match=r"not written \(Permission denied\).*accepted: a folder you can write"):
        write_atomic(tmp_path / "out.json", "x")
    assert list(tmp_path.iterdir()) == []
