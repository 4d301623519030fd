"""``gapmatch yield``: annual energy of one stack at a site (a thin layer over
:func:`gapmatch.energy.annual_yield`)."""

from __future__ import annotations

import argparse
import json
import sys

from ..core.connections import CONNECTIONS

__all__ = ["add_parser", "register", "run"]


def add_parser(subparsers) -> argparse.ArgumentParser:
    """Add the ``yield`` sub-command to an argparse sub-parser group.

    Parameters
    ----------
    subparsers : argparse._SubParsersAction
        The group returned by ``ArgumentParser.add_subparsers``.

    Returns
    -------
    argparse.ArgumentParser
        The sub-command's parser (its ``func`` default is :func:`run`).
    """
    from ..energy.celltemp import CELL_TEMPERATURE_MODELS, SAPM_MOUNTINGS
    from ..energy.geometry import TRACKING
    from ..energy.readers import WEATHER_FORMATS
    from ..energy.spectra import TRANSPOSITION_MODELS

    p = subparsers.add_parser(
        "yield",
        help="annual energy of a stack at a site (hourly spectra, cell temperatures)",
        description="Modelled annual energy of one stack of ideal junctions at a site: "
        "hourly spectra from pvlib's spectrl2 scaled to the weather file's measured "
        "irradiance, transposed to the plane, cell temperatures from pvlib, and the exact "
        "maximum-power point of every hour, in series and independent connection. "
        "A theoretical limit, not an energy rating or a bankable yield assessment: defer "
        "to IEC 61853 and licensed engineering practice.",
    )
    p.add_argument(
        "--weather",
        default="demo",
        metavar="PATH",
        help="TMY3, EPW or plain CSV weather file (default 'demo': the Greensboro, NC "
        "TMY3 sample shipped with pvlib, NREL open data)",
    )
    p.add_argument(
        "--weather-format", choices=WEATHER_FORMATS, help="force the reader (default: detect)"
    )
    p.add_argument(
        "--spectra",
        metavar="PATH",
        help="measured in-plane spectra instead of the model: wide CSV (timestamp, then one "
        "column per wavelength in nm, W m^-2 nm^-1; optional temp_air_C, wind_speed_m_s); "
        "--weather and the site options are then unused",
    )
    p.add_argument(
        "--gaps",
        type=float,
        nargs="+",
        required=True,
        metavar="EV",
        help="band gaps [eV], top junction first, 1 to 6 values in 0.1-5.0, decreasing",
    )
    p.add_argument(
        "--connection",
        default="series",
        choices=CONNECTIONS,
        help="connection reported first (series and independent are always solved for "
        "the mismatch loss; default series)",
    )
    g = p.add_argument_group("site and mounting")
    g.add_argument(
        "--tilt",
        type=float,
        default=30.0,
        metavar="DEG",
        help="plane tilt [deg], 0-90 (default 30)",
    )
    g.add_argument(
        "--azimuth",
        type=float,
        default=180.0,
        metavar="DEG",
        help="plane azimuth [deg], 0-360 clockwise from north, 180 = south (tracker axis "
        "azimuth with --tracking single-axis; default 180)",
    )
    g.add_argument("--tracking", choices=TRACKING, default="fixed", help="mounting (default fixed)")
    g.add_argument(
        "--albedo", type=float, metavar="A", help="ground albedo, 0-1 (default: file, else 0.2)"
    )
    g.add_argument(
        "--transposition",
        choices=TRANSPOSITION_MODELS,
        default="haydavies",
        help="sky-diffuse transposition model (default haydavies)",
    )
    g.add_argument(
        "--latitude", type=float, metavar="DEG", help="override the file's latitude [deg]"
    )
    g.add_argument(
        "--longitude", type=float, metavar="DEG", help="override the file's longitude [deg]"
    )
    g.add_argument("--altitude", type=float, metavar="M", help="override the file's altitude [m]")
    c = p.add_argument_group("cells")
    c.add_argument(
        "--temperature-model",
        choices=CELL_TEMPERATURE_MODELS,
        default="sapm",
        help="cell temperature: pvlib SAPM (default), Faiman, or fixed",
    )
    c.add_argument(
        "--mounting",
        choices=SAPM_MOUNTINGS,
        default="open_rack_glass_glass",
        help="SAPM mounting preset (default open_rack_glass_glass)",
    )
    c.add_argument(
        "--cell-temperature",
        type=float,
        default=298.15,
        metavar="K",
        help="cell temperature [K] of --temperature-model fixed, 200-400 (default 298.15)",
    )
    c.add_argument(
        "--ere", type=float, default=1.0, help="external radiative efficiency, (0, 1] (default 1)"
    )
    c.add_argument(
        "--dark-current",
        choices=["boltzmann", "bose-einstein"],
        default="boltzmann",
        help="radiative dark current form (default boltzmann)",
    )
    p.add_argument(
        "--monthly-csv", metavar="PATH", help="also write the monthly table (CSV, atomic write)"
    )
    p.add_argument(
        "--json",
        action="store_true",
        help="print one JSON object (efficiencies as fractions, unit-suffixed keys)",
    )
    p.set_defaults(func=run)
    return p


#: the CLI package registers sub-command modules through ``register``
register = add_parser


def run(args: argparse.Namespace) -> int:
    """Run ``gapmatch yield``; returns the exit status (input errors propagate as
    :class:`gapmatch.InputError` for the CLI's one-line message)."""
    from ..energy import annual_yield, demo_weather_path
    from ..io.atomic import write_atomic

    weather = demo_weather_path() if args.weather == "demo" else args.weather
    if args.spectra:
        from ..energy import CellTemperature, read_spectra_csv, yield_from_spectra

        ct = CellTemperature(args.temperature_model, args.mounting, fixed_K=args.cell_temperature)
        r = yield_from_spectra(
            read_spectra_csv(args.spectra),
            args.gaps,
            args.connection,
            cell_temperature=ct,
            ere=args.ere,
            dark_current=args.dark_current,
            progress=sys.stderr.isatty(),
        )
        return _print(r, args, write_atomic)
    r = annual_yield(
        weather,
        args.gaps,
        args.connection,
        tilt_deg=args.tilt,
        azimuth_deg=args.azimuth,
        tracking=args.tracking,
        albedo=args.albedo,
        transposition=args.transposition,
        temperature_model=args.temperature_model,
        mounting=args.mounting,
        fixed_temperature_K=args.cell_temperature,
        latitude=args.latitude,
        longitude=args.longitude,
        altitude_m=args.altitude,
        weather_format=args.weather_format,
        ere=args.ere,
        dark_current=args.dark_current,
        progress=sys.stderr.isatty(),
    )
    return _print(r, args, write_atomic)


def _print(r, args, write_atomic) -> int:
    if args.monthly_csv:
        write_atomic(args.monthly_csv, r.monthly_frame().to_csv(index=False))
    s = r.summary(0, args.connection)
    if args.json:
        print(json.dumps(s, indent=2, default=str))
        return 0
    site = s["site"]
    if "latitude_deg" in site:
        print(
            f"Site: {site.get('name') or '(unnamed)'} ({site['latitude_deg']:.2f}, "
            f"{site['longitude_deg']:.2f}), {site['mounting']}; {s['hours']} daylight hours"
        )
    else:
        print(f"Measured spectra: {s['hours']} intervals")
    print(f"Stack: {' / '.join(f'{x:g}' for x in s['gaps_eV'])} eV, {s['connection']}")
    print(f"  in-plane irradiation    {s['poa_irradiation_kWh_m2']:9.1f} kWh m^-2 yr^-1")
    print(f"  annual energy           {s['annual_energy_kWh_m2']:9.1f} kWh m^-2 yr^-1")
    print(f"  energy efficiency       {100 * s['energy_efficiency']:9.2f} %")
    print(f"  AM1.5G 25 C efficiency  {100 * s['reference_efficiency']:9.2f} %")
    if "mismatch_loss" in s:
        print(
            f"  series / independent    {s['annual_energy_series_kWh_m2']:9.1f} / "
            f"{s['annual_energy_independent_kWh_m2']:.1f} kWh m^-2 yr^-1 "
            f"(mismatch loss {100 * s['mismatch_loss']:.2f} %)"
        )
    months = "Jan Feb Mar Apr May Jun Jul Aug Sep Oct Nov Dec".split()
    print(
        "  monthly energy [kWh m^-2]: "
        + ", ".join(f"{m} {e:.1f}" for m, e in zip(months, s["monthly_energy_kWh_m2"], strict=True))
    )
    print(f"Caution: {s['caution']}")
    return 0
