"""Weather files in: TMY3, TMY2 and EPW through pvlib's readers, and a plain documented CSV.

Every reader returns a validated :class:`gapmatch.energy.weather.Weather` whose times
are the *centres* of the intervals: TMY3 and EPW label each hour by its end (the row
stamped 13:00 holds the irradiation of 12:00-13:00), so the sun's position for that row
is taken at 12:30. The plain CSV states its labelling with ``label``.

Plain CSV format (one header row, comma separated, ``#`` comment lines skipped):

=========================  ===========  =====================================
column                     unit         notes
=========================  ===========  =====================================
``timestamp``              ISO 8601     with a UTC offset, or give ``tz``
``ghi_W_m2``               W m^-2       global horizontal irradiance
``dni_W_m2``               W m^-2       direct normal irradiance
``dhi_W_m2``               W m^-2       diffuse horizontal irradiance
``temp_air_C``             deg C        air temperature
``wind_speed_m_s``         m s^-1       wind speed (at 10 m by convention)
``pressure_Pa``            Pa           optional (default from altitude)
``relative_humidity_pct``  %            optional
``precipitable_water_cm``  cm           optional
``aod_broadband``          1            optional broadband aerosol optical depth
``albedo``                 1            optional ground albedo
=========================  ===========  =====================================

Measured in-plane spectra (no spectral model) come as a *wide* CSV read by
:func:`read_spectra_csv`: a ``timestamp`` column, then one column per wavelength whose
header is the wavelength in nm (e.g. ``350``, ``352.5``; strictly increasing) holding the
in-plane spectral irradiance [W m^-2 nm^-1], and optionally ``temp_air_C`` and
``wind_speed_m_s`` for the cell temperature (default 25 deg C and 1 m s^-1, recorded).

References
----------
.. [1] S. Wilcox and W. Marion, "Users Manual for TMY3 Data Sets", NREL/TP-581-43156
   (2008) (end-of-hour labels; the sample files shipped with pvlib are NREL's open data).
.. [2] EnergyPlus Auxiliary Programs, "Weather Converter Program" (EPW field
   definitions), as mapped by :func:`pvlib.iotools.read_epw`.
.. [3] European Commission JRC, PVGIS typical meteorological year tool (JSON and CSV
   outputs), as parsed by :func:`pvlib.iotools.read_pvgis_tmy`.
"""

from __future__ import annotations

import warnings
from pathlib import Path

import numpy as np
import pandas as pd

from ..errors import InputError
from .choices import WEATHER_FORMATS
from .weather import WEATHER_RANGES, Location, Weather

__all__ = [
    "WEATHER_FORMATS",
    "read_weather",
    "read_tmy3",
    "read_tmy2",
    "read_epw",
    "read_pvgis_tmy",
    "read_weather_csv",
    "read_spectra_csv",
    "demo_weather_path",
]


_CSV_REQUIRED = ("ghi_W_m2", "dni_W_m2", "dhi_W_m2", "temp_air_C", "wind_speed_m_s")
#: the year every typical-year file is re-stamped to (a non-leap year), so that the
#: months taken from different years form one continuous year
TYPICAL_YEAR = 1990


def demo_weather_path() -> Path:
    """The demo weather file: the Greensboro, NC TMY3 sample that pvlib ships.

    It is open data from NREL's National Solar Radiation Data Base (TMY3, 1991-2005
    typical year), redistributed with pvlib under its licence; gapmatch uses it as a
    worked example only.

    Returns
    -------
    pathlib.Path
        ``pvlib/data/723170TYA.CSV``.
    """
    import pvlib

    return Path(pvlib.__file__).parent / "data" / "723170TYA.CSV"


def _location(meta_lat, meta_lon, meta_alt, name, latitude, longitude, altitude_m):
    lat = meta_lat if latitude is None else latitude
    lon = meta_lon if longitude is None else longitude
    alt = meta_alt if altitude_m is None else altitude_m
    if lat is None or lon is None:
        raise InputError("location", "latitude and longitude are needed (the file has none)")
    return Location(float(lat), float(lon), float(0.0 if alt is None else alt), name)


def _positive_or_nan(a, missing_at_or_above=None):
    a = np.asarray(a, dtype=float).copy()
    a[~(a > 0)] = np.nan
    if missing_at_or_above is not None:
        a[a >= missing_at_or_above] = np.nan
    return a


def read_tmy3(
    path: str | Path,
    *,
    latitude: float | None = None,
    longitude: float | None = None,
    altitude_m: float | None = None,
) -> Weather:
    """Read a TMY3 file (NREL's typical meteorological year, version 3).

    Parameters
    ----------
    path : str or pathlib.Path
        The TMY3 CSV file.
    latitude, longitude : float, optional
        Override the file's location [deg] (north, east positive).
    altitude_m : float, optional
        Override the file's altitude [m].

    Returns
    -------
    Weather
        Times at the interval centres (label - 30 min), re-stamped to one year.
        Zero AOD or albedo (the file's code for "not measured") become NaN.
    """
    import pvlib

    p = Path(path)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            df, meta = pvlib.iotools.read_tmy3(str(p), coerce_year=TYPICAL_YEAR)
    except FileNotFoundError:
        raise InputError("weather", "file not found", str(p)) from None
    except Exception as exc:  # pvlib raises plain errors for malformed files
        raise InputError("weather", f"not a readable TMY3 file ({exc})", str(p)) from None
    df = df.sort_index()
    name = str(meta.get("Name", "")).strip('"').strip()
    loc = _location(
        meta.get("latitude"),
        meta.get("longitude"),
        meta.get("altitude"),
        name,
        latitude,
        longitude,
        altitude_m,
    )
    aod = df["AOD (unitless)"] if "AOD (unitless)" in df else np.full(len(df), np.nan)
    data = {
        "ghi_W_m2": df["ghi"].to_numpy(float),
        "dni_W_m2": df["dni"].to_numpy(float),
        "dhi_W_m2": df["dhi"].to_numpy(float),
        "temp_air_C": df["temp_air"].to_numpy(float),
        "wind_speed_m_s": df["wind_speed"].to_numpy(float),
        "pressure_Pa": df["pressure"].to_numpy(float) * 100.0,  # file: mbar
        "relative_humidity_pct": df["relative_humidity"].to_numpy(float),
        "precipitable_water_cm": df["precipitable_water"].to_numpy(float),
        "aod_broadband": _positive_or_nan(aod),
        "albedo": _positive_or_nan(df["albedo"]) if "albedo" in df else np.full(len(df), np.nan),
    }
    notes = {
        "weather_format": "TMY3 (pvlib.iotools.read_tmy3)",
        "time_labels": "end of hour; sun position at the middle of each hour",
        "typical_year": f"months re-stamped to {TYPICAL_YEAR}",
    }
    return Weather(df.index - pd.Timedelta(minutes=30), loc, data, 1.0, f"TMY3 file {p}", notes)


def read_tmy2(
    path: str | Path,
    *,
    latitude: float | None = None,
    longitude: float | None = None,
    altitude_m: float | None = None,
) -> Weather:
    """Read a TMY2 file (NREL's typical meteorological year, version 2).

    Parameters
    ----------
    path : str or pathlib.Path
        The TMY2 file (fixed-width text, ``.tm2``).
    latitude, longitude, altitude_m : float, optional
        Override the file's location [deg, deg, m].

    Returns
    -------
    Weather
        Times at the interval centres (TMY2 hour h covers (h-1, h]; pvlib stamps the
        row with its start, so the centre is that + 30 min), re-stamped to one year.
        The file's tenths of deg C and of m s^-1, mm of water and thousandths of AOD
        are converted to the units of the names.

    References
    ----------
    .. [1] W. Marion and K. Urban, "User's Manual for TMY2s", NREL (1995).
    """
    import pvlib

    p = Path(path)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            df, meta = pvlib.iotools.read_tmy2(str(p))
    except FileNotFoundError:
        raise InputError("weather", "file not found", str(p)) from None
    except Exception as exc:
        raise InputError("weather", f"not a readable TMY2 file ({exc})", str(p)) from None
    idx = pd.DatetimeIndex([t.replace(year=TYPICAL_YEAR) for t in df.index], tz=df.index.tz)
    order = np.argsort(idx.asi8, kind="stable")
    df = df.iloc[order]
    idx = idx[order]
    loc = _location(
        meta.get("latitude"),
        meta.get("longitude"),
        meta.get("altitude"),
        str(meta.get("City", "")),
        latitude,
        longitude,
        altitude_m,
    )
    data = {
        "ghi_W_m2": df["GHI"].to_numpy(float),
        "dni_W_m2": df["DNI"].to_numpy(float),
        "dhi_W_m2": df["DHI"].to_numpy(float),
        "temp_air_C": df["DryBulb"].to_numpy(float) / 10.0,
        "wind_speed_m_s": df["Wspd"].to_numpy(float) / 10.0,
        "pressure_Pa": df["Pressure"].to_numpy(float) * 100.0,
        "relative_humidity_pct": df["RHum"].to_numpy(float),
        "precipitable_water_cm": _positive_or_nan(df["Pwat"]) / 10.0,
        "aod_broadband": _positive_or_nan(df["AOD"]) / 1000.0,
    }
    notes = {
        "weather_format": "TMY2 (pvlib.iotools.read_tmy2)",
        "time_labels": "TMY2 hour h is (h-1, h]; sun position at the middle of each hour",
        "typical_year": f"months re-stamped to {TYPICAL_YEAR}",
    }
    return Weather(idx + pd.Timedelta(minutes=30), loc, data, 1.0, f"TMY2 file {p}", notes)


def read_epw(
    path: str | Path,
    *,
    latitude: float | None = None,
    longitude: float | None = None,
    altitude_m: float | None = None,
) -> Weather:
    """Read an EnergyPlus weather (EPW) file.

    Parameters
    ----------
    path : str or pathlib.Path
        The EPW file.
    latitude, longitude, altitude_m : float, optional
        Override the file's location [deg, deg, m].

    Returns
    -------
    Weather
        Times at the interval centres (EPW labels the end of each hour; pvlib's index
        holds its start, so the centre is that + 30 min). EPW missing-value codes
        (precipitable water 999, aerosol optical depth 0.999, albedo 999) become NaN.
    """
    import pvlib

    p = Path(path)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            df, meta = pvlib.iotools.read_epw(str(p), coerce_year=TYPICAL_YEAR)
    except FileNotFoundError:
        raise InputError("weather", "file not found", str(p)) from None
    except Exception as exc:
        raise InputError("weather", f"not a readable EPW file ({exc})", str(p)) from None
    df = df.sort_index()
    loc = _location(
        meta.get("latitude"),
        meta.get("longitude"),
        meta.get("altitude"),
        str(meta.get("city", "")),
        latitude,
        longitude,
        altitude_m,
    )
    pw = df["precipitable_water"].to_numpy(float).copy()
    pw[(pw >= 999) | (pw < 0)] = np.nan
    # pvlib documents the field in cm; the EnergyPlus definition is mm (from memory) and
    # files of both kinds exist. A column cannot exceed about 7 cm on Earth, so values
    # above 15 can only be mm.
    pw_unit = "cm"
    if np.nanmax(pw, initial=0.0) > 15.0:
        pw = pw / 10.0
        pw_unit = "mm (converted to cm: values above 15 cannot be cm)"
    data = {
        "ghi_W_m2": df["ghi"].to_numpy(float),
        "dni_W_m2": df["dni"].to_numpy(float),
        "dhi_W_m2": df["dhi"].to_numpy(float),
        "temp_air_C": df["temp_air"].to_numpy(float),
        "wind_speed_m_s": df["wind_speed"].to_numpy(float),
        "pressure_Pa": df["atmospheric_pressure"].to_numpy(float),
        "relative_humidity_pct": df["relative_humidity"].to_numpy(float),
        "precipitable_water_cm": pw,
        "aod_broadband": _positive_or_nan(df["aerosol_optical_depth"], 0.999),
        "albedo": _positive_or_nan(df["albedo"], 999.0),
    }
    notes = {
        "weather_format": "EPW (pvlib.iotools.read_epw)",
        "time_labels": "EPW hour h is (h-1, h]; sun position at the middle of each hour",
        "typical_year": f"re-stamped to {TYPICAL_YEAR}",
        "epw_precipitable_water_unit": pw_unit,
    }
    # EPW hour h covers (h-1, h]; pvlib stamps each row with the start, h-1
    return Weather(df.index + pd.Timedelta(minutes=30), loc, data, 1.0, f"EPW file {p}", notes)


def read_pvgis_tmy(
    path: str | Path,
    *,
    latitude: float | None = None,
    longitude: float | None = None,
    altitude_m: float | None = None,
) -> Weather:
    """Read a typical meteorological year from PVGIS (its JSON or CSV output).

    Parameters
    ----------
    path : str or pathlib.Path
        The PVGIS TMY file: ``.json`` (``outputformat=json``) or ``.csv``
        (``outputformat=csv``). PVGIS's EPW output is an EPW file: read it with
        :func:`read_epw`.
    latitude, longitude, altitude_m : float, optional
        Override the file's location [deg, deg, m].

    Returns
    -------
    Weather
        Times in UTC (PVGIS's ``time(UTC)``), at the interval centres: each row is
        taken to cover the hour that starts at its stamp, so the sun position is
        taken 30 min later (the irradiance time offset of the CSV header, if any, is
        recorded in the notes, not applied). Months from different years are
        re-stamped to one year. Surface pressure ``SP`` is in Pa, ``T2m`` in deg C,
        ``WS10m`` in m s^-1 and ``RH`` in %, as PVGIS documents them; PVGIS gives no
        precipitable water, aerosol optical depth or albedo (the stated defaults are
        used, or precipitable water from temperature and humidity).

    References
    ----------
    .. [1] T. Huld, R. Mueller and A. Gambardella, "A new solar radiation database for
       estimating PV performance in Europe and Africa", Sol. Energy 86, 1803 (2012)
       (PVGIS).
    """
    import pvlib

    p = Path(path)
    fmt = p.suffix[1:].lower()
    if fmt not in ("json", "csv"):
        raise InputError(
            "weather",
            "a PVGIS TMY file must be .json or .csv (PVGIS's EPW output: read it as epw)",
            str(p),
        )
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            df, meta = pvlib.iotools.read_pvgis_tmy(str(p), pvgis_format=fmt)
    except FileNotFoundError:
        raise InputError("weather", "file not found", str(p)) from None
    except Exception as exc:  # pvlib raises plain errors for malformed files
        raise InputError("weather", f"not a readable PVGIS TMY file ({exc})", str(p)) from None
    inputs = meta.get("inputs", {}) if isinstance(meta, dict) else {}
    where = inputs.get("location", inputs)
    missing = [c for c in ("ghi", "dni", "dhi", "temp_air", "wind_speed") if c not in df]
    if missing:
        raise InputError(
            f"weather file {p}",
            f"missing PVGIS column(s) for {', '.join(missing)} "
            "(expected G(h), Gb(n), Gd(h), T2m, WS10m)",
        )
    idx = pd.DatetimeIndex(df.index)
    leap = (idx.month == 2) & (idx.day == 29)
    df, idx = df[~leap], idx[~leap]
    idx = pd.DatetimeIndex([t.replace(year=TYPICAL_YEAR) for t in idx])
    order = np.argsort(idx.asi8, kind="stable")
    df, idx = df.iloc[order], idx[order]
    loc = _location(
        where.get("latitude"),
        where.get("longitude"),
        where.get("elevation"),
        "",
        latitude,
        longitude,
        altitude_m,
    )

    def col(name):
        return df[name].to_numpy(float) if name in df else np.full(len(df), np.nan)

    data = {
        "ghi_W_m2": col("ghi"),
        "dni_W_m2": col("dni"),
        "dhi_W_m2": col("dhi"),
        "temp_air_C": col("temp_air"),
        "wind_speed_m_s": col("wind_speed"),
        "pressure_Pa": col("pressure"),
        "relative_humidity_pct": col("relative_humidity"),
    }
    notes = {
        "weather_format": f"PVGIS TMY {fmt.upper()} (pvlib.iotools.read_pvgis_tmy)",
        "time_labels": "UTC; each row taken as the hour starting at its stamp; sun "
        "position at the middle of each hour; hour-of-day tables in UTC",
        "typical_year": f"months re-stamped to {TYPICAL_YEAR}"
        + (f"; {int(leap.sum())} rows of 29 February dropped" if leap.any() else ""),
    }
    offset = inputs.get("irradiance time offset")
    if offset is not None:
        notes["irradiance_time_offset_h"] = f"{float(offset):g} (from the file; not applied)"
    return Weather(idx + pd.Timedelta(minutes=30), loc, data, 1.0, f"PVGIS TMY file {p}", notes)


def read_weather_csv(
    path: str | Path,
    *,
    latitude: float | None = None,
    longitude: float | None = None,
    altitude_m: float | None = None,
    tz: str | None = None,
    label: str = "end",
    name: str = "",
) -> Weather:
    """Read the plain weather CSV documented in this module.

    Parameters
    ----------
    path : str or pathlib.Path
        The CSV file.
    latitude, longitude : float
        Site location [deg] (required: the format carries none).
    altitude_m : float, optional
        Altitude [m] (default 0); sets the pressure where the file has none.
    tz : str, optional
        Time zone of naive timestamps (e.g. ``"Etc/GMT+5"``); ignored when the
        timestamps carry an offset.
    label : {"end", "start", "centre"}
        Which instant of its interval each timestamp names.
    name : str
        Site label.

    Returns
    -------
    Weather
        Interval inferred from the median spacing of the timestamps.
    """
    p = Path(path)
    if label not in ("end", "start", "centre"):
        raise InputError("label", "must be one of end, start, centre", label)
    try:
        df = pd.read_csv(p, comment="#", skipinitialspace=True)
    except FileNotFoundError:
        raise InputError("weather", "file not found", str(p)) from None
    except Exception as exc:
        raise InputError("weather", f"not a readable CSV file ({exc})", str(p)) from None
    df.columns = [str(c).strip() for c in df.columns]
    missing = [c for c in ("timestamp", *_CSV_REQUIRED) if c not in df.columns]
    if missing:
        raise InputError(
            f"weather file {p}",
            f"missing column(s) {', '.join(missing)}; the header must name timestamp, "
            + ", ".join(_CSV_REQUIRED),
        )
    unknown = [c for c in df.columns if c != "timestamp" and c not in WEATHER_RANGES]
    if unknown:
        raise InputError(
            f"weather file {p}",
            f"unknown column(s) {', '.join(unknown)}; allowed: {', '.join(WEATHER_RANGES)}",
        )
    try:
        times = pd.DatetimeIndex(pd.to_datetime(df["timestamp"], format="ISO8601"))
    except (ValueError, TypeError) as exc:
        raise InputError(
            f"weather file {p}.timestamp", f"not ISO 8601 timestamps ({exc})"
        ) from None
    if times.tz is None:
        if tz is None:
            raise InputError(
                f"weather file {p}.timestamp",
                "timestamps have no UTC offset; add one or give the time zone (tz)",
            )
        times = times.tz_localize(tz)
    if len(times) < 2:
        raise InputError(f"weather file {p}", "needs at least two rows", len(times))
    step = pd.Series(times).diff().dropna().median()
    interval_h = step / pd.Timedelta(hours=1)
    shift = {"end": -0.5, "start": 0.5, "centre": 0.0}[label] * step
    loc = _location(None, None, None, name, latitude, longitude, altitude_m)
    data = {}
    for c in df.columns:
        if c == "timestamp":
            continue
        try:
            data[c] = pd.to_numeric(df[c]).to_numpy(float)
        except (ValueError, TypeError):
            raise InputError(f"weather file {p}.{c}", "values must be numbers") from None
    notes = {
        "weather_format": "plain CSV",
        "time_labels": f"{label} of interval; sun position at the middle",
    }
    return Weather(times + shift, loc, data, float(interval_h), f"CSV file {p}", notes)


def read_weather(
    path: str | Path,
    format: str | None = None,  # noqa: A002 - the user-facing word
    *,
    latitude: float | None = None,
    longitude: float | None = None,
    altitude_m: float | None = None,
    tz: str | None = None,
    label: str = "end",
) -> Weather:
    """Read a weather file, choosing the reader from ``format`` or the file itself.

    Parameters
    ----------
    path : str or pathlib.Path
        Weather file.
    format : {"tmy3", "tmy2", "epw", "pvgis", "csv"}, optional
        Default: ``epw`` for ``.epw`` files, ``tmy2`` for ``.tm2`` files, ``pvgis`` for
        ``.json`` files and for CSV files that open with PVGIS's ``Latitude (decimal
        degrees):`` line, ``csv`` when the first line names a ``timestamp`` column,
        ``tmy3`` otherwise.
    latitude, longitude, altitude_m : float, optional
        Override the file's location [deg, deg, m] (required for the plain CSV).
    tz, label
        Plain CSV only (see :func:`read_weather_csv`).

    Returns
    -------
    Weather
    """
    p = Path(path)
    if not p.is_file():
        raise InputError("weather", "file not found", str(p))
    fmt = format.lower() if format else None
    if fmt is None:
        if p.suffix.lower() == ".epw":
            fmt = "epw"
        elif p.suffix.lower() == ".tm2":
            fmt = "tmy2"
        elif p.suffix.lower() == ".json":
            fmt = "pvgis"
        else:
            with open(p, encoding="utf-8", errors="replace") as fh:
                first = fh.readline()
                while first.startswith("#"):
                    first = fh.readline()
            if first.lower().startswith("latitude (decimal degrees)"):
                fmt = "pvgis"
            else:
                fmt = "csv" if "timestamp" in first.lower() else "tmy3"
    loc = dict(latitude=latitude, longitude=longitude, altitude_m=altitude_m)
    if fmt == "tmy3":
        return read_tmy3(p, **loc)
    if fmt == "tmy2":
        return read_tmy2(p, **loc)
    if fmt == "epw":
        return read_epw(p, **loc)
    if fmt == "pvgis":
        return read_pvgis_tmy(p, **loc)
    if fmt == "csv":
        return read_weather_csv(p, tz=tz, label=label, **loc)
    raise InputError("format", f"must be one of {', '.join(WEATHER_FORMATS)}", format)


def read_spectra_csv(
    path: str | Path,
    *,
    tz: str | None = None,
    label: str = "centre",
):
    """Read measured in-plane spectra from the wide CSV documented in this module.

    Parameters
    ----------
    path : str or pathlib.Path
        The CSV file.
    tz : str, optional
        Time zone of naive timestamps.
    label : {"end", "start", "centre"}
        Which instant of its interval each timestamp names (spectroradiometer scans are
        usually stamped at their time: ``centre``).

    Returns
    -------
    gapmatch.energy.spectra.HourlySpectra
        One row per timestamp with irradiance above zero; interval from the median
        spacing of the timestamps.
    """
    from .spectra import HourlySpectra, trapezoid_W_m2

    p = Path(path)
    if label not in ("end", "start", "centre"):
        raise InputError("label", "must be one of end, start, centre", label)
    try:
        df = pd.read_csv(p, comment="#", skipinitialspace=True)
    except FileNotFoundError:
        raise InputError("spectra", "file not found", str(p)) from None
    except Exception as exc:
        raise InputError("spectra", f"not a readable CSV file ({exc})", str(p)) from None
    df.columns = [str(c).strip() for c in df.columns]
    if "timestamp" not in df.columns:
        raise InputError(f"spectra file {p}", "needs a timestamp column")
    extra = {"temp_air_C", "wind_speed_m_s"}
    wl_cols = [c for c in df.columns if c != "timestamp" and c not in extra]
    try:
        wl = np.array([float(c) for c in wl_cols])
    except ValueError:
        bad = next(c for c in wl_cols if not c.replace(".", "", 1).isdigit())
        raise InputError(
            f"spectra file {p}",
            "column headers after timestamp must be wavelengths in nm "
            "(or temp_air_C, wind_speed_m_s)",
            bad,
        ) from None
    if wl.size < 2 or np.any(np.diff(wl) <= 0) or np.any(wl <= 0):
        raise InputError(
            f"spectra file {p}", "needs at least two strictly increasing wavelengths > 0 nm"
        )
    try:
        irr = df[wl_cols].apply(pd.to_numeric).to_numpy(float)
    except (ValueError, TypeError):
        raise InputError(f"spectra file {p}", "spectral irradiance must be numbers") from None
    if not np.all(np.isfinite(irr)) or np.any(irr < 0):
        row = int(np.argmax(~np.isfinite(irr).all(axis=1) | (irr < 0).any(axis=1)))
        raise InputError(
            f"spectra file {p}",
            f"spectral irradiance must be finite and >= 0 W m^-2 nm^-1; data row {row + 1} is not",
        )
    try:
        times = pd.DatetimeIndex(pd.to_datetime(df["timestamp"], format="ISO8601"))
    except (ValueError, TypeError) as exc:
        raise InputError(f"spectra file {p}.timestamp", f"not ISO 8601 ({exc})") from None
    if times.tz is None:
        if tz is None:
            raise InputError(
                f"spectra file {p}.timestamp",
                "timestamps have no UTC offset; add one or give the time zone (tz)",
            )
        times = times.tz_localize(tz)
    if len(times) < 2 or not times.is_monotonic_increasing:
        raise InputError(f"spectra file {p}", "needs at least two rows in time order")
    step = pd.Series(times).diff().dropna().median()
    shift = {"end": -0.5, "start": 0.5, "centre": 0.0}[label] * step
    n = len(times)
    notes = {}
    ta = np.full(n, 25.0)
    ws = np.full(n, 1.0)
    if "temp_air_C" in df:
        ta = pd.to_numeric(df["temp_air_C"]).to_numpy(float)
    else:
        notes["temp_air_C"] = "25 deg C (stated default: the file has none)"
    if "wind_speed_m_s" in df:
        ws = pd.to_numeric(df["wind_speed_m_s"]).to_numpy(float)
    else:
        notes["wind_speed_m_s"] = "1 m s^-1 (stated default: the file has none)"
    total = trapezoid_W_m2(wl, irr)
    keep = total > 0
    zero = np.zeros(int(keep.sum()))
    return HourlySpectra(
        (times + shift)[keep],
        wl,
        irr[keep],
        float(step / pd.Timedelta(hours=1)),
        np.ones(int(keep.sum())),
        {
            "poa_direct": zero,
            "poa_sky_diffuse": zero,
            "poa_ground_diffuse": zero,
            "poa_global": total[keep],
        },
        ta[keep],
        ws[keep],
        {
            "spectra": f"measured in-plane spectra from {p} (no spectral model)",
            "rows_without_light": int((~keep).sum()),
            "defaults": notes,
        },
    )
