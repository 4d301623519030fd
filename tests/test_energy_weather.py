"""Weather readers: TMY3 through pvlib, the plain CSV, unit checks and time labels.

External references: pvlib's own reader (``pvlib.iotools.read_tmy3``) and solar position
(``pvlib.solarposition.get_solarposition``) on the Greensboro, NC TMY3 sample that pvlib
ships (NREL open data).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pvlib
import pytest

from gapmatch.energy import Location, demo_weather_path, read_weather
from gapmatch.energy.geometry import Mounting, sun_and_plane
from gapmatch.energy.readers import read_weather_csv
from gapmatch.errors import InputError


@pytest.fixture(scope="module")
def tmy():
    return read_weather(demo_weather_path())


def test_tmy3_matches_pvlib_reader(tmy):
    df, meta = pvlib.iotools.read_tmy3(str(demo_weather_path()), coerce_year=1990)
    df = df.sort_index()
    assert tmy.hours == 8760
    assert tmy.location.latitude_deg == pytest.approx(meta["latitude"])
    assert tmy.location.longitude_deg == pytest.approx(meta["longitude"])
    assert tmy.location.altitude_m == pytest.approx(meta["altitude"])
    np.testing.assert_array_equal(tmy["ghi_W_m2"], df["ghi"].to_numpy())
    np.testing.assert_array_equal(tmy["dni_W_m2"], df["dni"].to_numpy())
    # the file gives pressure in mbar; we hold Pa
    np.testing.assert_allclose(tmy["pressure_Pa"], df["pressure"].to_numpy() * 100.0)
    # the sample has no AOD and no albedo (zeros in the file): they must read as missing
    assert np.isnan(tmy["aod_broadband"]).all()
    assert np.isnan(tmy["albedo"]).all()


def test_tmy3_sun_at_middle_of_hour(tmy):
    """TMY3 labels the end of each hour; the sun is taken at its middle (label - 30 min)."""
    df, _ = pvlib.iotools.read_tmy3(str(demo_weather_path()), coerce_year=1990)
    labels = df.sort_index().index
    assert (labels - tmy.times == pd.Timedelta(minutes=30)).all()
    geo = sun_and_plane(tmy, Mounting(30.0, 180.0))
    loc = tmy.location
    sp = pvlib.solarposition.get_solarposition(
        labels - pd.Timedelta(minutes=30),
        loc.latitude_deg,
        loc.longitude_deg,
        altitude=loc.altitude_m,
        pressure=tmy["pressure_Pa"],
        temperature=tmy["temp_air_C"],
    )
    np.testing.assert_allclose(geo["zenith_deg"], sp["zenith"].to_numpy(), atol=1e-9)
    # noon hour (label 13:00 local standard time): the sun is highest near its middle
    june = (tmy.times.month == 6) & (tmy.times.day == 21)
    z = geo["zenith_deg"][june]
    assert tmy.times[june][np.argmin(z)].hour in (12, 13)


def test_location_override():
    w = read_weather(demo_weather_path(), latitude=10.0, longitude=20.0, altitude_m=5.0)
    assert (w.location.latitude_deg, w.location.longitude_deg, w.location.altitude_m) == (
        10.0,
        20.0,
        5.0,
    )


def _csv(tmp_path, rows, header="timestamp,ghi_W_m2,dni_W_m2,dhi_W_m2,temp_air_C,wind_speed_m_s"):
    p = tmp_path / "w.csv"
    p.write_text(header + "\n" + "\n".join(rows) + "\n")
    return p


def test_plain_csv_reads_and_labels(tmp_path):
    rows = [
        f"2021-06-01T{h:02d}:00:00-05:00,{max(0, 800 - 60 * abs(h - 12))},500,100,20,2"
        for h in range(24)
    ]
    p = _csv(tmp_path, rows)
    w = read_weather(p, latitude=36.0, longitude=-80.0)
    assert w.interval_h == pytest.approx(1.0)
    assert w.times[0] == pd.Timestamp("2021-06-01T00:00:00-05:00") - pd.Timedelta(minutes=30)
    w2 = read_weather_csv(p, latitude=36.0, longitude=-80.0, label="start")
    assert w2.times[0] == pd.Timestamp("2021-06-01T00:30:00-05:00")
    np.testing.assert_array_equal(w["ghi_W_m2"], w2["ghi_W_m2"])


@pytest.mark.parametrize(
    "column, value, needle",
    [
        ("pressure_Pa", "1013", "pressure_Pa"),  # hPa given for Pa
        ("temp_air_C", "293.15", "temp_air_C"),  # K given for deg C
        ("precipitable_water_cm", "25", "precipitable_water_cm"),  # mm given for cm
    ],
)
def test_plain_csv_unit_mixups_are_clear_errors(tmp_path, column, value, needle):
    header = f"timestamp,ghi_W_m2,dni_W_m2,dhi_W_m2,temp_air_C,wind_speed_m_s,{column}"
    if column == "temp_air_C":
        header = "timestamp,ghi_W_m2,dni_W_m2,dhi_W_m2,temp_air_C,wind_speed_m_s"
        rows = [f"2021-06-01T{h:02d}:00:00Z,500,400,100,{value},2" for h in range(3)]
    else:
        rows = [f"2021-06-01T{h:02d}:00:00Z,500,400,100,20,2,{value}" for h in range(3)]
    p = _csv(tmp_path, rows, header)
    with pytest.raises(InputError) as e:
        read_weather(p, latitude=36.0, longitude=-80.0)
    assert needle in str(e.value)
    assert "\n" not in str(e.value)


def test_plain_csv_errors(tmp_path):
    p = _csv(tmp_path, ["2021-06-01T00:00:00Z,1,1,1,1,1"], "timestamp,ghi_W_m2,dni_W_m2")
    with pytest.raises(InputError, match="missing column"):
        read_weather(p, latitude=36.0, longitude=-80.0)
    rows = [f"2021-06-01T{h:02d}:00:00,500,400,100,20,2" for h in range(3)]
    p = _csv(tmp_path, rows)
    with pytest.raises(InputError, match="UTC offset"):
        read_weather(p, latitude=36.0, longitude=-80.0)
    rows = [f"2021-06-01T{h:02d}:00:00Z,500,400,100,20,2" for h in range(3)]
    p = _csv(tmp_path, rows)
    with pytest.raises(InputError, match="latitude"):
        read_weather(p)
    with pytest.raises(InputError, match="file not found"):
        read_weather(tmp_path / "nothing.csv")
    with pytest.raises(InputError, match="latitude_deg"):
        Location(95.0, 0.0)


def test_measured_spectra_csv(tmp_path, am15g):
    """A wide CSV of measured spectra whose every row is AM1.5G: the in-plane irradiance
    is the G173 integral, and the yield equals the AM1.5G efficiency (as the constant-
    conditions closure of the engine)."""
    from gapmatch.energy.api import yield_from_spectra
    from gapmatch.energy.celltemp import CellTemperature
    from gapmatch.energy.readers import read_spectra_csv

    wl = am15g.wavelength_nm
    head = "timestamp," + ",".join(f"{x:g}" for x in wl)
    rows = [
        f"2021-06-01T{h:02d}:00:00+02:00,"
        + ",".join(repr(float(v)) for v in am15g.irradiance_W_m2_nm)
        for h in range(6, 12)
    ]
    p = tmp_path / "spectra.csv"
    p.write_text(head + "\n" + "\n".join(rows) + "\n")
    hs = read_spectra_csv(p)
    assert hs.hours == 6 and hs.interval_h == pytest.approx(1.0)
    np.testing.assert_allclose(hs.poa_W_m2, am15g.total_irradiance_W_m2, rtol=1e-12)
    assert "temp_air_C" in hs.assumptions["defaults"]
    r = yield_from_spectra(hs, [1.73, 1.12], cell_temperature=CellTemperature("fixed"))
    assert r.energy_efficiency("series")[0] == pytest.approx(
        r.reference_efficiency["series"][0], rel=1e-9
    )
    bad = tmp_path / "bad.csv"
    bad.write_text("timestamp,350,abc\n2021-06-01T00:00:00Z,1,2\n2021-06-01T01:00:00Z,1,2\n")
    with pytest.raises(InputError, match="wavelengths"):
        read_spectra_csv(bad)


def test_tmy2_reader_units_and_aod():
    """pvlib's Miami TMY2 sample (NREL open data): tenths of deg C / m s^-1, mm of water
    and thousandths of AOD converted; its AOD feeds the turbidity instead of the default."""
    from gapmatch.energy.spectra import hourly_spectra

    p = Path(pvlib.__file__).parent / "data" / "12839.tm2"
    raw, _ = pvlib.iotools.read_tmy2(str(p))
    w = read_weather(p)
    assert w.hours == 8760 and w.location.latitude_deg == pytest.approx(25.8)
    assert np.nanmax(w["temp_air_C"]) == pytest.approx(raw["DryBulb"].max() / 10)
    assert np.nanmean(w["aod_broadband"]) == pytest.approx(raw["AOD"].mean() / 1000)
    assert w.times.is_monotonic_increasing
    assert (w.times.minute == 30).all()
    hs = hourly_spectra(w, Mounting(25.0, 180.0))
    d = hs.assumptions["defaults"]
    assert "aerosol_turbidity_500nm" not in d
    assert d["aerosol_turbidity_500nm_from_broadband"]["hours"] == hs.hours


# ---- PVGIS typical-year files (pvlib.iotools.read_pvgis_tmy) -------------------------------
def _pvgis_rows():
    """The Greensboro TMY3 sample (pvlib's reader) re-written as PVGIS TMY rows: UTC
    stamps at the start of each hour, PVGIS's column names and units (SP in Pa)."""
    df, meta = pvlib.iotools.read_tmy3(str(demo_weather_path()), coerce_year=1990)
    start = (df.index - pd.Timedelta(hours=1)).tz_convert("UTC")
    rows = pd.DataFrame(
        {
            "time(UTC)": start.strftime("%Y%m%d:%H%M"),
            "T2m": df["temp_air"].to_numpy(float),
            "RH": df["relative_humidity"].to_numpy(float),
            "G(h)": df["ghi"].to_numpy(float),
            "Gb(n)": df["dni"].to_numpy(float),
            "Gd(h)": df["dhi"].to_numpy(float),
            "IR(h)": np.zeros(len(df)),
            "WS10m": df["wind_speed"].to_numpy(float),
            "WD10m": np.zeros(len(df)),
            "SP": df["pressure"].to_numpy(float) * 100.0,
        }
    )
    return rows, meta


def _write_pvgis_json(path):
    import json

    rows, meta = _pvgis_rows()
    loc = {"latitude": meta["latitude"], "longitude": meta["longitude"]}
    loc["elevation"] = meta["altitude"]
    doc = {
        "inputs": {"location": loc, "meteo_data": {"radiation_db": "(test)"}},
        "outputs": {
            "months_selected": [{"month": m, "year": 2010} for m in range(1, 13)],
            "tmy_hourly": rows.to_dict(orient="records"),
        },
        "meta": {"inputs": {"location": {"description": "test"}}, "outputs": {}},
    }
    path.write_text(json.dumps(doc))
    return meta


def _write_pvgis_csv(path):
    rows, meta = _pvgis_rows()
    lines = [
        f"Latitude (decimal degrees): {meta['latitude']:.3f}",
        f"Longitude (decimal degrees): {meta['longitude']:.3f}",
        f"Elevation (m): {meta['altitude']:.1f}",
        "Irradiance Time Offset (h): 0.1761",
        "month,year",
        *[f"{m},2010" for m in range(1, 13)],
        rows.to_csv(index=False, lineterminator="\r\n").rstrip("\r\n"),
        "T2m: 2-m air temperature (degree Celsius)",
        "SP: Surface (air) pressure (Pa)",
    ]
    path.write_bytes("\r\n".join(lines).encode() + b"\r\n")
    return meta


@pytest.mark.parametrize("kind", ["json", "csv"])
def test_pvgis_tmy_reads_as_the_same_weather(tmy, tmp_path, kind):
    """The same hours written in PVGIS's JSON / CSV layout (as pvlib's parser reads
    them) give the TMY3 reader's weather: values hour for hour at the same instants
    (UTC), location from the file, format detected from the file."""
    f = tmp_path / f"site.{kind}"
    meta = (_write_pvgis_json if kind == "json" else _write_pvgis_csv)(f)
    w = read_weather(f)
    assert w.hours == 8760
    assert w.location.latitude_deg == pytest.approx(meta["latitude"], abs=5e-4)
    assert w.location.longitude_deg == pytest.approx(meta["longitude"], abs=5e-4)
    assert w.location.altitude_m == pytest.approx(meta["altitude"], abs=0.05)
    assert "PVGIS" in w.notes["weather_format"]
    # TMY3 centres in UTC, with the 5 wrapped night hours of 31 December moved to 1990
    t = tmy.times.tz_convert("UTC")
    t = pd.DatetimeIndex([x.replace(year=1990) for x in t])
    order = np.argsort(t.asi8, kind="stable")
    assert (w.times == t[order]).all()
    for c in ("ghi_W_m2", "dni_W_m2", "dhi_W_m2", "temp_air_C", "wind_speed_m_s"):
        np.testing.assert_allclose(w[c], tmy[c][order], rtol=1e-12)
    np.testing.assert_allclose(w["pressure_Pa"], tmy["pressure_Pa"][order], rtol=1e-12)
    assert np.isnan(w["precipitable_water_cm"]).all()  # PVGIS has none
    if kind == "csv":
        assert "0.1761" in w.notes["irradiance_time_offset_h"]


def test_pvgis_tmy_gives_the_same_annual_energy(tmy, tmp_path):
    from gapmatch.energy import annual_yield

    f = tmp_path / "site.json"
    _write_pvgis_json(f)
    ours = annual_yield(read_weather(f), [1.73, 1.12], tilt_deg=36.0)
    # the TMY3 file has precipitable water: drop it to compare like with like
    data = dict(tmy.data)
    data["precipitable_water_cm"] = np.full(tmy.hours, np.nan)
    data["aod_broadband"] = np.full(tmy.hours, np.nan)
    data["albedo"] = np.full(tmy.hours, np.nan)
    ref_w = type(tmy)(tmy.times, tmy.location, data, 1.0, tmy.source, dict(tmy.notes))
    ref = annual_yield(ref_w, [1.73, 1.12], tilt_deg=36.0)
    assert ours.hours == ref.hours
    assert ours.annual_energy_kWh_m2("series")[0] == pytest.approx(
        ref.annual_energy_kWh_m2("series")[0], rel=1e-9
    )
    assert ours.poa_irradiation_kWh_m2 == pytest.approx(ref.poa_irradiation_kWh_m2, rel=1e-9)


def test_pvgis_bad_files_are_one_line(tmp_path):
    from gapmatch.energy.readers import read_pvgis_tmy

    f = tmp_path / "x.json"
    f.write_text('{"inputs": {}}')
    with pytest.raises(InputError, match="not a readable PVGIS TMY file"):
        read_weather(f)
    with pytest.raises(InputError, match="must be .json or .csv"):
        read_pvgis_tmy(tmp_path / "x.epw")
