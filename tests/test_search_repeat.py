"""One seed gives one answer: the search's stages never depend on a clock.

The Sobol stage size and the polish effort come from the objective's kind and declared
cost per stack (``Objective.cost_per_stack_s``). The check runs the same search with the
process clock forced to look fast (no time passes) and slow (one second per reading) and
requires identical trials and optimum.
"""

from __future__ import annotations

import itertools
import time

import numpy as np
import pytest

from gapmatch.search import make_problem, optimise
from gapmatch.search.problem import BOSE_EINSTEIN_COST_S, IDEAL_COST_S, declared_cost_s


def _clock(step_s: float):
    ticks = itertools.count()
    return lambda: next(ticks) * step_s


def _run(monkeypatch, step_s, n, connection):
    with monkeypatch.context() as m:
        m.setattr(time, "perf_counter", _clock(step_s))
        m.setattr(time, "monotonic", _clock(step_s))
        res = optimise(
            make_problem(n, connection), trials=14, seed=3, storage=":memory:", progress=False
        )
    cols = [c for c in res.trials.columns if c not in ("duration_s", "worker_pid")]
    return res, res.trials[cols]


@pytest.mark.parametrize("n, connection", [(2, "series"), (3, "independent")])
def test_same_answer_with_fast_and_slow_clock(monkeypatch, n, connection):
    fast, fast_trials = _run(monkeypatch, 0.0, n, connection)
    slow, slow_trials = _run(monkeypatch, 1.0, n, connection)
    assert fast.global_samples == slow.global_samples
    # exact equality: same seed, same stages, same arithmetic
    assert fast_trials.equals(slow_trials)
    np.testing.assert_array_equal(fast.best_gaps_eV, slow.best_gaps_eV)
    assert fast.best_value == slow.best_value


@pytest.mark.parametrize(
    "connection, conditions, cost",
    [
        ("series", {}, IDEAL_COST_S),
        ("series", {"dark_current": "bose-einstein"}, BOSE_EINSTEIN_COST_S),
        ("voltage-matched", {"cells_per_string": [1, 2]}, IDEAL_COST_S),
    ],
)
def test_declared_cost_follows_the_objective_kind(connection, conditions, cost):
    assert declared_cost_s(connection, conditions) == cost
    assert make_problem(2, connection, **conditions).objective.cost_per_stack_s == cost
