"""Efficiency maps: optimum, ridge, tolerance window, difference, mismatch, cuts.

Maps are checked against independent calls of the checked public evaluator
(``gapmatch.evaluate``, one stack at a time or per grid column), against scipy.optimize
for the re-optimised gaps, and against the high-precision references of
``tests/data/references.json`` for the two-junction optimum.
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import minimize_scalar

import gapmatch as gm
from gapmatch.maps import compute_cut, compute_map, grid_axis


@pytest.fixture(scope="module")
def full_map():
    """The default 0.5-2.5 eV, 0.01 eV two-junction map (both connections)."""
    return compute_map()


@pytest.fixture(scope="module")
def small_map():
    return compute_map(x_range_eV=(1.3, 2.1), y_range_eV=(0.7, 1.4), step_eV=0.05)


@pytest.mark.parametrize("connection", ["series", "independent"])
def test_optimum_equals_engine_at_that_point(full_map, connection):
    opt = full_map.optimum(connection)
    ref = gm.evaluate(opt["gaps_eV"], connection, "AM1.5G")
    # same engine, same inputs: only floating-point reassociation between batch sizes
    assert opt["efficiency"] == pytest.approx(float(ref.efficiency[0]), rel=1e-9)
    # and it is the grid maximum over the physically ordered half as well
    eff = full_map.efficiency[connection]
    assert opt["efficiency"] == pytest.approx(np.max(eff[full_map.descending]), rel=1e-12)


def test_series_optimum_matches_literature(full_map, references):
    # 2J series, AM1.5G, 300 K, radiative limit: the best pair of the 10 meV grid and the
    # value at 1.63 / 0.96 eV against tests/data/make_references.py (30-digit direct
    # maximisation on the same grid points; it finds the commonly quoted optimum of about
    # 45.7 % near 1.63 / 0.96 eV, from memory, e.g. S. P. Bremner, M. Y. Levy and C. B.
    # Honsberg, Prog. Photovolt. 16, 225 (2008)). Tolerances: 1e-9 relative (float64
    # rounding of the grid's gap values and of the photon integrals), gaps to 1e-9 eV.
    ref = next(o for o in references["two_junction_optima"] if o["connection"] == "series")
    point = next(
        c
        for c in references["two_junction"]
        if c["spectrum"] == "AM1.5G"
        and c["connection"] == "series"
        and c["gaps_eV"] == [1.63, 0.96]
    )
    opt = full_map.optimum("series")
    assert opt["efficiency"] == pytest.approx(ref["best_on_10meV_grid_efficiency"], rel=1e-9)
    assert opt["gaps_eV"] == pytest.approx(ref["best_on_10meV_grid_gaps_eV"], abs=1e-9)
    assert full_map.value_at("series", 1.63, 0.96) == pytest.approx(point["efficiency"], rel=1e-9)


@pytest.mark.parametrize("connection", ["series", "independent"])
def test_ridge_point_by_point(small_map, connection):
    m = small_map
    ridge = m.ridge(connection)
    assert len(ridge) == m.x_eV.size  # every top gap here has a smaller bottom partner
    for _, row in ridge.iterrows():
        x = row["x_eV"]
        ys = m.y_eV[m.y_eV < x]
        res = gm.evaluate(np.column_stack([np.full(ys.size, x), ys]), connection, "AM1.5G")
        k = int(np.argmax(res.efficiency))
        assert row["best_y_eV"] == pytest.approx(ys[k], abs=1e-9)
        # same engine: floating point only
        assert row["efficiency_pct"] == pytest.approx(100 * res.efficiency[k], rel=1e-9)


@pytest.mark.parametrize("connection", ["series", "independent"])
@pytest.mark.parametrize("within", [0.5, 1.0, 3.0])
def test_tolerance_window(small_map, connection, within):
    m = small_map
    w = m.tolerance_window(connection, within)
    opt = m.optimum(connection)
    iy, ix = opt["index"]
    assert w.mask[iy, ix]
    eff = 100 * m.efficiency[connection]
    # recomputed independently of the map: every point inside is within the window and
    # every point outside is not (1e-9 % guards only the comparison at the edge)
    xx, yy = np.meshgrid(m.x_eV, m.y_eV)
    ref = 100 * gm.evaluate(
        np.column_stack([xx.ravel(), yy.ravel()]), connection, require_descending=False
    ).efficiency.reshape(eff.shape)
    assert np.all(ref[w.mask] >= opt["efficiency_pct"] - within - 1e-9)
    assert np.all(ref[~w.mask] < opt["efficiency_pct"] - within + 1e-9)
    # the ranges bound the mask exactly
    assert w.x_range_eV == (xx[w.mask].min(), xx[w.mask].max())
    assert w.y_range_eV == (yy[w.mask].min(), yy[w.mask].max())
    assert w.y_range_at_opt_x_eV[0] <= opt["y_eV"] <= w.y_range_at_opt_x_eV[1]


def test_difference_and_mismatch_match_evaluate(small_map):
    m = small_map
    rng = np.random.default_rng(3)
    for _ in range(10):
        iy, ix = rng.integers(0, m.shape[0]), rng.integers(0, m.shape[1])
        g = [m.x_eV[ix], m.y_eV[iy]]
        s = gm.evaluate(g, "series", require_descending=False)
        i = gm.evaluate(g, "independent", require_descending=False)
        # same engine: floating point only
        assert m.difference()[iy, ix] == pytest.approx(
            100 * (i.efficiency[0] - s.efficiency[0]), abs=1e-9
        )
        assert m.mismatch_ratio("series")[iy, ix] == pytest.approx(s.mismatch_ratio[0], rel=1e-9)


def test_three_junction_fixed_map_equals_evaluate():
    m = compute_map(
        stack_eV=[1.9, 1.37, 0.93],
        axes=(1, 3),
        others="fixed",
        x_range_eV=(1.7, 2.1),
        y_range_eV=(0.8, 1.1),
        step_eV=0.1,
    )
    assert m.others == "fixed" and m.n_junctions == 3
    xx, yy = np.meshgrid(m.x_eV, m.y_eV)
    g = np.column_stack([xx.ravel(), np.full(xx.size, 1.37), yy.ravel()])
    for c in ("series", "independent"):
        ref = gm.evaluate(g, c).efficiency.reshape(m.shape)
        np.testing.assert_allclose(m.efficiency[c], ref, rtol=1e-9)  # same engine
    assert "gap_2_eV" in m.to_frame().columns


@pytest.mark.parametrize("connection", ["series", "independent"])
def test_three_junction_optimised_map_beats_scipy(connection):
    m = compute_map(
        [connection],
        stack_eV=[1.9, 1.37, 0.93],
        axes=(1, 2),
        others="optimised",
        x_range_eV=(1.8, 2.0),
        y_range_eV=(1.3, 1.45),
        step_eV=0.05,
    )
    for iy, y in enumerate(m.y_eV):
        for ix, x in enumerate(m.x_eV):
            res = minimize_scalar(
                lambda b, x=x, y=y: (
                    -gm.evaluate([x, y, b], connection, require_descending=False).efficiency[0]
                ),
                bounds=(0.5, min(y, 1.3)),
                method="bounded",
                options={"xatol": 1e-5},
            )
            # the batched pattern search stops at 2e-4 eV; near a series kink that costs
            # at most ~1e-5 in efficiency (fraction)
            assert m.efficiency[connection][iy, ix] >= -res.fun - 2e-5
            assert m.gaps_eV[connection][iy, ix, 2] == pytest.approx(res.x, abs=5e-3)


def test_cut_equals_evaluate():
    vals = np.arange(1.3, 2.2, 0.1)
    cut = compute_cut([2.0, 1.12], 1, vals)
    for c in ("series", "independent"):
        ref = gm.evaluate(np.column_stack([vals, np.full(vals.size, 1.12)]), c)
        np.testing.assert_allclose(cut.efficiency[c], ref.efficiency, rtol=1e-9)
    f = cut.to_frame()
    assert list(f.columns) == [
        "gap_1_eV",
        "gap_2_eV",
        "efficiency_series_pct",
        "efficiency_independent_pct",
    ]


def test_frame_and_summary(small_map):
    f = small_map.to_frame()
    assert len(f) == small_map.x_eV.size * small_map.y_eV.size
    for col in f.columns:
        if col != "gaps_in_physical_order":
            assert col.endswith(("_eV", "_pct")) or col.startswith("mismatch_ratio"), col
    s = json.loads(json.dumps(small_map.summary()))
    assert set(s["connections"]) == {"series", "independent"}
    assert s["connections"]["series"]["optimum"]["efficiency_pct"] == pytest.approx(
        small_map.optimum("series")["efficiency_pct"]
    )


@given(lo=st.floats(0.6, 1.6), w=st.floats(0.2, 0.8), step=st.sampled_from([0.05, 0.1]))
@settings(max_examples=15, deadline=None)
def test_independent_never_below_series(lo, w, step):
    # each junction at its own maximum power point can only do better than one common
    # current: a physical invariant (common practice, no source); 1e-9 is round-off
    m = compute_map(x_range_eV=(lo, lo + w), y_range_eV=(lo - 0.3, lo - 0.3 + w), step_eV=step)
    assert np.all(m.difference() >= -1e-9)


@pytest.mark.parametrize(
    "kwargs, field",
    [
        (dict(step_eV=0.0), "step_eV"),
        (dict(x_range_eV=(2.0, 1.0)), "x_range_eV"),
        (dict(x_range_eV=(0.5, 9.0)), "x_range_eV[1]"),
        (dict(step_eV=0.001), "step_eV"),  # 2001 x 2001 points
        (dict(connections=["parallel"]), "connections"),
        (dict(stack_eV=[1.9, 1.4, 1.0], axes=(1, 1)), "axes"),
        (dict(stack_eV=[1.9, 1.4, 1.0], others="free"), "others"),
    ],
)
def test_bad_input(kwargs, field):
    with pytest.raises(gm.InputError) as exc:
        compute_map(**kwargs)
    assert exc.value.field == field


def test_grid_axis_includes_end():
    g = grid_axis(0.5, 2.5, 0.01)
    assert g.size == 201 and g[0] == 0.5 and g[-1] == 2.5


def test_cli_map_writes_grid_and_summary(tmp_path, capsys):
    from gapmatch.cli import main

    prefix = tmp_path / "m"
    code = main(
        [
            "map",
            "--x-gap-range",
            "1.4",
            "1.8",
            "--y-gap-range",
            "0.8",
            "1.1",
            "--step",
            "0.05",
            "--out",
            str(prefix),
        ]
    )
    out = capsys.readouterr().out
    assert code == 0 and "series" in out and "not ratings" in out
    grid = (tmp_path / "m_map.csv").read_text().splitlines()
    assert grid[0].startswith("gap_1_eV,gap_2_eV,gaps_in_physical_order,efficiency_series_pct")
    assert len(grid) == 1 + 9 * 7
    s = json.loads((tmp_path / "m_summary.json").read_text())
    opt = s["connections"]["independent"]["optimum"]
    ref = gm.evaluate(opt["gaps_eV"], "independent").efficiency[0]
    assert opt["efficiency"] == pytest.approx(float(ref), rel=1e-9)  # same engine


def test_cli_map_bad_input_is_one_line(tmp_path, capsys):
    from gapmatch.cli import main

    code = main(["map", "--step", "-1", "--out", str(tmp_path / "x")])
    err = capsys.readouterr().err.strip()
    assert code == 2 and err.count("\n") == 0 and "--step:" in err
    assert not list(tmp_path.iterdir())


@given(a=st.floats(0.05, 5.0), b=st.floats(0.05, 5.0))
@settings(max_examples=30, deadline=None)
def test_tolerance_windows_are_nested(small_map, a, b):
    # a wider tolerance can only add points (definition; common practice, no source)
    lo, hi = sorted((a, b))
    for c in small_map.connections:
        narrow = small_map.tolerance_window(c, lo).mask
        wide = small_map.tolerance_window(c, hi).mask
        assert np.all(wide[narrow])
