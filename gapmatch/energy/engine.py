"""The batched yield engine: every stack in every interval at its exact maximum power.

Given the (hours x energies) photon table of a site, the cell temperature of each
interval and a batch of stacks, :func:`run_yield` forms the photocurrents of all
``H x M`` (interval, stack) pairs, builds their detailed-balance diodes at the
interval's cell temperature (gaps shifted by the junctions' temperature model, dark
current at that temperature) and solves each pair's maximum power point exactly. The
pairs are processed in blocks of whole intervals (about ``chunk_rows`` rows each), so
memory stays bounded whatever the batch; within a block everything is vectorised (numpy
over the rows, or a compiled row kernel for series strings), with no Python loop per
interval or per stack.

The intervals are processed in (month, hour-of-day) order, so each block's energies are
summed into the 12 x 24 table by contiguous segments (``numpy.add.reduceat``); monthly and
annual energies are sums of that table.

References
----------
.. [1] W. Shockley and H. J. Queisser, J. Appl. Phys. 32, 510 (1961).
.. [2] A. De Vos, J. Phys. D 13, 839 (1980) (series and independent tandems).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..core.connections import (
    CONNECTIONS,
    best_ratio_voltage_matched,
    solve_independent,
    solve_series,
)
from ..core.diodes import DARK_MODELS, ln_j0_radiative, make_diodes
from ..core.hourly import PhotonTable, series_mpp_boltzmann, step_photocurrents_hourly
from ..core.temperature import GapTemperature
from ..units import K_B, Q
from . import _kernels

__all__ = ["N_BINS", "YieldArrays", "run_yield"]

#: (month, hour-of-day) bins: 12 x 24
N_BINS = 288


@dataclass
class YieldArrays:
    """Raw SI sums of a yield run (see :class:`gapmatch.energy.result.YieldResult`).

    Attributes
    ----------
    energy_bins_Wh_m2 : dict of str to numpy.ndarray
        Per connection, electrical energy [Wh m^-2] per (month, hour) bin and stack,
        ``(288, M)``; bin ``24 * month0 + hour``.
    charge_bins_Ah_m2 : numpy.ndarray
        Photogenerated charge [A h m^-2] per bin, stack and junction, ``(288, M, N)``.
    poa_bins_Wh_m2 : numpy.ndarray
        In-plane irradiation [Wh m^-2] per bin, ``(288,)``.
    best_hourly_efficiency : dict of str to numpy.ndarray
        Per connection, the largest interval efficiency of each stack, ``(M,)``.
    hourly_power_W_m2 : dict of str to numpy.ndarray or None
        Per connection, power [W m^-2] ``(H, M)`` in the table's interval order, when
        requested.
    """

    energy_bins_Wh_m2: dict
    charge_bins_Ah_m2: np.ndarray
    poa_bins_Wh_m2: np.ndarray
    best_hourly_efficiency: dict
    hourly_power_W_m2: dict | None = None


class _Block:
    """Gaps and temperatures of one block of rows (interval-major, stack-minor), built
    lazily so that the compiled path never materialises per-row copies it can index."""

    def __init__(self, gaps, t_hours, n, gap_temperature):
        self.gaps, self.t_hours, self.n, self.gt = gaps, t_hours, n, gap_temperature
        self.shape3 = (t_hours.size, gaps.shape[0], n)
        self.rows = t_hours.size * gaps.shape[0]
        self._g3 = None

    @property
    def gaps3(self):
        """Gaps [J] at each row's temperature, ``(H_b, M_b, N)``."""
        if self._g3 is None:
            if self.gt is None:
                self._g3 = np.broadcast_to(self.gaps, self.shape3)
            else:
                t = np.broadcast_to(self.t_hours[:, None, None], self.shape3)
                self._g3 = self.gt.gaps_at(np.broadcast_to(self.gaps, self.shape3), t)
        return self._g3

    def gaps_rows(self):
        """Gaps [J] per row, ``(R, N)``."""
        return np.ascontiguousarray(self.gaps3).reshape(self.rows, self.n)

    def t_rows(self):
        """Cell temperature [K] per row and junction, ``(R, N)``."""
        t = np.repeat(self.t_hours, self.gaps.shape[0])
        return np.broadcast_to(t[:, None], (self.rows, self.n))

    def ln_j0(self, ere, emission_factor):
        """ln of the dark saturation current [ln(A m^-2)] per row, ``(R, N)``."""
        if self.gt is None and np.ndim(ere) == 0 and np.ndim(emission_factor) == 0:
            # depends on (gap, temperature) only: once per distinct gap and interval
            uniq, inv = np.unique(self.gaps, return_inverse=True)
            ln_u = ln_j0_radiative(uniq[None, :], self.t_hours[:, None], emission_factor)
            ln_u -= np.log(ere)
            return ln_u[:, inv.reshape(self.gaps.shape)].reshape(self.rows, self.n)
        return ln_j0_radiative(self.gaps_rows(), self.t_rows(), emission_factor) - np.log(ere)


def _power_rows(connection, jph, block, ere, dark_model, emission_factor, kernel):
    """Maximum power [W m^-2] of every row (rows = interval x stack), ``(R,)``."""
    if connection == "series" and dark_model == "boltzmann":
        if kernel == "compiled" and _kernels.HAVE_NUMBA:
            lnj0 = block.ln_j0(ere, emission_factor)
            vt = np.repeat(block.t_hours * (K_B / Q), block.gaps.shape[0])[:, None]
            p, _ = _kernels.series_mpp_rows(jph, lnj0, vt)
            return p
        p, _ = series_mpp_boltzmann(jph, block.gaps_rows(), block.t_rows(), ere, emission_factor)
        return p
    d = make_diodes(dark_model, jph, block.gaps_rows(), block.t_rows(), ere, emission_factor)
    if connection == "series":
        return solve_series(d).p_mpp
    if connection == "independent":
        return solve_independent(d).p_mpp
    return best_ratio_voltage_matched(d).p_mpp


def run_yield(
    table: PhotonTable,
    weights_h: np.ndarray,
    cell_temperature_K: np.ndarray,
    bins: np.ndarray,
    gaps_J: np.ndarray,
    connections: tuple[str, ...] = ("series",),
    *,
    gap_temperature: GapTemperature | None = None,
    ere: float | np.ndarray = 1.0,
    dark_model: str = "boltzmann",
    emission_factor: float | np.ndarray = 1.0,
    keep_hourly: bool = False,
    chunk_rows: int = 1 << 19,
    kernel: str = "compiled",
    progress: bool = False,
) -> YieldArrays:
    """Solve every (interval, stack) pair and sum energies into (month, hour) bins.

    Parameters
    ----------
    table : PhotonTable
        In-plane spectra of ``H`` intervals.
    weights_h : numpy.ndarray
        Duration each interval stands for [h], ``(H,)`` (interval length times the
        number of intervals a representative spectrum replaces).
    cell_temperature_K : numpy.ndarray
        Cell temperature [K] per interval, ``(H,)``, in [150, 450].
    bins : numpy.ndarray
        (month, hour-of-day) bin of each interval, ``24 * (month - 1) + hour``, ``(H,)``.
    gaps_J : numpy.ndarray
        Gaps [J], ``(M, N)`` top first, at ``gap_temperature.reference_K`` when a gap
        temperature model is given (otherwise fixed).
    connections : tuple of str
        Any of ``"series"``, ``"independent"``, ``"voltage-matched"``.
    gap_temperature : GapTemperature, optional
        Per-junction temperature dependence of the gaps.
    ere : float or numpy.ndarray
        External radiative efficiency in (0, 1], scalar or ``(N,)``.
    dark_model : {"boltzmann", "bose-einstein"}
        Form of the radiative dark current.
    emission_factor : float or numpy.ndarray
        Multiplier on hemispherical front emission, scalar or ``(N,)``.
    keep_hourly : bool
        Also return the power of every pair (``H x M`` floats per connection).
    chunk_rows : int
        Target rows (pairs) per block; memory grows with it (about 200 bytes a row for
        two junctions).
    kernel : {"compiled", "numpy"}
        Series strings of Boltzmann diodes: the compiled row kernel (when numba is
        available) or the numpy solver; results agree to ~1e-13.
    progress : bool
        Show a progress bar (tqdm).

    Returns
    -------
    YieldArrays
    """
    for c in connections:
        if c not in CONNECTIONS:
            raise ValueError(f"unknown connection {c!r}")
    if dark_model not in DARK_MODELS:
        raise ValueError(f"dark model must be one of {DARK_MODELS}")
    g = np.atleast_2d(np.asarray(gaps_J, float))
    m, n = g.shape
    h = table.hours
    w = np.asarray(weights_h, float).reshape(h)
    tc = np.asarray(cell_temperature_K, float).reshape(h)
    b = np.asarray(bins, np.intp).reshape(h)
    order = np.argsort(b, kind="stable")
    poa = table.irradiance_W_m2
    poa_bins = np.bincount(b, weights=w * poa, minlength=N_BINS)
    energy = {c: np.zeros((N_BINS, m)) for c in connections}
    best = {c: np.zeros(m) for c in connections}
    hourly = {c: np.zeros((h, m)) for c in connections} if keep_hourly else None
    charge = np.zeros((N_BINS, m, n))
    ere_a = np.asarray(ere, float)
    ef_a = np.asarray(emission_factor, float)
    hb = max(1, int(chunk_rows) // max(m, 1))
    sb = m if m <= chunk_rows else int(chunk_rows)
    blocks = [(h0, s0) for h0 in range(0, h, hb) for s0 in range(0, m, sb)]
    it = blocks
    if progress:
        from tqdm import tqdm

        it = tqdm(blocks, desc="yield", unit="block", leave=False)
    fast = (
        kernel == "compiled"
        and _kernels.HAVE_NUMBA
        and gap_temperature is None
        and dark_model == "boltzmann"
        and ere_a.ndim == 0
        and ef_a.ndim == 0
    )
    for h0, s0 in it:
        rows = order[h0 : h0 + hb]
        gs = g[s0 : s0 + sb]
        ms = gs.shape[0]
        nr = rows.size * ms
        sub = table.take(rows)
        th = tc[rows]
        block = _Block(gs, th, n, gap_temperature)
        wb = w[rows]
        bb = b[rows]
        starts = np.flatnonzero(np.r_[True, bb[1:] != bb[:-1]])
        flat_j = None
        if fast:
            # photocurrents are differences of the flux above the absorption edge reached
            # so far (the smallest gap above and including each junction): linear in the
            # flux, so the charge per bin needs only the binned flux
            uniq, inv = np.unique(gs, return_inverse=True)
            idx_gap = inv.reshape(gs.shape)
            idx_top = np.searchsorted(uniq, np.minimum.accumulate(gs, axis=1))
            flux = sub.photon_flux_above(uniq)
            fb = np.add.reduceat(flux * wb[:, None], starts, axis=0) * Q
            cum = fb[:, idx_top]
            cum[..., 1:] -= fb[:, idx_top[:, :-1]]
            charge[bb[starts], s0 : s0 + ms] += cum
        else:
            jph = step_photocurrents_hourly(sub, block.gaps3 if gap_temperature else gs)
            flat_j = jph.reshape(nr, n)
            charge[bb[starts], s0 : s0 + ms] += np.add.reduceat(
                jph * wb[:, None, None], starts, axis=0
            )
        pb = poa[rows]
        for c in connections:
            if fast and c == "series":
                ln_u = ln_j0_radiative(uniq[None, :], th[:, None], ef_a) - np.log(ere_a)
                p = _kernels.series_power_table(flux, ln_u, th * (K_B / Q), idx_top, idx_gap)
            else:
                if flat_j is None:
                    f = flux[:, idx_top]
                    f[..., 1:] -= flux[:, idx_top[:, :-1]]
                    flat_j = (Q * f).reshape(nr, n)
                p = _power_rows(c, flat_j, block, ere_a, dark_model, ef_a, kernel)
            p = p.reshape(rows.size, ms)
            energy[c][bb[starts], s0 : s0 + ms] += np.add.reduceat(p * wb[:, None], starts, axis=0)
            lit = pb > 0
            if lit.any():
                eff = (p[lit] / pb[lit, None]).max(axis=0)
                best[c][s0 : s0 + ms] = np.maximum(best[c][s0 : s0 + ms], eff)
            if hourly is not None:
                hourly[c][rows, s0 : s0 + ms] = p
    return YieldArrays(energy, charge, poa_bins, best, hourly)
