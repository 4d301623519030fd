"""Every validation path gives a clear error; the CLI is a thin, documented layer."""

from __future__ import annotations

import json
import re
import subprocess
import sys

import pytest

import gapmatch as gm
from gapmatch.cli import main


@pytest.mark.parametrize(
    "kwargs, match",
    [
        (dict(gaps_eV=[]), r"gaps_eV: needs 1 to 6 gaps per stack"),
        (dict(gaps_eV=[2.0, 1.8, 1.6, 1.4, 1.2, 1.0, 0.8]), r"gaps_eV: needs 1 to 6 gaps"),
        (dict(gaps_eV=[[[1.0]]]), r"gaps_eV: needs 1 to 6 gaps"),
        (dict(gaps_eV=["abc"]), r"gaps_eV: must be numbers \[eV\]"),
        (dict(gaps_eV=[0.05]), r"gaps_eV: every value must be finite and in \[0.1, 5\] eV"),
        (dict(gaps_eV=[float("nan")]), r"gaps_eV: every value must be finite"),
        (dict(gaps_eV=[1.0, 1.5]), r"gaps_eV: gaps must decrease strictly from the top"),
        (dict(gaps_eV=[1.5, 1.5]), r"gaps_eV: gaps must decrease strictly"),
        (
            dict(gaps_eV=[1.1], connection="parallel"),
            r"connection: must be one of series, independent, voltage-matched",
        ),
        (
            dict(gaps_eV=[1.1], dark_current="fermi"),
            r"dark_current: must be one of boltzmann, bose-einstein",
        ),
        (
            dict(gaps_eV=[1.1], temperature_K=50),
            r"temperature_K: must be a number in \[100, 1000\] K",
        ),
        (
            dict(gaps_eV=[1.7, 1.1], temperature_K=[300, 300, 300]),
            r"temperature_K: needs one value, or one per junction \(2\)",
        ),
        (
            dict(gaps_eV=[1.7, 1.1], temperature_K=[300, 2000]),
            r"temperature_K: every value must be finite and in \[100, 1000\] K",
        ),
        (dict(gaps_eV=[1.1], ere=0.0), r"ere: must be a number in \[1e-12, 1\]"),
        (dict(gaps_eV=[1.1], ere=5e-324), r"ere: must be a number in \[1e-12, 1\]"),
        (dict(gaps_eV=[1.1], ere=1.5), r"ere: must be a number in \[1e-12, 1\]"),
        (
            dict(gaps_eV=[1.7, 1.1], ere=[1.0, 0.0]),
            r"ere: every value must be finite and in \[1e-12, 1\]",
        ),
        (
            dict(gaps_eV=[1.7, 1.1], cells_per_string=[1, 2]),
            r"cells_per_string: applies to connection 'voltage-matched' only",
        ),
        (
            dict(gaps_eV=[1.7, 1.1], connection="voltage-matched", cells_per_string=[1, 2.5]),
            r"cells_per_string: needs 2 whole numbers in \[1, 100\]",
        ),
        (
            dict(gaps_eV=[1.7, 1.1], connection="voltage-matched", cells_per_string=[1]),
            r"cells_per_string: needs 2 whole numbers",
        ),
        (dict(gaps_eV=[1.1], concentration=-1), r"concentration: must be a number in \(0, 46"),
    ],
)
def test_evaluate_validation(kwargs, match):
    with pytest.raises(gm.InputError, match=match):
        gm.evaluate(**kwargs)


def test_cli_table(capsys):
    assert (
        main(
            ["evaluate", "--gaps", "1.63", "0.96", "--connection", "series", "--spectrum", "AM1.5G"]
        )
        == 0
    )
    out = capsys.readouterr().out
    for header in ("efficiency [%]", "V_oc [V]", "J_sc [mA cm^-2]", "FF [-]", "E_g [eV]"):
        assert header in out
    assert "45.69" in out  # 45.696 %, see test_engine.test_two_junction_reference_values


def test_cli_json_keys(capsys):
    assert (
        main(["evaluate", "--gaps", "1.73", "0.94", "--connection", "independent", "--json"]) == 0
    )
    d = json.loads(capsys.readouterr().out)
    for key in ("efficiency", "gaps_eV", "voc_V", "jsc_mA_cm2", "ff", "pmpp_W_m2", "junctions"):
        assert key in d
    assert 0 < d["efficiency"] < 1
    assert d["voc_V"] is None  # independent: no common terminals
    assert {"gap_eV", "jph_mA_cm2", "voc_V", "v_op_V", "j_op_mA_cm2"} <= set(d["junctions"][0])


def test_cli_spectrum_options(capsys, tmp_path):
    p = tmp_path / "flat.csv"
    p.write_text("wavelength_nm,irradiance\n300,1\n1200,1\n")
    assert main(["evaluate", "--gaps", "1.4", "--spectrum-file", str(p), "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["incident_W_m2"] == pytest.approx(900.0)
    assert (
        main(
            [
                "evaluate",
                "--gaps",
                "1.3",
                "--spectrum",
                "blackbody",
                "--sun-temperature",
                "5800",
                "--concentration",
                "100",
                "--temperature",
                "310",
                "--ere",
                "0.1",
                "--json",
            ]
        )
        == 0
    )
    d = json.loads(capsys.readouterr().out)
    assert d["conditions"]["temperature_K"] == 310
    assert (
        main(
            [
                "evaluate",
                "--gaps",
                "1.8",
                "1.1",
                "--connection",
                "voltage-matched",
                "--cells-per-string",
                "2",
                "3",
                "--json",
            ]
        )
        == 0
    )
    assert json.loads(capsys.readouterr().out)["cells_per_string"] == [2, 3]


@pytest.mark.parametrize(
    "argv, match",
    [
        (["evaluate", "--gaps", "0.9", "1.6"], "gaps must decrease strictly"),
        (["evaluate", "--gaps", "1.1", "--ere", "2"], r"ere: must be a number in \[1e-12, 1\]"),
        (["evaluate", "--gaps", "1.1", "--spectrum-file", "/nonexistent.csv"], "file not found"),
    ],
)
def test_cli_errors_are_one_line(capsys, argv, match):
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert "Traceback" not in err
    assert len(err.strip().splitlines()) == 1
    assert re.search(match, err)


@pytest.mark.slow  # 2.3 s (a CLI subprocess per command)
def test_help_documents_units_and_ranges():
    out = subprocess.run(
        [sys.executable, "-m", "gapmatch", "evaluate", "--help"],
        capture_output=True,
        text=True,
        check=True,
    ).stdout
    out = " ".join(out.split())  # argparse wraps lines
    for fragment in ("[eV]", "[K]", "[W m^-2]", "[suns]", "(0, 1]", "100-1000"):
        assert fragment in out
