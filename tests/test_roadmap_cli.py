"""The ``roadmap`` and ``materials`` sub-command modules (registered by the CLI package)."""

from __future__ import annotations

import argparse
import json

import pytest

from gapmatch.cli import materials as materials_cli
from gapmatch.cli import roadmap as roadmap_cli
from gapmatch.errors import InputError

STUDY = """
[roadmap]
name = "cli-test"
title = "CLI test (fictional)"
milestones = [2030, 2035]
draws = 200
seed = 3

[[candidates]]
name = "pk on Si"
materials = ["perovskite-wide", "Si"]
connection = "series"

[[candidates]]
name = "pk on CIGS"
materials = ["perovskite-wide", "CIGS"]
connection = "independent"

[[projections]]
material = "perovskite-wide"
years = [2030, 2035]
ere = { low = 1e-4, likely = 1e-3, high = 1e-2 }
source = "invented for the test"
"""


def _parse(argv):
    p = argparse.ArgumentParser(prog="gapmatch")
    sub = p.add_subparsers(dest="command")
    roadmap_cli.add_parser(sub)
    materials_cli.add_parser(sub)
    return p.parse_args(argv)


@pytest.fixture
def study_file(tmp_path):
    f = tmp_path / "rm.toml"
    f.write_text(STUDY)
    return f


def test_roadmap_json(study_file, tmp_path, capsys):
    args = _parse(["roadmap", str(study_file), "--json", "--quiet", "--csv", str(tmp_path / "o")])
    assert args.func(args) == 0
    d = json.loads(capsys.readouterr().out)
    assert set(d) >= {"milestones", "sources", "caution"}
    assert [m["year"] for m in d["milestones"]] == [2030, 2035]
    for m in d["milestones"]:
        names = [c["name"] for c in m["candidates"]]
        assert names == ["pk on Si", "pk on CIGS"]
        assert sum(c["probability_best"] for c in m["candidates"]) == pytest.approx(1.0, abs=1e-12)
        for c in m["candidates"]:
            assert len(c["gaps_eV"]) == 2
            assert c["p10_pct"] <= c["p50_pct"] <= c["p90_pct"]
    assert d["draws"] == 200
    assert (tmp_path / "o" / "cli-test-draws.csv").exists()


def test_roadmap_table_flags_marks(study_file, capsys):
    args = _parse(["roadmap", str(study_file), "--quiet", "--draws", "50", "--seed", "4"])
    assert args.func(args) == 0
    out = capsys.readouterr().out
    assert "== 2030 ==" in out and "== 2035 ==" in out
    assert "uses values marked 'from memory'" in out
    assert "not forecasts" in out
    assert "50 draws, seed 4" in out


def test_roadmap_bad_input(study_file, tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text(STUDY.replace('"CIGS"', '"CIGZ"'))
    args = _parse(["roadmap", str(bad), "--quiet"])
    with pytest.raises(InputError) as ei:
        args.func(args)
    assert "candidates[2].materials[2]" in str(ei.value)
    assert "did you mean 'CIGS'" in str(ei.value)
    args = _parse(["roadmap", str(study_file), "--draws", "0"])
    with pytest.raises(InputError, match="--draws"):
        args.func(args)


def test_materials_json_and_table(capsys):
    args = _parse(["materials", "--json"])
    assert args.func(args) == 0
    d = json.loads(capsys.readouterr().out)
    keys = {m["material"] for m in d["materials"]}
    assert {"Si", "GaAs", "InP", "Ge", "CdTe", "GaInP", "AlGaAs", "CIGS", "CZTS"} <= keys
    assert all(v["status"] for v in d["values"])
    assert "caution" in d
    args = _parse(["materials", "--values"])
    assert args.func(args) == 0
    out = capsys.readouterr().out
    assert "thurmond1975" in out and "[from memory]" in out
