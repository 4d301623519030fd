"""Bad command lines: one line on stderr, exit status 2, never a traceback, the option
named as the user typed it and numbers written plainly.

Every case runs through ``gapmatch.cli.main`` in this process (argparse's own errors
arrive as ``SystemExit(2)``, the others as the return value).
"""

from __future__ import annotations

import pytest

from gapmatch.cli import main

README = "README.md"  # a file that exists and is not an SQLite database

#: (command line, words the one-line message must hold)
BAD = [
    ("evaluate --gaps 1.8 --conection series", ["did you mean --connection?"]),
    ("evaluate --gaps 1.8 --spectrum AM9", ["--spectrum", "AM1.5G"]),
    ("evaluate --gaps 1.8 --temperature 5000", ["--temperature:", "[100, 1000] K", "got 5000)"]),
    ("evaluate --gaps 1.8 1.9", ["--gaps:", "got [1.8, 1.9]"]),
    ("evaluate --gaps 1.8 --concentration 46239", ["--concentration:", "46238.8"]),
    ("evaluate --gaps 1.8 --ere 0", ["--ere:", "got 0)"]),
    ("evaluate --gaps abc", ["--gaps", "abc"]),
    ("evaluate", ["--gaps"]),
    ("evaluate --gaps 1.8 --spectrum-file /nonexistent/s.csv", ["not found"]),
    ("evaluate --gaps 1.8 --irradiance -5", ["--irradiance:", "got -5)"]),
    ("evaluate --gaps 1.8 0.9 --thickness 100 200 300", ["--thickness:"]),
    ("evaluate --gaps 1.8 --absorber direct", ["--thickness:"]),
    ("evaluate --gaps 1.8 --sun-temperature 5000", ["--sun-temperature:"]),
    ("evaluate --gaps 1.8 --connection voltage-matched --cells-per-string 0", ["cells"]),
    ("optimise --junctions 2 --seed -1 --storage :memory:", ["--seed:", "4294967295"]),
    ("optimise --junctions 2 --seed 4294967296 --storage :memory:", ["--seed:", "4294967295"]),
    ("optimise --junctions 2 --seed 1.5 --storage :memory:", ["--seed"]),
    ("optimise --junctions 2 --storage foo://bar/baz", ["--storage:", "unknown database kind"]),
    ("optimise --junctions 2 --storage mysql://u@h/db", ["--storage:", "driver"]),
    (f"optimise --junctions 2 --storage {README}", ["--storage:", "not an SQLite database"]),
    ("optimise --junctions 2 --storage postgresql://u@h:port/db", ["--storage:", "URL"]),
    ("optimise --junctions 2 --storage :memory: --csv /proc/nope/x.csv", ["--csv:"]),
    ("optimise --junctions 2 --storage :memory: --fix 1=1.8 --fix 1=1.7", ["--fix:"]),
    ("optimise --junctions 9", ["--junctions:", "got 9)"]),
    ("optimise --junctions 2 --min-photocurrent-ratio 1.5 --storage :memory:", ["--min-phot"]),
    ("optimise --junctions 2 --bounds 1.5-2.0 --storage :memory:", ["--bounds:"]),
    ("optimise --junctions 2 --workers 0 --storage :memory:", ["--workers:"]),
    ("optimise --study /nonexistent.toml", ["study file not found"]),
    ("optimise --study configs/demo.toml --junctions 4", ["--study:", "--junctions"]),
    ("map --x-gap-range 0.5 0.4", ["--x-gap-range:", "got [0.5, 0.4]"]),
    ("map --step 0", ["--step:", "got 0)"]),
    ("map --x-gap-range 1 2 --out /proc/nope/x", ["--out:"]),
    ("map --connections foo", ["--connections", "series"]),
    ("yield --gaps 1.8 --weather /nonexistent.csv", ["--weather:"]),
    ("yield --gaps 1.8 --monthly-csv /proc/nope/m.csv", ["--monthly-csv:"]),
    ("report /nonexistent.toml", ["not found"]),
    ("report configs/demo.toml --out-dir /proc/nope", ["--out-dir"]),
    ("roadmap /nonexistent.toml", ["cannot be read"]),
    ("roadmap configs/roadmap-demo.toml --seed -3", ["--seed"]),
    ("init /proc/nope/x.toml", ["does not exist"]),
    ("materials --library /nonexistent.toml", ["--library:"]),
    ("frobnicate", ["unknown command"]),
]


@pytest.mark.parametrize(("line", "words"), BAD, ids=[b[0] for b in BAD])
def test_bad_command_line_is_one_line_exit_2(capsys, line, words):
    try:
        status = main(line.split())
    except SystemExit as stop:  # argparse's own errors
        status = stop.code
    err = capsys.readouterr().err
    assert status == 2, err
    assert "Traceback" not in err
    lines = err.splitlines()
    assert len(lines) == 1, err
    assert "np.float64" not in err and "np.int64" not in err
    for w in words:
        assert w in err, err


@pytest.mark.parametrize(
    ("line", "api_name"),
    [
        ("evaluate --gaps 1.8 --temperature 5000", "temperature_K"),
        ("evaluate --gaps 1.8 --irradiance -5", "irradiance_W_m2"),
        ("evaluate --gaps 1.8 1.9", "gaps_eV"),
        ("map --step 0", "step_eV"),
        ("optimise --junctions 2 --min-photocurrent-ratio 1.5 --storage :memory:", "mismatch"),
    ],
)
def test_messages_use_option_names_not_api_names(capsys, line, api_name):
    assert main(line.split()) == 2
    assert api_name not in capsys.readouterr().err


def test_output_paths_are_checked_before_computing(capsys, tmp_path):
    # a folder given as the CSV path: refused at once, nothing is searched or written
    status = main(
        [
            "optimise",
            "--junctions",
            "2",
            "--storage",
            str(tmp_path / "s.db"),
            "--csv",
            str(tmp_path),
        ]
    )
    assert status == 2
    assert "--csv: is a folder" in capsys.readouterr().err
    assert not (tmp_path / "s.db").exists()
