"""The study file's [site] table and the energy-yield report sections.

The site sections' numbers are checked against a direct call of the public energy API
(gapmatch.energy.annual_yield) for the same stack and site, which reads the weather file
itself: the report must add nothing and lose nothing on the way.
"""

from __future__ import annotations

import io

import numpy as np
import pandas as pd
import pytest

from gapmatch.energy import YIELD_CAUTION, annual_yield, demo_weather_path
from gapmatch.errors import InputError
from gapmatch.report import build_report
from gapmatch.study import parse_study

BASE = """
[study]
name = "site-test"
title = "site test"
connections = ["series", "independent"]
sections = ["site", "site-energy", "site-map"]

[[stacks]]
name = "A"
gaps_eV = [1.74, 1.12]

[[stacks]]
name = "B"
gaps_eV = [1.90, 1.12]
"""
SITE = """
[site]
weather = "pvlib:723170TYA.CSV"
tilt_deg = 36.0
azimuth_deg = 180.0
map_top_eV = [1.5, 1.9]
map_bottom_eV = [0.9, 1.2]
map_step_eV = 0.1
"""


@pytest.mark.parametrize(
    "site, key, words",
    [
        ('weather = "pvlib:723170TYA.CSV"\ntilt_deg = 95.0', "site.tilt_deg", "[0, 90]"),
        ('weather = "pvlib:723170TYA.CSV"\ntilt_deg = -1', "site.tilt_deg", "[0, 90]"),
        ('weather = "no-such-file.csv"', "site.weather", "relative to the study file"),
        ('weather = "pvlib:NOPE.CSV"', "site.weather", "pvlib's data folder"),
        (
            'weather = "pvlib:723170TYA.CSV"\nmounting = "open_rack_glass_glas"',
            "site.mounting",
            "did you mean 'open_rack_glass_glass'",
        ),
        ('weather = "pvlib:723170TYA.CSV"\ntracking = "dual"', "site.tracking", "'fixed'"),
        (
            'weather = "pvlib:723170TYA.CSV"\ntransposision = "perez"',
            "site.transposision",
            "did you mean 'transposition'",
        ),
        ("tilt_deg = 30.0", "site.weather", "is required"),
        (
            'weather = "pvlib:723170TYA.CSV"\ntemperature_model = "faiman"\n'
            'mounting = "close_mount_glass_glass"',
            "site.mounting",
            "'sapm' only",
        ),
        ('weather = "pvlib:723170TYA.CSV"\nlatitude_deg = 91.0', "site.latitude_deg", "[-90, 90]"),
        ('weather = "pvlib:723170TYA.CSV"\nmap_top_eV = [2.0, 1.5]', "site.map_top_eV", "below"),
    ],
)
def test_site_table_errors_name_the_key(site, key, words):
    with pytest.raises(InputError) as e:
        parse_study(BASE + "\n[site]\n" + site + "\n")
    assert e.value.field == key
    assert words in str(e.value)


def test_weather_path_relative_to_study_file(tmp_path):
    (tmp_path / "w").mkdir()
    (tmp_path / "w" / "site.csv").write_text(demo_weather_path().read_text(encoding="latin-1"))
    text = BASE + '\n[site]\nweather = "w/site.csv"\n'
    st = parse_study(text, base_dir=tmp_path)
    assert st.site.weather == str(tmp_path / "w" / "site.csv")
    assert st.site.given == "w/site.csv"
    with pytest.raises(InputError, match="site.weather"):
        parse_study(text, base_dir=tmp_path / "w")  # not there relative to that folder


def test_no_site_table_is_none_and_the_sections_say_so():
    st = parse_study(BASE)
    assert st.site is None
    with pytest.raises(InputError) as e:
        build_report(st, progress=False)
    assert e.value.field == "site"


@pytest.fixture(scope="module")
def report():
    st = parse_study(BASE + SITE)
    return st, build_report(st, progress=False)


def test_sections_write_their_csvs(report):
    st, rep = report
    for suffix in ("site_energy.csv", "site_monthly.csv", "site_map.csv"):
        assert f"{st.name}_{suffix}" in rep.files
    energy = pd.read_csv(io.StringIO(rep.files[f"{st.name}_site_energy.csv"]))
    assert list(energy["stack"]) == ["A", "B"]
    grid = pd.read_csv(io.StringIO(rep.files[f"{st.name}_site_map.csv"]))
    # 0.1 eV grid: top 1.5..1.9 (5) x bottom 0.9..1.2 (4), every top above every bottom
    assert len(grid) == 5 * 4
    assert (grid["gap_1_eV"] > grid["gap_2_eV"]).all()
    monthly = pd.read_csv(io.StringIO(rep.files[f"{st.name}_site_monthly.csv"]))
    assert len(monthly) == 2 * 12


def test_site_numbers_equal_a_direct_energy_api_call(report):
    st, rep = report
    direct = annual_yield(
        demo_weather_path(),
        [1.74, 1.12],
        ("series", "independent"),
        **st.site.yield_options(),
        ere=st.conditions["ere"],
        dark_current=st.conditions["dark_current"],
    )
    rec = rep.summary["site-energy"]["stacks"][0]
    assert rec["stack"] == "A"
    # the same computation on the same inputs: only float summation order may differ
    # (the report batches two stacks), so 1e-9 relative
    for c in ("series", "independent"):
        assert rec[f"annual_energy_{c}_kWh_m2"] == pytest.approx(
            float(direct.annual_energy_kWh_m2(c)[0]), rel=1e-9
        )
        assert rec[f"energy_efficiency_{c}_pct"] == pytest.approx(
            100 * float(direct.energy_efficiency(c)[0]), rel=1e-9
        )
        assert rec[f"reference_efficiency_{c}_pct"] == pytest.approx(
            100 * float(direct.reference_efficiency[c][0]), rel=1e-9
        )
    assert rec["mismatch_loss_pct"] == pytest.approx(100 * float(direct.mismatch_loss[0]), rel=1e-9)
    s = rep.summary["site"]
    assert s["hours"] == direct.hours
    assert s["poa_irradiation_kWh_m2"] == pytest.approx(direct.poa_irradiation_kWh_m2, rel=1e-9)
    monthly = pd.read_csv(io.StringIO(rep.files[f"{st.name}_site_monthly.csv"]))
    a = monthly[monthly["stack"] == "A"]
    # CSV written with 6 significant digits
    np.testing.assert_allclose(
        a["energy_series_kWh_m2"], direct.monthly_energy_kWh_m2("series")[:, 0], rtol=1e-5
    )


def test_map_optima_are_grid_maxima(report):
    st, rep = report
    grid = pd.read_csv(io.StringIO(rep.files[f"{st.name}_site_map.csv"]))
    opt = rep.summary["site-map"]["optima"]
    for c in ("series", "independent"):
        assert opt[c]["yield_optimum"]["annual_energy_kWh_m2"] == pytest.approx(
            grid[f"annual_energy_{c}_kWh_m2"].max(),
            rel=1e-5,  # CSV digits
        )
        # the yield optimum has at least the AM1.5G optimum's annual energy (it is the max)
        assert (
            opt[c]["yield_optimum"]["annual_energy_kWh_m2"]
            >= opt[c]["am15g_optimum"]["annual_energy_kWh_m2"]
        )


def test_caution_text_present(report):
    _, rep = report
    page = rep.html
    assert "not an energy rating or a bankable yield assessment" in page
    assert "IEC 61853" in page
    assert "licensed engineering practice" in page
    for name in ("site", "site-energy", "site-map"):
        assert rep.summary[name]["caution"] == YIELD_CAUTION
    # every figure title of the site sections carries the short caution
    assert page.count("modelled limit of ideal cells, not an energy rating") >= 4


def test_demo_study_has_a_site():
    from pathlib import Path

    from gapmatch.study import load_study

    st = load_study(Path(__file__).resolve().parents[1] / "configs" / "demo.toml")
    assert st.site is not None and st.site.weather == str(demo_weather_path())
    assert {"site", "site-energy", "site-map"} <= set(st.sections)


def test_mismatch_over_the_year_equals_the_direct_api(report):
    """Monthly mismatch loss and hour x month photocurrent ratio of stack A from the
    report's files equal a direct annual_yield call (CSV digits: 6 significant)."""
    st, rep = report
    direct = annual_yield(
        demo_weather_path(),
        [1.74, 1.12],
        ("series", "independent"),
        **st.site.yield_options(),
        ere=st.conditions["ere"],
        dark_current=st.conditions["dark_current"],
    )
    monthly = pd.read_csv(io.StringIO(rep.files[f"{st.name}_site_monthly.csv"]))
    a = monthly[monthly["stack"] == "A"]
    ms = direct.monthly_energy_kWh_m2("series")[:, 0]
    mi = direct.monthly_energy_kWh_m2("independent")[:, 0]
    np.testing.assert_allclose(a["mismatch_loss_pct"], 100 * (1 - ms / mi), rtol=1e-4)
    # invariant: independent >= series in every month
    assert (monthly["mismatch_loss_pct"] >= -1e-9).all() and (
        monthly["mismatch_loss_pct"] < 100
    ).all()
    [rec] = [r for r in rep.summary["site-energy"]["monthly_mismatch_loss"] if r["stack"] == "A"]
    assert rec["loss_pct"] == pytest.approx(list(100 * (1 - ms / mi)), rel=1e-9)
    ratio = pd.read_csv(io.StringIO(rep.files[f"{st.name}_site_current_ratio.csv"]))
    ra = ratio[ratio["stack"] == "A"]
    assert len(ra) == 12 * 24
    want = direct.hour_month_current_ratio(0).ravel()
    lit = np.isfinite(want)
    np.testing.assert_allclose(
        ra["current_ratio_top_to_next"].to_numpy()[lit], want[lit], rtol=1e-5
    )
    assert ra["current_ratio_top_to_next"].isna().to_numpy()[~lit].all()
    # the annual series-independent gap is the energy-weighted mean of the months' gaps
    assert direct.mismatch_loss[0] == pytest.approx(1 - ms.sum() / mi.sum(), rel=1e-12)


def test_mismatch_figures_carry_the_cautions(report):
    _, rep = report
    page = rep.html
    assert "Series current-mismatch loss by month" in page
    assert page.count("Photocurrent ratio of the top to the next junction") == 2  # stacks A and B
    assert page.count("clear-sky spectral shapes scaled to measured irradiance") >= 3
