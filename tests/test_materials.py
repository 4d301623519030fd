"""Materials library: values against their cited sources, provenance of every number,
validation of library and study overrides."""

from __future__ import annotations

import tomllib
from importlib import resources

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from gapmatch.core.temperature import varshni_slope
from gapmatch.errors import InputError
from gapmatch.materials import STATUSES, STUDY_STATUS, load_library, parse_library

LIB = load_library()
RAW = tomllib.loads(
    resources.files("gapmatch.materials").joinpath("library.toml").read_text("utf-8")
)


# ---- values against the publications --------------------------------------------------------
@pytest.mark.parametrize(
    ("material", "temperature_K", "published_eV", "tol_eV", "source"),
    [
        # C. D. Thurmond, J. Electrochem. Soc. 122, 1133 (1975): silicon 1.125 eV at 298 K
        # from the Varshni-form fit; the value is quoted to 3 decimals, hence 0.5 meV
        ("Si", 298.0, 1.125, 5e-4, "thurmond1975"),
        # Vurgaftman, Meyer & Ram-Mohan, J. Appl. Phys. 89, 5815 (2001): GaAs 1.519 eV at
        # 0 K, alpha 0.5405 meV/K, beta 204 K, i.e. 1.423 eV at 298 K (3 decimals)
        ("GaAs", 298.0, 1.423, 5e-4, "vurgaftman2001"),
        ("GaAs", 0.0, 1.519, 1e-12, "vurgaftman2001"),
        # Vurgaftman et al. (2001): InP 1.4236 eV at 0 K
        ("InP", 0.0, 1.4236, 1e-12, "vurgaftman2001"),
        # Thurmond (1975): germanium 0.7437 eV at 0 K; about 0.66 eV at 300 K (2 decimals)
        ("Ge", 0.0, 0.7437, 1e-12, "thurmond1975"),
        ("Ge", 300.0, 0.66, 5e-3, "thurmond1975"),
    ],
)
def test_gap_against_publication(material, temperature_K, published_eV, tol_eV, source):
    m = LIB[material]
    assert float(m.gap.gap_at_T(temperature_K)) == pytest.approx(published_eV, abs=tol_eV)
    assert m.gap.params["eg0_eV"].source.key == source
    assert m.gap.params["eg0_eV"].source.status == "cited"


def test_silicon_temperature_coefficient():
    """About -0.25 meV/K at 298 K from Thurmond's Varshni parameters; the central
    difference agrees with the core's analytic Varshni slope to 1e-9 eV/K (the
    difference step is 0.01 K, its error ~1e-13)."""
    g = LIB["Si"].gap
    d = float(g.gap_at_T(298.005) - g.gap_at_T(297.995)) / 0.01
    assert d == pytest.approx(-0.25e-3, abs=0.01e-3)
    a, b = g.params["alpha_eV_K"].value, g.params["beta_K"].value
    assert d == pytest.approx(float(varshni_slope(a, b, 298.0)), abs=1e-9)


@pytest.mark.parametrize("x", [0.0, 0.1, 0.3, 0.4])
def test_algaas_bowing_formula(x):
    """Vurgaftman et al. (2001): E_g(Al_xGa_1-xAs, Gamma) = (1-x) E_g(GaAs) + x E_g(AlAs)
    - x (1-x) (-0.127 + 1.310 x) eV with AlAs 3.099 eV, 0.885 meV/K, 530 K; the numbers
    are restated here from the paper, so the library must agree to rounding (1e-12)."""
    t = 300.0
    gaas = 1.519 - 0.5405e-3 * t * t / (t + 204.0)
    alas = 3.099 - 0.885e-3 * t * t / (t + 530.0)
    expected = (1 - x) * gaas + x * alas - x * (1 - x) * (-0.127 + 1.310 * x)
    assert float(LIB["AlGaAs"].gap.gap_at_T(t, x)) == pytest.approx(expected, abs=1e-12)


def test_gainp_lattice_matched_window():
    """Ga(0.51)In(0.49)P from Vurgaftman's binaries and bowing 0.65 eV: about 1.96 eV for
    the disordered alloy (ordered material lies lower, see the library note)."""
    g = LIB["GaInP"].gap
    assert float(g.gap_at_T(300.0, 0.51)) == pytest.approx(1.962, abs=2e-3)
    lo, hi = g.window_eV()
    assert lo < 1.962 < hi


def test_cigs_composition_range():
    """Alonso et al. (2001), from memory: 1.010 eV (CuInSe2) to 1.636 eV (CuGaSe2)."""
    assert LIB["CIGS"].window_eV == pytest.approx((1.010, 1.636), abs=1e-12)
    assert LIB["CIGS"].gap.params["c0_eV"].source.status == "from memory"
    x = LIB["CIGS"].gap.composition(1.15)
    assert float(LIB["CIGS"].gap.gap_at_T(300.0, x)) == pytest.approx(1.15, abs=1e-6)


@pytest.mark.parametrize(
    "key",
    [
        "Si",
        "GaAs",
        "InP",
        "Ge",
        "CdTe",
        "GaInP",
        "AlGaAs",
        "CIGS",
        "perovskite-wide",
        "perovskite-mid",
        "perovskite-snpb",
        "CZTS",
        "CZTSe",
        "Sb2Se3",
    ],
)
def test_required_materials_present(key):
    m = LIB[key]
    lo, hi = m.window_eV
    assert 0.5 < lo <= hi < 2.5
    assert m.absorber in ("direct", "indirect")


def test_perovskite_families_are_windows():
    for key in ("perovskite-wide", "perovskite-mid", "perovskite-snpb"):
        assert LIB[key].gap.tunable
    assert LIB["perovskite-snpb"].window_eV[1] < LIB["perovskite-mid"].window_eV[0]
    assert LIB["perovskite-mid"].window_eV[1] < LIB["perovskite-wide"].window_eV[0]


# ---- provenance of every number ----------------------------------------------------------
def _numeric_leaves(node, path=""):
    """(path, owning table) of every number in the raw TOML, found independently of the
    loader."""
    if isinstance(node, dict):
        for k, v in node.items():
            p = f"{path}.{k}" if path else k
            if isinstance(v, bool):
                continue
            if isinstance(v, int | float):
                yield p, node
            elif isinstance(v, list) and v and all(isinstance(x, int | float) for x in v):
                yield p, node
            else:
                yield from _numeric_leaves(v, p)


def test_every_number_has_a_source_or_a_mark():
    sources = RAW["sources"]
    for key, src in sources.items():
        assert src["status"] in STATUSES, key
        assert src["citation"], key
        if src["status"] == "cited":  # a publication down to volume and page
            assert any(ch.isdigit() for ch in src["citation"]), key
    n = 0
    for path, owner in _numeric_leaves({"materials": RAW["materials"], "e": RAW["endpoints"]}):
        n += 1
        assert "source" in owner, f"{path} has no source"
        assert owner["source"] in sources, f"{path}: unknown source {owner['source']}"
    assert n > 80  # the walk found the numbers (14+ materials, several fields each)


def test_loaded_numbers_carry_their_status():
    frame = LIB.sources_frame()
    assert set(frame["status"]) <= set(STATUSES)
    assert (frame["citation"].str.len() > 0).all()
    # the row of every material lists the non-cited statuses behind it
    rows = LIB.to_frame().set_index("material")
    assert "from memory" in rows.loc["perovskite-wide", "marks"]
    d = LIB.to_dict()
    assert {s["key"] for s in d["sources"]} >= {"thurmond1975", "vurgaftman2001", "green2012"}
    assert all(v["status"] in STATUSES for v in d["values"])


# ---- validation ------------------------------------------------------------------------------
_MINI = """
[sources.s]
citation = "A. Author, J. Test 1, 1 (2000)"
status = "cited"
[materials.X]
name = "x"
absorber = { model = "direct", alpha0_per_cm = 5e4, source = "s" }
gap = { model = "varshni", eg0_eV = 1.5, alpha_eV_K = 5e-4, beta_K = 200.0, source = "s" }
thickness_nm = { value = 1000.0, source = "s" }
refractive_index = { value = 3.0, source = "s" }
"""


@pytest.mark.parametrize(
    ("old", "new", "field", "words"),
    [
        ("alpha_eV_K = 5e-4", "alpah_eV_K = 5e-4", "materials.X.gap.alpah_eV_K", "alpha_eV_K"),
        ('beta_K = 200.0, source = "s"', 'beta_K = 200.0, source = "t"', "gap.source", "[sources]"),
        ("beta_K = 200.0", "beta_K = -3.0", "materials.X.gap.beta_K", "out of range"),
        ('status = "cited"', 'status = "remembered"', "sources.s.status", "from memory"),
        ('{ value = 1000.0, source = "s" }', "1000.0", "materials.X.thickness_nm", "source"),
        ('model = "varshni"', 'model = "varshney"', "materials.X.gap.model", "varshni"),
    ],
)
def test_library_errors_name_the_key(old, new, field, words):
    assert old in _MINI
    with pytest.raises(InputError) as ei:
        parse_library(_MINI.replace(old, new, 1), "mini.toml")
    assert field in ei.value.field
    assert ei.value.field.startswith("mini.toml: ")
    assert words in str(ei.value)


def test_study_override_is_marked():
    lib = LIB.extend(
        {"Si": {"ere": 0.02, "source": "team estimate"}, "new-absorber": _new_material()}
    )
    assert lib["Si"].ere.value == 0.02
    assert lib["Si"].ere.source.status == STUDY_STATUS
    assert lib["Si"].gap is LIB["Si"].gap  # untouched fields keep their sources
    assert lib["new-absorber"].window_eV == (1.4, 1.6)
    assert STUDY_STATUS in lib["new-absorber"].marks()
    with pytest.raises(InputError, match="did you mean 'Si'"):
        LIB.extend({"mine": {"base": "Sii"}})


def _new_material():
    return {
        "name": "invented absorber",
        "absorber": {"model": "direct", "alpha0_per_cm": 5e4},
        "gap": {"model": "window", "low_eV": 1.4, "high_eV": 1.6},
        "temperature": {"model": "none"},
        "thickness_nm": 500.0,
        "refractive_index": 2.5,
    }


def test_unknown_material_suggests():
    with pytest.raises(InputError, match="did you mean 'GaAs'"):
        LIB["GaAss"]


@settings(max_examples=60, deadline=None)
@given(
    lo=st.one_of(st.floats(allow_nan=True), st.integers(), st.text(max_size=3)),
    hi=st.one_of(st.floats(allow_nan=True), st.integers()),
)
def test_fuzzed_window_is_valid_or_one_clear_error(lo, hi):
    """Any window either loads (inside 0.1-5 eV, low < high) or raises InputError."""
    tbl = _new_material()
    tbl["gap"] = {"model": "window", "low_eV": lo, "high_eV": hi}
    try:
        lib = LIB.extend({"fuzz": tbl})
    except InputError as exc:
        assert exc.field.startswith("materials.fuzz")
        return
    w = lib["fuzz"].window_eV
    assert 0.1 <= w[0] < w[1] <= 5.0
    assert np.isfinite(w).all()


def test_library_file_is_package_data():
    """The data file ships with the package (pyproject.toml package data)."""
    from pathlib import Path

    cfg = tomllib.loads((Path(__file__).parents[1] / "pyproject.toml").read_text())
    assert "library.toml" in cfg["tool"]["setuptools"]["package-data"]["gapmatch.materials"]
