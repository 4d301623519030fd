"""What each active constraint costs: the optimum with and without it.

A constraint is *active* when the best stack sits on it: a fixed gap (always), a window
edge within 1e-3 eV, a neighbour spacing within 1e-3 eV of the minimum, or a mismatch
ratio within 1e-4 of its limit. For each active constraint the problem is solved again
without it (:func:`quick_optimum`: the vectorised Sobol stage plus the polish, no
optuna), and the difference is its cost.
"""

from __future__ import annotations

import numpy as np

from .global_stage import distinct, global_samples, is_slow, sobol_candidates
from .polish import polish
from .problem import DEFAULT_WINDOW_EV, EfficiencyObjective, SearchProblem, make_problem

__all__ = ["quick_optimum", "constraint_costs"]

#: a window edge or spacing this close to the optimum counts as active [eV]
ACTIVE_EV = 1e-3
#: a mismatch ratio this close to its limit counts as active
ACTIVE_RATIO = 1e-4


def quick_optimum(
    problem: SearchProblem, *, seed: int = 0, samples: int | None = None, starts: int = 8
) -> tuple[np.ndarray, float]:
    """Global optimum without optuna or storage: Sobol batch, then polish of the best
    distinct basins.

    With finite absorbers (a slow objective) at most 3 starts are polished, by pattern
    search only (as in :func:`gapmatch.search.optimise`).

    Returns
    -------
    (numpy.ndarray, float)
        Gaps [eV] (top first) and objective value (fraction).
    """
    n = global_samples(problem) if samples is None else samples
    x, v = sobol_candidates(problem, n, seed)
    if len(x) == 0:
        return np.full(problem.n_junctions, np.nan), float("nan")
    if getattr(problem.objective, "finite", False) and is_slow(problem):
        res = polish(problem, x[distinct(x, v, min(starts, 3))], seed=seed, nelder_mead=0)
        best = max(res, key=lambda r: r.value)
        return best.gaps_eV, float(best.value)
    res = polish(problem, x[distinct(x, v, starts)], seed=seed)
    best = max(res, key=lambda r: r.value)
    return best.gaps_eV, float(best.value)


def _rebuild(problem: SearchProblem, **changes) -> SearchProblem:
    fixed = {k + 1: float(problem.bounds_eV[k, 0]) for k in np.flatnonzero(problem.fixed)}
    bounds = [tuple(map(float, b)) for b in problem.bounds_eV]
    for k in np.flatnonzero(problem.fixed):
        bounds[k] = DEFAULT_WINDOW_EV
    kw = dict(
        bounds_eV=bounds,
        fixed_eV=fixed or None,
        min_spacing_eV=problem.min_spacing_eV,
        min_mismatch_ratio=problem.min_mismatch_ratio,
        robustness_eV=None,
        objective=problem.objective,
    )
    if problem.n_thick and isinstance(problem.objective, EfficiencyObjective):
        # the thickness variables come back with the default objective of the conditions
        kw["objective"] = None
        kw["thickness_windows_nm"] = problem.thickness_windows_nm()
    kw.update(changes)
    return make_problem(problem.n_junctions, problem.connection, **kw, **problem.conditions)


def constraint_costs(
    problem: SearchProblem,
    best_gaps_eV,
    best_value: float,
    *,  # noqa: N803
    seed: int = 0,
    best_thickness_m=None,
) -> list[dict]:
    """The efficiency with and without each constraint of a problem.

    Parameters
    ----------
    problem : SearchProblem
        The constrained problem.
    best_gaps_eV : array_like
        Its optimum [eV], top first (``SearchResult.best_gaps_eV``).
    best_value : float
        Its objective (fraction).
    seed : int
        Seed of the relaxed searches.
    best_thickness_m : array_like, optional
        The optimum's searched thicknesses [m] (thickness windows; default each
        window's upper end).

    Returns
    -------
    list of dict
        One per constraint: ``constraint`` (words), ``active`` (bool), ``with_pct``,
        ``without_pct``, ``cost_pct`` (absolute percent; 0 when inactive) and
        ``gaps_without_eV``.
    """
    g = np.asarray(best_gaps_eV, dtype=float)
    s = problem.objective.scale
    out = []

    def add(label, active, relaxed):
        if active:
            gw, vw = quick_optimum(relaxed, seed=seed)
            vw = max(vw, best_value)  # relaxing can only help; guard the search's noise
        else:
            gw, vw = g, best_value
        out.append(
            {
                "constraint": label,
                "active": bool(active),
                "with_pct": s * best_value,
                "without_pct": s * vw,
                "cost_pct": s * (vw - best_value),
                "gaps_without_eV": [float(x) for x in gw],
            }
        )

    for k in np.flatnonzero(problem.fixed):
        fixed = {
            j + 1: float(problem.bounds_eV[j, 0]) for j in np.flatnonzero(problem.fixed) if j != k
        }
        add(
            f"junction {k + 1} fixed at {problem.bounds_eV[k, 0]:.3f} eV",
            True,
            _rebuild(problem, fixed_eV=fixed or None),
        )
    free = problem.free
    lo, hi = problem.bounds_eV[free, 0], problem.bounds_eV[free, 1]
    default = np.all(np.isclose(lo, DEFAULT_WINDOW_EV[0])) and np.all(
        np.isclose(hi, DEFAULT_WINDOW_EV[1])
    )
    if not default:
        at_edge = np.any(np.abs(g[free] - lo) < ACTIVE_EV) or np.any(
            np.abs(g[free] - hi) < ACTIVE_EV
        )
        bounds = [tuple(map(float, b)) for b in problem.bounds_eV]
        for k in free:
            bounds[k] = DEFAULT_WINDOW_EV
        for k in np.flatnonzero(problem.fixed):
            bounds[k] = DEFAULT_WINDOW_EV
        add("gap windows (vs 0.5-3.0 eV)", at_edge, _rebuild(problem, bounds_eV=bounds))
    if problem.min_spacing_eV > 0:
        sp = np.min(g[:-1] - g[1:])
        add(
            f"minimum spacing {problem.min_spacing_eV:g} eV",
            sp - problem.min_spacing_eV < ACTIVE_EV,
            _rebuild(problem, min_spacing_eV=0.0),
        )
    if problem.min_mismatch_ratio is not None:
        ev = problem.evaluate(g[None], robust=False, thickness_m=best_thickness_m)
        add(
            f"mismatch ratio >= {problem.min_mismatch_ratio:g}",
            ev.mismatch_ratio[0] - problem.min_mismatch_ratio < ACTIVE_RATIO,
            _rebuild(problem, min_mismatch_ratio=None),
        )
    return out
