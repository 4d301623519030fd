"""The typed result of a band-gap search."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

if TYPE_CHECKING:  # pragma: no cover
    from .problem import SearchProblem

__all__ = ["SearchResult", "trials_frame", "pareto_mask"]


def trials_frame(study, problem: SearchProblem) -> pd.DataFrame:
    """Every trial of a study, one row each (infeasible and failed ones included).

    Columns: ``trial``, ``state``, ``stage`` (``sobol`` = enqueued from the vectorised
    stage, ``sampler``, ``polish``), ``gap_1_eV ... gap_N_eV`` (fixed gaps included),
    ``thickness_<k>_nm`` for each searched thickness, ``<objective>_pct`` (e.g.
    ``efficiency_pct``), ``worst_<objective>_pct`` with robustness, ``mismatch_ratio``,
    one column per constraint (``<= 0`` feasible), ``feasible``, ``worker_pid`` (process
    that ran the trial), ``duration_s``.
    """
    rows = []
    cnames = problem.constraint_names
    onames = problem.objective_names
    scale = problem.objective.scale
    suffix = "_pct" if scale == 100.0 else ""
    for t in study.get_trials(deepcopy=False):
        row: dict[str, Any] = {
            "trial": t.number,
            "state": t.state.name,
            "stage": t.user_attrs.get("stage", "sampler"),
        }
        for k in range(problem.n_junctions):
            nm = f"gap_{k + 1}_eV"
            row[nm] = (
                float(problem.bounds_eV[k, 0]) if problem.fixed[k] else t.params.get(nm, math.nan)
            )
        for k in problem.thickness_junctions:
            v = t.params.get(f"thickness_{k + 1}_m")
            row[f"thickness_{k + 1}_nm"] = math.nan if v is None else 1e9 * float(v)
        vals = t.values or [math.nan] * len(onames)
        for nm, v in zip(onames, vals, strict=False):
            row[f"{nm}{suffix}"] = scale * v if v is not None else math.nan
        ev = t.user_attrs.get("eval", {})
        row["mismatch_ratio"] = ev.get("mismatch_ratio", math.nan)
        cons = ev.get("constraints", [math.nan] * len(cnames))
        for nm, c in zip(cnames, cons, strict=False):
            row[nm] = c
        row["feasible"] = bool(ev.get("feasible", False))
        row["worker_pid"] = ev.get("worker")
        row["duration_s"] = t.duration.total_seconds() if t.duration is not None else math.nan
        rows.append(row)
    return pd.DataFrame(rows)


def pareto_mask(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """True for points not dominated when maximising both ``a`` and ``b``."""
    a, b = np.asarray(a, dtype=float), np.asarray(b, dtype=float)
    order = np.lexsort((-b, -a))
    mask = np.zeros(len(a), dtype=bool)
    best_b = -np.inf
    for i in order:
        if b[i] > best_b:
            mask[i] = True
            best_b = b[i]
    return mask


@dataclass
class SearchResult:
    """Outcome of :func:`gapmatch.search.optimise`.

    Attributes
    ----------
    problem : SearchProblem
        What was searched.
    study_name, storage : str
        Where the trials are stored (``storage`` is the optuna URL or ``":memory:"``).
    best : dict
        Full checked evaluation of the best stack: exactly ``BatchResult.stack(0)``
        (``efficiency`` as a fraction, ``gaps_eV``, ``junctions``, ...).
    best_gaps_eV : numpy.ndarray
        Gaps of the best stack [eV], top first (polished to 1e-4 eV or better).
    best_value : float
        Its objective (fraction).
    local_max_check_passed : bool
        No better neighbour of the best stack at 1e-4 eV (the polish's local-maximum
        check).
    alternatives : list of dict
        Other distinct local optima (at least 0.05 eV from each other in some gap), best
        first: ``gaps_eV``, ``<objective>`` (fraction), ``local_max_check_passed``.
    robust_optima : list of dict
        With robustness: stacks polished for the worst-case objective (``gaps_eV``,
        ``worst_<objective>``, ``<objective>``).
    trials : pandas.DataFrame
        Every trial (:func:`trials_frame`).
    best_trial_value : float
        Best feasible trial before polish (fraction).
    n_trials : int
        Finished exploration trials in the study (polish trials not counted).
    resumed : bool
        The study existed before this run.
    seed, sampler, workers, global_samples, elapsed_s
        How the run was made; ``elapsed_s`` [s].
    best_thickness_nm : list or None
        With thickness windows: every junction's thickness of the best stack [nm], top
        first (``None`` for step junctions); alternatives carry ``thickness_nm`` too.
    thick_reference : dict or None
        With thickness windows: the thick-absorber optimum (every searched thickness at
        its window's upper end, gaps re-optimised): ``gaps_eV``, ``thickness_nm``,
        ``<objective>`` (fraction) and ``jsc_mA_cm2`` per junction.
    """

    problem: SearchProblem
    study_name: str
    storage: str
    best: dict
    best_gaps_eV: np.ndarray  # noqa: N815
    best_value: float
    local_max_check_passed: bool
    alternatives: list[dict]
    robust_optima: list[dict]
    trials: pd.DataFrame
    best_trial_value: float
    n_trials: int
    resumed: bool
    seed: int
    sampler: str
    workers: int
    global_samples: int
    elapsed_s: float  # noqa: N815
    extra: dict = field(default_factory=dict)
    best_thickness_nm: list | None = None
    thick_reference: dict | None = None

    @property
    def efficiency(self) -> float:
        """Efficiency of the best stack (fraction)."""
        return float(self.best["efficiency"])

    def to_frame(self) -> pd.DataFrame:
        """All trials, one row each (write with ``to_csv``)."""
        return self.trials.copy()

    def pareto_front(self) -> pd.DataFrame:
        """Feasible complete trials not dominated in (objective, worst-case objective);
        empty without the robustness objective."""
        names = self.problem.objective_names
        if len(names) < 2:
            return self.trials.iloc[0:0]
        suffix = "_pct" if self.problem.objective.scale == 100.0 else ""
        df = self.trials[(self.trials["state"] == "COMPLETE") & self.trials["feasible"]]
        m = pareto_mask(df[f"{names[0]}{suffix}"], df[f"{names[1]}{suffix}"])
        return df[m].sort_values(f"{names[0]}{suffix}", ascending=False)

    def optima_frame(self) -> pd.DataFrame:
        """Best stack and alternatives: ``rank``, ``gap_k_eV``, ``thickness_k_nm`` (each
        searched thickness), ``<objective>_pct``, ``delta_pct`` (below the best),
        ``local_max_check_passed`` (table data for reports)."""
        rows = [
            {
                "gaps_eV": list(map(float, self.best_gaps_eV)),
                self.problem.objective.name: self.best_value,
                "local_max_check_passed": self.local_max_check_passed,
                **(
                    {"thickness_nm": self.best_thickness_nm}
                    if self.best_thickness_nm is not None
                    else {}
                ),
            }
        ]
        rows += self.alternatives
        name = self.problem.objective.name
        s = self.problem.objective.scale
        out = []
        for r, d in enumerate(rows):
            row: dict[str, Any] = {"rank": r + 1}
            for k, g in enumerate(d["gaps_eV"]):
                row[f"gap_{k + 1}_eV"] = g
            for k in self.problem.thickness_junctions:
                row[f"thickness_{k + 1}_nm"] = d["thickness_nm"][k]
            row[f"{name}_pct" if s == 100 else name] = s * d[name]
            row["delta_pct" if s == 100 else "delta"] = s * (d[name] - self.best_value)
            row["local_max_check_passed"] = d["local_max_check_passed"]
            out.append(row)
        return pd.DataFrame(out)

    def to_dict(self) -> dict:
        """JSON-ready summary: the best stack's full evaluation at the top level (the
        keys of ``gapmatch evaluate --json``), plus ``alternatives`` and a ``search``
        block (study, storage, trials, seed, timings)."""
        out = dict(self.best)
        name = self.problem.objective.name
        out["alternatives"] = [
            {
                "gaps_eV": a["gaps_eV"],
                **({"thickness_nm": a["thickness_nm"]} if "thickness_nm" in a else {}),
                name: a[name],
            }
            for a in self.alternatives
        ]
        if self.thick_reference is not None:
            out["thickness_search"] = {
                "windows_nm": {
                    str(j): list(w) for j, w in self.problem.thickness_windows_nm().items()
                },
                "thickness_nm": self.best_thickness_nm,
                "thick_absorber_optimum": self.thick_reference,
                "note": "model projection with finite absorbers (the absorber models and "
                "their parameters), not an ideal detailed-balance ceiling",
            }
        if self.robust_optima:
            out["robust_optima"] = self.robust_optima
        out["search"] = {
            "problem": self.problem.describe(),
            "study_name": self.study_name,
            "storage": self.storage,
            "trials": self.n_trials,
            "resumed": self.resumed,
            "seed": self.seed,
            "sampler": self.sampler,
            "workers": self.workers,
            "global_samples": self.global_samples,
            "best_trial_value": self.best_trial_value,
            "local_max_check_passed": self.local_max_check_passed,
            "elapsed_s": self.elapsed_s,
        }
        return out
