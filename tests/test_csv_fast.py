"""The fast CSV writer gives exactly pandas' text (pandas is the outside reference)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from gapmatch.io.csv_fast import columns_csv, frame_csv
from gapmatch.maps import compute_map


def _pandas(frame: pd.DataFrame) -> str:
    return frame.to_csv(index=False, float_format="%.6g")


@pytest.mark.parametrize(
    "kwargs",
    [
        dict(step_eV=0.05),
        dict(step_eV=0.1, connections=("series", "independent", "voltage-matched")),
        dict(step_eV=0.1, stack_eV=[1.9, 1.4, 0.95], axes=(1, 2)),
    ],
    ids=["2J", "with-voltage-matched", "3J-fixed-other"],
)
def test_map_csv_identical_to_pandas(kwargs):
    frame = compute_map(**kwargs).to_frame()
    # byte identity: the files users already read must not change
    assert frame_csv(frame) == _pandas(frame)


def test_columns_of_every_kind_identical_to_pandas():
    rng = np.random.default_rng(7)
    n = 2000
    frame = pd.DataFrame(
        {
            "axis_eV": np.repeat(np.linspace(0.5, 2.5, 20), n // 20),  # few distinct values
            "value_pct": rng.normal(0.0, 1e3, n) * 10.0 ** rng.integers(-12, 12, n),
            "tiny": rng.random(n) * 1e-300,
            "zero": np.zeros(n),
            "flag": rng.random(n) > 0.5,
            "count": rng.integers(-5, 5, n),
            "negzero": -np.zeros(n),
        }
    )
    assert frame_csv(frame) == _pandas(frame)


def test_other_column_kinds_fall_back_to_pandas():
    frame = pd.DataFrame({"name": ["a,b", "c"], "x": [1.5, 2.25]})
    assert frame_csv(frame) == _pandas(frame)


def _near_ties(rng, n):
    """Values one ulp either side of a six-digit rounding tie, over the compiled range."""
    base = (np.round(rng.uniform(1.0, 9.99999, n), 5) + 5e-6) * 10.0 ** rng.integers(-17, 6, n)
    return np.concatenate([base, np.nextafter(base, 0.0), np.nextafter(base, np.inf)])


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_compiled_formatting_equals_python_percent_format(seed):
    # Python's '%.6g' (correctly rounded, ties to even) is the reference; the compiled
    # formatter must give the same text for every value, including ties, near-ties,
    # powers of ten and values outside its fast range (formatted by Python).
    pytest.importorskip("numba")
    rng = np.random.default_rng(seed)
    values = np.concatenate(
        [
            rng.uniform(-1.0, 1.0, 20000) * 10.0 ** rng.uniform(-20.0, 8.0, 20000),
            _near_ties(rng, 5000),
            np.round(rng.uniform(1e5, 1e6, 2000)) + 0.5,  # exact ties in binary
            10.0 ** np.arange(-18, 8).astype(float),
            [0.0, -0.0, 999999.5, 999999.4999999999, 1e6, 99999.95, 1e-17, 9.99999e-18],
        ]
    )
    text = columns_csv({"x": values}, threads=1)
    # the %-operator itself is the reference (pandas' float_format applies it)
    expected = "x\n" + "".join(("%.6g" % v) + "\n" for v in values.tolist())  # noqa: UP031
    assert text == expected


def test_compiled_and_python_paths_and_thread_counts_agree(monkeypatch):
    rng = np.random.default_rng(3)
    n = 150_000  # more than two row blocks of the compiled formatter
    cols = {
        "a_eV": np.repeat(np.linspace(0.5, 2.5, 30), n // 30),
        "b_pct": rng.normal(30.0, 10.0, n),
        "flag": rng.random(n) > 0.5,
        "count": rng.integers(-(2**62), 2**62, n),
        "big": rng.uniform(-1.0, 1.0, n) * 1e12,
    }
    results = {t: columns_csv(cols, threads=t) for t in (1, 2, 3)}
    monkeypatch.setenv("GAPMATCH_NO_JIT", "1")
    python = columns_csv(cols)
    assert results[1] == results[2] == results[3] == python
    assert python == _pandas(pd.DataFrame(cols))


def test_columns_csv_refuses_text_and_ragged_columns():
    with pytest.raises(ValueError, match="numeric"):
        columns_csv({"name": np.array(["a", "b"])})
    with pytest.raises(ValueError, match="lengths"):
        columns_csv({"a": np.zeros(2), "b": np.zeros(3)})


def test_map_command_csv_identical_to_pandas(tmp_path):
    # the command writes from plain arrays (no pandas); the text must stay pandas' own
    from gapmatch.cli import main

    out = tmp_path / "m"
    assert main(["map", "--step", "0.05", "--out", str(out)]) == 0
    frame = compute_map(step_eV=0.05).to_frame()
    assert (tmp_path / "m_map.csv").read_text() == _pandas(frame)


def test_formatter_prefetch_only_for_large_tables(monkeypatch):
    # the map command loads the compiled formatter in the background only for tables
    # that will use it; the text is the same with or without the prefetch
    from gapmatch.io.csv_fast import prefetch_compiled

    assert prefetch_compiled(1000) is None  # Python formats small tables
    monkeypatch.setenv("GAPMATCH_NO_JIT", "1")
    assert prefetch_compiled(10**7) is None  # no compiled formatter at all
    monkeypatch.delenv("GAPMATCH_NO_JIT")
    t = prefetch_compiled(10**7)
    if t is not None:  # numba installed
        t.join(timeout=120)
        assert not t.is_alive()
    cols = {"x": np.linspace(0.0, 1.0, 300_000), "y": np.linspace(-5.0, 5.0, 300_000)}
    assert columns_csv(cols) == _pandas(pd.DataFrame(cols))
