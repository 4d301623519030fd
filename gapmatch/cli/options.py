"""Options shared by several sub-commands (spectrum and cell conditions)."""

from __future__ import annotations

import argparse

from ..core.spectra import MAX_CONCENTRATION
from ..io.spectra import SPECTRUM_CHOICES


def add_condition_options(p: argparse.ArgumentParser) -> None:
    """Add spectrum, concentration, temperature, ERE and dark-current options."""
    g = p.add_argument_group("spectrum and conditions")
    g.add_argument(
        "--spectrum",
        default="AM1.5G",
        choices=SPECTRUM_CHOICES,
        help="incident spectrum: ASTM G173-03 AM1.5G / AM1.5D / AM0 (via pvlib), "
        "or a blackbody sun (default AM1.5G)",
    )
    g.add_argument(
        "--sun-temperature",
        type=float,
        default=6000.0,
        metavar="K",
        help="blackbody sun temperature [K], 1000-20000 (default 6000; --spectrum blackbody only)",
    )
    g.add_argument(
        "--spectrum-file",
        metavar="PATH",
        help="CSV spectrum: wavelength [nm], spectral irradiance [W m^-2 nm^-1]; "
        "overrides --spectrum",
    )
    g.add_argument(
        "--irradiance",
        type=float,
        metavar="W_M2",
        help="rescale the spectrum to this total irradiance [W m^-2], (0, 1e5] "
        "(default: the spectrum's own integral)",
    )
    g.add_argument(
        "--concentration",
        type=float,
        default=1.0,
        metavar="SUNS",
        help=f"concentration factor [suns], (0, {MAX_CONCENTRATION:.0f}] (default 1)",
    )
    g.add_argument(
        "--temperature",
        type=float,
        default=300.0,
        metavar="K",
        help="cell temperature [K], 100-1000 (default 300)",
    )
    g.add_argument(
        "--ere",
        type=float,
        default=1.0,
        help="external radiative efficiency, [1e-12, 1] (default 1: radiative limit)",
    )
    g.add_argument(
        "--dark-current",
        default="boltzmann",
        choices=["boltzmann", "bose-einstein"],
        help="radiative dark current: Boltzmann approximation (default) or the "
        "exact Bose-Einstein integral",
    )


def condition_kwargs(args: argparse.Namespace) -> dict:
    """Keyword arguments of :func:`gapmatch.evaluate` from the shared options."""
    return dict(
        spectrum=args.spectrum,
        spectrum_file=args.spectrum_file,
        sun_temperature_K=args.sun_temperature,
        irradiance_W_m2=args.irradiance,
        concentration=args.concentration,
        temperature_K=args.temperature,
        ere=args.ere,
        dark_current=args.dark_current,
    )
