"""Yield engine: photon tables, the row solvers, closure under constant conditions and
physical invariants.

External references: the core's tabulated-spectrum integrals and batch solver (which
tests/test_engine.py checks against brute-force scipy maximisation), ASTM G173-03
through pvlib, and the Greensboro TMY3 sample shipped with pvlib (NREL open data).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import gapmatch as gm
from gapmatch.core.connections import solve_series
from gapmatch.core.diodes import ln_j0_radiative, make_diodes
from gapmatch.core.engine import solve_stacks
from gapmatch.core.hourly import PhotonTable, series_mpp_boltzmann, step_photocurrents_hourly
from gapmatch.energy import CellTemperature, Mounting, _kernels, demo_weather_path, read_weather
from gapmatch.energy.api import yield_from_spectra
from gapmatch.energy.spectra import HourlySpectra, hourly_spectra
from gapmatch.units import EV, K_B, Q


@pytest.fixture(scope="module")
def site():
    return hourly_spectra(read_weather(demo_weather_path()), Mounting(36.0, 180.0))


def test_photon_table_equals_tabulated_spectrum(am15g):
    """Every hour = AM1.5G: the table's look-ups equal the core spectrum's to rounding."""
    tab = PhotonTable(am15g.wavelength_nm, np.tile(am15g.irradiance_W_m2_nm, (3, 1)))
    e = np.linspace(0.3, 4.5, 997) * EV
    f = tab.photon_flux_above(e)
    np.testing.assert_allclose(f, np.tile(am15g.photon_flux_above(e), (3, 1)), rtol=1e-13)
    np.testing.assert_allclose(tab.irradiance_W_m2, am15g.total_irradiance_W_m2, rtol=1e-14)
    rows = tab.photon_flux_above_rows(np.tile(e, (3, 1)))
    np.testing.assert_array_equal(rows, f)
    # the (H, E) table on the shared grid is the cumulative flux above each node
    np.testing.assert_allclose(
        tab.flux_above_m2_s[0], am15g.photon_flux_above(tab.energy_J), rtol=1e-12
    )


def test_hourly_photocurrents_match_core(am15g):
    from gapmatch.core.engine import step_photocurrents

    g = np.array([[1.9, 1.4, 0.9], [1.6, 1.6, 1.0], [1.2, 1.5, 0.7]]) * EV
    tab = PhotonTable(am15g.wavelength_nm, am15g.irradiance_W_m2_nm[None, :] * [[1.0], [0.5]])
    j = step_photocurrents_hourly(tab, g)
    ref = step_photocurrents(g, am15g)
    np.testing.assert_allclose(j[0], ref, rtol=1e-13)
    np.testing.assert_allclose(j[1], 0.5 * ref, rtol=1e-13)


@pytest.mark.parametrize("n", [2, 3])
def test_row_solvers_agree_with_core_series(n):
    """The compiled kernel and the numpy solver reproduce core.solve_series (which
    tests/test_engine.py checks against scipy), to 1e-12 relative: both run the same
    Newton iteration to XTOL_REL = 1e-13."""
    rng = np.random.default_rng(3)
    m = 20000
    g = np.sort(rng.uniform(0.7, 2.4, (m, n)), axis=1)[:, ::-1] * EV
    jph = rng.uniform(0.0, 300.0, (m, n))
    jph[:50, 0] = 0.0  # dark rows
    t = rng.uniform(250.0, 360.0, (m, 1)) * np.ones((1, n))
    ref = solve_series(make_diodes("boltzmann", jph, g, t, 0.3, 1.0)).p_mpp
    p_np, _ = series_mpp_boltzmann(jph, g, t, 0.3)
    np.testing.assert_allclose(p_np, ref, rtol=1e-12, atol=1e-300)
    if _kernels.HAVE_NUMBA:
        lnj0 = ln_j0_radiative(g, t) - np.log(0.3)
        p_c, _ = _kernels.series_mpp_rows(jph, lnj0, K_B * t / Q)
        np.testing.assert_allclose(p_c, ref, rtol=1e-12, atol=1e-300)
    assert np.all(p_np[:50] == 0.0)


@pytest.mark.parametrize("gaps", [[1.73, 1.12], [1.9, 1.37, 0.94], [1.34]])
def test_constant_conditions_closure(am15g, gaps):
    """A year whose every hour is AM1.5G at 25 deg C: energy efficiency = AM1.5G efficiency
    at 25 deg C to 1e-9 (our tolerance; both are the same sums of the same
    maximum-power points, the row solvers converge to 1e-13)."""
    times = pd.date_range("1990-01-01 00:30", periods=8760, freq="h", tz="Etc/GMT+5")
    hs = HourlySpectra.constant(am15g.wavelength_nm, am15g.irradiance_W_m2_nm, times)
    r = yield_from_spectra(hs, gaps, "series", cell_temperature=CellTemperature("fixed"))
    for c in ("series", "independent"):
        want = solve_stacks(np.array([gaps]) * EV, am15g, c, temperature_K=298.15)
        eff = want.op.p_mpp / want.incident_W_m2
        assert r.energy_efficiency(c)[0] == pytest.approx(eff[0], rel=1e-9, abs=1e-12)
        assert r.reference_efficiency[c][0] == pytest.approx(eff[0], rel=1e-12)
    assert r.poa_irradiation_kWh_m2 == pytest.approx(8760 * am15g.total_irradiance_W_m2 / 1000)


def test_chunking_and_kernel_do_not_change_results(site):
    g = np.array([[1.73, 1.12], [1.9, 1.0], [1.6, 0.95]])
    hs = site.take(slice(0, 700))
    a = yield_from_spectra(hs, g, chunk_rows=1 << 20)
    b = yield_from_spectra(hs, g, chunk_rows=97)
    for c in ("series", "independent"):
        np.testing.assert_allclose(
            a.arrays.energy_bins_Wh_m2[c], b.arrays.energy_bins_Wh_m2[c], rtol=1e-12
        )
    from gapmatch.energy.engine import run_yield

    tab = hs.photon_table()
    tc = np.full(hs.hours, 310.0)
    bins = 24 * (hs.times.month.to_numpy() - 1) + hs.times.hour.to_numpy()
    # a stack whose top gap is the smaller one absorbs nothing in the bottom junction:
    # the compiled path's photocurrent rule must agree with the core's there too
    g2 = np.vstack([g, [1.2, 1.5]])
    x = run_yield(tab, np.ones(hs.hours), tc, bins, g2 * EV, ("series", "independent"))
    y = run_yield(
        tab, np.ones(hs.hours), tc, bins, g2 * EV, ("series", "independent"), kernel="numpy"
    )
    for c in ("series", "independent"):
        np.testing.assert_allclose(x.energy_bins_Wh_m2[c], y.energy_bins_Wh_m2[c], rtol=1e-12)
    np.testing.assert_allclose(x.charge_bins_Ah_m2, y.charge_bins_Ah_m2, rtol=1e-12)
    assert np.all(x.energy_bins_Wh_m2["series"][:, -1] == 0.0)


gap_pairs = st.tuples(st.floats(1.3, 2.3), st.floats(0.6, 1.25))


@settings(max_examples=15)
@given(pair=gap_pairs, ere=st.sampled_from([1.0, 1e-2, 1e-4]))
def test_invariants_over_the_year(site, pair, ere):
    """Independent >= series in every hour and the year (the series string is one
    constrained operating point of the same junctions); energy efficiency <= the best
    hourly efficiency (a weighted mean cannot exceed its largest term)."""
    hs = site.take(slice(0, 4400, 7))
    r = yield_from_spectra(hs, list(pair), ere=ere, keep_hourly=True)
    ps = r.arrays.hourly_power_W_m2["series"]
    pi = r.arrays.hourly_power_W_m2["independent"]
    assert np.all(pi >= ps * (1 - 1e-12) - 1e-12)
    assert r.annual_energy_kWh_m2("independent")[0] >= r.annual_energy_kWh_m2("series")[0]
    assert 0.0 <= r.mismatch_loss[0] < 1.0
    for c in r.connections:
        assert r.energy_efficiency(c)[0] <= r.best_hourly_efficiency(c)[0] * (1 + 1e-12)
    assert r.monthly_energy_kWh_m2("series").sum() == pytest.approx(
        r.annual_energy_kWh_m2("series")[0], rel=1e-12
    )


def test_hot_cells_and_gap_temperature(site):
    """Hotter cells deliver less; a Varshni gap that shrinks with temperature moves the
    series optimum; the hour-of-day x month tables are consistent with the totals."""
    hs = site.take(slice(0, 2000))
    g = [1.73, 1.12]
    cold = yield_from_spectra(hs, g, cell_temperature=CellTemperature("fixed", fixed_K=280.0))
    hot = yield_from_spectra(hs, g, cell_temperature=CellTemperature("fixed", fixed_K=340.0))
    assert hot.annual_energy_kWh_m2()[0] < cold.annual_energy_kWh_m2()[0]
    v = yield_from_spectra(hs, g, varshni=(4.73e-4, 636.0))  # silicon-like, from memory
    assert v.assumptions["gap_temperature"].startswith("Varshni")
    assert v.annual_energy_kWh_m2()[0] != pytest.approx(
        yield_from_spectra(hs, g).annual_energy_kWh_m2()[0], rel=1e-6
    )
    f = v.hour_month_frame()
    assert f["energy_kWh_m2"].sum() == pytest.approx(v.annual_energy_kWh_m2()[0])
    assert np.nanmax(f["efficiency"]) <= v.best_hourly_efficiency()[0] * (1 + 1e-12)
    assert (f["current_ratio_top_to_next"].dropna() > 0).all()


def test_result_tables(site):
    r = yield_from_spectra(site.take(slice(0, 500)), [[1.73, 1.12], [1.63, 0.96]])
    df = r.to_frame()
    assert list(df.columns[:3]) == ["gap_1_eV", "gap_2_eV", "poa_irradiation_kWh_m2"]
    assert {"annual_energy_series_kWh_m2", "mismatch_loss_pct"} <= set(df.columns)
    s = r.summary(1)
    assert len(s["monthly_energy_kWh_m2"]) == 12
    assert "theoretical limit" in s["caution"] and "IEC 61853" in s["caution"]
    assert s["energy_efficiency"] == pytest.approx(
        s["annual_energy_kWh_m2"] / s["poa_irradiation_kWh_m2"]
    )
    with pytest.raises(gm.InputError, match="connection"):
        r.annual_energy_kWh_m2("voltage-matched")
