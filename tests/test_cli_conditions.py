"""Per-junction conditions, spectrum columns, and options the command line refuses rather
than ignore.

Per-junction values are checked against the Python API called with the same values
(exact equality: the command line must make the same call), and against physics the API
does not share with the command line: a junction's V_oc falls by (kT/q) ln(1/ERE) when
its ERE drops (detailed balance, W. Shockley and H. J. Queisser, J. Appl. Phys. 32, 510
(1961); the ERE form: M. A. Green, Prog. Photovolt. 20, 472 (2012)).
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy.constants import Boltzmann, elementary_charge

import gapmatch as gm
from gapmatch.cli import main


def _json(capsys, argv):
    status = main(argv)
    out = capsys.readouterr()
    assert status == 0, out.err
    return json.loads(out.out)


def _refused(capsys, argv) -> str:
    try:
        status = main(argv)
    except SystemExit as stop:
        status = stop.code
    err = capsys.readouterr().err
    assert status == 2, err
    assert err.count("\n") == 1 and "Traceback" not in err, err
    return err


def test_per_junction_ere_and_temperature_reach_the_api(capsys):
    d = _json(
        capsys,
        ["evaluate", "--gaps", "1.8", "1.1", "--ere", "0.01", "0.001"]
        + ["--temperature", "300", "320", "--json"],
    )
    ref = gm.evaluate([1.8, 1.1], ere=[0.01, 0.001], temperature_K=[300, 320])
    assert d["efficiency"] == ref.efficiency[0]
    assert d["conditions"]["ere"] == [0.01, 0.001]
    assert d["conditions"]["temperature_K"] == [300.0, 320.0]


def test_one_ere_per_junction_lowers_each_voc_by_kt_ln_ere(capsys):
    # independent junctions: junction 2 alone gets ERE 1e-3, so only its V_oc drops, by
    # (kT/q) ln(1e3) = 0.1786 V at 300 K (scipy.constants). Tolerance 1e-6 V: the
    # photocurrent is the same and V_oc = (kT/q) ln(J_ph/J_0 + 1) is exact up to the +1.
    base = ["evaluate", "--gaps", "1.8", "1.1", "--connection", "independent", "--json"]
    one = _json(capsys, base)
    two = _json(capsys, [*base, "--ere", "1", "0.001"])
    drop = Boltzmann * 300 / elementary_charge * math.log(1e3)
    v1 = [j["voc_V"] for j in one["junctions"]]
    v2 = [j["voc_V"] for j in two["junctions"]]
    assert v2[0] == pytest.approx(v1[0], abs=1e-9)
    assert v1[1] - v2[1] == pytest.approx(drop, abs=1e-6)


@pytest.mark.parametrize(
    ("argv", "flag"),
    [
        (["evaluate", "--gaps", "1.8", "1.1", "--ere", "0.1", "0.1", "0.1"], "--ere"),
        (["evaluate", "--gaps", "1.8", "--temperature", "300", "320"], "--temperature"),
        (["map", "--step", "0.5", "--temperature", "300", "310", "320"], "--temperature"),
        (["optimise", "--junctions", "3", "--ere", "0.1", "0.1", "--storage", ":memory:"], "--ere"),
    ],
)
def test_wrong_number_of_per_junction_values_is_refused(capsys, argv, flag):
    err = _refused(capsys, argv)
    assert f"error: {flag}: needs one value, or one per junction" in err


def test_map_and_optimise_take_per_junction_values(capsys):
    m = _json(
        capsys,
        ["map", "--step", "0.5", "--connections", "series", "--ere", "0.1", "0.01", "--json"],
    )
    assert m["conditions"]["ere"] == [0.1, 0.01]


def _two_column_file(path, column: str):
    import pvlib

    t = pvlib.spectrum.get_reference_spectra(standard="ASTM G173-03")
    wl = t.index.to_numpy(float)
    rows = np.column_stack([wl, t[column].to_numpy(float)])
    np.savetxt(path, rows, delimiter=",", header=f"wavelength_nm,{column}", comments="")
    return np.trapezoid(t[column].to_numpy(float), wl)


def test_spectrum_column_picks_one_column_of_a_wide_file(capsys, tmp_path):
    # pvlib's ASTM G173-03 table written with its three columns: the direct column, by
    # name or by number, gives the same stack as a file holding that column alone, and
    # its integral is the trapezoid of pvlib's data (900.14 W m^-2)
    import pvlib

    t = pvlib.spectrum.get_reference_spectra(standard="ASTM G173-03")
    wide = tmp_path / "g173.csv"
    t.to_csv(wide, index_label="wavelength_nm")
    alone = tmp_path / "direct.csv"
    total = _two_column_file(alone, "direct")
    base = ["evaluate", "--gaps", "1.7", "1.1", "--json"]
    by_name = _json(capsys, [*base, "--spectrum-file", str(wide), "--spectrum-column", "direct"])
    number = 2 + list(t.columns).index("direct")  # the wavelength column is number 1
    by_number = _json(
        capsys, [*base, "--spectrum-file", str(wide), "--spectrum-column", str(number)]
    )
    ref = _json(capsys, [*base, "--spectrum-file", str(alone)])
    assert by_name["efficiency"] == by_number["efficiency"] == ref["efficiency"]
    # tolerance 1e-9 relative: the same trapezoid over the same doubles
    assert by_name["incident_W_m2"] == pytest.approx(total, rel=1e-9)
    assert total == pytest.approx(900.14, abs=0.01)


def test_spectrum_column_with_concentration(capsys, tmp_path):
    import pvlib

    t = pvlib.spectrum.get_reference_spectra(standard="ASTM G173-03")
    wide = tmp_path / "g173.csv"
    t.to_csv(wide, index_label="wavelength_nm")
    d = _json(
        capsys,
        ["evaluate", "--gaps", "1.4", "--spectrum-file", str(wide), "--spectrum-column"]
        + ["global", "--concentration", "10", "--json"],
    )
    g = np.trapezoid(t["global"].to_numpy(float), t.index.to_numpy(float))
    assert d["incident_W_m2"] == pytest.approx(10 * g, rel=1e-9)


def test_spectrum_column_without_a_file_or_with_optimise_is_refused(capsys, tmp_path):
    err = _refused(capsys, ["evaluate", "--gaps", "1.4", "--spectrum-column", "2"])
    assert "--spectrum-column: applies to --spectrum-file only" in err
    f = tmp_path / "s.csv"
    _two_column_file(f, "global")
    err = _refused(
        capsys,
        ["optimise", "--junctions", "2", "--spectrum-file", str(f), "--spectrum-column", "2"]
        + ["--storage", ":memory:"],
    )
    assert "--spectrum-column" in err


def test_study_file_with_other_options_is_refused(capsys):
    err = _refused(
        capsys,
        ["optimise", "--study", "configs/demo.toml", "--spectrum", "AM0", "--temperature"]
        + ["350", "--connection", "independent", "--junctions", "4", "--storage", ":memory:"],
    )
    for flag in ("--junctions", "--connection", "--spectrum", "--temperature"):
        assert flag in err
    assert err.startswith("gapmatch optimise: error: --study:")


def test_study_file_with_the_default_value_typed_is_refused_too(capsys):
    # typed, even at its default: the option is refused rather than silently ignored
    err = _refused(
        capsys,
        ["optimise", "--study", "configs/demo.toml", "--connection", "series"]
        + ["--storage", ":memory:"],
    )
    assert "--connection" in err


@pytest.mark.parametrize("spectrum", ["AM1.5G", "AM0", "AM1.5D"])
def test_sun_temperature_with_a_standard_spectrum_is_refused(capsys, spectrum):
    err = _refused(
        capsys, ["evaluate", "--gaps", "1.4", "--spectrum", spectrum, "--sun-temperature", "5800"]
    )
    assert "--sun-temperature: applies to --spectrum blackbody only" in err


def test_sun_temperature_applies_to_a_blackbody(capsys):
    # a hotter sun at one sun-disc etendue gives more power: sigma T^4 dilution
    # (Stefan-Boltzmann, scipy.constants; tolerance 1e-6 relative: quadrature of Planck)
    from scipy.constants import Stefan_Boltzmann

    d = _json(
        capsys,
        ["evaluate", "--gaps", "1.4", "--spectrum", "blackbody", "--sun-temperature", "5800"]
        + ["--json"],
    )
    from gapmatch.core.spectra import SUN_DILUTION

    assert d["incident_W_m2"] == pytest.approx(
        Stefan_Boltzmann * 5800.0**4 * SUN_DILUTION, rel=1e-6
    )


def test_a_junction_fixed_twice_is_refused(capsys):
    for fix in (["--fix", "1=1.8", "--fix", "1=1.7"], ["--fix", "2=1.1", "bottom=1.0"]):
        err = _refused(capsys, ["optimise", "--junctions", "2", "--storage", ":memory:", *fix])
        assert "--fix: junction" in err and "fixed twice" in err


def test_two_fixes_of_different_junctions_are_both_kept(capsys):
    from gapmatch.cli.optimise import _fixed

    assert _fixed(["1=1.8", "bottom=1.1"], 3) == {1: 1.8, 3: 1.1}


@pytest.mark.parametrize(
    ("option", "values"),
    [
        ("--thickness", ["100", "200", "300"]),
        ("--refractive-index", ["3", "3", "3"]),
        ("--collection-efficiency", ["1", "1", "1"]),
        ("--coupling-fraction", ["1", "1"]),  # one per interface: 1 for 2 junctions
        ("--varshni-alpha", ["4e-4", "4e-4", "4e-4"]),
    ],
)
def test_more_values_than_junctions_are_refused(capsys, option, values):
    argv = ["evaluate", "--gaps", "1.7", "1.1", option, *values]
    if option == "--varshni-alpha":
        argv += ["--varshni-beta", "600"]
    err = _refused(capsys, argv)
    assert f"error: {option}: needs one value, or one per" in err


def test_weather_refuses_a_cell_temperature(capsys):
    err = _refused(capsys, ["map", "--weather", "demo", "--temperature", "320"])
    assert "--temperature cannot be used with it" in err
