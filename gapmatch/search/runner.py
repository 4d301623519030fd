"""Global band-gap search: vectorised Sobol stage, optuna trials, exact polish.

:func:`optimise` runs the whole search for a :class:`~gapmatch.search.problem.SearchProblem`:

1. **Global stage** (vectorised, fresh studies only): a scrambled Sobol sample [1]_ of
   many thousand stacks (ordered, inside the windows) goes through the batch evaluator
   in one call; the best distinct candidates (at least 0.05 eV apart in some gap) are
   enqueued as the study's first trials.
2. **optuna stage**: the sampler (TPE with optuna's constraint handling by default [2]_,
   chosen by measurement, see DEVELOPERS.md) explores and refines. Every trial is stored;
   infeasible trials (too closely spaced gaps, mismatch beyond the limit) are recorded
   with their constraint values, never dropped. ``workers`` processes share the storage.
3. **Polish**: the best distinct basins among the Sobol candidates and the trials are
   polished to local maxima (:func:`gapmatch.search.polish.polish`) and stored as trials
   tagged ``stage = "polish"``. Distinct polished optima are the alternatives.

References
----------
.. [1] I. M. Sobol', USSR Comput. Math. Math. Phys. 7, 86 (1967); S. Joe and F. Y. Kuo,
   SIAM J. Sci. Comput. 30, 2635 (2008) (direction numbers, as in scipy.stats.qmc).
.. [2] T. Akiba et al., "Optuna: a next-generation hyperparameter optimization
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
import warnings
from pathlib import Path

import numpy as np
import optuna
from scipy.stats import qmc

from ..errors import InputError
from .polish import polish
from .problem import SearchProblem
from .result import SearchResult, trials_frame

__all__ = [
    "SAMPLERS",
    "DEFAULT_STORAGE",
    "SearchInterrupted",
    "optimise",
    "storage_url",
    "sobol_candidates",
    "distinct",
    "default_trials",
    "default_study_name",
    "run_settings",
    "global_samples",
    "is_slow",
]

#: sampler names accepted by :func:`optimise`
SAMPLERS = ("tpe", "cmaes", "random", "qmc", "gp", "nsga2")
#: default storage: an SQLite file under reports/ (relative to the working folder)
DEFAULT_STORAGE = "reports/search/studies.db"
#: separation that makes two optima distinct [eV] (largest gap difference)
DISTINCT_EV = 0.05


class SearchInterrupted(KeyboardInterrupt):
    """Ctrl-C during a search; completed trials are kept. ``resume`` is the command (or
    call) that continues the study."""

    def __init__(self, resume: str) -> None:
        super().__init__(resume)
        self.resume = resume


def default_trials(problem: SearchProblem) -> int:
    """Default total trial count: 20 + 5 per free gap (x2 with robustness).

    The Sobol stage and the polish carry the accuracy (see DEVELOPERS.md); each stored
    trial costs about 0.1 s of database work with SQLite, so the default stays modest.
    """
    n = 20 + 5 * problem.n_free
    return 2 * n if problem.robustness_eV is not None else n


#: declared evaluation cost per stack above which the polish uses 3 starts and no
#: Nelder-Mead [s]
SLOW_STACK_S = 100e-6
#: nominal time budget of the Sobol stage, at the objective's declared cost [s]
GLOBAL_BUDGET_S = 4.0


def global_samples(problem: SearchProblem) -> int:
    """Sobol sample size: 2^13 (one free gap) to 2^18 (four or more), reduced to fit
    :data:`GLOBAL_BUDGET_S` at the objective's declared cost per stack
    (:attr:`~gapmatch.search.problem.Objective.cost_per_stack_s`, e.g. Bose-Einstein
    dark current), never below 2^9.

    The size depends on the problem only, never on a clock, so one seed gives one
    answer on any machine and under any load.
    """
    k = problem.n_free
    n = 2 ** min(18, 11 + 2 * k - (k > 3) * (k - 3))
    per = float(problem.objective.cost_per_stack_s)
    if per * 2 * n > GLOBAL_BUDGET_S:  # two sets of n points are evaluated
        n = 2 ** max(9, int(np.log2(GLOBAL_BUDGET_S / (2 * per))))
    return n


_global_sample_count = global_samples  # optimise()'s argument shadows the name


def is_slow(problem: SearchProblem) -> bool:
    """True when the objective declares a cost per stack above :data:`SLOW_STACK_S`."""
    return float(problem.objective.cost_per_stack_s) > SLOW_STACK_S


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


def _check_settings(study, settings: dict, study_name: str) -> None:
    """InputError when a stored study was made with other answer-changing settings."""
    stored = study.user_attrs.get("settings")
    if stored is None and "seed" in study.user_attrs:  # studies stored before settings
        stored = {"seed": study.user_attrs["seed"]}
    if stored is None:
        return
    diff = [k for k in stored if stored[k] != settings.get(k)]
    if diff:
        said = ", ".join(f"{k} {stored[k]!r} (this run: {settings.get(k)!r})" for k in diff)
        raise InputError(
            "study_name",
            f"names a study made with {said}; use the same settings or another study name",
            study_name,
        )


def storage_url(storage: str | Path | None) -> str | None:
    """optuna storage URL from a user value: ``None`` -> the default SQLite file, a path
    -> ``sqlite:///<absolute path>``, ``":memory:"`` -> in-memory (``None`` returned),
    anything with ``://`` -> used as given (any optuna RDB URL, e.g.
    ``postgresql://user:pw@host/db``)."""
    if storage == ":memory:":
        return None
    if storage is None:
        storage = DEFAULT_STORAGE
    s = str(storage)
    if "://" in s:
        return s
    p = Path(s).expanduser().resolve()
    p.parent.mkdir(parents=True, exist_ok=True)
    return f"sqlite:///{p}"


def _sqlite_pragmas() -> None:
    """WAL journal and normal sync for SQLite connections (many processes, fewer fsyncs)."""
    from sqlalchemy import event
    from sqlalchemy.engine import Engine

    if getattr(_sqlite_pragmas, "done", False):
        return

    @event.listens_for(Engine, "connect")
    def _on_connect(dbapi_conn, _record):  # pragma: no cover - trivial
        if type(dbapi_conn).__module__.startswith("sqlite3"):
            cur = dbapi_conn.cursor()
            cur.execute("PRAGMA journal_mode=WAL")
            cur.execute("PRAGMA synchronous=NORMAL")
            cur.close()

    _sqlite_pragmas.done = True


def _storage(url: str | None):
    if url is None:
        return None
    if url.startswith("sqlite"):
        _sqlite_pragmas()
        return optuna.storages.RDBStorage(url, engine_kwargs={"connect_args": {"timeout": 60}})
    return optuna.storages.RDBStorage(url)


#: optuna >= 5 stores constraints on the trial itself (``Trial.set_constraint``)
_SET_CONSTRAINT = hasattr(optuna.trial.Trial, "set_constraint")


def _attr(trial, key, default=None):
    """A search attribute of a trial (stored together under user attribute ``eval``)."""
    return trial.user_attrs.get("eval", {}).get(key, default)


def _stage(trial) -> str:
    return trial.user_attrs.get("stage", "sampler")


def _constraints(trial: optuna.trial.FrozenTrial):
    return _attr(trial, "constraints", [1.0])


def _cfunc():
    """``constraints_func`` for optuna < 5 (newer versions read the trial's own)."""
    return None if _SET_CONSTRAINT else _constraints


def make_sampler(name: str, problem: SearchProblem, seed: int | None):
    """An optuna sampler by name (see :data:`SAMPLERS`), constraint-aware where optuna
    supports it."""
    multi = problem.robustness_eV is not None
    if name == "tpe":
        return optuna.samplers.TPESampler(
            seed=seed, multivariate=True, constraints_func=_cfunc(), n_startup_trials=10
        )
    if name == "cmaes":
        if multi:
            raise InputError("sampler", "cmaes handles one objective only; use tpe or nsga2")
        try:
            import cmaes  # noqa: F401
        except ImportError:
            raise InputError("sampler", "cmaes needs the 'cmaes' package") from None
        return optuna.samplers.CmaEsSampler(seed=seed, warn_independent_sampling=False)
    if name == "random":
        return optuna.samplers.RandomSampler(seed=seed)
    if name == "qmc":
        return optuna.samplers.QMCSampler(
            seed=seed, qmc_type="sobol", scramble=True, warn_independent_sampling=False
        )
    if name == "gp":
        try:
            import torch  # noqa: F401
        except ImportError:
            raise InputError("sampler", "gp needs PyTorch, which is not installed") from None
        return optuna.samplers.GPSampler(seed=seed, constraints_func=_cfunc())
    if name == "nsga2":
        return optuna.samplers.NSGAIISampler(seed=seed, constraints_func=_cfunc())
    raise InputError("sampler", f"must be one of {', '.join(SAMPLERS)}", name)


def sobol_candidates(problem: SearchProblem, n: int, seed: int) -> tuple[np.ndarray, np.ndarray]:
    """Feasible Sobol candidates and their main objective, best first.

    Half the points are sorted into decreasing order (uniform over the ordered region
    when the windows coincide), half are used as drawn; points outside the windows or
    violating a constraint are dropped (this stage is not stored).

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        Free gaps [eV] ``(M, k)`` and objective values ``(M,)``.
    """
    k = problem.n_free
    lo, hi = problem.bounds_eV[problem.free, 0], problem.bounds_eV[problem.free, 1]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        u = qmc.Sobol(d=k, scramble=True, seed=seed).random(n)
    raw = lo + u * (hi - lo)
    ulo, uhi = lo.min(), hi.max()
    s = -np.sort(-(ulo + u * (uhi - ulo)), axis=1)
    x = np.vstack([s, raw])
    inwin = np.all((x >= lo) & (x <= hi), axis=1)
    x = x[inwin]
    if len(x) == 0:
        return np.empty((0, k)), np.empty(0)
    ev = problem.evaluate(problem.full_gaps(x), robust=False)
    ok = ev.feasible
    x, v = x[ok], ev.value[ok]
    order = np.argsort(-v)
    return x[order], v[order]


def distinct(x: np.ndarray, values: np.ndarray, count: int, sep: float = DISTINCT_EV) -> np.ndarray:
    """Indices of up to ``count`` points, best first, each at least ``sep`` [eV] from the
    others in some coordinate (greedy by value)."""
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


class _TrialObjective:
    """The function optuna calls (picklable for worker processes)."""

    def __init__(self, problem: SearchProblem) -> None:
        self.problem = problem

    def __call__(self, trial: optuna.Trial):
        p = self.problem
        x = np.array(
            [
                trial.suggest_float(name, float(p.bounds_eV[k, 0]), float(p.bounds_eV[k, 1]))
                for name, k in zip(p.param_names, p.free, strict=True)
            ]
        )
        ev = p.evaluate(p.full_gaps(x))
        cons = [float(c) for c in ev.constraints[0]]
        # one attribute write per trial (each write is a database round trip)
        trial.set_user_attr(
            "eval",
            {
                "constraints": cons,
                "feasible": bool(ev.feasible[0]),
                "mismatch_ratio": float(ev.mismatch_ratio[0]),
                "worker": os.getpid(),
            },
        )
        if _SET_CONSTRAINT:
            for name, c in zip(p.constraint_names, cons, strict=True):
                trial.set_constraint(name, c)
        if ev.robust is not None:
            return float(ev.value[0]), float(ev.robust[0])
        return float(ev.value[0])


def _open_study(problem, url, study_name, sampler_name, seed, create):
    storage = _storage(url) if url is not None else None
    directions = ["maximize"] * len(problem.objective_names)
    sampler = make_sampler(sampler_name, problem, seed)
    if create:
        study = optuna.create_study(
            storage=storage,
            study_name=study_name,
            sampler=sampler,
            directions=directions,
            load_if_exists=True,
        )
    else:
        study = optuna.load_study(study_name=study_name, storage=storage, sampler=sampler)
    return study


def _worker(problem, url, study_name, sampler_name, seed, total):  # pragma: no cover - subprocess
    optuna.logging.set_verbosity(optuna.logging.ERROR)
    with _GracefulStop() as guard:
        study = _open_study(problem, url, study_name, sampler_name, seed, create=False)
        _run_trials(study, problem, total, progress=None, shared=True, guard=guard)


class _GracefulStop:
    """First Ctrl-C: finish the running trial, then stop (no database write is cut in
    half). A second Ctrl-C interrupts at once."""

    def __init__(self) -> None:
        self.requested = False
        self._old = None

    def _handle(self, signum, frame):  # pragma: no cover - signal handler
        if self.requested:
            raise KeyboardInterrupt
        self.requested = True

    def __enter__(self):
        try:
            self._old = signal.signal(signal.SIGINT, self._handle)
        except ValueError:  # not the main thread: leave Ctrl-C alone
            self._old = None
        return self

    def __exit__(self, *exc):
        if self._old is not None:
            signal.signal(signal.SIGINT, self._old)
        return False


def _finished(study) -> int:
    states = (optuna.trial.TrialState.COMPLETE, optuna.trial.TrialState.FAIL)
    return sum(1 for t in study.get_trials(deepcopy=False, states=states) if _stage(t) != "polish")


def _run_trials(study, problem, total, progress, shared=False, guard=None):
    """Run trials until the study holds ``total`` finished exploration trials. The count
    is kept locally and re-read from the storage every 10 trials when other workers
    share it."""
    obj = _TrialObjective(problem)
    state = {"n": _finished(study), "best": _best_value(study), "since": 0}
    if state["n"] >= total or (guard is not None and guard.requested):
        return

    def stop(study_, trial):
        state["n"] += 1
        state["since"] += 1
        if (
            trial.state == optuna.trial.TrialState.COMPLETE
            and _attr(trial, "feasible")
            and (state["best"] is None or trial.values[0] > state["best"])
        ):
            state["best"] = trial.values[0]
        if shared and (state["since"] >= 10 or state["n"] >= total):
            state["n"], state["since"] = _finished(study_), 0
        if progress is not None:
            progress.n = min(state["n"], total)
            if state["best"] is not None:
                progress.set_postfix_str(f"best {100 * state['best']:.3f} %", refresh=False)
            progress.refresh()
        if state["n"] >= total or (guard is not None and guard.requested):
            study_.stop()

    study.optimize(obj, n_trials=None, callbacks=[stop], catch=(), gc_after_trial=False)


def _best_value(study) -> float | None:
    vals = [
        t.values[0]
        for t in study.get_trials(deepcopy=False, states=(optuna.trial.TrialState.COMPLETE,))
        if _attr(t, "feasible") and t.values
    ]
    return max(vals) if vals else None


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
        Total optuna trials of the study (a resumed study runs only the missing ones);
        default :func:`default_trials`. Polish trials are stored on top.
    seed : int
        Seed of the Sobol stage, the sampler (worker ``i`` uses ``seed + i``) and the
        polish. One worker and the same seed repeat a run exactly.
    storage : str or pathlib.Path, optional
        SQLite file path, any optuna RDB URL (``postgresql://...``, ``mysql://...``), or
        ``":memory:"`` (no persistence; one worker). Default ``reports/search/studies.db``.
    study_name : str, optional
        Study to create or resume (default from the problem and the settings that
        change the answer, see :func:`default_study_name`). Resuming a study of a
        different problem, seed, sampler, ``global_samples``, ``n_seeds`` or
        ``polish_starts`` raises InputError.
    workers : int
        Processes that run trials against the shared storage (1-64).
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
        On Ctrl-C, after the completed trials are safely stored.
    """
    t0 = time.perf_counter()
    if trials is None:
        trials = default_trials(problem)
    for name, v, lo, hi in (
        ("trials", trials, 0, 1_000_000),
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
    optuna.logging.set_verbosity(optuna.logging.ERROR)
    study = _open_study(problem, url, study_name, sampler, seed, create=True)
    desc = json.dumps(problem.describe(), sort_keys=True, default=str)
    stored = study.user_attrs.get("problem")
    if stored is None:
        study.set_user_attr("problem", desc)
        study.set_user_attr("settings", settings)
    elif stored != desc:
        raise InputError(
            "study_name",
            "names a study of a different problem; choose another --study-name or the same problem",
            study_name,
        )
    else:
        _check_settings(study, settings, study_name)
    seed0 = int(seed)
    resumed = len(study.trials) > 0

    # 1. global stage (deterministic from the study's seed: recomputed on resume)
    slow = is_slow(problem)
    ng = _global_sample_count(problem) if global_samples is None else int(global_samples)
    gx, gv = (
        sobol_candidates(problem, ng, seed0)
        if ng > 0
        else (np.empty((0, problem.n_free)), np.empty(0))
    )
    seeds = distinct(gx, gv, n_seeds) if len(gx) else np.empty(0, dtype=int)
    if not resumed:
        for i in seeds:
            study.enqueue_trial(
                dict(zip(problem.param_names, map(float, gx[i]), strict=True)),
                user_attrs={"stage": "sobol"},
            )

    # 2. optuna trials
    if resume_command is None:
        resume_command = (
            f"gapmatch.search.optimise(problem, storage={url or ':memory:'!r}, "
            f"study_name={study_name!r}, trials={trials})"
        )
    procs: list = []
    bar = None
    guard = _GracefulStop()
    try:
        with guard:
            if progress:
                from tqdm import tqdm

                bar = tqdm(
                    total=trials,
                    initial=min(_finished(study), trials),
                    desc="trials",
                    file=sys.stderr,
                    unit="trial",
                    dynamic_ncols=True,
                )
            if workers > 1:
                # the enqueued Sobol seeds run here first: several processes popping the
                # same waiting trial from SQLite can collide
                waiting = len(
                    study.get_trials(deepcopy=False, states=(optuna.trial.TrialState.WAITING,))
                )
                if waiting:
                    _run_trials(
                        study, problem, min(trials, _finished(study) + waiting), bar, guard=guard
                    )
                # then every worker is a process of its own; this one watches the storage
                ctx = mp.get_context("spawn")
                for i in range(workers if not guard.requested else 0):
                    pr = ctx.Process(
                        target=_worker,
                        daemon=True,
                        args=(problem, url, study_name, sampler, seed + i, trials),
                    )
                    pr.start()
                    procs.append(pr)
                told = False
                while any(pr.is_alive() for pr in procs):
                    time.sleep(0.5)
                    if guard.requested and not told:  # pass Ctrl-C on to our workers
                        for pr in procs:
                            if pr.is_alive() and pr.pid is not None:
                                os.kill(pr.pid, signal.SIGINT)
                        told = True
                    if bar is not None:
                        bar.n = min(_finished(study), trials)
                        best = _best_value(study)
                        if best is not None:
                            bar.set_postfix_str(f"best {100 * best:.3f} %", refresh=False)
                        bar.refresh()
                for pr in procs:
                    pr.join()
                if not guard.requested and any(pr.exitcode != 0 for pr in procs):
                    raise RuntimeError("a search worker process failed; see its message above")
            else:
                _run_trials(study, problem, trials, bar, guard=guard)
        interrupted = guard.requested
    except KeyboardInterrupt:  # a second Ctrl-C
        for pr in procs:
            if pr.is_alive():
                pr.terminate()
                pr.join(5)
        interrupted = True
    finally:
        if bar is not None:
            bar.close()
    if interrupted:
        try:
            done = f"{_finished(study)} trials are"
        except Exception:  # noqa: BLE001 - the count is only informative
            done = "the completed trials are"
        print(
            f"\ninterrupted: {done} stored in {url or 'memory'} (study {study_name!r}). "
            f"Resume with:\n  {resume_command}",
            file=sys.stderr,
        )
        raise SearchInterrupted(resume_command)

    # 3. polish the best distinct basins of the Sobol candidates and the trials
    all_trials = study.get_trials(deepcopy=False)
    tx, tv = [], []
    for t in all_trials:
        if t.state == optuna.trial.TrialState.COMPLETE and _attr(t, "feasible"):
            tx.append([t.params[nm] for nm in problem.param_names])
            tv.append(t.values[0])
    cx = np.vstack([gx[: 50 * polish_starts], np.array(tx).reshape(-1, problem.n_free)])
    cv = np.concatenate([gv[: 50 * polish_starts], np.array(tv)])
    best_trial = float(np.max(tv)) if tv else float("nan")
    if len(cx) == 0:
        raise InputError(
            "bounds_eV", "no feasible stack was found; widen the windows or relax the constraints"
        )
    starts = distinct(cx, cv, polish_starts)
    if slow:  # e.g. voltage matching with the automatic ratio: fewer, cheaper starts
        starts = starts[:3]
    pol = polish(problem, cx[starts], seed=seed0, nelder_mead=0 if slow else 3)
    robust_pol = []
    if problem.robustness_eV is not None:
        rx = [
            [t.params[nm] for nm in problem.param_names]
            for t in all_trials
            if t.state == optuna.trial.TrialState.COMPLETE and _attr(t, "feasible")
        ]
        rv = [
            t.values[1]
            for t in all_trials
            if t.state == optuna.trial.TrialState.COMPLETE and _attr(t, "feasible")
        ]
        if rx:
            rx = np.array(rx)
            ri = distinct(rx, np.array(rv), 3)
            robust_pol = polish(problem, rx[ri], which=1, seed=seed0, nelder_mead=1)
    _store_polished(study, problem, pol + robust_pol)

    # distinct polished optima, best first
    px = np.array([r.x_eV for r in pol])
    pv = np.array([r.value for r in pol])
    keep = distinct(px, pv, alternatives + 1)
    best = pol[keep[0]]
    alts = [pol[i] for i in keep[1:]]
    full = problem.full_evaluation(best.gaps_eV)
    frame = trials_frame(study, problem)
    return SearchResult(
        problem=problem,
        study_name=study_name,
        storage=url or ":memory:",
        best=full,
        best_gaps_eV=best.gaps_eV.copy(),
        best_value=best.value,
        local_max_check_passed=best.local_max_check_passed,
        alternatives=[
            {
                "gaps_eV": [float(g) for g in r.gaps_eV],
                problem.objective.name: float(r.value),
                "local_max_check_passed": r.local_max_check_passed,
            }
            for r in alts
        ],
        robust_optima=[
            {
                "gaps_eV": [float(g) for g in r.gaps_eV],
                f"worst_{problem.objective.name}": float(r.value),
                problem.objective.name: float(problem.evaluate(r.gaps_eV[None]).value[0]),
            }
            for r in robust_pol
        ],
        trials=frame,
        best_trial_value=best_trial,
        n_trials=_finished(study),
        resumed=resumed,
        seed=seed0,
        sampler=sampler,
        workers=workers,
        global_samples=ng,
        elapsed_s=time.perf_counter() - t0,
    )


def _store_polished(study, problem, results) -> None:
    dists = {
        nm: optuna.distributions.FloatDistribution(
            float(problem.bounds_eV[k, 0]), float(problem.bounds_eV[k, 1])
        )
        for nm, k in zip(problem.param_names, problem.free, strict=True)
    }
    for r in results:
        ev = problem.evaluate(r.gaps_eV[None])
        values = [float(ev.value[0])]
        if ev.robust is not None:
            values.append(float(ev.robust[0]))
        cons = [float(c) for c in ev.constraints[0]]
        params = {
            nm: float(np.clip(r.x_eV[i], dists[nm].low, dists[nm].high))
            for i, nm in enumerate(problem.param_names)
        }
        kw = (
            dict(constraints=dict(zip(problem.constraint_names, cons, strict=True)))
            if _SET_CONSTRAINT
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
