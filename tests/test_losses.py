"""Loss breakdown, series resistance, collection, and the unchanged ideal path."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy import constants as sc
from scipy import optimize

import gapmatch as gm
from gapmatch.core.engine import solve_stacks
from gapmatch.errors import InputError

EV = sc.eV
VT300 = sc.k * 300.0 / sc.e
# sun's angular radius from the IAU 2015 nominal solar radius (6.957e8 m, IAU 2015
# Resolution B3) and the astronomical unit of scipy.constants
SIN2_SUN = (6.957e8 / sc.au) ** 2


# ---- the ideal path is unchanged --------------------------------------------------------
@pytest.mark.parametrize("connection", ["series", "independent", "voltage-matched"])
@pytest.mark.parametrize(
    "kw",
    [
        {},
        {"temperature_K": 320.0, "ere": 1e-3},
        {"dark_current": "bose-einstein", "concentration": 100.0},
        {"spectrum": "blackbody"},
    ],
)
def test_default_evaluate_bit_identical_to_hot_path(connection, kw):
    # evaluate() with no opt-in physics must return exactly (bit for bit) what the hot
    # path solve_stacks() gives; so must losses=True for everything but the breakdown.
    gaps = [[1.72, 1.12], [1.9, 1.3], [1.55, 0.95]]
    spec = gm.get_spectrum(kw.get("spectrum", "AM1.5G"), concentration=kw.get("concentration", 1.0))
    old = solve_stacks(
        np.asarray(gaps) * EV,
        spec,
        connection,
        temperature_K=kw.get("temperature_K", 300.0),
        ere=kw.get("ere", 1.0),
        dark_current=kw.get("dark_current", "boltzmann"),
    )
    new = gm.evaluate(gaps, connection, **kw)
    new_l = gm.evaluate(gaps, connection, losses=True, **kw)
    for res in (new, new_l):
        assert np.array_equal(res.solution.op.p_mpp, old.op.p_mpp)
        assert np.array_equal(res.solution.jph, old.jph)
        assert np.array_equal(res.solution.voc_junction, old.voc_junction)
        assert np.array_equal(res.solution.op.v_junction, old.op.v_junction)
    assert new.losses is None and "losses_W_m2" not in new.stack(0)
    assert "physics" not in new.stack(0)["conditions"]


# ---- Hirst & Ekins-Daukes terms ------------------------------------------------------------
@pytest.mark.parametrize("gap", [0.9, 1.34, 2.0])
@pytest.mark.parametrize("t_sun", [5778.0, 6000.0])
def test_carnot_and_boltzmann_per_carrier(gap, t_sun):
    # Hirst & Ekins-Daukes, Prog. Photovolt. 19, 286 (2011): per extracted carrier the
    # Carnot loss is Eg T_cell / T_sun and the Boltzmann loss kT_cell ln(Omega_emit /
    # Omega_sun) with Omega_emit = pi (hemisphere) and Omega_sun = pi sin^2(theta_sun) C.
    # Tolerance 1e-9 relative (sin^2 from the same constants; rounding).
    for conc in (1.0, 1000.0):
        res = gm.evaluate(
            [gap],
            "independent",
            spectrum="blackbody",
            sun_temperature_K=t_sun,
            concentration=conc,
            losses=True,
        )
        lb = res.losses.breakdown
        carriers = res.solution.op.j_junction[0, 0] / sc.e
        carnot = lb.junction["carnot"][0, 0] / carriers
        boltz = lb.junction["boltzmann"][0, 0] / carriers
        assert carnot == pytest.approx(gap * EV * 300.0 / t_sun, rel=1e-9)
        assert boltz == pytest.approx(sc.k * 300.0 * math.log(1 / (SIN2_SUN * conc)), rel=1e-9)


def test_boltzmann_term_vanishes_at_maximum_concentration():
    # Hirst & Ekins-Daukes 2011: at maximum concentration Omega_sun = Omega_emit and the
    # Boltzmann loss is zero (tolerance: 1e-9 of the Carnot term, rounding of 1/sin^2).
    cmax = gm.core.spectra.MAX_CONCENTRATION
    res = gm.evaluate([1.1], "independent", spectrum="blackbody", concentration=cmax, losses=True)
    lb = res.losses.breakdown
    assert abs(lb.junction["boltzmann"][0, 0]) < 1e-9 * lb.junction["carnot"][0, 0]


def test_voc_rise_with_concentration_matches_boltzmann_term():
    # Concentrating by C lowers the Boltzmann term per carrier by kT ln C and raises the
    # engine's V_oc by the same amount (ideal-diode V_oc = V_t ln(1 + J_ph/J0), Shockley
    # and Queisser 1961; tolerance 1e-9 V from the +1).
    a = gm.evaluate([1.34], "independent", spectrum="blackbody", losses=True)
    b = gm.evaluate([1.34], "independent", spectrum="blackbody", concentration=500.0, losses=True)
    dv = b.solution.voc_junction[0, 0] - a.solution.voc_junction[0, 0]
    assert dv == pytest.approx(VT300 * math.log(500.0), abs=1e-9)

    def per_carrier(r):
        return r.losses.breakdown.junction["boltzmann"][0, 0] / r.solution.op.j_junction[0, 0]

    assert per_carrier(a) - per_carrier(b) == pytest.approx(dv, rel=1e-9)


def test_measured_spectrum_voltage_decomposition():
    # For a measured spectrum (AM1.5G) Carnot and Boltzmann are not defined; the voltage
    # loss (Eg - qV) J / q is split into radiative, non-radiative and V_oc-to-V_mpp parts
    # that add up exactly (definition in gapmatch.core.losses; tolerance 1e-9 relative).
    res = gm.evaluate([1.72, 1.12], "independent", ere=1e-2, losses=True)
    lb = res.losses.breakdown
    assert "carnot" not in lb.junction and "boltzmann" not in lb.junction
    j, v = res.solution.op.j_junction[0], res.solution.op.v_junction[0]
    total = (np.array([1.72, 1.12]) - v) * j
    parts = sum(
        lb.junction[k][0] for k in ("voltage_radiative", "voltage_nonradiative", "voltage_mpp")
    )
    np.testing.assert_allclose(parts, total, rtol=1e-9)
    # the non-radiative voltage term is (kT/q) ln(1/ERE) per carrier (Rau 2007; the
    # J0/J_ph correction is far below the 1e-9 tolerance)
    np.testing.assert_allclose(
        lb.junction["voltage_nonradiative"][0] / j, VT300 * math.log(100.0), rtol=1e-9
    )


def test_step_limit_terms_from_the_spectrum():
    # Step absorbers: below-gap transmission = incident power minus the power above the
    # smallest gap; thermalisation of junction i = power it absorbs minus Eg times its
    # photons (Hirst & Ekins-Daukes 2011). Built here from the spectrum's own integrals.
    spec = gm.standard_spectrum("AM1.5G")
    res = gm.evaluate([1.72, 1.12], "series", losses=True)
    lb = res.losses.breakdown
    pa = spec.power_above(np.array([1.72, 1.12]) * EV)
    fa = spec.photon_flux_above(np.array([1.72, 1.12]) * EV)
    assert lb.stack["below_gap"][0] == pytest.approx(spec.total_irradiance_W_m2 - pa[1], rel=1e-12)
    therm = [pa[0] - 1.72 * EV * fa[0], (pa[1] - pa[0]) - 1.12 * EV * (fa[1] - fa[0])]
    np.testing.assert_allclose(lb.junction["thermalisation"][0], therm, rtol=1e-12)
    # series mismatch = what the independent connection of the same junctions adds
    ind = gm.evaluate([1.72, 1.12], "independent")
    assert res.losses.totals()["mismatch"][0] == pytest.approx(
        ind.pmpp_W_m2[0] - res.pmpp_W_m2[0], rel=1e-9
    )


# ---- closure (hypothesis) -------------------------------------------------------------------
@st.composite
def _cases(draw):
    n = draw(st.integers(1, 3))
    gaps = sorted(
        draw(st.lists(st.floats(0.6, 2.4), min_size=n, max_size=n, unique=True)), reverse=True
    )
    if any(a - b < 0.02 for a, b in zip(gaps, gaps[1:], strict=False)):
        gaps = [2.4 - 0.5 * i for i in range(n)]
    conn = draw(st.sampled_from(["series", "independent", "voltage-matched"]))
    kw = {
        "ere": draw(st.sampled_from([1.0, 0.1, 1e-4])),
        "temperature_K": draw(st.floats(250.0, 400.0)),
        "spectrum": draw(st.sampled_from(["AM1.5G", "blackbody", "AM0"])),
    }
    if draw(st.booleans()):
        kw["collection_efficiency"] = draw(st.floats(0.5, 1.0))
    if draw(st.booleans()):
        kw["emission_half_angle_deg"] = draw(st.floats(10.0, 90.0))
    if draw(st.booleans()):
        kw["varshni"] = (4.73e-4, 636.0)
    if conn != "voltage-matched":
        if draw(st.booleans()):
            kw["series_resistance_ohm_cm2"] = draw(st.floats(0.0, 3.0))
        if n > 1 and draw(st.booleans()):
            kw["coupling_fraction"] = draw(st.floats(0.0, 1.0))
            kw["refractive_index"] = draw(st.floats(1.5, 4.0))
    if "coupling_fraction" not in kw and draw(st.integers(0, 4)) == 0:
        kw["dark_current"] = "bose-einstein"
    elif draw(st.booleans()):
        kw["absorber"] = ["direct"] + ["step"] * (n - 1)
        kw["thickness_nm"] = [draw(st.floats(20.0, 5000.0))] + [0.0] * (n - 1)
        kw["urbach_energy_meV"] = draw(st.sampled_from([0.0, 8.0, 15.0]))
        kw["light_trapping"] = draw(st.sampled_from(["single", "double", "lambertian"]))
    return gaps, conn, kw


@settings(max_examples=80, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(_cases())
def test_loss_shares_add_up_to_incident_power(case):
    # The shares add up to the incident power (energy conservation) within 1e-6 relative,
    # room left for the energy-grid quadrature of finite absorbers.
    gaps, conn, kw = case
    res = gm.evaluate(gaps, conn, losses=True, **kw)
    err = res.losses.closure_error()
    assert np.all(err < 1e-6), (gaps, conn, kw, err)
    tot = res.losses.totals()
    assert tot["output"][0] == pytest.approx(res.pmpp_W_m2[0], rel=1e-12)
    assert abs(tot["luminescent_transfer"][0]) < 1e-9 * res.solution.incident_W_m2
    # the reference is each junction's (coupled) maximum power point, which no connection
    # can beat: the total mismatch is never negative
    for k in (
        "mismatch",
        "below_gap",
        "emission",
        "nonradiative",
        "series_resistance",
        "incomplete_collection",
        "incomplete_absorption",
    ):
        assert tot[k][0] >= -1e-9 * res.solution.incident_W_m2, k


# ---- series resistance ----------------------------------------------------------------------
def _boltzmann_params(res):
    sol = res.solution
    return sol.jph[0], sol.jph[0] / np.expm1(sol.voc_junction[0] / VT300)


def test_series_resistance_mpp_is_exact():
    # Brute force with scipy: maximise J (sum_i V_i(J) - R J) with a bounded scalar search
    # on the ideal diodes (V_i from the closed-form Boltzmann diode). Tolerance 1e-10 on
    # the power (flat maximum: quadratic in the xatol of the search), 1e-5 on the current.
    gaps = [1.72, 1.12]
    base = gm.evaluate(gaps, "series")
    jph, j0 = _boltzmann_params(base)
    effs = []
    for r_cm2 in (0.0, 0.5, 1.0, 3.0):
        res = gm.evaluate(gaps, "series", series_resistance_ohm_cm2=r_cm2, losses=True)
        r = r_cm2 * 1e-4

        def neg_p(j, r=r):
            return -j * (np.sum(VT300 * np.log1p((jph - j) / j0)) - r * j)

        opt = optimize.minimize_scalar(
            neg_p, bounds=(0.0, jph.min()), method="bounded", options={"xatol": 1e-9}
        )
        assert res.pmpp_W_m2[0] == pytest.approx(-opt.fun, rel=1e-10)
        assert res.solution.op.j_mpp[0] == pytest.approx(opt.x, rel=1e-5)
        assert res.losses.stack(0)["series_resistance"] == pytest.approx(
            r * res.solution.op.j_mpp[0] ** 2, rel=1e-12
        )
        effs.append(res.efficiency[0])
    assert np.all(np.diff(effs) < 0)
    assert effs[0] == pytest.approx(base.efficiency[0], rel=1e-12)


def test_independent_series_resistance_per_junction():
    # Each sub-cell behind its own resistance, brute force per junction (scipy bounded
    # scalar search); tolerance 1e-10 relative on the power.
    gaps = [1.8, 1.1]
    base = gm.evaluate(gaps, "independent")
    jph, j0 = _boltzmann_params(base)
    r_cm2 = np.array([2.0, 0.5])
    res = gm.evaluate(gaps, "independent", series_resistance_ohm_cm2=r_cm2)
    total = 0.0
    for k in range(2):
        r = r_cm2[k] * 1e-4

        def neg_p(j, k=k, r=r):
            return -j * (VT300 * np.log1p((jph[k] - j) / j0[k]) - r * j)

        total -= optimize.minimize_scalar(
            neg_p, bounds=(0, jph[k]), method="bounded", options={"xatol": 1e-9}
        ).fun
    assert res.pmpp_W_m2[0] == pytest.approx(total, rel=1e-10)
    assert res.efficiency[0] < base.efficiency[0]


def test_collection_efficiency_scales_current_not_voltage():
    # Reciprocity (Rau 2007): the EQE, including collection, sets both J_ph and J0_rad, so
    # at fixed ERE a collection efficiency eta scales J_ph by eta and leaves V_oc unchanged
    # (to J0/J_ph). Tolerances 1e-12 / 1e-9 V.
    base = gm.evaluate([1.72, 1.12], "independent")
    res = gm.evaluate([1.72, 1.12], "independent", collection_efficiency=[0.9, 0.8], losses=True)
    np.testing.assert_allclose(res.solution.jph[0], base.solution.jph[0] * [0.9, 0.8], rtol=1e-12)
    np.testing.assert_allclose(res.solution.voc_junction, base.solution.voc_junction, atol=1e-9)
    assert res.losses.totals()["incomplete_collection"][0] > 0


# ---- results objects -------------------------------------------------------------------------
def test_loss_frames_and_json():
    res = gm.evaluate(
        [[1.72, 1.12], [1.9, 1.1]],
        "series",
        losses=True,
        absorber=["direct", "step"],
        thickness_nm=[300, 0],
    )
    f = res.losses.to_frame()
    assert len(f) == 2 and "thermalisation_W_m2" in f and "output_W_m2" in f
    terms = [c for c in f.columns if c.endswith("_W_m2") and c != "incident_W_m2"]
    np.testing.assert_allclose(f[terms].sum(axis=1), f["incident_W_m2"], rtol=1e-9)
    jf = res.losses.junction_frame()
    assert len(jf) == 4 and set(jf["junction"]) == {1, 2}
    d = json.loads(json.dumps(res.stack(1)))  # must be valid JSON (no NaN)
    lw = d["losses_W_m2"]
    assert lw["output"] == pytest.approx(d["pmpp_W_m2"])
    assert len(lw["junctions"]) == 2
    assert d["conditions"]["physics"]["absorber"] == ["direct", "step"]


@pytest.mark.parametrize(
    "kwargs, match",
    [
        ({"losses": "yes"}, "losses: must be True or False"),
        (
            {"series_resistance_ohm_cm2": -1},
            r"series_resistance_ohm_cm2: must be a number in "
            r"\[0, 100\] ohm cm\^2",
        ),
        (
            {"series_resistance_ohm_cm2": [1, 2]},
            "one value per junction applies to connection 'independent' only",
        ),
        (
            {"series_resistance_ohm_cm2": 1, "connection": "voltage-matched"},
            "series resistance needs connection",
        ),
        ({"collection_efficiency": 0.0}, r"collection_efficiency: must be a number in \(0, 1\]"),
        ({"collection_efficiency": [0.9, 1.2]}, "collection_efficiency: every value"),
    ],
)
def test_validation(kwargs, match):
    with pytest.raises(InputError, match=match):
        gm.evaluate([1.72, 1.12], **kwargs)


def test_loss_figures():
    # The report figures are plotly objects built from the same numbers.
    from gapmatch.report.loss_figures import (
        junction_loss_figure,
        loss_breakdown_figure,
        thickness_figure,
    )

    res = gm.evaluate([[1.72, 1.12], [1.55, 1.12]], losses=True)
    fig = loss_breakdown_figure(res)
    out = next(t for t in fig.data if t.name == "delivered power")
    np.testing.assert_allclose(out.y, 100 * res.efficiency, rtol=1e-12)
    # bars of each stack add up to 100 % of the incident power (closure, 1e-9)
    np.testing.assert_allclose(np.sum([t.y for t in fig.data], axis=0), 100.0, rtol=1e-9)
    assert len(junction_loss_figure(res, 1).data) == len(res.losses.terms)
    th = np.array([100.0, 300.0, 1000.0])
    f3 = thickness_figure(gm.api.thickness_sweep([1.55, 1.12], th))
    np.testing.assert_allclose(
        f3.data[0].y, 100 * gm.api.evaluate_thickness([1.55, 1.12], th).efficiency
    )
    with pytest.raises(ValueError, match="losses=True"):
        loss_breakdown_figure(gm.evaluate([1.72, 1.12]))


def test_cli_table_and_json_carry_the_breakdown(capsys):
    from gapmatch.cli import main

    assert main(["evaluate", "--gaps", "1.72", "1.12", "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    lw = d["losses_W_m2"]
    assert lw["output"] == pytest.approx(d["pmpp_W_m2"], rel=1e-9)
    assert d["loss_closure_rel"] < 1e-6
    # the efficiency is the ideal engine's, unchanged by the breakdown
    assert d["efficiency"] == gm.evaluate([1.72, 1.12]).efficiency[0]
    assert (
        main(
            [
                "evaluate",
                "--gaps",
                "1.72",
                "1.12",
                "--absorber",
                "direct",
                "step",
                "--thickness",
                "400",
                "0",
                "--coupling-fraction",
                "1",
                "--varshni-alpha",
                "4.73e-4",
                "--varshni-beta",
                "636",
                "--temperature",
                "330",
                "--series-resistance",
                "0.5",
                "--emission-half-angle",
                "60",
            ]
        )
        == 0
    )
    out = capsys.readouterr().out
    assert "where the incident power goes" in out and "luminescent transfer" in out
    assert "not a rating" in out
    res = gm.evaluate(
        [1.72, 1.12],
        absorber=["direct", "step"],
        thickness_nm=[400, 0],
        coupling_fraction=1.0,
        varshni=(4.73e-4, 636.0),
        temperature_K=330.0,
        series_resistance_ohm_cm2=0.5,
        emission_half_angle_deg=60.0,
    )
    assert f"{100 * res.efficiency[0]:16.3f}" in out


def test_cli_errors_are_one_line(capsys):
    from gapmatch.cli import main

    assert main(["evaluate", "--gaps", "1.72", "1.12", "--absorber", "direct"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "--thickness" in err
    assert (
        main(
            [
                "evaluate",
                "--gaps",
                "1.72",
                "1.12",
                "--absorber",
                "alpha-file",
                "step",
                "--thickness",
                "300",
                "0",
                "--alpha-file",
                "a.csv",
                "b.csv",
            ]
        )
        == 2
    )
    assert "--alpha-file" in capsys.readouterr().err


def test_jv_curve_of_a_non_ideal_result():
    # The curves pass through the result's own operating point (series stack with
    # resistance and a thin top cell); tolerance 1e-5 relative: linear interpolation on
    # the 2000-point current grid (V'' dJ^2 / 8 is about 5e-6 V near the maximum power).
    res = gm.evaluate(
        [1.72, 1.12],
        "series",
        absorber=["direct", "step"],
        thickness_nm=[300, 0],
        series_resistance_ohm_cm2=1.0,
    )
    cur = gm.jv_curve(res, 0, points=2000)
    v, j = cur["stack"]
    v_at = np.interp(0.1 * res.solution.op.j_mpp[0], j, v)
    assert v_at == pytest.approx(res.solution.op.v_mpp[0], rel=1e-5)
    vj, jj = cur["junctions"][0]
    assert jj[0] == pytest.approx(0.1 * res.solution.jph[0, 0], rel=1e-12)
    with pytest.raises(InputError, match="jv_curve"):
        gm.jv_curve(gm.evaluate([1.72, 1.12], coupling_fraction=1.0), 0)
