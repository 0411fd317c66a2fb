"""Reading and writing what people hand us, in one room.

Pasted text, words, state files, report files and logs are read here, under one set of
size limits (:mod:`~posekit.io.limits`), and every file posekit writes is written
atomically (:func:`~posekit.io.limits.write_atomic`).  Imports numpy, the standard
library and :mod:`posekit.core` only.
"""

from .limits import (LOG_LIMIT, NAME_LIMIT, PASTE_LIMIT, REPORT_LIMIT, STATE_LIMIT, TEXT_FILE_LIMIT, FileReadError,
                     FileWriteError, InputTooLargeError, check_text_size, read_bounded, read_bounded_text,
                     write_atomic)

__all__ = ["LOG_LIMIT", "NAME_LIMIT", "PASTE_LIMIT", "REPORT_LIMIT", "STATE_LIMIT", "TEXT_FILE_LIMIT",
           "FileReadError", "FileWriteError", "InputTooLargeError", "check_text_size", "read_bounded",
           "read_bounded_text", "write_atomic"]
