"""Study files checked for what they mean: renamed keys, one meaning per key, per-junction
conditions, and the [search] / [thickness] tables validated up front whatever the
sections, with the file name and the key path in every message."""

from __future__ import annotations

import logging
import re
from pathlib import Path

import numpy as np
import pytest

import gapmatch as gm
from gapmatch import InputError
from gapmatch.cli import main
from gapmatch.study import load_study, parse_study

MINIMAL = '[study]\nname = "t"\ntitle = "Test"\n'
MATERIALS = """
[[materials]]
name = "bottom-si"
gap_eV = 1.12

[[materials]]
name = "top-window"
gap_range_eV = [1.6, 1.8]
"""


def _file(tmp_path, text, name="s.toml"):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def _load_error(tmp_path, text) -> InputError:
    p = _file(tmp_path, text)
    with pytest.raises(InputError) as exc:
        load_study(p)
    assert str(p) in str(exc.value)  # the file is named
    return exc.value


# ---- renamed keys ----------------------------------------------------------------------
@pytest.mark.parametrize(
    "table, old, new, value",
    [
        ("map", "x_range_eV", "x_gap_range_eV", [1.0, 2.0]),
        ("map", "y_range_eV", "y_gap_range_eV", [0.8, 1.4]),
        ("map", "others", "other_gaps", "optimised"),
        ("search", "min_mismatch_ratio", "min_photocurrent_ratio", 0.5),
    ],
)
def test_old_key_names_still_work_with_one_line_warning(tmp_path, caplog, table, old, new, value):
    extra = "stack_eV = [1.9, 1.4, 0.9]\n" if old == "others" else ""
    v = f'"{value}"' if isinstance(value, str) else str(value)
    p = _file(tmp_path, MINIMAL + f"[{table}]\n{extra}{old} = {v}\n")
    with caplog.at_level(logging.WARNING, logger="gapmatch.study"):
        st = load_study(p)
    got = st.map[new] if table == "map" else st.extra["search"][new]
    assert got == value
    lines = [r.getMessage() for r in caplog.records]
    assert len(lines) == 1 and "\n" not in lines[0]
    assert f"{table}.{old} is now called {table}.{new}" in lines[0] and str(p) in lines[0]
    assert st.notices == [f"{table}.{old} is now called {table}.{new} (the old name still works)"]


def test_old_and_new_name_together_is_an_error():
    with pytest.raises(InputError, match=r"map.x_range_eV: is the old name of map.x_gap_range_eV"):
        parse_study(MINIMAL + "[map]\nx_range_eV = [1, 2]\nx_gap_range_eV = [1, 2]\n")


def test_new_names_give_no_warning(caplog):
    with caplog.at_level(logging.WARNING, logger="gapmatch.study"):
        st = parse_study(MINIMAL + "[map]\nx_gap_range_eV = [1.0, 2.0]\n")
    assert not caplog.records and st.notices == []
    assert st.map_settings()["x_range_eV"] == (1.0, 2.0)
    assert st.map["y_gap_range_eV"] == [1.0, 2.0]  # filled in from the x range


# ---- conditions.spectrum means one thing -----------------------------------------------
def _spectrum_csv(tmp_path):
    wl = np.linspace(300.0, 1200.0, 10)
    p = tmp_path / "flat.csv"
    p.write_text("wavelength_nm,irradiance_W_m2_nm\n" + "".join(f"{w},1.0\n" for w in wl))
    return p


def test_spectrum_file_implies_spectrum_file_kind(tmp_path):
    _spectrum_csv(tmp_path)
    st = load_study(_file(tmp_path, MINIMAL + '[conditions]\nspectrum_file = "flat.csv"\n'))
    assert st.conditions["spectrum"] == "file"
    # the flat spectrum integrates to 1 W m^-2 nm^-1 x 900 nm
    assert st.illumination.total_irradiance_W_m2 == pytest.approx(900.0, rel=1e-12)
    st = load_study(
        _file(tmp_path, MINIMAL + '[conditions]\nspectrum = "file"\nspectrum_file = "flat.csv"\n')
    )
    assert st.conditions["spectrum"] == "file"


def test_a_standard_name_and_a_file_together_are_refused(tmp_path):
    _spectrum_csv(tmp_path)
    e = _load_error(
        tmp_path, MINIMAL + '[conditions]\nspectrum = "AM1.5G"\nspectrum_file = "flat.csv"\n'
    )
    assert "conditions.spectrum_file" in str(e) and "applies to spectrum = 'file' only" in str(e)


def test_spectrum_file_kind_needs_a_file():
    with pytest.raises(InputError, match=r"conditions.spectrum_file: is required with spectrum"):
        parse_study(MINIMAL + '[conditions]\nspectrum = "file"\n')


# ---- per-junction ERE and temperature --------------------------------------------------
def test_per_junction_ere_and_temperature_reach_the_calculation():
    st = parse_study(
        MINIMAL
        + "[conditions]\nere = [0.01, 0.001]\ntemperature_K = [300, 320]\n"
        + '[[stacks]]\nname = "a"\ngaps_eV = [1.7, 1.1]\n'
    )
    assert st.cell.ere.tolist() == [0.01, 0.001]
    assert st.cell.temperature_K.tolist() == [300.0, 320.0]
    got = gm.evaluate([1.7, 1.1], "series", **st.cell.options()).efficiency[0]
    # each junction's value matters: changing either changes the limit
    ref = gm.evaluate([1.7, 1.1], "series", ere=[0.01, 0.001], temperature_K=[300, 320])
    assert got == ref.efficiency[0]
    assert got < gm.evaluate([1.7, 1.1], "series", ere=0.01, temperature_K=300).efficiency[0]


@pytest.mark.parametrize(
    "extra, match",
    [
        # the default map has two junctions
        ("[conditions]\nere = [0.01, 0.001, 0.01]\n", r"conditions.ere: has 3 entries.*the map"),
        (
            "[conditions]\ntemperature_K = [300, 320]\n"
            '[[stacks]]\nname = "a"\ngaps_eV = [1.9, 1.4, 0.9]\n',
            r"conditions.temperature_K: has 2 entries.*stacks\[1\].gaps_eV has 3",
        ),
        (
            "[conditions]\nere = [0.01, 0.001]\n[search]\njunctions = 3\n",
            r"conditions.ere: has 2 entries.*search.junctions has 3",
        ),
        ("[conditions]\nere = [0.01, 2.0]\n", r"conditions.ere\[2\]: out of range"),
        ("[conditions]\nere = 1e-13\n", r"conditions.ere: out of range.*1e-12"),
    ],
)
def test_per_junction_lengths_are_checked(extra, match):
    with pytest.raises(InputError, match=match):
        parse_study(MINIMAL + extra)


# ---- [search] and [thickness] validated up front ---------------------------------------
@pytest.mark.parametrize(
    "search, match",
    [
        (
            'materials = ["any", "botom-si"]\n',
            r"search.materials\[2\]: must be 'any' or a \[\[materials\]\] name; did you mean "
            r"'bottom-si'\?",
        ),
        ("bounds_eV = [2.0, 1.0]\n", r"search.bounds_eV: must be \[low, high\] with low < high"),
        (
            'junctions = 3\nmaterials = ["any", "bottom-si"]\n',
            r"search.materials: needs one entry per junction \(3",
        ),
        (
            # a 1.6-1.8 eV window cannot sit 0.7 eV above 1.12 eV
            'materials = ["top-window", "bottom-si"]\nmin_spacing_eV = 0.7\n',
            r"search.materials\[1\]: gap window 1.6-1.8 eV cannot lie 0.7 eV",
        ),
        (
            # top gaps of 1.3-1.35 eV on 1.12 eV silicon leave the bottom cell only the
            # photons of 1.12-1.35 eV: far below the top cell's photocurrent
            'materials = ["narrow", "bottom-si"]\nmin_photocurrent_ratio = 0.9\n',
            r"search.min_photocurrent_ratio: is infeasible: no stack within the search "
            r"windows reaches a photocurrent ratio of 0.9",
        ),
    ],
)
def test_search_errors_before_anything_runs(tmp_path, search, match):
    # [search] is checked although no section of the study uses it
    narrow = '[[materials]]\nname = "narrow"\ngap_range_eV = [1.3, 1.35]\n'
    text = MINIMAL + 'sections = ["map"]\n' + MATERIALS + narrow + "[search]\n" + search
    e = _load_error(tmp_path, text)
    assert e.field.startswith(str(tmp_path))
    assert re.search(match, str(e)), str(e)


def test_a_feasible_photocurrent_ratio_is_accepted():
    # current matching is reachable when the top gap is free over 1.3-2.3 eV
    st = parse_study(
        MINIMAL + MATERIALS + '[search]\nmaterials = ["any", "bottom-si"]\nbounds_eV = [1.3, 2.3]\n'
        "min_photocurrent_ratio = 0.99\n"
    )
    assert st.extra["search"]["min_photocurrent_ratio"] == 0.99


@pytest.mark.parametrize(
    "thickness, match",
    [
        ('stack = "candidte A"\n', r"thickness.stack: names no \[\[stacks\]\] entry; did you mean"),
        ("junction = 3\n", r"thickness.junction: must be a junction of stack 'candidate A'"),
        ("range_nm = [3000.0, 30.0]\n", r"thickness.range_nm: must be \[low, high\]"),
    ],
)
def test_thickness_errors_before_anything_runs(tmp_path, thickness, match):
    stack = '[[stacks]]\nname = "candidate A"\ngaps_eV = [1.7, 1.12]\n'
    e = _load_error(
        tmp_path, MINIMAL + 'sections = ["map"]\n' + stack + "[thickness]\n" + thickness
    )
    assert re.search(match, str(e)), str(e)


# ---- what the file is made of ----------------------------------------------------------
def test_study_with_byte_order_mark_is_read(tmp_path):
    p = tmp_path / "bom.toml"
    p.write_bytes(b"\xef\xbb\xbf" + MINIMAL.encode())
    assert load_study(p).name == "t"


def test_study_not_utf8_is_one_line_naming_the_file(tmp_path, capsys):
    p = tmp_path / "latin.toml"
    p.write_bytes((MINIMAL + 'description = "caf\xe9"\n').encode("latin-1"))
    assert main(["report", str(p), "--out-dir", str(tmp_path / "out")]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and str(p) in err and "is not UTF-8 text" in err


def test_study_pointing_at_a_file_that_is_no_spectrum_does_not_echo_it(tmp_path, capsys):
    secret = "Quarterly memo: the lab's budget is confidential"
    (tmp_path / "memo.txt").write_text(f"{secret}\nsecond line, also private\n")
    p = _file(tmp_path, MINIMAL + '[conditions]\nspectrum_file = "memo.txt"\n')
    assert main(["report", str(p), "--out-dir", str(tmp_path / "out")]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and "conditions.spectrum_file" in err
    assert "confidential" not in err and "private" not in err and "second line" not in err


def test_demo_header_does_not_repeat_the_organisation():
    st = load_study(Path(__file__).parents[1] / "configs/demo.toml")
    assert st.author and st.organisation
    assert st.author.split(" (")[0] not in st.organisation
