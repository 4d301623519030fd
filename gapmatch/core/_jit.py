"""numba-compiled per-stack kernels of the ideal step-absorber engine (imported lazily).

Do not import this module directly: :mod:`.kernels` imports it on first use, when numba is
present and not disabled. Each kernel loops over stacks and, inside, runs exactly the
iteration the numpy solvers of :mod:`.connections` run on whole arrays (same start
points, same safeguards, same tolerances), so the two agree to rounding. A stack leaves
its iteration as soon as it has converged, so no stack depends on another: results do
not depend on how a batch is split between threads.

Diode parameters come as ``(M, N)`` arrays, one tuple per model:

* Boltzmann (``model = 0``): ``a = J0`` [A m^-2]; ``b``, ``c`` unused;
* Bose-Einstein (``model = 1``): ``a = E_g / kT``, ``b`` the prefactor ``q g F (kT)^3 / ERE``
  [A m^-2], ``c = J_rad(0)`` [A m^-2];

plus ``jph`` [A m^-2], ``vt = kT/q`` [V], ``j0b`` (the Boltzmann saturation current of the
same junction, used for start points) and ``vup`` (largest voltage evaluated [V]).

References
----------
.. [1] W. Shockley and H. J. Queisser, J. Appl. Phys. 32, 510 (1961).
.. [2] P. Wurfel, J. Phys. C 15, 3967 (1982) (generalised Planck law).
.. [3] NIST Digital Library of Mathematical Functions, eq. 25.12.12 (expansion of
   ``Li_s(e^mu)`` about ``mu = 0``).
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit
from scipy import special

_JIT = dict(cache=True, nogil=True, error_model="numpy")
# small helpers called in the innermost loops: inlined by numba (saves the per-call
# handling of their array arguments, which costs more than their arithmetic)
_INLINE = dict(_JIT, inline="always")

BOLTZMANN = 0
BOSE_EINSTEIN = 1

XTOL_REL = 1e-13  # as solvers.XTOL_REL
_EXPANSION_TERMS = 40  # as planck._EXPANSION_TERMS


def _expansion_coefficients(s: int) -> np.ndarray:
    """``zeta(s - k) / k!`` for k = 0..39, with the logarithmic term k = s - 1 set to 0."""
    c = np.zeros(_EXPANSION_TERMS)
    for k in range(_EXPANSION_TERMS):
        if k != s - 1:
            c[k] = float(special.zeta(float(s - k))) / math.factorial(k)
    return c


_INV_N = np.array([0.0] + [1.0 / n for n in range(1, 46)])  # 1/n of the series terms
_C2 = _expansion_coefficients(2)
_C3 = _expansion_coefficients(3)


@njit(**_JIT)
def _poly(c, mu):
    acc = 0.0
    for k in range(c.size - 1, -1, -1):
        acc = acc * mu + c[k]
    return acc


@njit(**_JIT)
def li123(d):
    """``Li_1, Li_2, Li_3`` of ``exp(-d)`` for ``d > 0``, and ``1 / expm1(d)``.

    For ``d >= 1`` one exponential ``z = exp(-d)``: the direct series of all three with
    as many terms as ``z^n`` needs to fall below double precision (at most 45, as the
    numpy path), and ``1 / expm1(d) = z / (1 - z)`` (no cancellation there). Below, the
    expansion about ``d = 0`` (DLMF 25.12.12), ``Li_1 = log1p(1 / expm1(d))``. The numpy
    path takes ``Li_1 = -log1p(-z)``; the two agree to rounding.
    """
    if d >= 1.0:
        z = math.exp(-d)
        n_terms = min(45, int(37.2 / d) + 1)
        a1 = 0.0
        a2 = 0.0
        a3 = 0.0
        zn = 1.0
        for n in range(1, n_terms + 1):
            zn *= z
            r = _INV_N[n]  # multiplications: a chain of divisions costs ~40 cycles a term
            t = zn * r
            a1 += t
            t = t * r
            a2 += t
            a3 += t * r
        return a1, a2, a3, z / (1.0 - z)
    f = 1.0 / math.expm1(d)
    li1 = math.log1p(f)
    mu = -d
    lg = math.log(d)
    li2 = _poly(_C2, mu) + mu * (1.0 - lg)
    li3 = _poly(_C3, mu) + 0.5 * mu * mu * (1.5 - lg)
    return li1, li2, li3, f


@njit(**_JIT)
def _omega_large(big_l):
    if big_l < 1.0:
        big_l = 1.0
    y = big_l - math.log(big_l)
    if y < 0.5:
        y = 0.5
    for _ in range(2):
        y = y - (y + math.log(y) - big_l) / (1.0 + 1.0 / y)
    return y


@njit(**_JIT)
def wright_omega(y):
    """Wright omega ``w + ln w = y`` to full precision: Fritsch's fourth-order iteration
    from the asymptotic start (two steps reach double precision for ``y >= 1``)."""
    if y > 1.0:
        ly = math.log(y)
        w = y - ly + ly / y
    else:
        w = math.exp(y - 1.0)
    for _ in range(8):
        z = y - w - math.log(w)
        w1 = 1.0 + w
        q = 2.0 * w1 * (w1 + (2.0 / 3.0) * z)
        eps = z / w1 * (q - z) / (q - 2.0 * z)
        w = w * (1.0 + eps)
        if abs(eps) <= 2e-16:
            break
    return w


# ---------------------------------------------------------------------------------------
# one junction: current and its voltage derivatives, voltage at a current
# ---------------------------------------------------------------------------------------
@njit(**_INLINE)
def _iv(model, jph, vt, a, b, c, v):
    """``(J, dJ/dV, d2J/dV2)`` of one junction at voltage ``v``."""
    if model == BOLTZMANN:
        u = v / vt
        e = math.exp(u)
        em1 = e - 1.0 if u > 0.5 else math.expm1(u)  # no cancellation above u = 0.5
        di = -a / vt * e
        return jph - a * em1, di, di / vt
    return _iv_bose(jph, vt, a, b, c, v)


@njit(**_JIT)
def _iv_bose(jph, vt, x, b, c, v):
    """:func:`_iv` for the Bose-Einstein model (kept out of line: the Boltzmann branch
    stays small enough to be inlined into the solvers)."""
    d = x - v / vt
    li1, li2, li3, f = li123(d)
    t2 = x * x * li1 + 2.0 * x * li2 + 2.0 * li3
    t1 = x * li1 + li2
    di = -b / vt * (x * x * f + 2.0 * t1)
    # e^d f^2 = f (1 + f), as (em1 + 1) / em1^2
    d2i = -b / (vt * vt) * (x * x * f * (1.0 + f) + 2.0 * x * f + 2.0 * li1)
    return jph - (b * t2 - c), di, d2i


@njit(**_JIT)
def _voltage(model, jph, vt, a, b, c, j0b, vup, j, v0):
    """Voltage [V] at current ``j``; Bose-Einstein by monotone Newton iteration from
    ``v0`` (``NaN``: from the Boltzmann estimate, which is never below the root)."""
    if model == BOLTZMANN:
        return vt * (math.log(jph - j + a) - math.log(a))
    target = jph - j
    if math.isnan(v0):
        v = vt * math.log1p(target / j0b)
    else:
        v = v0
    if v > vup:
        v = vup
    x = a
    for _ in range(100):
        d = x - v / vt
        li1, li2, li3, f = li123(d)
        dark = b * (x * x * li1 + 2.0 * x * li2 + 2.0 * li3) - c
        ddark = b / vt * (x * x * f + 2.0 * (x * li1 + li2))
        step = (dark - target) / ddark
        if not math.isfinite(step):
            step = 0.0
        v = v - step
        if v > vup:
            v = vup
        # stop when the step is below the tolerance, or when the next step would be:
        # Newton's error after a step is about step^2 |f''/f'| / 2 with |f''/f'| below
        # about 1 / (vt min(d, 1)) for this dark current, here < 5e-16 vt
        if abs(step) <= 1e-14 * max(abs(v), vt) or abs(step) <= 3e-8 * vt * math.sqrt(min(d, 1.0)):
            break
    return v


@njit(**_JIT)
def _voc(model, jph, vt, a, b, c, j0b, vup):
    if model == BOLTZMANN:
        return vt * math.log1p(jph / a)
    return _voltage(model, jph, vt, a, b, c, j0b, vup, 0.0, math.nan)


@njit(**_INLINE)
def _newton_step(x, g, h, lo, hi, scale):
    """One step of :func:`.solvers.maximise_concave` on a scalar: tighten the bracket
    ``[lo, hi]`` by the sign of the derivative ``g``, take the Newton step ``-g / h``
    (bisect where it would leave the bracket), and say whether the iteration is done
    (step below ``XTOL_REL * scale`` plus four units in the last place, ``g == 0`` or
    the bracket that narrow). Returns ``(x, lo, hi, done)``."""
    if g > 0:
        lo = x
    else:
        hi = x
    xn = x - g / h
    if not (xn >= lo and xn <= hi):
        xn = 0.5 * (lo + hi)
    tol = XTOL_REL * scale + 4.0 * np.spacing(abs(xn))
    return xn, lo, hi, abs(xn - x) <= tol or g == 0 or hi - lo <= tol


@njit(**_JIT)
def _junction_mpp(model, jph, vt, a, b, c, j0b, vup):
    """Maximum power point ``(v, j)`` of one junction alone."""
    if model == BOLTZMANN:
        w = wright_omega(1.0 + math.log1p(jph / a))
        v = vt * (w - 1.0)
        return v, jph - a * math.expm1(v / vt)
    voc = _voc(model, jph, vt, a, b, c, j0b, vup)
    lo = 0.0
    hi = voc
    scale = max(hi - lo, 1e-300)
    x = min(max(0.9 * voc, lo), hi)
    for _ in range(200):
        cur, di, d2i = _iv(model, jph, vt, a, b, c, x)
        g = cur + x * di
        h = 2.0 * di + x * d2i
        x, lo, hi, done = _newton_step(x, g, h, lo, hi, scale)
        if done:
            break
    cur, _di, _d2 = _iv(model, jph, vt, a, b, c, x)
    return x, cur


# ---------------------------------------------------------------------------------------
# kernels over a batch
# ---------------------------------------------------------------------------------------
@njit(**_JIT)
def independent(model, jph, vt, a, b, c, j0b, vup, v_out, j_out):
    """Each junction at its own maximum power point (fills ``v_out``, ``j_out``)."""
    m, n = jph.shape
    for i in range(m):
        for k in range(n):
            v, j = _junction_mpp(
                model, jph[i, k], vt[i, k], a[i, k], b[i, k], c[i, k], j0b[i, k], vup[i, k]
            )
            v_out[i, k] = v
            j_out[i, k] = j


@njit(**_JIT)
def open_circuit(model, jph, vt, a, b, c, j0b, vup, voc):
    """Each junction's open-circuit voltage [V] (fills ``voc``)."""
    m, n = jph.shape
    for i in range(m):
        for k in range(n):
            voc[i, k] = _voc(
                model, jph[i, k], vt[i, k], a[i, k], b[i, k], c[i, k], j0b[i, k], vup[i, k]
            )


@njit(**_JIT)
def series(model, jph, vt, a, b, c, j0b, vup, xtol_rel, j_out, vj, jsc, voc):
    """Series strings at maximum power: fills the current ``j_out`` (M,), junction
    voltages ``vj`` (M, N), ``jsc`` (M,) and the junctions' open-circuit voltages
    ``voc`` (M, N). The iteration is that of :func:`.connections.solve_series`."""
    m, n = jph.shape
    vw = np.empty(n)  # warm start of the Bose-Einstein inversions
    dw = np.empty(n)  # dJ/dV there
    for i in range(m):
        lim = 0
        jmin = jph[i, 0]
        for k in range(1, n):
            if jph[i, k] < jmin:
                jmin = jph[i, k]
                lim = k
        for k in range(n):
            voc[i, k] = _voc(
                model, jph[i, k], vt[i, k], a[i, k], b[i, k], c[i, k], j0b[i, k], vup[i, k]
            )
        if jmin > 0:
            # start point: exact when only the limiting junction's voltage varies
            v_other = 0.0
            for k in range(n):
                v_other += vt[i, k] * (math.log(jph[i, k] - jmin + j0b[i, k]) - math.log(j0b[i, k]))
            j0l = j0b[i, lim]
            big_l = 1.0 + math.log1p(jmin / j0l) + v_other / vt[i, lim]
            y = _omega_large(big_l)
            j = jmin + j0l - (jmin + j0l) / y
            hi = jmin
            j = min(max(j, 0.0), hi)
            if not math.isfinite(j):
                j = 0.5 * hi
            lo = 0.0
            tol = xtol_rel * hi
            for k in range(n):
                vw[k] = math.nan
            jprev = math.nan
            for _ in range(200):
                s = 0.0
                s1 = 0.0
                s2 = 0.0
                if model == BOLTZMANN:
                    for k in range(n):
                        ak = jph[i, k] + a[i, k] - j
                        s += vt[i, k] * (math.log(ak) - math.log(a[i, k]))
                        w = vt[i, k] / ak
                        s1 += w
                        s2 += w / ak
                else:
                    for k in range(n):
                        v0 = vw[k]
                        if not math.isnan(v0):  # first-order predictor from the last step
                            v0 = v0 + (j - jprev) / dw[k]
                            if not math.isfinite(v0):
                                v0 = math.nan
                        vk = _voltage(
                            model,
                            jph[i, k],
                            vt[i, k],
                            a[i, k],
                            b[i, k],
                            c[i, k],
                            j0b[i, k],
                            vup[i, k],
                            j,
                            v0,
                        )
                        vw[k] = vk
                        _c1, d1, d2 = _iv(model, jph[i, k], vt[i, k], a[i, k], b[i, k], c[i, k], vk)
                        dw[k] = d1
                        s += vk
                        s1 += -1.0 / d1
                        s2 += d2 / (d1 * d1 * d1)
                    jprev = j
                js1 = j * s1
                f = s / js1 - 1.0
                fp = -(j * s1 * s1 + s * s1 + s * j * s2) / (js1 * js1)
                if f > 0:
                    lo = j
                else:
                    hi = j
                jn = j - f / fp
                if not (jn >= lo and jn <= hi):
                    jn = 0.5 * (lo + hi)
                done = abs(jn - j) <= tol or hi - lo <= tol
                j = jn
                if done:
                    break
            j_out[i] = j
            for k in range(n):
                vj[i, k] = _voltage(
                    model,
                    jph[i, k],
                    vt[i, k],
                    a[i, k],
                    b[i, k],
                    c[i, k],
                    j0b[i, k],
                    vup[i, k],
                    j,
                    vw[k] if model != BOLTZMANN else math.nan,
                )
        else:
            j_out[i] = 0.0
            for k in range(n):
                vj[i, k] = voc[i, k]
        # short-circuit current: the limiting junction at minus the others' voltage
        others = 0.0
        for k in range(n):
            if k != lim:
                others += _voltage(
                    model,
                    jph[i, k],
                    vt[i, k],
                    a[i, k],
                    b[i, k],
                    c[i, k],
                    j0b[i, k],
                    vup[i, k],
                    jmin,
                    math.nan,
                )
        cur, _di, _d2 = _iv(
            model, jph[i, lim], vt[i, lim], a[i, lim], b[i, lim], c[i, lim], -others
        )
        jsc[i] = cur


@njit(**_INLINE)
def _vm_eval_boltzmann(jph, j0, i, w, v, gsat, mode):
    """:func:`_vm_eval` for Boltzmann diodes: one exponential and no division per
    junction, with ``w = (1/r, 1/(r V_t), J0/V_t, 1/V_t)`` per junction (from
    :func:`_vm_one`)."""
    n = w.shape[1]
    g = 0.0
    h = 0.0
    jt = 0.0
    for k in range(n):
        ir = w[0, k]
        u = v * w[1, k]
        e = math.exp(u)
        di = -w[2, k] * e
        if mode == 0:
            em1 = e - 1.0 if u > 0.5 else math.expm1(u)
            jt += (jph[i, k] - j0[i, k] * em1) * ir
            h += di * ir * ir
        else:
            vk = v * ir
            cur = jph[i, k] - j0[i, k] * (e - 1.0)
            g += (cur + vk * di) * ir
            h += (2.0 * di + vk * di * w[3, k]) * ir * ir
    if mode == 0:
        return math.log(gsat) - math.log(gsat - jt), h / (gsat - jt)
    return g, h


@njit(**_INLINE)
def _vm_eval(model, jph, vt, a, b, c, i, r, w, v, gsat, mode):
    """Voltage matching at string voltage ``v``: ``mode 0`` the open-circuit balance
    ``ln G - ln(G - J)`` and its derivative, ``mode 1`` dP/dV and d2P/dV2."""
    if model == BOLTZMANN:
        return _vm_eval_boltzmann(jph, a, i, w, v, gsat, mode)
    n = r.size
    g = 0.0
    h = 0.0
    jt = 0.0
    for k in range(n):
        rk = r[k]
        vk = v / rk
        cur, di, d2i = _iv(model, jph[i, k], vt[i, k], a[i, k], b[i, k], c[i, k], vk)
        if mode == 0:
            jt += cur / rk
            h += di / (rk * rk)
        else:
            g += (cur + vk * di) / rk
            h += (2.0 * di + vk * d2i) / (rk * rk)
    if mode == 0:
        return math.log(gsat) - math.log(gsat - jt), h / (gsat - jt)
    return g, h


@njit(**_INLINE)
def _vm_maximise(model, jph, vt, a, b, c, i, r, w, gsat, mode, lo, hi, x0):
    """Scalar :func:`.solvers.maximise_concave` on the voltage-matching functions."""
    scale = max(hi - lo, 1e-300)
    x = min(max(x0, lo), hi)
    for _ in range(200):
        g, h = _vm_eval(model, jph, vt, a, b, c, i, r, w, x, gsat, mode)
        x, lo, hi, done = _newton_step(x, g, h, lo, hi, scale)
        if done:
            break
    return x


@njit(**_INLINE)
def _vm_one(model, jph, vt, a, b, c, vup, vocj, vm, jm, i, r, w):
    """One stack, one ratio: ``(string voltage at maximum power, string V_oc)``; ``w`` is
    a ``(4, N)`` work array."""
    n = r.size
    vcap = math.inf
    hmax = -math.inf
    lo_oc = math.inf
    wsum = 0.0
    wv = 0.0
    gsat = 0.0
    for k in range(n):
        rk = r[k]
        vcap = min(vcap, rk * vup[i, k])
        hmax = max(hmax, rk * vocj[i, k])
        lo_oc = min(lo_oc, rk * vocj[i, k])
        pw = vm[i, k] * jm[i, k]
        wsum += pw
        wv += pw * rk * vm[i, k]
        jl = jph[i, k] + (a[i, k] if model == BOLTZMANN else c[i, k])
        gsat += jl / rk
        w[0, k] = 1.0 / rk
        w[1, k] = 1.0 / (rk * vt[i, k])
        w[2, k] = a[i, k] / vt[i, k]
        w[3, k] = 1.0 / vt[i, k]
    hi = min(hmax, vcap)
    x0 = wv / wsum if wsum > 0 else 0.0
    voc = _vm_maximise(model, jph, vt, a, b, c, i, r, w, gsat, 0, lo_oc, hi, hi)
    v = _vm_maximise(model, jph, vt, a, b, c, i, r, w, gsat, 1, 0.0, voc, min(max(x0, 0.0), voc))
    return v, voc


@njit(**_INLINE)
def _vm_power(model, jph, vt, a, b, c, i, r, v):
    p = 0.0
    for k in range(r.size):
        vk = v / r[k]
        cur, _di, _d2 = _iv(model, jph[i, k], vt[i, k], a[i, k], b[i, k], c[i, k], vk)
        p += vk * cur
    return p


@njit(**_JIT)
def voltage_matched(model, jph, vt, a, b, c, vup, vocj, vm, jm, ratio, v_out, voc_out):
    """Voltage-matched strings with a given ratio per stack ``ratio`` (M, N)."""
    m, n = jph.shape
    w = np.empty((4, n))
    for i in range(m):
        v, voc = _vm_one(model, jph, vt, a, b, c, vup, vocj, vm, jm, i, ratio[i], w)
        v_out[i] = v
        voc_out[i] = voc


@njit(**_JIT)
def best_ratio(model, jph, vt, a, b, c, vup, vocj, vm, jm, cand, prune, best_k, v_out, voc_out):
    """Voltage matching with, per stack, the best of the candidate ratios ``cand`` (K, N).

    With ``prune`` a candidate is solved only if an upper bound on its power reaches the
    best power found so far (within 1e-9 relative); see :func:`_vm_bounds_row`.
    Ties go to the first candidate, as ``numpy.argmax`` does.
    """
    m, n = jph.shape
    kc = cand.shape[0]
    ub = np.empty(kc)
    work = np.empty((4, n))
    w = np.empty((4, n))
    for i in range(m):
        if prune:
            _vm_bounds_row(model, jph, vt, a, b, c, vocj, vm, jm, i, cand, ub, work)
            first = 0
            for q in range(1, kc):
                if ub[q] > ub[first]:
                    first = q
        else:
            first = 0
        best_p = -math.inf
        bk = -1
        bv = 0.0
        bvoc = 0.0
        for t in range(kc):
            q = first if t == 0 else (t - 1 if t - 1 < first else t)
            if t > 0 and q == first:
                continue
            if prune and t > 0 and ub[q] < best_p * (1.0 - 1e-9):
                continue
            v, voc = _vm_one(model, jph, vt, a, b, c, vup, vocj, vm, jm, i, cand[q], w)
            p = _vm_power(model, jph, vt, a, b, c, i, cand[q], v)
            if p > best_p or (p == best_p and q < bk):
                best_p = p
                bk = q
                bv = v
                bvoc = voc
        if bk < 0:
            bk = 0
            bv, bvoc = _vm_one(model, jph, vt, a, b, c, vup, vocj, vm, jm, i, cand[0], w)
        best_k[i] = bk
        v_out[i] = bv
        voc_out[i] = bvoc


@njit(**_INLINE)
def _vm_bounds_row(model, jph, vt, a, b, c, vocj, vm, jm, i, cand, ub, work):
    """Upper bounds on the voltage-matched power of stack ``i`` for every candidate.

    Junction ``k``'s power ``p_k(v) = v J_k(v)`` is concave in ``v >= 0``, so each of its
    tangents bounds it from above: at ``v = 0`` (``v J_ph``), at the maximum power point
    (``p_max``) and at ``V_oc`` (``s (V_oc - v)``, ``s = -V_oc J'(V_oc)``). The bound on the
    string power ``sum_k p_k(V / r_k)`` is the largest sum of these piecewise-linear
    envelopes; as a concave piecewise-linear function of ``V`` its maximum lies at one of
    the envelopes' corners, which are the only voltages tried.
    """
    n = jph.shape[1]
    kc = cand.shape[0]
    pmax = work[0]
    slope = work[1]
    c1 = work[2]
    c2 = work[3]
    for k in range(n):
        pmax[k] = vm[i, k] * jm[i, k]
        voc = vocj[i, k]
        _cur, di, _d2 = _iv(model, jph[i, k], vt[i, k], a[i, k], b[i, k], c[i, k], voc)
        slope[k] = -voc * di
        c1[k] = pmax[k] / jph[i, k] if jph[i, k] > 0 else 0.0
        c2[k] = voc - pmax[k] / slope[k] if slope[k] > 0 else voc
    for q in range(kc):
        best = -math.inf
        for k in range(n):
            for corner in (c1[k], c2[k]):
                vs = cand[q, k] * corner
                s = pmax[k]  # junction k's own envelope at its own corner (c1 <= v_mpp <= c2)
                for kk in range(n):
                    if kk == k:
                        continue
                    vk = vs / cand[q, kk]
                    s += min(vk * jph[i, kk], pmax[kk], slope[kk] * (vocj[i, kk] - vk))
                if math.isnan(s):  # never prune on a NaN bound
                    s = math.inf
                if s > best:
                    best = s
        ub[q] = best


# ---------------------------------------------------------------------------------------
# independent connection with luminescent coupling (coupling.solve_independent_coupled)
# ---------------------------------------------------------------------------------------
@njit(**_INLINE)
def _mpp_with_price(jeff, j0, vt, r, price, x0):
    """Maximise ``J V(J) - r J^2 + price (J_eff - J)`` over ``J`` in ``[0, J_eff]`` (the
    safeguarded Newton iteration of :func:`.solvers.maximise_concave`)."""
    lnj0 = math.log(j0)
    lo = 0.0
    hi = max(jeff, 0.0)
    scale = max(hi - lo, 1e-300)
    x = min(max(x0, lo), hi)
    for _ in range(200):
        w = jeff + j0 - x
        g = vt * (math.log(w) - lnj0) - x * vt / w - 2.0 * r * x - price
        h = -2.0 * vt / w - x * vt / (w * w) - 2.0 * r
        x, lo, hi, done = _newton_step(x, g, h, lo, hi, scale)
        if done:
            break
    return x


@njit(**_JIT)
def independent_coupled(jph, j0, vt, k, r, tol_rel, max_sweeps, j_out, jeff_out):
    """Block coordinate sweeps of :func:`.coupling.solve_independent_coupled`, one stack
    at a time: each stack stops when no current of its own moved by more than
    ``tol_rel`` of its largest photocurrent (fills ``j_out``, ``jeff_out``)."""
    m, n = jph.shape
    j_old = np.empty(n)
    price = np.empty(n)
    for s in range(m):
        scale = jph[s, 0]
        coupled = False
        for i in range(n):
            price[i] = 0.0
            j_out[s, i] = 0.9 * jph[s, i]
            jeff_out[s, i] = jph[s, i]
            scale = max(scale, jph[s, i])
            if k[s, i] != 0.0:
                coupled = True
        scale = max(scale, 1e-300)
        for _ in range(max_sweeps):
            for i in range(n):
                j_old[i] = j_out[s, i]
            for i in range(n):
                if i:
                    jeff_out[s, i] = jph[s, i] + k[s, i - 1] * (
                        jeff_out[s, i - 1] - j_out[s, i - 1]
                    )
                else:
                    jeff_out[s, i] = jph[s, i] + 0.0
                je = jeff_out[s, i]
                x0 = min(max(j_out[s, i], 0.0), je)
                j_out[s, i] = _mpp_with_price(je, j0[s, i], vt[s, i], r[s, i], price[i], x0)
            mu = 0.0
            for i in range(n - 1, 0, -1):
                w = jeff_out[s, i] + j0[s, i] - j_out[s, i]
                mu = j_out[s, i] * vt[s, i] / w + k[s, i] * mu
                price[i - 1] = k[s, i - 1] * mu
            done = True
            for i in range(n):
                if not (abs(j_out[s, i] - j_old[i]) <= tol_rel * scale):
                    done = False
            if done or not coupled:
                break
