"""One vocabulary on the command line: renamed options (old spellings kept, with a note),
names in any case, and a did-you-mean for a misspelled option.

The numbers compared here are gapmatch's own under two spellings of one request, so the
check is exact equality: both spellings must reach the same call of the Python API.
"""

from __future__ import annotations

import json

import pytest

import gapmatch as gm
from gapmatch.cli import build_parser, main


def _run(capsys, argv):
    status = main(argv)
    out = capsys.readouterr()
    return status, out.out, out.err


def _json(capsys, argv):
    status, out, err = _run(capsys, argv)
    assert status == 0, err
    return json.loads(out), err


MAP = ["map", "--step", "0.5", "--connections", "series", "--json"]

#: (old command line, new command line, old flag, new flag)
RENAMES = [
    (
        [*MAP, "--range", "0.9", "1.9"],
        [*MAP, "--x-gap-range", "0.9", "1.9"],
        "--range",
        "--x-gap-range",
    ),
    (
        [*MAP, "--y-range", "0.9", "1.9"],
        [*MAP, "--y-gap-range", "0.9", "1.9"],
        "--y-range",
        "--y-gap-range",
    ),
    (
        [*MAP, "--stack", "1.9", "1.4", "0.9", "--others", "fixed"],
        [*MAP, "--stack", "1.9", "1.4", "0.9", "--other-gaps", "fixed"],
        "--others",
        "--other-gaps",
    ),
    (
        ["evaluate", "--gaps", "1.4", "--dEg-dT", "-3e-4", "--temperature", "350", "--json"],
        [
            "evaluate",
            "--gaps",
            "1.4",
            "--gap-temperature-coefficient",
            "-3e-4",
            "--temperature",
            "350",
            "--json",
        ],
        "--dEg-dT",
        "--gap-temperature-coefficient",
    ),
    (
        ["evaluate", "--gaps", "1.4", "--gap-temperature-coefficient", "-3e-4"]
        + ["--gap-reference-temperature", "250", "--json"],
        ["evaluate", "--gaps", "1.4", "--gap-temperature-coefficient", "-3e-4"]
        + ["--gaps-at-temperature", "250"]
        + ["--json"],
        "--gap-reference-temperature",
        "--gaps-at-temperature",
    ),
]


@pytest.mark.parametrize(("old", "new", "old_flag", "new_flag"), RENAMES)
def test_old_spelling_gives_the_same_answer_and_one_note(capsys, old, new, old_flag, new_flag):
    a, err_old = _json(capsys, old)
    b, err_new = _json(capsys, new)
    assert a == b
    notes = [line for line in err_old.splitlines() if line.startswith("note:")]
    assert notes == [f"note: {old_flag} is now {new_flag}"]
    assert "note:" not in err_new


@pytest.mark.parametrize(
    ("command", "hidden", "shown"),
    [
        ("map", ["--range", "--y-range", "--others"], ["--x-gap-range", "--y-gap-range"]),
        ("optimise", ["--study-name", "--min-mismatch-ratio"], ["--search-name"]),
        (
            "evaluate",
            ["--varshni ", "--dEg-dT", "--gap-reference-temperature"],
            ["--varshni-alpha", "--gap-temperature-coefficient", "--gaps-at-temperature"],
        ),
    ],
)
def test_help_shows_the_new_names_only(command, hidden, shown):
    text = build_parser([command])._subparsers._group_actions[0].choices[command].format_help()
    flat = " ".join(text.split())
    for old in hidden:
        assert old not in flat.replace("--varshni-", "")
    for new in shown:
        assert new in flat
    if command == "optimise":
        assert "--min-photocurrent-ratio" in flat.replace("- ", "-")


def test_varshni_pair_becomes_alpha_and_beta(capsys):
    # the same Varshni model (alpha 4.73e-4 eV/K, beta 636 K), old pair and new options
    base = ["evaluate", "--gaps", "1.42", "--temperature", "330", "--json"]
    a, err = _json(capsys, [*base, "--varshni", "4.73e-4", "636"])
    b, _ = _json(capsys, [*base, "--varshni-alpha", "4.73e-4", "--varshni-beta", "636"])
    assert a == b
    assert "note: --varshni is now --varshni-alpha and --varshni-beta" in err
    ref = gm.evaluate([1.42], temperature_K=330, varshni=(4.73e-4, 636.0))
    assert b["efficiency"] == ref.efficiency[0]


def test_search_name_and_photocurrent_ratio(capsys):
    base = ["optimise", "--junctions", "2", "--connection", "independent", "--trials", "2"]
    base += ["--storage", ":memory:", "--no-progress", "--json", "--bounds", "1.6:1.9", "0.9:1.2"]
    a, err_old = _json(capsys, [*base, "--study-name", "s1", "--min-mismatch-ratio", "0.9"])
    b, err_new = _json(capsys, [*base, "--search-name", "s1", "--min-photocurrent-ratio", "0.9"])
    assert a == b
    assert "note: --study-name is now --search-name" in err_old
    assert "note: --min-mismatch-ratio is now --min-photocurrent-ratio" in err_old
    assert "'s1'" in err_new and "note:" not in err_new
    assert b["mismatch_ratio"] >= 0.9 - 1e-9  # the constraint holds at the answer


def test_absorber_alpha_file_and_its_alias_table(capsys, tmp_path):
    # a tabulated absorption coefficient, flat 1e4 cm^-1 from 300 to 1100 nm: both names
    # of the model read it the same way
    p = tmp_path / "alpha.csv"
    p.write_text("wavelength_nm,alpha_per_cm\n300,1e4\n700,1e4\n1100,1e4\n")
    base = ["evaluate", "--gaps", "1.6", "--thickness", "1000", "--alpha-file", str(p), "--json"]
    a, _ = _json(capsys, [*base, "--absorber", "alpha-file"])
    b, _ = _json(capsys, [*base, "--absorber", "table"])
    c, _ = _json(capsys, [*base, "--absorber", "Alpha-File"])
    assert a == b == c
    assert 0 < a["efficiency"] < gm.evaluate([1.6]).efficiency[0]


def test_every_loss_key_is_in_watts_per_square_metre(capsys):
    d, _ = _json(capsys, ["evaluate", "--gaps", "1.72", "1.12", "--json"])
    lw = d["losses_W_m2"]
    assert "closure_rel" not in lw and all(
        isinstance(v, float) for k, v in lw.items() if k != "junctions"
    )
    assert 0 <= d["loss_closure_rel"] < 1e-6
    # the terms are powers: they add up to the incident power [W m^-2]
    terms = sum(v for k, v in lw.items() if k not in ("incident", "junctions"))
    assert terms == pytest.approx(lw["incident"], rel=1e-6)


def test_table_names_the_photocurrent_ratio(capsys):
    status, out, _ = _run(capsys, ["evaluate", "--gaps", "1.72", "1.12"])
    assert status == 0
    assert "J_min/J_max" not in out and "photocurrent ratio min/max [-]" in out


@pytest.mark.parametrize(
    ("typed", "canonical"),
    [
        (["--spectrum", "am1.5g"], ["--spectrum", "AM1.5G"]),
        (["--spectrum", "Am0"], ["--spectrum", "AM0"]),
        (["--connection", "Series"], ["--connection", "series"]),
        (["--connection", "INDEPENDENT"], ["--connection", "independent"]),
        (["--dark-current", "BOSE-EINSTEIN"], ["--dark-current", "bose-einstein"]),
        (
            ["--absorber", "DIRECT", "--thickness", "500"],
            ["--absorber", "direct", "--thickness", "500"],
        ),
        (["--conn", "independent"], ["--connection", "independent"]),  # argparse abbreviation
    ],
)
def test_names_in_any_case(capsys, typed, canonical):
    base = ["evaluate", "--gaps", "1.7", "1.1", "--json"]
    a, _ = _json(capsys, [*base, *typed])
    b, _ = _json(capsys, [*base, *canonical])
    assert a == b


def test_map_and_optimise_names_in_any_case(capsys):
    a, _ = _json(capsys, ["map", "--step", "0.5", "--connections", "SERIES", "--json"])
    b, _ = _json(capsys, ["map", "--step", "0.5", "--connections", "series", "--json"])
    assert a == b


@pytest.mark.parametrize(
    ("argv", "suggestion"),
    [
        (["evaluate", "--gaps", "1.7", "--conection", "series"], "--connection"),
        (["evaluate", "--gaps", "1.7", "--temprature", "310"], "--temperature"),
        (["map", "--x-gap-rnge", "1", "2"], "--x-gap-range"),
        (["optimise", "--junctions", "2", "--serch-name", "x"], "--search-name"),
        (["evaluate", "--gaps", "1.7", "--spectrum", "am1.5"], "AM1.5G"),
    ],
)
def test_misspelled_option_suggests_the_right_one(capsys, argv, suggestion):
    with pytest.raises(SystemExit) as stop:
        main(argv)
    assert stop.value.code == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "usage:" not in err
    assert f"did you mean {suggestion}?" in err


def test_unknown_command_suggests_one(capsys):
    assert main(["evalute", "--gaps", "1.7"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "did you mean evaluate?" in err
