"""Annual energy at a site as a band-gap search objective.

:class:`AnnualEnergyObjective` plugs into :func:`gapmatch.search.make_problem` through
the :class:`gapmatch.search.Objective` interface, so every existing constraint (fixed
bottom gap, windows, spacing, mismatch limit, robustness) applies unchanged. By default
it evaluates candidates on a few dozen representative spectra of the year
(:func:`gapmatch.energy.clusters.representative_spectra`); :meth:`full_year` gives the
same objective on every hour, for evaluating or polishing the final answer, and
:meth:`reduction_error` says how far the two differ for given stacks.

References
----------
.. [1] J. M. Ripalda, J. Buencuerpo and I. Garcia, Nat. Commun. 9, 5126 (2018)
   (yield-optimal rather than STC-optimal designs; clustered spectra).
"""

from __future__ import annotations

import numpy as np

from ..core.connections import CONNECTIONS
from ..errors import InputError, check_range
from ..search.problem import Objective, ObjectiveBatch
from ..units import EV
from .celltemp import CellTemperature
from .clusters import representative_spectra
from .engine import run_yield
from .spectra import HourlySpectra

__all__ = ["AnnualEnergyObjective", "COST_PER_STACK_INTERVAL_S"]

#: nominal engine time per (stack, interval) pair [s] (series, Boltzmann; about 2e6
#: pairs per second in benchmarks/yield.py), declared to the search, never measured
COST_PER_STACK_INTERVAL_S = 5e-7


class AnnualEnergyObjective(Objective):
    """Annual electrical energy [kWh m^-2 yr^-1] of stacks at one site (maximised).

    Parameters
    ----------
    spectra : HourlySpectra
        The site's in-plane spectra (full year, e.g. from
        :func:`gapmatch.energy.site_spectra`).
    connection : {"series", "independent", "voltage-matched"}
        Connection of the searched stacks.
    cell_temperature : CellTemperature, optional
        Default: SAPM, open rack glass/glass.
    ere : float
        External radiative efficiency in (0, 1].
    dark_current : {"boltzmann", "bose-einstein"}
        Radiative dark-current form.
    representatives : int or None
        Number of k-means representative spectra used during the search (default 36);
        ``None`` evaluates every hour.
    seed : int
        Seed of the clustering.

    Notes
    -----
    The photocurrents returned for the mismatch constraint are the year's mean
    photocurrent of each junction (charge over daylight time) [A m^-2].
    """

    name = "annual_energy_kWh_m2"
    label = "annual energy [kWh m^-2 yr^-1]"
    scale = 1.0

    def __init__(
        self,
        spectra: HourlySpectra,
        connection: str = "series",
        *,
        cell_temperature: CellTemperature | None = None,
        ere: float = 1.0,
        dark_current: str = "boltzmann",
        representatives: int | None = 36,
        seed: int = 0,
    ) -> None:
        if connection not in CONNECTIONS:
            raise InputError("connection", f"must be one of {', '.join(CONNECTIONS)}", connection)
        check_range("ere", ere, 0.0, 1.0, low_inclusive=False)
        self.full_spectra = spectra
        self.connection = connection
        self.cell_temperature = cell_temperature or CellTemperature()
        self.ere = float(ere)
        self.dark_current = dark_current
        self.representatives = representatives
        self.seed = int(seed)
        if representatives is None:
            self.spectra = spectra
        else:
            self.spectra, _ = representative_spectra(spectra, int(representatives), seed=seed)
        s = self.spectra
        self._table = s.photon_table()
        self._tc = self.cell_temperature.cell_temperature_K(
            self._table.irradiance_W_m2, s.temp_air_C, s.wind_speed_m_s
        )
        self._bins = 24 * (s.times.month.to_numpy() - 1) + s.times.hour.to_numpy()
        self._w = s.weights * s.interval_h
        #: declared cost: nominal engine time per (stack, interval) pair on a 2-core
        #: desktop (benchmarks/yield.py), times the intervals evaluated
        self.cost_per_stack_s = COST_PER_STACK_INTERVAL_S * s.hours

    def evaluate(self, gaps_eV, extra=None) -> ObjectiveBatch:  # noqa: N803
        g = np.atleast_2d(np.asarray(gaps_eV, dtype=float)) * EV
        res = run_yield(
            self._table,
            self._w,
            self._tc,
            self._bins,
            g,
            (self.connection,),
            ere=self.ere,
            dark_model=self.dark_current,
        )
        energy = res.energy_bins_Wh_m2[self.connection].sum(axis=0) / 1000.0
        jph = res.charge_bins_Ah_m2.sum(axis=0) / self._w.sum()
        return ObjectiveBatch(energy, jph)

    def full_year(self) -> AnnualEnergyObjective:
        """The same objective evaluated on every hour (for the final answer)."""
        if self.representatives is None:
            return self
        return AnnualEnergyObjective(
            self.full_spectra,
            self.connection,
            cell_temperature=self.cell_temperature,
            ere=self.ere,
            dark_current=self.dark_current,
            representatives=None,
        )

    def reduction_error(self, gaps_eV) -> np.ndarray:
        """Relative annual-energy error of the representative set against the full year
        for the given stacks, ``(M,)`` (fraction)."""
        return self.evaluate(gaps_eV).value / self.full_year().evaluate(gaps_eV).value - 1.0

    def describe(self) -> dict:
        a = self.full_spectra.assumptions
        return {
            "name": self.name,
            "connection": self.connection,
            "site": a.get("site", {}),
            "mounting": a.get("mounting", ""),
            "hours": self.full_spectra.hours,
            "representatives": self.representatives,
            "seed": self.seed,
            "cell_temperature": self.cell_temperature.describe(),
            "ere": self.ere,
            "dark_current": self.dark_current,
        }
