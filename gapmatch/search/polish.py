"""Exact local polish of candidate stacks: batched pattern search, then scipy Nelder-Mead.

The efficiency of a series stack has a ridge (a kink) where the limiting junction
changes, so gradient methods stall on it. The polish therefore uses derivative-free
methods only:

1. a pattern search run on all starting points at once: every iteration evaluates, for
   every start, the full ``3^k - 1`` stencil of steps ``h * {-1, 0, 1}^k`` plus ``2k``
   random directions through the batch evaluator, moves to the best improving point or
   halves ``h``, from 0.02 eV down to 1e-5 eV [1]_;
2. :func:`scipy.optimize.minimize` with ``method="Nelder-Mead"`` from the best points,
   with a 2e-3 eV initial simplex and ``xatol = 1e-6`` eV [2]_;
3. a local-maximum check: the stencil and 256 random points at 1e-4 eV around the result
   must not be better (else steps 1-2 repeat from the better point).

Infeasible points (outside a window, too closely spaced, or beyond the mismatch limit)
score below every feasible one, so a polish started from a feasible point stays feasible.

Searched thicknesses are polished as ``log10`` of the thickness [m], with the same steps
(0.02 decades = 4.7 % down to 1e-5 decades).

References
----------
.. [1] V. Torczon, "On the convergence of pattern search algorithms", SIAM J. Optim. 7, 1
   (1997).
.. [2] J. A. Nelder and R. Mead, "A simplex method for function minimization", Comput. J.
   7, 308 (1965).
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass

import numpy as np
from scipy.optimize import minimize

from .problem import SearchProblem

__all__ = ["PolishResult", "polish", "penalised"]

#: step at which the local-maximum check looks for a better neighbour [eV]
LOCAL_CHECK_STEP_EV = 1e-4
#: improvement (absolute, fraction) below which a neighbour does not count as better
IMPROVE_TOL = 1e-10


@dataclass
class PolishResult:
    """One polished local optimum.

    Attributes
    ----------
    x_eV : numpy.ndarray
        Search variables: free gaps [eV], then ``log10`` of searched thicknesses [m].
    gaps_eV : numpy.ndarray
        All gaps [eV], top first.
    value : float
        Polished objective (fraction).
    start_value : float
        Objective at the starting point.
    local_max_check_passed : bool
        The local-maximum check found no better stencil or random point at 1e-4 eV.
    evaluations : int
        Stacks evaluated for this start.
    """

    x_eV: np.ndarray  # noqa: N815
    gaps_eV: np.ndarray  # noqa: N815
    value: float
    start_value: float
    local_max_check_passed: bool
    evaluations: int
    thickness_m: np.ndarray | None = None


def penalised(problem: SearchProblem, x: np.ndarray, which: int = 0) -> np.ndarray:
    """Objective ``which`` (0 main, 1 robust) of ``(M, k)`` search variables; infeasible
    points get ``-1 - violation`` (below any feasible efficiency)."""
    x = np.atleast_2d(x)
    lo, hi = problem.var_bounds[:, 0], problem.var_bounds[:, 1]
    out_win = np.maximum(lo - x, 0).max(axis=1) + np.maximum(x - hi, 0).max(axis=1)
    xs = np.clip(x, lo, hi)
    ev = problem.evaluate_vars(xs, robust=which == 1)
    val = ev.value if which == 0 else ev.robust
    viol = np.maximum(ev.constraints, 0).sum(axis=1) + out_win
    return np.where(viol > 0, -1.0 - viol, val)


def _stencil(k: int) -> np.ndarray:
    d = np.array(list(itertools.product((-1.0, 0.0, 1.0), repeat=k)))
    return d[np.any(d != 0, axis=1)]


def _pattern(problem, X, which, rng, h0, h_min, max_iter=2000):
    X = np.array(X, dtype=float)
    K, k = X.shape
    D = _stencil(k)
    f = penalised(problem, X, which)
    h = np.full(K, h0)
    nev = np.full(K, 1)
    for _ in range(max_iter):
        act = np.flatnonzero(h >= h_min)
        if act.size == 0:
            break
        R = rng.normal(size=(act.size, 2 * k, k))
        R /= np.linalg.norm(R, axis=2, keepdims=True)
        dirs = np.concatenate([np.broadcast_to(D, (act.size, *D.shape)), R], axis=1)
        cand = X[act, None, :] + h[act, None, None] * dirs
        fc = penalised(problem, cand.reshape(-1, k), which).reshape(act.size, -1)
        nev[act] += fc.shape[1]
        j = fc.argmax(axis=1)
        fb = fc[np.arange(act.size), j]
        better = fb > f[act] + IMPROVE_TOL
        mv = act[better]
        X[mv] = cand[better, j[better]]
        f[mv] = fb[better]
        h[act[~better]] *= 0.5
    return X, f, nev


def _nelder_mead(problem, x0, which, step=2e-3):
    k = x0.size
    simplex = np.vstack([x0, x0 + step * np.eye(k)])
    count = [0]

    def fun(x):
        count[0] += 1
        return -float(penalised(problem, x[None, :], which)[0])

    res = minimize(
        fun,
        x0,
        method="Nelder-Mead",
        options=dict(
            initial_simplex=simplex, xatol=1e-6, fatol=1e-12, maxfev=400 * k, adaptive=k > 3
        ),
    )
    return res.x, -res.fun, count[0]


def _local_max_check(problem, x, fx, which, rng):
    k = x.size
    R = rng.normal(size=(256, k))
    R /= np.linalg.norm(R, axis=1, keepdims=True)
    cand = x + LOCAL_CHECK_STEP_EV * np.vstack([_stencil(k), R])
    fc = penalised(problem, cand, which)
    j = int(fc.argmax())
    return (fc[j] <= fx + IMPROVE_TOL), cand[j], float(fc[j]), len(cand)


def polish(
    problem: SearchProblem,
    starts_eV: np.ndarray,
    *,
    which: int = 0,  # noqa: N803
    seed: int = 0,
    nelder_mead: int | None = None,
    h0: float = 0.02,
) -> list[PolishResult]:
    """Polish starting points (search variables, ``(K, k)``) to local maxima.

    Parameters
    ----------
    problem : SearchProblem
        The problem (objective, windows, constraints).
    starts_eV : numpy.ndarray
        Feasible starting points, one row per start: free gaps [eV], then ``log10`` of
        the searched thicknesses [m] (:attr:`SearchProblem.var_bounds`).
    which : {0, 1}
        Polish the main objective (0) or the robustness objective (1).
    seed : int
        Seed of the random pattern directions.
    nelder_mead : int, optional
        How many of the best pattern-search results also get the Nelder-Mead stage
        (default all).
    h0 : float
        First pattern step [eV].

    Returns
    -------
    list of PolishResult
        One per start, in the order given.
    """
    rng = np.random.default_rng(seed)
    X0 = np.atleast_2d(np.asarray(starts_eV, dtype=float))
    f0 = penalised(problem, X0, which)
    X, f, nev = _pattern(problem, X0, which, rng, h0, 1e-5)
    order = np.argsort(-f)
    nm = set(order[: (len(X) if nelder_mead is None else nelder_mead)].tolist())
    out = []
    for i in range(len(X)):
        x, fx, ne = X[i], float(f[i]), int(nev[i])
        ok = False
        for _ in range(4):
            if i in nm:
                xn, fn, c = _nelder_mead(problem, x, which)
                ne += c
                if fn > fx:
                    x, fx = xn, fn
            ok, xb, fb, c = _local_max_check(problem, x, fx, which, rng)
            ne += c
            if ok:
                break
            xs, fs, c2 = _pattern(problem, xb[None, :], which, rng, 1e-3, 1e-6)
            x, fx, ne = xs[0], float(fs[0]), ne + int(c2[0])
        x = np.clip(x, problem.var_bounds[:, 0], problem.var_bounds[:, 1])
        gaps, th = problem.split(x)
        out.append(
            PolishResult(x, gaps[0], fx, float(f0[i]), bool(ok), ne, None if th is None else th[0])
        )
    return out
