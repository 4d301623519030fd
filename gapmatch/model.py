"""What a user describes: the illumination, the cell conditions and the stack.

Frozen value objects, each validated once where it is built (the ``from_options``
constructors check every keyword as :func:`gapmatch.evaluate` takes it) and then carried
by every result, so that a follow-up (a J-V curve, a loss table, a re-evaluation at
another temperature, a report) never re-specifies them:

* :class:`Illumination` -- the incident spectrum (standard, blackbody, file) with its
  scaling (irradiance, concentration); a file is read once, when it is built.
* :class:`CellConditions` -- cell temperature, external radiative efficiency and the form
  of the dark current, one value for the stack or one per junction.
* :class:`IlluminationSeries` -- many spectra on one wavelength grid (hours of a year),
  solved against a batch of stacks at once.
* :class:`Stack` -- the band gaps of one stack or a batch of stacks, their connection,
  cells per string (voltage matching) and the opt-in non-ideal physics
  (:class:`NonIdealPhysics`).

Inside, every quantity is SI; the ``from_options`` constructors take the edge units
(eV, nm, ohm cm^2) their keyword names state.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from types import MappingProxyType
from typing import Any

import numpy as np

from .core.engine import DeviceModel
from .core.registry import CONNECTIONS
from .core.spectra import Spectrum
from .errors import InputError
from .io.spectra import get_spectrum
from .limits import check_cell_conditions, check_gaps

__all__ = ["Illumination", "IlluminationSeries", "CellConditions", "NonIdealPhysics", "Stack"]


def _frozen_array(a) -> np.ndarray:
    out = np.array(a, dtype=float)
    out.setflags(write=False)
    return out


def _frozen_value(v):
    """A float stays a float; an array becomes a read-only copy."""
    if np.ndim(v) == 0:
        return float(v)
    return _frozen_array(v)


def _plain(v):
    a = np.asarray(v)
    return a.tolist() if a.ndim else float(a)


@dataclass(frozen=True, eq=False)
class Illumination:
    """The light a stack works under: one spectrum with its scaling.

    Parameters
    ----------
    spectrum : Spectrum
        The incident spectrum, already rescaled and concentrated.
    options : Mapping
        The keywords it was built from (``spectrum``: a name or the unscaled spectrum
        object; ``spectrum_file``, ``sun_temperature_K`` [K], ``irradiance_W_m2``
        [W m^-2], ``concentration`` [suns]), to rebuild it with one of them changed.

    Notes
    -----
    Build it with :meth:`from_options` (validates and reads a file once) or
    :meth:`from_spectrum` (a spectrum object as is). A batch of illuminations (for
    example the hours of a year) shares one wavelength grid: see
    :class:`gapmatch.core.spectra.SpectrumSeries` and
    :func:`gapmatch.core.engine.solve_stacks_series`, which solve every hour against a
    batch of stacks in one vectorised call.
    """

    spectrum: Spectrum
    options: Mapping = field(default_factory=lambda: MappingProxyType({}))

    @classmethod
    def from_options(
        cls,
        spectrum: str | Spectrum = "AM1.5G",
        *,
        spectrum_file: str | Path | None = None,
        sun_temperature_K: float = 6000.0,
        irradiance_W_m2: float | None = None,
        concentration: float = 1.0,
    ) -> Illumination:
        """Resolve and scale a spectrum (see :func:`gapmatch.io.spectra.get_spectrum`).

        Parameters
        ----------
        spectrum : str or Spectrum
            ``"AM1.5G"``, ``"AM1.5D"``, ``"AM0"`` (ASTM G173-03), ``"blackbody"``, or a
            Spectrum object.
        spectrum_file : str or pathlib.Path, optional
            CSV spectrum (wavelength [nm], irradiance [W m^-2 nm^-1]); overrides
            ``spectrum``. Read here, once.
        sun_temperature_K : float
            Blackbody sun temperature [K], 1000-20000 (blackbody only).
        irradiance_W_m2 : float, optional
            Rescale the spectrum to this total [W m^-2] before concentration.
        concentration : float
            Concentration [suns], in (0, 1/sin^2 of the solar half-angle].

        Returns
        -------
        Illumination

        Raises
        ------
        InputError
            For an unknown name, an unreadable file or a value out of range.
        """
        spec = get_spectrum(
            spectrum,
            spectrum_file=spectrum_file,
            sun_temperature_K=sun_temperature_K,
            irradiance_W_m2=irradiance_W_m2,
            concentration=concentration,
        )
        opts = {
            "spectrum": spectrum,  # a name, or the spectrum object as given
            "spectrum_file": None if spectrum_file is None else str(spectrum_file),
            "sun_temperature_K": float(sun_temperature_K),
            "irradiance_W_m2": None if irradiance_W_m2 is None else float(irradiance_W_m2),
            "concentration": float(concentration),
        }
        return cls(spec, MappingProxyType(opts))

    @classmethod
    def from_spectrum(cls, spectrum: Spectrum) -> Illumination:
        """Wrap a spectrum object as it is (no rescaling)."""
        if not isinstance(spectrum, Spectrum):
            raise InputError("spectrum", "must be a Spectrum object", type(spectrum).__name__)
        return cls(spectrum, MappingProxyType({"spectrum": spectrum}))

    @property
    def total_irradiance_W_m2(self) -> float:
        """Incident power density [W m^-2] that efficiencies divide by."""
        return self.spectrum.total_irradiance_W_m2

    @property
    def concentration(self) -> float:
        """Concentration applied [suns]."""
        return float(self.spectrum.concentration)

    def describe(self) -> str:
        """One line: name, integral [W m^-2] and concentration."""
        return self.spectrum.describe()


@dataclass(frozen=True, eq=False)
class CellConditions:
    """Operating conditions of the cells.

    Parameters
    ----------
    temperature_K : float or numpy.ndarray
        Cell temperature [K], one value or one per junction (top first).
    ere : float or numpy.ndarray
        External radiative efficiency (fraction in [1e-12, 1]), one value or one per
        junction.
    dark_current : {"boltzmann", "bose-einstein"}
        Form of the radiative dark current.
    """

    temperature_K: Any = 300.0
    ere: Any = 1.0
    dark_current: str = "boltzmann"

    def __post_init__(self) -> None:
        object.__setattr__(self, "temperature_K", _frozen_value(self.temperature_K))
        object.__setattr__(self, "ere", _frozen_value(self.ere))

    @classmethod
    def from_options(
        cls,
        n_junctions: int,
        temperature_K=300.0,
        ere=1.0,
        dark_current: str = "boltzmann",
    ) -> CellConditions:
        """Validate the conditions of ``n_junctions``-junction stacks.

        Parameters
        ----------
        n_junctions : int
            Junctions per stack (for per-junction values).
        temperature_K : float or array_like
            Cell temperature [K], 100-1000, one value or one per junction.
        ere : float or array_like
            External radiative efficiency in [1e-12, 1], one value or one per junction.
        dark_current : {"boltzmann", "bose-einstein"}
            Form of the radiative dark current.

        Raises
        ------
        InputError
            Naming the field and its allowed range.
        """
        t, e = check_cell_conditions(n_junctions, temperature_K, ere, dark_current)
        return cls(t, e, dark_current)

    def options(self) -> dict:
        """The keywords of :func:`gapmatch.evaluate` that rebuild these conditions."""
        return {
            "temperature_K": self.temperature_K,
            "ere": self.ere,
            "dark_current": self.dark_current,
        }

    def temperature_per_junction(self, n: int) -> np.ndarray:
        """Cell temperature of each junction [K], ``(n,)``."""
        return np.broadcast_to(np.asarray(self.temperature_K, float), (n,))

    def to_dict(self) -> dict:
        """JSON-ready dictionary (per-junction values as lists)."""
        return {
            "temperature_K": _plain(self.temperature_K),
            "ere": _plain(self.ere),
            "dark_current": self.dark_current,
        }


@dataclass(frozen=True, eq=False)
class NonIdealPhysics:
    """The opt-in physics beyond the ideal limit, validated.

    Parameters
    ----------
    device : gapmatch.core.engine.DeviceModel
        The SI model the solver uses (absorbers, thicknesses [m], trapping, refractive
        index, coupling, emission factor, collection, series resistance [ohm m^2], gap
        temperature model).
    settings : Mapping
        The same physics in the units given (``thickness_nm``,
        ``series_resistance_ohm_cm2``, ...), JSON-ready, for display.
    emission : str
        The emission geometry in words.
    options : Mapping
        The keywords of :func:`gapmatch.evaluate` it was built from (to re-evaluate
        the stack under other conditions).
    """

    device: DeviceModel
    settings: Mapping
    emission: str
    options: Mapping

    @property
    def series_resistance_ohm_m2(self) -> np.ndarray:
        """Series resistance [ohm m^2]: one value (the stack, or every sub-cell) or one
        per junction."""
        return np.asarray(self.device.series_resistance_ohm_m2, dtype=float)

    @property
    def coupled(self) -> bool:
        """Whether luminescent coupling between junctions is modelled."""
        return self.device.coupling_fraction is not None


@dataclass(frozen=True, eq=False)
class Stack:
    """One stack, or a batch of stacks of the same design.

    Parameters
    ----------
    gaps_eV : numpy.ndarray
        Band gaps [eV], ``(M, N)``, top junction first (validated; read-only copy). For
        a non-ideal stack with a gap temperature model these hold at the model's
        reference temperature.
    connection : {"series", "independent", "voltage-matched"}
        How the junctions are wired.
    cells_per_string : tuple of int, optional
        Voltage matching: cells per string of each junction; ``None`` chooses the best
        ratio per stack.
    physics : NonIdealPhysics, optional
        ``None`` for the ideal limit (step absorptance, hemispherical front emission,
        full collection, no resistance).
    """

    gaps_eV: np.ndarray
    connection: str = "series"
    cells_per_string: tuple[int, ...] | None = None
    physics: NonIdealPhysics | None = None

    def __post_init__(self) -> None:
        # shape and range (order is the caller's choice: maps evaluate every pair)
        g = np.array(check_gaps(self.gaps_eV, require_descending=False), dtype=float)
        g.setflags(write=False)
        object.__setattr__(self, "gaps_eV", g)
        if self.connection not in CONNECTIONS:
            raise InputError(
                "connection", f"must be one of {', '.join(CONNECTIONS)}", self.connection
            )
        if self.cells_per_string is not None:
            r = tuple(int(x) for x in self.cells_per_string)
            if len(r) != g.shape[1] or min(r) < 1 or r != tuple(self.cells_per_string):
                raise InputError(
                    "cells_per_string",
                    f"needs {g.shape[1]} whole numbers >= 1, one per junction",
                    self.cells_per_string,
                )
            object.__setattr__(self, "cells_per_string", r)

    @property
    def n_junctions(self) -> int:
        """Junctions per stack."""
        return self.gaps_eV.shape[1]

    def __len__(self) -> int:
        return self.gaps_eV.shape[0]

    @property
    def is_ideal(self) -> bool:
        """Whether the stack is in the ideal limit (no opt-in physics)."""
        return self.physics is None


@dataclass(frozen=True, eq=False)
class IlluminationSeries:
    """A batch of illuminations on one wavelength grid (e.g. the daylight hours of a year).

    Parameters
    ----------
    series : gapmatch.core.spectra.SpectrumSeries
        ``H`` spectra [W m^-2 nm^-1] on one wavelength grid [nm].
    duration_h : numpy.ndarray
        How long each spectrum lasts [h], ``(H,)`` (1 for hourly data), for energies.

    Notes
    -----
    Solved against a batch of stacks in one vectorised call by
    :func:`gapmatch.api.solve_series` (no Python loop per hour).
    """

    series: Any
    duration_h: np.ndarray

    def __post_init__(self) -> None:
        h = len(self.series)
        d = np.broadcast_to(np.asarray(self.duration_h, dtype=float), (h,)).copy()
        if not np.all(np.isfinite(d)) or np.any(d <= 0):
            raise InputError("duration_h", "every duration must be finite and > 0 h")
        d.setflags(write=False)
        object.__setattr__(self, "duration_h", d)

    @classmethod
    def from_arrays(
        cls, wavelength_nm, irradiance_W_m2_nm, *, duration_h=1.0, name: str = "spectrum series"
    ) -> IlluminationSeries:
        """Build from a wavelength grid [nm], ``(L,)``, and spectra [W m^-2 nm^-1],
        ``(H, L)``; every spectrum must integrate to a positive irradiance.

        Raises
        ------
        InputError
            For mismatched shapes, non-increasing wavelengths, negative or non-finite
            irradiance, a spectrum integrating to zero, or a duration <= 0 h.
        """
        from .core.spectra import SpectrumSeries

        return cls(SpectrumSeries(wavelength_nm, irradiance_W_m2_nm, name=name), duration_h)

    def __len__(self) -> int:
        return len(self.series)

    @property
    def total_irradiance_W_m2(self) -> np.ndarray:
        """Irradiance of each spectrum [W m^-2], ``(H,)``."""
        return self.series.total_irradiance_W_m2
