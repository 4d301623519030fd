"""What the search stores on an optuna trial, and how it reads it back.

Every trial of a search carries the user attribute ``stage`` (``sobol`` = enqueued from
the global stage, ``sampler`` (absent), ``polish``, or ``surplus`` = started after the
study's trial budget was taken, stopped at once and never counted) and one attribute
``eval`` with the constraint values, feasibility, mismatch ratio and worker (one
database write per trial).
"""

from __future__ import annotations

import optuna

__all__ = ["SET_CONSTRAINT", "UNCOUNTED_STAGES", "RETRY", "trial_attr", "trial_stage"]

#: optuna's callback that re-enqueues a failed trial (renamed in optuna 4.9)
RETRY = getattr(
    optuna.storages, "RetryHeartbeatStaleTrialCallback", optuna.storages.RetryFailedTrialCallback
)

#: optuna >= 5 stores constraints on the trial itself (``Trial.set_constraint``)
SET_CONSTRAINT = hasattr(optuna.trial.Trial, "set_constraint")
#: stages whose trials are not part of the trial budget
UNCOUNTED_STAGES = ("polish", "surplus")


def trial_attr(trial, key, default=None):
    """A search attribute of a trial (stored together under user attribute ``eval``)."""
    return trial.user_attrs.get("eval", {}).get(key, default)


def trial_stage(trial) -> str:
    """The stage that made a trial (``sobol``, ``sampler``, ``polish`` or ``surplus``)."""
    return trial.user_attrs.get("stage", "sampler")
