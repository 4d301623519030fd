"""The vectorised global stage of a search: a scrambled Sobol sample of stacks.

Many thousand ordered stacks inside the windows go through the batch evaluator in one
call (:func:`sobol_candidates`) [1]_; the best distinct candidates (:func:`distinct`) seed
the optuna stage and start the polish. The sample size comes from the problem alone
(:func:`global_samples`): the number of free gaps and the objective's declared cost per
stack, never a clock.

References
----------
.. [1] I. M. Sobol', USSR Comput. Math. Math. Phys. 7, 86 (1967); S. Joe and F. Y. Kuo,
   SIAM J. Sci. Comput. 30, 2635 (2008) (direction numbers, as in scipy.stats.qmc).
"""

from __future__ import annotations

import warnings

import numpy as np

from .problem import SearchProblem

__all__ = [
    "DISTINCT_EV",
    "SLOW_STACK_S",
    "GLOBAL_BUDGET_S",
    "global_samples",
    "is_slow",
    "sobol_candidates",
    "distinct",
]

#: separation that makes two optima distinct [eV] (largest gap difference)
DISTINCT_EV = 0.05

#: declared evaluation cost per stack above which the polish uses 3 starts and no
#: Nelder-Mead [s]
SLOW_STACK_S = 100e-6
#: nominal time budget of the Sobol stage, at the objective's declared cost [s]
GLOBAL_BUDGET_S = 4.0


def global_samples(problem: SearchProblem) -> int:
    """Sobol sample size: 2^13 (one search variable) to 2^18 (four or more), reduced to
    fit :data:`GLOBAL_BUDGET_S` at the objective's declared cost per stack
    (:attr:`~gapmatch.search.problem.Objective.cost_per_stack_s`, e.g. Bose-Einstein
    dark current or finite absorbers), never below 2^9. Searched thicknesses count as
    variables.

    The size depends on the problem only, never on a clock, so one seed gives one
    answer on any machine and under any load.
    """
    k = problem.n_vars
    n = 2 ** min(18, 11 + 2 * k - (k > 3) * (k - 3))
    per = float(problem.objective.cost_per_stack_s)
    if per * 2 * n > GLOBAL_BUDGET_S:  # two sets of n points are evaluated
        n = 2 ** max(9, int(np.log2(GLOBAL_BUDGET_S / (2 * per))))
    return n


def is_slow(problem: SearchProblem) -> bool:
    """True when the objective declares a cost per stack above :data:`SLOW_STACK_S`."""
    return float(problem.objective.cost_per_stack_s) > SLOW_STACK_S


def sobol_candidates(problem: SearchProblem, n: int, seed: int) -> tuple[np.ndarray, np.ndarray]:
    """Feasible Sobol candidates and their main objective, best first.

    Half the points have their gaps sorted into decreasing order (uniform over the
    ordered region when the windows coincide), half are used as drawn; points outside
    the windows or violating a constraint are dropped (this stage is not stored).
    Searched thicknesses are drawn uniformly in ``log10`` of the thickness.

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        Search variables ``(M, n_vars)`` (free gaps [eV], then ``log10`` thicknesses
        [m]) and objective values ``(M,)``.
    """
    k, kg = problem.n_vars, problem.n_free
    lo, hi = problem.var_bounds[:, 0], problem.var_bounds[:, 1]
    from scipy.stats import qmc

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        u = qmc.Sobol(d=k, scramble=True, seed=seed).random(n)
    raw = lo + u * (hi - lo)
    s = raw.copy()
    if kg:
        ulo, uhi = lo[:kg].min(), hi[:kg].max()
        s[:, :kg] = -np.sort(-(ulo + u[:, :kg] * (uhi - ulo)), axis=1)
    x = np.vstack([s, raw])
    inwin = np.all((x >= lo) & (x <= hi), axis=1)
    x = x[inwin]
    if len(x) == 0:
        return np.empty((0, k)), np.empty(0)
    ev = problem.evaluate_vars(x, robust=False)
    ok = ev.feasible
    x, v = x[ok], ev.value[ok]
    order = np.argsort(-v)
    return x[order], v[order]


def distinct(x: np.ndarray, values: np.ndarray, count: int, sep: float = DISTINCT_EV) -> np.ndarray:
    """Indices of up to ``count`` points, best first, each at least ``sep`` from the
    others in some coordinate (greedy by value): [eV] for gaps, decades for ``log10``
    thicknesses (0.05 = 12 %)."""
    order = np.argsort(-np.asarray(values))
    keep: list[int] = []
    for i in order:
        if not np.isfinite(values[i]):
            continue
        if all(np.max(np.abs(x[i] - x[j])) >= sep for j in keep):
            keep.append(int(i))
            if len(keep) >= count:
                break
    return np.array(keep, dtype=int)
