"""Dispatch to the compiled per-stack kernels of the engine.

Besides the ideal step-absorber connection solvers described below, two paths without
diode objects ask :func:`for_batch`: the coupled independent solve of :mod:`.coupling`
(kernel in :mod:`._jit`) and the finite-absorber optics of :mod:`.absorption` (kernel in
:mod:`._optics_jit`, loaded by :func:`optics_jit`).

The connection solvers of :mod:`.connections` call :func:`for_diodes`; when it returns
parameters, they run the compiled kernel of :mod:`._jit` (numba) on them, otherwise their
numpy code, which stays the reference: both implement the same iterations and agree to
rounding (``tests/test_kernels.py`` checks 1e-12 relative on random batches).

The kernels are used when numba can be imported, the environment variable
``GAPMATCH_NO_JIT`` is unset (or ``0``), the diodes are one of the two ideal models
(:class:`.diodes.BoltzmannDiodes`, :class:`.diodes.BoseEinsteinDiodes`) and the batch
holds at least ``MIN_STACKS`` stacks (environment variable ``GAPMATCH_JIT_MIN_STACKS``,
default 4096). The threshold exists because numba is imported, and the compiled code
loaded, on the first call: about half a second once per process, more than numpy needs
for a small batch. Compiled code is cached on disk (numba's ``cache=True``, next to the
module or in ``NUMBA_CACHE_DIR``), so only the first run on a machine compiles (about
10 to 30 s). Which path ran changes results only in the last digits (1e-13 relative).
Boltzmann series strings run on :mod:`._lanes` (loaded by :func:`lanes`), which solves
blocks of stacks side by side in SIMD lanes with its own vectorisable logarithm: 3x
faster than numpy there. Boltzmann independent stacks stay on numpy
(``NUMPY_BY_DEFAULT``), which is faster there (scipy's vectorised Wright omega).

The ideal Boltzmann series path and the spectrum look-ups save about 0.1 us per stack
each, so numba's import and cached load (about 0.4 s) pays for itself only from a few
million stacks. These light paths (:func:`for_light`, ``LIGHT_PATHS``) use their
kernels when numba is already loaded in the process (another kernel ran, or the map
command's CSV formatter), or for a batch of at least ``LIGHT_MIN_STACKS`` stacks;
otherwise they stay on numpy, so a default search or a small evaluation does not import
numba for them.

References
----------
.. [1] S. K. Lam, A. Pitrou and S. Seibert, "Numba: a LLVM-based Python JIT compiler",
   Proc. LLVM-HPC 2015 (the compiler used).
"""

from __future__ import annotations

import importlib.util
import os
import sys
from contextlib import contextmanager

import numpy as np

__all__ = [
    "MIN_STACKS",
    "NUMPY_BY_DEFAULT",
    "available",
    "disabled",
    "everywhere",
    "min_stacks",
    "for_diodes",
    "for_batch",
    "for_light",
    "LIGHT_PATHS",
    "LIGHT_MIN_STACKS",
    "jit",
    "optics_jit",
    "lanes",
]

#: smallest batch (stacks) solved by the compiled kernels unless the environment says
MIN_STACKS = 4096

#: (diode model, connection) pairs left to numpy by default: measured on the 2-junction
#: benchmark batch, numpy is faster there (independent: scipy's vectorised Wright omega,
#: 160 vs 270 ns/stack), so the compiled kernel would only add numba's import
NUMPY_BY_DEFAULT = frozenset({("boltzmann", "independent")})

#: (diode model, connection) pairs whose kernel saves too little to import numba for
LIGHT_PATHS = frozenset({("boltzmann", "series")})

#: batch size from which a light path imports numba itself: 0.4 s of import and load
#: against ~0.1 us saved per stack
LIGHT_MIN_STACKS = 4_000_000

_state = {
    "off": 0,
    "module": None,
    "optics": None,
    "lanes": None,
    "checked": False,
    "ok": False,
    "min": None,
    "all": 0,
}


def _min_stacks() -> int:
    if _state["min"] is not None:
        return _state["min"]
    try:
        return int(os.environ.get("GAPMATCH_JIT_MIN_STACKS", MIN_STACKS))
    except ValueError:
        return MIN_STACKS


def available() -> bool:
    """Whether the compiled kernels are in use (numba present, not disabled)."""
    if _state["off"] or os.environ.get("GAPMATCH_NO_JIT", "0") not in ("", "0"):
        return False
    if not _state["checked"]:
        _state["checked"] = True
        _state["ok"] = importlib.util.find_spec("numba") is not None
    return _state["ok"]


@contextmanager
def min_stacks(n: int):
    """Use the compiled kernels for batches of at least ``n`` stacks inside the block."""
    old = _state["min"]
    _state["min"] = int(n)
    try:
        yield
    finally:
        _state["min"] = old


@contextmanager
def everywhere():
    """Use the compiled kernels for every batch and every path inside the block (tests
    comparing them with numpy)."""
    _state["all"] += 1
    try:
        with min_stacks(0):
            yield
    finally:
        _state["all"] -= 1


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


def for_batch(m: int, weight: int = 1) -> bool:
    """Whether a batch of ``m`` stacks of a path without diode objects (the coupled
    independent solve of :mod:`.coupling`, the optics of finite absorbers) runs on its
    compiled kernel. ``weight``: how many ideal stacks one stack of the path counts as
    against the threshold (``m * weight >= MIN_STACKS``)."""
    return available() and m * weight >= _min_stacks()


def for_light(m: int) -> bool:
    """Whether a batch of ``m`` stacks (or values) of a light path -- the Boltzmann
    series solve, a spectrum's cumulative look-up -- runs on its compiled kernel: numba
    already loaded (or :func:`everywhere`), or ``m >= LIGHT_MIN_STACKS``."""
    if not (available() and m >= _min_stacks()):
        return False
    return bool(_state["all"]) or "numba" in sys.modules or m >= LIGHT_MIN_STACKS


def optics_jit():
    """The compiled optics of finite absorbers (:mod:`._optics_jit`; imports numba)."""
    if _state["optics"] is None:
        from . import _optics_jit

        _state["optics"] = _optics_jit
    return _state["optics"]


def lanes():
    """The SIMD block kernels (:mod:`._lanes`; imports numba)."""
    if _state["lanes"] is None:
        from . import _lanes

        _state["lanes"] = _lanes
    return _state["lanes"]


def for_diodes(d, connection: str):
    """Kernel parameters ``(model, jph, vt, a, b, c, j0b, vup)`` of a diode batch for a
    connection, or ``None`` when the numpy path runs (kernels unavailable, batch below
    the threshold, a diode class the kernels do not implement, or a path in
    ``NUMPY_BY_DEFAULT``). Arrays are ``(M, N)``, Fortran order."""
    if not available() or d.jph.shape[0] < _min_stacks():
        return None
    key = (getattr(d, "model", ""), connection)
    if not _state["all"] and key in NUMPY_BY_DEFAULT:
        return None
    if key in LIGHT_PATHS and not for_light(d.jph.shape[0]):
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
