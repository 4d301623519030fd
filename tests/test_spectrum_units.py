"""Spectrum CSV units checked against pvlib's packaged ASTM G173-03 table: the same
spectrum written in other units gives the same efficiency, a file of several spectra
needs its column named (in a study file too), and absorption tables state how they are
extended."""

from __future__ import annotations

import numpy as np
import pvlib
import pytest

import gapmatch as gm
from gapmatch.io.absorption import read_alpha_csv
from gapmatch.study import load_study

GAPS = [1.73, 1.12]


@pytest.fixture(scope="module")
def g173():
    # ASTM G173-03 as packaged with pvlib (the outside reference)
    return pvlib.spectrum.get_reference_spectra(standard="ASTM G173-03")


def _write(path, header, x, columns):
    rows = [",".join(repr(float(v)) for v in vals) for vals in zip(x, *columns, strict=True)]
    path.write_text("\n".join([header, *rows]) + "\n", encoding="utf-8")
    return path


@pytest.mark.parametrize(
    "header, x_of_nm, scale",
    [
        # µm and W m^-2 µm^-1: wavelength / 1000, irradiance x 1000
        ("wavelength [um],global [W m^-2 um^-1]", lambda w: w / 1e3, 1e3),
        ("Wavelength (µm),E (W/m2/µm)", lambda w: w / 1e3, 1e3),
        # mW cm^-2 nm^-1: 1 W m^-2 = 0.1 mW cm^-2
        ("wavelength_nm,irradiance [mW cm^-2 nm^-1]", lambda w: w, 0.1),
    ],
)
def test_g173_in_other_units_gives_the_same_efficiency(tmp_path, g173, header, x_of_nm, scale):
    wl = g173.index.to_numpy(float)
    irr = g173["global"].to_numpy(float)
    p = _write(tmp_path / "g173.csv", header, x_of_nm(wl), [irr * scale])
    got = gm.evaluate(GAPS, "series", spectrum_file=p)
    ref = gm.evaluate(GAPS, "series", spectrum="AM1.5G")
    # only the rounding of the unit factors differs (a few ulp per node): 1e-9 relative
    assert got.efficiency[0] == pytest.approx(ref.efficiency[0], rel=1e-9)
    assert got.illumination.total_irradiance_W_m2 == pytest.approx(1000.37, abs=0.01)
    assert "converted" in got.illumination.spectrum.source


def test_no_header_says_what_was_assumed(tmp_path, g173):
    wl = g173.index.to_numpy(float)
    p = _write(tmp_path / "plain.csv", "# ASTM G173-03 global, W m^-2 nm^-1", wl, [g173["global"]])
    spec = gm.read_spectrum_csv(p)
    assert "no header: wavelength [nm] and irradiance [W m^-2 nm^-1] assumed" in spec.source


def _g173_file(tmp_path, g173):
    cols = ["extraterrestrial", "global", "direct"]
    header = "wavelength_nm," + ",".join(cols)
    return _write(tmp_path / "g173-all.csv", header, g173.index, [g173[c] for c in cols])


def test_three_spectra_need_a_chosen_column(tmp_path, g173):
    p = _g173_file(tmp_path, g173)
    with pytest.raises(gm.InputError) as exc:
        gm.read_spectrum_csv(p)
    msg = str(exc.value)
    assert "has 4 columns" in msg and "'extraterrestrial'" in msg
    assert "is not taken silently" in msg and "extraterrestrial spectrum" in msg


def test_study_names_the_column(tmp_path, g173):
    _g173_file(tmp_path, g173)
    base = '[study]\nname = "s"\ntitle = "t"\n[conditions]\nspectrum_file = "g173-all.csv"\n'
    bad = tmp_path / "bad.toml"
    bad.write_text(base, encoding="utf-8")
    with pytest.raises(gm.InputError, match=r"bad.toml: conditions.spectrum_file .*has 4 columns"):
        load_study(bad)
    good = tmp_path / "good.toml"
    good.write_text(base + 'spectrum_column = "global"\nconcentration = 2.0\n', encoding="utf-8")
    st = load_study(good)
    got = gm.evaluate(GAPS, "series", st.illumination, **st.cell.options())
    ref = gm.evaluate(GAPS, "series", "AM1.5G", concentration=2.0)
    assert got.efficiency[0] == pytest.approx(ref.efficiency[0], rel=1e-9)
    # the column travels with the result: another temperature, same spectrum
    hot = gm.reevaluate(got, temperature_K=330.0, concentration=3.0)
    ref3 = gm.evaluate(GAPS, "series", "AM1.5G", concentration=3.0, temperature_K=330.0)
    assert hot.efficiency[0] == pytest.approx(ref3.efficiency[0], rel=1e-9)
    # and the search of the study runs under it
    from gapmatch.search.study_table import problem_from_study

    prob = problem_from_study(st)
    assert prob.objective.evaluate(np.array([GAPS])).value[0] == pytest.approx(
        ref.efficiency[0], rel=1e-9
    )
    col = tmp_path / "col.toml"
    col.write_text(base.replace('spectrum_file = "g173-all.csv"\n', "spectrum_column = 3\n"))
    with pytest.raises(
        gm.InputError, match=r"conditions.spectrum_column: applies to a spectrum_file"
    ):
        load_study(col)


@pytest.mark.parametrize(
    "cell, shown",
    [("280_0", "'280_0,1'"), ("1e400", None), ("the budget is secret", None)],
)
def test_bad_cells_are_refused_and_text_is_not_echoed(tmp_path, cell, shown):
    p = tmp_path / "s.csv"
    p.write_text(f"wavelength_nm,irradiance\n{cell},1\n2000,1\n", encoding="utf-8")
    with pytest.raises(gm.InputError) as exc:
        gm.read_spectrum_csv(p)
    msg = str(exc.value)
    assert "row 2" in msg and "secret" not in msg
    if shown:
        assert shown in msg


def test_alpha_table_states_its_extension(tmp_path):
    p = tmp_path / "alpha.csv"
    p.write_text("wavelength_nm,alpha_cm-1\n400,1e5\n800,1e4\n1100,10\n", encoding="utf-8")
    tab = read_alpha_csv(p)
    assert "held at its 400 nm value (1e+05 cm^-1) at shorter wavelengths" in tab.source
    assert "0 beyond 1100 nm" in tab.source
    # a junction whose gap the table does not reach is refused (alpha would be 0 there)
    with pytest.raises(gm.InputError, match=r"alpha_file: .*above the junction's gap 1 eV"):
        gm.evaluate([1.0], "independent", absorber="table", alpha_file=p, thickness_nm=1000.0)
