"""Hourly in-plane spectra: a clear-sky spectral model scaled to the measured irradiance.

For every daylight interval of a :class:`~gapmatch.energy.weather.Weather`:

1. **Clear-sky shapes.** pvlib's ``spectrl2`` (Bird & Riordan 1984) gives the clear-sky
   direct-normal and diffuse-horizontal spectra for the hour's sun, pressure,
   precipitable water, aerosol turbidity at 500 nm, ozone and albedo. Quantities the
   file lacks take the defaults in :data:`SPECTRAL_DEFAULTS` (recorded, with how many
   hours used each, in the ``assumptions`` of the result).
2. **Scaling to the measured components** (after Ernst, Holst, Winter & Altermatt
   2016: direct part to the measured DNI, diffuse part with a cloudiness-dependent
   spectral shape). The direct spectrum is the clear-sky direct shape scaled to the
   measured DNI. The diffuse *shape* is a mixture of the clear-sky diffuse shape
   (blue-rich Rayleigh sky light) and the clear-sky global-horizontal shape,

       s_dif = (1 - w) * dhi_cs / |dhi_cs| + w * ghi_cs / |ghi_cs|,
       w = clip(1 - DNI_meas / |dni_cs|, 0, 1),

   where ``|x|`` is the broadband integral. ``w`` is the fraction of the clear-sky beam
   that clouds remove: under a clear sky the diffuse light keeps the clear-sky shape;
   under an overcast sky (no beam) it takes the shape of the light that enters the
   cloud, because cloud droplets are much larger than the wavelength and scatter almost
   independently of it. **This parametrisation is ours.** The published method
   makes the diffuse shape depend on cloudiness, but its exact formula was not
   available to us; the form above is a documented, physically reasonable stand-in
   with the same limits (clear-sky diffuse for a clear sky, spectrally neutral cloud
   scattering for overcast), not a reproduction of the paper.
3. **In plane.** The measured components are transposed to the plane by pvlib
   (Hay-Davies by default, Perez or isotropic as options). The direct and circumsolar
   parts take the direct spectrum's shape, the isotropic and horizon-band sky parts
   the diffuse shape, and the ground-reflected part the shape of the global-horizontal
   spectrum with a spectrally flat albedo. Each part is scaled so that its broadband
   integral equals pvlib's transposed component, so the in-plane spectrum integrates to
   :func:`pvlib.irradiance.get_total_irradiance` of the same hour (the whole broadband
   irradiance is assigned to spectrl2's 300-4000 nm range).

Daylight intervals are those with the sun above the horizon at the interval centre and
a positive GHI; the irradiation of the others is reported in the assumptions.

References
----------
.. [1] R. Bird and C. Riordan, "Simple solar spectral model for direct and diffuse
   irradiance on horizontal and tilted planes at the earth's surface for cloudless
   atmospheres", NREL TR-215-2436 (1984) (``pvlib.spectrum.spectrl2``).
.. [2] M. Ernst, H. Holst, M. Winter and P. P. Altermatt, "SunCalculator: A program to
   calculate the angular and spectral distribution of direct and diffuse solar
   radiation", Sol. Energy Mater. Sol. Cells 157, 913 (2016) (scaling of clear-sky
   spectra to measured direct and diffuse irradiance, cloud-dependent diffuse shape).
.. [3] J. E. Hay and J. A. Davies, "Calculation of the solar radiation incident on an
   inclined surface", Proc. First Canadian Solar Radiation Data Workshop (1980).
.. [4] R. Perez et al., "Modeling daylight availability and irradiance components from
   direct and global irradiance", Sol. Energy 44, 271 (1990).
.. [5] C. Gueymard, "Analysis of monthly average atmospheric precipitable water and
   turbidity in Canada and northern United States", Sol. Energy 53, 57 (1994)
   (``pvlib.atmosphere.gueymard94_pw``).
.. [6] P. Molineaux, P. Ineichen and N. O'Neill, "Equivalence of pyrheliometric and
   monochromatic aerosol optical depths at a single key wavelength", Appl. Opt. 37,
   7008 (1998) (broadband AOD equals the spectral AOD near 700 nm; from memory).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..core.hourly import PhotonTable
from ..errors import InputError, check_range
from .choices import TRANSPOSITION_MODELS
from .geometry import Mounting, sun_and_plane
from .weather import Weather

__all__ = [
    "SPECTRAL_DEFAULTS",
    "TRANSPOSITION_MODELS",
    "HourlySpectra",
    "clear_sky_spectra",
    "hourly_spectra",
    "trapezoid_W_m2",
]

#: stated defaults for the atmosphere where a weather file has no value
SPECTRAL_DEFAULTS = {
    # Bird & Riordan (1984) example atmosphere, as in pvlib's spectrl2 gallery example
    "aerosol_turbidity_500nm": 0.1,
    "ozone_atm_cm": 0.31,
    # common practice, no source: a grass/soil ground
    "albedo": 0.2,
    # used only when neither precipitable water nor humidity is given
    "precipitable_water_cm": 1.42,
    # Angstrom exponent of spectrl2's rural aerosol (pvlib's default alpha)
    "angstrom_alpha": 1.14,
    # wavelength at which a broadband AOD equals the spectral AOD (Molineaux 1998)
    "broadband_aod_wavelength_nm": 700.0,
}


def trapezoid_W_m2(wavelength_nm: np.ndarray, irradiance_W_m2_nm: np.ndarray) -> np.ndarray:
    """Broadband integral by the trapezoid rule over wavelength [W m^-2], last axis.

    The rule of :class:`gapmatch.core.spectra.TabulatedSpectrum`, so scaled spectra
    integrate to their targets in the engine's own arithmetic.
    """
    dl = np.diff(wavelength_nm)
    y = irradiance_W_m2_nm
    return np.sum(0.5 * dl * (y[..., 1:] + y[..., :-1]), axis=-1)


@dataclass(frozen=True, eq=False)
class HourlySpectra:
    """In-plane spectra of the daylight intervals of a site.

    Attributes
    ----------
    times : pandas.DatetimeIndex
        Interval centres, ``(H,)``.
    wavelength_nm : numpy.ndarray
        Shared wavelength grid [nm], ``(L,)``.
    poa_W_m2_nm : numpy.ndarray
        In-plane spectral irradiance [W m^-2 nm^-1], ``(H, L)``.
    interval_h : float
        Length of each interval [h].
    weights : numpy.ndarray
        How many intervals each row stands for, ``(H,)`` (1 for a full year; cluster
        sizes for representative spectra).
    broadband : dict of numpy.ndarray
        Per-row broadband components [W m^-2]: ``poa_direct``, ``poa_sky_diffuse``,
        ``poa_ground_diffuse``, ``poa_global`` (pvlib's transposition of the measured
        data), plus ``ghi``, ``dni``, ``dhi``.
    temp_air_C, wind_speed_m_s : numpy.ndarray
        Weather of the same rows (for the cell temperature).
    assumptions : dict
        Every default and fallback used, with counts.
    """

    times: pd.DatetimeIndex
    wavelength_nm: np.ndarray
    poa_W_m2_nm: np.ndarray
    interval_h: float
    weights: np.ndarray
    broadband: dict
    temp_air_C: np.ndarray
    wind_speed_m_s: np.ndarray
    assumptions: dict = field(default_factory=dict)

    @property
    def hours(self) -> int:
        """Number of rows ``H``."""
        return self.poa_W_m2_nm.shape[0]

    @property
    def poa_W_m2(self) -> np.ndarray:
        """Broadband integral of each row's in-plane spectrum [W m^-2]."""
        return trapezoid_W_m2(self.wavelength_nm, self.poa_W_m2_nm)

    def photon_table(self) -> PhotonTable:
        """The (hours x energies) cumulative photon table of these spectra (built once
        and kept, so a copy sent to a cluster worker carries it)."""
        t = self.__dict__.get("_photon_table")
        if t is None:
            t = PhotonTable(self.wavelength_nm, self.poa_W_m2_nm)
            object.__setattr__(self, "_photon_table", t)
        return t

    def take(self, rows) -> HourlySpectra:
        """A subset of rows."""
        return HourlySpectra(
            self.times[rows],
            self.wavelength_nm,
            self.poa_W_m2_nm[rows],
            self.interval_h,
            self.weights[rows],
            {k: v[rows] for k, v in self.broadband.items()},
            self.temp_air_C[rows],
            self.wind_speed_m_s[rows],
            dict(self.assumptions),
        )

    @classmethod
    def constant(
        cls,
        wavelength_nm: np.ndarray,
        irradiance_W_m2_nm: np.ndarray,
        times: pd.DatetimeIndex,
        *,
        temp_air_C: float = 25.0,
        wind_speed_m_s: float = 1.0,
        interval_h: float = 1.0,
    ) -> HourlySpectra:
        """The same spectrum in every interval (a check of the engine's bookkeeping).

        Parameters
        ----------
        wavelength_nm : numpy.ndarray
            Wavelengths [nm], ``(L,)``.
        irradiance_W_m2_nm : numpy.ndarray
            Spectral irradiance [W m^-2 nm^-1], ``(L,)``.
        times : pandas.DatetimeIndex
            Interval centres (time zone-aware).
        temp_air_C, wind_speed_m_s : float
            Air temperature [deg C] and wind speed [m s^-1] of every interval.
        interval_h : float
            Interval length [h].
        """
        wl = np.asarray(wavelength_nm, float)
        irr = np.asarray(irradiance_W_m2_nm, float)
        h = len(times)
        poa = np.broadcast_to(irr, (h, wl.size)).copy()
        total = np.full(h, float(trapezoid_W_m2(wl, irr)))
        zero = np.zeros(h)
        return cls(
            pd.DatetimeIndex(times),
            wl,
            poa,
            float(interval_h),
            np.ones(h),
            {
                "poa_direct": zero,
                "poa_sky_diffuse": total,
                "poa_ground_diffuse": zero,
                "poa_global": total,
                "ghi": total,
                "dni": zero,
                "dhi": total,
            },
            np.full(h, float(temp_air_C)),
            np.full(h, float(wind_speed_m_s)),
            {"spectra": "one fixed spectrum in every interval"},
        )


def clear_sky_spectra(
    apparent_zenith_deg,
    dayofyear,
    pressure_Pa,
    precipitable_water_cm,
    ozone_atm_cm,
    aerosol_turbidity_500nm,
    albedo,
    *,
    aoi_deg=None,
    surface_tilt_deg=0.0,
    angstrom_alpha: float = 1.14,
) -> dict[str, np.ndarray]:
    """Clear-sky spectra from pvlib's spectrl2, rows = intervals.

    Parameters
    ----------
    apparent_zenith_deg : array_like
        Refraction-corrected solar zenith [deg], ``(H,)``, below 90.
    dayofyear : array_like
        Day of year (1-366), ``(H,)``.
    pressure_Pa : array_like
        Surface pressure [Pa].
    precipitable_water_cm : array_like
        Precipitable water [cm].
    ozone_atm_cm : array_like
        Ozone column [atm-cm].
    aerosol_turbidity_500nm : array_like
        Aerosol optical depth at 500 nm (dimensionless).
    albedo : array_like
        Ground albedo in [0, 1].
    aoi_deg : array_like, optional
        Angle of incidence on a tilted plane [deg] (default: the zenith, horizontal).
    surface_tilt_deg : array_like
        Plane tilt [deg] for spectrl2's own in-plane outputs.
    angstrom_alpha : float
        Angstrom exponent of the aerosol.

    Returns
    -------
    dict of numpy.ndarray
        ``wavelength_nm`` ``(L,)`` and, each ``(H, L)`` in W m^-2 nm^-1: ``dni``,
        ``dhi``, ``ghi`` (= dni cos z + dhi), ``poa_global``, ``poa_direct``,
        ``poa_sky_diffuse``, ``poa_ground_diffuse``.

    References
    ----------
    .. [1] Bird and Riordan (1984), NREL TR-215-2436, via ``pvlib.spectrum.spectrl2``.
    """
    import pvlib

    z = np.atleast_1d(np.asarray(apparent_zenith_deg, float))
    aoi = z if aoi_deg is None else np.atleast_1d(np.asarray(aoi_deg, float))
    am = pvlib.atmosphere.get_relative_airmass(z, model="kastenyoung1989")
    out = pvlib.spectrum.spectrl2(
        apparent_zenith=z,
        aoi=aoi,
        surface_tilt=np.asarray(surface_tilt_deg, float),
        ground_albedo=np.asarray(albedo, float),
        surface_pressure=np.asarray(pressure_Pa, float),
        relative_airmass=am,
        precipitable_water=np.asarray(precipitable_water_cm, float),
        ozone=np.asarray(ozone_atm_cm, float),
        aerosol_turbidity_500nm=np.asarray(aerosol_turbidity_500nm, float),
        dayofyear=np.atleast_1d(dayofyear),
        alpha=angstrom_alpha,
    )
    res = {"wavelength_nm": np.asarray(out["wavelength"], float)}
    for k in ("dni", "dhi", "poa_global", "poa_direct", "poa_sky_diffuse", "poa_ground_diffuse"):
        res[k] = np.nan_to_num(np.asarray(out[k], float).T.reshape(z.size, -1), nan=0.0)
    res["ghi"] = res["dni"] * np.cos(np.radians(z))[:, None] + res["dhi"]
    return res


def _atmosphere(weather: Weather, rows: np.ndarray, alpha: float) -> tuple[dict, dict]:
    """Per-row pressure, water, turbidity, ozone and albedo, with the fallbacks used."""
    import pvlib

    d = SPECTRAL_DEFAULTS
    used: dict = {}
    n = rows.size

    def count(key, mask, what):
        k = int(np.count_nonzero(mask))
        if k:
            used[key] = {"value": what, "hours": k}

    p = weather["pressure_Pa"][rows]
    miss = ~np.isfinite(p)
    p_alt = float(pvlib.atmosphere.alt2pres(weather.location.altitude_m))
    count("pressure_Pa", miss, f"{p_alt:.0f} Pa from altitude (pvlib.atmosphere.alt2pres)")
    p = np.where(miss, p_alt, p)

    pw = weather["precipitable_water_cm"][rows].copy()
    miss = ~np.isfinite(pw)
    rh = weather["relative_humidity_pct"][rows]
    ok_rh = miss & np.isfinite(rh) & (rh > 0)
    if ok_rh.any():
        pw[ok_rh] = pvlib.atmosphere.gueymard94_pw(weather["temp_air_C"][rows][ok_rh], rh[ok_rh])
    count(
        "precipitable_water_cm",
        ok_rh,
        "from air temperature and humidity (pvlib.atmosphere.gueymard94_pw)",
    )
    still = ~np.isfinite(pw)
    count("precipitable_water_cm_default", still, d["precipitable_water_cm"])
    pw = np.where(still, d["precipitable_water_cm"], pw)
    pw = np.maximum(pw, 0.1)  # spectrl2's water term needs a positive column

    aod = weather["aod_broadband"][rows]
    miss = ~np.isfinite(aod)
    # broadband AOD ~ spectral AOD near 700 nm; Angstrom law to 500 nm
    tau = aod * (500.0 / d["broadband_aod_wavelength_nm"]) ** (-alpha)
    count(
        "aerosol_turbidity_500nm",
        miss,
        f"{d['aerosol_turbidity_500nm']} (stated default: the file has no AOD)",
    )
    count(
        "aerosol_turbidity_500nm_from_broadband",
        ~miss,
        f"broadband AOD taken at {d['broadband_aod_wavelength_nm']:g} nm, Angstrom alpha "
        f"{alpha:g} to 500 nm",
    )
    tau = np.where(miss, d["aerosol_turbidity_500nm"], tau)
    used["ozone_atm_cm"] = {"value": f"{d['ozone_atm_cm']} (stated default)", "hours": n}
    return {"pressure_Pa": p, "precipitable_water_cm": pw, "tau500": tau}, used


def hourly_spectra(
    weather: Weather,
    mounting: Mounting | None = None,
    *,
    albedo: float | None = None,
    transposition: str = "haydavies",
    ozone_atm_cm: float | None = None,
    aerosol_turbidity_500nm: float | None = None,
) -> HourlySpectra:
    """In-plane spectra of every daylight interval, scaled to the measured irradiance.

    Parameters
    ----------
    weather : Weather
        Site weather.
    mounting : Mounting, optional
        Collector plane (default: fixed, 30 deg, facing south).
    albedo : float, optional
        Ground albedo in [0, 1]; default: the file's where it has one, else 0.2.
    transposition : {"haydavies", "perez", "isotropic"}
        Sky-diffuse transposition model (pvlib).
    ozone_atm_cm : float, optional
        Ozone column [atm-cm], in (0, 1] (default 0.31).
    aerosol_turbidity_500nm : float, optional
        Aerosol optical depth at 500 nm for every hour, in [0, 5]; overrides the file.

    Returns
    -------
    HourlySpectra
        See the module notes for the method; ``assumptions`` lists every default.
    """
    import pvlib

    mounting = mounting or Mounting()
    if transposition not in TRANSPOSITION_MODELS:
        raise InputError(
            "transposition", f"must be one of {', '.join(TRANSPOSITION_MODELS)}", transposition
        )
    if albedo is not None:
        check_range("albedo", albedo, 0.0, 1.0)
    if ozone_atm_cm is not None:
        check_range("ozone_atm_cm", ozone_atm_cm, 0.0, 1.0, low_inclusive=False, unit="atm-cm")
    if aerosol_turbidity_500nm is not None:
        check_range("aerosol_turbidity_500nm", aerosol_turbidity_500nm, 0.0, 5.0)
    geo = sun_and_plane(weather, mounting)
    ghi_all = weather["ghi_W_m2"]
    day = (geo["apparent_zenith_deg"] < 90.0) & (ghi_all > 0)
    rows = np.flatnonzero(day)
    if rows.size == 0:
        raise InputError("weather", "no daylight interval with positive GHI")
    d = SPECTRAL_DEFAULTS
    alpha = d["angstrom_alpha"]
    atm, used = _atmosphere(weather, rows, alpha)
    if aerosol_turbidity_500nm is not None:
        atm["tau500"] = np.full(rows.size, float(aerosol_turbidity_500nm))
        used["aerosol_turbidity_500nm"] = {"value": aerosol_turbidity_500nm, "hours": rows.size}
        used.pop("aerosol_turbidity_500nm_from_broadband", None)
    ozone = d["ozone_atm_cm"] if ozone_atm_cm is None else float(ozone_atm_cm)
    if ozone_atm_cm is not None:
        used["ozone_atm_cm"] = {"value": ozone, "hours": rows.size}
    alb_file = weather["albedo"][rows]
    if albedo is not None:
        alb = np.full(rows.size, float(albedo))
        used["albedo"] = {"value": float(albedo), "hours": rows.size}
    else:
        miss = ~np.isfinite(alb_file)
        alb = np.where(miss, d["albedo"], alb_file)
        if miss.any():
            used["albedo"] = {
                "value": f"{d['albedo']} (stated default: the file has none)",
                "hours": int(miss.sum()),
            }
    g = {k: v[rows] for k, v in geo.items()}
    ghi = ghi_all[rows]
    dni = weather["dni_W_m2"][rows]
    dhi = weather["dhi_W_m2"][rows]
    times = weather.times[rows]
    cs = clear_sky_spectra(
        g["apparent_zenith_deg"],
        times.day_of_year.to_numpy(),
        atm["pressure_Pa"],
        atm["precipitable_water_cm"],
        ozone,
        atm["tau500"],
        alb,
        angstrom_alpha=alpha,
    )
    wl = cs["wavelength_nm"]
    integ = lambda a: trapezoid_W_m2(wl, a)  # noqa: E731
    dni_cs, dhi_cs, ghi_cs = integ(cs["dni"]), integ(cs["dhi"]), integ(cs["ghi"])

    def shape(spec, total):
        ok = total > 0
        out = np.zeros_like(spec)
        out[ok] = spec[ok] / total[ok, None]
        return out, ok

    s_dir, ok_dir = shape(cs["dni"], dni_cs)
    s_dhi, _ = shape(cs["dhi"], dhi_cs)
    s_ghi, _ = shape(cs["ghi"], ghi_cs)
    # a beam the clear-sky model has (almost) none of: fall back to the global shape
    no_dir = ~ok_dir | (dni_cs < 1e-6)
    s_dir[no_dir] = s_ghi[no_dir]
    with np.errstate(divide="ignore", invalid="ignore"):
        w = np.clip(1.0 - np.where(dni_cs > 1e-6, dni / dni_cs, 0.0), 0.0, 1.0)
    s_dif = (1.0 - w)[:, None] * s_dhi + w[:, None] * s_ghi
    # transposition of the measured components (pvlib), by parts
    tilt, saz = g["surface_tilt_deg"], g["surface_azimuth_deg"]
    zen, azi = g["apparent_zenith_deg"], g["solar_azimuth_deg"]
    am = pvlib.atmosphere.get_relative_airmass(zen, model="kastenyoung1989")
    beam = np.asarray(pvlib.irradiance.beam_component(tilt, saz, zen, azi, dni), float)
    if transposition == "haydavies":
        comp = pvlib.irradiance.haydavies(
            tilt, saz, dhi, dni, g["dni_extra_W_m2"], zen, azi, return_components=True
        )
    elif transposition == "perez":
        comp = pvlib.irradiance.perez(
            tilt, saz, dhi, dni, g["dni_extra_W_m2"], zen, azi, am, return_components=True
        )
    else:
        iso = np.asarray(pvlib.irradiance.isotropic(tilt, dhi), float)
        comp = {"poa_sky_diffuse": iso, "poa_isotropic": iso, "poa_circumsolar": 0 * iso}
    arr = lambda k: np.nan_to_num(np.asarray(comp.get(k, 0.0 * dhi), float))  # noqa: E731
    sky_iso, sky_cs, sky_hz = arr("poa_isotropic"), arr("poa_circumsolar"), arr("poa_horizon")
    ground = np.asarray(pvlib.irradiance.get_ground_diffuse(tilt, ghi, albedo=alb), float)
    ghi_shape_meas = dni[:, None] * np.cos(np.radians(zen))[:, None] * s_dir + dhi[:, None] * s_dif
    s_gnd, ok_g = shape(ghi_shape_meas, integ(ghi_shape_meas))
    s_gnd[~ok_g] = s_ghi[~ok_g]
    poa = (
        (beam + sky_cs)[:, None] * s_dir
        + (sky_iso + sky_hz)[:, None] * s_dif
        + ground[:, None] * s_gnd
    )
    sky = sky_iso + sky_cs + sky_hz
    excluded = (~day) & (ghi_all > 0)
    dt = weather.interval_h
    assumptions = {
        "spectral_model": "pvlib.spectrum.spectrl2 (Bird & Riordan 1984), clear-sky shapes",
        "scaling": "direct shape to measured DNI; diffuse shape mixes clear-sky diffuse "
        "and clear-sky global shapes by w = 1 - DNI/DNI_clear (our parametrisation after "
        "Ernst et al. 2016, see gapmatch.energy.spectra)",
        "transposition": transposition,
        "mounting": mounting.describe(),
        "wavelength_range_nm": [float(wl[0]), float(wl[-1])],
        "spectral_albedo": "flat",
        "daylight_hours": int(rows.size),
        "excluded_hours_sun_below_horizon": int(excluded.sum()),
        "excluded_ghi_kWh_m2": float(ghi_all[excluded].sum() * dt / 1000.0),
        "clear_sky_beam_fallback_hours": int(no_dir.sum()),
        "defaults": used,
        **weather.notes,
    }
    return HourlySpectra(
        times,
        wl,
        poa,
        float(dt),
        np.ones(rows.size),
        {
            "poa_direct": beam,
            "poa_sky_diffuse": sky,
            "poa_ground_diffuse": ground,
            "poa_global": beam + sky + ground,
            "ghi": ghi,
            "dni": dni,
            "dhi": dhi,
            "cloud_weight": w,
            "surface_tilt_deg": tilt,
            "surface_azimuth_deg": saz,
            "apparent_zenith_deg": zen,
            "solar_azimuth_deg": azi,
        },
        weather["temp_air_C"][rows],
        weather["wind_speed_m_s"][rows],
        assumptions,
    )
