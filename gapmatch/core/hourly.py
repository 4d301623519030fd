"""A batch of incident spectra (one per hour) and its photon-flux look-ups (SI, no I/O).

:class:`PhotonTable` holds ``H`` spectra on one shared wavelength grid and answers, for
every hour at once, the question the detailed-balance engine asks of a spectrum: the
photon flux above an energy. Its integration rule is exactly that of
:class:`gapmatch.core.spectra.TabulatedSpectrum` (photon flux per unit wavelength taken
as linear between the tabulated wavelengths, cumulative integrals exact for that
interpolant), so a table whose every row is one tabulated spectrum reproduces that
spectrum's photocurrents to rounding.

:func:`series_mpp_boltzmann` is a lean maximum-power solver for series strings of
Boltzmann diodes: the same safeguarded Newton iteration as
:func:`gapmatch.core.connections.solve_series`, returning only the power and current,
for the very large (hours x stacks) batches of energy-yield work.

References
----------
.. [1] W. Shockley and H. J. Queisser, J. Appl. Phys. 32, 510 (1961).
.. [2] A. S. Brown and M. A. Green, Physica E 14, 96 (2002) (series-constrained tandem).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..units import K_B, C, H, Q
from .diodes import ln_j0_radiative
from .solvers import XTOL_REL

__all__ = ["PhotonTable", "step_photocurrents_hourly", "series_mpp_boltzmann"]


@dataclass(frozen=True, eq=False)
class PhotonTable:
    """Spectra of ``H`` hours on a shared wavelength grid, with cumulative photon tables.

    Parameters
    ----------
    wavelength_nm : numpy.ndarray
        Strictly increasing wavelengths [nm], shape ``(L,)``, ``L >= 2``.
    irradiance_W_m2_nm : numpy.ndarray
        Spectral irradiance [W m^-2 nm^-1], shape ``(H, L)``, finite and >= 0.

    Attributes
    ----------
    energy_J : numpy.ndarray
        The shared energy grid [J], ``(L,)`` ascending (the wavelength nodes as photon
        energies).
    flux_above_m2_s : numpy.ndarray
        Photon flux above each grid energy [m^-2 s^-1], ``(H, L)``: the (hours x energies)
        table the yield engine reads.
    irradiance_W_m2 : numpy.ndarray
        Integral of each hour's spectrum [W m^-2], ``(H,)``.

    Notes
    -----
    Values are taken as given (the readers and spectrum models upstream check them).
    """

    wavelength_nm: np.ndarray
    irradiance_W_m2_nm: np.ndarray
    _phi: np.ndarray = field(init=False, repr=False)
    _cum: np.ndarray = field(init=False, repr=False)
    _slope: np.ndarray = field(init=False, repr=False)
    _power: np.ndarray = field(init=False, repr=False)

    def __post_init__(self) -> None:
        wl = np.ascontiguousarray(self.wavelength_nm, dtype=float)
        irr = np.atleast_2d(np.asarray(self.irradiance_W_m2_nm, dtype=float))
        if wl.ndim != 1 or wl.size < 2 or irr.shape[1] != wl.size:
            raise ValueError("wavelength_nm must be (L,) and irradiance_W_m2_nm (H, L), L >= 2")
        if np.any(np.diff(wl) <= 0):
            raise ValueError("wavelength_nm must be strictly increasing")
        object.__setattr__(self, "wavelength_nm", wl)
        object.__setattr__(self, "irradiance_W_m2_nm", irr)
        phi = irr * wl * 1e-9 / (H * C)
        dl = np.diff(wl)
        cum = np.zeros_like(phi)
        np.cumsum(0.5 * dl * (phi[:, 1:] + phi[:, :-1]), axis=1, out=cum[:, 1:])
        power = np.sum(0.5 * dl * (irr[:, 1:] + irr[:, :-1]), axis=1)
        object.__setattr__(self, "_phi", phi)
        object.__setattr__(self, "_cum", cum)
        object.__setattr__(self, "_slope", (phi[:, 1:] - phi[:, :-1]) / dl)
        object.__setattr__(self, "_power", power)

    @property
    def hours(self) -> int:
        """Number of spectra ``H``."""
        return self.irradiance_W_m2_nm.shape[0]

    @property
    def irradiance_W_m2(self) -> np.ndarray:
        return self._power

    @property
    def energy_J(self) -> np.ndarray:
        return (H * C / (self.wavelength_nm * 1e-9))[::-1]

    @property
    def flux_above_m2_s(self) -> np.ndarray:
        return self._cum[:, ::-1]

    def _segments(self, energy_J):
        wl = self.wavelength_nm
        e = np.asarray(energy_J, dtype=float)
        with np.errstate(divide="ignore"):
            lam = H * C / np.maximum(e, 1e-300) * 1e9
        lam = np.clip(lam, wl[0], wl[-1])
        k = np.clip(np.searchsorted(wl, lam, side="right") - 1, 0, wl.size - 2)
        return k, lam - wl[k]

    def photon_flux_above(self, energy_J) -> np.ndarray:
        """Photon flux above each energy, every hour [m^-2 s^-1].

        Parameters
        ----------
        energy_J : numpy.ndarray
            Energies [J], any shape ``S`` (the same for every hour).

        Returns
        -------
        numpy.ndarray
            Shape ``(H,) + S``: the exact integral of the piecewise-linear photon flux
            per unit wavelength from the shortest wavelength up to ``hc/E``.
        """
        e = np.asarray(energy_J, dtype=float)
        k, x = self._segments(e.ravel())
        out = self._cum[:, k] + x * (self._phi[:, k] + 0.5 * x * self._slope[:, k])
        return out.reshape((self.hours,) + e.shape)

    def photon_flux_above_rows(self, energy_J) -> np.ndarray:
        """Photon flux above energies that differ from hour to hour [m^-2 s^-1].

        Parameters
        ----------
        energy_J : numpy.ndarray
            Energies [J], shape ``(H,) + S``.

        Returns
        -------
        numpy.ndarray
            Shape ``(H,) + S``.
        """
        e = np.asarray(energy_J, dtype=float)
        flat = e.reshape(self.hours, -1)
        k, x = self._segments(flat)

        def take(a):
            return np.take_along_axis(a, k, axis=1)

        out = take(self._cum) + x * (take(self._phi) + 0.5 * x * take(self._slope))
        return out.reshape(e.shape)

    def take(self, hours) -> PhotonTable:
        """Table of a subset of hours (any numpy index on the hour axis)."""
        return PhotonTable(self.wavelength_nm, self.irradiance_W_m2_nm[hours])


def step_photocurrents_hourly(table: PhotonTable, gaps_J: np.ndarray) -> np.ndarray:
    """Photocurrent density of every junction of every stack in every hour [A m^-2].

    Parameters
    ----------
    table : PhotonTable
        The ``H`` incident spectra.
    gaps_J : numpy.ndarray
        Band gaps [J], top junction first: ``(M, N)`` (the same every hour) or
        ``(H, M, N)`` (temperature-dependent gaps).

    Returns
    -------
    numpy.ndarray
        ``(H, M, N)``: ``q`` times the photons above each gap that no junction above
        absorbed (step absorptance, as :func:`gapmatch.core.engine.step_photocurrents`).
    """
    g = np.asarray(gaps_J, dtype=float)
    if g.ndim == 2:
        uniq, inv = np.unique(g, return_inverse=True)
        f = table.photon_flux_above(uniq)[:, inv.reshape(g.shape)]
    else:
        f = table.photon_flux_above_rows(g)
    # running maximum over the (few) junctions, column by column: faster than
    # numpy.maximum.accumulate along a short last axis
    out = np.empty_like(f)
    acc = f[..., 0]
    out[..., 0] = acc
    for i in range(1, f.shape[-1]):
        nxt = np.maximum(acc, f[..., i])
        out[..., i] = nxt - acc
        acc = nxt
    return Q * out


def series_mpp_boltzmann(
    jph: np.ndarray, gaps_J: np.ndarray, temperature_K, ere=1.0, emission_factor=1.0
) -> tuple[np.ndarray, np.ndarray]:
    """Exact maximum power point of series strings of Boltzmann detailed-balance diodes.

    Parameters
    ----------
    jph : numpy.ndarray
        Photocurrent densities [A m^-2], ``(R, N)``.
    gaps_J : numpy.ndarray
        Band gaps [J], broadcast to ``(R, N)``.
    temperature_K : float or numpy.ndarray
        Cell temperature [K], broadcast to ``(R, N)``.
    ere : float or numpy.ndarray
        External radiative efficiency in (0, 1].
    emission_factor : float or numpy.ndarray
        Multiplier on hemispherical front emission (dimensionless).

    Returns
    -------
    tuple of numpy.ndarray
        ``(p_mpp [W m^-2], j_mpp [A m^-2])``, each ``(R,)``; zero where a junction
        receives no light.

    Notes
    -----
    Same diodes as :func:`gapmatch.core.diodes.make_diodes` (``"boltzmann"``) and the
    same bracketed Newton iteration on ``f(J) = S / (J S1) - 1`` as
    :func:`gapmatch.core.connections.solve_series`, with its start point; only the
    power and current are formed, which halves the work per row.

    References
    ----------
    .. [1] A. S. Brown and M. A. Green, Physica E 14, 96 (2002).
    """
    jph = np.asarray(jph, dtype=float)
    r, n = jph.shape
    t = np.broadcast_to(np.asarray(temperature_K, dtype=float), (r, n))
    lnj0 = ln_j0_radiative(gaps_J, t, emission_factor) - np.log(ere)
    lnj0 = np.broadcast_to(lnj0, (r, n))
    vt = t * (K_B / Q)
    j0 = np.exp(lnj0)
    rows = np.arange(r)
    lim = np.argmin(jph, axis=1)
    jmin = jph[rows, lim]
    p_out = np.zeros(r)
    j_out = np.zeros(r)
    idx = np.flatnonzero(jmin > 0)
    if idx.size == 0:
        return p_out, j_out
    # (jph - J) + J0 rather than (jph + J0) - J: J0 can be far below jph's rounding
    cols = [
        (
            np.ascontiguousarray(jph[idx, i]),
            np.ascontiguousarray(j0[idx, i]),
            np.ascontiguousarray(lnj0[idx, i]),
            np.ascontiguousarray(vt[idx, i]),
        )
        for i in range(n)
    ]
    hi = jmin[idx]
    tol = XTOL_REL * hi
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        # start: exact when only the limiting junction's voltage varies
        limi = lim[idx]
        j0l = j0[idx, limi]
        vtl = vt[idx, limi]
        v_other = sum(v * (np.log((a - hi) + z) - l0) for a, z, l0, v in cols)
        big_l = np.maximum(1.0 + np.log1p(hi / j0l) + v_other / vtl, 1.0)
        y = np.maximum(big_l - np.log(big_l), 0.5)
        for _ in range(2):
            y = y - (y + np.log(y) - big_l) / (1.0 + 1.0 / y)
        j = np.clip(hi + j0l - (hi + j0l) / y, 0.0, hi)
        j = np.where(np.isfinite(j), j, 0.5 * hi)
        lo = np.zeros(idx.size)
        sel = np.arange(idx.size)
        jfin = np.empty(idx.size)
        for _ in range(200):
            s = s1 = s2 = 0.0
            for a, z, l0, v in cols:
                d = (a - j) + z
                s = s + v * (np.log(d) - l0)
                w = v / d
                s1 = s1 + w
                s2 = s2 + w / d
            js1 = j * s1
            f = s / js1 - 1.0
            fp = -(js1 * s1 + s * s1 + s * j * s2) / (js1 * js1)
            pos = f > 0
            lo = np.where(pos, j, lo)
            hi = np.where(pos, hi, j)
            jn = j - f / fp
            ok = (jn >= lo) & (jn <= hi)
            jn = np.where(ok, jn, 0.5 * (lo + hi))
            done = (np.abs(jn - j) <= tol) | (hi - lo <= tol)
            jfin[sel] = jn
            if done.all():
                break
            keep = ~done
            if keep.sum() < 0.6 * keep.size:
                sel, lo, hi, tol, jn = sel[keep], lo[keep], hi[keep], tol[keep], jn[keep]
                cols = [(a[keep], z[keep], l0[keep], v[keep]) for a, z, l0, v in cols]
            j = jn
        # the voltage at the converged current
        vsum = sum(
            vt[idx, i] * (np.log((jph[idx, i] - jfin) + j0[idx, i]) - lnj0[idx, i])
            for i in range(n)
        )
    j_out[idx] = jfin
    p_out[idx] = jfin * vsum
    return p_out, j_out
