"""Benchmark of the band-gap search against an independent reference optimum.

For N = 2..6 junctions, series and independent connection under AM1.5G at 300 K, the
search (``gapmatch.search.optimise`` with default settings and SQLite storage, one
worker) is timed, and its best efficiency is compared with a reference optimum that this
script computes itself: scipy's differential evolution (several seeds) on the batch
evaluator, each result polished by scipy's Nelder-Mead, the best kept. Nothing of
``gapmatch.search`` is used for the reference.

Targets: within 0.02 absolute % of the reference for N <= 4 and 0.05 for
N = 5, 6; three junctions in at most 10 s and six in at most 120 s on 2 cores.

    python benchmarks/search.py            # one line per case
    from benchmarks.search import measure  # list of dicts
"""

from __future__ import annotations

import tempfile
import time
import warnings
from pathlib import Path

import numpy as np
from scipy.optimize import differential_evolution, minimize

from gapmatch import standard_spectrum
from gapmatch.core.engine import solve_stacks
from gapmatch.search import make_problem, optimise
from gapmatch.units import EV

WINDOW_EV = (0.5, 3.0)  # the search's default window
SPACING_EV = 0.05  # the search's default minimum spacing
TIME_TARGET_S = {3: 10.0, 6: 120.0}


def _tolerance_pct(n: int) -> float:
    return 0.02 if n <= 4 else 0.05


def reference_optimum(n: int, connection: str, seeds: int = 4) -> tuple[np.ndarray, float]:
    """Differential evolution + Nelder-Mead on the raw batch evaluator (independent of the
    search code). Returns gaps [eV] and efficiency (fraction)."""
    spec = standard_spectrum("AM1.5G")

    def neg_eff(x):  # x: (n, S) for the vectorised DE, or (n,)
        g = np.atleast_2d(np.asarray(x).T)
        sol = solve_stacks(g * EV, spec, connection)
        e = sol.op.p_mpp / sol.incident_W_m2
        viol = np.maximum(SPACING_EV - (g[:, :-1] - g[:, 1:]), 0).sum(axis=1)
        out = np.where(viol > 0, 1.0 + viol, -e)
        return out if np.ndim(x) == 2 else float(out[0])

    best_x, best_f = None, np.inf
    for s in range(seeds):
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            r = differential_evolution(
                neg_eff,
                [WINDOW_EV] * n,
                seed=s,
                popsize=30,
                maxiter=3000,
                tol=1e-12,
                atol=0,
                polish=False,
                vectorized=True,
                updating="deferred",
                init="sobol",
                mutation=(0.5, 1.0),
                recombination=0.9,
            )
        x, f = r.x, r.fun
        for _ in range(3):  # Nelder-Mead restarts from the DE result
            m = minimize(
                neg_eff,
                x,
                method="Nelder-Mead",
                options=dict(xatol=1e-7, fatol=1e-13, maxfev=20000, adaptive=True),
            )
            if m.fun < f - 1e-13:
                x, f = m.x, m.fun
            else:
                break
        if f < best_f:
            best_x, best_f = x, f
    return np.asarray(best_x), -best_f


def measure(
    junctions=(2, 3, 4, 5, 6), connections=("series", "independent"), verbose: bool = False
) -> list[dict]:
    """Run every case; one dict per case (``n_junctions``, ``connection``,
    ``found_pct``, ``reference_pct``, ``shortfall_pct``, ``tolerance_pct``,
    ``time_s``, ``time_target_s``, ``ok``, ``gaps_eV``, ``reference_gaps_eV``)."""
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        for n in junctions:
            for conn in connections:
                problem = make_problem(n, conn)
                t0 = time.perf_counter()
                res = optimise(
                    problem,
                    storage=Path(tmp) / "bench.db",
                    study_name=f"{n}-{conn}",
                    seed=0,
                    progress=False,
                )
                dt = time.perf_counter() - t0
                t1 = time.perf_counter()
                rg, rv = reference_optimum(n, conn)
                ref_time = time.perf_counter() - t1
                short = 100 * (rv - res.best_value)
                tol = _tolerance_pct(n)
                target = TIME_TARGET_S.get(n)
                row = dict(
                    n_junctions=n,
                    connection=conn,
                    found_pct=100 * res.best_value,
                    reference_pct=100 * rv,
                    shortfall_pct=short,
                    tolerance_pct=tol,
                    time_s=dt,
                    time_target_s=target,
                    reference_time_s=ref_time,
                    trials=res.n_trials,
                    local_max_check_passed=res.local_max_check_passed,
                    gaps_eV=[round(float(g), 4) for g in res.best_gaps_eV],
                    reference_gaps_eV=[round(float(g), 4) for g in rg],
                    ok=bool(short <= tol and (target is None or dt <= target)),
                )
                rows.append(row)
                if verbose:
                    print(format_row(row), flush=True)
    return rows


def format_row(r: dict) -> str:
    t = f"<= {r['time_target_s']:.0f} s" if r["time_target_s"] else "no target"
    return (
        f"N={r['n_junctions']} {r['connection']:<11} found {r['found_pct']:.4f} % "
        f"ref {r['reference_pct']:.4f} % shortfall {r['shortfall_pct']:+.4f} "
        f"(tol {r['tolerance_pct']}) time {r['time_s']:6.1f} s ({t}) "
        f"gaps {r['gaps_eV']} ref {r['reference_gaps_eV']} "
        f"{'OK' if r['ok'] else 'MISS'}"
    )


if __name__ == "__main__":
    measure(verbose=True)
