"""``gapmatch yield``: annual energy of one stack at a site (a thin layer over
:func:`gapmatch.energy.annual_yield`)."""

from __future__ import annotations

import argparse
import sys

from ..core.connections import CONNECTIONS
from .parsing import name_choice

__all__ = [
    "add_parser",
    "register",
    "run",
    "add_site_arguments",
    "site_from_args",
    "run_site_map",
    "run_site_search",
]


def add_site_arguments(p: argparse.ArgumentParser, *, weather_default: str | None = None) -> None:
    """Add the site options (weather file, plane, mounting, cell temperature) to a parser.

    Shared by ``gapmatch yield``, ``gapmatch map`` and ``gapmatch optimise``: with
    ``--weather`` the latter two work on annual energy at the site instead of one
    spectrum (see :func:`site_from_args`).

    Parameters
    ----------
    p : argparse.ArgumentParser
        The sub-command's parser.
    weather_default : str, optional
        Default of ``--weather`` (``"demo"`` for ``yield``; ``None`` elsewhere: no site
        unless asked).
    """
    from ..energy.choices import (
        CELL_TEMPERATURE_MODELS,
        SAPM_MOUNTINGS,
        TRACKING,
        TRANSPOSITION_MODELS,
        WEATHER_FORMATS,
    )

    g = p.add_argument_group(
        "site (annual energy; modelled limit, not an energy rating: defer to IEC 61853)"
    )
    g.add_argument(
        "--weather",
        default=weather_default,
        metavar="PATH",
        help="TMY3, TMY2, EPW, PVGIS TMY (.json/.csv) or plain CSV weather file, or "
        "'demo' (the Greensboro, NC TMY3 sample shipped with pvlib, NREL open data)"
        + (" (default demo)" if weather_default == "demo" else "; gives annual-energy results"),
    )
    g.add_argument(
        "--weather-format",
        **name_choice(WEATHER_FORMATS),
        help="force the reader (default: detect)",
    )
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
    g.add_argument(
        "--tracking", **name_choice(TRACKING), default="fixed", help="mounting (default fixed)"
    )
    g.add_argument(
        "--albedo", type=float, metavar="A", help="ground albedo, 0-1 (default: file, else 0.2)"
    )
    g.add_argument(
        "--transposition",
        **name_choice(TRANSPOSITION_MODELS),
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
    g.add_argument(
        "--temperature-model",
        **name_choice(CELL_TEMPERATURE_MODELS),
        default="sapm",
        help="cell temperature at the site: pvlib SAPM (default), Faiman, or fixed",
    )
    g.add_argument(
        "--mounting",
        **name_choice(SAPM_MOUNTINGS),
        default="open_rack_glass_glass",
        help="SAPM mounting preset (default open_rack_glass_glass)",
    )
    g.add_argument(
        "--cell-temperature",
        type=float,
        default=298.15,
        metavar="K",
        help="cell temperature [K] of --temperature-model fixed, 200-400 (default 298.15)",
    )


def site_from_args(args: argparse.Namespace):
    """The site's hourly spectra and cell-temperature model from the site options.

    Returns
    -------
    tuple or None
        ``(HourlySpectra, CellTemperature)``, or ``None`` when ``--weather`` is not given.
    """
    weather = getattr(args, "weather", None)
    if not weather:
        return None
    from ..energy import CellTemperature, demo_weather_path, site_spectra

    hs = site_spectra(
        demo_weather_path() if weather == "demo" else weather,
        tilt_deg=args.tilt,
        azimuth_deg=args.azimuth,
        tracking=args.tracking,
        albedo=args.albedo,
        transposition=args.transposition,
        latitude=args.latitude,
        longitude=args.longitude,
        altitude_m=args.altitude,
        weather_format=args.weather_format,
    )
    ct = CellTemperature(args.temperature_model, args.mounting, fixed_K=args.cell_temperature)
    return hs, ct


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
        **name_choice(CONNECTIONS),
        help="connection reported first (series and independent are always solved for "
        "the mismatch loss; default series)",
    )
    add_site_arguments(p, weather_default="demo")
    c = p.add_argument_group("junctions")
    c.add_argument(
        "--ere", type=float, default=1.0, help="external radiative efficiency, (0, 1] (default 1)"
    )
    c.add_argument(
        "--dark-current",
        **name_choice(["boltzmann", "bose-einstein"]),
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
    from ..io.atomic import check_writable, write_atomic

    if args.monthly_csv:  # before anything is computed
        check_writable(args.monthly_csv, "--monthly-csv")
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
        from ..io.finite import dumps

        print(dumps(s, what="yield --json", indent=2, default=str))
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


def _refuse_spectrum_options(args: argparse.Namespace) -> None:
    """With --weather the site gives the spectra and the cell temperatures: refuse the
    one-spectrum options (and a cell temperature, or one ERE per junction) that would
    otherwise be silently unused."""
    from ..errors import InputError

    given = set(getattr(args, "given", ()))
    unused = (
        "--spectrum",
        "--spectrum-file",
        "--spectrum-column",
        "--sun-temperature",
        "--irradiance",
        "--concentration",
        "--temperature",
    )
    shown = [o for o in unused if o in given]
    # without the record of given options (a namespace built by hand): by value
    if not given:
        if getattr(args, "spectrum_file", None):
            shown.append("--spectrum-file")
        if getattr(args, "spectrum", "AM1.5G") != "AM1.5G":
            shown.append("--spectrum")
        if getattr(args, "irradiance", None) is not None:
            shown.append("--irradiance")
        if getattr(args, "concentration", 1.0) != 1.0:
            shown.append("--concentration")
    if shown:
        raise InputError(
            "--weather",
            "the site gives the hourly spectra and cell temperatures (--temperature-model); "
            f"{', '.join(shown)} cannot be used with it",
        )
    ere = getattr(args, "ere", 1.0)
    if isinstance(ere, list) and len(set(ere)) > 1:
        raise InputError(
            "--ere", "takes one value for every junction with --weather (annual energy)", ere
        )


def _one_ere(args: argparse.Namespace) -> float:
    ere = getattr(args, "ere", 1.0)
    return float(ere[0]) if isinstance(ere, list) else float(ere)


def run_site_map(args: argparse.Namespace) -> int:
    """``gapmatch map --weather ...``: annual-energy maps of tandems at a site
    (:func:`gapmatch.energy.maps.yield_map`), series, independent and their difference,
    with the yield and AM1.5G optima marked. ``--out PREFIX`` writes
    ``PREFIX_map.csv``, ``PREFIX_summary.json`` and one HTML figure per kind."""
    from pathlib import Path

    from ..cluster import connect
    from ..energy.maps import yield_map, yield_map_figure
    from ..errors import InputError
    from ..io.atomic import write_atomic
    from ..io.finite import check_frame, dumps

    if getattr(args, "stack", None):
        raise InputError(
            "--weather", "annual-energy maps are of tandems (top x bottom); drop --stack"
        )
    conns = getattr(args, "connections", None) or ["series", "independent"]
    if "voltage-matched" in conns:
        raise InputError(
            "--connections",
            "annual-energy maps show series, independent and their difference",
            conns,
        )
    _refuse_spectrum_options(args)
    hs, ct = site_from_args(args)
    x = tuple(args.x_range)
    y = tuple(args.y_range) if args.y_range else x
    kw = dict(cell_temperature=ct, ere=_one_ere(args), dark_current=args.dark_current)
    with connect(getattr(args, "cluster", None)) as client:
        m = yield_map(hs, x, y, args.step, client=client, progress=sys.stderr.isatty(), **kw)
    summary = m.summary()
    if args.out:
        prefix = Path(args.out)
        frame = check_frame(m.to_frame(), what=f"{prefix}_map.csv")
        text = dumps(summary, what=f"{prefix}_summary.json", indent=2)
        from ..io.csv_fast import frame_csv

        write_atomic(f"{prefix}_map.csv", frame_csv(frame))
        write_atomic(f"{prefix}_summary.json", text)
        for kind in ("series", "independent", "difference"):
            html = yield_map_figure(m, kind).to_html(include_plotlyjs="cdn", full_html=True)
            write_atomic(f"{prefix}_map_{kind}.html", html)
        print(
            f"wrote {prefix}_map.csv, {prefix}_summary.json and "
            f"{prefix}_map_{{series,independent,difference}}.html",
            file=sys.stderr,
        )
    if args.json:
        print(dumps(summary, what="map --json", indent=2))
        return 0
    g = summary["grid"]
    site = summary["assumptions"].get("site", {})
    lines = [
        f"Annual-energy map at {site.get('name') or 'the site'}: top "
        f"{g['top_min_eV']:.3f}-{g['top_max_eV']:.3f} eV x bottom "
        f"{g['bottom_min_eV']:.3f}-{g['bottom_max_eV']:.3f} eV ({g['stacks']} tandems), "
        f"in-plane {summary['poa_irradiation_kWh_m2']:.1f} kWh m^-2 yr^-1",
        f"{'connection':>12} {'optimum':>8} {'gaps [eV]':>13} {'energy [kWh m^-2 yr^-1]':>24} "
        f"{'AM1.5G 25 C [%]':>16}",
    ]
    for c, d in summary["optima"].items():
        for key, label in (("yield_optimum", "yield"), ("am15g_optimum", "AM1.5G")):
            o = d[key]
            gaps = " / ".join(f"{v:.2f}" for v in o["gaps_eV"])
            lines.append(
                f"{c:>12} {label:>8} {gaps:>13} {o['annual_energy_kWh_m2']:24.1f} "
                f"{100 * o['reference_efficiency']:16.2f}"
            )
    lo, hi = summary["mismatch_loss_range"]
    lines.append(f"Series mismatch loss over the grid: {100 * lo:.2f}-{100 * hi:.2f} %")
    lines.append(f"Caution: {summary['caution']}")
    print("\n".join(lines))
    return 0


def run_site_search(
    args: argparse.Namespace,
    problem,
    *,
    trials: int | None,
    seed: int,
    study_name: str | None = None,
) -> int:
    """``gapmatch optimise --weather ...``: yield-optimal gaps at a site with the
    problem's constraints (:func:`gapmatch.energy.search.optimise_yield`), reported with
    the AM1.5G optimum, each on both criteria, the answer evaluated on the full year."""
    from ..energy.search import optimise_yield
    from ..io.atomic import write_atomic
    from ..io.finite import dumps

    _refuse_spectrum_options(args)
    hs, ct = site_from_args(args)
    res = optimise_yield(
        problem,
        hs,
        cell_temperature=ct,
        storage=getattr(args, "storage", None),
        study_name=study_name,
        trials=trials,
        seed=seed,
        workers=getattr(args, "workers", 1),
        sampler=getattr(args, "sampler", "tpe"),
        progress=not getattr(args, "no_progress", False) and sys.stderr.isatty(),
    )
    out = res.to_dict()
    if getattr(args, "csv", None):
        write_atomic(args.csv, res.yield_search.to_frame().to_csv(index=False))
    if getattr(args, "json", False):
        print(dumps(out, what="optimise --json", indent=2))
        return 0
    print(format_site_search(out))
    return 0


def format_site_search(d: dict) -> str:
    """Readable text of :meth:`YieldSearchResult.to_dict`."""
    site = d["assumptions"].get("site", {})
    lines = [
        f"Yield-optimal {len(d['yield_optimum']['gaps_eV'])}-junction stack, "
        f"{d['connection']} connection, at {site.get('name') or 'the site'} "
        f"({d['hours']} daylight hours, in-plane {d['poa_irradiation_kWh_m2']:.1f} "
        "kWh m^-2 yr^-1)",
        f"{'optimum':>8} {'gaps [eV], top first':>26} {'energy [kWh m^-2 yr^-1]':>24} "
        f"{'energy eff. [%]':>16} {'AM1.5G 25 C [%]':>16} {'mismatch loss [%]':>18}",
    ]
    for key, label in (("yield_optimum", "yield"), ("am15g_optimum", "AM1.5G")):
        o = d[key]
        gaps = " / ".join(f"{v:.4f}" for v in o["gaps_eV"])
        lines.append(
            f"{label:>8} {gaps:>26} {o['annual_energy_kWh_m2']:24.2f} "
            f"{100 * o['energy_efficiency']:16.3f} {100 * o['reference_efficiency']:16.3f} "
            f"{100 * o['mismatch_loss']:18.2f}"
        )
    rep = d["representatives"]
    lines.append(
        f"Energy gain of the yield optimum over the AM1.5G optimum: "
        f"{100 * d['energy_gain']:.2f} %; AM1.5G efficiency given up: "
        f"{100 * d['efficiency_cost']:.2f} % (absolute)"
    )
    lines.append(
        (
            f"Searched on {rep} representative spectra (error of the reduced set at the "
            f"answer: {100 * d['reduction_error']:+.2f} %), "
            if rep
            else "Searched on every hour, "
        )
        + (
            "polished and evaluated on the full year."
            if d["full_year_polish"]
            else "evaluated on the full year."
        )
    )
    lines.append(f"Caution: {d['caution']}")
    return "\n".join(lines)
