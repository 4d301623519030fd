"""Spectra: ASTM G173-03 through pvlib, blackbody sun, CSV files, scaling."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import constants as sc
from scipy import integrate

import gapmatch as gm
from gapmatch.core.spectra import MAX_CONCENTRATION, SUN_DILUTION, BlackbodySun
from gapmatch.units import EV, HC_EV_NM, nm_to_ev


@pytest.mark.parametrize(
    "name, expected, tol",
    [
        # ASTM G173-03 states 1000.4 W m^-2 (global tilt) and 900.1 W m^-2 (direct +
        # circumsolar); tolerance: half a unit of the last quoted digit plus rounding.
        ("AM1.5G", 1000.4, 0.06),
        ("AM1.5D", 900.1, 0.06),
        # the extraterrestrial column (AM0) is checked against the trapezoid sum of the
        # reference script in test_references.py::test_standard_spectrum_integrals
    ],
)
def test_astm_g173_integrals(name, expected, tol):
    spec = gm.standard_spectrum(name)
    assert spec.total_irradiance_W_m2 == pytest.approx(expected, abs=tol)


def test_integral_matches_pvlib_trapezoid():
    # the engine's integration rule is the trapezoid on the tabulated points
    import pvlib

    table = pvlib.spectrum.get_reference_spectra()
    ref = np.trapezoid(table["global"].to_numpy(), table.index.to_numpy())
    assert gm.standard_spectrum("AM1.5G").total_irradiance_W_m2 == pytest.approx(ref, rel=1e-12)


@pytest.mark.parametrize("wavelength_nm", [437.3, 1013.0, 2719.5])
def test_photon_energy_constants(wavelength_nm):
    # h c / q from scipy.constants (exact SI defining constants), and the photon energy of
    # a few wavelengths of our own choosing computed from them directly: E = h c / (q
    # lambda). Tolerance 1e-15 relative: two or three roundings of float64 (~2e-16 each).
    assert HC_EV_NM == pytest.approx(sc.h * sc.c / sc.e * 1e9, rel=1e-15)
    expected_eV = sc.h * sc.c / (sc.e * wavelength_nm * 1e-9)
    assert float(nm_to_ev(wavelength_nm)) == pytest.approx(expected_eV, rel=1e-15)


def test_cumulative_flux_exact_at_nodes_and_monotone(am15g):
    e = np.linspace(0.2, 5.0, 5000) * EV
    f = am15g.photon_flux_above(e)
    assert np.all(np.diff(f) <= 0)
    # total photon flux: independent trapezoid on the photon flux per nm
    wl = am15g.wavelength_nm
    phi = am15g.irradiance_W_m2_nm * wl * 1e-9 / (sc.h * sc.c)
    total = np.trapezoid(phi, wl)
    assert am15g.photon_flux_above(np.array([0.1 * EV]))[0] == pytest.approx(total, rel=1e-12)
    # at a tabulated wavelength the cumulative flux is the partial trapezoid sum
    k = 700
    part = np.trapezoid(phi[: k + 1], wl[: k + 1])
    e_k = sc.h * sc.c / (wl[k] * 1e-9)
    # 1e-9: the energy round trip moves the point by ~1e-13 nm
    assert am15g.photon_flux_above(np.array([e_k]))[0] == pytest.approx(part, rel=1e-9)


def test_power_above_lowest_energy_is_total(am15g):
    assert am15g.power_above(np.array([0.05 * EV]))[0] == pytest.approx(
        am15g.total_irradiance_W_m2, rel=1e-12
    )
    assert am15g.power_above(np.array([6.0 * EV]))[0] == 0.0


def test_sun_geometry():
    # Dilution sin^2(theta_sun) with sin(theta_sun) = R_sun / au: the IAU 2015 nominal solar
    # radius 6.957e8 m (IAU 2015 Resolution B3) and scipy's astronomical unit (IAU 2012
    # Resolution B2); 1e-14 relative is rounding.
    assert SUN_DILUTION == pytest.approx((6.957e8 / sc.au) ** 2, rel=1e-14)
    # Rounded values as commonly quoted (from memory; De Vos 1980 uses a dilution of about
    # 2.16e-5): half-angle about 0.2666 deg, dilution about 2.16e-5, maximum concentration
    # about 46,200
    assert math.degrees(math.asin(math.sqrt(SUN_DILUTION))) == pytest.approx(0.2666, abs=5e-4)
    assert SUN_DILUTION == pytest.approx(2.16e-5, rel=0.005)
    assert MAX_CONCENTRATION == pytest.approx(46200, rel=0.002)


@pytest.mark.parametrize("t_sun", [5762.0, 6000.0])
def test_blackbody_integrals_against_quadrature(t_sun):
    bb = BlackbodySun(t_sun)
    # Stefan-Boltzmann (scipy.constants.sigma) times dilution
    assert bb.total_irradiance_W_m2 == pytest.approx(SUN_DILUTION * sc.sigma * t_sun**4, rel=1e-12)
    for eg in (0.3, 1.1, 2.5):
        ref_n, _ = integrate.quad(
            lambda e: float(bb.spectral_photon_flux(np.array(e))),
            eg * EV,
            40 * EV,
            epsabs=0,
            epsrel=1e-12,
            limit=200,
        )
        ref_p, _ = integrate.quad(
            lambda e: float(e * bb.spectral_photon_flux(np.array(e))),
            eg * EV,
            40 * EV,
            epsabs=0,
            epsrel=1e-12,
            limit=200,
        )
        # polylogarithm series vs adaptive quadrature: both near double precision
        assert bb.photon_flux_above(np.array([eg * EV]))[0] == pytest.approx(ref_n, rel=1e-9)
        assert bb.power_above(np.array([eg * EV]))[0] == pytest.approx(ref_p, rel=1e-9)


def test_blackbody_spectral_irradiance_integrates_to_total():
    bb = BlackbodySun(6000.0)
    wl = np.geomspace(50, 1e6, 200001)
    # dense trapezoid in wavelength: 1e-4 covers the discretisation error
    assert np.trapezoid(bb.spectral_irradiance_nm(wl), wl) == pytest.approx(
        bb.total_irradiance_W_m2, rel=1e-4
    )


def test_scaling_and_concentration(am15g):
    s = am15g.scaled(irradiance_W_m2=1000.0, concentration=10.0)
    assert s.total_irradiance_W_m2 == pytest.approx(10000.0, rel=1e-12)
    bb = BlackbodySun(6000.0).scaled(concentration=MAX_CONCENTRATION)
    assert bb.total_irradiance_W_m2 == pytest.approx(sc.sigma * 6000.0**4, rel=1e-12)


@pytest.mark.parametrize(
    "kwargs, match",
    [
        (dict(concentration=0.0), r"concentration: must be a number in \(0, 46"),
        (dict(concentration=1e5), r"concentration: must be a number in \(0, 46"),
        (dict(irradiance_W_m2=-5.0), r"irradiance_W_m2: must be a number in \(0, 100000\]"),
        (dict(spectrum="AM2"), r"spectrum: must be one of AM1.5G, AM1.5D, AM0, blackbody"),
        (
            dict(spectrum="blackbody", sun_temperature_K=100.0),
            r"sun_temperature_K: must be a number in \[1000, 20000\] K",
        ),
    ],
)
def test_spectrum_validation(kwargs, match):
    with pytest.raises(gm.InputError, match=match):
        gm.get_spectrum(**kwargs)


def _write(tmp_path, text):
    p = tmp_path / "sp.csv"
    p.write_text(text)
    return p


@pytest.mark.parametrize(
    "text, match",
    [
        ("wavelength_nm,irradiance\n500,1.0\n", r"sp.csv: needs at least two data rows, found 1"),
        ("500,1\n600,abc\n", r"sp.csv: row 2: not a number"),
        ("500,1\n490,1\n", r"sp.csv: row 2: wavelengths must be strictly increasing"),
        ("500,1\n600,-1\n", r"sp.csv: row 2: irradiance must be >= 0"),
        ("500,1\n600,nan\n", r"sp.csv: row 2: values must be finite"),
        ("-5,1\n600,1\n", r"sp.csv: row 1: wavelength must be > 0 nm"),
        ("500\n600,1\n", r"sp.csv: row 1: needs two columns"),
    ],
)
def test_csv_validation(tmp_path, text, match):
    with pytest.raises(gm.InputError, match=match):
        gm.read_spectrum_csv(_write(tmp_path, text))


def test_csv_missing_file(tmp_path):
    with pytest.raises(gm.InputError, match="file not found"):
        gm.read_spectrum_csv(tmp_path / "nope.csv")


def test_csv_round_trip_reproduces_standard(tmp_path, am15g):
    lines = ["# exported for a test", "wavelength_nm,irradiance_W_m2_nm"]
    lines += [
        f"{float(w)!r},{float(v)!r}"
        for w, v in zip(am15g.wavelength_nm, am15g.irradiance_W_m2_nm, strict=True)
    ]
    spec = gm.read_spectrum_csv(_write(tmp_path, "\n".join(lines)))
    assert spec.total_irradiance_W_m2 == pytest.approx(am15g.total_irradiance_W_m2, rel=1e-14)
    a = gm.evaluate([1.7, 1.1], spectrum=spec).efficiency
    b = gm.evaluate([1.7, 1.1], spectrum=am15g).efficiency
    assert a == pytest.approx(b, rel=1e-14)
