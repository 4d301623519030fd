"""Material roadmaps: which candidate stack is most likely best at each milestone.

>>> from gapmatch.roadmap import load_roadmap, run_roadmap      # doctest: +SKIP
>>> result = run_roadmap(load_roadmap("configs/roadmap-demo.toml"))  # doctest: +SKIP
>>> result.ranking_frame()                                       # doctest: +SKIP

A roadmap study names candidate stacks by their materials (from
:mod:`gapmatch.materials`, overridable), milestones (years) and per material and milestone
the projected parameters with their uncertainty. :func:`run_roadmap` chooses each
candidate's best gaps within its materials' windows, propagates the uncertainties by Monte
Carlo with common random numbers through one batched evaluation per candidate and
milestone, and returns a :class:`RoadmapResult` (P10/P50/P90, probability of being best,
headroom by cause, sensitivity; ``to_frame()``, ``to_dict()``, ``write_csv()``). Figures
are in :mod:`gapmatch.roadmap.figures`.

Projections are scenario assumptions, not forecasts; results are detailed-balance
ceilings under those assumptions.
"""

from __future__ import annotations

from .engine import HEADROOM_ORDER, crn_uniforms, design_gaps, run_roadmap
from .evaluator import EfficiencyEvaluator, Evaluator, EvaluatorBatch
from .result import CAUTION, CandidateOutcome, RoadmapResult
from .schema import (
    UNCERTAIN_PARAMETERS,
    Candidate,
    Projection,
    RoadmapStudy,
    Uncertain,
    load_roadmap,
    parse_roadmap,
)

__all__ = [
    "CAUTION",
    "HEADROOM_ORDER",
    "UNCERTAIN_PARAMETERS",
    "Candidate",
    "CandidateOutcome",
    "EfficiencyEvaluator",
    "Evaluator",
    "EvaluatorBatch",
    "Projection",
    "RoadmapResult",
    "RoadmapStudy",
    "Uncertain",
    "crn_uniforms",
    "design_gaps",
    "load_roadmap",
    "parse_roadmap",
    "run_roadmap",
]
