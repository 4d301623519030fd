"""numba-compiled optics of stacks of finite absorbers (imported lazily).

Do not import this module directly: :func:`.absorption.stack_optics` reaches it through
:func:`.kernels.optics_jit` when numba is present and not disabled. The kernel runs, one
stack at a time, the quadrature the numpy code of :func:`.absorption.stack_optics` runs on
whole ``(M, bins)`` arrays: the same nodes (the shared base grid merged with the stack's
own gap and edge nodes, which arrive sorted, so no per-stack sort of the base grid), the
same bin centroids, absorptances and exact Boltzmann emission of each bin. Three things
differ, all below rounding of the result:

* sums run in a different order (a few units in the last place);
* an absorptance ``1 - e^-y`` is taken as ``1 - exp(-y)`` where ``y > 1/2`` (exact to
  two units in the last place there) and as ``-expm1(-y)`` below;
* a junction's emission sum stops at the first bin whose upper tail bound
  ``sum_{bins above} a dG <= G(E_b)`` (``a <= 1``; ``G`` the Boltzmann emission above the
  bin's lower node, exact by telescoping) is below ``EMISSION_RTOL`` of the sum so far.

The bins of the shared grid (centroids, flux and power, and their Boltzmann emission at
the temperature of the call's first absorbing junction) are computed once per call (a
work unit of stacks); a stack copies them and computes only the few bins its own nodes
split. Buffers are allocated once per call and reused for every stack. What remains per
stack is one absorption coefficient and one exponential per bin and absorbing junction
for the incident light, and the same for the bins that carry the junction's emission.

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
from .planck import NARROW_BIN_KT, NARROW_BIN_TERMS

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
    """Absorptance of a slab of optical thickness ``ad`` (as absorption.absorptance).

    ``1 - exp(-y)`` replaces ``-expm1(-y)`` where ``y > 1/2``: there ``exp(-y) < 0.61``
    and the difference is exact to 2 units in the last place, at half the cost of
    ``expm1`` (which stays where ``y`` is small and the difference would cancel)."""
    if trap == 0:
        y = ad
    elif trap == 1:
        y = 2.0 * ad
    else:
        y = 4.0 * ad
    if y > 0.5:
        x = math.exp(-y)
        a = 1.0 - x
    else:
        a = -math.expm1(-y)
        if trap != 2:
            return a
        x = math.exp(-y)
    if trap != 2:
        return a
    return a / (1.0 - (1.0 - 1.0 / n2) * x)


@njit(**_INLINE)
def _centroid_bounds(e0, e1, last):
    """Where a centroid of bin ``[e0, e1)`` is kept: 5 % to 95 % of its width (the open
    bin above the top node: ``[e0, inf)``)."""
    if last:
        return e0 + 0.0, math.inf
    w = e1 - e0
    return e0 + 0.05 * w, e0 + 0.95 * w


@njit(**_INLINE)
def _bin(e0, f0, p0, e1, f1, p1, last):
    """Bin ``[e0, e1)`` (``last``: the open bin above ``e0``) from its nodes' energies
    [J], photon flux and power above them: ``(mid, dphi, dpow, lo, hi, e_sun)`` with
    the centroid ``e_sun`` of the incident photons kept inside ``[lo, hi]``."""
    if last:
        mid = e0
        dphi = f0
        dpow = p0
    else:
        mid = 0.5 * (e0 + e1)
        dphi = f0 - f1
        dpow = p0 - p1
    lo, hi = _centroid_bounds(e0, e1, last)
    es = dpow / dphi if dphi > 0 else mid
    return mid, dphi, dpow, lo, hi, min(max(es, lo), hi)


@njit(**_INLINE)
def _node_emission(e, kt):
    """``e^-x``, ``e^-x (x^2 + 2x + 2)`` and ``e^-x (x^3 + 3x^2 + 6x + 6)`` at ``x = e / kT``:
    the Boltzmann photon number and energy emitted above ``e`` (units of ``q g (kT)^3``)."""
    x = e / kt
    ex = math.exp(-x)
    return ex, ex * (x * x + 2.0 * x + 2.0), ex * (x * (x * x + 3.0 * x + 6.0) + 6.0)


@njit(**_INLINE)
def _bin_emission(ea, eb, exa, t2a, t3a, t2b, t3b, kt, mid, lo, hi, last):
    """Emission ``dG`` of the bin ``[ea, eb]`` and its emission centroid kept inside
    ``[lo, hi]``; narrow bins by the difference form of
    :func:`.planck.boltzmann_bin_emission`, which does not cancel."""
    if last:
        dg = t2a
        d3 = t3a
    else:
        h = (eb - ea) / kt
        if h < NARROW_BIN_KT:
            xa = ea / kt
            xb = eb / kt
            em = 1.0
            for k in range(NARROW_BIN_TERMS, 1, -1):
                em = 1.0 - h / k * em
            em = h * em
            dg = exa * (em * (xb * xb + 2.0 * xb + 2.0) - h * (xa + xb + 2.0))
            d3p = xa * xa + xa * xb + xb * xb + 3.0 * (xa + xb) + 6.0
            d3 = exa * (em * (xb * (xb * xb + 3.0 * xb + 6.0) + 6.0) - h * d3p)
        else:
            dg = t2a - t2b
            d3 = t3a - t3b
    ee = kt * d3 / dg if dg > 0 else mid
    return dg, min(max(ee, lo), hi)


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

    The bins of the shared grid, and their emission at the first absorbing junction's
    temperature of the first stack, are computed once per call; a stack copies them and
    computes only the bins its own nodes split.
    """
    m, n = gaps.shape
    nb = base.size
    nx = extra.shape[1]
    L = nb + nx
    # --- shared bins, once per call
    b_mid = np.empty(nb)
    b_dphi = np.empty(nb)
    b_dpow = np.empty(nb)
    b_lo = np.empty(nb)
    b_hi = np.empty(nb)
    b_sun = np.empty(nb)
    for b in range(nb):
        last = b == nb - 1
        b1 = b if last else b + 1
        r = _bin(base[b], f_base[b], p_base[b], base[b1], f_base[b1], p_base[b1], last)
        b_mid[b], b_dphi[b], b_dpow[b], b_lo[b], b_hi[b], b_sun[b] = r
    kt_ref = -1.0
    for i in range(n):
        if kind[i] != 0:
            kt_ref = kt[0, i]
            break
    b_ex = np.empty(nb)
    b_t2 = np.empty(nb)
    b_t3 = np.empty(nb)
    b_dg = np.empty(nb)
    b_em = np.empty(nb)
    if kt_ref > 0:
        for b in range(nb):
            b_ex[b], b_t2[b], b_t3[b] = _node_emission(base[b], kt_ref)
        for b in range(nb):
            last = b == nb - 1
            b1 = b if last else b + 1
            b_dg[b], b_em[b] = _bin_emission(
                base[b],
                base[b1],
                b_ex[b],
                b_t2[b],
                b_t3[b],
                b_t2[b1],
                b_t3[b1],
                kt_ref,
                b_mid[b],
                b_lo[b],
                b_hi[b],
                last,
            )
    # --- per-stack buffers, reused
    edges = np.empty(L)
    fe = np.empty(L)
    pe = np.empty(L)
    mids = np.empty(L)
    dphi = np.empty(L)
    dpow = np.empty(L)
    e_sun = np.empty(L)
    trans = np.empty(L)
    ex = np.empty(L)
    t2 = np.empty(L)
    t3 = np.empty(L)
    dg = np.empty(L)
    e_em = np.empty(L)
    # emission tables are valid where their stamp is the current one (no clearing)
    node_stamp = np.zeros(L, dtype=np.int64)
    bin_stamp = np.zeros(L, dtype=np.int64)
    stamp = 0
    for s in range(m):
        stamp += 1
        use_ref = False
        for i in range(n):
            if kind[i] != 0 and kt[s, i] == kt_ref:
                use_ref = True
        # merge the shared nodes with the stack's (stable: a shared node first on a tie);
        # q0_b[b] below is where shared node b landed
        ib = 0
        ix = 0
        for q in range(L):
            if ix >= nx or (ib < nb and base[ib] <= extra[s, ix]):
                edges[q] = base[ib]
                fe[q] = f_base[ib]
                pe[q] = p_base[ib]
                # a shared bin no node of the stack splits: copy it
                whole = ib == nb - 1 and ix >= nx
                if ib < nb - 1:
                    whole = ix >= nx or extra[s, ix] >= base[ib + 1]
                if whole:
                    mids[q] = b_mid[ib]
                    dphi[q] = b_dphi[ib]
                    dpow[q] = b_dpow[ib]
                    e_sun[q] = b_sun[ib]
                    if use_ref:
                        ex[q] = b_ex[ib]
                        t2[q] = b_t2[ib]
                        t3[q] = b_t3[ib]
                        dg[q] = b_dg[ib]
                        e_em[q] = b_em[ib]
                        node_stamp[q] = stamp
                        bin_stamp[q] = stamp
                else:
                    mids[q] = -1.0  # split: computed below
                    if use_ref:
                        ex[q] = b_ex[ib]
                        t2[q] = b_t2[ib]
                        t3[q] = b_t3[ib]
                        node_stamp[q] = stamp
                ib += 1
            else:
                edges[q] = extra[s, ix]
                fe[q] = f_extra[s, ix]
                pe[q] = p_extra[s, ix]
                mids[q] = -1.0
                ix += 1
        # bins the stack's nodes split (and the bins between its own nodes)
        for q in range(L):
            if mids[q] < 0.0:
                last = q == L - 1
                q1 = q if last else q + 1
                r = _bin(edges[q], fe[q], pe[q], edges[q1], fe[q1], pe[q1], last)
                mids[q], dphi[q], dpow[q], _lo, _hi, e_sun[q] = r
            trans[q] = 1.0
        kt_cached = kt_ref if use_ref else -1.0
        for i in range(n):
            g = gaps[s, i]
            k_i = kind[i]
            # first bin that can absorb: its upper node lies above the absorption floor
            fl = floors[s, i]
            a = 0
            b = L - 1
            if edges[1] > fl or L < 2:
                q0 = 0
            else:  # edges[a + 1] <= fl < edges[b + 1] (edges[L] = inf)
                while b - a > 1:
                    c = (a + b) // 2
                    if edges[c + 1] <= fl:
                        a = c
                    else:
                        b = c
                q0 = b
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
            # emission: exact Boltzmann emission of each bin, absorptance at its centroid
            acc = 0.0
            for q in range(q0, L):
                if bin_stamp[q] != stamp:
                    last = q == L - 1
                    q1 = q if last else q + 1
                    for r_ in (q, q1):
                        if node_stamp[r_] != stamp:
                            ex[r_], t2[r_], t3[r_] = _node_emission(edges[r_], kti)
                            node_stamp[r_] = stamp
                    blo, bhi = _centroid_bounds(edges[q], edges[q1], last)
                    dg[q], e_em[q] = _bin_emission(
                        edges[q],
                        edges[q1],
                        ex[q],
                        t2[q],
                        t3[q],
                        t2[q1],
                        t3[q1],
                        kti,
                        mids[q],
                        blo,
                        bhi,
                        last,
                    )
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
