"""The HTML report of a study: content, data files, escaping, section registry."""

from __future__ import annotations

import hashlib
import json
import re
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from plotly.offline import get_plotlyjs

import gapmatch as gm
from gapmatch.cli import main
from gapmatch.report import SECTIONS, SectionOutput, build_report, register_section, table
from gapmatch.study import load_study, parse_study

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "configs" / "demo.toml"
NAME = "veltmora-top-cell"


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    out = tmp_path_factory.mktemp("reports")
    assert main(["report", str(DEMO), "--out-dir", str(out), "--quiet"]) == 0
    page = (out / f"{NAME}.html").read_text(encoding="utf-8")
    return out, page


def test_files_written(demo):
    out, _ = demo
    names = sorted(p.name for p in out.iterdir())
    assert names == sorted(
        [
            f"{NAME}.html",
            f"{NAME}_map.csv",
            f"{NAME}_ridge.csv",
            f"{NAME}_matched_current.csv",
            f"{NAME}_thickness.csv",
            f"{NAME}_stacks.csv",
            f"{NAME}_cut.csv",
            f"{NAME}_summary.json",
            f"{NAME}_losses_series.csv",
            f"{NAME}_losses_independent.csv",
            f"{NAME}_search_trials.csv",
            f"{NAME}_search_optima.csv",
            f"{NAME}_site_energy.csv",
            f"{NAME}_site_monthly.csv",
            f"{NAME}_site_current_ratio.csv",
            f"{NAME}_site_map.csv",
        ]
    )
    assert not [n for n in names if n.endswith(".tmp")]  # atomic writes leave no temporaries


def test_plotlyjs_embedded_once_and_size(demo):
    out, page = demo
    head = get_plotlyjs()[:300]
    assert page.count(head) == 1
    rest = page.replace(get_plotlyjs(), "")
    assert not re.search(r"<(script|link|img)[^>]+(src|href)=", rest)  # fully offline
    assert (
        out / f"{NAME}.html"
    ).stat().st_size < 10e6  # the project's page-size target: under 10 MB


def test_every_section_and_figure(demo):
    _, page = demo
    st = load_study(DEMO)
    assert st.sections
    for name in st.sections:
        assert f'id="sec-{name}"' in page
    figs = re.findall(r'<div class="gm-figure" id="(gm-fig-\d+)"', page)
    data = re.findall(
        r'<script type="application/json" class="gm-figure-data" '
        r'data-target="(gm-fig-\d+)">(.*?)</script>',
        page,
        flags=re.S,
    )
    assert len(figs) == len(data) >= 2 + 1 + 1 + 1 + 2 * len(st.stacks)
    assert [d[0] for d in data] == figs
    for _, text in data:
        spec = json.loads(text)
        assert spec["data"] and "layout" in spec


def test_report_numbers_agree_with_engine(demo):
    out, _ = demo
    s = json.loads((out / f"{NAME}_summary.json").read_text())
    for c in ("series", "independent"):
        opt = s["map"]["connections"][c]["optimum"]
        ref = gm.evaluate(opt["gaps_eV"], c)
        assert opt["efficiency"] == pytest.approx(float(ref.efficiency[0]), rel=1e-9)
    grid = pd.read_csv(out / f"{NAME}_map.csv")
    assert len(grid) == 201 * 201
    assert {
        "gap_1_eV",
        "gap_2_eV",
        "efficiency_series_pct",
        "efficiency_independent_pct",
        "difference_independent_minus_series_pct",
        "mismatch_ratio_series",
    } <= set(grid)
    # CSV written with 6 significant digits: 1e-4 % absolute covers the rounding
    assert grid["efficiency_series_pct"].max() == pytest.approx(
        s["map"]["connections"]["series"]["optimum"]["efficiency_pct"], abs=1e-4
    )
    stacks = pd.read_csv(out / f"{NAME}_stacks.csv")
    row = stacks[(stacks["stack"] == "Omrathene on Si") & (stacks["connection"] == "series")]
    ref = gm.evaluate([1.74, 1.12], "series").efficiency[0]
    assert row.efficiency_pct.iloc[0] == pytest.approx(100 * ref, rel=1e-5)  # CSV digits
    cut = pd.read_csv(out / f"{NAME}_cut.csv")
    assert (cut["gap_2_eV"] == 1.12).all()


def test_assumptions_cautions_footer(demo):
    _, page = demo
    for text in (
        "theoretical limits of idealised cells, not ratings",
        "IEC 60904",
        "licensed engineering practice",
        "Cell temperature 300 K",
        "external radiative efficiency (ERE) 1",
        "Emission geometry",
        "1000.37 W m⁻²",
        "Tolerance window",
        "Within 1 % (absolute) of the optimum",
    ):
        assert text in page, text
    assert hashlib.sha256(DEMO.read_bytes()).hexdigest() in page
    assert f"gapmatch version: <code>{gm.__version__}</code>" in page
    assert "command: <code>gapmatch" in page and "created (UTC)" in page


def test_user_strings_are_escaped(tmp_path):
    evil = "<script>alert(1)</script>"
    text = f"""
[study]
name = "escape"
title = "Title with <b>tags</b> & more"
author = "{evil}"
sections = ["map", "materials", "stacks", "cut", "spectrum", "jv"]
[map]
x_gap_range_eV = [1.2, 2.2]
y_gap_range_eV = [0.8, 1.4]
step_eV = 0.05
[[materials]]
name = "{evil}"
gap_eV = 1.7
role = "top"
[[stacks]]
name = "{evil} stack"
gaps_eV = [1.7, 1.12]
"""
    rep = build_report(parse_study(text), progress=False)
    page = rep.html
    assert evil not in page
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in page  # shown as text in tables
    assert "Title with &lt;b&gt;tags&lt;/b&gt; &amp; more" in page
    # inside the figures' JSON every '<' is escaped, so no markup can start there
    for body in re.findall(r'class="gm-figure-data"[^>]*>(.*?)</script>', page, flags=re.S):
        assert "<" not in body


def test_custom_section_registry():
    @register_section("test-extra", "An added section", default=False)
    def extra(ctx):
        opt = ctx.map.optimum("series")  # shared, cached results are available
        return SectionOutput(
            [table(["key", "value [%]"], [["opt", f"{opt['efficiency_pct']:.1f}"]])],
            data={"extra.json": {"n": 1}},
        )

    try:
        text = """
[study]
name = "extra"
title = "x"
sections = ["test-extra"]
[map]
x_gap_range_eV = [1.4, 1.8]
y_gap_range_eV = [0.8, 1.1]
step_eV = 0.05
"""
        rep = build_report(parse_study(text), progress=False)
        assert 'id="sec-test-extra"' in rep.html and "An added section" in rep.html
        assert 'id="sec-assumptions"' in rep.html  # cautions are always included
        assert json.loads(rep.files["extra_extra.json"]) == {"n": 1}
        assert "test-extra" not in [n for n in SECTIONS if SECTIONS[n].default]
    finally:
        SECTIONS.pop("test-extra")


def test_three_junction_study_report():
    text = """
[study]
name = "three"
title = "3J"
sections = ["map", "tolerance", "cut", "assumptions"]
[map]
stack_eV = [1.9, 1.37, 0.93]
axes = [1, 2]
other_gaps = "optimised"
x_gap_range_eV = [1.7, 2.1]
y_gap_range_eV = [1.2, 1.5]
step_eV = 0.05
[cut]
bottom_gap_eV = 0.93
"""
    rep = build_report(parse_study(text), progress=False)
    assert "RE-OPTIMISED" in rep.html
    s = rep.summary["map"]
    assert s["others"] == "optimised" and len(s["connections"]["series"]["optimum"]["gaps_eV"]) == 3


def test_thickness_section_writes_its_sweep(demo):
    # the thickness CSV holds the numbers the figure draws: the efficiency of the demo's
    # stack re-evaluated here at the same thicknesses (same engine: 1e-6 relative for
    # the 6 significant digits the CSV keeps)
    import pandas as pd

    out, _ = demo
    f = pd.read_csv(out / f"{NAME}_thickness.csv")
    assert list(f.columns) == ["thickness_1_nm", "efficiency_pct", "jph_1_mA_cm2", "jph_2_mA_cm2"]
    th = f["thickness_1_nm"].to_numpy()
    res = gm.api.evaluate_thickness([1.68, 1.12], th, "series", junction=1)
    np.testing.assert_allclose(f["efficiency_pct"], 100 * res.efficiency, rtol=1e-5)


def test_matched_line_has_equal_photocurrents():
    from gapmatch.maps import compute_map

    m = compute_map(["series"], x_range_eV=(1.4, 2.2), y_range_eV=(0.6, 1.6), step_eV=0.01)
    x, y = m.matched_current_line()
    ok = np.isfinite(y)
    assert ok.sum() > 50
    res = gm.evaluate(np.column_stack([x[ok], y[ok]]), "series")
    j = res.solution.jph
    # linear interpolation across one 0.01 eV step: the bottom photocurrent changes by
    # about 0.3 mA cm^-2 per step, so the ratio is within 1 % of matched
    assert np.all(np.abs(j[:, 0] / j[:, 1] - 1) < 0.01)


def test_voltage_matched_map_only_on_request():
    base = '[study]\nname = "v"\ntitle = "v"\nconnections = ["series", "voltage-matched"]\n'
    assert parse_study(base).map_connections == ["series"]
    st = parse_study(base + '[map]\nconnections = ["voltage-matched"]\n')
    assert st.map_connections == ["voltage-matched"]
    st = parse_study(
        base.replace('name = "v"', 'name = "v"\nsections = ["stacks", "jv"]')
        + '[[stacks]]\nname = "s"\ngaps_eV = [1.7, 1.12]\n'
    )
    rep = build_report(st, progress=False)
    ref = gm.evaluate([1.7, 1.12], "voltage-matched")
    (row,) = [r for r in rep.summary["stacks"]["results"] if r["connection"] == "voltage-matched"]
    assert row["stack"] == "s"
    assert row["efficiency_pct"] == pytest.approx(100 * ref.efficiency[0], rel=1e-12)
    # every voltage-matched result states its cells-per-string ratio (page and JSON)
    ratio = ref.stack(0)["cells_per_string"]
    assert row["cells_per_string"] == ratio
    assert " : ".join(map(str, ratio)) in rep.html


@pytest.mark.filterwarnings("error")
def test_other_conditions_build_cleanly():
    text = """
[study]
name = "bb"
title = "Blackbody sun at 100 suns"
[conditions]
spectrum = "blackbody"
sun_temperature_K = 5800
concentration = 100
temperature_K = 320
ere = 0.01
dark_current = "bose-einstein"
[map]
step_eV = 0.05
[[stacks]]
name = "s"
gaps_eV = [1.7, 1.12]
[[materials]]
name = "m"
gap_range_eV = [1.0, 1.2]
"""
    rep = build_report(parse_study(text), progress=False)
    assert "Blackbody sun: photon and power integrals are exact" in rep.html
    assert "concentration 100 suns" in rep.html and "Cell temperature 320 K" in rep.html
    assert rep.summary["map"]["conditions"]["dark_current"] == "bose-einstein"
    assert set(rep.summary["map"]["connections"]) == {"series", "independent"}


def test_print_css_and_hover_units(demo):
    _, page = demo
    assert "@media print" in page
    data = re.findall(r'class="gm-figure-data"[^>]*>(.*?)</script>', page, flags=re.S)
    n = 0
    for text in data:
        for tr in json.loads(text)["data"]:
            ht = tr.get("hovertemplate")
            if ht:
                n += 1
                assert re.search(r"eV|nm|mA cm|\bV\b|%", ht), ht
    assert n > 30


def test_loss_and_thickness_sections_in_demo(tmp_path):
    """The physics sections render, and the loss terms close on the incident power."""
    import json

    from gapmatch.report import build_report, write_report
    from gapmatch.study import load_study

    rep = build_report(load_study("configs/demo.toml"), command="test")
    page = write_report(rep, tmp_path)
    html_text = page.read_text()
    assert "Where the power goes" in html_text
    assert "Efficiency versus top-cell thickness" in html_text
    summary = json.loads((tmp_path / f"{rep.name}_summary.json").read_text())
    for conn in ("series", "independent"):
        # Hirst & Ekins-Daukes 2011 decomposition: terms add to the incident power;
        # 1e-6 relative is the project's closure target
        assert summary["losses"][conn]["max_closure_error_relative"] < 1e-6
    losses = (tmp_path / f"{rep.name}_losses_series.csv").read_text().splitlines()
    assert len(losses) == 1 + 3  # header + the demo's three stacks of interest
