"""Finite absorbers, light trapping and light passed down the stack."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import constants as sc
from scipy import integrate

import gapmatch as gm
from gapmatch.api import evaluate_thickness
from gapmatch.core.absorption import DirectGapAbsorption, absorptance
from gapmatch.errors import InputError
from gapmatch.io.absorption import read_alpha_csv

EV = sc.eV
KT300 = sc.k * 300.0


@pytest.mark.parametrize("connection", ["series", "independent", "voltage-matched"])
@pytest.mark.parametrize("model", ["direct", "indirect"])
@pytest.mark.parametrize("trapping", ["single", "double", "lambertian"])
def test_very_thick_absorber_recovers_step(connection, model, trapping):
    # Very thick absorber without a tail: absorptance 1 above the gap and 0 below, so the
    # result must equal the ideal step-absorptance engine (Shockley & Queisser 1961).
    # Tolerance, direct edge: 1e-9 relative, rounding in sums over ~3000 energy bins (the
    # weakly absorbing sliver above the gap, alpha d < 1, is (alpha0 d)^-2 eV = 1e-16 eV
    # wide). Indirect (quadratic) edge: the sliver is (alpha0 d)^-1/2 eV = 1e-4 eV wide,
    # which holds up to ~1e-4 of the photocurrent near 1 eV: tolerance 5e-4.
    rtol = 1e-9 if model == "direct" else 5e-4
    gaps = [[1.72, 1.12], [1.9, 1.3], [1.55, 0.95]]
    ideal = gm.evaluate(gaps, connection)
    thick = gm.evaluate(
        gaps,
        connection,
        absorber=[model, model],
        thickness_nm=1e8,
        light_trapping=trapping,
        alpha0_per_cm=1e7,
    )
    np.testing.assert_allclose(thick.solution.jph, ideal.solution.jph, rtol=rtol)
    np.testing.assert_allclose(thick.solution.voc_junction, ideal.solution.voc_junction, rtol=rtol)
    np.testing.assert_allclose(thick.efficiency, ideal.efficiency, rtol=rtol)


@pytest.mark.parametrize("urbach_meV", [0.0, 15.0])
def test_thinner_top_passes_exactly_its_unabsorbed_photons_down(urbach_meV):
    # Energy (photon) conservation through the stack: what the top cell no longer absorbs
    # reaches the bottom cell (the tail of 15 meV ends 25 E_U below the
    # 1.72 eV gap, still above 1.12 eV, so every photon the top cell gives up is above the
    # bottom gap). Tolerance 1e-9 of the top photocurrent: rounding of bin sums.
    th = np.array([30.0, 100.0, 300.0, 1000.0, 1e4, 1e5])
    res = evaluate_thickness([1.72, 1.12], th, "independent", urbach_energy_meV=urbach_meV)
    jph = res.solution.jph
    d_top = jph[:, 0] - jph[-1, 0]
    d_bottom = jph[:, 1] - jph[-1, 1]
    assert np.all(np.diff(jph[:, 0]) > 0)  # thicker top absorbs more
    np.testing.assert_allclose(d_bottom, -d_top, atol=1e-9 * jph[-1, 0])
    # and the sum equals the step-absorptance photocurrent above the bottom gap
    ideal = gm.evaluate([1.72, 1.12], "independent")
    if urbach_meV == 0:
        np.testing.assert_allclose(jph.sum(axis=1), ideal.solution.jph.sum(), rtol=1e-9)


def _direct_alpha(e_j, gap_j, alpha0_per_m):
    return alpha0_per_m * np.sqrt(np.maximum(e_j - gap_j, 0.0) / EV)


def test_absorbed_flux_and_dark_current_against_quadrature():
    # Blackbody sun (smooth spectrum): the absorbed photon flux int a(E) phi(E) dE and the
    # radiative saturation current q g int a(E) E^2 exp(-E/kT) dE of a 500 nm single-pass
    # direct absorber (Rau 2007 reciprocity: same absorptance) compared with scipy.quad.
    # Tolerance 3e-4: the engine takes each bin's absorptance at the bin's centroid (bins of
    # kT/15, graded in sqrt(E - E_g) near the edge); the error is O(h^2 a''/a), largest at
    # the square-root edge (measured 1.4e-4 for the dark current; 3e-4 of J0 is 8 uV of V_oc).
    gap, d, a0 = 1.7 * EV, 500e-9, 5e6
    res = gm.evaluate(
        [1.7], "independent", spectrum="blackbody", absorber="direct", thickness_nm=500.0
    )
    spec = gm.BlackbodySun(6000.0)

    def a(e):
        return -math.expm1(-_direct_alpha(e, gap, a0) * d)

    flux, _ = integrate.quad(
        lambda e: a(e) * float(spec.spectral_photon_flux(e)),
        gap,
        40 * sc.k * 6000,
        limit=400,
        points=[gap * 1.001, gap * 1.05],
    )
    np.testing.assert_allclose(res.solution.jph[0, 0], sc.e * flux, rtol=3e-4)
    g = 2 * math.pi / (sc.h**3 * sc.c**2)
    j0_quad, _ = integrate.quad(
        lambda e: a(e) * e * e * math.exp(-(e - gap) / KT300),
        gap,
        gap + 60 * KT300,
        limit=400,
        points=[gap + KT300],
    )
    j0_quad *= sc.e * g * math.exp(-gap / KT300)
    vt = KT300 / sc.e
    jph = res.solution.jph[0, 0]
    j0_engine = jph / math.expm1(res.solution.voc_junction[0, 0] / vt)
    np.testing.assert_allclose(j0_engine, j0_quad, rtol=3e-4)


def test_lambertian_limits_and_ordering():
    # Yablonovitch 1982 / Tiedje et al. 1984: weak absorption gives a = 4 n^2 alpha d;
    # strong absorption gives 1. Tolerance 1e-5: next order term 4 n^2 alpha d = 4.9e-5.
    n = 3.5
    ad = 1e-6
    assert absorptance(ad, "lambertian", n) == pytest.approx(4 * n * n * ad, rel=1e-4)
    assert absorptance(50.0, "lambertian", n) == pytest.approx(1.0, abs=1e-12)
    x = np.geomspace(1e-4, 10, 50)
    s, d2, lam = (absorptance(x, t, n) for t in ("single", "double", "lambertian"))
    assert np.all(s < d2) and np.all(d2 < lam)
    # single pass Beer-Lambert: 1 - exp(-alpha d), common practice, no source; tolerance
    # 1e-12: cancellation in the reference 1 - exp(-x) for x ~ 1e-4
    np.testing.assert_allclose(s, 1 - np.exp(-x), rtol=1e-12)


def test_light_trapping_raises_thin_cell_current():
    # A thin top cell with Lambertian trapping absorbs more than single pass (the 4 n^2
    # path enhancement, Yablonovitch 1982), and its V_oc is also changed by reciprocity.
    res = {
        t: gm.evaluate(
            [1.72, 1.12],
            "independent",
            absorber=["direct", "step"],
            thickness_nm=[100, 0],
            light_trapping=[t, "single"],
        )
        for t in ("single", "double", "lambertian")
    }
    j = [res[t].solution.jph[0, 0] for t in ("single", "double", "lambertian")]
    assert j[0] < j[1] < j[2]


def test_urbach_tail_absorbs_below_gap():
    # Urbach (1953) tail: with E_U > 0 a thick direct absorber takes photons below its
    # nominal gap, so its photocurrent exceeds the step value and its V_oc is lower.
    step = gm.evaluate([1.5], "independent")
    tail = gm.evaluate(
        [1.5], "independent", absorber="direct", thickness_nm=1e6, urbach_energy_meV=15.0
    )
    assert tail.solution.jph[0, 0] > step.solution.jph[0, 0]
    assert tail.solution.voc_junction[0, 0] < step.solution.voc_junction[0, 0]


def test_direct_model_continuity():
    # Value and logarithmic slope are continuous at the join E_g + E_U/2 (construction
    # documented in gapmatch.core.absorption). Tolerance: finite difference of 1e-6 E_U.
    m = DirectGapAbsorption(5e6, 0.015 * EV)
    gap = 1.5 * EV
    j = gap + 0.5 * m.urbach_J
    h = 1e-6 * m.urbach_J
    lo, hi = m.alpha(j - h, gap), m.alpha(j + h, gap)
    assert hi == pytest.approx(lo, rel=1e-5)


def test_tabulated_alpha_matches_model(tmp_path):
    # A table written from the direct model and read back reproduces the model's result;
    # tolerance 2e-3: linear interpolation between 0.5 nm rows near the square-root edge.
    gap, a0 = 1.72 * EV, 5e6
    wl = np.arange(300.0, 1000.0, 0.5)
    e = sc.h * sc.c / (wl * 1e-9)
    alpha_cm = _direct_alpha(e, gap, a0) / 100.0
    p = tmp_path / "alpha.csv"
    p.write_text(
        "wavelength_nm,alpha_per_cm\n"
        + "\n".join(f"{a},{b}" for a, b in zip(wl, alpha_cm, strict=True))
    )
    tab = gm.evaluate(
        [1.72, 1.12],
        "series",
        absorber=["table", "step"],
        alpha_file=[p, None],
        thickness_nm=[400, 0],
    )
    mod = gm.evaluate(
        [1.72, 1.12],
        "series",
        absorber=["direct", "step"],
        thickness_nm=[400, 0],
        alpha0_per_cm=5e4,
    )
    np.testing.assert_allclose(tab.solution.jph, mod.solution.jph, rtol=2e-3)


@pytest.mark.parametrize(
    "content, match",
    [
        ("wavelength,alpha\n300,1e5\n300,2e5\n", "row 3: wavelengths must be strictly"),
        ("300,1e5\n400,-1\n", "row 2: absorption coefficient must be >= 0"),
        ("300,1e5\n400,abc\n", "row 2: not a number"),
        ("300,1e5\n", "at least two data rows"),
        ("300,0\n400,0\n", "zero everywhere"),
        ("300,nan\n400,1\n", "row 1: values must be finite"),
    ],
)
def test_alpha_csv_validation(tmp_path, content, match):
    # File, row and problem are named (validated like spectra).
    p = tmp_path / "bad.csv"
    p.write_text(content)
    with pytest.raises(InputError, match=match):
        read_alpha_csv(p)
    with pytest.raises(InputError, match="file not found"):
        read_alpha_csv(tmp_path / "missing.csv")


@pytest.mark.parametrize(
    "kwargs, match",
    [
        ({"absorber": "direct"}, "thickness_nm: is needed"),
        ({"absorber": "direct", "thickness_nm": 0.1}, r"thickness_nm: .*\[1, 1e8\] nm"),
        ({"absorber": "glass"}, "absorber: every value must be one of"),
        ({"absorber": ["direct"] * 3, "thickness_nm": 100}, "absorber: needs one value"),
        ({"light_trapping": "mirror"}, "light_trapping: every value must be one of"),
        (
            {"absorber": "direct", "thickness_nm": 100, "urbach_energy_meV": 200},
            r"urbach_energy_meV: .*\[0, 100\] meV",
        ),
        (
            {"absorber": "direct", "thickness_nm": 100, "dark_current": "bose-einstein"},
            "dark_current: finite absorbers need",
        ),
        ({"absorber": "table", "thickness_nm": 100}, "alpha_file: junction 1"),
        ({"alpha_file": "x.csv"}, "alpha_file: applies only"),
        ({"refractive_index": 0.5}, r"refractive_index: .*\[1, 6\]"),
        ({"absorber": "direct", "thickness_nm": [[1, 2, 3]]}, "thickness_nm: needs one value"),
    ],
)
def test_evaluate_validation(kwargs, match):
    with pytest.raises(InputError, match=match):
        gm.evaluate([1.72, 1.12], **kwargs)


def test_thickness_hook_validation():
    with pytest.raises(InputError, match="thickness_nm: needs one value or one per stack"):
        evaluate_thickness([[1.7, 1.1], [1.8, 1.1]], [100, 200, 300])
    with pytest.raises(InputError, match=r"junction: must be a junction number in \[1, 2\]"):
        evaluate_thickness([1.7, 1.1], [100], junction=3)
    with pytest.raises(InputError, match="junction: must be a junction number"):
        evaluate_thickness([1.7, 1.1], [100], junction=0)


def test_thinning_a_low_gap_top_cell_current_matches_a_series_stack():
    # A series stack whose top gap is too low (1.55 eV on 1.12 eV is
    # bottom-limited) is current-matched by thinning the top cell, which passes light to
    # the bottom cell: the efficiency has an interior maximum above the thick-top value.
    th = np.geomspace(50.0, 1e6, 60)
    res = evaluate_thickness([1.55, 1.12], th, "series", urbach_energy_meV=10.0)
    eff = res.efficiency
    best = int(np.argmax(eff))
    assert 0 < best < th.size - 1
    assert eff[best] > eff[-1] + 0.005  # at least half a point absolute
    # at the optimum the photocurrents are close to matched (within 10 %: the optimum of
    # a series stack is where dP/dd = 0, not exact matching, since the thinner top cell
    # also changes its V_oc and fill factor; and the thickness grid steps by 18 %), while
    # the thick stack is far from it (ratio about 0.5)
    j = res.solution.jph[best]
    assert abs(j[0] - j[1]) / j.max() < 0.10
    assert res.mismatch_ratio[-1] < 0.6


def test_thinner_top_cell_emits_less():
    # Reciprocity (Rau 2007): the radiative dark current follows the absorptance, so a
    # thinner top cell has a smaller J0 (it emits less) as well as a smaller J_ph.
    th = np.array([50.0, 200.0, 1000.0, 1e5])
    res = evaluate_thickness([1.72, 1.12], th, "independent")
    vt = sc.k * 300.0 / sc.e
    j0 = res.solution.jph[:, 0] / np.expm1(res.solution.voc_junction[:, 0] / vt)
    assert np.all(np.diff(j0) > 0)


@pytest.mark.parametrize(
    "first_nm, gap_eV, refused",
    [
        (820.0, 1.30, True),  # table from 1.512 eV, gap 1.30 eV: does not reach the gap
        (960.0, 1.30, False),  # table from 1.2915 eV: just covers the gap
        (1000.0, 1.30, False),  # table from 1.240 eV: covers the gap
    ],
)
def test_alpha_table_must_reach_the_gap(tmp_path, first_nm, gap_eV, refused):
    # A table starting above the gap would give alpha = 0 between gap and first row and
    # silently model a wider-gap cell; it is refused, naming junction, energy and file.
    wl = np.arange(300.0, first_nm + 0.1, 5.0)
    p = tmp_path / "short.csv"
    p.write_text("wavelength_nm,alpha_per_cm\n" + "\n".join(f"{a},1e4" for a in wl))
    kw = dict(absorber=["step", "table"], alpha_file=[None, p], thickness_nm=[0, 2000])
    if refused:
        with pytest.raises(
            InputError,
            match=r"alpha_file: the absorption table of junction 2 "
            r"starts at 1\.51\d* eV .* above the junction's gap 1\.3 eV",
        ):
            gm.evaluate([1.8, gap_eV], "series", **kw)
    else:
        res = gm.evaluate([1.8, gap_eV], "series", **kw)
        # the junction's V_oc stays below its gap (it was 2.7 V for a table not reaching it)
        assert 0.0 < float(res.solution.voc_junction[0, 1]) < gap_eV


@pytest.mark.parametrize("x_a", [0.5, 5.0, 40.0, 80.0, 150.0])
@pytest.mark.parametrize("h", [1e-9, 1e-6, 1e-3, 0.0999, 0.1, 0.5, 3.0])
def test_bin_emission_against_mpmath(x_a, h):
    # Boltzmann emission of one bin [x_a, x_a + h] (units of q g (kT)^3, x = E / kT):
    # the integrals of x^2 e^-x and x^3 e^-x over the bin, from their antiderivatives
    # -e^-x (x^2 + 2x + 2) and -e^-x (x^3 + 3x^2 + 6x + 6) evaluated by mpmath at 40
    # digits (a reference outside the project). In double precision a bin of 1e-9 kT
    # lost ~1e-7 of its value to cancellation in G(x_a) - G(x_b); the difference form
    # keeps 1e-13: rounding x = E / kT costs x * 2.2e-16 (3.3e-14 at x = 150), plus the
    # mild cancellation of the wide-bin form just above h = 0.1 at x = 0.5.
    import mpmath

    from gapmatch.core.planck import boltzmann_bin_emission

    mpmath.mp.dps = 40
    kt = KT300
    edges = np.array([x_a * kt, (x_a + h) * kt])
    dg, dg3, _ = boltzmann_bin_emission(edges, kt)
    xa = mpmath.mpf(edges[0]) / mpmath.mpf(kt)
    xb = mpmath.mpf(edges[1]) / mpmath.mpf(kt)

    def g2(x):
        return mpmath.exp(-x) * (x * x + 2 * x + 2)

    def g3(x):
        return mpmath.exp(-x) * (x**3 + 3 * x * x + 6 * x + 6)

    ref2 = g2(xa) - g2(xb)
    ref3 = g3(xa) - g3(xb)
    assert abs(dg[0] / float(ref2) - 1) < 1e-13
    assert abs(dg3[0] / float(ref3) - 1) < 1e-13
