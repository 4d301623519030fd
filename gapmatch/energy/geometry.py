"""Where the sun is and how the collector faces it, every interval.

:class:`Mounting` describes a fixed plane (tilt, azimuth) or a horizontal single-axis
tracker; :func:`sun_and_plane` gives, for each interval centre of a
:class:`~gapmatch.energy.weather.Weather`, the solar position (pvlib's NREL SPA), the
plane's orientation and the angle of incidence.

References
----------
.. [1] I. Reda and A. Andreas, "Solar position algorithm for solar radiation
   applications", Sol. Energy 76, 577 (2004) (via :func:`pvlib.solarposition.get_solarposition`).
.. [2] W. F. Marion and A. P. Dobos, "Rotation Angle for the Optimum Tracking of
   One-Axis Trackers", NREL/TP-6A20-58891 (2013) (via :func:`pvlib.tracking.singleaxis`).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from ..errors import InputError, check_range
from .choices import TRACKING

if TYPE_CHECKING:  # pandas comes with the weather, not with the option lists
    from .weather import Weather

__all__ = ["TRACKING", "Mounting", "sun_and_plane"]


@dataclass(frozen=True)
class Mounting:
    """Orientation of the collector plane.

    Parameters
    ----------
    tilt_deg : float
        Fixed plane: tilt from horizontal [deg], in [0, 90].
    azimuth_deg : float
        Fixed plane: azimuth the plane faces [deg], clockwise from north (180 = south),
        in [0, 360].
    tracking : {"fixed", "single-axis"}
        ``single-axis``: a horizontal axis (``axis_azimuth_deg``) that follows the sun,
        with backtracking.
    axis_azimuth_deg : float
        Tracker axis azimuth [deg] (180: a north-south axis), in [0, 360].
    max_angle_deg : float
        Largest tracker rotation [deg], in (0, 90].
    gcr : float
        Ground coverage ratio of the tracker rows, in (0, 1).
    """

    tilt_deg: float = 30.0
    azimuth_deg: float = 180.0
    tracking: str = "fixed"
    axis_azimuth_deg: float = 180.0
    max_angle_deg: float = 60.0
    gcr: float = 0.35

    def __post_init__(self) -> None:
        if self.tracking not in TRACKING:
            raise InputError("tracking", f"must be one of {', '.join(TRACKING)}", self.tracking)
        check_range("tilt_deg", self.tilt_deg, 0.0, 90.0, unit="deg")
        check_range("azimuth_deg", self.azimuth_deg, 0.0, 360.0, unit="deg")
        check_range("axis_azimuth_deg", self.axis_azimuth_deg, 0.0, 360.0, unit="deg")
        check_range("max_angle_deg", self.max_angle_deg, 0.0, 90.0, low_inclusive=False, unit="deg")
        check_range("gcr", self.gcr, 0.0, 1.0, low_inclusive=False, high_inclusive=False)

    def describe(self) -> str:
        """One-line description for reports."""
        if self.tracking == "fixed":
            return f"fixed, tilt {self.tilt_deg:g} deg, azimuth {self.azimuth_deg:g} deg"
        return (
            f"single-axis tracker, axis azimuth {self.axis_azimuth_deg:g} deg, "
            f"max rotation {self.max_angle_deg:g} deg, GCR {self.gcr:g}, backtracking"
        )


def sun_and_plane(weather: Weather, mounting: Mounting) -> dict[str, np.ndarray]:
    """Solar position, plane orientation and angle of incidence per interval.

    Parameters
    ----------
    weather : Weather
        Interval centres and site (pressure and air temperature refine refraction).
    mounting : Mounting
        The collector plane.

    Returns
    -------
    dict of numpy.ndarray
        ``apparent_zenith_deg``, ``zenith_deg``, ``solar_azimuth_deg``,
        ``surface_tilt_deg``, ``surface_azimuth_deg``, ``aoi_deg`` and
        ``dni_extra_W_m2`` (extraterrestrial normal irradiance), each ``(H,)``. A
        tracker with the sun below the horizon lies flat.
    """
    import pvlib

    loc = weather.location
    pressure = weather["pressure_Pa"]
    pressure = np.where(np.isfinite(pressure), pressure, pvlib.atmosphere.alt2pres(loc.altitude_m))
    sp = pvlib.solarposition.get_solarposition(
        weather.times,
        loc.latitude_deg,
        loc.longitude_deg,
        altitude=loc.altitude_m,
        pressure=pressure,
        temperature=weather["temp_air_C"],
    )
    app = sp["apparent_zenith"].to_numpy(float)
    zen = sp["zenith"].to_numpy(float)
    azi = sp["azimuth"].to_numpy(float)
    if mounting.tracking == "fixed":
        tilt = np.full(app.shape, float(mounting.tilt_deg))
        saz = np.full(app.shape, float(mounting.azimuth_deg))
    else:
        tr = pvlib.tracking.singleaxis(
            app,
            azi,
            axis_tilt=0.0,
            axis_azimuth=mounting.axis_azimuth_deg,
            max_angle=mounting.max_angle_deg,
            backtrack=True,
            gcr=mounting.gcr,
        )
        tilt = np.nan_to_num(np.asarray(tr["surface_tilt"], float), nan=0.0)
        saz = np.nan_to_num(np.asarray(tr["surface_azimuth"], float), nan=180.0)
    aoi = np.asarray(pvlib.irradiance.aoi(tilt, saz, app, azi), float)
    dni_extra = np.asarray(
        pvlib.irradiance.get_extra_radiation(weather.times.day_of_year.to_numpy()), float
    )
    return {
        "apparent_zenith_deg": app,
        "zenith_deg": zen,
        "solar_azimuth_deg": azi,
        "surface_tilt_deg": tilt,
        "surface_azimuth_deg": saz,
        "aoi_deg": aoi,
        "dni_extra_W_m2": dni_extra,
    }
