"""Roadmaps: Monte Carlo statistics against direct evaluations, common random numbers,
probabilities of being best, sensitivity, headroom and the design search."""

from __future__ import annotations

import json

import numpy as np
import pytest
import scipy.stats
from hypothesis import given, settings
from hypothesis import strategies as st

import gapmatch as gm
from gapmatch.materials import load_library
from gapmatch.roadmap import (
    CAUTION,
    EfficiencyEvaluator,
    EvaluatorBatch,
    Uncertain,
    crn_uniforms,
    parse_roadmap,
    run_roadmap,
)

LIB = load_library()


def study(candidates: str, projections: str = "", *, draws=300, seed=1, extra="", temp=300.0):
    text = f"""
[roadmap]
name = "t"
milestones = [2030, 2035]
draws = {draws}
seed = {seed}
[conditions]
spectrum = "AM1.5G"
temperature_K = {temp}
[search]
samples = 128
starts = 2
{extra}
{candidates}
{projections}
"""
    return parse_roadmap(text, "t.toml")


SI_GAAS = """
[[candidates]]
name = "GaAs on Si"
materials = ["GaAs", "Si"]
connection = "series"
"""


def _point_projections(ere_top=0.2, ere_bottom=0.006):
    return f"""
[[projections]]
material = "GaAs"
years = [2030, 2035]
ere = {ere_top}
[[projections]]
material = "Si"
years = [2030, 2035]
ere = {ere_bottom}
"""


# ---- collapsed uncertainty and radiative limit -------------------------------------------
@pytest.mark.parametrize("connection", ["series", "independent"])
def test_point_projections_equal_direct_evaluate(connection):
    """No spread: P10 = P50 = P90 = one gm.evaluate of the same stack (1e-12 relative:
    the same arithmetic, batched)."""
    s = study(SI_GAAS.replace("series", connection), _point_projections())
    r = run_roadmap(s)
    for o in r.outcomes:
        direct = gm.evaluate(o.gaps_cell_eV, connection, ere=[0.2, 0.006]).efficiency[0]
        p10, p50, p90 = o.percentiles()
        assert p10 == p50 == p90
        assert p50 == pytest.approx(direct, rel=1e-12)
        assert o.likely == pytest.approx(direct, rel=1e-12)


def test_ere_one_recovers_the_radiative_limit():
    """ERE = 1, no thickness, no resistance: the result is the ideal limit of the gaps, and
    the only headroom left in series is the current mismatch."""
    s = study(SI_GAAS, _point_projections(1.0, 1.0))
    for o in run_roadmap(s).outcomes:
        ideal = gm.evaluate(o.gaps_cell_eV, "series").efficiency[0]
        four_t = gm.evaluate(o.gaps_cell_eV, "independent").efficiency[0]
        assert o.percentiles()[1] == pytest.approx(ideal, rel=1e-12)
        assert o.headroom["radiative_limit"] == pytest.approx(four_t, rel=1e-12)
        c = o.headroom["causes"]
        assert c["non_radiative"] == c["resistance"] == c["thickness"] == 0.0
        assert c["current_mismatch"] == pytest.approx(four_t - ideal, abs=1e-15)


def test_headroom_steps_match_direct_evaluations():
    """Each cause's share is the difference of two direct evaluations (the documented
    order: resistance, collection, thickness, non-radiative, mismatch)."""
    proj = """
[[projections]]
material = "perovskite-wide"
years = [2030, 2035]
ere = 1e-3
thickness_nm = 400.0
collection_efficiency = 0.95
series_resistance_ohm_cm2 = 0.5
[[projections]]
material = "Si"
years = [2030, 2035]
ere = 0.006
series_resistance_ohm_cm2 = 0.3
"""
    cands = """
[[candidates]]
name = "pk on Si"
materials = ["perovskite-wide", "Si"]
connection = "series"
"""
    o = run_roadmap(study(cands, proj, draws=5)).outcomes[0]
    g = o.gaps_cell_eV
    pk, si = LIB["perovskite-wide"], LIB["Si"]
    finite = dict(
        absorber=["direct", "step"],
        thickness_nm=[400.0, np.nan],
        alpha0_per_cm=[pk.alpha0_per_cm.value, si.alpha0_per_cm.value],
        light_trapping=[pk.light_trapping, si.light_trapping],
        refractive_index=[pk.refractive_index.value, si.refractive_index.value],
    )
    e = [1e-3, 0.006]
    ev = lambda conn="series", **kw: gm.evaluate(g, conn, **kw).efficiency[0]  # noqa: E731
    v0 = ev(ere=e, collection_efficiency=[0.95, 1.0], series_resistance_ohm_cm2=0.8, **finite)
    v1 = ev(ere=e, collection_efficiency=[0.95, 1.0], **finite)
    v2 = ev(ere=e, **finite)
    v3 = ev(ere=e)
    v4 = ev()
    v5 = ev("independent")
    c = o.headroom["causes"]
    # same calls as the roadmap makes, so equal to rounding of the subtraction
    assert o.likely == pytest.approx(v0, rel=1e-12)
    for got, want in [
        (c["resistance"], v1 - v0),
        (c["collection"], v2 - v1),
        (c["thickness"], v3 - v2),
        (c["non_radiative"], v4 - v3),
        (c["current_mismatch"], v5 - v4),
    ]:
        assert got == pytest.approx(want, abs=1e-14)
    assert all(v > 0 for v in c.values())


# ---- probabilities ---------------------------------------------------------------------------
def test_probabilities_sum_to_one_and_a_sure_winner_gets_one():
    cands = """
[[candidates]]
name = "good"
materials = ["perovskite-wide", "Si"]
connection = "series"
[[candidates]]
name = "bad"
materials = ["perovskite-wide", "CIGS"]
connection = "series"
[[candidates]]
name = "single Si"
materials = ["Si"]
"""
    proj = """
[[projections]]
material = "perovskite-wide"
years = [2030, 2035]
ere = { low = 1e-4, likely = 1e-3, high = 1e-2 }
[[projections]]
material = "CIGS"
years = [2030, 2035]
ere = { low = 1e-6, likely = 1e-5, high = 1e-4 }
[[projections]]
material = "Si"
years = [2030, 2035]
ere = { low = 0.003, likely = 0.006, high = 0.01 }
"""
    r = run_roadmap(study(cands, proj, draws=400))
    for year in (2030, 2035):
        ps = [r.outcome(n, year).probability_best for n in ("good", "bad", "single Si")]
        assert sum(ps) == pytest.approx(1.0, abs=1e-12)
        # the perovskite-Si stack beats a poor CIGS bottom and single Si in every draw
        assert ps == [1.0, 0.0, 0.0]


def test_identical_candidates_share_every_draw():
    """Two candidates with the same stack tie in every draw (common random numbers) and
    share the probability equally."""
    two = SI_GAAS + SI_GAAS.replace('"GaAs on Si"', '"twin"')
    proj = _point_projections().replace("ere = 0.2", "ere = { low = 0.05, high = 0.3 }")
    r = run_roadmap(study(two, proj))
    for year in (2030, 2035):
        a, b = r.outcome("GaAs on Si", year), r.outcome("twin", year)
        np.testing.assert_array_equal(a.values, b.values)
        assert a.probability_best == b.probability_best == pytest.approx(0.5, abs=1e-12)


# ---- sampling ---------------------------------------------------------------------------------
def test_one_uncertain_input_is_named_by_the_sensitivity():
    proj = _point_projections().replace(
        "ere = 0.006", "ere = { low = 0.001, likely = 0.006, high = 0.02 }"
    )
    r = run_roadmap(study(SI_GAAS, proj))
    for o in r.outcomes:
        assert [d["input"] for d in o.sensitivity] == ["Si.ere"]
        d = o.sensitivity[0]
        # efficiency rises strictly with the bottom cell's ERE: ranks agree exactly
        assert d["rank_correlation"] == pytest.approx(1.0, abs=1e-12)
        assert d["swing_low"] < 0 < d["swing_high"]
        assert r.ranking_frame().set_index("year").loc[o.year, "top_input"] == "Si.ere"


def test_same_seed_same_numbers_and_another_seed_differs():
    proj = _point_projections().replace("ere = 0.006", "ere = { low = 0.001, high = 0.02 }")
    a = run_roadmap(study(SI_GAAS, proj, seed=5))
    b = run_roadmap(study(SI_GAAS, proj, seed=5))
    c = run_roadmap(study(SI_GAAS, proj, seed=6))
    for oa, ob, oc in zip(a.outcomes, b.outcomes, c.outcomes, strict=True):
        np.testing.assert_array_equal(oa.values, ob.values)
        np.testing.assert_array_equal(oa.gaps_eV, ob.gaps_eV)
        assert not np.array_equal(oa.values, oc.values)
    assert a.to_dict()["milestones"] == b.to_dict()["milestones"]


def test_common_random_numbers_across_candidates_and_order():
    """A shared material's draws are identical in every candidate that uses it and do
    not depend on the order of the candidates."""
    cands = """
[[candidates]]
name = "A"
materials = ["perovskite-wide", "Si"]
connection = "series"
[[candidates]]
name = "B"
materials = ["GaAs", "Si"]
connection = "independent"
"""
    proj = """
[[projections]]
material = "Si"
years = [2030, 2035]
ere = { low = 0.003, likely = 0.006, high = 0.01 }
[[projections]]
material = "perovskite-wide"
years = [2030, 2035]
ere = { low = 1e-4, likely = 1e-3, high = 1e-2 }
[[projections]]
material = "GaAs"
years = [2030, 2035]
ere = { low = 0.05, likely = 0.1, high = 0.3 }
"""
    r = run_roadmap(study(cands, proj))
    swapped = cands.split("[[candidates]]")
    r2 = run_roadmap(study("[[candidates]]".join(["", swapped[2], swapped[1]]), proj))
    for year in (2030, 2035):
        a, b = r.outcome("A", year), r.outcome("B", year)
        np.testing.assert_array_equal(a.inputs["Si.ere"], b.inputs["Si.ere"])
        np.testing.assert_array_equal(a.inputs["Si.ere"], r2.outcome("A", year).inputs["Si.ere"])
        np.testing.assert_array_equal(a.values, r2.outcome("A", year).values)
    # milestones draw independently
    assert not np.array_equal(
        r.outcome("A", 2030).inputs["Si.ere"], r.outcome("A", 2035).inputs["Si.ere"]
    )
    u = crn_uniforms(1, "Si", "ere", 2030, 300)
    assert 0.0 <= u.min() and u.max() < 1.0


@pytest.mark.parametrize(
    ("low", "likely", "high"), [(400.0, 600.0, 900.0), (1.0, 1.0, 5.0), (2.0, 7.0, 7.0)]
)
def test_triangular_quantile_against_scipy(low, likely, high):
    """The inverse CDF equals scipy.stats.triang.ppf (c = (mode-low)/(high-low)) to
    1e-12 relative (closed forms of the same function)."""
    u = np.linspace(0.0, 1.0, 101)
    d = Uncertain("triangular", low, likely, high)
    ref = scipy.stats.triang.ppf(u, (likely - low) / (high - low), loc=low, scale=high - low)
    np.testing.assert_allclose(d.quantile(u), ref, rtol=1e-12)


def test_ere_is_sampled_in_log_space():
    d = Uncertain("triangular", 1e-4, 1e-3, 1e-2, log=True)
    u = np.linspace(0, 1, 101)
    ref = scipy.stats.triang.ppf(u, 0.5, loc=-4.0, scale=2.0)
    np.testing.assert_allclose(np.log10(d.quantile(u)), ref, rtol=1e-12, atol=1e-12)


def test_draws_go_through_one_batched_call_per_candidate_and_milestone():
    calls = []

    class Counting(EfficiencyEvaluator):
        def __call__(self, gaps_eV, connection, physics):  # noqa: N803
            calls.append(np.asarray(gaps_eV).shape[0])
            return super().__call__(gaps_eV, connection, physics)

    proj = _point_projections().replace("ere = 0.006", "ere = { low = 0.001, high = 0.02 }")
    run_roadmap(study(SI_GAAS, proj, draws=777), Counting())
    assert calls.count(777) == 2  # one candidate, two milestones


# ---- design -----------------------------------------------------------------------------------
def test_design_gap_matches_a_brute_force_scan():
    """A tunable top on silicon (series): the design gap and its efficiency agree with a
    dense scan by gm.evaluate (step 1e-4 eV: efficiency within 1e-6 absolute of the scan's
    best, the polish converges further than the scan resolves)."""
    cands = """
[[candidates]]
name = "pk on Si"
materials = ["perovskite-wide", "Si"]
connection = "series"
"""
    proj = """
[[projections]]
material = "perovskite-wide"
years = [2030, 2035]
ere = 1e-3
gap_window_eV = [1.55, 1.85]
[[projections]]
material = "Si"
years = [2030, 2035]
ere = 0.006
"""
    o = run_roadmap(study(cands, proj, draws=3)).outcomes[0]
    si = float(LIB["Si"].gap.gap_at_T(300.0))
    tops = np.arange(1.55, 1.85, 1e-4)
    g = np.column_stack([tops, np.full_like(tops, si)])
    eff = gm.evaluate(g, "series", ere=[1e-3, 0.006]).efficiency
    assert o.gaps_eV[1] == si
    assert o.gaps_eV[0] == pytest.approx(tops[np.argmax(eff)], abs=1e-3)
    assert o.likely >= eff.max() - 1e-6


def test_cell_temperature_shifts_gaps_like_the_api_model():
    """At 350 K the roadmap shifts Varshni gaps itself; gm.evaluate with the same Varshni
    parameters (gap_reference_K = 300) gives the same efficiency (1e-12 relative)."""
    s = study(SI_GAAS, _point_projections(), temp=350.0, draws=2)
    o = run_roadmap(s).outcomes[0]
    v = [
        (LIB[k].gap.params["alpha_eV_K"].value, LIB[k].gap.params["beta_K"].value)
        for k in ("GaAs", "Si")
    ]
    ref = gm.evaluate(o.gaps_eV, "series", ere=[0.2, 0.006], temperature_K=350.0, varshni=v)
    assert o.likely == pytest.approx(ref.efficiency[0], rel=1e-12)
    assert np.all(o.gaps_cell_eV < o.gaps_eV)


def test_alloy_design_reports_composition():
    cands = """
[[candidates]]
name = "AlGaAs on Si"
materials = ["AlGaAs", "Si"]
connection = "series"
"""
    proj = """
[[projections]]
material = "AlGaAs"
years = [2030, 2035]
ere = 0.05
"""
    o = run_roadmap(study(cands, proj, draws=2)).outcomes[0]
    x = o.compositions["AlGaAs"]["x"]
    assert 0.0 <= x <= 0.4
    assert float(LIB["AlGaAs"].gap.gap_at_T(300.0, x)) == pytest.approx(o.gaps_eV[0], abs=1e-6)


# ---- outputs ---------------------------------------------------------------------------------
def test_json_shape_sources_and_marks(tmp_path):
    cands = (
        SI_GAAS
        + """
[[candidates]]
name = "pk on Si"
materials = ["perovskite-wide", "Si"]
connection = "series"
"""
    )
    proj = """
[[projections]]
material = "GaAs"
years = [2030, 2035]
ere = { low = 0.05, likely = 0.1, high = 0.3 }
source = "invented for the test"
[[projections]]
material = "perovskite-wide"
years = [2030, 2035]
ere = { low = 1e-4, likely = 1e-3, high = 1e-2 }
"""
    r = run_roadmap(study(cands, proj, draws=50))
    d = json.loads(json.dumps(r.to_dict()))
    assert d["caution"] == CAUTION and "not forecasts" in d["caution"]
    assert [m["year"] for m in d["milestones"]] == [2030, 2035]
    for m in d["milestones"]:
        for c in m["candidates"]:
            assert {"name", "gaps_eV", "p10_pct", "p50_pct", "p90_pct", "probability_best"} <= set(
                c
            )
            assert c["p10_pct"] <= c["p50_pct"] <= c["p90_pct"]
            assert "from memory" in c["marks"]  # Si's ERE comes from the library, from memory
    src = {s["key"]: s for s in d["sources"]}
    assert src["green2012"]["status"] == "from memory"
    assert any(u.startswith("Si.ere@") for u in src["green2012"]["used_by"])
    assert src["thurmond1975"]["status"] == "cited"
    assert any(s["status"] == "study assumption" for s in d["sources"])
    # only numbers that were used: no thickness was projected, so the library's
    # absorption defaults and typical thicknesses ("common practice") are not listed
    assert "practice" not in src
    assert "GaAs.ere@2030" not in src["green2012"]["used_by"]  # projected, not the library's
    files = r.write_csv(tmp_path)
    assert sorted(p.name for p in files) == sorted(
        f"t-{k}.csv" for k in ("ranking", "headroom", "sensitivity", "sources", "draws")
    )
    assert len(r.draws_frame()) == 50 * 4
    rank = r.ranking_frame()
    assert list(rank.groupby("year")["rank"].apply(list)) == [[1, 2], [1, 2]]
    assert rank["marks"].str.contains("from memory").all()


def test_custom_evaluator_hook():
    """An evaluator of another quantity (here a stand-in for annual energy: efficiency
    times 1000 W m^-2 times 1800 h, in kWh m^-2) changes the keys and the values."""

    class Energy:
        name, unit, scale, label = "annual_energy", "kWh_m2", 1.0, "energy [kWh m^-2]"

        def __init__(self):
            self.eff = EfficiencyEvaluator()

        def __call__(self, gaps_eV, connection, physics):  # noqa: N803
            b = self.eff(gaps_eV, connection, physics)
            return EvaluatorBatch(b.value * 1000.0 * 1800.0 / 1000.0, b.jph_A_m2)

        def describe(self):
            return {"quantity": "test energy"}

    s = study(SI_GAAS, _point_projections(), draws=3)
    e = run_roadmap(s, Energy()).to_dict()["milestones"][0]["candidates"][0]
    p = run_roadmap(s).to_dict()["milestones"][0]["candidates"][0]
    assert e["p50_kWh_m2"] == pytest.approx(p["p50_pct"] / 100 * 1800.0, rel=1e-12)


@settings(max_examples=10, deadline=None)
@given(
    lo=st.floats(-5.0, -0.5),
    width=st.floats(0.0, 4.0),
    mode=st.floats(0.0, 1.0),
    bottom=st.floats(-4.0, 0.0),
)
def test_statistics_invariants(lo, width, mode, bottom):
    """For any ERE range of the top cell (log10 bounds) the percentiles are ordered, the
    likely value lies between the extremes of the draws, nothing exceeds the radiative
    limit of the same gaps, and the headroom shares are non-negative (each cause only
    takes power away). Efficiency rises with ERE, so every draw lies between the swings
    to the low and the high bound."""
    hi = min(lo + width, 0.0)
    likely = 10 ** (lo + mode * (hi - lo))
    proj = (
        '[[projections]]\nmaterial = "GaAs"\nyears = [2030, 2035]\n'
        f"ere = {{ low = {10**lo!r}, likely = {likely!r}, high = {10**hi!r} }}\n"
        '[[projections]]\nmaterial = "Si"\nyears = [2030, 2035]\n'
        f"ere = {10**bottom!r}\n"
    )
    for o in run_roadmap(study(SI_GAAS, proj, draws=64)).outcomes:
        p10, p50, p90 = o.percentiles()
        assert p10 <= p50 <= p90
        if o.sensitivity:
            d = o.sensitivity[0]
            assert o.values.min() >= o.likely + d["swing_low"] - 1e-12
            assert o.values.max() <= o.likely + d["swing_high"] + 1e-12
        assert o.values.max() <= o.headroom["radiative_limit"] + 1e-12
        assert all(v >= -1e-12 for v in o.headroom["causes"].values())
