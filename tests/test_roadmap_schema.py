"""Roadmap study files: every mistake gives one InputError with its key path."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from gapmatch.errors import InputError
from gapmatch.roadmap import load_roadmap, parse_roadmap

BASE = """
[roadmap]
name = "s"
milestones = [2027, 2030]
draws = 100

[[candidates]]
name = "pk on Si"
materials = ["perovskite-wide", "Si"]
connection = "series"

[[candidates]]
name = "GaAs on Si"
materials = ["GaAs", "Si"]
connection = "independent"

[[projections]]
material = "perovskite-wide"
years = [2027, 2030]
ere = { low = 1e-4, likely = 1e-3, high = 1e-2 }
"""


def test_base_is_valid():
    s = parse_roadmap(BASE)
    assert s.milestones == (2027, 2030)
    assert [c.name for c in s.candidates] == ["pk on Si", "GaAs on Si"]
    # library ERE used where no projection is given, with its source
    assert s.projection("Si", 2027).ere.likely == 0.006
    assert s.projection("Si", 2027).ere_source.key == "green2012"
    assert s.projection("perovskite-wide", 2030).ere.kind == "triangular"


@pytest.mark.parametrize(
    ("old", "new", "field", "words"),
    [
        ('"GaAs", "Si"', '"GaAs", "Sii"', "candidates[2].materials[2]", "did you mean 'Si'"),
        (
            '["perovskite-wide", "Si"]',
            '["perovskite-wyde", "Si"]',
            "candidates[1].materials[1]",
            "did you mean 'perovskite-wide'",
        ),
        (
            'connection = "series"',
            'connection = "serial"',
            "candidates[1].connection",
            "did you mean 'series'",
        ),
        ("low = 1e-4", "low = 0.0", "projections[1].ere.low", "[1e-12, 1]"),
        ("likely = 1e-3", "likely = 0.5", "projections[1].ere.likely", "[low, high]"),
        (
            "low = 1e-4, likely = 1e-3, high = 1e-2",
            "lo = 1e-4, high = 1e-2",
            "projections[1].ere.lo",
            "did you mean 'low'",
        ),
        ("years = [2027, 2030]", "years = [2027, 2031]", "projections[1].years[2]", "milestone"),
        (
            "milestones = [2027, 2030]",
            "milestones = [2030, 2027]",
            "roadmap.milestones",
            "increase",
        ),
        ("draws = 100", "drawz = 100", "roadmap.drawz", "did you mean 'draws'"),
        ('name = "s"', 'name = "a b"', "roadmap.name", "letters"),
        (
            'material = "perovskite-wide"',
            'material = "perovskite"',
            "projections[1].material",
            "did you mean",
        ),
    ],
)
def test_errors_name_the_key_path(old, new, field, words):
    assert old in BASE
    with pytest.raises(InputError) as ei:
        parse_roadmap(BASE.replace(old, new, 1))
    assert ei.value.field == field
    assert words in str(ei.value)


@pytest.mark.parametrize("name", ["collection_efficiency", "series_resistance_ohm_cm2"])
def test_parameters_that_cannot_be_uncertain_say_why(name):
    text = (
        BASE
        + f"""
[[projections]]
material = "Si"
year = 2027
{name} = {{ low = 0.1, likely = 0.2, high = 0.3 }}
"""
    )
    with pytest.raises(InputError, match="one value per junction") as ei:
        parse_roadmap(text)
    assert ei.value.field == f"projections[2].{name}"


def test_missing_ere_without_library_value():
    text = BASE.replace('"GaAs", "Si"', '"InP", "Si"')  # the library has no ERE for InP
    with pytest.raises(InputError, match="'InP' has no ere projection for 2027"):
        parse_roadmap(text)


def test_gap_window_only_for_tunable_materials():
    text = (
        BASE
        + """
[[projections]]
material = "Si"
year = 2027
gap_window_eV = [1.0, 1.2]
"""
    )
    with pytest.raises(InputError, match="fixed gap") as ei:
        parse_roadmap(text)
    assert ei.value.field == "projections[2].gap_window_eV"


def test_repeated_projection_and_candidate():
    with pytest.raises(InputError, match="repeats the projection"):
        parse_roadmap(
            BASE + '[[projections]]\nmaterial = "perovskite-wide"\nyear = 2030\nere = 0.1\n'
        )
    with pytest.raises(InputError, match="repeats the name") as ei:
        parse_roadmap(BASE.replace('"GaAs on Si"', '"pk on Si"'))
    assert ei.value.field == "candidates[2].name"


def test_study_materials_and_sources():
    text = (
        BASE
        + """
[sources.team]
citation = "Vantorel internal estimate (fictional)"
status = "study assumption"

[materials.my-absorber]
name = "invented absorber"
absorber = { model = "direct", alpha0_per_cm = 5e4, source = "team" }
gap = { model = "window", low_eV = 1.7, high_eV = 1.9, source = "team" }
temperature = { model = "none", source = "team" }
thickness_nm = 500.0
refractive_index = 2.4
ere = 0.01

[[candidates]]
name = "mine"
materials = ["my-absorber", "Si"]
"""
    )
    s = parse_roadmap(text)
    m = s.library["my-absorber"]
    assert m.window_eV == (1.7, 1.9)
    assert s.projection("my-absorber", 2030).ere.likely == 0.01
    assert {x.source.status for x in m.sourced()} == {"study assumption"}


def test_toml_syntax_and_missing_file(tmp_path: Path):
    p = tmp_path / "bad.toml"
    p.write_text("[roadmap\nname = 1\n")
    with pytest.raises(InputError, match="not valid TOML"):
        load_roadmap(p)
    with pytest.raises(InputError, match="cannot be read"):
        load_roadmap(tmp_path / "missing.toml")
    p.write_text(
        BASE.replace('"Si"]\nconnection = "independent"', '"Sj"]\nconnection = "independent"')
    )
    with pytest.raises(InputError) as ei:
        load_roadmap(p)
    assert ei.value.field == f"{p}: candidates[2].materials[2]"


def test_demo_study_is_valid():
    s = load_roadmap(Path(__file__).parents[1] / "configs" / "roadmap-demo.toml")
    assert 4 <= len(s.candidates) <= 6 and len(s.milestones) == 3
    for p in s.projections.values():
        src = p.source.citation if p.source else p.ere_source.citation
        assert p.source is None or "invented" in src


_VALUE = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True),
    st.integers(-10, 10),
    st.text(st.characters(blacklist_categories=("Cs", "Cc")), max_size=4),
    st.booleans(),
    st.fixed_dictionaries({"low": st.floats(-1, 2), "high": st.floats(-1, 2)}),
    st.fixed_dictionaries(
        {"low": st.floats(0, 1), "likely": st.floats(0, 1), "high": st.floats(0, 1)}
    ),
)


def _toml(v) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, float):
        return (
            "nan" if v != v else ("inf" if v == float("inf") else "-inf" if v < -1e308 else repr(v))
        )
    if isinstance(v, int):
        return str(v)
    if isinstance(v, str):
        return json.dumps(v, ensure_ascii=False)  # valid TOML basic string
    return "{ " + ", ".join(f"{k} = {_toml(x)}" for k, x in v.items()) + " }"


@settings(max_examples=80, deadline=None)
@given(name=st.sampled_from(["ere", "thickness_nm", "collection_efficiency"]), value=_VALUE)
def test_fuzzed_projection_is_valid_or_one_clear_error(name, value):
    text = BASE + f'\n[[projections]]\nmaterial = "Si"\nyear = 2027\n{name} = {_toml(value)}\n'
    try:
        s = parse_roadmap(text)
    except InputError as exc:
        assert exc.field.startswith("projections[2]")
        return
    p = s.projection("Si", 2027)
    if name == "ere":
        assert 0 < p.ere.low <= p.ere.likely <= p.ere.high <= 1
    elif name == "thickness_nm":
        assert 1 <= p.thickness_nm.low <= p.thickness_nm.high <= 1e8
    else:
        assert 0 < p.collection_efficiency <= 1


def test_reading_a_study_loads_neither_optuna_nor_plotly():
    """Validation is cheap: the search (optuna) and the figures (plotly) load only when
    used (fresh interpreter, so earlier imports of the test session do not count)."""
    import subprocess
    import sys

    root = Path(__file__).parents[1]
    code = (
        "import sys; from gapmatch.roadmap import load_roadmap; "
        f"load_roadmap({str(root / 'configs' / 'roadmap-demo.toml')!r}); "
        "print(sorted(m for m in ('optuna', 'plotly', 'scipy.stats') if m in sys.modules))"
    )
    out = subprocess.run(
        [sys.executable, "-c", code], cwd=root, capture_output=True, text=True, check=True
    )
    assert out.stdout.strip() == "[]"


def test_spectrum_file_is_relative_to_the_study(tmp_path: Path):
    (tmp_path / "sub").mkdir()
    spec = tmp_path / "sub" / "flat.csv"
    spec.write_text("wavelength_nm,irradiance_W_m2_nm\n300,1.0\n1200,1.0\n2500,1.0\n")
    f = tmp_path / "sub" / "rm.toml"
    f.write_text(BASE + '\n[conditions]\nspectrum_file = "flat.csv"\n')
    assert load_roadmap(f).conditions["spectrum_file"] == str(spec)
    f.write_text(BASE + '\n[conditions]\nspectrum_file = "missing.csv"\n')
    with pytest.raises(InputError, match="relative to the study file"):
        load_roadmap(f)
