"""Honest outputs: a closed pipe ends quietly, model limits and spectrum scales are stated,
the concentration help states the bound the check applies, gaps are shown at the cell
temperature, and no JSON output carries NaN or Infinity.
"""

from __future__ import annotations

import json
import math
import os
import re
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

import gapmatch as gm
from gapmatch.cli import build_parser, main

ROOT = Path(__file__).resolve().parents[1]


def _run(capsys, argv):
    status = main(argv)
    out = capsys.readouterr()
    return status, out.out, out.err


def _g173(column: str) -> float:
    """Integral of one column of pvlib's ASTM G173-03 table [W m^-2] (trapezoid)."""
    import pvlib

    t = pvlib.spectrum.get_reference_spectra(standard="ASTM G173-03")
    return float(np.trapezoid(t[column].to_numpy(float), t.index.to_numpy(float)))


# ---- a closed pipe --------------------------------------------------------------------
@pytest.mark.parametrize(
    "argv",
    [
        ["evaluate", "--gaps", "1.7", "1.1"],
        ["evaluate", "--gaps", "1.7", "1.1", "--json"],
        ["map", "--step", "0.5", "--connections", "series"],
        ["materials"],
        ["init", "--help"],
    ],
    ids=lambda a: " ".join(a),
)
def test_a_closed_pipe_ends_quietly(argv, tmp_path):
    # the reader goes away before the first line is written (as `| head -1` does when
    # the output is longer than the pipe holds): no traceback, exit status 0
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    proc = subprocess.Popen(
        [sys.executable, "-m", "gapmatch", *argv],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        cwd=tmp_path,
        env=env,
    )
    proc.stdout.close()
    err = proc.stderr.read().decode()
    proc.stderr.close()
    status = proc.wait(timeout=300)
    assert "Traceback" not in err and "BrokenPipeError" not in err, err
    assert status == 0, err


# ---- the Boltzmann dark current near the gap ------------------------------------------
HOT = ["evaluate", "--gaps", "0.765", "--concentration", "46238"]


def test_boltzmann_warning_at_the_highest_concentration(capsys):
    status, out, _ = _run(capsys, HOT)
    assert status == 0
    assert "Warning: Boltzmann dark current outside its validity" in out
    assert "--dark-current bose-einstein" in out
    status, out, _ = _run(capsys, [*HOT, "--json"])
    d = json.loads(out)
    # qV_oc above the gap: the Boltzmann form has left its domain (E - qV > 0 for every
    # emitted photon is what the Bose-Einstein occupation requires)
    assert d["junctions"][0]["voc_V"] > 0.765
    assert len(d["warnings"]) == 1 and "bose-einstein" in d["warnings"][0]


def test_no_warning_where_boltzmann_holds_or_with_bose_einstein(capsys):
    for argv in (
        ["evaluate", "--gaps", "0.765", "--json"],
        [*HOT, "--dark-current", "bose-einstein", "--json"],
    ):
        status, out, _ = _run(capsys, argv)
        assert status == 0 and json.loads(out)["warnings"] == []


@pytest.mark.parametrize("suns", [1.0, 100.0, 1000.0, 46000.0])
def test_the_warning_marks_where_the_two_dark_currents_part(suns):
    # Where no warning is given the Boltzmann and Bose-Einstein V_oc agree closely: the
    # two occupations differ by the factor 1 - exp(-(E - qV)/kT) <= 5 % above 3 kT, and
    # V_oc moves by kT/q ln(1.05) = 1.3 mV at most (tolerance 1.5 mV). Where it is given,
    # the Boltzmann V_oc is the higher one (its dark current is the smaller), as the
    # warning says.
    kw = dict(spectrum="blackbody", concentration=suns)
    for gap in (0.5, 0.765, 1.1):
        b = gm.evaluate([gap], **kw)
        be = gm.evaluate([gap], dark_current="bose-einstein", **kw)
        v_b, v_be = b.solution.voc_junction[0, 0], be.solution.voc_junction[0, 0]
        if b.warnings:
            assert v_b > v_be
        else:
            assert abs(v_b - v_be) < 1.5e-3


def test_report_shows_the_boltzmann_warning():
    from gapmatch.report import build_report
    from gapmatch.study import parse_study

    st = parse_study(
        '[study]\nname = "hot"\ntitle = "hot"\nsections = ["stacks"]\n'
        "[conditions]\nconcentration = 46000\n"
        '[[stacks]]\nname = "a"\ngaps_eV = [0.765]\n'
    )
    html = build_report(st, progress=False).html
    assert "Boltzmann dark current outside its validity" in html
    assert "--dark-current bose-einstein" in html


# ---- the scale of AM0 and AM1.5D ------------------------------------------------------
def test_am0_says_what_it_is(capsys):
    total = _g173("extraterrestrial")
    assert round(total, 1) == 1347.9  # pvlib's ASTM G173-03 extraterrestrial column
    status, out, _ = _run(capsys, ["evaluate", "--gaps", "1.4", "--spectrum", "AM0"])
    assert status == 0
    assert "extraterrestrial" in out and f"{total:.1f} W m^-2" in out and "1361" in out
    assert "--irradiance" in out
    status, out, _ = _run(capsys, ["evaluate", "--gaps", "1.4", "--spectrum", "AM0", "--json"])
    d = json.loads(out)
    assert d["incident_W_m2"] == pytest.approx(total, rel=1e-9)
    assert any("1361" in n for n in d["notes"])


def test_am15d_says_one_sun_is_900_w(capsys):
    total = _g173("direct")
    assert round(total, 1) == 900.1  # pvlib's ASTM G173-03 direct column
    argv = ["evaluate", "--gaps", "1.4", "--spectrum", "AM1.5D", "--concentration", "500"]
    status, out, _ = _run(capsys, argv)
    assert status == 0
    line = next(x for x in out.splitlines() if x.startswith("Note:"))
    assert f"{total:.1f} W m^-2" in line and "500 suns" in line and "--irradiance 1000" in line
    assert f"{500 * total / 1000:,.1f} kW m^-2" in line
    # with --irradiance the note is not needed: the user chose the scale
    status, out, _ = _run(capsys, [*argv, "--irradiance", "1000"])
    assert "Note:" not in out


# ---- the concentration bound ----------------------------------------------------------
def test_concentration_help_states_the_bound_the_check_applies(capsys):
    p = build_parser(["evaluate"])
    sub = p._subparsers._group_actions[0].choices["evaluate"]
    help_ = next(a.help for a in sub._actions if "--concentration" in a.option_strings)
    bound = float(re.search(r"\(0, ([0-9.e+]+)\]", help_).group(1))
    # the thermodynamic maximum 1/sin^2(R_sun / 1 au) (IAU 2015 solar radius, 1 au)
    from scipy.constants import au

    assert bound == pytest.approx(1 / math.sin(math.asin(6.957e8 / au)) ** 2, rel=1e-5)
    assert main(["evaluate", "--gaps", "1.4", "--concentration", repr(bound), "--json"]) == 0
    capsys.readouterr()
    above = bound * (1 + 1e-5)
    assert main(["evaluate", "--gaps", "1.4", "--concentration", repr(above)]) == 2
    assert f"{bound:g}" in capsys.readouterr().err


# ---- gaps at the cell temperature -----------------------------------------------------
def test_table_shows_the_gap_at_the_cell_temperature(capsys):
    # Varshni form E_g(T) = E_g(0) - alpha T^2 / (T + beta) (Y. P. Varshni, Physica 34,
    # 149 (1967)), computed here from the given gap at 300 K; GaAs-like alpha 5.405e-4
    # eV/K, beta 204 K (from memory). Tolerance 5e-4 eV: the table prints 3 decimals.
    alpha, beta, t = 5.405e-4, 204.0, 360.0
    e0 = 1.42 + alpha * 300**2 / (300 + beta)
    expect = e0 - alpha * t**2 / (t + beta)
    argv = ["evaluate", "--gaps", "1.42", "--temperature", str(t)]
    argv += ["--varshni-alpha", str(alpha), "--varshni-beta", str(beta)]
    status, out, _ = _run(capsys, argv)
    assert status == 0
    lines = out.splitlines()
    head = next(i for i, x in enumerate(lines) if x.lstrip().startswith("junction"))
    assert "E_g at T_cell [eV]" in lines[head]
    shown = float(lines[head + 1].split()[1])
    assert shown == pytest.approx(expect, abs=5e-4) and shown != pytest.approx(1.42, abs=5e-4)
    assert "gaps at the cell temperature (360 K)" in out


# ---- never NaN or Infinity in JSON ----------------------------------------------------
def _strict(text: str):
    def no(c):
        raise AssertionError(f"{c} in JSON output")

    return json.loads(text, parse_constant=no)


def test_optimise_json_refuses_a_non_finite_number(capsys, monkeypatch):
    from gapmatch.search.result import SearchResult

    argv = ["optimise", "--junctions", "2", "--trials", "2", "--storage", ":memory:"]
    argv += ["--no-progress", "--json"]
    status, out, _ = _run(capsys, argv)
    assert status == 0
    _strict(out)
    real = SearchResult.to_dict

    def with_nan(self):  # the guard under test: a non-finite value reaches the output
        d = real(self)
        d["efficiency"] = float("nan")
        return d

    monkeypatch.setattr(SearchResult, "to_dict", with_nan)
    status, out, err = _run(capsys, argv)
    assert status == 2 and out == ""
    assert err.count("\n") == 1 and "optimise --json" in err and "NaN" in err


def test_yield_json_refuses_a_non_finite_number(capsys, monkeypatch):
    from gapmatch.energy.result import YieldResult

    real = YieldResult.summary

    def with_inf(self, *a, **k):  # the guard under test: a non-finite value
        d = real(self, *a, **k)
        d["annual_energy_kWh_m2"] = float("inf")
        return d

    monkeypatch.setattr(YieldResult, "summary", with_inf)
    status, out, err = _run(capsys, ["yield", "--gaps", "1.8", "1.1", "--json"])
    assert status == 2 and out == ""
    assert "yield --json" in err and "Traceback" not in err


def test_no_json_dump_in_the_cli_allows_nan():
    # every JSON written by the command line goes through gapmatch.io.finite.dumps
    # (allow_nan=False); a bare json.dumps would write NaN and Infinity
    for path in (ROOT / "gapmatch" / "cli").glob("*.py"):
        text = path.read_text("utf-8")
        assert "json.dumps(" not in text and "json.dump(" not in text, path.name


def _python_m(argv, tmp_path, **env):
    proc = subprocess.run(
        [sys.executable, "-m", "gapmatch", *argv],
        capture_output=True,
        text=True,
        cwd=tmp_path,
        env=dict(os.environ, PYTHONPATH=str(ROOT), **env),
        timeout=600,
    )
    return proc.returncode, proc.stdout, proc.stderr


def test_fast_exit_after_the_compiled_kernels_keeps_every_output(tmp_path):
    # the map command ends its process with os._exit once numba is loaded (no LLVM
    # teardown); its files and its printed summary must be complete all the same.
    # GAPMATCH_JIT_MIN_STACKS=1 makes this small voltage-matched map load the kernels.
    argv = ["map", "--step", "0.1", "--connections", "voltage-matched", "--out", "m"]
    status, out, err = _python_m(argv, tmp_path, GAPMATCH_JIT_MIN_STACKS="1")
    assert status == 0, err
    assert out.rstrip().endswith("not ratings.")  # the last line of the summary
    summary = json.loads((tmp_path / "m_summary.json").read_text())
    assert summary["grid"]["nx"] == 21 and summary["grid"]["ny"] == 21
    rows = (tmp_path / "m_map.csv").read_text().splitlines()
    assert len(rows) == 1 + 21 * 21
    # a command that fails still exits normally with status 2 and its one-line error
    status, _, err = _python_m(["map", "--x-gap-range", "2.5", "0.5"], tmp_path)
    assert status == 2 and "--x-gap-range" in err and "Traceback" not in err
