"""``gapmatch evaluate``: efficiency and operating point of one stack."""

from __future__ import annotations

import argparse
import sys

from ..api import evaluate
from ..core.absorption import ABSORBER_MODELS, LIGHT_TRAPPING
from ..core.registry import CONNECTIONS
from ..errors import InputError
from ..io.finite import dumps
from ..results import LOSS_LABELS
from .commands import COMMANDS
from .options import add_condition_options, condition_kwargs, output_notes
from .parsing import names, old_spelling

CONNECTION_TYPE, CONNECTION_NAMES = names(CONNECTIONS)
#: the absorber model reading --alpha-file is called after its option
ABSORBER_TYPE, ABSORBER_NAMES = names(ABSORBER_MODELS, shown={"table": "alpha-file"})
TRAPPING_TYPE, TRAPPING_NAMES = names(LIGHT_TRAPPING)


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
        type=CONNECTION_TYPE,
        choices=CONNECTION_NAMES,
        help="series (two-terminal, current matched), independent (four-/multi-"
        "terminal) or voltage-matched strings; any case (default series)",
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
        type=ABSORBER_TYPE,
        choices=ABSORBER_NAMES,
        metavar="MODEL",
        help="absorptance model: step (default: ideal step at the gap), direct "
        "(square-root edge + Urbach tail), indirect (quadratic edge + Urbach tail) "
        "or alpha-file (absorption coefficient tabulated in --alpha-file; 'table' "
        "is accepted too)",
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
        "--absorber alpha-file junctions, in order (one file for all of them, or one each)",
    )
    g.add_argument(
        "--light-trapping",
        nargs="+",
        type=TRAPPING_TYPE,
        choices=TRAPPING_NAMES,
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
    t = p.add_argument_group(
        "gap temperature model (the gaps of --gaps hold at --gaps-at-temperature; the "
        "cell works at --temperature)"
    )
    t.add_argument(
        "--varshni-alpha",
        type=float,
        nargs="+",
        metavar="EV_PER_K",
        help="Varshni alpha [eV K^-1], 0 to 0.01, e.g. 4.73e-4; with --varshni-beta: "
        "E_g(T) = E_g(0) - alpha T^2 / (T + beta)",
    )
    t.add_argument(
        "--varshni-beta",
        type=float,
        nargs="+",
        metavar="K",
        help="Varshni beta [K], (0, 5000], e.g. 636; with --varshni-alpha",
    )
    old_varshni = t.add_argument(
        "--varshni",
        dest="varshni_pairs",
        type=float,
        nargs=2,
        action="append",
        help=argparse.SUPPRESS,
    )
    old_varshni.renamed_to = "--varshni-alpha and --varshni-beta"
    coeff = t.add_argument(
        "--gap-temperature-coefficient",
        dest="dEg_dT",
        type=float,
        nargs="+",
        metavar="EV_PER_K",
        help="linear gap temperature coefficient dE_g/dT [eV K^-1], -0.01 to 0.01 "
        "(instead of Varshni)",
    )
    old_spelling(t, "--dEg-dT", coeff)
    ref = t.add_argument(
        "--gaps-at-temperature",
        dest="gap_reference_temperature",
        type=float,
        default=300.0,
        metavar="K",
        help="temperature [K] at which the --gaps values hold, 0-1000 (default 300); "
        "the tables show the gaps at the cell temperature",
    )
    old_spelling(t, "--gap-reference-temperature", ref)
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


#: options of add_physics_options: namespace name -> (option, keyword of evaluate,
#: how many values besides one: "n" one per junction, "n-1" one per interface)
PHYSICS_OPTIONS = {
    "absorber": ("--absorber", "absorber", "n"),
    "thickness": ("--thickness", "thickness_nm", "n"),
    "alpha0": ("--alpha0", "alpha0_per_cm", "n"),
    "urbach_energy": ("--urbach-energy", "urbach_energy_meV", "n"),
    "light_trapping": ("--light-trapping", "light_trapping", "n"),
    "refractive_index": ("--refractive-index", "refractive_index", "n"),
    "coupling_fraction": ("--coupling-fraction", "coupling_fraction", "n-1"),
    "emission_half_angle": ("--emission-half-angle", "emission_half_angle_deg", "n"),
    "dEg_dT": ("--gap-temperature-coefficient", "dEg_dT_eV_K", "n"),
    "collection_efficiency": ("--collection-efficiency", "collection_efficiency", "n"),
    "series_resistance": ("--series-resistance", "series_resistance_ohm_cm2", "n"),
}


def _count(flag: str, values: list, n: int, per: str = "n") -> None:
    want = n - 1 if per == "n-1" else n
    what = "interface" if per == "n-1" else "junction"
    if len(values) not in (1, want):
        raise InputError(
            flag,
            f"needs one value, or one per {what} ({want} for {n} junctions); "
            f"{len(values)} were given",
        )


def _varshni(args: argparse.Namespace, n: int):
    """The Varshni pairs from --varshni-alpha / --varshni-beta (or the old --varshni)."""
    pairs = getattr(args, "varshni_pairs", None)
    alpha = getattr(args, "varshni_alpha", None)
    beta = getattr(args, "varshni_beta", None)
    if pairs:
        print("note: --varshni is now --varshni-alpha and --varshni-beta", file=sys.stderr)
        if alpha or beta:
            raise InputError("--varshni", "give --varshni-alpha and --varshni-beta instead")
        alpha, beta = [a for a, _ in pairs], [b for _, b in pairs]
    if alpha is None and beta is None:
        return None
    if alpha is None or beta is None:
        missing = "--varshni-beta" if beta is None else "--varshni-alpha"
        raise InputError(missing, "is needed with the other Varshni parameter")
    _count("--varshni-alpha", alpha, n)
    _count("--varshni-beta", beta, n)
    if len(alpha) == 1 and len(beta) == 1:
        return (alpha[0], beta[0])
    alpha = alpha * n if len(alpha) == 1 else alpha
    beta = beta * n if len(beta) == 1 else beta
    return [(a, b) for a, b in zip(alpha, beta, strict=True)]


def physics_kwargs(args: argparse.Namespace, n: int) -> dict:
    """Keyword arguments of :func:`gapmatch.evaluate` from :func:`add_physics_options`.

    Every per-junction option takes one value or one per junction (``--coupling-fraction``:
    one per interface); another count is an :class:`InputError` naming the option.
    """
    kw: dict = {}
    for a, (flag, k, per) in PHYSICS_OPTIONS.items():
        values = getattr(args, a, None)
        if values is None:
            continue
        _count(flag, values, n, per)
        kw[k] = _one(values)
    varshni = _varshni(args, n)
    if varshni is not None:
        if "dEg_dT_eV_K" in kw:
            raise InputError(
                "--gap-temperature-coefficient", "cannot be used with --varshni-alpha/-beta"
            )
        kw["varshni"] = varshni
    kw["gap_reference_K"] = args.gap_reference_temperature
    if getattr(args, "alpha_file", None):
        models = kw.get("absorber", "step")
        models = [models] * n if isinstance(models, str) else list(models)
        if len(models) == 1:
            models = models * n
        tables = [i for i, mdl in enumerate(models) if mdl == "table"]
        files = list(args.alpha_file)
        if not tables:
            raise InputError(
                "--alpha-file", "is read by --absorber alpha-file junctions only; none is given"
            )
        if len(files) == 1:
            files = files * len(tables)
        if len(files) != len(tables):
            raise InputError(
                "--alpha-file",
                f"needs one file, or one per --absorber alpha-file junction ({len(tables)}); "
                f"{len(files)} were given",
            )
        per = [None] * n
        for i, f in zip(tables, files, strict=True):
            per[i] = f
        kw["alpha_file"] = per
    return kw


def run(args: argparse.Namespace) -> int:
    n = len(args.gaps)
    res = evaluate(
        args.gaps,
        args.connection,
        cells_per_string=args.cells_per_string,
        losses=True,
        **condition_kwargs(args, n),
        **physics_kwargs(args, n),
    )
    d = res.stack(0)
    d["notes"] = output_notes(args)
    if args.json:
        print(dumps(d, what="evaluate --json", indent=2))
        return 0
    print(format_table(d))
    return 0


def _f(x, spec):
    return "-" if x is None else format(x, spec)


def format_table(d: dict) -> str:
    """Readable text table of one stack's evaluation (units in every header)."""
    at_cell = all("gap_cell_eV" in j for j in d["junctions"])
    gap_head = "E_g at T_cell [eV]" if at_cell else "E_g [eV]"
    lines = [
        f"Stack {' / '.join(f'{g:.3f}' for g in d['gaps_eV'])} eV, {d['connection']} connection",
        f"Spectrum: {d['conditions']['spectrum']}",
        *(f"Note: {x}" for x in d.get("notes", [])),
        "",
        f"{'efficiency [%]':>16} {'P_mpp [W m^-2]':>15} {'V_oc [V]':>9} {'J_sc [mA cm^-2]':>16} "
        f"{'FF [-]':>7} {'V_mpp [V]':>10} {'J_mpp [mA cm^-2]':>17} "
        f"{'photocurrent ratio min/max [-]':>31}",
        f"{d['efficiency_pct']:16.3f} {d['pmpp_W_m2']:15.2f} {_f(d['voc_V'], '9.4f'):>9} "
        f"{_f(d['jsc_mA_cm2'], '16.3f'):>16} {d['ff']:7.4f} {_f(d['vmpp_V'], '10.4f'):>10} "
        f"{_f(d['jmpp_mA_cm2'], '17.3f'):>17} {d['mismatch_ratio']:31.4f}",
        "",
        f"{'junction':>8} {gap_head:>{max(9, len(gap_head))}} {'J_ph [mA cm^-2]':>16} "
        f"{'V_oc [V]':>9} {'V [V]':>8} {'J [mA cm^-2]':>13} {'P [W m^-2]':>11} "
        f"{'share [%]':>10}",
    ]
    width = max(9, len(gap_head))
    for j in d["junctions"]:
        gap = j["gap_cell_eV"] if at_cell else j["gap_eV"]
        lines.append(
            f"{j['junction']:>8} {gap:{width}.3f} {j['jph_mA_cm2']:16.3f} {j['voc_V']:9.4f} "
            f"{j['v_op_V']:8.4f} {j['j_op_mA_cm2']:13.3f} {j['p_op_W_m2']:11.2f} "
            f"{100 * j['power_share']:10.2f}"
        )
    if at_cell:
        temps = d["conditions"]["temperature_K"]
        t_text = (
            f"{temps:g} K"
            if isinstance(temps, (int, float))
            else (" / ".join(f"{t:g}" for t in temps) + " K")
        )
        ref = d["conditions"].get("physics", {}).get("gap_reference_K")
        lines.append(
            f"E_g at T_cell: the gaps at the cell temperature ({t_text})"
            + (f"; --gaps hold at {ref:g} K" if isinstance(ref, (int, float)) else "")
        )
    if "cells_per_string" in d:
        lines.append(f"cells per string (top first): {':'.join(map(str, d['cells_per_string']))}")
    if "losses_W_m2" in d:
        lines.extend(["", *format_losses(d["losses_W_m2"], d.get("loss_closure_rel"))])
    if d["connection"] == "independent":
        lines.append(
            "independent connection: no common terminals, so stack V_oc, J_sc, "
            "V_mpp, J_mpp are not defined (-); FF = P_mpp / sum(V_oc J_sc)."
        )
    for w in d.get("warnings", []):
        lines.append(f"Warning: {w}")
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


def format_losses(lw: dict, closure_rel: float | None = None) -> list[str]:
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
    closure = (
        "" if closure_rel is None else (f"   (terms add up to within {closure_rel:.1e} relative)")
    )
    lines.append(f"{'incident':<30} {inc:10.2f} {100.0:7.2f}{closure}")
    return lines
