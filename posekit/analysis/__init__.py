"""Analysis layer (numpy + scipy): bridges, singularity, diagnosis, trajectories, frame graphs."""

from .scipy_bridge import from_scipy_rotation, from_scipy_transform, to_scipy_rotation, to_scipy_transform

__all__ = ["to_scipy_rotation", "from_scipy_rotation", "to_scipy_transform", "from_scipy_transform"]

# paste parser and mismatch diagnosis (issue 4)
from .diagnose import (BatchDiagnosis, ConstantOffset, DescriptionError, Diagnosis, ExpectedPose, Explanation,
                       average_rotation, axis_remaps, describe_remap, diagnose, diagnose_batch, expected_pose,
                       pose_from_words)
from .parse import (Interpretation, NoInterpretationError, ParsedNumbers, PasteParseError, interpret_numbers,
                    parse_numbers, unit_judgement)

__all__ += ["parse_numbers", "interpret_numbers", "unit_judgement", "ParsedNumbers", "Interpretation",
            "PasteParseError", "NoInterpretationError", "diagnose", "diagnose_batch", "expected_pose",
            "pose_from_words", "axis_remaps", "describe_remap", "average_rotation", "Diagnosis", "BatchDiagnosis",
            "Explanation", "ExpectedPose", "ConstantOffset", "DescriptionError"]
