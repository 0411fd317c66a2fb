"""Analysis layer (numpy + scipy): bridges, singularity, sweeps, trajectory checks, state files, paste parser, diagnosis."""

from .scipy_bridge import from_scipy_rotation, from_scipy_transform, to_scipy_rotation, to_scipy_transform
from .singularity import (DEFAULT_POLE_TOLERANCE, FRAMES, EulerSolutions, LockGauge, PoleAnalysis, Sensitivity,
                          analyse_pole, euler_rate_jacobian, euler_solutions, lock_gauge, pole_distance,
                          pole_readout,
                          readback_sensitivity)
from ..io.state import (State, StateFileError, load_state, read_report_state, save_state, state_from_json,
                        state_to_json)
from .sweeps import DEFAULT_JUMP_THRESHOLD, Sweep, sign_continuous, sweep_between, sweep_one_angle, sweep_rotations
from .trajectory import (FINDINGS, TRAJECTORY_KINDS, ColumnMapping, DuplicateColumnError, EmptyTrajectoryError, Finding,
                         MissingColumnError, MotionPrior, RejectedRow, Span, TrajectoryInputError, TrajectoryReport,
                         TrajectoryTable, check_trajectory, check_trajectory_csv, read_trajectory_csv)

__all__ = [
    "to_scipy_rotation", "from_scipy_rotation", "to_scipy_transform", "from_scipy_transform",
    "DEFAULT_POLE_TOLERANCE", "FRAMES", "EulerSolutions", "LockGauge", "PoleAnalysis", "Sensitivity",
    "analyse_pole", "euler_rate_jacobian", "euler_solutions", "lock_gauge", "pole_distance", "pole_readout",
    "readback_sensitivity",
    "State", "StateFileError", "load_state", "read_report_state", "save_state", "state_from_json", "state_to_json",
    "DEFAULT_JUMP_THRESHOLD", "Sweep", "sign_continuous", "sweep_between", "sweep_one_angle", "sweep_rotations",
    "FINDINGS", "TRAJECTORY_KINDS", "ColumnMapping", "DuplicateColumnError", "EmptyTrajectoryError", "Finding", "MissingColumnError",
    "MotionPrior", "RejectedRow", "Span", "TrajectoryInputError", "TrajectoryReport", "TrajectoryTable",
    "check_trajectory", "check_trajectory_csv", "read_trajectory_csv",
]
# paste parser and mismatch diagnosis
from .diagnose import (BatchDiagnosis, ConstantOffset, DescriptionError, Diagnosis, ExpectedPose, Explanation,
                       average_rotation, axis_remaps, describe_remap, diagnose, diagnose_batch, expected_pose,
                       pose_from_words)
from ..io.paste import (Interpretation, NoInterpretationError, ParsedNumbers, PasteParseError, interpret_numbers,
                    parse_numbers, unit_judgement)

__all__ += ["parse_numbers", "interpret_numbers", "unit_judgement", "ParsedNumbers", "Interpretation",
            "PasteParseError", "NoInterpretationError", "diagnose", "diagnose_batch", "expected_pose",
            "pose_from_words", "axis_remaps", "describe_remap", "average_rotation", "Diagnosis", "BatchDiagnosis",
            "Explanation", "ExpectedPose", "ConstantOffset", "DescriptionError"]

from .frames_graph import (DisagreeingEdgeError, DisconnectedFramesError, Edge, EdgeFix, FrameGraph,  # noqa: E402
                           FrameGraphError, FrameNameError, FrameTree, Lookup, Loop, LoopCheck, LoopInTreeError,
                           Placement, Readout, Step, UnknownFrameError, read_planar, write_planar)
from .scenarios import orchard_rover, orchard_rover_planar  # noqa: E402

__all__ += ["FrameGraph", "Edge", "Step", "Lookup", "Readout", "Placement", "FrameTree", "Loop", "EdgeFix",
            "LoopCheck", "FrameGraphError", "UnknownFrameError", "FrameNameError", "DisconnectedFramesError",
            "DisagreeingEdgeError", "LoopInTreeError", "read_planar", "write_planar", "orchard_rover",
            "orchard_rover_planar"]
from .alignment import *; from .alignment import __all__ as _alignment_names; __all__ += _alignment_names  # noqa: E402,F401,F403,E702 (two sensors on one body)
from .fleet import (FLEET_COLUMNS, ClusterError, NoLogsFoundError, check_logs,  # noqa: E402 (many logs on Dask)
                    find_logs)
__all__ += ["check_logs", "find_logs", "FLEET_COLUMNS", "NoLogsFoundError", "ClusterError"]
from .motion import (KnownMotionError, MotionDiagnosis, RateDiagnosis, RateReading, RateReadingError,  # noqa: E402
                     RateStreamError, StillLogError, explain_known_motion, explain_rates, integrate_rates,
                     turning_path)
__all__ += ["explain_known_motion", "explain_rates", "integrate_rates", "turning_path", "MotionDiagnosis",
            "RateDiagnosis", "RateReading", "KnownMotionError", "StillLogError", "RateStreamError",
            "RateReadingError"]
