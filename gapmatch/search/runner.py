"""Global band-gap search: vectorised Sobol stage, optuna trials, exact polish.

:func:`optimise` runs the whole search for a :class:`~gapmatch.search.problem.SearchProblem`:

1. **Global stage** (:mod:`gapmatch.search.global_stage`): a scrambled Sobol sample of
   many thousand stacks goes through the batch evaluator in one call; the best distinct
   candidates (at least 0.05 eV apart in some gap) are enqueued as the study's first
   trials, once, by the process that creates the study.
2. **optuna stage** (:mod:`gapmatch.search.workers`): the sampler
   (:mod:`gapmatch.search.samplers`; TPE with optuna's constraint handling by default
   [1]_) explores and refines until the study holds its trial budget. Every trial is
   stored (:mod:`gapmatch.search.storage`); infeasible trials are recorded with their
   constraint values, never dropped. ``workers`` processes, or any number of processes
   on many machines, share one study.
3. **Polish**: the best distinct basins among the Sobol candidates and the exploration
   trials are polished to local maxima (:func:`gapmatch.search.polish.polish`) and
   stored once as trials tagged ``stage = "polish"``. Distinct polished optima are the
   alternatives.

With thickness windows (``thickness_windows_nm``) the thick-absorber optimum (every
searched thickness at its window's upper end, gaps re-optimised; :func:`thick_reference`)
is computed first and polished as one more start, so the thinned optimum is never below
it; both are in the result.

References
----------
.. [1] T. Akiba et al., "Optuna: a next-generation hyperparameter optimization
   framework", KDD 2019; J. Bergstra et al., "Algorithms for hyper-parameter
   optimization", NeurIPS 2011 (TPE).
"""

from __future__ import annotations

import json
import multiprocessing as mp
import os
import shlex
import signal
import sys
import time
from pathlib import Path

import numpy as np
import optuna

from ..errors import InputError
from .global_stage import distinct, global_samples, is_slow, sobol_candidates
from .polish import polish
from .problem import SearchProblem
from .result import SearchResult, trials_frame
from .samplers import SAMPLERS, make_sampler
from .storage import (
    closing_storages,
    open_storage,
    open_study,
    quiet_optuna,
    shown_url,
    storage_url,
)
from .trials import SET_CONSTRAINT, UNCOUNTED_STAGES, trial_attr, trial_stage
from .workers import GracefulStop, count_trials, run_trials, worker_main

__all__ = [
    "SearchInterrupted",
    "optimise",
    "default_trials",
    "default_study_name",
    "run_settings",
    "shell_join",
    "thick_reference",
    "thickness_list_nm",
]

_global_sample_count = global_samples  # optimise()'s argument shadows the name


class SearchInterrupted(KeyboardInterrupt):
    """SIGINT (Ctrl-C) or SIGTERM during a search; completed trials are kept.
    ``resume`` is the command (or call) that continues the study, ``signum`` the
    signal and ``exit_code`` the shell's code for it (130, 143)."""

    def __init__(self, resume: str, signum: int = signal.SIGINT) -> None:
        super().__init__(resume)
        self.resume = resume
        self.signum = int(signum)

    @property
    def exit_code(self) -> int:
        return 128 + self.signum


def default_trials(problem: SearchProblem) -> int:
    """Default total trial count: 20 + 5 per search variable (free gap or searched
    thickness; x2 with robustness).

    The Sobol stage and the polish carry the accuracy (see DEVELOPERS.md); each stored
    trial costs about 0.1 s of database work with SQLite, so the default stays modest.
    """
    n = 20 + 5 * problem.n_vars
    return 2 * n if problem.robustness_eV is not None else n


def run_settings(
    *,
    seed: int = 0,
    sampler: str = "tpe",
    global_samples: int | None = None,
    n_seeds: int = 10,
    polish_starts: int = 8,
) -> dict:
    """The settings besides the problem that change a search's answer (stored with the
    study and compared when it is resumed)."""
    return {
        "seed": int(seed),
        "sampler": sampler,
        "global_samples": None if global_samples is None else int(global_samples),
        "n_seeds": int(n_seeds),
        "polish_starts": int(polish_starts),
    }


def default_study_name(problem: SearchProblem, **settings) -> str:
    """``<N>J-<connection>-<spectrum>-<hash>-<sampler>-seed<S>``, plus the other
    :func:`run_settings` where they differ from their defaults (``-g<samples>``,
    ``-n<seeds>``, ``-p<starts>``): a run with another seed or sampler starts a study of
    its own instead of resuming one made differently."""
    st = run_settings(**settings)
    name = f"{problem.default_study_name()}-{st['sampler']}-seed{st['seed']}"
    if st["global_samples"] is not None:
        name += f"-g{st['global_samples']}"
    if st["n_seeds"] != 10:
        name += f"-n{st['n_seeds']}"
    if st["polish_starts"] != 8:
        name += f"-p{st['polish_starts']}"
    return name


def _study_seed(study, seed: int) -> int:
    """The seed a study was made with (its Sobol stage and polish use it)."""
    stored = study.user_attrs.get("settings") or {}
    return int(stored.get("seed", study.user_attrs.get("seed", seed)))


def _check_settings(study, settings: dict, study_name: str) -> None:
    """InputError when a stored study was made with another sampler, Sobol size, seed
    count or polish count. The seed is apart: a process joining a named study with
    another seed samples with its own seed (machines sharing a study each give one) and
    uses the study's seed for the Sobol stage and the polish, and says so."""
    stored = study.user_attrs.get("settings")
    if stored is None:
        return
    diff = [k for k in stored if k != "seed" and stored[k] != settings.get(k)]
    if diff:
        said = ", ".join(f"{k} {stored[k]!r} (this run: {settings.get(k)!r})" for k in diff)
        raise InputError(
            "study_name",
            f"names a study made with {said}; use the same settings or another study name",
            study_name,
        )


def optimise(
    problem: SearchProblem,
    *,
    trials: int | None = None,
    seed: int = 0,
    storage: str | Path | None = None,
    study_name: str | None = None,
    workers: int = 1,
    sampler: str = "tpe",
    global_samples: int | None = None,
    n_seeds: int = 10,
    polish_starts: int = 8,
    alternatives: int = 5,
    progress: bool = True,
    resume_command: str | None = None,
) -> SearchResult:
    """Search the best gaps of a problem; resumable, parallel, reproducible.

    Parameters
    ----------
    problem : SearchProblem
        From :func:`gapmatch.search.make_problem`.
    trials : int, optional
        The study's trial budget: the study ends with exactly this many counted
        exploration trials however many processes share it (a resumed study runs only
        the missing ones); default :func:`default_trials`. Polish trials are stored on
        top, once.
    seed : int
        Seed of the Sobol stage, the sampler (worker ``i`` uses ``seed + i``) and the
        polish. One worker and the same seed repeat a run exactly.
    storage : str or pathlib.Path, optional
        SQLite file path, any optuna RDB URL (``postgresql+psycopg://...``,
        ``mysql+pymysql://...``), ``journal:PATH`` (a journal file on a shared file
        system), or ``":memory:"`` (no persistence; one worker). Default
        ``reports/search/studies.db``. See :mod:`gapmatch.search.storage`.
    study_name : str, optional
        Study to create or resume (default from the problem and the settings that
        change the answer, see :func:`default_study_name`). Resuming a study of a
        different problem, seed, sampler, ``global_samples``, ``n_seeds`` or
        ``polish_starts`` raises InputError.
    workers : int
        Processes that run trials against the shared storage (1-64). They stop with
        this process (SIGINT, SIGTERM, or its death).
    sampler : {"tpe", "cmaes", "random", "qmc", "gp", "nsga2"}
        optuna sampler of the trial stage (default TPE; see DEVELOPERS.md).
    global_samples : int, optional
        Sobol points of the vectorised stage (0 skips it; default 2^13-2^18 by size).
    n_seeds : int
        Distinct Sobol candidates enqueued as the first trials.
    polish_starts : int
        Distinct basins polished.
    alternatives : int
        Largest number of alternatives reported.
    progress : bool
        Show a progress bar (trials and best so far) on stderr.
    resume_command : str, optional
        Shown when interrupted (the CLI passes its own command line).

    Returns
    -------
    SearchResult

    Raises
    ------
    InputError
        Bad counts, sampler, storage or a study that holds a different problem.
    SearchInterrupted
        On SIGINT (Ctrl-C) or SIGTERM, after the completed trials are safely stored.
    """
    t0 = time.perf_counter()
    if trials is None:
        trials = default_trials(problem)
    for name, v, lo, hi in (
        ("trials", trials, 0, 1_000_000),
        ("seed", seed, 0, 2**32 - 1),
        ("workers", workers, 1, 64),
        ("n_seeds", n_seeds, 0, 1000),
        ("polish_starts", polish_starts, 1, 100),
        ("alternatives", alternatives, 0, 100),
    ):
        if isinstance(v, bool) or not isinstance(v, int | np.integer) or not lo <= v <= hi:
            raise InputError(name, f"must be a whole number in [{lo}, {hi}]", v)
    if sampler not in SAMPLERS:
        raise InputError("sampler", f"must be one of {', '.join(SAMPLERS)}", sampler)
    url = storage_url(storage)
    if url is None and workers > 1:
        raise InputError(
            "workers",
            "more than one worker needs a storage (SQLite file or database URL), not ':memory:'",
            workers,
        )
    settings = run_settings(
        seed=seed,
        sampler=sampler,
        global_samples=global_samples,
        n_seeds=n_seeds,
        polish_starts=polish_starts,
    )
    study_name = study_name or default_study_name(problem, **settings)
    with quiet_optuna(), closing_storages():
        return _optimise(
            problem,
            trials=int(trials),
            seed=int(seed),
            url=url,
            study_name=study_name,
            workers=int(workers),
            sampler=sampler,
            n_global=_global_sample_count(problem)
            if global_samples is None
            else int(global_samples),
            n_seeds=n_seeds,
            polish_starts=polish_starts,
            alternatives=alternatives,
            progress=progress,
            resume_command=resume_command,
            settings=settings,
            t0=t0,
        )


def _optimise(
    problem: SearchProblem,
    *,
    trials: int,
    seed: int,
    url: str | None,
    study_name: str,
    workers: int,
    sampler: str,
    n_global: int,
    n_seeds: int,
    polish_starts: int,
    alternatives: int,
    progress: bool,
    resume_command: str | None,
    settings: dict,
    t0: float,
) -> SearchResult:
    # 1. global stage (deterministic from the problem and the seed: recomputed on resume)
    slow = is_slow(problem)
    gx, gv = (
        sobol_candidates(problem, n_global, seed)
        if n_global > 0
        else (np.empty((0, problem.n_vars)), np.empty(0))
    )
    seeds = distinct(gx, gv, n_seeds) if len(gx) else np.empty(0, dtype=int)
    desc = json.dumps(problem.describe(), sort_keys=True, default=str)

    def setup(study: optuna.Study) -> None:
        for i in seeds:
            study.enqueue_trial(problem.params_from_x(gx[i]), user_attrs={"stage": "sobol"})
        study.set_user_attr("settings", settings)
        study.set_user_attr("problem", desc)  # last: the study is ready for others

    study, created = open_study(
        open_storage(url),
        study_name,
        directions=["maximize"] * len(problem.objective_names),
        sampler=make_sampler(sampler, problem, seed),
        setup=setup,
    )
    if not created:
        if study.user_attrs.get("problem") != desc:
            raise InputError(
                "study_name",
                "names a study of a different problem; choose another --study-name or the "
                "same problem",
                study_name,
            )
        _check_settings(study, settings, study_name)
        seed0 = _study_seed(study, seed)
        if seed0 != seed:
            print(
                f"note: study {study_name!r} was made with seed {seed0}: its Sobol stage and "
                f"polish use seed {seed0}, this process's sampler seed {seed}",
                file=sys.stderr,
            )
            seed = seed0
            if n_global > 0:
                gx, gv = sobol_candidates(problem, n_global, seed)
    resumed = not created

    # 2. optuna trials, until the study holds its budget
    if resume_command is None:
        resume_command = (
            f"gapmatch.search.optimise(problem, storage={url or ':memory:'!r}, "
            f"study_name={study_name!r}, trials={trials})"
        )
    procs: list = []
    bar = None
    guard = GracefulStop()
    try:
        with guard:
            if progress:
                from tqdm import tqdm

                bar = tqdm(
                    total=trials,
                    initial=min(count_trials(study).counted, trials),
                    desc="trials",
                    file=sys.stderr,
                    unit="trial",
                    dynamic_ncols=True,
                )
            run = dict(guard=guard, progress=bar)
            if workers > 1:
                # the enqueued Sobol seeds run here first, then every worker is a process
                # of its own and this one watches the storage
                run_trials(study, problem, trials, only_waiting=True, **run)
                procs = _start_workers(
                    problem, url, study_name, sampler, seed, trials, workers, guard
                )
                _watch(procs, study, trials, guard, bar)
                if not guard.requested:
                    bad = [pr.exitcode for pr in procs if pr.exitcode != 0]
                    if bad:
                        print(
                            f"note: {len(bad)} worker process(es) ended with exit code(s) "
                            f"{', '.join(map(str, bad))}; the remaining trials run here",
                            file=sys.stderr,
                        )
                    run_trials(study, problem, trials, **run)
            else:
                run_trials(study, problem, trials, **run)
        interrupted, signum = guard.requested, guard.signum or signal.SIGINT
    except KeyboardInterrupt:  # a second signal: stop the workers outright (their running
        # trials are failed by the heartbeat rule and retried on resume)
        for pr in procs:
            if pr.is_alive():
                pr.kill()
                pr.join(5)
        interrupted, signum = True, guard.signum or signal.SIGINT
    finally:
        if bar is not None:
            bar.close()
    if interrupted:
        try:
            done = f"{count_trials(study).counted} trials are"
        except Exception:  # noqa: BLE001 - the count is only informative
            done = "the completed trials are"
        print(
            f"\ninterrupted ({signal.Signals(signum).name}): {done} stored in "
            f"{shown_url(url)} (study {study_name!r}). Resume with:\n  {resume_command}",
            file=sys.stderr,
        )
        raise SearchInterrupted(resume_command, signum)

    # 3. polish the best distinct basins of the Sobol candidates and the exploration
    #    trials (polish trials of earlier runs are not starting points: a rerun of a
    #    finished study polishes the same points and stores nothing new)
    all_trials = study.get_trials(deepcopy=False)
    explored = [
        t
        for t in all_trials
        if t.state == optuna.trial.TrialState.COMPLETE
        and trial_stage(t) not in UNCOUNTED_STAGES
        and trial_attr(t, "feasible")
    ]
    tx = [problem.x_from_params(t.params) for t in explored]
    tv = [t.values[0] for t in explored]
    cx = np.vstack([gx[: 50 * polish_starts], np.array(tx).reshape(-1, problem.n_vars)])
    cv = np.concatenate([gv[: 50 * polish_starts], np.array(tv)])
    best_trial = float(np.max(tv)) if tv else float("nan")
    if len(cx) == 0:
        raise InputError(
            "bounds_eV", "no feasible stack was found; widen the windows or relax the constraints"
        )
    starts = distinct(cx, cv, polish_starts)
    if slow:  # e.g. voltage matching with the automatic ratio: fewer, cheaper starts
        starts = starts[:3]
    sx = cx[starts]
    thick = None
    if problem.n_thick:
        # the thick-absorber optimum is a point of the thinned problem (every thickness
        # at its window's upper end): polished as one more start, the thinned optimum
        # is never below it
        thick = thick_reference(problem, seed=seed)
        sx = np.vstack([sx, thick["x"]])
    pol = polish(problem, sx, seed=seed, nelder_mead=0 if slow else 3)
    robust_pol = []
    if problem.robustness_eV is not None and explored:
        rx = np.array(tx)
        ri = distinct(rx, np.array([t.values[1] for t in explored]), 3)
        robust_pol = polish(problem, rx[ri], which=1, seed=seed, nelder_mead=1)
    _store_polished(study, problem, pol + robust_pol)

    # distinct polished optima, best first
    px = np.array([r.x_eV for r in pol])
    pv = np.array([r.value for r in pol])
    keep = distinct(px, pv, alternatives + 1)
    best = pol[keep[0]]
    alts = [pol[i] for i in keep[1:]]
    full = problem.full_evaluation(best.gaps_eV, best.thickness_m)
    frame = trials_frame(study, problem)

    def alt(r) -> dict:
        d = {
            "gaps_eV": [float(g) for g in r.gaps_eV],
            problem.objective.name: float(r.value),
            "local_max_check_passed": r.local_max_check_passed,
        }
        if r.thickness_m is not None:
            d["thickness_nm"] = thickness_list_nm(problem, r.thickness_m)
        return d

    return SearchResult(
        problem=problem,
        study_name=study_name,
        storage=shown_url(url) if url is not None else ":memory:",
        best=full,
        best_gaps_eV=best.gaps_eV.copy(),
        best_value=best.value,
        local_max_check_passed=best.local_max_check_passed,
        alternatives=[alt(r) for r in alts],
        robust_optima=[
            {
                "gaps_eV": [float(g) for g in r.gaps_eV],
                **(
                    {"thickness_nm": thickness_list_nm(problem, r.thickness_m)}
                    if r.thickness_m is not None
                    else {}
                ),
                f"worst_{problem.objective.name}": float(r.value),
                problem.objective.name: float(problem.evaluate_vars(r.x_eV[None]).value[0]),
            }
            for r in robust_pol
        ],
        trials=frame,
        best_trial_value=best_trial,
        n_trials=count_trials(study).counted,
        resumed=resumed,
        seed=seed,
        sampler=sampler,
        workers=workers,
        global_samples=n_global,
        elapsed_s=time.perf_counter() - t0,
        best_thickness_nm=None
        if best.thickness_m is None
        else thickness_list_nm(problem, best.thickness_m),
        thick_reference=None if thick is None else _reference_summary(problem, thick),
    )


def thickness_list_nm(problem: SearchProblem, thickness_m) -> list[float | None]:
    """Every junction's thickness [nm], top first, with the searched ones from
    ``thickness_m`` ``(K,)`` [m] (``None`` for step junctions)."""
    cond = problem.evaluate_conditions(np.asarray(thickness_m, dtype=float))
    n = problem.n_junctions
    models = cond.get("absorber") or "step"
    models = [models] * n if isinstance(models, str) else list(models)
    models = models * n if len(models) == 1 else models
    return [None if m == "step" else t for m, t in zip(models, cond["thickness_nm"], strict=True)]


def thick_reference(problem: SearchProblem, *, seed: int = 0) -> dict:
    """The thick-absorber optimum of a thinned problem: the gaps searched with every
    searched thickness held at its window's upper end (Sobol stage and polish of
    :meth:`SearchProblem.thick_problem`, no optuna, no storage).

    Returns
    -------
    dict
        ``x`` (the point as search variables of ``problem``), ``gaps_eV``, ``value``
        (fraction) and ``thickness_m`` ``(K,)`` [m].
    """
    tp = problem.thick_problem()
    hi = problem.thickness_bounds_m[:, 1]
    if tp.n_free == 0:
        gaps = tp.bounds_eV[:, 0].copy()
        value = float(tp.evaluate(gaps[None], robust=False).value[0])
    else:
        gx, gv = sobol_candidates(tp, _global_sample_count(tp), seed)
        if len(gx) == 0:
            raise InputError(
                "bounds_eV",
                "no feasible stack was found at the thick end of the thickness windows; "
                "widen the windows or relax the constraints",
            )
        starts = distinct(gx, gv, 3 if is_slow(tp) else 8)
        pol = polish(tp, gx[starts], seed=seed, nelder_mead=0 if is_slow(tp) else 3)
        b = max(pol, key=lambda r: r.value)
        gaps, value = b.gaps_eV.copy(), float(b.value)
    x = np.concatenate([gaps[problem.free], np.log10(hi)])
    return {"x": x, "gaps_eV": gaps, "value": value, "thickness_m": hi.copy()}


def _reference_summary(problem: SearchProblem, ref: dict) -> dict:
    """JSON-ready thick-absorber optimum: gaps, thicknesses [nm], efficiency and Jsc per
    junction [mA cm^-2] of its full evaluation."""
    full = problem.full_evaluation(ref["gaps_eV"], ref["thickness_m"])
    return {
        "gaps_eV": [float(g) for g in ref["gaps_eV"]],
        "thickness_nm": thickness_list_nm(problem, ref["thickness_m"]),
        problem.objective.name: float(full["efficiency"]),
        "jsc_mA_cm2": [float(j["jsc_mA_cm2"]) for j in full["junctions"]],
    }


def _start_workers(problem, url, study_name, sampler, seed, trials, workers, guard) -> list:
    """Worker processes (spawned; worker ``i`` samples with ``seed + i``). Each stops
    when this process dies (see :func:`gapmatch.search.workers.worker_main`)."""
    ctx = mp.get_context("spawn")
    procs = []
    for i in range(workers if not guard.requested else 0):
        pr = ctx.Process(
            target=worker_main,
            daemon=True,
            args=(problem, url, study_name, sampler, seed + i, trials, os.getpid()),
        )
        pr.start()
        procs.append(pr)
    return procs


def _watch(procs, study, trials, guard, bar) -> None:
    """Wait for the workers; pass a stop request (SIGINT or SIGTERM) on to them."""
    told = False
    while any(pr.is_alive() for pr in procs):
        time.sleep(0.5)
        if guard.requested and not told:
            for pr in procs:
                if pr.is_alive() and pr.pid is not None:
                    os.kill(pr.pid, signal.SIGTERM)
            told = True
        if bar is not None:
            c = count_trials(study)
            bar.n = min(c.counted, trials)
            if c.best is not None:
                bar.set_postfix_str(f"best {100 * c.best:.3f} %", refresh=False)
            bar.refresh()
    for pr in procs:
        pr.join()


def _store_polished(study, problem, results) -> None:
    """Store polished optima as trials (``stage = "polish"``), each point once."""
    dists = {
        nm: optuna.distributions.FloatDistribution(
            float(problem.bounds_eV[k, 0]), float(problem.bounds_eV[k, 1])
        )
        for nm, k in zip(problem.param_names, problem.free, strict=False)
    }
    for nm, (lo, hi) in zip(
        problem.param_names[problem.n_free :], problem.thickness_bounds_m, strict=True
    ):
        dists[nm] = optuna.distributions.FloatDistribution(float(lo), float(hi), log=True)

    def key(params: dict) -> tuple:
        return tuple(round(float(params[nm]), 12) for nm in problem.param_names)

    stored = {key(t.params) for t in study.get_trials(deepcopy=False) if trial_stage(t) == "polish"}
    for r in results:
        params = {
            nm: float(np.clip(v, dists[nm].low, dists[nm].high))
            for nm, v in problem.params_from_x(r.x_eV).items()
        }
        if key(params) in stored:  # a rerun of a finished study: polished already
            continue
        stored.add(key(params))
        ev = problem.evaluate_vars(r.x_eV[None])
        values = [float(ev.value[0])]
        if ev.robust is not None:
            values.append(float(ev.robust[0]))
        cons = [float(c) for c in ev.constraints[0]]
        kw = (
            dict(constraints=dict(zip(problem.constraint_names, cons, strict=True)))
            if SET_CONSTRAINT
            else dict(system_attrs={"constraints": cons})
        )
        study.add_trial(
            optuna.trial.create_trial(
                values=values,
                params=params,
                distributions=dists,
                user_attrs={
                    "stage": "polish",
                    "local_max_check_passed": r.local_max_check_passed,
                    "eval": {
                        "constraints": cons,
                        "feasible": bool(ev.feasible[0]),
                        "mismatch_ratio": float(ev.mismatch_ratio[0]),
                    },
                },
                **kw,
            )
        )


def shell_join(argv: list[str]) -> str:
    """A command line as one shell-quoted string."""
    return " ".join(shlex.quote(a) for a in argv)
