"""Dispatch to the compiled per-stack kernels of the ideal step-absorber engine.

The connection solvers of :mod:`.connections` call :func:`for_diodes`; when it returns
parameters, they run the compiled kernel of :mod:`._jit` (numba) on them, otherwise their
numpy code, which stays the reference: both implement the same iterations and agree to
rounding (``tests/test_kernels.py`` checks 1e-12 relative on random batches).

The kernels are used when numba can be imported and the environment variable
``GAPMATCH_NO_JIT`` is unset (or ``0``), for the two ideal diode models
(:class:`.diodes.BoltzmannDiodes`, :class:`.diodes.BoseEinsteinDiodes`). numba itself is
imported on the first call, so commands that never solve a batch do not pay for it.
Compiled code is cached on disk (numba's ``cache=True``, next to the module or in
``NUMBA_CACHE_DIR``), so only the first run on a machine compiles.

References
----------
.. [1] S. K. Lam, A. Pitrou and S. Seibert, "Numba: a LLVM-based Python JIT compiler",
   Proc. LLVM-HPC 2015 (the compiler used).
"""

from __future__ import annotations

import importlib.util
import os
from contextlib import contextmanager

import numpy as np

__all__ = ["available", "disabled", "for_diodes", "jit", "warm_up"]

_state = {"off": 0, "module": None, "checked": False, "ok": False}


def available() -> bool:
    """Whether the compiled kernels are in use (numba present, not disabled)."""
    if _state["off"] or os.environ.get("GAPMATCH_NO_JIT", "0") not in ("", "0"):
        return False
    if not _state["checked"]:
        _state["checked"] = True
        _state["ok"] = importlib.util.find_spec("numba") is not None
    return _state["ok"]


@contextmanager
def disabled():
    """Run the numpy reference path inside the ``with`` block (tests, comparisons)."""
    _state["off"] += 1
    try:
        yield
    finally:
        _state["off"] -= 1


def jit():
    """The compiled-kernel module (imports numba and loads or compiles on first use)."""
    if _state["module"] is None:
        from . import _jit

        _state["module"] = _jit
    return _state["module"]


def for_diodes(d):
    """Kernel parameters ``(model, jph, vt, a, b, c, j0b, vup)`` of a diode batch, or
    ``None`` when the numpy path must run (kernels unavailable or a diode class the
    kernels do not implement). Arrays are ``(M, N)``, Fortran order."""
    if not available():
        return None
    from .diodes import BoltzmannDiodes, BoseEinsteinDiodes

    def f(x):  # Fortran order, and a real array where broadcasting left zero strides
        return np.array(x, dtype=float, order="F") if 0 in x.strides else np.asfortranarray(x)

    if type(d) is BoltzmannDiodes:
        jph, j0, vt = f(d.jph), f(d.j0), f(d.vt)
        inf = np.full_like(jph, np.inf, order="F")
        return 0, jph, vt, j0, j0, j0, j0, inf
    if type(d) is BoseEinsteinDiodes:
        return (
            1,
            f(d.jph),
            f(d.vt),
            f(d.x),
            f(d.scale),
            f(d.jrad0),
            f(d.j0_boltzmann()),
            f(d.v_upper()),
        )
    return None


def warm_up() -> bool:
    """Compile (or load from the cache) every kernel for the array types the engine
    passes; returns whether the kernels are available."""
    if not available():
        return False
    from .connections import best_ratio_voltage_matched, solve_independent, solve_series
    from .diodes import make_diodes

    gaps = np.array([[1.8, 1.1], [1.6, 0.9]]) * 1.602176634e-19
    jph = np.array([[150.0, 160.0], [200.0, 120.0]])
    for model in ("boltzmann", "bose-einstein"):
        d = make_diodes(model, jph, gaps, 300.0, 1.0, 1.0)
        solve_series(d)
        solve_independent(d)
        best_ratio_voltage_matched(d)
    return True
