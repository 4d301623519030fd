"""Spectrum and absorption CSV files: units from the header, column choice, strict numbers,
plausibility limits, and files that are not what they claim to be.

Unit conversions are checked against scipy.constants (h, c, e) and against pvlib's packaged
ASTM G173-03 table written out in other units; nothing here compares the reader with itself.
"""

from __future__ import annotations

import time

import numpy as np
import pvlib
import pytest
from scipy import constants as sc

import gapmatch as gm
from gapmatch.io.absorption import read_alpha_csv
from gapmatch.io.tables import parse_number

#: h c / e in eV nm, from scipy.constants (CODATA), independent of gapmatch.units
HC_EV_NM = sc.h * sc.c / sc.e * 1e9


@pytest.fixture(scope="module")
def g173():
    t = pvlib.spectrum.get_reference_spectra(standard="ASTM G173-03")
    return t.index.to_numpy(float), t["global"].to_numpy(float), t


def _trapz(x, y):
    return float(np.sum(0.5 * np.diff(x) * (y[1:] + y[:-1])))


def _write(tmp_path, text, name="sp.csv"):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def _table(header, xs, ys):
    return "\n".join([header, *(f"{float(x)!r},{float(y)!r}" for x, y in zip(xs, ys, strict=True))])


@pytest.mark.parametrize(
    "header, x_of_nm, y_of_nm_W",
    [
        # µm axis, per-µm irradiance: 1 W m^-2 nm^-1 = 1000 W m^-2 µm^-1
        ("wavelength [um],irradiance [W m^-2 um^-1]", lambda w: w / 1e3, lambda y, w: y * 1e3),
        ("Wavelength (µm),E (W/m2/µm)", lambda w: w / 1e3, lambda y, w: y * 1e3),
        # 1 mW cm^-2 = 10 W m^-2
        ("wavelength_nm,irradiance_mW_cm2_nm", lambda w: w, lambda y, w: y / 10.0),
        # per-eV density: E_eV = E_nm * lambda^2 / (h c / e)
        (
            "energy [eV],irradiance [W m-2 eV-1]",
            lambda w: HC_EV_NM / w,
            lambda y, w: y * w**2 / HC_EV_NM,
        ),
    ],
)
def test_header_units_are_converted(tmp_path, g173, header, x_of_nm, y_of_nm_W):
    wl, irr, _ = g173
    xs, ys = x_of_nm(wl), y_of_nm_W(irr, wl)
    spec = gm.read_spectrum_csv(_write(tmp_path, _table(header, xs, ys)))
    # the trapezoid on the same nodes: only rounding of the unit factors differs
    # (1e-12 relative leaves room for ~1e4 ulp of accumulated rounding)
    assert spec.total_irradiance_W_m2 == pytest.approx(_trapz(wl, irr), rel=1e-12)
    np.testing.assert_allclose(spec.wavelength_nm, wl, rtol=1e-12)
    assert "converted" in spec.source


def test_assumed_units_are_stated(tmp_path):
    spec = gm.read_spectrum_csv(_write(tmp_path, "lambda,value\n300,1\n1200,1\n"))
    assert "wavelength unit nm assumed" in spec.source
    assert "W m^-2 nm^-1 assumed" in spec.source
    spec = gm.read_spectrum_csv(_write(tmp_path, "300,1\n1200,1\n"))
    assert "no header" in spec.source


def test_several_columns_need_a_choice(tmp_path, g173):
    _, _, t = g173
    lines = ["wavelength_nm,extraterrestrial,global,direct"]
    lines += [
        f"{w!r},{a!r},{b!r},{c!r}"
        for w, a, b, c in t[["extraterrestrial", "global", "direct"]].itertuples()
    ]
    p = _write(tmp_path, "\n".join(lines))
    with pytest.raises(gm.InputError, match=r"has 4 columns .*'global'.*choose the irradiance"):
        gm.read_spectrum_csv(p)
    by_name = gm.read_spectrum_csv(p, column="Global")
    by_number = gm.read_spectrum_csv(p, column=3)
    ref = gm.standard_spectrum("AM1.5G")
    for spec in (by_name, by_number):
        assert spec.total_irradiance_W_m2 == pytest.approx(ref.total_irradiance_W_m2, rel=1e-14)
    with pytest.raises(gm.InputError, match=r"did you mean 'global'"):
        gm.read_spectrum_csv(p, column="globl")
    with pytest.raises(gm.InputError, match=r"column number in 2\.\.4"):
        gm.read_spectrum_csv(p, column=5)
    spec = gm.get_spectrum(spectrum_file=p, spectrum_column="direct")
    assert spec.total_irradiance_W_m2 == pytest.approx(
        gm.standard_spectrum("AM1.5D").total_irradiance_W_m2, rel=1e-14
    )


@pytest.mark.parametrize(
    "cell, ok",
    [
        ("280", True),
        ("2.8e2", True),
        ("-.5", True),
        ("280_0", False),
        ("0x10", False),
        ("1,5", False),
        ("", False),
    ],
)
def test_numbers_are_parsed_strictly(cell, ok):
    if ok:
        assert parse_number(cell) == float(cell)
    else:
        with pytest.raises(ValueError):
            parse_number(cell)


@pytest.mark.parametrize(
    "text, match",
    [
        ("wavelength_nm,irradiance\n280_0,1\n3000,1\n", r"row 2: not a number"),
        # 1e308 W m^-2 nm^-1 over 100 nm overflows the integral
        ("300,1e308\n400,1e308\n", r"overflow"),
        # wavelengths in µm without a unit in the header
        ("0.3,1\n4.0,1\n", r"0\.3-4 nm lie outside the plausible 100-100000 nm.*\[um\]"),
        ("300,1\n1e300,1\n", r"outside the plausible"),
        # irradiance in W m^-2 um^-1 without a unit: 1000x too large
        ("wavelength_nm,irradiance\n300,1500\n1200,1500\n", r"integrates to 1\.35e\+06 W m\^-2"),
        # irradiance in W cm^-2 nm^-1 written as if per m^2: 1e4 too small
        ("wavelength_nm,irradiance\n300,1e-4\n1200,1e-4\n", r"outside the plausible 1-100000"),
    ],
)
def test_implausible_files_are_refused(tmp_path, text, match):
    with pytest.raises(gm.InputError, match=match):
        gm.get_spectrum(spectrum_file=_write(tmp_path, text))


def test_rescaling_accepts_any_positive_integral(tmp_path):
    p = _write(tmp_path, "wavelength_nm,irradiance\n300,1e-4\n1200,1e-4\n")
    spec = gm.get_spectrum(spectrum_file=p, irradiance_W_m2=1000.0)
    assert spec.total_irradiance_W_m2 == pytest.approx(1000.0, rel=1e-14)


def test_not_utf8_and_not_csv(tmp_path):
    p = tmp_path / "latin1.csv"
    p.write_bytes("wavelength_nm,irradiance \xb5\n300,1\n1200,1\n".encode("latin-1"))
    with pytest.raises(gm.InputError, match="not UTF-8 text"):
        gm.read_spectrum_csv(p)
    p = tmp_path / "long.csv"
    p.write_text("300," + "1" * 200_000 + "\n")
    with pytest.raises(gm.InputError, match="not a readable CSV table"):
        gm.read_spectrum_csv(p)


def test_bom_is_accepted(tmp_path):
    p = tmp_path / "bom.csv"
    p.write_bytes("\ufeffwavelength_nm,irradiance\n300,1\n1200,1\n".encode())
    assert gm.read_spectrum_csv(p).total_irradiance_W_m2 == pytest.approx(900.0)


def test_message_does_not_echo_a_whole_file(tmp_path):
    secret = "x" * 500
    p = _write(tmp_path, f"wavelength_nm,irradiance\n300,{secret}\n")
    with pytest.raises(gm.InputError) as err:
        gm.read_spectrum_csv(p)
    assert secret not in str(err.value)
    assert len(str(err.value)) < 300


def test_crowded_wavelengths_stay_fast_and_exact(tmp_path):
    """500,000 points within 0.1 nm plus one far point: the segment look-up falls back
    to a binary search (the bucket walk would take 5e5 steps per query); values agree
    with a direct evaluation of the trapezoid cumulative integral."""
    wl = np.concatenate([500.0 + np.linspace(0.0, 0.1, 500_000), [4000.0]])
    irr = np.ones_like(wl)
    spec = gm.core.spectra.TabulatedSpectrum(wl, irr)
    e = sc.h * sc.c / (np.array([500.05, 700.0, 3999.0]) * 1e-9)
    t0 = time.process_time()
    got = spec.power_above(np.tile(e, 10_000))[:3]
    # generous: a bucket walk of 5e5 passes over 3e4 queries would take minutes
    assert time.process_time() - t0 < 5.0
    # irradiance 1 W m^-2 nm^-1 everywhere: power above E = wavelength span up to hc/E
    np.testing.assert_allclose(got, np.array([500.05, 700.0, 3999.0]) - 500.0, rtol=1e-9)


@pytest.mark.parametrize(
    "header, factor",
    [
        ("wavelength_nm,alpha_cm-1", 1.0),
        ("wavelength_nm,alpha [1/m]", 0.01),
        ("wavelength [um],alpha [um^-1]", 1e4),
    ],
)
def test_alpha_units(tmp_path, header, factor):
    xs = [400.0, 800.0, 1200.0]
    if "[um]" in header:
        xs = [x / 1e3 for x in xs]
    p = _write(tmp_path, _table(header, xs, [1e4, 1e3, 1e2]), "alpha.csv")
    tab = read_alpha_csv(p)
    # stored in m^-1 (1 cm^-1 = 100 m^-1), energies ascending so values reverse
    expected = np.array([1e4, 1e3, 1e2])[::-1] * factor * 100.0
    np.testing.assert_allclose(tab.alpha_per_m, expected, rtol=1e-12)
    np.testing.assert_allclose(
        tab.energy_J, sc.h * sc.c / (np.array([1200.0, 800.0, 400.0]) * 1e-9), rtol=1e-12
    )
