"""Batch evaluations with the loss breakdown estimate their memory first and refuse a
batch above the limit with one clear error, instead of a raw MemoryError mid-way."""

from __future__ import annotations

import tracemalloc

import numpy as np
import pytest

import gapmatch as gm
from gapmatch.api import MEMORY_LIMIT_ENV, loss_memory_estimate_bytes, loss_memory_limit_bytes


def _batch(m: int, n: int = 2) -> np.ndarray:
    rng = np.random.default_rng(3)
    return -np.sort(-rng.uniform(0.6, 2.4, (m, n)), axis=1)


def test_batch_above_the_limit_is_refused_naming_size_and_limit(monkeypatch):
    monkeypatch.setenv(MEMORY_LIMIT_ENV, "0.0001")  # 100 kB
    assert loss_memory_limit_bytes() == 100_000
    g = _batch(1000)  # 1000 x 2 x 450 B = 900 kB
    with pytest.raises(gm.InputError) as exc:
        gm.evaluate(g, "series", losses=True)
    msg = str(exc.value)
    assert msg.startswith("losses: a loss breakdown of 1,000 stacks x 2 junctions")
    assert "0.0009 GB, above the limit of 0.0001 GB" in msg and MEMORY_LIMIT_ENV in msg
    assert "parts of at most 111 stacks" in msg and "\n" not in msg
    # the same batch without the breakdown, and a batch under the limit, still run
    assert gm.evaluate(g, "series").efficiency.shape == (1000,)
    assert gm.evaluate(g[:100], "series", losses=True).losses is not None
    # a finite absorber adds its work units' spectral grids to the estimate
    with pytest.raises(gm.InputError, match="loss breakdown of 10 stacks"):
        gm.evaluate(g[:10], "series", losses=True, absorber="direct", thickness_nm=500.0)


@pytest.mark.parametrize("value", ["0", "-1", "lots", "inf"])
def test_bad_memory_limit_is_one_error(monkeypatch, value):
    monkeypatch.setenv(MEMORY_LIMIT_ENV, value)
    with pytest.raises(gm.InputError, match=MEMORY_LIMIT_ENV):
        gm.evaluate(_batch(5), "series", losses=True)


def test_default_limit_is_half_the_machine_memory(monkeypatch):
    import os

    monkeypatch.delenv(MEMORY_LIMIT_ENV, raising=False)
    phys = os.sysconf("SC_PHYS_PAGES") * os.sysconf("SC_PAGE_SIZE")
    assert loss_memory_limit_bytes() == phys // 2


@pytest.mark.parametrize("n", [2, 3])
def test_estimate_bounds_the_measured_peak(n):
    # the estimate must not under-count: traced peak (numpy allocations included) of an
    # ideal-path batch with losses stays below it (measured 395-420 B per stack-junction,
    # estimate 450 B: benchmarks/loss_memory.py)
    m = 3000
    g = _batch(m, n)
    gm.evaluate(g[:2], "series", losses=True)  # caches outside the measurement
    tracemalloc.start()
    gm.evaluate(g, "series", losses=True)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    assert peak <= loss_memory_estimate_bytes(m, n)
    assert peak > 0.5 * loss_memory_estimate_bytes(m, n)  # and is not a wild over-count
