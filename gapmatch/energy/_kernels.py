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

import importlib.util
import math

import numpy as np

from ..core.solvers import XTOL_REL

#: whether numba is installed (it is imported on first use, not with gapmatch)
HAVE_NUMBA = importlib.util.find_spec("numba") is not None
numba = None  # the module, bound by _get() before anything is compiled

__all__ = ["HAVE_NUMBA", "series_mpp_rows", "series_power_table"]


def _row(jph, j0, lnj0, vt, xtol):  # pragma: no cover - compiled
    """Maximum power point of one series string (1-D arrays of its N junctions)."""
    n = jph.shape[0]
    lim = 0
    jmin = jph[0]
    for i in range(1, n):
        if jph[i] < jmin:
            jmin = jph[i]
            lim = i
    if not jmin > 0.0:
        return 0.0, 0.0
    hi = jmin
    tol = xtol * hi
    j0l = j0[lim]
    vtl = vt[lim]
    # one thermal voltage for the whole string (the usual case: one cell temperature):
    # S = vt (ln prod d_i - sum ln J0_i), one logarithm per evaluation
    same_vt = True
    sum_lnj0 = 0.0
    for i in range(n):
        sum_lnj0 += lnj0[i]
        if vt[i] != vtl:
            same_vt = False
    # the others' voltage at jmin: (jph - J) + J0 keeps J0 where J0 << jph
    v_other = _string_voltage_c(jph, j0, lnj0, vt, hi, same_vt, vtl, sum_lnj0)
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
    for _ in range(200):
        s = 0.0
        s1 = 0.0
        s2 = 0.0
        if same_vt:
            prod = 1.0
            for i in range(n):
                d = (jph[i] - j) + j0[i]
                prod *= d
                w = 1.0 / d
                s1 += w
                s2 += w * w
            if prod > 1e-300 and prod < 1e300:
                s = vtl * (math.log(prod) - sum_lnj0)
            else:
                for i in range(n):
                    s += math.log((jph[i] - j) + j0[i]) - lnj0[i]
                s *= vtl
            s1 *= vtl
            s2 *= vtl
        else:
            for i in range(n):
                d = (jph[i] - j) + j0[i]
                s += vt[i] * (math.log(d) - lnj0[i])
                w = vt[i] / d
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
    return jn * _string_voltage_c(jph, j0, lnj0, vt, jn, same_vt, vtl, sum_lnj0), jn


def _string_voltage(jph, j0, lnj0, vt, j, same_vt, vtl, sum_lnj0):  # pragma: no cover
    """Sum of the junction voltages [V] of a series string at current ``j``."""
    n = jph.shape[0]
    if same_vt:
        prod = 1.0
        for i in range(n):
            prod *= (jph[i] - j) + j0[i]
        if prod > 1e-300 and prod < 1e300:
            return vtl * (math.log(prod) - sum_lnj0)
    v = 0.0
    for i in range(n):
        v += vt[i] * (math.log((jph[i] - j) + j0[i]) - lnj0[i])
    return v


def _rows_kernel(jph, j0, lnj0, vt, p_out, j_out, xtol):  # pragma: no cover - compiled
    for r in numba.prange(jph.shape[0]):
        p_out[r], j_out[r] = _row_c(jph[r], j0[r], lnj0[r], vt[r], xtol)


#: stacks solved side by side in the table kernel: their Newton iterations are
#: independent, so the processor overlaps the long latency chains of several of them
LANES = 8
#: Newton steps taken by every lane before the convergence check; lanes not converged
#: then finish in the one-row solver
LANE_STEPS = 3
#: relative tolerance on the current of the lane solver. The power is stationary at the
#: maximum-power current, so its error is second order in the current's: 1e-8 on the
#: current leaves the power within ~1e-15 of the 1e-13 solver (measured on the
#: Greensboro year x 81 x 81 grid: largest difference 5e-16 relative)
LANE_XTOL = 1e-8


def _log_string(jph, j0, lnj0, sum_lnj0, j):  # pragma: no cover - compiled
    """``sum_i ln((jph_i - j) + J0_i) - ln J0_i`` with one logarithm when it can."""
    n = jph.shape[0]
    prod = 1.0
    for i in range(n):
        prod *= (jph[i] - j) + j0[i]
    if prod > 1e-300 and prod < 1e300:
        return math.log(prod) - sum_lnj0
    s = 0.0
    for i in range(n):
        s += math.log((jph[i] - j) + j0[i]) - lnj0[i]
    return s


def _table_kernel(flux, ln_u, vt_h, idx_top, idx_gap, p_out, xtol):  # pragma: no cover
    # rows = (interval h, stack k); junction i of stack k absorbs
    # F_h(e*_i) - F_h(e*_{i-1}), e*_i the smallest gap of junctions 0..i (idx_top),
    # and has the dark current of its own gap (idx_gap). One cell temperature per
    # interval, so one thermal voltage per string.
    hours = flux.shape[0]
    m, n = idx_gap.shape
    lane_tol = LANE_XTOL
    for h in numba.prange(hours):
        vt = vt_h[h]
        vts = np.full(n, vt)
        jph = np.empty((LANES, n))
        j0 = np.empty((LANES, n))
        lnj0 = np.empty((LANES, n))
        slnj0 = np.empty(LANES)
        jl = np.empty(LANES)
        lo = np.empty(LANES)
        hi = np.empty(LANES)
        tol = np.empty(LANES)
        step = np.empty(LANES)
        lit = np.empty(LANES, dtype=np.bool_)
        for k0 in range(0, m, LANES):
            nl = min(LANES, m - k0)
            for ln in range(nl):
                k = k0 + ln
                prev = 0.0
                acc = 0.0
                jmin = np.inf
                lim = 0
                for i in range(n):
                    f = flux[h, idx_top[k, i]]
                    x = f - prev
                    prev = f
                    jph[ln, i] = x
                    a = ln_u[h, idx_gap[k, i]]
                    lnj0[ln, i] = a
                    j0[ln, i] = math.exp(a)
                    acc += a
                    if x < jmin:
                        jmin = x
                        lim = i
                slnj0[ln] = acc
                lit[ln] = jmin > 0.0
                lo[ln] = 0.0
                hi[ln] = jmin
                tol[ln] = xtol * jmin
                jl[ln] = 0.0
                if lit[ln]:
                    # start: exact when only the limiting junction's voltage varies
                    j0l = j0[ln, lim]
                    v_other = vt * _log_string_c(jph[ln], j0[ln], lnj0[ln], acc, jmin)
                    big_l = 1.0 + math.log1p(jmin / j0l) + v_other / vt
                    if big_l < 1.0:
                        big_l = 1.0
                    y = big_l - math.log(big_l)
                    if y < 0.5:
                        y = 0.5
                    for _ in range(2):
                        y = y - (y + math.log(y) - big_l) / (1.0 + 1.0 / y)
                    jj = jmin + j0l - (jmin + j0l) / y
                    if not math.isfinite(jj):
                        jj = 0.5 * jmin
                    jl[ln] = min(max(jj, 0.0), jmin)
            for _ in range(LANE_STEPS):
                for ln in range(nl):
                    if not lit[ln]:
                        continue
                    jj = jl[ln]
                    prod = 1.0
                    s1 = 0.0
                    s2 = 0.0
                    for i in range(n):
                        d = (jph[ln, i] - jj) + j0[ln, i]
                        prod *= d
                        w = 1.0 / d
                        s1 += w
                        s2 += w * w
                    if prod > 1e-300 and prod < 1e300:
                        s = vt * (math.log(prod) - slnj0[ln])
                    else:
                        s = vt * _log_string_c(jph[ln], j0[ln], lnj0[ln], slnj0[ln], jj)
                    s1 *= vt
                    s2 *= vt
                    js1 = jj * s1
                    f = s / js1 - 1.0
                    fp = -(js1 * s1 + s * s1 + s * jj * s2) / (js1 * js1)
                    if f > 0:
                        lo[ln] = jj
                    else:
                        hi[ln] = jj
                    jn = jj - f / fp
                    if not (jn >= lo[ln] and jn <= hi[ln]):
                        jn = 0.5 * (lo[ln] + hi[ln])
                    step[ln] = abs(jn - jj)
                    jl[ln] = jn
            for ln in range(nl):
                k = k0 + ln
                if not lit[ln]:
                    p_out[h, k] = 0.0
                elif step[ln] <= lane_tol * jl[ln] or hi[ln] - lo[ln] <= tol[ln]:
                    jj = jl[ln]
                    p_out[h, k] = jj * vt * _log_string_c(jph[ln], j0[ln], lnj0[ln], slnj0[ln], jj)
                else:  # not converged in LANE_STEPS: finish with the one-row solver
                    p_out[h, k], _ = _row_c(jph[ln], j0[ln], lnj0[ln], vts, xtol)


_compiled: dict = {}


def _get(name):
    """Compile a kernel on first use (cached on disk by numba between runs)."""
    global numba, _row_c, _string_voltage_c, _log_string_c
    if not _compiled:
        import numba as _numba

        numba = _numba
        _log_string_c = numba.njit(cache=True)(_log_string)
        _string_voltage_c = numba.njit(cache=True)(_string_voltage)
        _row_c = numba.njit(cache=True)(_row)
        _compiled["rows"] = numba.njit(parallel=True, cache=True)(_rows_kernel)
        _compiled["table"] = numba.njit(parallel=True, cache=True)(_table_kernel)
    return _compiled[name]


_row_c = None
_string_voltage_c = None
_log_string_c = None


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
    _get("rows")(jph, j0, lnj0, vt, p, j, XTOL_REL)
    return p, j


def series_power_table(
    flux_m2_s: np.ndarray,
    ln_j0_unique: np.ndarray,
    vt_hours: np.ndarray,
    idx_top: np.ndarray,
    idx_gap: np.ndarray,
) -> np.ndarray:
    """Series maximum power of every (interval, stack), photocurrents formed in place.

    Parameters
    ----------
    flux_m2_s : numpy.ndarray
        Photon flux above each distinct gap energy, per interval [m^-2 s^-1],
        ``(H, U)``.
    ln_j0_unique : numpy.ndarray
        ln of the dark saturation current of each distinct gap per interval
        [ln(A m^-2)], ``(H, U)``.
    vt_hours : numpy.ndarray
        Thermal voltage of each interval [V], ``(H,)``.
    idx_top : numpy.ndarray
        For stack ``m`` and junction ``i``, the column of the smallest gap among
        junctions ``0..i`` (the absorption edge reached so far), ``(M, N)``.
    idx_gap : numpy.ndarray
        Column of each junction's own gap, ``(M, N)``.

    Returns
    -------
    numpy.ndarray
        ``p_mpp`` [W m^-2], ``(H, M)``.

    Notes
    -----
    Junction ``i`` absorbs ``q [F(e*_i) - F(e*_{i-1})]`` with ``e*_i`` the smallest gap
    above and including it: since ``F`` decreases with energy every hour, this equals
    the step-absorber rule of :func:`gapmatch.core.engine.step_photocurrents`.
    """
    from ..units import Q

    f = np.ascontiguousarray(flux_m2_s, dtype=float) * Q
    p = np.empty((f.shape[0], idx_gap.shape[0]))
    _get("table")(
        f,
        np.ascontiguousarray(ln_j0_unique, dtype=float),
        np.ascontiguousarray(vt_hours, dtype=float),
        np.ascontiguousarray(idx_top, dtype=np.intp),
        np.ascontiguousarray(idx_gap, dtype=np.intp),
        p,
        XTOL_REL,
    )
    return p
