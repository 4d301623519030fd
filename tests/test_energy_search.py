"""Yield-optimal gaps at a site beside the AM1.5G optimum (Python API and the site
options of ``gapmatch optimise`` and ``gapmatch map``).

External references: the core batch solver under ASTM G173-03 AM1.5G (pvlib's table)
at 25 deg C for the AM1.5G criterion; a brute-force full-year scan of the top gap
(every daylight hour of the Greensboro TMY3 sample shipped with pvlib, NREL open data)
for the yield criterion; :func:`gapmatch.energy.annual_yield` for the CLI's numbers.
Invariants: each optimum is the better one on its own criterion; constraints hold.
"""

from __future__ import annotations

import json

import numpy as np
import pytest

import gapmatch as gm
from gapmatch.cli import main
from gapmatch.energy import annual_yield, demo_weather_path, site_spectra
from gapmatch.energy.objective import AnnualEnergyObjective
from gapmatch.energy.search import optimise_yield
from gapmatch.errors import InputError
from gapmatch.search import make_problem


@pytest.fixture(scope="module")
def site():
    return site_spectra(demo_weather_path(), tilt_deg=36.0)


@pytest.fixture(scope="module")
def result(site):
    problem = make_problem(2, "series", fixed_eV={2: 1.12})
    return optimise_yield(problem, site, trials=20, global_samples=256, storage=":memory:")


def test_each_optimum_wins_on_its_own_criterion(result):
    y, a = result.yield_optimum, result.am15g_optimum
    assert y["gaps_eV"][1] == a["gaps_eV"][1] == 1.12
    assert y["annual_energy_kWh_m2"] >= a["annual_energy_kWh_m2"] * (1 - 1e-9)
    assert a["reference_efficiency"] >= y["reference_efficiency"] - 1e-9
    assert result.energy_gain >= -1e-9 and result.efficiency_cost >= -1e-9
    for d in (y, a):
        assert d["energy_efficiency"] == pytest.approx(
            d["annual_energy_kWh_m2"] / result.poa_irradiation_kWh_m2, rel=1e-12
        )
        assert d["annual_energy_series_kWh_m2"] <= d["annual_energy_independent_kWh_m2"]
    assert "IEC 61853" in result.caution
    frame = result.to_frame()
    assert list(frame["optimum"]) == ["yield", "AM1.5G"]
    assert "annual_energy_kWh_m2" in frame and "reference_efficiency_pct" in frame


def test_am15g_criterion_matches_the_core_at_25C(result):
    """Both optima's AM1.5G efficiencies are the core's at 298.15 K, and the AM1.5G
    optimum is the argmax of a 0.002 eV scan of the core."""
    for d in (result.yield_optimum, result.am15g_optimum):
        eff = gm.evaluate(d["gaps_eV"], "series", temperature_K=298.15).efficiency[0]
        assert d["reference_efficiency"] == pytest.approx(float(eff), rel=1e-9)
    scan = np.arange(1.60, 1.90, 0.002)
    eff = gm.evaluate(
        np.column_stack([scan, np.full_like(scan, 1.12)]), "series", temperature_K=298.15
    ).efficiency
    assert result.am15g_optimum["gaps_eV"][0] == pytest.approx(scan[np.argmax(eff)], abs=0.002)


def test_yield_optimum_is_the_full_year_scan_maximum(site, result):
    """Polished on the full year: within 0.005 eV of the argmax of a 0.0025 eV
    full-year scan, and no scanned stack has more energy (beyond 1e-6)."""
    obj = AnnualEnergyObjective(site, "series", representatives=None)
    scan = np.arange(1.65, 1.85, 0.0025)
    e = obj.evaluate(np.column_stack([scan, np.full_like(scan, 1.12)])).value
    y = result.yield_optimum
    assert y["gaps_eV"][0] == pytest.approx(scan[np.argmax(e)], abs=0.005)
    assert y["annual_energy_kWh_m2"] >= e.max() * (1 - 1e-6)
    # the reduced-set error is stated and is the ratio of the two evaluations
    assert result.reduction_error == pytest.approx(
        y["annual_energy_reduced_set_kWh_m2"] / y["annual_energy_kWh_m2"] - 1, rel=1e-12
    )
    assert abs(result.reduction_error) < 0.01
    assert result.full_year_polish


def test_constraints_apply_to_both_searches(site):
    short = site.take(slice(0, site.hours, 6))
    problem = make_problem(2, "series", bounds_eV=[(1.5, 1.65), (0.9, 1.2)])
    r = optimise_yield(
        problem, short, representatives=12, trials=12, global_samples=128, storage=":memory:"
    )
    for d in (r.yield_optimum, r.am15g_optimum):
        assert 1.5 - 1e-9 <= d["gaps_eV"][0] <= 1.65 + 1e-9
        assert 0.9 - 1e-9 <= d["gaps_eV"][1] <= 1.2 + 1e-9
    with pytest.raises(InputError, match="spectra"):
        optimise_yield(problem, "not spectra")


def _run(capsys, argv):
    code = main(argv)
    out = capsys.readouterr()
    return code, out.out, out.err


def test_cli_optimise_with_a_site(capsys):
    code, out, _ = _run(
        capsys,
        [
            "optimise",
            "--junctions",
            "2",
            "--fix",
            "bottom=1.12",
            "--trials",
            "10",
            "--storage",
            ":memory:",
            "--weather",
            "demo",
            "--tilt",
            "36",
            "--no-progress",
            "--json",
        ],
    )
    assert code == 0
    d = json.loads(out)
    assert "IEC 61853" in d["caution"]
    r = annual_yield(
        demo_weather_path(),
        [d["yield_optimum"]["gaps_eV"], d["am15g_optimum"]["gaps_eV"]],
        "series",
        tilt_deg=36.0,
    )
    np.testing.assert_allclose(
        [d["yield_optimum"]["annual_energy_kWh_m2"], d["am15g_optimum"]["annual_energy_kWh_m2"]],
        r.annual_energy_kWh_m2("series"),
        rtol=1e-12,
    )
    assert d["yield_optimum"]["annual_energy_kWh_m2"] >= d["am15g_optimum"]["annual_energy_kWh_m2"]
    assert abs(d["reduction_error"]) < 0.01
    code, out, _ = _run(
        capsys,
        ["optimise", "--junctions", "2", "--fix", "bottom=1.12", "--trials", "10"]
        + ["--storage", ":memory:", "--weather", "demo", "--tilt", "120", "--no-progress"],
    )
    assert code == 2


def test_cli_map_with_a_site(capsys, tmp_path):
    prefix = tmp_path / "site"
    code, out, _ = _run(
        capsys,
        ["map", "--weather", "demo", "--tilt", "36", "--x-gap-range", "1.5", "2.0"]
        + ["--y-gap-range", "0.9", "1.2", "--step", "0.1", "--out", str(prefix), "--json"],
    )
    assert code == 0
    d = json.loads(out)
    o = d["optima"]["series"]
    r = annual_yield(
        demo_weather_path(),
        [o["yield_optimum"]["gaps_eV"], o["am15g_optimum"]["gaps_eV"]],
        "series",
        tilt_deg=36.0,
    )
    np.testing.assert_allclose(
        [o["yield_optimum"]["annual_energy_kWh_m2"], o["am15g_optimum"]["annual_energy_kWh_m2"]],
        r.annual_energy_kWh_m2("series"),
        rtol=1e-12,
    )
    assert d["grid"]["stacks"] == 24  # 6 top x 4 bottom gaps, all above the bottom
    for suffix in ("_map.csv", "_summary.json", "_map_series.html", "_map_difference.html"):
        assert (tmp_path / f"site{suffix}").exists()
    code, _, err = _run(capsys, ["map", "--weather", "demo", "--stack", "1.9", "1.4", "1.0"])
    assert code == 2 and "--stack" in err
    code, _, err = _run(capsys, ["map", "--weather", "demo", "--spectrum", "AM0"])
    assert code == 2 and "--spectrum" in err and "site gives the hourly spectra" in err


def test_two_worker_processes_share_the_yield_study(site, tmp_path):
    """--workers 2 on an SQLite file: the yield search runs in two processes (the
    objective with its spectra is sent to each), the AM1.5G search in one, and the
    study holds exactly the trial budget."""
    short = site.take(slice(0, site.hours, 8))
    problem = make_problem(2, "series", fixed_eV={2: 1.12})
    r = optimise_yield(
        problem,
        short,
        representatives=8,
        trials=10,
        global_samples=64,
        workers=2,
        storage=str(tmp_path / "s.db"),
    )
    assert r.yield_search.n_trials == 10 and r.yield_search.workers == 2
    assert r.am15g_search.storage == ":memory:"
    assert r.yield_optimum["annual_energy_kWh_m2"] >= r.am15g_optimum["annual_energy_kWh_m2"]
