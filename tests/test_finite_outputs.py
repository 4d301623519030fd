"""No NaN or Infinity ever reaches a JSON or CSV output; the ERE has a physical floor."""

from __future__ import annotations

import json
import math
import re

import numpy as np
import pytest

import gapmatch as gm
from gapmatch.cli import main
from gapmatch.errors import InputError
from gapmatch.io.finite import check_frame, dumps
from gapmatch.limits import ERE_RANGE

_NONFINITE = re.compile(r"\b(NaN|-?Infinity|-?inf|nan)\b")


def _strict_loads(text: str):
    """``json.loads`` that refuses the NaN / Infinity extensions Python writes by default."""

    def bad(token):
        raise AssertionError(f"non-finite JSON token {token!r}")

    return json.loads(text, parse_constant=bad)


def _walk_numbers(obj):
    if isinstance(obj, dict):
        for v in obj.values():
            yield from _walk_numbers(v)
    elif isinstance(obj, list):
        for v in obj:
            yield from _walk_numbers(v)
    elif isinstance(obj, (int, float)) and not isinstance(obj, bool):
        yield obj


@pytest.mark.parametrize("connection", ["series", "independent", "voltage-matched"])
@pytest.mark.parametrize("dark", ["boltzmann", "bose-einstein"])
@pytest.mark.parametrize("ere", [ERE_RANGE[0], 1e-9, 1.0])
def test_evaluate_json_is_finite_and_efficiency_never_negative(connection, dark, ere, capsys):
    argv = ["evaluate", "--gaps", "1.6", "0.9", "--connection", connection]
    argv += ["--dark-current", dark, "--ere", repr(ere), "--json"]
    assert main(argv) == 0
    out = capsys.readouterr().out
    assert not _NONFINITE.search(out), out
    d = _strict_loads(out)
    assert all(math.isfinite(x) for x in _walk_numbers(d))
    assert d["efficiency"] >= 0.0


@pytest.mark.parametrize("ere", [5e-324, 1e-315, 1e-13, 0.0])
def test_ere_below_physical_floor_is_one_line_error(ere, capsys):
    code = main(["evaluate", "--gaps", "1.6", "0.9", "--ere", repr(ere), "--json"])
    err = capsys.readouterr().err
    assert code == 2
    assert err.count("\n") == 1 and "1e-12" in err, err


@pytest.mark.parametrize("connection", ["series", "independent", "voltage-matched"])
def test_voltage_matched_and_others_non_negative_at_smallest_ere(connection):
    # gaps from a useful pair down to junctions whose V_oc at ERE 1e-12 is near zero
    gaps = [[1.6, 0.9], [0.6, 0.3], [2.0, 0.5], [1.2, 0.4]]
    res = gm.evaluate(gaps, connection, ere=ERE_RANGE[0])
    assert np.all(np.isfinite(res.efficiency))
    assert np.all(res.efficiency >= 0.0)


def test_map_outputs_have_no_nan_or_infinity(tmp_path, capsys):
    prefix = tmp_path / "m"
    argv = ["map", "--x-gap-range", "0.6", "1.8", "--step", "0.2", "--ere", "1e-12"]
    argv += ["--connections", "series", "independent", "--out", str(prefix), "--json"]
    assert main(argv) == 0
    out = capsys.readouterr().out
    assert not _NONFINITE.search(out)
    _strict_loads(out)
    csv = (tmp_path / "m_map.csv").read_text()
    summary = (tmp_path / "m_summary.json").read_text()
    for text in (csv, summary):
        assert not _NONFINITE.search(text)
    _strict_loads(summary)


def test_dumps_refuses_nan_and_infinity():
    assert dumps({"a": 1.0}) == '{"a": 1.0}'
    for bad in (float("nan"), float("inf"), -float("inf")):
        with pytest.raises(InputError, match="not a finite number"):
            dumps({"efficiency": bad}, what="evaluate --json")


def test_check_frame_refuses_nonfinite_cells():
    import pandas as pd

    ok = pd.DataFrame({"gap_1_eV": [1.0, 1.1], "name": ["a", "b"]})
    assert check_frame(ok) is ok
    with pytest.raises(InputError, match="efficiency_series_pct"):
        check_frame(pd.DataFrame({"efficiency_series_pct": [1.0, np.nan]}))
