"""Band-gap search: the best stack under constraints, its alternatives and trade-offs.

>>> from gapmatch.search import make_problem, optimise
>>> problem = make_problem(2, "series", fixed_eV={2: 1.12})   # doctest: +SKIP
>>> result = optimise(problem, storage=":memory:")             # doctest: +SKIP
>>> result.best["gaps_eV"]                                     # doctest: +SKIP
[1.729..., 1.12]
"""

from __future__ import annotations

from .costs import constraint_costs, quick_optimum
from .global_stage import distinct, global_samples, sobol_candidates
from .polish import PolishResult, polish
from .problem import (
    ABSORBER_CONDITIONS,
    DEFAULT_MIN_SPACING_EV,
    DEFAULT_ROBUSTNESS_EV,
    DEFAULT_WINDOW_EV,
    THICKNESS_RANGE_NM,
    EfficiencyObjective,
    Evaluation,
    Objective,
    ObjectiveBatch,
    SearchProblem,
    make_problem,
)
from .result import SearchResult, pareto_mask, trials_frame
from .runner import (
    SearchInterrupted,
    default_study_name,
    default_trials,
    optimise,
    thick_reference,
)
from .samplers import SAMPLERS
from .storage import DEFAULT_STORAGE, storage_url

__all__ = [
    "ABSORBER_CONDITIONS",
    "DEFAULT_MIN_SPACING_EV",
    "DEFAULT_ROBUSTNESS_EV",
    "DEFAULT_STORAGE",
    "DEFAULT_WINDOW_EV",
    "SAMPLERS",
    "THICKNESS_RANGE_NM",
    "EfficiencyObjective",
    "Evaluation",
    "Objective",
    "ObjectiveBatch",
    "PolishResult",
    "SearchInterrupted",
    "SearchProblem",
    "SearchResult",
    "constraint_costs",
    "default_study_name",
    "default_trials",
    "distinct",
    "global_samples",
    "make_problem",
    "optimise",
    "pareto_mask",
    "polish",
    "quick_optimum",
    "sobol_candidates",
    "storage_url",
    "thick_reference",
    "trials_frame",
]
