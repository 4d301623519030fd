"""Hourly weather of a site, validated once: the input of an energy-yield calculation.

:class:`Weather` holds one value per interval (typically an hour) of the broadband
irradiance components, air temperature, wind speed and the atmospheric quantities the
spectral model needs, together with the :class:`Location` and the interval *centres*
at which the sun's position is taken. Readers (:mod:`gapmatch.energy.readers`) build it
from files; nothing here reads a file.

Units are SI-like and in the names: irradiance [W m^-2], air temperature [deg C], wind
speed [m s^-1], pressure [Pa], precipitable water [cm], relative humidity [%]. Optional
quantities that a file lacks are NaN; the spectral model then uses a stated default and
records it.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..errors import InputError, check_range

__all__ = ["Location", "Weather", "WEATHER_RANGES"]

#: allowed range and unit of every weather column: catches unit mix-ups (hPa for Pa,
#: K for deg C, mm for cm) with a clear message instead of wrong energy
WEATHER_RANGES: dict[str, tuple[float, float, str]] = {
    "ghi_W_m2": (0.0, 1600.0, "W m^-2"),
    "dni_W_m2": (0.0, 1600.0, "W m^-2"),
    "dhi_W_m2": (0.0, 1000.0, "W m^-2"),
    "temp_air_C": (-90.0, 65.0, "deg C"),
    "wind_speed_m_s": (0.0, 75.0, "m s^-1"),
    "pressure_Pa": (3.0e4, 1.2e5, "Pa"),
    "precipitable_water_cm": (0.0, 15.0, "cm"),
    "relative_humidity_pct": (0.0, 100.0, "%"),
    "aod_broadband": (0.0, 5.0, "(dimensionless)"),
    "albedo": (0.0, 1.0, "(dimensionless)"),
}
_REQUIRED = ("ghi_W_m2", "dni_W_m2", "dhi_W_m2", "temp_air_C", "wind_speed_m_s")


@dataclass(frozen=True)
class Location:
    """Where the weather was recorded.

    Parameters
    ----------
    latitude_deg : float
        Latitude [deg], north positive, in [-90, 90].
    longitude_deg : float
        Longitude [deg], east positive, in [-180, 180].
    altitude_m : float
        Altitude above sea level [m], in [-500, 9000].
    name : str
        Label for reports.
    """

    latitude_deg: float
    longitude_deg: float
    altitude_m: float = 0.0
    name: str = ""

    def __post_init__(self) -> None:
        check_range("latitude_deg", self.latitude_deg, -90.0, 90.0, unit="deg")
        check_range("longitude_deg", self.longitude_deg, -180.0, 180.0, unit="deg")
        check_range("altitude_m", self.altitude_m, -500.0, 9000.0, unit="m")


@dataclass(frozen=True, eq=False)
class Weather:
    """Validated interval weather of one site.

    Parameters
    ----------
    times : pandas.DatetimeIndex
        Time zone-aware interval *centres* (solar position is taken there), strictly
        increasing, length ``H``.
    location : Location
        The site.
    data : dict of str to numpy.ndarray
        Columns named as in :data:`WEATHER_RANGES`, each ``(H,)``. The required ones
        (GHI, DNI, DHI, air temperature, wind speed) must be finite; the others may be
        absent or NaN where unknown.
    interval_h : float
        Length of each interval [h], in (0, 24].
    source : str
        Where the data came from (file path and format).
    notes : dict
        What the reader decided (time labels, fallbacks), merged into the yield
        result's ``assumptions``.
    """

    times: pd.DatetimeIndex
    location: Location
    data: dict
    interval_h: float = 1.0
    source: str = ""
    notes: dict = field(default_factory=dict)

    def __post_init__(self) -> None:
        times = pd.DatetimeIndex(self.times)
        if times.tz is None:
            raise InputError("weather.times", "timestamps need a time zone or UTC offset")
        if len(times) == 0:
            raise InputError("weather", "no rows")
        if len(times) > 1 and not times.is_monotonic_increasing:
            raise InputError("weather.times", "timestamps must increase")
        check_range("interval_h", self.interval_h, 0.0, 24.0, low_inclusive=False, unit="h")
        h = len(times)
        clean = {}
        for name in _REQUIRED:
            if name not in self.data:
                raise InputError(f"weather.{name}", "required column is missing")
        for name, value in self.data.items():
            if name not in WEATHER_RANGES:
                raise InputError(
                    f"weather.{name}", f"unknown column; expected one of {list(WEATHER_RANGES)}"
                )
            a = np.asarray(value, dtype=float).reshape(-1)
            if a.size != h:
                raise InputError(f"weather.{name}", f"needs {h} values, one per time", a.size)
            lo, hi, unit = WEATHER_RANGES[name]
            bad = ~np.isfinite(a) if name in _REQUIRED else np.zeros(h, bool)
            bad |= np.isfinite(a) & ((a < lo) | (a > hi))
            if bad.any():
                k = int(np.argmax(bad))
                raise InputError(
                    f"weather.{name}",
                    f"every value must be finite and in [{lo:g}, {hi:g}] {unit}; "
                    f"{int(bad.sum())} are not, first at {times[k]}",
                    float(a[k]),
                )
            clean[name] = a
        ghi = clean["ghi_W_m2"]
        if h >= 24 and ghi.max() < 20.0:
            raise InputError(
                "weather.ghi_W_m2",
                "the largest irradiance is below 20 W m^-2: values look like kW m^-2; give W m^-2",
                float(ghi.max()),
            )
        for name in WEATHER_RANGES:
            clean.setdefault(name, np.full(h, np.nan))
        object.__setattr__(self, "times", times)
        object.__setattr__(self, "data", clean)

    # convenient access ------------------------------------------------------------
    def __getitem__(self, name: str) -> np.ndarray:
        return self.data[name]

    @property
    def hours(self) -> int:
        """Number of intervals ``H``."""
        return len(self.times)

    def take(self, mask) -> Weather:
        """The weather of a subset of intervals (boolean mask or indices)."""
        return Weather(
            self.times[mask],
            self.location,
            {k: v[mask] for k, v in self.data.items()},
            self.interval_h,
            self.source,
            dict(self.notes),
        )

    def with_location(self, location: Location) -> Weather:
        """The same weather attributed to another location (overrides the file's)."""
        return Weather(
            self.times, location, dict(self.data), self.interval_h, self.source, dict(self.notes)
        )
