"""The result of a yield calculation: energies per stack, with the site that made them.

:class:`YieldResult` turns the engine's SI sums into the quantities users read, in the
units of their names: annual energy [kWh m^-2 yr^-1], in-plane irradiation
[kWh m^-2 yr^-1], energy efficiency (fraction), the AM1.5G 25 deg C efficiency of the same
stack (fraction), the energy lost to current mismatch (series against independent at
the same gaps, fraction), monthly energies and hour-of-day x month tables. It carries
the stacks, the site description and every assumption, so reports need nothing more.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..errors import InputError
from .engine import N_BINS, YieldArrays

__all__ = ["YIELD_CAUTION", "YieldResult"]

#: the caution every yield output carries
YIELD_CAUTION = (
    "Modelled energy of idealised detailed-balance cells (step absorbers, radiative or "
    "stated ERE, no optical, resistive or module losses) under modelled spectra: a "
    "theoretical limit, not an energy rating or a bankable yield assessment. For "
    "anything built or sold defer to accredited measurement (IEC 60904 family; IEC 61853 "
    "for energy rating) and licensed engineering practice."
)
_MONTHS = ("Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec")


@dataclass(frozen=True, eq=False)
class YieldResult:
    """Energy yield of a batch of stacks at one site.

    Attributes
    ----------
    gaps_eV : numpy.ndarray
        Gaps [eV] at the gap model's reference temperature, ``(M, N)``, top first.
    connections : tuple of str
        Connections solved.
    arrays : YieldArrays
        The engine's sums.
    reference_efficiency : dict of str to numpy.ndarray
        Per connection, AM1.5G (ASTM G173-03) efficiency at 25 deg C, fraction, ``(M,)``.
    hours : int
        Daylight intervals modelled.
    site : dict
        Location, weather file, mounting, temperature model (for reports and JSON).
    assumptions : dict
        Every default and fallback used.
    """

    gaps_eV: np.ndarray
    connections: tuple
    arrays: YieldArrays
    reference_efficiency: dict
    hours: int
    site: dict = field(default_factory=dict)
    assumptions: dict = field(default_factory=dict)
    caution: str = YIELD_CAUTION

    # ---- stack-independent ---------------------------------------------------------
    @property
    def poa_irradiation_kWh_m2(self) -> float:
        """In-plane irradiation over the modelled intervals [kWh m^-2]."""
        return float(self.arrays.poa_bins_Wh_m2.sum() / 1000.0)

    @property
    def monthly_poa_kWh_m2(self) -> np.ndarray:
        """In-plane irradiation per month [kWh m^-2], ``(12,)``."""
        return self.arrays.poa_bins_Wh_m2.reshape(12, 24).sum(axis=1) / 1000.0

    # ---- per stack -----------------------------------------------------------------
    def _check(self, connection: str) -> str:
        if connection not in self.connections:
            raise InputError(
                "connection", f"not computed; available: {', '.join(self.connections)}", connection
            )
        return connection

    def annual_energy_kWh_m2(self, connection: str = "series") -> np.ndarray:
        """Electrical energy over the modelled intervals [kWh m^-2], ``(M,)``."""
        return self.arrays.energy_bins_Wh_m2[self._check(connection)].sum(axis=0) / 1000.0

    def energy_efficiency(self, connection: str = "series") -> np.ndarray:
        """Annual energy over in-plane irradiation (fraction), ``(M,)``."""
        return self.annual_energy_kWh_m2(connection) / self.poa_irradiation_kWh_m2

    def monthly_energy_kWh_m2(self, connection: str = "series") -> np.ndarray:
        """Energy per month [kWh m^-2], ``(12, M)``."""
        e = self.arrays.energy_bins_Wh_m2[self._check(connection)]
        return e.reshape(12, 24, -1).sum(axis=1) / 1000.0

    def best_hourly_efficiency(self, connection: str = "series") -> np.ndarray:
        """Largest efficiency of any single interval (fraction), ``(M,)``."""
        return self.arrays.best_hourly_efficiency[self._check(connection)]

    @property
    def mismatch_loss(self) -> np.ndarray:
        """Energy lost to current mismatch, ``1 - E_series / E_independent`` (fraction),
        ``(M,)``; needs both connections."""
        s = self.annual_energy_kWh_m2("series")
        i = self.annual_energy_kWh_m2("independent")
        return 1.0 - s / i

    def monthly_mismatch_loss(self) -> np.ndarray:
        """Energy lost to current mismatch in each month, ``1 - E_series / E_independent``
        of the month (fraction), ``(12, M)``; NaN in a month without energy."""
        s = self.monthly_energy_kWh_m2("series")
        i = self.monthly_energy_kWh_m2("independent")
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.where(i > 0, 1.0 - s / i, np.nan)

    def hour_month_efficiency(self, connection: str = "series", stack: int = 0) -> np.ndarray:
        """Efficiency per (month, hour-of-day) bin (fraction), ``(12, 24)``; NaN where no
        light."""
        e = self.arrays.energy_bins_Wh_m2[self._check(connection)][:, stack]
        p = self.arrays.poa_bins_Wh_m2
        with np.errstate(invalid="ignore", divide="ignore"):
            out = np.where(p > 0, e / p, np.nan)
        return out.reshape(12, 24)

    def hour_month_current_ratio(self, stack: int = 0, upper: int = 0) -> np.ndarray:
        """Photocurrent of junction ``upper`` over that of the junction below it, per
        (month, hour-of-day) bin (charge-weighted), ``(12, 24)``; NaN where no light.

        Parameters
        ----------
        stack : int
            Row of the batch (0-based).
        upper : int
            Junction index (0 = top); the ratio is ``J[upper] / J[upper + 1]``.
        """
        q = self.arrays.charge_bins_Ah_m2[:, stack]
        if not 0 <= upper < q.shape[1] - 1:
            raise InputError("upper", f"must be in 0..{q.shape[1] - 2}", upper)
        with np.errstate(invalid="ignore", divide="ignore"):
            r = np.where(q[:, upper + 1] > 0, q[:, upper] / q[:, upper + 1], np.nan)
        return r.reshape(12, 24)

    # ---- tables --------------------------------------------------------------------
    def to_frame(self) -> pd.DataFrame:
        """One row per stack: gaps, energies, efficiencies and mismatch loss."""
        cols: dict = {}
        for i in range(self.gaps_eV.shape[1]):
            cols[f"gap_{i + 1}_eV"] = self.gaps_eV[:, i]
        cols["poa_irradiation_kWh_m2"] = np.full(self.gaps_eV.shape[0], self.poa_irradiation_kWh_m2)
        for c in self.connections:
            key = c.replace("-", "_")
            cols[f"annual_energy_{key}_kWh_m2"] = self.annual_energy_kWh_m2(c)
            cols[f"energy_efficiency_{key}"] = self.energy_efficiency(c)
            cols[f"reference_efficiency_{key}"] = self.reference_efficiency[c]
        if {"series", "independent"} <= set(self.connections):
            cols["mismatch_loss_pct"] = 100.0 * self.mismatch_loss
        return pd.DataFrame(cols)

    def monthly_frame(self, stack: int = 0) -> pd.DataFrame:
        """Monthly irradiation and energy of one stack (rows: months)."""
        d = {"month": list(_MONTHS), "poa_irradiation_kWh_m2": self.monthly_poa_kWh_m2}
        for c in self.connections:
            d[f"energy_{c.replace('-', '_')}_kWh_m2"] = self.monthly_energy_kWh_m2(c)[:, stack]
        if {"series", "independent"} <= set(self.connections):
            d["mismatch_loss_pct"] = 100.0 * self.monthly_mismatch_loss()[:, stack]
        return pd.DataFrame(d)

    def hour_month_frame(self, stack: int = 0, connection: str = "series") -> pd.DataFrame:
        """Long table of (month, hour) bins: irradiation, energy, efficiency, current ratio."""
        month, hour = np.divmod(np.arange(N_BINS), 24)
        d = {
            "month": month + 1,
            "hour": hour,
            "poa_irradiation_kWh_m2": self.arrays.poa_bins_Wh_m2 / 1000.0,
            "energy_kWh_m2": self.arrays.energy_bins_Wh_m2[self._check(connection)][:, stack]
            / 1000.0,
            "efficiency": self.hour_month_efficiency(connection, stack).ravel(),
        }
        if self.gaps_eV.shape[1] > 1:
            d["current_ratio_top_to_next"] = self.hour_month_current_ratio(stack).ravel()
        return pd.DataFrame(d)

    def summary(self, stack: int = 0, connection: str | None = None) -> dict:
        """Plain JSON-ready summary of one stack (the CLI's ``--json`` object)."""
        c = connection or self.connections[0]
        out = {
            "gaps_eV": [float(x) for x in self.gaps_eV[stack]],
            "connection": c,
            "annual_energy_kWh_m2": float(self.annual_energy_kWh_m2(c)[stack]),
            "poa_irradiation_kWh_m2": self.poa_irradiation_kWh_m2,
            "energy_efficiency": float(self.energy_efficiency(c)[stack]),
            "reference_efficiency": float(self.reference_efficiency[c][stack]),
            "hours": int(self.hours),
            "monthly_energy_kWh_m2": [float(x) for x in self.monthly_energy_kWh_m2(c)[:, stack]],
            "monthly_poa_kWh_m2": [float(x) for x in self.monthly_poa_kWh_m2],
        }
        if {"series", "independent"} <= set(self.connections):
            out["annual_energy_series_kWh_m2"] = float(self.annual_energy_kWh_m2("series")[stack])
            out["annual_energy_independent_kWh_m2"] = float(
                self.annual_energy_kWh_m2("independent")[stack]
            )
            out["mismatch_loss"] = float(self.mismatch_loss[stack])
        out["site"] = self.site
        out["assumptions"] = self.assumptions
        out["caution"] = self.caution
        return out
