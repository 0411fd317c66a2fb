"""Size limits, bounded reads and atomic writes: the one place posekit touches files.

Every read of something a person handed us (a file, standard input, a pasted string)
goes through :func:`read_bounded` or :func:`check_text_size`, so nothing is read
without limit whatever a file's reported size says (``/dev/zero`` reports 0 bytes).
Every write goes through :func:`write_atomic`: the content is made in full first,
written to a temporary file in the target's folder, flushed and synced, then moved
over the target in one step (``os.replace``).  On any failure the earlier file is
left exactly as it was.

Limits are module constants; a caller that needs more passes ``limit=`` and the error
message says so.

>>> check_text_size("1 2 3", what="pasted text")
'1 2 3'
"""

from __future__ import annotations

import io
import os
import sys
import tempfile
from pathlib import Path

from ..core.errors import InputTooLargeError, PoseInputError

__all__ = [
    "PASTE_LIMIT", "TEXT_FILE_LIMIT", "STATE_LIMIT", "REPORT_LIMIT", "LOG_LIMIT", "NAME_LIMIT",
    "InputTooLargeError", "FileReadError", "FileWriteError",
    "check_text_size", "read_bounded", "read_bounded_text", "write_atomic", "size_words",
]

#: Pasted text (a paste box, a CLI argument, standard input of ``posekit check``): 1 MiB.
PASTE_LIMIT = 1 << 20
#: A text file of poses, one per line (``--expected-file``): 16 MiB.
TEXT_FILE_LIMIT = 16 << 20
#: A posekit state file: 8 MiB.
STATE_LIMIT = 8 << 20
#: A posekit HTML report (the figure data makes it larger than its state): 64 MiB.
REPORT_LIMIT = 64 << 20
#: A trajectory log (CSV): 1 GiB.
LOG_LIMIT = 1 << 30
#: A frame name, a title, one word of convention text: 200 characters.
NAME_LIMIT = 200


class FileReadError(PoseInputError):
    """A file could not be read (missing, a folder, no permission, not UTF-8 text)."""


class FileWriteError(PoseInputError, OSError):
    """A file could not be written; any earlier file at that path is untouched."""


def size_words(n: int) -> str:
    """``n`` bytes in words a person reads at a glance.

    >>> size_words(1 << 20), size_words(1536), size_words(12)
    ('1 MiB', '1.5 KiB', '12 bytes')
    """
    for unit, shift in (("GiB", 30), ("MiB", 20), ("KiB", 10)):
        if n >= 1 << shift:
            value = n / (1 << shift)
            return f"{value:.{0 if value == int(value) else 1}f} {unit}"
    return f"{n} bytes"


def _too_large(what: str, limit: int, unit: str = "bytes") -> InputTooLargeError:
    amount = size_words(limit) if unit == "bytes" else f"{limit} {unit}"
    return InputTooLargeError(f"{what} is larger than the limit of {amount}; nothing past the limit was read. "
                              f"Pass a larger limit= (or split the input) if it really is this large.")


def check_text_size(text: str, *, what: str = "text", limit: int = PASTE_LIMIT) -> str:
    """Return ``text`` unchanged if it has at most ``limit`` characters, else raise.

    Raises :class:`InputTooLargeError` naming the limit, or
    :class:`~posekit.core.errors.WrongTypeError` if ``text`` is not a string.
    """
    from ..core.errors import WrongTypeError, summarise

    if not isinstance(text, str):
        raise WrongTypeError(f"{what}: expected text (a str), got {type(text).__name__} {summarise(text, 40)}")
    if len(text) > limit:
        raise _too_large(f"{what} ({len(text)} characters)", limit, "characters")
    return text


def _read_stream(stream, limit: int, what: str, first: bytes = b"") -> bytes:
    chunks, total = ([first] if first else []), len(first)
    while True:
        chunk = stream.read(min(1 << 20, limit + 1 - total))
        if not chunk:
            break
        if isinstance(chunk, str):
            chunk = chunk.encode("utf-8", "surrogatepass")
        chunks.append(chunk)
        total += len(chunk)
        if total > limit:
            raise _too_large(what, limit)
    return chunks[0] if len(chunks) == 1 else b"".join(chunks)


def _read_file(fh, limit: int, what: str) -> bytes:
    """A regular file in one read of the size it reports (no chunk list joined into a second copy),
    then on in chunks if it grew meanwhile; never more than ``limit + 1`` bytes."""
    try:
        size = os.fstat(fh.fileno()).st_size
    except (OSError, AttributeError, ValueError):
        size = 0
    if size <= 0:  # a pipe, a special file or an empty file: in chunks
        return _read_stream(fh, limit, what)
    first = fh.read(min(size, limit) + 1)
    if len(first) > limit:
        raise _too_large(what, limit)
    if len(first) <= size:  # all there was
        return first
    return _read_stream(fh, limit, what, first)


def read_bounded(source, *, limit: int, what: str = "file") -> bytes:
    """Read at most ``limit`` bytes from a path, ``"-"`` (standard input) or an open stream.

    Reads ``limit + 1`` bytes at most whatever the file reports as its size; past the
    limit raises :class:`InputTooLargeError`.  A missing file, a folder or no permission
    raise :class:`FileReadError` naming the path.
    """
    if source == "-":
        stream = getattr(sys.stdin, "buffer", sys.stdin)
        return _read_stream(stream, limit, f"{what} on standard input")
    if hasattr(source, "read"):
        return _read_stream(source, limit, what)
    if not isinstance(source, (str, os.PathLike)):
        from ..core.errors import WrongTypeError, summarise

        raise WrongTypeError(f"{what}: expected a file path, '-' or an open file, got {type(source).__name__} "
                             f"{summarise(source, 40)}")
    path = Path(source)
    try:
        with open(path, "rb") as fh:
            return _read_file(fh, limit, f"{what} {str(path)!r}")
    except IsADirectoryError:
        raise FileReadError(f"{what} {str(path)!r} is a folder; expected a file") from None
    except OSError as exc:
        raise FileReadError(f"{what} {str(path)!r} cannot be read ({exc.strerror or exc}); expected a readable "
                            "file") from None


def read_bounded_text(source, *, limit: int, what: str = "file") -> str:
    """:func:`read_bounded`, decoded as UTF-8 (a leading byte-order mark is dropped).

    Bytes that are not UTF-8 raise :class:`FileReadError` with the offset of the first bad byte.
    """
    data = read_bounded(source, limit=limit, what=what)
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        name = "standard input" if source == "-" else (repr(str(source)) if not hasattr(source, "read") else "input")
        raise FileReadError(f"{what} {name} is not UTF-8 text (byte 0x{exc.object[exc.start]:02x} at offset "
                            f"{exc.start}); save it as UTF-8") from None


def write_atomic(path, content, *, what: str = "file") -> Path:
    """Write ``content`` (str, encoded UTF-8, or bytes) to ``path`` in one step.

    The content is encoded in full before anything is opened; it goes to a temporary
    file in the same folder, which is flushed, synced and moved over ``path`` with
    :func:`os.replace`.  On any failure the temporary file is removed and an earlier
    file at ``path`` is untouched.  A missing folder raises :class:`FileWriteError`
    naming it.  Returns the path.
    """
    path = Path(path)
    if isinstance(content, str):
        try:
            data = content.encode("utf-8")
        except UnicodeEncodeError as exc:
            bad = content[exc.start]
            raise FileWriteError(f"{what} {str(path)!r} not written: character U+{ord(bad):04X} at position "
                                 f"{exc.start} cannot be stored as UTF-8 (a lone surrogate); remove it. "
                                 "Any earlier file is untouched.") from None
    elif isinstance(content, (bytes, bytearray, memoryview)):
        data = bytes(content)
    else:
        from ..core.errors import WrongTypeError

        raise WrongTypeError(f"{what}: content must be text or bytes, got {type(content).__name__}")
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise FileWriteError(f"{what} {str(path)!r} not written: the folder {str(folder)!r} does not exist; "
                             "create it first")
    if path.is_dir():
        raise FileWriteError(f"{what} {str(path)!r} not written: that path is a folder; give a file name")
    try:  # a hidden temporary beside the target; its name is kept short, so any valid target name fits
        fd, tmp = tempfile.mkstemp(prefix=f".{path.name[:64]}.", suffix=".part", dir=folder)
    except OSError as exc:
        raise FileWriteError(f"{what} {str(path)!r} not written ({exc.strerror or exc}); any earlier file is "
                             "untouched; accepted: a folder you can write") from None
    try:
        with io.open(fd, "wb", closefd=True) as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        if path.exists():
            try:
                os.chmod(tmp, path.stat().st_mode & 0o7777)
            except OSError:
                pass
        else:
            umask = os.umask(0)
            os.umask(umask)
            os.chmod(tmp, 0o666 & ~umask)
        os.replace(tmp, path)
    except BaseException as exc:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        if isinstance(exc, OSError):
            raise FileWriteError(f"{what} {str(path)!r} not written ({exc.strerror or exc}); any earlier file is "
                                 "untouched") from None
        raise
    try:  # make the rename itself durable
        dfd = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(dfd)
        finally:
            os.close(dfd)
    except OSError:
        pass
    return path
