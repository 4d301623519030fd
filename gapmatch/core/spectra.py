"""Incident spectra: tabulated spectra and the blackbody sun.

A spectrum answers the questions the detailed-balance engine asks of it, all vectorised:

* :meth:`Spectrum.photon_flux_above` -- photons per second and m^2 above an energy, so a
  junction's photocurrent is one look-up;
* :meth:`Spectrum.power_above` -- power density carried by those photons;
* :attr:`Spectrum.total_irradiance_W_m2` -- the normalisation of the efficiency.

Integration rule (tabulated spectra): the photon flux per unit wavelength,
``phi_lambda = E_lambda * lambda / (h c)``, and the irradiance ``E_lambda`` are taken as
linear between the tabulated wavelengths (the trapezoid rule on the tabulated points).
Cumulative integrals up to an arbitrary wavelength are the exact integrals of that
piecewise-linear interpolant, so at tabulated points they equal the trapezoid sums. The
efficiency divides by the spectrum's own integral (AM1.5G: 1000.37 W m^-2 for the table
as shipped), not by a nominal 1000 W m^-2.

Blackbody sun: the spectrum of a blackbody at ``T_sun`` seen through the solid angle of
the solar disc, so the photon flux is ``f * C * (2 pi / h^3 c^2) E^2 / (exp(E/kT_sun) - 1)``
with dilution ``f = sin^2(theta_sun)`` and concentration ``C``; ``C = 1/f`` (about 46,200)
fills the hemisphere. All integrals are exact (polylogarithms, see :mod:`.planck`).

References
----------
.. [1] ASTM G173-03, "Standard Tables for Reference Solar Spectral Irradiances: Direct
   Normal and Hemispherical on 37 deg Tilted Surface" (read through pvlib).
.. [2] A. De Vos, "Detailed balance limit of the efficiency of tandem solar cells",
   J. Phys. D 13, 839 (1980) (blackbody sun and dilution factor).
.. [3] IAU 2015 Resolution B3 (nominal solar radius 6.957e8 m), used for the half-angle.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError, check_range
from ..units import AU, K_B, SIGMA, C, H
from . import kernels
from .planck import PLANCK_PREFACTOR, bose_tail

__all__ = [
    "SOLAR_RADIUS_M",
    "SUN_HALF_ANGLE_RAD",
    "SUN_DILUTION",
    "MAX_CONCENTRATION",
    "Spectrum",
    "TabulatedSpectrum",
    "BlackbodySun",
    "SpectrumSeries",
]

#: IAU 2015 nominal solar radius [m]
SOLAR_RADIUS_M: float = 6.957e8
#: angular radius of the solar disc seen from 1 au [rad] (about 0.2665 deg)
SUN_HALF_ANGLE_RAD: float = math.asin(SOLAR_RADIUS_M / AU)
#: dilution factor sin^2(theta_sun), about 2.16e-5
SUN_DILUTION: float = math.sin(SUN_HALF_ANGLE_RAD) ** 2
#: thermodynamic maximum concentration 1 / sin^2(theta_sun), about 46,200
MAX_CONCENTRATION: float = 1.0 / SUN_DILUTION


class Spectrum:
    """Interface shared by every incident spectrum (abstract).

    Attributes
    ----------
    name : str
        Short label, e.g. ``"AM1.5G"``.
    concentration : float
        Geometric concentration applied [suns, dimensionless].
    """

    name: str
    concentration: float

    # -- required by the engine ------------------------------------------------------
    @property
    def total_irradiance_W_m2(self) -> float:
        """Integral of the spectral irradiance [W m^-2]."""
        raise NotImplementedError

    @property
    def max_photon_energy_J(self) -> float:
        """Largest photon energy present [J] (``inf`` for a blackbody)."""
        raise NotImplementedError

    def photon_flux_above(self, energy_J: np.ndarray) -> np.ndarray:
        """Photon flux with photon energy above ``energy_J`` [m^-2 s^-1]."""
        raise NotImplementedError

    def power_above(self, energy_J: np.ndarray) -> np.ndarray:
        """Power density of photons above ``energy_J`` [W m^-2]."""
        raise NotImplementedError

    def spectral_photon_flux(self, energy_J: np.ndarray) -> np.ndarray:
        """Photon flux per unit photon energy [m^-2 s^-1 J^-1] at ``energy_J`` [J]."""
        raise NotImplementedError

    def spectral_irradiance_nm(self, wavelength_nm: np.ndarray) -> np.ndarray:
        """Spectral irradiance [W m^-2 nm^-1] at ``wavelength_nm`` [nm]."""
        raise NotImplementedError

    def plot_grid_nm(self) -> np.ndarray:
        """Wavelengths [nm] on which to draw this spectrum."""
        raise NotImplementedError

    def scaled(
        self, *, irradiance_W_m2: float | None = None, concentration: float = 1.0
    ) -> Spectrum:
        """Return a copy scaled to a total irradiance and/or concentrated.

        Parameters
        ----------
        irradiance_W_m2 : float, optional
            Total irradiance the unconcentrated spectrum is rescaled to [W m^-2],
            in (0, 1e5]. ``None`` keeps the spectrum's own integral.
        concentration : float
            Concentration factor [suns] in (0, MAX_CONCENTRATION] (about 46,200).

        Returns
        -------
        Spectrum
            Scaled copy; its total irradiance is ``irradiance_W_m2 * concentration``.
        """
        raise NotImplementedError

    # -- shared helpers ---------------------------------------------------------------
    @property
    def is_blackbody(self) -> bool:
        """Whether the spectrum is a (diluted) blackbody, for which the Carnot and
        Boltzmann loss terms are defined."""
        return False

    def describe(self) -> str:
        """One-line human description with the integral and concentration."""
        return f"{self.name}: {self.total_irradiance_W_m2:.2f} W m^-2" + (
            f", concentration {self.concentration:g} suns" if self.concentration != 1 else ""
        )


def _check_scaling(irradiance_W_m2: float | None, concentration: float) -> None:
    if irradiance_W_m2 is not None:
        check_range(
            "irradiance_W_m2", irradiance_W_m2, 0.0, 1e5, low_inclusive=False, unit="W m^-2"
        )
    check_range(
        "concentration",
        concentration,
        0.0,
        MAX_CONCENTRATION,
        low_inclusive=False,
        unit="suns (thermodynamic maximum 1/sin^2 of the solar half-angle)",
    )


#: most segment-walk steps per look-up before the bucket index gives way to a binary search
_MAX_BUCKET_PASSES = 16


@dataclass(frozen=True, eq=False)
class TabulatedSpectrum(Spectrum):
    """A spectrum given as spectral irradiance at tabulated wavelengths.

    Parameters
    ----------
    wavelength_nm : numpy.ndarray
        Strictly increasing, finite, positive wavelengths [nm].
    irradiance_W_m2_nm : numpy.ndarray
        Finite, non-negative spectral irradiance [W m^-2 nm^-1] at those wavelengths.
    name : str
        Label used in tables and reports.
    concentration : float
        Concentration already applied to the values [suns]; informational.
    source : str
        Where the table came from (shown in report assumptions).

    Notes
    -----
    The cumulative photon-flux and power tables are precomputed at construction, so
    :meth:`photon_flux_above` costs one binary search per query.
    """

    wavelength_nm: np.ndarray
    irradiance_W_m2_nm: np.ndarray
    name: str = "custom"
    concentration: float = 1.0
    source: str = ""
    _cum_photons: np.ndarray = field(init=False, repr=False)
    _cum_power: np.ndarray = field(init=False, repr=False)
    _phi: np.ndarray = field(init=False, repr=False)
    _bucket: tuple | None = field(init=False, repr=False)

    def __post_init__(self) -> None:
        wl = np.asarray(self.wavelength_nm, dtype=float)
        irr = np.asarray(self.irradiance_W_m2_nm, dtype=float)
        if wl.ndim != 1 or irr.shape != wl.shape:
            raise InputError(
                "spectrum",
                "wavelength and irradiance must be 1-D arrays of equal length",
                (wl.shape, irr.shape),
            )
        if wl.size < 2:
            raise InputError("spectrum", "needs at least two rows", wl.size)
        if not np.all(np.isfinite(wl)) or np.any(wl <= 0):
            raise InputError("spectrum.wavelength_nm", "every wavelength must be finite and > 0 nm")
        if np.any(np.diff(wl) <= 0):
            k = int(np.argmax(np.diff(wl) <= 0)) + 1
            raise InputError(
                "spectrum.wavelength_nm",
                f"wavelengths must be strictly increasing; row {k + 1} is not",
                float(wl[k]),
            )
        if not np.all(np.isfinite(irr)) or np.any(irr < 0):
            k = int(np.argmax(~np.isfinite(irr) | (irr < 0)))
            raise InputError(
                "spectrum.irradiance_W_m2_nm",
                f"irradiance must be finite and >= 0 W m^-2 nm^-1; row {k + 1} is not",
                float(irr[k]),
            )
        object.__setattr__(self, "wavelength_nm", wl)
        object.__setattr__(self, "irradiance_W_m2_nm", irr)
        # photon flux per nm at the nodes [m^-2 s^-1 nm^-1]; overflow is checked below
        with np.errstate(over="ignore", invalid="ignore"):
            phi = irr * wl * 1e-9 / (H * C)
            dl = np.diff(wl)
            cum_photons = np.concatenate(([0.0], np.cumsum(0.5 * dl * (phi[1:] + phi[:-1]))))
            cum_power = np.concatenate(([0.0], np.cumsum(0.5 * dl * (irr[1:] + irr[:-1]))))
        object.__setattr__(self, "_phi", phi)
        object.__setattr__(self, "_cum_photons", cum_photons)
        object.__setattr__(self, "_cum_power", cum_power)
        if not (np.isfinite(self._cum_power[-1]) and np.isfinite(self._cum_photons[-1])):
            raise InputError(
                "spectrum",
                "irradiance or wavelengths too large: the photon and power integrals overflow",
            )
        if self._cum_power[-1] <= 0:
            raise InputError("spectrum", "the spectrum integrates to zero irradiance")
        # bucket index over wavelength: segment look-up in O(1) instead of a binary search
        n_buckets = int(min(max((wl[-1] - wl[0]) / dl.min(), 1.0), 2**20))
        width = (wl[-1] - wl[0]) / n_buckets
        starts = wl[0] + width * np.arange(n_buckets + 1)
        seg = np.clip(np.searchsorted(wl, starts, side="right") - 1, 0, wl.size - 2)
        ends = np.clip(np.searchsorted(wl, starts + width, side="right") - 1, 0, wl.size - 2)
        passes = int(np.max(ends - seg)) if seg.size else 0
        if passes > _MAX_BUCKET_PASSES:
            # very uneven spacing (many points crowded in one bucket): a binary search
            # per query, O(log n), finds the same segment as the bucket walk
            object.__setattr__(self, "_bucket", None)
        else:
            object.__setattr__(self, "_bucket", (1.0 / width, seg, passes))

    # engine interface
    @property
    def total_irradiance_W_m2(self) -> float:
        return float(self._cum_power[-1])

    @property
    def max_photon_energy_J(self) -> float:
        return H * C / (self.wavelength_nm[0] * 1e-9)

    def _cumulative(self, values: np.ndarray, cum: np.ndarray, energy_J) -> np.ndarray:
        """Exact integral from the shortest wavelength up to hc/E of the piecewise-linear
        interpolant of ``values``."""
        e = np.asarray(energy_J, dtype=float)
        wl = self.wavelength_nm
        if self._bucket is not None and kernels.for_light(e.size):
            # compiled: the same arithmetic in one pass per value (identical results)
            if not (e.flags.c_contiguous or e.flags.f_contiguous):
                e = np.ascontiguousarray(e)
            out = np.empty_like(e)
            inv_width, seg, passes = self._bucket
            kernels.lanes().cumulative_above(
                e.ravel(order="K"), wl, values, cum, inv_width, seg, passes, H * C,
                out.ravel(order="K"),
            )  # fmt: skip
            return out
        with np.errstate(divide="ignore"):
            lam = H * C / np.maximum(e, 1e-300) * 1e9
        lam = np.clip(lam, wl[0], wl[-1])
        if self._bucket is None:
            k = np.clip(np.searchsorted(wl, lam, side="right") - 1, 0, wl.size - 2)
        else:
            inv_width, seg, passes = self._bucket
            k = seg[((lam - wl[0]) * inv_width).astype(np.intp)]
            for _ in range(passes):
                k = k + (wl[np.minimum(k + 1, wl.size - 1)] <= lam)
            k = np.minimum(k, wl.size - 2)
        x = lam - wl[k]
        slope = (values[k + 1] - values[k]) / (wl[k + 1] - wl[k])
        return cum[k] + x * (values[k] + 0.5 * x * slope)

    def photon_flux_above(self, energy_J) -> np.ndarray:
        return self._cumulative(self._phi, self._cum_photons, energy_J)

    def power_above(self, energy_J) -> np.ndarray:
        return self._cumulative(self.irradiance_W_m2_nm, self._cum_power, energy_J)

    def spectral_photon_flux(self, energy_J) -> np.ndarray:
        e = np.asarray(energy_J, dtype=float)
        lam = H * C / np.maximum(e, 1e-300) * 1e9
        per_nm = np.interp(lam, self.wavelength_nm, self._phi, left=0.0, right=0.0)
        # |d lambda / d E| = h c / E^2, in nm per J
        return per_nm * (H * C / np.maximum(e, 1e-300) ** 2) * 1e9

    def spectral_irradiance_nm(self, wavelength_nm) -> np.ndarray:
        return np.interp(
            np.asarray(wavelength_nm, dtype=float),
            self.wavelength_nm,
            self.irradiance_W_m2_nm,
            left=0.0,
            right=0.0,
        )

    def plot_grid_nm(self) -> np.ndarray:
        return self.wavelength_nm.copy()

    def scaled(self, *, irradiance_W_m2=None, concentration=1.0) -> TabulatedSpectrum:
        _check_scaling(irradiance_W_m2, concentration)
        factor = 1.0 if irradiance_W_m2 is None else irradiance_W_m2 / self.total_irradiance_W_m2
        factor *= concentration
        return TabulatedSpectrum(
            self.wavelength_nm,
            self.irradiance_W_m2_nm * factor,
            name=self.name,
            concentration=self.concentration * concentration,
            source=self.source,
        )


@dataclass(frozen=True, eq=False)
class BlackbodySun(Spectrum):
    """A blackbody sun at temperature ``sun_temperature_K``, diluted to one sun.

    Parameters
    ----------
    sun_temperature_K : float
        Temperature of the sun's surface [K], in [1000, 20000]; classic detailed-balance
        papers use 6000 K.
    concentration : float
        Concentration [suns] in (0, MAX_CONCENTRATION]; MAX_CONCENTRATION fills the
        hemisphere.
    scale : float
        Extra multiplier on the flux (set by :meth:`scaled` when an irradiance is
        requested); 1 for a geometric blackbody sun.

    References
    ----------
    .. [1] A. De Vos, J. Phys. D 13, 839 (1980).
    """

    sun_temperature_K: float = 6000.0
    concentration: float = 1.0
    scale: float = 1.0
    name: str = "blackbody"

    def __post_init__(self) -> None:
        check_range("sun_temperature_K", self.sun_temperature_K, 1000.0, 20000.0, unit="K")
        check_range(
            "concentration",
            self.concentration,
            0.0,
            MAX_CONCENTRATION,
            low_inclusive=False,
            unit="suns",
        )
        if self.name == "blackbody":
            object.__setattr__(self, "name", f"blackbody {self.sun_temperature_K:g} K")

    @property
    def is_blackbody(self) -> bool:
        return self.scale == 1.0

    @property
    def dilution(self) -> float:
        """Fraction of the hemisphere's etendue the sun fills, ``C sin^2(theta_sun)``."""
        return SUN_DILUTION * self.concentration

    @property
    def _kt(self) -> float:
        return K_B * self.sun_temperature_K

    @property
    def _factor(self) -> float:
        return self.dilution * self.scale * PLANCK_PREFACTOR

    @property
    def total_irradiance_W_m2(self) -> float:
        return self.dilution * self.scale * SIGMA * self.sun_temperature_K**4

    @property
    def max_photon_energy_J(self) -> float:
        return math.inf

    def photon_flux_above(self, energy_J) -> np.ndarray:
        x = np.maximum(np.asarray(energy_J, dtype=float), 0.0) / self._kt
        xs = np.maximum(x, 1e-12)
        return self._factor * self._kt**3 * bose_tail(2, xs, xs)

    def power_above(self, energy_J) -> np.ndarray:
        x = np.maximum(np.asarray(energy_J, dtype=float), 0.0) / self._kt
        xs = np.maximum(x, 1e-12)
        return self._factor * self._kt**4 * bose_tail(3, xs, xs)

    def spectral_photon_flux(self, energy_J) -> np.ndarray:
        e = np.maximum(np.asarray(energy_J, dtype=float), 1e-300)
        return self._factor * e**2 / np.expm1(e / self._kt)

    def spectral_irradiance_nm(self, wavelength_nm) -> np.ndarray:
        lam = np.asarray(wavelength_nm, dtype=float) * 1e-9
        e = H * C / lam
        # photon flux per J times E times |dE/dlambda| (J per m), per nm
        return self.spectral_photon_flux(e) * e * (e / lam) * 1e-9

    def plot_grid_nm(self) -> np.ndarray:
        return np.geomspace(200.0, 5000.0, 1200)

    def scaled(self, *, irradiance_W_m2=None, concentration=1.0) -> BlackbodySun:
        _check_scaling(irradiance_W_m2, concentration)
        scale = self.scale
        if irradiance_W_m2 is not None:
            scale = scale * irradiance_W_m2 / self.total_irradiance_W_m2 * self.concentration
        c_new = self.concentration * concentration
        check_range(
            "concentration", c_new, 0.0, MAX_CONCENTRATION, low_inclusive=False, unit="suns"
        )
        return BlackbodySun(self.sun_temperature_K, c_new, scale)


@dataclass(frozen=True, eq=False)
class SpectrumSeries:
    """A batch of ``H`` spectra on one wavelength grid (e.g. the daylight hours of a year).

    The cumulative photon-flux and power tables of every spectrum, ``(H, L)``, are built
    once at construction with the integration rule of :class:`TabulatedSpectrum` (the
    exact integrals of the piecewise-linear interpolant), so row ``h`` answers exactly as
    ``TabulatedSpectrum(wavelength_nm, irradiance_W_m2_nm[h])`` would. Because the grid is
    shared, the wavelength look-up of a gap is done once for all hours.

    Parameters
    ----------
    wavelength_nm : numpy.ndarray
        Strictly increasing, finite, positive wavelengths [nm], ``(L,)``.
    irradiance_W_m2_nm : numpy.ndarray
        Finite, non-negative spectral irradiance [W m^-2 nm^-1], ``(H, L)``; every row
        must integrate to a positive irradiance.
    name : str
        Label used in tables and reports.
    """

    wavelength_nm: np.ndarray
    irradiance_W_m2_nm: np.ndarray
    name: str = "spectrum series"
    _phi: np.ndarray = field(init=False, repr=False)
    _cum_photons: np.ndarray = field(init=False, repr=False)
    _cum_power: np.ndarray = field(init=False, repr=False)

    def __post_init__(self) -> None:
        wl = np.asarray(self.wavelength_nm, dtype=float)
        irr = np.atleast_2d(np.asarray(self.irradiance_W_m2_nm, dtype=float))
        if wl.ndim != 1 or irr.ndim != 2 or irr.shape[1] != wl.size:
            raise InputError(
                "spectrum series",
                "needs wavelengths (L,) and irradiance (H, L) on that grid",
                (wl.shape, irr.shape),
            )
        if wl.size < 2 or not np.all(np.isfinite(wl)) or np.any(wl <= 0):
            raise InputError(
                "spectrum series.wavelength_nm", "needs two or more finite wavelengths > 0 nm"
            )
        if np.any(np.diff(wl) <= 0):
            raise InputError(
                "spectrum series.wavelength_nm", "wavelengths must be strictly increasing"
            )
        if not np.all(np.isfinite(irr)) or np.any(irr < 0):
            raise InputError(
                "spectrum series.irradiance_W_m2_nm",
                "irradiance must be finite and >= 0 W m^-2 nm^-1",
            )
        phi = irr * wl * 1e-9 / (H * C)
        dl = np.diff(wl)
        zero = np.zeros((irr.shape[0], 1))
        cum_ph = np.concatenate((zero, np.cumsum(0.5 * dl * (phi[:, 1:] + phi[:, :-1]), axis=1)), 1)
        cum_p = np.concatenate((zero, np.cumsum(0.5 * dl * (irr[:, 1:] + irr[:, :-1]), axis=1)), 1)
        if np.any(cum_p[:, -1] <= 0):
            h = int(np.argmax(cum_p[:, -1] <= 0))
            raise InputError(
                "spectrum series.irradiance_W_m2_nm",
                f"spectrum {h} integrates to zero irradiance (leave such hours out)",
            )
        for k, v in (
            ("wavelength_nm", wl),
            ("irradiance_W_m2_nm", irr),
            ("_phi", phi),
            ("_cum_photons", cum_ph),
            ("_cum_power", cum_p),
        ):
            v.setflags(write=False)
            object.__setattr__(self, k, v)

    def __len__(self) -> int:
        return self.irradiance_W_m2_nm.shape[0]

    @property
    def total_irradiance_W_m2(self) -> np.ndarray:
        """Integral of every spectrum [W m^-2], ``(H,)``."""
        return self._cum_power[:, -1].copy()

    def _cumulative(self, values, cum, energy_J) -> np.ndarray:
        e = np.asarray(energy_J, dtype=float)
        wl = self.wavelength_nm
        with np.errstate(divide="ignore"):
            lam = H * C / np.maximum(e, 1e-300) * 1e9
        lam = np.clip(lam, wl[0], wl[-1])
        k = np.clip(np.searchsorted(wl, lam, side="right") - 1, 0, wl.size - 2)
        x = lam - wl[k]
        slope = (values[:, k + 1] - values[:, k]) / (wl[k + 1] - wl[k])
        return cum[:, k] + x * (values[:, k] + 0.5 * x * slope)

    def photon_flux_above(self, energy_J) -> np.ndarray:
        """Photon flux above ``energy_J`` [J] of every spectrum [m^-2 s^-1],
        shape ``(H, *energy_J.shape)``."""
        return self._cumulative(self._phi, self._cum_photons, energy_J)

    def power_above(self, energy_J) -> np.ndarray:
        """Power density of the photons above ``energy_J`` [J] [W m^-2],
        shape ``(H, *energy_J.shape)``."""
        return self._cumulative(self.irradiance_W_m2_nm, self._cum_power, energy_J)

    def spectrum(self, h: int) -> TabulatedSpectrum:
        """Spectrum ``h`` on its own."""
        return TabulatedSpectrum(
            self.wavelength_nm, self.irradiance_W_m2_nm[h], name=f"{self.name} [{h}]"
        )
