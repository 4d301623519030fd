"""``gapmatch evaluate``: efficiency and operating point of one stack."""

from __future__ import annotations

import argparse

from ..api import evaluate
from ..core.absorption import ABSORBER_MODELS, LIGHT_TRAPPING
from ..core.registry import CONNECTIONS
from ..io.finite import dumps
from ..results import LOSS_LABELS
from .commands import COMMANDS
from .options import add_condition_options, condition_kwargs


def register(sub) -> None:
    p = sub.add_parser(
        "evaluate",
        help=COMMANDS["evaluate"],
        description="Detailed-balance efficiency, maximum power point and per-junction "
        "operating point of one stack of junctions. Theoretical limits, not ratings.",
    )
    p.add_argument(
        "--gaps",
        type=float,
        nargs="+",
        required=True,
        metavar="EV",
        help="band gaps [eV], top junction first, 1 to 6 values in 0.1-5.0, strictly decreasing",
    )
    p.add_argument(
        "--connection",
        default="series",
        choices=CONNECTIONS,
        help="series (two-terminal, current matched), independent (four-/multi-"
        "terminal) or voltage-matched strings (default series)",
    )
    p.add_argument(
        "--cells-per-string",
        type=int,
        nargs="+",
        metavar="N",
        help="voltage-matched only: cells per string for each junction, top first "
        "(default: the best ratio with strings of up to 6 cells for 2-3 junctions, "
        "5/4/3 for 4/5/6)",
    )
    add_condition_options(p)
    add_physics_options(p)
    p.add_argument(
        "--json",
        action="store_true",
        help="print one JSON object (efficiency as a fraction 0-1, unit-suffixed "
        "keys) instead of a table",
    )
    p.set_defaults(func=run)


def add_physics_options(p: argparse.ArgumentParser) -> None:
    """Opt-in non-ideal physics (finite absorbers, coupling, temperature, losses).

    Options taking one value per junction accept one value (all junctions) or one per
    junction, top first."""
    g = p.add_argument_group(
        "beyond the ideal limit (all optional; one value for every junction or one per "
        "junction, top first)"
    )
    g.add_argument(
        "--absorber",
        nargs="+",
        choices=ABSORBER_MODELS,
        metavar="MODEL",
        help="absorptance model: step (default: ideal step at the gap), direct "
        "(square-root edge + Urbach tail), indirect (quadratic edge + Urbach tail) "
        "or table (absorption coefficient from --alpha-file)",
    )
    g.add_argument(
        "--thickness",
        type=float,
        nargs="+",
        metavar="NM",
        help="absorber thickness [nm], 1 to 1e8; needed for non-step absorbers "
        "(any number for step junctions, it is ignored)",
    )
    g.add_argument(
        "--alpha0",
        type=float,
        nargs="+",
        metavar="PER_CM",
        help="absorption coefficient 1 eV above the gap [cm^-1], 1 to 1e7 "
        "(default 5e4 direct, 4.5e3 indirect)",
    )
    g.add_argument(
        "--urbach-energy",
        type=float,
        nargs="+",
        metavar="MEV",
        help="Urbach energy of the sub-gap tail [meV], 0 to 100 (default 0: none)",
    )
    g.add_argument(
        "--alpha-file",
        nargs="+",
        metavar="PATH",
        help="CSV of wavelength [nm], absorption coefficient [cm^-1] for the "
        "'table' junctions, in order (one file for all of them, or one each)",
    )
    g.add_argument(
        "--light-trapping",
        nargs="+",
        choices=LIGHT_TRAPPING,
        metavar="MODE",
        help="single pass (default), double pass (ideal rear mirror) or "
        "lambertian (4 n^2 path enhancement)",
    )
    g.add_argument(
        "--refractive-index",
        type=float,
        nargs="+",
        metavar="N",
        help="absorber refractive index, 1 to 6 (default 3.5): Lambertian trapping "
        "and downward emission",
    )
    g.add_argument(
        "--coupling-fraction",
        type=float,
        nargs="+",
        metavar="C",
        help="model downward emission (n^2 x front): fraction absorbed by the "
        "junction below, 0 to 1 (0: lost), one value or one per interface "
        "(N-1); series or independent only",
    )
    g.add_argument(
        "--emission-half-angle",
        type=float,
        nargs="+",
        metavar="DEG",
        help="front emission cone half-angle [deg], from the sun's half-angle "
        "(0.2666 deg at one sun, times sqrt(concentration)) to 90 (default 90)",
    )
    g.add_argument(
        "--varshni",
        type=float,
        nargs=2,
        action="append",
        metavar=("ALPHA", "BETA"),
        help="Varshni gap temperature model: alpha [eV K^-1] 0-0.01, beta [K] "
        "(0, 5000]; give once for all junctions or once per junction (gaps hold "
        "at --gap-reference-temperature)",
    )
    g.add_argument(
        "--dEg-dT",
        dest="dEg_dT",
        type=float,
        nargs="+",
        metavar="EV_K",
        help="linear gap temperature coefficient [eV K^-1], -0.01 to 0.01",
    )
    g.add_argument(
        "--gap-reference-temperature",
        type=float,
        default=300.0,
        metavar="K",
        help="temperature [K] at which --gaps hold when a gap temperature model "
        "is given, 0-1000 (default 300)",
    )
    g.add_argument(
        "--collection-efficiency",
        type=float,
        nargs="+",
        metavar="ETA",
        help="fraction of absorbed photons collected, (0, 1] (default 1)",
    )
    g.add_argument(
        "--series-resistance",
        type=float,
        nargs="+",
        metavar="OHM_CM2",
        help="series resistance [ohm cm^2], 0-100: one value for the stack (series) "
        "or per sub-cell (independent) (default 0)",
    )


def _one(x):
    if x is None:
        return None
    return x[0] if len(x) == 1 else list(x)


def physics_kwargs(args: argparse.Namespace, n: int) -> dict:
    """Keyword arguments of :func:`gapmatch.evaluate` from :func:`add_physics_options`."""
    kw: dict = {}
    pairs = {
        "absorber": "absorber",
        "thickness": "thickness_nm",
        "alpha0": "alpha0_per_cm",
        "urbach_energy": "urbach_energy_meV",
        "light_trapping": "light_trapping",
        "refractive_index": "refractive_index",
        "coupling_fraction": "coupling_fraction",
        "emission_half_angle": "emission_half_angle_deg",
        "dEg_dT": "dEg_dT_eV_K",
        "collection_efficiency": "collection_efficiency",
        "series_resistance": "series_resistance_ohm_cm2",
    }
    for a, k in pairs.items():
        v = _one(getattr(args, a, None))
        if v is not None:
            kw[k] = v
    if getattr(args, "varshni", None):
        kw["varshni"] = args.varshni[0] if len(args.varshni) == 1 else args.varshni
    kw["gap_reference_K"] = args.gap_reference_temperature
    if getattr(args, "alpha_file", None):
        models = kw.get("absorber", "step")
        models = [models] * n if isinstance(models, str) else list(models)
        if len(models) == 1:
            models = models * n
        tables = [i for i, mdl in enumerate(models) if mdl == "table"]
        files = list(args.alpha_file)
        if len(files) == 1:
            files = files * max(len(tables), 1)
        if len(files) != len(tables):
            from ..errors import InputError

            raise InputError(
                "--alpha-file",
                f"needs one file, or one per 'table' junction ({len(tables)})",
                files,
            )
        per = [None] * n
        for i, f in zip(tables, files, strict=True):
            per[i] = f
        kw["alpha_file"] = per if tables else files[0]
    return kw


def run(args: argparse.Namespace) -> int:
    res = evaluate(
        args.gaps,
        args.connection,
        cells_per_string=args.cells_per_string,
        losses=True,
        **condition_kwargs(args),
        **physics_kwargs(args, len(args.gaps)),
    )
    d = res.stack(0)
    if args.json:
        print(dumps(d, what="evaluate --json", indent=2))
        return 0
    print(format_table(d))
    return 0


def _f(x, spec):
    return "-" if x is None else format(x, spec)


def format_table(d: dict) -> str:
    """Readable text table of one stack's evaluation (units in every header)."""
    lines = [
        f"Stack {' / '.join(f'{g:.3f}' for g in d['gaps_eV'])} eV, {d['connection']} connection",
        f"Spectrum: {d['conditions']['spectrum']}",
        "",
        f"{'efficiency [%]':>16} {'P_mpp [W m^-2]':>15} {'V_oc [V]':>9} {'J_sc [mA cm^-2]':>16} "
        f"{'FF [-]':>7} {'V_mpp [V]':>10} {'J_mpp [mA cm^-2]':>17} {'J_min/J_max [-]':>16}",
        f"{d['efficiency_pct']:16.3f} {d['pmpp_W_m2']:15.2f} {_f(d['voc_V'], '9.4f'):>9} "
        f"{_f(d['jsc_mA_cm2'], '16.3f'):>16} {d['ff']:7.4f} {_f(d['vmpp_V'], '10.4f'):>10} "
        f"{_f(d['jmpp_mA_cm2'], '17.3f'):>17} {d['mismatch_ratio']:16.4f}",
        "",
        f"{'junction':>8} {'E_g [eV]':>9} {'J_ph [mA cm^-2]':>16} {'V_oc [V]':>9} "
        f"{'V [V]':>8} {'J [mA cm^-2]':>13} {'P [W m^-2]':>11} {'share [%]':>10}",
    ]
    for j in d["junctions"]:
        lines.append(
            f"{j['junction']:>8} {j['gap_eV']:9.3f} {j['jph_mA_cm2']:16.3f} {j['voc_V']:9.4f} "
            f"{j['v_op_V']:8.4f} {j['j_op_mA_cm2']:13.3f} {j['p_op_W_m2']:11.2f} "
            f"{100 * j['power_share']:10.2f}"
        )
    if "cells_per_string" in d:
        lines.append(f"cells per string (top first): {':'.join(map(str, d['cells_per_string']))}")
    if "losses_W_m2" in d:
        lines.extend(["", *format_losses(d["losses_W_m2"])])
    if d["connection"] == "independent":
        lines.append(
            "independent connection: no common terminals, so stack V_oc, J_sc, "
            "V_mpp, J_mpp are not defined (-); FF = P_mpp / sum(V_oc J_sc)."
        )
    if "physics" in d["conditions"]:
        lines.append(
            "Detailed-balance model with the non-ideal options given: a theoretical "
            "projection, not a rating; device ratings need accredited measurement "
            "(IEC 60904 series)."
        )
    else:
        lines.append(
            "Detailed-balance limit under ideal assumptions: a theoretical ceiling, not a rating."
        )
    return "\n".join(lines)


def format_losses(lw: dict) -> list[str]:
    """Lines of the loss breakdown table [W m^-2 and % of the incident power]."""
    n = len(lw["junctions"])
    inc = lw["incident"]
    head = f"{'where the incident power goes':<30} {'[W m^-2]':>10} {'[%]':>7}"
    head += "".join(f" {'J' + str(k + 1) + ' [W m^-2]':>13}" for k in range(n))
    lines = [head]
    for key, label in LOSS_LABELS.items():
        if key not in lw:
            continue
        if key == "voltage_radiative" and "carnot" not in lw:
            label = "voltage, radiative limit"
        row = f"{label:<30} {lw[key]:10.2f} {100 * lw[key] / inc:7.2f}"
        for j in lw["junctions"]:
            row += f" {j[key]:13.2f}" if key in j else f" {'-':>13}"
        lines.append(row)
    lines.append(
        f"{'incident':<30} {inc:10.2f} {100.0:7.2f}   (terms add up to within "
        f"{lw['closure_rel']:.1e} relative)"
    )
    return lines
