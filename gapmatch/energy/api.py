"""Python entry points of energy yield: weather file in, :class:`YieldResult` out.

:func:`annual_yield` is the one-call front (what ``gapmatch yield`` runs);
:func:`site_spectra` and :func:`yield_from_spectra` are its two steps, for users who
reuse one site's spectra for many stacks (maps, searches).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ..api import check_gaps
from ..core.connections import CONNECTIONS
from ..core.diodes import DARK_MODELS
from ..core.engine import solve_stacks
from ..core.temperature import GapTemperature
from ..errors import InputError, check_finite_array, check_range
from ..io.spectra import standard_spectrum
from ..units import EV
from .celltemp import CellTemperature
from .engine import run_yield
from .geometry import Mounting
from .readers import read_weather
from .result import YieldResult
from .spectra import HourlySpectra, hourly_spectra
from .weather import Weather

__all__ = [
    "REFERENCE_TEMPERATURE_K",
    "site_spectra",
    "yield_from_spectra",
    "annual_yield",
    "gap_temperature_model",
]

#: standard test conditions cell temperature (25 deg C) [K]
REFERENCE_TEMPERATURE_K = 298.15


def gap_temperature_model(
    n: int,
    *,
    varshni=None,
    dEg_dT_eV_K=None,
    gap_reference_K: float = 300.0,  # noqa: N803
) -> GapTemperature | None:
    """Temperature model of the gaps, as :func:`gapmatch.evaluate` takes it.

    Parameters
    ----------
    n : int
        Junctions per stack.
    varshni : sequence, optional
        ``(alpha [eV K^-1], beta [K])``, one pair or one per junction.
    dEg_dT_eV_K : float or sequence, optional
        Linear coefficient [eV K^-1], in [-0.01, 0.01], one or per junction.
    gap_reference_K : float
        Temperature [K] at which the given gaps hold, in [0, 1000].

    Returns
    -------
    GapTemperature or None
        ``None`` when neither is given (gaps do not move).

    References
    ----------
    .. [1] Y. P. Varshni, Physica 34, 149 (1967).
    """
    if varshni is not None and dEg_dT_eV_K is not None:
        raise InputError("varshni", "give either varshni or dEg_dT_eV_K, not both")
    check_range("gap_reference_K", gap_reference_K, 0.0, 1000.0, unit="K")
    nan = np.full(n, np.nan)
    if varshni is not None:
        v = np.asarray(varshni, dtype=float)
        if v.shape not in ((2,), (n, 2)):
            raise InputError("varshni", f"needs one (alpha, beta) pair or {n}", v.tolist())
        v = np.broadcast_to(v, (n, 2))
        check_finite_array("varshni alpha", v[:, 0], 0.0, 0.01, unit="eV K^-1")
        check_finite_array("varshni beta", v[:, 1], 1e-9, 5000.0, unit="K")
        return GapTemperature(v[:, 0] * EV, v[:, 1].copy(), nan, float(gap_reference_K))
    if dEg_dT_eV_K is not None:
        s = np.broadcast_to(np.asarray(dEg_dT_eV_K, float), (n,))
        check_finite_array("dEg_dT_eV_K", s, -0.01, 0.01, unit="eV K^-1")
        return GapTemperature(nan, nan, s * EV, float(gap_reference_K))
    return None


def site_spectra(
    weather: Weather | str | Path,
    *,
    tilt_deg: float = 30.0,
    azimuth_deg: float = 180.0,
    tracking: str = "fixed",
    albedo: float | None = None,
    transposition: str = "haydavies",
    latitude: float | None = None,
    longitude: float | None = None,
    altitude_m: float | None = None,
    weather_format: str | None = None,
    aerosol_turbidity_500nm: float | None = None,
    ozone_atm_cm: float | None = None,
) -> HourlySpectra:
    """In-plane hourly spectra of a site (weather file or :class:`Weather`).

    Parameters
    ----------
    weather : Weather or path
        Weather, or a TMY3 / EPW / plain CSV file (see :mod:`gapmatch.energy.readers`).
    tilt_deg, azimuth_deg : float
        Fixed plane tilt [deg, 0-90] and azimuth [deg, 0-360, 180 = south]; for
        ``tracking="single-axis"`` the azimuth is the tracker axis's.
    tracking : {"fixed", "single-axis"}
        Mounting.
    albedo : float, optional
        Ground albedo in [0, 1] (default: file, else 0.2).
    transposition : {"haydavies", "perez", "isotropic"}
        Sky-diffuse model.
    latitude, longitude, altitude_m : float, optional
        Override the file's location [deg, deg, m].
    weather_format : {"tmy3", "epw", "csv"}, optional
        Force a reader.
    aerosol_turbidity_500nm, ozone_atm_cm : float, optional
        Override the stated atmosphere defaults.

    Returns
    -------
    HourlySpectra
    """
    if not isinstance(weather, Weather):
        weather = read_weather(
            weather, weather_format, latitude=latitude, longitude=longitude, altitude_m=altitude_m
        )
    elif latitude is not None or longitude is not None or altitude_m is not None:
        from .weather import Location

        loc = weather.location
        weather = weather.with_location(
            Location(
                loc.latitude_deg if latitude is None else latitude,
                loc.longitude_deg if longitude is None else longitude,
                loc.altitude_m if altitude_m is None else altitude_m,
                loc.name,
            )
        )
    if tracking == "single-axis":
        m = Mounting(tracking="single-axis", axis_azimuth_deg=azimuth_deg)
    else:
        m = Mounting(tilt_deg, azimuth_deg, tracking)
    hs = hourly_spectra(
        weather,
        m,
        albedo=albedo,
        transposition=transposition,
        aerosol_turbidity_500nm=aerosol_turbidity_500nm,
        ozone_atm_cm=ozone_atm_cm,
    )
    loc = weather.location
    hs.assumptions["site"] = {
        "name": loc.name,
        "latitude_deg": loc.latitude_deg,
        "longitude_deg": loc.longitude_deg,
        "altitude_m": loc.altitude_m,
        "weather": weather.source,
    }
    return hs


def _connections(connection) -> tuple[str, ...]:
    wanted = [connection] if isinstance(connection, str) else list(connection)
    for c in wanted:
        if c not in CONNECTIONS:
            raise InputError("connection", f"must be one of {', '.join(CONNECTIONS)}", c)
    out = list(dict.fromkeys(wanted))
    for c in ("series", "independent"):  # the mismatch loss needs both
        if c not in out:
            out.append(c)
    return tuple(out)


def yield_from_spectra(
    spectra: HourlySpectra,
    gaps_eV,
    connection: str | tuple[str, ...] = "series",
    *,
    cell_temperature: CellTemperature | None = None,
    varshni=None,
    dEg_dT_eV_K=None,  # noqa: N803
    gap_reference_K: float = 300.0,  # noqa: N803
    ere: float = 1.0,
    dark_current: str = "boltzmann",
    keep_hourly: bool = False,
    chunk_rows: int = 1 << 19,
    progress: bool = False,
) -> YieldResult:
    """Energy yield of stacks under given hourly spectra.

    Parameters
    ----------
    spectra : HourlySpectra
        In-plane spectra (e.g. from :func:`site_spectra`).
    gaps_eV : array_like
        One stack (top first) or a batch ``(M, N)`` [eV], 0.1-5.0, decreasing.
    connection : str or tuple of str
        Connection(s) reported first; series and independent are always solved (the
        mismatch loss needs both).
    cell_temperature : CellTemperature, optional
        Default: SAPM, open rack glass/glass.
    varshni, dEg_dT_eV_K, gap_reference_K
        Gap temperature model (see :func:`gap_temperature_model`).
    ere : float
        External radiative efficiency in (0, 1].
    dark_current : {"boltzmann", "bose-einstein"}
        Radiative dark-current form.
    keep_hourly : bool
        Keep every interval's power (``result.arrays.hourly_power_W_m2``).
    chunk_rows : int
        Rows per block of the engine (memory knob).
    progress : bool
        Show progress.

    Returns
    -------
    YieldResult
    """
    g = check_gaps(gaps_eV)
    n = g.shape[1]
    check_range("ere", ere, 0.0, 1.0, low_inclusive=False)
    if dark_current not in DARK_MODELS:
        raise InputError("dark_current", f"must be one of {', '.join(DARK_MODELS)}", dark_current)
    conns = _connections(connection)
    ct = cell_temperature or CellTemperature()
    gt = gap_temperature_model(
        n, varshni=varshni, dEg_dT_eV_K=dEg_dT_eV_K, gap_reference_K=gap_reference_K
    )
    table = spectra.photon_table()
    poa = table.irradiance_W_m2
    tc = ct.cell_temperature_K(poa, spectra.temp_air_C, spectra.wind_speed_m_s)
    times = spectra.times
    bins = 24 * (times.month.to_numpy() - 1) + times.hour.to_numpy()
    weights = spectra.weights * spectra.interval_h
    arrays = run_yield(
        table,
        weights,
        tc,
        bins,
        g * EV,
        conns,
        gap_temperature=gt,
        ere=ere,
        dark_model=dark_current,
        keep_hourly=keep_hourly,
        chunk_rows=chunk_rows,
        progress=progress,
    )
    ref = {}
    am15 = standard_spectrum("AM1.5G")
    g_ref = g * EV
    if gt is not None:
        g_ref = gt.gaps_at(g_ref, REFERENCE_TEMPERATURE_K)
    for c in conns:
        sol = solve_stacks(
            g_ref,
            am15,
            c,
            temperature_K=REFERENCE_TEMPERATURE_K,
            ere=ere,
            dark_model=dark_current,
        )
        ref[c] = sol.op.p_mpp / sol.incident_W_m2
    assumptions = dict(spectra.assumptions)
    site = assumptions.pop("site", {})
    assumptions.update(
        {
            "cell_temperature": ct.describe(),
            "cell_temperature_range_K": [float(tc.min()), float(tc.max())],
            "gap_temperature": "none (gaps fixed)"
            if gt is None
            else ("Varshni" if varshni is not None else "linear")
            + f", gaps given at {gap_reference_K:g} K",
            "ere": ere,
            "dark_current": dark_current,
            "absorption": "step absorbers (every photon above the gap absorbed)",
            "reference": "ASTM G173-03 AM1.5G at 25 deg C (pvlib's table)",
        }
    )
    site = {**site, "mounting": assumptions.get("mounting", ""), "hours": spectra.hours}
    return YieldResult(g, conns, arrays, ref, spectra.hours, site, assumptions)


def annual_yield(
    weather: Weather | str | Path,
    gaps_eV,
    connection: str | tuple[str, ...] = "series",
    *,
    tilt_deg: float = 30.0,
    azimuth_deg: float = 180.0,
    tracking: str = "fixed",
    albedo: float | None = None,
    transposition: str = "haydavies",
    temperature_model: str = "sapm",
    mounting: str = "open_rack_glass_glass",
    fixed_temperature_K: float = REFERENCE_TEMPERATURE_K,  # noqa: N803
    latitude: float | None = None,
    longitude: float | None = None,
    altitude_m: float | None = None,
    weather_format: str | None = None,
    **kwargs,
) -> YieldResult:
    """Annual energy of stacks at a site, from a weather file in one call.

    Parameters
    ----------
    weather : Weather or path
        TMY3, EPW or plain CSV weather (see :mod:`gapmatch.energy.readers`).
    gaps_eV : array_like
        One stack or ``(M, N)`` [eV], top first.
    connection : str or tuple of str
        ``"series"``, ``"independent"`` or ``"voltage-matched"``.
    tilt_deg, azimuth_deg, tracking, albedo, transposition
        Plane and sky model (see :func:`site_spectra`).
    temperature_model : {"sapm", "faiman", "fixed"}
        Cell temperature model (pvlib).
    mounting : str
        SAPM preset, e.g. ``"open_rack_glass_glass"``.
    fixed_temperature_K : float
        Cell temperature [K] of the ``fixed`` model, 200-400.
    latitude, longitude, altitude_m, weather_format
        Location override [deg, deg, m] and reader choice.
    **kwargs
        Passed to :func:`yield_from_spectra` (``varshni``, ``ere``, ...).

    Returns
    -------
    YieldResult

    Examples
    --------
    >>> from gapmatch.energy import annual_yield, demo_weather_path
    >>> r = annual_yield(demo_weather_path(), [1.73, 1.12], "series", tilt_deg=36)
    >>> round(float(r.energy_efficiency("series")[0]), 2)  # doctest: +SKIP
    0.4
    """
    hs = site_spectra(
        weather,
        tilt_deg=tilt_deg,
        azimuth_deg=azimuth_deg,
        tracking=tracking,
        albedo=albedo,
        transposition=transposition,
        latitude=latitude,
        longitude=longitude,
        altitude_m=altitude_m,
        weather_format=weather_format,
    )
    ct = CellTemperature(temperature_model, mounting, fixed_K=fixed_temperature_K)
    return yield_from_spectra(hs, gaps_eV, connection, cell_temperature=ct, **kwargs)
