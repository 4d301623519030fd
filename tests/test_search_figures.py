"""Figure and table data of the band-gap search (structure checks against the result)."""

from __future__ import annotations

import numpy as np
import plotly.graph_objects as go
import pytest

from gapmatch.search import constraint_costs, make_problem, optimise
from gapmatch.search import figures as fg


@pytest.fixture(scope="module")
def fixed_bottom():
    p = make_problem(2, "series", fixed_eV={2: 1.12}, robustness_eV=0.02)
    return p, optimise(p, storage=":memory:", trials=16, progress=False)


def test_history_and_parcoords(fixed_bottom):
    _, res = fixed_bottom
    fig = fg.history_figure(res)
    assert isinstance(fig, go.Figure)
    best_line = [t for t in fig.data if t.name == "best so far"][0]
    # the best-so-far line never decreases and ends at the best feasible trial
    assert np.all(np.diff(best_line.y) >= 0)
    feas = res.trials[res.trials["feasible"]]
    assert best_line.y[-1] == pytest.approx(feas["efficiency_pct"].max())
    pc = fg.parallel_coordinates_figure(res)
    labels = [d.label for d in pc.data[0].dimensions]
    assert labels[0] == "E_g,1 [eV]" and labels[-1] == "efficiency [%]"
    assert len(pc.data[0].dimensions[0].values) == (res.trials["state"] == "COMPLETE").sum()


def test_optima_table_and_costs(fixed_bottom):
    problem, res = fixed_bottom
    tab = fg.optima_table(res)
    assert tab["rank"].iloc[0] == 1
    assert tab["efficiency_pct"].iloc[0] == pytest.approx(100 * res.best["efficiency"])
    assert (tab["delta_pct"] <= 1e-12).all()
    assert isinstance(fg.optima_table_figure(res), go.Figure)
    costs = constraint_costs(problem, res.best_gaps_eV, res.best_value)
    ct = fg.constraint_cost_table(costs)
    assert set(ct.columns) >= {"constraint", "active", "with_pct", "without_pct", "cost_pct"}
    assert (ct["without_pct"] >= ct["with_pct"]).all()  # relaxing never hurts
    fig = fg.constraint_cost_figure(costs)
    assert len(fig.data) == 2


def test_pareto_figure(fixed_bottom):
    _, res = fixed_bottom
    fig = fg.pareto_figure(res)
    front = [t for t in fig.data if t.name == "Pareto front"][0]
    # along the front, more efficiency means less worst-case efficiency
    order = np.argsort(front.x)
    assert np.all(np.diff(np.asarray(front.y)[order]) <= 1e-12)
    with pytest.raises(ValueError, match="robustness"):
        fg.pareto_figure(optimise(make_problem(2), storage=":memory:", trials=5, progress=False))
