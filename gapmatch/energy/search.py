"""Yield-optimal band gaps at a site, side by side with the AM1.5G optimum.

:func:`optimise_yield` takes a search problem (windows, fixed gaps, spacing, mismatch
limit, robustness: :func:`gapmatch.search.make_problem`) and a site's hourly spectra,
and runs two searches with the same constraints:

1. the **yield search**: the annual-energy objective
   (:class:`~gapmatch.energy.objective.AnnualEnergyObjective`) on a few dozen
   representative spectra of the year (k-means, Ripalda et al. 2018); its best stack
   is then polished again on the **full year** (every hour), which gives the answer;
2. the **AM1.5G search**: the efficiency under ASTM G173-03 AM1.5G at 25 deg C, with
   the same ERE and dark-current form.

Both optima are then evaluated on both criteria on the full year (annual energy,
energy efficiency, mismatch loss; AM1.5G efficiency at 25 deg C), and the
annual-energy error of the representative set against the full year is stated for the
yield optimum. The numbers are modelled energies of idealised cells, not an energy
rating (see :data:`gapmatch.energy.YIELD_CAUTION`).

References
----------
.. [1] J. M. Ripalda, J. Buencuerpo and I. Garcia, Nat. Commun. 9, 5126 (2018)
   (yield-optimal rather than STC-optimal designs; clustered spectra).
.. [2] W. Shockley and H. J. Queisser, J. Appl. Phys. 32, 510 (1961).
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from ..errors import InputError
from .api import REFERENCE_TEMPERATURE_K, yield_from_spectra
from .celltemp import CellTemperature
from .objective import AnnualEnergyObjective
from .result import YIELD_CAUTION
from .spectra import HourlySpectra

__all__ = ["YieldSearchResult", "optimise_yield", "reference_problem"]

#: the keyword conditions the yield search keeps from the problem (the spectrum,
#: concentration and temperature come from the site instead)
_KEPT = ("ere", "dark_current", "cells_per_string")


@dataclass
class YieldSearchResult:
    """Outcome of :func:`optimise_yield`.

    Attributes
    ----------
    yield_optimum, am15g_optimum : dict
        ``gaps_eV`` (top first), ``annual_energy_kWh_m2`` (full year, the searched
        connection), ``energy_efficiency`` (fraction), ``reference_efficiency``
        (AM1.5G at 25 deg C, fraction), ``annual_energy_series_kWh_m2``,
        ``annual_energy_independent_kWh_m2``, ``mismatch_loss`` (fraction); the yield
        optimum also has ``annual_energy_reduced_set_kWh_m2`` and ``reduction_error``.
    connection : str
        Connection searched.
    energy_gain : float
        ``E(yield optimum) / E(AM1.5G optimum) - 1`` on the full year (fraction).
    efficiency_cost : float
        ``eta_AM1.5G(AM1.5G optimum) - eta_AM1.5G(yield optimum)`` (fraction, absolute).
    reduction_error : float
        Annual-energy error of the representative set against the full year at the
        yield optimum, ``E_reduced / E_full - 1`` (fraction).
    representatives : int or None
        Representative spectra used in the search (``None``: every hour).
    full_year_polish : bool
        The answer was polished on the full year after the reduced-set search.
    hours : int
        Intervals of the full year.
    poa_irradiation_kWh_m2 : float
        In-plane irradiation of the year [kWh m^-2 yr^-1].
    yield_search, am15g_search : gapmatch.search.SearchResult
        The two searches (trials, study, timings).
    assumptions : dict
        Site and model assumptions of the full-year evaluation.
    caution : str
        What the numbers are not.
    """

    yield_optimum: dict
    am15g_optimum: dict
    connection: str
    energy_gain: float
    efficiency_cost: float
    reduction_error: float
    representatives: int | None
    full_year_polish: bool
    hours: int
    poa_irradiation_kWh_m2: float
    yield_search: Any
    am15g_search: Any
    assumptions: dict = field(default_factory=dict)
    caution: str = YIELD_CAUTION

    def to_frame(self) -> pd.DataFrame:
        """Two rows (``optimum`` = ``yield`` / ``AM1.5G``), each stack on both criteria."""
        rows = []
        for label, d in (("yield", self.yield_optimum), ("AM1.5G", self.am15g_optimum)):
            row: dict[str, Any] = {"optimum": label}
            for k, g in enumerate(d["gaps_eV"]):
                row[f"gap_{k + 1}_eV"] = g
            row["annual_energy_kWh_m2"] = d["annual_energy_kWh_m2"]
            row["energy_efficiency_pct"] = 100.0 * d["energy_efficiency"]
            row["reference_efficiency_pct"] = 100.0 * d["reference_efficiency"]
            row["mismatch_loss_pct"] = 100.0 * d["mismatch_loss"]
            rows.append(row)
        return pd.DataFrame(rows)

    def to_dict(self) -> dict:
        """JSON-ready summary (efficiencies as fractions, unit-suffixed keys)."""
        return {
            "connection": self.connection,
            "criterion": "annual_energy_kWh_m2 on the full year (searched on "
            + (
                f"{self.representatives} representative spectra, then polished on every hour)"
                if self.representatives
                else "every hour)"
            ),
            "yield_optimum": self.yield_optimum,
            "am15g_optimum": self.am15g_optimum,
            "energy_gain": self.energy_gain,
            "efficiency_cost": self.efficiency_cost,
            "reduction_error": self.reduction_error,
            "representatives": self.representatives,
            "full_year_polish": self.full_year_polish,
            "hours": self.hours,
            "poa_irradiation_kWh_m2": self.poa_irradiation_kWh_m2,
            "searches": {
                "yield": _search_meta(self.yield_search),
                "am15g": _search_meta(self.am15g_search),
            },
            "assumptions": self.assumptions,
            "caution": self.caution,
        }


def _search_meta(res) -> dict:
    return {
        "study_name": res.study_name,
        "storage": res.storage,
        "trials": res.n_trials,
        "resumed": res.resumed,
        "seed": res.seed,
        "sampler": res.sampler,
        "elapsed_s": res.elapsed_s,
    }


def _fixed_map(problem) -> dict[int, float] | None:
    d = {int(k) + 1: float(problem.bounds_eV[k, 0]) for k in np.flatnonzero(problem.fixed)}
    return d or None


def reference_problem(problem):
    """The same constraints as ``problem``, maximising the AM1.5G efficiency at 25 deg C
    (ASTM G173-03 via pvlib; ERE, dark-current form and string ratio kept).

    Parameters
    ----------
    problem : gapmatch.search.SearchProblem

    Returns
    -------
    gapmatch.search.SearchProblem
    """
    from ..search import make_problem

    cond = {k: problem.conditions[k] for k in _KEPT if k in problem.conditions}
    return make_problem(
        problem.n_junctions,
        problem.connection,
        bounds_eV=[
            (0.1, 5.0) if f else (float(b[0]), float(b[1]))  # fixed: overwritten below
            for b, f in zip(problem.bounds_eV, problem.fixed, strict=True)
        ],
        fixed_eV=_fixed_map(problem),
        min_spacing_eV=problem.min_spacing_eV,
        min_mismatch_ratio=problem.min_mismatch_ratio,
        robustness_eV=problem.robustness_eV,
        spectrum="AM1.5G",
        temperature_K=REFERENCE_TEMPERATURE_K,
        **cond,
    )


def optimise_yield(
    problem,
    spectra: HourlySpectra,
    *,
    cell_temperature: CellTemperature | None = None,
    representatives: int | None = 36,
    cluster_seed: int = 0,
    full_year_polish: bool = True,
    storage: str | None = None,
    study_name: str | None = None,
    reference_storage: str | None = ":memory:",
    progress: bool = False,
    **search_kwargs,
) -> YieldSearchResult:
    """Yield-optimal gaps at a site and the AM1.5G optimum, each on both criteria.

    Parameters
    ----------
    problem : gapmatch.search.SearchProblem
        Constraints of the search (from :func:`gapmatch.search.make_problem`); its
        objective is replaced by the annual energy at the site. Its ``ere``,
        ``dark_current`` and ``cells_per_string`` conditions are kept; its spectrum,
        concentration and temperature are not used (the site provides them).
    spectra : HourlySpectra
        The site's full year of in-plane spectra (:func:`gapmatch.energy.site_spectra`).
    cell_temperature : CellTemperature, optional
        Cell temperature model (default SAPM, open rack glass/glass).
    representatives : int or None
        k-means representative spectra used during the search (default 36; ``None``:
        every hour, slower).
    cluster_seed : int
        Seed of the clustering.
    full_year_polish : bool
        Polish the reduced-set answer again on the full year (default True).
    storage, study_name : str, optional
        Where the yield search's trials are kept (see :func:`gapmatch.search.optimise`;
        the default study name is derived from the site and the settings).
    reference_storage : str, optional
        Storage of the AM1.5G search (default ``":memory:"``, in one process: it is fast
        to repeat).
    progress : bool
        Progress bars of the searches.
    **search_kwargs
        Passed to both :func:`gapmatch.search.optimise` calls (``trials``, ``seed``,
        ``workers``, ``sampler``, ``global_samples``, ...).

    Returns
    -------
    YieldSearchResult

    References
    ----------
    .. [1] J. M. Ripalda, J. Buencuerpo and I. Garcia, Nat. Commun. 9, 5126 (2018).
    """
    from ..search import SearchProblem, optimise, polish

    if not isinstance(problem, SearchProblem):
        raise InputError("problem", "must be a gapmatch.search.SearchProblem", type(problem))
    if not isinstance(spectra, HourlySpectra):
        raise InputError("spectra", "must be HourlySpectra (gapmatch.energy.site_spectra)")
    c = problem.conditions
    obj = AnnualEnergyObjective(
        spectra,
        problem.connection,
        cell_temperature=cell_temperature,
        ere=float(np.max(c.get("ere", 1.0))),
        dark_current=c.get("dark_current", "boltzmann"),
        representatives=representatives,
        seed=cluster_seed,
    )
    yprob = dataclasses.replace(problem, objective=obj)
    ysearch = optimise(
        yprob, storage=storage, study_name=study_name, progress=progress, **search_kwargs
    )
    best = np.asarray(ysearch.best_gaps_eV, dtype=float)
    full_obj = obj.full_year()
    if full_year_polish and full_obj is not obj:
        fprob = dataclasses.replace(problem, objective=full_obj)
        seed = int(search_kwargs.get("seed", 0))
        pol = polish(fprob, best[problem.free][None, :], seed=seed, nelder_mead=1, h0=0.005)[0]
        if pol.value >= float(full_obj.evaluate(best[None, :]).value[0]):
            best = np.asarray(pol.gaps_eV, dtype=float)
    ref_kwargs = dict(search_kwargs)
    if reference_storage in (None, ":memory:"):
        reference_storage = ":memory:"
        ref_kwargs["workers"] = 1  # an in-memory study serves one process
    rsearch = optimise(
        reference_problem(problem),
        storage=reference_storage,
        progress=progress,
        **ref_kwargs,
    )
    ref_best = np.asarray(rsearch.best_gaps_eV, dtype=float)
    both = yield_from_spectra(
        spectra,
        np.vstack([best, ref_best]),
        problem.connection,
        cell_temperature=obj.cell_temperature,
        ere=obj.ere,
        dark_current=obj.dark_current,
    )
    conn = problem.connection

    def point(i: int) -> dict:
        return {
            "gaps_eV": [float(x) for x in both.gaps_eV[i]],
            "annual_energy_kWh_m2": float(both.annual_energy_kWh_m2(conn)[i]),
            "energy_efficiency": float(both.energy_efficiency(conn)[i]),
            "reference_efficiency": float(both.reference_efficiency[conn][i]),
            "annual_energy_series_kWh_m2": float(both.annual_energy_kWh_m2("series")[i]),
            "annual_energy_independent_kWh_m2": float(both.annual_energy_kWh_m2("independent")[i]),
            "mismatch_loss": float(
                1.0
                - both.annual_energy_kWh_m2("series")[i]
                / both.annual_energy_kWh_m2("independent")[i]
            ),
        }

    y, a = point(0), point(1)
    reduced = float(obj.evaluate(best[None, :]).value[0])
    y["annual_energy_reduced_set_kWh_m2"] = reduced
    err = reduced / y["annual_energy_kWh_m2"] - 1.0
    y["reduction_error"] = err
    return YieldSearchResult(
        yield_optimum=y,
        am15g_optimum=a,
        connection=conn,
        energy_gain=y["annual_energy_kWh_m2"] / a["annual_energy_kWh_m2"] - 1.0,
        efficiency_cost=a["reference_efficiency"] - y["reference_efficiency"],
        reduction_error=err,
        representatives=representatives,
        full_year_polish=bool(full_year_polish and full_obj is not obj),
        hours=spectra.hours,
        poa_irradiation_kWh_m2=float(both.poa_irradiation_kWh_m2),
        yield_search=ysearch,
        am15g_search=rsearch,
        assumptions=dict(both.assumptions, site=dict(both.site)),
    )
