"""Roadmap figures draw the result's own tables; HTML fragments escape and flag."""

from __future__ import annotations

import numpy as np
import pytest

from gapmatch.roadmap import figures as rf
from gapmatch.roadmap import parse_roadmap, run_roadmap
from gapmatch.roadmap.sections import report_sections

TEXT = """
[roadmap]
name = "fig"
title = "Figures <test>"
milestones = [2030, 2035]
draws = 100
[[candidates]]
name = "pk on Si <b>"
materials = ["perovskite-wide", "Si"]
connection = "series"
[[candidates]]
name = "GaAs on Si"
materials = ["GaAs", "Si"]
connection = "independent"
[[projections]]
material = "perovskite-wide"
years = [2030, 2035]
ere = { low = 1e-4, likely = 1e-3, high = 1e-2 }
collection_efficiency = 0.95
[[projections]]
material = "GaAs"
years = [2030, 2035]
ere = { low = 0.05, high = 0.3 }
"""


@pytest.fixture(scope="module")
def result():
    return run_roadmap(parse_roadmap(TEXT))


def test_trajectory_draws_the_ranking_table(result):
    fig = rf.trajectory_figure(result)
    f = result.ranking_frame()
    lines = [t for t in fig.data if t.mode == "lines+markers"]
    assert len(lines) == 2
    for t, c in zip(lines, ["pk on Si <b>", "GaAs on Si"], strict=True):
        want = f[f["candidate"] == c].sort_values("year")["p50_pct"].to_numpy()
        np.testing.assert_array_equal(np.asarray(t.y), want)
        assert "<b>" not in t.name  # escaped for plotly's HTML labels
    assert "[%]" in fig.layout.yaxis.title.text


def test_probability_bars_stack_to_one(result):
    fig = rf.probability_figure(result)
    total = np.sum([np.asarray(t.y, float) for t in fig.data], axis=0)
    np.testing.assert_allclose(total, 1.0, atol=1e-12)


def test_headroom_bars_reach_the_radiative_limit(result):
    fig = rf.headroom_figure(result, 2030)
    total = np.sum([np.asarray(t.x, float) for t in fig.data], axis=0)
    h = result.headroom_frame()
    want = h[h["year"] == 2030].iloc[::-1]["radiative_limit_pct"].to_numpy()
    np.testing.assert_allclose(total, want, rtol=1e-12)


def test_sensitivity_bars_one_per_input(result):
    fig = rf.sensitivity_figure(result, "GaAs on Si", 2035)
    assert [len(t.x) for t in fig.data] == [1, 1]  # GaAs.ere (Si: library point value)
    assert any("GaAs.ere" in label for label in fig.data[0].y)


def test_report_sections_escape_and_flag(result):
    parts = report_sections(result)
    titles = [t for t, _ in parts]
    assert titles[0].startswith("Roadmap: ")
    assert "Ranking per milestone" in titles and "Sources of the numbers" in titles
    page = "".join(h for _, h in parts)
    assert "pk on Si &lt;b&gt;" in page and "pk on Si <b>" not in page
    assert "&dagger;" in page and "not forecasts" in page
    assert "from memory" in dict(parts)["Sources of the numbers"]
