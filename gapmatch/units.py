"""Physical constants and unit conversions used at the edges of the package.

The constants are the exact defining constants of the SI (2019) and the Stefan-Boltzmann
constant derived from them, written out so that importing gapmatch does not import
scipy; ``tests/test_model.py`` checks every one equal to :mod:`scipy.constants`. Inside
gapmatch quantities are SI: energies in J, current densities in A m^-2, power densities
in W m^-2. The helpers below convert to the units users read (eV, nm, mA cm^-2, %).

References
----------
.. [1] BIPM, The International System of Units (SI), 9th edition (2019), Table 1.
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "Q",
    "H",
    "C",
    "K_B",
    "SIGMA",
    "HC_EV_NM",
    "EV",
    "AU",
    "ev_to_j",
    "j_to_ev",
    "nm_to_ev",
    "ev_to_nm",
    "a_m2_to_ma_cm2",
    "ma_cm2_to_a_m2",
    "thermal_voltage",
    "nm_to_m",
    "mev_to_j",
    "per_cm_to_per_m",
    "ohm_cm2_to_ohm_m2",
    "ohm_m2_to_ohm_cm2",
]

#: elementary charge [C] (exact)
Q: float = 1.602176634e-19
#: Planck constant [J s] (exact)
H: float = 6.62607015e-34
#: speed of light in vacuum [m s^-1] (exact)
C: float = 299792458.0
#: Boltzmann constant [J K^-1] (exact)
K_B: float = 1.380649e-23
#: Stefan-Boltzmann constant 2 pi^5 k^4 / (15 h^3 c^2) [W m^-2 K^-4], as scipy.constants
SIGMA: float = 5.6703744191844314e-08
#: one electronvolt [J] (exact)
EV: float = Q
#: astronomical unit [m] (exact, IAU 2012 Resolution B2)
AU: float = 149597870700.0
#: h c / q [nm eV], about 1239.84
HC_EV_NM: float = H * C / Q * 1e9


def ev_to_j(e_ev):
    """Convert energy from eV to J."""
    return np.asarray(e_ev, dtype=float) * EV


def j_to_ev(e_j):
    """Convert energy from J to eV."""
    return np.asarray(e_j, dtype=float) / EV


def nm_to_ev(wavelength_nm):
    """Photon energy [eV] of a vacuum wavelength [nm]."""
    return HC_EV_NM / np.asarray(wavelength_nm, dtype=float)


def ev_to_nm(energy_ev):
    """Vacuum wavelength [nm] of a photon energy [eV]."""
    return HC_EV_NM / np.asarray(energy_ev, dtype=float)


def a_m2_to_ma_cm2(j):
    """Convert current density from A m^-2 to mA cm^-2 (factor 0.1)."""
    return np.asarray(j, dtype=float) * 0.1


def ma_cm2_to_a_m2(j):
    """Convert current density from mA cm^-2 to A m^-2 (factor 10)."""
    return np.asarray(j, dtype=float) * 10.0


def thermal_voltage(temperature_k):
    """Thermal voltage k T / q [V] at cell temperature ``temperature_k`` [K]."""
    return K_B * np.asarray(temperature_k, dtype=float) / Q


def nm_to_m(length_nm):
    """Convert a length from nm to m (factor 1e-9)."""
    return np.asarray(length_nm, dtype=float) * 1e-9


def mev_to_j(e_mev):
    """Convert energy from meV to J."""
    return np.asarray(e_mev, dtype=float) * 1e-3 * EV


def per_cm_to_per_m(alpha_per_cm):
    """Convert an absorption coefficient from cm^-1 to m^-1 (factor 100)."""
    return np.asarray(alpha_per_cm, dtype=float) * 100.0


def ohm_cm2_to_ohm_m2(r_ohm_cm2):
    """Convert an area-specific resistance from ohm cm^2 to ohm m^2 (factor 1e-4)."""
    return np.asarray(r_ohm_cm2, dtype=float) * 1e-4


def ohm_m2_to_ohm_cm2(r_ohm_m2):
    """Convert an area-specific resistance from ohm m^2 to ohm cm^2 (factor 1e4)."""
    return np.asarray(r_ohm_m2, dtype=float) * 1e4
