"""Reading and writing what people hand us, in one room.

* :mod:`~posekit.io.limits` -- the size limits, bounded reads (paths, ``-``, streams) and
  atomic writes; every file posekit reads or writes goes through them;
* :mod:`~posekit.io.paste` -- pasted numbers (the paste parser and its readings);
* :mod:`~posekit.io.words` -- a pose in words ("pitched 25 degrees down, 0.3 m forward");
* :mod:`~posekit.io.state` -- the state file (strict loading, atomic saving) and the state
  embedded in a report;
* :mod:`~posekit.io.settings` -- the field kinds and checker of each widget's saved settings;
* :mod:`~posekit.io.logs` -- CSV and Parquet logs (pyarrow when installed, else the Python reader).

Imports numpy, the standard library and :mod:`posekit.core` only, and pyarrow (optional) inside the
functions that read with it.
"""

from ..core.errors import InputTooLargeError
from .limits import (LOG_LIMIT, NAME_LIMIT, PASTE_LIMIT, REPORT_LIMIT, STATE_LIMIT, TEXT_FILE_LIMIT, FileReadError,
                     FileWriteError, check_text_size, read_bounded, read_bounded_text, write_atomic)
from .logs import (DuplicateColumnError, EmptyTrajectoryError, LogColumnTypeError, LogReadError, LogTable,
                   LogTooLargeError, MissingColumnError, MissingPackageError, RejectedRow, TrajectoryInputError,
                   have_pyarrow, read_log)
from .paste import (AmbiguousCommaError, CodeNameError, Interpretation, NestingTooDeepError, NoInterpretationError,
                    ParsedNumbers, PasteParseError, interpret_numbers, parse_numbers, unit_judgement)
from .settings import WidgetSettings, register_settings, setting
from .state import (Edge, NamedPose, State, StateFileError, load_state, read_report_state, save_state,
                    state_from_json, state_to_json)
from .words import DescriptionError, read_description

__all__ = ["LOG_LIMIT", "NAME_LIMIT", "PASTE_LIMIT", "REPORT_LIMIT", "STATE_LIMIT", "TEXT_FILE_LIMIT",
           "FileReadError", "FileWriteError", "InputTooLargeError", "check_text_size", "read_bounded",
           "read_bounded_text", "write_atomic",
           "DuplicateColumnError", "EmptyTrajectoryError", "LogReadError", "LogTable", "LogTooLargeError",
           "MissingColumnError", "RejectedRow", "TrajectoryInputError", "read_log", "LogColumnTypeError",
           "MissingPackageError", "have_pyarrow",
           "AmbiguousCommaError", "CodeNameError", "Interpretation", "NestingTooDeepError", "NoInterpretationError",
           "ParsedNumbers", "PasteParseError", "interpret_numbers", "parse_numbers", "unit_judgement",
           "WidgetSettings", "register_settings", "setting",
           "Edge", "NamedPose", "State", "StateFileError", "load_state", "read_report_state", "save_state",
           "state_from_json", "state_to_json", "DescriptionError", "read_description"]
