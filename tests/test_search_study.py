"""The band-gap search driven by a study file: [search] table, report section, CLI."""

from __future__ import annotations

import json

import numpy as np
import pytest

import gapmatch as gm
from gapmatch.cli import main
from gapmatch.search.study_table import problem_from_study
from gapmatch.study import parse_study

BASE = """
[study]
name = "t"
title = "search test"
connections = ["series"]
sections = ["search", "assumptions"]

[[materials]]
name = "bottom-si"
gap_eV = 1.12

[[materials]]
name = "top-window"
gap_range_eV = [1.6, 1.9]
"""


def _study(search: str):
    return parse_study(BASE + "\n[search]\n" + search, source="test.toml")


def test_materials_set_windows_and_fixed_gaps():
    p = problem_from_study(_study('materials = ["top-window", "bottom-si"]\n'))
    assert p.n_junctions == 2
    assert p.bounds_eV[0].tolist() == [1.6, 1.9]
    assert p.fixed.tolist() == [False, True]
    assert p.bounds_eV[1].tolist() == pytest.approx([1.12, 1.12])  # fixed: low == high


def test_study_search_finds_the_silicon_partner():
    # a fixed 1.12 eV bottom cell: the best series top gap is near 1.73 eV (common
    # practice for silicon-based tandems; tests/test_search.py checks it by a fine scan)
    st = _study('materials = ["any", "bottom-si"]\nbounds_eV = [1.3, 2.3]\nseed = 3\n')
    from gapmatch.search import optimise

    res = optimise(problem_from_study(st), seed=3, storage=":memory:", progress=False)
    assert res.best_gaps_eV[0] == pytest.approx(1.73, abs=0.01)
    ref = gm.evaluate(res.best_gaps_eV, "series").efficiency[0]
    assert res.best["efficiency"] == pytest.approx(ref, rel=1e-12)


@pytest.mark.parametrize(
    "search, match",
    [
        ('materials = ["nope", "bottom-si"]\n', r"search.materials\[1\]: must be 'any' or a"),
        (
            'materials = ["any"]\n',
            r"search.materials: needs one entry per junction \(2; search.junctions\)",
        ),
        ("bounds_eV = [2.0, 1.0]\n", r"search.bounds_eV: must be \[low, high\] with low < high"),
        ("junctions = 9\n", r"search.junctions: out of range"),
        ("trails = 5\n", r"search.trails: unknown key; did you mean 'trials'\?"),
    ],
)
def test_search_table_validation(search, match):
    with pytest.raises(gm.InputError, match=match):
        problem_from_study(_study(search))


def test_cli_optimise_from_study(tmp_path, capsys):
    p = tmp_path / "s.toml"
    p.write_text(BASE + '\n[search]\nmaterials = ["top-window", "bottom-si"]\nseed = 1\n')
    assert (
        main(["optimise", "--study", str(p), "--storage", ":memory:", "--no-progress", "--json"])
        == 0
    )
    d = json.loads(capsys.readouterr().out)
    assert 1.6 <= d["gaps_eV"][0] <= 1.9
    assert d["gaps_eV"][1] == pytest.approx(1.12)


def test_cli_optimise_needs_junctions_or_study(capsys):
    assert main(["optimise", "--storage", ":memory:"]) == 2
    assert "--junctions: is required" in capsys.readouterr().err


def test_report_search_section(tmp_path):
    from gapmatch.report import build_report, write_report

    st = _study('materials = ["any", "bottom-si"]\nbounds_eV = [1.3, 2.3]\n')
    rep = build_report(st, command="test")
    page = write_report(rep, tmp_path).read_text()
    assert "Band-gap search" in page
    summary = json.loads((tmp_path / "t_summary.json").read_text())
    gaps = np.array(summary["search"]["best_gaps_eV"])
    assert gaps[1] == pytest.approx(1.12)
    trials = (tmp_path / "t_search_trials.csv").read_text().splitlines()
    assert len(trials) > 10  # every trial, feasible or not, is in the CSV
