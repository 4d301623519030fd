"""The model objects: results carry their illumination, cell conditions and stack, and
every follow-up (J-V curves, re-evaluation, reports) matches the result it came from."""

from __future__ import annotations

import dataclasses
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import gapmatch as gm
from gapmatch import InputError
from gapmatch.api import reevaluate, solve
from gapmatch.core.engine import solve_stacks, solve_stacks_series
from gapmatch.core.spectra import SpectrumSeries, TabulatedSpectrum
from gapmatch.model import CellConditions, Illumination, Stack
from gapmatch.units import EV


def _smooth_spectrum_file(tmp_path: Path) -> Path:
    # invented smooth spectrum (demo data, no source): a Gaussian hump on a floor
    wl = np.arange(300.0, 2501.0, 5.0)
    irr = 1.6 * np.exp(-((((wl / 1000.0) - 0.65) / 0.45) ** 2)) + 0.05
    p = tmp_path / "hump.csv"
    p.write_text(
        "wavelength_nm,irradiance_W_m2_nm\n"
        + "\n".join(f"{a:g},{b:.6f}" for a, b in zip(wl, irr, strict=True))
        + "\n"
    )
    return p


CASES = {
    "AM0": dict(spectrum="AM0"),
    "350 K": dict(temperature_K=350.0),
    "ERE 0.01": dict(ere=0.01),
    "per-junction ERE": dict(ere=[0.01, 0.1]),
    "Bose-Einstein at 500 suns": dict(dark_current="bose-einstein", concentration=500.0),
    "non-ideal": dict(
        absorber=["direct", "step"], thickness_nm=[400.0, 0.0], series_resistance_ohm_cm2=0.5
    ),
    "emission cone, 340 K": dict(emission_half_angle_deg=30.0, temperature_K=340.0),
}


def _check_curves(res):
    # J(0) = J_sc and J(V_oc) = 0 for every junction, and V(J=0) = V_oc of the series
    # string. Tolerances: the curve and the result use the same diode expressions, so
    # J(0) and V_oc agree to rounding (1e-12 relative); J(V_oc) is a difference of two
    # numbers of size J_ph and vanishes to 1e-9 of J_ph.
    c = gm.jv_curve(res, 0, points=50)
    d = res.stack(0)
    for (v, j), junction in zip(c["junctions"], d["junctions"], strict=True):
        assert j[0] == pytest.approx(junction["jsc_mA_cm2"], rel=1e-12)
        assert v[-1] == pytest.approx(junction["voc_V"], rel=1e-12)
        assert abs(j[-1]) < 1e-9 * junction["jsc_mA_cm2"]
    if res.connection == "series":
        v, j = c["stack"]
        assert v[0] == pytest.approx(d["voc_V"], rel=1e-12)
        # the string's J_sc lies within the dark current j0 (below 1e-15 relative) of the
        # smallest photocurrent, where the curve ends; the solvers find it to their root
        # tolerance, about 1e-12 relative, hence 1e-11
        assert j[-1] == pytest.approx(d["jsc_mA_cm2"], rel=1e-11)
    return c


@pytest.mark.parametrize("case", list(CASES))
def test_jv_curve_matches_its_result(case):
    res = gm.evaluate([1.8, 1.1], "series", **CASES[case])
    _check_curves(res)


def test_jv_curve_under_a_spectrum_file(tmp_path):
    res = gm.evaluate([1.6, 1.0], spectrum_file=_smooth_spectrum_file(tmp_path), ere=0.01)
    _check_curves(res)


def test_jv_curve_of_an_am0_result_is_the_result():
    # AM0 result: J(0) of the curve is the result's own J_sc, not one under AM1.5G
    res = gm.evaluate([1.8, 1.1], "series", "AM0")
    am15 = gm.evaluate([1.8, 1.1], "series", "AM1.5G")
    c = gm.jv_curve(res)
    top = c["junctions"][0][1][0]
    assert top == pytest.approx(0.1 * res.solution.jph[0, 0], rel=1e-12)
    assert abs(top - 0.1 * am15.solution.jph[0, 0]) > 1.0  # about 5 mA cm^-2 apart


def test_jv_curve_takes_no_conditions():
    res = gm.evaluate([1.8, 1.1])
    with pytest.raises(TypeError):
        gm.jv_curve(res, 0, "AM1.5G")  # the spectrum comes from the result
    with pytest.raises(InputError, match="i: must be a stack index"):
        gm.jv_curve(res, 1)


def test_results_carry_their_model_objects():
    res = gm.evaluate([1.63, 0.96], "series", "AM1.5G", ere=0.01, temperature_K=320.0)
    assert isinstance(res.illumination, Illumination)
    assert isinstance(res.cell, CellConditions) and res.cell.ere == 0.01
    assert isinstance(res.stack_model, Stack) and res.stack_model.connection == "series"
    np.testing.assert_array_equal(res.stack_model.gaps_eV, [[1.63, 0.96]])
    with pytest.raises(ValueError):
        res.stack_model.gaps_eV[0, 0] = 2.0  # frozen
    with pytest.raises(AttributeError):
        res.cell.ere = 1.0  # type: ignore[misc]


def test_solve_from_objects_equals_evaluate():
    g = np.array([[1.9, 1.4, 0.95], [1.8, 1.3, 0.9]])
    cell = CellConditions.from_options(3, temperature_K=[300.0, 310.0, 320.0], ere=0.05)
    illum = Illumination.from_options("AM1.5D", concentration=20.0)
    a = solve(Stack(g, "independent"), illum, cell)
    b = gm.evaluate(
        g, "independent", "AM1.5D", concentration=20.0, temperature_K=[300, 310, 320], ere=0.05
    )
    np.testing.assert_array_equal(a.efficiency, b.efficiency)


@pytest.mark.parametrize(
    "change",
    [
        dict(temperature_K=350.0),
        dict(ere=0.001),
        dict(connection="independent"),
        dict(spectrum="AM0"),
        dict(concentration=10.0),
    ],
)
def test_reevaluate_changes_only_what_is_asked(change):
    kw = dict(absorber=["direct", "step"], thickness_nm=[500.0, 0.0], ere=0.1)
    res = gm.evaluate([1.72, 1.12], "series", **kw)
    again = reevaluate(res, **change)
    direct = gm.evaluate([1.72, 1.12], **({"connection": "series"} | kw | change))
    np.testing.assert_array_equal(again.efficiency, direct.efficiency)
    assert reevaluate(res).efficiency[0] == res.efficiency[0]


def test_illumination_passed_on_keeps_its_scaling():
    illum = Illumination.from_options("AM1.5G", irradiance_W_m2=1000.0, concentration=2.0)
    res = gm.evaluate([1.4], spectrum=illum)
    assert res.conditions.incident_W_m2 == pytest.approx(2000.0, rel=1e-12)
    with pytest.raises(InputError, match="concentration: is part of the Illumination"):
        gm.evaluate([1.4], spectrum=illum, concentration=3.0)


def test_spectrum_file_is_read_once_per_report(tmp_path, monkeypatch):
    import gapmatch.io.spectra as io_spectra
    from gapmatch.report import build_report
    from gapmatch.study import parse_study

    io_spectra._READ_CACHE.clear()
    reads = []
    real = io_spectra.read_unit_table

    def counting(*a, **k):
        reads.append(a[0])
        return real(*a, **k)

    monkeypatch.setattr(io_spectra, "read_unit_table", counting)
    f = _smooth_spectrum_file(tmp_path)
    st = parse_study(
        f"""
[study]
name = "once"
title = "t"
sections = ["map", "stacks", "cut", "spectrum", "jv", "losses", "thickness", "search"]
[conditions]
spectrum_file = "{f.name}"
[map]
x_range_eV = [1.4, 2.0]
y_range_eV = [0.8, 1.2]
step_eV = 0.1
[[stacks]]
name = "a"
gaps_eV = [1.7, 1.1]
[thickness]
points = 5
[search]
trials = 8
""",
        base_dir=tmp_path,
    )
    build_report(st, progress=False)
    assert len(reads) == 1


def test_spectrum_series_rows_equal_single_spectra(am15g):
    # three invented "hours": AM1.5G scaled and tilted (demo data, no source)
    wl = am15g.wavelength_nm
    base = am15g.irradiance_W_m2_nm
    irr = np.stack([base, 0.5 * base, base * (wl / 1000.0) ** 0.3])
    series = SpectrumSeries(wl, irr)
    g = np.array([[1.8, 1.1], [1.6, 0.95], [1.7, 1.0]]) * EV
    t_hours = np.array([300.0, 315.0, 330.0])
    sol = solve_stacks_series(g, series, "series", temperature_K=t_hours, ere=0.1)
    assert sol.op.p_mpp.shape == (9,)
    for h in range(3):
        one = solve_stacks(
            g, TabulatedSpectrum(wl, irr[h]), "series", temperature_K=t_hours[h], ere=0.1
        )
        # same integration rule and solver: rows agree to rounding (1e-12 relative)
        np.testing.assert_allclose(sol.op.p_mpp[3 * h : 3 * h + 3], one.op.p_mpp, rtol=1e-12)
        np.testing.assert_allclose(sol.jph[3 * h : 3 * h + 3], one.jph, rtol=1e-12)
        np.testing.assert_allclose(sol.incident_W_m2[3 * h], one.incident_W_m2, rtol=1e-12)


def test_spectrum_series_validation(am15g):
    wl = am15g.wavelength_nm
    with pytest.raises(InputError, match="integrates to zero"):
        SpectrumSeries(wl, np.zeros((2, wl.size)))
    with pytest.raises(InputError, match="needs wavelengths"):
        SpectrumSeries(wl, np.ones((2, wl.size - 1)))


@pytest.mark.parametrize("connection", ["series", "independent", "voltage-matched"])
def test_the_connection_registry_describes_what_results_show(connection):
    from gapmatch.core.registry import REGISTRY

    model = REGISTRY[connection]
    res = gm.evaluate([1.8, 1.1], connection)
    # a stack with one pair of terminals has a stack V_oc; one per junction has none
    assert np.isfinite(res.solution.op.voc[0]) == model.has_stack_terminals
    if model.coupling:
        gm.evaluate([1.8, 1.1], connection, coupling_fraction=0.5)
    else:
        with pytest.raises(InputError, match="coupling_fraction"):
            gm.evaluate([1.8, 1.1], connection, coupling_fraction=0.5)
    if model.solve_resistive is None:
        with pytest.raises(InputError, match="series_resistance_ohm_cm2"):
            gm.evaluate([1.8, 1.1], connection, series_resistance_ohm_cm2=0.1)
    with pytest.raises(InputError, match="connection"):
        reevaluate(res, connection="parallel")


def test_maps_and_cuts_take_an_illumination():
    from gapmatch.maps import compute_cut, compute_map

    illum = Illumination.from_options("AM1.5D", concentration=50.0)
    a = compute_map(
        ["series"], x_range_eV=(1.5, 2.0), y_range_eV=(0.9, 1.2), step_eV=0.1, spectrum=illum
    )
    b = compute_map(
        ["series"],
        x_range_eV=(1.5, 2.0),
        y_range_eV=(0.9, 1.2),
        step_eV=0.1,
        spectrum="AM1.5D",
        concentration=50.0,
    )
    np.testing.assert_array_equal(a.efficiency["series"], b.efficiency["series"])
    c = compute_cut([1.8, 1.1], 1, [1.7, 1.8], ["series"], spectrum=illum)
    d = compute_cut([1.8, 1.1], 1, [1.7, 1.8], ["series"], spectrum="AM1.5D", concentration=50.0)
    np.testing.assert_array_equal(c.efficiency["series"], d.efficiency["series"])
    with pytest.raises(InputError, match="concentration"):
        compute_map(["series"], spectrum=illum, concentration=2.0)


@pytest.mark.parametrize(
    "name, column", [("AM1.5G", "global"), ("AM1.5D", "direct"), ("AM0", "extraterrestrial")]
)
def test_standard_spectra_are_pvlibs_table(name, column):
    # read from pvlib's data file without importing pvlib (start-up): the same doubles as
    # pvlib.spectrum.get_reference_spectra (ASTM G173-03), compared exactly
    import pvlib

    table = pvlib.spectrum.get_reference_spectra(standard="ASTM G173-03")
    spec = gm.standard_spectrum(name)
    np.testing.assert_array_equal(spec.wavelength_nm, table.index.to_numpy(float))
    np.testing.assert_array_equal(spec.irradiance_W_m2_nm, table[column].to_numpy(float))
    assert pvlib.__version__ in spec.source


def test_reevaluate_a_file_or_object_spectrum(tmp_path):
    f = _smooth_spectrum_file(tmp_path)
    res = gm.evaluate([1.6, 1.0], spectrum_file=f)
    np.testing.assert_array_equal(
        reevaluate(res, concentration=5.0).efficiency,
        gm.evaluate([1.6, 1.0], spectrum_file=f, concentration=5.0).efficiency,
    )
    np.testing.assert_array_equal(
        reevaluate(res, spectrum="AM0").efficiency,
        gm.evaluate([1.6, 1.0], spectrum="AM0").efficiency,
    )
    own = gm.read_spectrum_csv(f)
    res = gm.evaluate([1.6, 1.0], spectrum=own)
    np.testing.assert_array_equal(
        reevaluate(res, irradiance_W_m2=500.0).efficiency,
        gm.evaluate([1.6, 1.0], spectrum=own, irradiance_W_m2=500.0).efficiency,
    )


def test_constants_are_scipys():
    # the constants are written out (start-up time); scipy.constants is the reference
    from scipy import constants as sc

    import gapmatch.units as u

    pairs = [(u.Q, sc.e), (u.H, sc.h), (u.C, sc.c), (u.K_B, sc.k), (u.SIGMA, sc.sigma)]
    pairs += [(u.EV, sc.eV), (u.AU, sc.au)]
    for ours, ref in pairs:
        assert ours == ref  # exact: the same doubles


@given(
    st.lists(
        st.lists(st.floats(0.0, 1e22, allow_nan=False), min_size=1, max_size=6),
        min_size=1,
        max_size=5,
    ).filter(lambda rows: len({len(r) for r in rows}) == 1)
)
@settings(max_examples=100, deadline=None)
def test_step_shares_partition_what_the_stack_absorbs(rows):
    # invariants of step absorptance (common practice, no source): shares are
    # non-negative and add up to what the stack absorbs, the largest count above a gap
    from gapmatch.core.steps import step_shares

    f = np.array(rows)
    shares, total = step_shares(f)
    assert np.all(shares >= 0)
    np.testing.assert_allclose(shares.sum(axis=-1), f.max(axis=-1), rtol=1e-12)
    np.testing.assert_array_equal(total, f.max(axis=-1))


def test_step_shares_agree_with_the_step_optics(am15g):
    from gapmatch.core.absorption import step_optics
    from gapmatch.core.steps import step_shares

    g = np.array([[1.9, 1.4, 0.9], [1.2, 1.5, 0.8]]) * EV  # the second out of order
    np.testing.assert_array_equal(
        step_optics(g, am15g).phi_abs, step_shares(am15g.photon_flux_above(g))[0]
    )


def test_solve_series_equals_one_evaluation_per_hour(am15g):
    # 24 invented "hours" (demo data, no source): AM1.5G dimmed and reddened, warmer
    # cells at noon; each row must equal gapmatch.evaluate under that hour alone
    from gapmatch.api import solve_series
    from gapmatch.model import IlluminationSeries

    wl = am15g.wavelength_nm
    k = np.arange(24)
    scale = 0.2 + 0.8 * np.sin(np.pi * (k + 0.5) / 24)
    red = (wl / 1000.0)[None, :] ** (0.5 * (1 - scale[:, None]))
    irr = scale[:, None] * am15g.irradiance_W_m2_nm[None, :] * red
    t = 290.0 + 40.0 * scale
    series = IlluminationSeries.from_arrays(wl, irr, duration_h=0.5)
    gaps = np.array([[1.8, 1.1], [1.7, 1.12], [1.6, 0.95]])
    res = solve_series(Stack(gaps, "series"), series, temperature_K=t, ere=0.01)
    assert res.efficiency.shape == (24, 3)
    for h in (0, 7, 12, 23):
        one = gm.evaluate(
            gaps, "series", TabulatedSpectrum(wl, irr[h]), temperature_K=t[h], ere=0.01
        )
        # same integration rule, same solver: 1e-12 relative
        np.testing.assert_allclose(res.efficiency[h], one.efficiency, rtol=1e-12)
    # energy: power times 0.5 h, summed
    np.testing.assert_allclose(res.energy_Wh_m2(), 0.5 * res.pmpp_W_m2.sum(axis=0), rtol=1e-14)
    assert res.to_frame().shape == (72, 7)
    with pytest.raises(InputError, match="temperature_K"):
        solve_series(Stack(gaps, "series"), series, temperature_K=np.full(5, 300.0))
    with pytest.raises(InputError, match="ideal stacks"):
        nonideal = gm.evaluate(gaps[:1], series_resistance_ohm_cm2=0.1).stack_model
        solve_series(nonideal, series)


@pytest.mark.parametrize(
    "kwargs, field",
    [
        (dict(gaps_eV=[[1.7, 7.0]]), "gaps_eV"),
        (dict(gaps_eV=[[1.7, 1.1]], connection="parallel"), "connection"),
        (dict(gaps_eV=[[1.7, 1.1]], connection="voltage-matched", cells_per_string=(1,)), "cells"),
    ],
)
def test_stack_validates_itself(kwargs, field):
    with pytest.raises(InputError, match=field):
        Stack(**kwargs)


def _jv_bad_cases():
    from gapmatch.model import CellConditions

    r = gm.evaluate([[1.6, 0.9], [1.7, 1.0]])
    hot = dataclasses.replace(r, cell=CellConditions(temperature_K=5000.0))
    bright = dataclasses.replace(r, cell=CellConditions(ere=2.0))
    return [
        (r, dict(i=True), r"i: must be a stack index in \[0, 1\]"),
        (r, dict(i=-1), r"i: must be a stack index"),
        (r, dict(i=2), r"i: must be a stack index"),
        (r, dict(i=0, points=-3), r"points: must be a whole number in \[2, 100000\]"),
        (r, dict(i=0, points=True), r"points: must be a whole number"),
        ({"efficiency": 0.4}, dict(i=0), r"result: must be a result of gapmatch.evaluate"),
        (hot, dict(i=0), r"temperature_K: must be a number in \[100, 1000\] K"),
        (bright, dict(i=0), r"ere: must be a number in \[1e-12, 1\]"),
    ]


@pytest.mark.parametrize("case", range(8))
def test_jv_curve_validates_like_evaluate(case):
    result, kw, match = _jv_bad_cases()[case]
    with pytest.raises(gm.InputError, match=match):
        gm.jv_curve(result, **kw)
