"""Connection models: how the junctions of a stack deliver power.

Each solver takes a batch of diodes (shape ``(M, N)``, see :mod:`.diodes`) and returns the
operating point of every stack at its exact maximum power point:

* :func:`solve_series` -- two-terminal: one current through every junction. The stack
  power ``P(J) = J * sum_i V_i(J)`` is strictly concave in ``J`` on ``(0, min J_ph]``, so
  the maximum is the unique root of ``dP/dJ``, found by safeguarded Newton iteration.
* :func:`solve_independent` -- four-/multi-terminal: each junction at its own maximum
  power point (closed form with Lambert's W for Boltzmann diodes).
* :func:`solve_voltage_matched` -- strings of ``r_k`` cells of junction ``k`` wired in
  parallel at one voltage ``V``; junction ``k`` then works at ``V / r_k``, and the power
  per unit area is ``sum_k (V/r_k) J_k(V/r_k)``, strictly concave in ``V``.

References
----------
.. [1] A. De Vos, J. Phys. D 13, 839 (1980) (series and independent tandems).
.. [2] A. S. Brown and M. A. Green, "Detailed balance limit for the series constrained
   two terminal tandem solar cell", Physica E 14, 96 (2002).
.. [3] S. P. Bremner, M. Y. Levy and C. B. Honsberg, "Analysis of tandem solar cell
   efficiencies under AM1.5G spectrum using a rapid flux calculation method",
   Prog. Photovolt. 16, 225 (2008).
.. [4] R. Strandberg, "Detailed balance analysis of area de-coupled double tandem
   photovoltaic modules", Appl. Phys. Lett. 106, 033902 (2015) (voltage matching).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from itertools import product

import numpy as np

from . import kernels
from .solvers import XTOL_REL, maximise_concave

__all__ = [
    "CONNECTIONS",
    "AUTO_MAX_CELLS",
    "OperatingPoint",
    "solve_series",
    "solve_independent",
    "solve_voltage_matched",
    "candidate_ratios",
    "best_ratio_voltage_matched",
    "vm_power_bounds",
    "solve_series_resistive",
    "solve_independent_resistive",
    "warm_up_kernels",
]

CONNECTIONS = ("series", "independent", "voltage-matched")
#: longest string tried by the automatic voltage-matching ratio, per number of junctions
AUTO_MAX_CELLS = {1: 1, 2: 6, 3: 6, 4: 5, 5: 4, 6: 3}


@dataclass
class OperatingPoint:
    """Operating point of a batch of stacks at maximum power.

    All arrays are SI. Stack-level quantities have shape ``(M,)``; per-junction ones
    ``(M, N)``. For independent connection the stack has no single terminal pair, so
    ``v_mpp``, ``j_mpp``, ``voc``, ``jsc`` are NaN there (see
    :attr:`gapmatch.results.BatchResult.ff` for the fill factor).
    """

    p_mpp: np.ndarray  #: power density [W m^-2]
    v_mpp: np.ndarray  #: terminal voltage [V]
    j_mpp: np.ndarray  #: terminal current density [A m^-2]
    voc: np.ndarray  #: open-circuit voltage [V]
    jsc: np.ndarray  #: short-circuit current density [A m^-2]
    v_junction: np.ndarray  #: junction voltages at the operating point [V]
    j_junction: np.ndarray  #: junction current densities at the operating point [A m^-2]
    ratio: np.ndarray | None = None  #: cells per string for voltage matching (int)

    @property
    def p_junction(self) -> np.ndarray:
        """Power density delivered by each junction [W m^-2]."""
        return self.v_junction * self.j_junction


def solve_series(d, *, xtol_rel: float = XTOL_REL) -> OperatingPoint:
    """Exact maximum power point of series-connected (two-terminal) stacks.

    Parameters
    ----------
    d : BoltzmannDiodes or BoseEinsteinDiodes
        Junction diodes, shape ``(M, N)``.
    xtol_rel : float
        Relative tolerance on the current at maximum power.

    Returns
    -------
    OperatingPoint

    Notes
    -----
    With ``S(J) = sum_i V_i(J)`` and ``S1 = -dS/dJ > 0`` the maximum of ``P = J S`` is the
    root of ``f(J) = S / (J S1) - 1``, which is decreasing and (for the diodes here)
    convex on ``(0, J_min)``, so Newton's method approaches it without overshooting
    towards the singularity at ``J_min``. The start point is exact when only the
    limiting junction's voltage varies; two to four iterations reach ``xtol_rel``.
    Stacks leave the iteration as soon as they converge. ``J_sc`` is the current where
    the limiting junction's reverse voltage cancels the others' (one fixed-point step
    from ``J_min``, exact to first order in ``J0 / J_ph``).

    With numba available a compiled kernel (see :mod:`.kernels`) runs the same
    iteration: for Boltzmann diodes on blocks of stacks in SIMD lanes
    (:mod:`._lanes`), for Bose-Einstein diodes per stack, the junction voltages
    warm-started from the previous iterate instead of inverted afresh.
    """
    kp = kernels.for_diodes(d, "series")
    if kp is not None:
        return _series_kernel(d, kp, xtol_rel)
    jph = d.jph
    m = jph.shape[0]
    rows = np.arange(m)
    lim = np.argmin(jph, axis=1)
    jmin = jph[rows, lim]
    lit = jmin > 0
    j_out = np.zeros(m)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        idx = np.flatnonzero(lit)
        sub = d.take(idx) if idx.size < m else d
        hi = jmin[idx]
        tol = xtol_rel * hi
        j = np.clip(sub.series_guess(hi, lim[idx]), 0.0, hi)
        j = np.where(np.isfinite(j), j, 0.5 * hi)
        lo = np.zeros(idx.size)
        for _ in range(200):
            if idx.size == 0:
                break
            s, s1, s2 = sub.series_terms(j)
            js1 = j * s1
            f = s / js1 - 1.0
            fp = -(j * s1 * s1 + s * s1 + s * j * s2) / (js1 * js1)
            pos = f > 0
            lo = np.where(pos, j, lo)
            hi = np.where(pos, hi, j)
            jn = j - f / fp
            ok = (jn >= lo) & (jn <= hi)  # False for NaN too
            jn = np.where(ok, jn, 0.5 * (lo + hi))
            done = (np.abs(jn - j) <= tol) | (hi - lo <= tol)
            j_out[idx] = jn
            if done.all():
                break
            keep = ~done
            if keep.sum() < 0.6 * keep.size:  # compact: iterate only the unconverged
                idx, lo, hi, tol, jn = idx[keep], lo[keep], hi[keep], tol[keep], jn[keep]
                sub = sub.take(keep)
            j = jn
        vj = d.voltage(j_out[:, None])
        vj = np.where(lit[:, None], vj, d.voc())
        # short-circuit current: the limiting junction at minus the others' voltage
        v_at_min = d.voltage(jmin[:, None])
        others = v_at_min.sum(axis=1)[:, None] - v_at_min
        jsc = d.current(-others)[rows, lim]
    voc = d.voc().sum(axis=1)
    v = vj.sum(axis=1)
    jj = np.broadcast_to(j_out[:, None], vj.shape).copy()
    return OperatingPoint(j_out * v, v, j_out, voc, jsc, vj, jj)


def solve_independent(d) -> OperatingPoint:
    """Each junction at its own exact maximum power point (four-/multi-terminal).

    Parameters
    ----------
    d : BoltzmannDiodes or BoseEinsteinDiodes
        Junction diodes, shape ``(M, N)``.

    Returns
    -------
    OperatingPoint
        Stack-level voltage, current, ``V_oc`` and ``J_sc`` are NaN (no common
        terminals); ``ff`` is ``P / sum_i V_oc,i J_sc,i``.
    """
    kp = kernels.for_diodes(d, "independent")
    v, j = _mpp_kernel(kp) if kp is not None else d.mpp()
    p = (v * j).sum(axis=1)
    nan = np.full(p.shape, np.nan)
    op = OperatingPoint(p, nan, nan, nan, nan, v, j)
    return op


def _series_kernel(d, kp, xtol_rel) -> OperatingPoint:
    model, jph, vt, a, b, c, j0b, vup = kp
    m, n = jph.shape
    j_out, jsc = np.empty(m), np.empty(m)
    if model == 0:  # Boltzmann: the SIMD block kernel (Fortran-order outputs)
        vj, voc = np.empty((m, n), order="F"), np.empty((m, n), order="F")
        kernels.lanes().series_boltzmann(jph, vt, a, float(xtol_rel), j_out, vj, jsc, voc)
    else:
        vj, voc = np.empty((m, n)), np.empty((m, n))
        kernels.jit().series(
            model, jph, vt, a, b, c, j0b, vup, float(xtol_rel), j_out, vj, jsc, voc
        )
    d._voc = voc
    v = vj.sum(axis=1)
    jj = np.broadcast_to(j_out[:, None], vj.shape).copy()
    return OperatingPoint(j_out * v, v, j_out, voc.sum(axis=1), jsc, vj, jj)


def _mpp_kernel(kp):
    """Each junction's own maximum power point ``(v, j)`` by the compiled kernel."""
    model, jph, vt, a, b, c, j0b, vup = kp
    v, j = np.empty(jph.shape), np.empty(jph.shape)
    kernels.jit().independent(model, jph, vt, a, b, c, j0b, vup, v, j)
    return v, j


def _voc_kernel(d, kp):
    """Each junction's open-circuit voltage [V], cached on the diodes."""
    if d._voc is None:
        model, jph, vt, a, b, c, j0b, vup = kp
        voc = np.empty(jph.shape)
        kernels.jit().open_circuit(model, jph, vt, a, b, c, j0b, vup, voc)
        d._voc = voc
    return d._voc


def _vm_result(d, r, v, voc) -> OperatingPoint:
    vk = v[:, None] / r
    jk = d.current(vk)
    p = (vk * jk).sum(axis=1)
    jsc = (d.jph / r).sum(axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        j = np.where(v > 0, p / v, 0.0)
    return OperatingPoint(p, v, j, voc, jsc, vk, jk, ratio=r.astype(int))


def candidate_ratios(n_junctions: int, max_cells: int = 6) -> list[tuple[int, ...]]:
    """Small-integer string lengths tried when choosing a voltage-matching ratio.

    Parameters
    ----------
    n_junctions : int
        Number of junctions (2 or 3 for an automatic choice).
    max_cells : int
        Largest number of cells in one string.

    Returns
    -------
    list of tuple of int
        Tuples ``(r_1, ..., r_N)`` with greatest common divisor 1, top junction first.
    """
    out = []
    for r in product(range(1, max_cells + 1), repeat=n_junctions):
        if math.gcd(*r) == 1:
            out.append(r)
    return out


def solve_voltage_matched(d, ratio: np.ndarray, single=None) -> OperatingPoint:
    """Exact maximum power point of voltage-matched strings.

    Parameters
    ----------
    d : BoltzmannDiodes or BoseEinsteinDiodes
        Junction diodes, shape ``(M, N)``.
    ratio : numpy.ndarray
        Cells per string for each junction, shape ``(N,)`` or ``(M, N)`` (positive
        integers, top junction first). ``(1, 2)`` means one top cell in series matches
        two bottom cells in series.
    single : tuple of numpy.ndarray, optional
        ``d.mpp()`` if already computed (used for the start point).

    Returns
    -------
    OperatingPoint
        ``v_mpp`` is the common string voltage, ``j_mpp = P / V`` the terminal current per
        unit stack area.

    Notes
    -----
    The open-circuit voltage is the root of ``ln G - ln(G - J(V))`` with
    ``G = J(-inf)``, a nearly linear, concave and decreasing function of ``V`` on which
    Newton's method converges in a few steps even far in the exponential regime. The
    maximum power point is then bracketed by ``[0, V_oc]``.
    """
    r = np.broadcast_to(np.asarray(ratio, dtype=float), d.jph.shape)
    kp = kernels.for_diodes(d, "voltage-matched")
    if kp is not None:
        model, jph, vt, a, b, c, j0b, vup = kp
        vm, jm = _mpp_kernel(kp) if single is None else single
        m = jph.shape[0]
        v, voc = np.empty(m), np.empty(m)
        kernels.jit().voltage_matched(
            model,
            jph,
            vt,
            a,
            b,
            c,
            vup,
            _voc_kernel(d, kp),
            np.asfortranarray(vm),
            np.asfortranarray(jm),
            np.ascontiguousarray(r),
            v,
            voc,
        )
        return _vm_result(d, r, v, voc)
    voc_j = d.voc()
    vcap = np.min(r * d.v_upper(), axis=1)
    lo = np.zeros(d.jph.shape[0])
    hi = np.minimum(np.max(r * voc_j, axis=1), vcap)
    vm_single, jm_single = d.mpp() if single is None else single
    pw = vm_single * jm_single
    wsum = pw.sum(axis=1)
    x0 = np.where(wsum > 0, (pw * r * vm_single).sum(axis=1) / np.where(wsum > 0, wsum, 1), 0)
    g_sat = (d.j_limit() / r).sum(axis=1)

    def grad(v):
        vk = v[:, None] / r
        return ((d.current(vk) + vk * d.dcurrent(vk)) / r).sum(axis=1)

    def hess(v):
        vk = v[:, None] / r
        return ((2.0 * d.dcurrent(vk) + vk * d.d2current(vk)) / r**2).sum(axis=1)

    def log_balance(v):
        return np.log(g_sat) - np.log(g_sat - (d.current(v[:, None] / r) / r).sum(axis=1))

    def dlog_balance(v):
        vk = v[:, None] / r
        jt = (d.current(vk) / r).sum(axis=1)
        return (d.dcurrent(vk) / r**2).sum(axis=1) / (g_sat - jt)

    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        # open circuit first: it bounds the maximum power point from above and keeps the
        # Newton iteration out of the steep exponential regime of forward-biased strings
        voc = maximise_concave(log_balance, dlog_balance, np.min(r * voc_j, axis=1), hi, hi)
        v = maximise_concave(grad, hess, lo, voc, np.clip(x0, lo, voc))
    return _vm_result(d, r, v, voc)


def best_ratio_voltage_matched(
    d, max_cells: int | None = None, max_rows: int = 2**19, *, prune: bool = True
) -> OperatingPoint:
    """Voltage matching with, per stack, the best string lengths up to ``max_cells``.

    Parameters
    ----------
    d : BoltzmannDiodes or BoseEinsteinDiodes
        Junction diodes, shape ``(M, N)``.
    max_cells : int, optional
        Largest number of cells in one string; default ``AUTO_MAX_CELLS[N]``.
    max_rows : int
        Largest number of (stack, candidate) pairs solved in one vectorised call.
    prune : bool
        Solve only the candidates whose upper bound on the power (see
        :func:`vm_power_bounds`) reaches the best power found (within 1e-9 relative);
        ``False`` solves every candidate. Both choose the same ratio: a pruned candidate
        cannot reach the best power.

    Returns
    -------
    OperatingPoint
        With ``ratio`` set to the chosen string lengths; ties go to the first candidate
        of :func:`candidate_ratios`.
    """
    m, n = d.jph.shape
    if max_cells is None:
        max_cells = AUTO_MAX_CELLS[n]
    cand = np.asarray(candidate_ratios(n, max_cells), dtype=float)
    k = cand.shape[0]
    kp = kernels.for_diodes(d, "voltage-matched")
    if kp is not None:
        model, jph, vt, a, b, c, j0b, vup = kp
        vm, jm = _mpp_kernel(kp)
        best_k = np.empty(m, dtype=np.int64)
        v, voc = np.empty(m), np.empty(m)
        kernels.jit().best_ratio(
            model, jph, vt, a, b, c, vup, _voc_kernel(d, kp), vm, jm, cand, prune, best_k, v, voc
        )
        return _vm_result(d, cand[best_k], v, voc)
    single = d.mpp()
    best_k = np.zeros(m, dtype=int)
    step = max(1, max_rows // k)
    for start in range(0, m, step):
        rows = np.arange(start, min(m, start + step))
        sub = d.take(rows)
        sub_single = (single[0][rows], single[1][rows])
        if prune:
            ub = vm_power_bounds(sub, cand, sub_single)
            first = np.argmax(ub, axis=1)
            p_first = solve_voltage_matched(sub, cand[first], single=sub_single).p_mpp
            pk = np.full((rows.size, k), -np.inf)
            pk[np.arange(rows.size), first] = p_first
            keep = ~(ub < (p_first * (1.0 - 1e-9))[:, None])  # NaN bounds are kept
            keep[np.arange(rows.size), first] = False
            ri, qi = np.nonzero(keep)
        else:
            pk = np.empty((rows.size, k))
            ri, qi = np.divmod(np.arange(rows.size * k), k)
        for s0 in range(0, ri.size, max_rows):
            r_sel, q_sel = ri[s0 : s0 + max_rows], qi[s0 : s0 + max_rows]
            op = solve_voltage_matched(
                sub.take(r_sel),
                cand[q_sel],
                single=(sub_single[0][r_sel], sub_single[1][r_sel]),
            )
            pk[r_sel, q_sel] = op.p_mpp
        best_k[rows] = np.argmax(pk, axis=1)
    return solve_voltage_matched(d, cand[best_k], single=single)


def vm_power_bounds(d, cand: np.ndarray, single=None) -> np.ndarray:
    """Upper bounds on the voltage-matched power of every stack for every ratio [W m^-2].

    Parameters
    ----------
    d : BoltzmannDiodes or BoseEinsteinDiodes
        Junction diodes, shape ``(M, N)``.
    cand : numpy.ndarray
        Candidate ratios, shape ``(K, N)``.
    single : tuple of numpy.ndarray, optional
        ``d.mpp()`` if already computed.

    Returns
    -------
    numpy.ndarray
        ``(M, K)``: no string voltage gives candidate ``k`` more power than entry ``k``.

    Notes
    -----
    Junction power ``p(v) = v J(v)`` is concave for ``v >= 0`` (``J' < 0``, ``J'' < 0``),
    so its tangents bound it from above: ``v J_ph`` (at 0), ``p_max`` (at the maximum
    power point) and ``s (V_oc - v)`` with ``s = -V_oc J'(V_oc)`` (at open circuit). The
    string power ``sum_k p_k(V / r_k)`` is then at most the sum of these piecewise-linear
    envelopes, a concave piecewise-linear function of ``V`` whose maximum lies at one of
    the envelopes' corners ``V = r_k v_c``; only those are tried. A ratio whose string
    voltages are spread far apart has a low bound, so the bound prunes by the spread of
    the junctions' string voltages at their own maximum power points.
    """
    vm, jm = d.mpp() if single is None else single
    voc = d.voc()
    pmax = vm * jm
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        slope = -voc * d.dcurrent(voc)
        c1 = np.where(d.jph > 0, pmax / d.jph, 0.0)
        c2 = np.where(slope > 0, voc - pmax / slope, voc)
        corners = np.concatenate([c1, c2], axis=1)  # (M, 2N)
        out = np.empty((d.jph.shape[0], cand.shape[0]))
        for q, r in enumerate(cand):
            vs = corners * np.concatenate([r, r])  # string voltages (M, 2N)
            vk = vs[:, :, None] / r  # junction voltages (M, 2N, N)
            env = np.minimum(
                np.minimum(vk * d.jph[:, None, :], pmax[:, None, :]),
                slope[:, None, :] * (voc[:, None, :] - vk),
            )
            s = env.sum(axis=2)
            out[:, q] = np.where(np.isnan(s), np.inf, s).max(axis=1)
    return out


def solve_series_resistive(d, r) -> OperatingPoint:
    """Exact maximum power point of series stacks with a lumped series resistance.

    Parameters
    ----------
    d : BoltzmannDiodes or BoseEinsteinDiodes
        Junction diodes, shape ``(M, N)``.
    r : float or numpy.ndarray
        Series resistance of the stack [ohm m^2] (1 ohm cm^2 = 1e-4 ohm m^2), ``(M,)``.

    Returns
    -------
    OperatingPoint
        ``v_mpp = sum_i V_i(J) - r J`` is the terminal voltage; ``v_junction`` holds the
        junction voltages, so ``p_junction`` is the power each junction generates before
        the resistive loss ``r J^2``.

    Notes
    -----
    ``P(J) = J (S(J) - r J)`` is strictly concave on ``(0, min J_ph]`` (``S`` is concave
    and decreasing, ``-r J^2`` concave); its maximum is the root of
    ``S - J S1 - 2 r J`` (``S1 = -dS/dJ``), found by safeguarded Newton iteration. ``J_sc``
    is the root of ``S(J) = r J``.
    """
    jph = d.jph
    m = jph.shape[0]
    r = np.broadcast_to(np.asarray(r, dtype=float), (m,))
    rows = np.arange(m)
    lim = np.argmin(jph, axis=1)
    jmin = np.maximum(jph[rows, lim], 0.0)

    def grad(j):
        s, s1, _ = d.series_terms(j)
        return s - j * s1 - 2.0 * r * j

    def hess(j):
        _, s1, s2 = d.series_terms(j)
        return -2.0 * s1 - j * s2 - 2.0 * r

    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        x0 = np.clip(d.series_guess(np.where(jmin > 0, jmin, 1.0), lim), 0.0, jmin)
        x0 = np.where(np.isfinite(x0), x0, 0.5 * jmin)
        j = maximise_concave(grad, hess, np.zeros(m), jmin, x0)
        j = np.where(jmin > 0, j, 0.0)
        vj = d.voltage(j[:, None])
        vj = np.where((jmin > 0)[:, None], vj, d.voc())
        jl = d.j_limit().min(axis=1) * (1.0 - 1e-12)

        def g(jj):
            return d.series_terms(jj)[0] - r * jj

        def dg(jj):
            return -d.series_terms(jj)[1] - r

        jsc = maximise_concave(g, dg, np.zeros(m), jl, np.minimum(jmin, jl))
    v = vj.sum(axis=1) - r * j
    jj = np.broadcast_to(j[:, None], vj.shape).copy()
    return OperatingPoint(j * v, v, j, d.voc().sum(axis=1), jsc, vj, jj)


def solve_independent_resistive(d, r) -> OperatingPoint:
    """Each junction at its exact maximum power point behind its own series resistance.

    Parameters
    ----------
    d : BoltzmannDiodes or BoseEinsteinDiodes
        Junction diodes, shape ``(M, N)``.
    r : float or numpy.ndarray
        Series resistance of each junction [ohm m^2], broadcast to ``(M, N)``.

    Returns
    -------
    OperatingPoint
        ``v_junction`` are the junction voltages (the sub-cell's terminal voltage is
        ``V - r J``); ``p_mpp = sum_i J_i (V_i - r_i J_i)``.

    Notes
    -----
    ``J (V(J) - r J)`` is strictly concave in ``J`` on ``[0, J_ph]``; Newton's method on
    its derivative, safeguarded by bisection.
    """
    r = np.broadcast_to(np.asarray(r, dtype=float), d.jph.shape)

    def grad(j):
        return d.voltage(j) + j * d.dvoltage(j) - 2.0 * r * j

    def hess(j):
        return 2.0 * d.dvoltage(j) + j * d.d2voltage(j) - 2.0 * r

    _, j_start = d.mpp()
    hi = np.maximum(d.jph, 0.0)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        j = maximise_concave(grad, hess, np.zeros_like(hi), hi, np.clip(j_start, 0.0, hi))
        v = d.voltage(j)
    p = (j * (v - r * j)).sum(axis=1)
    nan = np.full(p.shape, np.nan)
    return OperatingPoint(p, nan, nan, nan, nan, v, j)


def warm_up_kernels() -> bool:
    """Compile (or load from the cache) every kernel for the array types the engine
    passes; returns whether the kernels are available."""
    if not kernels.available():
        return False
    from .diodes import make_diodes

    gaps = np.array([[1.8, 1.1], [1.6, 0.9]]) * 1.602176634e-19
    jph = np.array([[150.0, 160.0], [200.0, 120.0]])
    with kernels.everywhere():
        for model in ("boltzmann", "bose-einstein"):
            d = make_diodes(model, jph, gaps, 300.0, 1.0, 1.0)
            solve_series(d)
            solve_independent(d)
            best_ratio_voltage_matched(d)
            solve_voltage_matched(d, np.array([1, 2]))
    return True
