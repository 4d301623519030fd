"""The fast CSV writer gives exactly pandas' text (pandas is the outside reference)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from gapmatch.io.csv_fast import frame_csv
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
