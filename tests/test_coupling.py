"""Luminescent coupling and emission geometry."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import constants as sc
from scipy import optimize

import gapmatch as gm
from gapmatch.core.coupling import voc_gain_restricted_cone, voc_loss_rear_emission
from gapmatch.core.spectra import SUN_HALF_ANGLE_RAD
from gapmatch.errors import InputError

VT300 = sc.k * 300.0 / sc.e


def test_lost_downward_emission_costs_kt_ln_1_plus_n2():
    # An emitter of index n radiates n^2 times its front (index 1) emission into a
    # half-space of the same index below it (the n^2 of the generalised Planck law in a
    # medium; common practice, no source). If that is lost, J0 grows by (1 + n^2) and V_oc
    # drops by (kT/q) ln(1 + n^2), computed here from scipy.constants (68.0 mV for n = 3.6
    # at 300 K). Tolerance 1e-9 V: V_oc = V_t ln(1 + J_ph/J0) differs from V_t ln(J_ph/J0)
    # by J0/J_ph.
    n = 3.6
    ideal = gm.evaluate([1.72, 1.12], "independent")
    lost = gm.evaluate([1.72, 1.12], "independent", coupling_fraction=0.0, refractive_index=n)
    dv = ideal.solution.voc_junction[0] - lost.solution.voc_junction[0]
    expected = VT300 * math.log(1 + n * n)
    assert dv[0] == pytest.approx(expected, abs=1e-9)
    assert abs(dv[1]) < 1e-12  # bottom junction on an ideal mirror: unchanged
    assert voc_loss_rear_emission(300.0, n) == pytest.approx(expected, rel=1e-12)


def test_full_coupling_helps_a_current_limited_bottom_cell():
    # 1.45/1.12 eV on AM1.5G: the bottom cell limits the series current. With coupling
    # fraction 1 its photocurrent gains the top cell's downward emission, so the series
    # efficiency rises above the same stack with the downward emission lost.
    kw = dict(refractive_index=3.6)
    lost = gm.evaluate([1.45, 1.12], "series", coupling_fraction=0.0, **kw)
    full = gm.evaluate([1.45, 1.12], "series", coupling_fraction=1.0, **kw)
    jph = lost.solution.jph[0]
    assert jph[1] < jph[0]  # bottom-limited
    assert full.efficiency[0] > lost.efficiency[0]
    assert full.solution.extras["jph_total"][0, 1] > jph[1]
    # a top-limited stack gains nothing from coupling fraction 1 beyond a small amount
    # and cannot lose from it either
    lost2 = gm.evaluate([1.9, 1.12], "series", coupling_fraction=0.0, **kw)
    full2 = gm.evaluate([1.9, 1.12], "series", coupling_fraction=1.0, **kw)
    assert full2.efficiency[0] >= lost2.efficiency[0]


def _diode_params(res):
    # J0 of each junction from its photocurrent and V_oc (Boltzmann diodes)
    sol = res.solution
    return sol.jph[0], sol.jph[0] / np.expm1(sol.voc_junction[0] / VT300)


def test_series_coupled_point_is_self_consistent_and_optimal():
    # Independent check with scipy: for each series current J, solve the bottom junction's
    # voltage from its total photocurrent J_ph,2 + k D_1(V_1) by brentq (no use of the
    # engine's linear-chain reduction), and maximise J (V_1 + V_2) with a bounded scalar
    # search. Tolerance 1e-9 relative on the power: xatol of the scalar search (P is flat
    # at the maximum, so the power error is quadratic in the current error).
    n, c = 3.6, 1.0
    res = gm.evaluate([1.45, 1.12], "series", coupling_fraction=c, refractive_index=n)
    nocouple = gm.evaluate([1.45, 1.12], "series")
    jph = nocouple.solution.jph[0]
    j0f = jph / np.expm1(nocouple.solution.voc_junction[0] / VT300)  # front-only J0
    j0 = j0f * np.array([1 + n * n, 1.0])
    beta = n * n / (1 + n * n)

    def v1(j):
        return VT300 * math.log1p((jph[0] - j) / j0[0])

    def v2(j):
        d1 = jph[0] - j
        jeff = jph[1] + c * beta * d1

        def f(v):
            return jeff - j0[1] * math.expm1(v / VT300) - j

        return optimize.brentq(f, -5.0, 1.2, xtol=1e-15)

    lim = min(jph[0], (jph[1] + c * beta * jph[0]) / (1 + c * beta)) * (1 - 1e-12)
    best = optimize.minimize_scalar(
        lambda j: -j * (v1(j) + v2(j)),
        bounds=(0.5 * lim, lim),
        method="bounded",
        options={"xatol": 1e-10},
    )
    assert res.solution.op.p_mpp[0] == pytest.approx(-best.fun, rel=1e-9)
    j = res.solution.op.j_mpp[0]
    # self-consistency at the engine's point: bottom dark current = J_ph2 + k D_1 - J
    vj = res.solution.op.v_junction[0]
    d1 = j0[0] * math.expm1(vj[0] / VT300)
    d2 = j0[1] * math.expm1(vj[1] / VT300)
    assert d2 == pytest.approx(jph[1] + c * beta * d1 - j, rel=1e-9)


def test_independent_coupled_optimum_against_scipy():
    # Total power of independently connected coupled junctions maximised jointly over the
    # two junction voltages with scipy (Nelder-Mead, tight tolerances) must not beat the
    # engine's block-coordinate optimum. Tolerance 1e-9 relative.
    n, c = 3.6, 1.0
    res = gm.evaluate([1.6, 1.0], "independent", coupling_fraction=c, refractive_index=n)
    base = gm.evaluate([1.6, 1.0], "independent")
    jph = base.solution.jph[0]
    j0f = jph / np.expm1(base.solution.voc_junction[0] / VT300)
    j0 = j0f * np.array([1 + n * n, 1.0])
    beta = n * n / (1 + n * n)

    def power(v):
        d1 = j0[0] * math.expm1(v[0] / VT300)
        p1 = v[0] * (jph[0] - d1)
        p2 = v[1] * (jph[1] + c * beta * d1 - j0[1] * math.expm1(v[1] / VT300))
        return p1 + p2

    x0 = res.solution.op.v_junction[0] * np.array([0.99, 1.01])
    opt = optimize.minimize(
        lambda v: -power(v),
        x0,
        method="Nelder-Mead",
        options={"xatol": 1e-12, "fatol": 1e-12, "maxiter": 20000},
    )
    p_engine = res.solution.op.p_mpp[0]
    assert p_engine >= -opt.fun * (1 - 1e-9)
    assert p_engine == pytest.approx(power(res.solution.op.v_junction[0]), rel=1e-12)


@pytest.mark.parametrize("angle", [60.0, 30.0, 5.0, 1.0])
def test_restricted_cone_voc_gain(angle):
    # Emission into a cone of half-angle theta: the etendue of the cone, and with it J0,
    # scales with sin^2(theta) (common practice, no source), so V_oc gains
    # (kT/q) ln(1/sin^2 theta), computed here from scipy.constants. Tolerance 1e-9 V
    # (J0/J_ph correction of V_t ln(1 + J_ph/J0)).
    ideal = gm.evaluate([1.4], "independent")
    cone = gm.evaluate([1.4], "independent", emission_half_angle_deg=angle)
    gain = cone.solution.voc_junction[0, 0] - ideal.solution.voc_junction[0, 0]
    expected = VT300 * math.log(1 / math.sin(math.radians(angle)) ** 2)
    assert gain == pytest.approx(expected, abs=1e-9)
    assert voc_gain_restricted_cone(300.0, math.radians(angle)) == pytest.approx(expected)
    assert cone.efficiency[0] > ideal.efficiency[0]


def test_cone_at_the_sun_half_angle_under_full_concentration():
    # The cone may not be narrower than the sun's apparent disc (times sqrt(C)); at the
    # sun's own half-angle one sun is allowed.
    deg = math.degrees(SUN_HALF_ANGLE_RAD)
    gm.evaluate([1.4], emission_half_angle_deg=deg * 1.0001)
    with pytest.raises(InputError, match="emission_half_angle_deg"):
        gm.evaluate([1.4], emission_half_angle_deg=deg * 0.99)
    with pytest.raises(InputError, match="emission_half_angle_deg"):
        gm.evaluate([1.4], emission_half_angle_deg=5.0, concentration=2000)


@pytest.mark.parametrize(
    "kwargs, match",
    [
        ({"coupling_fraction": 1.5}, r"coupling_fraction: must be a number in \[0, 1\]"),
        (
            {"coupling_fraction": [0.5, 0.5]},
            "coupling_fraction: needs one value, or one per interface",
        ),
        (
            {"coupling_fraction": 0.5, "connection": "voltage-matched"},
            "coupling_fraction: luminescent coupling needs",
        ),
        ({"coupling_fraction": 0.5, "dark_current": "bose-einstein"}, "dark_current: luminescent"),
        ({"emission_half_angle_deg": 95}, "emission_half_angle_deg: must be a number"),
    ],
)
def test_validation(kwargs, match):
    with pytest.raises(InputError, match=match):
        gm.evaluate([1.72, 1.12], **kwargs)


@pytest.mark.parametrize("c", [0.0, 0.3, 1.0])
@pytest.mark.parametrize("gaps", [[1.45, 1.12], [1.9, 1.12], [2.0, 1.5, 1.0]])
def test_series_never_beats_independent_with_the_same_coupling(gaps, c):
    # With the same junctions and coupling, a series string is a constrained independent
    # connection, so its power cannot exceed the independent optimum (common practice, no
    # source; tolerance 1e-12 relative for rounding). Coupling fraction 1 brings a
    # bottom-limited series stack close to it (radiative limit).
    s = gm.evaluate(gaps, "series", coupling_fraction=c, refractive_index=3.6).efficiency[0]
    i = gm.evaluate(gaps, "independent", coupling_fraction=c, refractive_index=3.6).efficiency[0]
    assert s <= i * (1 + 1e-12)


# ---- independent connection: the coupled solve against a brute-force maximisation ------


def _brute_force_power(jph, j0, vt, k):
    """Best total power of one coupled independent stack by scipy's bounded L-BFGS-B over
    the fraction of each junction's available current it draws, from three starts
    (an optimiser that shares nothing with the solver's sweeps)."""
    from scipy.optimize import minimize

    n = len(jph)

    def neg_power(x):
        total, je_prev, j_prev = 0.0, 0.0, 0.0
        for i in range(n):
            je = jph[i] + (k[i - 1] * (je_prev - j_prev) if i else 0.0)
            ji = x[i] * je
            w = max(je + j0[i] - ji, 1e-300)
            total += ji * vt[i] * np.log(w / j0[i])
            je_prev, j_prev = je, ji
        return -total

    best = -np.inf
    for start in (0.95, 0.7, 0.3):
        r = minimize(neg_power, np.full(n, start), bounds=[(0.0, 1.0)] * n, method="L-BFGS-B")
        best = max(best, -r.fun)
    return best


@pytest.mark.parametrize("n_junctions", [2, 3, 4])
def test_independent_coupled_solve_equals_brute_force(n_junctions):
    from gapmatch.core.coupling import solve_independent_coupled

    rng = np.random.default_rng(11 + n_junctions)
    m = 150
    jph = rng.uniform(20.0, 300.0, (m, n_junctions))  # A m^-2, one-sun magnitudes
    j0 = 10.0 ** rng.uniform(-18.0, -4.0, (m, n_junctions))  # A m^-2, wide-to-narrow gaps
    vt = np.full((m, n_junctions), 0.025852)  # kT/q at 300 K [V]
    k = rng.uniform(0.0, 1.0, (m, n_junctions))  # from no coupling to all emission coupled
    k[:, -1] = 0.0
    j, v, _ = solve_independent_coupled(jph, j0, vt, k)
    power = (j * v).sum(axis=1)
    brute = np.array([_brute_force_power(jph[i], j0[i], vt[i], k[i]) for i in range(m)])
    # the sweeps converge to 1e-13 of the photocurrent; L-BFGS-B stops near 1e-8 relative
    # on this smooth problem, so the solver may only be ahead of it, never behind by more
    assert np.all(power >= brute * (1.0 - 1e-7))


@pytest.mark.parametrize("ere", [1.0, 0.01])
def test_more_coupling_never_lowers_independent_power(ere):
    # with the coupling model on, light a junction emits towards the one below is either
    # coupled (collected there) or lost; coupling more of it cannot lower the best power
    # of independently connected junctions (physical invariant, common practice, no source)
    rng = np.random.default_rng(5)
    gaps = np.sort(rng.uniform(0.6, 2.4, (2000, 3)), axis=1)[:, ::-1]
    eff = [
        np.asarray(
            gm.evaluate(gaps, "independent", "AM1.5G", ere=ere, coupling_fraction=c).efficiency
        )
        for c in (0.0, 0.3, 0.6, 1.0)
    ]
    for low, high in zip(eff[:-1], eff[1:], strict=True):
        assert np.all(high >= low - 1e-12)
