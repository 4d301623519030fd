"""Physical invariants of the detailed-balance engine (hypothesis property tests)."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

import gapmatch as gm
from gapmatch.units import Q

CONNECTIONS = ["series", "independent", "voltage-matched"]


def stacks(min_n=1, max_n=4, lo=0.5, hi=3.0):
    """Strictly decreasing gaps [eV], at least 10 meV apart."""
    return (
        st.lists(st.floats(lo, hi), min_size=min_n, max_size=max_n, unique=True)
        .filter(lambda g: len(g) < 2 or np.min(np.diff(sorted(g))) > 0.01)
        .map(lambda g: sorted(g, reverse=True))
    )


def _single_junction_limits_W_m2(gaps_eV, spectrum, temperature_K=300.0):
    """Maximum power [W m^-2] of each junction of a step-absorber stack on its own, seeing
    the photons between its gap and the gap above (Shockley and Queisser 1961 ideal diode,
    Boltzmann J0 in closed form from scipy.constants; MPP by scipy's brentq on dP/dV), i.e.
    without gapmatch's diode and connection solvers."""
    from scipy import constants as sc
    from scipy.optimize import brentq

    vt = sc.k * temperature_K / sc.e
    kt = sc.k * temperature_K
    g = 2 * np.pi / (sc.h**3 * sc.c**2)
    above = spectrum.photon_flux_above(np.asarray(gaps_eV) * sc.eV)
    out = []
    for i, eg in enumerate(gaps_eV):
        jph = sc.e * (above[i] - (above[i - 1] if i else 0.0))
        x = eg * sc.eV / kt
        j0 = sc.e * g * kt**3 * np.exp(-x) * (x * x + 2 * x + 2)
        voc = vt * np.log1p(jph / j0)
        v = brentq(
            lambda v, jph=jph, j0=j0: jph - j0 * np.expm1(v / vt) - v * j0 * np.exp(v / vt) / vt,
            0.0,
            voc,
            xtol=1e-15,
            rtol=1e-15,
        )
        out.append(v * (jph - j0 * np.expm1(v / vt)))
    return np.array(out)


@given(stacks(), st.sampled_from(CONNECTIONS), st.floats(1.0, 46000.0))
def test_efficiency_below_the_single_junction_limits(gaps, conn, conc):
    # No connection beats every junction at its own single-junction limit for the photons
    # it absorbs (each junction's maximum power is an upper bound on what it delivers);
    # independent connection reaches exactly that. Tolerance 1e-9 relative: brentq to
    # 1e-15 in V (the power is stationary there) and float64 rounding. This replaces the
    # bound 1 - T_cell / T_sun (second law; De Vos 1980), which no stack here comes near.
    r = gm.evaluate(gaps, conn, "blackbody", concentration=conc)
    spec = gm.get_spectrum("blackbody", concentration=conc)
    limit = _single_junction_limits_W_m2(gaps, spec).sum() / spec.total_irradiance_W_m2
    eff = r.efficiency[0]
    assert 0 < eff <= limit * (1 + 1e-9)
    if conn == "independent" or len(gaps) == 1:
        assert eff == pytest.approx(limit, rel=1e-9)


@given(stacks(2, 5), st.sampled_from(["AM1.5G", "AM0", "blackbody"]))
def test_independent_at_least_series(gaps, spectrum):
    s = gm.evaluate(gaps, "series", spectrum).efficiency[0]
    i = gm.evaluate(gaps, "independent", spectrum).efficiency[0]
    vm = gm.evaluate(gaps[:3], "voltage-matched", spectrum).efficiency[0]
    i3 = gm.evaluate(gaps[:3], "independent", spectrum).efficiency[0]
    # 1e-12 relative: both are exact maxima; only rounding separates equal cases
    assert i >= s * (1 - 1e-12)
    assert i3 >= vm * (1 - 1e-12)


@given(stacks(1, 5), st.sampled_from(CONNECTIONS))
def test_photocurrents_add_up_and_power_below_absorbed(am15g, gaps, conn):
    if conn == "voltage-matched" and len(gaps) > 3:
        gaps = gaps[:3]
    r = gm.evaluate(gaps, conn, am15g)
    s = r.solution
    flux_lowest = am15g.photon_flux_above(np.array([s.gaps_J.min()]))[0]
    assert s.jph.sum() == np.float64(Q * flux_lowest) or np.isclose(
        s.jph.sum(), Q * flux_lowest, rtol=1e-12, atol=0
    )
    assert s.op.p_mpp[0] <= s.absorbed_W_m2[0]
    assert s.absorbed_W_m2[0] <= s.incident_W_m2 * (1 + 1e-12)


@given(stacks(1, 4, 0.5, 4.0), st.floats(4.45, 5.0))
def test_junction_above_every_photon_changes_nothing(am15g, gaps, top):
    # AM1.5G (ASTM G173) has no photon above hc/280 nm = 4.43 eV. In independent
    # connection such a junction adds nothing and takes nothing.
    base = gm.evaluate(gaps, "independent", am15g).efficiency[0]
    more = gm.evaluate([top, *gaps], "independent", am15g).efficiency[0]
    assert more == base or np.isclose(more, base, rtol=1e-14, atol=1e-300)


@given(stacks(1, 5), st.floats(0.3, 0.49))
def test_adding_a_bottom_junction_never_hurts_independent(am15g, gaps, bottom):
    # more junctions are never worse for independent connection: a new smallest gap only
    # adds photons no junction above could absorb
    base = gm.evaluate(gaps, "independent", am15g).efficiency[0]
    more = gm.evaluate([*gaps, bottom], "independent", am15g).efficiency[0]
    assert more >= base


@given(stacks(1, 3), st.sampled_from(CONNECTIONS), st.floats(1.0, 100.0), st.floats(1.05, 50.0))
def test_efficiency_rises_with_concentration(gaps, conn, c1, factor):
    a = gm.evaluate(gaps, conn, "blackbody", concentration=c1).efficiency[0]
    b = gm.evaluate(gaps, conn, "blackbody", concentration=c1 * factor).efficiency[0]
    assert b > a


@given(stacks(1, 3), st.sampled_from(CONNECTIONS), st.floats(250.0, 400.0), st.floats(1.0, 60.0))
def test_efficiency_falls_as_cell_warms(gaps, conn, t1, dt):
    a = gm.evaluate(gaps, conn, temperature_K=t1).efficiency[0]
    b = gm.evaluate(gaps, conn, temperature_K=t1 + dt).efficiency[0]
    assert b < a


@given(stacks(2, 3))
def test_auto_ratio_at_least_any_fixed_ratio(gaps):
    auto = gm.evaluate(gaps, "voltage-matched").efficiency[0]
    fixed = gm.evaluate(gaps, "voltage-matched", cells_per_string=[1] * len(gaps)).efficiency[0]
    assert auto >= fixed * (1 - 1e-12)
