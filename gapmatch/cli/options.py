"""Options shared by several sub-commands (spectrum and cell conditions).

Option names follow one rule: a flag is its study-file key with ``_`` -> ``-`` and the
unit suffix dropped (``temperature_K`` -> ``--temperature``); the unit is in the help.
:data:`FLAGS` maps the Python API's parameter names back to the flags, so that an error
raised deep in the API names the option the user typed.
"""

from __future__ import annotations

import argparse

from ..core.diodes import DARK_MODELS
from ..core.spectra import MAX_CONCENTRATION
from ..errors import InputError
from ..io.spectra import SPECTRUM_CHOICES
from .parsing import names

#: Python API parameter -> command-line option (for error messages)
FLAGS: dict[str, str] = {
    "spectrum": "--spectrum",
    "spectrum_file": "--spectrum-file",
    "spectrum_column": "--spectrum-column",
    "sun_temperature_K": "--sun-temperature",
    "irradiance_W_m2": "--irradiance",
    "concentration": "--concentration",
    "temperature_K": "--temperature",
    "ere": "--ere",
    "dark_current": "--dark-current",
    "gaps_eV": "--gaps",
    "connection": "--connection",
    "cells_per_string": "--cells-per-string",
    "storage": "--storage",
    "seed": "--seed",
    "trials": "--trials",
    "workers": "--workers",
    "study_name": "--search-name",
    "min_mismatch_ratio": "--min-photocurrent-ratio",
    "min_spacing_eV": "--min-spacing",
    "bounds_eV": "--bounds",
    "fixed_eV": "--fix",
    "robustness_eV": "--robustness",
    "x_range_eV": "--x-gap-range",
    "y_range_eV": "--y-gap-range",
    "step_eV": "--step",
    "stack_eV": "--stack",
    "axes": "--axes",
    "others": "--other-gaps",
    "tolerance_pct": "--tolerance",
    "thickness_nm": "--thickness",
    "absorber": "--absorber",
    "alpha0_per_cm": "--alpha0",
    "urbach_energy_meV": "--urbach-energy",
    "alpha_file": "--alpha-file",
    "light_trapping": "--light-trapping",
    "refractive_index": "--refractive-index",
    "coupling_fraction": "--coupling-fraction",
    "emission_half_angle_deg": "--emission-half-angle",
    "varshni": "--varshni-alpha/--varshni-beta",
    "varshni alpha": "--varshni-alpha",
    "varshni beta": "--varshni-beta",
    "dEg_dT_eV_K": "--gap-temperature-coefficient",
    "gap_reference_K": "--gaps-at-temperature",
    "collection_efficiency": "--collection-efficiency",
    "series_resistance_ohm_cm2": "--series-resistance",
}

#: blackbody sun temperature when none is given [K] (classic detailed-balance papers)
DEFAULT_SUN_TEMPERATURE_K = 6000.0


def concentration_help() -> str:
    """The allowed concentration as the check states it (both from MAX_CONCENTRATION)."""
    return (
        f"concentration factor [suns], (0, {MAX_CONCENTRATION:g}] (the thermodynamic "
        "maximum 1/sin^2 of the solar half-angle) (default 1)"
    )


def add_condition_options(p: argparse.ArgumentParser, *, per_junction: bool = True) -> None:
    """Add spectrum, concentration, temperature, ERE and dark-current options.

    Parameters
    ----------
    p : argparse.ArgumentParser
        The sub-command's parser.
    per_junction : bool
        ``--temperature`` and ``--ere`` take one value for every junction or one per
        junction, top first.
    """
    g = p.add_argument_group("spectrum and conditions")
    spectrum_type, spectrum_names = names(SPECTRUM_CHOICES)
    g.add_argument(
        "--spectrum",
        default="AM1.5G",
        type=spectrum_type,
        choices=spectrum_names,
        help="incident spectrum: ASTM G173-03 AM1.5G / AM1.5D / AM0 (via pvlib), "
        "or a blackbody sun; any case (default AM1.5G). AM0 is the G173 extraterrestrial "
        "column (1347.9 W m^-2; space work often uses 1361-1366: --irradiance); one sun "
        "of AM1.5D is 900.1 W m^-2 (--irradiance 1000 for 1000 W m^-2 per sun)",
    )
    g.add_argument(
        "--sun-temperature",
        type=float,
        default=None,
        metavar="K",
        help="blackbody sun temperature [K], 1000-20000 (default 6000; --spectrum blackbody only)",
    )
    g.add_argument(
        "--spectrum-file",
        metavar="PATH",
        help="CSV spectrum: wavelength [nm], spectral irradiance [W m^-2 nm^-1]; "
        "replaces --spectrum",
    )
    g.add_argument(
        "--spectrum-column",
        metavar="NAME_OR_NUMBER",
        help="irradiance column of --spectrum-file: its header name, or its number in "
        "the file (the wavelength column is 1); needed when the file has more than two "
        "columns",
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
        help=concentration_help(),
    )
    many = "+" if per_junction else None
    each = "; one value for every junction or one per junction, top first" * per_junction
    g.add_argument(
        "--temperature",
        type=float,
        nargs=many,
        default=300.0,
        metavar="K",
        help=f"cell temperature [K], 100-1000{each} (default 300)",
    )
    g.add_argument(
        "--ere",
        type=float,
        nargs=many,
        default=1.0,
        help=f"external radiative efficiency, [1e-12, 1]{each} (default 1: radiative limit)",
    )
    dark_type, dark_names = names(DARK_MODELS)
    g.add_argument(
        "--dark-current",
        default="boltzmann",
        type=dark_type,
        choices=dark_names,
        help="radiative dark current: Boltzmann approximation (default) or the "
        "exact Bose-Einstein integral (needed when qV_oc comes near the gap, at high "
        "concentration); any case",
    )


def _per_junction(values, flag: str, n: int | None):
    """One value (a float) or one per junction (a list); ``n`` checks the count."""
    if values is None or isinstance(values, (int, float)):
        return values
    values = [float(v) for v in values]
    if len(values) == 1:
        return values[0]
    if n is not None and len(values) != n:
        raise InputError(
            flag, f"needs one value, or one per junction ({n}); {len(values)} were given"
        )
    return values


def _column(text: str | None):
    if text is None:
        return None
    s = str(text).strip()
    return int(s) if s.isdigit() else s


def check_spectrum_options(args: argparse.Namespace) -> None:
    """Refuse spectrum options that the chosen spectrum would silently ignore."""
    file = getattr(args, "spectrum_file", None)
    if getattr(args, "spectrum_column", None) is not None and not file:
        raise InputError("--spectrum-column", "applies to --spectrum-file only")
    given = set(getattr(args, "given", ()))
    if file and "--spectrum" in given:
        raise InputError(
            "--spectrum", f"cannot be used with --spectrum-file (which gives the spectrum {file})"
        )
    sun = getattr(args, "sun_temperature", None)
    if sun is not None and (file or args.spectrum != "blackbody"):
        used = f"--spectrum-file {file}" if file else f"--spectrum {args.spectrum}"
        raise InputError(
            "--sun-temperature",
            f"applies to --spectrum blackbody only; {used} has a temperature of its own",
        )


def condition_kwargs(args: argparse.Namespace, n: int | None = None) -> dict:
    """Keyword arguments of :func:`gapmatch.evaluate` from the shared options.

    Parameters
    ----------
    args : argparse.Namespace
        Parsed options of :func:`add_condition_options`.
    n : int, optional
        Junctions per stack, to check the count of per-junction values.
    """
    check_spectrum_options(args)
    kw = dict(
        spectrum=args.spectrum,
        spectrum_file=args.spectrum_file,
        sun_temperature_K=(
            DEFAULT_SUN_TEMPERATURE_K if args.sun_temperature is None else args.sun_temperature
        ),
        irradiance_W_m2=args.irradiance,
        concentration=args.concentration,
        temperature_K=_per_junction(args.temperature, "--temperature", n),
        ere=_per_junction(args.ere, "--ere", n),
        dark_current=args.dark_current,
    )
    column = _column(getattr(args, "spectrum_column", None))
    if column is not None:
        # the file's column is read here, and the spectrum passed on as an object
        from ..io.spectra import get_spectrum

        kw["spectrum"] = get_spectrum(
            args.spectrum,
            spectrum_file=args.spectrum_file,
            spectrum_column=column,
            irradiance_W_m2=args.irradiance,
        )
        kw["spectrum_file"] = None
        kw["irradiance_W_m2"] = None
    return kw


#: integrals of the ASTM G173-03 columns [W m^-2] (trapezoid over pvlib's packaged table;
#: tests/test_cli_outputs.py integrates pvlib's data again)
G173_AM0_W_M2 = 1347.9
G173_AM15D_W_M2 = 900.1


def output_notes(args: argparse.Namespace) -> list[str]:
    """Notes on the spectrum a reader of the numbers needs (AM0 and AM1.5D scales).

    Parameters
    ----------
    args : argparse.Namespace
        Parsed options of :func:`add_condition_options`.

    Returns
    -------
    list of str
        One sentence per note (empty for AM1.5G, blackbody and spectrum files).
    """
    if getattr(args, "spectrum_file", None) or getattr(args, "irradiance", None) is not None:
        return []
    name = getattr(args, "spectrum", None)
    c = getattr(args, "concentration", 1.0) or 1.0
    if name == "AM0":
        return [
            f"AM0 is the ASTM G173-03 extraterrestrial column, {G173_AM0_W_M2:g} W m^-2; "
            "space work often normalises to a solar constant of about 1361-1366 W m^-2 "
            "(give --irradiance 1361)."
        ]
    if name == "AM1.5D":
        at = f" ({c:g} suns = {c * G173_AM15D_W_M2 / 1000:,.1f} kW m^-2)" if c != 1 else ""
        return [
            f"One sun of AM1.5D (ASTM G173-03 direct) is {G173_AM15D_W_M2:g} W m^-2{at}; "
            "give --irradiance 1000 for suns of 1000 W m^-2."
        ]
    return []
