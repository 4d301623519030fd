"""gapmatch's public API against high-precision references computed outside the package.

``tests/data/references.json`` is written by ``tests/data/make_references.py``, which does
not import gapmatch: it recomputes the photon integrals, radiative currents and maximum
power points with mpmath at 30 significant digits (quadrature instead of gapmatch's
polylogarithms; its own trapezoid integration of pvlib's ASTM G173-03 table; bracketed
root finding on dP/dV = 0 or dP/dJ = 0 instead of gapmatch's Newton solvers). See the
script's docstring for every constant and convention.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

import gapmatch as gm
from gapmatch.core.diodes import ln_j0_radiative, make_diodes
from gapmatch.core.planck import bose_tail
from gapmatch.core.spectra import MAX_CONCENTRATION
from gapmatch.units import EV, K_B, Q

REF = json.loads((Path(__file__).parent / "data" / "references.json").read_text())

# ---- tolerances ------------------------------------------------------------------------
# Photon integrals of the tabulated spectrum: gapmatch sums ~2000 trapezoids in float64
# (cumulative rounding ~ N eps ~ 2e-13 relative) and the reference sums the same
# trapezoids exactly; the largest difference seen is below 1e-13.
RTOL_TABLE = 1e-12
# Blackbody photon integrals: polylogarithm series in float64 (a few ulp, see
# test_polylog.py) against quadrature at 30 digits.
RTOL_BB = 1e-12
# Bose-Einstein tails: the argument d = x - qV/kT is formed in float64 from x ~ 10-150, so
# near the divergence (d ~ 0.05) it carries ~1e-13 relative rounding, which the integral
# (~ -x^2 ln d there) passes on damped by 1/|ln d|.
RTOL_TAIL = 1e-11
# Maximum power points: gapmatch's solvers stop at 1e-13 relative in the solution variable;
# the power is stationary there, so its error is quadratic in that (negligible) and the
# photocurrent's rounding (above) dominates. Voltages inherit V_t * (relative error of
# J_ph / J0), ~1e-13 V on 1 V.
RTOL_MPP = 1e-11
ATOL_V = 1e-10  # [V]


def _spectrum_kwargs(case: dict) -> dict:
    kw = {"spectrum": case["spectrum"]}
    if case["concentration"] == "maximum":
        kw["concentration"] = MAX_CONCENTRATION
    elif case["concentration"] != 1.0:
        kw["concentration"] = case["concentration"]
    return kw


def _evaluate(case: dict):
    return gm.evaluate(
        case["gaps_eV"],
        case["connection"],
        temperature_K=case["temperature_K"],
        ere=case["ere"],
        dark_current=case["dark_current"],
        **_spectrum_kwargs(case),
    )


def _ids(cases: list[dict]) -> list[str]:
    return [
        f"{c['spectrum']}-{c['connection']}-{'/'.join(map(str, c['gaps_eV']))}-"
        f"{c['temperature_K']:g}K-ere{c['ere']:g}-{c['dark_current']}-C{c['concentration']}"
        for c in cases
    ]


def _rtol_spectrum(case: dict) -> float:
    return RTOL_TABLE if case["spectrum"] != "blackbody" else RTOL_BB


# ---- radiative current -----------------------------------------------------------------
RAD = REF["radiative_current"]
RAD_IDS = [f"{c['gap_eV']}eV-{c['temperature_K']:g}K-{c['voltage_V']:.6g}V" for c in RAD]


@pytest.mark.parametrize("case", RAD, ids=RAD_IDS)
def test_boltzmann_saturation_current(case):
    # ln J0 in closed form against the quadrature of E^2 exp(-E/kT); J0 is ~1e-60 to
    # 1e2 A m^-2 here, so compare logarithms: 1e-11 absolute in ln J0 = 1e-11 relative.
    got = ln_j0_radiative(case["gap_eV"] * EV, case["temperature_K"])
    assert float(got) == pytest.approx(np.log(case["j0_boltzmann_A_m2"]), abs=1e-11)


@pytest.mark.parametrize("case", RAD, ids=RAD_IDS)
def test_bose_einstein_tails(case):
    kt = K_B * case["temperature_K"]
    x = case["gap_eV"] * EV / kt
    d = x - case["voltage_V"] * Q / kt
    for k in range(4):
        got = float(bose_tail(k, np.array(x), np.array(d)))
        assert got == pytest.approx(case[f"bose_tail_t{k}"], rel=RTOL_TAIL), k


@pytest.mark.parametrize("case", RAD, ids=RAD_IDS)
def test_bose_einstein_dark_current(case):
    # The diode model's dark current J_rad(V) - J_rad(0) (ERE 1, no light) against the
    # quadrature. At V = 0 it must vanish; the absolute floor 1e-12 J_rad(0) is rounding.
    d = make_diodes(
        "bose-einstein",
        np.zeros((1, 1)),
        np.full((1, 1), case["gap_eV"] * EV),
        np.full((1, 1), case["temperature_K"]),
        np.ones((1, 1)),
    )
    dark = -float(d.current(np.full((1, 1), case["voltage_V"]))[0, 0])
    ref = case["jrad_A_m2"] - case["jrad0_A_m2"]
    assert dark == pytest.approx(ref, rel=RTOL_TAIL, abs=1e-12 * case["jrad0_A_m2"])


# ---- single junctions ------------------------------------------------------------------
SJ = REF["single_junction"]


def _voc_at_the_gap(case: dict) -> bool:
    # Bose-Einstein V_oc within 1e-9 V of the gap (0.3 and 0.7 eV at full concentration)
    return case["dark_current"] == "bose-einstein" and case["voc_V"] >= case["gaps_eV"][0] - 1e-9


@pytest.mark.parametrize("name", ["AM1.5G", "AM1.5D", "AM0"])
def test_standard_spectrum_integrals(name):
    # trapezoid rule on the tabulated points of pvlib's ASTM G173-03 table, summed at 30
    # digits by the reference script (gapmatch sums ~2000 terms in float64)
    got = gm.standard_spectrum(name).total_irradiance_W_m2
    assert got == pytest.approx(REF["incident_W_m2"][name], rel=RTOL_TABLE)


@pytest.mark.parametrize("case", SJ, ids=_ids(SJ))
def test_single_junction_against_direct_maximisation(case):
    d = _evaluate(case).stack(0)
    rtol = max(_rtol_spectrum(case), RTOL_MPP)
    assert d["incident_W_m2"] == pytest.approx(case["incident_W_m2"], rel=_rtol_spectrum(case))
    assert 10 * d["junctions"][0]["jph_mA_cm2"] == pytest.approx(
        case["jph_A_m2"][0], rel=_rtol_spectrum(case)
    )
    assert d["pmpp_W_m2"] == pytest.approx(case["pmpp_W_m2"], rel=rtol)
    assert d["efficiency"] == pytest.approx(case["efficiency"], rel=rtol)
    if not _voc_at_the_gap(case):  # see the next test
        assert d["voc_V"] == pytest.approx(case["voc_V"], abs=ATOL_V)
    assert d["vmpp_V"] == pytest.approx(case["vmpp_V"], abs=ATOL_V)
    assert 10 * d["jmpp_mA_cm2"] == pytest.approx(case["jmpp_A_m2"], rel=1e-9)


SJ_AT_GAP = [c for c in SJ if _voc_at_the_gap(c)]


@pytest.mark.parametrize("case", SJ_AT_GAP, ids=_ids(SJ_AT_GAP))
def test_bose_einstein_voc_close_to_the_gap(case):
    # At full concentration the exact V_oc is 1e-60 V (0.3 eV) and 6e-11 V (0.7 eV) below
    # the gap (the reference solves for ln(E_g - qV), so it resolves both).
    assert SJ_AT_GAP, "the reference data must hold such a case"
    d = _evaluate(case).stack(0)
    assert d["voc_V"] == pytest.approx(case["voc_V"], abs=1e-9)


# ---- two junctions ---------------------------------------------------------------------
TJ = REF["two_junction"]


@pytest.mark.parametrize("case", TJ, ids=_ids(TJ))
def test_two_junctions_against_direct_maximisation(case):
    d = _evaluate(case).stack(0)
    rtol = max(_rtol_spectrum(case), RTOL_MPP)
    got_jph = [10 * j["jph_mA_cm2"] for j in d["junctions"]]
    np.testing.assert_allclose(got_jph, case["jph_A_m2"], rtol=_rtol_spectrum(case))
    assert d["pmpp_W_m2"] == pytest.approx(case["pmpp_W_m2"], rel=rtol)
    assert d["efficiency"] == pytest.approx(case["efficiency"], rel=rtol)
    if case["connection"] == "series":
        # the series string: one current, the junction voltages add up
        assert d["voc_V"] == pytest.approx(case["voc_V"], abs=ATOL_V)
        assert d["vmpp_V"] == pytest.approx(case["vmpp_V"], abs=ATOL_V)
        assert 10 * d["jmpp_mA_cm2"] == pytest.approx(case["jmpp_A_m2"], rel=1e-9)
    else:
        # independent: each junction at its own maximum power point
        got_v = [j["voc_V"] for j in d["junctions"]]
        got_p = [j["p_op_W_m2"] for j in d["junctions"]]
        np.testing.assert_allclose(got_v, case["voc_junction_V"], rtol=0, atol=ATOL_V)
        np.testing.assert_allclose(got_p, case["pmpp_junction_W_m2"], rtol=rtol)


# ---- optima over the band gap ----------------------------------------------------------
def test_best_single_gap_under_am15g():
    # The reference scanned 1.20-1.50 eV in 1 meV steps at 30 digits; the same scan with
    # gapmatch must pick the same gap and value (efficiency to RTOL_MPP); at the refined
    # optimum gapmatch gives the refined value.
    ref = next(o for o in REF["optima"] if o["spectrum"] == "AM1.5G")
    lo, hi, step = ref["scan_eV"]
    g = np.round(np.arange(lo, hi + step / 2, step), 6)
    eff = gm.evaluate(g[:, None], "series", "AM1.5G").efficiency
    i = int(np.argmax(eff))
    assert g[i] == pytest.approx(ref["best_on_1meV_grid_gap_eV"], abs=1e-9)
    assert eff[i] == pytest.approx(ref["best_on_1meV_grid_efficiency"], rel=RTOL_MPP)
    at_best = gm.evaluate([ref["best_gap_eV"]], "series", "AM1.5G").efficiency[0]
    assert at_best == pytest.approx(ref["best_efficiency"], rel=RTOL_MPP)
    assert at_best >= eff[i] * (1 - RTOL_MPP)


def test_best_single_gap_at_maximum_concentration():
    # Golden-section optimum of the reference (gap to 1e-7 eV); the efficiency is
    # stationary there, so gapmatch's value at that gap must match to RTOL_MPP and nearby
    # gaps must not do better.
    ref = next(o for o in REF["optima"] if o["spectrum"] == "blackbody")
    kw = dict(concentration=MAX_CONCENTRATION, dark_current="bose-einstein")
    g = ref["best_gap_eV"] + np.array([-1e-3, 0.0, 1e-3])
    eff = gm.evaluate(g[:, None], "series", "blackbody", **kw).efficiency
    assert eff[1] == pytest.approx(ref["best_efficiency"], rel=RTOL_MPP)
    assert eff[1] > max(eff[0], eff[2])


@pytest.mark.parametrize("connection", ["series", "independent"])
def test_best_two_junction_pair_on_the_map_grid(connection):
    # The default map grid (gaps k / 100 eV): its best pair in the reference's window must
    # be gapmatch's best pair on the same grid, with the same efficiency (RTOL_MPP).
    ref = next(o for o in REF["two_junction_optima"] if o["connection"] == connection)
    (tlo, thi), (blo, bhi) = ref["grid_10meV_window_eV"]
    top = np.round(np.arange(tlo, thi + 1e-9, 0.01), 2)
    bottom = np.round(np.arange(blo, bhi + 1e-9, 0.01), 2)
    tt, bb = np.meshgrid(top, bottom, indexing="ij")
    eff = gm.evaluate(np.column_stack([tt.ravel(), bb.ravel()]), connection).efficiency
    k = int(np.argmax(eff))
    assert [tt.ravel()[k], bb.ravel()[k]] == pytest.approx(
        ref["best_on_10meV_grid_gaps_eV"], abs=1e-9
    )
    assert eff[k] == pytest.approx(ref["best_on_10meV_grid_efficiency"], rel=RTOL_MPP)
    # and at the reference's refined (0.2 meV grid) optimum
    best = gm.evaluate(ref["best_refined_gaps_eV"], connection).efficiency[0]
    assert best == pytest.approx(ref["best_refined_efficiency"], rel=RTOL_MPP)
    assert best >= eff[k] * (1 - RTOL_MPP)


@pytest.mark.parametrize("n", [1, 2, 3])
def test_blackbody_independent_optima(n):
    # Nelder-Mead optimum of the reference (gaps to ~1e-7 eV): gapmatch at those gaps gives
    # the same efficiency (RTOL_MPP), and moving any gap by 1 meV does not do better.
    ref = next(o for o in REF["blackbody_independent_optima"] if o["n_junctions"] == n)
    g = np.array(ref["best_gaps_eV"])
    steps = np.vstack([np.zeros(n), 1e-3 * np.eye(n), -1e-3 * np.eye(n)])
    eff = gm.evaluate(g + steps, "independent", "blackbody").efficiency
    assert eff[0] == pytest.approx(ref["best_efficiency"], rel=RTOL_MPP)
    assert np.all(eff[1:] < eff[0])
