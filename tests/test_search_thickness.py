"""Absorber thickness searched with the gaps (``thickness_windows_nm``).

Thinning the top cell of a two-terminal stack passes part of its light to the cell
below and so shares current when the top gap is too low for current matching at full
thickness (Bremner et al., "Optimum band gap combinations to make best use of new
photovoltaic materials", Solar Energy 135, 750 (2016), the motivation of the feature).
The checks below compare the search with a brute-force scipy scan of the checked public
API (``gapmatch.evaluate``, which builds its absorber models afresh from the keywords,
not the search's pre-built device) and with a physical invariant of independent
connection.
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import minimize_scalar

import gapmatch as gm
from gapmatch.cli import main
from gapmatch.search import make_problem, optimise
from gapmatch.search.study_table import problem_from_study
from gapmatch.study import parse_study

#: Si bottom cell gap [eV] (common practice, no source) and a top gap below the
#: current-matching one for silicon (about 1.73 eV in the ideal limit, tests/test_search.py)
SI_EV, LOW_TOP_EV = 1.12, 1.55
#: top-cell thickness window [nm]
WINDOW_NM = (50.0, 5000.0)


def _run(problem, *, trials=6, seed=0):
    # few optuna trials: the Sobol stage and the polish carry the accuracy
    return optimise(problem, trials=trials, seed=seed, storage=":memory:", progress=False)


def _brute_top_thickness(gaps, connection, window_nm, **absorber):
    """Best efficiency over the top thickness by brute force: a 241-point log grid of
    ``gapmatch.evaluate`` (one batch), then scipy's bounded Brent search in log10(t)
    between the grid neighbours of the best grid point."""
    lo, hi = np.log10(window_nm)
    grid = np.linspace(lo, hi, 241)

    def eff(logt):
        t = np.atleast_1d(10.0**logt)
        g = np.broadcast_to(gaps, (t.size, len(gaps)))
        th = np.column_stack([t, np.full(t.size, np.nan)])
        return gm.evaluate(g, connection, thickness_nm=th, **absorber).efficiency

    e = eff(grid)
    i = int(np.argmax(e))
    a, b = grid[max(i - 1, 0)], grid[min(i + 1, grid.size - 1)]
    res = minimize_scalar(
        lambda x: -eff(x)[0], bounds=(a, b), method="bounded", options={"xatol": 1e-7}
    )
    best = max((-res.fun, 10.0**res.x), (e[i], 10.0 ** grid[i]))
    return best  # (efficiency, thickness [nm])


@pytest.mark.parametrize(
    "absorber",
    [
        dict(absorber=["direct", "step"]),
        dict(absorber=["direct", "step"], light_trapping="double", urbach_energy_meV=15.0),
    ],
    ids=["direct-single-pass", "direct-double-pass-urbach"],
)
def test_thinned_top_cell_shares_current_and_matches_brute_force(absorber):
    p = make_problem(
        2,
        "series",
        fixed_eV={1: LOW_TOP_EV, 2: SI_EV},
        thickness_windows_nm={"top": WINDOW_NM},
        **absorber,
    )
    res = _run(p)
    ref = res.thick_reference
    t_nm = res.best_thickness_nm[0]
    # thinning helps a top gap too low for current matching (the thick optimum is a
    # point of the thinned problem, so never better)
    assert res.best_value >= ref["efficiency"]
    assert res.best_value > ref["efficiency"] + 0.01  # and by a lot here (> 1 % abs.)
    assert WINDOW_NM[0] < t_nm < 0.5 * WINDOW_NM[1]
    assert res.best_thickness_nm[1] is None  # the step bottom cell has no thickness
    # the thinned optimum shares current: the two junctions' Jsc closer than thick
    jsc = [j["jsc_mA_cm2"] for j in res.best["junctions"]]
    assert abs(jsc[0] - jsc[1]) < abs(ref["jsc_mA_cm2"][0] - ref["jsc_mA_cm2"][1])
    # independent check: brute force over the thickness with the checked API.
    # Tolerance: the polish stops at 1e-5 decades of thickness; at the current-matching
    # kink the efficiency changes by about 0.3 per decade, so the search lies within
    # 3e-6 (fraction) of the true maximum; 1e-5 leaves room for the Brent search's own
    # 1e-7-decade stop. Neither may beat the other by more.
    e_bf, t_bf = _brute_top_thickness([LOW_TOP_EV, SI_EV], "series", WINDOW_NM, **absorber)
    assert res.best_value == pytest.approx(e_bf, abs=1e-5)
    assert t_nm == pytest.approx(t_bf, rel=2e-3)  # 1e-3 decades either side
    # the reported stack is the checked evaluation at the reported thickness
    again = gm.evaluate([LOW_TOP_EV, SI_EV], "series", thickness_nm=[t_nm, np.nan], **absorber)
    assert res.best["efficiency"] == pytest.approx(again.efficiency[0], rel=1e-12)


def test_independent_connection_thinning_never_helps():
    # Physical invariant (independent connection): light the top cell does not absorb
    # reaches the lower-gap cell, which converts each photon at a lower voltage, so a
    # thinner top cell cannot gain while its absorber is not optically thick. (For
    # direct absorbers of alpha0 = 5e4 cm^-1 thicker than about 3 um this model shows a
    # shallow maximum, +0.014 % abs. at 1.55 / 1.12 eV, from the lower near-gap emission;
    # the window here stops at 2 um.) Free top gap, so the gaps are searched too.
    window = (50.0, 2000.0)
    p = make_problem(
        2,
        "independent",
        bounds_eV=(1.5, 2.2),
        fixed_eV={2: SI_EV},
        absorber=["direct", "step"],
        thickness_windows_nm={1: window},
    )
    res = _run(p)
    ref = res.thick_reference
    # optimum at the window's top (the polish stops within 1e-5 decades; 1e-3 relative
    # allows 4e-4 decades), efficiency equal to the thick optimum (the thick optimum is
    # one start of the thinned polish; 1e-7 absolute covers the polish's 1e-10 steps)
    assert res.best_thickness_nm[0] == pytest.approx(window[1], rel=1e-3)
    assert res.best_value == pytest.approx(ref["efficiency"], abs=1e-7)
    assert res.best_gaps_eV[0] == pytest.approx(ref["gaps_eV"][0], abs=2e-3)


@settings(max_examples=25, deadline=None)
@given(
    top=st.floats(1.4, 2.2),
    bottom=st.floats(0.8, 1.3),
    t1=st.floats(20.0, 2000.0),
    f=st.floats(0.05, 0.95),
)
def test_property_independent_efficiency_grows_with_top_thickness(top, bottom, t1, f):
    # the invariant behind the test above, on the checked API: t2 < t1 never does better
    t2 = f * t1
    r = gm.evaluate(
        [[top, bottom], [top, bottom]],
        "independent",
        absorber=["direct", "step"],
        thickness_nm=[[t1, np.nan], [t2, np.nan]],
    )
    assert r.efficiency[1] <= r.efficiency[0] + 1e-12  # 1e-12: round-off of the solver


TW = "thickness_windows_nm"


@pytest.mark.parametrize(
    "windows, absorber, match",
    [
        ({1: (2000, 100)}, None, rf"{TW}\[1\]: low must be below high \[nm\]"),
        ({1: (0.5, 100)}, None, rf"{TW}\[1\]: must be a number in \[1, 1e\+08\] nm"),
        ({1: (100, 2e8)}, None, rf"{TW}\[1\]: must be a number in \[1, 1e\+08\] nm"),
        ({3: (100, 2000)}, None, rf"{TW}: junction numbers run from 1 \(top\) to 2"),
        ({"middle": (100, 2000)}, None, rf"{TW}: junction numbers run from 1"),
        ({2: (100, 2000)}, None, rf"{TW}\[2\]: junction 2 has absorber 'step'"),
        ({1: (100, 2000)}, "step", rf"{TW}\[1\]: junction 1 has absorber 'step'"),
        ({"top": (100, 2000), 1: (200, 300)}, None, rf"{TW}: gives junction 1 twice"),
        ({1: "thin"}, None, rf"{TW}\[1\]: needs a \(low, high\) pair \[nm\]"),
    ],
)
def test_validation_errors(windows, absorber, match):
    kw = {"absorber": absorber or ["direct", "step"], TW: windows}
    with pytest.raises(gm.InputError, match=match) as err:
        make_problem(2, "series", fixed_eV={2: SI_EV}, **kw)
    assert "\n" not in str(err.value)  # one line


def test_thickness_window_needs_the_efficiency_objective():
    from gapmatch.search import EfficiencyObjective

    obj = EfficiencyObjective("series", {})
    with pytest.raises(gm.InputError, match="thickness_windows_nm: applies to the efficiency"):
        make_problem(
            2, objective=obj, absorber=["direct", "step"], thickness_windows_nm={1: (100, 900)}
        )


@pytest.mark.slow  # about 25 s on the shared 2-core machine (two searches)
def test_same_seed_same_answer():
    def run():
        p = make_problem(
            2,
            "series",
            bounds_eV=(1.5, 1.65),
            fixed_eV={2: SI_EV},
            absorber=["direct", "step"],
            thickness_windows_nm={"top": (100, 3000)},
        )
        return _run(p, trials=5, seed=7)

    a, b = run(), run()
    assert a.best_value == b.best_value
    assert a.best_gaps_eV.tolist() == b.best_gaps_eV.tolist()
    assert a.best_thickness_nm == b.best_thickness_nm
    assert a.thick_reference == b.thick_reference
    cols = [c for c in a.trials.columns if c not in ("worker_pid", "duration_s")]
    assert a.trials[cols].equals(b.trials[cols])
    assert "thickness_1_nm" in a.trials.columns
    done = a.trials[a.trials["state"] == "COMPLETE"]
    assert len(done) >= 5
    assert done["thickness_1_nm"].between(100.0, 3000.0).all()  # every trial in the window


@pytest.mark.slow  # about 20 s: the robustness box multiplies the evaluations by 3
def test_robustness_and_mismatch_constraint_with_thickness():
    # the gap-robustness box moves the gaps only; the mismatch constraint reads the
    # photocurrents of the finite absorber
    p = make_problem(
        2,
        "independent",
        bounds_eV=(1.5, 1.9),
        fixed_eV={2: SI_EV},
        absorber=["direct", "step"],
        thickness_windows_nm={1: (100, 3000)},
        min_mismatch_ratio=0.97,
        robustness_eV=0.02,
    )
    res = _run(p, trials=6)
    jsc = [j["jsc_mA_cm2"] for j in res.best["junctions"]]
    assert min(jsc) / max(jsc) >= 0.97 - 1e-6  # 1e-6: the polish's constraint steps
    assert res.robust_optima and "thickness_nm" in res.robust_optima[0]
    assert 100.0 <= res.best_thickness_nm[0] <= 3000.0


def test_cli_round_trip_json(capsys):
    args = [
        "optimise",
        "--junctions", "2",
        "--fix", f"1={LOW_TOP_EV}", f"bottom={SI_EV}",
        "--absorber", "direct", "step",
        "--thickness-window", "top", "50", "5000",
        "--trials", "5",
        "--storage", ":memory:",
        "--no-progress",
        "--json",
    ]  # fmt: skip
    assert main(args) == 0
    d = json.loads(capsys.readouterr().out)
    ts = d["thickness_search"]
    t = ts["thickness_nm"][0]
    assert 50.0 < t < 5000.0
    assert ts["windows_nm"] == {"1": [50.0, 5000.0]}
    assert d["efficiency"] > ts["thick_absorber_optimum"]["efficiency"]
    assert "not an ideal" in ts["note"]
    # the printed numbers fed back to the checked API give the printed efficiency
    again = gm.evaluate(
        d["gaps_eV"], "series", absorber=["direct", "step"], thickness_nm=[t, np.nan]
    )
    assert d["efficiency"] == pytest.approx(again.efficiency[0], rel=1e-12)
    assert d["conditions"]["physics"]["thickness_nm"][0] == pytest.approx(t, rel=1e-12)


@pytest.mark.parametrize(
    "extra, match",
    [
        (["--thickness-window", "top", "2000", "100"], r"thickness_windows_nm\[1\]: low must"),
        (["--thickness-window", "3", "100", "2000"], r"--thickness-window: junction numbers"),
        (["--thickness-window", "top", "0.1", "100"], r"\[1, 1e\+08\] nm"),
        (["--thickness-window", "top", "thin", "100"], r"--thickness-window: needs J LOW_NM"),
        (["--thickness-window", "bottom", "100", "2000"], r"junction 2 has absorber 'step'"),
    ],
)
def test_cli_errors_are_one_line(capsys, extra, match):
    import re

    args = ["optimise", "--junctions", "2", "--absorber", "direct", "step"]
    assert main([*args, *extra, "--storage", ":memory:", "--no-progress"]) == 2
    err = capsys.readouterr().err.strip()
    assert re.search(match, err), err
    assert len(err.splitlines()) == 1


STUDY = """
[study]
name = "thin"
title = "thinned top cell on silicon (fictional Veltmora lab)"
connections = ["series"]
sections = ["search"]

[[materials]]
name = "our-si"
gap_eV = 1.12

[[materials]]
name = "our-perovskite"
gap_eV = 1.55

[search]
materials = ["our-perovskite", "our-si"]
absorber = ["direct", "step"]
trials = 5
"""


STW = "search.thickness_windows_nm"


@pytest.mark.parametrize(
    "windows, match",
    [
        ("{top = [2000, 100]}", rf"{STW}.top: must be \[low, high\] with low < high"),
        ("{3 = [100, 2000]}", rf"{STW}.3: names junction 3, but the stack has 2"),
        ("{top = [0.1, 2000]}", rf"{STW}.top\[1\]: out of range"),
        ("{bottom = [100, 2000]}", rf"{STW}.bottom: junction 2 has absorber 'step'"),
        ("{top = [100, 2000], 1 = [100, 200]}", rf"{STW}.1: gives junction 1 a second"),
        ("{tpo = [100, 2000]}", r"did you mean 'top'"),
    ],
)
def test_study_validation(windows, match):
    text = STUDY + f"thickness_windows_nm = {windows}\n"
    with pytest.raises(gm.InputError, match=match):
        problem_from_study(parse_study(text, source="t.toml"))


def test_study_problem_and_report(tmp_path):
    from gapmatch.report import build_report, write_report

    st = parse_study(STUDY + "thickness_windows_nm = {top = [50, 5000]}\n", source="t.toml")
    p = problem_from_study(st)
    assert p.thickness_windows_nm() == {1: (50.0, 5000.0)}
    assert p.param_names == ["thickness_1_m"]  # both gaps fixed by the materials
    rep = build_report(st, command="test")
    page = write_report(rep, tmp_path).read_text()
    assert "Thinned optimum beside the thick-absorber optimum" in page
    assert "not ideal detailed-balance ceilings" in page
    summary = json.loads((tmp_path / "thin_summary.json").read_text())["search"]
    assert 50.0 < summary["best_thickness_nm"][0] < 5000.0
    assert summary["best_efficiency"] > summary["thick_absorber_optimum"]["efficiency"]
    csv = (tmp_path / "thin_search_thickness.csv").read_text().splitlines()
    assert csv[0].startswith("optimum,gap_1_eV,gap_2_eV,thickness_1_nm")
    assert len(csv) == 3


def test_tabulated_absorber_from_a_study_file(tmp_path):
    # An absorption table written from the direct model (alpha0 = 5e4 cm^-1, the
    # default) and named in the study (relative path) gives the thinned optimum of the
    # direct model. Tolerance: linear interpolation between 0.5 nm rows near the
    # square-root edge changes the absorbed photocurrent by up to 2e-3 relative
    # (tests/test_absorption.py), so efficiency and thickness agree to 3e-3.
    import scipy.constants as sc

    from gapmatch.core.absorption import DirectGapAbsorption

    gap_J = LOW_TOP_EV * sc.e
    wl = np.arange(300.0, 1200.0, 0.5)
    e = sc.h * sc.c / (wl * 1e-9)
    alpha_cm = DirectGapAbsorption(5e6, 0.0).alpha(e, gap_J) / 100.0
    (tmp_path / "data").mkdir()
    (tmp_path / "data" / "alpha.csv").write_text(
        "wavelength_nm,alpha_per_cm\n"
        + "\n".join(f"{a},{b}" for a, b in zip(wl, alpha_cm, strict=True))
    )
    text = STUDY.replace('absorber = ["direct", "step"]', 'absorber = ["table", "step"]')
    text += 'alpha_file = "data/alpha.csv"\nthickness_windows_nm = {top = [50, 5000]}\n'
    study_file = tmp_path / "thin.toml"
    study_file.write_text(text)
    from gapmatch.study import load_study

    p = problem_from_study(load_study(study_file))
    assert p.conditions["alpha_file"] == str(tmp_path / "data" / "alpha.csv")
    tab = _run(p)
    direct = _run(
        make_problem(
            2,
            "series",
            fixed_eV={1: LOW_TOP_EV, 2: SI_EV},
            absorber=["direct", "step"],
            thickness_windows_nm={1: (50, 5000)},
        )
    )
    assert tab.best_value == pytest.approx(direct.best_value, rel=3e-3)
    assert tab.best_thickness_nm[0] == pytest.approx(direct.best_thickness_nm[0], rel=3e-3)
    missing = text.replace("data/alpha.csv", "data/none.csv")
    study_file.write_text(missing)
    with pytest.raises(gm.InputError, match="search.alpha_file: file not found"):
        problem_from_study(load_study(study_file))
