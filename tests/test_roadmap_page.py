"""The HTML page of a roadmap result (``gapmatch roadmap --report``)."""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from gapmatch.cli import main
from gapmatch.report.roadmap_page import roadmap_page, write_roadmap_page
from gapmatch.roadmap import parse_roadmap, run_roadmap
from gapmatch.roadmap.sections import report_sections

ROOT = Path(__file__).resolve().parents[1]

STUDY = """
[roadmap]
name = "page-check"
title = "Page <check> & co"
milestones = [2027, 2030]
draws = 40

[search]
samples = 32
starts = 1

[[candidates]]
name = "<a href='x'>S</a> 2T"
materials = ["perovskite-wide", "Si"]
connection = "series"

[[candidates]]
name = "4T"
materials = ["perovskite-wide", "Si"]
connection = "independent"

[[projections]]
material = "perovskite-wide"
years = [2027, 2030]
ere = {low = 1e-4, likely = 1e-3, high = 1e-2}
"""


@pytest.fixture(scope="module")
def result():
    return run_roadmap(parse_roadmap(STUDY))


def test_page_holds_every_section_once_with_plotly_inlined_once(result, tmp_path):
    path = write_roadmap_page(result, tmp_path / "sub" / "page.html")
    page = path.read_text(encoding="utf-8")
    assert page.startswith("<!DOCTYPE html>")
    for title, _ in report_sections(result):
        assert page.count(f"{_esc(title)}</h2>") == 1, title
    # plotly.js is inlined once (its bundle declares this banner once)
    assert len(re.findall(r"plotly\.js v\d", page)) == 1
    assert "not forecasts" in page and "IEC 60904" in page
    # efficiency columns are labelled in %, not by the column-name suffix
    assert "P50 [%]" in page and "[pct]" not in page
    assert not list(tmp_path.glob("sub/.*"))  # no temporary file left


def test_user_strings_are_escaped_in_the_page(result):
    page = roadmap_page(result)
    assert "<a href='x'>" not in page
    assert "&lt;a href=&#x27;x&#x27;&gt;S&lt;/a&gt; 2T" in page
    assert "Page &lt;check&gt; &amp; co" in page


def _esc(s: str) -> str:
    import html

    return html.escape(s, quote=True)


def test_cli_writes_the_page_and_checks_the_path_first(tmp_path, monkeypatch, capsys):
    study = tmp_path / "s.toml"
    study.write_text(STUDY, encoding="utf-8")
    page = tmp_path / "out" / "page.html"
    assert main(["roadmap", str(study), "--quiet", "--report", str(page)]) == 0
    assert page.is_file() and "wrote" in capsys.readouterr().err

    import gapmatch.roadmap as rm

    def boom(*a, **k):  # the run must not start when the page cannot be written
        raise AssertionError("computed before checking the output path")

    monkeypatch.setattr(rm, "run_roadmap", boom)
    blocker = tmp_path / "file"
    blocker.write_text("x")
    code = main(["roadmap", str(study), "--quiet", "--report", str(blocker / "page.html")])
    err = capsys.readouterr().err
    assert code == 2
    assert "--report" in err and "cannot be written" in err
    assert main(["roadmap", str(study), "--quiet", "--report", str(tmp_path)]) == 2
    assert "is a folder" in capsys.readouterr().err
