"""What a roadmap ranks candidates by: the evaluator of a batch of stacks.

The roadmap calls an evaluator with a batch of stacks -- gaps at the cell temperature
and the per-junction physics of every draw as ``(M, N)`` arrays -- and gets one value per
stack. :class:`EfficiencyEvaluator` (the default) returns the detailed-balance efficiency
through one :func:`gapmatch.evaluate` call; :class:`AnnualEnergyEvaluator` returns the
modelled annual energy at a site on weighted representative spectra of its year. Anything
with the attributes and the call signature of :class:`Evaluator` can be passed to
:func:`gapmatch.roadmap.run_roadmap`.

A physics set may carry ``gap_at``, a function ``(gaps_300K_eV (M, N), T_K) -> gaps_eV``
(the materials' gap temperature models): then the gaps passed in are at 300 K and the
evaluator shifts them to each cell temperature it uses.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Protocol, runtime_checkable

import numpy as np

__all__ = ["AnnualEnergyEvaluator", "Evaluator", "EvaluatorBatch", "EfficiencyEvaluator"]


@dataclass
class EvaluatorBatch:
    """Values of ``M`` stacks.

    Attributes
    ----------
    value : numpy.ndarray
        ``(M,)`` in the evaluator's base unit (efficiency: fraction).
    jph_A_m2 : numpy.ndarray
        ``(M, N)`` photocurrent densities [A m^-2] (used by the gap search).
    """

    value: np.ndarray
    jph_A_m2: np.ndarray  # noqa: N815


@runtime_checkable
class Evaluator(Protocol):
    """Interface of a roadmap evaluator.

    Attributes
    ----------
    name : str
        Quantity, e.g. ``"efficiency"`` or ``"annual_energy"``.
    unit : str
        Suffix of output keys and columns (``"pct"`` gives ``p50_pct``).
    scale : float
        Factor from the base unit to ``unit`` (100 for a fraction shown in %).
    label : str
        Axis label with unit.
    """

    name: str
    unit: str
    scale: float
    label: str

    def __call__(
        self, gaps_eV: np.ndarray, connection: str, physics: dict[str, Any]
    ) -> EvaluatorBatch:  # noqa: N803
        """Evaluate ``(M, N)`` gaps [eV] at the cell temperature (top first) with the
        keyword physics of :func:`gapmatch.evaluate` (``ere``, ``absorber``,
        ``thickness_nm``, ``alpha0_per_cm``, ``light_trapping``, ``refractive_index``,
        ``collection_efficiency``, ``series_resistance_ohm_cm2``, ``cells_per_string``)."""
        ...

    def describe(self) -> dict:
        """JSON-ready identity (spectrum, temperature ...)."""
        ...


class EfficiencyEvaluator:
    """Detailed-balance efficiency under one spectrum, in one batched evaluate call.

    Parameters
    ----------
    spectrum : str
        ``"AM1.5G"`` (default), ``"AM1.5D"``, ``"AM0"`` or ``"blackbody"``.
    spectrum_file : str, optional
        CSV spectrum (overrides ``spectrum``).
    concentration : float
        Concentration [suns].
    irradiance_W_m2 : float, optional
        Rescale the spectrum to this total [W m^-2].
    temperature_K : float
        Cell temperature [K].

    References
    ----------
    .. [1] W. Shockley and H. J. Queisser, J. Appl. Phys. 32, 510 (1961).
    .. [2] U. Rau, Phys. Rev. B 76, 085303 (2007) (ERE, collection and reciprocity).
    """

    name = "efficiency"
    unit = "pct"
    scale = 100.0
    label = "efficiency [%]"

    def __init__(
        self,
        spectrum: str = "AM1.5G",
        *,
        spectrum_file: str | None = None,
        concentration: float = 1.0,
        irradiance_W_m2: float | None = None,  # noqa: N803
        temperature_K: float = 300.0,  # noqa: N803
    ) -> None:
        from .. import get_spectrum

        self.temperature_K = float(temperature_K)
        self._desc = {
            "quantity": "detailed-balance efficiency",
            "spectrum": spectrum_file or spectrum,
            "concentration": concentration,
            "irradiance_W_m2": irradiance_W_m2,
            "temperature_K": self.temperature_K,
        }
        self.spectrum = get_spectrum(
            spectrum,
            spectrum_file=spectrum_file,
            irradiance_W_m2=irradiance_W_m2,
            concentration=concentration,
        )

    def __call__(self, gaps_eV, connection, physics) -> EvaluatorBatch:  # noqa: N803
        from .. import evaluate

        physics = dict(physics)
        gap_at = physics.pop("gap_at", None)
        if gap_at is not None:
            gaps_eV = gap_at(gaps_eV, self.temperature_K)
        res = evaluate(
            gaps_eV,
            connection,
            self.spectrum,
            temperature_K=self.temperature_K,
            require_descending=False,
            **physics,
        )
        return EvaluatorBatch(np.asarray(res.efficiency, float), res.solution.jph)

    def describe(self) -> dict:
        return dict(self._desc)


class AnnualEnergyEvaluator:
    """Modelled annual energy [kWh m^-2 yr^-1] of stacks at a site.

    The year's in-plane hourly spectra are clustered into ``representatives`` weighted
    spectra (:func:`gapmatch.energy.clusters.representative_spectra`); each carries
    the cell temperature of its mean irradiance, air temperature and wind. A batch of
    stacks is solved under each of them with the full physics of the roadmap (ERE,
    finite absorbers, collection, series resistance) through :func:`gapmatch.evaluate`
    -- one batched call per representative spectrum, never per stack -- and the energy
    is the hour-weighted sum of the maximum powers. Gaps follow each representative's
    cell temperature when the physics set carries ``gap_at``.

    Parameters
    ----------
    spectra : gapmatch.energy.HourlySpectra
        The site's full year of in-plane spectra.
    cell_temperature : gapmatch.energy.CellTemperature, optional
        Cell temperature model (default: SAPM, open rack glass/glass).
    representatives : int
        Number of representative spectra, in [4, 96] and at most the number of
        intervals.
    seed : int
        Seed of the clustering.
    site : dict, optional
        JSON-ready description of the site (shown by :meth:`describe`).

    Notes
    -----
    Modelled energy of an idealised cell, not an energy rating or a bankable yield
    assessment (IEC 61853 and licensed engineering practice govern those). The
    photocurrents returned for the gap search are the year's hour-weighted mean
    photocurrent of each junction [A m^-2].

    References
    ----------
    .. [1] J. M. Ripalda, J. Buencuerpo and I. Garcia, Nat. Commun. 9, 5126 (2018)
       (annual energy of multi-junction cells on clustered representative spectra).
    .. [2] W. Shockley and H. J. Queisser, J. Appl. Phys. 32, 510 (1961).
    """

    name = "annual_energy"
    unit = "kWh_m2"
    scale = 1.0
    label = "annual energy [kWh m^-2 yr^-1]"

    def __init__(
        self,
        spectra,
        *,
        cell_temperature=None,
        representatives: int = 24,
        seed: int = 0,
        site: dict | None = None,
    ) -> None:
        from ..core.spectra import TabulatedSpectrum
        from ..energy.celltemp import CellTemperature
        from ..energy.clusters import representative_spectra
        from ..errors import InputError

        k = representatives
        if isinstance(k, bool) or not isinstance(k, int) or not 4 <= k <= 96:
            raise InputError("representatives", "must be a whole number in [4, 96]", k)
        self.full = spectra
        lit = spectra.take(np.flatnonzero(spectra.poa_W_m2 > 0))
        if lit.hours < 4:
            raise InputError("site", "has fewer than 4 daylight intervals", lit.hours)
        reduced, _ = representative_spectra(lit, min(k, lit.hours), seed=seed)
        self.reduced = reduced
        ct = cell_temperature or CellTemperature()
        self.cell_temperature = ct
        poa = reduced.poa_W_m2
        self.cell_temperature_K = np.asarray(
            ct.cell_temperature_K(poa, reduced.temp_air_C, reduced.wind_speed_m_s), float
        )
        #: hours each representative stands for in the year [h]
        self.hours_h = np.asarray(reduced.weights, float) * reduced.interval_h
        self.poa_irradiation_kWh_m2 = float(np.sum(self.hours_h * poa) / 1000.0)
        self.spectra = [
            TabulatedSpectrum(
                reduced.wavelength_nm,
                reduced.poa_W_m2_nm[i],
                name=f"representative spectrum {i + 1}",
                source="k-means representative of the site's hourly in-plane spectra",
            )
            for i in range(reduced.hours)
        ]
        self.checks: list[dict] = []
        self._desc = {
            "quantity": "modelled annual energy at a site (not an energy rating)",
            "site": dict(site or {}),
            "representative_spectra": int(reduced.hours),
            "clustering_seed": int(seed),
            "daylight_intervals": int(lit.hours),
            "poa_irradiation_kWh_m2": round(self.poa_irradiation_kWh_m2, 3),
            "cell_temperature": ct.describe(),
            "cell_temperature_range_K": [
                round(float(self.cell_temperature_K.min()), 2),
                round(float(self.cell_temperature_K.max()), 2),
            ],
        }

    @classmethod
    def from_site(cls, site, *, representatives: int = 24, seed: int = 0):
        """The evaluator of a study's ``[site]`` (:class:`gapmatch.study.Site`)."""
        from ..energy import site_spectra

        hs = site_spectra(site.weather, **site.spectra_options())
        desc = dict(hs.assumptions.get("site", {}))
        desc |= {"weather": site.given or site.weather, "tilt_deg": site.tilt_deg}
        desc |= {"azimuth_deg": site.azimuth_deg, "tracking": site.tracking}
        return cls(
            hs,
            cell_temperature=site.cell_temperature(),
            representatives=representatives,
            seed=seed,
            site=desc,
        )

    def __call__(self, gaps_eV, connection, physics) -> EvaluatorBatch:  # noqa: N803
        from .. import evaluate

        physics = dict(physics)
        gap_at = physics.pop("gap_at", None)
        g300 = np.atleast_2d(np.asarray(gaps_eV, float))
        energy_Wh = np.zeros(g300.shape[0])  # noqa: N806
        charge = np.zeros(g300.shape)
        for spec, t, hours in zip(self.spectra, self.cell_temperature_K, self.hours_h, strict=True):
            g = g300 if gap_at is None else gap_at(g300, float(t))
            res = evaluate(
                g,
                connection,
                spec,
                temperature_K=float(t),
                require_descending=False,
                **physics,
            )
            energy_Wh += hours * res.pmpp_W_m2
            charge += hours * res.solution.jph
        return EvaluatorBatch(energy_Wh / 1000.0, charge / self.hours_h.sum())

    def full_year(self, gaps_eV, connection: str, physics: dict) -> np.ndarray:  # noqa: N803
        """The same quantity on every daylight interval of the year (no clustering).

        One :func:`gapmatch.evaluate` call per interval: meant for a few stacks (the
        check of the representative set), not for searches or draws.

        Parameters
        ----------
        gaps_eV : array_like
            ``(M, N)`` gaps [eV] (at 300 K when ``physics`` carries ``gap_at``).
        connection : str
            Connection.
        physics : dict
            Keyword physics, as for a call.

        Returns
        -------
        numpy.ndarray
            ``(M,)`` annual energy [kWh m^-2 yr^-1].
        """
        from .. import evaluate
        from ..core.spectra import TabulatedSpectrum

        physics = dict(physics)
        gap_at = physics.pop("gap_at", None)
        g300 = np.atleast_2d(np.asarray(gaps_eV, float))
        lit = self.full.take(np.flatnonzero(self.full.poa_W_m2 > 0))
        tc = self.cell_temperature.cell_temperature_K(
            lit.poa_W_m2, lit.temp_air_C, lit.wind_speed_m_s
        )
        hours = np.asarray(lit.weights, float) * lit.interval_h
        energy_Wh = np.zeros(g300.shape[0])  # noqa: N806
        for i in range(lit.hours):
            t = float(tc[i])
            g = g300 if gap_at is None else gap_at(g300, t)
            spec = TabulatedSpectrum(lit.wavelength_nm, lit.poa_W_m2_nm[i])
            res = evaluate(
                g, connection, spec, temperature_K=t, require_descending=False, **physics
            )
            energy_Wh += hours[i] * res.pmpp_W_m2
        return energy_Wh / 1000.0

    def check_representatives(self, label: str, gaps_eV, connection, physics, value) -> dict:  # noqa: N803
        """Record the error of the representative set for one stack against the full
        year (shown by :meth:`describe`) and return the record."""
        full = float(self.full_year(gaps_eV, connection, physics)[0])
        rec = {
            "stack": label,
            "representative_kWh_m2": round(float(value), 4),
            "full_year_kWh_m2": round(full, 4),
            "relative_error": float(value) / full - 1.0 if full > 0 else 0.0,
        }
        self.checks.append(rec)
        return rec

    def describe(self) -> dict:
        return dict(self._desc) | {"representative_set_checked_on_full_year": list(self.checks)}
