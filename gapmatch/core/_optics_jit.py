"""numba-compiled optics of stacks of finite absorbers (imported lazily).

Do not import this module directly: :func:`.absorption.stack_optics` reaches it through
:func:`.kernels.optics_jit` when numba is present and not disabled. The kernel runs, one
stack at a time, the quadrature the numpy code of :func:`.absorption.stack_optics` runs on
whole ``(M, bins)`` arrays: the same nodes (the shared base grid merged with the stack's
own gap and edge nodes, which arrive sorted, so no per-stack sort of the base grid), the
same bin centroids, absorptances and exact Boltzmann emission of each bin. Two things
differ, both below rounding of the result:

* sums run in a different order (a few units in the last place);
* a junction's emission sum stops at the first bin whose upper tail bound
  ``sum_{bins above} a dG <= G(E_b)`` (``a <= 1``; ``G`` the Boltzmann emission above the
  bin's lower node, exact by telescoping) is below ``EMISSION_RTOL`` of the sum so far.

Buffers are allocated once per call (a work unit of stacks) and reused for every stack.

Absorber parameters come as per-junction arrays:

* ``kind``: 0 step (absorptance 1 above the gap), 1 power-law edge
  ``alpha_0 ((E - E_g) / 1 eV)^p`` with an Urbach tail (:class:`.absorption.DirectGapAbsorption`,
  :class:`.absorption.IndirectGapAbsorption`), 2 table (:class:`.absorption.TabulatedAbsorption`);
* ``alpha0`` [m^-1], ``power``, ``urbach`` [J], ``join`` [J] (tail join above the gap),
  ``a_join`` [m^-1] (absorption coefficient at the join);
* ``tab_e`` [J], ``tab_a`` [m^-1] (all tables, concatenated), ``tab_lo``, ``tab_hi``
  (each junction's slice);
* ``trap``: 0 single pass, 1 double pass, 2 Lambertian; ``nidx`` refractive index.

References
----------
.. [1] E. Yablonovitch, J. Opt. Soc. Am. 72, 899 (1982).
.. [2] T. Tiedje, E. Yablonovitch, G. D. Cody and B. G. Brooks, IEEE Trans. Electron
   Devices 31, 711 (1984).
.. [3] U. Rau, Phys. Rev. B 76, 085303 (2007).
.. [4] S. K. Lam, A. Pitrou and S. Seibert, "Numba: a LLVM-based Python JIT compiler",
   Proc. LLVM-HPC 2015.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from ..units import EV

_JIT = dict(cache=True, nogil=True, error_model="numpy")
_INLINE = dict(_JIT, inline="always")

#: a junction's emission sum stops once the bound on everything above is below this
#: fraction of the sum so far (far below the 1e-13 tolerance of the solvers)
EMISSION_RTOL = 1e-18
TAIL_DEPTH = 25.0  # as absorption.TAIL_DEPTH
_INV_EV = 1.0 / EV


@njit(**_INLINE)
def _alpha(kind, alpha0, power, urbach, join, a_join, tab_e, tab_a, lo, hi, e, gap):
    """Absorption coefficient [m^-1] at photon energy ``e`` (as the absorber classes)."""
    if kind == 2:
        if e < tab_e[lo]:
            return 0.0
        if e >= tab_e[hi - 1]:
            # np.interp returns the last value at and beyond the last node
            return tab_a[hi - 1]
        # binary search: tab_e[k] <= e < tab_e[k + 1]
        a = lo
        b = hi - 1
        while b - a > 1:
            c = (a + b) // 2
            if tab_e[c] <= e:
                a = c
            else:
                b = c
        t = (e - tab_e[a]) / (tab_e[a + 1] - tab_e[a])
        return tab_a[a] + t * (tab_a[a + 1] - tab_a[a])
    de = e - gap
    x = max(de, 0.0) * _INV_EV
    edge = alpha0 * (math.sqrt(x) if power == 0.5 else x * x)
    if urbach <= 0.0:
        return edge
    if de < join:
        u = min(max((de - join) / urbach, -TAIL_DEPTH), 0.0)
        return a_join * math.exp(u) if u > -TAIL_DEPTH else 0.0
    return edge


@njit(**_INLINE)
def _absorptance(ad, trap, n2):
    """Absorptance of a slab of optical thickness ``ad`` (as absorption.absorptance)."""
    if trap == 0:
        return -math.expm1(-ad)
    if trap == 1:
        return -math.expm1(-2.0 * ad)
    x = math.exp(-4.0 * ad)
    return -math.expm1(-4.0 * ad) / (1.0 - (1.0 - 1.0 / n2) * x)


@njit(**_JIT)
def stack_optics(
    base,
    f_base,
    p_base,
    extra,
    f_extra,
    p_extra,
    gaps,
    kt,
    thick,
    floors,
    kind,
    alpha0,
    power,
    urbach,
    join,
    a_join,
    tab_e,
    tab_a,
    tab_lo,
    tab_hi,
    trap,
    nidx,
    total_power,
    j0_prefactor,
    phi_abs,
    p_abs,
    j0,
    trans_below,
    trans_above,
):
    """Fill ``phi_abs``, ``p_abs``, ``j0`` (``(M, N)``; step junctions' ``j0`` is left to
    the caller), ``trans_below`` and ``trans_above`` (``(M,)``).

    ``base``, ``f_base``, ``p_base``: the shared ascending nodes [J] and the photon flux
    [m^-2 s^-1] and power [W m^-2] above them; ``extra``, ``f_extra``, ``p_extra``: each
    stack's own nodes, ascending per row, with theirs. ``kt`` [J], ``thick`` [m] and
    ``floors`` [J] are ``(M, N)``; ``j0_prefactor`` is ``q g`` of the generalised Planck
    law [A m^-2 J^-3].
    """
    m, n = gaps.shape
    nb = base.size
    nx = extra.shape[1]
    L = nb + nx
    edges = np.empty(L)
    fe = np.empty(L)
    pe = np.empty(L)
    mids = np.empty(L)
    dphi = np.empty(L)
    dpow = np.empty(L)
    e_sun = np.empty(L)
    lo_c = np.empty(L)
    hi_c = np.empty(L)
    trans = np.empty(L)
    t2 = np.empty(L)
    t3 = np.empty(L)
    dg = np.empty(L)
    e_em = np.empty(L)
    # emission tables are valid where their stamp is the current one (no clearing)
    node_stamp = np.zeros(L, dtype=np.int64)
    bin_stamp = np.zeros(L, dtype=np.int64)
    stamp = 0
    for s in range(m):
        # merge the shared nodes with the stack's (stable: a shared node first on a tie)
        ib = 0
        ix = 0
        for q in range(L):
            if ix >= nx or (ib < nb and base[ib] <= extra[s, ix]):
                edges[q] = base[ib]
                fe[q] = f_base[ib]
                pe[q] = p_base[ib]
                ib += 1
            else:
                edges[q] = extra[s, ix]
                fe[q] = f_extra[s, ix]
                pe[q] = p_extra[s, ix]
                ix += 1
        # bins [edges[q], edges[q + 1]) and the open bin above the top node
        for q in range(L):
            if q < L - 1:
                mids[q] = 0.5 * (edges[q] + edges[q + 1])
                dphi[q] = fe[q] - fe[q + 1]
                dpow[q] = pe[q] - pe[q + 1]
                width = edges[q + 1] - edges[q]
                lo_c[q] = edges[q] + 0.05 * width
                hi_c[q] = edges[q] + 0.95 * width
            else:
                mids[q] = edges[q]
                dphi[q] = fe[q]
                dpow[q] = pe[q]
                lo_c[q] = edges[q] + 0.0
                hi_c[q] = math.inf
            es = dpow[q] / dphi[q] if dphi[q] > 0 else mids[q]
            e_sun[q] = min(max(es, lo_c[q]), hi_c[q])
            trans[q] = 1.0
        kt_cached = -1.0
        for i in range(n):
            g = gaps[s, i]
            k_i = kind[i]
            # first bin that can absorb: its upper node lies above the absorption floor
            q0 = 0
            fl = floors[s, i]
            while q0 < L - 1 and edges[q0 + 1] <= fl:
                q0 += 1
            if k_i == 0:
                phi = 0.0
                pw = 0.0
                for q in range(q0, L):
                    if mids[q] > g:
                        ab = trans[q]
                        phi += ab * dphi[q]
                        pw += ab * dpow[q]
                        trans[q] = 0.0
                phi_abs[s, i] = phi
                p_abs[s, i] = pw
                continue
            a0 = alpha0[i]
            pw_ = power[i]
            eu = urbach[i]
            jn = join[i]
            aj = a_join[i]
            lo = tab_lo[i]
            hi = tab_hi[i]
            d = thick[s, i]
            tr = trap[i]
            n2 = nidx[i] * nidx[i]
            kti = kt[s, i]
            if kti != kt_cached:  # emission tables of another temperature: start afresh
                kt_cached = kti
                stamp += 1
            # emission: exact Boltzmann emission of each bin, absorptance at its centroid;
            # tables filled only for the bins a junction reaches, shared with the next
            # junction of the same temperature
            acc = 0.0
            for q in range(q0, L):
                if bin_stamp[q] != stamp:
                    for r in (q, q + 1):
                        if r < L and node_stamp[r] != stamp:
                            x = edges[r] / kti
                            ex = math.exp(-x)
                            t2[r] = ex * (x * x + 2.0 * x + 2.0)
                            t3[r] = ex * (x * (x * x + 3.0 * x + 6.0) + 6.0)
                            node_stamp[r] = stamp
                    if q < L - 1:
                        dg[q] = t2[q] - t2[q + 1]
                        d3 = t3[q] - t3[q + 1]
                    else:
                        dg[q] = t2[q]
                        d3 = t3[q]
                    ee = kti * d3 / dg[q] if dg[q] > 0 else mids[q]
                    e_em[q] = min(max(ee, lo_c[q]), hi_c[q])
                    bin_stamp[q] = stamp
                if acc > 0.0 and t2[q] <= EMISSION_RTOL * acc:
                    break
                if dg[q] > 0.0:
                    al = _alpha(k_i, a0, pw_, eu, jn, aj, tab_e, tab_a, lo, hi, e_em[q], g)
                    acc += _absorptance(al * d, tr, n2) * dg[q]
            j0[s, i] = j0_prefactor * kti * kti * kti * acc
            # incident light
            phi = 0.0
            pw = 0.0
            for q in range(q0, L):
                al = _alpha(k_i, a0, pw_, eu, jn, aj, tab_e, tab_a, lo, hi, e_sun[q], g)
                ab = _absorptance(al * d, tr, n2) * trans[q]
                phi += ab * dphi[q]
                pw += ab * dpow[q]
                trans[q] = trans[q] - ab
            phi_abs[s, i] = phi
            p_abs[s, i] = pw
        e_min = gaps[s, 0]
        for i in range(1, n):
            e_min = min(e_min, gaps[s, i])
        below = total_power - pe[0]  # [0, E_0): not absorbed
        above = 0.0
        for q in range(L):
            tp = trans[q] * dpow[q]
            if mids[q] < e_min:
                below += tp
            else:
                above += tp
        trans_below[s] = below
        trans_above[s] = above
