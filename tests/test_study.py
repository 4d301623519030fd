"""Study-file validation: one test per error class, each checking the message."""

from __future__ import annotations

import hashlib
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from gapmatch import InputError
from gapmatch.cli import main
from gapmatch.study import load_study, parse_study

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "configs" / "demo.toml"

MINIMAL = """
[study]
name = "t"
title = "Test"
"""


def err(text: str) -> InputError:
    with pytest.raises(InputError) as exc:
        parse_study(text, source="s.toml")
    return exc.value


def test_demo_study_is_valid():
    st = load_study(DEMO)
    assert st.name == "veltmora-top-cell"
    assert st.sha256 == hashlib.sha256(DEMO.read_bytes()).hexdigest()
    assert st.connections == ["series", "independent"]
    assert st.cut["bottom_gap_eV"] == 1.12
    assert any(m.is_tunable for m in st.materials) and any(not m.is_tunable for m in st.materials)
    assert all(s.gaps_eV[-1] == 1.12 for s in st.stacks)
    assert st.map["y_gap_range_eV"] == [0.5, 2.5] and st.map["axes"] == [1, 2]


def test_defaults_fill_in():
    st = parse_study(MINIMAL)
    assert st.conditions["spectrum"] == "AM1.5G" and st.conditions["temperature_K"] == 300.0
    assert st.map["step_eV"] == 0.01 and st.sections == []  # the report's default sections
    from gapmatch.report import check_section_names

    names = check_section_names(st.sections)
    assert "map" in names and "assumptions" in names


def test_toml_syntax_error_gives_line_and_column():
    e = err('[study]\nname = "t"\ntitle = "x\n')
    assert e.field == "s.toml"
    assert "TOML syntax error at line 3, column" in str(e)


def test_unknown_key_suggests():
    e = err(MINIMAL + "[map]\nstpe_eV = 0.02\n")
    assert e.field == "map.stpe_eV"
    assert "unknown key" in str(e) and "did you mean 'step_eV'?" in str(e)


def test_unknown_table_suggests():
    e = err(MINIMAL + "[mapp]\nstep_eV = 0.02\n")
    assert e.field == "mapp" and "did you mean 'map'?" in str(e)


def test_wrong_type_names_type_and_range():
    e = err(MINIMAL + '[conditions]\ntemperature_K = "300"\n')
    assert e.field == "conditions.temperature_K"
    assert "must be a number in [100, 1000] K, not a string" in str(e)
    assert "'300'" in str(e)


def test_out_of_range_names_value_and_range():
    e = err(MINIMAL + "[map]\nstep_eV = 5.0\n")
    assert e.field == "map.step_eV"
    assert "out of range: must be a number in [0.0005, 1] eV" in str(e) and "5.0" in str(e)


def test_out_of_range_in_array_of_tables():
    e = err(
        MINIMAL + '[[materials]]\nname = "a"\ngap_eV = 1.5\n'
        '[[materials]]\nname = "b"\ngap_eV = 7.0\n'
    )
    assert e.field == "materials[2].gap_eV" and "[0.1, 5] eV" in str(e)


def test_bad_choice_suggests():
    e = err(MINIMAL + '[conditions]\nspectrum = "AM15G"\n')
    assert e.field == "conditions.spectrum" and "did you mean 'AM1.5G'?" in str(e)


def test_unknown_section_suggests():
    # the study checks section names as names only; the report checks them against its
    # registry before it computes anything
    st = parse_study(MINIMAL.replace('title = "Test"', 'title = "Test"\nsections = ["mapp"]'))
    from gapmatch.report import build_report

    with pytest.raises(InputError) as exc:
        build_report(st, progress=False)
    e = exc.value
    assert e.field == "study.sections[1]" and "did you mean 'map'?" in str(e)
    e = err(MINIMAL.replace('title = "Test"', 'title = "Test"\nsections = ["Map!"]'))
    assert e.field == "study.sections[1]" and "report section name" in str(e)


def test_missing_required_key():
    e = err('[study]\nname = "t"\n')
    assert e.field == "study.title" and "is required" in str(e)


def test_bad_name_pattern():
    e = err('[study]\nname = "../evil"\ntitle = "x"\n')
    assert e.field == "study.name" and "names the report file" in str(e)


def test_material_needs_exactly_one_gap():
    e = err(MINIMAL + '[[materials]]\nname = "a"\ngap_eV = 1.5\ngap_range_eV = [1.4, 1.6]\n')
    assert e.field == "materials[1]" and "exactly one of gap_eV" in str(e)


def test_stack_gaps_must_descend():
    e = err(MINIMAL + '[[stacks]]\nname = "a"\ngaps_eV = [1.1, 1.7]\n')
    assert e.field == "stacks[1].gaps_eV" and "decrease strictly" in str(e)


def test_reversed_range():
    e = err(MINIMAL + "[map]\nx_gap_range_eV = [2.0, 1.0]\n")
    assert e.field == "map.x_gap_range_eV" and "first gap below the last" in str(e)


def test_array_length():
    e = err(MINIMAL + "[map]\nx_gap_range_eV = [1.0]\n")
    assert e.field == "map.x_gap_range_eV" and "2 entries" in str(e)


def test_too_many_points():
    e = err(MINIMAL + "[map]\nstep_eV = 0.001\n")
    assert e.field == "map.step_eV" and "grid points" in str(e)


def test_axes_need_stack():
    e = err(MINIMAL + "[map]\naxes = [1, 3]\n")
    assert e.field == "map.axes"


def test_cli_invalid_study_writes_nothing(tmp_path, capsys):
    bad = tmp_path / "bad.toml"
    bad.write_text(MINIMAL + "[map]\nstep_eV = -1\n", encoding="utf-8")
    out = tmp_path / "out"
    code = main(["report", str(bad), "--out-dir", str(out)])
    err_text = capsys.readouterr().err.strip()
    assert code == 2
    assert len(err_text.splitlines()) == 1
    assert err_text.startswith("gapmatch report: error: ") and "map.step_eV" in err_text
    assert str(bad) in err_text
    assert not out.exists()


_KEYS = [
    ("conditions", "temperature_K"),
    ("conditions", "ere"),
    ("conditions", "spectrum"),
    ("conditions", "concentration"),
    ("map", "step_eV"),
    ("map", "x_gap_range_eV"),
    ("map", "stack_eV"),
    ("map", "axes"),
    ("map", "other_gaps"),
    ("cut", "bottom_gap_eV"),
    ("study", "sections"),
    ("study", "connections"),
]
_VALUES = st.one_of(
    st.integers(-(10**6), 10**6),
    st.floats(allow_nan=False, allow_infinity=False),
    st.booleans(),
    st.text(st.characters(blacklist_categories=("Cs", "Cc")), max_size=8),
    st.lists(st.floats(-10, 10, allow_nan=False), max_size=7),
    st.lists(st.integers(-3, 8), max_size=4),
)


@given(key=st.sampled_from(_KEYS), value=_VALUES)
@settings(max_examples=200, deadline=None)
def test_any_value_is_accepted_or_one_input_error(key, value):
    # robustness: whatever a user writes under a known key, validation either accepts it
    # or raises InputError naming that key (never another exception)
    import tomllib

    table, name = key
    data = {"study": {"name": "t", "title": "t"}}
    data.setdefault(table, {})[name] = value
    text = _to_toml(data)
    tomllib.loads(text)  # the generated text itself is valid TOML
    try:
        parse_study(text)
    except InputError as exc:
        assert exc.field.startswith(f"{table}.") or exc.field.startswith("map.")


def _to_toml(data: dict) -> str:
    import json

    lines = []
    for table, kv in data.items():
        lines.append(f"[{table}]")
        for k, v in kv.items():
            lines.append(f"{k} = {_tv(v, json)}")
    return "\n".join(lines) + "\n"


def _tv(v, json):
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, float):
        return repr(v) if "e" not in repr(v) or "." in repr(v) else repr(v).replace("e", ".0e")
    if isinstance(v, list):
        return "[" + ", ".join(_tv(x, json) for x in v) + "]"
    if isinstance(v, str):
        return json.dumps(v, ensure_ascii=False)
    return str(v)
