"""What the report says: the answer to the study's question at the top, cautions on
every figure and in summary.json, captions that name the colours drawn, one style and
a download name per figure, voltage-matched ratios, readable units.

The reference numbers come from the engine itself (gapmatch.evaluate, checked against
published tables in test_engine.py); these tests check that the report shows the right
ones in the right place.
"""

from __future__ import annotations

import json
import re
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pytest

import gapmatch as gm
from gapmatch.cli import main
from gapmatch.report import build_report
from gapmatch.report import colours as nc
from gapmatch.report.context import ReportContext
from gapmatch.study import load_study, parse_study

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "configs" / "demo.toml"
CAUTION = re.compile(r"\bnot\b[^<]*\bratings?\b", re.I)


def figures(page: str) -> list[tuple[str, dict]]:
    """(section name, decoded figure spec) of every figure on the page."""
    out = []
    for sec, body in re.findall(
        r'<div class="gm-figure" id="gm-fig-\d+" data-section="([^"]+)"></div>'
        r'<script type="application/json" class="gm-figure-data" data-target="gm-fig-\d+">'
        r"(.*?)</script>",
        page,
        flags=re.S,
    ):
        out.append((sec, json.loads(body)))
    return out


def section_html(page: str, name: str) -> str:
    m = re.search(rf'<section class="gm-section" id="sec-{name}">(.*?)</section>', page, re.S)
    assert m, name
    return m.group(1)


@pytest.fixture(scope="module")
def demo():
    return build_report(load_study(DEMO), progress=False)


# ---- 1. the answer box -------------------------------------------------------------------
def test_answer_box_comes_first_and_answers_the_fixed_bottom_question(demo):
    page = demo.html
    assert 'id="gm-answer"' in page
    # the answer is the first thing after the description, before any section
    assert page.index('id="gm-answer"') < page.index('class="gm-section"')
    ans = demo.summary["answer"]
    assert ans["kind"] == "fixed-bottom" and ans["bottom_gap_eV"] == 1.12
    for c in ("series", "independent"):
        b = ans["best_top_gap"][c]
        g, lo, hi = b["best_top_gap_eV"], *b["window_eV"]
        # the best top gap on a 5 meV grid: the engine agrees it beats both neighbours
        e = [100 * gm.evaluate([x, 1.12], c).efficiency[0] for x in (g - 0.005, g, g + 0.005)]
        assert e[1] >= max(e[0], e[2]) and e[1] == pytest.approx(b["efficiency_pct"], rel=1e-9)
        # the cut's own tolerance window: inside at its edges, outside one step beyond
        tol = ans["tolerance_pct"]
        assert lo <= g <= hi
        for x, inside in ((lo, True), (hi, True), (lo - 0.005, False), (hi + 0.005, False)):
            ex = 100 * gm.evaluate([x, 1.12], c).efficiency[0]
            assert (ex >= b["efficiency_pct"] - tol) == inside, (c, x)
        assert f"{g:.2f} eV with {c} connection" in page
    # the candidate materials and stacks are in the box's table, with the engine's numbers
    box = page[page.index('id="gm-answer"') : page.index("</aside>")]
    om = 100 * gm.evaluate([1.74, 1.12], "series").efficiency[0]
    assert "Omrathene chalcogenide" in box and f"{om:.2f}" in box
    for s in ("Vexaryn-B at 1.68 eV on Si", "Omrathene on Si", "Tyvrel at 1.90 eV on Si"):
        assert s in box
    # the unconstrained optimum is there for reference, not as the answer
    first = re.search(r"<p>(.*?)</p>", box).group(1)
    assert first.startswith("With the bottom cell fixed at 1.12 eV")


def test_answer_falls_back_to_the_map_optimum_without_a_constraint():
    st = parse_study(
        '[study]\nname = "free"\ntitle = "free"\nsections = ["map"]\n'
        "[map]\nx_range_eV = [1.4, 2.0]\ny_range_eV = [0.8, 1.2]\nstep_eV = 0.05\n"
    )
    rep = build_report(st, progress=False)
    ans = rep.summary["answer"]
    assert ans["kind"] == "unconstrained"
    opt = rep.summary["map"]["connections"]["series"]["optimum"]
    assert ans["optimum"]["series"]["gaps_eV"] == opt["gaps_eV"]
    assert "The study fixes no gap" in rep.html


def test_warnings_of_results_are_shown_in_the_box():
    from gapmatch.report.summary_box import build_summary_box

    st = parse_study('[study]\nname = "w"\ntitle = "w"\nsections = ["stacks"]\n')
    ctx = ReportContext(st)
    ctx.cache["stub"] = SimpleNamespace(warnings=("qV within 3 kT of the gap: use BE",))
    ctx.cache["plain"] = object()  # results without the attribute are fine
    html, summ = build_summary_box(ctx, "caution text")
    assert summ["warnings"] == ["qV within 3 kT of the gap: use BE"]
    assert 'class="gm-warn"' in html and "qV within 3 kT of the gap" in html


# ---- 2. cautions -------------------------------------------------------------------------
def test_every_figure_title_carries_a_caution(demo):
    figs = figures(demo.html)
    assert len(figs) >= 15
    sections = set()
    for sec, spec in figs:
        title = spec["layout"]["title"]["text"]
        assert CAUTION.search(title), (sec, title)
        sections.add(sec)
    assert {"map", "losses", "thickness", "search", "site-energy"} <= sections
    (th,) = [s for sec, s in figs if sec == "thickness"]
    assert "model projection with finite absorbers" in th["layout"]["title"]["text"]
    assert "model projection with finite absorbers, not an ideal ceiling" in section_html(
        demo.html, "thickness"
    )


def _keys(obj, path=""):
    if isinstance(obj, dict):
        for k, v in obj.items():
            yield f"{path}.{k}", k
            yield from _keys(v, f"{path}.{k}")
    elif isinstance(obj, list):
        for i, v in enumerate(obj):
            yield from _keys(v, f"{path}[{i}]")


def test_summary_json_has_caution_and_no_keys_with_spaces(demo):
    s = json.loads(demo.files["veltmora-top-cell_summary.json"])
    assert "not ratings" in s["caution"] and "IEC 60904" in s["caution"]
    spaced = [p for p, k in _keys(s) if " " in k]
    assert not spaced, spaced
    assert s["reproducibility"]["study_file_sha256"] == load_study(DEMO).sha256


def test_report_help_carries_the_caution(capsys):
    with pytest.raises(SystemExit):
        main(["report", "--help"])
    out = " ".join(capsys.readouterr().out.split())
    assert "not ratings" in out and "docs/study-file.md" in out


# ---- 3. captions name the colours drawn --------------------------------------------------
def _caption_words(html: str) -> set[str]:
    text = re.sub(r"<[^>]+>", " ", html)
    return {c.word for c in nc.ALL if re.search(rf"\b{c.word}\b", text)}


def _trace_words(specs) -> set[str]:
    words = set()
    for spec in specs:
        for tr in spec["data"]:
            for col in (
                (tr.get("line") or {}).get("color"),
                (tr.get("marker") or {}).get("color"),
            ):
                if isinstance(col, str) and nc.word_of(col):
                    words.add(nc.word_of(col))
    return words


@pytest.mark.parametrize("sec", ["map", "mismatch"])
def test_caption_colour_words_match_the_traces(demo, sec):
    body = section_html(demo.html, sec)
    caption = "".join(re.findall(r"<p>(.*?)</p>", body, re.S))
    specs = [s for name, s in figures(demo.html) if name == sec]
    said, drawn = _caption_words(caption), _trace_words(specs)
    assert said, "the caption names no colour"
    assert said <= drawn, (said, drawn)
    if sec == "map":
        (ridge,) = {
            tr["line"]["color"] for tr in specs[0]["data"] if tr.get("name") == "best-partner ridge"
        }
        assert f"{nc.word_of(ridge)} line is the best-partner ridge" in caption


# ---- 5. layout of the figures -----------------------------------------------------------
def test_one_style_download_names_and_no_repeated_legend_entries(demo):
    names = []
    for sec, spec in figures(demo.html):
        cfg = spec.get("config") or {}
        fname = cfg.get("toImageButtonOptions", {}).get("filename", "newplot")
        assert fname.startswith("veltmora-top-cell_") and fname != "newplot"
        names.append(fname)
        tmpl = spec["layout"].get("template", {}).get("layout", {})
        assert tmpl.get("font", {}).get("family", "").startswith("Source Sans 3"), sec
        shown = [
            (tr.get("name"), tr.get("legendgroup", ""))
            for tr in spec["data"]
            if tr.get("name") and tr.get("showlegend", True) and tr.get("type") != "parcoords"
        ]
        assert len(shown) == len(set(shown)), (sec, shown)
    assert len(names) == len(set(names))


def test_menu_wraps(demo):
    page = demo.html
    nav = re.search(r'<nav class="gm-toc"[^>]*>(.*?)</nav>', page, re.S).group(1)
    assert "</a> <a" in nav and "</a><a" not in nav
    css = page[page.index("<style>") : page.index("</style>")]
    assert not re.search(r"nav\.gm-toc a\{[^}]*nowrap", css)


def test_search_figures_zero_based_costs_and_varying_axes(demo):
    specs = [s for sec, s in figures(demo.html) if sec == "search"]
    bars = [s for s in specs if any(t["type"] == "bar" for t in s["data"])]
    assert bars and bars[0]["layout"]["yaxis"]["range"][0] == 0
    # drawn in the report's named colours, like every other figure
    assert all(nc.word_of(t["marker"]["color"]) for t in bars[0]["data"])
    (par,) = [s for s in specs if s["data"][0]["type"] == "parcoords"]
    for d in par["data"][0]["dimensions"]:
        v = np.asarray(d["values"], float) if isinstance(d["values"], list) else None
        if v is not None:
            assert np.ptp(v) > 0, d["label"]
    # the demo fixes the bottom cell: its axis never varies and is left out
    assert not any(d["label"].startswith("E_g,2") for d in par["data"][0]["dimensions"])
    (hist,) = [s for s in specs if "Search history" in s["layout"]["title"]["text"]]
    assert hist["layout"]["legend"]["y"] < 0  # below the plot, off the axis title


def test_thickness_axis_in_readable_units(demo):
    (th,) = [s for sec, s in figures(demo.html) if sec == "thickness"]
    ax = th["layout"]["xaxis"]
    assert ax["type"] == "log"
    assert ax["ticktext"][0] == "50 nm" and "1 µm" in ax["ticktext"]
    assert all(re.fullmatch(r"[125]0* nm|[125]0* µm", t) for t in ax["ticktext"])
    assert th["layout"]["height"] >= 500


def test_tolerance_window_has_no_unexplained_fill(demo):
    windows = [
        tr
        for _, spec in figures(demo.html)
        for tr in spec["data"]
        if tr.get("type") == "contour" and tr.get("contours", {}).get("type") == "constraint"
    ]
    assert len(windows) == 2  # one per mapped connection
    for tr in windows:
        assert tr["fillcolor"] == "rgba(0,0,0,0)"  # an outline only, explained in the legend
        assert tr["showlegend"] and "within" in tr["name"]


# ---- 4. voltage-matched -------------------------------------------------------------------
def test_voltage_matched_is_explained_and_ratios_are_stated():
    st = parse_study(
        '[study]\nname = "vm"\ntitle = "vm"\nconnections = ["series", "voltage-matched"]\n'
        'sections = ["map", "stacks", "jv"]\n'
        "[map]\nx_range_eV = [1.5, 1.9]\ny_range_eV = [1.0, 1.2]\nstep_eV = 0.05\n"
        '[[stacks]]\nname = "s"\ngaps_eV = [1.7, 1.12]\n'
    )
    rep = build_report(st, progress=False)
    assert "Voltage-matched connection is in study.connections but not on these maps" in (
        section_html(rep.html, "map")
    )
    ratio = gm.evaluate([1.7, 1.12], "voltage-matched").stack(0)["cells_per_string"]
    words = " : ".join(map(str, ratio))
    (jv,) = [s for sec, s in figures(rep.html) if sec == "jv"]
    titles = " ".join(a["text"] for a in jv["layout"]["annotations"])
    assert f"{words} cells per string" in titles
    strings = [t["name"] for t in jv["data"] if t.get("name", "").startswith("string of")]
    assert strings == [
        f"string of {n} × junction {k + 1} ({g:.2f} eV)"
        for k, (n, g) in enumerate(zip(ratio, (1.7, 1.12), strict=True))
    ]
    # the strings share one voltage: the stack's maximum-power voltage, marked
    vmpp = gm.evaluate([1.7, 1.12], "voltage-matched").stack(0)["vmpp_V"]
    assert any(sh.get("x0") == pytest.approx(vmpp) for sh in jv["layout"]["shapes"])
    assert f"with voltage-matched connection ({words} cells per string)" in rep.html


def test_concentrated_light_in_readable_units():
    st = parse_study(
        '[study]\nname = "c"\ntitle = "c"\nsections = ["stacks", "jv", "losses"]\n'
        '[conditions]\nspectrum = "AM1.5D"\nconcentration = 500\n'
        '[[stacks]]\nname = "s"\ngaps_eV = [1.7, 1.12]\n'
    )
    rep = build_report(st, progress=False)
    body = section_html(rep.html, "stacks")
    assert "P_mpp [kW m⁻²]" in body and "J_sc [A cm⁻²]" in body
    (jv,) = [s for sec, s in figures(rep.html) if sec == "jv"]
    assert "A cm<sup>-2</sup>" in jv["layout"]["yaxis"]["title"]["text"]
    assert "where the incident power goes [kW m⁻²]" in section_html(rep.html, "losses")


def test_loss_table_and_legend_use_one_label_per_term(demo):
    body = section_html(demo.html, "losses")
    rows = re.findall(r"<tr><td>([^<]+)</td>", body)
    legend = {tr["name"] for sec, s in figures(demo.html) if sec == "losses" for tr in s["data"]}
    assert legend and legend <= set(rows), legend - set(rows)


def test_voltage_matched_map_states_the_ratio_at_its_optimum():
    st = parse_study(
        '[study]\nname = "vmm"\ntitle = "vmm"\nconnections = ["voltage-matched"]\n'
        'sections = ["map"]\n'
        "[map]\nx_range_eV = [1.6, 1.8]\ny_range_eV = [1.0, 1.2]\nstep_eV = 0.1\n"
        'connections = ["voltage-matched"]\n'
    )
    rep = build_report(st, progress=False)
    opt = rep.summary["map"]["connections"]["voltage-matched"]["optimum"]["gaps_eV"]
    ratio = gm.evaluate(opt, "voltage-matched").stack(0)["cells_per_string"]
    words = " : ".join(map(str, ratio))
    body = section_html(rep.html, "map")
    assert f"at the optimum it is {words}" in body
    (fig,) = [s for sec, s in figures(rep.html) if sec == "map"]
    assert f"{words} cells per string" in fig["layout"]["title"]["text"]


def test_cut_has_its_own_tolerance_window(demo):
    cut = demo.summary["cut"]
    ans = demo.summary["answer"]["best_top_gap"]
    for c in ("series", "independent"):
        assert cut[c]["tolerance_window_eV"] == ans[c]["window_eV"]
        lo, hi = cut[c]["tolerance_window_eV"]
        assert f"{lo:.3f}–{hi:.3f}" in section_html(demo.html, "cut")
    (fig,) = [s for sec, s in figures(demo.html) if sec == "cut"]
    bars = [t for t in fig["data"] if "within 1 % of its best" in t.get("name", "")]
    assert [t["x"] for t in bars] == [cut[c]["tolerance_window_eV"] for c in cut]


@pytest.mark.slow
def test_voltage_matched_search_states_the_ratio():
    st = parse_study(
        '[study]\nname = "vs"\ntitle = "vs"\nconnections = ["voltage-matched"]\n'
        'sections = ["search"]\n'
        '[search]\njunctions = 2\nconnection = "voltage-matched"\ntrials = 12\nseed = 3\n'
        "bounds_eV = [1.0, 2.0]\n"
    )
    rep = build_report(st, progress=False)
    s = rep.summary["search"]
    ratio = gm.evaluate(s["best_gaps_eV"], "voltage-matched").stack(0)["cells_per_string"]
    assert s["cells_per_string"] == ratio
    assert f"{' : '.join(map(str, ratio))} cells per string" in section_html(rep.html, "search")
