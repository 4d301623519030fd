"""Searches under concurrency and faults, with real processes on one SQLite study.

* several ``gapmatch optimise`` processes started together on one study: the study ends
  with exactly the trial budget, the Sobol seeds are enqueued once, nobody dies with a
  traceback, and every process reports the same optimum;
* SIGTERM to ``optimise --workers 2``: the same graceful stop and resume message as
  Ctrl-C, the workers stop too, no trial is left running;
* SIGKILL of the parent of ``--workers 2``: its workers stop on their own, and a fresh
  process resumes the study to exactly the budget.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import optuna
import pytest

ROOT = Path(__file__).resolve().parents[1]
ENV = dict(os.environ, PYTHONPATH=str(ROOT))
#: Sobol seeds enqueued by default (optimise's n_seeds)
N_SEEDS = 10

pytestmark = pytest.mark.slow


def _cmd(db: Path, name: str, trials: int, *extra: str) -> list[str]:
    return [
        sys.executable,
        "-m",
        "gapmatch",
        "optimise",
        "--junctions",
        "2",
        "--trials",
        str(trials),
        "--storage",
        str(db),
        "--search-name",
        name,
        "--no-progress",
        *extra,
    ]


def _trials(url: str, name: str) -> list[optuna.trial.FrozenTrial]:
    try:
        return optuna.load_study(study_name=name, storage=url).get_trials(deepcopy=False)
    except Exception:  # noqa: BLE001 - the study may not exist yet
        return []


def _budget_trials(trials) -> list[optuna.trial.FrozenTrial]:
    """Exploration trials that count towards the budget (not polish, not surplus)."""
    return [t for t in trials if t.user_attrs.get("stage", "sampler") not in ("polish", "surplus")]


def _complete(trials) -> int:
    return sum(t.state == optuna.trial.TrialState.COMPLETE for t in _budget_trials(trials))


def _wait_for(pred, timeout_s: float, step_s: float = 0.3) -> bool:
    deadline = time.monotonic() + timeout_s
    while time.monotonic() < deadline:
        if pred():
            return True
        time.sleep(step_s)
    return pred()


def _alive(pid: int) -> bool:
    try:
        with open(f"/proc/{pid}/stat") as fh:
            return fh.read().split(")")[-1].split()[0] != "Z"
    except OSError:
        return False


def check_budget(url: str, name: str, budget: int) -> list:
    trials = _trials(url, name)
    states = [t.state for t in _budget_trials(trials)]
    assert _complete(trials) == budget, states
    assert optuna.trial.TrialState.RUNNING not in [t.state for t in trials]
    numbers = [t.number for t in trials]
    assert len(numbers) == len(set(numbers))  # no trial stored twice
    return trials


def test_processes_started_together_share_one_budget(tmp_path):
    db = tmp_path / "two.db"
    budget = 30
    procs = [
        subprocess.Popen(
            _cmd(db, "two", budget, "--seed", "1", "--json"),
            cwd=tmp_path,
            env=ENV,
            stdout=subprocess.PIPE,
            stderr=subprocess.PIPE,
            text=True,
        )
        for _ in range(3)
    ]
    outs = [p.communicate(timeout=240) for p in procs]
    for p, (_out, err) in zip(procs, outs, strict=True):
        assert p.returncode == 0, err[-2000:]
        assert "Traceback" not in err, err[-2000:]
    url = f"sqlite:///{db}"
    trials = check_budget(url, "two", budget)
    # the Sobol seeds were enqueued once, by the process that created the study
    sobol = [t for t in trials if t.user_attrs.get("stage") == "sobol"]
    assert len(sobol) == N_SEEDS
    # one study, one set of trials: every process polishes the same points
    gaps = {tuple(json.loads(out)["gaps_eV"]) for out, _ in outs}
    assert len(gaps) == 1


def test_sigterm_and_kill_of_a_parent_with_workers(tmp_path):
    db = tmp_path / "faults.db"
    url = f"sqlite:///{db}"
    big = _cmd(db, "faults", 100_000, "--workers", "2")

    log = tmp_path / "workers.log"

    def start():
        return subprocess.Popen(big, cwd=tmp_path, env=ENV, stderr=subprocess.PIPE, text=True)

    def start_logged():  # the workers outlive the parent's pipe: their output goes to a file
        with open(log, "a") as fh:
            return subprocess.Popen(big, cwd=tmp_path, env=ENV, stderr=fh, text=True)

    def workers_of(parent: int) -> set[int]:
        """Processes other than ``parent`` that ran trials of the sampler stage."""
        pids = {
            t.user_attrs.get("eval", {}).get("worker")
            for t in _trials(url, "faults")
            if t.user_attrs.get("stage") is None
        }
        return {p for p in pids if p is not None and p != parent}

    # SIGTERM: graceful stop of parent and workers, resume message as for Ctrl-C
    proc = start()
    try:
        assert _wait_for(lambda: len(workers_of(proc.pid)) == 2, 120)
        workers = workers_of(proc.pid)
        proc.send_signal(signal.SIGTERM)
        _, err = proc.communicate(timeout=60)
    finally:
        if proc.poll() is None:
            proc.kill()
    assert proc.returncode == 128 + signal.SIGTERM, err[-2000:]
    assert "interrupted (SIGTERM)" in err and "Resume with" in err, err[-2000:]
    assert "Traceback" not in err, err[-2000:]
    assert _wait_for(lambda: not any(map(_alive, workers)), 20)
    assert optuna.trial.TrialState.RUNNING not in [t.state for t in _trials(url, "faults")]

    # SIGKILL of the parent: its workers notice and stop by themselves
    proc = start_logged()
    try:
        before = workers
        assert _wait_for(lambda: len(workers_of(proc.pid) - before) == 2, 120)
        workers = workers_of(proc.pid) - before
        proc.kill()
        proc.wait(timeout=30)
    finally:
        if proc.poll() is None:
            proc.kill()
    assert _wait_for(lambda: not any(map(_alive, workers)), 30), "workers outlived the parent"
    assert "Traceback" not in log.read_text(), log.read_text()[-3000:]

    # a fresh process resumes the study to exactly the budget
    budget = _complete(_trials(url, "faults")) + 5
    out = subprocess.run(
        _cmd(db, "faults", budget, "--json"),
        cwd=tmp_path,
        env=ENV,
        capture_output=True,
        text=True,
        timeout=180,
    )
    assert out.returncode == 0, out.stderr[-2000:]
    assert "(resumed)" in out.stderr and "Traceback" not in out.stderr
    check_budget(url, "faults", budget)
