"""Compiled maximum-power kernel for series strings over (hours x stacks) rows.

The yield engine solves tens of millions of (hour, stack) rows. The numpy solver
:func:`gapmatch.core.hourly.series_mpp_boltzmann` is the reference; this module compiles
the same arithmetic (same start point, same bracketed Newton iteration on
``f(J) = S / (J S1) - 1``, same tolerance) with numba so that each row is solved in
registers, in parallel over the machine's cores. There is no Python-level loop: the
row loop is compiled (``numba.prange``). When numba is missing the engine falls back to
the numpy solver, with identical results to ~1e-13 relative.

References
----------
.. [1] A. S. Brown and M. A. Green, Physica E 14, 96 (2002) (series-constrained tandem).
.. [2] S. K. Lam, A. Pitrou and S. Seibert, "Numba: a LLVM-based Python JIT compiler",
   Proc. LLVM-HPC 2015, doi:10.1145/2833157.2833162.
"""

from __future__ import annotations

import math

import numpy as np

from ..core.solvers import XTOL_REL

try:  # pragma: no cover - exercised when numba is installed (declared dependency)
    import numba

    HAVE_NUMBA = True
except ImportError:  # pragma: no cover
    numba = None
    HAVE_NUMBA = False

__all__ = ["HAVE_NUMBA", "series_mpp_rows"]


def _kernel(jph, j0, lnj0, vt, p_out, j_out, xtol):  # pragma: no cover - compiled
    rows, n = jph.shape
    for r in numba.prange(rows):
        # limiting junction: the smallest photocurrent
        lim = 0
        jmin = jph[r, 0]
        for i in range(1, n):
            if jph[r, i] < jmin:
                jmin = jph[r, i]
                lim = i
        if not jmin > 0.0:
            p_out[r] = 0.0
            j_out[r] = 0.0
            continue
        hi = jmin
        tol = xtol * hi
        j0l = j0[r, lim]
        vtl = vt[r, lim]
        # the others' voltage at jmin: (jph - J) + J0 keeps J0 where J0 << jph
        v_other = 0.0
        for i in range(n):
            v_other += vt[r, i] * (math.log((jph[r, i] - hi) + j0[r, i]) - lnj0[r, i])
        big_l = 1.0 + math.log1p(hi / j0l) + v_other / vtl
        if big_l < 1.0:
            big_l = 1.0
        y = big_l - math.log(big_l)
        if y < 0.5:
            y = 0.5
        for _ in range(2):
            y = y - (y + math.log(y) - big_l) / (1.0 + 1.0 / y)
        j = hi + j0l - (hi + j0l) / y
        if not math.isfinite(j):
            j = 0.5 * hi
        j = min(max(j, 0.0), hi)
        lo = 0.0
        jn = j
        # one thermal voltage for the whole string (the usual case: one cell
        # temperature): S = vt (ln prod d_i - sum ln J0_i), one logarithm per step
        same_vt = True
        sum_lnj0 = 0.0
        for i in range(n):
            sum_lnj0 += lnj0[r, i]
            if vt[r, i] != vtl:
                same_vt = False
        for _ in range(200):
            s = 0.0
            s1 = 0.0
            s2 = 0.0
            if same_vt:
                prod = 1.0
                for i in range(n):
                    d = (jph[r, i] - j) + j0[r, i]
                    prod *= d
                    w = 1.0 / d
                    s1 += w
                    s2 += w * w
                if prod > 1e-300 and prod < 1e300:
                    s = vtl * (math.log(prod) - sum_lnj0)
                else:
                    for i in range(n):
                        s += math.log((jph[r, i] - j) + j0[r, i]) - lnj0[r, i]
                    s *= vtl
                s1 *= vtl
                s2 *= vtl
            else:
                for i in range(n):
                    d = (jph[r, i] - j) + j0[r, i]
                    s += vt[r, i] * (math.log(d) - lnj0[r, i])
                    w = vt[r, i] / d
                    s1 += w
                    s2 += w / d
            js1 = j * s1
            f = s / js1 - 1.0
            fp = -(js1 * s1 + s * s1 + s * j * s2) / (js1 * js1)
            if f > 0:
                lo = j
            else:
                hi = j
            jn = j - f / fp
            if not (jn >= lo and jn <= hi):
                jn = 0.5 * (lo + hi)
            if abs(jn - j) <= tol or hi - lo <= tol:
                break
            j = jn
        v = 0.0
        for i in range(n):
            v += vt[r, i] * (math.log((jph[r, i] - jn) + j0[r, i]) - lnj0[r, i])
        p_out[r] = jn * v
        j_out[r] = jn


_compiled = None


def _get_kernel():
    global _compiled
    if _compiled is None:
        _compiled = numba.njit(parallel=True, cache=True, fastmath=False)(_kernel)
    return _compiled


def series_mpp_rows(
    jph: np.ndarray, lnj0: np.ndarray, vt: np.ndarray, j0: np.ndarray | None = None
) -> tuple[np.ndarray, np.ndarray]:
    """Maximum power point of every row's series string of Boltzmann diodes.

    Parameters
    ----------
    jph : numpy.ndarray
        Photocurrent densities [A m^-2], ``(R, N)``.
    lnj0 : numpy.ndarray
        Natural log of each junction's dark saturation current density
        [ln(A m^-2)], broadcast to ``(R, N)`` (``ln J0_rad - ln ERE``).
    vt : numpy.ndarray
        Thermal voltage kT/q [V], broadcast to ``(R, N)``.
    j0 : numpy.ndarray, optional
        ``exp(lnj0)`` when already at hand [A m^-2].

    Returns
    -------
    tuple of numpy.ndarray
        ``(p_mpp [W m^-2], j_mpp [A m^-2])``, ``(R,)`` each; zero where a junction
        receives no light.
    """
    jph = np.asarray(jph, dtype=float)
    lnj0 = np.broadcast_to(np.asarray(lnj0, dtype=float), jph.shape)
    vt = np.broadcast_to(np.asarray(vt, dtype=float), jph.shape)
    j0 = np.exp(lnj0) if j0 is None else np.broadcast_to(np.asarray(j0, float), jph.shape)
    p = np.empty(jph.shape[0])
    j = np.empty(jph.shape[0])
    _get_kernel()(jph, j0, lnj0, vt, p, j, XTOL_REL)
    return p, j
