"""Cell temperature per interval: pvlib's SAPM or Faiman models, or a fixed value.

References
----------
.. [1] D. L. King, W. E. Boyson and J. A. Kratochvil, "Photovoltaic Array Performance
   Model", SAND2004-3535 (2004) (SAPM cell temperature and its mounting presets).
.. [2] D. Faiman, "Assessing the outdoor operating temperature of photovoltaic modules",
   Prog. Photovolt. 16, 307 (2008).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError, check_range
from .choices import CELL_TEMPERATURE_MODELS, SAPM_MOUNTINGS

__all__ = ["CELL_TEMPERATURE_MODELS", "SAPM_MOUNTINGS", "CellTemperature"]


@dataclass(frozen=True)
class CellTemperature:
    """How the cell temperature follows the weather.

    Parameters
    ----------
    model : {"sapm", "faiman", "fixed"}
        SAPM cell temperature with a mounting preset, Faiman's heat-loss model, or a
        fixed temperature.
    mounting : str
        SAPM preset (one of :data:`SAPM_MOUNTINGS`).
    u0 : float
        Faiman constant heat-loss coefficient [W m^-2 K^-1], in (0, 100] (pvlib's
        default 25.0).
    u1 : float
        Faiman wind heat-loss coefficient [W m^-3 s K^-1], in [0, 50] (pvlib's
        default 6.84).
    fixed_K : float
        Cell temperature [K] of the fixed model, in [200, 400].
    """

    model: str = "sapm"
    mounting: str = "open_rack_glass_glass"
    u0: float = 25.0
    u1: float = 6.84
    fixed_K: float = 298.15

    def __post_init__(self) -> None:
        if self.model not in CELL_TEMPERATURE_MODELS:
            raise InputError(
                "temperature_model",
                f"must be one of {', '.join(CELL_TEMPERATURE_MODELS)}",
                self.model,
            )
        if self.mounting not in SAPM_MOUNTINGS:
            raise InputError(
                "mounting", f"must be one of {', '.join(SAPM_MOUNTINGS)}", self.mounting
            )
        check_range("u0", self.u0, 0.0, 100.0, low_inclusive=False, unit="W m^-2 K^-1")
        check_range("u1", self.u1, 0.0, 50.0, unit="W m^-3 s K^-1")
        check_range("fixed_K", self.fixed_K, 200.0, 400.0, unit="K")

    def describe(self) -> str:
        """One-line description for reports."""
        if self.model == "sapm":
            return f"SAPM cell temperature, {self.mounting} (pvlib)"
        if self.model == "faiman":
            return f"Faiman, u0 = {self.u0:g} W m^-2 K^-1, u1 = {self.u1:g} W m^-3 s K^-1 (pvlib)"
        return f"fixed at {self.fixed_K:g} K"

    def cell_temperature_K(
        self, poa_global_W_m2: np.ndarray, temp_air_C: np.ndarray, wind_speed_m_s: np.ndarray
    ) -> np.ndarray:
        """Cell temperature [K] per interval.

        Parameters
        ----------
        poa_global_W_m2 : numpy.ndarray
            In-plane irradiance [W m^-2], ``(H,)``.
        temp_air_C : numpy.ndarray
            Air temperature [deg C], ``(H,)``.
        wind_speed_m_s : numpy.ndarray
            Wind speed [m s^-1], ``(H,)``.

        Returns
        -------
        numpy.ndarray
            ``(H,)`` [K].
        """
        poa = np.asarray(poa_global_W_m2, float)
        if self.model == "fixed":
            return np.full(poa.shape, float(self.fixed_K))
        import pvlib

        ta = np.asarray(temp_air_C, float)
        ws = np.asarray(wind_speed_m_s, float)
        if self.model == "sapm":
            p = pvlib.temperature.TEMPERATURE_MODEL_PARAMETERS["sapm"][self.mounting]
            tc = pvlib.temperature.sapm_cell(poa, ta, ws, p["a"], p["b"], p["deltaT"])
        else:
            tc = pvlib.temperature.faiman(poa, ta, ws, u0=self.u0, u1=self.u1)
        return np.asarray(tc, float) + 273.15
