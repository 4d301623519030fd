"""Compare optuna samplers on the band-gap search problem (numbers for DEVELOPERS.md).

Each sampler runs alone (no Sobol seeding, no polish, in-memory storage) for a fixed
number of trials; the table shows the shortfall of its best feasible trial below the
polished global optimum (absolute %), and the time per trial. Usage:

    python benchmarks/search_samplers.py [--trials 200] [--seeds 3]
"""

from __future__ import annotations

import argparse
import time
import warnings

import numpy as np
import optuna

from gapmatch.search import make_problem, quick_optimum
from gapmatch.search.samplers import make_sampler
from gapmatch.search.trials import trial_attr as _attr
from gapmatch.search.workers import TrialObjective as _TrialObjective

CASES = [(3, "series"), (4, "independent")]
SAMPLERS = ["tpe", "cmaes", "qmc", "random", "gp"]


def run(trials: int, seeds: int) -> list[dict]:
    optuna.logging.set_verbosity(optuna.logging.ERROR)
    warnings.simplefilter("ignore")
    rows = []
    for n, conn in CASES:
        problem = make_problem(n, conn)
        _, ref = quick_optimum(problem, samples=2**16)
        for name in SAMPLERS:
            try:
                make_sampler(name, problem, 0)
            except Exception as exc:  # noqa: BLE001 - report why a sampler is unavailable
                rows.append(dict(case=f"{n}J {conn}", sampler=name, note=str(exc)))
                continue
            short, feas, dt = [], [], []
            for s in range(seeds):
                study = optuna.create_study(
                    direction="maximize", sampler=make_sampler(name, problem, s)
                )
                t0 = time.perf_counter()
                study.optimize(_TrialObjective(problem), n_trials=trials)
                dt.append((time.perf_counter() - t0) / trials)
                ok = [t.value for t in study.trials if _attr(t, "feasible")]
                feas.append(len(ok) / trials)
                short.append(100 * (ref - max(ok)) if ok else np.nan)
            rows.append(
                dict(
                    case=f"{n}J {conn}",
                    sampler=name,
                    trials=trials,
                    shortfall_mean_pct=float(np.nanmean(short)),
                    shortfall_worst_pct=float(np.nanmax(short)),
                    feasible_share=float(np.mean(feas)),
                    ms_per_trial=1e3 * float(np.mean(dt)),
                    reference_pct=100 * ref,
                )
            )
            r = rows[-1]
            print(
                f"{r['case']:<16} {name:<7} shortfall mean {r['shortfall_mean_pct']:.3f} "
                f"worst {r['shortfall_worst_pct']:.3f} abs %, feasible "
                f"{100 * r['feasible_share']:.0f} %, {r['ms_per_trial']:.1f} ms/trial "
                f"(optimum {r['reference_pct']:.3f} %)",
                flush=True,
            )
    return rows


def pipeline(seeds: int) -> list[dict]:
    """The full search (Sobol seeds enqueued, default trials, polish) with each sampler:
    shortfall of the best trial before polish and of the final result (absolute %)."""
    from gapmatch.search import optimise

    optuna.logging.set_verbosity(optuna.logging.ERROR)
    warnings.simplefilter("ignore")
    rows = []
    for n, conn in CASES:
        problem = make_problem(n, conn)
        _, ref = quick_optimum(problem, samples=2**16)
        for name in ("tpe", "cmaes", "qmc", "random"):
            pre, fin, dt = [], [], []
            for s in range(seeds):
                t0 = time.perf_counter()
                r = optimise(problem, storage=":memory:", seed=s, sampler=name, progress=False)
                dt.append(time.perf_counter() - t0)
                pre.append(100 * (ref - r.best_trial_value))
                fin.append(100 * (ref - r.best_value))
            rows.append(
                dict(
                    case=f"{n}J {conn}",
                    sampler=name,
                    before_polish_pct=np.mean(pre),
                    final_worst_pct=np.max(fin),
                    time_s=np.mean(dt),
                )
            )
            print(
                f"{n}J {conn:<12} {name:<7} best trial {np.mean(pre):.4f} abs % below, "
                f"final worst {np.max(fin):+.5f}, {np.mean(dt):.1f} s",
                flush=True,
            )
    return rows


if __name__ == "__main__":
    ap = argparse.ArgumentParser()
    ap.add_argument("--trials", type=int, default=200)
    ap.add_argument("--seeds", type=int, default=3)
    ap.add_argument("--pipeline", action="store_true", help="compare inside the full search")
    a = ap.parse_args()
    if a.pipeline:
        pipeline(a.seeds)
    else:
        run(a.trials, a.seeds)
