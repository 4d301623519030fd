"""numba kernels that run blocks of stacks side by side in SIMD lanes (imported lazily).

Do not import this module directly: :mod:`.kernels` loads it on first use. The per-stack
kernels of :mod:`._jit` call the C library's scalar ``log`` (about 4-5 ns a value here);
numpy's vector loops take about 1 ns. The kernels below instead work on blocks of
``BLOCK`` stacks: every step is a loop over the block with no calls and no branches
(selects only), which LLVM turns into AVX2/AVX-512 code, and the logarithm is computed
by :func:`_log_block`, the reduction and minimax polynomial of fdlibm's ``log`` written
in plain arithmetic on the block [1]_. Inside a block the iteration runs until every
stack in it has converged; a stack that has converged keeps its value (the update is
masked), so each stack follows exactly the iteration of the per-stack kernel and of the
numpy solver, and results do not depend on how a batch is split.

Arrays are ``(M, N)`` in Fortran order (each junction's column contiguous), as
:func:`.kernels.for_diodes` passes them.

References
----------
.. [1] Sun Microsystems, fdlibm 5.3, ``e_log.c`` (1993): ``log(x) = k ln 2 + log(1 + f)``
   with ``f`` reduced to ``[sqrt(2)/2 - 1, sqrt(2) - 1]`` and ``log(1 + f)`` from
   ``s = f / (2 + f)`` by a degree-14 minimax polynomial in ``s`` (error < 1 ulp).
.. [2] W. Shockley and H. J. Queisser, J. Appl. Phys. 32, 510 (1961) (the diode model).
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

# error_model="numpy": no division-by-zero checks, which would stop vectorisation;
# "contract" lets LLVM fuse multiply-adds (results change in the last bit only)
_JIT = dict(cache=True, nogil=True, error_model="numpy", boundscheck=False, fastmath={"contract"})
_INLINE = dict(_JIT, inline="always")
# kernels that must reproduce numpy to the last bit: no contraction
_EXACT = dict(cache=True, nogil=True, error_model="numpy", boundscheck=False)

#: stacks per block: every work array of a block stays in the L1 cache
BLOCK = 256

_LN2_HI = 6.93147180369123816490e-01  # fdlibm's split of ln 2
_LN2_LO = 1.90821492927058770002e-10
_SQRT2 = 1.4142135623730951
_TINY = 2.2250738585072014e-308  # smallest normal double
_TWO54 = 18014398509481984.0
_LG1 = 6.666666666666735130e-01  # fdlibm's minimax coefficients Lg1..Lg7
_LG2 = 3.999999999940941908e-01
_LG3 = 2.857142874366239149e-01
_LG4 = 2.222219843214978396e-01
_LG5 = 1.818357216161805012e-01
_LG6 = 1.531383769920937332e-01
_LG7 = 1.479819860511658591e-01


@njit(**_INLINE)
def _log_block(x, ti, tf, out, n):
    """``out[:n] = ln(x[:n])``, vectorisable, with numpy's results for 0, subnormal,
    negative, infinite and NaN inputs. ``ti`` is an int64 work array and ``tf`` its
    float64 view; ``x`` is left unchanged."""
    for i in range(n):
        v = x[i]
        tf[i] = v * _TWO54 if v < _TINY else v  # subnormals scaled into the normal range
    for i in range(n):
        b = ti[i]
        out[i] = np.float64(((b >> 52) & 0x7FF) - 1023)  # the binary exponent
        ti[i] = (b & 0x000FFFFFFFFFFFFF) | 0x3FF0000000000000  # the mantissa, in [1, 2)
    for i in range(n):
        v = x[i]
        m = tf[i]
        e = out[i] - 54.0 if v < _TINY else out[i]
        big = m > _SQRT2
        m = 0.5 * m if big else m
        e = e + 1.0 if big else e
        f = m - 1.0
        s = f / (2.0 + f)
        z = s * s
        w = z * z
        t1 = w * (_LG2 + w * (_LG4 + w * _LG6))
        t2 = z * (_LG1 + w * (_LG3 + w * (_LG5 + w * _LG7)))
        hfsq = 0.5 * f * f
        r = e * _LN2_HI - ((hfsq - (s * (hfsq + t1 + t2) + e * _LN2_LO)) - f)
        # special values as numpy: ln 0 = -inf, ln inf = inf, ln(<0) and ln NaN = NaN
        r = -np.inf if v == 0.0 else r
        r = np.inf if v == np.inf else r
        r = np.nan if not (v >= 0.0) else r
        out[i] = r


_INV_LN2 = 1.4426950408889634
_EXPM1_SMALL = 0.35  # |y| below which expm1 is summed directly
_EXPM1_TERMS = 17  # Taylor terms: |r| <= 0.7 here, and 0.7**18 / 18! < 3e-19
_INV_FACT = tuple(1.0 / math.factorial(k) for k in range(1, _EXPM1_TERMS + 1))


@njit(**_INLINE)
def _expm1_poly(y):
    """``expm1(y)`` by its Taylor series for ``|y| <= 0.35`` (Horner; rounding-limited)."""
    p = _INV_FACT[_EXPM1_TERMS - 1]
    for k in range(_EXPM1_TERMS - 2, -1, -1):
        p = _INV_FACT[k] + y * p
    return y * p


@njit(**_INLINE)
def _expm1_block(y, ti, tf, out, n):
    """``out[:n] = expm1(y[:n])``, vectorisable: the Taylor series for ``|y| <= 0.35``,
    otherwise ``exp(y) - 1`` with ``exp(y) = 2^k exp(r)``, ``k = round(y / ln 2)``,
    ``|r| <= ln 2 / 2`` (Cody-Waite reduction; ``|r| < 0.7`` where ``k`` is capped at
    1023 just below overflow) and ``exp(r) = 1 + expm1(r)`` by the same series.
    ``-1`` below ``y = -40`` (``e^-40`` is below half an ulp of 1), ``inf`` above
    709.78 and NaN for NaN, as numpy."""
    for i in range(n):
        v = y[i]
        v = -40.0 if v < -40.0 else v  # also keeps 2^k a normal number
        k = np.floor(v * _INV_LN2 + 0.5)
        k = 1023.0 if k > 1023.0 else k
        ti[i] = np.int64(k + 1023.0) << 52  # 2^k
        out[i] = k
    for i in range(n):
        v = y[i]
        k = out[i]
        r = (v - k * _LN2_HI) - k * _LN2_LO
        big = tf[i] * (1.0 + _expm1_poly(r)) - 1.0
        res = _expm1_poly(v) if abs(v) <= _EXPM1_SMALL else big
        res = -1.0 if v < -40.0 else res
        res = np.inf if v > 709.782712893384 else res
        res = v if v != v else res
        out[i] = res


def log_values(x: np.ndarray) -> np.ndarray:
    """Natural logarithm of a 1-d array by :func:`_log_block` (for tests)."""
    return _blockwise_values(0, x)


def expm1_values(y: np.ndarray) -> np.ndarray:
    """``expm1`` of a 1-d array by :func:`_expm1_block` (for tests)."""
    return _blockwise_values(1, y)


def _blockwise_values(which: int, x: np.ndarray) -> np.ndarray:
    x = np.array(x, dtype=float)
    out = np.empty_like(x)
    _blockwise(which, x, out)
    return out


@njit(**_JIT)
def _blockwise(which, x, out):
    """``out = f(x)`` block by block, ``f`` the block logarithm (``which = 0``) or the
    block ``expm1`` (``which = 1``)."""
    ti = np.empty(BLOCK, np.int64)
    tf = ti.view(np.float64)
    for s0 in range(0, x.size, BLOCK):
        nb = min(BLOCK, x.size - s0)
        if which == 0:
            _log_block(x[s0 : s0 + nb], ti, tf, out[s0 : s0 + nb], nb)
        else:
            _expm1_block(x[s0 : s0 + nb], ti, tf, out[s0 : s0 + nb], nb)


@njit(**_JIT)
def series_boltzmann(jph, vt, j0, xtol_rel, j_out, vj, jsc, voc):
    """Series strings of Boltzmann diodes at maximum power, block by block.

    The iteration of :func:`._jit.series_boltzmann` and :func:`.connections.solve_series`:
    Newton's method on ``f(J) = S / (J S1) - 1`` from the limiting junction's Wright-omega
    start point, bracketed in ``[0, J_min]``, bisection when a step leaves the bracket,
    stopped at ``xtol_rel * J_min``. Fills ``j_out`` (M,), ``vj`` (M, N), ``jsc`` (M,)
    and ``voc`` (M, N).
    """
    m, n = jph.shape
    a = np.empty(BLOCK)  # a logarithm's argument
    ti = np.empty(BLOCK, np.int64)
    tf = ti.view(np.float64)
    la = np.empty(BLOCK)  # its logarithm
    lnj0 = np.empty((n, BLOCK))  # ln J0 per junction, the block contiguous
    jmin = np.empty(BLOCK)
    lim = np.empty(BLOCK, np.int64)
    v_other = np.empty(BLOCK)
    v_lim = np.empty(BLOCK)
    j0l = np.empty(BLOCK)
    vtl = np.empty(BLOCK)
    jphl = np.empty(BLOCK)
    big_l = np.empty(BLOCK)
    y = np.empty(BLOCK)
    j = np.empty(BLOCK)
    lo = np.empty(BLOCK)
    hi = np.empty(BLOCK)
    tol = np.empty(BLOCK)
    s = np.empty(BLOCK)
    s1 = np.empty(BLOCK)
    s2 = np.empty(BLOCK)
    done = np.empty(BLOCK, np.bool_)
    for s0 in range(0, m, BLOCK):
        nb = min(BLOCK, m - s0)
        e0 = s0 + nb
        # (indexing the batch through slices of the block keeps the loops vectorised:
        # with ``x[s0 + i]`` numba's negative-index handling stops LLVM)
        # the limiting (smallest-photocurrent) junction
        jph_k = jph[s0:e0, 0]
        for i in range(nb):
            jmin[i] = jph_k[i]
            lim[i] = 0
        for k in range(1, n):
            jph_k = jph[s0:e0, k]
            for i in range(nb):
                x = jph_k[i]
                smaller = x < jmin[i]
                jmin[i] = x if smaller else jmin[i]
                lim[i] = k if smaller else lim[i]
        for i in range(nb):
            v_other[i] = 0.0
        for k in range(n):
            jph_k, j0_k, vt_k, voc_k = jph[s0:e0, k], j0[s0:e0, k], vt[s0:e0, k], voc[s0:e0, k]
            for i in range(nb):
                a[i] = j0_k[i]
            _log_block(a, ti, tf, la, nb)
            for i in range(nb):
                lnj0[k, i] = la[i]
                # V_oc = vt log1p(x) = vt (ln u - ((u - 1) - x) / u), u = 1 + x
                a[i] = 1.0 + jph_k[i] / j0_k[i]
            _log_block(a, ti, tf, la, nb)
            for i in range(nb):
                x = jph_k[i] / j0_k[i]
                u = a[i]
                voc_k[i] = vt_k[i] * (la[i] - ((u - 1.0) - x) / u)
                a[i] = jph_k[i] - jmin[i] + j0_k[i]
            _log_block(a, ti, tf, la, nb)
            for i in range(nb):
                vk = vt_k[i] * (la[i] - lnj0[k, i])
                v_other[i] += vk
                here = lim[i] == k
                v_lim[i] = vk if here else v_lim[i]
                j0l[i] = j0_k[i] if here else j0l[i]
                vtl[i] = vt_k[i] if here else vtl[i]
                jphl[i] = jph_k[i] if here else jphl[i]
        # start point: big_l = 1 + log1p(J_min / J0_lim) + V_other / vt_lim, then the
        # Wright omega of big_l from its asymptotic start and two Newton steps
        for i in range(nb):
            a[i] = 1.0 + jmin[i] / j0l[i]
        _log_block(a, ti, tf, la, nb)
        for i in range(nb):
            x = jmin[i] / j0l[i]
            u = a[i]
            bl = 1.0 + (la[i] - ((u - 1.0) - x) / u) + v_other[i] / vtl[i]
            bl = 1.0 if bl < 1.0 else bl  # as the per-stack kernel (NaN stays NaN)
            big_l[i] = bl
            a[i] = bl
        _log_block(a, ti, tf, la, nb)
        for i in range(nb):
            yy = big_l[i] - la[i]
            y[i] = 0.5 if yy < 0.5 else yy
        for _ in range(2):
            for i in range(nb):
                a[i] = y[i]
            _log_block(a, ti, tf, la, nb)
            for i in range(nb):
                yy = y[i]
                y[i] = yy - (yy + la[i] - big_l[i]) / (1.0 + 1.0 / yy)
        for i in range(nb):
            h = jmin[i]
            jj = h + j0l[i] - (h + j0l[i]) / y[i]
            jj = min(max(jj, 0.0), h)
            jj = jj if math.isfinite(jj) else 0.5 * h
            j[i] = jj
            hi[i] = h
            lo[i] = 0.0
            tol[i] = xtol_rel * h
            done[i] = not (h > 0)
        for _ in range(200):
            for i in range(nb):
                s[i] = 0.0
                s1[i] = 0.0
                s2[i] = 0.0
            for k in range(n):
                jph_k, j0_k, vt_k = jph[s0:e0, k], j0[s0:e0, k], vt[s0:e0, k]
                for i in range(nb):
                    a[i] = jph_k[i] + j0_k[i] - j[i]
                _log_block(a, ti, tf, la, nb)
                for i in range(nb):
                    ak = a[i]
                    v = vt_k[i]
                    s[i] += v * (la[i] - lnj0[k, i])
                    w = v / ak
                    s1[i] += w
                    s2[i] += w / ak
            n_done = 0
            for i in range(nb):
                jj = j[i]
                js1 = jj * s1[i]
                f = s[i] / js1 - 1.0
                fp = -(jj * s1[i] * s1[i] + s[i] * s1[i] + s[i] * jj * s2[i]) / (js1 * js1)
                pos = f > 0
                lo2 = jj if pos else lo[i]
                hi2 = hi[i] if pos else jj
                jn = jj - f / fp
                inside = (jn >= lo2) & (jn <= hi2)  # False for NaN too
                jn = jn if inside else 0.5 * (lo2 + hi2)
                conv = (abs(jn - jj) <= tol[i]) | (hi2 - lo2 <= tol[i])
                live = not done[i]
                j[i] = jn if live else jj
                lo[i] = lo2 if live else lo[i]
                hi[i] = hi2 if live else hi[i]
                done[i] = done[i] | conv
                n_done += 1 if done[i] else 0
            if n_done == nb:
                break
        j_b = j_out[s0:e0]
        for i in range(nb):
            j_b[i] = j[i] if jmin[i] > 0 else 0.0
        for k in range(n):
            jph_k, j0_k, vt_k = jph[s0:e0, k], j0[s0:e0, k], vt[s0:e0, k]
            voc_k, vj_k = voc[s0:e0, k], vj[s0:e0, k]
            for i in range(nb):
                a[i] = jph_k[i] - j_b[i] + j0_k[i]
            _log_block(a, ti, tf, la, nb)
            for i in range(nb):
                v = vt_k[i] * (la[i] - lnj0[k, i])
                vj_k[i] = v if jmin[i] > 0 else voc_k[i]
        # J_sc: the limiting junction at minus the others' voltage at J_min
        for i in range(nb):
            a[i] = -(v_other[i] - v_lim[i]) / vtl[i]
        _expm1_block(a, ti, tf, la, nb)
        jsc_b = jsc[s0:e0]
        for i in range(nb):
            jsc_b[i] = jphl[i] - j0l[i] * la[i]


@njit(**_EXACT)
def cumulative_above(e, wl, values, cum, inv_width, seg, passes, hc, out):
    """``out[i]``: the exact integral of the piecewise-linear interpolant of ``values``
    (per nm, on the ascending wavelengths ``wl`` [nm], running integral ``cum``) from
    the shortest wavelength up to ``hc / e[i]`` -- the photon flux or power above photon
    energy ``e[i]`` [J] of :class:`.spectra.TabulatedSpectrum`.

    The same arithmetic, in the same order, as the numpy code of
    ``TabulatedSpectrum._cumulative`` (bucket index ``seg`` of width ``1 / inv_width``
    nm, then ``passes`` steps of the segment walk), so the results are identical to the
    last bit; one pass per value instead of about fifteen array passes. A NaN energy
    gives NaN.
    """
    nw = wl.size
    wl0 = wl[0]
    wln = wl[nw - 1]
    for i in range(e.size):
        ee = e[i]
        ee = ee if ee > 1e-300 else 1e-300
        lam = hc / ee * 1e9
        lam = wl0 if lam < wl0 else lam
        lam = wln if lam > wln else lam
        if e[i] != e[i]:  # NaN in, NaN out (and no index from it)
            out[i] = np.nan
            continue
        k = seg[np.intp((lam - wl0) * inv_width)]
        for _ in range(passes):
            k1 = k + 1 if k + 1 < nw - 1 else nw - 1
            k = k + 1 if wl[k1] <= lam else k
        k = k if k < nw - 2 else nw - 2
        x = lam - wl[k]
        slope = (values[k + 1] - values[k]) / (wl[k + 1] - wl[k])
        out[i] = cum[k] + x * (values[k] + 0.5 * x * slope)
