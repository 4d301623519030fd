"""optuna samplers of the trial stage, constraint-aware where optuna supports it.

References
----------
.. [1] T. Akiba et al., "Optuna: a next-generation hyperparameter optimization
   framework", KDD 2019; J. Bergstra et al., "Algorithms for hyper-parameter
   optimization", NeurIPS 2011 (TPE).
"""

from __future__ import annotations

import optuna

from ..errors import InputError
from .problem import SearchProblem
from .trials import SET_CONSTRAINT, trial_attr

__all__ = ["SAMPLERS", "make_sampler"]

#: sampler names accepted by :func:`gapmatch.search.optimise`
SAMPLERS = ("tpe", "cmaes", "random", "qmc", "gp", "nsga2")


def _constraints(trial: optuna.trial.FrozenTrial):
    return trial_attr(trial, "constraints", [1.0])


def _cfunc():
    """``constraints_func`` for optuna < 5 (newer versions read the trial's own)."""
    return None if SET_CONSTRAINT else _constraints


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
