"""The optuna stage of a search: trials run by one or many processes on one study.

The trial budget belongs to the study, not to a process: a trial counts when it is
complete, pruned or failed for good (a failed trial that is retried counts through its
retry); waiting and running trials hold their place. Every process runs trials only
while places are free, and a trial that finds every place taken by lower-numbered
trials when it starts (two processes started one at the same moment) stops at once as
``stage = "surplus"`` and is never counted, so the study ends with exactly the budget.
Every process counts the places before each trial; within :data:`NEAR_PLACES` free
places (or 4 per running trial) each trial also checks its own place when it starts.

Processes stop gracefully on SIGINT and SIGTERM (the running trial finishes, nothing is
cut in half); worker processes started by :func:`gapmatch.search.optimise` also stop
when their parent dies. Running trials of dead processes are failed and retried:
through optuna's heartbeats on database servers and the ``host:pid`` every trial
records first (a dead process on this host is seen at once), after
:data:`UNTAGGED_STALE_S` for a trial whose process died before it recorded anything
(optuna's heartbeat rule never fails a trial that has no heartbeat yet), and after
:data:`LEGACY_STALE_S` for a trial of another host on a file storage.
"""

from __future__ import annotations

import ctypes
import datetime as dt
import os
import signal
import socket
import sys
import time

import optuna

from .problem import SearchProblem
from .storage import close_storage, open_storage, quiet_optuna, worker_tag
from .trials import RETRY, SET_CONSTRAINT, UNCOUNTED_STAGES, trial_attr, trial_stage

__all__ = [
    "TrialObjective",
    "GracefulStop",
    "BudgetCount",
    "count_trials",
    "fail_stale_trials",
    "run_trials",
    "worker_main",
]

#: pause between looks at the storage while other processes hold the last places [s]
WAIT_S = 0.5
#: a running trial whose worker record is on another host (a journal file cannot watch
#: it) is failed after this long [s]
LEGACY_STALE_S = 600.0
#: a running trial with no worker record at all is failed after this long [s]: every
#: trial records ``host:pid`` first thing, so such a trial lost its process between
#: optuna creating it and the objective starting, before optuna's first heartbeat (a
#: trial with no heartbeat is never failed by optuna's own rule)
UNTAGGED_STALE_S = 30.0
#: storage races (another process changed a trial first) tolerated in a row
MAX_RACES = 20
#: "near the budget": fewer free places than this, or than 4 per running trial; there
#: every trial checks its place when it starts
NEAR_PLACES = 12

_TS = optuna.trial.TrialState


class BudgetCount:
    """Places of a study's trial budget: ``counted`` (complete, pruned, failed for good),
    ``held`` (``counted`` plus running and waiting), ``waiting`` (enqueued, not started)
    and the best feasible value."""

    def __init__(
        self, counted: int, held: int, waiting: int, best: float | None, running: int = 0
    ) -> None:
        self.counted, self.held, self.waiting, self.best = counted, held, waiting, best
        self.running = running


def _retried(trials) -> set[int]:
    # optuna's retry callback stores the failed trial's number as system attribute
    # "failed_trial" (what its experimental retried_trial_number() reads)
    return {int(n) for t in trials if (n := t.system_attrs.get("failed_trial")) is not None}


def _holds_place(t, retried: set[int]) -> tuple[bool, bool]:
    """(holds a place, counted) for one trial."""
    if trial_stage(t) in UNCOUNTED_STAGES:
        return False, False
    if t.state in (_TS.COMPLETE, _TS.PRUNED):
        return True, True
    if t.state == _TS.FAIL:
        counted = t.number not in retried
        return counted, counted
    return True, False  # RUNNING or WAITING


def count_trials(study: optuna.Study) -> BudgetCount:
    """How much of the study's trial budget is counted and held (one storage read)."""
    trials = study.get_trials(deepcopy=False)
    retried = _retried(trials)
    counted = held = waiting = running = 0
    best = None
    for t in trials:
        h, c = _holds_place(t, retried)
        held += h
        counted += c
        waiting += h and t.state == _TS.WAITING
        running += h and t.state == _TS.RUNNING
        if (
            t.state == _TS.COMPLETE
            and trial_stage(t) != "polish"
            and trial_attr(t, "feasible")
            and (best is None or t.values[0] > best)
        ):
            best = t.values[0]
    return BudgetCount(counted, held, waiting, best, running)


def _alive(tag: str | None) -> bool | None:
    """Whether the process of a ``host:pid`` tag lives (None: another host or no tag)."""
    if not tag:
        return None
    host, _, pid = tag.rpartition(":")
    if host != socket.gethostname():
        return None
    try:
        os.kill(int(pid), 0)
    except ProcessLookupError:
        return False
    except (PermissionError, ValueError):
        return True
    try:  # a zombie is dead
        with open(f"/proc/{int(pid)}/stat") as fh:
            return fh.read().split(")")[-1].split()[0] != "Z"
    except OSError:
        return True


def fail_stale_trials(study: optuna.Study) -> int:
    """Fail the running trials of dead processes and enqueue their retries.

    Database storages use optuna's heartbeats (:func:`optuna.storages.fail_stale_trials`
    with :class:`~optuna.storages.RetryFailedTrialCallback`). Trials that carry a
    ``host:pid`` tag (journal files) are failed when that process is gone on this host;
    a trial with no tag (and, on a database with heartbeats, no heartbeat row) still
    running after :data:`UNTAGGED_STALE_S` (its process died between optuna creating the
    trial and the objective starting; optuna's own rule skips trials without a
    heartbeat) and one tagged on
    another host still running after :data:`LEGACY_STALE_S` (a journal file cannot
    watch it) are failed too.

    Returns
    -------
    int
        Trials failed by the tag and age rules (optuna's heartbeat rule not counted).
    """
    with quiet_optuna():
        optuna.storages.fail_stale_trials(study)
    silent = _without_heartbeat(study)
    now = dt.datetime.now()
    n = 0
    for t in study.get_trials(deepcopy=False, states=(_TS.RUNNING,)):
        tag = t.user_attrs.get("worker")
        alive = _alive(tag)
        age = (now - (t.datetime_start or now)).total_seconds()
        # an untagged trial that has a heartbeat is alive (optuna's rule watches it)
        orphan = tag is None and (silent is None or t.number in silent)
        limit = UNTAGGED_STALE_S if orphan else LEGACY_STALE_S
        if alive is False or (alive is None and age > limit):
            try:
                with quiet_optuna():
                    study.tell(t.number, state=_TS.FAIL)
            except (ValueError, RuntimeError, optuna.exceptions.UpdateFinishedTrialError):
                continue  # finished or failed by another process meanwhile
            frozen = study.get_trials(deepcopy=False)[t.number]
            with quiet_optuna():
                RETRY(max_retry=3)(study, frozen)
            n += 1
    return n


def _without_heartbeat(study: optuna.Study) -> set[int] | None:
    """Numbers of the running trials with no heartbeat row on a database storage with
    heartbeats; None for storages without heartbeats, or if optuna's tables cannot be
    read (then the age rule alone applies to untagged trials)."""
    storage = getattr(study._storage, "_backend", study._storage)  # optuna's cache wrapper
    if not isinstance(storage, optuna.storages.RDBStorage) or not storage.heartbeat_interval:
        return None
    try:  # optuna's table models: no public reader of heartbeat rows exists
        from optuna.storages._rdb import models

        db = storage.scoped_session()
        try:
            rows = (
                db.query(models.TrialModel.number)
                .outerjoin(
                    models.TrialHeartbeatModel,
                    models.TrialHeartbeatModel.trial_id == models.TrialModel.trial_id,
                )
                .filter(models.TrialModel.study_id == study._study_id)
                .filter(models.TrialModel.state == _TS.RUNNING)
                .filter(models.TrialHeartbeatModel.trial_heartbeat_id.is_(None))
                .all()
            )
        finally:
            db.close()
    except Exception:  # noqa: BLE001 - an optuna without these models: age rule only
        return None
    return {int(r[0]) for r in rows}


class TrialObjective:
    """The function optuna calls for one trial (picklable for worker processes).

    Parameters
    ----------
    problem : SearchProblem
        What is searched.
    budget : int, optional
        The study's trial budget; a trial started when every place is held by
        lower-numbered trials stops as ``surplus``.

    Every trial records ``host:pid`` as its first write, so that :func:`fail_stale_trials`
    can tell a trial of a dead process from a running one on every storage.
    """

    def __init__(self, problem: SearchProblem, budget: int | None = None) -> None:
        self.problem = problem
        self.budget = budget
        self.current: int | None = None  # number of the trial being run
        self.check = True  # check the budget at the start of the trial

    def _surplus(self, trial: optuna.Trial) -> bool:
        trials = trial.study.get_trials(deepcopy=False)
        retried = _retried(trials)
        ahead = sum(_holds_place(t, retried)[0] for t in trials if t.number < trial.number)
        return ahead >= self.budget

    def __call__(self, trial: optuna.Trial):
        self.current = trial.number
        trial.set_user_attr("worker", worker_tag())
        if self.budget is not None and self.check and self._surplus(trial):
            trial.set_user_attr("stage", "surplus")
            raise optuna.TrialPruned("the study's trial budget is taken")
        p = self.problem
        params = {
            name: trial.suggest_float(name, float(p.bounds_eV[k, 0]), float(p.bounds_eV[k, 1]))
            for name, k in zip(p.param_names, p.free, strict=False)
        }
        for name, (lo, hi) in zip(
            p.param_names[p.n_free :], p.thickness_bounds_m, strict=True
        ):  # thicknesses [m] on a log scale
            params[name] = trial.suggest_float(name, float(lo), float(hi), log=True)
        ev = p.evaluate_vars(p.x_from_params(params)[None, :])
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
        if SET_CONSTRAINT:
            for name, c in zip(p.constraint_names, cons, strict=True):
                trial.set_constraint(name, c)
        if ev.robust is not None:
            return float(ev.value[0]), float(ev.robust[0])
        return float(ev.value[0])


class GracefulStop:
    """First SIGINT or SIGTERM: finish the running trial, then stop (no database write
    is cut in half). With ``escalate`` a second one interrupts at once (a user's second
    Ctrl-C); worker processes never escalate (their parent kills them outright when it
    must). ``signum`` is the first signal."""

    SIGNALS = (signal.SIGINT, signal.SIGTERM)

    def __init__(self, escalate: bool = True) -> None:
        self.requested = False
        self.signum: int | None = None
        self.escalate = escalate
        self._old: dict[int, object] = {}

    def _handle(self, signum, frame):  # pragma: no cover - signal handler
        if self.requested and self.escalate:
            raise KeyboardInterrupt
        self.requested = True
        self.signum = signum

    def __enter__(self):
        for s in self.SIGNALS:
            try:
                self._old[s] = signal.signal(s, self._handle)
            except ValueError:  # not the main thread: leave the signals alone
                pass
        return self

    def __exit__(self, *exc):
        for s, old in self._old.items():
            signal.signal(s, old)
        self._old.clear()
        return False


def _race_errors() -> tuple[type[BaseException], ...]:
    errs: list[type[BaseException]] = [optuna.exceptions.UpdateFinishedTrialError]
    try:
        import sqlalchemy.exc as sa_exc

        errs.append(sa_exc.OperationalError)
    except ImportError:  # pragma: no cover - optuna needs sqlalchemy for RDB only
        pass
    return tuple(errs)


def run_trials(
    study: optuna.Study,
    problem: SearchProblem,
    budget: int,
    *,
    guard: GracefulStop | None = None,
    progress=None,
    only_waiting: bool = False,
    parent_pid: int | None = None,
) -> BudgetCount:
    """Run trials until the study's budget is counted (or a stop is requested).

    Parameters
    ----------
    study : optuna.Study
        Shared with any number of other processes.
    budget : int
        Trials the study must hold (exploration trials; polish trials are apart).
    guard : GracefulStop, optional
        Stop when it was requested.
    progress : tqdm bar, optional
        Updated after every trial.
    only_waiting : bool
        Run only the waiting (enqueued) trials.
    parent_pid : int, optional
        Stop when this process is no longer the parent (worker processes).

    Returns
    -------
    BudgetCount
        The last count read.
    """
    obj = TrialObjective(problem, budget)
    races = 0
    fail_stale_trials(study)
    while True:
        c = count_trials(study)
        if progress is not None:
            progress.n = min(c.counted, budget)
            if c.best is not None:
                progress.set_postfix_str(f"best {100 * c.best:.3f} %", refresh=False)
            progress.refresh()
        if (guard is not None and guard.requested) or c.counted >= budget:
            return c
        if parent_pid is not None and os.getppid() != parent_pid:
            return c
        if only_waiting and not c.waiting:
            return c
        if c.held >= budget and not c.waiting:  # the last places run elsewhere
            if only_waiting:
                return c
            time.sleep(WAIT_S)
            fail_stale_trials(study)
            continue
        obj.check = _near(c, budget)
        try:
            with quiet_optuna():
                study.optimize(obj, n_trials=1, catch=(), gc_after_trial=False)
            races = 0
        except KeyboardInterrupt:  # an interrupt cut the trial: it runs again on resume
            _retry_cut_trial(study, obj.current)
            raise
        except (*_race_errors(), ValueError) as exc:  # another process changed it first
            # optuna raises a plain ValueError ("Cannot tell a COMPLETE trial.") when two
            # processes took the same enqueued trial and the other one finished it first
            if isinstance(exc, ValueError) and not str(exc).startswith("Cannot tell a"):
                raise
            races += 1
            if races > MAX_RACES:
                raise
            first = str(exc).strip().splitlines()[0][:160] if str(exc).strip() else ""
            print(
                f"note: storage race, trial retried ({type(exc).__name__}: {first})",
                file=sys.stderr,
            )
            time.sleep(0.1 * races)


def _near(c: BudgetCount, budget: int) -> bool:
    return budget - c.held <= max(NEAR_PLACES, 4 * c.running)


def _retry_cut_trial(study: optuna.Study, number: int | None) -> None:
    """Enqueue a retry of a trial that an interrupt failed halfway (best effort)."""
    if number is None:
        return
    try:
        t = study.get_trials(deepcopy=False)[number]
        if t.state == _TS.FAIL and trial_stage(t) not in UNCOUNTED_STAGES:
            with quiet_optuna():
                RETRY(max_retry=3)(study, t)
    except Exception:  # noqa: BLE001 - the interrupt goes on regardless
        pass


def _die_with_parent() -> None:
    """Ask Linux to send SIGTERM when the parent dies (graceful stop); elsewhere the
    worker loop's parent check does the same within one trial."""
    if not sys.platform.startswith("linux"):
        return
    try:
        libc = ctypes.CDLL(None, use_errno=True)
        libc.prctl(1, int(signal.SIGTERM), 0, 0, 0)  # PR_SET_PDEATHSIG
    except (OSError, AttributeError):  # pragma: no cover - no prctl
        pass


def worker_main(problem, url, study_name, sampler_name, seed, budget, parent_pid):
    """Entry point of a worker process of :func:`gapmatch.search.optimise`."""
    _die_with_parent()
    if os.getppid() != parent_pid:  # the parent died before prctl took effect
        return
    from .samplers import make_sampler

    with quiet_optuna(), GracefulStop(escalate=False) as guard:
        storage = open_storage(url)
        study = optuna.load_study(
            study_name=study_name,
            storage=storage,
            sampler=make_sampler(sampler_name, problem, seed),
        )
        try:
            run_trials(study, problem, budget, guard=guard, parent_pid=parent_pid)
        finally:
            close_storage(storage)
