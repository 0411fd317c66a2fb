"""The one explanation engine: readings, slips, one scorer over N >= 1 pose pairs, rendering.

* :mod:`~posekit.explain.readings` -- what numbers were taken to mean (:class:`Reading`),
  which fields the user stated, and the tolerant reader / checked writer of numbers;
* :mod:`~posekit.explain.slips` -- :class:`Slip`, one structured "written one way, read
  another", its deviations (the prior, written once) and how to undo it;
* :mod:`~posekit.explain.scorer` -- :func:`score`, every slip against every pair at once,
  ranked and grouped into the same mistake written two ways vs separable by another sample;
* :mod:`~posekit.explain.render` -- sentences and runnable fix code, made from a slip.

Callers: :func:`posekit.analysis.diagnose` (N = 1), :func:`posekit.analysis.diagnose_batch`,
the frame graph's loop fixes and the trajectory checks.
"""

from .readings import COUNTS, FIELDS_OF_KIND, KINDS, Reading, read_numbers, readings_of, stated_fields, \
    stated_reading, write_numbers
from .render import fix_code, sentence, slip_parts
from .scorer import EQUIVALENT, Candidate, ExpectedSide, Group, Hypothesis, Ranking, angles_between, relations, score
from .slips import (FAMILY_ORDER, LENGTH_SCALES, NAMED_REMAPS, PRIOR_WEIGHT, PROPER_REMAPS, REMAPS, STATED_COST,
                    TRANSLATION_FRAMES, Slip, describe_remap, remap_cost)

__all__ = ["COUNTS", "FIELDS_OF_KIND", "KINDS", "Reading", "read_numbers", "readings_of", "stated_fields",
           "stated_reading", "write_numbers", "fix_code", "sentence", "slip_parts", "EQUIVALENT", "Candidate",
           "ExpectedSide", "Group", "Hypothesis", "Ranking", "angles_between", "relations", "score", "FAMILY_ORDER",
           "LENGTH_SCALES", "NAMED_REMAPS", "PRIOR_WEIGHT", "PROPER_REMAPS", "REMAPS", "STATED_COST",
           "TRANSLATION_FRAMES", "Slip", "describe_remap", "remap_cost"]
