"""Output integrity of the report: one set of files or the old one, an unwritable
folder found before computing, user strings escaped in figure text."""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest

import gapmatch.report.builder as builder
from gapmatch.cli import main
from gapmatch.report import build_report, write_report
from gapmatch.study import parse_study

SMALL = """
[study]
name = "small"
title = "{title}"
sections = ["stacks", "cut"]
[[stacks]]
name = "s"
gaps_eV = [{top}, 1.12]
"""


def _snapshot(d: Path) -> dict[str, bytes]:
    return {p.name: p.read_bytes() for p in sorted(d.iterdir())}


def test_crash_between_files_keeps_the_old_set(tmp_path, monkeypatch):
    out = tmp_path / "reports"
    write_report(build_report(parse_study(SMALL.format(title="old", top=1.7)), progress=False), out)
    old = _snapshot(out)
    assert "small.html" in old and len(old) >= 3
    # every file of the new set differs from the old one
    new = build_report(parse_study(SMALL.format(title="new", top=1.75)), progress=False)
    calls = []
    real = builder.write_atomic

    def crash_on_second(path, data, *a, **k):
        calls.append(Path(path).name)
        if len(calls) == 2:
            raise OSError("disk full (simulated)")
        return real(path, data, *a, **k)

    monkeypatch.setattr(builder, "write_atomic", crash_on_second)
    with pytest.raises(OSError, match="simulated"):
        write_report(new, out)
    assert len(calls) == 2  # it did stop between two files
    assert _snapshot(out) == old  # the old set, byte for byte, and no temporaries


def test_one_set_records_its_id(tmp_path):
    rep = build_report(parse_study(SMALL.format(title="t", top=1.7)), progress=False)
    page = write_report(rep, tmp_path)
    summary = json.loads((tmp_path / "small_summary.json").read_text())
    meta = re.search(r'<meta name="gapmatch-report-set" content="([0-9a-f]+)">', page.read_text())
    assert meta and meta.group(1) == summary["report_set"]
    assert sorted(p.name for p in tmp_path.iterdir()) == summary["files"]


def test_unwritable_output_folder_is_refused_before_computing(tmp_path, monkeypatch, capsys):
    study = tmp_path / "s.toml"
    study.write_text(SMALL.format(title="t", top=1.7), encoding="utf-8")
    blocker = tmp_path / "afile"
    blocker.write_text("x")

    def must_not_run(*a, **k):
        raise AssertionError("the report was computed before the folder was checked")

    import gapmatch.cli.report as cli_report

    monkeypatch.setattr(cli_report, "build_report", must_not_run)
    for bad in (blocker, blocker / "sub"):
        assert main(["report", str(study), "--out-dir", str(bad), "--quiet"]) == 2
        err = capsys.readouterr().err.strip().splitlines()
        assert len(err) == 1 and "--out-dir" in err[0], err


EVIL = "<a href='https://example.invalid/'>S</a>"


def _strings(obj):
    if isinstance(obj, str):
        yield obj
    elif isinstance(obj, dict):
        for v in obj.values():
            yield from _strings(v)
    elif isinstance(obj, list):
        for v in obj:
            yield from _strings(v)


def test_user_strings_are_escaped_in_figure_text():
    text = f"""
[study]
name = "evil"
title = "{EVIL} title"
sections = ["map", "stacks", "cut", "spectrum", "jv", "losses", "thickness"]
[map]
x_range_eV = [1.4, 2.0]
y_range_eV = [1.0, 1.2]
step_eV = 0.05
[[materials]]
name = "{EVIL} material"
gap_eV = 1.7
role = "top"
[[stacks]]
name = "{EVIL} stack"
gaps_eV = [1.7, 1.12]
[thickness]
points = 6
"""
    rep = build_report(parse_study(text), progress=False)
    by_section: dict[str, list[str]] = {}
    for sec, body in re.findall(
        r'data-section="([^"]+)"></div><script type="application/json" '
        r'class="gm-figure-data"[^>]*>(.*?)</script>',
        rep.html,
        flags=re.S,
    ):
        # the decoded strings plotly will render, not the JSON text (whose encoder
        # escapes every '<' anyway)
        by_section.setdefault(sec, []).extend(_strings(json.loads(body)))
    assert {"map", "losses", "thickness", "spectrum", "jv", "cut"} <= set(by_section)
    for sec, strings in by_section.items():
        raw = [s for s in strings if "<a href" in s]
        assert not raw, (sec, raw[:2])
    escaped = "&lt;a href=&#x27;https://example.invalid/&#x27;&gt;S&lt;/a&gt;"
    for sec in ("losses", "thickness", "jv", "spectrum"):
        assert any(escaped in s for s in by_section[sec]), sec


def test_a_new_set_removes_files_only_the_old_set_had(tmp_path):
    two = SMALL.format(title="t", top=1.7)
    write_report(build_report(parse_study(two), progress=False), tmp_path)
    assert (tmp_path / "small_cut.csv").exists()
    (tmp_path / "other_report.html").write_text("not ours")  # another study's file
    one = two.replace('sections = ["stacks", "cut"]', 'sections = ["stacks"]')
    write_report(build_report(parse_study(one), progress=False), tmp_path)
    assert not (tmp_path / "small_cut.csv").exists()
    assert (tmp_path / "other_report.html").read_text() == "not ours"
    summary = json.loads((tmp_path / "small_summary.json").read_text())
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted(
        [*summary["files"], "other_report.html"]
    )
