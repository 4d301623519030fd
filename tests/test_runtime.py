"""Process settings: the allocator hint that keeps freed memory for reuse."""

from __future__ import annotations

import ctypes.util
import sys

import numpy as np
import pytest

import gapmatch as gm
from gapmatch.errors import InputError
from gapmatch.runtime import retain_freed_memory

# glibc is the C library of the Linux machines the project runs on (common practice, no
# source); elsewhere the call must change nothing and say so
GLIBC = sys.platform.startswith("linux") and "libc.so.6" in str(ctypes.util.find_library("c"))


def test_applied_on_glibc_and_results_unchanged():
    gaps = np.array([[1.63, 0.96], [1.9, 1.1]])
    before = gm.evaluate(gaps, "series").efficiency
    assert retain_freed_memory() is GLIBC
    after = gm.evaluate(gaps, "series").efficiency
    assert np.array_equal(before, after)  # only where memory comes from changes


@pytest.mark.parametrize(
    ("kwargs", "field"),
    [
        (dict(trim_threshold_bytes=1000), "trim_threshold_bytes"),
        (dict(trim_threshold_bytes=2**31), "trim_threshold_bytes"),
        (dict(mmap_threshold_bytes=64 << 20), "mmap_threshold_bytes"),
        (dict(mmap_threshold_bytes=1.5e6), "mmap_threshold_bytes"),
        (dict(mmap_threshold_bytes=True), "mmap_threshold_bytes"),
    ],
)
def test_thresholds_out_of_range_are_refused(kwargs, field):
    with pytest.raises(InputError, match=field):
        retain_freed_memory(**kwargs)


@pytest.mark.parametrize(("env", "calls"), [(None, 1), ("0", 0), ("1", 1)])
def test_command_line_applies_it_unless_told_not_to(monkeypatch, env, calls):
    import gapmatch.runtime as runtime
    from gapmatch.cli import main

    seen = []
    monkeypatch.setattr(runtime, "retain_freed_memory", lambda: seen.append(1) or True)
    if env is None:
        monkeypatch.delenv("GAPMATCH_RETAIN_MEMORY", raising=False)
    else:
        monkeypatch.setenv("GAPMATCH_RETAIN_MEMORY", env)
    assert main(["evaluate", "--gaps", "1.63", "0.96", "--json"]) == 0
    assert len(seen) == calls
